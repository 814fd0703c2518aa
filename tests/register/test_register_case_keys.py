"""Registers read their base case and per-row case files with the case reader: a JSON key given twice is
refused there too, with the key, its path and its line (the tool's own contract; lines counted by hand)."""
from __future__ import annotations

import csv
import json

import pytest
import yaml

from screening.case.schema import CaseError
from screening.register.batch import run_batch

BASE = {
    "id": "BASE",
    "contents": {"mass": "1000 kg", "specific_heat": "3 kJ/(kg*K)", "initial_temperature": "25 degC"},
    "heat_loss": {"ambient_temperature": "30 degC", "ua": "100 W/K"},
    "heat_sources": [{"kind": "constant", "power": "1 kW"}],
    "limits": [{"name": "onset", "temperature": "60 degC"}],
}
ROW_CASE_TWICE = '{"id": "V1",\n "contents": {"mass": "5 t",\n              "mass": "50 t"}}\n'  # line 3


def write_register(path, header, rows):
    with open(path, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(header)
        w.writerows(rows)


def test_row_case_file_with_a_json_key_given_twice_is_a_row_error(tmp_path):
    (tmp_path / "cases").mkdir()
    (tmp_path / "cases" / "twice.json").write_text(ROW_CASE_TWICE, encoding="utf-8")
    (tmp_path / "cases" / "once.json").write_text('{"id": "V2", "contents": {"mass": "5 t"}}', encoding="utf-8")
    base = tmp_path / "base.yaml"
    base.write_text(yaml.safe_dump(BASE, sort_keys=False), encoding="utf-8")
    write_register(tmp_path / "register.csv", ["case_file"], [["cases/twice.json"], ["cases/once.json"]])
    run_batch(tmp_path / "register.csv", tmp_path / "out", base_path=base)
    results = json.loads((tmp_path / "out" / "results.json").read_text(encoding="utf-8"))
    with open(tmp_path / "out" / "errors.csv", newline="", encoding="utf-8") as fh:
        errors = list(csv.DictReader(fh))
    assert [r["id"] for r in results] == ["V2"]
    (error,) = errors
    assert error["row"] == "2" and error["field"] == "case_file"
    assert "'mass'" in error["message"] and "contents.mass" in error["message"] and "line 3" in error["message"]


def test_base_case_with_a_json_key_given_twice_is_refused(tmp_path):
    base = tmp_path / "base.json"
    text = json.dumps(BASE, indent=1).replace('"ua": "100 W/K"', '"ua": "100 W/K",\n  "ua": "1 W/K"')
    base.write_text(text, encoding="utf-8")
    line = text.splitlines().index('  "ua": "1 W/K"') + 1
    write_register(tmp_path / "register.csv", ["id"], [["A"]])
    with pytest.raises(CaseError) as info:
        run_batch(tmp_path / "register.csv", tmp_path / "out", base_path=base)
    (problem,) = info.value.problems
    assert "'ua'" in problem.message and "heat_loss.ua" in problem.message and f"line {line}" in problem.message
