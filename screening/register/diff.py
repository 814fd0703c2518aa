"""Compare two batch runs: which vessels changed verdict, margin or inputs."""
from __future__ import annotations

import csv
import io
import json
from dataclasses import dataclass
from pathlib import Path

from screening.case.schema import CaseError, FieldProblem
from screening.register.outputs import people_text, without_people_prefix


@dataclass(frozen=True)
class VesselChange:
    id: str
    change: str  # added | removed | changed
    old_verdict: str | None
    new_verdict: str | None
    old_margin_s: float | None
    new_margin_s: float | None
    changed_inputs: tuple[str, ...]
    notes: str


def _load(folder: Path) -> dict[str, dict]:
    path = Path(folder) / "results.json"
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise CaseError([FieldProblem(str(folder), f"no results.json in {folder}: is it a batch output folder?")]) from None
    except json.JSONDecodeError as exc:
        raise CaseError([FieldProblem(str(path), f"not valid JSON: {exc.msg} at line {exc.lineno}")]) from None
    out: dict[str, dict] = {}
    for r in data:
        key = without_people_prefix(str(r.get("id")))  # ids compared as written, before any CSV guard
        if key in out:  # the same id twice in one register: keep them apart by row
            key = f"{key} (row {r.get('register_row')})"
        out[key] = r
    return out


def smallest_margin(r: dict) -> float | None:
    margins = [l["margin_s"] for l in r.get("limits", []) if l.get("margin_s") is not None]
    return min(margins) if margins else None


def _inputs(r: dict) -> dict[str, str]:
    return {i["field"]: f"{i['value_si']:.12g} {i['unit_si']}" for i in r.get("inputs", [])}


def diff_runs(old_dir, new_dir, margin_tolerance_s: float = 36.0) -> list[VesselChange]:
    old, new = _load(Path(old_dir)), _load(Path(new_dir))
    changes: list[VesselChange] = []
    for key in sorted(set(old) | set(new)):
        a, b = old.get(key), new.get(key)
        if a is None:
            changes.append(VesselChange(key, "added", None, b.get("verdict"), None, smallest_margin(b), (), "new in this run"))
            continue
        if b is None:
            changes.append(VesselChange(key, "removed", a.get("verdict"), None, smallest_margin(a), None, (),
                                        "not in this run (removed, or now invalid: see errors.csv)"))
            continue
        ia, ib = _inputs(a), _inputs(b)
        changed_inputs = tuple(sorted(f for f in set(ia) | set(ib) if ia.get(f) != ib.get(f)))
        ma, mb = smallest_margin(a), smallest_margin(b)
        margin_changed = (ma is None) != (mb is None) or (ma is not None and abs(ma - mb) > margin_tolerance_s)
        notes = []
        if a.get("verdict") != b.get("verdict"):
            notes.append(f"verdict {a.get('verdict')} -> {b.get('verdict')}")
        if margin_changed:
            notes.append("margin changed")
        if changed_inputs:
            notes.append(f"{len(changed_inputs)} input(s) changed")
        if a.get("rule_set", {}).get("hash") != b.get("rule_set", {}).get("hash"):
            notes.append("rule set changed")
        if notes:
            changes.append(VesselChange(key, "changed", a.get("verdict"), b.get("verdict"), ma, mb, changed_inputs,
                                        "; ".join(notes)))
    return changes


def _h(v):
    return "—" if v is None else f"{v / 3600:.3g} h"


def format_table(changes: list[VesselChange]) -> str:
    if not changes:
        return "No vessel changed verdict, margin or inputs."
    rows = [("id", "change", "verdict", "smallest margin", "what changed")]
    for c in changes:
        rows.append((c.id, c.change, f"{c.old_verdict or '—'} -> {c.new_verdict or '—'}",
                     f"{_h(c.old_margin_s)} -> {_h(c.new_margin_s)}",
                     c.notes + (f" ({', '.join(c.changed_inputs)})" if c.changed_inputs else "")))
    widths = [max(len(r[i]) for r in rows) for i in range(4)]
    lines = []
    for k, r in enumerate(rows):
        lines.append("  ".join(r[i].ljust(widths[i]) for i in range(4)) + "  " + r[4])
        if k == 0:
            lines.append("  ".join("-" * w for w in widths) + "  " + "-" * 12)
    lines.append(f"{len(changes)} vessel(s) changed.")
    return "\n".join(lines)


def to_csv(changes: list[VesselChange]) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["id", "change", "old_verdict", "new_verdict", "old_smallest_margin_h", "new_smallest_margin_h",
                "changed_inputs", "notes"])
    for c in changes:
        w.writerow([people_text(c.id), c.change, people_text(c.old_verdict or ""), people_text(c.new_verdict or ""),
                    "" if c.old_margin_s is None else f"{c.old_margin_s / 3600:.6g}",
                    "" if c.new_margin_s is None else f"{c.new_margin_s / 3600:.6g}",
                    people_text(";".join(c.changed_inputs)), people_text(c.notes)])
    return buf.getvalue()
