"""Reactions with roles and verdicts by scenario, on hand-worked cases.

Every check value is worked out here, beside the assertion, from a published definition or with a
reference library:

- MTSR = Tp + X_ac dT_ad (+ P tau / (m c_p) of decaying sources), dT_ad = Q' / c_p: Stoessel, *Thermal Safety
  of Chemical Processes* (2008) (from memory, /work/shared/references.md).
- TMRad = c_p R T0^2 / (q0 E), summed over sources as c_p R T^2 / sum q_i E_i: Townsend and Tou,
  Thermochimica Acta 37 (1980); T_D24 the temperature where TMRad = 24 h (trade term), solved here with
  scipy.optimize.brentq.
- Criticality classes from the order of Tp, MTSR, MTT and T_D24: Stoessel (2008) (from memory).
- Semenov tangency m q(Tc) E / (R Tc^2) = G and m q(Tc) + P = G (Tc - Teq): Semenov (1928), solved here
  with scipy.optimize.fsolve on the two equations (the reference for the critical ambient and the critical
  medium temperature).
- Frank-Kamenetskii: delta = E/(R Ta^2) rho q(Ta) r^2 / k equals delta_c at the critical ambient
  (Frank-Kamenetskii 1939; delta_c at the actual Biot number is checked against solve_bvp in tests/core).
"""
from __future__ import annotations

import json
import math
import subprocess
import sys
from pathlib import Path

import pytest
import yaml
from scipy.optimize import brentq, fsolve

from screening.case.files import load_case_bytes
from screening.case.prepare import prepare_case
from screening.case.schema import CaseError
from screening.report.text import format_result
from screening.run.screen_case import screen_prepared
from screening.verdict.rule_file import apply_rules

R = 8.314462618  # J/(mol K), CODATA 2018
H = 3600.0
DAY = 86400.0
ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "screening" / "demo_cases"


def q_of(T, q0, Tref, E):
    """Arrhenius rate, W/kg (the law written out for the reference)."""
    return q0 * math.exp(-E / R * (1.0 / T - 1.0 / Tref))


def tmr(T, cp, sources):
    """Townsend-Tou TMRad, s; ``sources`` are (q0, Tref, E) tuples, summed as c_p R T^2 / sum q_i E_i."""
    return cp * R * T * T / sum(q_of(T, q0, Tr, E) * E for q0, Tr, E in sources)


def t_d24(cp, sources):
    """T_D24 by brentq on TMRad(T) = 24 h (a reference library root finder)."""
    return brentq(lambda T: tmr(T, cp, sources) - DAY, 250.0, 900.0, xtol=1e-12)


def screen(data: dict, rules: bool = True) -> dict:
    loaded = load_case_bytes(yaml.safe_dump(data).encode(), "yaml")
    result = screen_prepared(prepare_case(loaded.spec), loaded.input_hash)
    if rules:
        apply_rules(result, None)
    return result


def fired(result: dict, text: str) -> list[str]:
    return [r for r in result["reasons"] if text in r]


def arrhenius(q0, tref, e_kj, dh_kj=None, **more):
    src = {"kind": "arrhenius", "specific_power": f"{q0} W/kg", "reference_temperature": f"{tref} degC",
           "activation_energy": f"{e_kj} kJ/mol"}
    if dh_kj is not None:
        src["specific_heat_of_reaction"] = f"{dh_kj} kJ/kg"
    src.update(more)
    return src


def reactor(sources, t0=80, ta=25, ua=50, mass=1000, cp=2, **more):
    data = {"id": "X-1", "contents": {"mass": f"{mass} kg", "specific_heat": f"{cp} kJ/(kg*K)",
                                      "initial_temperature": f"{t0} degC"},
            "heat_loss": {"ambient_temperature": f"{ta} degC", "ua": f"{ua} W/K"},
            "heat_sources": sources, "limits": [{"name": "limit", "temperature": "250 degC"}],
            "response_time": "1 h", "detection": {"delay": "10 min"}, "horizon": "24 h"}
    data.update(more)
    return data


# ------------------------------------------------------------------ cooling failure


def test_demo_reactor_synthesis_and_decomposition_by_hand():
    r = screen(yaml.safe_load((DEMO / "fw-r301-reactor.yaml").read_text()))
    cp, tp = 2100.0, 353.15
    # Stoessel: MTSR = Tp + X_ac Q'/c_p = 80 degC + 0.35 * 160 / 2.1 K = 106.667 degC (synthesis only)
    mtsr = tp + 0.35 * 160e3 / cp
    assert r["scenario"] == "cooling-failure"
    assert r["mtsr_K"] == pytest.approx(mtsr, rel=1e-12)
    assert r["synthesis_temperature_rise_K"] == pytest.approx(0.35 * 160e3 / cp, rel=1e-12)
    # T_D24 and TMRad at MTSR from the decomposition alone (0.08 W/kg at 140 degC, 120 kJ/mol)
    dec = [(0.08, 413.15, 120e3)]
    assert r["t_d24_K"] == pytest.approx(t_d24(cp, dec), abs=1e-6)
    assert r["tmr_at_mtsr_s"] == pytest.approx(tmr(mtsr, cp, dec), rel=1e-9)
    assert r["tmr_adiabatic_s"] == pytest.approx(tmr(tp, cp, dec), rel=1e-9)
    # the values stated in the issue (worked by hand there): 106.7 degC, 156.7 degC, about 1,560 h
    assert round(r["mtsr_K"] - 273.15, 1) == 106.7
    assert round(r["t_d24_K"] - 273.15, 1) == 156.7
    assert abs(r["tmr_at_mtsr_s"] / H - 1560) < 10
    # class 1: MTSR 106.7 < MTT 118 < T_D24 156.7 (Stoessel's ordering)
    assert r["maximum_technical_temperature_K"] == pytest.approx(391.15)
    assert r["mtsr_K"] < r["maximum_technical_temperature_K"] < r["t_d24_K"]
    assert r["criticality_class"] == 1
    # severity: the decomposition's rise 650 / 2.1 = 309.5 K; final temperature MTSR + 309.5 K
    assert r["decomposition_temperature_rise_K"] == pytest.approx(650e3 / cp, rel=1e-12)
    assert r["final_temperature_K"] == pytest.approx(mtsr + 650e3 / cp, rel=1e-12)
    assert r["final_minus_process_K"] == pytest.approx(mtsr + 650e3 / cp - tp, rel=1e-12)
    # no-return temperature of the decomposition: upper root of m q(T) = UA (T - Ta) (brentq)
    m, ua, ta = 4200.0, r["ua_W_per_K"], 298.15
    nr = brentq(lambda T: m * q_of(T, *dec[0]) - ua * (T - ta), 420.0, 600.0, xtol=1e-12)
    assert r["no_return_temperature_K"] == pytest.approx(nr, abs=1e-6)
    assert r["mtsr_above_no_return"] is False
    # the history agrees with what is said: the synthesis peaks below the MTSR and the contents cool
    assert r["peak_temperature_K"] < mtsr and r["peak_time_s"] < r["horizon_s"]
    assert "peak at" in r["runaway_summary"] and "then cool" in r["runaway_summary"]
    assert "self-limiting" in r["runaway_summary"]


def test_synthesis_only_reactor_is_review_t_d24_must_be_measured():
    syn = arrhenius(20, 60, 80, 200, order=1, role="synthesis", accumulated_fraction="30 %")
    r = screen(reactor([syn], t0=60, maximum_technical_temperature="110 degC"))
    # MTSR = 60 degC + 0.3 * 200 / 2 K = 90 degC (Stoessel)
    assert r["mtsr_K"] == pytest.approx(333.15 + 0.3 * 200e3 / 2000.0, rel=1e-12)
    assert r["t_d24_K"] is None and r["tmr_at_mtsr_s"] is None and r["criticality_class"] is None
    # MTSR 90 < MTT 110 degC: class 1 or 2, as far as it can be determined without T_D24
    assert r["criticality_classes_possible"] == [1, 2]
    assert r["verdict"] == "review"
    [reason] = fired(r, "T_D24 must be measured")
    assert "class is 1 or 2" in reason
    text = format_result(r)
    assert "trigger the decomposition" not in text  # a synthesis alone triggers nothing
    assert "T_D24 must be measured" in r["runaway_summary"]


def test_decomposition_only_cooling_failure_class_2_passes():
    dec = arrhenius(2.0, 150, 100, 300, gas_generating=False)
    r = screen(reactor([dec], t0=100, ta=20, ua=20, scenario="cooling-failure",
                       maximum_technical_temperature="130 degC"))
    cp, tp = 2000.0, 373.15
    ref = [(2.0, 423.15, 100e3)]
    # no synthesis, no decaying source: MTSR = Tp (Stoessel)
    assert r["mtsr_K"] == tp and r["synthesis_temperature_rise_K"] == 0.0
    assert r["t_d24_K"] == pytest.approx(t_d24(cp, ref), abs=1e-6)  # 123.66 degC
    assert r["tmr_at_mtsr_s"] == pytest.approx(tmr(tp, cp, ref), rel=1e-9)  # 145 h
    # class 2: MTSR 100 < T_D24 123.7 < MTT 130 degC
    assert r["mtsr_K"] < r["t_d24_K"] < r["maximum_technical_temperature_K"]
    assert r["criticality_class"] == 2
    # risk matrix: TMRad at MTSR 145 h (low probability), rise 300 / 2 = 150 K (medium severity): pass
    assert r["decomposition_temperature_rise_K"] == pytest.approx(150.0)
    assert r["verdict"] == "pass"
    [reason] = fired(r, "Runaway risk matrix")
    assert "TMRad at MTSR" in reason and "low probability" in reason and "medium severity" in reason
    assert "self-limiting" not in r["runaway_summary"]  # there is no synthesis to say it of


def test_two_decompositions_summed_rate_and_shares_at_mtsr():
    d1 = arrhenius(0.5, 150, 100, 200, label="first")
    d2 = arrhenius(0.05, 150, 150, 100, label="second")
    syn = {"kind": "decaying", "role": "synthesis", "power": "1 kW", "time_constant": "2 h"}
    r = screen(reactor([syn, d1, d2], t0=100, ta=20, ua=20, scenario="cooling-failure",
                       maximum_technical_temperature="130 degC"))
    cp, m = 2000.0, 1000.0
    # MTSR = Tp + P tau / (m c_p) = 100 degC + 1000 * 7200 / (1000 * 2000) K = 103.6 degC
    mtsr = 373.15 + 1000.0 * 7200.0 / (m * cp)
    assert r["mtsr_K"] == pytest.approx(mtsr, rel=1e-12)
    assert r["decaying_temperature_rise_K"] == pytest.approx(3.6, rel=1e-12)
    ref = [(0.5, 423.15, 100e3), (0.05, 423.15, 150e3)]
    assert r["t_d24_K"] == pytest.approx(t_d24(cp, ref), abs=1e-6)
    assert r["tmr_at_mtsr_s"] == pytest.approx(tmr(mtsr, cp, ref), rel=1e-9)
    q1, q2 = (q_of(mtsr, *s) for s in ref)
    shares = {s["source"]: s["share"] for s in r["decomposition_shares_at_mtsr"]}
    assert shares["heat_sources.1 (first)"] == pytest.approx(q1 / (q1 + q2), rel=1e-9)
    assert shares["heat_sources.2 (second)"] == pytest.approx(q2 / (q1 + q2), rel=1e-9)
    # severity: both decompositions, (200 + 100) / 2 = 150 K
    assert r["decomposition_temperature_rise_K"] == pytest.approx(150.0)
    # class from the order: MTSR 103.6 < MTT 130 < T_D24 (142.4 degC by brentq) -> 1
    assert r["mtsr_K"] < 403.15 < r["t_d24_K"]
    assert r["criticality_class"] == 1
    assert "share at MTSR: heat_sources.2 (second)" in format_result(r)


def test_synthesis_without_kinetics_released_at_start():
    syn = {"kind": "arrhenius", "role": "synthesis", "label": "batch", "specific_heat_of_reaction": "200 kJ/kg",
           "accumulated_fraction": "30 %"}
    data = reactor([syn, {"kind": "constant", "power": "10 kW"}], t0=60, ta=20, ua=50,
                   maximum_technical_temperature="110 degC",
                   vessel={"shape": "sphere", "diameter": "2 m", "wall_mass": "1000 kg",
                           "wall_specific_heat": "500 J/(kg*K)"},
                   limits=[{"name": "limit", "temperature": "100 degC"}], horizon="48 h")
    r = screen(data)
    m, cp, wall = 1000.0, 2000.0, 1000.0 * 500.0
    # MTSR on the contents' c_p alone (phi = 1): 60 + 0.3 * 200 / 2 = 90 degC
    assert r["mtsr_K"] == pytest.approx(333.15 + 0.3 * 200e3 / cp, rel=1e-12)
    # the history starts at T0 + m X Q' / (m c_p + C_wall) = 60 + 1000 * 60000 / 2.5e6 = 84 degC
    start = 333.15 + m * 0.3 * 200e3 / (m * cp + wall)
    assert r["start_release"]["temperature_K"] == pytest.approx(start, rel=1e-12)
    assert "released at once at t = 0" in r["start_release"]["note"]
    # closed form from there: T = Ta + P/UA + (T0' - Ta - P/UA) exp(-t UA / C); limit 100 degC
    c = m * cp + wall
    t_inf = 293.15 + 10e3 / 50.0
    t_limit = c / 50.0 * math.log((t_inf - start) / (t_inf - 373.15))
    assert r["limits"][0]["time_s"] == pytest.approx(t_limit, rel=1e-9)
    assert any("without kinetics" in a for a in r["assumptions"])
    assert r["verdict"] == "review" and fired(r, "T_D24 must be measured")
    assert "The history starts at 84.0 °C" in format_result(r)


def _class_4_case(gas: bool) -> dict:
    syn = {"kind": "arrhenius", "role": "synthesis", "specific_heat_of_reaction": "200 kJ/kg",
           "accumulated_fraction": "100 %"}
    dec = arrhenius(0.5, 150, 100, 300, gas_generating=gas)
    return reactor([syn, dec], t0=80, ta=20, ua=20, limits=[{"name": "limit", "temperature": "260 degC"}],
                   vessel={"shape": "sphere", "diameter": "1.5 m", "venting": "open"},
                   contents={"mass": "1000 kg", "specific_heat": "2 kJ/(kg*K)", "initial_temperature": "80 degC",
                             "density": "900 kg/m^3", "boiling_point": "120 degC", "latent_heat": "400 kJ/kg"})


def test_class_4_with_a_barrier_at_the_mtt_is_review_and_without_one_fail():
    with_barrier = screen(_class_4_case(gas=False))
    # MTSR = 80 + 200 / 2 = 180 degC; MTT = boiling point of the open vessel, 120 degC;
    # T_D24 of 0.5 W/kg at 150 degC, 100 kJ/mol (brentq): about 144 degC -> MTT < T_D24 < MTSR: class 4
    ref = [(0.5, 423.15, 100e3)]
    assert with_barrier["mtsr_K"] == pytest.approx(453.15)
    assert with_barrier["mtt_basis"] == "boiling point (open vessel)"
    assert with_barrier["t_d24_K"] == pytest.approx(t_d24(2000.0, ref), abs=1e-6)
    assert with_barrier["criticality_class"] == 4
    assert with_barrier["mtt_barrier"] is True
    assert not fired(with_barrier, "case shows no barrier")
    [reason] = fired(with_barrier, "Criticality class 4")
    assert "boiling in the open vessel" in reason
    without = screen(_class_4_case(gas=True))  # permanent gas: boiling does not temper
    assert without["criticality_class"] == 4 and without["mtt_barrier"] is False
    assert without["verdict"] == "fail" and fired(without, "case shows no barrier")


# ------------------------------------------------------------------ storage


def storage(ta=50, t0=20, mixing="stirred", dh=250, gas=False, **more):
    data = {"id": "S-1", "scenario": "storage",
            # 0.5 m^3 at the density given: a package (at most an IBC's 3 m^3), so the control temperature applies
            "contents": {"mass": "500 kg", "specific_heat": "1.5 kJ/(kg*K)", "initial_temperature": f"{t0} degC",
                         "mixing": mixing, "density": "1000 kg/m^3"},
            "heat_loss": {"ambient_temperature": f"{ta} degC", "ua": "10 W/K"},
            "heat_sources": [arrhenius(0.01, 60, 120, dh, gas_generating=gas)],
            "limits": [{"name": "limit", "temperature": "150 degC"}], "horizon": "30 d", "response_time": "1 d"}
    data.update(more)
    return data


def semenov_reference(m=500.0, ua=10.0, src=(0.01, 333.15, 120e3)):
    """(Tc, Ta,c) from the two tangency equations (scipy.optimize.fsolve)."""
    E = src[2]

    def eqs(x):
        tc, tac = x
        return [m * q_of(tc, *src) * E / (R * tc * tc) - ua, m * q_of(tc, *src) - ua * (tc - tac)]

    return fsolve(eqs, [350.0, 340.0], xtol=1e-12)


def test_storage_stirred_critical_ambient_margin_and_tmr_at_storage_temperature():
    r = screen(storage(ta=50, t0=20))
    tc, tac = semenov_reference()
    assert r["scenario"] == "storage" and r["critical_ambient_method"] == "semenov"
    assert r["critical_temperature_K"] == pytest.approx(tc, rel=1e-10)
    assert r["critical_ambient_temperature_K"] == pytest.approx(tac, rel=1e-10)  # 74.8 degC
    assert r["critical_ambient_margin_K"] == pytest.approx(tac - 323.15, rel=1e-9)
    # storage temperature = max(T0, Ta) = 50 degC; TMRad there by Townsend-Tou
    assert r["storage_temperature_K"] == 323.15
    assert r["tmr_at_storage_temperature_s"] == pytest.approx(tmr(323.15, 1500.0, [(0.01, 333.15, 120e3)]), rel=1e-9)
    # no MTSR, no class in storage
    assert r["mtsr_K"] is None and r["criticality_class"] is None and r["tmr_at_mtsr_s"] is None
    # margin 24.8 K >= 10 K, low probability, severity 250/1.5 = 166.7 K (medium), no gas: pass
    assert r["verdict"] == "pass"
    [reason] = fired(r, "below the critical ambient")
    assert "24.8 K below" in reason and "74.8 °C" in reason and "Semenov" in reason


def test_storage_reactor_rules_are_not_applicable():
    r = screen(storage())
    from screening.verdict.engine import evaluate
    from screening.verdict.rule_file import load_rule_set

    v = evaluate(load_rule_set(), r)
    for rule in ("criticality-3", "criticality-4", "criticality-5", "decomposition-data", "criticality-4-barrier"):
        assert rule in v.not_applicable, rule
    assert not v.not_applied  # never "unknown"
    site = b"""[rule_set]
name = "site"
[[rule]]
id = "mtsr-high"
quantity = "mtsr"
compare = ">"
threshold = "100 degC"
verdict = "fail"
reason = "MTSR {value}"
source = "site choice"
[[rule]]
id = "class"
quantity = "criticality_class"
compare = ">="
threshold = 3
verdict = "fail"
reason = "class {value}"
source = "site choice"
"""
    from screening.verdict.rule_file import parse_rule_set

    v = evaluate(parse_rule_set(site), r)
    assert set(v.not_applicable) == {"mtsr-high", "class"} and v.verdict == "pass"


def test_storage_unstirred_frank_kamenetskii_at_the_biot_number_and_hot_start():
    data = storage(ta=30, t0=45, mixing="unstirred", dh=250)
    data["contents"].update({"mass": None, "fill": "90 %", "density": "650 kg/m^3", "thermal_conductivity": "0.12 W/(m*K)"})
    del data["contents"]["mass"]
    data["vessel"] = {"shape": "vertical-cylinder", "diameter": "0.57 m", "length": "0.85 m"}
    data["heat_loss"] = {"ambient_temperature": "30 degC", "coefficient": "5 W/(m^2*K)", "area": "total"}
    r = screen(data)
    fk = r["frank_kamenetskii"]
    tac = r["critical_ambient_temperature_K"]
    # at the critical ambient, delta = E/(R Ta^2) rho q(Ta) r^2 / k equals delta_c at the actual Biot number
    E, rho, k, rad = 120e3, 650.0, 0.12, fk["radius_m"]
    delta = E / (R * tac ** 2) * rho * q_of(tac, 0.01, 333.15, E) * rad ** 2 / k
    assert delta == pytest.approx(fk["delta_critical"], rel=1e-8)
    assert fk["surface_biot_number"] == pytest.approx(5.0 * 0.285 / 0.12, rel=1e-9)  # h r / k
    assert r["critical_ambient_margin_K"] == pytest.approx(tac - 303.15, rel=1e-9)
    # starts at 45 degC above the 30 degC ambient: the steady criterion does not cover it; the hot-start rule
    # asks for a review of the horizon of the conduction solution
    assert r["storage_temperature_K"] == 318.15
    assert r["unstirred_hot_start"] is True
    assert r["verdict"] != "pass"
    [reason] = fired(r, "hot start")
    assert "45.0 °C" in reason and "30.0 °C" in reason


def test_storage_gas_in_closed_package_is_review_and_unmonitored_limit_fails():
    r = screen(storage(gas=True))
    assert r["gas_in_closed_package"] is True and r["verdict"] == "review"
    assert fired(r, "makes gas and the vessel or package is closed")
    # unmonitored (no detection block): a limit reached within the storage period fails, and says why
    hot = screen(storage(ta=50, t0=20, limits=[{"name": "limit", "temperature": "45 degC"}]))
    assert hot["detection_basis"] == "unmonitored" and hot["detection_time_s"] is None
    assert hot["verdict"] == "fail"
    [reason] = fired(hot, "reached without warning")
    assert "not monitored" in reason


def test_margin_on_storage_finds_the_ambient_where_the_verdict_changes(tmp_path):
    case = tmp_path / "store.yaml"
    case.write_text(yaml.safe_dump(storage(ta=50, t0=20)))
    proc = subprocess.run([sys.executable, "-m", "screening.cli", "margin", str(case), "--vary",
                           "heat_loss.ambient_temperature", "--json"], capture_output=True, text=True, cwd=ROOT,
                          timeout=600)
    assert proc.returncode == 0, proc.stderr
    report = json.loads(proc.stdout)
    _, tac = semenov_reference()
    changes = [(c["below"], c["above"], c["value_si"]) for c in report["changes"]]
    # pass -> review at the 10 K margin (site choice), review -> fail at the package's control temperature:
    # the SADT is the critical ambient (Semenov) rounded up to 5 °C, 75 °C, and the control temperature
    # SADT - 10 K = 65 °C (UN Model Regulations table, from memory) lies below the critical ambient, where
    # the verdict is already fail
    assert changes[0][:2] == ("pass", "review") and changes[0][2] == pytest.approx(tac - 10.0, abs=1e-4)
    sadt = 273.15 + 5.0 * math.ceil((tac - 273.15) / 5.0)
    assert changes[1][:2] == ("review", "fail") and changes[1][2] == pytest.approx(sadt - 10.0, abs=1e-4)
    assert len(changes) == 2 and tac > sadt - 10.0


# ------------------------------------------------------------------ heating medium left on


def test_critical_medium_temperature_against_a_direct_semenov_tangency():
    m, ua, ta, um, p = 500.0, 10.0, 293.15, 5.0, 20.0
    src = (0.01, 333.15, 120e3)
    data = {"id": "M-1", "scenario": "heat-up",
            "contents": {"mass": "500 kg", "specific_heat": "1.5 kJ/(kg*K)", "initial_temperature": "20 degC"},
            "heat_loss": {"ambient_temperature": "20 degC", "ua": "10 W/K"},
            "heat_sources": [{"kind": "heating-medium", "medium_temperature": "50 degC", "ua": "5 W/K"},
                             {"kind": "constant", "power": "20 W"}, arrhenius(0.01, 60, 120, 250, gas_generating=False)],
            "limits": [{"name": "limit", "temperature": "150 degC"}], "response_time": "1 h",
            "detection": {"delay": "0 h"}}
    r = screen(data)
    G, E = ua + um, src[2]

    def eqs(x):  # reference: the two tangency equations with the effective ambient (UA Ta + ua Tm) / G
        tc, tm = x
        teq = (ua * ta + um * tm) / G
        return [m * q_of(tc, *src) * E / (R * tc * tc) - G, m * q_of(tc, *src) + p - G * (tc - teq)]

    tc, tm_c = fsolve(eqs, [360.0, 360.0], xtol=1e-12)
    assert r["critical_medium_temperature_K"] == pytest.approx(tm_c, rel=1e-9)
    assert r["heating_medium_temperature_K"] == 323.15 and r["medium_above_t_d24"] is False
    assert r["critical_ambient_temperature_K"] is None  # heat-up: the air's critical ambient is not given
    assert "the medium temperature governs, not the air" in r["runaway_summary"]
    # a medium above T_D24 (about 82 degC by brentq) is flagged
    t_d = t_d24(1500.0, [src])
    data["heat_sources"][0]["medium_temperature"] = "90 degC"
    hot = screen(data)
    assert hot["t_d24_K"] == pytest.approx(t_d, abs=1e-6) and hot["medium_above_t_d24"] is True
    # 90 degC is still below the critical medium temperature (191 degC here): review, not fail
    assert hot["critical_medium_temperature_K"] > 363.15
    assert hot["verdict"] == "review"
    [reason] = fired(hot, "hotter than T_D24")
    assert "90.0 °C" in reason and f"{t_d - 273.15:.1f} °C" in reason


def test_critical_medium_temperature_is_null_for_unstirred_contents():
    data = storage(mixing="unstirred", scenario="heat-up")
    # unstirred contents need a shape, a density and a conductivity for their conduction solution
    data["contents"].update({"density": "650 kg/m^3", "thermal_conductivity": "0.12 W/(m*K)"})
    data["vessel"] = {"shape": "vertical-cylinder", "diameter": "0.57 m", "length": "0.85 m"}
    data["heat_sources"].insert(0, {"kind": "heating-medium", "medium_temperature": "50 degC", "ua": "5 W/K"})
    r = screen(data, rules=False)
    assert r["critical_medium_temperature_K"] is None and r["heating_medium_temperature_K"] == 323.15


# ------------------------------------------------------------------ detection


def heat_up(**more):
    data = {"id": "D-1", "contents": {"mass": "1000 kg", "specific_heat": "2 kJ/(kg*K)",
                                      "initial_temperature": "20 degC"},
            "heat_loss": {"ambient_temperature": "20 degC", "ua": "10 W/K"},
            "heat_sources": [{"kind": "constant", "power": "2 kW"}],
            "limits": [{"name": "onset", "temperature": "40 degC"}], "response_time": "1 h", "horizon": "72 h"}
    data.update(more)
    return data


def test_detection_assumed_at_start_is_said_next_to_every_margin_and_reviewed():
    r = screen(heat_up())
    assert r["scenario"] == "heat-up" and r["detection_basis"] == "assumed" and r["detection_time_s"] == 0.0
    [row] = r["limits"]
    # T = 20 + 200 (1 - exp(-t UA/C)) reaches 40 degC at t = -C/UA ln(1 - 20/200) (closed form by hand)
    assert row["time_s"] == pytest.approx(-2e6 / 10.0 * math.log(1 - 20.0 / 200.0), rel=1e-9)
    assert row["margin_s"] == pytest.approx(row["time_s"] - H, rel=1e-12)
    assert "detection assumed at t = 0" in row["margin_note"]
    assert "assumed at t = 0" in r["detection_note"] and r["detection_note"] in r["assumptions"]
    text = format_result(r)
    assert f"margin {row['margin_s'] / H:.4g} h (detection assumed at t = 0" in text
    assert r["verdict"] == "review"
    [reason] = fired(r, "does not say how the")
    assert "'onset'" in reason and "detection is assumed at t = 0" in reason
    stated = screen(heat_up(detection={"delay": "0 h"}))
    assert stated["verdict"] == "pass" and stated["limits"][0]["margin_note"] is None
    assert stated["detection_note"] is None


def test_detection_assumed_is_in_the_memo():
    pypdf = pytest.importorskip("pypdf")
    import io

    from screening.report.memo import render_memo
    from screening.result import memo_view

    r = screen(heat_up())
    text = "".join(p.extract_text() for p in pypdf.PdfReader(io.BytesIO(render_memo(memo_view(r)))).pages)
    assert "detection assumed at t = 0" in text
    assert "No detection block" in text


# ------------------------------------------------------------------ input


def test_migration_message_for_accumulated_fraction_without_role(tmp_path):
    old = arrhenius(12, 80, 70, 160, order=1, accumulated_fraction="35 %")
    with pytest.raises(CaseError) as exc:
        screen(reactor([old]))
    [problem] = exc.value.problems
    assert problem.field == "heat_sources.0.accumulated_fraction"
    assert problem.message == ("accumulated_fraction applies to the desired (synthesis) reaction: add `role: "
                               "synthesis`; if this source is a decomposition, remove accumulated_fraction")
    with pytest.raises(CaseError):
        screen(reactor([dict(old, role="decomposition")]))
    case = tmp_path / "old.yaml"
    case.write_text(yaml.safe_dump(reactor([old])))
    proc = subprocess.run([sys.executable, "-m", "screening.cli", "check", str(case)], capture_output=True,
                          text=True, cwd=ROOT, timeout=120)
    assert proc.returncode == 2 and "Traceback" not in proc.stderr
    assert "add `role: synthesis`" in proc.stderr + proc.stdout


def test_initial_specific_power_gives_the_zero_conversion_rate():
    syn = arrhenius(12, 80, 70, 160, order=1.5, role="synthesis", accumulated_fraction="35 %")
    syn["initial_specific_power"] = syn.pop("specific_power")
    loaded = load_case_bytes(yaml.safe_dump(reactor([syn])).encode(), "yaml")
    [src] = prepare_case(loaded.spec).model.arrhenius_sources
    # rate at the start = q0 (1 - X0)^n with X0 = 1 - 0.35, so q0 = 12 / 0.35^1.5 W/kg
    assert src.specific_power == pytest.approx(12.0 / 0.35 ** 1.5, rel=1e-12)
    with pytest.raises(CaseError) as exc:
        screen(reactor([dict(syn, accumulated_fraction="0 %")]))
    assert "accumulated_fraction^order is undefined" in exc.value.problems[0].message
    with pytest.raises(CaseError) as exc:
        screen(reactor([dict(syn, specific_power="1 W/kg")]))
    assert "exactly one of specific_power" in exc.value.problems[0].message
    # 0 % accumulated is allowed with specific_power: nothing left to release, MTSR = Tp
    zero = arrhenius(12, 80, 70, 160, order=1, role="synthesis", accumulated_fraction="0 %")
    r = screen(reactor([zero], maximum_technical_temperature="118 degC"))
    assert r["mtsr_K"] == 353.15


def test_decomposition_gas_defaults_to_true_with_an_assumption():
    r = screen(reactor([arrhenius(0.08, 140, 120, 650)], scenario="cooling-failure"), rules=False)
    assert r["gas_generating_sources"] == ["heat_sources.0"]
    assert any("gas_generating is not stated" in a for a in r["assumptions"])
    stated = screen(reactor([arrhenius(0.08, 140, 120, 650, gas_generating=False)], scenario="cooling-failure"),
                    rules=False)
    assert stated["gas_generating_sources"] == [] and not any("gas_generating" in a for a in stated["assumptions"])


def test_a_mix_of_sources_must_state_the_scenario():
    data = reactor([{"kind": "decaying", "power": "1 kW", "time_constant": "1 h"}, arrhenius(0.08, 140, 120, 650)])
    with pytest.raises(CaseError) as exc:
        screen(data)
    [problem] = exc.value.problems
    assert problem.field == "scenario"
    assert all(word in problem.message for word in ("cooling-failure", "storage", "heat-up", "state the scenario"))
    assert screen(dict(data, scenario="heat-up"))["scenario"] == "heat-up"
    with pytest.raises(CaseError) as exc:  # storage has no synthesis
        screen(reactor([arrhenius(12, 80, 70, 160, role="synthesis")], scenario="storage"))
    assert exc.value.problems[0].field == "scenario"


def test_monte_carlo_starts_where_the_history_starts():
    # a synthesis released at t = 0 moves the start temperature of every sample (core.terms.start_temperature)
    syn = {"kind": "arrhenius", "role": "synthesis", "specific_heat_of_reaction": "200 kJ/kg",
           "accumulated_fraction": "30 %"}
    data = reactor([syn, {"kind": "constant", "power": "10 kW"}], t0=60, ta=20, ua=50,
                   maximum_technical_temperature="110 degC", limits=[{"name": "limit", "temperature": "100 degC"}],
                   horizon="48 h")
    data["uncertainty"] = {"samples": 2000, "seed": 3,
                           "inputs": {"heat_loss.ua": {"distribution": "uniform", "low": "49.999 W/K",
                                                       "high": "50.001 W/K"}}}
    r = screen(data, rules=False)
    # closed form from 60 + 30 = 90 degC (no wall): t = C/UA ln((T_inf - 363.15) / (T_inf - 373.15))
    t_inf = 293.15 + 10e3 / 50.0
    exact = 2e6 / 50.0 * math.log((t_inf - 363.15) / (t_inf - 373.15))
    assert r["limits"][0]["time_s"] == pytest.approx(exact, rel=1e-9)
    assert r["uncertainty"]["limits"][0]["p50_time_s"] == pytest.approx(exact, rel=1e-4)
