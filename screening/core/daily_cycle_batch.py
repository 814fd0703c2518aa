r"""First crossings of the closed-form history with a daily cycle, for many vessels at once.

The same exact history as the one-case engine (:func:`screening.core.closed_form_history.temperature` with
the cycle's forcing, :mod:`screening.core.daily_cycle`), evaluated on arrays: every vessel's history is
sampled on the same kind of grid as :func:`screening.core.time_to_limit.sampling_grid` (its time scales, a
point every 10 minutes, every sunrise and sunset); each sign change of dT/dt brackets a turning point, found
by bisection on arrays; between turning points the history is monotone, so the first piece that reaches a
limit holds its first crossing, found by bisection too (to about 1e-12 of the piece, far below the 1e-6 s
asked of time to a limit).

References
----------
Incropera, F. P. et al., *Fundamentals of Heat and Mass Transfer*, 6th ed., Wiley (2007), ch. 5 (lumped
capacitance); bisection on a bracket: any numerical-analysis text (common practice).
"""
from __future__ import annotations

import math

import numpy as np

from screening.core.closed_form_history import LinearBalance, temperature, temperature_rate
from screening.core.daily_cycle import DAY, NOON, CycleForcing

BISECTIONS = 64  #: halvings of each bracket (a 10-minute piece to about 3e-17 of it)


def _take(balance: LinearBalance, rows) -> LinearBalance:
    f = balance.forcing
    forcing = CycleForcing(*(np.asarray(getattr(f, k), dtype=float)[rows] for k in
                             ("air", "warmest_time", "solar", "day_length", "start_time")))
    return LinearBalance(balance.heat_capacity[rows], balance.conductance[rows], balance.drive[rows],
                         balance.initial_temperature[rows], balance.decaying_power[rows], balance.decay_rate[rows],
                         forcing)


def _grid(balance: LinearBalance, H: np.ndarray) -> np.ndarray:
    """(n, M) sorted sample times per vessel on [0, H]: time scales, 10-minute points, sunrises and sunsets."""
    n = H.size
    C, G = balance.heat_capacity, balance.conductance
    lam = G / C
    scales = [np.where(lam > 0, 1.0 / np.where(lam > 0, lam, 1.0), np.nan)]
    b = balance.decay_rate
    for k in range(b.shape[1]):
        scales.append(np.where(b[:, k] > 0, 1.0 / np.where(b[:, k] > 0, b[:, k], 1.0), np.nan))
    scales = np.column_stack(scales)
    smallest = np.fmin(np.nanmin(np.where(np.isfinite(scales), scales, np.inf), axis=1), H)
    u = np.linspace(0.0, 1.0, 241)
    lo = np.maximum(H * 1e-12, smallest * 1e-6)
    geometric = lo[:, None] * (H / lo)[:, None] ** np.linspace(0.0, 1.0, 400)[None, :]
    pieces = [np.column_stack([np.zeros(n), H]), geometric, np.linspace(0.0, 1.0, 201)[None, :] * H[:, None]]
    for k in range(scales.shape[1]):
        top = np.where(np.isfinite(scales[:, k]), np.minimum(H, 60.0 * np.nan_to_num(scales[:, k])), 0.0)
        pieces.append(u[None, :] * top[:, None])
    steps = int(min(200_000, max(2, math.ceil(float(H.max()) / 600.0))))
    pieces.append(np.linspace(0.0, 1.0, steps + 1)[None, :] * H[:, None])
    f = balance.forcing
    D = np.broadcast_to(np.asarray(f.day_length, dtype=float), (n,))
    s0 = np.broadcast_to(np.asarray(f.start_time, dtype=float), (n,))
    days = np.arange(0.0, math.ceil((float(H.max()) + DAY) / DAY) + 1.0)
    knots = np.concatenate([days[None, :] * DAY + (NOON - 0.5 * D)[:, None],
                            days[None, :] * DAY + (NOON + 0.5 * D)[:, None]], axis=1) - s0[:, None]
    pieces.append(knots)
    grid = np.concatenate(pieces, axis=1)
    grid = np.clip(grid, 0.0, H[:, None])
    grid.sort(axis=1)
    return grid


def _bisect(fn, a, b, fa):
    """Roots of fn on brackets [a, b] (arrays), fn(a) = fa, fn(a) and fn(b) of opposite sign or zero."""
    sa = np.sign(fa)
    for _ in range(BISECTIONS):
        m = 0.5 * (a + b)
        fm = fn(m)
        left = np.sign(fm) != sa
        b = np.where(left, m, b)
        a = np.where(left, a, m)
    return 0.5 * (a + b)


def first_crossing_times_cycle(heat_capacity, conductance, drive, initial_temperature, decaying_power, decay_rate,
                               forcing: CycleForcing, limits, horizon, *, with_peak: bool = False):
    r"""First time each vessel reaches each limit, with the daily cycle: the vectorised closed form.

    Parameters
    ----------
    heat_capacity, conductance, drive, initial_temperature : array (N,), [J/K], [W/K], [W], [K]
        As in :class:`screening.core.closed_form_history.LinearBalance` (the drive with the daily mean ambient).
    decaying_power, decay_rate : array (N, k), [W] and [1/s]
    forcing : CycleForcing
        Fields arrays (N,) or scalars.
    limits : array (N, L), [K]
        NaN marks an unused slot.
    horizon : array (N,), [s]
    with_peak : bool, default False
        Also return the peak temperature of each vessel within its horizon.

    Returns
    -------
    numpy.ndarray, shape (N, L), [s]
        0 when the contents start at or above a limit, NaN when it is not reached within the horizon.
    numpy.ndarray, shape (N,), [K]
        With ``with_peak``: the largest of T at 0, at the turning points and at the horizon.

    Notes
    -----
    Same history as the one-case engine (:func:`screening.core.time_to_limit.first_crossing` on a balance with
    the forcing); the turning points and crossings are found by bisection on arrays instead of Brent's method.

    Examples
    --------
    A vessel with no drive of its own at the daily mean of 300 K, in air with a 10 K range (no sun): once settled
    it swings by 5 / sqrt(1 + (omega tau)^2) = 3.035 K about 300 K with tau = 5 h (by hand: the amplitude ratio
    of a first-order lag, common practice); 302 K is reached in the first afternoon, 304 K never:

    >>> C, G = 1.8e7, 1000.0
    >>> f = CycleForcing(np.array([5000.0]), 15 * 3600.0, 0.0, 43200.0, np.array([0.0]))
    >>> t = first_crossing_times_cycle([C], [G], [G * 300.0], [300.0], np.zeros((1, 1)), np.zeros((1, 1)), f,
    ...                                [[302.0, 304.0]], [3 * 86400.0])
    >>> bool(12 < t[0, 0] / 3600 < 20), bool(np.isnan(t[0, 1]))
    (True, True)
    """
    C = np.asarray(heat_capacity, dtype=float).reshape(-1)
    n = C.size
    vec = lambda v: np.broadcast_to(np.asarray(v, dtype=float), (n,)).copy()  # noqa: E731
    G, Q0, T0, H = vec(conductance), vec(drive), vec(initial_temperature), vec(horizon)
    P = np.asarray(decaying_power, dtype=float).reshape(n, -1)
    b = np.asarray(decay_rate, dtype=float).reshape(n, -1)
    L = np.asarray(limits, dtype=float).reshape(n, -1)
    forcing = CycleForcing(*(vec(getattr(forcing, k)) for k in
                             ("air", "warmest_time", "solar", "day_length", "start_time")))
    balance = LinearBalance(C, G, Q0, T0, P, b, forcing)
    grid = _grid(balance, H)
    rates = temperature_rate(balance, grid)
    scale = np.max(np.abs(rates), axis=1, keepdims=True)
    sign = np.sign(np.where(np.abs(rates) <= scale * 1e-15, 0.0, rates))
    # sign changes between consecutive non-zero samples (zeros mark a turning point on the grid itself)
    rows, cols = np.nonzero(sign)
    turning = [[] for _ in range(n)]
    if rows.size > 1:
        same = rows[1:] == rows[:-1]
        change = same & (sign[rows[1:], cols[1:]] != sign[rows[:-1], cols[:-1]])
        r = rows[1:][change]
        a = grid[r, cols[:-1][change]]
        bb = grid[r, cols[1:][change]]
        if r.size:
            sub = _take(balance, r)
            fa = temperature_rate(sub, a)
            roots = _bisect(lambda t: temperature_rate(sub, t), a, bb, fa)
            for i, tp in zip(r.tolist(), roots.tolist()):
                if 0.0 < tp < H[i]:
                    turning[i].append(tp)
    width = max(len(t) for t in turning) + 2
    knots = np.empty((n, width))
    for i in range(n):
        row = [0.0] + turning[i] + [H[i]]
        knots[i, :len(row)] = row
        knots[i, len(row):] = H[i]
    temps = temperature(balance, knots)
    out = np.full(L.shape, np.nan)
    for j in range(L.shape[1]):
        lim = L[:, j]
        start = T0 >= lim
        out[start, j] = 0.0
        hit = np.maximum(temps[:, :-1], temps[:, 1:]) >= lim[:, None]
        reached = hit.any(axis=1) & ~start & np.isfinite(lim)
        if not reached.any():
            continue
        r = np.nonzero(reached)[0]
        k = np.argmax(hit[r], axis=1)
        a, bb = knots[r, k], knots[r, k + 1]
        sub = _take(balance, r)
        fn = lambda t, sub=sub, r=r, j=j: temperature(sub, t) - L[r, j]  # noqa: E731
        out[r, j] = _bisect(fn, a, bb, fn(a))
    if with_peak:
        return out, temps.max(axis=1)
    return out
