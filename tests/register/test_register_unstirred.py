"""Registers of unstirred contents: every row screened by the transient conduction solution, exactly as the
equivalent case file is (the reference path: load, prepare, screen one case, or ``check --json``), including a row
with uncertain inputs (Monte Carlo per row) and random registers of packages in storage, whose SADT searches a
chunk runs together (lock-step on the batched conduction integrator). The physics of the conduction solution is
checked against outside references in tests/core/test_transient_conduction.py, tests/run/test_conduction_case.py
and (the SADT trials, against scipy's solve_ivp) tests/run/test_sadt_case.py."""
from __future__ import annotations

import copy
import csv
import json

import numpy as np
import pytest
import yaml
from typer.testing import CliRunner

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


# ------------------------------------------------------------------ random registers of packages in storage

PACKAGE_HEADER = ["id", "vessel.shape", "vessel.diameter [m]", "vessel.length [m]", "vessel.width [m]",
                  "vessel.height [m]", "heat_loss.ambient_temperature [degC]", "contents.initial_temperature [degC]",
                  "contents.thermal_conductivity [W/(m*K)]", "heat_loss.coefficient [W/(m^2*K)]",
                  "heat_sources.0.specific_power [W/kg]", "heat_sources.0.activation_energy [kJ/mol]",
                  "heat_sources.0.order"]
#: keys that differ between a register row and a case file by design (allowable_values: a key of the case-file
#: pipeline, null without uncertain inputs; a register does not write it)
BY_DESIGN = {"register_row", "backend", "input_hash", "allowable_values"}


def package_rows(seed: int, n: int) -> list[list[str]]:
    """Invented FW-S17 packages: drums, bags and cartons of random size, conductivity, surface coefficient (surface
    Biot numbers about 0.1 to 100), ambient, start and kinetics."""
    rng = np.random.default_rng(seed)
    rows = []
    for i in range(n):
        shape = ("vertical-cylinder", "sphere", "box")[int(rng.integers(3))]
        dims = {"vertical-cylinder": [f"{rng.uniform(0.3, 0.7):.3f}", f"{rng.uniform(0.5, 0.9):.3f}", "", ""],
                "sphere": [f"{rng.uniform(0.4, 1.3):.3f}", "", "", ""],
                "box": ["", f"{rng.uniform(0.4, 1.2):.3f}", f"{rng.uniform(0.3, 1.0):.3f}",
                        f"{rng.uniform(0.2, 0.8):.3f}"]}[shape]
        ta = rng.uniform(20, 45)
        rows.append([f"FW-S17-Q{seed}-{i}", shape, *dims, f"{ta:.1f}", f"{ta + rng.uniform(-10, 15):.1f}",
                     f"{rng.uniform(0.06, 0.3):.3g}", f"{10 ** rng.uniform(-0.5, 1.5):.3g}",
                     f"{0.004 * 10 ** rng.uniform(-1, 1):.3g}", f"{rng.uniform(110, 160):.4g}",
                     str(rng.choice(["0", "0.5", "1", "2"]))])
    return rows


def package_case(base: dict, row: list[str]) -> dict:
    """The case file of a register row: the base case with the row's cells written in (units of the header)."""
    data = copy.deepcopy(base)
    data["id"] = row[0]
    data["vessel"] = {"shape": row[1]}
    for key, cell in zip(("diameter", "length", "width", "height"), row[2:6]):
        if cell:
            data["vessel"][key] = f"{cell} m"
    data["heat_loss"]["ambient_temperature"] = f"{row[6]} degC"
    data["contents"]["initial_temperature"] = f"{row[7]} degC"
    data["contents"]["thermal_conductivity"] = f"{row[8]} W/(m*K)"
    data["heat_loss"]["coefficient"] = f"{row[9]} W/(m^2*K)"
    src = data["heat_sources"][0]
    src.update(specific_power=f"{row[10]} W/kg", activation_energy=f"{row[11]} kJ/mol", order=float(row[12]))
    return data


def test_random_package_registers_equal_check_json_row_by_row(tmp_path, monkeypatch):
    # every key of each row's results.json item equals check --json of the same case written as a file (the one-case
    # path: the SADT search a group of one); the chunk searched its rows together
    import screening.register.chunks as chunks
    from screening.cli import app
    from screening.run import sadt_case

    base = copy.deepcopy(BASE)
    del base["vessel"]
    base["heat_sources"][0]["tested_range"] = ["50 degC", "90 degC"]
    base["horizon"] = "30 d"
    rows = package_rows(17, 6) + package_rows(29, 5)
    searched = []
    real = chunks.storage_sadt_searches

    def spy(cases):
        got = real(cases)
        searched.append((len(cases), sum(not isinstance(s, BaseException) for s in got.values())))
        return got

    monkeypatch.setattr(chunks, "storage_sadt_searches", spy)
    batches = []
    trials = sadt_case._conduction_trials
    monkeypatch.setattr(sadt_case, "_conduction_trials", lambda models: batches.append(len(models)) or trials(models))
    reg = tmp_path / "packages.csv"
    with open(reg, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(PACKAGE_HEADER)
        w.writerows(rows)
    base_file = tmp_path / "base.yaml"
    base_file.write_text(yaml.safe_dump(base, sort_keys=False), encoding="utf-8")
    sadt_case._CACHE.clear()
    run_batch(reg, tmp_path / "out", base_path=base_file, workers=1)
    assert sum(n for n, _ in searched) == len(rows) and sum(k for _, k in searched) == len(rows)
    assert len(batches) == len(searched) and sum(batches) == len(rows)  # no row searched again on its own
    monkeypatch.undo()
    results = _rows(json.loads((tmp_path / "out" / "results.json").read_text(encoding="utf-8")))
    assert [r["id"] for r in results] == [r[0] for r in rows]
    methods = set()
    for row, got in zip(rows, results):
        path = tmp_path / f"{row[0]}.yaml"
        path.write_text(yaml.safe_dump(package_case(base, row), sort_keys=False), encoding="utf-8")
        sadt_case._CACHE.clear()  # check runs its own search
        out = CliRunner().invoke(app, ["check", "--json", str(path)])
        assert out.exit_code in (0, 1), out.output  # 1: a verdict other than pass
        want = json.loads(out.stdout)
        assert set(got) - BY_DESIGN == set(want) - BY_DESIGN, row[0]
        for key in sorted(set(want) - BY_DESIGN):
            assert got[key] == want[key], (row[0], key)
        methods.add((got["conduction"]["geometry"], got["sadt"]["status"]))
    assert {g for g, _ in methods} == {"slab", "cylinder", "sphere"}
    assert sum(status == "computed" for _, status in methods) >= 2, methods
