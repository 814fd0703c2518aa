r"""Semenov's thermal explosion theory for a well-stirred mass: critical ambient, steady states.

A well-stirred mass at one temperature T gains :math:`Q_{gen}(T) = P + m \sum_i q_i(T)`
and loses :math:`G (T - T_{eq})`.  Steady states are the intersections of the two
curves; the mass runs away when the loss line no longer meets the generation curve,
and the critical ambient is where the line is tangent to it.

References
----------
Semenov, N. N., "Zur Theorie des Verbrennungsprozesses", *Zeitschrift fuer Physik* 48
(1928) 571-582 (volume and pages from memory).
"""
from __future__ import annotations

import math
from typing import NamedTuple, Sequence

import numpy as np

from screening.core.model import GAS_CONSTANT, HeatingMedium
from screening.core.runaway.rates import (
    SEARCH_RANGE,
    WARNING_TRANSIENT_SOURCES,
    _scalar_curve,
    _check_sources,
    _conversions,
    _grid,
    _log_energy_weighted_rate,
    _lumped_loss,
    _root,
    _safe_log,
    heat_generation,
    kinetics_warnings,
)

# --------------------------------------------------------------------------
# Semenov: well-stirred contents
# --------------------------------------------------------------------------

class SemenovCritical(NamedTuple):
    """Critical point of the Semenov balance (returned by :func:`semenov_critical_ambient`).

    Attributes
    ----------
    ambient : float or None, [K]
        Ta,c, the highest ambient at which a stable steady state exists.
    temperature : float or None, [K]
        Tc, the contents temperature at the tangency.
    """

    ambient: float | None
    temperature: float | None


class SteadyStates(NamedTuple):
    """Steady states of the Semenov balance (returned by :func:`steady_states`).

    Attributes
    ----------
    stable : float or None, [K]
        The lower, stable steady temperature.
    unstable : float or None, [K]
        The upper, unstable one: the no-return temperature.
    """

    stable: float | None
    unstable: float | None


_TANGENCIES: dict = {}  # (mass, sources, G, conversions, range) -> (T or None, status): the same case asks again
_TANGENCY_CACHE_SIZE = 256


def _tangency(mass, sources, conductance, conversion, temperature_range):
    """Lowest T where dQ_gen/dT rises to the loss slope G.

    Returns (T or None, status, grid); status in {"found", "none",
    "below_range", "no_arrhenius"}. A case's criteria ask for the same tangency several times (critical
    ambient, steady states, the SADT search's start): the answer is kept for the last few hundred asked.
    """
    grid = _grid(temperature_range)
    key = (float(mass), tuple(sources), float(conductance), tuple(_conversions(sources, conversion)),
           tuple(float(v) for v in temperature_range))
    known = _TANGENCIES.get(key)
    if known is not None:
        return known[0], known[1], grid
    log_g = math.log(conductance)

    def log_slope(t):
        return (_safe_log(mass) + _log_energy_weighted_rate(t, sources, conversion)
                - math.log(GAS_CONSTANT) - 2.0 * np.log(t))

    h = log_slope(grid) - log_g
    if not np.any(np.isfinite(h)):
        tc, status = None, "no_arrhenius"
    elif h[0] >= 0:
        tc, status = None, "below_range"
    else:
        above = np.flatnonzero(h >= 0)
        if above.size == 0:
            tc, status = None, "none"
        else:
            k = int(above[0])
            curve = _scalar_curve(mass, sources, conversion)
            if curve is None:
                tc = _root(lambda t: float(log_slope(np.asarray(t))) - log_g, grid[k - 1], grid[k])
            else:
                log_mass, log_r = curve.log_mass, math.log(GAS_CONSTANT)
                tc = _root(lambda t: log_mass + curve.log_slope_part(t) - log_r - 2.0 * float(np.log(t)) - log_g,
                           grid[k - 1], grid[k])
            status = "found"
    if len(_TANGENCIES) >= _TANGENCY_CACHE_SIZE:
        _TANGENCIES.pop(next(iter(_TANGENCIES)))
    _TANGENCIES[key] = (tc, status)
    return tc, status, grid


def semenov_critical_ambient(mass, sources, constant_power, ua,
                             heating_media: Sequence[HeatingMedium] = (), conversion=None,
                             *, temperature_range=SEARCH_RANGE, full_output=False):
    r"""Critical ambient temperature of a well-stirred vessel (Semenov).

    Parameters
    ----------
    mass : float, [kg]
        Contents mass m.
    sources : sequence of :class:`screening.core.model.ArrheniusSource`
    constant_power : float, [W]
        Temperature-independent power P.
    ua : float, [W/K]
        Loss coefficient to ambient.
    heating_media : sequence of :class:`screening.core.model.HeatingMedium`
        Extra linear terms ua_k (T_m,k - T) (jackets or coils left on).
    conversion : None, float or sequence of float, [-]
        None means zero conversion.
    temperature_range : (float, float), [K], default (10, 5000)
        Range searched for the tangency temperature.
    full_output : bool
        Also return a list of warning texts.

    Returns
    -------
    SemenovCritical(ambient, temperature)
        ``ambient``: Ta,c [K], the highest ambient at which a stable steady
        state exists; ``temperature``: Tc [K], the contents temperature at
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
    Transient inputs (decaying sources, fire) are not in it: see
    :data:`WARNING_TRANSIENT_SOURCES`.

    References
    ----------
    .. [1] Semenov, N. N., Z. Phys. 48 (1928) 571-582 (volume and pages from memory).

    Examples
    --------
    Semenov's relation, by hand: 1000 kg releasing 1 W/kg at 400 K with E = 100 kJ/mol
    has a generation slope of 1000 x 1 x 100000 / (R 400^2) = 75.1702 W/K at 400 K
    (:func:`heat_generation_slope`).  With UA equal to that slope the tangency is at
    Tc = 400 K, and Ta,c = Tc - R Tc^2 / E = 400 - 8.314462618 x 400^2 / 100000
    = 386.6969 K:

    >>> from screening.core.model import ArrheniusSource
    >>> src = ArrheniusSource(1.0, 400.0, 100e3)
    >>> ua = 1000.0 * 1.0 * 100e3 / (GAS_CONSTANT * 400.0**2)
    >>> crit = semenov_critical_ambient(1000.0, [src], 0.0, ua)
    >>> round(crit.temperature, 6), round(crit.ambient, 4)
    (400.0, 386.6969)

    By hand, with half that conductance to a jacket at 380 K instead of to ambient,
    G and T_eq,c are unchanged and Ta,c = 2 x 386.6969 - 380 = 393.3937 K:

    >>> from screening.core.model import HeatingMedium
    >>> round(semenov_critical_ambient(1000.0, [src], 0.0, ua / 2,
    ...                                [HeatingMedium(380.0, ua / 2)]).ambient, 4)
    393.3937
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
            curve = _scalar_curve(mass, sources, conversion)
            q = (heat_generation(tc, mass, sources, constant_power, conversion) if curve is None
                 else curve.generation(tc, constant_power))
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


def semenov_critical_medium_temperature(mass, sources, constant_power, ua, ambient,
                                        heating_media: Sequence[HeatingMedium], conversion=None,
                                        *, temperature_range=SEARCH_RANGE, full_output=False):
    r"""Critical temperature of a heating medium left on, for a well-stirred vessel (Semenov).

    Parameters
    ----------
    mass : float, kg
    sources : sequence of :class:`screening.core.model.ArrheniusSource`
    constant_power : float, W
    ua : float, W/K
        Loss coefficient to ambient.
    ambient : float, K
        Ambient temperature Ta.
    heating_media : sequence of :class:`screening.core.model.HeatingMedium`
        The jackets or coils left on (at least one with ua > 0).  With several, they are taken at one
        common temperature; their conductances add.
    conversion : None, float or sequence of float, dimensionless
    temperature_range : (float, float), K
    full_output : bool
        Also return a list of warning texts.

    Returns
    -------
    SemenovCritical(ambient, temperature)
        ``ambient`` holds the critical *medium* temperature Tm,c, K: the highest medium temperature at
        which a stable steady state exists, with the ambient and the conductances as stated;
        ``temperature``: Tc, the contents temperature at the tangency.  Both None when no tangency lies in
        the range or the media have no conductance.
    warnings : list of str
        Only with ``full_output=True``.

    Notes
    -----
    The loss line is :math:`G (T - T_{eq})` with :math:`G = UA + u_m` (:math:`u_m = \sum_k ua_k`) and
    the effective ambient :math:`T_{eq} = (UA\,T_a + u_m T_m) / G`.  At the tangency

    .. math:: Q_{gen}'(T_c) = G, \qquad Q_{gen}(T_c) = G (T_c - T_{eq,c}),
              \qquad T_{m,c} = \frac{G\,T_{eq,c} - UA\,T_a}{u_m}

    The tangency temperature depends only on G, so it is that of :func:`semenov_critical_ambient`; only
    the drive differs.

    References
    ----------
    .. [1] Semenov, N. N., Z. Phys. 48 (1928) 571-582.
    """
    if not (math.isfinite(mass) and mass >= 0):
        raise ValueError("mass must be finite and >= 0")
    if not (math.isfinite(ambient) and ambient > 0):
        raise ValueError("ambient must be finite and > 0 K")
    sources = _check_sources(sources)
    conductance, _ = _lumped_loss(ua, heating_media)
    medium_ua = conductance - ua
    warnings: list[str] = []
    result = SemenovCritical(None, None)
    if not medium_ua > 0:
        warnings.append("No heating medium with a conductance: there is no critical medium temperature.")
    else:
        tc, status, grid = _tangency(mass, sources, conductance, conversion, temperature_range)
        if status == "found":
            q = heat_generation(tc, mass, sources, constant_power, conversion)
            t_eq = tc - q / conductance
            result = SemenovCritical((conductance * t_eq - ua * ambient) / medium_ua, tc)
        elif status == "no_arrhenius":
            warnings.append("No Arrhenius source with a temperature-dependent rate: no critical medium temperature.")
        elif status == "below_range":
            warnings.append(f"The heat-generation slope already exceeds the loss coefficient at {grid[0]:.1f} K: no "
                            f"medium temperature gives a stable steady state in the range searched.")
        else:
            warnings.append(f"The heat-generation slope stays below the loss coefficient up to {grid[-1]:.0f} K: no "
                            f"critical medium temperature in the range searched.")
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
    mass : float, [kg]
        Contents mass m.
    sources : sequence of :class:`screening.core.model.ArrheniusSource`
    constant_power : float, [W]
        Temperature-independent power P.
    ua : float, [W/K]
        Loss coefficient to ambient.
    ambient : float, [K]
    heating_media : sequence of :class:`screening.core.model.HeatingMedium`
    conversion : None, float or sequence of float, [-]
    temperature_range : (float, float), [K], default (10, 5000)
        Range searched.
    full_output : bool
        Also return a list of warning texts.

    Returns
    -------
    SteadyStates(stable, unstable)
        ``stable``: the lower, stable steady temperature [K]; ``unstable``:
        the upper, unstable one [K] -- the no-return temperature: contents
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
    reached after a runaway is not.  Steady states only: a transient input (decaying
    source, fire, a hot start) can carry the contents above the no-return temperature.

    References
    ----------
    .. [1] Semenov, N. N., Z. Phys. 48 (1928) 571-582 (volume and pages from memory).

    Examples
    --------
    By hand: 1000 kg releasing 1 W/kg at 400 K (E = 100 kJ/mol) with UA = 150 W/K is
    steady at 400 K when 1000 W = 150 (400 - T_a), i.e. at T_a = 400 - 1000/150 =
    393.333 K; 400 K is the stable state because the generation slope there, 75.17 W/K,
    is below UA.  The no-return temperature lies above; at it generation equals loss:

    >>> from screening.core.model import ArrheniusSource
    >>> src = ArrheniusSource(1.0, 400.0, 100e3)
    >>> st = steady_states(1000.0, [src], 0.0, 150.0, 400.0 - 1000.0 / 150.0)
    >>> round(st.stable, 6), st.unstable > 400.0
    (400.0, True)
    >>> gen = heat_generation(st.unstable, 1000.0, [src])
    >>> round(gen / (150.0 * (st.unstable - (400.0 - 1000.0 / 150.0))), 9)
    1.0

    Without an Arrhenius source the steady state is the linear one, by hand
    300 + 500 / 50 = 310 K:

    >>> steady_states(1000.0, [], 500.0, 50.0, 300.0)
    SteadyStates(stable=310.0, unstable=None)
    """
    if not (math.isfinite(mass) and mass >= 0):
        raise ValueError("mass must be finite and >= 0")
    if not (math.isfinite(ambient) and ambient > 0):
        raise ValueError("ambient must be finite and > 0 K")
    sources = _check_sources(sources)
    key = (float(mass), sources, float(constant_power), float(ua), float(ambient), tuple(heating_media),
           tuple(_conversions(sources, conversion)), tuple(float(v) for v in temperature_range))
    known = _STEADY_STATES.get(key)
    if known is None:
        known = _steady_states_of(mass, sources, constant_power, ua, ambient, heating_media, conversion,
                                  temperature_range)
        if len(_STEADY_STATES) >= _TANGENCY_CACHE_SIZE:
            _STEADY_STATES.pop(next(iter(_STEADY_STATES)))
        _STEADY_STATES[key] = known
    result, warnings = known
    return (result, list(warnings)) if full_output else result


_STEADY_STATES: dict = {}  # the same case's criteria ask for the same steady states more than once


def _steady_states_of(mass, sources, constant_power, ua, ambient, heating_media, conversion, temperature_range):
    """(SteadyStates, warnings) of :func:`steady_states` (arguments checked there)."""
    conductance, media_term = _lumped_loss(ua, heating_media)
    warnings: list[str] = [WARNING_TRANSIENT_SOURCES]
    result = SteadyStates(None, None)

    def finish(res):
        out_warnings = kinetics_warnings(sources, [res.stable, res.unstable], conversion) + warnings
        return res, out_warnings

    if conductance == 0:
        warnings.append("No heat loss (UA = 0 and no heating media): no steady "
                        "state; the temperature rises without limit while any "
                        "heat is released.")
        return finish(result)
    t_eq = (ua * ambient + media_term) / conductance

    curve = _scalar_curve(mass, sources, conversion)

    def balance(t):
        if curve is not None and isinstance(t, float):  # a root-finding step: one temperature
            return curve.generation(t, constant_power) - conductance * (t - t_eq)
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
