"""Registers of stirred Arrhenius vessels of further shapes (a daily cycle of the air and the sun, some rows with a
stated start time of day and some searched for the worst start; fire exposure; a recovery path; boiling data without tempering credit, a closed vessel or a gas-generating decomposition): each row's results.json item equals
``heatscreen check --json`` of the same case written out as a file, key by key.

A register chunk chooses the start of day of all its cycle rows in one run of the vectorised engine and runs the
rows' main and no-heat-loss histories together (:func:`screening.register.chunks._arrhenius_row_values`); ``check``
runs one case as a group of one. Reference: the one-case path of the command line (its physics is checked against
scipy's solve_ivp in tests/run/test_arrhenius_engine_shapes.py). Invented vessels (FW-... tags).
"""
from __future__ import annotations

import copy
import csv
import json

import numpy as np
import pytest
import yaml

from screening.register.batch import run_batch

from test_register_drums import BY_DESIGN, check_json

SOURCE = {"kind": "arrhenius", "role": "decomposition", "specific_power": "0.01 W/kg",
          "reference_temperature": "60 degC", "activation_energy": "120 kJ/mol", "order": 1,
          "specific_heat_of_reaction": "500 kJ/kg", "tested_range": ["40 degC", "100 degC"]}
BASES = {
    "cycle": {
        "id": "FW-SC", "title": "sunny reactor tank", "scenario": "heat-up",
        "contents": {"mass": "800 kg", "specific_heat": "1.9 kJ/(kg*K)", "initial_temperature": "30 degC",
                     "mixing": "stirred"},
        "heat_loss": {"ambient_temperature": "28 degC", "ua": "20 W/K", "daily_range": "12 K",
                      "warmest_time_of_day": "15 h"},
        "sun": {"peak_irradiance": "850 W/m^2", "absorptivity": "0.7", "exposed_area": "2 m^2", "day_length": "14 h"},
        "heat_sources": [SOURCE],
        "limits": [{"name": "onset", "temperature": "60 degC"}, {"name": "boil", "temperature": "110 degC"}],
        "detection": {"alarm_temperature": "45 degC"},
        "horizon": "5 d", "response_time": "2 h",
    },
    "fire": {
        "id": "FW-FX", "title": "tank in a pool fire", "scenario": "heat-up",
        "contents": {"mass": "3000 kg", "specific_heat": "1.9 kJ/(kg*K)", "initial_temperature": "30 degC",
                     "mixing": "stirred"},
        "heat_loss": {"ambient_temperature": "25 degC", "ua": "20 W/K"},
        "heat_sources": [SOURCE, {"kind": "fire", "wetted_area": "8 m^2", "environment_factor": 1.0}],
        "limits": [{"name": "onset", "temperature": "60 degC"}, {"name": "hot", "temperature": "150 degC"}],
        "horizon": "6 h", "response_time": "20 min",
    },
    "recovery": {
        "id": "FW-RC", "title": "reactor, cooling restored", "scenario": "heat-up",
        "contents": {"mass": "2000 kg", "specific_heat": "1.9 kJ/(kg*K)", "initial_temperature": "40 degC",
                     "mixing": "stirred"},
        "heat_loss": {"ambient_temperature": "25 degC", "ua": "15 W/K"},
        "heat_sources": [SOURCE],
        "limits": [{"name": "onset", "temperature": "70 degC"}, {"name": "hot", "temperature": "120 degC"}],
        "detection": {"alarm_temperature": "55 degC"},
        "recovery": {"medium_temperature": "20 degC", "ua": "400 W/K"},
        "horizon": "10 d", "response_time": "4 h",
    },
    "boiling": {
        "id": "FW-BC", "title": "closed reactor with boiling data", "scenario": "heat-up",
        "vessel": {"venting": "closed"},
        "contents": {"mass": "2500 kg", "specific_heat": "1.9 kJ/(kg*K)", "initial_temperature": "50 degC",
                     "mixing": "stirred", "boiling_point": "110 degC", "latent_heat": "400 kJ/kg"},
        "heat_loss": {"ambient_temperature": "25 degC", "ua": "15 W/K"},
        "heat_sources": [SOURCE],
        "limits": [{"name": "onset", "temperature": "80 degC"}, {"name": "hot", "temperature": "150 degC"}],
        "detection": {"alarm_temperature": "65 degC"},
        "recovery": {"medium_temperature": "20 degC", "ua": "400 W/K"},
        "horizon": "10 d", "response_time": "1 h",
    },
}
HEADERS = {
    "cycle": ["id", "contents.mass [kg]", "heat_loss.ambient_temperature [degC]", "heat_loss.ua [W/K]",
              "heat_sources.0.specific_power [W/kg]", "heat_sources.0.activation_energy [kJ/mol]",
              "heat_loss.daily_range [K]", "sun.absorptivity", "start_time_of_day [h]"],
    "fire": ["id", "contents.mass [kg]", "heat_loss.ambient_temperature [degC]",
             "heat_sources.0.specific_power [W/kg]", "heat_sources.0.activation_energy [kJ/mol]",
             "heat_sources.1.wetted_area [m^2]", "heat_sources.1.environment_factor"],
    "boiling": ["id", "vessel.venting", "contents.mass [kg]", "contents.boiling_point [degC]",
                "heat_sources.0.specific_power [W/kg]", "heat_sources.0.activation_energy [kJ/mol]",
                "heat_sources.0.gas_generating", "recovery.ua [W/K]"],
    "recovery": ["id", "contents.mass [kg]", "contents.initial_temperature [degC]",
                 "heat_sources.0.specific_power [W/kg]", "heat_sources.0.activation_energy [kJ/mol]",
                 "detection.alarm_temperature [degC]", "recovery.ua [W/K]", "response_time [h]"],
}


def random_rows(shape: str, seed: int, n: int) -> list[list[str]]:
    rng = np.random.default_rng(seed)
    rows = []
    for i in range(n):
        if shape == "cycle":
            start = f"{rng.uniform(0, 24):.3g}" if rng.random() < 0.4 else ""
            rows.append([f"FW-SC{seed}-{i}", f"{rng.uniform(100, 3000):.4g}", f"{rng.uniform(10, 40):.3g}",
                         f"{rng.uniform(2, 60):.3g}", f"{10 ** rng.uniform(-3, -0.5):.3g}",
                         f"{rng.uniform(90, 160):.4g}", f"{rng.uniform(0, 16):.3g}", f"{rng.uniform(0.2, 0.9):.2g}",
                         start])
        elif shape == "boiling":
            rows.append([f"FW-BC{seed}-{i}", str(rng.choice(["open", "closed"])), f"{rng.uniform(200, 5000):.4g}",
                         f"{rng.uniform(55, 160):.4g}", f"{10 ** rng.uniform(-2, -0.3):.3g}",
                         f"{rng.uniform(70, 110):.4g}", str(rng.choice(["true", ""])), f"{rng.uniform(20, 3000):.4g}"])
        elif shape == "recovery":
            start = rng.uniform(40, 60)
            rows.append([f"FW-RC{seed}-{i}", f"{rng.uniform(200, 5000):.4g}", f"{start:.3g}",
                         f"{10 ** rng.uniform(-2, -0.5):.3g}", f"{rng.uniform(70, 110):.4g}",
                         f"{start + rng.uniform(3, 20):.3g}", f"{rng.uniform(20, 3000):.4g}",
                         f"{rng.uniform(0.2, 12):.3g}"])
        else:
            rows.append([f"FW-FX{seed}-{i}", f"{rng.uniform(500, 20000):.4g}", f"{rng.uniform(10, 40):.3g}",
                         f"{10 ** rng.uniform(-3, -0.5):.3g}", f"{rng.uniform(90, 160):.4g}",
                         f"{rng.uniform(1, 30):.3g}", f"{rng.choice([1.0, 0.3, 0.15]):g}"])
    return rows


def case_of(shape: str, header: list[str], row: list[str]) -> dict:
    """The case file of a register row: each filled cell written at its path with its header unit."""
    data = copy.deepcopy(BASES[shape])
    for head, cell in zip(header, row):
        if cell == "":
            continue
        path, _, unit = head.partition(" [")
        unit = unit.rstrip("]")
        node = data
        parts = [int(p) if p.isdigit() else p for p in path.split(".")]
        for p in parts[:-1]:
            node = node[p]
        node[parts[-1]] = f"{cell} {unit}" if unit else cell
    return data


@pytest.mark.parametrize("shape", sorted(BASES))
def test_random_registers_of_the_shape_equal_check_json_row_by_row(shape, tmp_path):
    header = HEADERS[shape]
    rows = random_rows(shape, 3, 4) + random_rows(shape, 4, 3)
    reg = tmp_path / "register.csv"
    with open(reg, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(header)
        w.writerows(rows)
    base_file = tmp_path / "base.yaml"
    base_file.write_text(yaml.safe_dump(BASES[shape], sort_keys=False), encoding="utf-8")
    run_batch(reg, tmp_path / "out", base_path=base_file)
    results = json.loads((tmp_path / "out" / "results.json").read_text(encoding="utf-8"))
    assert [r["id"] for r in results] == [r[0] for r in rows]
    for row, got in zip(rows, results):
        path = tmp_path / f"{row[0]}.yaml"
        path.write_text(yaml.safe_dump(case_of(shape, header, row), sort_keys=False), encoding="utf-8")
        want = check_json(path)
        assert set(got) - BY_DESIGN == set(want) - BY_DESIGN, row[0]
        for key in set(want) - BY_DESIGN:
            assert got[key] == want[key], (row[0], key)
    if shape == "boiling":
        assert any(r["boiling"]["time_to_boil_s"] is not None for r in results)
        assert {r["boiling"]["time_to_boil_s"] is None for r in results} == {True, False}
    if shape == "recovery":
        assert any(r["recovery"] and r["recovery"]["peak_temperature_K"] is not None for r in results)
    if shape == "cycle":
        bases = {r["daily_cycle"]["start_time_basis"] for r in results}
        assert len(bases) == 2  # both stated starts and searched ones were compared
