r"""Heat generation and loss curves of a self-heating mass, the numerics the criteria share, kinetics cautions.

The overview below covers the whole :mod:`screening.core.runaway` package; each criterion lives in
its own module (``tmr``, ``semenov``, ``stoessel``, ``frank_kamenetskii``) and is re-exported there.

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
:func:`screening.core.arrhenius.arrhenius_specific_power`) so that extreme inputs
cannot overflow; sums of exponentials use a log-sum-exp.  Root finding is
bracketed on a fixed grid and refined with Brent's method
(:func:`screening.core.root_finding.brent_root`), so every search is bounded.
scipy is imported only inside the Frank-Kamenetskii reference solution.

References
----------
.. [1] Townsend, D. I. and Tou, J. C., "Thermal hazard evaluation by an
   accelerating rate calorimeter", Thermochimica Acta 37 (1980) 1-30.
.. [2] Semenov, N. N., "Zur Theorie des Verbrennungsprozesses", Zeitschrift
   fuer Physik 48 (1928) 571-582 (volume and pages from memory).
.. [3] Frank-Kamenetskii, D. A., Acta Physicochimica URSS 10 (1939) 365 (from memory);
   *Diffusion and Heat Exchange in Chemical Kinetics*, Princeton University
   Press (1955), 2nd ed. Plenum (1969).
.. [4] Stoessel, F., *Thermal Safety of Chemical Processes: Risk Assessment
   and Process Design*, Wiley-VCH, Weinheim (2008).
"""
from __future__ import annotations

import math
from typing import Sequence

import numpy as np

from screening.core.arrhenius import autocatalytic_term, conversion_of_maximum_rate, log_arrhenius_rate
from screening.core.model import GAS_CONSTANT, ArrheniusSource, HeatingMedium
from screening.core.root_finding import brent_root

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

#: The same caution for sources that include a desired reaction (synthesis), which is not a decomposition.
WARNING_ZERO_CONVERSION_REACTION = (
    "Heat-release rates are taken at zero conversion (or at the conversion "
    "given). If a reaction is autocatalytic its rate rises as it proceeds, so "
    "a rate measured at zero conversion understates it and the times and "
    "temperatures derived from it are not conservative; give such a reaction "
    "as an autocatalytic source."
)

#: Where an autocatalytic source's kinetics are used outside their tested range.
WARNING_INITIATION_TEMPERATURE = (
    "{label}: kinetics used at {temperature:.1f} K, outside the tested range; the initiation "
    "term z is taken as independent of temperature (one activation energy for the initiation and "
    "the autocatalytic path), which is not known to hold there."
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
        if not (s.autocatalytic_order >= 0 and s.initiation >= 0):
            raise ValueError(f"Arrhenius source {i}: autocatalytic order and initiation must be >= 0")
    return sources


def rate_conversion(source) -> float:
    r"""The conversion at which a source's rate is taken by the steady criteria when none is given, [-].

    0 for an n-th order source (its rate only falls as it converts); for an autocatalytic source the
    conversion of maximum rate :math:`\alpha^*` from its initial conversion on
    (:func:`screening.core.arrhenius.conversion_of_maximum_rate`), which is conservative.
    """
    if not source.autocatalytic:
        return 0.0
    return conversion_of_maximum_rate(source.order, source.autocatalytic_order, source.initiation,
                                      1.0 - source.accumulated_fraction)


def _conversions(sources, conversion) -> list[float]:
    n = len(sources)
    if conversion is None:
        values = [rate_conversion(s) for s in sources]
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
    inv_t = 1.0 / t
    for i, (s, x) in enumerate(zip(sources, conv)):
        lq = log_arrhenius_rate(inv_t, _safe_log(s.specific_power), s.activation_energy / GAS_CONSTANT,
                                1.0 / s.reference_temperature)
        if s.order != 0:
            lq = lq + s.order * _safe_log(1.0 - x)
        if s.autocatalytic:  # times X^m + z: f(X) = (1 - X)^n (X^m + z)
            lq = lq + math.log(autocatalytic_term(x, s.autocatalytic_order, s.initiation)[0])
        out[i] = lq
    return out


def _log_energy_weighted_rate(temperature, sources, conversion):
    """log sum_i q_i(T) E_i, log of W J/(kg mol)."""
    t = np.asarray(temperature, dtype=float)
    lq = _log_specific_powers(t, sources, conversion)
    log_e = _safe_log([s.activation_energy for s in sources]).reshape(
        (len(sources),) + (1,) * t.ndim)
    return _logsumexp(lq + log_e, axis=0)


_SCALAR_SOURCES = 7  # up to this many sources numpy sums a 0-d case's terms in the order _ScalarCurve does


class _ScalarCurve:
    """The generation curve of fixed sources at one temperature at a time, in plain floats.

    Root finding evaluates the curve at one temperature per step; through numpy's 0-d arrays each
    evaluation costs tens of microseconds, here a few. Every operation is the one the array functions
    (:func:`_log_specific_powers`, :func:`_logsumexp`, :func:`heat_generation`) perform on a 0-d array, in
    the same order, so a root found through it is the same to the last bit (tests/core/test_semenov_scalar.py);
    sources and conversions are checked by the caller.
    """

    __slots__ = ("log_mass", "terms", "log_energy")

    def __init__(self, mass, sources, conversion):
        self.log_mass = float(_safe_log(mass))
        terms = []
        for s, x in zip(sources, _conversions(sources, conversion)):
            extra = []
            if s.order != 0:
                extra.append(float(s.order * _safe_log(1.0 - x)))
            if s.autocatalytic:
                extra.append(math.log(autocatalytic_term(x, s.autocatalytic_order, s.initiation)[0]))
            terms.append((float(_safe_log(s.specific_power)), s.activation_energy / GAS_CONSTANT,
                          1.0 / s.reference_temperature, tuple(extra)))
        self.terms = terms
        self.log_energy = [float(_safe_log(s.activation_energy)) for s in sources]

    def _log_powers(self, t):
        inv_t = 1.0 / t
        out = []
        for log_q, e_over_r, inv_ref, extra in self.terms:
            lq = log_q - e_over_r * (inv_t - inv_ref)
            for term in extra:
                lq = lq + term
            out.append(lq)
        return out

    @staticmethod
    def _logsumexp(a):
        if not a:
            return -math.inf
        amax = max(a)
        if not math.isfinite(amax):
            return -math.inf
        total = 0.0
        for v in a:  # numpy sums fewer than 8 terms of a 1-D array one after another from 0.0
            total += float(np.exp(v - amax))
        return amax + float(np.log(total))

    def log_slope_part(self, t):
        """log sum_i q_i(T) E_i (as :func:`_log_energy_weighted_rate`)."""
        return self._logsumexp([lq + le for lq, le in zip(self._log_powers(t), self.log_energy)])

    def generation(self, t, constant_power):
        """Q_gen(T), W (as :func:`heat_generation`)."""
        log_total = self.log_mass + self._logsumexp(self._log_powers(t))
        return float(constant_power + float(np.exp(min(log_total, _LOG_CAP))))


def _scalar_curve(mass, sources, conversion):
    """The float evaluator of the generation curve (None: more sources than it reproduces bit for bit)."""
    return _ScalarCurve(mass, sources, conversion) if 0 < len(sources) <= _SCALAR_SOURCES else None


_GRIDS: dict = {}


def _grid(temperature_range, points=_GRID_POINTS):
    """The bracketing grid over a range (read-only; the same few ranges are asked for again and again)."""
    lo, hi = (float(v) for v in temperature_range)
    if not (math.isfinite(lo) and math.isfinite(hi) and 0 < lo < hi):
        raise ValueError("temperature_range must be (low, high) with 0 < low < high")
    key = (lo, hi, points)
    grid = _GRIDS.get(key)
    if grid is None:
        grid = np.geomspace(lo, hi, points)
        grid.flags.writeable = False
        if len(_GRIDS) < 64:
            _GRIDS[key] = grid
    return grid


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
    temperature : float or array, [K]
        Any shape; > 0.
    mass : float, [kg]
        Contents mass m.
    sources : sequence of :class:`screening.core.model.ArrheniusSource`
    constant_power : float, [W], default 0
        Temperature-independent power P (sum of constant sources).
    conversion : None, float or sequence of float, [-]
        Conversion X of each source (one value for all, or one per source);
        None means zero conversion.

    Returns
    -------
    float or array, [W]
        Shaped like ``temperature``.

    Notes
    -----
    .. math:: Q_{gen}(T) = P + m \sum_i q_i(T, X_i), \qquad
              q_i = q_{ref,i} \exp\left[-\frac{E_i}{R}\left(\frac{1}{T}
              - \frac{1}{T_{ref,i}}\right)\right] (1 - X_i)^{n_i}

    with :math:`q_i` the Arrhenius law of
    :func:`screening.core.arrhenius.arrhenius_specific_power`, evaluated in
    logarithms; the total is capped at about 1e304 W so it never overflows.  The
    generation curve of Semenov's analysis [1]_.

    References
    ----------
    .. [1] Semenov, N. N., Zeitschrift fuer Physik 48 (1928) 571-582 (from memory).

    Examples
    --------
    By hand: 1000 kg of a material releasing 1 W/kg at its reference temperature 400 K,
    plus a 500 W agitator, generate 1000 x 1 + 500 = 1500 W at 400 K; first order at
    half conversion, 1000 x 1 x 0.5 = 500 W:

    >>> from screening.core.model import ArrheniusSource
    >>> src = ArrheniusSource(1.0, 400.0, 100e3)
    >>> round(heat_generation(400.0, 1000.0, [src], 500.0), 9)
    1500.0
    >>> round(heat_generation(400.0, 1000.0, [ArrheniusSource(1.0, 400.0, 100e3, order=1.0)], 0.0, 0.5), 9)
    500.0
    """
    t = _positive_temperature(temperature)
    sources = _check_sources(sources)
    log_total = _safe_log(mass) + _logsumexp(_log_specific_powers(t, sources, conversion), 0)
    return _scalar_or_array(constant_power + _exp_capped(log_total))


def heat_generation_slope(temperature, mass, sources, conversion=None):
    r"""Temperature derivative of the heat generation, dQ_gen/dT.

    Parameters
    ----------
    temperature : float or array, [K]
        Any shape; > 0.
    mass : float, [kg]
        Contents mass m.
    sources : sequence of :class:`screening.core.model.ArrheniusSource`
    conversion : None, float or sequence of float, [-]
        As in :func:`heat_generation`.

    Returns
    -------
    float or array, [W/K]
        Shaped like ``temperature``.

    Notes
    -----
    At fixed conversion, for the Arrhenius law,

    .. math:: \frac{dQ_{gen}}{dT} = m \sum_i q_i(T) \frac{E_i}{R T^2}

    Each term increases with T while T < E_i / (2 R).  Semenov's criticality is
    where this slope reaches the loss conductance (:func:`semenov_critical_ambient`);
    the adiabatic time to maximum rate is :math:`m c_p` over it (:func:`tmr_adiabatic`).

    References
    ----------
    Semenov, N. N., Zeitschrift fuer Physik 48 (1928) 571-582 (from memory).

    Examples
    --------
    By hand: 1000 kg releasing 1 W/kg at 400 K with E = 100 kJ/mol:
    1000 x 1 x 100000 / (8.314462618 x 400^2) = 75.1702 W/K:

    >>> from screening.core.model import ArrheniusSource
    >>> round(heat_generation_slope(400.0, 1000.0, [ArrheniusSource(1.0, 400.0, 100e3)]), 4)
    75.1702
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
    temperature : float or array, [K]
        Any shape.
    ua : float, [W/K]
        Loss coefficient to ambient.
    ambient : float, [K]
    heating_media : sequence of :class:`screening.core.model.HeatingMedium`
        Jackets or coils left on; each adds ``ua_k (T_m,k - T)`` of heat,
        i.e. removes ``ua_k (T - T_m,k)``.

    Returns
    -------
    float or array, [W]
        Shaped like ``temperature``; negative when the media heat more than ambient cools.

    Notes
    -----
    .. math:: Q_{loss}(T) = UA (T - T_a) + \sum_k ua_k (T - T_{m,k})
              = G (T - T_{eq})

    with :math:`G = UA + \sum_k ua_k` and
    :math:`T_{eq} = (UA\,T_a + \sum_k ua_k T_{m,k}) / G`: the straight loss line of
    Semenov's analysis (constant UA, no radiation).

    References
    ----------
    Semenov, N. N., Zeitschrift fuer Physik 48 (1928) 571-582 (from memory).

    Examples
    --------
    By hand: contents at 310 K, 50 W/K to air at 300 K and a 320 K jacket with
    ua = 20 W/K: 50 x 10 + 20 x (310 - 320) = 300 W:

    >>> from screening.core.model import HeatingMedium
    >>> heat_loss(310.0, 50.0, 300.0, [HeatingMedium(320.0, 20.0)])
    300.0
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

def zero_conversion_warning(sources) -> str | None:
    """The zero-conversion caution in the words that fit the sources' roles, or None.

    None when every active source is autocatalytic (its rate at the conversion of maximum rate is
    used); the decomposition wording when every n-th order source is a decomposition; a wording
    about reactions in general when one is the desired reaction (synthesis).
    """
    nth = [s for s in sources if s.specific_power > 0 and not s.autocatalytic]
    if not nth:
        return None
    if all(s.role != "synthesis" for s in nth):
        return WARNING_ZERO_CONVERSION
    return WARNING_ZERO_CONVERSION_REACTION


def initiation_warnings(sources, temperatures) -> list[str]:
    """For each autocatalytic source used outside its tested range: z is taken as temperature-independent.

    A source without a tested range is judged against its reference temperature, with the same
    allowance as :func:`kinetics_warnings` (:data:`DEFAULT_MAX_EXTRAPOLATION`).
    """
    out = []
    temps = [float(t) for t in temperatures if t is not None and math.isfinite(float(t))]
    for i, s in enumerate(sources, start=1):
        if not s.autocatalytic or not temps:
            continue
        if s.tested_range is not None:
            lo, hi, allow = float(s.tested_range[0]), float(s.tested_range[1]), 0.0
        else:
            lo = hi = s.reference_temperature
            allow = DEFAULT_MAX_EXTRAPOLATION
        worst = max(temps, key=lambda t: max(lo - t, t - hi))
        if max(lo - worst, worst - hi) > allow:
            out.append(WARNING_INITIATION_TEMPERATURE.format(label=s.label or f"Arrhenius source {i}",
                                                             temperature=worst))
    return out


def kinetics_warnings(sources, temperatures=(), conversion=None, tested_range=None,
                      max_extrapolation=DEFAULT_MAX_EXTRAPOLATION) -> list[str]:
    """Warning texts for results computed from Arrhenius sources.

    Parameters
    ----------
    sources : sequence of :class:`screening.core.model.ArrheniusSource`
    temperatures : iterable of float or None, [K]
        Temperatures at which the kinetics were used for the result (None and
        non-finite values are skipped).
    conversion : None, float or sequence, [-]
        Only documents that rates are at zero or given conversion.
    tested_range : None, (low, high) or sequence of (low, high or None), [K]
        Temperature range over which each source's parameters were measured;
        one pair for all sources or one per source.  None: each source's own
        ``tested_range`` attribute if it has one, otherwise only the
        reference temperature is known and distances are measured from it.
    max_extrapolation : float, [K]
        Distance beyond the range at which extrapolation is flagged
        (default :data:`DEFAULT_MAX_EXTRAPOLATION`, 20 K, a screening choice).

    Returns
    -------
    list of str
        Empty when there are no sources with a non-zero rate.  Otherwise
        :data:`WARNING_ZERO_CONVERSION` and, per source, at most one
        extrapolation warning (for the farthest temperature).

    Notes
    -----
    A rate measured at zero conversion understates an autocatalytic decomposition, and
    Arrhenius parameters extrapolated far beyond the tested range are not conservative
    (another reaction or a lower activation energy may dominate): both are cautions of
    common practice in thermal-safety assessment.  The 20 K default is this module's
    screening choice, not a published limit.

    Examples
    --------
    Kinetics tested over 380-420 K used at 450 K are 30 K beyond the range, more than
    the 20 K allowed:

    >>> from screening.core.model import ArrheniusSource
    >>> w = kinetics_warnings([ArrheniusSource(1.0, 400.0, 100e3, tested_range=(380.0, 420.0))], [450.0])
    >>> len(w), w[0] == WARNING_ZERO_CONVERSION
    (2, True)
    >>> w[1][:67]
    'Arrhenius source 1: kinetics used at 450.0 K, 30 K above its tested'
    """
    sources = _check_sources(sources)
    active = [s for s in sources if s.specific_power > 0]
    if not active:
        return []
    out = [zero_conversion_warning(active)] if not all(s.autocatalytic for s in active) else []

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
