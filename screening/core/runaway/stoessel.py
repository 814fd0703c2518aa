r"""Adiabatic temperature rise, MTSR, criticality classes, probability and severity classes.

The cooling-failure scenario: at the process temperature :math:`T_p` cooling fails;
the accumulated synthesis reaction raises the contents to the maximum temperature of
the synthesis reaction, :math:`MTSR = T_p + X_{ac} \Delta T_{ad}`; whether a secondary
decomposition then runs away is judged from the order of MTSR, the maximum
temperature for technical reasons (MTT) and T_D24, and its probability and severity
from TMRad at MTSR and the decomposition's adiabatic rise.

References
----------
Stoessel, F., *Thermal Safety of Chemical Processes: Risk Assessment and Process
Design*, Wiley-VCH, Weinheim (2008) (from memory).
"""
from __future__ import annotations

import math
from typing import Sequence

import numpy as np

from screening.core.model import ConstantSource, DecayingSource
from screening.core.runaway.rates import (
    SECONDS_PER_HOUR,
    WARNING_CONSTANT_SOURCES_NOT_IN_RISE,
    WARNING_LOW_SEVERITY_PRESSURE,
    WARNING_UNBOUNDED_RISE,
    _check_sources,
    _scalar_or_array,
)

# --------------------------------------------------------------------------
# Adiabatic temperature rise, MTSR, classes
# --------------------------------------------------------------------------
#
# In the cooling-failure scenario (Stoessel [1]) the MTSR comes from the accumulated
# desired (synthesis) reaction and the remaining energy of decaying sources; T_D24,
# TMRad and TMRad at MTSR come from the decomposition (secondary reaction) only; the
# severity from the decomposition's adiabatic rise.

def adiabatic_temperature_rise(mass, specific_heat, arrhenius_sources=(),
                               decaying_sources: Sequence[DecayingSource] = (),
                               constant_sources: Sequence[ConstantSource] = (),
                               *, full_output=False):
    r"""Adiabatic temperature rise from the accumulated reaction energy.

    Parameters
    ----------
    mass : float, [kg]
        Contents mass m (> 0).
    specific_heat : float, [J/(kg K)]
        Contents only; the wall heat capacity is ignored, which makes the
        rise larger: conservative.
    arrhenius_sources : sequence of :class:`screening.core.model.ArrheniusSource`
        Each contributes ``accumulated_fraction * specific_heat_of_reaction``
        per kg.  A source without a heat of reaction makes the rise
        unbounded (for order 0 this is the model's meaning; for order > 0 it
        is treated the same way, which is conservative).
    decaying_sources : sequence of :class:`screening.core.model.DecayingSource`
        Each contributes its remaining energy ``power * time_constant``.
    constant_sources : sequence of :class:`screening.core.model.ConstantSource`
        Not included in the rise (not accumulated energy); passed only so
        that the warning :data:`WARNING_CONSTANT_SOURCES_NOT_IN_RISE` can be
        attached when any has positive power.
    full_output : bool
        Also return a list of warning texts.

    Returns
    -------
    float, [K]
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
    Adiabatic: all the energy stays in the contents (no loss, no boiling).

    References
    ----------
    .. [1] Stoessel, F., *Thermal Safety of Chemical Processes: Risk Assessment and Process
       Design*, Wiley-VCH, Weinheim (2008) (from memory: the chapter on the assessment of
       thermal risks, with the cooling-failure scenario, the criticality classes and the
       severity and probability scales).

    Examples
    --------
    By hand: 1000 kg at c_p = 2000 J/(kg K) with 40 % of a 300 kJ/kg heat of reaction
    still to come rise by 0.4 x 300000 / 2000 = 60 K; a decaying source of 1 kW with
    a = 1000 s adds 1e6 J / 2e6 J/K = 0.5 K:

    >>> from screening.core.model import ArrheniusSource
    >>> src = ArrheniusSource(0.0, 353.15, 80e3, order=1.0, specific_heat_of_reaction=300e3,
    ...                       accumulated_fraction=0.4)
    >>> adiabatic_temperature_rise(1000.0, 2000.0, [src])
    60.0
    >>> adiabatic_temperature_rise(1000.0, 2000.0, [src], [DecayingSource(1000.0, 1000.0)])
    60.5
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


def accumulated_temperature_rise(specific_heat, specific_heat_of_reaction, accumulated_fraction=1.0):
    r"""Adiabatic temperature rise of the accumulated part of one reaction, K.

    Parameters
    ----------
    specific_heat : float or array, J/(kg K)
        Specific heat of the contents only (the wall is not credited, phi = 1: conservative).
    specific_heat_of_reaction : float or array, J/kg
    accumulated_fraction : float or array, dimensionless, default 1
        X_ac, the fraction of the heat of reaction not yet released when cooling fails.

    Returns
    -------
    float or array, K

    Notes
    -----
    .. math:: X_{ac}\,\Delta T_{ad} = X_{ac} \frac{Q'}{c_p}

    Stoessel [1]_: the term the synthesis adds to the process temperature in the MTSR.

    References
    ----------
    .. [1] Stoessel, F., Thermal Safety of Chemical Processes, Wiley-VCH (2008).

    Examples
    --------
    35 % of 160 kJ/kg accumulated, c_p 2.1 kJ/(kg K): 0.35 * 160 / 2.1 = 26.667 K (by hand).

    >>> round(accumulated_temperature_rise(2100.0, 160e3, 0.35), 3)
    26.667
    """
    return _scalar_or_array(np.asarray(accumulated_fraction, dtype=float)
                            * np.asarray(specific_heat_of_reaction, dtype=float)
                            / np.asarray(specific_heat, dtype=float))


def decaying_temperature_rise(mass, specific_heat, power, time_constant):
    r"""Adiabatic temperature rise from the energy still to come from a decaying source, K.

    Parameters
    ----------
    mass : float, kg
    specific_heat : float, J/(kg K)
        Contents only (phi = 1, conservative).
    power : float, W
        Power at the start of the scenario.
    time_constant : float, s

    Returns
    -------
    float, K

    Notes
    -----
    .. math:: \Delta T = \frac{P \tau}{m c_p}, \qquad \int_0^\infty P e^{-t/\tau} dt = P \tau

    Examples
    --------
    35 kW decaying with a 4 h time constant into 9000 kg at 3.4 kJ/(kg K):
    35e3 * 14400 / (9000 * 3400) = 16.471 K (by hand).

    >>> round(decaying_temperature_rise(9000.0, 3400.0, 35e3, 4 * 3600.0), 3)
    16.471
    """
    return power * time_constant / (mass * specific_heat)


def possible_criticality_classes(mtsr, mtt):
    """The criticality classes left open when T_D24 is not known: from the order of MTSR and MTT alone.

    Parameters
    ----------
    mtsr, mtt : float, K

    Returns
    -------
    tuple of int
        (1, 2) when MTSR < MTT (the MTT is not reached: class 1 or 2 as T_D24 lies above or below the
        MTT); (3, 4, 5) when MTSR >= MTT (ties count as reached, as in :func:`criticality_class`).

    Examples
    --------
    >>> possible_criticality_classes(380.0, 391.15), possible_criticality_classes(400.0, 391.15)
    ((1, 2), (3, 4, 5))
    """
    return (1, 2) if float(mtsr) < float(mtt) else (3, 4, 5)


def mtsr(process_temperature, temperature_rise):
    r"""Maximum temperature of the synthesis reaction (MTSR).

    Parameters
    ----------
    process_temperature : float or array, [K]
        Process temperature Tp at the moment cooling fails.
    temperature_rise : float, array or None, [K]
        Adiabatic rise of the *accumulated* energy, as returned by
        :func:`adiabatic_temperature_rise` (already weighted by the
        accumulated fraction); may be ``inf``.

    Returns
    -------
    float, array or None, [K]
        Broadcast shape of the inputs; None when ``temperature_rise`` or
        ``process_temperature`` is None.

    Notes
    -----
    .. math:: MTSR = T_p + X_{ac} \Delta T_{ad}

    Pass :math:`X_{ac} \Delta T_{ad}` as ``temperature_rise``.  Only the accumulated
    synthesis reaction counts; the decomposition is judged separately (T_D24, TMRad at
    MTSR).

    References
    ----------
    .. [1] Stoessel, F., *Thermal Safety of Chemical Processes: Risk Assessment and Process
       Design*, Wiley-VCH, Weinheim (2008) (from memory: the chapter on the assessment of
       thermal risks, with the cooling-failure scenario, the criticality classes and the
       severity and probability scales).

    Examples
    --------
    By hand: Tp = 80 degC (353.15 K), 40 % of a 150 K adiabatic rise accumulated:
    MTSR = 353.15 + 0.4 x 150 = 413.15 K:

    >>> round(mtsr(353.15, 0.4 * 150.0), 9)
    413.15
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
    tp : float or None, [K]
        Process temperature; used only to check that it lies below MTSR,
        MTT and T_D24, as the scheme presumes (None skips the check).
    mtsr : float or None, [K]
        MTSR, e.g. from :func:`mtsr` (the parameter shadows that function
        inside this one only).  May be ``inf`` (unbounded rise).
    mtt : float or None, [K]
        Maximum temperature for technical reasons (boiling point when open,
        the allowed limit when closed).
    td24 : float or None, [K]
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
    .. [1] Stoessel, F., *Thermal Safety of Chemical Processes: Risk Assessment and Process
       Design*, Wiley-VCH, Weinheim (2008) (from memory: the chapter on the assessment of
       thermal risks, with the cooling-failure scenario, the criticality classes and the
       severity and probability scales).

    Examples
    --------
    Stoessel's ordering (from memory), with Tp = 353.15 K and the three temperatures
    373.15, 383.15 and 403.15 K arranged as each class states it
    (MTSR, MTT, T_D24):

    >>> [criticality_class(353.15, m, t, d) for m, t, d in [
    ...     (373.15, 383.15, 403.15),   # 1: MTSR < MTT < T_D24
    ...     (373.15, 403.15, 383.15),   # 2: MTSR < T_D24 < MTT
    ...     (383.15, 373.15, 403.15),   # 3: MTT < MTSR < T_D24
    ...     (403.15, 373.15, 383.15),   # 4: MTT < T_D24 < MTSR
    ...     (403.15, 383.15, 373.15)]]  # 5: T_D24 < MTT < MTSR
    [1, 2, 3, 4, 5]
    >>> criticality_class(353.15, 373.15, 373.15, 403.15)  # a tie goes to the higher class
    3
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
    tmr_s : float or None, [s]
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
    .. [1] Stoessel, F., *Thermal Safety of Chemical Processes: Risk Assessment and Process
       Design*, Wiley-VCH, Weinheim (2008) (from memory: the chapter on the assessment of
       thermal risks, with the cooling-failure scenario, the criticality classes and the
       severity and probability scales).

    Examples
    --------
    Stoessel's scales (from memory): high below 8 h, medium 8-24 h, low above 24 h
    (exactly 8 h counts as high); six levels: frequent < 1 h, seldom 24-50 h, almost
    impossible > 100 h:

    >>> [tmr_probability_class(h * 3600.0) for h in (4, 8, 12, 48)]
    ['high', 'high', 'medium', 'low']
    >>> [tmr_probability_class(h * 3600.0, levels=6) for h in (0.5, 30, 200)]
    ['frequent', 'seldom', 'almost impossible']
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
    temperature_rise : float or None, [K]
        Adiabatic temperature rise of the decomposition (final temperature
        MTSR + this rise); may be ``inf``.
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
    .. [1] Stoessel, F., *Thermal Safety of Chemical Processes: Risk Assessment and Process
       Design*, Wiley-VCH, Weinheim (2008) (from memory: the chapter on the assessment of
       thermal risks, with the cooling-failure scenario, the criticality classes and the
       severity and probability scales).

    Examples
    --------
    Stoessel's scale (from memory): 250 K high, exactly 200 K high (the more severe
    class at a boundary), 100 K medium, 30 K low:

    >>> [severity_class(x) for x in (250.0, 200.0, 100.0, 30.0)]
    ['high', 'high', 'medium', 'low']
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
