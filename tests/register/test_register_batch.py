"""Registers: every row accounted for, rows equal case files, CSV equals Excel."""
from __future__ import annotations

import csv
import json
import math
import os
import subprocess
import sys
from pathlib import Path

import pytest
import yaml
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from screening.case.files import load_case_bytes
from screening.case.schema import CaseError
from screening.case.prepare import prepare_case
from screening.verdict.rule_file import apply_rules
from screening.register.batch import run_batch
from screening.register.outputs import people_text
from screening.result import public_result
from screening.run.screen_case import screen_prepared

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "screening" / "demo_cases" / "registers"

BASE = {
    "id": "BASE",
    "contents": {"specific_heat": "3 kJ/(kg*K)", "initial_temperature": "25 degC"},
    "heat_loss": {"ambient_temperature": "30 degC", "ua": "100 W/K"},
    "heat_sources": [{"kind": "constant", "power": "1 kW"},
                     {"kind": "decaying", "power": "10 kW", "time_constant": "3 h"}],
    "limits": [{"name": "onset", "temperature": "60 degC"}],
    "response_time": "2 h",
}
HEADER = ["id", "contents.mass [kg]", "contents.specific_heat", "heat_loss.ua [W/K]",
          "heat_sources.1.power", "heat_sources.1.time_constant [h]", "limits.0.temperature [degC]"]


def write_csv(path: Path, header, rows):
    with open(path, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(header)
        w.writerows(rows)


def row_case(row: dict) -> dict:
    """The case file equivalent of a register row (the reference path)."""
    import copy

    data = copy.deepcopy(BASE)
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


def screen_case_dict(data: dict):
    raw = yaml.safe_dump(data, sort_keys=False).encode()
    try:
        loaded = load_case_bytes(raw, "yaml")
        result = screen_prepared(prepare_case(loaded.spec))
    except CaseError as exc:
        return None, sorted((p.field, p.message) for p in exc.problems)
    apply_rules(result, None)
    return public_result(result), []


def run(tmp_path, header, rows, base=BASE, **kw):
    reg = tmp_path / "register.csv"
    write_csv(reg, header, rows)
    base_file = tmp_path / "base.yaml"
    base_file.write_text(yaml.safe_dump(base, sort_keys=False), encoding="utf-8")
    out = tmp_path / "out"
    summary = run_batch(reg, out, base_path=base_file, **kw)
    results = json.loads((out / "results.json").read_text(encoding="utf-8"))
    with open(out / "errors.csv", newline="", encoding="utf-8") as fh:
        errors = list(csv.DictReader(fh))
    return summary, results, errors, out


def close(a, b, rel=1e-9):
    if a is None or b is None:
        return a is None and b is None
    if isinstance(a, float) or isinstance(b, float):
        return math.isclose(a, b, rel_tol=rel, abs_tol=1e-9)
    return a == b


def assert_same_result(batch: dict, single: dict):
    for key in ("id", "verdict", "time_constant_s", "peak_temperature_K", "peak_time_s", "steady_temperature_K",
                "heat_capacity_J_per_K", "ua_W_per_K"):
        assert close(batch[key], single[key]), (key, batch[key], single[key])
    for lb, ls in zip(batch["limits"], single["limits"], strict=True):
        assert lb["name"] == ls["name"]
        assert close(lb["time_s"], ls["time_s"]), (lb, ls)
        assert close(lb["margin_s"], ls["margin_s"]), (lb, ls)
    assert batch["reasons"] == single["reasons"]
    assert [(i["field"], i["text"]) for i in batch["inputs"]] == [(i["field"], i["text"]) for i in single["inputs"]]


cells = st.fixed_dictionaries({
    "id": st.sampled_from(["A-1", "B-2", "C-3"]),
    "contents.mass [kg]": st.one_of(st.integers(-100, 50000).map(str), st.just("12x"), st.just("")),
    "contents.specific_heat": st.sampled_from(["", "2 kJ/(kg*K)", "0.9 Btu/(lb*degF)", "3 m", "4 blorbs"]),
    "heat_loss.ua [W/K]": st.one_of(st.floats(0, 800, allow_nan=False).map(lambda v: f"{v:.6g}"), st.just("-5")),
    "heat_sources.1.power": st.sampled_from(["", "5 kW", "40 kW", "1.2e5 Btu/h", "-1 kW"]),
    "heat_sources.1.time_constant [h]": st.sampled_from(["", "0.5", "3", "48", "0"]),
    "limits.0.temperature [degC]": st.sampled_from(["40", "55", "80", "-300"]),
})


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(rows=st.lists(cells, min_size=1, max_size=8))
def test_row_and_equivalent_case_file_agree(tmp_path_factory, rows):
    """A register row and the equivalent case file give the same result or the same errors."""
    tmp = tmp_path_factory.mktemp("reg")
    summary, results, errors, _ = run(tmp, HEADER, [[r[h] for h in HEADER] for r in rows])
    by_row = {r["register_row"]: r for r in results}
    errs: dict[int, list] = {}
    for e in errors:
        errs.setdefault(int(e["row"]), []).append((e["field"], e["message"]))
    for n, row in enumerate(rows, start=2):
        single, problems = screen_case_dict(row_case(row))
        if single is None:
            assert n not in by_row
            # errors.csv is written for people: a message a spreadsheet would evaluate carries an apostrophe
            assert sorted(errs.get(n, [])) == sorted((f, people_text(m)) for f, m in problems)
        else:
            assert n in by_row and n not in errs
            assert_same_result(by_row[n], single)
    assert summary["valid"] + summary["invalid"] == len(rows)


def test_bad_cells_reported_by_row_and_field_and_others_screened(tmp_path):
    header = HEADER + ["contents.colour"]
    rows = [
        ["OK-1", "9000", "", "180", "", "", "60", ""],
        ["BAD-UNIT", "9000", "3 blorbs", "180", "", "", "60", ""],
        ["BAD-DIM", "9000", "3 m", "180", "", "", "60", ""],
        ["NEG", "-5", "", "180", "", "", "60", ""],
        ["UNKNOWN-COL", "9000", "", "180", "", "", "60", "blue"],
        ["MANY", "-5", "3 m", "-1", "", "", "60", ""],
        ["OK-2", "12000", "2 kJ/(kg*K)", "80", "30 kW", "2", "55", ""],
    ]
    summary, results, errors, out = run(tmp_path, header, rows)
    assert sorted(r["id"] for r in results) == ["OK-1", "OK-2"]
    fields = {(int(e["row"]), e["field"]) for e in errors}
    assert (3, "contents.specific_heat") in fields
    assert (4, "contents.specific_heat") in fields
    assert (5, "contents.mass") in fields
    assert (6, "contents.colour") in fields
    many = [e for e in errors if e["row"] == "7"]
    assert {e["field"] for e in many} == {"contents.mass", "contents.specific_heat", "heat_loss.ua"}
    assert summary["exit_code"] == 2
    msg = next(e["message"] for e in errors if e["row"] == "3")
    assert "blorbs" in msg
    # every row is in the results or in the errors
    accounted = {r["register_row"] for r in results} | {int(e["row"]) for e in errors}
    assert accounted == set(range(2, 2 + len(rows)))


def test_row_outside_the_vectorised_engine_range_is_screened_by_the_scalar_engine(tmp_path):
    """An absurd but valid row (heat capacity 3e31 J/K, over the vectorised engine's 1e30) must not stop
    the run: it is screened like `check` screens the same case, and the other rows as usual."""
    rows = [["HUGE", "1e28", "", "180", "", "", "60"], ["OK", "9000", "", "180", "", "", "60"]]
    summary, results, errors, _ = run(tmp_path, HEADER, rows)
    assert errors == [] and summary["valid"] == 2
    by_id = {r["id"]: r for r in results}
    for rid, row in zip(("HUGE", "OK"), rows):
        single, problems = screen_case_dict(row_case(dict(zip(HEADER, row))))
        assert problems == []
        assert_same_result(by_id[rid], single)
    assert by_id["HUGE"]["heat_capacity_J_per_K"] == pytest.approx(3e31, rel=1e-12)


def test_missing_column_reported_for_every_row(tmp_path):
    base = {k: v for k, v in BASE.items() if k != "limits"}
    summary, results, errors, _ = run(tmp_path, ["id", "contents.mass [kg]"], [["A", "100"], ["B", "200"]], base=base)
    assert results == []
    assert [(e["row"], e["field"]) for e in errors] == [("2", "limits"), ("3", "limits")]


def test_csv_and_xlsx_give_the_same_results(tmp_path):
    openpyxl = pytest.importorskip("openpyxl")
    rows = [["X-1", "9000", "3.4 kJ/(kg*K)", "180", "35 kW", "4", "60"],
            ["X-2", "1500.5", "", "12.25", "", "0.75", "45"]]
    csv_dir = tmp_path / "c"
    csv_dir.mkdir()
    _, from_csv, _, _ = run(csv_dir, HEADER, rows)
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(HEADER)
    for r in rows:  # numbers as numbers, texts as texts, as a spreadsheet would hold them
        ws.append([float(c) if c.replace(".", "", 1).isdigit() else c for c in r])
    xlsx = tmp_path / "register.xlsx"
    wb.save(xlsx)
    base_file = tmp_path / "base.yaml"
    base_file.write_text(yaml.safe_dump(BASE), encoding="utf-8")
    run_batch(xlsx, tmp_path / "xo", base_path=base_file)
    from_xlsx = json.loads((tmp_path / "xo" / "results.json").read_text(encoding="utf-8"))
    for a, b in zip(from_csv, from_xlsx, strict=True):
        a = {k: v for k, v in a.items() if k != "input_hash"}
        b = {k: v for k, v in b.items() if k != "input_hash"}
        assert a == b


def test_case_file_column_is_confined_to_the_register_folder(tmp_path):
    (tmp_path / "cases").mkdir()
    (tmp_path / "cases" / "v1.yaml").write_text(yaml.safe_dump({"id": "V1", "contents": {"mass": "5 t"}}))
    outside = tmp_path.parent / "outside-case.yaml"
    outside.write_text(yaml.safe_dump({"id": "EVIL"}))
    header = ["case_file", "limits.0.temperature [degC]"]
    rows = [["cases/v1.yaml", "50"], [f"../{outside.name}", "50"], ["cases/missing.yaml", "50"]]
    summary, results, errors, _ = run(tmp_path, header, rows)
    assert [r["id"] for r in results] == ["V1"]
    assert results[0]["heat_capacity_J_per_K"] == pytest.approx(5000 * 3000)
    messages: dict[str, str] = {}
    for e in errors:
        messages[e["row"]] = messages.get(e["row"], "") + " | " + e["field"] + ": " + e["message"]
    assert "case_file: " in messages["3"] and "outside" in messages["3"]
    assert "no case file" in messages["4"]


def test_output_set_is_replaced_whole_and_failures_leave_the_old_set(tmp_path):
    rows = [["A", "9000", "", "180", "", "", "60"]]
    _, _, _, out = run(tmp_path, HEADER, rows)
    before = {p.name: p.read_bytes() for p in out.iterdir()}
    assert set(before) >= {"results.json", "results.csv", "errors.csv", "summary.pdf"}
    bad_rules = tmp_path / "bad.toml"
    bad_rules.write_text("not toml [[[")
    from screening.verdict.rule_file import RuleSetError

    with pytest.raises(RuleSetError):
        run_batch(tmp_path / "register.csv", out, base_path=tmp_path / "base.yaml", rules_path=bad_rules)
    assert {p.name: p.read_bytes() for p in out.iterdir()} == before
    leftovers = [p.name for p in tmp_path.iterdir() if p.name.startswith(".out")]
    assert leftovers == []


def test_cli_batch_exit_codes_and_diff(tmp_path):
    reg = tmp_path / "r.csv"
    write_csv(reg, HEADER, [["A", "9000", "", "180", "", "", "60"], ["B", "900", "", "180", "500 kW", "1", "30"]])
    base = tmp_path / "base.yaml"
    base.write_text(yaml.safe_dump(BASE))
    cmd = [sys.executable, "-m", "screening.cli"]
    p1 = subprocess.run(cmd + ["batch", str(reg), "--out", str(tmp_path / "run1"), "--base", str(base)],
                        capture_output=True, text=True, cwd=ROOT, timeout=300)
    assert p1.returncode == 1, p1.stderr  # all valid, one not pass
    write_csv(reg, HEADER, [["A", "9000", "", "60", "", "", "60"], ["B", "900", "", "180", "500 kW", "1", "30"],
                            ["C", "-1", "", "180", "", "", "60"]])
    p2 = subprocess.run(cmd + ["batch", str(reg), "--out", str(tmp_path / "run2"), "--base", str(base)],
                        capture_output=True, text=True, cwd=ROOT, timeout=300)
    assert p2.returncode == 2
    assert "Traceback" not in p2.stderr
    d = subprocess.run(cmd + ["diff", str(tmp_path / "run1"), str(tmp_path / "run2"), "--csv", str(tmp_path / "d.csv")],
                       capture_output=True, text=True, cwd=ROOT, timeout=120)
    assert d.returncode == 1
    assert "A" in d.stdout and "heat_loss.ua" in d.stdout
    rows = list(csv.DictReader(open(tmp_path / "d.csv", encoding="utf-8")))
    assert [r["id"] for r in rows] == ["A"]


def test_demo_register_screens(tmp_path):
    summary = run_batch(DEMO / "fenmarsh-register.csv", tmp_path / "demo", base_path=DEMO / "fenmarsh-base.yaml")
    assert summary["rows"] == 36 and summary["invalid"] == 2
