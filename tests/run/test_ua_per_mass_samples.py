"""Monte Carlo and registers accept heat_loss.ua_per_mass, and UA follows a sampled mass.

Check values: UA = (UA/m) m by definition; each sample's arrays against the case prepared again from
that sample's values (the general path: prepare_case), and a register row against the equivalent case file.
"""
from __future__ import annotations

import copy
import csv
import json

import numpy as np
import pytest
import yaml

from screening.case.files import load_case_bytes
from screening.case.prepare import prepare_case
from screening.case.uncertainty_plan import draw
from screening.register.batch import run_batch
from screening.run.monte_carlo import _arrays_by_preparing, base_arrays, sample_arrays

CASE = {
    "id": "UPM-1",
    "contents": {"mass": "50 kg", "specific_heat": "2 kJ/(kg*K)", "initial_temperature": "20 degC"},
    "heat_loss": {"ambient_temperature": "25 degC", "ua_per_mass": "90 mW/(kg*K)"},
    "heat_sources": [{"kind": "constant", "power": "2 W"}],
    "limits": [{"name": "onset", "temperature": "60 degC"}],
    "horizon": "7 d",
    "response_time": "1 h",
}


def prepared(data):
    return prepare_case(load_case_bytes(yaml.safe_dump(data).encode(), "yaml").spec)


@pytest.mark.parametrize("inputs", [
    {"heat_loss.ua_per_mass": {"distribution": "uniform", "low": "80 mW/(kg*K)", "high": "100 mW/(kg*K)"}},
    {"contents.mass": {"distribution": "uniform", "low": "40 kg", "high": "60 kg"}},
    {"contents.mass": {"distribution": "uniform", "low": "40 kg", "high": "60 kg"},
     "heat_loss.ua_per_mass": {"distribution": "uniform", "low": "80 mW/(kg*K)", "high": "100 mW/(kg*K)"}},
])
def test_sampled_ua_follows_the_mass_and_the_loss_per_kg(inputs):
    data = copy.deepcopy(CASE)
    data["uncertainty"] = {"samples": 64, "seed": 5, "inputs": inputs}
    p = prepared(data)
    plan = p.uncertainty_plan
    values = draw(plan)[:64]
    fast = sample_arrays(p, plan, values)
    slow = _arrays_by_preparing(p, plan, values, base_arrays(p, len(values)))
    np.testing.assert_allclose(fast.ua, slow.ua, rtol=1e-12)
    np.testing.assert_allclose(fast.m, slow.m, rtol=1e-12)
    assert np.ptp(fast.ua) > 0  # the UA did move with the samples


def test_register_column_of_loss_per_kg(tmp_path):
    base = copy.deepcopy(CASE)
    del base["heat_loss"]["ua_per_mass"]
    (tmp_path / "base.yaml").write_text(yaml.safe_dump(base), encoding="utf-8")
    with open(tmp_path / "reg.csv", "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(["id", "contents.mass [kg]", "heat_loss.ua_per_mass [mW/(kg*K)]"])
        w.writerows([["A", "50", "90"], ["B", "200", "80"], ["C", "50", "-1"]])
    run_batch(tmp_path / "reg.csv", tmp_path / "out", base_path=tmp_path / "base.yaml")
    results = {r["id"]: r for r in json.loads((tmp_path / "out" / "results.json").read_text(encoding="utf-8"))}
    assert results["A"]["ua_W_per_K"] == pytest.approx(4.5, rel=1e-12)  # 0.09 x 50, by hand
    assert results["B"]["ua_W_per_K"] == pytest.approx(16.0, rel=1e-12)  # 0.08 x 200, by hand
    single = dict(CASE, id="A")
    from screening.run.screen_case import screen_prepared

    assert results["A"]["peak_temperature_K"] == pytest.approx(screen_prepared(prepared(single))["peak_temperature_K"],
                                                               rel=1e-12)
    with open(tmp_path / "out" / "errors.csv", newline="", encoding="utf-8") as fh:
        errors = list(csv.DictReader(fh))
    assert any("heat_loss.ua_per_mass" in " ".join(e.values()) for e in errors)
