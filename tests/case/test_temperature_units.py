"""Temperature spellings: every one pint knows is read correctly or refused, everywhere a temperature is read.

Reference values:
* pint (the reference library; the same registry heatscreen uses) converts each spelling of its registry: an
  absolute temperature with ``Quantity(value, spelling).to("kelvin")``, a difference as the difference of two
  such temperatures (or a ``delta_`` unit converted directly), a compound unit with the temperature unit read as
  a difference (pint's ``delta_`` unit for an offset scale).
* Definitions of the scales (exact; common practice): T[K] = T[degC] + 273.15; T[K] = (T[degF] + 459.67) * 5/9;
  1 degR = 5/9 K; a temperature unit inside a compound unit is a difference (references.md: 950 Btu/(h degF)
  = 501.15 W/K).  The Reaumur scale, 1 degRe = 5/4 K from the ice point 273.15 K, is from pint's definitions
  (checked against pint below, not recalled).

Before this rule, ``45 degreeC`` was read as 12,336.75 K, ``45 (degC)`` and ``45 degC*m/m`` as 45 K, and a
difference ``2 degreeC`` as 548.3 K; the tests below fail on that behaviour.
"""
from __future__ import annotations

import csv
import json
import math
import subprocess
import sys

import pint
import pytest
import yaml

from screening.case.files import load_case_bytes
from screening.case.prepare import prepare_case
from screening.case.schema import CaseError
from screening.case.uncertainty_plan import plan_uncertainty
from screening.case.units import (
    UnitError,
    kelvin_to,
    parse_quantity,
    temperature_unit_of,
)
from screening.register.batch import run_batch
from screening.result import public_result
from screening.run.allowable_values import (
    find_allowable_values,
    locate_input,
    parse_bound,
)
from screening.run.screen_case import screen_prepared
from screening.verdict.rule_file import RuleSetError, apply_rules, parse_rule_set

UREG = pint.UnitRegistry()  # the reference library
TEMPERATURE = UREG.get_dimensionality("[temperature]")


def _is_temperature(name: str) -> bool:
    try:
        return UREG.get_dimensionality(name) == TEMPERATURE
    except Exception:  # a name pint lists but cannot look up on its own ('%', 'R_∞')
        return False


# Every spelling in pint's registry (names, symbols, aliases) with the dimension of temperature.
PINT_TEMPERATURE_SPELLINGS = sorted(name for name in UREG if _is_temperature(name))
# The spellings of pint's five temperature scales, which must be read (not refused) as temperatures.
SCALES = ("kelvin", "degree_Celsius", "degree_Fahrenheit", "degree_Rankine", "degree_Reaumur")
SCALE_SPELLINGS = [n for n in PINT_TEMPERATURE_SPELLINGS if UREG.get_name(n) in SCALES]
DIFFERENCE_SPELLINGS = [n for n in PINT_TEMPERATURE_SPELLINGS if UREG.get_name(n).startswith("delta_")]
# What a refusal lists: the accepted spellings of every scale.
LISTED = ("K (also kelvin", "degC (also °C, celsius, degree_Celsius, degreeC", "degF (also °F", "degreeF",
          "degR (also °R", "degRe (also °Re, reaumur")


def _is_offset(name: str) -> bool:
    # a scale whose zero is not absolute zero (pint's offset units)
    return UREG.Quantity(0.0, name).to("kelvin").magnitude != 0.0


def _pint_absolute(value: float, name: str) -> float:
    return UREG.Quantity(value, name).to("kelvin").magnitude


def _pint_difference(value: float, name: str) -> float:
    if _is_offset(name):  # the difference of two temperatures on that scale
        return (UREG.Quantity(45.0 + value, name) - UREG.Quantity(45.0, name)).to("kelvin").magnitude
    return UREG.Quantity(value, name).to("kelvin").magnitude


def _refused(text: str, dimension: str) -> str:
    with pytest.raises(UnitError) as info:
        parse_quantity(text, dimension)
    return str(info.value)


def test_the_registry_has_the_spellings_this_file_is_about():
    # a guard against an empty or changed registry making the generated tests vacuous (pint's definitions)
    assert {"degreeC", "degreeF", "degRe", "reaumur", "planck_temperature", "degC", "K"} <= set(
        PINT_TEMPERATURE_SPELLINGS)
    assert len(SCALE_SPELLINGS) >= 25 and len(DIFFERENCE_SPELLINGS) >= 20


# --------------------------------------------------------------------------- every spelling in pint's registry


@pytest.mark.parametrize("name", PINT_TEMPERATURE_SPELLINGS)
def test_every_pint_temperature_spelling_is_the_same_temperature_or_refused(name):
    for value in (-40.0, 0.0, 45.0, 1000.0):
        try:
            got = parse_quantity(f"{value:g} {name}", "temperature").value
        except UnitError as exc:
            message = str(exc)
            assert all(part in message for part in LISTED), message
            assert name not in SCALE_SPELLINGS, f"{name!r} is a temperature scale pint knows; it must be read"
            continue
        assert got == pytest.approx(_pint_absolute(value, name), rel=1e-13, abs=1e-9)  # pint


@pytest.mark.parametrize("name", SCALE_SPELLINGS)
def test_every_spelling_of_the_five_scales_is_read_and_matches_degc_and_k(name):
    # 45 of each scale, then the same temperature written in degC and in K, all three agreeing (pint)
    kelvin = parse_quantity(f"45 {name}", "temperature").value
    assert kelvin == pytest.approx(_pint_absolute(45.0, name), rel=1e-14)
    in_degc = UREG.Quantity(45.0, name).to("degC").magnitude
    assert parse_quantity(f"{in_degc!r} degC", "temperature").value == pytest.approx(kelvin, rel=1e-14)
    assert parse_quantity(f"{kelvin!r} K", "temperature").value == pytest.approx(kelvin, rel=1e-14)
    # and the same in redundant parentheses
    assert parse_quantity(f"45 ({name})", "temperature").value == kelvin


@pytest.mark.parametrize("name", DIFFERENCE_SPELLINGS)
def test_difference_units_are_refused_for_a_temperature(name):
    message = _refused(f"3 {name}", "temperature")
    assert "temperature difference" in message and all(part in message for part in LISTED)


@pytest.mark.parametrize("name", PINT_TEMPERATURE_SPELLINGS)
def test_every_pint_temperature_spelling_as_a_difference_is_right_or_refused(name):
    try:
        got = parse_quantity(f"2 {name}", "temperature_difference").value
    except UnitError as exc:
        assert all(part in str(exc) for part in LISTED) and "delta_degC (also" in str(exc)
        assert name not in SCALE_SPELLINGS and name not in DIFFERENCE_SPELLINGS
        return
    assert got == pytest.approx(_pint_difference(2.0, name), rel=1e-14)  # pint


@pytest.mark.parametrize("name,kelvin_per_degree", [
    ("degC", 1.0), ("degreeC", 1.0), ("delta_degC", 1.0),  # definition of the scales
    ("degF", 5 / 9), ("degreeF", 5 / 9), ("delta_degF", 5 / 9), ("degR", 5 / 9),  # definition of the scales
    ("degRe", 5 / 4), ("reaumur", 5 / 4), ("delta_degRe", 5 / 4),  # pint's definition of the Reaumur scale
])
def test_difference_of_one_degree(name, kelvin_per_degree):
    assert parse_quantity(f"1 {name}", "temperature_difference").value == pytest.approx(kelvin_per_degree,
                                                                                        rel=1e-15)


PREFIXES = ("m", "k", "c", "u", "µ", "M", "milli", "kilo", "micro", "centi", "mega")


@pytest.mark.parametrize("name", SCALE_SPELLINGS + DIFFERENCE_SPELLINGS)
def test_prefixed_temperature_units_are_refused(name):
    # pint reads mK as millikelvin (0.045 K for 45 mK): never a vessel temperature; prefixed offset units
    # (mdegC) pint itself refuses
    for prefix in PREFIXES:
        text = prefix + name
        for dimension in ("temperature", "temperature_difference"):
            message = _refused(f"45 {text}", dimension)
            assert "accepted units" in message, message


@pytest.mark.parametrize("name", PINT_TEMPERATURE_SPELLINGS)
def test_inside_a_compound_unit_every_spelling_is_a_difference_or_refused(name):
    # 950 Btu/(h degF) = 501.15 W/K (references.md): the temperature unit of a compound unit is a difference
    reference_unit = ("delta_" + UREG.get_name(name)) if _is_offset(name) else name
    for template, dimension, si_unit in (("W/{}", "conductance", "W/K"),
                                         ("W/(m^2*{})", "heat_transfer_coefficient", "W/(m^2*K)"),
                                         ("Btu/(lb*{})", "specific_heat", "J/(kg*K)")):
        text = template.format(name)
        try:
            got = parse_quantity(f"3 {text}", dimension).value
        except UnitError:
            assert name not in SCALE_SPELLINGS and name not in DIFFERENCE_SPELLINGS, text
            continue
        pint_text = template.format(reference_unit).replace("Btu", "Btu_it")
        expected = UREG.Quantity(3.0, pint_text).to(si_unit).magnitude  # pint
        assert got == pytest.approx(expected, rel=1e-13), text


def test_absurd_temperature_units_are_refused_alone_and_inside_compound_units():
    for name in ("planck_temperature", "atomic_unit_of_temperature", "a_u_temp"):
        assert "not one of the temperature units accepted here" in _refused(f"1 {name}", "temperature")
        assert "not one of the temperature units accepted here" in _refused(f"1 {name}", "temperature_difference")
        assert f"contains '{name}'" in _refused(f"1 W/{name}", "conductance")
    # W/mK is watts per millikelvin to pint (1000 W/K per unit), not W/(m*K): refused, with the fix
    message = _refused("0.5 W/mK", "conductance")
    assert "'mK' reads as milli-K" in message and "m*K" in message


# --------------------------------------------------------------------------- what users type


@pytest.mark.parametrize("text,kelvin", [
    ("45 degreeC", 318.15), ("45 degC", 318.15), ("45 (degC)", 318.15), ("45 ( (degC) )", 318.15),
    ("45 °C", 318.15), ("45 celsius", 318.15), ("45 degree_Celsius", 318.15), ("45 C", 318.15),
    ("45degC", 318.15),  # definition of the Celsius scale
    ("113 degreeF", 318.15), ("113 fahrenheit", 318.15), ("113 F", 318.15), ("113 (degF)", 318.15),  # degF scale
    ("572.67 degreeR", 318.15), ("572.67 R", 318.15),  # Rankine: 5/9 K (definition)
    ("36 degRe", 318.15), ("36 reaumur", 318.15), ("36 degree_Réaumur", 318.15),  # 36 * 5/4 + 273.15 (pint)
    ("318.15 K", 318.15), ("318.15 kelvin", 318.15), ("318.15 degK", 318.15), ("318.15 (K)", 318.15),
])
def test_spellings_users_type_that_are_read(text, kelvin):
    assert parse_quantity(text, "temperature").value == pytest.approx(kelvin, abs=1e-11)


@pytest.mark.parametrize("text,fragment", [
    ("45 deg C", "did you mean 'degC'?"),
    ("45 °c", "did you mean '°C'?"),
    ("45 Celsius", "did you mean 'celsius'?"),
    ("45 DEGC", "did you mean 'degC'?"),
    ("45 Kelvin", "did you mean 'kelvin'?"),
    ("45 degree C", "did you mean 'degreeC'?"),
    ("45 degC*m/m", "an expression, not one temperature unit"),
    ("45 K*2/2", "an expression, not one temperature unit"),
    ("45 (K)*(K)/K", "an expression, not one temperature unit"),
    ("45 K^2", "is not a temperature"),
    ("1 planck_temperature", "not one of the temperature units accepted here"),
    ("45 mK", "not one of the temperature units accepted here"),
    ("45 delta_degC", "is a temperature difference, not a temperature"),
    ("45 kg", "is not a temperature"),
    ("45 blorbs", "unknown unit 'blorbs'"),
    ("45", "a number without a unit"),
])
def test_near_misses_are_refused_with_the_accepted_spellings(text, fragment):
    message = _refused(text, "temperature")
    assert fragment in message and all(part in message for part in LISTED), message
    assert "expected a temperature (e.g. 30 degC" in message


@pytest.mark.parametrize("text,kelvin", [
    ("2 K", 2.0), ("2 (K)", 2.0), ("2 degreeC", 2.0), ("2 degC", 2.0), ("2 delta_degC", 2.0),  # definition
    ("3.6 degreeF", 2.0), ("3.6 delta_degF", 2.0), ("3.6 degR", 2.0),  # 1 degF difference = 5/9 K (definition)
    ("1.6 degRe", 2.0), ("1.6 delta_degRe", 2.0),  # 1 degRe difference = 5/4 K (pint)
])
def test_differences_users_type(text, kelvin):
    assert parse_quantity(text, "temperature_difference").value == pytest.approx(kelvin, rel=1e-14)


@pytest.mark.parametrize("text", ["2 K*2/2", "2 degC*m/m", "2 mK", "2 planck_temperature", "2 Celsius", "2 deg C"])
def test_difference_near_misses_are_refused(text):
    message = _refused(text, "temperature_difference")
    assert "expected a temperature difference" in message and "delta_degC (also" in message


@pytest.mark.parametrize("text,family", [
    ("45 degreeC", "degC"), ("45 (degC)", "degC"), ("45 degreeF", "degF"), ("45 degreeK", "K"),
    ("45 degreeR", "degR"), ("45 degRe", None), ("45 degC*m/m", None),
])
def test_display_unit_follows_the_scale_written(text, family):
    # a case written in degreeC is reported in degC, like one written in degC
    assert temperature_unit_of(text) == family


def test_common_spellings_do_not_load_pint():
    # `heatscreen check` stays fast: the accepted spellings and the shipped table need no unit registry
    code = ("import sys\n"
            "from screening.case.units import parse_quantity\n"
            "for t, d in [('45 degreeC', 'temperature'), ('45 (degC)', 'temperature'), ('36 degRe', 'temperature'),\n"
            "             ('2 degreeF', 'temperature_difference'), ('2 delta_degC', 'temperature_difference'),\n"
            "             ('4.5 W/(m^2*K)', 'heat_transfer_coefficient'), ('3.4 kJ/(kg*K)', 'specific_heat')]:\n"
            "    parse_quantity(t, d)\n"
            "print('pint' in sys.modules)\n")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True, timeout=120)
    assert out.stdout.strip() == "False"


# --------------------------------------------------------------------------- everywhere a temperature is read

CASE = {
    "id": "T-UNITS",
    "contents": {"mass": "9000 kg", "specific_heat": "3.4 kJ/(kg*K)", "initial_temperature": "30 degC"},
    "heat_loss": {"ambient_temperature": "32 degC", "ua": "2000 W/K"},
    "heat_sources": [{"kind": "constant", "power": "100 kW"}],
    "limits": [{"name": "quality limit", "temperature": "45 degC"}],
    "response_time": "2 h",
}


def _case(**changes) -> dict:
    data = json.loads(json.dumps(CASE))
    for dotted, value in changes.items():
        node = data
        parts = [int(p) if p.isdigit() else p for p in dotted.split(".")]
        for p in parts[:-1]:
            node = node[p]
        node[parts[-1]] = value
    return data


def _screen(data: dict) -> dict:
    loaded = load_case_bytes(yaml.safe_dump(data, sort_keys=False).encode(), "yaml")
    result = screen_prepared(prepare_case(loaded.spec))
    apply_rules(result, None)
    return public_result(result)


def _case_problems(data: dict) -> dict:
    with pytest.raises(CaseError) as info:
        _screen(data)
    return {p.field: p.message for p in info.value.problems}


def test_a_limit_in_degreec_gives_the_verdict_of_degc():
    reference = _screen(_case())
    # the case is not trivial: 45 degC is reached before the response time is out (100 kW, UA 2000 W/K)
    assert reference["verdict"] == "fail" and reference["limits"][0]["reached"]
    for spelling in ("45 degreeC", "45 (degC)", "45 celsius", "45 °C", "113 degreeF", "318.15 kelvin", "36 degRe"):
        got = _screen(_case(**{"limits.0.temperature": spelling}))
        assert got["verdict"] == reference["verdict"], spelling
        assert got["limits"][0]["temperature_K"] == pytest.approx(318.15, abs=1e-11)  # definition of the scales
        assert got["limits"][0]["time_s"] == pytest.approx(reference["limits"][0]["time_s"], rel=1e-9), spelling


@pytest.mark.parametrize("spelling,fragment", [
    ("45 degC*m/m", "an expression"), ("45 Celsius", "did you mean 'celsius'?"),
    ("1 planck_temperature", "not one of the temperature units"), ("45 deg C", "did you mean 'degC'?"),
])
def test_a_limit_in_a_refused_spelling_names_the_field(spelling, fragment):
    problems = _case_problems(_case(**{"limits.0.temperature": spelling}))
    assert fragment in problems["limits.0.temperature"]


def test_refused_spelling_on_the_command_line_exits_2_without_a_traceback(tmp_path, run_cli):
    case = tmp_path / "case.yaml"
    case.write_text(yaml.safe_dump(_case(**{"heat_loss.ambient_temperature": "32 degC*m/m"})), encoding="utf-8")
    out = run_cli("check", case)
    assert out.returncode == 2, out.stdout + out.stderr
    text = out.stdout + out.stderr
    assert "heat_loss.ambient_temperature" in text and "an expression" in text and "Traceback" not in text


def _plan(dist: dict):
    data = _case()
    data["uncertainty"] = {"samples": 100, "inputs": {"contents.initial_temperature": dist}}
    loaded = load_case_bytes(yaml.safe_dump(data, sort_keys=False).encode(), "yaml")
    return plan_uncertainty(loaded.spec)


def test_uncertainty_spreads_and_bounds_in_any_spelling():
    # a spread is a difference: 2 degreeC = 2 K, 3.6 degreeF = 2 K (definition of the scales), 1.6 degRe = 2 K (pint)
    for sd in ("2 K", "2 degreeC", "2 (degC)", "3.6 degreeF", "1.6 degRe", "2 delta_degC"):
        params = _plan({"distribution": "normal", "sd": sd}).inputs[0].params
        assert params["sd"] == pytest.approx(2.0, rel=1e-14), sd
    # bounds are temperatures: 25 degreeC = 298.15 K, 95 degreeF = 308.15 K (definition of the scales)
    params = _plan({"distribution": "uniform", "low": "25 degreeC", "high": "95 degreeF"}).inputs[0].params
    assert params["low"] == pytest.approx(298.15, abs=1e-11)
    assert params["high"] == pytest.approx(308.15, abs=1e-11)


@pytest.mark.parametrize("dist,field,fragment", [
    ({"distribution": "normal", "sd": "2 K*2/2"}, "sd", "an expression"),
    ({"distribution": "normal", "sd": "2 Celsius"}, "sd", "did you mean 'celsius'?"),
    ({"distribution": "uniform", "low": "25 degC*m/m", "high": "35 degC"}, "low", "an expression"),
    ({"distribution": "uniform", "low": "25 degC", "high": "1 planck_temperature"}, "high", "not one of"),
])
def test_uncertainty_refusals_name_the_field(dist, field, fragment):
    with pytest.raises(CaseError) as info:
        _plan(dist)
    problems = {p.field: p.message for p in info.value.problems}
    assert fragment in problems[f"uncertainty.inputs.contents.initial_temperature.{field}"]


def _margin(low: str, high: str) -> dict:
    loaded = load_case_bytes(yaml.safe_dump(_case(), sort_keys=False).encode(), "yaml")
    prepared = prepare_case(loaded.spec)
    _, q, _ = locate_input(prepared.spec, "heat_loss.ambient_temperature")
    return find_allowable_values(prepared, "heat_loss.ambient_temperature", parse_bound(low, q),
                                 parse_bound(high, q), points=9)


def test_margin_bounds_in_degreec_scan_the_same_range_as_degc():
    reference = _margin("0 degC", "40 degC")
    assert reference["range"] == [0.0, 40.0] and reference["changes"]  # not trivial: the verdict changes inside
    assert reference == _margin("0 degreeC", "40 degreeC")
    assert reference == _margin("32 degreeF", "104 (degF)")  # 0 and 40 degC (definition of the Fahrenheit scale)
    assert reference == _margin("273.15 (K)", "313.15 kelvin")


def test_margin_on_the_command_line(tmp_path, run_cli):
    case = tmp_path / "case.yaml"
    case.write_text(yaml.safe_dump(_case()), encoding="utf-8")
    runs = [run_cli("margin", case, "--vary", "heat_loss.ambient_temperature", "--low", low, "--high", high,
                    "--points", "9", "--json") for low, high in (("0 degC", "40 degC"), ("0 degreeC", "40 degreeC"))]
    assert [r.returncode for r in runs] == [0, 0], [r.stderr for r in runs]
    assert json.loads(runs[0].stdout) == json.loads(runs[1].stdout)
    bad = run_cli("margin", case, "--vary", "heat_loss.ambient_temperature", "--low", "0 degC*m/m", "--high",
                  "40 degC")
    assert bad.returncode == 2 and "--low:" in bad.stdout + bad.stderr  # the bound is named
    assert "an expression" in bad.stdout + bad.stderr and "Traceback" not in bad.stdout + bad.stderr


def _batch(tmp_path, name: str, header: list[str], rows: list[list[str]]):
    folder = tmp_path / name
    folder.mkdir()
    with open(folder / "register.csv", "w", newline="", encoding="utf-8") as fh:
        csv.writer(fh).writerows([header, *rows])
    (folder / "base.yaml").write_text(yaml.safe_dump(CASE, sort_keys=False), encoding="utf-8")
    run_batch(folder / "register.csv", folder / "out", base_path=folder / "base.yaml")
    results = json.loads((folder / "out" / "results.json").read_text(encoding="utf-8"))
    with open(folder / "out" / "errors.csv", newline="", encoding="utf-8") as fh:
        errors = list(csv.DictReader(fh))
    return {r["id"]: r for r in results}, errors


def _verdicts_and_limits(results: dict) -> dict:
    return {rid: (r["verdict"], r["limits"][0]["temperature_K"], r["limits"][0]["time_s"])
            for rid, r in results.items()}


def test_register_header_and_cells_in_any_spelling(tmp_path):
    ids = [["A", "40"], ["B", "45"], ["C", "80"]]
    reference, errors = _batch(tmp_path, "degc", ["id", "limits.0.temperature [degC]"], ids)
    assert not errors and len({r["verdict"] for r in reference.values()}) > 1  # not trivial: verdicts differ
    expected = _verdicts_and_limits(reference)
    assert expected["B"][1] == pytest.approx(318.15, abs=1e-11)  # 45 degC (definition of the scale)
    for name, header in (("degreec", "limits.0.temperature [degreeC]"), ("paren", "limits.0.temperature [(degC)]"),
                         ("celsius", "limits.0.temperature [celsius]")):
        got, errors = _batch(tmp_path, name, ["id", header], ids)
        assert not errors, errors
        assert _verdicts_and_limits(got).keys() == expected.keys()
        for rid in expected:
            assert got[rid]["verdict"] == expected[rid][0], (header, rid)
            assert got[rid]["limits"][0]["temperature_K"] == pytest.approx(expected[rid][1], abs=1e-11)
    cells = [["A", "40 degreeC"], ["B", "45 (degC)"], ["C", "176 degreeF"]]  # 80 degC = 176 degF (definition)
    got, errors = _batch(tmp_path, "cells", ["id", "limits.0.temperature"], cells)
    assert not errors, errors
    for rid in expected:
        assert got[rid]["verdict"] == expected[rid][0], rid
        assert got[rid]["limits"][0]["temperature_K"] == pytest.approx(expected[rid][1], abs=1e-11)


def test_register_refuses_a_compound_header_and_cell_by_row_and_field(tmp_path):
    results, errors = _batch(tmp_path, "bad", ["id", "limits.0.temperature [degC*m/m]"], [["A", "40"], ["B", "45"]])
    assert not results
    assert {(e["id"], e["field"]) for e in errors} == {("A", "limits.0.temperature"), ("B", "limits.0.temperature")}
    assert all("an expression" in e["message"] for e in errors)
    results, errors = _batch(tmp_path, "badcell", ["id", "limits.0.temperature"], [["A", "45 degC"],
                                                                                  ["B", "45 Celsius"]])
    assert set(results) == {"A"}
    assert [(e["id"], e["field"]) for e in errors] == [("B", "limits.0.temperature")]
    assert "did you mean 'celsius'?" in errors[0]["message"]


RULES = """
[rule_set]
name = "spellings"

[[rule]]
id = "hot-peak"
quantity = "peak_temperature"
compare = ">="
threshold = "{threshold}"
verdict = "review"
reason = "Peak {{value}} is at or above {{threshold}}."
source = "site choice"
"""

GAP = """
[rule_set]
name = "gap"

[[rule]]
id = "near-critical"
quantity = "critical_ambient_gap"
compare = "<"
threshold = "{threshold}"
verdict = "review"
reason = "x"
source = "site choice"
"""


@pytest.mark.parametrize("threshold", ["60 degC", "60 degreeC", "60 (degC)", "140 degreeF", "333.15 kelvin",
                                       "48 degRe"])
def test_rule_file_temperature_threshold_in_any_spelling(threshold):
    # 60 degC = 140 degF = 333.15 K (definition of the scales) = 48 degRe (pint: 48 * 5/4 + 273.15)
    item = parse_rule_set(RULES.format(threshold=threshold).encode()).items[0]
    assert item.threshold == pytest.approx(333.15, abs=1e-11)


@pytest.mark.parametrize("threshold,fragment", [
    ("60 degC*m/m", "an expression"), ("60 Celsius", "did you mean 'celsius'?"),
    ("1 planck_temperature", "not one of the temperature units"), ("60 mK", "not one of the temperature units"),
])
def test_rule_file_temperature_threshold_refused(threshold, fragment):
    with pytest.raises(RuleSetError) as info:
        parse_rule_set(RULES.format(threshold=threshold).encode())
    [(field, message)] = info.value.errors
    assert field.endswith(".threshold") and fragment in message


@pytest.mark.parametrize("threshold,kelvin", [
    ("10 K", 10.0), ("10 (K)", 10.0), ("10 delta_degC", 10.0), ("10 delta_degreeC", 10.0),  # definition
    ("18 delta_degreeF", 10.0), ("18 degR", 10.0), ("18 degreeR", 10.0),  # 1 degF difference = 5/9 K (definition)
    ("8 delta_degRe", 10.0),  # 1 degRe difference = 5/4 K (pint)
])
def test_rule_file_difference_threshold_in_any_difference_spelling(threshold, kelvin):
    item = parse_rule_set(GAP.format(threshold=threshold).encode()).items[0]
    assert item.threshold == pytest.approx(kelvin, rel=1e-14)


@pytest.mark.parametrize("threshold,fragment", [
    # the rule-file format refuses a temperature scale's own unit as a difference, in every spelling
    ("10 degreeC", "not a temperature difference"), ("10 (degC)", "not a temperature difference"),
    ("10 celsius", "not a temperature difference"), ("18 degreeF", "not a temperature difference"),
    ("8 degRe", "not a temperature difference"), ("8 reaumur", "not a temperature difference"),
    ("10 K*2/2", "an expression"), ("10 mK", "not one of the temperature units"),
])
def test_rule_file_difference_threshold_refused(threshold, fragment):
    with pytest.raises(RuleSetError) as info:
        parse_rule_set(GAP.format(threshold=threshold).encode())
    [(field, message)] = info.value.errors
    assert field.endswith(".threshold") and fragment in message


def test_round_trip_of_the_display_scales():
    # the scales a result is shown in convert back exactly (definition of the scales)
    for text in ("45 degreeC", "113 degreeF", "572.67 degreeR", "318.15 degreeK"):
        family = temperature_unit_of(text)
        number = float(text.split()[0])
        assert math.isclose(kelvin_to(parse_quantity(text, "temperature").value, family), number, abs_tol=1e-9)
