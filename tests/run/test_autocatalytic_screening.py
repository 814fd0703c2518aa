"""An autocatalytic source screened end to end: criteria with their basis, the induction-time rule, Monte Carlo
and register rows.

References: the isothermal induction time for n = m = 1 is the logistic solution
t = ln[(1 - alpha0) / (alpha0 + z)] / (k (1 + z)) (derived in tests/core/test_autocatalytic.py); Monte Carlo
samples and register rows are checked against the same case screened alone by the one-case engine (scipy's
Radau, itself checked against mpmath quadrature in tests/core/test_autocatalytic.py).
"""
from __future__ import annotations

import copy
import csv
import json
import math
from pathlib import Path

import numpy as np
import pytest
import yaml

from screening.case.files import load_case_bytes
from screening.case.prepare import prepare_case
from screening.case.uncertainty_plan import draw, plan_uncertainty
from screening.core.arrhenius_history import integrate_history
from screening.core.model import GAS_CONSTANT
from screening.register.batch import run_batch
from screening.result import public_result
from screening.run.monte_carlo import analyse, sample_arrays, screen_samples
from screening.run.screen_case import screen_prepared
from screening.verdict.rule_file import apply_rules

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "screening" / "demo_cases" / "fw-t520-residue-tank.yaml"


def demo_data() -> dict:
    return yaml.safe_load(DEMO.read_text(encoding="utf-8"))


def screen(data: dict) -> dict:
    prepared = prepare_case(load_case_bytes(yaml.safe_dump(data, sort_keys=False).encode(), "yaml").spec)
    result = screen_prepared(prepared)
    apply_rules(result, None)
    return public_result(result)


def logistic_induction_time(T, k_ref, T_ref, E, z, a0):
    k = k_ref * math.exp(-E / GAS_CONSTANT * (1 / T - 1 / T_ref))  # Arrhenius law (CODATA R)
    return math.log((1 - a0) / (a0 + z)) / (k * (1 + z))  # logistic solution, n = m = 1


def test_storage_demo_states_every_criterion_basis():
    r = screen(demo_data())
    block = r["autocatalytic"]
    assert block["tmr_method"] == "integrated adiabatic history (phi = 1)"
    summary = r["runaway_summary"]
    for words in ("integrated adiabatic history", "phi = 1", "zero-order asymptote and does not apply",
                  "conversion of maximum rate", "conservative", "Isothermal induction time at the storage temperature",
                  "very sensitive to the initiation term z and to the initial conversion",
                  "aged, recycled or contaminated"):
        assert words in summary, words
    assert r["critical_ambient_method"] == "semenov"
    assert block["sources"][0]["conversion_of_maximum_rate"] == pytest.approx(0.49, abs=1e-12)  # (1 - z) / 2
    # used below its tested range: the output says z is taken as temperature-independent
    assert any("initiation term z is taken as independent of temperature" in w for w in r["warnings"])
    # the zero-conversion caution does not appear for a modelled autocatalytic source
    assert not any("If the decomposition is autocatalytic" in w for w in r["warnings"])


def test_storage_induction_time_is_the_logistic_solution_and_sets_the_verdict():
    data = demo_data()
    r = screen(data)
    T_store = max(318.15, 313.15)  # the higher of the initial and the ambient temperature
    expected = logistic_induction_time(T_store, 1e-4, 393.15, 90e3, 0.02, 0.02)
    assert r["induction_time_at_storage_temperature_s"] == pytest.approx(expected, rel=1e-9)
    assert r["induction_time_over_storage_period"] == pytest.approx(expected / (90 * 86400.0), rel=1e-9)

    def reasons_with_horizon(seconds):
        d = copy.deepcopy(data)
        d["horizon"] = f"{seconds!r} s"
        out = screen(d)
        return out["verdict"], [x for x in out["reasons"] if "isothermal induction time" in x]

    verdict, reasons = reasons_with_horizon(expected * (1 + 1e-6))  # ratio just under 1: fail (<= 1)
    assert verdict == "fail" and "no longer than the storage period" in reasons[0]
    verdict, reasons = reasons_with_horizon(expected / 1.01)  # ratio 1.01: review (< 3)
    assert verdict != "fail" and "less than 3" in reasons[0]
    verdict, reasons = reasons_with_horizon(expected / 3.0)  # ratio 3: the pass reason (>= 3)
    assert "at least the factor of 3" in reasons[0]


def test_cooling_failure_gives_the_induction_time_at_mtsr():
    data = demo_data()
    data["scenario"] = "cooling-failure"
    data["heat_sources"].insert(0, {"kind": "arrhenius", "role": "synthesis", "label": "desired reaction",
                                    "specific_heat_of_reaction": "40 kJ/kg", "accumulated_fraction": "50 %"})
    data["maximum_technical_temperature"] = "100 degC"
    r = screen(data)
    mtsr = 318.15 + 0.5 * 40e3 / 1900.0  # MTSR = Tp + X_ac dh / c_p (Stoessel 2008, from memory)
    assert r["mtsr_K"] == pytest.approx(mtsr, rel=1e-12)
    assert r["induction_time_at_mtsr_s"] == pytest.approx(
        logistic_induction_time(mtsr, 1e-4, 393.15, 90e3, 0.02, 0.02), rel=1e-9)
    assert "Isothermal induction time at MTSR" in r["runaway_summary"]
    assert r["autocatalytic"]["tmr_method"] == "integrated adiabatic history (phi = 1)"


def test_a_synthesis_caution_does_not_speak_of_a_decomposition():
    case = yaml.safe_load((ROOT / "screening" / "demo_cases" / "fw-r301-reactor.yaml").read_text(encoding="utf-8"))
    r = screen(case)
    synthesis = [w for w in r["warnings"] if "depletion is credited" in w and "desired reaction" in w]
    assert synthesis and all("decomposition" not in w for w in synthesis)


def test_monte_carlo_samples_match_the_one_case_engine():
    data = demo_data()
    data["horizon"] = "400 d"
    data["heat_loss"]["ambient_temperature"] = "44 degC"  # above the critical ambient: samples self-heat
    data["limits"][0]["temperature"] = "50 degC"
    data["uncertainty"] = {"samples": 12, "seed": 3, "inputs": {
        "heat_sources.0.rate_constant": {"distribution": "lognormal", "gsd": 1.5},
        "heat_sources.0.initial_conversion": {"distribution": "uniform", "low": "0 %", "high": "10 %"},
        "heat_sources.0.specific_heat_of_reaction": {"distribution": "normal", "sd": "10 %"}}}
    prepared = prepare_case(load_case_bytes(yaml.safe_dump(data).encode(), "yaml").spec)
    plan = plan_uncertainty(prepared.spec)
    values = draw(plan)
    times = screen_samples(prepared, sample_arrays(prepared, plan, values)).limit_times
    checked = 0
    for i in range(4):
        d = copy.deepcopy(data)
        del d["uncertainty"]
        src = d["heat_sources"][0]
        for j, inp in enumerate(plan.inputs):  # the sampled SI values, written back as text
            name = inp.parts[-1]
            unit = {"rate_constant": " 1/s", "initial_conversion": "", "specific_heat_of_reaction": " J/kg"}[name]
            src[name] = f"{float(values[i, j])!r}{unit}"
        model = prepare_case(load_case_bytes(yaml.safe_dump(d).encode(), "yaml").spec).model
        t = integrate_history(model).limits[0].time
        if t is None:
            assert np.isnan(times[i, 0])
        else:
            checked += 1
            assert times[i, 0] == pytest.approx(t, rel=1e-6)
    assert checked >= 1
    assert analyse(prepared)["samples"] == 12


def test_register_rows_with_an_autocatalytic_source(tmp_path):
    base = demo_data()
    base_file = tmp_path / "base.yaml"
    base_file.write_text(yaml.safe_dump(base, sort_keys=False), encoding="utf-8")
    header = ["id", "heat_sources.0.rate_constant [1/s]", "heat_sources.0.initial_conversion [%]",
              "contents.mass [kg]"]
    rows = [["R-1", "1e-4", "2", "8000"], ["R-2", "3e-4", "0", "5000"], ["R-3", "1e-4", "20", "8000"],
            ["R-4", "1e-4", "150", "8000"]]
    reg = tmp_path / "register.csv"
    with open(reg, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(header)
        w.writerows(rows)
    out = tmp_path / "out"
    run_batch(reg, out, base_path=base_file)
    results = {r["id"]: r for r in json.loads((out / "results.json").read_text(encoding="utf-8"))}
    with open(out / "errors.csv", newline="", encoding="utf-8") as fh:
        errors = list(csv.DictReader(fh))
    assert set(results) == {"R-1", "R-2", "R-3"}
    assert len(errors) == 1 and "initial_conversion" in json.dumps(errors[0])
    for rid, k, x, mass in rows[:3]:
        d = copy.deepcopy(base)
        d["id"] = rid
        d["heat_sources"][0]["rate_constant"] = f"{k} 1/s"
        d["heat_sources"][0]["initial_conversion"] = f"{x} %"
        d["contents"]["mass"] = f"{mass} kg"
        single = screen(d)
        batch = results[rid]
        assert batch["verdict"] == single["verdict"]
        assert batch["reasons"] == single["reasons"]
        for key in ("tmr_at_storage_temperature_s", "t_d24_K", "critical_ambient_temperature_K",
                    "induction_time_at_storage_temperature_s"):
            assert batch[key] == pytest.approx(single[key], rel=1e-12), key
        for lb, ls in zip(batch["limits"], single["limits"], strict=True):
            assert (lb["time_s"] is None) == (ls["time_s"] is None)
            if lb["time_s"] is not None:
                assert lb["time_s"] == pytest.approx(ls["time_s"], rel=1e-9)
