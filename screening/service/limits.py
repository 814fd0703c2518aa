"""Limits that byte counts miss: spreadsheet decompression and register row counts.

A 10 MB .xlsx can hold gigabytes of XML.  Its zip central directory states the
uncompressed size of every member, and Python's zip reader never returns more
than that stated size, so checking the directory before opening the workbook
bounds the work.  Row counts are checked before the register is screened.
"""
from __future__ import annotations

import io
import zipfile
from dataclasses import dataclass

BIG_MEMBER = 1_000_000


@dataclass(frozen=True)
class RegisterLimits:
    max_rows: int
    max_uncompressed: int
    max_members: int
    max_ratio: int


class LimitExceeded(Exception):
    """An input is over a limit; ``problems`` lists (field, message) pairs."""

    def __init__(self, problems: list[tuple[str, str]], status: int = 413):
        super().__init__("; ".join(f"{f}: {m}" for f, m in problems))
        self.problems = problems
        self.status = status


def register_format(data: bytes, filename: str | None) -> str:
    """'xlsx' or 'csv', from the file's first bytes (the client's file name is only a hint)."""
    if data[:4] == b"PK\x03\x04":
        return "xlsx"
    name = (filename or "").lower()
    if name.endswith((".xlsx", ".xlsm")):
        raise LimitExceeded([("register", "the file is named like a spreadsheet but is not an .xlsx (zip) file")],
                            status=422)
    return "csv"


def check_xlsx(data: bytes, limits: RegisterLimits, field: str = "register") -> None:
    """Refuse a workbook whose zip members would decompress beyond the limits."""
    try:
        zf = zipfile.ZipFile(io.BytesIO(data))
    except (zipfile.BadZipFile, ValueError, OSError) as exc:
        raise LimitExceeded([(field, f"not a readable .xlsx file ({exc})")], status=422) from None
    with zf:
        infos = zf.infolist()
        if len(infos) > limits.max_members:
            raise LimitExceeded([(field, f"the workbook has {len(infos)} parts; at most {limits.max_members} "
                                         f"are accepted")])
        total = 0
        for info in infos:
            if info.file_size < 0 or info.compress_size < 0:  # pragma: no cover - zipfile rejects these
                raise LimitExceeded([(field, "the workbook's zip directory is damaged")], status=422)
            total += info.file_size
            if info.file_size > BIG_MEMBER and info.file_size > limits.max_ratio * max(info.compress_size, 1):
                raise LimitExceeded([(field, f"the workbook part {info.filename!r} expands {info.file_size} bytes "
                                             f"from {info.compress_size}: more than {limits.max_ratio} times, "
                                             f"refused as a decompression bomb")])
        if total > limits.max_uncompressed:
            raise LimitExceeded([(field, f"the workbook expands to {total} bytes; at most "
                                         f"{limits.max_uncompressed} are accepted")])
        if "[Content_Types].xml" not in zf.namelist():
            raise LimitExceeded([(field, "not an .xlsx workbook (no [Content_Types].xml)")], status=422)
        from screening.register.reading import doctype_message, part_declaring_doctype

        try:
            part = part_declaring_doctype(zf)
        except (zipfile.BadZipFile, EOFError, NotImplementedError, ValueError, OSError) as exc:
            raise LimitExceeded([(field, f"not a readable .xlsx file ({exc})")], status=422) from None
        if part is not None:
            raise LimitExceeded([(field, doctype_message(part))], status=422)


def csv_line_count(data: bytes) -> int:
    """Lines in a CSV file: an upper bound on its rows (a quoted field may span lines)."""
    n = data.count(b"\n")
    if data and not data.endswith(b"\n"):
        n += 1
    return n


def check_csv_rows(data: bytes, limits: RegisterLimits, field: str = "register") -> None:
    lines = csv_line_count(data)
    if lines - 1 > limits.max_rows:  # one header line
        raise LimitExceeded([(field, f"the register has {lines - 1} lines after the header; at most "
                                     f"{limits.max_rows} rows are accepted")])


def check_xlsx_rows(path, limits: RegisterLimits, field: str = "register") -> None:
    """Count worksheet rows (read-only, streaming) and refuse more than the limit. Runs in a worker."""
    import openpyxl

    try:
        wb = openpyxl.load_workbook(path, read_only=True, data_only=True)
    except Exception as exc:  # noqa: BLE001 - whatever a malformed workbook makes the XML or zip reader raise
        raise LimitExceeded([(field, f"the workbook cannot be read ({type(exc).__name__})")], status=422) from None
    try:
        for ws in wb.worksheets:
            n = 0
            for _ in ws.iter_rows(values_only=True):
                n += 1
                if n - 1 > limits.max_rows:
                    raise LimitExceeded([(field, f"worksheet {ws.title!r} has more than {limits.max_rows} rows "
                                                 f"after the header")])
    finally:
        wb.close()
