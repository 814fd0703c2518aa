"""Site rule sets as data, and the verdict engine.

A rule set is a TOML file.  It turns one screening result (the plain dict that
``heatscreen check CASE --json`` prints) into a verdict ``pass`` / ``review`` /
``fail`` with reasons written for the reader.

File layout
-----------
::

    [rule_set]
    name = "my site"                 # required, shown with every verdict
    description = "..."              # optional
    version = "3"                    # optional, free text

    [[rule]]                         # a threshold rule; repeat as needed
    id = "biot-unstirred"            # unique, used in messages
    quantity = "biot_number"         # what is checked (see QUANTITIES)
    compare = ">"                    # <  <=  >  >=  ==  !=
    threshold = 0.1                  # "8 h", "10 K", "150 degC", 0.1, 3, true, "unstirred"
    verdict = "review"               # pass | review | fail, given when the test is true
    reason = "Biot number {value} is above {threshold} ..."
    source = "Incropera et al., ch. 5"   # required: a published criterion or "site choice"
    superseded_by = ["other-id"]     # optional: drop this finding when any of these fires
    note = "..."                     # optional, for people maintaining the file

    [rule.if_unknown]                # optional: data the rule needs is missing
    verdict = "review"
    reason = "{cause}: the lumped-model check cannot be applied."

    [rule.if_not_applicable]         # optional: the rule does not apply to the case
    verdict = "review"
    reason = "{cause}."

    [[matrix]]                       # two quantities combined, e.g. a risk matrix
    id = "runaway-risk"
    source = "..."
    reason = "... {row_value} ({row_class}) ... {column_value} ({column_class})"
    #   or a table with one text per verdict:  [matrix.reason] fail = "..." ...
    [matrix.rows]
    quantity = "tmr_at_mtsr"
    classes = [ { name = "high", below = "8 h" },
                { name = "medium", up_to = "24 h" },
                { name = "low" } ]   # ascending; the last class has no bound
    [matrix.columns]
    quantity = "adiabatic_temperature_rise"
    classes = [ ... ]
    [matrix.verdicts]                # one list per row class, in column order
    high = ["review", "fail", "fail"]
    ...

Thresholds
    Quantities with a unit need a unit in the threshold ("8 h", "30 min",
    "10 K", "150 degC").  A temperature *difference* must be written in K (or
    ``delta_degC``, ``delta_degF``, ``degR``); ``degC``/``degF`` are rejected there
    because they denote a temperature, not a difference.  A threshold may also be
    relative to another quantity of the same kind::

        threshold = { of = "response_time", times = 1.0, plus = "0 h" }

    meaning ``times * value_of(of) + plus``.  For an absolute temperature only
    ``plus`` (a difference) may be used, ``times`` must be 1.

Class bounds in a matrix
    ``below = X`` puts values ``< X`` in the class, ``up_to = X`` values ``<= X``.
    A value goes to the first class whose bound admits it; the last class takes
    the rest.

Reason texts
    ``{name}`` is replaced by a value formatted for the reader: times in h / min
    / s, temperatures in the case's display unit, temperature differences in K.
    Available everywhere: the name of any quantity.  In a rule: ``{value}`` (the
    checked value), ``{threshold}``, and the quantity's own extras (for instance
    ``{limit}`` and ``{limit_time}`` for ``smallest_margin``).  In ``if_unknown`` /
    ``if_not_applicable``: ``{cause}`` (why the value is missing).  In a matrix:
    ``{row_value}``, ``{row_class}``, ``{column_value}``, ``{column_class}``,
    ``{verdict}``.  Braces are used for placeholders only.

Missing data
    Every quantity is either a value, *unknown* (something the rule needs was not
    given or was not seen within the horizon: the check could not be made), or
    *not applicable* (nothing to check: e.g. no Arrhenius source, stirred
    contents for the Biot number).  A rule does not fire on missing data unless
    ``if_unknown`` / ``if_not_applicable`` says so.  Missing data is never hidden:
    a passing verdict lists the rules that did not apply or could not be applied.

Tiers
    ``superseded_by`` lets a milder rule stand back when a stricter one about the
    same thing fires (e.g. "ambient near the critical ambient" when "ambient at
    or above the critical ambient" fires), so the reader gets one reason, not two.
    It refers to what fired before any rule was dropped.

Verdict
    The worst verdict that fires wins (fail > review > pass).  When nothing gives
    review or fail the verdict is pass, with a reason naming the rules checked.
    The rule set's name and the sha256 of the rule file bytes go with every
    verdict.

Evaluation is plain float arithmetic: thresholds are converted to SI once, at
load; pint is used only while loading.
"""
from __future__ import annotations

import hashlib
import math
import operator
import re
import tomllib
import typing
from dataclasses import dataclass, field
import contextvars
import functools
from pathlib import Path
from typing import Any, Callable

from pydantic import BaseModel, ConfigDict, ValidationError

__all__ = [
    "VERDICTS",
    "QUANTITIES",
    "Quantity",
    "RuleSet",
    "RuleSetError",
    "Finding",
    "Verdict",
    "default_rule_set_path",
    "load_rule_set",
    "parse_rule_set",
    "evaluate",
    "apply_verdict",
    "describe_quantities",
]

VERDICTS = ("pass", "review", "fail")
_RANK = {"pass": 0, "review": 1, "fail": 2}

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

_COMPARISONS: dict[str, Callable[[Any, Any], bool]] = {
    "<": operator.lt,
    "<=": operator.le,
    ">": operator.gt,
    ">=": operator.ge,
    "==": operator.eq,
    "!=": operator.ne,
}


# --------------------------------------------------------------------------
# Errors
# --------------------------------------------------------------------------
class RuleSetError(Exception):
    """A rule file could not be read or is not valid.

    ``errors`` is a list of ``(field, message)`` pairs; ``path`` the file (or
    ``None``).
    """

    def __init__(self, errors: list[tuple[str, str]], path: str | None = None):
        self.errors = list(errors)
        self.path = path
        head = f"invalid rule set {path}" if path else "invalid rule set"
        lines = [f"{head}:"] + [f"  {f}: {m}" for f, m in self.errors]
        super().__init__("\n".join(lines))

    @property
    def problems(self) -> list[tuple[str, str]]:
        """Same as ``errors``."""
        return self.errors


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


# --------------------------------------------------------------------------
# Formatting for readers
# --------------------------------------------------------------------------
def _trim(x: float, digits: int) -> str:
    s = f"{x:.{digits}f}"
    if "." in s:
        s = s.rstrip("0").rstrip(".")
    return "0" if s in ("-0", "") else s


def _fmt_time(s: float, precise: bool = False) -> str:
    if math.isinf(s):
        return "unbounded" if s > 0 else "minus infinity"
    extra = 2 if precise else 0
    if round(abs(s), 1) >= 59.95 * 60.0:  # would show as 60 min: use hours
        h = s / 3600.0
        digits = 0 if abs(h) >= 100 else 1 if abs(h) >= 10 else 2
        return f"{_trim(h, digits + extra)} h"
    if round(abs(s), 1) >= 59.95:
        return f"{_trim(s / 60.0, 1 + extra)} min"
    return f"{_trim(s, 1 + extra)} s"


def _fmt_temperature(k: float, unit: str, digits: int = 1) -> str:
    if unit == "K":
        return f"{k:.{digits}f} K"
    if unit == "degF":
        return f"{k * 1.8 - 459.67:.{digits}f} °F"
    if unit == "degR":
        return f"{k * 1.8:.{digits}f} °R"
    return f"{k - 273.15:.{digits}f} °C"


def _fmt_delta(k: float, unit: str, digits: int = 1) -> str:
    if unit in ("degF", "degR"):
        return f"{k:.{digits}f} K ({k * 1.8:.{digits}f} °F)"
    return f"{k:.{digits}f} K"


def _fmt(dim: str, value: Any, unit: str, precise: bool = False) -> str:
    """Reader-facing text; ``precise`` adds digits (used when a value and its threshold
    would otherwise print the same)."""
    if dim == TIME:
        return _fmt_time(value, precise)
    if dim == TEMPERATURE:
        return _fmt_temperature(value, unit, 3 if precise else 1)
    if dim == DELTA_T:
        return _fmt_delta(value, unit, 3 if precise else 1)
    if dim == NUMBER:
        return f"{value:.6g}" if precise else f"{value:.3g}"
    if dim == COUNT:
        return str(int(value)) if float(value).is_integer() else f"{value:g}"
    if dim == FLAG:
        return "yes" if value else "no"
    return str(value)


_NOT_AVAILABLE = "not available"


# --------------------------------------------------------------------------
# Templates
# --------------------------------------------------------------------------
_PLACEHOLDER = re.compile(r"\{([A-Za-z_][A-Za-z0-9_]*)\}")


def _compile_template(text: str, allowed: set[str]) -> tuple[tuple, list[str]]:
    """Split a reason text into literal and placeholder parts; return (parts, problems)."""
    parts: list[Any] = []
    problems: list[str] = []
    pos = 0
    for m in _PLACEHOLDER.finditer(text):
        parts.append(text[pos:m.start()])
        name = m.group(1)
        if name not in allowed:
            problems.append(f"unknown placeholder {{{name}}}; available here: "
                            + ", ".join("{" + a + "}" for a in sorted(allowed)))
        parts.append((name,))
        pos = m.end()
    parts.append(text[pos:])
    literal = "".join(p for p in parts if isinstance(p, str))
    if "{" in literal or "}" in literal:
        problems.append("a brace that is not part of a placeholder; write placeholders as {name} "
                        "(letters, digits and _ only) and use braces for nothing else")
    return tuple(p for p in parts if p != ""), problems


# --------------------------------------------------------------------------
# Compiled rules
# --------------------------------------------------------------------------
@dataclass(frozen=True)
class Finding:
    """One rule that fired."""

    rule_id: str
    verdict: str
    reason: str
    source: str
    basis: str  # "threshold", "matrix", "unknown" or "not applicable"

    def to_dict(self) -> dict:
        return {"rule": self.rule_id, "verdict": self.verdict, "reason": self.reason,
                "source": self.source, "basis": self.basis}


@dataclass(frozen=True)
class _OnMissing:
    verdict: str
    template: tuple


class _KeyTrace(dict):
    """A result dict that records which top-level keys are read (``"*"``: all of them)."""

    def __init__(self, data: dict):
        super().__init__(data)
        self.seen: set = set()

    def get(self, key, default=None):
        self.seen.add(key)
        return dict.get(self, key, default)

    def __getitem__(self, key):
        self.seen.add(key)
        return dict.__getitem__(self, key)

    def __contains__(self, key):
        self.seen.add(key)
        return dict.__contains__(self, key)

    def _read_all(self):
        self.seen.add("*")

    def keys(self):
        self._read_all()
        return dict.keys(self)

    def items(self):
        self._read_all()
        return dict.items(self)

    def values(self):
        self._read_all()
        return dict.values(self)

    def copy(self):
        self._read_all()
        return dict(dict.items(self))

    def __iter__(self):
        self._read_all()
        return dict.__iter__(self)

    def __len__(self):
        self._read_all()
        return dict.__len__(self)

    def __eq__(self, other):
        self._read_all()
        return dict.__eq__(self, other)

    __hash__ = None


@dataclass
class KnownQuantities:
    """Quantity values shared by a family of results, and the rule outcomes that follow from them alone.

    ``values``: quantity name -> value (as a quantity's extractor returns it).  ``outcomes`` fills as
    :func:`evaluate` runs: (rule set, display unit) -> the outcome of each item that reads only known
    quantities.
    """

    values: dict
    outcomes: dict = field(default_factory=dict)

    def fixed_outcomes(self, rule_set: "RuleSet", ev: "_Eval") -> list:
        """Per item of ``rule_set``: its outcome when it reads only known quantities, else None."""
        key = (id(rule_set), ev.unit)
        out = self.outcomes.get(key)
        if out is None:
            out = self.outcomes[key] = [item.check(ev) if self._fixed(item, reads) else None
                                        for item, reads in zip(rule_set.items, rule_set.reads)]
        return out

    def _fixed(self, item, reads: frozenset) -> bool:
        """Whether an item's outcome follows from known quantities alone."""
        known = self.values
        if reads <= known.keys():
            return True
        # an item whose quantity is known to be missing gives its missing-data outcome, which reads
        # only that quantity and the placeholders of the missing-data text
        primary = (item.rows.quantity, item.columns.quantity) if isinstance(item, _Matrix) else (item.quantity,)
        if not all(q in known for q in primary):
            return False
        missing = [known[q] for q in primary if isinstance(known[q], _Missing)]
        if not missing:
            return False
        chosen = next((m for m in missing if m.kind == UNKNOWN), missing[0])
        spec = item.if_unknown if chosen.kind == UNKNOWN else item.if_not_applicable
        placeholders = {part[0] for part in (spec.template if spec is not None else ()) if not isinstance(part, str)}
        return all(q in known for q in placeholders if q in QUANTITIES)


def constant_quantities(template: dict, varying_keys) -> KnownQuantities:
    """The quantities shared by every result that equals ``template`` outside ``varying_keys``.

    A quantity is a pure function of the result; one that reads (on ``template``) no key of
    ``varying_keys`` follows the same path and gives the same value on every such result.  Pass the
    returned object to :func:`evaluate` as ``known`` for each of those results (a register's uniform
    row group, for instance): those quantities are not derived again, and a rule that reads only them
    is applied once per display unit.
    """
    varying = set(varying_keys)
    values = {}
    for name, quantity in QUANTITIES.items():
        traced = _KeyTrace(template)
        value = quantity.extract(traced)
        if "*" not in traced.seen and not (traced.seen & varying):
            values[name] = value
    return KnownQuantities(values)


def _item_reads(item) -> frozenset:
    """The quantities a rule item (threshold rule or matrix) reads, its texts' placeholders included."""
    names = set()
    templates = []
    if isinstance(item, _Matrix):
        names.update((item.rows.quantity, item.columns.quantity))
        templates.extend(item.templates.values())
    else:
        names.add(item.quantity)
        if item.rel_of is not None:
            names.add(item.rel_of)
        templates.append(item.template)
    templates.extend(m.template for m in (item.if_unknown, item.if_not_applicable) if m is not None)
    for template in templates:
        names.update(part[0] for part in template if not isinstance(part, str))
    return frozenset(n for n in names if n in QUANTITIES)


class _Eval:
    """Per-result cache of quantity values."""

    __slots__ = ("result", "cache", "unit")

    def __init__(self, result: dict, known: dict | None = None):
        self.result = result
        self.cache: dict[str, Any] = dict(known) if known else {}
        units = result.get("units")
        unit = units.get("temperature") if isinstance(units, dict) else None
        self.unit = unit if unit in ("K", "degC", "degF", "degR") else "degC"

    def get(self, name: str):
        try:
            return self.cache[name]
        except KeyError:
            out = QUANTITIES[name].extract(self.result)
            self.cache[name] = out
            return out

    def render(self, template: tuple, local: dict[str, str | Callable[[], str]]) -> str:
        out = []
        for part in template:
            if isinstance(part, str):
                out.append(part)
                continue
            name = part[0]
            if name in local:
                v = local[name]
                out.append(v() if callable(v) else v)
            else:
                got = self.get(name)
                out.append(_NOT_AVAILABLE if isinstance(got, _Missing)
                           else _fmt(QUANTITIES[name].dimension, got[0], self.unit))
        return "".join(out)


def _missing_finding(ev: _Eval, item, missing: _Missing) -> tuple[str, Finding | None]:
    spec = item.if_unknown if missing.kind == UNKNOWN else item.if_not_applicable
    status = "unknown" if missing.kind == UNKNOWN else "na"
    if spec is None:
        return status, None
    cause = missing.cause
    if spec.template and spec.template[0] == ("cause",):
        cause = cause[:1].upper() + cause[1:]  # the reason starts with it
    text = ev.render(spec.template, {"cause": cause})
    return status, Finding(item.id, spec.verdict, text, item.source, missing.kind)


@dataclass(frozen=True)
class _Rule:
    id: str
    quantity: str
    dim: str
    compare: str
    threshold: Any  # SI float, bool or str; None when relative
    rel_of: str | None
    rel_times: float
    rel_plus: float
    verdict: str
    template: tuple
    source: str
    if_unknown: _OnMissing | None
    if_not_applicable: _OnMissing | None
    superseded_by: tuple[str, ...] = ()

    def check(self, ev: _Eval):
        got = ev.get(self.quantity)
        if isinstance(got, _Missing):
            return (*_missing_finding(ev, self, got), got)
        value, ctx = got
        if self.rel_of is None:
            thr = self.threshold
        else:
            ref = ev.get(self.rel_of)
            if isinstance(ref, _Missing):
                return (*_missing_finding(ev, self, ref), ref)
            thr = self.rel_times * ref[0] + self.rel_plus
        if not _COMPARISONS[self.compare](value, thr):
            return "clear", None, None
        unit = ev.unit
        value_text = _fmt(self.dim, value, unit)
        thr_text = _fmt(self.dim, thr, unit)
        if value_text == thr_text and value != thr:
            value_text = _fmt(self.dim, value, unit, precise=True)
            thr_text = _fmt(self.dim, thr, unit, precise=True)
        local: dict[str, Any] = {"value": value_text, "threshold": thr_text}
        for name, dim in QUANTITIES[self.quantity].extras:
            if ctx and name in ctx:
                local[name] = _fmt(dim, ctx[name], unit)
            else:
                local[name] = _NOT_AVAILABLE
        text = ev.render(self.template, local)
        return "fired", Finding(self.id, self.verdict, text, self.source, "threshold"), None


@dataclass(frozen=True)
class _Axis:
    quantity: str
    dim: str
    names: tuple[str, ...]
    bounds: tuple[tuple[float, bool], ...]  # (bound, inclusive) for all but the last class

    def classify(self, value: float) -> int:
        for i, (b, inclusive) in enumerate(self.bounds):
            if value < b or (inclusive and value == b):
                return i
        return len(self.bounds)


@dataclass(frozen=True)
class _Matrix:
    id: str
    rows: _Axis
    columns: _Axis
    cells: tuple[tuple[str, ...], ...]
    templates: dict[str, tuple]  # verdict -> template
    source: str
    if_unknown: _OnMissing | None
    if_not_applicable: _OnMissing | None
    superseded_by: tuple[str, ...] = ()

    def check(self, ev: _Eval):
        rv = ev.get(self.rows.quantity)
        cv = ev.get(self.columns.quantity)
        missing = [m for m in (rv, cv) if isinstance(m, _Missing)]
        if missing:
            m = next((x for x in missing if x.kind == UNKNOWN), missing[0])
            return (*_missing_finding(ev, self, m), m)
        i = self.rows.classify(rv[0])
        j = self.columns.classify(cv[0])
        verdict = self.cells[i][j]
        unit = ev.unit
        local = {
            "row_value": _fmt(self.rows.dim, rv[0], unit),
            "row_class": self.rows.names[i],
            "column_value": _fmt(self.columns.dim, cv[0], unit),
            "column_class": self.columns.names[j],
            "verdict": verdict,
        }
        text = ev.render(self.templates[verdict], local)
        return "fired", Finding(self.id, verdict, text, self.source, "matrix"), None


# --------------------------------------------------------------------------
# Rule set, verdict
# --------------------------------------------------------------------------
@dataclass(frozen=True)
class RuleSet:
    """A validated rule set, thresholds already in SI."""

    name: str
    hash: str  # sha256 hex of the rule file bytes
    path: str | None
    description: str | None
    version: str | None
    items: tuple[Any, ...] = field(repr=False)

    @property
    def rule_ids(self) -> list[str]:
        return [x.id for x in self.items]

    @functools.cached_property
    def reads(self) -> tuple[frozenset, ...]:
        """The quantities each item reads, in item order."""
        return tuple(_item_reads(x) for x in self.items)


@dataclass
class Verdict:
    verdict: str
    reasons: list[str]
    fired: list[Finding]
    rule_set_name: str
    rule_set_hash: str
    not_applicable: list[str] = field(default_factory=list)  # rule ids
    not_applied: list[tuple[str, str]] = field(default_factory=list)  # (rule id, cause) for unknown data

    def to_dict(self) -> dict:
        return {
            "verdict": self.verdict,
            "reasons": list(self.reasons),
            "fired": [f.to_dict() for f in self.fired],
            "rule_set": {"name": self.rule_set_name, "hash": self.rule_set_hash},
            "not_applicable": list(self.not_applicable),
            "not_applied": [{"rule": r, "cause": c} for r, c in self.not_applied],
        }


def evaluate(rule_set: RuleSet, result: dict, known: KnownQuantities | None = None) -> Verdict:
    """Apply every rule of ``rule_set`` to one screening result.

    ``known``: quantities already established for this result (see :func:`constant_quantities`).
    """
    token = _MEMO.set({})
    try:
        return _evaluate(rule_set, result, known)
    finally:
        _MEMO.reset(token)


def _evaluate(rule_set: RuleSet, result: dict, known: KnownQuantities | None) -> Verdict:
    ev = _Eval(result, known.values if known is not None else None)
    fired: list[Finding] = []
    clear: list[str] = []
    not_applicable: list[str] = []
    not_applied: list[tuple[str, str]] = []
    superseded: list[tuple[Finding, tuple[str, ...]]] = []
    fixed = known.fixed_outcomes(rule_set, ev) if known is not None else [None] * len(rule_set.items)
    for item, outcome in zip(rule_set.items, fixed):
        status, finding, missing = outcome if outcome is not None else item.check(ev)
        if finding is not None:
            if item.superseded_by:
                superseded.append((finding, item.superseded_by))
            fired.append(finding)
        elif status == "clear":
            clear.append(item.id)
        elif status == "na":
            not_applicable.append(item.id)
        else:
            not_applied.append((item.id, missing.cause))
    if superseded:
        raw_ids = {f.rule_id for f in fired}
        dropped = {id(f) for f, by in superseded if raw_ids.intersection(by)}
        if dropped:
            clear.extend(f.rule_id for f in fired if id(f) in dropped)
            fired = [f for f in fired if id(f) not in dropped]
    fired.sort(key=lambda f: -_RANK[f.verdict])  # stable: file order within a verdict
    worst = fired[0].verdict if fired else "pass"
    reasons = [f.reason for f in fired]
    if worst == "pass":
        reasons.append(_pass_summary(rule_set, fired, clear, not_applicable, not_applied))
    return Verdict(worst, reasons, fired, rule_set.name, rule_set.hash, not_applicable, not_applied)


def _pass_summary(rule_set, fired, clear, not_applicable, not_applied) -> str:
    parts = [f"No rule of rule set '{rule_set.name}' gave a review or fail verdict."]
    checked = clear + [f.rule_id for f in fired]
    if checked:
        parts.append("Checked: " + ", ".join(checked) + ".")
    if not_applicable:
        parts.append("Not applicable to this case: " + ", ".join(not_applicable) + ".")
    if not_applied:
        parts.append("Not applied because data are missing: "
                     + "; ".join(f"{rid} ({cause})" for rid, cause in not_applied) + ".")
    parts.append("This means only that these screening criteria were not triggered by the stated "
                 "inputs; it does not show that the vessel is safe.")
    return " ".join(parts)


def apply_verdict(result: dict, verdict: Verdict) -> dict:
    """Write ``verdict``, ``reasons`` and ``rule_set`` into ``result`` (in place); return it."""
    result["verdict"] = verdict.verdict
    result["reasons"] = list(verdict.reasons)
    result["rule_set"] = {"name": verdict.rule_set_name, "hash": verdict.rule_set_hash}
    return result


# --------------------------------------------------------------------------
# Loading and validation
# --------------------------------------------------------------------------
class _Model(BaseModel):
    model_config = ConfigDict(extra="forbid", strict=True)


class _MissingModel(_Model):
    verdict: str
    reason: str


class _RuleModel(_Model):
    id: str
    quantity: str
    compare: str
    threshold: Any
    verdict: str
    reason: str
    source: str
    if_unknown: _MissingModel | None = None
    if_not_applicable: _MissingModel | None = None
    superseded_by: list[str] = []
    note: str | None = None


class _ClassModel(_Model):
    name: str
    below: Any = None
    up_to: Any = None


class _AxisModel(_Model):
    quantity: str
    classes: list[_ClassModel]


class _MatrixModel(_Model):
    id: str
    rows: _AxisModel
    columns: _AxisModel
    verdicts: dict[str, list[str]]
    reason: str | dict[str, str]
    source: str
    if_unknown: _MissingModel | None = None
    if_not_applicable: _MissingModel | None = None
    superseded_by: list[str] = []
    note: str | None = None


class _HeaderModel(_Model):
    name: str
    description: str | None = None
    version: str | None = None


_NUMBER_AND_UNIT = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*$")
_EXAMPLE = {TIME: "'8 h' or '30 min'", TEMPERATURE: "'150 degC' or '423.15 K'",
            DELTA_T: "'10 K'", NUMBER: "0.1", COUNT: "3", FLAG: "true", TEXT: "'unstirred'"}


def _parse_value(raw: Any, dim: str) -> Any:
    """Convert a threshold or bound to its SI value; raise ValueError with a reader-ready message."""
    if dim == FLAG:
        if not isinstance(raw, bool):
            raise ValueError(f"expected true or false, got {raw!r}")
        return raw
    if dim == TEXT:
        if not isinstance(raw, str):
            raise ValueError(f"expected a text in quotes, e.g. {_EXAMPLE[TEXT]}, got {raw!r}")
        return raw
    if isinstance(raw, bool):
        raise ValueError(f"expected a {dim}, e.g. {_EXAMPLE[dim]}, got {raw!r}")
    if dim in (NUMBER, COUNT):
        if isinstance(raw, (int, float)):
            value = float(raw)
        elif isinstance(raw, str):
            try:
                value = float(raw)
            except ValueError:
                raise ValueError(f"expected a plain number, e.g. {_EXAMPLE[dim]}, got {raw!r}") from None
        else:
            raise ValueError(f"expected a number, e.g. {_EXAMPLE[dim]}, got {raw!r}")
        if math.isnan(value):
            raise ValueError("expected a number, got NaN")
        if dim == COUNT and not value.is_integer():
            raise ValueError(f"expected a whole number, got {raw!r}")
        return value
    # quantities with a unit
    if isinstance(raw, (int, float)):
        raise ValueError(f"a {dim} needs a unit: write it as a text with its unit, e.g. {_EXAMPLE[dim]}, "
                         f"not the bare number {raw!r}")
    if not isinstance(raw, str):
        raise ValueError(f"expected a {dim} with a unit, e.g. {_EXAMPLE[dim]}, got {raw!r}")
    m = _NUMBER_AND_UNIT.match(raw)
    if not m:
        raise ValueError(f"could not read {raw!r}; expected a number followed by a unit, e.g. {_EXAMPLE[dim]}")
    number, unit = float(m.group(1)), m.group(2)
    if not unit:
        raise ValueError(f"{raw!r} has no unit; expected a {dim} such as {_EXAMPLE[dim]}")
    from .units import UnitError, unit_factor

    if dim == DELTA_T:
        if unit.strip() in ("degC", "°C", "C", "celsius", "degF", "°F", "F", "fahrenheit"):
            raise ValueError(f"{raw!r} is a temperature, not a temperature difference; write the difference "
                             f"in K (e.g. '10 K') or as delta_degC / delta_degF")
        dimension = "temperature_difference"
    else:
        dimension = "time" if dim == TIME else "temperature"
    try:
        scale, offset = unit_factor(unit, dimension)
    except UnitError as exc:
        raise ValueError(f"{raw!r}: {exc}; here e.g. {_EXAMPLE[dim]}") from None
    value = number * scale + offset
    if dim == TEMPERATURE and value < 0.0:
        raise ValueError(f"{raw!r} is below absolute zero")
    return value


def _item_label(kind: str, index: int, raw: Any) -> str:
    rid = raw.get("id") if isinstance(raw, dict) else None
    if isinstance(rid, str) and rid:
        return f'{kind} #{index + 1} (id "{rid}")'
    return f"{kind} #{index + 1}"


def _find_model(ann) -> type[BaseModel] | None:
    if isinstance(ann, type) and issubclass(ann, BaseModel):
        return ann
    for a in typing.get_args(ann):
        found = _find_model(a)
        if found is not None:
            return found
    return None


def _fields_at(model: type[BaseModel], loc: tuple) -> list[str]:
    m = model
    for part in loc:
        if isinstance(part, int):
            continue
        info = m.model_fields.get(part)
        nxt = _find_model(info.annotation) if info is not None else None
        if nxt is None:
            break
        m = nxt
    return list(m.model_fields)


def _loc_text(loc: tuple) -> str:
    out = ""
    for part in loc:
        if isinstance(part, int):
            out += f"[#{part + 1}]"
        else:
            out += ("." if out else "") + str(part)
    return out


_TYPE_WORDS = {
    "string_type": "a text in quotes",
    "list_type": "a list [ ... ]",
    "float_type": "a number",
    "int_type": "a whole number",
    "bool_type": "true or false",
    "dict_type": "a table",
    "model_type": "a table",
}
_BRANCH_WORDS = {"str": "a text in quotes", "dict[str,str]": "a table of texts keyed by verdict",
                 "float": "a number", "int": "a whole number", "bool": "true or false"}


def _pydantic_errors(label: str, model: type[BaseModel], exc: ValidationError) -> list[tuple[str, str]]:
    grouped: dict[tuple, list[str]] = {}
    out: list[tuple[str, str]] = []
    for err in exc.errors():
        loc, branches = [], []
        for part in err["loc"]:
            if isinstance(part, str) and (part in _BRANCH_WORDS or "[" in part or part.startswith("_")):
                branches.append(part)
            else:
                loc.append(part)
        loc = tuple(loc)
        where = f"{label}.{_loc_text(loc)}" if loc else label
        etype = err["type"]
        got = err.get("input")
        if branches and etype in _TYPE_WORDS:
            grouped.setdefault((where, repr(got)), []).append(_BRANCH_WORDS.get(branches[-1], "a table"))
            continue
        if etype == "missing":
            msg = "required field is missing"
        elif etype == "extra_forbidden":
            msg = f"unknown field; expected one of: {', '.join(_fields_at(model, loc[:-1]))}"
        elif etype in _TYPE_WORDS:
            msg = f"expected {_TYPE_WORDS[etype]}, got {got!r}"
        else:
            msg = err["msg"]
            if msg.startswith("Value error, "):
                msg = msg[len("Value error, "):]
            msg += f" (got {got!r})"
        out.append((where, msg))
    for (where, got), words in grouped.items():
        out.append((where, f"expected {' or '.join(dict.fromkeys(words))}, got {got}"))
    seen, unique = set(), []
    for pair in out:
        if pair not in seen:
            seen.add(pair)
            unique.append(pair)
    return unique


def _check_verdict(v: str, where: str, errors: list) -> None:
    if v not in VERDICTS:
        errors.append((where, f"unknown verdict {v!r}; expected one of: {', '.join(VERDICTS)}"))


def _check_quantity(name: str, where: str, errors: list) -> Quantity | None:
    q = QUANTITIES.get(name)
    if q is None:
        errors.append((where, f"unknown quantity {name!r}; expected one of: {', '.join(QUANTITIES)}"))
    return q


def _compile_missing(spec: _MissingModel | None, where: str, errors: list) -> _OnMissing | None:
    if spec is None:
        return None
    _check_verdict(spec.verdict, f"{where}.verdict", errors)
    allowed = set(QUANTITIES) | {"cause"}
    template, problems = _compile_template(spec.reason, allowed)
    errors.extend((f"{where}.reason", p) for p in problems)
    return _OnMissing(spec.verdict, template)


def _compile_rule(m: _RuleModel, label: str, errors: list) -> _Rule | None:
    n0 = len(errors)
    if not m.id.strip():
        errors.append((f"{label}.id", "the id is empty; give every rule a short unique id"))
    q = _check_quantity(m.quantity, f"{label}.quantity", errors)
    if m.compare not in _COMPARISONS:
        errors.append((f"{label}.compare", f"unknown comparison {m.compare!r}; expected one of: "
                                           f"{', '.join(_COMPARISONS)}"))
    _check_verdict(m.verdict, f"{label}.verdict", errors)
    if not m.source.strip():
        errors.append((f"{label}.source", "the source is empty; name the published criterion or write "
                                          "'site choice'"))
    if_unknown = _compile_missing(m.if_unknown, f"{label}.if_unknown", errors)
    if_na = _compile_missing(m.if_not_applicable, f"{label}.if_not_applicable", errors)
    threshold, rel_of, rel_times, rel_plus = None, None, 1.0, 0.0
    template = ()
    if q is not None:
        dim = q.dimension
        if m.compare in _COMPARISONS and dim in (FLAG, TEXT) and m.compare not in ("==", "!="):
            errors.append((f"{label}.compare", f"{m.quantity} is a {dim} value; only == and != can be used"))
        raw = m.threshold
        if isinstance(raw, dict):
            rel_of, rel_times, rel_plus = _compile_relative(raw, q, f"{label}.threshold", errors)
        else:
            try:
                threshold = _parse_value(raw, dim)
            except ValueError as exc:
                errors.append((f"{label}.threshold", f"{exc} ({m.quantity} is a {dim})"))
        allowed = set(QUANTITIES) | {"value", "threshold"} | {name for name, _ in q.extras}
        template, problems = _compile_template(m.reason, allowed)
        errors.extend((f"{label}.reason", p) for p in problems)
    if len(errors) > n0:
        return None
    return _Rule(m.id, m.quantity, q.dimension, m.compare, threshold, rel_of, rel_times, rel_plus,
                 m.verdict, template, m.source, if_unknown, if_na, tuple(m.superseded_by))


def _compile_relative(raw: dict, q: Quantity, where: str, errors: list):
    allowed = {"of", "times", "plus"}
    extra = set(raw) - allowed
    if extra:
        errors.append((where, f"unknown field(s) {', '.join(sorted(extra))} in a relative threshold; "
                              f"expected: of, times, plus"))
    if q.dimension not in _ORDERED:
        errors.append((where, f"{q.name} is a {q.dimension} value; a relative threshold needs a number, "
                              f"time or temperature"))
        return None, 1.0, 0.0
    of = raw.get("of")
    if not isinstance(of, str):
        errors.append((f"{where}.of", f"expected the name of a quantity, got {of!r}"))
        return None, 1.0, 0.0
    ref = QUANTITIES.get(of)
    if ref is None:
        errors.append((f"{where}.of", f"unknown quantity {of!r}; expected one of: {', '.join(QUANTITIES)}"))
        return None, 1.0, 0.0
    if ref.dimension != q.dimension:
        errors.append((f"{where}.of", f"{of} is a {ref.dimension} but {q.name} is a {q.dimension}; "
                                      f"they cannot be compared"))
    times = raw.get("times", 1.0)
    if isinstance(times, bool) or not isinstance(times, (int, float)) or math.isnan(times):
        errors.append((f"{where}.times", f"expected a number, got {times!r}"))
        times = 1.0
    if q.dimension == TEMPERATURE and times != 1.0:
        errors.append((f"{where}.times", "a temperature cannot be multiplied; use plus = '10 K' to offset it"))
    plus_raw = raw.get("plus")
    plus = 0.0
    if plus_raw is not None:
        plus_dim = DELTA_T if q.dimension == TEMPERATURE else q.dimension
        plus_dim = NUMBER if plus_dim == COUNT else plus_dim
        try:
            plus = _parse_value(plus_raw, plus_dim)
        except ValueError as exc:
            errors.append((f"{where}.plus", str(exc)))
    return of, float(times), plus


def _compile_axis(m: _AxisModel, where: str, errors: list) -> _Axis | None:
    n0 = len(errors)
    q = _check_quantity(m.quantity, f"{where}.quantity", errors)
    if q is not None and q.dimension not in _ORDERED:
        errors.append((f"{where}.quantity", f"{m.quantity} is a {q.dimension} value and cannot be sorted "
                                            f"into classes"))
        q = None
    if len(m.classes) < 2:
        errors.append((f"{where}.classes", "expected at least two classes"))
    names = [c.name for c in m.classes]
    dupes = sorted({n for n in names if names.count(n) > 1})
    if dupes:
        errors.append((f"{where}.classes", f"class names must be unique; repeated: {', '.join(dupes)}"))
    bounds: list[tuple[float, bool]] = []
    for i, c in enumerate(m.classes):
        cw = f"{where}.classes[#{i + 1}]"
        last = i == len(m.classes) - 1
        given = [k for k in ("below", "up_to") if getattr(c, k) is not None]
        if last:
            if given:
                errors.append((cw, "the last class takes every value above the others and has no bound; "
                                   f"remove {given[0]!r}"))
            continue
        if len(given) != 1:
            errors.append((cw, "give exactly one of below (value < bound) or up_to (value <= bound)"))
            continue
        if q is None:
            continue
        try:
            b = _parse_value(getattr(c, given[0]), q.dimension)
        except ValueError as exc:
            errors.append((f"{cw}.{given[0]}", f"{exc} ({m.quantity} is a {q.dimension})"))
            continue
        if bounds and b <= bounds[-1][0]:
            errors.append((f"{cw}.{given[0]}", "class bounds must increase from one class to the next"))
        bounds.append((b, given[0] == "up_to"))
    if len(errors) > n0 or q is None:
        return None
    return _Axis(m.quantity, q.dimension, tuple(names), tuple(bounds))


def _compile_matrix(m: _MatrixModel, label: str, errors: list) -> _Matrix | None:
    n0 = len(errors)
    if not m.id.strip():
        errors.append((f"{label}.id", "the id is empty; give every matrix a short unique id"))
    if not m.source.strip():
        errors.append((f"{label}.source", "the source is empty; name the published criterion or write "
                                          "'site choice'"))
    rows = _compile_axis(m.rows, f"{label}.rows", errors)
    cols = _compile_axis(m.columns, f"{label}.columns", errors)
    if_unknown = _compile_missing(m.if_unknown, f"{label}.if_unknown", errors)
    if_na = _compile_missing(m.if_not_applicable, f"{label}.if_not_applicable", errors)
    cells: list[tuple[str, ...]] = []
    used: set[str] = set()
    if rows is not None and cols is not None:
        for rname in rows.names:
            line = m.verdicts.get(rname)
            if line is None:
                errors.append((f"{label}.verdicts", f"no verdicts for row class {rname!r}; expected a line "
                                                    f"{rname} = [{len(cols.names)} verdicts, one per column "
                                                    f"class: {', '.join(cols.names)}]"))
                continue
            if len(line) != len(cols.names):
                errors.append((f"{label}.verdicts.{rname}", f"expected {len(cols.names)} verdicts (one per "
                                                            f"column class: {', '.join(cols.names)}), got "
                                                            f"{len(line)}"))
            for v in line:
                _check_verdict(v, f"{label}.verdicts.{rname}", errors)
            used.update(line)
            cells.append(tuple(line))
        for extra in sorted(set(m.verdicts) - set(rows.names)):
            errors.append((f"{label}.verdicts.{extra}", f"not a row class; row classes are: "
                                                        f"{', '.join(rows.names)}"))
    allowed = set(QUANTITIES) | {"row_value", "row_class", "column_value", "column_class", "verdict"}
    templates: dict[str, tuple] = {}
    if isinstance(m.reason, str):
        t, problems = _compile_template(m.reason, allowed)
        errors.extend((f"{label}.reason", p) for p in problems)
        templates = {v: t for v in VERDICTS}
    else:
        for key, text in m.reason.items():
            if key not in VERDICTS:
                errors.append((f"{label}.reason.{key}", f"unknown verdict {key!r}; expected one of: "
                                                        f"{', '.join(VERDICTS)}"))
                continue
            t, problems = _compile_template(text, allowed)
            errors.extend((f"{label}.reason.{key}", p) for p in problems)
            templates[key] = t
        for v in sorted(used & set(VERDICTS) - set(templates)):
            errors.append((f"{label}.reason", f"no reason text for verdict {v!r}, which the matrix uses"))
    if len(errors) > n0:
        return None
    return _Matrix(m.id, rows, cols, tuple(cells), templates, m.source, if_unknown, if_na,
                   tuple(m.superseded_by))


def parse_rule_set(data: bytes, path: str | None = None) -> RuleSet:
    """Validate rule-file bytes and compile them; raise :class:`RuleSetError`."""
    digest = hashlib.sha256(data).hexdigest()
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise RuleSetError([("(file)", f"not UTF-8 text ({exc})")], path) from None
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise RuleSetError([("(file)", f"TOML syntax error: {exc}")], path) from None

    errors: list[tuple[str, str]] = []
    for key in sorted(set(doc) - {"rule_set", "rule", "matrix"}):
        errors.append((key, "unknown top-level entry; expected [rule_set], [[rule]] and [[matrix]] tables"))

    header = None
    if "rule_set" not in doc:
        errors.append(("rule_set", "missing [rule_set] table with at least name = \"...\""))
    else:
        try:
            header = _HeaderModel.model_validate(doc["rule_set"])
            if not header.name.strip():
                errors.append(("rule_set.name", "the name is empty"))
        except ValidationError as exc:
            errors.extend(_pydantic_errors("rule_set", _HeaderModel, exc))

    items: list[Any] = []
    ids: dict[str, str] = {}
    for kind, model, compile_ in (("rule", _RuleModel, _compile_rule), ("matrix", _MatrixModel, _compile_matrix)):
        raw_list = doc.get(kind, [])
        if not isinstance(raw_list, list):
            errors.append((kind, f"expected [[{kind}]] tables (an array of tables), got a single "
                                 f"[{kind}] table or value"))
            continue
        for i, raw in enumerate(raw_list):
            label = _item_label(kind, i, raw)
            try:
                m = model.model_validate(raw)
            except ValidationError as exc:
                errors.extend(_pydantic_errors(label, model, exc))
                continue
            if m.id in ids:
                errors.append((f"{label}.id", f"id {m.id!r} is used twice (also by {ids[m.id]}); ids must be "
                                              f"unique"))
            else:
                ids[m.id] = label
            compiled = compile_(m, label, errors)
            if compiled is not None:
                items.append(compiled)
    raw_items = [(kind, i, raw) for kind in ("rule", "matrix")
                 if isinstance(doc.get(kind, []), list) for i, raw in enumerate(doc.get(kind, []))]
    all_ids = [raw.get("id") for _, _, raw in raw_items
               if isinstance(raw, dict) and isinstance(raw.get("id"), str)]
    for kind, i, raw in raw_items:
        refs = raw.get("superseded_by") if isinstance(raw, dict) else None
        if not isinstance(refs, list):
            continue
        label = _item_label(kind, i, raw)
        for ref in refs:
            if ref == raw.get("id"):
                errors.append((f"{label}.superseded_by", "a rule cannot be superseded by itself"))
            elif isinstance(ref, str) and ref not in all_ids:
                errors.append((f"{label}.superseded_by", f"no rule or matrix has the id {ref!r}; ids in "
                                                         f"this file: {', '.join(dict.fromkeys(all_ids))}"))
    if not errors and not items:
        errors.append(("(file)", "the rule set has no [[rule]] or [[matrix]] entries"))
    if errors:
        raise RuleSetError(errors, path)
    return RuleSet(header.name, digest, path, header.description, header.version, tuple(items))


def _default_candidates() -> tuple[Path, ...]:
    here = Path(__file__).resolve().parent
    return (here.parent / "rules" / "default.toml", here / "data" / "rules" / "default.toml")


def default_rule_set_path() -> Path:
    """The shipped default rule file (repository ``rules/`` first, then the package copy)."""
    candidates = _default_candidates()
    for c in candidates:
        if c.is_file():
            return c
    raise RuleSetError([("(file)", "the default rule set was not found; looked in "
                                   + " and ".join(str(c) for c in candidates))])


def load_rule_set(path: str | Path | None = None) -> RuleSet:
    """Read and validate a rule file; ``None`` loads the shipped default."""
    p = default_rule_set_path() if path is None else Path(path)
    try:
        data = p.read_bytes()
    except OSError as exc:
        raise RuleSetError([("(file)", f"cannot read the rule file: {exc.strerror or exc}")], str(p)) from None
    return parse_rule_set(data, str(p))
