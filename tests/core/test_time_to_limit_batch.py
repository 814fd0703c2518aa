"""Tests of screening.vectorised_engine against outside references and the single-case engine.

Check values name their source beside them:
- "single-case engine": screening.time_to_limit.first_crossing / history_shape on a
  balance from screening.closed_form_history.linear_balance, case by case;
- "solve_ivp": scipy.integrate.solve_ivp (DOP853) with events, rtol = 1e-12;
- "brentq": scipy.optimize.brentq on the closed form, bracketed on a dense grid;
- "derived": a short derivation written out in the test.
"""
from __future__ import annotations

import itertools
import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings, strategies as st
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from screening.core.closed_form_history import LinearBalance, linear_balance, temperature, temperature_rate
from screening.core.time_to_limit import first_crossing, history_shape
from screening.core.time_to_limit_batch import (MAX_ITERATIONS, first_crossing_times, history_summary, screen_register, turning_times)

# Any numpy RuntimeWarning (overflow, divide, invalid) fails the test.
pytestmark = pytest.mark.filterwarnings("error::RuntimeWarning")

HOUR = 3600.0
TIME_RTOL = 1e-9  # the accuracy asked of the engine against the single-case engine
# The single-case engine stops Brent at xtol = 1e-14 * (end of the piece), an absolute
# tolerance; for crossings much earlier than the horizon that dominates its relative error.
TIME_ATOL_PER_HORIZON = 1e-12
GRAZE_RTOL = 1e-9  # limits within this of a turning-point temperature: reached / not reached is a coin toss


# --------------------------------------------------------------------------
# helpers
# --------------------------------------------------------------------------

def register_arrays(balances):
    """Stack per-case LinearBalance objects (same k) into the engine's arrays."""
    C = np.array([float(x.heat_capacity) for x in balances])
    G = np.array([float(x.conductance) for x in balances])
    Q0 = np.array([float(x.drive) for x in balances])
    T0 = np.array([float(x.initial_temperature) for x in balances])
    k = max(np.size(x.decaying_power) for x in balances)
    P = np.zeros((len(balances), k))
    b = np.zeros((len(balances), k))
    for i, x in enumerate(balances):
        n = np.size(x.decaying_power)
        P[i, :n] = np.atleast_1d(x.decaying_power)
        b[i, :n] = np.atleast_1d(x.decay_rate)
    return C, G, Q0, T0, P, b


def single_case(balance, limits, horizon):
    """Times (NaN when not reached) and shape from the single-case engine."""
    shape = history_shape(balance, horizon)
    times = []
    for lim in limits:
        t = first_crossing(balance, float(lim), horizon, shape)
        times.append(np.nan if t is None else t)
    return np.array(times), shape


def with_rates(balance, rates):
    """The same balance with decay rates replaced (to make b_i = lambda exactly)."""
    return LinearBalance(balance.heat_capacity, balance.conductance, balance.drive,
                         balance.initial_temperature, np.asarray(balance.decaying_power, dtype=float),
                         np.asarray(rates, dtype=float))


def ivp_first_crossings(balance, limits, horizon, rtol=1e-12):
    """First upward crossing of each limit by integrating the balance (solve_ivp with events)."""
    C = float(balance.heat_capacity)
    G = float(balance.conductance)
    Q0 = float(balance.drive)
    P = np.atleast_1d(np.asarray(balance.decaying_power, dtype=float))
    b = np.atleast_1d(np.asarray(balance.decay_rate, dtype=float))
    T0 = float(balance.initial_temperature)

    def rhs(t, y):
        return [(Q0 + float(np.sum(P * np.exp(-b * t))) - G * y[0]) / C]

    events = []
    for lim in limits:
        def ev(t, y, lim=lim):
            return y[0] - lim
        ev.direction = 1
        events.append(ev)
    sol = solve_ivp(rhs, (0.0, horizon), [T0], method="DOP853", rtol=rtol, atol=1e-12 * abs(T0),
                    events=events)
    out = []
    for lim, te in zip(limits, sol.t_events):
        if T0 >= lim:
            out.append(0.0)
        else:
            out.append(te[0] if te.size else np.nan)
    return np.array(out)


def grid_brentq_first_crossing(balance, limit, horizon, n=200001):
    """First crossing by a dense grid and scipy's brentq on the closed form."""
    if float(balance.initial_temperature) >= limit:
        return 0.0
    t = np.concatenate([np.linspace(0.0, horizon, n), np.geomspace(1e-9 * horizon, horizon, 2001)])
    t = np.unique(t)
    T = temperature(balance, t)
    above = np.nonzero(T >= limit)[0]
    if above.size == 0:
        return np.nan
    j = above[0]
    f = lambda s: float(temperature(balance, s)) - limit  # noqa: E731
    return brentq(f, t[j - 1], t[j], xtol=1e-14 * t[j], rtol=4 * np.finfo(float).eps, maxiter=500)


def assert_times_match(got, ref, horizon, rtol=TIME_RTOL, what="", atol=0.0):
    got = np.asarray(got, dtype=float)
    ref = np.asarray(ref, dtype=float)
    assert np.array_equal(np.isnan(got), np.isnan(ref)), f"{what}: reached differs: {got} vs {ref}"
    ok = ~np.isnan(ref)
    np.testing.assert_allclose(got[ok], ref[ok], rtol=rtol, atol=TIME_ATOL_PER_HORIZON * horizon + atol,
                               err_msg=what)


def rounding_time(balance, t):
    """How far a crossing time at t is defined in float64, s.

    T(t) is a sum of terms each rounded to about eps of its size, so T - limit is known to
    about 8 eps sum|terms| and the crossing to that divided by |dT/dt| (the condition of the
    problem, not of either engine).
    """
    C = float(balance.heat_capacity)
    lam = float(balance.rate)
    P = np.atleast_1d(np.asarray(balance.decaying_power, dtype=float))
    b = np.atleast_1d(np.asarray(balance.decay_rate, dtype=float))
    g = lambda x: 1.0 if x == 0 else -math.expm1(-x) / x  # noqa: E731
    terms = (abs(float(balance.initial_temperature)) * math.exp(-lam * t)
             + abs(float(balance.drive)) / C * t * g(lam * t))
    terms += sum(abs(p) / C * math.exp(-min(bi, lam) * t) * t * g(abs(lam - bi) * t) for p, bi in zip(P, b))
    rate = abs(float(temperature_rate(balance, t)))
    return 8 * np.finfo(float).eps * terms / rate if rate > 0 else np.inf


# --------------------------------------------------------------------------
# random cases against the single-case engine (hypothesis)
# --------------------------------------------------------------------------

@st.composite
def physical_case(draw, k=None):
    """A vessel in physical terms, built with linear_balance, and 1-3 limits around its history."""
    C = 10 ** draw(st.floats(4.0, 8.0))  # J/K
    adiabatic = draw(st.integers(0, 4)) == 0
    ua = 0.0 if adiabatic else 10 ** draw(st.floats(-1.0, 3.5))  # W/K
    Ta = draw(st.floats(250.0, 330.0))  # K
    T0 = draw(st.floats(250.0, 350.0))  # K, above or below ambient
    p_const = draw(st.sampled_from([0.0, 1.0])) * draw(st.floats(-2e3, 5e3))  # W
    if k is None:
        k = draw(st.integers(0, 3))
    P = [draw(st.sampled_from([-1.0, 1.0, 1.0])) * 10 ** draw(st.floats(1.0, 5.5)) for _ in range(k)]  # W
    a = [draw(st.sampled_from([math.inf, 1.0, 1.0, 1.0])) * 10 ** draw(st.floats(1.0, 6.0)) for _ in range(k)]  # s
    medium = draw(st.booleans()) and not adiabatic
    mua = [10 ** draw(st.floats(0.0, 2.5))] if medium else []
    mt = [draw(st.floats(280.0, 400.0))] if medium else []
    balance = linear_balance(C, ua, Ta, T0, p_const, P, a, mua, mt)
    # some sources decay at, or within 1e-9 of, the vessel's own rate (the degenerate case)
    lam = float(balance.rate)
    if k and lam > 0:
        rates = np.array(balance.decay_rate, dtype=float)
        for i in range(k):
            choice = draw(st.sampled_from(["keep", "keep", "equal", "above", "below"]))
            rates[i] = {"keep": rates[i], "equal": lam, "above": lam * (1 + 1e-9), "below": lam * (1 - 1e-9)}[choice]
        balance = with_rates(balance, rates)
    horizon = 10 ** draw(st.floats(2.5, 6.0))  # s
    shape = history_shape(balance, horizon)
    # mostly between T0 and just above the peak (crossings and misses), sometimes below T0 (reached at 0)
    lo, hi = T0 - draw(st.sampled_from([0.0, 0.0, 0.0, 5.0])), shape.peak_temperature + 2.0
    n_lim = draw(st.integers(1, 3))
    limits = [lo + draw(st.floats(0.0, 1.0)) * (hi - lo) for _ in range(n_lim)]
    limits.sort()
    return balance, limits, horizon


def grazing(balance, limits, horizon, my_turning):
    """Limits within GRAZE_RTOL of T at a turning point (of either engine), at 0 or at the horizon."""
    shape = history_shape(balance, horizon)
    cand = np.concatenate([[0.0, horizon], np.asarray(shape.turning_times), my_turning[~np.isnan(my_turning)]])
    temps = temperature(balance, cand)
    return np.array([np.any(np.abs(temps - L) <= GRAZE_RTOL * abs(L)) for L in limits])


def check_register(cases):
    """Run the engine once on a heterogeneous register and compare every case with the single-case engine."""
    balances = [c[0] for c in cases]
    C, G, Q0, T0, P, b = register_arrays(balances)
    n_lim = max(len(c[1]) for c in cases)
    L = np.full((len(cases), n_lim), np.nan)
    for i, c in enumerate(cases):
        L[i, :len(c[1])] = c[1]
    H = np.array([c[2] for c in cases])
    res = screen_register(C, G, Q0, T0, P, b, L, H)
    for i, (bal, limits, horizon) in enumerate(cases):
        ref, shape = single_case(bal, limits, horizon)  # single-case engine
        got = res.times[i, :len(limits)]
        assert np.all(np.isnan(res.times[i, len(limits):]))  # NaN limit slots give NaN
        skip = grazing(bal, limits, horizon, res.summary.turning_times[i])
        for j in range(len(limits)):
            if skip[j]:
                continue
            cond = rounding_time(bal, ref[j]) if ref[j] > 0 else 0.0
            assert_times_match(got[j:j + 1], ref[j:j + 1], horizon, what=f"case {i} limit {j}", atol=cond)
        s = res.summary
        # peak: same maximum (single-case engine); the time of a flat maximum is ill-conditioned, so
        # check instead that the engine's peak time is a maximiser of the same closed form
        assert s.peak_temperature[i] == pytest.approx(shape.peak_temperature, rel=1e-12, abs=1e-9)
        assert float(temperature(bal, s.peak_time[i])) == pytest.approx(shape.peak_temperature, rel=1e-12)
        assert s.end_temperature[i] == pytest.approx(shape.end_temperature, rel=1e-13)
        rate_scale = (abs(float(bal.drive)) + float(np.sum(np.abs(bal.decaying_power)))
                      + float(bal.conductance) * abs(shape.end_temperature)) / float(bal.heat_capacity)
        assert s.end_rate[i] == pytest.approx(shape.end_rate, rel=1e-9, abs=1e-12 * rate_scale)
        # every turning point the single-case engine sees is found (it can miss, but not add, some:
        # its grid test ignores |dT/dt| below 1e-15 of the largest rate on the grid)
        mine = s.turning_times[i][~np.isnan(s.turning_times[i])]
        for tp in shape.turning_times:
            assert mine.size and np.min(np.abs(mine - tp)) <= 1e-6 * tp + 1e-9 * horizon


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(physical_case(), min_size=1, max_size=6))
def test_register_matches_single_case_engine(cases):
    check_register(cases)


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.lists(physical_case(k=1), min_size=1, max_size=6))
def test_one_source_registers_match_single_case_engine(cases):
    check_register(cases)


# --------------------------------------------------------------------------
# outside references on chosen cases
# --------------------------------------------------------------------------

def several_crossings_balance():
    """Spike from a fast source, dip from a slower heat sink, then a slow rise toward 330 K.

    Steady state Q0 / G = 330 K, tau = C / G = 13.9 h.  The 250 kW source (a = 0.5 h) lifts T from
    310 K to a local maximum near 327.6 K at about 1.5 h; the -20 kW sink (a = 4 h) pulls it back
    to about 323.3 K; the approach to 330 K then crosses 325 K a second time upward (checked on a
    grid in the test).
    """
    return linear_balance(2.0e7, 400.0, 330.0, 310.0, 0.0, [250e3, -20e3], [0.5 * HOUR, 4.0 * HOUR])


def test_several_crossings_first_one_is_returned():
    bal = several_crossings_balance()
    H = 72 * HOUR
    t = np.linspace(0, H, 20001)
    T = temperature(bal, t)
    # derived check that the case does what it says: above 325 K, then below, then above again
    above = T >= 325.0
    assert np.count_nonzero(np.diff(above.astype(int)) != 0) >= 3
    limits = [320.0, 325.0, 329.0]
    C, G, Q0, T0, P, b = register_arrays([bal])
    got = first_crossing_times(C, G, Q0, T0, P, b, np.array([limits]), H)[0]
    ref_ivp = ivp_first_crossings(bal, limits, H)  # solve_ivp
    ref_grid = np.array([grid_brentq_first_crossing(bal, L, H) for L in limits])  # brentq
    ref_engine, _ = single_case(bal, limits, H)  # single-case engine
    assert_times_match(got, ref_grid, H, rtol=1e-11, what="brentq")
    assert_times_match(got, ref_engine, H, what="single-case engine")
    assert_times_match(got, ref_ivp, H, rtol=1e-7, what="solve_ivp")
    assert got[1] < 2 * HOUR  # the first crossing of 325 K is on the early spike, not the late rise


def test_local_maximum_just_below_limit_is_not_a_crossing():
    bal = several_crossings_balance()
    H = 72 * HOUR
    s = history_summary(*register_arrays([bal]), H)
    tp = s.turning_times[0]
    assert np.count_nonzero(~np.isnan(tp)) == 2  # local maximum, then local minimum
    early_peak = float(temperature(bal, tp[0]))
    assert tp[0] < 2 * HOUR and early_peak < s.peak_temperature[0]
    for L in (early_peak - 1e-3, early_peak + 1e-3):
        got = first_crossing_times(*register_arrays([bal]), L, H)[0]
        ref = grid_brentq_first_crossing(bal, L, H)  # brentq
        assert_times_match([got], [ref], H, rtol=1e-10, what=f"limit {L}")
        # just below the local maximum: reached on the spike; just above: only on the late rise
        assert (got < tp[0]) if L < early_peak else (got > tp[1])


def test_crossing_after_a_minimum():
    # an endothermic charge (a decaying heat sink, -20 kW, a = 2 h) in a vessel at ambient with a
    # 2 kW constant source: T falls to a minimum, then rises toward 300 K + 2 kW / G = 310 K.
    bal = linear_balance(1.2e7, 200.0, 300.0, 300.0, 2e3, [-20e3], [2 * HOUR])
    H = 96 * HOUR
    s = history_summary(*register_arrays([bal]), H)
    t_min = s.turning_times[0, 0]
    assert 0 < t_min < 10 * HOUR
    limits = [300.0 + 1e-6, 301.0, 305.0, 309.0]
    got = first_crossing_times(*register_arrays([bal]), np.array([limits]), H)[0]
    assert np.all(got > t_min)
    ref = np.array([grid_brentq_first_crossing(bal, L, H) for L in limits])  # brentq
    assert_times_match(got, ref, H, rtol=1e-11, what="brentq")
    assert_times_match(got, single_case(bal, limits, H)[0], H, what="single-case engine")
    assert_times_match(got, ivp_first_crossings(bal, limits, H), H, rtol=1e-7, what="solve_ivp")
    # the same with a second, slower sink (a case once answered with the minimum itself)
    C, G, Q0, T0 = 11190189.00518548, 211.68099122, 64211.56005738, 293.43719375
    P, b = np.array([-2099.22811606, -32564.61955779]), np.array([1.86073027e-03, 3.54008779e-05])
    bal2 = LinearBalance(C, G, Q0, T0, P, b)
    H2 = 48 * HOUR
    limits2 = [293.93719375, 295.0, 296.0]
    got2 = first_crossing_times(C, G, Q0, T0, P, b, np.array([limits2]), H2)[0]
    assert_times_match(got2, ivp_first_crossings(bal2, limits2, H2), H2, rtol=1e-7, what="solve_ivp")
    assert_times_match(got2, single_case(bal2, limits2, H2)[0], H2, what="single-case engine")


def test_three_turning_points_at_known_times():
    # derived: with lambda = r and b = 2r, 3r, 4r, dT/dt = s (w0 + w1 s + w2 s^2 + w3 s^3),
    # s = exp(-r t).  Choosing the cubic w3 (s - 0.8)(s - 0.5)(s - 0.2) puts the turning points at
    # t = -ln(s_j)/r, and w_i = P_i b_i / (C (b_i - lambda)), w0 = A - sum w_i fix P_i and T0.
    r, C, Ta = 1e-4, 1e7, 300.0
    G = r * C
    w3 = 2e-3  # K/s
    s_roots = np.array([0.8, 0.5, 0.2])
    poly = w3 * np.poly(s_roots)  # [w3, -w3 (sum), ..., const] in powers of s descending
    w0, w1, w2, w3_ = poly[3], poly[2], poly[1], poly[0]
    b = np.array([2 * r, 3 * r, 4 * r])
    w = np.array([w1, w2, w3_])
    P = w * C * (b - r) / b
    A = w0 + w.sum()
    Q0 = G * Ta
    T0 = (Q0 + P.sum() - C * A) / G
    H = 200.0 / r
    tp = turning_times(C, G, Q0, T0, P[None, :], b[None, :], H)[0]
    expected = -np.log(s_roots) / r  # derived, ascending (s descending)
    np.testing.assert_allclose(tp, expected, rtol=1e-10)
    # and the derivative of the closed form changes sign there (screening.closed_form_history)
    bal = LinearBalance(C, G, Q0, T0, P, b)
    for t in expected:
        lo, hi = temperature_rate(bal, t * (1 - 1e-4)), temperature_rate(bal, t * (1 + 1e-4))
        assert lo * hi < 0
    # brentq on the closed form's rate, bracketed on a grid, gives the same (brentq)
    grid = np.linspace(0, H, 40001)
    rate = temperature_rate(bal, grid)
    idx = np.nonzero(np.sign(rate[:-1]) != np.sign(rate[1:]))[0]
    ref = [brentq(lambda x: float(temperature_rate(bal, x)), grid[i], grid[i + 1], xtol=1e-12) for i in idx]
    np.testing.assert_allclose(tp, ref, rtol=1e-9)


@pytest.mark.parametrize("factor", [1.0, 1.0 + 1e-9, 1.0 - 1e-9, 1.0 + 1e-6, 1.0 - 1e-6])
def test_source_decaying_at_the_vessel_rate(factor):
    # derived (references.md): with b = lambda the decaying term is (P/C) t exp(-lambda t).
    C, ua, Ta, T0, Pw = 3.06e7, 180.0, 305.15, 303.15, 35e3
    lam = ua / C
    b = lam * factor
    H = 72 * HOUR
    bal = LinearBalance(C, ua, ua * Ta, T0, np.array([Pw]), np.array([b]))
    limits = [310.0, 320.0, 330.0]
    got = first_crossing_times(C, ua, ua * Ta, T0, [[Pw]], [[b]], np.array([limits]), H)[0]

    def explicit(t):  # the degenerate closed form written out (derived)
        return T0 * math.exp(-lam * t) + Ta * (1 - math.exp(-lam * t)) + Pw / C * t * math.exp(-lam * t)

    ref = []
    for L in limits:
        grid = np.linspace(0, H, 20001)
        vals = np.array([explicit(t) for t in grid])
        j = np.nonzero(vals >= L)[0]
        ref.append(np.nan if j.size == 0 else brentq(lambda t: explicit(t) - L, grid[j[0] - 1], grid[j[0]],
                                                     xtol=1e-13 * grid[j[0]]))
    # the history moves by O(|b - lambda| t) relative to the degenerate one: continuity in b
    tol = max(1e-11, 10 * abs(factor - 1) * lam * H)
    assert_times_match(got, ref, H, rtol=tol, what="explicit degenerate form (brentq)")
    ref_engine, shape = single_case(bal, limits, H)  # single-case engine
    assert_times_match(got, ref_engine, H, what="single-case engine")
    assert_times_match(got, ivp_first_crossings(bal, limits, H), H, rtol=1e-7, what="solve_ivp")
    s = history_summary(C, ua, ua * Ta, T0, [[Pw]], [[b]], H)
    assert s.peak_temperature[0] == pytest.approx(shape.peak_temperature, rel=1e-13)
    # derived: for b = lambda the turning point is at t = A / c with A = dT/dt(0), c = P b / C
    A = (ua * Ta + Pw - ua * T0) / C
    if factor == 1.0:
        assert s.turning_times[0, 0] == pytest.approx(A / (Pw * b / C), rel=1e-12)


def test_adiabatic_vessel():
    # derived: G = 0 gives T = T0 + Q0 t / C + sum (P_i / (C b_i)) (1 - exp(-b_i t)).
    C, T0, Q0 = 2e7, 300.0, 500.0
    P, a = np.array([20e3, -5e3]), np.array([2 * HOUR, 10 * HOUR])
    b = 1 / a
    H = 100 * HOUR

    def explicit(t):
        return T0 + Q0 * t / C + float(np.sum(P / (C * b) * -np.expm1(-b * t)))

    limits = np.array([301.0, 305.0, 310.0, 400.0])
    got = first_crossing_times(C, 0.0, Q0, T0, P, b, limits[None, :], H)[0]
    ref = []
    for L in limits:
        grid = np.linspace(0, H, 20001)
        vals = np.array([explicit(t) for t in grid])
        j = np.nonzero(vals >= L)[0]
        ref.append(np.nan if j.size == 0 else brentq(lambda t: explicit(t) - L, grid[j[0] - 1], grid[j[0]],
                                                     xtol=1e-13 * grid[j[0]]))
    assert_times_match(got, ref, H, rtol=1e-11, what="explicit adiabatic form (brentq)")
    bal = linear_balance(C, 0.0, 0.0, T0, Q0, P, a)
    assert_times_match(got, ivp_first_crossings(bal, limits, H), H, rtol=1e-7, what="solve_ivp")


def test_adiabatic_decay_only_has_no_turning_point():
    # derived: G = 0 and Q0 = 0 give dT/dt = (P/C) exp(-b t) > 0, so no turning point, however long
    # the horizon (dT/dt underflows relative to its initial value, which must not look like a sign change)
    C, P, b = 1e7, 5e3, 1e-4
    for H in (1e3, 1e5, 1e6, 1e7):
        s = history_summary(C, 0.0, 0.0, 300.0, [[P]], [[b]], H)
        assert np.all(np.isnan(s.turning_times))
        assert s.peak_time[0] == H
        assert s.peak_temperature[0] == pytest.approx(300.0 + P / (C * b) * -math.expm1(-b * H), rel=1e-14)
        # and the end rate keeps its relative accuracy after it has decayed by many orders
        assert s.end_rate[0] == pytest.approx(P / C * math.exp(-b * H), rel=1e-12)


def test_solve_ivp_on_random_cases():
    rng = np.random.default_rng(20240611)
    cases = []
    for _ in range(12):
        k = int(rng.integers(1, 4))
        bal = linear_balance(10 ** rng.uniform(6, 7.5), 10 ** rng.uniform(1, 3), rng.uniform(280, 310),
                             rng.uniform(270, 320), rng.uniform(0, 3e3),
                             rng.choice([-1, 1, 1], k) * 10 ** rng.uniform(3, 5, k), 10 ** rng.uniform(2.5, 5, k))
        cases.append(bal)
    H = 48 * HOUR
    for bal in cases:
        ref_engine, shape = single_case(bal, [0], H)
        limits = list(np.linspace(float(bal.initial_temperature) + 0.5, shape.peak_temperature + 1.0, 4))
        got = first_crossing_times(*register_arrays([bal]), np.array([limits]), H)[0]
        ref = ivp_first_crossings(bal, limits, H)  # solve_ivp
        near = grazing(bal, limits, H, turning_times(*register_arrays([bal]), H)[0])
        assert_times_match(got[~near], ref[~near], H, rtol=1e-7, what="solve_ivp")


# --------------------------------------------------------------------------
# edge cases, shapes and guards
# --------------------------------------------------------------------------

def test_reached_at_zero_and_not_reached():
    C, G, Q0, T0 = 1e7, 100.0, 100.0 * 300.0, 320.0
    limits = np.array([[320.0, 319.0, 300.0, 330.0, np.nan, np.inf, -np.inf]])
    got = first_crossing_times(C, G, Q0, T0, [[0.0]], [[0.0]], limits, 1e6)[0]
    # T0 >= limit gives 0 (T0 = limit included); cooling toward 300 K never reaches 330 K; NaN slot -> NaN
    np.testing.assert_array_equal(got[:3], [0.0, 0.0, 0.0])
    assert np.isnan(got[3]) and np.isnan(got[4]) and np.isnan(got[5])
    assert got[6] == 0.0


def test_zero_horizon_and_no_sources():
    got = first_crossing_times([1e7, 1e7], [0.0, 10.0], [1e3, 1e3], [300.0, 300.0], None, None,
                               [[299.0, 301.0], [300.0, 300.5]], [0.0, 1e4])
    assert got[0, 0] == 0.0 and np.isnan(got[0, 1])
    assert got[1, 0] == 0.0
    # derived: T = Ta' + (T0 - Ta') exp(-lambda t) with Ta' = Q0 / G = 100 K ... falls: never 300.5 K
    assert np.isnan(got[1, 1])
    # adiabatic with a constant drive: T = T0 + Q0 t / C (derived)
    t = first_crossing_times(1e7, 0.0, 1e3, 300.0, None, None, 301.0, 1e6)
    assert t[0] == pytest.approx(1.0 * 1e7 / 1e3, rel=1e-13)


def test_shapes_broadcast_and_chunking_do_not_change_results():
    rng = np.random.default_rng(7)
    n = 257
    C = 10 ** rng.uniform(6, 8, n)
    G = 10 ** rng.uniform(0, 3, n)
    Q0 = G * rng.uniform(280, 310, n) + rng.uniform(0, 5e3, n)
    T0 = rng.uniform(280, 320, n)
    P = 10 ** rng.uniform(3, 5, (n, 2))
    b = 10 ** -rng.uniform(3, 5, (n, 2))
    L = rng.uniform(300, 360, (n, 3))
    H = 72 * HOUR
    full = first_crossing_times(C, G, Q0, T0, P, b, L, H)
    assert full.shape == (n, 3)
    small = first_crossing_times(C, G, Q0, T0, P, b, L, H, chunk_size=10, workers=2)
    np.testing.assert_array_equal(full, small)
    one = first_crossing_times(C, G, Q0, T0, P, b, L[:, 0], H)
    assert one.shape == (n,)
    np.testing.assert_array_equal(one, full[:, 0])
    # a padded source (P = 0) changes nothing
    padded = first_crossing_times(C, G, Q0, T0, np.c_[P, np.zeros(n)], np.c_[b, np.full(n, 0.3)], L, H)
    np.testing.assert_allclose(padded, full, rtol=1e-14, atol=1e-9)
    # P, b of shape (k,) are shared by all vessels
    shared = first_crossing_times(C, G, Q0, T0, P[0], b[0], L, H)
    rows = first_crossing_times(C, G, Q0, T0, np.tile(P[0], (n, 1)), np.tile(b[0], (n, 1)), L, H)
    np.testing.assert_array_equal(shared, rows)
    s = history_summary(C, G, Q0, T0, P, b, H)
    assert s.turning_times.shape == (n, 2) and s.peak_temperature.shape == (n,)


def test_empty_register():
    t = first_crossing_times(np.empty(0), np.empty(0), np.empty(0), np.empty(0), np.empty((0, 1)),
                             np.empty((0, 1)), np.empty((0, 2)), np.empty(0))
    assert t.shape == (0, 2)


@pytest.mark.parametrize("bad", [dict(C=0.0), dict(C=-1.0), dict(G=-1.0), dict(b=-1e-3), dict(T0=np.nan),
                                 dict(horizon=-1.0), dict(horizon=np.inf), dict(C=1e-31), dict(G=1e31),
                                 dict(Q0=-1e31), dict(b=1e31), dict(horizon=1e31)])
def test_out_of_range_inputs_are_rejected(bad):
    args = dict(C=1e7, G=10.0, Q0=3e3, T0=300.0, P=[[1e3]], b=[[1e-4]], limits=310.0, horizon=1e5)
    if "b" in bad:
        bad = dict(b=[[bad["b"]]])
    args.update(bad)
    with pytest.raises(ValueError):
        first_crossing_times(**args)


# --------------------------------------------------------------------------
# wide ranges: no warnings, no hang, and every answer is a first crossing
# --------------------------------------------------------------------------

@st.composite
def wide_register(draw):
    n = draw(st.integers(1, 5))
    k = draw(st.integers(0, 3))
    f = st.floats
    C = [10 ** draw(f(-3, 12)) for _ in range(n)]
    G = [draw(st.sampled_from([0.0, 1.0])) * 10 ** draw(f(-6, 9)) for _ in range(n)]
    Q0 = [draw(f(-1e9, 1e9)) for _ in range(n)]
    T0 = [draw(f(1.0, 5000.0)) for _ in range(n)]
    P = [[draw(f(-1e9, 1e9)) for _ in range(k)] for _ in range(n)]
    b = [[draw(st.sampled_from(["zero", "rate", "lam"])) for _ in range(k)] for _ in range(n)]
    b = [[0.0 if x == "zero" else (G[i] / C[i] if x == "lam" else 10 ** draw(f(-12, 3))) for x in row]
         for i, row in enumerate(b)]
    H = [draw(st.sampled_from([0.0, 1.0])) * 10 ** draw(f(-3, 9)) for _ in range(n)]
    L = [[draw(f(0.0, 1e4)) for _ in range(2)] for _ in range(n)]
    return (np.array(C), np.array(G), np.array(Q0), np.array(T0), np.array(P).reshape(n, k),
            np.array(b).reshape(n, k), np.array(L), np.array(H))


@settings(max_examples=150, deadline=None)
@given(wide_register())
def test_wide_inputs_give_first_crossings_without_warnings(reg):
    C, G, Q0, T0, P, b, L, H = reg
    res = screen_register(C, G, Q0, T0, P, b, L, H)
    t = res.times
    assert t.shape == L.shape
    reached = ~np.isnan(t)
    assert np.all((t[reached] >= 0) & (t[reached] <= np.repeat(H[:, None], L.shape[1], 1)[reached]))
    # the peak bounds every history: a limit above it is not reached, one below it is
    for i in range(len(C)):
        bal = LinearBalance(C[i], G[i], Q0[i], T0[i], P[i], b[i])
        for j in range(L.shape[1]):
            lim = L[i, j]
            scale = 1e-9 * max(abs(lim), 1.0)
            if res.summary.peak_temperature[i] < lim - scale:
                assert np.isnan(t[i, j])
            elif res.summary.peak_temperature[i] > lim + scale:
                assert reached[i, j]
            if reached[i, j] and t[i, j] > 0:
                # first: the closed form stays below the limit before the returned time (sampled)
                before = np.linspace(0.0, t[i, j], 64)[:-1]
                with np.errstate(all="ignore"):  # the reference closed form may overflow on huge inputs
                    Tb = temperature(bal, before)
                    Tt = float(temperature(bal, t[i, j]))
                if np.all(np.isfinite(Tb)):
                    assert np.all(Tb <= lim + 1e-9 * max(abs(lim), np.max(np.abs(Tb)))), (i, j)
                if np.isfinite(Tt):
                    assert Tt >= lim - 1e-7 * max(abs(lim), 1.0)


def test_extremes_of_the_accepted_range_raise_no_floating_point_error():
    # every combination of extreme and ordinary inputs within the documented range (1e-30..1e30)
    vals = dict(C=[1e-30, 1e-3, 1e12, 1e30], G=[0.0, 5e-324, 1e-30, 1.0, 1e30], P=[0.0, -1e-300, 1e3, -1e30, 1e30],
                b=[0.0, 5e-324, 1e-30, 1e-4, 1e30], H=[0.0, 5e-324, 1e6, 1e30], Q0=[0.0, 1e3, -1e30, 1e30],
                T0=[-1e30, 300.0, 1e30])
    grid = np.array(list(itertools.product(*vals.values())))
    C, G, P, b, H, Q0, T0 = grid.T
    L = np.tile([300.0, 301.0, 1e6, 1e300, -1e300], (len(C), 1))
    with np.errstate(all="raise", under="ignore"):
        for k in (1, 3):
            PP = P[:, None] * np.array([1.0, -0.5, 0.25])[:k]
            bb = b[:, None] * np.array([1.0, 0.3, 0.1])[:k]
            bb[::4, 0] = np.minimum(G[::4] / C[::4], 1e30)  # some at the vessel's own rate
            res = screen_register(C, G, Q0, T0, PP, bb, L, H)
            t = res.times
            ok = ~np.isnan(t)
            assert np.all((t[ok] >= 0) & (t[ok] <= np.repeat(H[:, None], L.shape[1], 1)[ok]))


def test_iteration_cap_is_finite_and_keeps_the_bracket():
    from screening.core.time_to_limit_batch import _bracketed_newton

    assert 0 < MAX_ITERATIONS <= 200

    # derived: f(x) = x^3 - a has the root a^(1/3); with a cap of 2 iterations the answer is
    # unfinished but still inside its bracket, and with the default cap it is exact
    a = np.array([2.0, 10.0, 1e-6, 500.0])

    def fdf(x, prm):
        (aa,) = prm
        return x ** 3 - aa, 3 * x ** 2, None, 1e-300 * np.ones_like(x)

    lo, hi = np.zeros(4), np.full(4, 10.0)
    short = _bracketed_newton(fdf, (a,), lo, hi, -a, np.full(4, 9.0), maxiter=2)
    assert np.all((short >= lo) & (short <= hi))
    full = _bracketed_newton(fdf, (a,), lo, hi, -a, np.full(4, 9.0))
    np.testing.assert_allclose(full, np.cbrt(a), rtol=1e-13)
