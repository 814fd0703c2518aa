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


_UNMONITORED = ("the store is not monitored (no detection block), so limits are checked against the storage "
                "period (the horizon)")


def _unmonitored(r: dict) -> bool:
    return r.get("detection_basis") == "unmonitored"


@_safe
def _q_detection_time(r):
    if _unmonitored(r):
        return _Missing(NOT_APPLICABLE, _UNMONITORED)
    if "detection_time_s" not in r:
        return _Missing(UNKNOWN, "detection time not in the result")
    v = _num(r, "detection_time_s")
    return _Missing(UNKNOWN, _NO_ALARM) if v is None else (v, None)


@_per_evaluation
def _deadline(r) -> float | _Missing:
    if _unmonitored(r):
        return _Missing(NOT_APPLICABLE, _UNMONITORED)
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
    if _unmonitored(r):
        return _Missing(NOT_APPLICABLE, _UNMONITORED)
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
def _q_start_temperature(r):
    block = r.get("start_release")
    if isinstance(block, dict):
        v = _num(block, "temperature_K")
        if v is not None:
            return v, None
    v = _num(r, "initial_temperature_K")
    return _Missing(UNKNOWN, "initial temperature not in the result") if v is None else (v, None)


@_safe
def _q_undetected_limit(r):
    if "detection_time_s" not in r:
        return _Missing(UNKNOWN, "detection time not in the result")
    times = _reached_times(r)
    if r.get("detection_time_s") is not None or not times:
        return False, None
    t, lim = min(times, key=lambda x: x[0])
    why = _UNMONITORED if _unmonitored(r) else "the alarm does not sound within the horizon"
    return True, {"limit": _lname(lim), "limit_time": t, "detection": why}


@_safe
def _q_limit_reached_detection_assumed(r):
    basis = r.get("detection_basis")
    if basis is None:
        return _Missing(UNKNOWN, "the detection basis is not in the result")
    if basis != "assumed":
        return _Missing(NOT_APPLICABLE, "the case states how the failure is detected" if basis in ("alarm", "delay")
                        else _UNMONITORED)
    times = _reached_times(r)
    if not times:
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
_NO_DECOMPOSITION = ("no decomposition (secondary reaction) source is given, so T_D24 and TMRad are not known: "
                     "T_D24 must be measured")
_NOT_COOLING_FAILURE = {
    "storage": "storage scenario: there is no synthesis reaction, so no MTSR and no criticality class",
    "heat-up": "heat-up scenario: only the time to each limit is judged (no MTSR and no criticality class)",
}
_NOT_STORAGE = {
    "cooling-failure": "cooling-failure scenario: the critical ambient is a storage criterion",
    "heat-up": "heat-up scenario: only the time to each limit is judged (no critical ambient)",
}

#: The scenario a reactor quantity (MTSR and what follows from it) belongs to.
_COOLING_FAILURE_ONLY = {"tmr_at_mtsr_s", "mtsr_K", "adiabatic_temperature_rise_K", "criticality_class",
                         "maximum_technical_temperature_K", "final_temperature_K"}
_STORAGE_ONLY = {"critical_ambient_temperature_K", "critical_temperature_K", "tmr_at_storage_temperature_s"}
_DECOMPOSITION = {"tmr_adiabatic_s", "t_d24_K", "tmr_at_mtsr_s", "final_temperature_K", "tmr_at_storage_temperature_s",
                  "decomposition_temperature_rise_K"}


def _has_runaway(r: dict) -> bool:
    return any(r.get(k) is not None for k in _RUNAWAY_KEYS)


def _scenario(r: dict) -> str | None:
    s = r.get("scenario")
    return s if isinstance(s, str) else None


def _has_decomposition(r: dict) -> bool:
    return bool(r.get("decomposition_sources"))


def _scenario_missing(r: dict, key: str) -> _Missing | None:
    """Why a runaway key has no value in this scenario (not applicable or unknown), or None when it should have one.

    Results without a scenario (made before reactions had roles) keep the older rule: not applicable when
    the case has no runaway result at all.
    """
    scenario = _scenario(r)
    if scenario is None:
        return None if _has_runaway(r) else _Missing(NOT_APPLICABLE, _NO_ARRHENIUS)
    if key in _COOLING_FAILURE_ONLY and scenario != "cooling-failure":
        return _Missing(NOT_APPLICABLE, _NOT_COOLING_FAILURE.get(scenario, f"{scenario} scenario"))
    if key in _STORAGE_ONLY and scenario != "storage":
        return _Missing(NOT_APPLICABLE, _NOT_STORAGE.get(scenario, f"{scenario} scenario"))
    if key in _DECOMPOSITION and not _has_decomposition(r):
        if scenario == "cooling-failure":
            return _Missing(UNKNOWN, _NO_DECOMPOSITION)
        return _Missing(NOT_APPLICABLE, "the case has no decomposition (temperature-dependent) source")
    return None


def _runaway(key: str, label: str):
    @_safe
    def fn(r):
        v = _num(r, key)
        if v is not None:
            return v, None
        if key == "decomposition_temperature_rise_K" and r.get("decomposition_rise_unbounded"):
            return math.inf, None
        missing = _scenario_missing(r, key)
        if missing is not None:
            return missing
        return _Missing(UNKNOWN, f"{label} not in the result")

    return fn


_INDUCTION_SCENARIO = {"induction_time_at_storage_temperature_s": "storage",
                       "induction_time_over_storage_period": "storage", "induction_time_at_mtsr_s": "cooling-failure"}


def _q_induction_time(key: str):
    scenario_of_key = _INDUCTION_SCENARIO[key]

    @_safe
    def fn(r):
        scenario = _scenario(r)
        if scenario != scenario_of_key:
            return _Missing(NOT_APPLICABLE, f"{scenario or 'this'} scenario: the induction time is judged "
                                            f"{'in storage' if scenario_of_key == 'storage' else 'at MTSR'}")
        v = _num(r, key)
        if v is not None:
            if key == "induction_time_over_storage_period":
                return v, {"induction_time": _num(r, "induction_time_at_storage_temperature_s"),
                           "storage_period": _num(r, "horizon_s")}
            return v, None
        if not isinstance(r.get("autocatalytic"), dict):
            return _Missing(NOT_APPLICABLE, "no autocatalytic decomposition, so no induction time")
        return _Missing(UNKNOWN, "induction time not in the result (none at all: the material starts at its "
                                 "maximum rate)" if key != "induction_time_at_mtsr_s" else
                        "induction time not in the result")

    return fn


def _storage_gap(r):
    missing = _scenario_missing(r, "critical_ambient_temperature_K")
    if missing is not None:
        return missing
    return _Missing(UNKNOWN, "critical ambient temperature not in the result")


@_safe
def _q_criteria_ambient(r):
    """The ambient of the criteria: ``criteria_ambient_K`` (a daily cycle's daily maximum), else the ambient."""
    v = _num(r, "criteria_ambient_K") if r.get("criteria_ambient_K") is not None else _num(r, "ambient_temperature_K")
    if v is None:
        return _Missing(UNKNOWN, "ambient temperature not in the result")
    return v, None


@_safe
def _q_critical_ambient_gap(r):
    crit = _num(r, "critical_ambient_temperature_K")
    if crit is None:
        return _storage_gap(r)
    # with a daily cycle the comparison is with the daily maximum of the effective ambient (criteria_ambient_K)
    amb = _num(r, "criteria_ambient_K") if r.get("criteria_ambient_K") is not None else _num(r, "ambient_temperature_K")
    if amb is None:
        return _Missing(UNKNOWN, "ambient temperature not in the result")
    method = r.get("critical_ambient_method")
    label = {"semenov": "Semenov", "frank-kamenetskii": "Frank-Kamenetskii"}.get(method, str(method or "unstated"))
    return crit - amb, {"method": label}


@_safe
def _q_no_return_gap(r):
    t_nr = _num(r, "no_return_temperature_K")
    if t_nr is None:
        if _scenario(r) is None and not _has_runaway(r):
            return _Missing(NOT_APPLICABLE, _NO_ARRHENIUS)
        if _scenario(r) is not None and not (r.get("decomposition_sources") or r.get("synthesis_sources")):
            return _Missing(NOT_APPLICABLE, _NO_ARRHENIUS)
        if r.get("mixing") == "unstirred":
            return _Missing(NOT_APPLICABLE, "unstirred contents: the no-return temperature is a well-mixed "
                                            "(Semenov) result")
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
        for key in ("mtsr_K", "t_d24_K"):
            missing = _scenario_missing(r, key)
            if missing is not None:
                return missing
        return _Missing(UNKNOWN, ("T_D24" if td is None else "MTSR") + " not in the result")
    return td - mtsr, None


def _classes_text(r) -> str:
    """" (from MTSR and MTT alone the class is 1 or 2)", or "" when the result does not say."""
    classes = r.get("criticality_classes_possible")
    if not isinstance(classes, list) or len(classes) < 2:
        return ""
    names = [str(c) for c in classes]
    return f" (from MTSR and MTT alone the class is {', '.join(names[:-1])} or {names[-1]})"


@_safe
def _q_criticality_class(r):
    v = _num(r, "criticality_class")
    if v is not None:
        return v, None
    missing = _scenario_missing(r, "criticality_class")
    if missing is not None:
        return missing
    if r.get("maximum_technical_temperature_K") is None:
        return _Missing(UNKNOWN, "no maximum technical temperature (MTT) given, so the criticality class "
                                 "is not determined")
    if _scenario(r) == "cooling-failure" and not _has_decomposition(r):
        return _Missing(UNKNOWN, _NO_DECOMPOSITION + _classes_text(r))
    return _Missing(UNKNOWN, "criticality class not in the result")


@_safe
def _q_probability_tmr(r):
    scenario = _scenario(r)
    if scenario == "storage":
        key = "tmr_at_storage_temperature_s"
    elif scenario == "cooling-failure" or scenario is None:
        key = "tmr_at_mtsr_s"
    else:
        return _Missing(NOT_APPLICABLE, _NOT_COOLING_FAILURE["heat-up"].replace("no MTSR", "no runaway matrix, no MTSR"))
    return _runaway(key, "TMRad at MTSR" if key == "tmr_at_mtsr_s" else "TMRad at the storage temperature")(r)


@_safe
def _q_probability_basis(r):
    scenario = _scenario(r)
    if scenario == "storage":
        return "TMRad at the storage temperature", None
    if scenario == "cooling-failure":
        return "TMRad at MTSR", None
    return _Missing(NOT_APPLICABLE, "no runaway probability in this scenario")


@_safe
def _q_severity_rise(r):
    if _scenario(r) is None:
        return _runaway("adiabatic_temperature_rise_K", "adiabatic temperature rise")(r)
    if _scenario(r) == "heat-up":
        return _Missing(NOT_APPLICABLE, _NOT_COOLING_FAILURE["heat-up"].replace("no MTSR", "no severity class, no MTSR"))
    return _runaway("decomposition_temperature_rise_K", "decomposition temperature rise")(r)


_NO_SADT_SCENARIO = "only a storage case has an SADT (a package in still surroundings)"


def _sadt_missing(r: dict, label: str):
    """Why an SADT quantity has no value: not applicable (another scenario, no SADT by its nature or above the
    search), or unknown (data missing, a tank whose row of the table is not applied)."""
    if _scenario(r) != "storage":
        return _Missing(NOT_APPLICABLE, f"{_scenario(r) or 'this'} scenario: {_NO_SADT_SCENARIO}")
    if "sadt_K" not in r:  # a result made before packages had an SADT
        return _Missing(NOT_APPLICABLE, "the result carries no SADT")
    block = r.get("sadt") if isinstance(r.get("sadt"), dict) else {}
    note = str(r.get("sadt_note") or "")
    first = note.split(".", 1)[0].replace("No SADT: ", "no SADT: ")
    status = block.get("status")
    if block.get("portable_tank"):
        return _Missing(UNKNOWN, f"{label}: the contents are a tank, whose row of the Model Regulations' table is "
                                 f"not applied")
    if block.get("packaging") == "unknown":
        return _Missing(UNKNOWN, f"{label}: the contents' volume is not known and their mass is more than a single "
                                 f"packaging holds, so the packagings table is not applied")
    if status == "above bound":
        return _Missing(NOT_APPLICABLE, f"no {label}: the SADT is {note.split(':', 1)[0]}")
    if status == "not applicable":
        return _Missing(NOT_APPLICABLE, first or "no SADT")
    if status in ("data missing", "failed"):
        return _Missing(UNKNOWN, first or "the SADT could not be computed")
    return _Missing(UNKNOWN, f"{label} not in the result")


def _sadt_value(key: str, label: str):
    @_safe
    def fn(r):
        v = _num(r, key)
        return (v, None) if v is not None else _sadt_missing(r, label)

    fn.__name__ = f"_q_{key}"
    fn.__qualname__ = fn.__name__
    return fn


@_safe
def _q_control_temperature_gap(r):
    control = _num(r, "control_temperature_K")
    if control is None:
        return _sadt_missing(r, "control temperature")
    # with a daily cycle the control temperature is compared with the daily maximum of the effective ambient
    amb = _num(r, "criteria_ambient_K") if r.get("criteria_ambient_K") is not None else _num(r, "ambient_temperature_K")
    if amb is None:
        return _Missing(UNKNOWN, "ambient temperature not in the result")
    return control - amb, None


def _flag(key: str, scenarios: tuple, label: str, extras=None):
    @_safe
    def fn(r):
        scenario = _scenario(r)
        if scenario not in scenarios:
            return _Missing(NOT_APPLICABLE, f"{scenario or 'this'} scenario: {label} does not apply")
        v = r.get(key)
        if v is None:
            return _Missing(NOT_APPLICABLE, f"{label} does not apply to this case")
        if not isinstance(v, bool):
            raise _BadValue(f"{key} has an unusable value ({v!r})")
        return v, (extras(r) if extras else None)

    fn.__name__ = f"_q_{key}"
    fn.__qualname__ = fn.__name__
    return fn


@_safe
def _q_decomposition_data_missing(r):
    if _scenario(r) != "cooling-failure":
        return _Missing(NOT_APPLICABLE, "decomposition data are asked for after a cooling failure")
    return (not _has_decomposition(r)), {"classes": _classes_text(r).strip(" ()") or "not determined"}


@_safe
def _q_critical_medium_gap(r):
    crit = _num(r, "critical_medium_temperature_K")
    if crit is None:
        return _Missing(NOT_APPLICABLE, "no critical medium temperature (no heating medium with a decomposition, "
                                        "or unstirred contents)")
    tm = _num(r, "heating_medium_temperature_K")
    if tm is None:
        return _Missing(UNKNOWN, "heating medium temperature not in the result")
    return crit - tm, None


@_safe
def _q_biot_number(r):
    if isinstance(r.get("conduction"), dict):
        return _Missing(NOT_APPLICABLE, "the limit times come from the transient conduction solution (the hot "
                                        "spot), not from the lumped model, so the lumped model's validity does "
                                        "not matter")
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


def _conduction_flag(key: str, label: str):
    @_safe
    def fn(r):
        block = r.get("conduction")
        if not isinstance(block, dict):
            return _Missing(NOT_APPLICABLE, "no transient conduction solution (stirred contents)")
        v = block.get(key)
        if not isinstance(v, bool):
            return _Missing(UNKNOWN, f"{label} not in the conduction result")
        return v, {"geometry": str(block.get("geometry") or "unstated"),
                   "approximation": str(block.get("geometry_approximation") or "the shape is exact")}

    fn.__name__ = f"_q_conduction_{key}"
    fn.__qualname__ = fn.__name__
    return fn


@_safe
def _q_steady_temperature(r):
    if isinstance(r.get("conduction"), dict) and r.get("steady_temperature_K") is None:
        return _Missing(NOT_APPLICABLE, "unstirred contents: no steady temperature is computed for the body (the "
                                        "lumped one is under lumped)")
    v = _num(r, "steady_temperature_K")
    return _Missing(NOT_APPLICABLE, "there is no stable steady state") if v is None else (v, None)


@_safe
def _q_steady_gap_to_limit(r):
    """Smallest (limit temperature - steady temperature) over the limits at or above the steady temperature."""
    steady = _num(r, "steady_temperature_K")
    if steady is None:
        return _Missing(NOT_APPLICABLE, "there is no stable steady state")
    above = [(tl - steady, lim, tl) for lim in _limits(r) if (tl := _num(lim, "temperature_K")) is not None
             and tl >= steady]
    if not above:
        return _Missing(NOT_APPLICABLE, "every limit lies below the steady temperature")
    gap, lim, tl = min(above, key=lambda x: x[0])
    return gap, {"limit": _lname(lim), "limit_temperature": tl, "steady_temperature": steady}


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
        Quantity("steady_gap_to_limit", DELTA_T, "the nearest limit at or above the stable steady temperature "
                 "minus that steady temperature; not applicable without a steady state or without such a limit",
                 _q_steady_gap_to_limit, (("limit", TEXT), ("limit_temperature", TEMPERATURE),
                                          ("steady_temperature", TEMPERATURE))),
        Quantity("limit_exceeded_at_start", FLAG, "a limit is already reached or exceeded at t = 0",
                 _q_limit_exceeded_at_start, (("limit", TEXT),)),
        Quantity("undetected_limit", FLAG, "a limit is reached within the horizon while nothing detects it: the "
                 "alarm never sounds, or the store is not monitored; {detection} says which",
                 _q_undetected_limit, _LIMIT_EXTRAS + (("detection", TEXT),)),
        Quantity("limit_reached_detection_assumed", FLAG, "a limit is reached within the horizon and the case has "
                 "no detection block, so detection is assumed at t = 0; not applicable when detection is stated",
                 _q_limit_reached_detection_assumed, _LIMIT_EXTRAS),
        # heat-up curve
        Quantity("initial_temperature", TEMPERATURE, "initial temperature",
                 _safe(_plain("initial_temperature_K", UNKNOWN, "initial temperature not in the result"))),
        Quantity("start_temperature", TEMPERATURE, "temperature the history starts at: the initial temperature, "
                 "plus the heat of a synthesis given without kinetics, released at t = 0", _q_start_temperature),
        Quantity("ambient_temperature", TEMPERATURE, "ambient temperature (with a daily cycle of the air and the "
                 "sun: the daily maximum of the effective ambient, which the criteria compare with)",
                 _q_criteria_ambient),
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
        # runaway: decomposition (any scenario with one)
        Quantity("tmr_adiabatic", TIME, "TMRad of the decomposition from the initial temperature",
                 _runaway("tmr_adiabatic_s", "TMRad from the initial temperature")),
        Quantity("t_d24", TEMPERATURE, "T_D24 of the decomposition, the temperature at which its TMRad is 24 h",
                 _runaway("t_d24_K", "T_D24")),
        Quantity("probability_tmr", TIME, "TMRad that sets the probability of a runaway: at MTSR after a cooling "
                 "failure, at the storage temperature in storage; not applicable in a heat-up", _q_probability_tmr),
        Quantity("probability_basis", TEXT, "which TMRad probability_tmr is ('TMRad at MTSR' or 'TMRad at the "
                 "storage temperature')", _q_probability_basis),
        Quantity("severity_rise", DELTA_T, "adiabatic temperature rise of the decomposition, the severity of a "
                 "runaway (cooling failure and storage); not applicable in a heat-up", _q_severity_rise),
        Quantity("decomposition_temperature_rise", DELTA_T, "adiabatic temperature rise of the decomposition",
                 _runaway("decomposition_temperature_rise_K", "decomposition temperature rise")),
        # cooling failure
        Quantity("tmr_at_mtsr", TIME, "TMRad of the decomposition from the MTSR (cooling failure)",
                 _runaway("tmr_at_mtsr_s", "TMRad at MTSR")),
        Quantity("mtsr", TEMPERATURE, "maximum temperature of the synthesis reaction (MTSR; cooling failure)",
                 _runaway("mtsr_K", "MTSR")),
        Quantity("maximum_technical_temperature", TEMPERATURE, "maximum temperature for technical reasons (MTT; "
                 "cooling failure)", _runaway("maximum_technical_temperature_K", "maximum technical temperature")),
        Quantity("adiabatic_temperature_rise", DELTA_T, "accumulated adiabatic temperature rise that enters the MTSR "
                 "(MTSR minus the process temperature; cooling failure)",
                 _runaway("adiabatic_temperature_rise_K", "adiabatic temperature rise")),
        Quantity("final_temperature", TEMPERATURE, "MTSR plus the decomposition's adiabatic rise (cooling failure)",
                 _runaway("final_temperature_K", "final temperature")),
        Quantity("t_d24_gap", DELTA_T, "T_D24 minus the MTSR (cooling failure)", _q_t_d24_gap),
        Quantity("criticality_class", COUNT, "criticality class 1..5 from the order of process temperature, "
                 "MTSR, MTT and T_D24 (cooling failure)", _q_criticality_class),
        Quantity("decomposition_data_missing", FLAG, "a cooling failure without a decomposition source: T_D24 "
                 "must be measured; {classes}: the classes MTSR and MTT leave open", _q_decomposition_data_missing,
                 (("classes", TEXT),)),
        Quantity("mtt_barrier", FLAG, "the case shows a barrier at the MTT (an open vessel with boiling credited, "
                 "boiling at or below the MTT); only when MTSR reaches the MTT",
                 _flag("mtt_barrier", ("cooling-failure",), "the barrier at the MTT")),
        # storage
        Quantity("critical_ambient_temperature", TEMPERATURE, "highest ambient without runaway (storage)",
                 _runaway("critical_ambient_temperature_K", "critical ambient temperature")),
        Quantity("critical_ambient_gap", DELTA_T, "critical ambient temperature minus the ambient (storage)",
                 _q_critical_ambient_gap, (("method", TEXT),)),
        Quantity("critical_temperature", TEMPERATURE, "contents temperature at the critical condition (storage, "
                 "stirred)", _runaway("critical_temperature_K", "critical temperature")),
        Quantity("tmr_at_storage_temperature", TIME, "TMRad of the decomposition at the storage temperature (the "
                 "higher of the initial and the ambient temperature)",
                 _runaway("tmr_at_storage_temperature_s", "TMRad at the storage temperature")),
        Quantity("gas_in_closed_package", FLAG, "a decomposition makes gas and the vessel or package is closed "
                 "(storage)", _flag("gas_in_closed_package", ("storage",), "gas in a closed vessel or package")),
        Quantity("induction_time_at_storage_temperature", TIME, "isothermal induction time (time to the maximum "
                 "rate at a constant temperature) of an autocatalytic decomposition at the storage temperature "
                 "(storage)", _q_induction_time("induction_time_at_storage_temperature_s")),
        Quantity("induction_time_over_storage_period", NUMBER, "isothermal induction time at the storage "
                 "temperature divided by the storage period (the horizon) (storage, autocatalytic decomposition)",
                 _q_induction_time("induction_time_over_storage_period"),
                 (("induction_time", TIME), ("storage_period", TIME))),
        Quantity("induction_time_at_mtsr", TIME, "isothermal induction time of an autocatalytic decomposition at "
                 "the MTSR (cooling failure)", _q_induction_time("induction_time_at_mtsr_s")),
        Quantity("unstirred_hot_start", FLAG, "unstirred contents start above the ambient, which the steady "
                 "critical-ambient criterion does not cover (storage)",
                 _flag("unstirred_hot_start", ("storage",), "the hot start of unstirred contents")),
        # packages: SADT and the temperatures that follow (storage)
        Quantity("sadt", TEMPERATURE, "self-accelerating decomposition temperature of the package: lowest 5 degC "
                 "step with a 6 K rise of the centre within 7 days (computed; storage)",
                 _sadt_value("sadt_K", "SADT")),
        Quantity("control_temperature", TEMPERATURE, "control temperature from the SADT (UN Model Regulations table "
                 "for packagings and IBCs; storage)", _sadt_value("control_temperature_K", "control temperature")),
        Quantity("emergency_temperature", TEMPERATURE, "emergency temperature from the SADT (UN Model Regulations "
                 "table for packagings and IBCs; storage)",
                 _sadt_value("emergency_temperature_K", "emergency temperature")),
        Quantity("control_temperature_gap", DELTA_T, "control temperature minus the storage ambient (storage of a "
                 "package)", _q_control_temperature_gap),
        # steady states, heating medium
        Quantity("no_return_temperature", TEMPERATURE, "no-return temperature (upper, unstable steady state; of the "
                 "decomposition after a cooling failure)", _runaway("no_return_temperature_K", "no-return temperature")),
        Quantity("no_return_gap", DELTA_T, "no-return temperature minus the initial temperature",
                 _q_no_return_gap),
        Quantity("critical_medium_temperature", TEMPERATURE, "medium temperature above which the contents run away "
                 "with a heating medium left on (Semenov, stirred)",
                 _safe(_plain("critical_medium_temperature_K", NOT_APPLICABLE, "no critical medium temperature "
                              "(no heating medium with a decomposition, or unstirred contents)"))),
        Quantity("critical_medium_gap", DELTA_T, "critical medium temperature minus the heating medium temperature",
                 _q_critical_medium_gap),
        Quantity("heating_medium_temperature", TEMPERATURE, "temperature of the heating medium left on",
                 _safe(_plain("heating_medium_temperature_K", NOT_APPLICABLE, "no heating medium"))),
        Quantity("medium_above_t_d24", FLAG, "the heating medium is hotter than T_D24 of the decomposition",
                 _flag("medium_above_t_d24", ("cooling-failure", "storage", "heat-up"),
                       "a heating medium with a decomposition")),
        # other
        Quantity("biot_number", NUMBER, "Biot number of unstirred contents; not applicable when stirred",
                 _q_biot_number),
        Quantity("mixing", TEXT, "'stirred' or 'unstirred'", _q_mixing),
        Quantity("conduction_geometry_approximated", FLAG, "the body of unstirred contents was approximated for "
                 "the conduction solution (a box as a slab, a finite cylinder as an infinite one)",
                 _conduction_flag("geometry_approximated", "geometry approximation"),
                 (("geometry", TEXT), ("approximation", TEXT))),
        Quantity("conduction_liquid", FLAG, "unstirred contents taken as a liquid (a boiling point is given), for "
                 "which pure conduction is very conservative",
                 _conduction_flag("liquid", "liquid"), (("geometry", TEXT), ("approximation", TEXT))),
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
