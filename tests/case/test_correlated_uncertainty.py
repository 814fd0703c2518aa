"""uncertainty.correlation: correlated normal sampling (Gaussian copula) and its validation."""
from __future__ import annotations

import math

import numpy as np
import pytest

from screening.case.schema import CaseError, validate_case_data
from screening.case.uncertainty_plan import draw, plan_uncertainty

BASE = {
    "id": "T-1", "contents": {"mass": "1000 kg", "specific_heat": "2 kJ/(kg*K)", "initial_temperature": "20 degC"},
    "heat_loss": {"ambient_temperature": "20 degC", "ua": "50 W/K"},
    "heat_sources": [{"kind": "constant", "power": "2 kW"}],
    "limits": [{"name": "limit", "temperature": "80 degC"}],
}
MATRIX = [[1.0, -0.6, 0.3], [-0.6, 1.0, 0.2], [0.3, 0.2, 1.0]]


def _plan(correlation, samples=200_000, sampling="random", dists=None):
    case = dict(BASE)
    case["uncertainty"] = {"samples": samples, "seed": 7, "sampling": sampling, "inputs": dists or {
        "heat_loss.ua": {"distribution": "normal", "sd": "5 W/K"},
        "contents.mass": {"distribution": "lognormal", "gsd": 1.2},
        "heat_sources.0.power": {"distribution": "normal", "sd": "10 %"}}}
    if correlation is not None:
        case["uncertainty"]["correlation"] = correlation
    return plan_uncertainty(validate_case_data(case))


@pytest.mark.parametrize("sampling", ["random", "latin-hypercube"])
def test_sample_covariance_matches_the_requested_one(sampling):
    # reference: the definition of the covariance of correlated normals, Sigma = D C D (D the standard deviations,
    # C the correlation); for the lognormal input, of its logarithm (sd ln 1.2).  Tolerance: five standard errors
    # of a sample correlation, (1 - r^2) / sqrt(n) (Fisher 1915; common practice).
    plan = _plan({"inputs": ["heat_loss.ua", "contents.mass", "heat_sources.0.power"], "matrix": MATRIX},
                 sampling=sampling)
    values = draw(plan)
    scores = np.column_stack([values[:, 0], np.log(values[:, 1]), values[:, 2]])
    sd = np.array([5.0, math.log(1.2), 200.0])
    expected = np.diag(sd) @ np.array(MATRIX) @ np.diag(sd)
    n = values.shape[0]
    sample = np.cov(scores, rowvar=False)
    for i in range(3):
        assert sample[i, i] == pytest.approx(expected[i, i], rel=5 * math.sqrt(2 / n))
        for j in range(i + 1, 3):
            r = sample[i, j] / math.sqrt(sample[i, i] * sample[j, j])
            assert abs(r - MATRIX[i][j]) < 5 * (1 - MATRIX[i][j] ** 2) / math.sqrt(n)
    # the marginals keep their means (the case's own values) and medians
    assert scores[:, 0].mean() == pytest.approx(50.0, abs=5 * 5.0 / math.sqrt(n))
    assert np.median(values[:, 1]) == pytest.approx(1000.0, rel=0.01)


def test_without_correlation_the_samples_are_unchanged():
    # the block without correlation draws exactly what it drew before (same generator, same order)
    plain = draw(_plan(None, samples=1000))
    identity = draw(_plan({"inputs": ["heat_loss.ua", "contents.mass"], "matrix": [[1, 0], [0, 1]]}, samples=1000))
    assert np.allclose(plain, identity, rtol=1e-12, atol=0)


@pytest.mark.parametrize("correlation, field, words", [
    ({"inputs": ["heat_loss.ua", "contents.mass"], "matrix": [[1, 0.9], [0.9, 1]], "extra": 1},
     "uncertainty.correlation", "expected {inputs"),
    ({"inputs": ["heat_loss.ua", "nope"], "matrix": [[1, 0], [0, 1]]}, "uncertainty.correlation.inputs.1",
     "not one of uncertainty.inputs"),
    ({"inputs": ["heat_loss.ua", "contents.mass"], "matrix": [[1, 0.5]]}, "uncertainty.correlation.matrix",
     "2 x 2"),
    ({"inputs": ["heat_loss.ua", "contents.mass"], "matrix": [[1, 1.5], [1.5, 1]]},
     "uncertainty.correlation.matrix.0.1", "from -1 to 1"),
    ({"inputs": ["heat_loss.ua", "contents.mass"], "matrix": [[1, 0.5], [0.4, 1]]}, "uncertainty.correlation.matrix",
     "symmetric"),
    ({"inputs": ["heat_loss.ua", "contents.mass", "heat_sources.0.power"],
      "matrix": [[1, 0.9, -0.9], [0.9, 1, 0.9], [-0.9, 0.9, 1]]}, "uncertainty.correlation.matrix",
     "not positive semi-definite"),
])
def test_bad_correlation_names_the_field(correlation, field, words):
    with pytest.raises(CaseError) as exc:
        _plan(correlation, samples=100)
    assert any(p.field == field and words in p.message for p in exc.value.problems), exc.value.problems


def test_only_normal_or_lognormal_inputs_can_be_correlated():
    dists = {"heat_loss.ua": {"distribution": "uniform", "half_width": "5 W/K"},
             "contents.mass": {"distribution": "lognormal", "gsd": 1.2}}
    with pytest.raises(CaseError) as exc:
        _plan({"inputs": ["heat_loss.ua", "contents.mass"], "matrix": [[1, 0.5], [0.5, 1]]}, samples=100,
              dists=dists)
    assert "must be normal or lognormal" in str(exc.value)
