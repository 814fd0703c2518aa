"""Input checks of issue 22: each problem is an input error naming its field (exit 2), or a warning
where the input is possible but suspicious."""
from __future__ import annotations

import copy
from pathlib import Path

import pytest
import yaml

from screening.case.files import load_case_bytes, parse_text
from screening.case.prepare import prepare_case
from screening.case.schema import CaseError

DEMO = Path(__file__).resolve().parents[2] / "screening" / "demo_cases"


def _demo(name: str) -> dict:
    return yaml.safe_load((DEMO / name).read_text(encoding="utf-8"))


def _prepare(case: dict):
    return prepare_case(load_case_bytes(yaml.safe_dump(case).encode("utf-8")).spec)


def _problem(case: dict):
    with pytest.raises(CaseError) as info:
        _prepare(case)
    return info.value.problems[0]


def test_inverted_tested_range_is_an_error():
    c = _demo("fw-r301-reactor.yaml")
    c["heat_sources"][1]["tested_range"] = ["210 degC", "140 degC"]
    p = _problem(c)
    assert p.field == "heat_sources.1.tested_range" and "above the high end" in p.message
    c["heat_sources"][1]["tested_range"] = ["140 degC", "140 degC"]  # one temperature: not inverted
    _prepare(c)


def test_boiling_point_below_the_start():
    open_vessel = _demo("fw-t410-fire-water-tank.yaml")
    open_vessel["contents"]["boiling_point"] = "20 degC"  # starts at 25 degC
    p = _problem(open_vessel)
    assert p.field == "contents.boiling_point" and "open vessel" in p.message
    closed = _demo("fw-r301-reactor.yaml")
    closed["contents"]["boiling_point"] = "70 degC"  # starts at 80 degC
    prepared = _prepare(closed)
    assert any("superheated" in w for w in prepared.warnings)
    assert not any("superheated" in w for w in _prepare(_demo("fw-r301-reactor.yaml")).warnings)


def test_recovery_medium_hotter_than_a_limit_is_a_warning():
    c = _demo("fw-r301-reactor.yaml")
    assert not any(w.startswith("Recovery:") for w in _prepare(c).warnings)  # 20 degC: below both limits
    c["recovery"]["medium_temperature"] = "125 degC"  # above the 118 degC limit, below 135 degC
    ws = [w for w in _prepare(c).warnings if w.startswith("Recovery:")]
    assert len(ws) == 1 and "'boiling point'" in ws[0] and "relief" not in ws[0]


@pytest.mark.parametrize("value", [0, 1.5, "150 %"])
def test_fire_environment_factor_above_0_and_at_most_1(value):
    c = _demo("fw-t410-fire-water-tank.yaml")
    c["heat_sources"][0]["environment_factor"] = value
    assert _problem(c).field == "heat_sources.0.environment_factor"


@pytest.mark.parametrize("diameter", ["1e-300 m", "1e200 m"])
def test_vessel_dimensions_beyond_floating_point_are_an_error(diameter):
    c = _demo("fw-t204-hold-tank.yaml")
    c["vessel"]["diameter"] = diameter
    p = _problem(c)
    assert p.field == "vessel" and f"vessel.diameter = {diameter}" in p.message


@pytest.mark.parametrize("text, what", [("? [a, b]\n: 1\n", "list"), ("a: {? {b: 1} : 2}\n", "mapping"),
                                        ("? !!set {a}\n: 1\n", "mapping")])
def test_a_yaml_key_that_is_not_a_name(text, what):
    with pytest.raises(CaseError) as info:
        parse_text(text.encode(), "yaml")
    assert info.value.problems[0].field == "(file)" and f"a key is a {what}" in info.value.problems[0].message


def test_every_monte_carlo_sample_impossible_is_an_error():
    from screening.run.monte_carlo import analyse

    c = copy.deepcopy(_demo("fw-t204-hold-tank.yaml"))
    c["uncertainty"] = {"samples": 50, "inputs": {"contents.mass": {"distribution": "uniform", "low": "-2 t",
                                                                     "high": "-1 t"}}}
    with pytest.raises(CaseError) as info:
        analyse(_prepare(c))
    assert info.value.problems[0].field == "uncertainty.inputs"
