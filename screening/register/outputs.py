"""The files of a register run: results.csv, errors.csv, part files appended in order."""
from __future__ import annotations

import csv
import io
import json
import os
import shutil
from pathlib import Path


def dumps(obj) -> bytes:
    """JSON bytes; orjson when installed (several times faster for large registers)."""
    try:
        import orjson
    except ImportError:  # pragma: no cover
        return json.dumps(obj, ensure_ascii=False, allow_nan=False).encode("utf-8")
    return orjson.dumps(obj)


# ------------------------------------------------------------------ CSV for people

# A spreadsheet program evaluates a cell that starts with one of these as a formula. In CSV files
# written for people (results.csv, errors.csv, diff --csv) such TEXT cells get a leading apostrophe,
# the usual defence against formula injection; numbers are written as they are, and results.json
# is never altered. Ids read back (a register, a diff) are compared without the apostrophe.
FORMULA_TRIGGERS = frozenset("=+-@\t\r")


def people_text(value):
    """A text cell as written to CSV for people: a leading apostrophe where a spreadsheet would evaluate it,
    and a carriage return inside it written as a line feed (which the CSV writer quotes; with a "\n" line
    ending it leaves a bare carriage return unquoted, and readers would split the row there)."""
    if value.__class__ is str:
        if value[:1] in FORMULA_TRIGGERS:
            value = "'" + value
        if "\r" in value:
            value = one_line_ending(value)
    return value


def one_line_ending(text: str) -> str:
    """Carriage returns (alone or before a line feed) as line feeds."""
    return text.replace("\r\n", "\n").replace("\r", "\n")


def without_people_prefix(text: str) -> str:
    """The text a ``people_text`` cell was made from (an apostrophe before a trigger character removed)."""
    if text[:1] == "'" and text[1:2] in FORMULA_TRIGGERS:
        return text[1:]
    return text


# ------------------------------------------------------------------ outputs


def _hours(v):
    return "" if v is None else f"{v / 3600:.6g}"


def _kelvin(v):
    return "" if v is None else f"{v:.6g}"


CSV_HEAD = ["id", "row", "verdict", "scenario", "first_limit", "time_to_first_limit_h", "smallest_margin_h"]
CSV_TAIL = ["peak_temperature_K", "peak_time_h", "steady_temperature_K", "time_constant_h", "tmr_adiabatic_h",
            "critical_ambient_temperature_K", "ambient_temperature_K", "t_d24_K", "mtsr_K", "tmr_at_mtsr_h",
            "tmr_at_storage_temperature_h", "decomposition_temperature_rise_K", "criticality_class",
            "sadt_K", "control_temperature_K", "emergency_temperature_K", "induction_time_at_storage_temperature_h",
            "hot_spot_solution", "probability_before_response", "p05_time_to_first_limit_h", "warnings", "reasons"]


def csv_parts(r: dict) -> tuple[list, dict, list]:
    """The formatted cells of one results.csv row: (leading cells, time per limit name, trailing cells)."""
    reached = [l for l in r["limits"] if l["time_s"] is not None]
    first = min(reached, key=lambda l: l["time_s"]) if reached else None
    margins = [l["margin_s"] for l in r["limits"] if l.get("margin_s") is not None]
    head = [people_text(r["id"]), r.get("register_row", ""), r.get("verdict", ""), r.get("scenario") or "",
            people_text(first["name"]) if first else "", _hours(first["time_s"]) if first else "",
            _hours(min(margins)) if margins else ""]
    limits = {l["name"]: _hours(l["time_s"]) for l in r["limits"]}
    tail = [_kelvin(r.get("peak_temperature_K")), _hours(r.get("peak_time_s")), _kelvin(r.get("steady_temperature_K")),
            _hours(r.get("time_constant_s")), _hours(r.get("tmr_adiabatic_s")),
            _kelvin(r.get("critical_ambient_temperature_K")), _kelvin(r.get("ambient_temperature_K")),
            _kelvin(r.get("t_d24_K")), _kelvin(r.get("mtsr_K")), _hours(r.get("tmr_at_mtsr_s")),
            _hours(r.get("tmr_at_storage_temperature_s")), _kelvin(r.get("decomposition_temperature_rise_K")),
            r.get("criticality_class") or "",
            _kelvin(r.get("sadt_K")), _kelvin(r.get("control_temperature_K")),
            _kelvin(r.get("emergency_temperature_K")), _hours(r.get("induction_time_at_storage_temperature_s")),
            _hot_spot_solution(r),
            *_uncertainty_columns(r.get("uncertainty")),
            len(r.get("warnings") or []), " | ".join(r.get("reasons") or [])]
    return head, limits, tail


def _hot_spot_solution(r: dict) -> str:
    """How the times of an unstirred row were found: "conduction" (the hot spot of the transient conduction solution;
    "conduction, runs away" when it runs away); empty for stirred contents (one lumped temperature)."""
    cond = r.get("conduction")
    if not isinstance(cond, dict):
        return ""
    return "conduction, runs away" if cond.get("runs_away") else "conduction"


def results_csv_header(limit_names: list[str]) -> list[str]:
    return CSV_HEAD + [f"time_to_limit_h: {one_line_ending(n)}" for n in limit_names] + CSV_TAIL


def results_csv_from_parts(parts: list, limit_names: list[str], header: bool = True) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    if header:
        w.writerow(results_csv_header(limit_names))
    # The last cell (the reasons) is long and mostly one of a few texts: it is guarded and quoted once
    # per text, by the same writer, and the rest of each row goes through the writer as usual.
    lines: list[str] = []
    rows = csv.writer(_Lines(lines), lineterminator="\n")
    single = csv.writer(_Lines(quoted := []), lineterminator="\n")
    escaped: dict[str, str] = {}
    for head, limits, tail in parts:
        rows.writerow(head + [limits.get(n, "") for n in limit_names] + tail[:-1])
        last = tail[-1]
        cell = escaped.get(last)
        if cell is None:
            single.writerow([people_text(last)])
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
        w.writerow([e["row"], people_text(e["id"] or ""), people_text(e["field"]), people_text(e["message"])])
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


def _write_results_csv(path: Path, chunks: list) -> None:  # ChunkResult items
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
