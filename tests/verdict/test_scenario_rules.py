"""The default rule set by scenario, on hand-made results.

Thresholds: Stoessel (2008) classes and risk-matrix bounds (from memory, /work/shared/references.md);
every verdict per cell or class is marked "site choice" in rules/default.toml.
"""
from __future__ import annotations

import math

import pytest

from screening.verdict.engine import evaluate
from screening.verdict.quantities import NOT_APPLICABLE, QUANTITIES, _Missing
from screening.verdict.rule_file import load_rule_set

H = 3600.0


@pytest.fixture(scope="module")
def default():
    return load_rule_set()


def result(scenario: str, **changes) -> dict:
    r = {
        "id": "S-1", "scenario": scenario, "limits": [{"name": "quality", "temperature_K": 400.0, "time_s": None,
                                                      "reached": False, "margin_s": None, "margin_note": None}],
        "initial_temperature_K": 300.0, "ambient_temperature_K": 298.15, "horizon_s": 48 * H,
        "response_time_s": 1 * H, "detection_time_s": 0.0, "detection_basis": "delay",
        "limit_exceeded_at_start": False, "adiabatic": {"limits": [], "temperature_rise_K": 0.0},
        "peak_temperature_K": 300.0, "peak_time_s": 0.0, "steady_temperature_K": 300.0, "time_constant_s": H,
        "mixing": "stirred", "biot_number": None, "boiling": None, "recovery": None, "warnings": [],
        "units": {"temperature": "degC"}, "synthesis_sources": [], "decomposition_sources": ["d"],
        "gas_generating_sources": [], "tmr_adiabatic_s": 1000 * H, "t_d24_K": 420.0,
        "decomposition_temperature_rise_K": 100.0, "decomposition_rise_unbounded": False,
        "tmr_at_mtsr_s": None, "mtsr_K": None, "criticality_class": None, "maximum_technical_temperature_K": None,
        "adiabatic_temperature_rise_K": None, "critical_ambient_temperature_K": None,
        "critical_ambient_method": None, "tmr_at_storage_temperature_s": None, "no_return_temperature_K": None,
        "mtt_barrier": None, "gas_in_closed_package": None, "unstirred_hot_start": None,
        "criticality_classes_possible": None, "critical_medium_temperature_K": None,
        "heating_medium_temperature_K": None, "medium_above_t_d24": None,
    }
    if scenario == "cooling-failure":
        r.update(synthesis_sources=["s"], mtsr_K=330.0, tmr_at_mtsr_s=200 * H, criticality_class=1,
                 maximum_technical_temperature_K=373.15, adiabatic_temperature_rise_K=30.0)
    if scenario == "storage":
        r.update(critical_ambient_temperature_K=340.0, critical_ambient_method="semenov",
                 tmr_at_storage_temperature_s=500 * H, gas_in_closed_package=False, unstirred_hot_start=False,
                 detection_basis="unmonitored", detection_time_s=None)
    r.update(changes)
    return r


def ids(v) -> set[str]:
    return {f.rule_id for f in v.fired}


def finding(v, rule_id):
    return next(f for f in v.fired if f.rule_id == rule_id)


def test_probability_and_severity_follow_the_scenario():
    q, s = QUANTITIES["probability_tmr"].extract, QUANTITIES["severity_rise"].extract
    assert q(result("cooling-failure"))[0] == 200 * H
    assert q(result("storage"))[0] == 500 * H
    assert isinstance(q(result("heat-up")), _Missing) and q(result("heat-up")).kind == NOT_APPLICABLE
    assert s(result("storage"))[0] == 100.0
    assert s(result("storage", decomposition_temperature_rise_K=None, decomposition_rise_unbounded=True))[0] == math.inf
    assert s(result("heat-up")).kind == NOT_APPLICABLE


@pytest.mark.parametrize("scenario, tmr_key", [("cooling-failure", "tmr_at_mtsr_s"),
                                                ("storage", "tmr_at_storage_temperature_s")])
@pytest.mark.parametrize("tmr_h, rise, expected, row", [
    (7.999, 30.0, "review", "high probability"),      # < 8 h
    (8.0, 30.0, "review", "medium probability"),      # 8 h belongs to 8-24 h
    (24.0, 300.0, "review", "medium probability"),
    (24.001, 49.99, "pass", "low probability"),       # low severity below 50 K
    (24.001, 200.0, "pass", "low probability"),       # 200 K still medium
    (24.001, 200.01, "review", "low probability"),    # high severity above 200 K
])
def test_matrix_cells_in_both_scenarios(default, scenario, tmr_key, tmr_h, rise, expected, row):
    r = result(scenario, **{tmr_key: tmr_h * H, "decomposition_temperature_rise_K": rise})
    f = finding(evaluate(default, r), "runaway-risk")
    assert f.verdict == expected and f"({row})" in f.reason
    assert ("TMRad at MTSR" if scenario == "cooling-failure" else "TMRad at the storage temperature") in f.reason


def test_heat_up_has_no_runaway_matrix_class_or_critical_ambient(default):
    v = evaluate(default, result("heat-up"))
    for rule in ("runaway-risk", "criticality-3", "criticality-4", "criticality-5", "ambient-at-critical",
                 "ambient-near-critical", "decomposition-data", "gas-closed-package"):
        assert rule in v.not_applicable, rule
    assert v.not_applied == [] and v.verdict == "pass"


def test_storage_rules_and_the_margin(default):
    at = evaluate(default, result("storage", critical_ambient_temperature_K=298.15))
    assert at.verdict == "fail" and "ambient-at-critical" in ids(at)
    near = evaluate(default, result("storage", critical_ambient_temperature_K=298.15 + 9.99))
    assert near.verdict == "review" and "ambient-near-critical" in ids(near)
    ok = evaluate(default, result("storage", critical_ambient_temperature_K=298.15 + 10.0))
    assert ok.verdict == "pass" and "10.0 K below the critical ambient" in finding(ok, "ambient-margin").reason
    gas = evaluate(default, result("storage", gas_in_closed_package=True, gas_generating_sources=["d"]))
    assert gas.verdict == "review" and "gas-closed-package" in ids(gas)
    hot = evaluate(default, result("storage", unstirred_hot_start=True, mixing="unstirred", biot_number=0.05))
    assert hot.verdict == "review" and "hot start" in finding(hot, "unstirred-hot-start").reason
    for rule in ("criticality-3", "criticality-4", "criticality-5", "decomposition-data", "tmr-before-response",
                 "limit-before-response", "margin-short", "horizon-short", "detection-assumed"):
        assert rule in ok.not_applicable, rule


def test_unmonitored_store_fails_when_a_limit_is_reached_within_the_storage_period(default):
    r = result("storage", limits=[{"name": "quality", "temperature_K": 400.0, "time_s": 100 * H, "reached": True,
                                   "margin_s": None, "margin_note": None}])
    v = evaluate(default, r)
    assert v.verdict == "fail"
    f = finding(v, "limit-undetected")
    assert "not monitored" in f.reason and "100 h" in f.reason


def test_cooling_failure_without_decomposition_data_is_one_review(default):
    r = result("cooling-failure", decomposition_sources=[], t_d24_K=None, tmr_at_mtsr_s=None, criticality_class=None,
               decomposition_temperature_rise_K=None, tmr_adiabatic_s=None, criticality_classes_possible=[1, 2])
    v = evaluate(default, r)
    assert v.verdict == "review"
    assert [f.rule_id for f in v.fired] == ["decomposition-data"]  # the matrix and class rules stand back
    assert "T_D24 must be measured" in v.reasons[0] and "1 or 2" in v.reasons[0]


@pytest.mark.parametrize("cls, barrier, verdict, rule", [
    (1, None, "pass", None), (2, None, "pass", None),
    (3, False, "review", "criticality-3"), (3, True, "review", "criticality-3"),
    (4, False, "fail", "criticality-4"), (4, True, "review", "criticality-4-barrier"),
    (5, False, "fail", "criticality-5"), (5, True, "fail", "criticality-5"),
])
def test_criticality_classes_and_the_barrier_at_the_mtt(default, cls, barrier, verdict, rule):
    r = result("cooling-failure", criticality_class=cls, mtt_barrier=barrier, tmr_at_mtsr_s=100 * H,
               decomposition_temperature_rise_K=30.0)
    v = evaluate(default, r)
    crit = {f.rule_id for f in v.fired if f.rule_id.startswith("criticality")}
    assert crit == ({rule} if rule else set())
    assert v.verdict == verdict


def test_detection_assumed_review_only_when_it_would_otherwise_pass(default):
    reached = [{"name": "quality", "temperature_K": 400.0, "time_s": 5 * H, "reached": True, "margin_s": 4 * H,
                "margin_note": "detection assumed at t = 0 (no detection block)"}]
    v = evaluate(default, result("heat-up", detection_basis="assumed", limits=reached))
    assert v.verdict == "review" and ids(v) == {"detection-assumed"}
    assert "detection is assumed at t = 0" in v.reasons[0]
    late = [dict(reached[0], time_s=0.5 * H, margin_s=-0.5 * H)]  # before detection plus response: the fail stands alone
    v = evaluate(default, result("heat-up", detection_basis="assumed", limits=late))
    assert v.verdict == "fail" and "detection-assumed" not in ids(v)
    stated = evaluate(default, result("heat-up", detection_basis="alarm", limits=reached))
    assert "detection-assumed" in stated.not_applicable


def test_heating_medium_rules(default):
    at = evaluate(default, result("heat-up", critical_medium_temperature_K=400.0, heating_medium_temperature_K=400.0,
                                  medium_above_t_d24=False))
    assert at.verdict == "fail" and "medium-at-critical" in ids(at)
    above = evaluate(default, result("heat-up", critical_medium_temperature_K=500.0,
                                     heating_medium_temperature_K=430.0, medium_above_t_d24=True))
    assert above.verdict == "review" and "hotter than T_D24" in finding(above, "medium-above-t-d24").reason
