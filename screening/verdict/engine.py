"""Apply a compiled rule set to a result: findings, the verdict and its reasons."""
from __future__ import annotations

import functools
import math
import operator
import re
from dataclasses import dataclass, field
from typing import Any, Callable

from screening.verdict.quantities import (
    _MEMO,
    COUNT,
    DELTA_T,
    FLAG,
    NUMBER,
    QUANTITIES,
    TEMPERATURE,
    TIME,
    UNKNOWN,
    _Missing,
)

_RANK = {"pass": 0, "review": 1, "fail": 2}

_COMPARISONS: dict[str, Callable[[Any, Any], bool]] = {
    "<": operator.lt,
    "<=": operator.le,
    ">": operator.gt,
    ">=": operator.ge,
    "==": operator.eq,
    "!=": operator.ne,
}


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
    if s != 0 and abs(s) < 1.0:  # under a second: as such, never "0 s"
        return f"{s:.{2 + extra}g} s"
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
    if math.isinf(k):  # a rise without bound (a reaction with no heat of reaction given)
        return "unbounded" if k > 0 else "minus infinity"
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
