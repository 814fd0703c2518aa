r"""Criteria of autocatalytic reactions: TMRad and T_D24 of the integrated adiabatic history, the induction time.

An autocatalytic reaction converts at

.. math:: \frac{d\alpha}{dt} = k(T)\,(1 - \alpha)^n (\alpha^m + z), \qquad q = \Delta h \frac{d\alpha}{dt}

(:func:`screening.core.arrhenius.conversion_function`).  Its rate at the start can be a small
fraction of its largest rate, which it reaches only after an induction period, even at constant
temperature.  So:

* the Townsend-Tou closed form for TMRad (:func:`screening.core.runaway.tmr.tmr_adiabatic`) is the
  zero-order asymptote and does not apply: :func:`tmr_adiabatic_integrated` integrates the adiabatic
  history of the decomposition sources (phi = 1, the contents' specific heat alone) to its maximum
  rate, and :func:`t_d24_integrated` finds the start temperature at which that time is 24 h;
* the steady criteria (Semenov, Frank-Kamenetskii, critical medium temperature) take the rate at the
  conversion of maximum rate :math:`\alpha^*` (:func:`screening.core.runaway.rates.rate_conversion`),
  which is conservative;
* :func:`isothermal_induction_time` is the time to the maximum rate at a constant temperature.

The initiation term z is taken as independent of temperature (one activation energy for both paths).

scipy.integrate is imported inside the functions that use it.

References
----------
Townsend, D. I. and Tou, J. C., Thermochimica Acta 37 (1980) 1-30 (TMRad; the adiabatic history).
Sestak, J. and Berggren, G., Thermochimica Acta 3 (1971) 1 (the autocatalytic rate form).
"""
from __future__ import annotations

import math

import numpy as np

from screening.core.arrhenius import (
    autocatalytic_term,
    conversion_function,
    conversion_of_maximum_rate,
    log_arrhenius_rate,
)
from screening.core.model import GAS_CONSTANT, ArrheniusSource
from screening.core.root_finding import brent_root
from screening.core.runaway.rates import (
    T_D24_RANGE,
    T_D24_TIME,
    _check_sources,
    _log_specific_powers,
)

#: How the output names the methods.
METHOD_INTEGRATED = "integrated adiabatic history (phi = 1)"
METHOD_CLOSED_FORM = "Townsend-Tou closed form (zero-order asymptote)"
#: Relative tolerance of the adiabatic integration.
RTOL = 1e-10


def _initial_conversion(s: ArrheniusSource) -> float:
    return min(max(1.0 - s.accumulated_fraction, 0.0), 1.0) if s.specific_heat_of_reaction is not None else 0.0


def induction_integral(source: ArrheniusSource) -> float:
    r"""The dimensionless isothermal induction integral :math:`\int_{\alpha_0}^{\alpha^*} d\alpha / f(\alpha)`.

    Parameters
    ----------
    source : :class:`screening.core.model.ArrheniusSource`
        Autocatalytic (``autocatalytic_order`` > 0).

    Returns
    -------
    float, [-]
        0 when the initial conversion is at or past the conversion of maximum rate.

    Notes
    -----
    Evaluated by adaptive Gauss-Kronrod quadrature (``scipy.integrate.quad``, relative tolerance
    1e-12); the integrand is bounded since z > 0 and :math:`\alpha^* < 1` for n > 0.
    """
    from scipy.integrate import quad

    a0 = _initial_conversion(source)
    a_star = conversion_of_maximum_rate(source.order, source.autocatalytic_order, source.initiation, a0)
    if a_star <= a0:
        return 0.0
    n, m, z = source.order, source.autocatalytic_order, source.initiation
    value, _ = quad(lambda a: 1.0 / conversion_function(a, n, m, z), a0, a_star, epsabs=0.0, epsrel=1e-12,
                    limit=200)
    return float(value)


def isothermal_induction_time(temperature, source: ArrheniusSource):
    r"""Isothermal induction time: the time to the maximum rate at a constant temperature, [s].

    Parameters
    ----------
    temperature : float or array, [K]
    source : :class:`screening.core.model.ArrheniusSource`
        Autocatalytic, with its heat of reaction (``specific_power`` = Delta h k_ref) and initial
        conversion (1 - ``accumulated_fraction``).

    Returns
    -------
    float or array, [s]
        Shaped like ``temperature``; 0 when the material starts at or past the conversion of
        maximum rate.

    Notes
    -----
    At constant T, :math:`d\alpha/dt = k(T) f(\alpha)`, so the time from :math:`\alpha_0` to
    :math:`\alpha^*` is

    .. math:: t_{ind}(T) = \frac{1}{k(T)} \int_{\alpha_0}^{\alpha^*} \frac{d\alpha}{f(\alpha)}

    with k(T) = q(T) / Delta h from :func:`screening.core.arrhenius.log_arrhenius_rate`.  It is very
    sensitive to z and to :math:`\alpha_0`: material already partly converted or seeded with its
    products (aged, recycled, contaminated) has a much shorter induction time.

    Examples
    --------
    n = m = 1, z = 0.02 from zero conversion: the logistic solution gives
    t = ln(1 / z) / (k (1 + z)); with k = 2e-5 1/s at the reference temperature,
    ln(50) / (2e-5 x 1.02) = 191765.8 s (by hand):

    >>> src = ArrheniusSource(500e3 * 2e-5, 423.15, 120e3, order=1.0, specific_heat_of_reaction=500e3,
    ...                       autocatalytic_order=1.0, initiation=0.02)
    >>> round(isothermal_induction_time(423.15, src), 1)
    191765.8
    """
    if not source.autocatalytic or source.specific_heat_of_reaction is None:
        raise ValueError("the isothermal induction time needs an autocatalytic source with a heat of reaction")
    t = np.asarray(temperature, dtype=float)
    if source.specific_power <= 0:
        return float("inf") if t.ndim == 0 else np.full(t.shape, np.inf)
    integral = induction_integral(source)
    # ln of Delta h k(T), the rate per unit of f
    log_q = log_arrhenius_rate(1.0 / t, math.log(source.specific_power), source.activation_energy / GAS_CONSTANT,
                               1.0 / source.reference_temperature, log_cap=700.0)
    out = integral * source.specific_heat_of_reaction * np.exp(-log_q)
    return float(out) if out.ndim == 0 else out


class _Adiabatic:
    """The adiabatic history of several sources with temperature as the independent variable."""

    def __init__(self, specific_heat, sources):
        self.cp = float(specific_heat)
        self.sources = sources
        self.tracked = [j for j, s in enumerate(sources) if s.specific_heat_of_reaction is not None]
        self.dh = np.array([sources[j].specific_heat_of_reaction for j in self.tracked], dtype=float)
        self.er = np.array([s.activation_energy for s in sources], dtype=float) / GAS_CONSTANT

    def rates(self, T, y):
        """q_j (W/kg) and d ln f_j / d alpha_j of every source at T and conversions y[1:]."""
        conv = [0.0] * len(self.sources)
        for c, j in enumerate(self.tracked):
            conv[j] = min(max(float(y[1 + c]), 0.0), 1.0)
        q = np.exp(np.minimum(_log_specific_powers(float(T), self.sources, conv).reshape(-1), 700.0))
        dlnf = np.zeros(len(self.sources))
        for j in self.tracked:
            s, a = self.sources[j], conv[j]
            d = -s.order / max(1.0 - a, 1e-300) if s.order else 0.0
            if s.autocatalytic:
                g, dg = autocatalytic_term(a, s.autocatalytic_order, s.initiation)
                d += dg / g
            dlnf[j] = d
        for j in range(len(self.sources)):
            if j in self.tracked and conv[j] >= 1.0:
                q[j] = 0.0
        return q, dlnf

    def fun(self, T, y):
        q, _ = self.rates(T, y)
        total = q.sum()
        dt_dT = self.cp / total if total > 0 else math.inf
        out = np.empty(1 + len(self.tracked))
        out[0] = dt_dT
        for c, j in enumerate(self.tracked):
            out[1 + c] = q[j] / self.dh[c] * dt_dT
        return out

    def log_rate_slope(self, T, y):
        r"""d ln(dT/dt) / dT along the adiabatic path: zero at the maximum rate."""
        q, dlnf = self.rates(T, y)
        total = q.sum()
        if total <= 0:
            return 0.0
        w = q / total
        out = float(np.sum(w * self.er / (T * T)))
        for c, j in enumerate(self.tracked):
            out += w[j] * dlnf[j] * self.cp * w[j] / self.dh[c]
        return out


def _adiabatic_solution(temperature, specific_heat, sources, upper):
    """solve_ivp over T from the start to ``upper`` with the maximum-rate events."""
    from scipy.integrate import solve_ivp

    model = _Adiabatic(specific_heat, sources)
    y0 = np.zeros(1 + len(model.tracked))
    for c, j in enumerate(model.tracked):
        y0[1 + c] = _initial_conversion(sources[j])

    def peak(T, y):
        return model.log_rate_slope(T, y)

    peak.direction = -1
    peak.terminal = True

    def spent(T, y):  # every tracked reaction complete (n < 1 reaches it at a finite temperature)
        return min((1.0 - y[1 + c] for c in range(len(model.tracked))), default=1.0) - 1e-12

    spent.terminal = True
    atol = np.full(y0.size, 1e-14)
    atol[0] = 1e-30  # time: relative accuracy only (TMRad may be far below a second at a high start)
    sol = solve_ivp(model.fun, (float(temperature), float(upper)), y0, method="LSODA", rtol=RTOL, atol=atol,
                    events=[peak, spent])
    return model, y0, sol


def tmr_adiabatic_integrated(temperature, specific_heat, sources):
    r"""TMRad from the integrated adiabatic history of the sources (phi = 1), [s].

    Parameters
    ----------
    temperature : float, [K]
        Start temperature T0.
    specific_heat : float, [J/(kg K)]
        The contents' own (the wall not credited: conservative).
    sources : sequence of :class:`screening.core.model.ArrheniusSource`
        Each starts at its initial conversion (1 - ``accumulated_fraction``); a source without a
        heat of reaction releases heat at zero order without bound.

    Returns
    -------
    float, [s]
        The time at which the adiabatic self-heating rate dT/dt is largest (0 when it is largest
        at the start); ``inf`` when no source releases heat.

    Notes
    -----
    With no heat loss, :math:`c_p\,dT/dt = \sum_j q_j(T, \alpha_j)` and
    :math:`d\alpha_j/dt = q_j / \Delta h_j`; temperature only rises, so the history is integrated
    with T as the independent variable,

    .. math:: \frac{dt}{dT} = \frac{c_p}{\sum_j q_j}, \qquad
              \frac{d\alpha_j}{dT} = \frac{c_p\, q_j}{\Delta h_j \sum_i q_i}

    (for one source, :math:`\alpha = \alpha_0 + (T - T_0) c_p / \Delta h` and
    :math:`t = \int d\alpha / (k(T(\alpha)) f(\alpha))`), by LSODA (relative tolerance 1e-10),
    and the maximum rate is where :math:`d \ln(dT/dt) / dT` changes sign from positive to negative,
    located as an event; the first maximum after the rate has risen is the runaway's (the rate at
    the start is taken instead when it is higher, and then the time is 0).  The Townsend-Tou closed
    form :math:`c_p R T_0^2 / (q_0 E)` is the zero-order asymptote of this time: an autocatalytic
    reaction's rate at the start understates it and the closed form does not apply.

    References
    ----------
    Townsend, D. I. and Tou, J. C., Thermochimica Acta 37 (1980) 1-30.

    Examples
    --------
    A first-order reaction without temperature dependence (E = 0), q_ref = 10 W/kg,
    Delta h = 200 kJ/kg: its rate only falls, so the maximum is at the start (by hand):

    >>> src = ArrheniusSource(10.0, 300.0, 0.0, order=1.0, specific_heat_of_reaction=200e3)
    >>> tmr_adiabatic_integrated(300.0, 2000.0, [src])
    0.0
    """
    sources = _check_sources(sources)
    if not (math.isfinite(specific_heat) and specific_heat > 0):
        raise ValueError("specific_heat must be finite and > 0")
    if not any(s.specific_power > 0 for s in sources):
        return math.inf
    T0 = float(temperature)
    rise = sum((1.0 - _initial_conversion(s)) * s.specific_heat_of_reaction / specific_heat
               for s in sources if s.specific_heat_of_reaction is not None)
    unbounded = any(s.specific_heat_of_reaction is None and s.specific_power > 0 for s in sources)
    upper = T0 + (5000.0 if unbounded else rise * (1.0 - 1e-9))
    if upper <= T0:
        return 0.0
    model, y0, sol = _adiabatic_solution(T0, specific_heat, sources, upper)
    best_t = 0.0
    best_rate = float(model.rates(T0, y0)[0].sum())
    for T_e, y_e in zip(sol.t_events[0], sol.y_events[0]):
        rate = float(model.rates(T_e, y_e)[0].sum())
        if rate > best_rate:
            best_t, best_rate = float(y_e[0]), rate
    if unbounded and best_t == 0.0 and model.log_rate_slope(T0, y0) > 0:
        return float(sol.y[0, -1])  # the rate still rises at the highest temperature followed
    return best_t


def t_d24_integrated(specific_heat, sources, *, target_time=T_D24_TIME, temperature_range=T_D24_RANGE):
    r"""T_D24 from the integrated adiabatic history: the start temperature at which TMRad is 24 h, [K].

    Parameters
    ----------
    specific_heat : float, [J/(kg K)]
    sources : sequence of :class:`screening.core.model.ArrheniusSource`
    target_time : float, [s], default 86400
    temperature_range : (float, float), [K], default (200, 1500)

    Returns
    -------
    float or None, [K]
        None when TMRad is above (or below) the target everywhere in the range.

    Notes
    -----
    TMRad of :func:`tmr_adiabatic_integrated` falls with the start temperature; the root of
    :math:`\ln(TMR_{ad}(T_0) / t_{target})` is bracketed on a geometric grid of 25 points and found by
    Brent's method to 1e-6 K.
    """
    lo, hi = temperature_range
    grid = np.geomspace(lo, hi, 25)

    def g(T):
        tmr = tmr_adiabatic_integrated(T, specific_heat, sources)
        if tmr <= 0.0:
            return -math.inf
        return math.log(tmr / target_time) if math.isfinite(tmr) else math.inf

    prev_T, prev_g = grid[0], g(grid[0])
    if prev_g <= 0:
        return None
    for T in grid[1:]:
        val = g(T)
        if val <= 0:
            if not math.isfinite(val):  # at the start rate already: bisect on the finite side
                val = -1e3
            return brent_root(lambda x: max(min(g(x), 1e3), -1e3), float(prev_T), float(T),
                              fa=min(prev_g, 1e3), fb=val, xtol=1e-6, rtol=1e-12, maxiter=200)
        prev_T, prev_g = T, val
    return None
