"""Reading a vessel register (CSV or Excel) into rows of case-file fields.

Columns are dotted paths into the case schema (``contents.mass``,
``heat_sources.1.time_constant``, ``limits.0.temperature``).  A unit is given in
the cell (``12 t``) or once in the header in brackets (``contents.mass [kg]``,
then bare numbers in that column).  A ``case_file`` column may name a case file
per row, resolved relative to the register's folder and never outside it.
"""
from __future__ import annotations

import csv
import io
import math
import re
import zipfile
from dataclasses import dataclass, field
from pathlib import Path

from screening.case.schema import FieldProblem
from screening.errors import InputError
from screening.register.outputs import without_people_prefix

CASE_FILE_COLUMN = "case_file"
MAX_ROWS = 1_000_000
MAX_XLSX_UNCOMPRESSED = 512 * 1024 * 1024  # bytes, guards against decompression bombs

_HEADER = re.compile(r"^\s*([A-Za-z_][A-Za-z0-9_\-]*(?:\.[A-Za-z0-9_\-]+)*)\s*(?:\[\s*([^\]]*?)\s*\])?\s*$")


class RegisterError(InputError):
    """The register as a whole cannot be read (not a row problem)."""

    def __init__(self, message: str):
        self.message = message
        super().__init__(message)


@dataclass(frozen=True)
class Column:
    index: int
    header: str
    path: tuple  # str and int parts
    unit: str | None

    @property
    def dotted(self) -> str:
        return ".".join(str(p) for p in self.path)


@dataclass
class Register:
    path: Path
    columns: list[Column]
    rows: list[list[str]]  # cell text, "" for empty
    row_numbers: list[int]  # spreadsheet row number (header = 1)
    header_problems: list[FieldProblem] = field(default_factory=list)  # bad headers, reported once as row 1
    bad_columns: dict = field(default_factory=dict)  # column index -> header text of a column that was not read
    cell_problems: dict = field(default_factory=dict)  # row number -> problems of cells that could not be read


def parse_header(text: str, index: int) -> tuple[Column | None, str | None]:
    """A header cell -> Column, or an error message."""
    raw = (text or "").strip()
    if not raw:
        return None, None
    m = _HEADER.match(raw)
    if not m:
        return None, (f"column {index + 1} header '{raw}' is not a dotted field path with an optional unit in "
                      f"brackets, such as 'contents.mass [kg]'")
    parts = []
    for p in m.group(1).split("."):
        parts.append(int(p) if p.isdigit() else p)
    if isinstance(parts[0], int):
        return None, f"column {index + 1} header '{raw}' must start with a field name"
    unit = m.group(2)
    if unit is not None and unit.strip() == "":
        unit = None
    return Column(index, raw, tuple(parts), unit), None


def _cell_text(value) -> str:
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if math.isfinite(value) and value.is_integer() and abs(value) < 1e15:
            return str(int(value))
        return repr(value)
    return str(value).strip()


def _read_csv(path: Path) -> list[list[str]]:
    raw = path.read_bytes()
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        text = raw.decode("latin-1")
    sample = text[:4096]
    try:
        dialect = csv.Sniffer().sniff(sample, delimiters=",;\t")
    except csv.Error:
        dialect = csv.excel
    if dialect.quotechar != '"':
        # spreadsheet programs quote with '"'; the sniffer takes apostrophes at the start of cells (as in ids
        # copied from heatscreen's own CSV files, '=A-1) for quotes
        dialect = type("RegisterDialect", (csv.excel,), {"delimiter": dialect.delimiter})
    reader = csv.reader(io.StringIO(text, newline=""), dialect)
    return [[c.strip() for c in row] for row in reader]


def _check_xlsx_size(path: Path) -> None:
    try:
        with zipfile.ZipFile(path) as z:
            total = sum(i.file_size for i in z.infolist())
    except zipfile.BadZipFile:
        raise RegisterError(f"{path.name} is not a valid .xlsx file") from None
    if total > MAX_XLSX_UNCOMPRESSED:
        raise RegisterError(f"{path.name} unpacks to {total} bytes, more than the limit of {MAX_XLSX_UNCOMPRESSED}")


def _read_xlsx(path: Path) -> tuple[list[list[str]], dict]:
    """The first worksheet's cells as text (a formula's value as the spreadsheet program stored it), and
    the cells whose value cannot be used: {(row, column), 1-based: (cell reference, what is wrong)}."""
    _check_xlsx_size(path)
    import openpyxl

    wb = openpyxl.load_workbook(path, read_only=True, data_only=True)
    try:
        ws = wb.worksheets[0]
        rows = []
        for i, row in enumerate(ws.iter_rows(values_only=True)):
            if i > MAX_ROWS + 1:
                raise RegisterError(f"{path.name} has more than {MAX_ROWS} rows")
            rows.append([_cell_text(v) for v in row])
        sheet_part = ws._worksheet_path  # the worksheet's part in the zip, as openpyxl found it
    finally:
        wb.close()
    return rows, _unusable_cells(path, sheet_part)


# a formula (<f>, also with a namespace prefix) or a cell holding a spreadsheet error (t="e"); plain
# substring searches, several times faster than one regular expression (a false hit costs a second parse)
_FORMULA_OR_ERROR = (b"<f>", b"<f ", b"<f/", b":f>", b":f ", b":f/", b't="e"', b"t='e'")
_SCAN_BLOCK = 1 << 22


def _may_hold_formulas(zf: zipfile.ZipFile, part: str) -> bool:
    """A quick scan of the worksheet's bytes: most registers hold no formula, and need no second parse."""
    tail = b""
    with zf.open(part) as fh:
        while True:
            block = fh.read(_SCAN_BLOCK)
            if not block:
                return False
            block = tail + block
            if any(needle in block for needle in _FORMULA_OR_ERROR):
                return True
            tail = block[-8:]


def _unusable_cells(path: Path, part: str) -> dict:
    """Formula cells without a stored value (a program that does not calculate wrote the workbook) and
    cells holding a spreadsheet error; openpyxl reads both as if they were plain (empty or text) cells."""
    from openpyxl.utils.cell import column_index_from_string, coordinate_from_string
    from openpyxl.xml.functions import iterparse

    found: dict = {}
    with zipfile.ZipFile(path) as zf:
        if not _may_hold_formulas(zf, part):
            return found
        with zf.open(part) as fh:
            row = col = 0
            for event, el in iterparse(fh, events=("start", "end")):
                tag = el.tag.rpartition("}")[2]
                if event == "start":
                    if tag == "row":
                        r = el.get("r")
                        row, col = (int(r) if r else row + 1), 0
                    continue
                if tag == "row":
                    el.clear()
                    continue
                if tag != "c":
                    continue
                ref = el.get("r")
                if ref:
                    letters, row = coordinate_from_string(ref)
                    col = column_index_from_string(letters)
                else:
                    col += 1
                kids = {k.tag.rpartition("}")[2]: k for k in el}
                value = kids.get("v")
                kind = el.get("t", "n")
                if "f" in kids and (value is None or (not value.text and kind != "str")):
                    formula = kids["f"].text
                    found[(row, col)] = (ref or f"row {row} column {col}",
                                         "formula" if not formula else f"formula (={_short(formula)})")
                elif kind == "e" and value is not None and value.text:
                    found[(row, col)] = (ref or f"row {row} column {col}", f"error {_short(value.text)}")
                el.clear()
    return found


def _short(text: str, n: int = 40) -> str:
    text = " ".join(text.split())
    return text if len(text) <= n else text[:n - 1] + "…"


def _cell_problem(field_name: str, ref: str, what: str, consequence: str = "The row is not screened") -> FieldProblem:
    if what.startswith("error "):
        message = f"cell {ref} holds the spreadsheet error {what[6:]}; correct it in the workbook. {consequence}"
    else:
        message = (f"cell {ref} holds a {what} but the workbook stores no value for it (it was saved by a program "
                   f"that does not calculate formulas). Open the workbook in a spreadsheet program and save it, or "
                   f"paste the values in place of the formulas. {consequence}")
    return FieldProblem(field_name, message)


def read_register(path: str | Path) -> Register:
    """Read a CSV or .xlsx register; raise RegisterError if the file cannot be read at all."""
    p = Path(path)
    if not p.is_file():
        raise RegisterError(f"no such register file: {p}")
    suffix = p.suffix.lower()
    unusable: dict = {}
    if suffix in (".xlsx", ".xlsm"):
        table, unusable = _read_xlsx(p)
    elif suffix in (".csv", ".txt", ".tsv"):
        table = _read_csv(p)
    else:
        raise RegisterError(f"{p.name}: a register must be a .csv or .xlsx file")
    if not table or not (any(c for c in table[0]) or any(r == 1 for r, _ in unusable)):
        raise RegisterError(f"{p.name} has no header row")
    if len(table) - 1 > MAX_ROWS:
        raise RegisterError(f"{p.name} has more than {MAX_ROWS} rows")
    header = table[0]
    columns, problems = [], []
    bad_columns: dict[int, str] = {}
    seen = {}
    for i, h in enumerate(header):
        if (1, i + 1) in unusable:
            ref, what = unusable[(1, i + 1)]
            problems.append(_cell_problem(f"(column {i + 1})", ref, what, "The column is not read"))
            bad_columns[i] = h or ref
            continue
        col, err = parse_header(h, i)
        if err:
            problems.append(FieldProblem(f"(column {i + 1})", err))
            bad_columns[i] = h
        elif col is not None:
            if col.path in seen:
                problems.append(FieldProblem(col.dotted, f"column {i + 1} repeats the field of column {seen[col.path] + 1}"))
                bad_columns[i] = h
                continue
            seen[col.path] = i
            columns.append(col)
    rows, numbers = [], []
    width = len(header)
    cell_problems = _row_cell_problems(unusable, columns, bad_columns)
    for n, row in enumerate(table[1:], start=2):
        if not any(c.strip() for c in row) and n not in cell_problems:
            continue  # blank line
        cells = row + [""] * (width - len(row)) if len(row) < width else row
        rows.append(cells)
        numbers.append(n)
    id_index = next((c.index for c in columns if c.path == ("id",)), None)
    if id_index is not None:  # ids as written, without the apostrophe heatscreen's own CSV files put before some
        for cells in rows:
            if cells[id_index][:1] == "'":
                cells[id_index] = without_people_prefix(cells[id_index])
    return Register(p, columns, rows, numbers, problems, bad_columns, cell_problems)


def _row_cell_problems(unusable: dict, columns: list[Column], bad_columns: dict) -> dict:
    """Spreadsheet row number -> problems of its cells that could not be read (formulas without values)."""
    by_index = {c.index: c.dotted for c in columns}
    out: dict[int, list[FieldProblem]] = {}
    for (row, col), (ref, what) in sorted(unusable.items()):
        if row == 1:
            continue  # the header: reported with the columns
        name = by_index.get(col - 1, f"(column {col})")
        out.setdefault(row, []).append(_cell_problem(name, ref, what))
    return out
