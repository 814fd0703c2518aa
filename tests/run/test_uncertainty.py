"""Monte Carlo, sensitivity and allowable values, checked against exact answers.

References: the exact probability of a monotone case follows from the input's
uniform distribution and a root found with scipy.optimize.brentq on the exact
closed form; Monte Carlo agreement is judged by the binomial standard error
sqrt(p (1 - p) / n) (common practice).
"""
from __future__ import annotations

import json
import math
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
import yaml
from scipy.optimize import brentq

from screening.run.allowable_values import find_allowable_values, verdict_at
from screening.case.files import load_case_bytes
from screening.case.schema import CaseError
from screening.case.prepare import prepare_case
from screening.core.closed_form_history import linear_balance
from screening.core.time_to_limit import first_crossing
from screening.run.monte_carlo import analyse
from screening.case.uncertainty_plan import draw, plan_uncertainty

ROOT = Path(__file__).resolve().parents[2]

CASE = {
    "id": "U-1",
    "contents": {"mass": "9000 kg", "specific_heat": "2 kJ/(kg*K)", "initial_temperature": "30 degC"},
    "heat_loss": {"ambient_temperature": "32 degC", "ua": "300 W/K"},
    "heat_sources": [{"kind": "constant", "power": "20 kW"},
                     {"kind": "decaying", "power": "35 kW", "time_constant": "4 h"}],
    "limits": [{"name": "onset", "temperature": "60 degC"}],
    "response_time": "4 h",
    "detection": {"delay": "0 h"},  # stated: detection at the moment cooling is lost
}


def prepared_with(unc: dict | None, **over):
    data = json.loads(json.dumps(CASE))
    data.update(over)
    if unc is not None:
        data["uncertainty"] = unc
    return prepare_case(load_case_bytes(yaml.safe_dump(data).encode(), "yaml").spec)


def time_for_ua(ua: float) -> float:
    # the exact closed form for this case (independent of the Monte Carlo path)
    b = linear_balance(9000 * 2000.0, ua, 305.15, 303.15, 20e3, [35e3], [4 * 3600.0])
    return first_crossing(b, 333.15, 72 * 3600.0)


def test_monotone_case_probability_matches_exact_fraction():
    unc = {"samples": 40000, "seed": 5, "inputs": {"heat_loss.ua": {"distribution": "uniform", "low": "100 W/K",
                                                                     "high": "600 W/K"}}}
    res = analyse(prepared_with(unc))
    # time to the limit grows with UA; the threshold UA reaches the limit exactly at the response time
    deadline = 4 * 3600.0
    ua_star = brentq(lambda u: time_for_ua(u) - deadline, 100, 600, xtol=1e-12)
    exact = (ua_star - 100.0) / 500.0  # fraction of the uniform range below the threshold
    p = res["limits"][0]["probability_before_response"]
    se = math.sqrt(exact * (1 - exact) / 40000)  # binomial standard error (common practice)
    assert abs(p - exact) < 4 * se, (p, exact, se)
    assert res["limits"][0]["probability_before_response_standard_error"] == pytest.approx(
        math.sqrt(p * (1 - p) / 40000))


def test_percentiles_are_transformed_percentiles_of_the_input():
    unc = {"samples": 2001, "seed": 3, "inputs": {"heat_loss.ua": {"distribution": "uniform", "low": "100 W/K",
                                                                    "high": "600 W/K"}}}
    prepared = prepared_with(unc)
    res = analyse(prepared)
    ua = np.sort(draw(prepared.uncertainty_plan)[:, 0])
    n = len(ua)
    for q, key in ((0.05, "p05_time_s"), (0.50, "p50_time_s"), (0.95, "p95_time_s")):
        k = int(math.ceil(q * n)) - 1  # inverted-CDF order statistic
        # time increases with UA, so the k-th smallest time belongs to the k-th smallest UA
        assert res["limits"][0][key] == pytest.approx(time_for_ua(ua[k]), rel=1e-9)


def test_same_seed_same_answer_and_convergence():
    base = {"heat_loss.ua": {"distribution": "uniform", "low": "100 W/K", "high": "600 W/K"},
            "heat_sources.1.power": {"distribution": "normal", "sd": "10 %"},
            "contents.initial_temperature": {"distribution": "normal", "sd": "2 K"}}
    a = analyse(prepared_with({"samples": 5000, "seed": 42, "inputs": base}))
    b = analyse(prepared_with({"samples": 5000, "seed": 42, "inputs": base}))
    c = analyse(prepared_with({"samples": 5000, "seed": 43, "inputs": base}))
    assert a["limits"] == b["limits"]
    assert a["limits"] != c["limits"]
    reference = analyse(prepared_with({"samples": 200000, "seed": 1, "inputs": base}))["limits"][0][
        "probability_before_response"]
    errors = []
    for n in (500, 5000, 50000):
        p = analyse(prepared_with({"samples": n, "seed": 7, "inputs": base}))["limits"][0]["probability_before_response"]
        se = math.sqrt(reference * (1 - reference) / n)
        assert abs(p - reference) < 4 * se + 4 * math.sqrt(reference * (1 - reference) / 200000)
        errors.append(se)
    assert errors[0] > errors[1] > errors[2]


def test_latin_hypercube_option_and_relative_spreads():
    unc = {"samples": 4000, "seed": 1, "sampling": "latin-hypercube",
           "inputs": {"heat_sources.0.power": {"distribution": "lognormal", "gsd": 1.2},
                      "contents.specific_heat": {"distribution": "triangular", "low": "1.8 kJ/(kg*K)",
                                                 "high": "2.3 kJ/(kg*K)"}}}
    prepared = prepared_with(unc)
    order = [inp.path for inp in prepared.uncertainty_plan.inputs]
    values = draw(prepared.uncertainty_plan)[:, [order.index("heat_sources.0.power"),
                                                  order.index("contents.specific_heat")]]
    # lognormal about the case's own value: the median of the samples is close to 20 kW
    assert np.median(values[:, 0]) == pytest.approx(20e3, rel=0.01)
    # Latin hypercube: exactly one sample in each of n equal-probability strata of the triangular input
    from scipy import stats

    u = stats.triang.cdf(values[:, 1], (2000 - 1800) / 500, loc=1800, scale=500)
    assert sorted(np.floor(u * 4000).astype(int)) == list(range(4000))
    res = analyse(prepared)
    assert res["sampling"] == "latin-hypercube" and res["accepted"] == 4000


def test_impossible_samples_are_rejected_and_counted():
    unc = {"samples": 10000, "seed": 2, "inputs": {"heat_loss.ua": {"distribution": "normal", "mean": "50 W/K",
                                                                     "sd": "50 W/K"}}}
    res = analyse(prepared_with(unc))
    # about 15.9 % of a normal lies more than one sd below its mean (ua < 0 is impossible)
    assert 1400 < res["rejected"] < 1800
    assert res["accepted"] + res["rejected"] == 10000


def test_sensitivity_ranks_the_dominant_input_first():
    unc = {"samples": 3000, "seed": 4,
           "inputs": {"heat_loss.ua": {"distribution": "uniform", "low": "290 W/K", "high": "310 W/K"},
                      "heat_sources.1.power": {"distribution": "normal", "sd": "20 %"}}}
    res = analyse(prepared_with(unc))
    sens = res["sensitivity"]
    assert sens[0]["input"] == "heat_sources.1.power"
    s_ua = next(s for s in sens if s["input"] == "heat_loss.ua")
    # the one-at-a-time swing values are the exact times at the 5th and 95th percentile of UA
    assert s_ua["low_time_s"] == pytest.approx(time_for_ua(291.0), rel=1e-9)
    assert s_ua["high_time_s"] == pytest.approx(time_for_ua(309.0), rel=1e-9)


@pytest.mark.parametrize("bad, field", [
    ({"inputs": {"contents.colour": {"distribution": "normal", "sd": "1 K"}}}, "uncertainty.inputs.contents.colour"),
    ({"inputs": {"heat_loss.ua": {"distribution": "gamma"}}}, "uncertainty.inputs.heat_loss.ua.distribution"),
    ({"inputs": {"heat_loss.ua": {"distribution": "normal", "sd": 5}}}, "uncertainty.inputs.heat_loss.ua.sd"),
    ({"inputs": {"heat_loss.ua": {"distribution": "uniform", "low": "5 m", "high": "6 W/K"}}},
     "uncertainty.inputs.heat_loss.ua.low"),
    ({"inputs": {"heat_loss.ua": {"distribution": "lognormal", "gsd": 0.5}}}, "uncertainty.inputs.heat_loss.ua.gsd"),
    ({"samples": -3, "inputs": {"heat_loss.ua": {"distribution": "normal", "sd": "1 %"}}}, "uncertainty.samples"),
])
def test_bad_uncertainty_blocks_name_the_field(bad, field):
    with pytest.raises(CaseError) as exc:
        prepared_with(bad)
    assert field in [p.field for p in exc.value.problems]


def test_allowable_values_verdict_differs_either_side():
    prepared = prepared_with(None, response_time="2 h")
    report = find_allowable_values(prepared, "heat_loss.ambient_temperature")
    assert report["changes"], report
    from screening.case.paths import path_parts, locate_quantity

    parts = path_parts("heat_loss.ambient_temperature")
    _, _, q, _ = locate_quantity(prepared.spec, parts)
    step = 1e-5 * (report["range"][1] - report["range"][0])  # K: a stated small step, well above the bisection width
    for c in report["changes"]:
        v_si = c["value_si"]
        assert verdict_at(prepared, parts, q, v_si - step, None) == c["below"]
        assert verdict_at(prepared, parts, q, v_si + step, None) == c["above"]
        assert c["below"] != c["above"]


def test_probability_rule_fires_at_threshold_not_below():
    from screening import verdict as rules

    rs = rules.load_rule_set()

    def verdict_for(p):
        result = {"id": "X", "limits": [], "uncertainty": {"first_limit": "a", "limits": [
            {"name": "a", "probability_before_response": p, "probability_within_horizon": p, "p05_time_s": None}]}}
        fired = {f.rule_id for f in rules.evaluate(rs, result).fired}
        return fired

    assert "probability-before-response-high" in verdict_for(0.10)
    assert "probability-before-response-high" not in verdict_for(0.0999)
    assert "probability-before-response" in verdict_for(0.01)
    assert "probability-before-response" not in verdict_for(0.0099)


def test_margin_cli(tmp_path):
    case = tmp_path / "c.yaml"
    data = json.loads(json.dumps(CASE))
    data["response_time"] = "2 h"
    case.write_text(yaml.safe_dump(data))
    proc = subprocess.run([sys.executable, "-m", "screening.cli", "margin", str(case), "--vary",
                           "heat_loss.ambient_temperature", "--json"], capture_output=True, text=True, cwd=ROOT,
                          timeout=300)
    assert proc.returncode == 0, proc.stderr
    report = json.loads(proc.stdout)
    assert report["unit"] == "degC" and report["changes"]
    bad = subprocess.run([sys.executable, "-m", "screening.cli", "margin", str(case), "--vary", "contents.colour"],
                         capture_output=True, text=True, cwd=ROOT, timeout=120)
    assert bad.returncode == 2 and "contents.colour" in bad.stderr and "Traceback" not in bad.stderr
