"""The lumped (well-mixed) comparison of an unstirred case from the vectorised engine's values.

An unstirred case keeps the lumped result under ``lumped`` beside the conduction solution. That lumped run
is the same balance as a stirred case's, so it comes from the vectorised Arrhenius engine like a stirred
case's main run. Here random unstirred cases are screened from the engine and with the single-case
integrator (scipy's Radau; the reference, itself checked in tests/core against solve_ivp): every text, flag
and verdict-bearing value the same; numbers to the engines' stated accuracy (1e-6 relative; a flat
maximum's time to 1e-4), as tests/run/test_arrhenius_engine_values.py asks of stirred cases. Invented cases.
"""
from __future__ import annotations

import numpy as np

from screening.result import public_result
from screening.run import runaway_case
from screening.run.runaway_case import arrhenius_values, engine_eligible
from screening.run.screen_case import screen_prepared
from test_arrhenius_engine_values import compare, prepared_of, random_case


def unstirred_case(rng, i):
    data = random_case(rng, i)
    data["contents"]["mixing"] = "unstirred"
    data["contents"]["thermal_conductivity"] = f"{rng.uniform(0.08, 0.4):.3g} W/(m*K)"
    data["contents"]["density"] = f"{rng.uniform(400, 1200):.4g} kg/m^3"
    data["vessel"] = {"shape": str(rng.choice(["vertical-cylinder", "sphere"])),
                      "diameter": f"{rng.uniform(0.3, 0.9):.3g} m"}
    if data["vessel"]["shape"] == "vertical-cylinder":
        data["vessel"]["length"] = f"{rng.uniform(0.4, 1.2):.3g} m"
    data["horizon"] = f"{rng.uniform(1, 10):.3g} d"
    return data


def test_unstirred_lumped_values_from_the_engine_equal_the_single_case_integrator(monkeypatch):
    rng = np.random.default_rng(117)
    cases = []
    for i in range(40):
        try:
            cases.append(prepared_of(unstirred_case(rng, i)))
        except Exception:  # noqa: BLE001 - a random case the schema refuses (e.g. mass and geometry disagree)
            continue
        if len(cases) == 10:
            break
    assert len(cases) >= 6
    assert all(engine_eligible(p) for p in cases)
    group = arrhenius_values(cases)
    for p, values in zip(cases, group):
        assert values is not None
        from_group = public_result(screen_prepared(p, arrhenius_values=values, with_history=False))
        with monkeypatch.context() as mp:
            mp.setattr(runaway_case, "engine_eligible", lambda prepared: False)
            single = public_result(screen_prepared(p, with_history=False))
        assert from_group["mixing"] == "unstirred"
        compare(from_group, single)
