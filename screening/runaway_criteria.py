r"""Runaway criteria for self-heating vessel contents, as pure functions.

Everything here takes SI floats (or numpy arrays where stated) and returns SI
floats: kg, m, s, K, W, J.  Nothing reads files, prints or uses units objects.

Contents
--------
* Heat balance pieces: :func:`heat_generation`, :func:`heat_generation_slope`,
  :func:`heat_loss`.
* Adiabatic time to maximum rate and the 24 h temperature:
  :func:`tmr_adiabatic`, :func:`t_d24` (Townsend and Tou 1980).
* Semenov analysis of a well-stirred vessel: :func:`semenov_critical_ambient`,
  :func:`steady_states` (Semenov 1928).
* Adiabatic temperature rise, MTSR and the class helpers:
  :func:`adiabatic_temperature_rise`, :func:`mtsr`, :func:`criticality_class`,
  :func:`tmr_probability_class`, :func:`severity_class` (Stoessel 2008).
* Frank-Kamenetskii analysis of unstirred contents:
  :func:`frank_kamenetskii_parameter`, :func:`frank_kamenetskii_critical`,
  :func:`frank_kamenetskii_critical_ambient`.
* Warning texts: module constants ``WARNING_*`` and :func:`kinetics_warnings`.

Numbers and warnings
--------------------
Functions whose result rests on a simplification that is *not* conservative
accept ``full_output=True`` and then return ``(result, warnings)``, where
``warnings`` is a list of plain-text strings that belong to that result.  The
caller should keep them next to the number they qualify.

Arrhenius rates are evaluated in logarithms (same law as
:func:`screening.arrhenius.arrhenius_specific_power`) so that extreme inputs
cannot overflow; sums of exponentials use a log-sum-exp.  Root finding is
bracketed on a fixed grid and refined with Brent's method
(:func:`screening.root_finding.brent_root`), so every search is bounded.
scipy is imported only inside the Frank-Kamenetskii reference solution.

References
----------
.. [1] Townsend, D. I. and Tou, J. C., "Thermal hazard evaluation by an
   accelerating rate calorimeter", Thermochimica Acta 37 (1980) 1-30.
.. [2] Semenov, N. N., "Zur Theorie des Verbrennungsprozesses", Zeitschrift
   fuer Physik 48 (1928) 571-582.
.. [3] Frank-Kamenetskii, D. A., Acta Physicochimica URSS 10 (1939) 365;
   *Diffusion and Heat Exchange in Chemical Kinetics*, Princeton University
   Press (1955), 2nd ed. Plenum (1969).
.. [4] Stoessel, F., *Thermal Safety of Chemical Processes: Risk Assessment
   and Process Design*, Wiley-VCH, Weinheim (2008).
"""
from __future__ import annotations

import math
from functools import lru_cache
from typing import NamedTuple, Sequence

import numpy as np

from .model import (
    GAS_CONSTANT,
    ArrheniusSource,
    ConstantSource,
    DecayingSource,
    HeatingMedium,
)
from .root_finding import brent_root

__all__ = [
    "SECONDS_PER_HOUR",
    "T_D24_TIME",
    "T_D24_RANGE",
    "SEARCH_RANGE",
    "DEFAULT_MAX_EXTRAPOLATION",
    "FK_GEOMETRIES",
    "WARNING_ZERO_CONVERSION",
    "WARNING_EXTRAPOLATION",
    "WARNING_FK_SURFACE_AT_AMBIENT",
    "WARNING_FK_ARRHENIUS_ONLY",
    "WARNING_UNBOUNDED_RISE",
    "WARNING_CONSTANT_SOURCES_NOT_IN_RISE",
    "WARNING_TRANSIENT_SOURCES",
    "WARNING_LOW_SEVERITY_PRESSURE",
    "SemenovCritical",
    "SteadyStates",
    "heat_generation",
    "heat_generation_slope",
    "heat_loss",
    "kinetics_warnings",
    "tmr_adiabatic",
    "t_d24",
    "semenov_critical_ambient",
    "steady_states",
    "adiabatic_temperature_rise",
    "mtsr",
    "criticality_class",
    "tmr_probability_class",
    "severity_class",
    "frank_kamenetskii_parameter",
    "frank_kamenetskii_critical",
    "frank_kamenetskii_critical_ambient",
]

# --------------------------------------------------------------------------
# Constants
# --------------------------------------------------------------------------

SECONDS_PER_HOUR = 3600.0
#: Time defining T_D24, s (24 h).
T_D24_TIME = 24.0 * SECONDS_PER_HOUR
#: Default temperature range searched for T_D24, K.
T_D24_RANGE = (200.0, 1500.0)
#: Default temperature range searched by the Semenov and Frank-Kamenetskii
#: solvers, K.  Wide on purpose: a critical point far outside the range of
#: real vessels is still reported instead of silently missed.
SEARCH_RANGE = (10.0, 5000.0)
#: Distance, K, beyond the tested range (or the reference temperature when no
#: range is known) at which :func:`kinetics_warnings` flags extrapolation.  A
#: screening choice of this module, not a published limit.
DEFAULT_MAX_EXTRAPOLATION = 20.0
#: Geometry names accepted by the Frank-Kamenetskii functions and their shape
#: index j in the Laplacian d2/dx2 + (j/x) d/dx.
FK_GEOMETRIES = {"slab": 0, "cylinder": 1, "sphere": 2}

_GRID_POINTS = 2001  # points of the bracketing grid over SEARCH_RANGE
_LOG_CAP = 700.0  # largest exponent ever passed to exp (exp(700) ~ 1e304)
_EPS = np.finfo(float).eps

# --------------------------------------------------------------------------
# Warning texts
# --------------------------------------------------------------------------

WARNING_ZERO_CONVERSION = (
    "Heat-release rates are taken at zero conversion (or at the conversion "
    "given). If the decomposition is autocatalytic its rate rises as it "
    "proceeds, so a rate measured at zero conversion understates it and the "
    "times and temperatures derived from it are not conservative."
)

WARNING_EXTRAPOLATION = (
    "Arrhenius source {index}: kinetics used at {temperature:.1f} K, "
    "{distance:.0f} K {side} {basis}. Arrhenius parameters extrapolated far "
    "beyond the tested temperature range are not conservative: another "
    "reaction or a lower activation energy may dominate there."
)

WARNING_FK_SURFACE_AT_AMBIENT = (
    "The Frank-Kamenetskii critical value used assumes the surface is held "
    "at ambient temperature (Biot number -> infinity; textbook constants "
    "0.878 slab, 2.000 cylinder, 3.322 sphere). A real surface with a finite "
    "heat-transfer coefficient gives a lower critical value, so these "
    "constants overstate the safe range: use the actual Biot number."
)

WARNING_FK_ARRHENIUS_ONLY = (
    "The Frank-Kamenetskii analysis covers the Arrhenius sources only. "
    "Constant, decaying or fire heat input and heating media are not in it; "
    "any of them lowers the true critical ambient temperature."
)

WARNING_UNBOUNDED_RISE = (
    "Arrhenius source {index} has no heat of reaction, so its heat release is "
    "unbounded: the adiabatic temperature rise and the MTSR are infinite."
)

WARNING_CONSTANT_SOURCES_NOT_IN_RISE = (
    "Constant heat sources are not accumulated reaction energy and are not in "
    "the adiabatic temperature rise or the MTSR; while they act, they add "
    "heat without limit and the temperature keeps rising."
)

WARNING_TRANSIENT_SOURCES = (
    "The Semenov steady states include only constant power and the "
    "Arrhenius sources. A transient input (decaying source, fire, a hot "
    "start) can push the contents above the no-return temperature, after "
    "which they run away even though the ambient is below the critical "
    "ambient."
)

WARNING_LOW_SEVERITY_PRESSURE = (
    "A 'low' severity (adiabatic temperature rise below 50 K) presumes no "
    "pressure effect: gas generation or vapour pressure in a closed vessel "
    "can still be severe."
)


# --------------------------------------------------------------------------
# Small helpers
# --------------------------------------------------------------------------

def _safe_log(x):
    """Natural log that returns -inf for x <= 0 without a numpy warning."""
    x = np.asarray(x, dtype=float)
    positive = x > 0
    return np.where(positive, np.log(np.where(positive, x, 1.0)), -np.inf)


def _logsumexp(a, axis=0):
    """log(sum(exp(a))) along ``axis`` with -inf entries allowed."""
    a = np.asarray(a, dtype=float)
    if a.shape[axis] == 0:
        return np.full(np.delete(a.shape, axis), -np.inf)
    amax = np.max(a, axis=axis)
    finite = np.isfinite(amax)
    shift = np.where(finite, amax, 0.0)
    total = np.sum(np.exp(a - np.expand_dims(shift, axis)), axis=axis)
    return np.where(finite, shift + np.log(np.where(finite, total, 1.0)), -np.inf)


def _exp_capped(x):
    """exp(x) with the exponent capped so that the result stays finite."""
    return np.exp(np.minimum(x, _LOG_CAP))


def _scalar_or_array(x):
    x = np.asarray(x, dtype=float)
    return float(x) if x.ndim == 0 else x


def _positive_temperature(temperature, name="temperature"):
    t = np.asarray(temperature, dtype=float)
    if not np.all(np.isfinite(t)) or np.any(t <= 0):
        raise ValueError(f"{name} must be finite and > 0 K")
    return t


def _check_sources(sources) -> tuple[ArrheniusSource, ...]:
    sources = tuple(sources)
    for i, s in enumerate(sources, start=1):
        values = (s.specific_power, s.reference_temperature, s.activation_energy,
                  s.order, s.accumulated_fraction)
        if not all(math.isfinite(float(v)) for v in values):
            raise ValueError(f"Arrhenius source {i}: parameters must be finite")
        if s.specific_power < 0:
            raise ValueError(f"Arrhenius source {i}: specific power must be >= 0")
        if s.reference_temperature <= 0:
            raise ValueError(f"Arrhenius source {i}: reference temperature must be > 0 K")
        if s.activation_energy < 0:
            raise ValueError(f"Arrhenius source {i}: activation energy must be >= 0")
        if s.order < 0:
            raise ValueError(f"Arrhenius source {i}: order must be >= 0")
        if not 0.0 <= s.accumulated_fraction <= 1.0:
            raise ValueError(f"Arrhenius source {i}: accumulated fraction must be in [0, 1]")
    return sources


def _conversions(sources, conversion) -> list[float]:
    n = len(sources)
    if conversion is None:
        values = [0.0] * n
    elif np.ndim(conversion) == 0:
        values = [float(conversion)] * n
    else:
        values = [float(c) for c in conversion]
        if len(values) != n:
            raise ValueError("conversion needs one value per Arrhenius source")
    for x in values:
        if not 0.0 <= x <= 1.0:
            raise ValueError("conversion must be in [0, 1]")
    return values


def _log_specific_powers(temperature, sources, conversion):
    """log q_i(T), W/kg, shape (n_sources,) + shape(temperature)."""
    t = np.asarray(temperature, dtype=float)
    conv = _conversions(sources, conversion)
    out = np.empty((len(sources),) + t.shape)
    for i, (s, x) in enumerate(zip(sources, conv)):
        lq = _safe_log(s.specific_power) - s.activation_energy / GAS_CONSTANT * (
            1.0 / t - 1.0 / s.reference_temperature)
        if s.order != 0:
            lq = lq + s.order * _safe_log(1.0 - x)
        out[i] = lq
    return out


def _log_energy_weighted_rate(temperature, sources, conversion):
    """log sum_i q_i(T) E_i, log of W J/(kg mol)."""
    t = np.asarray(temperature, dtype=float)
    lq = _log_specific_powers(t, sources, conversion)
    log_e = _safe_log([s.activation_energy for s in sources]).reshape(
        (len(sources),) + (1,) * t.ndim)
    return _logsumexp(lq + log_e, axis=0)


def _grid(temperature_range, points=_GRID_POINTS):
    lo, hi = (float(v) for v in temperature_range)
    if not (math.isfinite(lo) and math.isfinite(hi) and 0 < lo < hi):
        raise ValueError("temperature_range must be (low, high) with 0 < low < high")
    return np.geomspace(lo, hi, points)


def _root(f, a, b):
    """Bracketed root of a scalar function (Brent's method, bounded loop)."""
    return float(brent_root(lambda x: float(f(x)), float(a), float(b),
                            xtol=1e-12, rtol=4 * _EPS, maxiter=200))


def _golden_minimum(f, a, b, xtol=1e-6, maxiter=200):
    """(x, f(x)) at a minimum of a unimodal f on [a, b] (golden section)."""
    inv_phi = (math.sqrt(5.0) - 1.0) / 2.0
    c, d = b - inv_phi * (b - a), a + inv_phi * (b - a)
    fc, fd = f(c), f(d)
    for _ in range(maxiter):
        if b - a <= xtol:
            break
        if fc <= fd:
            b, d, fd = d, c, fc
            c = b - inv_phi * (b - a)
            fc = f(c)
        else:
            a, c, fc = c, d, fd
            d = a + inv_phi * (b - a)
            fd = f(d)
    return (c, fc) if fc <= fd else (d, fd)


# --------------------------------------------------------------------------
# Heat balance
# --------------------------------------------------------------------------

def heat_generation(temperature, mass, sources, constant_power=0.0, conversion=None):
    r"""Heat generated by the contents at a temperature.

    Parameters
    ----------
    temperature : float or array, K
    mass : float, kg
        Contents mass m.
    sources : sequence of :class:`screening.model.ArrheniusSource`
    constant_power : float, W, default 0
        Temperature-independent power P (sum of constant sources).
    conversion : None, float or sequence of float, dimensionless
        Conversion X of each source (one value for all, or one per source);
        None means zero conversion.

    Returns
    -------
    float or array, W

    Notes
    -----
    .. math:: Q_{gen}(T) = P + m \sum_i q_i(T, X_i)

    with :math:`q_i` the Arrhenius law of
    :func:`screening.arrhenius.arrhenius_specific_power`, evaluated in
    logarithms; the total is capped at about 1e304 W so it never overflows.
    """
    t = _positive_temperature(temperature)
    sources = _check_sources(sources)
    log_total = _safe_log(mass) + _logsumexp(_log_specific_powers(t, sources, conversion), 0)
    return _scalar_or_array(constant_power + _exp_capped(log_total))


def heat_generation_slope(temperature, mass, sources, conversion=None):
    r"""Temperature derivative of the heat generation, dQ_gen/dT.

    Parameters
    ----------
    temperature : float or array, K
    mass : float, kg
    sources : sequence of :class:`screening.model.ArrheniusSource`
    conversion : None, float or sequence of float, dimensionless

    Returns
    -------
    float or array, W/K

    Notes
    -----
    At fixed conversion, for the Arrhenius law,

    .. math:: \frac{dQ_{gen}}{dT} = m \sum_i q_i(T) \frac{E_i}{R T^2}

    Each term increases with T while T < E_i / (2 R).
    """
    t = _positive_temperature(temperature)
    sources = _check_sources(sources)
    log_slope = (_safe_log(mass) + _log_energy_weighted_rate(t, sources, conversion)
                 - math.log(GAS_CONSTANT) - 2.0 * np.log(t))
    return _scalar_or_array(_exp_capped(log_slope))


def heat_loss(temperature, ua, ambient, heating_media: Sequence[HeatingMedium] = ()):
    r"""Heat removed from the contents by the linear part of the balance.

    Parameters
    ----------
    temperature : float or array, K
    ua : float, W/K
        Loss coefficient to ambient.
    ambient : float, K
    heating_media : sequence of :class:`screening.model.HeatingMedium`
        Jackets or coils left on; each adds ``ua_k (T_m,k - T)`` of heat,
        i.e. removes ``ua_k (T - T_m,k)``.

    Returns
    -------
    float or array, W (negative when the media heat more than ambient cools)

    Notes
    -----
    .. math:: Q_{loss}(T) = UA (T - T_a) + \sum_k ua_k (T - T_{m,k})
              = G (T - T_{eq})

    with :math:`G = UA + \sum_k ua_k` and
    :math:`T_{eq} = (UA\,T_a + \sum_k ua_k T_{m,k}) / G`.
    """
    t = np.asarray(temperature, dtype=float)
    out = ua * (t - ambient)
    for medium in heating_media:
        out = out + medium.ua * (t - medium.medium_temperature)
    return _scalar_or_array(out)


def _lumped_loss(ua, heating_media):
    """(G, H): Q_loss = G T - (ua Ta + H), with H = sum ua_k T_m,k."""
    if not (math.isfinite(ua) and ua >= 0):
        raise ValueError("ua must be finite and >= 0")
    g = float(ua)
    h = 0.0
    for medium in heating_media:
        if not (math.isfinite(medium.ua) and medium.ua >= 0):
            raise ValueError("heating medium ua must be finite and >= 0")
        g += medium.ua
        h += medium.ua * medium.medium_temperature
    return g, h


# --------------------------------------------------------------------------
# Warnings about the kinetics
# --------------------------------------------------------------------------

def kinetics_warnings(sources, temperatures=(), conversion=None, tested_range=None,
                      max_extrapolation=DEFAULT_MAX_EXTRAPOLATION) -> list[str]:
    """Warning texts for results computed from Arrhenius sources.

    Parameters
    ----------
    sources : sequence of :class:`screening.model.ArrheniusSource`
    temperatures : iterable of float or None, K
        Temperatures at which the kinetics were used for the result (None and
        non-finite values are skipped).
    conversion : None, float or sequence, dimensionless
        Only documents that rates are at zero or given conversion.
    tested_range : None, (low, high) or sequence of (low, high or None), K
        Temperature range over which each source's parameters were measured;
        one pair for all sources or one per source.  None: each source's own
        ``tested_range`` attribute if it has one, otherwise only the
        reference temperature is known and distances are measured from it.
    max_extrapolation : float, K
        Distance beyond the range at which extrapolation is flagged
        (default :data:`DEFAULT_MAX_EXTRAPOLATION`, a screening choice).

    Returns
    -------
    list of str
        Empty when there are no sources with a non-zero rate.  Otherwise
        :data:`WARNING_ZERO_CONVERSION` and, per source, at most one
        extrapolation warning (for the farthest temperature).
    """
    sources = _check_sources(sources)
    active = [s for s in sources if s.specific_power > 0]
    if not active:
        return []
    out = [WARNING_ZERO_CONVERSION]

    def is_pair(r):
        return (r is not None and len(r) == 2
                and all(isinstance(v, (int, float, np.floating, np.integer)) for v in r))

    if tested_range is not None and is_pair(tested_range):
        ranges = [tuple(tested_range)] * len(sources)
    elif tested_range is not None:
        ranges = [None if r is None else tuple(r) for r in tested_range]
        if len(ranges) != len(sources) or not all(r is None or is_pair(r) for r in ranges):
            raise ValueError("tested_range needs one (low, high) pair per source")
    else:
        ranges = [getattr(s, "tested_range", None) for s in sources]
    temps = [float(t) for t in temperatures if t is not None and math.isfinite(float(t))]
    for i, (s, rng) in enumerate(zip(sources, ranges), start=1):
        if s.specific_power <= 0 or not temps:
            continue
        if rng is None:
            lo = hi = s.reference_temperature
            basis = (f"its reference temperature {s.reference_temperature:.1f} K "
                     "(no tested range given)")
        else:
            lo, hi = float(rng[0]), float(rng[1])
            basis = f"its tested range {lo:.1f}-{hi:.1f} K"
        worst_t, worst_d = None, -math.inf
        for t in temps:
            d = max(lo - t, t - hi)
            if d > worst_d:
                worst_t, worst_d = t, d
        if worst_d > max_extrapolation:
            side = "below" if worst_t < lo else "above"
            out.append(WARNING_EXTRAPOLATION.format(
                index=i, temperature=worst_t, distance=worst_d, side=side, basis=basis))
    return out


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
    temperature : float or array, K
        Starting temperature T0.
    specific_heat : float, J/(kg K)
        Specific heat of the contents only.  The heat capacity of the vessel
        wall is ignored here, which shortens the time: conservative.
    sources : sequence of :class:`screening.model.ArrheniusSource`
    conversion : None, float or sequence of float, dimensionless
        Conversion at which rates are taken; None means zero conversion (the
        fastest rate for an n-th order reaction; not for an autocatalytic
        one, see :data:`WARNING_ZERO_CONVERSION`).

    Returns
    -------
    float or array, s
        ``inf`` where no source releases heat with a positive activation
        energy.

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

    References
    ----------
    .. [1] Townsend, D. I. and Tou, J. C., Thermochimica Acta 37 (1980) 1-30.
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
    specific_heat : float, J/(kg K)
        Contents only; wall heat capacity ignored (conservative: a lower
        T_D24).
    sources : sequence of :class:`screening.model.ArrheniusSource`
    conversion : None, float or sequence of float, dimensionless
        As in :func:`tmr_adiabatic`.
    target_time : float, s, default 86400
        Other values give, e.g., T_D8 for 8 h.
    temperature_range : (float, float), K, default (200, 1500)
        Range searched.
    full_output : bool, default False
        Also return a list of warning texts.

    Returns
    -------
    float or None, K
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
    Townsend and Tou [1]_.

    References
    ----------
    .. [1] Townsend, D. I. and Tou, J. C., Thermochimica Acta 37 (1980) 1-30.
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

    def g(t):
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


# --------------------------------------------------------------------------
# Semenov: well-stirred contents
# --------------------------------------------------------------------------

class SemenovCritical(NamedTuple):
    """Critical point of the Semenov balance (both K, or None)."""

    ambient: float | None
    temperature: float | None


class SteadyStates(NamedTuple):
    """Steady states of the Semenov balance (both K, or None)."""

    stable: float | None
    unstable: float | None


def _tangency(mass, sources, conductance, conversion, temperature_range):
    """Lowest T where dQ_gen/dT rises to the loss slope G.

    Returns (T or None, status, grid); status in {"found", "none",
    "below_range", "no_arrhenius"}.
    """
    grid = _grid(temperature_range)
    log_g = math.log(conductance)

    def log_slope(t):
        return (_safe_log(mass) + _log_energy_weighted_rate(t, sources, conversion)
                - math.log(GAS_CONSTANT) - 2.0 * np.log(t))

    h = log_slope(grid) - log_g
    if not np.any(np.isfinite(h)):
        return None, "no_arrhenius", grid
    if h[0] >= 0:
        return None, "below_range", grid
    above = np.flatnonzero(h >= 0)
    if above.size == 0:
        return None, "none", grid
    k = int(above[0])
    tc = _root(lambda t: float(log_slope(np.asarray(t))) - log_g, grid[k - 1], grid[k])
    return tc, "found", grid


def semenov_critical_ambient(mass, sources, constant_power, ua,
                             heating_media: Sequence[HeatingMedium] = (), conversion=None,
                             *, temperature_range=SEARCH_RANGE, full_output=False):
    r"""Critical ambient temperature of a well-stirred vessel (Semenov).

    Parameters
    ----------
    mass : float, kg
        Contents mass m.
    sources : sequence of :class:`screening.model.ArrheniusSource`
    constant_power : float, W
        Temperature-independent power P.
    ua : float, W/K
        Loss coefficient to ambient.
    heating_media : sequence of :class:`screening.model.HeatingMedium`
        Extra linear terms ua_k (T_m,k - T) (jackets or coils left on).
    conversion : None, float or sequence of float, dimensionless
        None means zero conversion.
    temperature_range : (float, float), K
        Range searched for the tangency temperature.
    full_output : bool
        Also return a list of warning texts.

    Returns
    -------
    SemenovCritical(ambient, temperature)
        ``ambient``: Ta,c, K, the highest ambient at which a stable steady
        state exists; ``temperature``: Tc, K, the contents temperature at
        the tangency.  Both None when ``ua == 0`` (no ambient gives a steady
        state), when there is no Arrhenius source, or when no tangency lies
        in ``temperature_range`` (``full_output`` says which).
    warnings : list of str
        Only with ``full_output=True``.

    Notes
    -----
    Generation :math:`Q_{gen}(T) = P + m \sum_i q_i(T)`, loss
    :math:`G (T - T_{eq})` with :math:`G = UA + \sum_k ua_k` and
    :math:`G T_{eq} = UA\,T_a + \sum_k ua_k T_{m,k}`.  At criticality the
    loss line touches the generation curve:

    .. math:: Q_{gen}'(T_c) = G, \qquad Q_{gen}(T_c) = G (T_c - T_{eq,c})

    so :math:`T_{a,c} = (G T_{eq,c} - \sum_k ua_k T_{m,k}) / UA`.  For one
    zero-order source without P or media this is
    :math:`T_{a,c} = T_c - R T_c^2 / E`, approximately
    :math:`T_c - T_{a,c} \approx R T_{a,c}^2 / E`.  :math:`Q_{gen}'` is a sum
    of terms that each increase while T < E_i/(2R); the lowest temperature
    where it reaches G is bracketed on a grid and refined with Brent's
    method on :math:`\ln Q_{gen}' - \ln G`.  With several sources there may
    be further tangencies at higher temperatures; the lowest one ends the
    low-temperature stable branch and is the one reported.  The contents are
    taken as well stirred (uniform temperature); boiling is given no credit.

    References
    ----------
    .. [1] Semenov, N. N., Z. Phys. 48 (1928) 571-582.
    """
    if not (math.isfinite(mass) and mass >= 0):
        raise ValueError("mass must be finite and >= 0")
    sources = _check_sources(sources)
    conductance, media_term = _lumped_loss(ua, heating_media)
    warnings: list[str] = []
    result = SemenovCritical(None, None)
    if ua == 0:
        warnings.append("No heat loss to ambient (UA = 0): no ambient temperature "
                        "gives a steady state through the ambient, so there is no "
                        "critical ambient temperature.")
    else:
        tc, status, grid = _tangency(mass, sources, conductance, conversion, temperature_range)
        if status == "found":
            q = heat_generation(tc, mass, sources, constant_power, conversion)
            t_eq = tc - q / conductance
            result = SemenovCritical((conductance * t_eq - media_term) / ua, tc)
        elif status == "no_arrhenius":
            warnings.append("No Arrhenius source with a temperature-dependent rate: "
                            "no Semenov critical point.")
        elif status == "below_range":
            warnings.append(
                f"The heat-generation slope already exceeds the loss coefficient at "
                f"{grid[0]:.1f} K: the critical point lies below the range searched "
                "and there is no stable steady state at any ambient in it.")
        else:
            warnings.append(
                f"The heat-generation slope stays below the loss coefficient up to "
                f"{grid[-1]:.0f} K: no Semenov critical point in the range searched "
                "(the contents settle at a steady state, which may be very hot).")
    warnings = kinetics_warnings(sources, [result.temperature], conversion) + warnings
    if full_output:
        return result, warnings
    return result


def steady_states(mass, sources, constant_power, ua, ambient,
                  heating_media: Sequence[HeatingMedium] = (), conversion=None,
                  *, temperature_range=SEARCH_RANGE, full_output=False):
    r"""Stable and unstable (no-return) steady temperatures of a stirred vessel.

    Parameters
    ----------
    mass : float, kg
    sources : sequence of :class:`screening.model.ArrheniusSource`
    constant_power : float, W
    ua : float, W/K
    ambient : float, K
    heating_media : sequence of :class:`screening.model.HeatingMedium`
    conversion : None, float or sequence of float, dimensionless
    temperature_range : (float, float), K
        Range searched.
    full_output : bool
        Also return a list of warning texts.

    Returns
    -------
    SteadyStates(stable, unstable)
        ``stable``: the lower, stable steady temperature, K; ``unstable``:
        the upper, unstable one, K -- the no-return temperature: contents
        above it run away.  ``(None, None)`` above the critical ambient or
        with no heat loss at all; ``unstable`` is None when generation never
        overtakes the loss line in the range (e.g. no Arrhenius source, where
        the stable state is the exact linear one :math:`T_{eq} + P/G`).
    warnings : list of str
        Only with ``full_output=True``.

    Notes
    -----
    Roots of

    .. math:: F(T) = Q_{gen}(T) - G (T - T_{eq}) = 0

    (notation of :func:`semenov_critical_ambient`).  Below the tangency
    temperature T_c, :math:`F' = Q_{gen}' - G < 0`, so F falls and the lower
    root is stable; above T_c, F rises and the next root is unstable.  Each
    is bracketed (with T_c and the search grid) and refined with Brent's
    method.  Only the low-temperature branch is reported; a hot steady state
    reached after a runaway is not.

    References
    ----------
    .. [1] Semenov, N. N., Z. Phys. 48 (1928) 571-582.
    """
    if not (math.isfinite(mass) and mass >= 0):
        raise ValueError("mass must be finite and >= 0")
    if not (math.isfinite(ambient) and ambient > 0):
        raise ValueError("ambient must be finite and > 0 K")
    sources = _check_sources(sources)
    conductance, media_term = _lumped_loss(ua, heating_media)
    warnings: list[str] = [WARNING_TRANSIENT_SOURCES]
    result = SteadyStates(None, None)

    def finish(res):
        out_warnings = kinetics_warnings(sources, [res.stable, res.unstable], conversion) + warnings
        return (res, out_warnings) if full_output else res

    if conductance == 0:
        warnings.append("No heat loss (UA = 0 and no heating media): no steady "
                        "state; the temperature rises without limit while any "
                        "heat is released.")
        return finish(result)
    t_eq = (ua * ambient + media_term) / conductance

    def balance(t):
        return (heat_generation(t, mass, sources, constant_power, conversion)
                - conductance * (np.asarray(t, dtype=float) - t_eq))

    tc, status, grid = _tangency(mass, sources, conductance, conversion, temperature_range)
    lo, hi = float(grid[0]), float(grid[-1])
    if status == "no_arrhenius":
        t_s = t_eq + constant_power / conductance
        result = SteadyStates(t_s if t_s > 0 else None, None)
        if t_s <= 0:
            warnings.append("The linear steady state is at or below 0 K: none reported.")
        return finish(result)
    if status == "found":
        f_c = balance(tc)
        if f_c > 0:
            warnings.append("Ambient above the critical ambient: no steady state; "
                            "the contents run away.")
            return finish(result)
        if f_c == 0:
            return finish(SteadyStates(tc, tc))
        stable = _root(balance, lo, tc) if balance(lo) >= 0 else None
        if stable is None:
            warnings.append(f"The stable steady state lies below {lo:.1f} K, outside "
                            "the range searched.")
        upper_grid = np.concatenate(([tc], grid[grid > tc]))
        unstable = _first_rising_root(balance, upper_grid)
        if unstable is None:
            warnings.append(f"Generation does not overtake the loss line below "
                            f"{hi:.0f} K: no no-return temperature in the range searched.")
        return finish(SteadyStates(stable, unstable))
    if status == "none":
        # F decreases across the whole range: one stable root at most.
        f_lo, f_hi = balance(lo), balance(hi)
        if f_lo >= 0 >= f_hi:
            return finish(SteadyStates(_root(balance, lo, hi), None))
        where = "above" if f_hi > 0 else "below"
        warnings.append(f"The steady state lies {where} the range searched "
                        f"({lo:.0f}-{hi:.0f} K).")
        return finish(result)
    # status == "below_range": generation is steeper than loss from the start.
    warnings.append(f"The generation slope exceeds the loss coefficient already at "
                    f"{lo:.1f} K: no stable steady state in the range searched.")
    return finish(SteadyStates(None, _first_rising_root(balance, grid)))


def _first_rising_root(f, grid):
    """First root of f where it rises through zero along ``grid`` (or None).

    ``f`` must accept an array (vectorised) and a float.
    """
    values = np.asarray(f(np.asarray(grid, dtype=float)), dtype=float)
    if values[0] >= 0:
        return float(grid[0]) if values[0] == 0 else None
    up = np.flatnonzero(values >= 0)
    if up.size == 0:
        return None
    k = int(up[0])
    return _root(f, float(grid[k - 1]), float(grid[k]))


# --------------------------------------------------------------------------
# Adiabatic temperature rise, MTSR, classes
# --------------------------------------------------------------------------

def adiabatic_temperature_rise(mass, specific_heat, arrhenius_sources=(),
                               decaying_sources: Sequence[DecayingSource] = (),
                               constant_sources: Sequence[ConstantSource] = (),
                               *, full_output=False):
    r"""Adiabatic temperature rise from the accumulated reaction energy.

    Parameters
    ----------
    mass : float, kg
        Contents mass m (> 0).
    specific_heat : float, J/(kg K)
        Contents only; the wall heat capacity is ignored, which makes the
        rise larger: conservative.
    arrhenius_sources : sequence of :class:`screening.model.ArrheniusSource`
        Each contributes ``accumulated_fraction * specific_heat_of_reaction``
        per kg.  A source without a heat of reaction makes the rise
        unbounded (for order 0 this is the model's meaning; for order > 0 it
        is treated the same way, which is conservative).
    decaying_sources : sequence of :class:`screening.model.DecayingSource`
        Each contributes its remaining energy ``power * time_constant``.
    constant_sources : sequence of :class:`screening.model.ConstantSource`
        Not included in the rise (not accumulated energy); passed only so
        that the warning :data:`WARNING_CONSTANT_SOURCES_NOT_IN_RISE` can be
        attached when any has positive power.
    full_output : bool
        Also return a list of warning texts.

    Returns
    -------
    float, K
        ``math.inf`` when the rise is unbounded (test with
        ``math.isinf``; the warnings say which source).
    warnings : list of str
        Only with ``full_output=True``.

    Notes
    -----
    .. math:: \Delta T_{ad} = \frac{\sum_d P_d \tau_d
              + m \sum_i X_{ac,i} \Delta h_i}{m c_p}

    :math:`\int_0^\infty P e^{-t/\tau} dt = P\tau` is the energy still to
    come from a decaying source.  The accumulated fraction times the
    adiabatic rise is the quantity that enters the MTSR (Stoessel [1]_).

    References
    ----------
    .. [1] Stoessel, F., Thermal Safety of Chemical Processes, Wiley-VCH (2008).
    """
    if not (math.isfinite(mass) and mass > 0):
        raise ValueError("mass must be finite and > 0")
    if not (math.isfinite(specific_heat) and specific_heat > 0):
        raise ValueError("specific_heat must be finite and > 0")
    sources = _check_sources(arrhenius_sources)
    warnings: list[str] = []
    energy = 0.0
    unbounded = False
    for d in decaying_sources:
        energy += d.power * d.time_constant
    for i, s in enumerate(sources, start=1):
        if s.specific_heat_of_reaction is None:
            if s.specific_power > 0 or s.accumulated_fraction > 0:
                unbounded = True
                warnings.append(WARNING_UNBOUNDED_RISE.format(index=i))
            continue
        energy += mass * s.accumulated_fraction * s.specific_heat_of_reaction
    if any(c.power > 0 for c in constant_sources):
        warnings.append(WARNING_CONSTANT_SOURCES_NOT_IN_RISE)
    rise = math.inf if unbounded else energy / (mass * specific_heat)
    if full_output:
        return rise, warnings
    return rise


def mtsr(process_temperature, temperature_rise):
    r"""Maximum temperature of the synthesis reaction (MTSR).

    Parameters
    ----------
    process_temperature : float or array, K
        Process temperature Tp at the moment cooling fails.
    temperature_rise : float, array or None, K
        Adiabatic rise of the *accumulated* energy, as returned by
        :func:`adiabatic_temperature_rise` (already weighted by the
        accumulated fraction); may be ``inf``.

    Returns
    -------
    float, array or None, K
        None when ``temperature_rise`` is None.

    Notes
    -----
    .. math:: MTSR = T_p + X_{ac} \Delta T_{ad}

    References
    ----------
    .. [1] Stoessel, F., Thermal Safety of Chemical Processes, Wiley-VCH (2008).
    """
    if temperature_rise is None or process_temperature is None:
        return None
    return _scalar_or_array(np.asarray(process_temperature, dtype=float)
                            + np.asarray(temperature_rise, dtype=float))


def _missing(x):
    return x is None or (isinstance(x, float) and math.isnan(x))


def criticality_class(tp, mtsr, mtt, td24, *, full_output=False):
    r"""Criticality class 1..5 from the order of MTSR, MTT and T_D24.

    Parameters
    ----------
    tp : float or None, K
        Process temperature; used only to check that it lies below MTSR,
        MTT and T_D24, as the scheme presumes (None skips the check).
    mtsr : float or None, K
        MTSR, e.g. from :func:`mtsr` (the parameter shadows that function
        inside this one only).  May be ``inf`` (unbounded rise).
    mtt : float or None, K
        Maximum temperature for technical reasons (boiling point when open,
        the allowed limit when closed).
    td24 : float or None, K
        Pass ``math.inf`` if TMRad is known to exceed 24 h at every relevant
        temperature; None (not known) gives None.
    full_output : bool
        Also return a list of warning texts.

    Returns
    -------
    int or None
        None when MTSR, MTT or T_D24 is missing (None or NaN).
    warnings : list of str
        Only with ``full_output=True``.

    Notes
    -----
    Stoessel's classes [1]_:

    1. MTSR < MTT < T_D24
    2. MTSR < T_D24 < MTT
    3. MTT < MTSR < T_D24
    4. MTT < T_D24 < MTSR
    5. T_D24 below both MTSR and MTT

    Ties are resolved toward the higher (more critical) class: a
    temperature equal to a threshold counts as having reached it.  So
    T_D24 <= min(MTSR, MTT) gives 5; otherwise MTSR >= T_D24 gives 4,
    MTT >= T_D24 gives 2, and with both below T_D24, MTSR >= MTT gives 3,
    else 1.

    References
    ----------
    .. [1] Stoessel, F., Thermal Safety of Chemical Processes, Wiley-VCH (2008).
    """
    warnings: list[str] = []
    if _missing(mtsr) or _missing(mtt) or _missing(td24):
        result = None
        warnings.append("Criticality class not determined: MTSR, MTT or T_D24 is unknown.")
    else:
        m, t, d = float(mtsr), float(mtt), float(td24)
        if d <= min(m, t):
            result = 5
        elif m >= d:
            result = 4
        elif t >= d:
            result = 2
        elif m >= t:
            result = 3
        else:
            result = 1
        if not _missing(tp):
            tp = float(tp)
            if tp > m:
                warnings.append("The process temperature is above the MTSR: the "
                                "temperature rise is negative; check the inputs.")
            if tp >= d:
                warnings.append("The process temperature is at or above T_D24: the "
                                "decomposition is fast at normal operation already.")
            if tp >= t:
                warnings.append("The process temperature is at or above the MTT.")
    if full_output:
        return result, warnings
    return result


_PROBABILITY_3 = ((8.0, "high"), (24.0, "medium"), (math.inf, "low"))
_PROBABILITY_6 = ((1.0, "frequent"), (8.0, "probable"), (24.0, "occasional"),
                  (50.0, "seldom"), (100.0, "remote"), (math.inf, "almost impossible"))


def tmr_probability_class(tmr_s, levels=3):
    """Probability class of a runaway from the adiabatic time to maximum rate.

    Parameters
    ----------
    tmr_s : float or None, s
        TMRad, normally at the MTSR.
    levels : {3, 6}
        Three levels: "high" (< 8 h), "medium" (8-24 h), "low" (> 24 h).
        Six levels: "frequent" (< 1 h), "probable" (1-8 h), "occasional"
        (8-24 h), "seldom" (24-50 h), "remote" (50-100 h), "almost
        impossible" (> 100 h).

    Returns
    -------
    str or None
        None when ``tmr_s`` is None or NaN.  A time equal to a boundary gets
        the more probable class (e.g. exactly 8 h is "high").

    Notes
    -----
    Stoessel [1]_ (values from memory).  Probability and severity
    (:func:`severity_class`) are combined in a risk matrix, not used as two
    independent criteria.

    References
    ----------
    .. [1] Stoessel, F., Thermal Safety of Chemical Processes, Wiley-VCH (2008).
    """
    if _missing(tmr_s):
        return None
    if levels == 3:
        table = _PROBABILITY_3
    elif levels == 6:
        table = _PROBABILITY_6
    else:
        raise ValueError("levels must be 3 or 6")
    hours = float(tmr_s) / SECONDS_PER_HOUR
    if hours < 0:
        raise ValueError("tmr_s must be >= 0")
    for bound, name in table:
        if hours <= bound:
            return name
    return table[-1][1]


def severity_class(temperature_rise, *, full_output=False):
    """Severity class from the adiabatic temperature rise.

    Parameters
    ----------
    temperature_rise : float or None, K
        May be ``inf``.
    full_output : bool
        Also return a list of warning texts.

    Returns
    -------
    str or None
        "high" (>= 200 K), "medium" (50-200 K) or "low" (< 50 K); a value
        equal to a boundary gets the more severe class.  None when the rise
        is None or NaN.
    warnings : list of str
        Only with ``full_output=True``: "low" carries
        :data:`WARNING_LOW_SEVERITY_PRESSURE`.

    Notes
    -----
    Stoessel [1]_ (values from memory): high above 200 K, medium 50-200 K,
    low below 50 K with no pressure effect.

    References
    ----------
    .. [1] Stoessel, F., Thermal Safety of Chemical Processes, Wiley-VCH (2008).
    """
    warnings: list[str] = []
    if _missing(temperature_rise):
        result = None
    else:
        rise = float(temperature_rise)
        if rise >= 200.0:
            result = "high"
        elif rise >= 50.0:
            result = "medium"
        else:
            result = "low"
            warnings.append(WARNING_LOW_SEVERITY_PRESSURE)
    if full_output:
        return result, warnings
    return result


# --------------------------------------------------------------------------
# Frank-Kamenetskii: unstirred contents, conduction
# --------------------------------------------------------------------------

def frank_kamenetskii_parameter(ambient, density, sources, radius, conductivity,
                                conversion=None):
    r"""Frank-Kamenetskii parameter delta of unstirred contents.

    Parameters
    ----------
    ambient : float or array, K
        Ambient (surroundings) temperature Ta.
    density : float, kg/m^3
    sources : sequence of :class:`screening.model.ArrheniusSource`
    radius : float or array, m
        Half-thickness of a slab, radius of a cylinder or sphere.
    conductivity : float, W/(m K)
    conversion : None, float or sequence of float, dimensionless
        None means zero conversion.

    Returns
    -------
    float or array, dimensionless

    Notes
    -----
    .. math:: \delta = \frac{\rho r^2}{k R T_a^2} \sum_i q_i(T_a) E_i

    which for one source is :math:`(E / (R T_a^2)) \rho q(T_a) r^2 / k`
    (Frank-Kamenetskii [1]_).

    References
    ----------
    .. [1] Frank-Kamenetskii, D. A., Diffusion and Heat Exchange in Chemical
       Kinetics, Princeton University Press (1955).
    """
    t = _positive_temperature(ambient, "ambient")
    for name, value in (("density", density), ("conductivity", conductivity)):
        if not (math.isfinite(value) and value > 0):
            raise ValueError(f"{name} must be finite and > 0")
    r = np.asarray(radius, dtype=float)
    if not np.all(np.isfinite(r)) or np.any(r <= 0):
        raise ValueError("radius must be finite and > 0")
    sources = _check_sources(sources)
    log_delta = (math.log(density) + 2.0 * np.log(r) - math.log(conductivity)
                 - math.log(GAS_CONSTANT) - 2.0 * np.log(t)
                 + _log_energy_weighted_rate(t, sources, conversion))
    return _scalar_or_array(_exp_capped(log_delta))


_FK_S0 = 1e-4  # start of the numerical solution; series below
_FK_SMAX = 12.0  # beyond the first turning point for every geometry and Bi
_FK_GRID = np.geomspace(1e-9, _FK_SMAX, 4000)
_FK_TINY_BIOT = 1e-12  # below this, delta_c = (j + 1) Bi / e to about 1e-12


def _fk_series(j, s):
    """Series of the universal solution w(s) near the centre: (w, w')."""
    a2 = -1.0 / (2.0 * (j + 1))
    a4 = 1.0 / (8.0 * (j + 1) * (j + 3))
    return a2 * s ** 2 + a4 * s ** 4, 2.0 * a2 * s + 4.0 * a4 * s ** 3


@lru_cache(maxsize=None)
def _fk_universal(j):
    """Universal solution of w'' + (j/s) w' + exp(w) = 0, w(0) = w'(0) = 0.

    Returns a callable s -> (w, w') valid for 0 < s <= _FK_SMAX and the
    values on _FK_GRID.
    """
    from scipy.integrate import solve_ivp  # heavy; imported where used

    w0, dw0 = _fk_series(j, _FK_S0)

    def rhs(s, y):
        return [y[1], -math.exp(y[0]) - j * y[1] / s]

    sol = solve_ivp(rhs, (_FK_S0, _FK_SMAX), [w0, dw0], method="DOP853",
                    rtol=1e-12, atol=1e-14, dense_output=True)
    if not sol.success:  # pragma: no cover - fixed, smooth problem
        raise RuntimeError("Frank-Kamenetskii reference solution failed")
    dense = sol.sol

    def evaluate(s):
        s = np.asarray(s, dtype=float)
        small = s < _FK_S0
        ws, dws = _fk_series(j, np.where(small, s, _FK_S0))
        wd, dwd = dense(np.where(small, _FK_S0, s).ravel())
        return (np.where(small, ws, wd.reshape(s.shape)),
                np.where(small, dws, dwd.reshape(s.shape)))

    grid_w, grid_dw = evaluate(_FK_GRID)
    return evaluate, grid_w, grid_dw


def _fk_log_delta_and_slope(j, biot, s, w, dw):
    """ln delta(s) along the solution family and d(ln delta)/ds."""
    d2w = -np.exp(w) - j * dw / s
    inv_bi = 0.0 if math.isinf(biot) else 1.0 / biot
    log_delta = 2.0 * np.log(s) + w + s * dw * inv_bi
    slope = 2.0 / s + dw + (dw + s * d2w) * inv_bi
    return log_delta, slope


@lru_cache(maxsize=4096)
def _fk_critical_cached(j, biot):
    evaluate, grid_w, grid_dw = _fk_universal(j)
    _, slope = _fk_log_delta_and_slope(j, biot, _FK_GRID, grid_w, grid_dw)
    down = np.flatnonzero(slope <= 0)
    if down.size == 0 or down[0] == 0:  # pragma: no cover - covered by the grid range
        raise RuntimeError("Frank-Kamenetskii turning point outside the tabulated range")
    k = int(down[0])

    def f(s):
        w, dw = evaluate(s)
        return float(_fk_log_delta_and_slope(j, biot, s, w, dw)[1])

    s_star = _root(f, float(_FK_GRID[k - 1]), float(_FK_GRID[k]))
    w, dw = evaluate(s_star)
    log_delta = float(_fk_log_delta_and_slope(j, biot, s_star, w, dw)[0])
    return math.exp(log_delta) if log_delta > -745.0 else 0.0


def _geometry_index(geometry):
    try:
        return FK_GEOMETRIES[geometry]
    except (KeyError, TypeError):
        raise ValueError(f"geometry must be one of {sorted(FK_GEOMETRIES)}") from None


def frank_kamenetskii_critical(geometry, biot=math.inf):
    r"""Critical Frank-Kamenetskii parameter for a surface Biot number.

    Parameters
    ----------
    geometry : {"slab", "cylinder", "sphere"}
        Infinite slab (half-thickness r), infinite cylinder, sphere.
    biot : float, dimensionless, default inf
        Surface Biot number Bi = h r / k (h surface heat-transfer
        coefficient to ambient, W/(m^2 K)).  ``inf``: surface held at
        ambient.  0: insulated surface, delta_c = 0.

    Returns
    -------
    float, dimensionless
        delta_c; for Bi = inf 0.8785 (slab), 2.0000 (cylinder), 3.3220
        (sphere).  Lower for finite Bi; for small Bi it tends to the Semenov
        (lumped) value (j + 1) Bi / e.

    Notes
    -----
    Steady conduction with the Frank-Kamenetskii exponential approximation
    [1]_, dimensionless temperature rise
    :math:`\theta = E (T - T_a) / (R T_a^2)`:

    .. math:: \theta'' + \frac{j}{x}\theta' + \delta e^{\theta} = 0,\quad
              \theta'(0) = 0,\quad -\theta'(1) = Bi\,\theta(1)

    (j = 0, 1, 2).  The equation is invariant under
    :math:`u(s) \to u(a s) + 2\ln a`, so all centre temperatures follow from
    one solution w of :math:`w'' + (j/s) w' + e^w = 0`, w(0) = w'(0) = 0:
    with :math:`\sigma = \sqrt{\delta}\,e^{\theta(0)/2}`,

    .. math:: \delta(\sigma) = \sigma^2 \exp\left(w(\sigma)
              + \sigma w'(\sigma) / Bi\right)

    and :math:`\delta_c` is the first maximum of this curve (where the
    branch of steady solutions turns).  w is computed once per geometry
    (DOP853, rtol 1e-12, a series near the centre), the maximum is bracketed
    on a grid and refined with Brent's method on :math:`d\ln\delta/d\sigma`;
    results are cached.  The exponential approximation and zero order
    overstate the rate, so they are conservative.  An infinite slab or
    cylinder loses less heat than a finite body of the same r: using them
    for a finite body is conservative.

    References
    ----------
    .. [1] Frank-Kamenetskii, D. A., Diffusion and Heat Exchange in Chemical
       Kinetics, Princeton University Press (1955; 2nd ed. Plenum 1969).
    """
    j = _geometry_index(geometry)
    biot = float(biot)
    if math.isnan(biot) or biot < 0:
        raise ValueError("biot must be >= 0")
    if biot == 0:
        return 0.0
    if biot < _FK_TINY_BIOT:
        # Lumped (Semenov) limit; the relative correction is O(Bi).
        return (j + 1) * biot / math.e
    return _fk_critical_cached(j, biot)


def frank_kamenetskii_critical_ambient(geometry, biot, density, sources, radius,
                                       conductivity, conversion=None, *,
                                       temperature_range=SEARCH_RANGE,
                                       full_output=False):
    r"""Ambient temperature at which unstirred contents become critical.

    Parameters
    ----------
    geometry : {"slab", "cylinder", "sphere"}
    biot : float, dimensionless
        Surface Biot number h r / k; ``inf`` for a surface held at ambient
        (not conservative, see :data:`WARNING_FK_SURFACE_AT_AMBIENT`).
    density : float, kg/m^3
    sources : sequence of :class:`screening.model.ArrheniusSource`
    radius : float, m
    conductivity : float, W/(m K)
    conversion : None, float or sequence of float, dimensionless
    temperature_range : (float, float), K
        Range searched.
    full_output : bool
        Also return a list of warning texts.

    Returns
    -------
    float or None, K
        The lowest ambient at which delta(Ta) reaches delta_c(Bi).  None
        when Bi = 0 (insulated: no steady state at any ambient), with no
        Arrhenius source, or when no crossing lies in the range
        (``full_output`` says which).
    warnings : list of str
        Only with ``full_output=True``.  Always includes
        :data:`WARNING_FK_ARRHENIUS_ONLY`.

    Notes
    -----
    Solves :math:`\delta(T_a) = \delta_c(Bi)` with
    :func:`frank_kamenetskii_parameter` and
    :func:`frank_kamenetskii_critical`.  :math:`\ln\delta` rises with Ta
    while Ta < E/(2R); the lowest crossing is bracketed on a grid and refined
    with Brent's method.  The Biot number is held fixed, as given.

    References
    ----------
    .. [1] Frank-Kamenetskii, D. A., Diffusion and Heat Exchange in Chemical
       Kinetics, Princeton University Press (1955).
    """
    sources = _check_sources(sources)
    delta_c = frank_kamenetskii_critical(geometry, biot)
    warnings: list[str] = [WARNING_FK_ARRHENIUS_ONLY]
    if math.isinf(float(biot)):
        warnings.append(WARNING_FK_SURFACE_AT_AMBIENT)
    result = None
    if delta_c == 0:
        warnings.append("Insulated surface (Bi = 0): no steady state at any "
                        "ambient, so there is no critical ambient temperature.")
    else:
        grid = _grid(temperature_range)
        log_dc = math.log(delta_c)

        def f(t):
            delta = frank_kamenetskii_parameter(t, density, sources, radius, conductivity,
                                                conversion)
            return _safe_log(delta) - log_dc

        log_delta = f(grid)
        if not np.any(np.isfinite(log_delta)):
            warnings.append("No Arrhenius source with a temperature-dependent rate: "
                            "no Frank-Kamenetskii critical point.")
        elif log_delta[0] >= 0:
            warnings.append(f"delta already exceeds its critical value at {grid[0]:.1f} K: "
                            "the critical ambient lies below the range searched.")
        else:
            up = np.flatnonzero(log_delta >= 0)
            if up.size == 0:
                warnings.append(f"delta stays below its critical value up to "
                                f"{grid[-1]:.0f} K: no critical ambient in the range searched.")
            else:
                k = int(up[0])
                result = _root(lambda t: float(f(t)), float(grid[k - 1]), float(grid[k]))
    warnings = kinetics_warnings(sources, [result], conversion) + warnings
    if full_output:
        return result, warnings
    return result
