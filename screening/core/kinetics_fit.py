r"""Reaction kinetics from calorimeter runs: arrays in, parameters out (SI, no files, no printing).

Model-free estimates of the activation energy (Kissinger, Flynn-Wall-Ozawa, Friedman) and
model fits of an n-th-order and an autocatalytic rate law to the conversion rate of several runs
together by nonlinear least squares, with the parameters' covariance and 95 % intervals.

The rate laws, with :math:`k(T) = k_{ref} \exp[-(E/R)(1/T - 1/T_{ref})]`:

.. math:: \text{n-th order:}\quad \frac{d\alpha}{dt} = k(T)\,(1-\alpha)^n \qquad
          \text{autocatalytic:}\quad \frac{d\alpha}{dt} = k(T)\,(1-\alpha)^n (\alpha^m + z)

(the autocatalytic form with an initiation term z is the extended Prout-Tompkins / Šesták-Berggren form,
common practice; Šesták and Berggren, *Thermochimica Acta* 3 (1971) 1).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from screening.core.arrhenius import autocatalytic_term, log_arrhenius_rate
from screening.core.model import GAS_CONSTANT

__all__ = ["RunRates", "KineticFit", "kissinger", "flynn_wall_ozawa", "friedman", "fit_nth_order",
           "fit_autocatalytic", "autocatalytic_rate", "autocatalytic_tmr_adiabatic", "peak_position",
           "DOYLE_SLOPE", "NTH_ORDER", "AUTOCATALYTIC", "fitted_heat_flows",
           "conversion_from_time_integral"]

NTH_ORDER = "nth-order"
AUTOCATALYTIC = "autocatalytic"

#: Doyle's linear approximation of the temperature integral, log10 p(x) ~ -2.315 - 0.4567 x
#: (Doyle, J. Appl. Polym. Sci. 6 (1962) 639; the constant of ASTM E698; from memory).
DOYLE_SLOPE = 0.4567

_BOUNDS = {"ln_rate_constant": (-np.inf, np.inf), "activation_energy": (1e3, 1e6), "order": (0.0, 10.0),
           "autocatalytic_order": (0.01, 10.0), "ln_initiation": (math.log(1e-7), math.log(1e3))}


@dataclass(frozen=True)
class RunRates:
    """One run as the fits use it: temperature [K], conversion [-] and conversion rate [1/s] at each point,
    and the standard deviation of the rate's noise [1/s] (0 when unknown)."""

    temperature: np.ndarray
    conversion: np.ndarray
    rate: np.ndarray
    noise: float = 0.0
    #: optional: the measured signal over the exotherm's window, to fit the heat flow itself (see
    #: :func:`fit_nth_order`): time [s], heat flow [W/kg], the first estimates of the straight baseline
    #: (intercept [W/kg], slope [W/(kg K)]) and of the heat [J/kg], and the heat flow's noise [W/kg]
    time: np.ndarray | None = None
    heat_flow: np.ndarray | None = None
    baseline: tuple | None = None
    heat: float | None = None
    heat_flow_noise: float = 0.0
    #: what the baseline is straight in: the temperature (default) or, for an isothermal run, the time
    baseline_abscissa: np.ndarray | None = None
    #: the temperature [K] at the points of ``time``
    signal_temperature: np.ndarray | None = None


@dataclass
class KineticFit:
    """A model fitted to several runs: parameter names and values (the rate constant as ln k_ref, k in 1/s
    at ``reference_temperature`` [K]), their covariance, and the fit's statistics."""

    model: str
    names: tuple
    values: np.ndarray
    covariance: np.ndarray
    reference_temperature: float
    points: int
    weighted_ssr: float
    at_bounds: tuple = field(default_factory=tuple)
    #: with a fit of the heat flow: each run's heat [J/kg] and their covariance, and each run's baseline
    heats: np.ndarray | None = None
    heat_covariance: np.ndarray | None = None
    baselines: tuple | None = None

    @property
    def dof(self) -> int:
        return max(self.points - len(self.names), 1)

    @property
    def aic(self) -> float:
        """Akaike's information criterion for least squares, N ln(SSR/N) + 2p (Akaike 1974)."""
        n = self.points
        return n * math.log(max(self.weighted_ssr, 1e-300) / n) + 2 * len(self.names)

    def value(self, name: str) -> float:
        return float(self.values[self.names.index(name)])

    def standard_error(self, name: str) -> float:
        i = self.names.index(name)
        return float(math.sqrt(max(self.covariance[i, i], 0.0)))

    def interval(self, name: str, level: float = 0.95) -> tuple[float, float]:
        """Two-sided interval from Student's t with the fit's degrees of freedom."""
        from scipy.stats import t as student_t

        half = float(student_t.ppf(0.5 + level / 2, self.dof)) * self.standard_error(name)
        v = self.value(name)
        return (v - half, v + half)

    def rate(self, temperature, conversion):
        """The fitted conversion rate [1/s]."""
        p = dict(zip(self.names, self.values))
        return _model_rate(self.model, p, np.asarray(temperature, float), np.asarray(conversion, float),
                           self.reference_temperature)

    def at_reference(self, reference_temperature: float) -> "KineticFit":
        """The same fit with the rate constant given at another reference temperature (exact: a linear
        change of ln k_ref, with its covariance transformed alongside)."""
        i, j = self.names.index("ln_rate_constant"), self.names.index("activation_energy")
        u = 1.0 / reference_temperature - 1.0 / self.reference_temperature
        a = np.eye(len(self.names))
        a[i, j] = -u / GAS_CONSTANT
        values = self.values.copy()
        values[i] = values[i] - values[j] * u / GAS_CONSTANT
        return KineticFit(self.model, self.names, values, a @ self.covariance @ a.T, reference_temperature,
                          self.points, self.weighted_ssr, self.at_bounds, self.heats, self.heat_covariance,
                          self.baselines)

    def uncorrelated_reference(self) -> float:
        r"""The reference temperature at which ln k_ref and E are uncorrelated.

        With :math:`u = 1/T_{ref}' - 1/T_{ref}`, :math:`\ln k'_{ref} = \ln k_{ref} - E u / R`, so
        :math:`\mathrm{cov}(\ln k', E) = \mathrm{cov}(\ln k, E) - u\,\mathrm{var}(E)/R = 0` at
        :math:`u = R\,\mathrm{cov}(\ln k, E)/\mathrm{var}(E)`.
        """
        i, j = self.names.index("ln_rate_constant"), self.names.index("activation_energy")
        var_e = self.covariance[j, j]
        if not var_e > 0:
            return self.reference_temperature
        u = GAS_CONSTANT * self.covariance[i, j] / var_e
        inv = 1.0 / self.reference_temperature + u
        return 1.0 / inv if inv > 0 else self.reference_temperature


# ------------------------------------------------------------------ model-free estimates


def _linear_fit(x, y):
    """Slope, intercept and the slope's standard error of an ordinary least-squares line."""
    x = np.asarray(x, float)
    y = np.asarray(y, float)
    slope, intercept = np.polyfit(x, y, 1)
    if x.size > 2:
        resid = y - (slope * x + intercept)
        s2 = float(resid @ resid) / (x.size - 2)
        se = math.sqrt(s2 / float(((x - x.mean()) ** 2).sum()))
    else:
        se = float("nan")
    return float(slope), float(intercept), se


def kissinger(heating_rates, peak_temperatures):
    r"""Activation energy from the peak temperatures of runs at several heating rates (Kissinger).

    Parameters
    ----------
    heating_rates : array, [K/s]
        beta of each run, > 0 (at least two different ones).
    peak_temperatures : array, [K]
        T_p, the temperature of the peak of each run's heat flow.

    Returns
    -------
    dict
        ``activation_energy`` [J/mol], ``activation_energy_standard_error`` [J/mol] (NaN for two runs)
        and ``pre_exponential`` [1/s].

    Notes
    -----
    .. math:: \ln\frac{\beta}{T_p^2} = \ln\frac{A R}{E} - \frac{E}{R\,T_p}

    a straight line in :math:`1/T_p` of slope :math:`-E/R`; exact for a first-order reaction, an
    approximation otherwise.

    References
    ----------
    Kissinger, H. E., *Analytical Chemistry* 29 (1957) 1702-1706; ASTM E2890.

    Examples
    --------
    Peak temperatures made from the formula with E = 100 kJ/mol and A = 1e10 1/s give them back:

    >>> import numpy as np
    >>> from scipy.optimize import brentq
    >>> R, E, A = 8.314462618, 100e3, 1e10
    >>> betas = np.array([1, 2, 5, 10]) / 60
    >>> tp = [brentq(lambda T: np.log(b / T**2) - np.log(A * R / E) + E / (R * T), 300, 900) for b in betas]
    >>> k = kissinger(betas, tp)
    >>> round(k["activation_energy"]), f'{k["pre_exponential"]:.4g}'
    (100000, '1e+10')
    """
    beta = np.asarray(heating_rates, float)
    tp = np.asarray(peak_temperatures, float)
    slope, intercept, se = _linear_fit(1.0 / tp, np.log(beta / tp ** 2))
    e = -slope * GAS_CONSTANT
    return {"activation_energy": e, "activation_energy_standard_error": se * GAS_CONSTANT,
            "pre_exponential": math.exp(intercept) * e / GAS_CONSTANT}


def flynn_wall_ozawa(heating_rates, peak_temperatures):
    r"""Activation energy from the peak temperatures of runs at several heating rates (Flynn-Wall-Ozawa).

    Parameters
    ----------
    heating_rates : array, [K/s]
    peak_temperatures : array, [K]

    Returns
    -------
    dict
        ``activation_energy`` [J/mol] and ``activation_energy_standard_error`` [J/mol].

    Notes
    -----
    With Doyle's approximation of the temperature integral, at a fixed conversion (taken at the peak)

    .. math:: \log_{10}\beta = \text{const} - 0.4567\,\frac{E}{R\,T_p}

    so :math:`E = -(R / 0.4567)\, d\log_{10}\beta / d(1/T_p)`.  This is the first estimate of ASTM E698; the
    standard's iterative refinement of the approximation is not applied (it changes E by a few per cent).

    References
    ----------
    Ozawa, T., *Bull. Chem. Soc. Japan* 38 (1965) 1881; Flynn, J. H. and Wall, L. A., *J. Polym. Sci. B* 4
    (1966) 323; ASTM E698; Doyle, C. D., *J. Appl. Polym. Sci.* 6 (1962) 639 (constant from memory).

    Examples
    --------
    Peaks on the line log10(beta) = 10 - 0.4567 E / (R T_p) with E = 80 kJ/mol:

    >>> import numpy as np
    >>> R, E = 8.314462618, 80e3
    >>> betas = np.array([1.0, 2.0, 5.0, 10.0]) / 60
    >>> tp = 0.4567 * E / (R * (10 - np.log10(betas)))
    >>> round(flynn_wall_ozawa(betas, tp)["activation_energy"])
    80000
    """
    beta = np.asarray(heating_rates, float)
    tp = np.asarray(peak_temperatures, float)
    slope, _, se = _linear_fit(1.0 / tp, np.log10(beta))
    return {"activation_energy": -slope * GAS_CONSTANT / DOYLE_SLOPE,
            "activation_energy_standard_error": se * GAS_CONSTANT / DOYLE_SLOPE}


def friedman(runs, conversions=None):
    r"""Isoconversional activation energy against conversion (Friedman).

    Parameters
    ----------
    runs : sequence of RunRates
        At least two runs at different temperature programmes.
    conversions : array or None
        Conversions at which E is estimated; default 0.05 to 0.95 in steps of 0.05.

    Returns
    -------
    list of dict
        ``conversion``, ``activation_energy`` [J/mol] and ``activation_energy_standard_error`` [J/mol]
        (NaN with two runs), one per conversion where every run reaches it.

    Notes
    -----
    At each conversion, across runs,

    .. math:: \ln\left(\frac{d\alpha}{dt}\right)_{\alpha} = \ln[A f(\alpha)] - \frac{E_\alpha}{R\,T_\alpha}

    a straight line in :math:`1/T_\alpha` of slope :math:`-E_\alpha/R`; the temperature and rate at a
    conversion are interpolated linearly in each run.

    References
    ----------
    Friedman, H. L., *J. Polymer Science C* 6 (1964) 183.

    Examples
    --------
    Two first-order runs with E = 100 kJ/mol, at 0.5 conversion: by hand, the rates 1e-3 and 2e-3 1/s at
    400 K and 1 / (1/400 - R ln 2 / E) = 409.4 K give E back:

    >>> import numpy as np
    >>> R, E = 8.314462618, 100e3
    >>> t2 = 1 / (1 / 400 - R * np.log(2) / E)
    >>> a = np.array([0.4, 0.6])
    >>> runs = [RunRates(np.array([400.0, 400.0]), a, np.array([1e-3, 1e-3])),
    ...         RunRates(np.array([t2, t2]), a, np.array([2e-3, 2e-3]))]
    >>> round(friedman(runs, [0.5])[0]["activation_energy"])
    100000
    """
    grid = np.arange(0.05, 0.951, 0.05) if conversions is None else np.asarray(conversions, float)
    out = []
    for a in grid:
        inv_t, ln_r = [], []
        for run in runs:
            conv = np.maximum.accumulate(run.conversion)
            if not (conv[0] <= a <= conv[-1]):
                break
            i = int(np.searchsorted(conv, a))
            i = min(max(i, 1), conv.size - 1)
            c0, c1 = conv[i - 1], conv[i]
            w = 0.0 if c1 == c0 else (a - c0) / (c1 - c0)
            temp = run.temperature[i - 1] + w * (run.temperature[i] - run.temperature[i - 1])
            rate = run.rate[i - 1] + w * (run.rate[i] - run.rate[i - 1])
            if not rate > 0:
                break
            inv_t.append(1.0 / temp)
            ln_r.append(math.log(rate))
        else:
            if len(inv_t) >= 2 and np.ptp(inv_t) > 0:
                slope, _, se = _linear_fit(inv_t, ln_r)
                out.append({"conversion": float(round(a, 6)), "activation_energy": -slope * GAS_CONSTANT,
                            "activation_energy_standard_error": se * GAS_CONSTANT})
    return out


def peak_position(x, y, half_width=5):
    r"""Abscissa of a noisy peak's maximum: a parabola fitted to the points around the largest value.

    Parameters
    ----------
    x, y : array
    half_width : int, default 5
        Points on each side of the largest value used in the fit.

    Returns
    -------
    float, the unit of ``x``

    Notes
    -----
    The vertex :math:`-b/(2a)` of the least-squares parabola :math:`a x^2 + b x + c`, kept within the
    fitted points.

    References
    ----------
    Least-squares peak location (common practice).

    Examples
    --------
    >>> import numpy as np
    >>> x = np.linspace(0, 10, 101)
    >>> round(peak_position(x, -(x - 4.23) ** 2), 6)
    4.23
    """
    x = np.asarray(x, float)
    y = np.asarray(y, float)
    i = int(np.argmax(y))
    lo, hi = max(i - half_width, 0), min(i + half_width + 1, x.size)
    if hi - lo < 3:
        return float(x[i])
    xc = x[lo:hi] - x[i]
    a, b, _ = np.polyfit(xc, y[lo:hi], 2)
    if not a < 0:
        return float(x[i])
    return float(x[i] + min(max(-b / (2 * a), xc[0]), xc[-1]))


# ------------------------------------------------------------------ model fits


def _log_k(p, inv_t, inv_ref):
    return log_arrhenius_rate(inv_t, p["ln_rate_constant"], p["activation_energy"] / GAS_CONSTANT, inv_ref)


def autocatalytic_rate(temperature, conversion, rate_constant, reference_temperature, activation_energy,
                       order, autocatalytic_order, initiation):
    r"""Conversion rate of the autocatalytic rate law.

    Parameters
    ----------
    temperature : float or array, [K]
    conversion : float or array, [-]
    rate_constant : float, [1/s]
        k at ``reference_temperature``.
    reference_temperature : float, [K]
    activation_energy : float, [J/mol]
    order, autocatalytic_order : float, [-]
        n and m.
    initiation : float, [-]
        z > 0, the ratio of the initiation to the autocatalytic rate constant.

    Returns
    -------
    float or array, [1/s]

    Notes
    -----
    .. math:: \frac{d\alpha}{dt} = k_{ref} e^{-(E/R)(1/T - 1/T_{ref})} (1-\alpha)^n (\alpha^m + z)

    References
    ----------
    Šesták, J. and Berggren, G., *Thermochimica Acta* 3 (1971) 1 (with the initiation term z, the extended
    Prout-Tompkins form; common practice).

    Examples
    --------
    By hand at the reference temperature, alpha = 0.5, n = m = 1, z = 0.02: 1e-3 x 0.5 x 0.52 = 2.6e-4:

    >>> round(autocatalytic_rate(400.0, 0.5, 1e-3, 400.0, 1e5, 1.0, 1.0, 0.02), 10)
    0.00026
    """
    p = {"ln_rate_constant": math.log(rate_constant), "activation_energy": activation_energy, "order": order,
         "autocatalytic_order": autocatalytic_order, "ln_initiation": math.log(initiation)}
    out = _model_rate(AUTOCATALYTIC, p, np.asarray(temperature, float), np.asarray(conversion, float),
                      reference_temperature)
    return out if np.ndim(out) else float(out)


def _model_rate(model, p, temperature, conversion, reference_temperature):
    a = np.clip(conversion, 0.0, 1.0)
    k = np.exp(_log_k(p, 1.0 / temperature, 1.0 / reference_temperature))
    rate = k * (1.0 - a) ** p["order"]
    if model == AUTOCATALYTIC:  # times alpha^m + z (core.arrhenius.autocatalytic_term)
        rate = rate * autocatalytic_term(a, p["autocatalytic_order"], math.exp(p["ln_initiation"]))[0]
    return rate


def _stack(runs, lo, hi):
    temp, conv, rate, weight = [], [], [], []
    for run in runs:
        keep = (run.conversion >= lo) & (run.conversion <= hi) & np.isfinite(run.rate)
        temp.append(run.temperature[keep])
        conv.append(run.conversion[keep])
        rate.append(run.rate[keep])
        weight.append(np.full(int(keep.sum()), run.noise))
    noise = np.concatenate(weight)
    if noise.size and noise.min() > 0:
        w = 1.0 / noise
    else:
        w = np.ones_like(noise)
    return np.concatenate(temp), np.clip(np.concatenate(conv), 0.0, 1.0), np.concatenate(rate), w


def _fit(model, names, runs, reference_temperature, starts, lo, hi):
    rate_fit = _fit_rates(model, names, runs, reference_temperature, starts, lo, hi)
    if all(r.heat_flow is not None for r in runs):
        return _fit_signal(model, names, runs, reference_temperature, [rate_fit.values])
    return rate_fit


def _fit_rates(model, names, runs, reference_temperature, starts, lo, hi):
    """Least squares on the measured conversion rate (the first estimate, and the fit when there is no signal)."""
    from scipy.optimize import least_squares

    temp, conv, rate, w = _stack(runs, lo, hi)
    if temp.size <= len(names) + 2:
        raise ValueError(f"too few points to fit the {model} model ({temp.size})")
    inv_t = 1.0 / temp
    inv_ref = 1.0 / reference_temperature
    one_minus = np.clip(1.0 - conv, 1e-12, 1.0)
    ln_one_minus = np.log(one_minus)
    a_fit = np.clip(conv, 1e-12, 1.0)
    ln_a = np.log(a_fit)
    # internal variables: ln k, E / (R T_ref), n[, m, ln z]; E scaled for conditioning
    scale = np.ones(len(names))
    scale[1] = GAS_CONSTANT * reference_temperature

    def parts(x):
        p = dict(zip(names, x * scale))
        k = np.exp(_log_k(p, inv_t, inv_ref))
        f = one_minus ** p["order"]
        g = 1.0
        if model == AUTOCATALYTIC:  # alpha^m + z (core.arrhenius.autocatalytic_term)
            g = autocatalytic_term(a_fit, p["autocatalytic_order"], math.exp(p["ln_initiation"]))[0]
        return p, k, f, g

    def residuals(x):
        _, k, f, g = parts(x)
        return w * (k * f * g - rate)

    def jacobian(x):
        p, k, f, g = parts(x)
        r = k * f * g
        cols = [r, -r * (inv_t - inv_ref) * reference_temperature, r * ln_one_minus]
        if model == AUTOCATALYTIC:
            am = np.exp(p["autocatalytic_order"] * ln_a)
            z = math.exp(p["ln_initiation"])
            cols += [k * f * am * ln_a, k * f * z]
        return w[:, None] * np.column_stack(cols)

    lower = np.array([_BOUNDS[n][0] for n in names]) / scale
    upper = np.array([_BOUNDS[n][1] for n in names]) / scale
    with np.errstate(invalid="ignore"):
        inner_lower = np.where(np.isfinite(lower), lower + 1e-6 * (np.abs(lower) + 1e-3), -np.inf)
        inner_upper = np.where(np.isfinite(upper), upper - 1e-6 * (np.abs(upper) + 1e-3), np.inf)
    best = None
    for start in starts:
        x0 = np.clip(np.asarray(start, float) / scale, inner_lower, inner_upper)
        sol = least_squares(residuals, x0, jac=jacobian, bounds=(lower, upper), method="trf", x_scale="jac",
                            xtol=1e-12, ftol=1e-12, gtol=1e-12, max_nfev=400)
        if best is None or sol.cost < best.cost:
            best = sol
    x = best.x
    jac = jacobian(x)
    ssr = float(2 * best.cost)
    npts = temp.size
    s2 = ssr / max(npts - len(names), 1)
    cov_internal = s2 * np.linalg.pinv(jac.T @ jac)
    cov = cov_internal * np.outer(scale, scale)
    at_bounds = tuple(n for n, xi, l, u in zip(names, x, lower, upper)
                      if np.isfinite(l) and abs(xi - l) < 1e-6 * max(1.0, abs(l)) or
                      np.isfinite(u) and abs(xi - u) < 1e-6 * max(1.0, abs(u)))
    return KineticFit(model, tuple(names), x * scale, cov, reference_temperature, npts, ssr, at_bounds)


_U = np.linspace(-27.6, 27.6, 4001)  # logistic grid of conversion: 1e-12 .. 1 - 1e-12, dense at both ends
_ALPHA_GRID = 1.0 / (1.0 + np.exp(-_U))


def _conversion_function(model, p):
    """h(alpha) on the conversion grid."""
    a = _ALPHA_GRID
    h = (1.0 - a) ** p["order"]
    if model == AUTOCATALYTIC:
        h = h * autocatalytic_term(a, p["autocatalytic_order"], math.exp(p["ln_initiation"]))[0]
    return h


def conversion_from_time_integral(model, p, k_integral):
    r"""Conversion reached after a given time integral of the rate constant, by inverting G(alpha) = K.

    With :math:`d\alpha/dt = k(T(t))\,h(\alpha)`, separation gives
    :math:`G(\alpha) = \int_0^\alpha d\alpha'/h(\alpha') = \int_0^t k\,dt' = K(t)`; G is tabulated on a
    logistic grid of conversion (trapezoidal rule in the grid variable u, d alpha = alpha (1 - alpha) du) and
    inverted by linear interpolation.
    """
    h = _conversion_function(model, p)
    integrand = _ALPHA_GRID * (1.0 - _ALPHA_GRID) / np.maximum(h, 1e-300)
    du = _U[1] - _U[0]
    g = _ALPHA_GRID[0] / max(h[0], 1e-300) + np.concatenate([[0.0], np.cumsum(0.5 * (integrand[1:] + integrand[:-1]) * du)])
    return np.interp(k_integral, g, _ALPHA_GRID, left=0.0, right=1.0)


def _generation(model, names, v, reference_temperature, blocks):
    """k h(alpha) at every point of every run (1/s), for the kinetic parameters v[:len(names)] (SI)."""
    p = dict(zip(names, v[:len(names)]))
    inv_ref = 1.0 / reference_temperature
    out = []
    for x, inv_t, q, dt, w in blocks:
        lk = _log_k(p, inv_t, inv_ref)
        k = np.exp(lk)
        dl = np.diff(lk)
        small = np.abs(dl) < 1e-8
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            step = np.where(small, 0.5 * (k[1:] + k[:-1]), (k[1:] - k[:-1]) / np.where(small, 1.0, dl)) * dt
        big_k = np.concatenate([[0.0], np.cumsum(step)])
        alpha = conversion_from_time_integral(model, p, big_k)
        h = (1.0 - alpha) ** p["order"]
        if model == AUTOCATALYTIC:
            h = h * autocatalytic_term(alpha, p["autocatalytic_order"], math.exp(p["ln_initiation"]))[0]
        out.append(k * h)
    return out


def _signal_blocks(runs):
    blocks = []
    for r in runs:
        t = np.asarray(r.time, float)
        temp = np.asarray(r.signal_temperature, float)
        x = temp if r.baseline_abscissa is None else np.asarray(r.baseline_abscissa, float)
        w = 1.0 / r.heat_flow_noise if r.heat_flow_noise > 0 else 1.0
        blocks.append((x, 1.0 / temp, np.asarray(r.heat_flow, float), np.diff(t), w))
    return blocks


def fitted_heat_flows(fit, runs):
    r"""The measured and the fitted net heat flow of each run (W/kg), for plots.

    Parameters
    ----------
    fit : KineticFit
        A fit of the heat-flow signal (:func:`fit_nth_order` or :func:`fit_autocatalytic` on runs with their
        signal).
    runs : sequence of RunRates
        The runs fitted.

    Returns
    -------
    list of (time [s], temperature [K], measured net [W/kg], model [W/kg])
        The measured heat flow minus the fitted baseline, and :math:`Q_i k(T) h(lpha(t))`.

    Notes
    -----
    The model's conversion integrates the rate law from the window's start (see :func:`fit_nth_order`).

    References
    ----------
    As :func:`fit_nth_order`.

    Examples
    --------
    See ``tests/core/test_kinetics_fit.py`` (a fit of synthetic runs reproduces their signal).
    """
    blocks = _signal_blocks(runs)
    gen = _generation(fit.model, fit.names, fit.values, fit.reference_temperature, blocks)
    out = []
    for r, (x, inv_t, q, dt, w), g, heat, (a, b) in zip(runs, blocks, gen, fit.heats, fit.baselines):
        out.append((np.asarray(r.time, float), 1.0 / inv_t, q - (a + b * x), heat * g))
    return out


def _fit_signal(model, names, runs, reference_temperature, starts):
    """Fit the heat flow itself: kinetics plus each run's straight baseline and heat (nuisance parameters).

    Model of run i: q(t) = a_i + b_i x + Q_i k(T) h(alpha(t)), with x the baseline's abscissa, and alpha(t) the
    model's own conversion from the window's start (alpha = 0 there): G(alpha) = K(t) = integral of k(T) dt
    (each step exactly for a rate that is exponential in time between samples).  The residuals are then the
    measurement noise alone, so the covariance covers the baseline and the heat too.
    """
    from scipy.optimize import least_squares

    nk = len(names)
    blocks = _signal_blocks(runs)
    npts = sum(b[0].size for b in blocks)
    if npts <= nk + 3 * len(runs) + 2:
        raise ValueError(f"too few points to fit the {model} model ({npts})")
    nuisance0 = []
    for r in runs:
        nuisance0 += [r.baseline[0], r.baseline[1], r.heat]
    nuisance0 = np.array(nuisance0, float)
    kscale = np.ones(nk)
    kscale[1] = GAS_CONSTANT * reference_temperature
    nscale = np.concatenate([[max(r.heat_flow_noise, 1e-9 * abs(r.heat)) * 10,
                              max(r.heat_flow_noise, 1e-9 * abs(r.heat)) / max(np.ptp(b[0]), 1e-9) * 10,
                              abs(r.heat)] for r, b in zip(runs, blocks)])
    scale = np.concatenate([kscale, nscale])

    def generation(v):
        return _generation(model, names, v, reference_temperature, blocks)

    def residuals_of(v, gen):
        res = []
        for i, ((x, inv_t, q, dt, w), g) in enumerate(zip(blocks, gen)):
            a, b, heat = v[nk + 3 * i: nk + 3 * i + 3]
            res.append(w * (a + b * x + heat * g - q))
        return np.concatenate(res)

    def residuals(xs):
        v = xs * scale
        return residuals_of(v, generation(v))

    def jacobian(xs):
        v = xs * scale
        gen = generation(v)
        base = residuals_of(v, gen)
        jac = np.zeros((npts, scale.size))
        for j in range(nk):  # kinetic parameters: forward differences
            step = 1e-6 * max(abs(xs[j]), 1.0)
            v2 = v.copy()
            v2[j] = (xs[j] + step) * scale[j]
            jac[:, j] = (residuals_of(v2, generation(v2)) - base) / step
        pos = 0
        for i, ((x, inv_t, q, dt, w), g) in enumerate(zip(blocks, gen)):
            rows = slice(pos, pos + x.size)
            jac[rows, nk + 3 * i] = w * scale[nk + 3 * i]
            jac[rows, nk + 3 * i + 1] = w * x * scale[nk + 3 * i + 1]
            jac[rows, nk + 3 * i + 2] = w * g * scale[nk + 3 * i + 2]
            pos += x.size
        return jac

    lower = np.concatenate([[_BOUNDS[n][0] for n in names], np.full(3 * len(runs), -np.inf)]) / scale
    upper = np.concatenate([[_BOUNDS[n][1] for n in names], np.full(3 * len(runs), np.inf)]) / scale
    for i in range(len(runs)):
        lower[nk + 3 * i + 2] = 1e-6 * abs(nuisance0[3 * i + 2]) / scale[nk + 3 * i + 2]
    with np.errstate(invalid="ignore"):
        inner_lower = np.where(np.isfinite(lower), lower + 1e-6 * (np.abs(lower) + 1e-3), -np.inf)
        inner_upper = np.where(np.isfinite(upper), upper - 1e-6 * (np.abs(upper) + 1e-3), np.inf)
    best = None
    for start in starts:
        x0 = np.clip(np.concatenate([np.asarray(start, float), nuisance0]) / scale, inner_lower, inner_upper)
        with np.errstate(over="ignore", invalid="ignore", divide="ignore", under="ignore"):
            sol = least_squares(residuals, x0, jac=jacobian, method="lm", x_scale="jac", xtol=1e-10, ftol=1e-10,
                                gtol=1e-10, max_nfev=200)
            if not (np.all(sol.x >= lower) and np.all(sol.x <= upper)):  # the bounded method only when needed
                sol = least_squares(residuals, x0, jac=jacobian, bounds=(lower, upper), method="trf",
                                    x_scale="jac", xtol=1e-10, ftol=1e-10, gtol=1e-10, max_nfev=200)
        if best is None or sol.cost < best.cost:
            best = sol
    x = best.x
    with np.errstate(over="ignore", invalid="ignore", divide="ignore", under="ignore"):
        resid = residuals(x)
        jac = jacobian(x)
    ssr = float(2 * best.cost)
    s2 = ssr / max(npts - scale.size, 1) * _autocorrelation_factor(resid, [b[0].size for b in blocks])
    cov = s2 * np.linalg.pinv(jac.T @ jac) * np.outer(scale, scale)
    v = x * scale
    heat_idx = [nk + 3 * i + 2 for i in range(len(runs))]
    at_bounds = tuple(n for j, n in enumerate(names)
                      if np.isfinite(lower[j]) and abs(x[j] - lower[j]) < 1e-6 * max(1.0, abs(lower[j]))
                      or np.isfinite(upper[j]) and abs(x[j] - upper[j]) < 1e-6 * max(1.0, abs(upper[j])))
    return KineticFit(model, tuple(names), v[:nk], cov[:nk, :nk], reference_temperature, npts, ssr, at_bounds,
                      v[heat_idx], cov[np.ix_(heat_idx, heat_idx)],
                      tuple((float(v[nk + 3 * i]), float(v[nk + 3 * i + 1])) for i in range(len(runs))))


def _autocorrelation_factor(residuals, sizes):
    r"""Variance inflation for residuals correlated from one point to the next.

    For residuals with lag-1 autocorrelation :math:`\rho > 0` (an AR(1) process), the variance of a mean or a
    least-squares estimate is larger than for independent residuals by about :math:`(1 + \rho)/(1 - \rho)`
    (the effective number of independent points is :math:`N (1 - \rho)/(1 + \rho)`; Bayley and Hammersley,
    J. R. Stat. Soc. Suppl. 8 (1946) 184; common practice, from memory).  Structure left in the residuals
    (a baseline that is not quite straight, errors in the conversion) shows up this way.
    """
    num = den = 0.0
    pos = 0
    for n in sizes:
        r = residuals[pos:pos + n]
        pos += n
        if n > 2:
            num += float(r[1:] @ r[:-1])
            den += float(r @ r)
    rho = num / den if den > 0 else 0.0
    rho = min(max(rho, 0.0), 0.95)
    return (1.0 + rho) / (1.0 - rho)


def _log_linear_start(runs, reference_temperature, lo, hi, m=None, z=None):
    """Starting values from ordinary least squares on ln(rate) (linear in ln k, E and n for given m, z)."""
    temp, conv, rate, _ = _stack(runs, lo, hi)
    ok = rate > 0
    temp, conv, rate = temp[ok], conv[ok], rate[ok]
    y = np.log(rate)
    if m is not None:
        y = y - np.log(autocatalytic_term(np.clip(conv, 1e-12, 1.0), m, z)[0])
    x = -(1.0 / temp - 1.0 / reference_temperature) / GAS_CONSTANT
    a = np.column_stack([np.ones_like(x), x, np.log(np.clip(1.0 - conv, 1e-12, 1.0))])
    coef, *_ = np.linalg.lstsq(a, y, rcond=None)
    resid = y - a @ coef
    e = float(np.clip(coef[1], 2e3, 9e5))
    n = float(np.clip(coef[2], 0.0, 10.0))
    return [float(coef[0]), e, n], float(resid @ resid)


def fit_nth_order(runs, reference_temperature, conversion_range=(0.02, 0.98)):
    r"""Fit :math:`d\alpha/dt = k(T)(1-\alpha)^n` to several runs together by nonlinear least squares.

    Parameters
    ----------
    runs : sequence of RunRates
    reference_temperature : float, [K]
        T_ref of the fitted rate constant (use :meth:`KineticFit.uncorrelated_reference` and
        :meth:`KineticFit.at_reference` to move it where ln k_ref and E are uncorrelated).
    conversion_range : (float, float), default (0.02, 0.98)
        Points with a conversion in this range are fitted.

    Returns
    -------
    KineticFit
        Parameters ``ln_rate_constant`` (ln of 1/s), ``activation_energy`` [J/mol], ``order``.

    Notes
    -----
    Minimises :math:`\sum_i w_i^2 [r_i - k(T_i)(1-\alpha_i)^n]^2` over the measured rates :math:`r_i`, with
    :math:`w_i` the reciprocal of each run's noise level (equal weights when unknown), by scipy's
    trust-region reflective least squares with the analytic Jacobian J.  The covariance is
    :math:`s^2 (J^T J)^{-1}` with :math:`s^2 = SSR/(N - p)` (the usual asymptotic estimate: it covers the
    measurement noise, not a wrong model form nor errors in the baseline).

    References
    ----------
    Bates, D. M. and Watts, D. G., *Nonlinear Regression Analysis and Its Applications*, Wiley (1988), ch. 2
    (covariance of least-squares estimates; from memory).

    Examples
    --------
    Noise-free rates of a first-order reaction with k(400 K) = 1e-3 1/s and E = 100 kJ/mol:

    >>> import numpy as np
    >>> a = np.linspace(0.05, 0.95, 10)
    >>> k = lambda t: 1e-3 * np.exp(-1e5 / 8.314462618 * (1 / t - 1 / 400.0))
    >>> runs = [RunRates(np.full(10, t), a, k(t) * (1 - a)) for t in (390.0, 400.0, 410.0)]
    >>> fit = fit_nth_order(runs, 400.0)
    >>> f"{np.exp(fit.value('ln_rate_constant')):.4g}", round(fit.value("activation_energy")), round(fit.value("order"), 4)
    ('0.001', 100000, 1.0)
    """
    lo, hi = conversion_range
    start, _ = _log_linear_start(runs, reference_temperature, lo, hi)
    return _fit(NTH_ORDER, ("ln_rate_constant", "activation_energy", "order"), runs, reference_temperature,
                [start], lo, hi)


def fit_autocatalytic(runs, reference_temperature, conversion_range=(0.02, 0.98)):
    r"""Fit :math:`d\alpha/dt = k(T)(1-\alpha)^n(\alpha^m + z)` to several runs together.

    Parameters
    ----------
    runs : sequence of RunRates
    reference_temperature : float, [K]
    conversion_range : (float, float), default (0.02, 0.98)

    Returns
    -------
    KineticFit
        Parameters ``ln_rate_constant``, ``activation_energy`` [J/mol], ``order`` (n),
        ``autocatalytic_order`` (m) and ``ln_initiation`` (ln z).

    Notes
    -----
    As :func:`fit_nth_order`; the starting values are the best of a grid of (m, z), each with ln k, E and n
    from linear least squares on ln(rate), and the three best starts are refined.  A parameter that ends at
    its bound (m in [0.01, 10], z in [1e-7, 1e3], n in [0, 10]) is listed in ``at_bounds``: its interval
    then means little.

    References
    ----------
    Šesták and Berggren (1971); Bates and Watts (1988) for the covariance (from memory).

    Examples
    --------
    Noise-free rates with k(400 K) = 1e-3 1/s, E = 100 kJ/mol, n = 1, m = 1, z = 0.05:

    >>> import numpy as np
    >>> a = np.linspace(0.05, 0.95, 12)
    >>> runs = [RunRates(np.full(12, t), a, autocatalytic_rate(t, a, 1e-3, 400.0, 1e5, 1.0, 1.0, 0.05))
    ...         for t in (390.0, 400.0, 410.0)]
    >>> fit = fit_autocatalytic(runs, 400.0)
    >>> round(fit.value("activation_energy")), round(fit.value("autocatalytic_order"), 4)
    (100000, 1.0)
    >>> round(float(np.exp(fit.value("ln_initiation"))), 5)
    0.05
    """
    lo, hi = conversion_range
    trials = []
    for m in (0.3, 0.6, 1.0, 1.5, 2.5):
        for z in (1e-4, 1e-3, 1e-2, 0.05, 0.2, 1.0):
            start, ssr = _log_linear_start(runs, reference_temperature, lo, hi, m, z)
            trials.append((ssr, start + [m, math.log(z)]))
    trials.sort(key=lambda t: t[0])
    names = ("ln_rate_constant", "activation_energy", "order", "autocatalytic_order", "ln_initiation")
    return _fit(AUTOCATALYTIC, names, runs, reference_temperature, [t[1] for t in trials[:3]], lo, hi)


# ------------------------------------------------------------------ adiabatic time to maximum rate


def autocatalytic_tmr_adiabatic(initial_temperature, adiabatic_rise, rate_constant, reference_temperature,
                                activation_energy, order, autocatalytic_order, initiation,
                                initial_conversion=0.0):
    r"""Adiabatic time to maximum rate of an autocatalytic reaction, by quadrature (phi = 1).

    Parameters
    ----------
    initial_temperature : float, [K]
    adiabatic_rise : float, [K]
        Delta T_ad = heat of reaction / specific heat, > 0.
    rate_constant : float, [1/s]
        k at ``reference_temperature``.
    reference_temperature : float, [K]
    activation_energy : float, [J/mol]
    order, autocatalytic_order, initiation : float
        n, m and z > 0.
    initial_conversion : float, default 0

    Returns
    -------
    float, [s]

    Notes
    -----
    Adiabatic, :math:`T(\alpha) = T_0 + \Delta T_{ad}(\alpha - \alpha_0)`, so the rate is a function of
    conversion alone and

    .. math:: TMR_{ad} = \int_{\alpha_0}^{\alpha^*} \frac{d\alpha}{k(T(\alpha))(1-\alpha)^n(\alpha^m + z)}

    with :math:`\alpha^*` the conversion of maximum rate, computed by the autocatalytic source kind's own
    criterion (:func:`screening.core.runaway.autocatalytic.tmr_adiabatic_integrated`, the integrated adiabatic
    history), so that the kinetics command and the screening give the same TMRad.  Townsend and Tou's closed
    form is the zero-order asymptote and does not apply to an autocatalytic reaction.

    References
    ----------
    Townsend, D. I. and Tou, J. C., *Thermochimica Acta* 37 (1980) 1-30 (the adiabatic time to maximum rate).

    Examples
    --------
    With E -> 0 (no self-heating), n = m = 1 the reaction is logistic: by hand the time to the maximum
    rate (alpha = (1 - z) / 2) is ln(1 / z) / (k (1 + z)) = ln(100) / (1e-3 x 1.01) = 4559.6 s for z = 0.01:

    >>> round(autocatalytic_tmr_adiabatic(400.0, 100.0, 1e-3, 400.0, 1e-9, 1.0, 1.0, 0.01), 1)
    4559.6
    """
    from screening.core.model import ArrheniusSource
    from screening.core.runaway.autocatalytic import tmr_adiabatic_integrated

    # one implementation: the source kind's criterion, on 1 kg with c_p = 1 J/(kg K), so Delta h = Delta T_ad
    source = ArrheniusSource(adiabatic_rise * rate_constant, reference_temperature, activation_energy,
                             order=order, specific_heat_of_reaction=adiabatic_rise,
                             accumulated_fraction=1.0 - float(initial_conversion),
                             autocatalytic_order=autocatalytic_order, initiation=initiation)
    return float(tmr_adiabatic_integrated(initial_temperature, 1.0, [source]))
