"""Screen a whole register of vessels: every row accounted for.

Pipeline: read the register, turn each row into a case mapping (base case,
optional per-row case file, then the row's cells), validate it with the same
schema as a case file, prepare the SI model, screen all closed-form rows at
once with the vectorised engine (rows with Arrhenius sources one by one),
apply the rule set, and write the output set atomically.

Validation is fast because rows that share a structure (the same filled
columns and the same non-quantity values such as heat-source kinds) are
validated in full once; for the other rows of the group only the quantity
cells are parsed and range-checked, with the same validator the schema uses.
A row whose cells fail that check is validated in full, so its errors are
exactly those a case file would get.
"""
from __future__ import annotations

import copy
import csv
import hashlib
import io
import json
import math
import os
import shutil
import tempfile
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from .case_schema import (CaseError, CaseSpec, FieldProblem, QuantityField, quantity_field,
                          validate_case_data)
from .register_reading import CASE_FILE_COLUMN, Column, Register, read_register

PARALLEL_THRESHOLD = 4000  # rows; below this a single process is faster than starting workers
FREE_TEXT_FIELDS = {"id", "title", "label", "name", "prepared_by", "prepared_for", "revision", "notes", "date"}
_NUMBER_ONLY = __import__("re").compile(r"^\s*[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?\s*$")


def _quantity_field_names() -> set[str]:
    """Field names that are quantities in every schema class that has them."""
    from pydantic import BaseModel

    from . import case_schema as cs

    q_names, other = set(), set()
    for obj in vars(cs).values():
        if isinstance(obj, type) and issubclass(obj, BaseModel) and obj is not BaseModel:
            for name, info in obj.model_fields.items():
                if any(isinstance(m, QuantityField) for m in info.metadata):
                    q_names.add(name)
                else:
                    other.add(name)
    return q_names - other


QUANTITY_NAMES = _quantity_field_names()


@dataclass
class RowOutcome:
    row: int
    id: str | None
    result: dict | None = None  # the register summary's row for this vessel (None: not screened)
    json: bytes | None = None  # the full result object, serialised
    problems: list[FieldProblem] = field(default_factory=list)


def dumps(obj) -> bytes:
    """JSON bytes; orjson when installed (several times faster for large registers)."""
    try:
        import orjson
    except ImportError:  # pragma: no cover
        return json.dumps(obj, ensure_ascii=False, allow_nan=False).encode("utf-8")
    return orjson.dumps(obj)


@dataclass
class BatchSummary:
    rows: int
    valid: int
    invalid: int
    verdict_counts: dict
    exit_code: int
    out_dir: str

    def as_dict(self) -> dict:
        return {"rows": self.rows, "valid": self.valid, "invalid": self.invalid,
                "verdict_counts": self.verdict_counts, "exit_code": self.exit_code, "out_dir": self.out_dir}


# ------------------------------------------------------------------ rows -> case mappings


def load_base(path: str | Path | None) -> dict:
    """The base case mapping (not validated on its own: rows complete it)."""
    if path is None:
        return {}
    from .case_files import kind_of, parse_text

    p = Path(path)
    try:
        raw = p.read_bytes()
    except OSError as exc:
        raise CaseError([FieldProblem("(base)", f"cannot read the base case {p}: {exc.strerror or exc}")]) from None
    data = parse_text(raw, kind_of(p))
    if data is None:
        return {}
    if not isinstance(data, dict):
        raise CaseError([FieldProblem("(base)", "the base case must be a mapping of fields")])
    return data


def _cell_value(col: Column, cell: str) -> str:
    if col.unit and _NUMBER_ONLY.match(cell):
        return f"{cell.strip()} {col.unit}"
    return cell


def set_path(data: dict, path: tuple, value: Any) -> str | None:
    """Set a dotted path in nested dicts/lists; returns an error message or None."""
    node: Any = data
    for i, part in enumerate(path):
        last = i == len(path) - 1
        where = ".".join(str(p) for p in path[: i + 1])
        if isinstance(part, int):
            if not isinstance(node, list):
                return f"'{where}' indexes a list, but {'.'.join(str(p) for p in path[:i]) or 'the case'} is not one"
            if part > len(node):
                return (f"list items must be numbered from 0 without gaps: {where} given, but "
                        f"{'.'.join(str(p) for p in path[:i])} has {len(node)} item(s) so far")
            if part == len(node):
                node.append(value if last else ([] if isinstance(path[i + 1], int) else {}))
                if last:
                    return None
            elif last:
                node[part] = value
                return None
            node = node[part]
        else:
            if not isinstance(node, dict):
                return f"'{where}' cannot be set: its parent is a single value, not a group of fields"
            if last:
                node[part] = value
                return None
            if part not in node or node[part] is None:
                node[part] = [] if isinstance(path[i + 1], int) else {}
            node = node[part]
    return None


def _row_sort_key(col: Column):
    # list items must be created in index order
    return tuple((0, p, "") if isinstance(p, int) else (1, 0, p) for p in col.path)


@dataclass
class RowContext:
    columns: list[Column]
    base: dict
    register_dir: str
    allow_case_file: bool
    case_file_cache: dict = field(default_factory=dict)


def row_mapping(ctx: RowContext, cells: list[str]) -> tuple[dict, list[FieldProblem]]:
    """Base + per-row case file + cells -> a case mapping, and problems found on the way."""
    problems: list[FieldProblem] = []
    data = copy.deepcopy(ctx.base)
    by_path = {c.path: c for c in ctx.columns}
    case_col = by_path.get((CASE_FILE_COLUMN,))
    if case_col is not None:
        cell = cells[case_col.index].strip() if case_col.index < len(cells) else ""
        if cell:
            if not ctx.allow_case_file:
                problems.append(FieldProblem(CASE_FILE_COLUMN, "register rows sent here cannot name case files"))
            else:
                loaded, err = _load_row_case_file(ctx, cell)
                if err:
                    problems.append(FieldProblem(CASE_FILE_COLUMN, err))
                else:
                    data = _merge(data, loaded)
    for col in sorted(ctx.columns, key=_row_sort_key):
        if col.path == (CASE_FILE_COLUMN,):
            continue
        cell = cells[col.index] if col.index < len(cells) else ""
        if cell == "":
            continue
        err = set_path(data, col.path, _cell_value(col, cell))
        if err:
            problems.append(FieldProblem(col.dotted, err))
    return data, problems


def _merge(base: dict, over: dict) -> dict:
    out = copy.deepcopy(base)
    for k, v in over.items():
        if isinstance(v, dict) and isinstance(out.get(k), dict):
            out[k] = _merge(out[k], v)
        else:
            out[k] = copy.deepcopy(v)
    return out


def _load_row_case_file(ctx: RowContext, name: str) -> tuple[dict | None, str | None]:
    if name in ctx.case_file_cache:
        return ctx.case_file_cache[name]
    from .case_files import kind_of, parse_text

    root = Path(ctx.register_dir).resolve()
    target = (root / name).resolve()
    out: tuple[dict | None, str | None]
    if not target.is_relative_to(root):
        out = (None, f"'{name}' is outside the register's folder; case files must sit in or below it")
    elif not target.is_file():
        out = (None, f"no case file '{name}' next to the register")
    else:
        try:
            data = parse_text(target.read_bytes(), kind_of(target))
            out = (data, None) if isinstance(data, dict) else (None, f"'{name}' is not a case mapping")
        except CaseError as exc:
            out = (None, f"'{name}': " + "; ".join(p.message for p in exc.problems))
    ctx.case_file_cache[name] = out
    return out


# ------------------------------------------------------------------ validation, fast and exact


def _column_role(col: Column) -> str:
    last = next((p for p in reversed(col.path) if isinstance(p, str)), "")
    if col.path == (CASE_FILE_COLUMN,):
        return "structure"
    if last in QUANTITY_NAMES:
        return "quantity"
    if last in FREE_TEXT_FIELDS or (col.path and col.path[0] == "meta"):
        return "text"
    return "structure"


def _signature(ctx: RowContext, roles: list[str], cells: list[str]):
    sig = []
    for col, role in zip(ctx.columns, roles):
        cell = cells[col.index] if col.index < len(cells) else ""
        if cell == "":
            continue
        sig.append((col.index, cell if role == "structure" else None))
    return tuple(sig)


def _apply_updates(obj, updates: list):
    """Copy a validated model tree with new values at several paths (one copy per touched node)."""
    groups: dict = {}
    for path, value in updates:
        groups.setdefault(path[0], []).append((path[1:], value))
    if isinstance(obj, list):
        items = list(obj)
        for idx, sub in groups.items():
            items[idx] = sub[0][1] if sub[0][0] == () else _apply_updates(items[idx], sub)
        return items
    changed = {name: (sub[0][1] if sub[0][0] == () else _apply_updates(getattr(obj, name), sub))
               for name, sub in groups.items()}
    return obj.model_copy(update=changed)


def _fast_quantity(col: Column, marker: QuantityField):
    """A per-column parser: the header unit is looked up once, cells are plain numbers.

    Returns a function cell -> Quantity, raising ValueError exactly when the
    schema's validator would (the caller then validates the row in full).
    """
    from .case_schema import Quantity
    from .units import UnitError, unit_factor

    validator = marker.validator()
    if not col.unit:
        return lambda cell: validator(cell)
    try:
        scale, offset = unit_factor(col.unit, marker.dimension)
    except UnitError:
        return lambda cell: validator(_cell_value(col, cell))
    check, dim, unit = marker.check, marker.dimension, col.unit

    def parse(cell: str):
        try:
            number = float(cell)
        except ValueError:
            return validator(_cell_value(col, cell))
        if not _NUMBER_ONLY.match(cell):  # inf, nan, '1_000' ...
            return validator(_cell_value(col, cell))
        si = number * scale + offset
        if not math.isfinite(si) or (check == "positive" and not si > 0) or (check == "nonnegative" and si < 0) \
                or (check == "absolute" and not si > 0):
            raise ValueError("out of range")
        return Quantity(si, f"{cell.strip()} {unit}", None, dim)

    return parse


def _owner_and_name(spec: CaseSpec, path: tuple):
    node: Any = spec
    for part in path[:-1]:
        node = node[part] if isinstance(part, int) else getattr(node, part, None)
        if node is None:
            return None, None
    return node, path[-1]


def _full_validation(data: dict, base_problems: list[FieldProblem]):
    if base_problems:
        # the mapping is incomplete where a cell could not be placed; still report schema problems
        try:
            validate_case_data(data)
            return None, base_problems
        except CaseError as exc:
            return None, base_problems + exc.problems
    try:
        return validate_case_data(data), []
    except CaseError as exc:
        return None, exc.problems


def validate_rows(ctx: RowContext, rows: list[list[str]], build_specs: bool = True, take_group=None) -> list:
    """Validate every row; returns (spec or None, problems, mapping[, (representative index, updates)]) per row.

    With ``build_specs=False`` a row validated through its representative gets spec None and the
    caller builds it (or not) from the representative and the updates.  ``take_group(rep_index,
    rep_spec, fast_cols, members)``, when given, may take rows of a group for screening of its own
    (see :mod:`screening.register_columns`); it returns the members it leaves, and a taken row's entry is None.
    """
    roles = [_column_role(c) for c in ctx.columns]
    groups: dict[tuple, list[int]] = {}
    for i, cells in enumerate(rows):
        groups.setdefault(_signature(ctx, roles, cells), []).append(i)
    out: list = [None] * len(rows)
    for members in groups.values():
        rep_spec = None
        tried = 0
        remaining = list(members)
        while remaining and rep_spec is None and tried < 3:
            i = remaining.pop(0)
            data, problems = row_mapping(ctx, rows[i])
            spec, problems = _full_validation(data, problems)
            out[i] = (spec, problems, data)
            tried += 1
            if spec is not None:
                rep_spec, rep_index = spec, i
        if rep_spec is None:
            for i in remaining:  # no clean representative: validate each row in full
                data, problems = row_mapping(ctx, rows[i])
                spec, problems = _full_validation(data, problems)
                out[i] = (spec, problems, data)
            continue
        fast_cols = []
        for col, role in zip(ctx.columns, roles):
            cell = rows[rep_index][col.index] if col.index < len(rows[rep_index]) else ""
            if cell == "" or role == "structure":
                continue
            owner, name = _owner_and_name(rep_spec, col.path)
            if owner is None:
                fast_cols = None
                break
            marker = quantity_field(owner, name) if role == "quantity" else None
            if role == "quantity" and marker is None:
                fast_cols = None
                break
            fast_cols.append((col, role, _fast_quantity(col, marker) if marker else None, name, marker))
        if take_group is not None and fast_cols is not None and remaining:
            remaining = take_group(rep_index, rep_spec, fast_cols, remaining)
        for i in remaining:
            cells = rows[i]
            if fast_cols is None:
                data, problems = row_mapping(ctx, cells)
                out[i] = (*_full_validation(data, problems), data)
                continue
            ok = True
            updates = []
            for col, role, parse, name, _marker in fast_cols:
                cell = cells[col.index]
                if role == "quantity":
                    try:
                        value = parse(cell)
                    except ValueError:
                        ok = False
                        break
                    if name == "accumulated_fraction" and not (0 < value.si <= 1):
                        ok = False
                        break
                else:
                    value = cell
                    if name in ("id", "name") and not value.strip():
                        ok = False
                        break
                updates.append((col.path, value))
            if ok:
                spec = _apply_updates(rep_spec, updates) if build_specs else None
            if not ok:
                data, problems = row_mapping(ctx, cells)
                out[i] = (*_full_validation(data, problems), data)
            else:
                out[i] = (spec, [], None, (rep_index, updates))
        _check_limit_names_unique(out, members)
    return out


def _derive_inputs(rep_inputs: list[dict], updates: list) -> list[dict]:
    """The inputs list of a row built from its representative's, with the row's own quantities."""
    from .case_schema import Quantity

    changed = {".".join(str(p) for p in path): q for path, q in updates if isinstance(q, Quantity)}
    out = []
    for item in rep_inputs:
        q = changed.get(item["field"])
        if q is None:
            out.append(item)
        else:
            out.append({"field": item["field"], "text": q.text, "value_si": q.si, "unit_si": q.si_unit,
                        "source": q.source})
    return out


def _check_limit_names_unique(out, members):
    for i in members:
        if out[i] is None:
            continue  # taken by a uniform group
        spec, problems, data = out[i][:3]
        if spec is None:
            continue  # rows built from a representative share its (checked) limit names
        names = [lim.name for lim in spec.limits]
        if len(set(names)) != len(names):
            dupes = sorted({n for n in names if names.count(n) > 1})
            out[i] = (None, [FieldProblem("(case)", f"limit names must differ: {', '.join(dupes)} given more than once")],
                      data)
            continue


# ------------------------------------------------------------------ screening


def _row_hash(work: "ChunkWork", cells: list[str]) -> str:
    """sha256 of what defines the row: the base case, the headers and the row's cells."""
    prefixes = work.__dict__.get("_hash_prefixes")
    if prefixes is None:
        prefixes = work.__dict__["_hash_prefixes"] = [(col.index, "\x1f" + col.header + "\x1e")
                                                      for col in work.columns]
    n = len(cells)
    text = work.base_digest + "".join(prefix + cells[index] for index, prefix in prefixes if index < n and cells[index])
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def vectorised_values(prepared_list: list) -> list:
    """ClosedFormValues for many closed-form cases at once (vectorised engine)."""
    from .screening_run import ClosedFormValues

    n = len(prepared_list)
    if n == 0:
        return []
    models = [p.model for p in prepared_list]
    k = max(len(m.decaying_sources) for m in models)
    n_lim = max(len(m.limits) for m in models) + 2  # + boiling point + alarm
    C = np.empty(n)
    G = np.empty(n)
    Q0 = np.empty(n)
    Q0_ad = np.empty(n)
    G_ad = np.empty(n)
    T0 = np.empty(n)
    H = np.empty(n)
    P = np.zeros((n, max(k, 1)))
    b = np.zeros((n, max(k, 1)))
    L = np.full((n, n_lim), np.nan)
    for i, (prep, m) in enumerate(zip(prepared_list, models)):
        C[i] = m.heat_capacity
        media_g = sum(h.ua for h in m.heating_media)
        media_q = sum(h.ua * h.medium_temperature for h in m.heating_media)
        p0 = sum(s.power for s in m.constant_sources) + sum(f.power for f in m.fire_sources)
        G[i] = m.ua + media_g
        G_ad[i] = media_g
        Q0[i] = m.ua * m.ambient_temperature + media_q + p0
        Q0_ad[i] = media_q + p0
        T0[i] = m.initial_temperature
        H[i] = m.horizon
        for j, s in enumerate(m.decaying_sources):
            P[i, j] = s.power
            b[i, j] = 1.0 / s.time_constant
        for j, lim in enumerate(m.limits):
            L[i, j] = lim.temperature
        if m.boiling is not None:
            L[i, n_lim - 2] = m.boiling.boiling_point
        if prep.detection_alarm is not None:
            L[i, n_lim - 1] = prep.detection_alarm
    ok, times, summary, ad_times = run_engine(C, G, Q0, G_ad, Q0_ad, T0, P, b, L, H, n_lim - 2)
    out = []
    t = times
    conv = lambda v: None if not np.isfinite(v) else float(v)  # noqa: E731
    for i, m in enumerate(models):
        if not ok[i]:
            out.append(None)  # outside the vectorised engine's range: the scalar engine takes it
            continue
        nl = len(m.limits)
        out.append(ClosedFormValues(
            limit_times=[conv(t[i, j]) for j in range(nl)],
            boil_time=conv(t[i, n_lim - 2]) if m.boiling is not None else None,
            alarm_time=conv(t[i, n_lim - 1]) if prepared_list[i].detection_alarm is not None else None,
            peak=(float(summary.peak_temperature[i]), float(summary.peak_time[i])),
            end_temperature=float(summary.end_temperature[i]),
            end_rate=float(summary.end_rate[i]),
            adiabatic_limit_times=[conv(ad_times[i, j]) for j in range(nl)],
        ))
    return out


def run_engine(C, G, Q0, G_ad, Q0_ad, T0, P, b, L, H, n_adiabatic: int):
    """The vectorised engine with heat loss and without (UA = 0), for the rows it accepts.

    Returns (accepted mask, crossing times (n, L), history summary, adiabatic crossing times of the first
    ``n_adiabatic`` limits); rows outside the engine's range (absurd but valid inputs) are left out and
    their entries are NaN: the caller runs them through the scalar engine.
    """
    from .vectorised_engine import HistorySummary, screen_register, within_engine_range

    ok = within_engine_range(C, G, Q0, T0, P, b, H) & within_engine_range(C, G_ad, Q0_ad, T0, P, b, H)
    if ok.all():
        main = screen_register(C, G, Q0, T0, P, b, L, H)
        ad_times = screen_register(C, G_ad, Q0_ad, T0, P, b, L[:, :n_adiabatic], H).times
        return ok, main.times, main.summary, ad_times
    n = len(C)
    times = np.full(L.shape, np.nan)
    ad_times = np.full((n, n_adiabatic), np.nan)
    summary = HistorySummary(np.full(P.shape, np.nan), *(np.full(n, np.nan) for _ in range(4)))
    if ok.any():
        sel = np.flatnonzero(ok)
        main = screen_register(C[sel], G[sel], Q0[sel], T0[sel], P[sel], b[sel], L[sel], H[sel])
        times[sel] = main.times
        for full, part in zip(summary, main.summary):
            full[sel] = part
        ad_times[sel] = screen_register(C[sel], G_ad[sel], Q0_ad[sel], T0[sel], P[sel], b[sel],
                                        L[sel, :n_adiabatic], H[sel]).times
    return ok, times, summary, ad_times


@dataclass
class ChunkWork:
    columns: list[Column]
    base: dict
    register_dir: str
    allow_case_file: bool
    rules_path: str | None
    rows: list[list[str]]
    row_numbers: list[int]
    id_column: int | None
    bad_columns: dict
    memos_dir: str | None
    templates_dir: str | None
    base_digest: str = ""
    part_stem: str | None = None  # this chunk writes <stem>.json (results.json items) and <stem>.csv (rows)


@dataclass
class ChunkResult:
    outcomes: list[RowOutcome]
    json_part: str | None = None
    csv_part: str | None = None
    limit_names: list[str] = field(default_factory=list)  # the results.csv limit columns of csv_part, in order


def screen_chunk(work: ChunkWork) -> ChunkResult:
    """Validate, screen and judge a block of rows (runs in a worker process)."""
    import gc

    enabled = gc.isenabled()
    gc.disable()  # many small objects live at once; the cyclic collector only slows this down
    try:
        return _screen_chunk(work)
    finally:
        if enabled:
            gc.enable()


def _structural_problems(work: ChunkWork, cells: list[str]) -> list[FieldProblem]:
    """Problems of a row that no schema sees: values under bad headers or under no header."""
    problems = []
    for index, header in work.bad_columns.items():
        if index < len(cells) and cells[index].strip():
            problems.append(FieldProblem(f"(column {index + 1})", f"a value under the header '{header}', "
                                         f"which is not a valid field path; the row is not screened"))
    width = work.__dict__.get("_width")
    if width is None:
        width = work.__dict__["_width"] = max([c.index for c in work.columns] + list(work.bad_columns) + [-1]) + 1
    if len(cells) > width and any(c.strip() for c in cells[width:]):
        problems.append(FieldProblem("(row)", "values in columns without a header; the row is not screened"))
    return problems


def _screen_chunk(work: ChunkWork) -> ChunkResult:
    from . import rules as rules_mod
    from .case_to_model import collect_inputs, prepare_case
    from .register_columns import VARYING_KEYS, plan_group, screen_group
    from .screening_run import public_result, screen_prepared

    ctx = RowContext(work.columns, work.base, work.register_dir, work.allow_case_file)
    rep_inputs: dict[int, list[dict]] = {}
    rep_prepared: dict[int, object] = {}
    rule_set = rules_mod.load_rule_set(work.rules_path)
    columnar: dict[int, tuple] = {}  # row index -> (result object, its group's known rule quantities)

    def prepared_rep(rep_index, rep_spec):
        if rep_index not in rep_prepared:
            try:
                rep_prepared[rep_index] = prepare_case(rep_spec)
            except CaseError:
                rep_prepared[rep_index] = None
        return rep_prepared[rep_index]

    def take_group(rep_index, rep_spec, fast_cols, members):
        if work.memos_dir is not None:
            return members  # memos need each row's history: the general path
        rep = prepared_rep(rep_index, rep_spec)
        plan = plan_group(rep, fast_cols) if rep is not None else None
        if plan is None:
            return members
        clean, others = [], []
        for i in members:
            (others if _structural_problems(work, work.rows[i]) else clean).append(i)

        def rep_result(values):
            return public_result(screen_prepared(rep, None, values=values, with_history=False))

        group = screen_group(rep, rep_index, work.rows, clean, plan, lambda cells: _row_hash(work, cells), rep_result)
        if group.results:
            known = rules_mod.constant_quantities(group.template, VARYING_KEYS)
            for i, result in group.results.items():
                columnar[i] = (result, known)
        return sorted(group.left + others)

    validated = validate_rows(ctx, work.rows, build_specs=False, take_group=take_group)
    outcomes: list[RowOutcome] = []
    screened: list[tuple[RowOutcome, dict]] = []  # rows with a result, and their result objects
    closed, closed_idx = [], []
    prepared_all: list = [None] * len(work.rows)
    for i, item in enumerate(validated):
        row_no = work.row_numbers[i]
        cells = work.rows[i]
        if item is None:  # screened with its uniform group
            outcomes.append(RowOutcome(row_no, columnar[i][0]["id"]))
            continue
        spec, problems, data = item[:3]
        hint = item[3] if len(item) > 3 else None
        direct = None
        if hint is not None:
            rep_index, updates = hint
            rep = prepared_rep(rep_index, validated[rep_index][0])
            if rep is not None:
                direct = direct_prepared(rep, updates)
            if direct is None:
                spec = _apply_updates(validated[rep_index][0], updates)
            else:
                spec = direct.spec
        rid = spec.id if spec is not None else _row_id(work, cells, data)
        outcome = RowOutcome(row_no, rid)
        outcome.problems = list(problems) + _structural_problems(work, cells)
        if direct is not None and not outcome.problems:
            prepared_all[i] = (direct, _row_hash(work, cells))
            if not direct.model.arrhenius_sources:
                closed.append(direct)
                closed_idx.append(i)
        elif spec is not None and not outcome.problems:
            try:
                inputs = None
                if hint is not None:
                    rep_index, updates = hint
                    if rep_index not in rep_inputs:
                        rep_inputs[rep_index] = collect_inputs(validated[rep_index][0])
                    inputs = _derive_inputs(rep_inputs[rep_index], updates)
                prep = prepare_case(spec, inputs=inputs)
                prepared_all[i] = (prep, _row_hash(work, cells))
                if not prep.model.arrhenius_sources:
                    closed.append(prep)
                    closed_idx.append(i)
            except CaseError as exc:
                outcome.problems.extend(exc.problems)
        outcomes.append(outcome)
    values = dict(zip(closed_idx, vectorised_values(closed)))
    for i, outcome in enumerate(outcomes):
        if i in columnar:
            result, known = columnar[i]
            prep = None
        elif prepared_all[i] is None or outcome.problems:
            continue
        else:
            prep, case_hash = prepared_all[i]
            known = None
            try:
                result = screen_prepared(prep, case_hash, values=values.get(i),
                                         with_history=work.memos_dir is not None)
            except Exception as exc:  # noqa: BLE001 - one bad row must not lose the others
                outcome.problems.append(FieldProblem("(row)", f"internal error while screening this row: "
                                                              f"{type(exc).__name__}: {exc}"))
                continue
        rules_mod.apply_verdict(result, rules_mod.evaluate(rule_set, result, known))
        result["register_row"] = outcome.row
        if work.memos_dir is not None:
            from .memo_writer import write_memo
            from .screening_run import memo_view

            write_memo(memo_view(result), Path(work.memos_dir) / f"{_safe_name(result['id'])}-row{outcome.row}.pdf",
                       templates_dir=work.templates_dir)
        public = public_result(result) if prep is not None else result
        try:
            outcome.json = dumps(public)
        except (TypeError, ValueError) as exc:
            outcome.problems.append(FieldProblem("(row)", f"internal error: result not serialisable: {exc}"))
            continue
        screened.append((outcome, public))
    return _chunk_outputs(work, outcomes, screened)


def _chunk_outputs(work: ChunkWork, outcomes: list[RowOutcome], screened: list) -> ChunkResult:
    """The chunk's summary rows, and its results.json items and results.csv rows written to part files
    (handing back files, not bytes, is cheaper than pickling them)."""
    from .memo_writer import summarise_register_results

    publics = [public for _, public in screened]
    for (outcome, _), row in zip(screened, summarise_register_results(publics, work.templates_dir)):
        outcome.result = row
    parts = [csv_parts(public) for public in publics]
    names = _limit_names(parts)
    out = ChunkResult(outcomes, limit_names=names)
    if work.part_stem is None:
        return out
    out.json_part, out.csv_part = work.part_stem + ".json", work.part_stem + ".csv"
    with open(out.json_part, "wb") as fh:
        fh.write(b",\n".join(o.json for o in outcomes if o.json is not None))
    for o in outcomes:
        o.json = None  # written
    with open(out.csv_part, "w", encoding="utf-8", newline="") as fh:
        fh.write(results_csv_from_parts(parts, names, header=False))
    return out


def _limit_names(parts: list) -> list[str]:
    """Limit names in order of first appearance."""
    names: dict[str, None] = {}
    for _, limits, _ in parts:
        for name in limits:
            names.setdefault(name)
    return list(names)


def _safe_name(text: str) -> str:
    keep = "".join(ch if ch.isalnum() or ch in "-_." else "_" for ch in str(text))
    return keep[:80] or "case"


def _row_id(work: ChunkWork, cells, data) -> str | None:
    if work.id_column is not None and work.id_column < len(cells) and cells[work.id_column]:
        return cells[work.id_column]
    if isinstance(data, dict) and data.get("id") is not None:
        return str(data["id"])
    if isinstance(work.base, dict) and work.base.get("id") is not None:
        return str(work.base["id"])
    return None


# ------------------------------------------------------------------ outputs


def _hours(v):
    return "" if v is None else f"{v / 3600:.6g}"


def _kelvin(v):
    return "" if v is None else f"{v:.6g}"


CSV_HEAD = ["id", "row", "verdict", "first_limit", "time_to_first_limit_h", "smallest_margin_h"]
CSV_TAIL = ["peak_temperature_K", "peak_time_h", "steady_temperature_K", "time_constant_h", "tmr_adiabatic_h",
            "critical_ambient_temperature_K", "ambient_temperature_K", "t_d24_K", "mtsr_K", "criticality_class",
            "probability_before_response", "p05_time_to_first_limit_h", "warnings", "reasons"]


def csv_parts(r: dict) -> tuple[list, dict, list]:
    """The formatted cells of one results.csv row: (leading cells, time per limit name, trailing cells)."""
    reached = [l for l in r["limits"] if l["time_s"] is not None]
    first = min(reached, key=lambda l: l["time_s"]) if reached else None
    margins = [l["margin_s"] for l in r["limits"] if l.get("margin_s") is not None]
    head = [r["id"], r.get("register_row", ""), r.get("verdict", ""), first["name"] if first else "",
            _hours(first["time_s"]) if first else "", _hours(min(margins)) if margins else ""]
    limits = {l["name"]: _hours(l["time_s"]) for l in r["limits"]}
    tail = [_kelvin(r.get("peak_temperature_K")), _hours(r.get("peak_time_s")), _kelvin(r.get("steady_temperature_K")),
            _hours(r.get("time_constant_s")), _hours(r.get("tmr_adiabatic_s")),
            _kelvin(r.get("critical_ambient_temperature_K")), _kelvin(r.get("ambient_temperature_K")),
            _kelvin(r.get("t_d24_K")), _kelvin(r.get("mtsr_K")), r.get("criticality_class") or "",
            *_uncertainty_columns(r.get("uncertainty")),
            len(r.get("warnings") or []), " | ".join(r.get("reasons") or [])]
    return head, limits, tail


def results_csv_header(limit_names: list[str]) -> list[str]:
    return CSV_HEAD + [f"time_to_limit_h: {n}" for n in limit_names] + CSV_TAIL


def results_csv_from_parts(parts: list, limit_names: list[str], header: bool = True) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    if header:
        w.writerow(results_csv_header(limit_names))
    # The last cell (the reasons) is long and mostly one of a few texts: it is quoted once per text,
    # by the same writer, and the rest of each row goes through the writer as usual.
    lines: list[str] = []
    rows = csv.writer(_Lines(lines), lineterminator="\n")
    single = csv.writer(_Lines(quoted := []), lineterminator="\n")
    escaped: dict[str, str] = {}
    for head, limits, tail in parts:
        rows.writerow(head + [limits.get(n, "") for n in limit_names] + tail[:-1])
        last = tail[-1]
        cell = escaped.get(last)
        if cell is None:
            single.writerow([last])
            cell = escaped[last] = quoted.pop()[:-1] if last != "" else ""  # a lone "" is written '""'
        lines[-1] = f"{lines[-1][:-1]},{cell}\n"
    buf.write("".join(lines))
    return buf.getvalue()


class _Lines:
    """A file-like sink that keeps each write (one CSV line) as a list item."""

    def __init__(self, lines: list):
        self.write = lines.append


def _uncertainty_columns(unc) -> list[str]:
    if not isinstance(unc, dict) or not unc.get("limits"):
        return ["", ""]
    probs = [l["probability_before_response"] for l in unc["limits"] if l.get("probability_before_response") is not None]
    first = next((l for l in unc["limits"] if l["name"] == unc.get("first_limit")), None)
    return [f"{max(probs):.6g}" if probs else "", _hours(first["p05_time_s"]) if first else ""]


def errors_csv(errors: list[dict]) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["row", "id", "field", "message"])
    for e in errors:
        w.writerow([e["row"], e["id"] or "", e["field"], e["message"]])
    return buf.getvalue()


def _append_file(dst, src_path: str) -> None:
    """Append a file's bytes to the open binary file ``dst`` (in the kernel where the OS can)."""
    dst.flush()
    with open(src_path, "rb") as src:
        size = os.fstat(src.fileno()).st_size
        copy_range = getattr(os, "copy_file_range", None)
        done = 0
        if copy_range is not None:
            try:
                while done < size:
                    step = copy_range(src.fileno(), dst.fileno(), size - done)
                    if step == 0:
                        break
                    done += step
            except OSError:
                pass  # not supported between these files: copy the rest below
        if done < size:
            src.seek(done)
            dst.seek(0, os.SEEK_END)
            shutil.copyfileobj(src, dst, 1 << 20)
    dst.seek(0, os.SEEK_END)


def _write_results_csv(path: Path, chunks: list[ChunkResult]) -> None:
    """results.csv from the chunks' row files: a column per limit name found in the whole register.

    When a chunk's limit columns are not the register's (names differ between rows), its rows are
    re-laid under the register's columns.
    """
    names: dict[str, None] = {}
    for chunk in chunks:
        for name in chunk.limit_names:
            names.setdefault(name)
    limit_names = list(names)

    def csv_text(rows) -> bytes:
        buf = io.StringIO()
        csv.writer(buf, lineterminator="\n").writerows(rows)
        return buf.getvalue().encode("utf-8")

    with open(path, "wb") as fh:
        fh.write(csv_text([results_csv_header(limit_names)]))
        for chunk in chunks:
            if chunk.csv_part is None:
                continue
            if chunk.limit_names == limit_names:
                _append_file(fh, chunk.csv_part)
                continue
            head, width = len(CSV_HEAD), len(chunk.limit_names)
            where = {name: head + j for j, name in enumerate(chunk.limit_names)}
            with open(chunk.csv_part, encoding="utf-8", newline="") as src:
                fh.write(csv_text(row[:head] + [row[where[nm]] if nm in where else "" for nm in limit_names]
                                  + row[head + width:] for row in csv.reader(src)))


def _swap_in(tmp: Path, out: Path) -> None:
    """Replace ``out`` by the finished folder ``tmp`` (old contents moved aside, then removed)."""
    old = None
    if out.exists():
        old = out.with_name(f".{out.name}.old-{os.getpid()}")
        if old.exists():
            shutil.rmtree(old)
        os.replace(out, old)
    os.replace(tmp, out)
    if old is not None:
        shutil.rmtree(old, ignore_errors=True)


def run_batch(register_path, out_dir, base_path=None, rules_path=None, memos=False, allow_case_file_column=True,
              progress=None, templates_dir=None, workers: int | None = None) -> dict:
    """Screen a register and write the output set; returns a summary dict.

    Raises RegisterError (the file cannot be read at all), CaseError (the base
    case cannot be read) or RuleSetError (bad rule file) before anything is written.
    """
    from . import rules as rules_mod

    rules_mod.load_rule_set(rules_path)  # fail early, before any work
    register = read_register(register_path)
    base = load_base(base_path)
    out = Path(out_dir)
    out.parent.mkdir(parents=True, exist_ok=True)
    tmp = Path(tempfile.mkdtemp(prefix=f".{out.name}.tmp-", dir=str(out.parent)))
    try:
        summary = _run_into(register, base, tmp, out, rules_path, memos, allow_case_file_column, progress,
                            templates_dir, workers)
        _swap_in(tmp, out)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    return summary.as_dict()


CHUNK_ROWS = 5000  # at most this many rows per chunk: smaller chunks keep a worker's data in cache


def _chunks(n: int, workers: int) -> list[tuple[int, int]]:
    if n == 0:
        return [(0, 0)]
    size = max(1, min(CHUNK_ROWS, math.ceil(n / max(1, workers * 4))))
    return [(a, min(n, a + size)) for a in range(0, n, size)]


def _run_into(register: Register, base: dict, tmp: Path, out: Path, rules_path, memos, allow_case_file, progress,
              templates_dir, workers) -> BatchSummary:
    import gc

    enabled = gc.isenabled()
    gc.disable()  # hundreds of thousands of small objects: the cyclic collector only costs time here
    try:
        return _run_into_body(register, base, tmp, out, rules_path, memos, allow_case_file, progress,
                              templates_dir, workers)
    finally:
        if enabled:
            gc.enable()


def _run_into_body(register: Register, base: dict, tmp: Path, out: Path, rules_path, memos, allow_case_file,
                   progress, templates_dir, workers) -> BatchSummary:
    id_col = next((c.index for c in register.columns if c.path == ("id",)), None)
    memos_dir = None
    if memos:
        memos_dir = tmp / "memos"
        memos_dir.mkdir()
    n = len(register.rows)
    if workers is None:
        heavy = (memos and n >= 8) or (isinstance(base.get("uncertainty"), dict) and n >= 20)
        workers = min(2, os.cpu_count() or 1) if (n >= PARALLEL_THRESHOLD or heavy) else 1
    spans = _chunks(n, workers)

    base_digest = hashlib.sha256(json.dumps(base, sort_keys=True, default=str).encode("utf-8")).hexdigest()

    parts_dir = tmp / ".parts"
    parts_dir.mkdir()

    def work(a, b):
        return ChunkWork(register.columns, base, str(register.path.parent), allow_case_file, rules_path,
                         register.rows[a:b], register.row_numbers[a:b], id_col, register.bad_columns,
                         str(memos_dir) if memos_dir else None, str(templates_dir) if templates_dir else None,
                         base_digest, str(parts_dir / f"part-{a:09d}"))

    outcomes: list[RowOutcome] = []
    chunks: list[ChunkResult] = []
    json_out = open(tmp / "results.json", "wb")
    json_out.write(b"[")

    def take(chunk: ChunkResult, done: int) -> None:
        """Collect a finished chunk, in order; its results.json items are appended at once."""
        outcomes.extend(chunk.outcomes)
        chunks.append(chunk)
        if chunk.json_part is not None and os.path.getsize(chunk.json_part):
            if json_out.tell() > 1:
                json_out.write(b",\n")
            _append_file(json_out, chunk.json_part)
        if progress:
            progress(done, n)

    try:
        if workers > 1 and len(spans) > 1:
            import multiprocessing

            if multiprocessing.current_process().daemon:
                workers = 1  # a daemonic worker (e.g. the service's) cannot start processes of its own
        if workers <= 1 or len(spans) == 1:
            for a, b in spans:
                take(screen_chunk(work(a, b)), b)
        else:
            with ProcessPoolExecutor(max_workers=workers) as pool:
                futures = [pool.submit(screen_chunk, work(a, b)) for a, b in spans]
                for (a, b), fut in zip(spans, futures):
                    take(fut.result(), b)
        json_out.write(b"]\n")
    finally:
        json_out.close()
    results = [o.result for o in outcomes if o.result is not None]
    errors = [{"row": 1, "id": None, "field": p.field, "message": p.message} for p in register.header_problems]
    errors += [{"row": o.row, "id": o.id, "field": p.field, "message": p.message}
               for o in outcomes for p in o.problems]
    _write_results_csv(tmp / "results.csv", chunks)
    shutil.rmtree(parts_dir, ignore_errors=True)
    (tmp / "errors.csv").write_text(errors_csv(errors), encoding="utf-8", newline="")
    from .memo_writer import write_register_summary

    write_register_summary(results, errors, tmp / "summary.pdf", templates_dir=templates_dir, summarised=True)
    counts = {"pass": 0, "review": 0, "fail": 0}
    for r in results:
        counts[r.get("verdict", "review")] = counts.get(r.get("verdict", "review"), 0) + 1
    invalid = sum(1 for o in outcomes if o.result is None)
    code = 2 if (invalid or register.header_problems) else (1 if counts["review"] or counts["fail"] else 0)
    return BatchSummary(rows=n, valid=len(results), invalid=invalid, verdict_counts=counts, exit_code=code,
                        out_dir=str(out))


# ------------------------------------------------------------------ direct path for simple registers
#
# Rows of a group whose representative has no vessel geometry, loses heat through a given UA and has
# no fire source only change SI numbers of the model; for the quantity paths below the model can be
# updated directly instead of building and preparing a new case.  Any other path takes the general route.


def _direct_updater(rep, path: tuple):
    """A function (fields dict, Quantity) -> None for one quantity path, or None if not direct."""
    spec = rep.spec
    if spec.vessel is not None or spec.heat_loss.ua is None or rep.model.fire_sources \
            or rep.uncertainty_plan is not None:
        return None
    if path == ("contents", "mass"):
        return lambda f, q: f.__setitem__("contents_mass", q.si)
    if path == ("contents", "specific_heat"):
        return lambda f, q: f.__setitem__("contents_specific_heat", q.si)
    if path == ("contents", "initial_temperature"):
        return lambda f, q: f.__setitem__("initial_temperature", q.si)
    if path == ("heat_loss", "ambient_temperature"):
        return lambda f, q: f.__setitem__("ambient_temperature", q.si)
    if path == ("heat_loss", "ua"):
        return lambda f, q: f.__setitem__("ua", q.si)
    if path == ("horizon",):
        return lambda f, q: f.__setitem__("horizon", q.si)
    from .model import ConstantSource, DecayingSource, Limit

    if len(path) == 3 and path[0] == "limits" and path[2] == "temperature":
        j = path[1]

        def set_limit(f, q):
            f["limits"][j] = Limit(f["limits"][j].name, q.si)

        return set_limit
    if len(path) == 3 and path[0] == "heat_sources":
        from .case_schema import ConstantSpec, DecayingSpec

        src = spec.heat_sources[path[1]]
        same_kind = [i for i, s in enumerate(spec.heat_sources) if type(s) is type(src)]
        j = same_kind.index(path[1])
        if isinstance(src, ConstantSpec) and path[2] == "power":
            return lambda f, q: f["constant_sources"].__setitem__(j, ConstantSource(q.si))
        if isinstance(src, DecayingSpec) and path[2] in ("power", "time_constant", "half_life"):
            name = path[2]

            def set_decaying(f, q):
                old = f["decaying_sources"][j]
                if name == "power":
                    f["decaying_sources"][j] = DecayingSource(q.si, old.time_constant)
                else:
                    a = q.si if name == "time_constant" else q.si / math.log(2.0)
                    f["decaying_sources"][j] = DecayingSource(old.power, a)

            return set_decaying
    return None


_UNIT_CACHE: dict = {}


def direct_prepared(rep, updates: list):
    """The PreparedCase of a row from its representative's, or None when a path is not direct."""
    from dataclasses import replace

    from .case_to_model import _display_unit_from_texts

    fields = None
    text_updates = {}
    for path, value in updates:
        if isinstance(value, str):  # free text: id, title, limit names ...
            text_updates[path] = value
            continue
        if path == ("response_time",):
            continue  # set on the prepared case below
        cache = rep.__dict__.setdefault("_direct_updaters", {})  # per representative, lives with it
        fn = cache.get(path, cache)
        if fn is cache:
            fn = cache[path] = _direct_updater(rep, path)
        if fn is None:
            return None
        if fields is None:
            m = rep.model
            fields = {"contents_mass": m.contents_mass, "contents_specific_heat": m.contents_specific_heat,
                      "initial_temperature": m.initial_temperature, "ambient_temperature": m.ambient_temperature,
                      "ua": m.ua, "horizon": m.horizon, "limits": list(m.limits),
                      "constant_sources": list(m.constant_sources), "decaying_sources": list(m.decaying_sources)}
        fn(fields, value)
    for path in text_updates:
        if path not in (("id",), ("title",)):
            return None
    spec = rep.spec
    if text_updates:
        spec = spec.model_copy(update={p[0]: v for p, v in text_updates.items()})
    if fields is None:
        model = rep.model
    else:
        fields["limits"] = tuple(fields["limits"])
        fields["constant_sources"] = tuple(fields["constant_sources"])
        fields["decaying_sources"] = tuple(fields["decaying_sources"])
        model = replace(rep.model, **fields)
    inputs = _derive_inputs(rep.inputs, updates)
    texts = tuple(i["text"].split(None, 1)[-1] for i in inputs
                  if i["unit_si"] == "K" and _is_absolute_temperature(i["field"]))
    unit = _UNIT_CACHE.get(texts)
    if unit is None:
        unit = _UNIT_CACHE[texts] = _display_unit_from_texts(["0 " + t for t in texts])
    out = replace(rep, model=model, spec=spec, inputs=inputs, warnings=list(rep.warnings),
                  display_temperature_unit=unit)
    for path, value in updates:
        if path == ("response_time",):
            out.response_time = value.si
    return out


def _is_absolute_temperature(field: str) -> bool:
    return field in ("contents.initial_temperature", "heat_loss.ambient_temperature") or \
        (field.startswith("limits.") and field.endswith(".temperature"))
