"""Registers with the daily cycle's columns: each row equals its case file (the reference path), simple rows
without a cycle still take the fast paths, and a bad cell names its field."""
from __future__ import annotations

import copy

from test_register_batch import BASE, assert_same_result, run, screen_case_dict

SUNNY = copy.deepcopy(BASE)
SUNNY["sun"] = {"peak_irradiance": "850 W/m^2", "absorptivity": "0.7", "exposed_area": "2 m^2",
                "day_length": "14 h"}


def row_case(row: dict) -> dict:
    """The case file equivalent of a register row on the sunny base (the reference path)."""
    data = copy.deepcopy(SUNNY)
    for header, cell in row.items():
        if cell == "":
            continue
        path, _, unit = header.partition(" [")
        unit = unit.rstrip("]")
        value = f"{cell} {unit}" if unit else cell
        node = data
        parts = [int(p) if p.isdigit() else p for p in path.split(".")]
        for p in parts[:-1]:
            node = node[p]
        node[parts[-1]] = value
    return data


def test_rows_with_cycle_columns_equal_their_case_files(tmp_path):
    header = ["id", "contents.mass [kg]", "heat_loss.ua [W/K]", "heat_loss.daily_range [K]",
              "heat_loss.warmest_time_of_day [h]", "sun.peak_irradiance [W/m^2]", "sun.absorptivity",
              "start_time_of_day [h]", "limits.0.temperature [degC]"]
    rows = [
        ["S-1", "900", "40", "12", "15", "850", "0.7", "", "45"],
        ["S-2", "900", "40", "12", "14", "1000", "0.9", "6", "45"],
        ["S-3", "3000", "15", "0", "", "600", "0.3", "", "40"],
        ["S-4", "900", "40", "", "", "850", "0.7", "12", "45"],
    ]
    summary, results, errors, _ = run(tmp_path, header, rows, base=SUNNY)
    assert not errors, errors
    for row, batch in zip(rows, results):
        single, problems = screen_case_dict(row_case(dict(zip(header, row))))
        assert not problems, problems
        assert_same_result(batch, single)
        assert batch["criteria_ambient_K"] == single["criteria_ambient_K"]
        assert batch["daily_cycle"]["start_time_of_day_s"] == single["daily_cycle"]["start_time_of_day_s"]


def test_bad_cycle_cell_names_its_field(tmp_path):
    header = ["id", "contents.mass [kg]", "heat_loss.daily_range", "sun.absorptivity"]
    rows = [["OK", "900", "10 K", "0.5"], ["BAD-A", "900", "10 K", "1.7"], ["BAD-R", "900", "10 m", "0.5"]]
    summary, results, errors, _ = run(tmp_path, header, rows, base=SUNNY)
    assert [r["id"] for r in results] == ["OK"]
    fields = {(int(e["row"]), e["field"]) for e in errors}
    assert (3, "sun.absorptivity") in fields and (4, "heat_loss.daily_range") in fields
    assert summary["exit_code"] == 2
