"""Registers of unstirred contents: every row screened by the transient conduction solution, exactly as the
equivalent case file is (the reference path: load, prepare, screen one case), including a row with uncertain
inputs (Monte Carlo per row). The physics of the conduction solution is checked against outside references in
tests/core/test_transient_conduction.py and tests/run/test_conduction_case.py."""
from __future__ import annotations

import copy
import csv
import json

import pytest
import yaml

from screening.case.files import load_case_bytes
from screening.case.prepare import prepare_case
from screening.register.batch import run_batch
from screening.result import public_result
from screening.run.screen_case import screen_prepared
from screening.verdict.rule_file import apply_rules

BASE = {
    "id": "DRUM", "scenario": "storage",
    "vessel": {"shape": "vertical-cylinder", "diameter": "0.57 m", "length": "0.85 m", "heads": "flat"},
    "contents": {"fill": "90 %", "density": "650 kg/m^3", "specific_heat": "1.3 kJ/(kg*K)",
                 "initial_temperature": "30 degC", "mixing": "unstirred", "thermal_conductivity": "0.12 W/(m*K)"},
    "heat_loss": {"ambient_temperature": "38 degC", "coefficient": "5 W/(m^2*K)", "area": "total"},
    "heat_sources": [{"kind": "arrhenius", "role": "decomposition", "specific_power": "0.004 W/kg",
                      "reference_temperature": "60 degC", "activation_energy": "135 kJ/mol", "order": 0,
                      "specific_heat_of_reaction": "1200 kJ/kg", "gas_generating": True}],
    "limits": [{"name": "warm", "temperature": "45 degC"}, {"name": "self-accelerating", "temperature": "60 degC"}],
    "horizon": "10 d", "response_time": "12 h",
}
HEADER = ["id", "contents.fill [%]", "heat_loss.ambient_temperature [degC]", "contents.initial_temperature [degC]",
          "contents.thermal_conductivity [W/(m*K)]"]
ROWS = [["D-1", "90", "38", "30", "0.12"], ["D-2", "60", "42", "55", "0.08"], ["D-3", "75", "30", "70", "0.2"]]


def case_of(row) -> dict:
    data = copy.deepcopy(BASE)
    data["id"] = row[0]
    data["contents"].update(fill=f"{row[1]} %", initial_temperature=f"{row[3]} degC",
                            thermal_conductivity=f"{row[4]} W/(m*K)")
    data["heat_loss"]["ambient_temperature"] = f"{row[2]} degC"
    return data


def screen_dict(data: dict) -> dict:
    loaded = load_case_bytes(yaml.safe_dump(data, sort_keys=False).encode(), "yaml")
    result = screen_prepared(prepare_case(loaded.spec))
    apply_rules(result, None)
    return public_result(result)


def run(tmp_path, base: dict):
    reg = tmp_path / "drums.csv"
    with open(reg, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(HEADER)
        w.writerows(ROWS)
    base_file = tmp_path / "base.yaml"
    base_file.write_text(yaml.safe_dump(base, sort_keys=False), encoding="utf-8")
    run_batch(reg, tmp_path / "out", base_path=base_file)
    results = json.loads((tmp_path / "out" / "results.json").read_text(encoding="utf-8"))
    errors = list(csv.DictReader(open(tmp_path / "out" / "errors.csv", newline="", encoding="utf-8")))
    return results, errors


def _rows(results):
    return results if isinstance(results, list) else results.get("results", results.get("rows"))


def test_unstirred_register_rows_equal_their_case_files(tmp_path):
    results, errors = run(tmp_path, BASE)
    assert errors == []
    rows = _rows(results)
    assert [r["id"] for r in rows] == ["D-1", "D-2", "D-3"]
    for row, got in zip(ROWS, rows):
        want = screen_dict(case_of(row))
        assert got["conduction"] == want["conduction"]
        assert got["lumped"] == want["lumped"]
        for a, b in zip(got["limits"], want["limits"], strict=True):
            assert a["time_s"] == b["time_s"] and a["margin_s"] == b["margin_s"]
        assert got["peak_temperature_K"] == want["peak_temperature_K"]
        assert got["verdict"] == want["verdict"] and got["reasons"] == want["reasons"]
    # D-3 starts at 70 degC: both limits at once (hot spot), while the lumped history is the same at t = 0
    assert rows[2]["limits"][0]["time_s"] == 0.0


def test_unstirred_register_rows_with_uncertain_inputs(tmp_path):
    base = copy.deepcopy(BASE)
    base["uncertainty"] = {"samples": 10, "seed": 2, "inputs": {
        "contents.thermal_conductivity": {"distribution": "normal", "sd": "10 %"}}}
    results, errors = run(tmp_path, base)
    assert errors == []
    for got in _rows(results):
        u = got["uncertainty"]
        assert u is not None and "transient conduction" in u["method"] and u["accepted"] == 10
    want = screen_dict(dict(case_of(ROWS[1]), uncertainty=base["uncertainty"]))
    assert _rows(results)[1]["uncertainty"]["limits"] == want["uncertainty"]["limits"]


def test_unstirred_row_without_conductivity_is_the_rows_error(tmp_path):
    base = copy.deepcopy(BASE)
    del base["contents"]["thermal_conductivity"]
    reg = tmp_path / "drums.csv"
    with open(reg, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(HEADER)
        w.writerows([ROWS[0], ["D-9", "80", "35", "30", ""]])
    base_file = tmp_path / "base.yaml"
    base_file.write_text(yaml.safe_dump(base, sort_keys=False), encoding="utf-8")
    run_batch(reg, tmp_path / "out", base_path=base_file)
    errors = list(csv.DictReader(open(tmp_path / "out" / "errors.csv", newline="", encoding="utf-8")))
    assert [e["id"] for e in errors] == ["D-9"]
    assert errors[0]["field"] == "contents.thermal_conductivity" and "transient conduction" in errors[0]["message"]


def test_a_chunk_integrates_its_unstirred_rows_together(tmp_path, monkeypatch):
    # issue 17: the chunk's unstirred rows go to the conduction integrator as one batch (and each row's numbers
    # are still its case file's, checked above)
    import screening.register.chunks as chunks

    sizes = []
    real = chunks.conduction_solutions

    def spy(cases):
        sizes.append(len(cases))
        return real(cases)

    monkeypatch.setattr(chunks, "conduction_solutions", spy)
    reg = tmp_path / "drums.csv"
    many = [[f"{r[0]}-{k}"] + r[1:] for k in range(3) for r in ROWS]  # 9 rows: chunks of 3 with one process
    with open(reg, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(HEADER)
        w.writerows(many)
    base_file = tmp_path / "base.yaml"
    base_file.write_text(yaml.safe_dump(BASE, sort_keys=False), encoding="utf-8")
    run_batch(reg, tmp_path / "out", base_path=base_file, workers=1)
    assert sum(sizes) == 9 and min(sizes) >= 2, sizes
    rows = _rows(json.loads((tmp_path / "out" / "results.json").read_text(encoding="utf-8")))
    for row, got in zip(many, rows):
        want = screen_dict(case_of(row))
        assert got["limits"] == want["limits"] and got["peak_time_s"] == want["peak_time_s"]
