"""Register cells that spell infinity or not-a-number are row errors naming the row and the column's field.

The spellings are those a spreadsheet or a person types, and YAML's, JSON's and TOML's (.inf, Infinity,
inf, nan, NaN ...; from memory), plus a number too large for a float (1e999; IEEE 754 double, about
1.8e308).  The check is the tool's own contract: errors.csv has the row and field, the message says a
finite number is expected, and the other rows are screened.
"""
from __future__ import annotations

import csv
import json

import pytest
import yaml

from screening.register.batch import run_batch

BASE = {
    "id": "BASE",
    "contents": {"specific_heat": "3 kJ/(kg*K)", "initial_temperature": "25 degC"},
    "heat_loss": {"ambient_temperature": "30 degC"},
    "heat_sources": [{"kind": "constant", "power": "1 kW"}],
    "limits": [{"name": "onset", "temperature": "60 degC"}],
}
# with a header unit, without one (the cell carries its unit), and a fraction with and without '%'
RUNAWAY_BASE = {
    "id": "BASE",
    "contents": {"mass": "1000 kg", "specific_heat": "2 kJ/(kg*K)", "initial_temperature": "25 degC"},
    "heat_loss": {"ambient_temperature": "25 degC", "ua": "50 W/K"},
    "heat_sources": [{"kind": "arrhenius", "role": "synthesis", "specific_power": "0.01 W/kg",
                      "reference_temperature": "50 degC", "activation_energy": "100 kJ/mol", "order": 1,
                      "specific_heat_of_reaction": "200 kJ/kg"}],
    "limits": [{"name": "onset", "temperature": "60 degC"}],
    "horizon": "8 h",
}
SPELLINGS = ["inf", "-inf", "+inf", "nan", "NaN", ".inf", "-.inf", ".nan", "Infinity", "-Infinity", "1e999",
             "-1e999", "INF"]


def run(tmp_path, base, header, rows):
    (tmp_path / "register.csv").write_text("", encoding="utf-8")
    with open(tmp_path / "register.csv", "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(header)
        w.writerows(rows)
    (tmp_path / "base.yaml").write_text(yaml.safe_dump(base, sort_keys=False), encoding="utf-8")
    run_batch(tmp_path / "register.csv", tmp_path / "out", base_path=tmp_path / "base.yaml")
    results = json.loads((tmp_path / "out" / "results.json").read_text(encoding="utf-8"))
    with open(tmp_path / "out" / "errors.csv", newline="", encoding="utf-8") as fh:
        errors = list(csv.DictReader(fh))
    return results, errors


def assert_each_bad_row_refused(results, errors, expected: dict[int, str], good_ids: set[str]):
    """expected: register row number -> field; each bad row has exactly that error and is not screened."""
    by_row: dict[int, list[dict]] = {}
    for e in errors:
        by_row.setdefault(int(e["row"]), []).append(e)
    assert set(by_row) == set(expected)
    for row, field in expected.items():
        (e,) = by_row[row]
        assert e["field"] == field, e
        assert "not a finite number" in e["message"] and "finite number is expected" in e["message"], e
    assert {r["id"] for r in results} == good_ids


def test_non_finite_cells_in_a_uniform_group(tmp_path):
    header = ["id", "contents.mass [kg]", "heat_loss.ua", "heat_sources.0.power [kW]", "limits.0.temperature [degC]"]
    good = ["9000", "180 W/K", "2", "60"]
    rows = [["OK-1"] + good, ["OK-2", "5000", "90 W/K", "1", "55"]]
    expected = {}
    for k, spelling in enumerate(SPELLINGS):
        for col in range(1, 5):
            cells = list(good)
            cells[col - 1] = spelling if col != 2 else f"{spelling} W/K"
            rows.append([f"BAD-{k}-{col}"] + cells)
            expected[len(rows) + 1] = header[col].split(" [")[0]  # row 1 is the header
    results, errors = run(tmp_path, BASE, header, rows)
    assert_each_bad_row_refused(results, errors, expected, {"OK-1", "OK-2"})


@pytest.mark.parametrize("unit", ["", " [%]"])
def test_non_finite_cells_in_a_fraction_column(tmp_path, unit):
    header = ["id", "heat_sources.0.accumulated_fraction" + unit]
    rows = [["OK-1", "0.5" if not unit else "50"], ["OK-2", "100 %" if not unit else "100"]]
    expected = {}
    for k, spelling in enumerate(SPELLINGS):
        for n, cell in enumerate((spelling, f"{spelling} %")):
            rows.append([f"BAD-{k}-{n}", cell])
            expected[len(rows) + 1] = "heat_sources.0.accumulated_fraction"
    results, errors = run(tmp_path, RUNAWAY_BASE, header, rows)
    assert_each_bad_row_refused(results, errors, expected, {"OK-1", "OK-2"})
