"""Registers of drums of a self-reactive material (stirred, storage, one Arrhenius decomposition, SADT): each
row's results.json item equals ``heatscreen check --json`` of the same case written out as a file, key by key.

The register screens its stirred storage rows' SADT searches together (one lock-step run of the batch
engine per chunk, :func:`screening.run.sadt_case.sadt_searches`); ``check`` runs one case as a group
of one. Reference: the one-case path of the command line (its physics is checked against scipy's solve_ivp
in tests/run/test_sadt_case.py and tests/core/test_arrhenius_history_batch.py). Invented drums (FW-... tags).
"""
from __future__ import annotations

import copy
import csv
import json
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import yaml

from screening.register.batch import run_batch

ROOT = Path(__file__).resolve().parents[2]

BASE = {
    "id": "FW-DR", "title": "drum store", "scenario": "storage",
    "contents": {"mass": "200 kg", "specific_heat": "1.5 kJ/(kg*K)", "initial_temperature": "25 degC",
                 "mixing": "stirred"},
    "heat_loss": {"ambient_temperature": "30 degC", "ua": "4 W/K"},
    "heat_sources": [{"kind": "arrhenius", "role": "decomposition", "specific_power": "0.01 W/kg",
                      "reference_temperature": "60 degC", "activation_energy": "120 kJ/mol", "order": 1,
                      "specific_heat_of_reaction": "500 kJ/kg", "tested_range": ["40 degC", "100 degC"]}],
    "limits": [{"name": "onset", "temperature": "60 degC"}],
    "horizon": "30 d", "response_time": "12 h",
}
HEADER = ["id", "contents.mass [kg]", "heat_loss.ambient_temperature [degC]", "heat_loss.ua [W/K]",
          "heat_sources.0.specific_power [W/kg]", "heat_sources.0.activation_energy [kJ/mol]",
          "heat_sources.0.order"]
#: keys that differ between a register row and a case file by design (allowable_values: a key of the case-file
#: pipeline, null without uncertain inputs; a register does not write it)
BY_DESIGN = {"register_row", "backend", "input_hash", "allowable_values"}


def random_rows(seed: int, n: int) -> list[list[str]]:
    rng = np.random.default_rng(seed)
    rows = []
    for i in range(n):
        rows.append([f"FW-DR{seed}-{i}", f"{rng.uniform(20, 400):.4g}", f"{rng.uniform(10, 50):.3g}",
                     f"{rng.uniform(0.5, 12):.3g}", f"{10 ** rng.uniform(-3, -1.3):.3g}",
                     f"{rng.uniform(90, 160):.4g}", str(rng.choice(["0", "0.5", "1", "2"]))])
    return rows


def case_of(row: list[str]) -> dict:
    data = copy.deepcopy(BASE)
    data["id"] = row[0]
    data["contents"]["mass"] = f"{row[1]} kg"
    data["heat_loss"]["ambient_temperature"] = f"{row[2]} degC"
    data["heat_loss"]["ua"] = f"{row[3]} W/K"
    src = data["heat_sources"][0]
    src.update(specific_power=f"{row[4]} W/kg", activation_energy=f"{row[5]} kJ/mol", order=float(row[6]))
    return data


def check_json(path: Path) -> dict:
    env = dict(os.environ)
    env["PYTHONPATH"] = str(ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    proc = subprocess.run([sys.executable, "-m", "screening.cli", "check", str(path), "--json"], capture_output=True,
                          text=True, cwd=ROOT, env=env, timeout=300)
    assert proc.returncode in (0, 1), proc.stderr  # 1: a verdict other than pass
    return json.loads(proc.stdout)


def test_random_drum_registers_equal_check_json_row_by_row(tmp_path):
    rows = random_rows(17, 5) + random_rows(23, 4)
    reg = tmp_path / "drums.csv"
    with open(reg, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(HEADER)
        w.writerows(rows)
    base_file = tmp_path / "base.yaml"
    base_file.write_text(yaml.safe_dump(BASE, sort_keys=False), encoding="utf-8")
    run_batch(reg, tmp_path / "out", base_path=base_file)
    results = json.loads((tmp_path / "out" / "results.json").read_text(encoding="utf-8"))
    assert [r["id"] for r in results] == [r[0] for r in rows]
    computed = 0
    for row, got in zip(rows, results):
        path = tmp_path / f"{row[0]}.yaml"
        path.write_text(yaml.safe_dump(case_of(row), sort_keys=False), encoding="utf-8")
        want = check_json(path)
        assert set(got) - BY_DESIGN == set(want) - BY_DESIGN, row[0]
        for key in set(want) - BY_DESIGN:
            assert got[key] == want[key], (row[0], key)
        computed += got["sadt"]["status"] == "computed"
    assert computed >= 3  # the SADT search ran for most rows (the others are above the bound)
