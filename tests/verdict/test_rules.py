"""Tests for the rule-set loader and the verdict engine (screening.verdict).

Where a check value is a number from outside the project its source is named
beside it.  Thresholds of the shipped default rule set come from
/work/shared/references.md (Stoessel 2008 classes, from memory; Incropera
ch. 5 Biot criterion) or are marked "site choice" in the rule file itself.
"""
from __future__ import annotations

import copy
import hashlib
import json
import pickle
import time
from pathlib import Path

import pytest

from screening.verdict import engine, rule_file
from screening.verdict.rule_file import RuleSetError, load_rule_set, parse_rule_set
from screening.verdict.engine import apply_verdict, evaluate

H = 3600.0
REPO_RULES = Path(__file__).resolve().parents[2] / "rules"


# ---------------------------------------------------------------- helpers
def base_result(**changes) -> dict:
    """A small hand-made result that passes the default rule set.

    One limit not reached within a 48 h horizon, 1 h response time, alarm at
    t = 0, stirred contents, no Arrhenius source.
    """
    r = {
        "id": "T-1",
        "title": None,
        "time_constant_s": 20 * H,
        "peak_temperature_K": 320.0,
        "peak_time_s": 48 * H,
        "steady_temperature_K": 330.0,
        "initial_temperature_K": 300.0,
        "ambient_temperature_K": 298.15,
        "horizon_s": 48 * H,
        "heat_capacity_J_per_K": 4.0e6,
        "ua_W_per_K": 50.0,
        "limits": [{"name": "quality", "temperature_K": 340.0, "time_s": None, "reached": False,
                    "margin_s": None}],
        "limit_exceeded_at_start": False,
        "response_time_s": 1 * H,
        "detection_time_s": 0.0,
        "adiabatic": {"limits": [{"name": "quality", "time_s": 30 * H}], "temperature_rise_K": 60.0},
        "tmr_adiabatic_s": None,
        "tmr_at_mtsr_s": None,
        "t_d24_K": None,
        "critical_ambient_temperature_K": None,
        "critical_ambient_method": None,
        "critical_temperature_K": None,
        "no_return_temperature_K": None,
        "adiabatic_temperature_rise_K": None,
        "mtsr_K": None,
        "maximum_technical_temperature_K": None,
        "criticality_class": None,
        "biot_number": None,
        "mixing": "stirred",
        "boiling": None,
        "recovery": None,
        "warnings": [],
        "inputs": [],
        "units": {"temperature": "degC"},
        "meta": {},
        "tool_version": "test",
        "input_hash": "0" * 64,
    }
    r.update(changes)
    return r


def runaway_result(**changes) -> dict:
    """A result with an Arrhenius source whose runaway checks are all clear."""
    r = base_result(
        tmr_adiabatic_s=500 * H,
        tmr_at_mtsr_s=200 * H,
        t_d24_K=420.0,
        critical_ambient_temperature_K=340.0,
        critical_ambient_method="semenov",
        critical_temperature_K=350.0,
        no_return_temperature_K=380.0,
        adiabatic_temperature_rise_K=30.0,
        mtsr_K=330.0,
        maximum_technical_temperature_K=373.15,
        criticality_class=1,
    )
    r.update(changes)
    return r


def reached(name="quality", t=5 * H, temperature=340.0):
    return {"name": name, "temperature_K": temperature, "time_s": t, "reached": True, "margin_s": None}


@pytest.fixture(scope="module")
def default():
    return load_rule_set()


def fired_ids(v) -> set[str]:
    return {f.rule_id for f in v.fired}


def fired(v, rule_id):
    return next((f for f in v.fired if f.rule_id == rule_id), None)


# ---------------------------------------------------------------- default set basics
def test_default_loads_and_hash_is_sha256_of_file_bytes(default):
    data = (REPO_RULES / "default.toml").read_bytes()
    assert default.hash == hashlib.sha256(data).hexdigest()  # Python hashlib (reference library)
    assert default.name == "heatscreen default"
    every = ["limit-at-start", "limit-before-response", "limit-undetected", "margin-short",
             "horizon-short", "runaway-risk", "ambient-at-critical", "ambient-near-critical",
             "biot-unstirred", "criticality-3", "criticality-4", "criticality-5"]
    assert set(every) <= set(default.rule_ids)


def test_every_default_entry_names_a_source(default):
    for item in default.items:
        assert item.source.strip(), item.id


def test_benign_case_passes_and_says_what_was_checked(default):
    v = evaluate(default, base_result())
    assert v.verdict == "pass"
    assert v.fired == []
    assert len(v.reasons) == 1
    text = v.reasons[0]
    assert "limit-before-response" in v.not_applicable  # no limit is reached within the horizon
    assert "Checked:" in text and "horizon-short" in text
    assert "Not applicable" in text and "runaway-risk" in text
    assert "does not show that the vessel is safe" in text
    assert v.rule_set_name == default.name and v.rule_set_hash == default.hash


def test_apply_verdict_writes_json_ready_keys(default):
    r = base_result(limits=[reached(t=1.5 * H)])
    v = evaluate(default, r)
    out = apply_verdict(r, v)
    assert out is r
    assert r["verdict"] == v.verdict
    assert r["reasons"] == v.reasons
    assert r["rule_set"] == {"name": default.name, "hash": default.hash}
    json.dumps(r)
    json.dumps(v.to_dict())


def test_evaluate_does_not_change_the_result(default):
    r = runaway_result(limits=[reached(t=0.5 * H)])
    before = copy.deepcopy(r)
    evaluate(default, r)
    assert r == before


# ---------------------------------------------------------------- time-to-limit rules
def test_limit_at_start_fails(default):
    r = base_result(limits=[reached(t=0.0, temperature=290.0)], limit_exceeded_at_start=True)
    v = evaluate(default, r)
    assert v.verdict == "fail"
    f = fired(v, "limit-at-start")
    assert f is not None and "'quality'" in f.reason and "26.9 °C" in f.reason  # 300 K - 273.15
    # the general margin rule stands back for the more specific one
    assert "limit-before-response" not in fired_ids(v)


def test_limit_at_start_false_does_not_fire(default):
    assert "limit-at-start" not in fired_ids(evaluate(default, base_result()))


def test_margin_zero_fails_at_threshold(default):
    # detection 0.5 h + response 1 h = 1.5 h; limit at 1.5 h gives margin 0 (rule: <= 0 h)
    r = base_result(detection_time_s=0.5 * H, limits=[reached(t=1.5 * H)])
    v = evaluate(default, r)
    assert v.verdict == "fail"
    f = fired(v, "limit-before-response")
    assert "1.5 h" in f.reason and "'quality'" in f.reason
    assert "margin-short" not in fired_ids(v)  # superseded


def test_margin_just_positive_is_review_not_fail(default):
    r = base_result(detection_time_s=0.5 * H, limits=[reached(t=1.5 * H + 1.0)])
    v = evaluate(default, r)
    assert "limit-before-response" not in fired_ids(v)
    assert v.verdict == "review"
    assert "margin-short" in fired_ids(v)


def test_margin_short_boundary(default):
    # margin equal to the response time (1 h) is enough; 1 s less is not (rule: < response time)
    ok = base_result(limits=[reached(t=2 * H)])
    short = base_result(limits=[reached(t=2 * H - 1.0)])
    assert evaluate(default, ok).verdict == "pass"
    v = evaluate(default, short)
    assert v.verdict == "review"
    f = fired(v, "margin-short")
    assert "'quality'" in f.reason and "1 h" in f.reason


def test_smallest_margin_uses_the_worst_limit(default):
    r = base_result(limits=[reached("late", t=30 * H), reached("early", t=1.2 * H)])
    v = evaluate(default, r)
    assert "'early'" in fired(v, "margin-short").reason


def test_missing_response_time_gives_review_with_reason(default):
    r = base_result(response_time_s=None, limits=[reached(t=0.5 * H)])
    v = evaluate(default, r)
    assert v.verdict == "review"
    f = fired(v, "limit-before-response")
    assert f.basis == "unknown"
    assert f.reason.startswith("Response time not given")
    assert "cannot be applied" in f.reason


def test_missing_response_time_with_no_limit_reached_is_still_review(default):
    v = evaluate(default, base_result(response_time_s=None))
    assert v.verdict == "review"
    assert any("Response time not given" in t for t in v.reasons)


def test_alarm_never_sounding_before_a_limit_fails(default):
    r = base_result(detection_time_s=None, limits=[reached(t=10 * H)])
    v = evaluate(default, r)
    assert v.verdict == "fail"
    assert "without warning" in fired(v, "limit-undetected").reason
    assert "limit-before-response" not in fired_ids(v)  # superseded


def test_horizon_shorter_than_response_plus_margin_is_review(default):
    # horizon - (detection + response) must be at least one response time: 2 h horizon is the boundary
    ok = base_result(horizon_s=2 * H)
    short = base_result(horizon_s=2 * H - 1.0)
    assert "horizon-short" not in fired_ids(evaluate(default, ok))
    v = evaluate(default, short)
    assert v.verdict == "review"
    f = fired(v, "horizon-short")
    assert "extend the horizon" in f.reason and "'quality'" in f.reason


def test_horizon_rule_does_not_apply_when_all_limits_are_reached(default):
    r = base_result(horizon_s=1.0 * H, limits=[reached(t=0.9 * H)])
    assert "horizon-short" in evaluate(default, r).not_applicable


def test_no_limits_is_review(default):
    v = evaluate(default, base_result(limits=[]))
    assert v.verdict == "review"
    assert "no-limits" in fired_ids(v)


# ---------------------------------------------------------------- runaway rules
def test_runaway_case_with_clear_values_passes(default):
    v = evaluate(default, runaway_result())
    assert v.verdict == "pass"
    assert fired(v, "runaway-risk").verdict == "pass"
    assert "pressure" in fired(v, "runaway-risk").reason  # never overstates: names what is not counted


# Stoessel 2008 (from memory, /work/shared/references.md): probability high < 8 h, medium 8-24 h,
# low > 24 h; severity high > 200 K, medium 50-200 K, low < 50 K.  Cell verdicts: site choice in
# rules/default.toml.
@pytest.mark.parametrize("tmr_h, row", [
    (7.999, "high probability"),
    (8.0, "medium probability"),      # 8 h belongs to the 8-24 h class
    (24.0, "medium probability"),     # 24 h belongs to the 8-24 h class
    (24.001, "low probability"),
])
def test_matrix_probability_class_bounds(default, tmr_h, row):
    v = evaluate(default, runaway_result(tmr_at_mtsr_s=tmr_h * H))
    assert f"({row})" in fired(v, "runaway-risk").reason


@pytest.mark.parametrize("dt, column", [
    (49.99, "low severity"),
    (50.0, "medium severity"),        # 50 K belongs to the 50-200 K class
    (200.0, "medium severity"),       # 200 K belongs to the 50-200 K class
    (200.01, "high severity"),
])
def test_matrix_severity_class_bounds(default, dt, column):
    v = evaluate(default, runaway_result(adiabatic_temperature_rise_K=dt))
    assert f"({column})" in fired(v, "runaway-risk").reason


# The matrix gives review or pass only (site choice): after a cooling failure a fail comes from the
# criticality class (TMRad at MTSR of 24 h or less means class 4 or 5), in storage from the critical
# ambient; with low probability it is review when the severity is high, pass otherwise.
@pytest.mark.parametrize("tmr_h, dt, expected", [
    (4, 30, "review"), (4, 100, "review"), (4, 300, "review"),
    (12, 30, "review"), (12, 100, "review"), (12, 300, "review"),
    (48, 30, "pass"), (48, 100, "pass"), (48, 300, "review"),
])
def test_matrix_cells(default, tmr_h, dt, expected):
    r = runaway_result(tmr_at_mtsr_s=tmr_h * H, adiabatic_temperature_rise_K=dt)
    f = fired(evaluate(default, r), "runaway-risk")
    assert f.verdict == expected
    assert f.basis == "matrix"


def test_matrix_without_arrhenius_is_not_applicable(default):
    v = evaluate(default, base_result())
    assert "runaway-risk" in v.not_applicable


def test_matrix_with_missing_axis_is_review(default):
    v = evaluate(default, runaway_result(tmr_at_mtsr_s=None))
    f = fired(v, "runaway-risk")
    assert f.verdict == "review" and f.basis == "unknown"
    assert "TMRad at MTSR not in the result" in f.reason


def test_tmr_before_response_boundary(default):
    # detection 0 + response 1 h: TMRad equal to 1 h fires (rule: <=), 1 s more does not
    at = evaluate(default, runaway_result(tmr_adiabatic_s=1 * H))
    above = evaluate(default, runaway_result(tmr_adiabatic_s=1 * H + 1.0))
    assert fired(at, "tmr-before-response").verdict == "review"
    assert "tmr-before-response" not in fired_ids(above)


@pytest.mark.parametrize("gap, expected", [
    (-5.0, "ambient-at-critical"),
    (0.0, "ambient-at-critical"),     # at the critical ambient: fail (rule: <= 0 K)
    (0.01, "ambient-near-critical"),
    (9.99, "ambient-near-critical"),  # rule: < 10 K
    (10.0, None),
])
def test_critical_ambient_rules(default, gap, expected):
    r = runaway_result(critical_ambient_temperature_K=298.15 + gap)
    ids = fired_ids(evaluate(default, r)) & {"ambient-at-critical", "ambient-near-critical"}
    assert ids == ({expected} if expected else set())


def test_critical_ambient_reason_names_method_and_temperatures(default):
    r = runaway_result(critical_ambient_temperature_K=298.15, critical_ambient_method="frank-kamenetskii",
                       mixing="unstirred", biot_number=0.05)
    f = fired(evaluate(default, r), "ambient-at-critical")
    assert f.verdict == "fail"
    assert "Frank-Kamenetskii" in f.reason and "25.0 °C" in f.reason  # 298.15 K = 25.0 degC (definition)
    assert "run away" in f.reason


def test_start_past_no_return(default):
    at = evaluate(default, runaway_result(no_return_temperature_K=300.0))
    below = evaluate(default, runaway_result(no_return_temperature_K=300.1))
    assert fired(at, "start-past-no-return").verdict == "fail"
    assert "start-past-no-return" not in fired_ids(below)


def test_recovery_past_no_return(default):
    rec = {"start_s": 2 * H, "peak_temperature_K": 400.0, "peak_time_s": 3 * H, "limits_reached": [],
           "past_no_return": True}
    v = evaluate(default, runaway_result(recovery=rec))
    f = fired(v, "recovery-past-no-return")
    assert f.verdict == "fail" and "2 h" in f.reason
    rec_ok = dict(rec, past_no_return=False)
    assert "recovery-past-no-return" not in fired_ids(evaluate(default, runaway_result(recovery=rec_ok)))


# Criticality classes: Stoessel 2008 (from memory, /work/shared/references.md); verdicts: site choice.
@pytest.mark.parametrize("cls, verdict, rule_id", [
    (1, None, None), (2, None, None),
    (3, "review", "criticality-3"), (4, "fail", "criticality-4"), (5, "fail", "criticality-5"),
])
def test_criticality_classes(default, cls, verdict, rule_id):
    v = evaluate(default, runaway_result(criticality_class=cls))
    crit = {f.rule_id: f for f in v.fired if f.rule_id.startswith("criticality")}
    if verdict is None:
        assert crit == {}
    else:
        assert set(crit) == {rule_id}
        assert crit[rule_id].verdict == verdict
        assert f"class {cls}" in crit[rule_id].reason


def test_criticality_without_mtt_is_review(default):
    r = runaway_result(criticality_class=None, maximum_technical_temperature_K=None)
    f = fired(evaluate(default, r), "criticality-3")
    assert f.verdict == "review" and "maximum technical temperature" in f.reason


# Biot criterion: lumped model valid for Bi < 0.1 (Incropera et al., ch. 5; common practice).
def test_biot_boundary(default):
    at = evaluate(default, base_result(mixing="unstirred", biot_number=0.1))
    over = evaluate(default, base_result(mixing="unstirred", biot_number=0.1001))
    assert "biot-unstirred" not in fired_ids(at)
    f = fired(over, "biot-unstirred")
    assert f.verdict == "review" and "lumped" in f.reason
    # value and threshold would both print as "0.1": more digits are shown instead
    assert "is 0.1001, above 0.1:" in f.reason


def test_biot_stirred_is_not_applicable_and_unstirred_missing_is_review(default):
    assert "biot-unstirred" in evaluate(default, base_result()).not_applicable
    f = fired(evaluate(default, base_result(mixing="unstirred", biot_number=None)), "biot-unstirred")
    assert f.verdict == "review" and f.basis == "unknown"


def test_nan_is_never_a_pass(default):
    r = runaway_result(critical_ambient_temperature_K=float("nan"))
    v = evaluate(default, r)
    assert ("ambient-at-critical", "critical_ambient_temperature_K is not a number (NaN)") in v.not_applied


def test_worst_verdict_wins_and_reasons_are_ordered(default):
    r = runaway_result(criticality_class=3, critical_ambient_temperature_K=290.0)
    v = evaluate(default, r)
    assert v.verdict == "fail"
    verdicts = [f.verdict for f in v.fired]
    assert verdicts == sorted(verdicts, key=lambda x: {"fail": 0, "review": 1, "pass": 2}[x])
    assert v.reasons == [f.reason for f in v.fired]


# ---------------------------------------------------------------- formatting
def test_temperature_display_units(default):
    # 373.15 K = 100 degC = 212 degF = 671.67 degR (definitions of the scales)
    r = runaway_result(critical_ambient_temperature_K=373.15, ambient_temperature_K=373.15)
    for unit, text in (("degC", "100.0 °C"), ("degF", "212.0 °F"), ("K", "373.1 K"), ("degR", "671.7 °R")):
        r["units"] = {"temperature": unit}
        assert text in fired(evaluate(default, r), "ambient-at-critical").reason


def test_time_formatting():
    f = engine._fmt_time
    assert f(8 * H) == "8 h"
    assert f(1.5 * H) == "1.5 h"
    assert f(150 * H) == "150 h"
    assert f(45 * 60) == "45 min"
    assert f(30) == "30 s"
    assert f(-0.5 * H) == "-30 min"


# ---------------------------------------------------------------- custom rule files
CUSTOM = """
[rule_set]
name = "custom"

[[rule]]
id = "twice-response"
quantity = "smallest_margin"
compare = "<"
threshold = { of = "response_time", times = 2, plus = "30 min" }
verdict = "fail"
reason = "Only {value} left after detection plus response for '{limit}'; need {threshold}."
source = "site choice"

[[rule]]
id = "unstirred"
quantity = "mixing"
compare = "=="
threshold = "unstirred"
verdict = "review"
reason = "Unstirred contents."
source = "site choice"

[[rule]]
id = "hot-peak"
quantity = "peak_temperature"
compare = ">="
threshold = "60 degC"
verdict = "review"
reason = "Peak {value} is at or above {threshold}."
source = "site choice"
[rule.if_not_applicable]
verdict = "review"
reason = "{cause}."

[[rule]]
id = "no-arrhenius"
quantity = "tmr_at_mtsr"
compare = "<"
threshold = "1 h"
verdict = "fail"
reason = "x"
source = "site choice"
[rule.if_not_applicable]
verdict = "review"
reason = "{cause}; this site wants decomposition data."
"""


def test_custom_rule_file_changes_the_verdict(tmp_path, default):
    p = tmp_path / "site.toml"
    p.write_text(CUSTOM, encoding="utf-8")
    rs = load_rule_set(p)
    assert rs.name == "custom" and rs.hash == hashlib.sha256(p.read_bytes()).hexdigest()
    # margin 2 h: passes the default (>= 1 h), fails 2 x 1 h + 30 min
    r = base_result(limits=[reached(t=3 * H)])
    assert evaluate(default, r).verdict == "pass"
    v = evaluate(rs, r)
    assert v.verdict == "fail"
    assert fired(v, "twice-response").reason == (
        "Only 2 h left after detection plus response for 'quality'; need 2.5 h.")
    assert v.rule_set_name == "custom"


def test_custom_text_and_absolute_temperature_rules(tmp_path):
    rs = parse_rule_set(CUSTOM.encode())
    v = evaluate(rs, base_result(mixing="unstirred", biot_number=0.01, peak_temperature_K=333.15))
    assert {"unstirred", "hot-peak"} <= fired_ids(v)       # 60 degC = 333.15 K (definition)
    v = evaluate(rs, base_result(peak_temperature_K=333.14))
    assert "hot-peak" not in fired_ids(v)


def test_if_not_applicable_gives_stated_verdict():
    rs = parse_rule_set(CUSTOM.encode())
    f = fired(evaluate(rs, base_result()), "no-arrhenius")
    assert f.verdict == "review" and f.basis == "not applicable"
    assert f.reason.startswith("The case has no temperature-dependent (Arrhenius) heat source")


def test_unknown_data_without_if_unknown_does_not_fire_but_is_listed():
    rs = parse_rule_set(CUSTOM.encode())
    v = evaluate(rs, base_result(response_time_s=None, limits=[reached(t=3 * H)],
                                 tmr_at_mtsr_s=100 * H, tmr_adiabatic_s=200 * H))
    assert v.verdict == "pass"
    assert ("twice-response", "response time not given") in v.not_applied
    assert "Not applied because data are missing: twice-response (response time not given)" in v.reasons[-1]


def test_example_rule_files_load():
    for p in sorted(REPO_RULES.glob("*.toml")):
        rs = load_rule_set(p)
        evaluate(rs, runaway_result())
        evaluate(rs, base_result(limits=[reached(t=0.1 * H)], detection_time_s=None))


def test_default_found_in_package_copy_when_repo_copy_is_absent(tmp_path, monkeypatch):
    copy_path = tmp_path / "data" / "rules" / "default.toml"
    copy_path.parent.mkdir(parents=True)
    copy_path.write_bytes((REPO_RULES / "default.toml").read_bytes())
    monkeypatch.setattr(rule_file, "_default_candidates", lambda: (tmp_path / "absent.toml", copy_path))
    assert load_rule_set().path == str(copy_path)
    monkeypatch.setattr(rule_file, "_default_candidates", lambda: (tmp_path / "absent.toml",))
    with pytest.raises(RuleSetError, match="default rule set was not found"):
        load_rule_set()


def test_rule_set_pickles(default):
    again = pickle.loads(pickle.dumps(default))
    r = runaway_result(criticality_class=4)
    assert evaluate(again, r).reasons == evaluate(default, r).reasons


def test_evaluation_is_cheap(default):
    cases = [runaway_result(limits=[reached(t=(1 + i % 7) * H)], tmr_at_mtsr_s=(1 + i % 50) * H)
             for i in range(5000)]
    t0 = time.perf_counter()
    for r in cases:
        evaluate(default, r)
    assert time.perf_counter() - t0 < 5.0  # 100,000 results in well under two minutes


# ---------------------------------------------------------------- bad rule files
RULE = """
[[rule]]
id = "{id}"
quantity = "{quantity}"
compare = "{compare}"
threshold = {threshold}
verdict = "{verdict}"
reason = "{reason}"
source = "site choice"
"""


def bad(**kw) -> list[tuple[str, str]]:
    fields = dict(id="r1", quantity="smallest_margin", compare="<", threshold='"1 h"', verdict="review",
                  reason="x")
    fields.update(kw)
    text = '[rule_set]\nname = "t"\n' + RULE.format(**fields)
    with pytest.raises(RuleSetError) as exc:
        parse_rule_set(text.encode())
    return exc.value.errors


def one(errors, field_part):
    hits = [(f, m) for f, m in errors if field_part in f]
    assert hits, errors
    return hits[0][1]


def test_good_template_loads():
    text = '[rule_set]\nname = "t"\n' + RULE.format(id="r1", quantity="smallest_margin", compare="<",
                                                    threshold='"1 h"', verdict="review", reason="x")
    assert parse_rule_set(text.encode()).rule_ids == ["r1"]


def test_unknown_quantity_lists_valid_names():
    msg = one(bad(quantity="smalest_margin"), 'rule #1 (id "r1").quantity')
    assert "smalest_margin" in msg and "smallest_margin" in msg and "biot_number" in msg


def test_unknown_comparison():
    msg = one(bad(compare="less than"), ".compare")
    assert "'less than'" in msg and "<=" in msg


def test_threshold_with_wrong_dimension():
    msg = one(bad(threshold='"8 K"'), ".threshold")
    assert "not a time" in msg and "8 h" in msg


def test_threshold_without_unit():
    msg = one(bad(threshold="8"), ".threshold")
    assert "needs a unit" in msg


def test_unknown_unit():
    msg = one(bad(threshold='"8 hourz"'), ".threshold")
    assert "unknown unit" in msg and "hourz" in msg


def test_difference_threshold_rejects_degc():
    msg = one(bad(quantity="critical_ambient_gap", threshold='"10 degC"'), ".threshold")
    assert "not a temperature difference" in msg and "K" in msg


def test_difference_threshold_in_kelvin_and_delta_degc():
    for thr in ('"10 K"', '"10 delta_degC"', '"18 delta_degF"'):
        text = '[rule_set]\nname = "t"\n' + RULE.format(id="r", quantity="critical_ambient_gap",
                                                        compare="<", threshold=thr, verdict="review",
                                                        reason="x")
        item = parse_rule_set(text.encode()).items[0]
        assert item.threshold == pytest.approx(10.0)  # 18 degF difference = 10 K (definition of the scales)


def test_unknown_verdict():
    msg = one(bad(verdict="warn"), ".verdict")
    assert "'warn'" in msg and "pass, review, fail" in msg


def test_unknown_placeholder():
    msg = one(bad(reason="margin {valeu}"), ".reason")
    assert "{valeu}" in msg and "{value}" in msg


def test_boolean_quantity_needs_boolean_and_equality():
    errors = bad(quantity="limit_exceeded_at_start", compare="<", threshold='"yes"')
    assert "only == and !=" in one(errors, ".compare")
    assert "true or false" in one(errors, ".threshold")


def test_unknown_and_missing_fields_are_named():
    text = '[rule_set]\nname = "t"\n[[rule]]\nid = "r9"\nquantity = "biot_number"\ncompare = ">"\n' \
           'treshold = 0.1\nverdict = "review"\nreason = "x"\nsource = "s"\n'
    with pytest.raises(RuleSetError) as exc:
        parse_rule_set(text.encode())
    errors = dict(exc.value.errors)
    assert errors['rule #1 (id "r9").threshold'] == "required field is missing"
    assert "unknown field" in errors['rule #1 (id "r9").treshold']
    assert "threshold" in errors['rule #1 (id "r9").treshold']


def test_rule_without_id_is_named_by_position():
    text = '[rule_set]\nname = "t"\n' + RULE.format(id="a", quantity="biot_number", compare=">",
                                                    threshold="0.1", verdict="review", reason="x")
    text += '[[rule]]\nquantity = "biot_number"\n'
    with pytest.raises(RuleSetError) as exc:
        parse_rule_set(text.encode())
    assert ("rule #2.id", "required field is missing") in exc.value.errors


def test_duplicate_id_and_unknown_superseded_by():
    text = '[rule_set]\nname = "t"\n' + RULE.format(id="a", quantity="biot_number", compare=">",
                                                    threshold="0.1", verdict="review", reason="x") * 2
    text += 'superseded_by = ["nope"]\n'
    with pytest.raises(RuleSetError) as exc:
        parse_rule_set(text.encode())
    msgs = " | ".join(m for _, m in exc.value.errors)
    assert "used twice" in msgs and "'nope'" in msgs


def test_toml_syntax_error_gives_line():
    with pytest.raises(RuleSetError) as exc:
        parse_rule_set(b'[rule_set]\nname = "t"\n[[rule]]\nid = = 3\n')
    (field, msg), = exc.value.errors
    assert field == "(file)" and "TOML syntax error" in msg and "line 4" in msg


def test_missing_header_and_empty_set():
    with pytest.raises(RuleSetError) as exc:
        parse_rule_set(b"")
    assert any(f == "rule_set" for f, _ in exc.value.errors)
    with pytest.raises(RuleSetError) as exc:
        parse_rule_set(b'[rule_set]\nname = "t"\n')
    assert "no [[rule]] or [[matrix]]" in exc.value.errors[0][1]


def test_single_rule_table_instead_of_array():
    with pytest.raises(RuleSetError) as exc:
        parse_rule_set(b'[rule_set]\nname = "t"\n[rule]\nid = "a"\n')
    assert "array of tables" in one(exc.value.errors, "rule")


def test_missing_file_is_a_rule_set_error(tmp_path):
    with pytest.raises(RuleSetError) as exc:
        load_rule_set(tmp_path / "nope.toml")
    assert exc.value.errors[0][0] == "(file)"
    assert exc.value.problems == exc.value.errors  # name used by the CLI


MATRIX = """
[rule_set]
name = "t"

[[matrix]]
id = "m"
source = "site choice"
reason = "{row_class} / {column_class}"
[matrix.rows]
quantity = "tmr_at_mtsr"
classes = [{ name = "short", below = "8 h" }, { name = "long" }]
[matrix.columns]
quantity = "adiabatic_temperature_rise"
classes = [{ name = "small", below = "50 K" }, { name = "large" }]
[matrix.verdicts]
short = ["review", "fail"]
long = ["pass", "review"]
"""


def test_small_matrix_maps_cells():
    rs = parse_rule_set(MATRIX.encode())
    for tmr, dt, expected in ((1, 10, ("review", "short / small")), (1, 60, ("fail", "short / large")),
                              (9, 10, ("pass", "long / small")), (9, 60, ("review", "long / large"))):
        f = evaluate(rs, runaway_result(tmr_at_mtsr_s=tmr * H, adiabatic_temperature_rise_K=dt)).fired[0]
        assert (f.verdict, f.reason) == expected


@pytest.mark.parametrize("old, new, field, words", [
    ('long = ["pass", "review"]\n', "", "verdicts", "no verdicts for row class 'long'"),
    ('long = ["pass", "review"]', 'long = ["pass"]', "verdicts.long", "expected 2 verdicts"),
    ('long = ["pass", "review"]', 'long = ["pass", "maybe"]', "verdicts.long", "unknown verdict 'maybe'"),
    ('short = [', 'shrt = ["fail", "fail"]\nshort = [', "verdicts.shrt", "not a row class"),
    ('below = "50 K"', 'below = "50 h"', "columns.classes[#1].below", "not a temperature difference"),
    ('{ name = "long" }', '{ name = "long", below = "4 h" }', "rows.classes[#2]", "last class"),
    ('{ name = "small", below = "50 K" }', '{ name = "small" }', "columns.classes[#1]", "exactly one"),
    ('quantity = "tmr_at_mtsr"', 'quantity = "mixing"', "rows.quantity", "cannot be sorted"),
    ('reason = "{row_class} / {column_class}"', 'reason = "{row}"', "reason", "{row_class}"),
])
def test_matrix_validation(old, new, field, words):
    text = MATRIX.replace(old, new)
    assert text != MATRIX
    with pytest.raises(RuleSetError) as exc:
        parse_rule_set(text.encode())
    msg = one(exc.value.errors, f'matrix #1 (id "m").{field}')
    assert words in msg


def test_matrix_bounds_must_increase():
    text = MATRIX.replace('classes = [{ name = "short", below = "8 h" }, { name = "long" }]',
                          'classes = [{ name = "short", below = "8 h" }, { name = "mid", below = "4 h" },'
                          ' { name = "long" }]').replace('long = ["pass", "review"]',
                                                         'mid = ["pass", "pass"]\nlong = ["pass", "review"]')
    with pytest.raises(RuleSetError) as exc:
        parse_rule_set(text.encode())
    assert "must increase" in one(exc.value.errors, "rows.classes[#2].below")


def test_error_message_lists_all_problems_at_once():
    errors = bad(quantity="smallest_margin", compare="~", verdict="nope")
    fields = [f for f, _ in errors]
    assert any(f.endswith(".compare") for f in fields) and any(f.endswith(".verdict") for f in fields)
    assert str(RuleSetError(errors)).count("\n") == len(errors)
