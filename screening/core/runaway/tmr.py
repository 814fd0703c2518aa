r"""Time to maximum rate under adiabatic conditions (TMRad) and T_D24.

.. math:: TMR_{ad} = \frac{c_p R T_0^2}{q_0 E}

(Townsend and Tou 1980), the time a zero-order self-heating mass with no heat loss
takes from T_0 to its maximum rate; T_D24 is the temperature at which it is 24 h
(trade term).

References
----------
Townsend, D. I. and Tou, J. C., "Thermal hazard evaluation by an accelerating rate
calorimeter", *Thermochimica Acta* 37 (1980) 1-30.
"""
from __future__ import annotations

import math

import numpy as np

from screening.core.model import GAS_CONSTANT
from screening.core.runaway.rates import (
    SECONDS_PER_HOUR,
    T_D24_RANGE,
    T_D24_TIME,
    _check_sources,
    _golden_minimum,
    _log_energy_weighted_rate,
    _positive_temperature,
    _root,
    _scalar_curve,
    _scalar_or_array,
    kinetics_warnings,
)

# --------------------------------------------------------------------------
# Adiabatic time to maximum rate, T_D24
# --------------------------------------------------------------------------

def _log_tmr(t, specific_heat, sources, conversion):
    return (math.log(specific_heat) + math.log(GAS_CONSTANT) + 2.0 * np.log(t)
            - _log_energy_weighted_rate(t, sources, conversion))


def tmr_adiabatic(temperature, specific_heat, sources, conversion=None):
    r"""Adiabatic time to maximum rate (TMRad) of the contents.

    Parameters
    ----------
    temperature : float or array, [K]
        Starting temperature T0, any shape.
    specific_heat : float, [J/(kg K)]
        Specific heat of the contents only.  The heat capacity of the vessel
        wall is ignored here, which shortens the time: conservative.
    sources : sequence of :class:`screening.core.model.ArrheniusSource`
    conversion : None, float or sequence of float, [-]
        Conversion at which rates are taken; None means zero conversion (the
        fastest rate for an n-th order reaction; not for an autocatalytic
        one, see :data:`WARNING_ZERO_CONVERSION`).

    Returns
    -------
    float or array, [s]
        Shaped like ``temperature``; ``inf`` where no source releases heat with a
        positive activation energy.

    Notes
    -----
    Townsend and Tou [1]_ give, for one zero-order reaction,

    .. math:: TMR_{ad} = \frac{c_p R T_0^2}{q_0 E}

    Since :math:`q E / (R T^2) = dq/dT`, this is :math:`c_p / (dq/dT)`; for
    several sources the natural generalisation used here is

    .. math:: TMR_{ad} = \frac{c_p R T_0^2}{\sum_i q_i(T_0) E_i}
              = \frac{c_p}{\sum_i dq_i/dT}

    It is the large-E/(R T0) asymptote of the exact zero-order adiabatic
    induction time; the exact time is longer by a factor of about
    :math:`1 + 2 R T_0 / E`, so the formula is conservative for a zero-order
    reaction.  Reactant consumption (order > 0) lengthens the real time too.
    Adiabatic: no heat loss, which a real vessel has, so the time is a lower bound
    for a well-stirred mass (conservative).

    References
    ----------
    .. [1] Townsend, D. I. and Tou, J. C., "Thermal hazard evaluation by an accelerating
       rate calorimeter", Thermochimica Acta 37 (1980) 1-30.

    Examples
    --------
    By hand (Townsend and Tou's formula): c_p = 2000 J/(kg K), a rate of 1 W/kg at
    T0 = 400 K and E = 100 kJ/mol give
    2000 x 8.314462618 x 400^2 / (1 x 100000) = 26606.28 s (7.39 h):

    >>> from screening.core.model import ArrheniusSource
    >>> round(tmr_adiabatic(400.0, 2000.0, [ArrheniusSource(1.0, 400.0, 100e3)]), 2)
    26606.28
    """
    t = _positive_temperature(temperature)
    if not (math.isfinite(specific_heat) and specific_heat > 0):
        raise ValueError("specific_heat must be finite and > 0")
    sources = _check_sources(sources)
    log_tmr = _log_tmr(t, specific_heat, sources, conversion)
    big = log_tmr > 709.0
    out = np.where(big, np.inf, np.exp(np.where(big, 0.0, log_tmr)))
    return _scalar_or_array(out)


def t_d24(specific_heat, sources, conversion=None, *, target_time=T_D24_TIME,
          temperature_range=T_D24_RANGE, full_output=False):
    r"""Temperature at which the adiabatic time to maximum rate is 24 h.

    Parameters
    ----------
    specific_heat : float, [J/(kg K)]
        Contents only; wall heat capacity ignored (conservative: a lower
        T_D24).
    sources : sequence of :class:`screening.core.model.ArrheniusSource`
    conversion : None, float or sequence of float, [-]
        As in :func:`tmr_adiabatic`.
    target_time : float, [s], default 86400
        Other values give, e.g., T_D8 for 8 h.
    temperature_range : (float, float), [K], default (200, 1500)
        Range searched.
    full_output : bool, default False
        Also return a list of warning texts.

    Returns
    -------
    float or None, [K]
        The lowest temperature in ``temperature_range`` where TMRad equals
        ``target_time``.  None when there is none: either TMRad is already
        shorter at the bottom of the range (the material is that unstable
        everywhere in it) or longer throughout; ``full_output`` says which.
    warnings : list of str
        Only with ``full_output=True``.

    Notes
    -----
    Solves :math:`TMR_{ad}(T) = t_{target}` with TMRad from
    :func:`tmr_adiabatic`.  :math:`\ln TMR_{ad}` decreases with T while
    T < E/(2R) but need not be monotone for several sources or a small E, so
    the range is scanned on a grid (local minima between grid points are
    checked), and the lowest crossing is refined with Brent's method on
    :math:`\ln TMR_{ad} - \ln t_{target}`.  T_D24 is a trade term built on
    Townsend and Tou [1]_:

    .. math:: \frac{c_p R\, T_{D24}^2}{\sum_i q_i(T_{D24}) E_i} = 24\ \text{h}

    References
    ----------
    .. [1] Townsend, D. I. and Tou, J. C., "Thermal hazard evaluation by an accelerating
       rate calorimeter", Thermochimica Acta 37 (1980) 1-30.

    Examples
    --------
    By hand: with c_p = 2000 J/(kg K) and E = 100 kJ/mol, a rate at 400 K of
    q = c_p R T^2 / (86400 s x E) = 2000 x 8.314462618 x 400^2 / (86400 x 100000)
    = 0.307943 W/kg makes TMRad(400 K) = 24 h, so T_D24 = 400 K:

    >>> from screening.core.model import ArrheniusSource
    >>> q24 = 2000.0 * 8.314462618 * 400.0**2 / (86400.0 * 100e3)
    >>> round(t_d24(2000.0, [ArrheniusSource(q24, 400.0, 100e3)]), 6)
    400.0
    """
    if not (math.isfinite(specific_heat) and specific_heat > 0):
        raise ValueError("specific_heat must be finite and > 0")
    if not (math.isfinite(target_time) and target_time > 0):
        raise ValueError("target_time must be finite and > 0")
    sources = _check_sources(sources)
    log_target = math.log(target_time)
    lo, hi = (float(v) for v in temperature_range)
    if not (0 < lo < hi and math.isfinite(hi)):
        raise ValueError("temperature_range must be (low, high) with 0 < low < high")
    grid = np.linspace(lo, hi, max(int((hi - lo) / 2.5) + 1, 3))

    curve = _scalar_curve(1.0, sources, conversion)
    log_constant = math.log(specific_heat) + math.log(GAS_CONSTANT)

    def g(t):
        if curve is not None:  # a root-finding step, in floats: the same operations as _log_tmr's
            return log_constant + 2.0 * float(np.log(t)) - curve.log_slope_part(t) - log_target
        return float(_log_tmr(np.asarray(t, dtype=float), specific_heat, sources,
                              conversion)) - log_target

    values = _log_tmr(grid, specific_heat, sources, conversion) - log_target
    warnings: list[str] = []
    result = None
    hours = target_time / SECONDS_PER_HOUR
    if not np.any(np.isfinite(values)):
        warnings.append("No Arrhenius source releases heat with a temperature "
                        "dependence: TMRad is infinite and there is no T_D24.")
    elif values[0] <= 0:
        warnings.append(
            f"TMRad is already {hours:g} h or shorter at {lo:.1f} K, the bottom "
            "of the range searched: no T_D24 is reported, the material is at "
            "least that unstable at every temperature searched.")
    else:
        below = np.flatnonzero(values <= 0)
        first = int(below[0]) if below.size else len(grid)
        candidates = []
        if below.size:
            candidates.append(_root(g, grid[first - 1], grid[first]))
        # A dip below the target between two grid points, before the first
        # grid crossing, would otherwise be missed.
        # values[k - 1] > 0 for every k < first, so a dip found here is
        # bracketed by grid[k - 1] and the minimiser.
        for k in range(1, min(first, len(grid) - 1)):
            if values[k] <= values[k - 1] and values[k] <= values[k + 1]:
                x_min, g_min = _golden_minimum(g, float(grid[k - 1]), float(grid[k + 1]))
                if g_min <= 0:
                    candidates.append(_root(g, float(grid[k - 1]), x_min))
                    break
        if candidates:
            result = min(candidates)
        else:
            warnings.append(
                f"TMRad exceeds {hours:g} h throughout {lo:.0f}-{hi:.0f} K: no "
                "T_D24 in the range searched.")
    warnings = kinetics_warnings(sources, [result], conversion) + warnings
    if full_output:
        return result, warnings
    return result
