"""Formula cells in .xlsx registers: the value a spreadsheet program stored, or a row error naming the cell.

openpyxl writes a formula without a value (it does not calculate); a spreadsheet program stores the
formula's result in the cell's <v> element when it saves. The workbooks here are made with openpyxl,
and "saved by a spreadsheet program" is imitated by writing that <v> element into the sheet's XML.
"""
from __future__ import annotations

import csv
import json
import re
import zipfile

import openpyxl
import yaml

from screening.register.batch import run_batch
from screening.register.reading import read_register

BASE = {
    "id": "BASE",
    "contents": {"mass": "9000 kg", "specific_heat": "3 kJ/(kg*K)", "initial_temperature": "25 degC"},
    "heat_loss": {"ambient_temperature": "30 degC", "ua": "150 W/K"},
    "heat_sources": [{"kind": "constant", "power": "1 kW"}],
    "limits": [{"name": "onset", "temperature": "60 degC"}],
    "response_time": "2 h",
}


def _workbook(path, rows):
    wb = openpyxl.Workbook()
    ws = wb.active
    for row in rows:
        ws.append(row)
    wb.save(path)


def _store_values(path, values: dict[str, str], types: dict[str, str] | None = None):
    """Write cached values into formula cells, as a spreadsheet program does when it saves."""
    with zipfile.ZipFile(path) as zf:
        parts = {name: zf.read(name) for name in zf.namelist()}
    sheet = parts["xl/worksheets/sheet1.xml"].decode("utf-8")
    for ref, value in values.items():
        cell = re.compile(rf'<c r="{ref}"([^>]*)>(<f>.*?</f>)<v\s*/>(</c>)')
        kind = f' t="{types[ref]}"' if types and ref in types else ""
        sheet, n = cell.subn(lambda m: f'<c r="{ref}"{kind}>{m.group(2)}<v>{value}</v>{m.group(3)}', sheet)
        assert n == 1, (ref, sheet)
    parts["xl/worksheets/sheet1.xml"] = sheet.encode("utf-8")
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as zf:
        for name, data in parts.items():
            zf.writestr(name, data)


def _run(tmp_path, reg):
    base = tmp_path / "base.yaml"
    base.write_text(yaml.safe_dump(BASE, sort_keys=False), encoding="utf-8")
    out = tmp_path / "out"
    summary = run_batch(reg, out, base_path=base)
    results = {r["register_row"]: r for r in json.loads((out / "results.json").read_text(encoding="utf-8"))}
    with open(out / "errors.csv", newline="", encoding="utf-8") as fh:
        errors = list(csv.DictReader(fh))
    return summary, results, errors


def test_formula_cells_use_stored_values_and_report_missing_ones(tmp_path):
    reg = tmp_path / "register.xlsx"
    _workbook(reg, [
        ["id", "contents.mass [kg]", "heat_loss.ua [W/K]", "limits.0.name"],
        ["CACHED", 9000, "=100*2", "onset"],           # row 2: value stored (200)
        ["MISSING", 9000, "=100*2", "onset"],          # row 3: no value stored
        ["PLAIN", 9000, 180, "onset"],                 # row 4
        ["TEXT", 9000, 180, '="on"&"set"'],            # row 5: a text formula, value stored
        ["SHORT", "=4500*2", 120, "onset"],            # row 6: no value stored, another column
    ])
    _store_values(reg, {"C2": "200", "D5": "onset"}, types={"D5": "str"})
    summary, results, errors = _run(tmp_path, reg)
    # the stored value is used, not the base case's 150 W/K
    assert results[2]["ua_W_per_K"] == 200.0  # =100*2 (arithmetic)
    assert results[4]["ua_W_per_K"] == 180.0 and results[5]["limits"][0]["name"] == "onset"
    # a formula without a stored value is a row error naming the field and the cell, saying what to do
    assert 3 not in results and 6 not in results
    by_row = {int(e["row"]): e for e in errors}
    assert set(by_row) == {3, 6}
    assert by_row[3]["field"] == "heat_loss.ua" and by_row[3]["id"] == "MISSING"
    assert "cell C3" in by_row[3]["message"] and "=100*2" in by_row[3]["message"]
    assert "save it" in by_row[3]["message"] and "paste the values" in by_row[3]["message"]
    assert by_row[6]["field"] == "contents.mass" and "cell B6" in by_row[6]["message"]
    assert summary["valid"] == 3 and summary["invalid"] == 2 and summary["exit_code"] == 2


def test_a_row_of_only_formulas_without_values_is_reported_not_skipped(tmp_path):
    reg = tmp_path / "register.xlsx"
    _workbook(reg, [["id", "heat_loss.ua [W/K]"], ["A", 100], ['="B"', "=90+0"], ["C", 110]])
    _, results, errors = _run(tmp_path, reg)
    assert sorted(results) == [2, 4]
    assert {(e["row"], e["field"]) for e in errors} == {("3", "id"), ("3", "heat_loss.ua")}


def test_a_stored_spreadsheet_error_is_a_row_error(tmp_path):
    reg = tmp_path / "register.xlsx"
    _workbook(reg, [["id", "title", "heat_loss.ua [W/K]"], ["A", "=1/0", 100], ["B", "fine", 110]])
    _store_values(reg, {"B2": "#DIV/0!"}, types={"B2": "e"})
    _, results, errors = _run(tmp_path, reg)
    assert sorted(results) == [3]
    assert [(e["row"], e["field"]) for e in errors] == [("2", "title")]
    assert "cell B2" in errors[0]["message"] and "#DIV/0!" in errors[0]["message"]


def test_a_header_formula_without_a_value_is_reported(tmp_path):
    reg = tmp_path / "register.xlsx"
    _workbook(reg, [["id", '="heat_loss.ua [W/K]"'], ["A", 100]])
    register = read_register(reg)
    assert [p.field for p in register.header_problems] == ["(column 2)"]
    assert "cell B1" in register.header_problems[0].message
    _, results, errors = _run(tmp_path, reg)
    assert results == {} and {e["field"] for e in errors} >= {"(column 2)"}


def test_a_workbook_without_formulas_reads_as_before(tmp_path):
    reg = tmp_path / "register.xlsx"
    _workbook(reg, [["id", "heat_loss.ua [W/K]"], ["A", 100], ["B", "-5"]])
    register = read_register(reg)
    assert register.cell_problems == {} and register.rows == [["A", "100"], ["B", "-5"]]
