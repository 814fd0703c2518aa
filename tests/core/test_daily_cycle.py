"""The daily cycle: the piecewise exact response against scipy's solve_ivp and against its Fourier series."""
from __future__ import annotations

import math

import numpy as np
import pytest

from screening.core.daily_cycle import DAY, NOON, CycleForcing, cycle_response, day_knots, largest_projection

H = 3600.0


def _reference(lam, C, forcing, t_end, t_eval):
    """scipy.integrate.solve_ivp (DOP853, rtol 1e-12), restarted at every sunrise and sunset (reference library)."""
    from scipy.integrate import solve_ivp

    knots = [0.0] + day_knots(forcing, t_end).tolist() + [t_end]
    out = np.empty(len(t_eval))
    y = 0.0

    def rhs(t, T):
        return [(float(forcing.power(t)) - lam * C * T[0]) / C]

    for a, b in zip(knots[:-1], knots[1:]):
        sel = (t_eval >= a) & (t_eval <= b)
        sol = solve_ivp(rhs, (a, b), [y], method="DOP853", rtol=1e-12, atol=1e-12, dense_output=True)
        out[sel] = sol.sol(t_eval[sel])[0]
        y = sol.y[0, -1]
    return out


@pytest.mark.parametrize("start", [0.0, 9 * H, 14.5 * H, 20 * H])
@pytest.mark.parametrize("tau_h", [3.0, 40.0])
def test_exact_response_against_solve_ivp(start, tau_h):
    # four days across sunrise and sunset, starting at night, in the morning, in the afternoon and after sunset
    C = 2.0e6
    lam = 1.0 / (tau_h * H)
    forcing = CycleForcing(air=350.0, warmest_time=15 * H, solar=900.0, day_length=13 * H, start_time=start)
    t = np.linspace(0.0, 4 * DAY, 2001)
    t = np.unique(np.concatenate([t, day_knots(forcing, 4 * DAY)]))
    ours, rate = cycle_response(lam, C, forcing, t)
    ref = _reference(lam, C, forcing, 4 * DAY, t)
    scale = 900.0 / (C * lam)  # the size of the response, K
    assert np.max(np.abs(ours - ref)) < 1e-9 * scale
    # the rate is the balance evaluated on the exact history
    balance = (forcing.power(t) - lam * C * ours) / C
    assert np.max(np.abs(rate - balance)) < 1e-12 * scale / H


def test_periodic_state_against_fourier_series():
    # Fourier series of the periodic state (derivation): with period P = 24 h, w = 2 pi / P, the forcing rate
    # per unit solar drive is s(theta) = sin(W (theta - t_r)) on [t_r, t_r + D], W = pi / D, else 0. Its
    # complex coefficients c_n = (1/P) int_0^D sin(W u) e^{-i n w (u + t_r)} du; with
    # int e^{a u} sin(W u) du = e^{a u} (a sin W u - W cos W u) / (a^2 + W^2), a = -i n w, sin(W D) = 0,
    # cos(W D) = -1: c_n = e^{-i n w t_r} W (1 + e^{-i n w D}) / (P (W^2 - n^2 w^2)). The periodic solution of
    # y' + lam y = s is y = sum_n c_n e^{i n w theta} / (lam + i n w) = c_0 / lam + 2 Re sum_{n>=1} (...).
    # The air cosine a cos(w (theta - t_w)) gives a Re(e^{i w (theta - t_w)} / (lam + i w)).
    # Reference: the standard Fourier-series solution of a linear first-order equation (common practice).
    C, lam, D, tw, rise = 1.0, 1.0 / (6 * H), 13 * H, 15 * H, NOON - 6.5 * H
    f = CycleForcing(air=2.0e-4, warmest_time=tw, solar=5.0e-4, day_length=D, start_time=0.0)
    w, W = 2 * math.pi / DAY, math.pi / D
    theta = np.linspace(0.0, DAY, 97)
    n = np.arange(1, 20001)[:, None]
    c0 = W * 2.0 / (DAY * W ** 2)
    cn = np.exp(-1j * n * w * rise) * W * (1 + np.exp(-1j * n * w * D)) / (DAY * (W ** 2 - (n * w) ** 2))
    y_sun = c0 / lam + 2 * np.real(np.sum(cn * np.exp(1j * n * w * theta) / (lam + 1j * n * w), axis=0))
    y_air = np.real(np.exp(1j * w * (theta - tw)) / (lam + 1j * w))
    fourier = 5.0e-4 * y_sun + 2.0e-4 * y_air
    ours, _ = cycle_response(lam, C, f, 30 * DAY + theta)  # 120 time constants: transients gone
    # series truncated at 20000 terms: the tail is below 1e-7 of the response
    assert np.max(np.abs(ours - fourier)) < 1e-6 * np.max(np.abs(fourier))


def test_largest_projection_against_brute_force():
    # the largest projection over elevations 30-90 degrees and all azimuths, from sampled directions (by hand:
    # projection of a convex body = sum of face areas times |cos| to the direction, over the lit faces)
    e = np.radians(np.linspace(30.0, 90.0, 3001))[:, None]
    phi = np.radians(np.linspace(0.0, 90.0, 361))[None, :]
    D, L, W, Hh = 0.6, 0.9, 1.2, 1.1
    sx, sy, sz = np.cos(e) * np.cos(phi), np.cos(e) * np.sin(phi), np.sin(e)
    vert = np.pi * D ** 2 / 4 * sz + D * L * np.sqrt(sx ** 2 + sy ** 2)
    horiz = np.pi * D ** 2 / 4 * np.abs(sx) + D * L * np.sqrt(1 - sx ** 2)
    box = L * W * sz + L * Hh * np.abs(sy) + W * Hh * np.abs(sx)
    # sampled directions can only miss the maximum by the grid's resolution (from below)
    for ours, sampled in ((largest_projection("vertical-cylinder", D, L), vert.max()),
                          (largest_projection("horizontal-cylinder", D, L), horiz.max()),
                          (largest_projection("box", None, L, W, Hh), box.max())):
        assert sampled <= ours * (1 + 1e-12)
        assert ours == pytest.approx(sampled, rel=1e-5)


def _balance_with_cycle(start):
    from screening.core.closed_form_history import linear_balance

    # 800 kg at 2 kJ/(kg K), UA 25 W/K to a 301.15 K daily mean, 150 W constant and 2 kW decaying over 3 h
    base = linear_balance(1.6e6, 25.0, 301.15, 297.15, 150.0, [2000.0], [3 * H])
    forcing = CycleForcing(air=25.0 * 7.0, warmest_time=15 * H, solar=25.0 * 11.0, day_length=14 * H,
                           start_time=start)
    from dataclasses import replace

    return replace(base, forcing=forcing)


@pytest.mark.parametrize("start", [0.0, 10 * H, 19 * H])
def test_first_crossing_with_cycle_against_solve_ivp_events(start):
    # time to a limit within 1e-6 s of scipy.integrate.solve_ivp's event location (DOP853, rtol 1e-13)
    from scipy.integrate import solve_ivp

    from screening.core.time_to_limit import first_crossing, history_shape

    bal = _balance_with_cycle(start)
    horizon = 5 * DAY
    shape = history_shape(bal, horizon)

    def rhs(t, T):
        return [(float(bal.drive) - float(bal.conductance) * T[0] + 2000.0 * math.exp(-t / (3 * H))
                 + float(bal.forcing.power(t))) / float(bal.heat_capacity)]

    knots = [0.0] + day_knots(bal.forcing, horizon).tolist() + [horizon]
    T0 = float(bal.initial_temperature)
    peak = T0
    for lim in (305.0, 310.0, 316.0):
        ours = first_crossing(bal, lim, horizon, shape)
        y, ref = T0, None
        for a, b in zip(knots[:-1], knots[1:]):
            event = lambda t, T, lim=lim: T[0] - lim  # noqa: E731
            event.terminal, event.direction = True, 1
            sol = solve_ivp(rhs, (a, b), [y], method="DOP853", rtol=1e-13, atol=1e-12, events=event)
            peak = max(peak, float(sol.y[0].max()))
            if sol.t_events[0].size:
                ref = float(sol.t_events[0][0])
                break
            y = float(sol.y[0, -1])
        if ref is None:
            assert ours is None
        else:
            assert ours is not None and abs(ours - ref) < 1e-6
    assert shape.peak_temperature >= peak - 1e-9


def test_history_is_continuous_at_sunrise_and_sunset():
    # exact pieces join: no step in T at any sunrise or sunset (by hand: the solution of a first-order ODE with a
    # bounded right-hand side is continuous)
    from screening.core.closed_form_history import temperature

    for start in (0.0, 5 * H, 12 * H, 20 * H):
        bal = _balance_with_cycle(start)
        knots = day_knots(bal.forcing, 6 * DAY)
        for k in knots:
            t = np.array([k * (1 - 1e-15), k, k * (1 + 1e-15)])
            T = temperature(bal, t)
            assert np.ptp(T) < 1e-9


def test_vectorised_engine_agrees_with_one_case_engine():
    # the array engine (bisection on arrays) against the one-case engine (Brent's method) on random vessels
    from screening.core.closed_form_history import LinearBalance
    from screening.core.daily_cycle_batch import first_crossing_times_cycle
    from screening.core.time_to_limit import first_crossing, history_shape

    rng = np.random.default_rng(7)
    n = 60
    C, G = rng.uniform(1e5, 1e7, n), rng.uniform(5, 500, n)
    Ta, T0 = rng.uniform(290, 310, n), rng.uniform(285, 320, n)
    Q0 = G * Ta + rng.uniform(0, 500, n)
    P, b = rng.uniform(0, 3000, (n, 1)), 1.0 / rng.uniform(600, 1e5, (n, 1))
    f = CycleForcing(G * rng.uniform(0, 8, n), np.full(n, 15 * H), G * rng.uniform(0, 15, n),
                     rng.uniform(8, 16, n) * H, rng.integers(0, 24, n) * H)
    L = np.column_stack([Ta + 5, Ta + 10, Ta + 20])
    horizon = rng.uniform(1, 8, n) * DAY
    out = first_crossing_times_cycle(C, G, Q0, T0, P, b, f, L, horizon)
    for i in range(n):
        fi = CycleForcing(*(np.asarray(getattr(f, k))[i] for k in
                            ("air", "warmest_time", "solar", "day_length", "start_time")))
        bal = LinearBalance(np.asarray(C[i]), np.asarray(G[i]), np.asarray(Q0[i]), np.asarray(T0[i]), P[i], b[i], fi)
        shape = history_shape(bal, horizon[i])
        for j in range(3):
            t = first_crossing(bal, L[i, j], horizon[i], shape)
            if t is None:
                assert np.isnan(out[i, j])
            else:
                assert abs(out[i, j] - t) < 1e-6


def test_conduction_body_with_sol_air_boundary_tends_to_the_lumped_solution():
    # At a small Biot number (Bi = h R / k = 0.01) the conduction solution tends to the lumped one (Incropera et al.,
    # ch. 5: lumped capacitance for Bi < 0.1); the sol-air boundary of the conduction model against the exact
    # lumped response to the same effective ambient (C = rho c V, UA = h A for a sphere, by hand).
    from screening.core.closed_form_history import linear_balance, temperature
    from screening.core.daily_cycle import DailyCycle, cycle_forcing
    from screening.core.transient_conduction import ConductionBody, hot_spot_history
    from dataclasses import replace

    cycle = DailyCycle(daily_range=10.0, warmest_time=15 * H, start_time=4 * H, solar_rise=5.0, day_length=12 * H)
    R, rho, c, k, h = 0.1, 1000.0, 1000.0, 100.0, 10.0
    body = ConductionBody("sphere", R, rho, c, k, h, 300.0, 300.0, daily_cycle=cycle)
    hist = hot_spot_history(body, [], 2 * DAY, cells=16)
    C, UA = rho * c * 4.0 / 3.0 * math.pi * R ** 3, h * 4.0 * math.pi * R ** 2
    lumped = replace(linear_balance(C, UA, 300.0, 300.0), forcing=cycle_forcing(cycle, UA))
    T = temperature(lumped, hist.time)
    assert np.max(np.abs(hist.centre - T)) < 0.05  # K, against a swing of about 15 K
    assert np.max(hist.hot_spot) > 300.0 + 5.0
