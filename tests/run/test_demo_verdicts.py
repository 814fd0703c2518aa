"""Every demo case's verdict and reasons, read as a practitioner reads them.

The assertions are on what the reasons say (scenario, the criterion that decides, the numbers it
names), not only on the verdict word. Check values: FW-R301 by hand from Stoessel's scheme (MTSR = Tp +
X_ac Q'/c_p; T_D24 and TMRad at MTSR of the decomposition, Townsend and Tou 1980; classes from the order
of Tp, MTSR, MTT and T_D24; from memory, /work/shared/references.md), the numbers tested in detail in
tests/run/test_scenarios.py.
"""
from __future__ import annotations

from pathlib import Path

import pytest

from screening.case.files import load_case_bytes
from screening.case.prepare import prepare_case
from screening.report.text import format_result
from screening.run.screen_case import screen_prepared
from screening.verdict.rule_file import apply_rules

DEMO = Path(__file__).resolve().parents[2] / "screening" / "demo_cases"


def screen_demo(name: str) -> dict:
    path = DEMO / name
    loaded = load_case_bytes(path.read_bytes(), path.suffix.lstrip("."))
    result = screen_prepared(prepare_case(loaded.spec), loaded.input_hash)
    apply_rules(result, None)
    return result


def decisive(result: dict) -> list[str]:
    """The reasons of the verdict itself (review or fail findings), without pass findings and summaries."""
    return [r for r in result["reasons"] if not r.startswith("No rule of rule set")]


def test_fw_r301_reactor_class_1_review_on_the_severity_of_the_decomposition():
    r = screen_demo("fw-r301-reactor.yaml")
    assert r["scenario"] == "cooling-failure" and r["verdict"] == "review"
    assert r["criticality_class"] == 1
    [reason] = decisive(r)
    # MTSR 106.7 degC, T_D24 156.7 degC (decomposition alone), TMRad at MTSR about 1560 h: low probability;
    # the decomposition's rise 650 / 2.1 = 309.5 K: high severity -> review, not fail
    assert "TMRad at MTSR 1563 h (low probability)" in reason
    assert "309.5 K (high severity)" in reason and "engineer's assessment" in reason
    text = format_result(r)
    assert "MTSR lies below the decomposition's no-return temperature" in text
    assert "trigger the decomposition" not in text and "run away even though" not in text
    assert "Criticality class 1" in r["runaway_summary"]


def test_fw_s17_drums_storage_review_with_the_critical_ambient_margin():
    r = screen_demo("fw-s17-powder-drums.yaml")
    assert r["scenario"] == "storage" and r["verdict"] == "review"
    assert r["mtsr_K"] is None and r["criticality_class"] is None  # storage: no MTSR, no class
    reasons = " | ".join(r["reasons"])
    # the store is 36 K below the Frank-Kamenetskii critical ambient: the margin is named, and it is no fail
    assert "36.0 K below the critical ambient temperature (74.0 °C, Frank-Kamenetskii criterion)" in reasons
    assert "makes gas and the vessel or package is closed" in reasons
    assert "TMRad at the storage temperature" in reasons and "(low probability)" in reasons
    assert "(high severity)" in reasons
    assert "MTSR" not in reasons  # no reactor criterion in a store
    assert r["detection_basis"] == "unmonitored"


def test_fw_b08_hot_filled_bag_fails_on_its_centre_runaway_time():
    # the bag: the lumped history cools it and the store is 31 K below the Frank-Kamenetskii critical
    # ambient, but the centre reaches 120 degC after about 50 h (core solver checked in
    # tests/core/test_transient_conduction.py against the series and steady solutions)
    r = screen_demo("fw-b08-hot-filled-bag.yaml")
    assert r["scenario"] == "storage" and r["verdict"] == "fail"
    (lim,) = r["limits"]
    assert lim["time_s"] / 3600 == pytest.approx(50.0, rel=0.03)
    assert r["lumped"]["limits"][0]["time_s"] is None
    assert r["critical_ambient_margin_K"] == pytest.approx(31.0, abs=0.5)
    reasons = " | ".join(decisive(r))
    assert "reached after 50.3 h" in reasons and "without warning" in reasons


def test_fw_s17_drums_report_hot_spot_times():
    r = screen_demo("fw-s17-powder-drums.yaml")
    assert r["conduction"]["geometry"] == "cylinder" and r["conduction"]["geometry_approximated"] is True
    assert "lumped" in r and r["steady_temperature_K"] is None
    assert not any("hot spot can be hotter" in x for x in r["reasons"])
def test_fw_p08_package_review_with_its_control_temperature():
    # the invented 50 kg package: SADT 45 °C (solve_ivp scan, tests/run/test_sadt_case.py), control 35 °C and
    # emergency 40 °C by the UN Model Regulations table (from memory); the store at 30 °C is 5 K below control
    r = screen_demo("fw-p08-peroxide-cans.yaml")
    assert r["scenario"] == "storage" and r["verdict"] == "review"
    reasons = " | ".join(r["reasons"])
    assert "5.0 K below the package's control temperature (35.0 °C; SADT 45.0 °C" in reasons
    assert "emergency temperature 40.0 °C" in reasons
    assert "makes gas and the vessel or package is closed" in reasons
    assert "SADT" in format_result(r)


@pytest.mark.parametrize("name", ["fw-t204-hold-tank.yaml", "fw-t302-monomer-tank.yaml",
                                  "fw-t410-fire-water-tank.yaml", "fw-v110-solvent-receiver.yaml"])
def test_tanks_and_fire_case_are_heat_up_cases(name):
    r = screen_demo(name)
    assert r["scenario"] == "heat-up"
    assert r["mtsr_K"] is None and r["criticality_class"] is None and r["critical_ambient_temperature_K"] is None
    assert not any("MTSR" in x or "criticality" in x.lower() for x in decisive(r))


def test_fw_t204_review_only_because_it_settles_just_below_a_limit():
    # its stated alarm gives enough margin; but it settles at 59.8 degC, 0.2 K below the 60 degC limit, under the
    # default rule set's 5 K margin between a steady temperature and a limit (site choice)
    r = screen_demo("fw-t204-hold-tank.yaml")
    assert r["verdict"] == "review" and r["detection_basis"] == "alarm"
    [reason] = decisive(r)
    assert "settle at 59.8 °C, only 0.2 K below limit 'decomposition onset margin' (60.0 °C)" in reason


def test_fw_t410_fire_case_review_because_detection_is_only_assumed():
    r = screen_demo("fw-t410-fire-water-tank.yaml")
    assert r["verdict"] == "review" and r["detection_basis"] == "assumed"
    [reason] = decisive(r)
    assert "Limit 'coating limit' is reached after 1.78 h" in reason
    assert "detection is assumed at t = 0, the start of the scenario" in reason
    assert "cooling" not in reason  # a fire case: nothing about lost cooling


def test_fw_v110_steam_coil_review_on_margin_and_assumed_detection():
    r = screen_demo("fw-v110-solvent-receiver.yaml")
    assert r["verdict"] == "review"
    reasons = decisive(r)
    assert any("only 15 min after detection plus response (45 min)" in x for x in reasons)
    assert any("detection is assumed at t = 0" in x for x in reasons)


def test_fw_t302_review_on_assumed_detection_and_monte_carlo():
    r = screen_demo("fw-t302-monomer-tank.yaml")
    assert r["verdict"] == "review"
    reasons = decisive(r)
    assert any("'inhibitor depletion onset' is reached after 16.7 h" in x and "assumed at t = 0" in x
               for x in reasons)
    assert any("Monte Carlo samples (0.01 or more)" in x for x in reasons)


def test_example_case_shows_roles_class_1_and_review_for_its_steady_state():
    r = screen_demo("example_case.yaml")
    assert r["scenario"] == "cooling-failure" and r["criticality_class"] == 1
    assert r["synthesis_sources"] == ["heat_sources.1"]
    assert r["decomposition_sources"] == ["heat_sources.2 (decomposition of the resin)"]
    # review only because it settles 0.8 K below the 45 degC limit (the 5 K steady-state margin, site choice)
    assert r["verdict"] == "review"
    reasons = [x for x in decisive(r) if not x.startswith("Runaway risk matrix")]
    assert len(reasons) == 1 and "only 0.8 K below limit 'onset margin'" in reasons[0]
    [matrix] = [x for x in r["reasons"] if x.startswith("Runaway risk matrix")]
    assert "(low probability)" in matrix and "(medium severity)" in matrix


def test_fw_d52_drum_in_the_sun_reaches_the_flash_point_the_shaded_drum_does_not():
    # the same drum without the sun block (air cycle only) peaks at 32.6 degC; in the sun the sol-air rise of
    # 10.68 K (by hand in tests/run/test_daily_cycle_run.py) takes it past the 38 degC flash point the first day
    r = screen_demo("fw-d52-drum-yard.yaml")
    assert r["verdict"] == "review"
    flash = r["limits"][0]
    assert flash["reached"] and flash["time_s"] < 24 * 3600.0
    assert r["daily_cycle"]["start_time_basis"] == "the worst of 24 hourly starts"
    text = (DEMO / "fw-d52-drum-yard.yaml").read_text(encoding="utf-8")
    shaded_text = text[:text.index("sun:")] + text[text.index("limits:"):]
    loaded = load_case_bytes(shaded_text.encode(), "yaml")
    shaded = screen_prepared(prepare_case(loaded.spec), loaded.input_hash)
    assert not shaded["limits"][0]["reached"]
    assert r["peak_temperature_K"] - shaded["peak_temperature_K"] > 4.0
    assert any("sunlit side" in w for w in r["warnings"])
