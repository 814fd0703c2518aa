"""CSV files written for people guard text cells a spreadsheet would evaluate.

Source: OWASP, "CSV Injection": cells starting with =, +, -, @, tab or carriage return may be evaluated
as formulas by spreadsheet programs; the usual defence is a leading single quote on such text cells,
and comparing ids without it when they are read back. Numbers are not text and stay as they are.
"""
from __future__ import annotations

import csv
import io
import json
import subprocess
import sys
from pathlib import Path

import yaml

from screening.register.batch import run_batch
from screening.register.diff import diff_runs, to_csv
from screening.register.outputs import errors_csv, people_text
from screening.register.reading import read_register

ROOT = Path(__file__).resolve().parents[2]
TRIGGERS = ["=", "+", "-", "@", "\t", "\r"]  # OWASP "CSV Injection"

BASE = {
    "id": "BASE",
    "title": "=HYPERLINK(\"http://example.invalid\")",
    "contents": {"mass": "2000 kg", "specific_heat": "3 kJ/(kg*K)", "initial_temperature": "25 degC"},
    "heat_loss": {"ambient_temperature": "30 degC", "ua": "100 W/K"},
    "heat_sources": [{"kind": "constant", "power": "20 kW"}],
    "limits": [{"name": "onset", "temperature": "60 degC"}],
    "response_time": "10 h",  # the limit is reached within about 1.6 h: negative margins, a fail verdict
}
RULES = """
[rule_set]
name = "guard test"
version = "1"
description = "one rule whose reason starts with a trigger character"

[[rule]]
id = "short"
quantity = "smallest_margin"
compare = "<="
threshold = "0 h"
verdict = "fail"
reason = "=limit {limit} before response"
source = "site choice"
"""


def _rows(mass_kg=2000):
    """ids and limit names starting with each trigger a register cell can hold (cells are trimmed, so tab and
    CR come from per-row case files), and one row whose bad cell gives an error message."""
    rows = [[f"{t}V{i}", f"{mass_kg}", f"{t}onset {i}", "", ""] for i, t in enumerate(["=", "+", "-", "@"])]
    rows += [["", f"{mass_kg}", "", "", "tab.yaml"], ["", f"{mass_kg}", "", "", "cr.yaml"]]
    rows += [["-BAD", f"{mass_kg}", "", "-300 degC", ""]]  # limit below absolute zero: an error row
    return rows


def _register(folder: Path, rows) -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    for name, rid, limit in (("tab.yaml", "\tTAB", "\tsoak"), ("cr.yaml", "\rCR", "\rsoak")):
        (folder / name).write_text(yaml.safe_dump({"id": rid, "limits": [{"name": limit, "temperature": "60 degC"}]}),
                                   encoding="utf-8")
    reg = folder / "register.csv"
    with open(reg, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(["id", "contents.mass [kg]", "limits.0.name", "limits.0.temperature", "case_file"])
        w.writerows(rows)
    (folder / "base.yaml").write_text(yaml.safe_dump(BASE, sort_keys=False), encoding="utf-8")
    (folder / "rules.toml").write_text(RULES, encoding="utf-8")
    return reg


def _batch(folder: Path, rows, out: Path):
    reg = _register(folder, rows)
    run_batch(reg, out, base_path=folder / "base.yaml", rules_path=folder / "rules.toml")
    return out


def _cells(path: Path) -> list[list[str]]:
    with open(path, newline="", encoding="utf-8") as fh:
        return list(csv.reader(fh))


def _unguarded(rows: list[list[str]], text_columns: set[str]) -> list[str]:
    head = rows[0]
    return [c for row in rows[1:] for name, c in zip(head, row) if name in text_columns and c[:1] in TRIGGERS]


def test_results_and_errors_csv_guard_text_cells_and_leave_numbers_and_json(tmp_path):
    out = _batch(tmp_path / "in", _rows(), tmp_path / "out")
    results = json.loads((out / "results.json").read_text(encoding="utf-8"))
    # results.json is never altered: ids, titles and limit names as given
    ids = {r["id"] for r in results}
    assert ids == {"=V0", "+V1", "-V2", "@V3", "\tTAB", "\rCR"}
    assert {r["title"] for r in results} == {BASE["title"]}
    assert {r["limits"][0]["name"] for r in results} == {"=onset 0", "+onset 1", "-onset 2", "@onset 3", "\tsoak",
                                                         "\rsoak"}
    assert all(r["reasons"][0].startswith("=limit") for r in results)

    rows = _cells(out / "results.csv")
    head = rows[0]
    by_id = {row[0]: dict(zip(head, row)) for row in rows[1:]}
    # every id and first limit carries the apostrophe; a carriage return inside a cell is written as a line
    # feed, which the CSV writer quotes (a bare one would split the row for a reader)
    assert {rid: row["first_limit"] for rid, row in by_id.items()} == {
        "'=V0": "'=onset 0", "'+V1": "'+onset 1", "'-V2": "'-onset 2", "'@V3": "'@onset 3",
        "'\tTAB": "'\tsoak", "'\nCR": "'\nsoak"}
    assert len(rows) == 1 + 6 and all(len(row) == len(head) for row in rows)
    for rid, row in by_id.items():
        assert row["reasons"].startswith("'=limit")
        margin = row["smallest_margin_h"]  # a number: negative, and not guarded
        assert margin.startswith("-") and float(margin) < 0
    assert _unguarded(rows, {"id", "first_limit", "reasons"}) == []

    errors = _cells(out / "errors.csv")
    assert [e[:3] for e in errors[1:]] == [["8", "'-BAD", "limits.0.temperature"]]
    message = errors[1][3]
    assert message[:1] not in TRIGGERS  # guarded if it starts with the cell's text ("-300 degC ...")
    assert _unguarded(errors, {"id", "field", "message"}) == []


def test_errors_csv_guards_every_text_cell():
    text = errors_csv([{"row": 5, "id": "@X", "field": "(row)", "message": "-3 K is below ..."},
                       {"row": 6, "id": None, "field": "f", "message": "=cmd"}])
    assert list(csv.reader(io.StringIO(text))) == [["row", "id", "field", "message"],
                                                   ["5", "'@X", "(row)", "'-3 K is below ..."],
                                                   ["6", "", "f", "'=cmd"]]
    assert people_text(-3.5) == -3.5 and people_text("-3.5") == "'-3.5" and people_text("3") == "3"


def test_diff_pairs_vessels_whose_ids_start_with_a_trigger_and_guards_its_csv(tmp_path):
    run1 = _batch(tmp_path / "in", _rows(2000), tmp_path / "run1")
    run2 = _batch(tmp_path / "in", _rows(2500), tmp_path / "run2")  # every mass changed
    changes = diff_runs(run1, run2)
    assert {c.change for c in changes} == {"changed"}  # paired: nothing added or removed
    assert {c.id for c in changes} == {"=V0", "+V1", "-V2", "@V3", "\tTAB", "\rCR"}
    guarded = {"'=V0", "'+V1", "'-V2", "'@V3", "'\tTAB", "'\nCR"}
    rows = list(csv.reader(io.StringIO(to_csv(changes))))
    assert {r[0] for r in rows[1:]} == guarded
    assert _unguarded(rows, {"id", "old_verdict", "new_verdict", "changed_inputs", "notes"}) == []
    # the same through the command line
    out_csv = tmp_path / "changes.csv"
    proc = subprocess.run([sys.executable, "-m", "screening.cli", "diff", str(run1), str(run2), "--csv", str(out_csv)],
                          capture_output=True, text=True, cwd=ROOT, timeout=120)
    assert proc.returncode == 1, proc.stderr
    assert {r[0] for r in _cells(out_csv)[1:]} == guarded


def test_ids_read_back_with_the_apostrophe_pair_with_the_originals(tmp_path):
    """A register whose ids were copied from results.csv ('=V0) is the same register as one with =V0."""
    run1 = _batch(tmp_path / "a", _rows(2000), tmp_path / "run1")
    copied = [["'" + r[0] if r[0] else r[0], *r[1:]] for r in _rows(2000)]
    reg = _register(tmp_path / "b", copied)
    assert [row[0] for row in read_register(reg).rows][:4] == ["=V0", "+V1", "-V2", "@V3"]
    run2 = _batch(tmp_path / "b", copied, tmp_path / "run2")
    assert json.loads((run2 / "results.json").read_text())[0]["id"] == "=V0"
    assert diff_runs(run1, run2) == []
