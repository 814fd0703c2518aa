"""Site rule sets as data: the rule-file format, its parsing and loading.

The quantities a rule can name are in :mod:`screening.verdict.quantities`; applying a compiled
rule set to a result is :mod:`screening.verdict.engine`.

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
    quantity = "probability_tmr"     # TMRad at MTSR (cooling failure) or at the storage temperature
    classes = [ { name = "high", below = "8 h" },
                { name = "medium", up_to = "24 h" },
                { name = "low" } ]   # ascending; the last class has no bound
    [matrix.columns]
    quantity = "severity_rise"       # the decomposition's adiabatic temperature rise
    classes = [ ... ]
    [matrix.verdicts]                # one list per row class, in column order
    high = ["review", "fail", "fail"]
    ...

Thresholds
    Quantities with a unit need a unit in the threshold ("8 h", "30 min",
    "10 K", "150 degC").  A temperature *difference* must be written in K (or
    ``delta_degC``, ``delta_degF``, ``degR``); ``degC``/``degF`` (in any spelling,
    and ``degRe``) are rejected there because they denote a temperature, not a
    difference.  Either takes exactly one temperature unit, as a case file does.  A threshold may also be
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
    contents for the Biot number, a quantity of another scenario such as the
    MTSR or the criticality class in a storage case).  A rule does not fire on missing data unless
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
import re
import tomllib
import typing
from pathlib import Path
from typing import Any

from pydantic import BaseModel, ConfigDict, ValidationError

from screening.case.units import UnitError, non_finite, not_finite_message, temperature_scale, unit_factor
from screening.errors import EnvironmentProblem, InputError
from screening.fileio import read_limited
from screening.resources import rule_set_candidates
from screening.verdict.engine import (
    _COMPARISONS,
    RuleSet,
    _Axis,
    _compile_template,
    _Matrix,
    _OnMissing,
    _Rule,
    apply_verdict,
    evaluate,
)
from screening.verdict.quantities import (
    _ORDERED,
    COUNT,
    DELTA_T,
    FLAG,
    NUMBER,
    QUANTITIES,
    TEMPERATURE,
    TEXT,
    TIME,
    VERDICTS,
    Quantity,
)


# --------------------------------------------------------------------------
# Errors
# --------------------------------------------------------------------------
class RuleSetError(InputError):
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
    if non_finite(raw):  # inf, -inf, nan in any spelling, with or without a unit
        raise ValueError(not_finite_message(raw, f"a {dim} such as {_EXAMPLE[dim]}"))
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
        if not math.isfinite(value):  # a text that float() reads as infinite, e.g. '1_0e400'
            raise ValueError(not_finite_message(raw, f"a {dim} such as {_EXAMPLE[dim]}"))
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

    if dim == DELTA_T:
        if temperature_scale(unit) in ("degC", "degF", "degRe"):
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
    if not math.isfinite(value):
        raise ValueError(not_finite_message(raw, f"a {dim} such as {_EXAMPLE[dim]}"))
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
    if non_finite(times):
        errors.append((f"{where}.times", not_finite_message(times, "a number such as 1.0")))
        times = 1.0
    elif isinstance(times, bool) or not isinstance(times, (int, float)):
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
    except ValueError as exc:  # e.g. an integer of more digits than Python converts
        reason = str(exc).split("; use ")[0]  # not Python's advice on its own limits
        raise RuleSetError([("(file)", f"TOML value not readable: {reason}; a finite number is expected")],
                           path) from None

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
    return rule_set_candidates("default.toml")


def default_rule_set_path() -> Path:
    """The shipped default rule file (repository ``rules/`` first, then the package copy)."""
    candidates = _default_candidates()
    for c in candidates:
        if c.is_file():
            return c
    raise RuleSetError([("(file)", "the default rule set was not found; looked in "
                                   + " and ".join(str(c) for c in candidates))])


MAX_RULE_FILE_BYTES = 2_000_000


def load_rule_set(path: str | Path | None = None) -> RuleSet:
    """Read and validate a rule file; ``None`` loads the shipped default."""
    p = default_rule_set_path() if path is None else Path(path)
    try:
        data = read_limited(p, MAX_RULE_FILE_BYTES)
    except EnvironmentProblem as exc:
        raise RuleSetError([("(file)", f"the rule file: {exc}")], str(p)) from None
    return parse_rule_set(data, str(p))


def apply_rules(result: dict, rules_path: str | None) -> None:
    """Evaluate the rule set at ``rules_path`` (default: the shipped one) and write its verdict into ``result``."""
    rule_set = load_rule_set(rules_path)
    apply_verdict(result, evaluate(rule_set, result))
