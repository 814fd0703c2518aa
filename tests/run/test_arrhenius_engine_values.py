"""Cases with Arrhenius sources screened from the vectorised engine's values (one case is a group of one,
a register's rows a larger group) against the same cases screened by the single-case integrator.

Reference: the single-case integrator (scipy's Radau, checked in tests/core against quadrature and
solve_ivp) and its texts; the vectorised engine is checked against scipy's solve_ivp in
tests/core/test_arrhenius_history_batch.py. Every text, flag and verdict-bearing value must be the same;
numbers agree to the engines' stated accuracy (1e-6 relative; a flat maximum's time, ill-conditioned,
to 1e-4). Invented cases.
"""
from __future__ import annotations

import math

import numpy as np
import pytest
import yaml

from screening.case.files import load_case_bytes
from screening.case.prepare import prepare_case
from screening.result import public_result
from screening.run import runaway_case
from screening.run.runaway_case import arrhenius_values, engine_eligible
from screening.run.screen_case import screen_prepared


def random_case(rng, i):
    scenario = str(rng.choice(["storage", "heat-up"]))
    order = float(rng.choice([0.0, 0.5, 1.0, 2.0]))
    src = {"kind": "arrhenius", "role": "decomposition", "specific_power": f"{10 ** rng.uniform(-3, 1):.4g} W/kg",
           "reference_temperature": "60 degC", "activation_energy": f"{rng.uniform(70, 160):.4g} kJ/mol",
           "order": order, "tested_range": ["40 degC", "100 degC"]}
    if rng.random() < 0.8:
        src["specific_heat_of_reaction"] = f"{rng.uniform(100, 1500):.4g} kJ/kg"
    else:
        src["order"] = 0.0  # without a heat of reaction: zero order, unbounded (the schema's rule)
    data = {"id": f"FW-E{i}", "scenario": scenario,
            "contents": {"mass": f"{rng.uniform(20, 5000):.4g} kg", "specific_heat": "1.8 kJ/(kg*K)",
                         "initial_temperature": f"{rng.uniform(15, 70):.3g} degC", "mixing": "stirred"},
            "heat_loss": {"ambient_temperature": f"{rng.uniform(5, 45):.3g} degC",
                          "ua": f"{rng.uniform(0, 40):.3g} W/K"},
            "heat_sources": [src],
            "limits": [{"name": "warm", "temperature": f"{rng.uniform(40, 70):.3g} degC"},
                       {"name": "hot", "temperature": f"{rng.uniform(80, 150):.3g} degC"}],
            "horizon": f"{rng.uniform(1, 60):.3g} d", "response_time": "2 h"}
    if rng.random() < 0.5:
        data["detection"] = {"alarm_temperature": f"{rng.uniform(40, 90):.3g} degC"}
    if rng.random() < 0.3:
        data["heat_sources"].append({"kind": "constant", "power": f"{rng.uniform(0, 50):.3g} W"})
    return data


def prepared_of(data):
    return prepare_case(load_case_bytes(yaml.safe_dump(data, sort_keys=False).encode(), "yaml").spec)


def compare(a, b, path=""):
    """Texts, flags and None exactly; numbers to 1e-6 relative (peak_time_s of a flat maximum to 1e-4)."""
    if isinstance(a, dict):
        assert set(a) == set(b), path
        for k in a:
            compare(a[k], b[k], f"{path}/{k}")
    elif isinstance(a, list):
        assert len(a) == len(b), path
        for k, (x, y) in enumerate(zip(a, b)):
            compare(x, y, f"{path}[{k}]")
    elif isinstance(a, float) and isinstance(b, float) and not isinstance(a, bool):
        rel = 1e-4 if path.endswith("peak_time_s") else 1e-6
        assert a == pytest.approx(b, rel=rel, abs=1e-9), path
    else:
        assert a == b, path


def test_engine_values_give_the_single_case_results(monkeypatch):
    rng = np.random.default_rng(2026)
    cases = [prepared_of(random_case(rng, i)) for i in range(24)]
    assert all(engine_eligible(p) for p in cases)
    group = arrhenius_values(cases)  # one run of the engine for the whole group
    seen_rising = set()
    for p, values in zip(cases, group):
        assert values is not None
        from_group = public_result(screen_prepared(p, arrhenius_values=values, with_history=False))
        alone = public_result(screen_prepared(p, with_history=False))  # a group of one
        assert from_group == alone, p.spec.id  # the same numbers whatever the group
        with monkeypatch.context() as mp:
            mp.setattr(runaway_case, "engine_eligible", lambda prepared: False)
            single = public_result(screen_prepared(p, with_history=False))
        compare(from_group, single)
        seen_rising.add(values.rising_at_end)
        seen_rising.add(("ceiling", values.peak_is_ceiling))
    assert {True, False, ("ceiling", True), ("ceiling", False)} <= seen_rising  # every kind of end was compared


def test_cases_outside_the_engine_keep_the_single_case_integrator():
    # tempering credit from boiling (open venting, no gas-generating reaction; the engine has no boiling):
    # the single-case integrator, with its texts
    rng = np.random.default_rng(7)
    data = random_case(rng, 0)
    data["contents"].update(boiling_point="100 degC", latent_heat="2257 kJ/kg")
    data["vessel"] = {"venting": "open"}
    data["heat_sources"][0]["gas_generating"] = False
    p = prepared_of(data)
    assert p.model.boiling is not None
    assert not engine_eligible(p) and arrhenius_values([p]) == [None]
    assert engine_eligible(prepared_of(random_case(rng, 1)))
