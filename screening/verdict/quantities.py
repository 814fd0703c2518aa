"""The quantities a rule can name: each read from a result dict, with its kind and unit."""
from __future__ import annotations

import contextvars
import math
from dataclasses import dataclass
from typing import Any, Callable

VERDICTS = ("pass", "review", "fail")

# Kinds of quantity ("dimensions").
TIME = "time"
TEMPERATURE = "temperature"
DELTA_T = "temperature difference"
NUMBER = "number"
COUNT = "whole number"
FLAG = "yes/no"
TEXT = "text"
_ORDERED = (TIME, TEMPERATURE, DELTA_T, NUMBER, COUNT)

UNKNOWN = "unknown"
NOT_APPLICABLE = "not applicable"


# --------------------------------------------------------------------------
# Quantities: what a rule may check
# --------------------------------------------------------------------------
class _Missing:
    """A quantity without a value for this case."""

    __slots__ = ("kind", "cause")

    def __init__(self, kind: str, cause: str):
        self.kind = kind
        self.cause = cause

    def __repr__(self) -> str:  # pragma: no cover - debugging aid
        return f"_Missing({self.kind!r}, {self.cause!r})"


class _BadValue(Exception):
    pass


@dataclass(frozen=True)
class Quantity:
    """A named value a rule can test, derived from the result dict."""

    name: str
    dimension: str
    description: str
    extract: Callable[[dict], Any]  # -> (value, context) or _Missing
    extras: tuple[tuple[str, str], ...] = ()  # (placeholder, dimension) of context values


def _num(r: dict, key: str) -> float | None:
    """A finite-or-infinite float from the result, None when null/absent."""
    v = r.get(key)
    if v is None:
        return None
    if isinstance(v, bool) or not isinstance(v, (int, float)):
        raise _BadValue(f"{key} has an unusable value ({v!r})")
    v = float(v)
    if math.isnan(v):
        raise _BadValue(f"{key} is not a number (NaN)")
    return v


def _safe(fn: Callable[[dict], Any]) -> Callable[[dict], Any]:
    def wrapped(r: dict):
        try:
            return fn(r)
        except _BadValue as exc:
            return _Missing(UNKNOWN, str(exc))
        except (TypeError, AttributeError, KeyError, ValueError):
            return _Missing(UNKNOWN, "the result is malformed for this quantity")

    wrapped.__name__ = fn.__name__
    wrapped.__qualname__ = fn.__qualname__
    return wrapped


_MEMO: contextvars.ContextVar = contextvars.ContextVar("rule_evaluation_memo", default=None)


def _per_evaluation(fn):
    """A pure helper several quantities call: computed once per result while :func:`evaluate` runs."""
    name = fn.__name__

    def wrapped(r):
        memo = _MEMO.get()
        if memo is None:
            return fn(r)
        key = (name, id(r))
        try:
            return memo[key]
        except KeyError:
            value = memo[key] = fn(r)
            return value

    wrapped.__name__ = name
    wrapped.__doc__ = fn.__doc__
    return wrapped


@_per_evaluation
def _limits(r: dict) -> list[dict]:
    return [lim for lim in (r.get("limits") or []) if isinstance(lim, dict)]


def _limit_time(lim: dict) -> float | None:
    return _num(lim, "time_s")


def _is_reached(lim: dict) -> bool:
    return bool(lim.get("reached")) or lim.get("time_s") is not None


def _lname(lim: dict) -> str:
    return str(lim.get("name") or "unnamed limit")


_NO_LIMITS = "no limit temperatures are given"
_NO_RESPONSE = "response time not given"
_NO_ALARM = "the alarm does not sound within the horizon"


@_per_evaluation
def _reached_times(r: dict) -> list[tuple[float, dict]]:
    out = []
    for lim in _limits(r):
        if _is_reached(lim):
            t = _limit_time(lim)
            if t is None:
                raise _BadValue(f"the time to limit '{_lname(lim)}' is not in the result")
            out.append((t, lim))
    return out


def _plain(key: str, kind_if_null: str, cause: str):
    def fn(r: dict):
        v = _num(r, key)
        if v is None:
            return _Missing(kind_if_null, cause)
        return v, None

    fn.__name__ = f"_q_{key}"
    fn.__qualname__ = fn.__name__
    return fn


@_safe
def _q_response_time(r):
    v = _num(r, "response_time_s")
    return _Missing(UNKNOWN, _NO_RESPONSE) if v is None else (v, None)


@_safe
def _q_detection_time(r):
    if "detection_time_s" not in r:
        return _Missing(UNKNOWN, "detection time not in the result")
    v = _num(r, "detection_time_s")
    return _Missing(UNKNOWN, _NO_ALARM) if v is None else (v, None)


@_per_evaluation
def _deadline(r) -> float | _Missing:
    resp = _num(r, "response_time_s")
    if resp is None:
        return _Missing(UNKNOWN, _NO_RESPONSE)
    if "detection_time_s" not in r:
        return _Missing(UNKNOWN, "detection time not in the result")
    det = _num(r, "detection_time_s")
    if det is None:
        return _Missing(UNKNOWN, _NO_ALARM)
    return det + resp


@_safe
def _q_response_deadline(r):
    d = _deadline(r)
    return d if isinstance(d, _Missing) else (d, None)


@_safe
def _q_first_limit_time(r):
    if not _limits(r):
        return _Missing(NOT_APPLICABLE, _NO_LIMITS)
    times = _reached_times(r)
    if not times:
        return _Missing(NOT_APPLICABLE, "no limit is reached within the horizon")
    t, lim = min(times, key=lambda x: x[0])
    return t, {"limit": _lname(lim), "limit_time": t}


@_safe
def _q_smallest_margin(r):
    if not _limits(r):
        return _Missing(NOT_APPLICABLE, _NO_LIMITS)
    if _num(r, "response_time_s") is None:
        return _Missing(UNKNOWN, _NO_RESPONSE)
    times = _reached_times(r)
    if not times:
        return _Missing(NOT_APPLICABLE, "no limit is reached within the horizon")
    d = _deadline(r)
    if isinstance(d, _Missing):
        if d.cause == _NO_ALARM:
            first = min(times, key=lambda x: x[0])[1]
            return _Missing(UNKNOWN, f"{_NO_ALARM}, although limit '{_lname(first)}' is reached")
        return d
    t, lim = min(times, key=lambda x: x[0] - d)
    return t - d, {"limit": _lname(lim), "limit_time": t}


@_safe
def _q_horizon_margin(r):
    lims = _limits(r)
    if not lims:
        return _Missing(NOT_APPLICABLE, _NO_LIMITS)
    unreached = [lim for lim in lims if not _is_reached(lim)]
    if not unreached:
        return _Missing(NOT_APPLICABLE, "every limit is reached within the horizon")
    horizon = _num(r, "horizon_s")
    if horizon is None:
        return _Missing(UNKNOWN, "horizon not in the result")
    d = _deadline(r)
    if isinstance(d, _Missing):
        return d
    names = ", ".join(f"'{_lname(lim)}'" for lim in unreached)
    return horizon - d, {"limit": names}


@_safe
def _q_limit_count(r):
    return float(len(_limits(r))), None


@_safe
def _q_limit_exceeded_at_start(r):
    v = r.get("limit_exceeded_at_start")
    if v is None:
        return _Missing(UNKNOWN, "whether a limit is exceeded at the start is not in the result")
    if not isinstance(v, bool):
        raise _BadValue(f"limit_exceeded_at_start has an unusable value ({v!r})")
    names = []
    if v:
        t0 = _num(r, "initial_temperature_K")
        for lim in _limits(r):
            tl = _num(lim, "temperature_K")
            if (t0 is not None and tl is not None and tl <= t0) or _limit_time(lim) == 0.0:
                names.append(f"'{_lname(lim)}'")
    return v, {"limit": ", ".join(names) if names else "(name not identified)"}


@_safe
def _q_undetected_limit(r):
    if "detection_time_s" not in r:
        return _Missing(UNKNOWN, "detection time not in the result")
    times = _reached_times(r)
    if r.get("detection_time_s") is not None or not times:
        return False, None
    t, lim = min(times, key=lambda x: x[0])
    return True, {"limit": _lname(lim), "limit_time": t}


@_safe
def _q_adiabatic_first_limit_time(r):
    block = r.get("adiabatic")
    if not isinstance(block, dict):
        return _Missing(UNKNOWN, "the adiabatic bound is not in the result")
    lims = [lim for lim in (block.get("limits") or []) if isinstance(lim, dict)]
    if not lims:
        return _Missing(NOT_APPLICABLE, _NO_LIMITS)
    times = [(_num(lim, "time_s"), lim) for lim in lims]
    times = [(t, lim) for t, lim in times if t is not None]
    if not times:
        return _Missing(NOT_APPLICABLE, "no limit is reached within the horizon even without heat loss")
    t, lim = min(times, key=lambda x: x[0])
    return t, {"limit": _lname(lim), "limit_time": t}


@_safe
def _q_adiabatic_rise_over_horizon(r):
    block = r.get("adiabatic")
    if not isinstance(block, dict):
        return _Missing(UNKNOWN, "the adiabatic bound is not in the result")
    v = _num(block, "temperature_rise_K")
    return _Missing(UNKNOWN, "the adiabatic temperature rise over the horizon is not in the result") \
        if v is None else (v, None)


_RUNAWAY_KEYS = (
    "tmr_adiabatic_s", "tmr_at_mtsr_s", "t_d24_K", "critical_ambient_temperature_K",
    "critical_temperature_K", "no_return_temperature_K", "adiabatic_temperature_rise_K",
    "mtsr_K", "criticality_class",
)
_NO_ARRHENIUS = "the case has no temperature-dependent (Arrhenius) heat source, so there are no runaway results"


def _has_runaway(r: dict) -> bool:
    return any(r.get(k) is not None for k in _RUNAWAY_KEYS)


def _runaway(key: str, label: str):
    @_safe
    def fn(r):
        v = _num(r, key)
        if v is not None:
            return v, None
        if not _has_runaway(r):
            return _Missing(NOT_APPLICABLE, _NO_ARRHENIUS)
        return _Missing(UNKNOWN, f"{label} not in the result")

    return fn


@_safe
def _q_critical_ambient_gap(r):
    crit = _num(r, "critical_ambient_temperature_K")
    if crit is None:
        if not _has_runaway(r):
            return _Missing(NOT_APPLICABLE, _NO_ARRHENIUS)
        return _Missing(UNKNOWN, "critical ambient temperature not in the result")
    amb = _num(r, "ambient_temperature_K")
    if amb is None:
        return _Missing(UNKNOWN, "ambient temperature not in the result")
    method = r.get("critical_ambient_method")
    label = {"semenov": "Semenov", "frank-kamenetskii": "Frank-Kamenetskii"}.get(method, str(method or "unstated"))
    return crit - amb, {"method": label}


@_safe
def _q_no_return_gap(r):
    t_nr = _num(r, "no_return_temperature_K")
    if t_nr is None:
        if not _has_runaway(r):
            return _Missing(NOT_APPLICABLE, _NO_ARRHENIUS)
        return _Missing(NOT_APPLICABLE, "no no-return temperature at this ambient "
                                        "(no steady state; see the critical-ambient check)")
    t0 = _num(r, "initial_temperature_K")
    if t0 is None:
        return _Missing(UNKNOWN, "initial temperature not in the result")
    return t_nr - t0, None


@_safe
def _q_t_d24_gap(r):
    td = _num(r, "t_d24_K")
    mtsr = _num(r, "mtsr_K")
    if td is None or mtsr is None:
        if not _has_runaway(r):
            return _Missing(NOT_APPLICABLE, _NO_ARRHENIUS)
        return _Missing(UNKNOWN, ("T_D24" if td is None else "MTSR") + " not in the result")
    return td - mtsr, None


@_safe
def _q_criticality_class(r):
    v = _num(r, "criticality_class")
    if v is not None:
        return v, None
    if not _has_runaway(r):
        return _Missing(NOT_APPLICABLE, _NO_ARRHENIUS)
    if r.get("maximum_technical_temperature_K") is None:
        return _Missing(UNKNOWN, "no maximum technical temperature (MTT) given, so the criticality class "
                                 "is not determined")
    return _Missing(UNKNOWN, "criticality class not in the result")


@_safe
def _q_biot_number(r):
    v = _num(r, "biot_number")
    if v is not None:
        return v, None
    if r.get("mixing") == "unstirred":
        return _Missing(UNKNOWN, "the Biot number of the unstirred contents is not computed "
                                 "(conductivity or surface coefficient not given)")
    return _Missing(NOT_APPLICABLE, "the contents are stirred, so the Biot criterion does not apply")


@_safe
def _q_mixing(r):
    v = r.get("mixing")
    if v is None:
        return _Missing(UNKNOWN, "mixing not in the result")
    return str(v), None


@_safe
def _q_steady_temperature(r):
    v = _num(r, "steady_temperature_K")
    return _Missing(NOT_APPLICABLE, "there is no stable steady state") if v is None else (v, None)


def _boiling(key: str, label: str):
    @_safe
    def fn(r):
        block = r.get("boiling")
        if not isinstance(block, dict):
            return _Missing(NOT_APPLICABLE, "the case has no boiling data")
        v = _num(block, key)
        return _Missing(NOT_APPLICABLE, f"{label} not reached within the horizon") if v is None else (v, None)

    return fn


def _recovery_block(r):
    block = r.get("recovery")
    if not isinstance(block, dict):
        return _Missing(NOT_APPLICABLE, "the case has no cooling-recovery scenario")
    return block


@_safe
def _q_recovery_past_no_return(r):
    block = _recovery_block(r)
    if isinstance(block, _Missing):
        return block
    v = block.get("past_no_return")
    if v is None:
        if not _has_runaway(r):
            return _Missing(NOT_APPLICABLE, _NO_ARRHENIUS)
        return _Missing(UNKNOWN, "whether the contents are past the no-return temperature when cooling "
                                 "returns is not in the result")
    return bool(v), None


@_safe
def _q_recovery_start(r):
    block = _recovery_block(r)
    if isinstance(block, _Missing):
        return block
    v = _num(block, "start_s")
    return _Missing(UNKNOWN, "recovery start not in the result") if v is None else (v, None)


@_safe
def _q_recovery_peak_temperature(r):
    block = _recovery_block(r)
    if isinstance(block, _Missing):
        return block
    v = _num(block, "peak_temperature_K")
    return _Missing(UNKNOWN, "recovery peak temperature not in the result") if v is None else (v, None)


@_safe
def _q_recovery_limit_count(r):
    block = _recovery_block(r)
    if isinstance(block, _Missing):
        return block
    return float(len(block.get("limits_reached") or [])), None


@_safe
def _q_warning_count(r):
    return float(len(r.get("warnings") or [])), None


_LIMIT_EXTRAS = (("limit", TEXT), ("limit_time", TIME))
_NO_UNCERTAINTY = "the case has no uncertainty block"


def _uncertainty_block(r):
    block = r.get("uncertainty")
    if not isinstance(block, dict) or not block.get("limits"):
        return _Missing(NOT_APPLICABLE, _NO_UNCERTAINTY)
    return block


def _q_probability(key: str):
    @_safe
    def fn(r):
        block = _uncertainty_block(r)
        if isinstance(block, _Missing):
            return block
        best = None
        for lim in block["limits"]:
            v = lim.get(key)
            if v is None:
                continue
            if best is None or v > best[0]:
                best = (float(v), lim)
        if best is None:
            return _Missing(UNKNOWN, "response time not given" if key == "probability_before_response" else
                            "no probability in the result")
        return best[0], {"limit": _lname(best[1])}

    fn.__name__ = f"_q_{key}"
    fn.__qualname__ = fn.__name__
    return fn


@_safe
def _q_p05_first_limit_time(r):
    block = _uncertainty_block(r)
    if isinstance(block, _Missing):
        return block
    name = block.get("first_limit")
    lim = next((x for x in block["limits"] if x.get("name") == name), None)
    if lim is None:
        return _Missing(UNKNOWN, "the first limit is not in the uncertainty result")
    v = lim.get("p05_time_s")
    if v is None:
        return _Missing(NOT_APPLICABLE, "fewer than 5 % of the samples reach the first limit within the horizon")
    return float(v), {"limit": str(name)}


def _quantity_table() -> dict[str, Quantity]:
    q = [
        # time to limit
        Quantity("response_time", TIME, "response time (response_time_s)", _q_response_time),
        Quantity("detection_time", TIME, "time until the alarm sounds (detection_time_s); unknown when it "
                 "never sounds within the horizon", _q_detection_time),
        Quantity("response_deadline", TIME, "detection time + response time", _q_response_deadline),
        Quantity("horizon", TIME, "length of the calculation (horizon_s)",
                 _safe(_plain("horizon_s", UNKNOWN, "horizon not in the result"))),
        Quantity("first_limit_time", TIME, "time at which the first limit is reached; not applicable when "
                 "no limit is reached within the horizon", _q_first_limit_time, _LIMIT_EXTRAS),
        Quantity("smallest_margin", TIME, "smallest margin of any reached limit: its time minus (detection "
                 "time + response time); unknown without a response time or when the alarm never sounds; "
                 "not applicable when no limit is reached", _q_smallest_margin, _LIMIT_EXTRAS),
        Quantity("horizon_margin", TIME, "for limits not reached within the horizon: horizon minus (detection "
                 "time + response time), the most the calculation can show about their margin",
                 _q_horizon_margin, (("limit", TEXT),)),
        Quantity("limit_count", COUNT, "number of limit temperatures given", _q_limit_count),
        Quantity("limit_exceeded_at_start", FLAG, "a limit is already reached or exceeded at t = 0",
                 _q_limit_exceeded_at_start, (("limit", TEXT),)),
        Quantity("undetected_limit", FLAG, "a limit is reached within the horizon while the alarm never "
                 "sounds", _q_undetected_limit, _LIMIT_EXTRAS),
        # heat-up curve
        Quantity("initial_temperature", TEMPERATURE, "initial temperature",
                 _safe(_plain("initial_temperature_K", UNKNOWN, "initial temperature not in the result"))),
        Quantity("ambient_temperature", TEMPERATURE, "ambient temperature",
                 _safe(_plain("ambient_temperature_K", UNKNOWN, "ambient temperature not in the result"))),
        Quantity("peak_temperature", TEMPERATURE, "highest temperature within the horizon",
                 _safe(_plain("peak_temperature_K", UNKNOWN, "peak temperature not in the result"))),
        Quantity("peak_time", TIME, "time of the highest temperature",
                 _safe(_plain("peak_time_s", UNKNOWN, "peak time not in the result"))),
        Quantity("steady_temperature", TEMPERATURE, "stable steady temperature; not applicable when there "
                 "is none", _q_steady_temperature),
        Quantity("time_constant", TIME, "time constant C / UA; not applicable when adiabatic",
                 _safe(_plain("time_constant_s", NOT_APPLICABLE, "the vessel is adiabatic (no heat loss)"))),
        Quantity("adiabatic_first_limit_time", TIME, "time to the first limit with no heat loss (UA = 0)",
                 _q_adiabatic_first_limit_time, _LIMIT_EXTRAS),
        Quantity("adiabatic_rise_over_horizon", DELTA_T, "temperature rise over the horizon with no heat loss",
                 _q_adiabatic_rise_over_horizon),
        # runaway
        Quantity("tmr_adiabatic", TIME, "TMRad from the initial temperature",
                 _runaway("tmr_adiabatic_s", "TMRad from the initial temperature")),
        Quantity("tmr_at_mtsr", TIME, "TMRad from the MTSR", _runaway("tmr_at_mtsr_s", "TMRad at MTSR")),
        Quantity("t_d24", TEMPERATURE, "T_D24, the temperature at which TMRad is 24 h",
                 _runaway("t_d24_K", "T_D24")),
        Quantity("mtsr", TEMPERATURE, "maximum temperature of the synthesis reaction (MTSR)",
                 _runaway("mtsr_K", "MTSR")),
        Quantity("maximum_technical_temperature", TEMPERATURE, "maximum temperature for technical reasons (MTT)",
                 _runaway("maximum_technical_temperature_K", "maximum technical temperature")),
        Quantity("adiabatic_temperature_rise", DELTA_T, "adiabatic temperature rise of the reaction (dT_ad)",
                 _runaway("adiabatic_temperature_rise_K", "adiabatic temperature rise")),
        Quantity("critical_ambient_temperature", TEMPERATURE, "highest ambient without runaway",
                 _runaway("critical_ambient_temperature_K", "critical ambient temperature")),
        Quantity("critical_ambient_gap", DELTA_T, "critical ambient temperature minus the ambient",
                 _q_critical_ambient_gap, (("method", TEXT),)),
        Quantity("critical_temperature", TEMPERATURE, "contents temperature at the critical condition",
                 _runaway("critical_temperature_K", "critical temperature")),
        Quantity("no_return_temperature", TEMPERATURE, "no-return temperature (upper, unstable steady state)",
                 _runaway("no_return_temperature_K", "no-return temperature")),
        Quantity("no_return_gap", DELTA_T, "no-return temperature minus the initial temperature",
                 _q_no_return_gap),
        Quantity("t_d24_gap", DELTA_T, "T_D24 minus the MTSR", _q_t_d24_gap),
        Quantity("criticality_class", COUNT, "criticality class 1..5 from the order of process temperature, "
                 "MTSR, MTT and T_D24", _q_criticality_class),
        # other
        Quantity("biot_number", NUMBER, "Biot number of unstirred contents; not applicable when stirred",
                 _q_biot_number),
        Quantity("mixing", TEXT, "'stirred' or 'unstirred'", _q_mixing),
        Quantity("time_to_boil", TIME, "time until the contents boil",
                 _boiling("time_to_boil_s", "boiling")),
        Quantity("time_to_dry", TIME, "time until the contents have boiled dry",
                 _boiling("time_to_dry_s", "boiling dry")),
        Quantity("recovery_start", TIME, "time at which cooling returns", _q_recovery_start),
        Quantity("recovery_peak_temperature", TEMPERATURE, "highest temperature after cooling returns",
                 _q_recovery_peak_temperature),
        Quantity("recovery_limit_count", COUNT, "number of limits reached although cooling returns",
                 _q_recovery_limit_count),
        Quantity("recovery_past_no_return", FLAG, "the contents are past the no-return temperature when "
                 "cooling returns", _q_recovery_past_no_return),
        Quantity("warning_count", COUNT, "number of warnings in the result", _q_warning_count),
        # uncertainty (Monte Carlo)
        Quantity("probability_before_response", NUMBER, "largest probability, over the limits, that a limit is "
                 "reached before detection + response (Monte Carlo); not applicable without an uncertainty block",
                 _q_probability("probability_before_response"), (("limit", TEXT),)),
        Quantity("probability_within_horizon", NUMBER, "largest probability, over the limits, that a limit is "
                 "reached within the horizon (Monte Carlo)", _q_probability("probability_within_horizon"),
                 (("limit", TEXT),)),
        Quantity("p05_first_limit_time", TIME, "5th percentile of the time to the first (lowest) limit "
                 "(Monte Carlo)", _q_p05_first_limit_time, (("limit", TEXT),)),
    ]
    return {x.name: x for x in q}


QUANTITIES: dict[str, Quantity] = _quantity_table()


def describe_quantities() -> list[tuple[str, str, str]]:
    """``(name, kind, description)`` for every quantity a rule may name."""
    return [(q.name, q.dimension, q.description) for q in QUANTITIES.values()]
