"""The public time-to-limit solver: its two methods agree, and it reproduces a handbook example."""
from __future__ import annotations

import math

import numpy as np
import pytest

from screening.core.time_to_limit import time_to_limit


def test_incropera_example_5_1_thermocouple():
    # Incropera et al., Fundamentals of Heat and Mass Transfer, Example 5.1 (from memory): time constant
    # 1 s, from 25 degC in a 200 degC gas stream to 199 degC takes tau ln(175 / 1) = 5.2 s.
    for method in ("one-case", "vectorised"):
        t = time_to_limit(1.0, 1.0, 473.15, 298.15, [472.15], 60.0, method=method)
        assert t[0] == pytest.approx(math.log(175.0), rel=1e-12)


def test_methods_agree_on_random_vessels():
    rng = np.random.default_rng(7)
    n = 300
    C = rng.uniform(1e5, 1e8, n)
    G = np.where(rng.random(n) < 0.1, 0.0, rng.uniform(1.0, 2000.0, n))  # some adiabatic
    T0 = rng.uniform(280.0, 330.0, n)
    Ta = rng.uniform(270.0, 320.0, n)
    Q0 = G * Ta + rng.uniform(-2e3, 2e4, n)
    P = rng.uniform(-1e4, 1e5, (n, 2))
    a = rng.uniform(60.0, 1e5, (n, 2))
    a[: n // 5, 1] = C[: n // 5] / np.maximum(G[: n // 5], 1.0)  # some decay at the vessel's own time constant
    L = np.column_stack([T0 + rng.uniform(-5.0, 80.0, n), T0 + rng.uniform(10.0, 200.0, n)])
    H = rng.uniform(3600.0, 7 * 86400.0, n)
    one = time_to_limit(C, G, Q0, T0, L, H, P, a, method="one-case")
    many = time_to_limit(C, G, Q0, T0, L, H, P, a, method="vectorised")
    assert np.array_equal(np.isnan(one), np.isnan(many))
    both = ~np.isnan(one)
    assert both.sum() > 100
    np.testing.assert_allclose(many[both], one[both], rtol=1e-9, atol=1e-6)


def test_unknown_method_is_refused():
    with pytest.raises(ValueError, match="method"):
        time_to_limit(1.0, 1.0, 1.0, 1.0, [2.0], 1.0, method="fast")
