"""Validate register rows fast and exactly.

Rows that share a structure (the same filled columns and the same non-quantity values
such as heat-source kinds) are validated in full once; for the other rows of the group
only the quantity cells are parsed and range-checked, with the same validator the schema
uses. A row whose cells fail that check is validated in full, so its errors are exactly
those a case file would get. Rows of simple groups update the representative's SI model
directly (the direct path).
"""
from __future__ import annotations

import math
from dataclasses import replace
from typing import Any

from screening.case.paths import apply_updates, model_slot
from screening.case.prepare import display_unit_from_texts
from screening.case.schema import (
    CaseError,
    CaseSpec,
    FieldProblem,
    Quantity,
    QuantityField,
    quantity_field,
    validate_case_data,
)
from screening.case.units import UnitError, unit_factor
from screening.core.model import ConstantSource, Limit
from screening.register.reading import CASE_FILE_COLUMN, Column
from screening.register.rows import (
    _NUMBER_ONLY,
    FREE_TEXT_FIELDS,
    QUANTITY_NAMES,
    RowContext,
    _cell_value,
    row_mapping,
)

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


def _fast_quantity(col: Column, marker: QuantityField):
    """A per-column parser: the header unit is looked up once, cells are plain numbers.

    Returns a function cell -> Quantity, raising ValueError exactly when the
    schema's validator would (the caller then validates the row in full).
    """
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
    (see :mod:`screening.register.columns`); it returns the members it leaves, and a taken row's entry is None.
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
                    if name == "accumulated_fraction" and not (0 < value.si <= 1):  # 0 % goes the full way
                        ok = False
                        break
                    if name == "initial_conversion" and not (0 <= value.si < 1):  # 100 % goes the full way
                        ok = False
                        break
                else:
                    value = cell
                    if name in ("id", "name") and not value.strip():
                        ok = False
                        break
                updates.append((col.path, value))
            if ok:
                spec = apply_updates(rep_spec, updates) if build_specs else None
            if not ok:
                data, problems = row_mapping(ctx, cells)
                out[i] = (*_full_validation(data, problems), data)
            else:
                out[i] = (spec, [], None, (rep_index, updates))
        _check_limit_names_unique(out, members)
    return out


def _derive_inputs(rep_inputs: list[dict], updates: list) -> list[dict]:
    """The inputs list of a row built from its representative's, with the row's own quantities."""
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
    slot = model_slot(spec, path, rep.source_positions)
    if slot is None:
        return None
    if (slot.kind == "T0" and rep.model.boiling is not None) or (slot.kind == "limit" and rep.recovery is not None):
        return None  # prepare_case warns (or refuses) by these values: the boiling point below the start, a
        #              recovery medium hotter than a limit
    field_name = _MODEL_FIELD_OF_SLOT.get(slot.kind)
    if field_name is not None:
        return lambda f, q: f.__setitem__(field_name, q.si)
    j = slot.index
    if slot.kind == "limit":
        def set_limit(f, q):
            f["limits"][j] = Limit(f["limits"][j].name, q.si)

        return set_limit
    if slot.kind == "const":
        return lambda f, q: f["constant_sources"].__setitem__(j, ConstantSource(q.si))
    if slot.kind in ("dpower", "dtau", "dhalf"):
        kind = slot.kind

        def set_decaying(f, q):
            old = f["decaying_sources"][j]
            if kind == "dpower":
                f["decaying_sources"][j] = replace(old, power=q.si)
            else:
                a = q.si if kind == "dtau" else q.si / math.log(2.0)
                f["decaying_sources"][j] = replace(old, time_constant=a)

        return set_decaying
    return None


#: ScreeningModel field of each single-number slot the direct path writes (screening.case.paths).
_MODEL_FIELD_OF_SLOT = {"mass": "contents_mass", "cp": "contents_specific_heat", "T0": "initial_temperature",
                        "Ta": "ambient_temperature", "ua": "ua", "H": "horizon"}


_UNIT_CACHE: dict = {}


def direct_prepared(rep, updates: list):
    """The PreparedCase of a row from its representative's, or None when a path is not direct."""
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
        unit = _UNIT_CACHE[texts] = display_unit_from_texts(["0 " + t for t in texts])
    out = replace(rep, model=model, spec=spec, inputs=inputs, warnings=list(rep.warnings),
                  display_temperature_unit=unit)
    for path, value in updates:
        if path == ("response_time",):
            out.response_time = value.si
    return out


def _is_absolute_temperature(field: str) -> bool:
    return field in ("contents.initial_temperature", "heat_loss.ambient_temperature") or \
        (field.startswith("limits.") and field.endswith(".temperature"))
