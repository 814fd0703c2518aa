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
