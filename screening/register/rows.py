"""Register rows to case mappings: base case, optional per-row case file, then the row's cells."""
from __future__ import annotations

import copy
from dataclasses import dataclass, field
from pathlib import Path

from screening.case import schema as cs
from screening.case.files import MAX_CASE_BYTES, kind_of, parse_text
from screening.case.paths import set_path
from screening.case.schema import CaseError, FieldProblem, QuantityField
from screening.errors import EnvironmentProblem
from screening.fileio import os_problem, read_limited, short_path
from screening.register.reading import CASE_FILE_COLUMN, Column

FREE_TEXT_FIELDS = {"id", "title", "label", "name", "prepared_by", "prepared_for", "revision", "notes", "date"}
_NUMBER_ONLY = __import__("re").compile(r"^\s*[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?\s*$")


def _quantity_field_names() -> set[str]:
    """Field names that are quantities in every schema class that has them."""
    from pydantic import BaseModel

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


# ------------------------------------------------------------------ rows -> case mappings


def load_base(path: str | Path | None) -> dict:
    """The base case mapping (not validated on its own: rows complete it)."""
    if path is None:
        return {}

    p = Path(path)
    try:
        raw = read_limited(p, MAX_CASE_BYTES)
    except EnvironmentProblem as exc:
        raise CaseError([FieldProblem("(base)", f"the base case: {exc}")]) from None
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

    shown = short_path(name)
    out: tuple[dict | None, str | None]
    try:
        root = Path(ctx.register_dir).resolve()
        target = (root / name).resolve()
        inside = target.is_relative_to(root)
        if inside:
            raw = read_limited(target, MAX_CASE_BYTES, regular_only=True)
    except EnvironmentProblem as exc:
        out = (None, f"no case file '{shown}' next to the register" if exc.reason == "no such file"
               else f"case file '{shown}' cannot be used: {exc.reason}")
    except (OSError, RuntimeError, ValueError) as exc:  # resolving: a symlink loop, a name too long, a NUL
        out = (None, f"case file '{shown}' cannot be read: {os_problem(exc)}")
    else:
        if not inside:
            out = (None, f"'{shown}' is outside the register's folder; case files must sit in or below it")
        else:
            try:
                data = parse_text(raw, kind_of(target))
                out = (data, None) if isinstance(data, dict) else (None, f"'{shown}' is not a case mapping")
            except CaseError as exc:
                out = (None, f"'{shown}': " + "; ".join(p.message for p in exc.problems))
    ctx.case_file_cache[name] = out
    return out
