"""First time the closed-form history reaches each limit, and its peak.

The history of a vessel with constant and decaying sources is a sum of a few
exponentials, so it has few turning points (at most one fewer than the number
of distinct rates).  They are located as sign changes of dT/dt on a grid that
resolves every time scale of the case and refined with Brent's method; between
turning points the history is monotone, so each limit crossing is bracketed
and the first one is found exactly (Brent's method to ~1e-13 relative).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from screening.core.closed_form_history import (
    LinearBalance,
    temperature,
    temperature_rate,
)
from screening.core.root_finding import brent_root


@dataclass(frozen=True)
class HistoryShape:
    turning_times: tuple[float, ...]  # s, interior turning points in (0, horizon)
    peak_temperature: float  # K, maximum over [0, horizon]
    peak_time: float  # s
    end_temperature: float  # K at the horizon
    end_rate: float  # K/s at the horizon


def _brent(f, a: float, b: float, fa: float, fb: float, tol: float) -> float:
    """Brent's root finder on a bracket [a, b] with f(a), f(b) of opposite sign (or zero)."""
    return float(brent_root(f, a, b, fa, fb, xtol=tol, rtol=4 * np.finfo(float).eps, maxiter=300))


def time_scales(balance: LinearBalance, horizon: float) -> list[float]:
    """Characteristic times of the history (vessel time constant and source time constants), s."""
    scales = []
    lam = float(balance.rate)
    if lam > 0:
        scales.append(1.0 / lam)
    for b in np.atleast_1d(balance.decay_rate):
        if b > 0:
            scales.append(1.0 / float(b))
    return [s for s in scales if np.isfinite(s)]


def sampling_grid(balance: LinearBalance, horizon: float) -> np.ndarray:
    """A time grid on [0, horizon] that resolves every time scale of the case, s."""
    scales = time_scales(balance, horizon)
    smallest = min(scales + [horizon])
    pieces = [np.array([0.0, horizon]),
              np.geomspace(max(horizon * 1e-12, smallest * 1e-6), horizon, 400),
              np.linspace(0.0, horizon, 201)]
    for s in scales:
        top = min(horizon, 60.0 * s)
        pieces.append(np.linspace(0.0, top, 241))
    grid = np.unique(np.concatenate(pieces))
    return grid[(grid >= 0) & (grid <= horizon)]


def history_shape(balance: LinearBalance, horizon: float) -> HistoryShape:
    """Turning points, peak and end state of the history on [0, horizon]."""
    grid = sampling_grid(balance, horizon)
    rates = temperature_rate(balance, grid)
    scale = np.max(np.abs(rates)) if rates.size else 0.0
    turning = []
    if scale > 0:
        sign = np.sign(np.where(np.abs(rates) <= scale * 1e-15, 0.0, rates))
        # drop exact zeros when deciding sign changes (they mark the turning point itself)
        nz = np.nonzero(sign)[0]
        for k0, k1 in zip(nz[:-1], nz[1:]):
            if sign[k0] != sign[k1]:
                a, b = grid[k0], grid[k1]
                tol = 1e-300  # relative precision only (rtol), so early crossings keep full accuracy
                tp = _brent(lambda t: float(temperature_rate(balance, t)), a, b,
                            float(rates[k0]), float(rates[k1]), tol)
                if 0.0 < tp < horizon:
                    turning.append(tp)
    candidates = np.array([0.0, horizon] + turning)
    temps = temperature(balance, candidates)
    k = int(np.argmax(temps))
    return HistoryShape(tuple(turning), float(temps[k]), float(candidates[k]),
                        float(temperature(balance, horizon)), float(temperature_rate(balance, horizon)))


def first_crossing(balance: LinearBalance, limit_temperature: float, horizon: float,
                   shape: HistoryShape | None = None) -> float | None:
    """First time T(t) reaches ``limit_temperature`` on [0, horizon], s; None if it does not.

    A limit at or below the initial temperature is reached at t = 0.
    """
    T0 = float(balance.initial_temperature)
    if T0 >= limit_temperature:
        return 0.0
    if shape is None:
        shape = history_shape(balance, horizon)
    if shape.peak_temperature < limit_temperature:
        return None
    knots = [0.0] + list(shape.turning_times) + [horizon]
    temps = temperature(balance, np.array(knots))
    for a, b, ta, tb in zip(knots[:-1], knots[1:], temps[:-1], temps[1:]):
        if max(ta, tb) >= limit_temperature:
            tol = 1e-300  # relative precision only (rtol), so early crossings keep full accuracy
            return _brent(lambda t: float(temperature(balance, t)) - limit_temperature, a, b,
                          float(ta - limit_temperature), float(tb - limit_temperature), tol)
    return None  # pragma: no cover - guarded by the peak test above
