"""The storage ambient against a package's control temperature (rules/default.toml).

The control temperature comes from the SADT by the UN Model Regulations table (from memory); the rule's
verdicts are a site choice. The rule fires at its threshold (the ambient above the control temperature)
and not below it.
"""
from __future__ import annotations

import pytest

from screening.verdict.engine import evaluate
from screening.verdict.rule_file import load_rule_set

from tests.verdict.test_scenario_rules import result  # noqa: F401  (the hand-made result of that module)

C0 = 273.15


@pytest.fixture(scope="module")
def default():
    return load_rule_set()


def package(ambient_c: float, **changes) -> dict:
    r = result("storage", ambient_temperature_K=C0 + ambient_c, sadt_K=C0 + 45.0, sadt_note="",
               control_temperature_K=C0 + 35.0, emergency_temperature_K=C0 + 40.0,
               sadt={"portable_tank": False, "method": "lumped"})
    r.update(changes)
    return r


def ids(v) -> set[str]:
    return {f.rule_id for f in v.fired}


def test_fires_above_the_control_temperature_and_not_at_it(default):
    above = evaluate(default, package(35.01))
    assert "ambient-above-control" in ids(above) and above.verdict == "fail"
    at = evaluate(default, package(35.0))
    assert "ambient-above-control" not in ids(at) and "ambient-at-or-below-control" in ids(at)
    below = evaluate(default, package(30.0))
    assert "ambient-above-control" not in ids(below) and "ambient-at-or-below-control" in ids(below)
    text = " ".join(f.reason for f in above.fired if f.rule_id == "ambient-above-control")
    assert "35.0 °C" in text and "45.0 °C" in text and "from memory" in text


def test_not_applicable_without_an_sadt(default):
    v = evaluate(default, result("cooling-failure", synthesis_sources=["s"], mtsr_K=330.0, tmr_at_mtsr_s=7.2e5,
                                 criticality_class=1, maximum_technical_temperature_K=373.15,
                                 adiabatic_temperature_rise_K=30.0))
    assert "ambient-above-control" in v.not_applicable
    v = evaluate(default, package(60.0, sadt_K=None, control_temperature_K=None, emergency_temperature_K=None,
                                  sadt_note="above 140.0 °C (413.15 K): no 5 °C step ...",
                                  sadt={"status": "above bound", "portable_tank": False}))
    assert "ambient-above-control" in v.not_applicable and v.verdict != "fail"


def test_a_tank_without_a_control_temperature_is_reviewed(default):
    v = evaluate(default, package(20.0, control_temperature_K=None, emergency_temperature_K=None,
                                  sadt={"portable_tank": True, "method": "lumped"}))
    assert any(f.rule_id == "ambient-above-control" and f.verdict == "review" for f in v.fired) or \
        any(f.rule_id == "ambient-at-or-below-control" and f.verdict == "review" for f in v.fired)
