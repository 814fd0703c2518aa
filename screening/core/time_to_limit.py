"""First time the closed-form history reaches each limit, and its peak.

The history of a vessel with constant and decaying sources is a sum of a few
exponentials, so it has few turning points (at most one fewer than the number
of distinct rates).  They are located as sign changes of dT/dt on a grid that
resolves every time scale of the case and refined with Brent's method; between
turning points the history is monotone, so each limit crossing is bracketed
and the first one is found exactly (Brent's method to ~1e-13 relative).

References
----------
Incropera, F. P., DeWitt, D. P., Bergman, T. L., Lavine, A. S., *Fundamentals of
Heat and Mass Transfer*, 6th ed., Wiley (2007), ch. 5 (lumped capacitance).

Brent, R. P., *Algorithms for Minimization without Derivatives*, Prentice-Hall
(1973), ch. 4 (see :func:`screening.core.root_finding.brent_root`).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from screening.core.closed_form_history import (
    LinearBalance,
    temperature,
    temperature_rate,
)
from screening.core.daily_cycle import day_knots
from screening.core.root_finding import brent_root


@dataclass(frozen=True)
class HistoryShape:
    """Turning points, peak and end state of one closed-form history on [0, horizon].

    Attributes
    ----------
    turning_times : tuple of float, [s]
        Interior turning points (dT/dt changes sign) in (0, horizon), ascending.
    peak_temperature : float, [K]
        Maximum of T over [0, horizon].
    peak_time : float, [s]
        Time of that maximum.
    end_temperature : float, [K]
        T(horizon).
    end_rate : float, [K/s]
        dT/dt at the horizon.
    """

    turning_times: tuple[float, ...]  # s, interior turning points in (0, horizon)
    peak_temperature: float  # K, maximum over [0, horizon]
    peak_time: float  # s
    end_temperature: float  # K at the horizon
    end_rate: float  # K/s at the horizon


def _brent(f, a: float, b: float, fa: float, fb: float, tol: float) -> float:
    """Brent's root finder on a bracket [a, b] with f(a), f(b) of opposite sign (or zero)."""
    return float(brent_root(f, a, b, fa, fb, xtol=tol, rtol=4 * np.finfo(float).eps, maxiter=300))


def time_scales(balance: LinearBalance, horizon: float) -> list[float]:
    r"""Characteristic times of the history: the vessel time constant and the source time constants.

    Parameters
    ----------
    balance : LinearBalance
        Scalar coefficients (one vessel).
    horizon : float, [s]
        Not used; kept for a uniform signature with :func:`sampling_grid`.

    Returns
    -------
    list of float, [s]
        :math:`\tau = C/G` (if G > 0), then :math:`a_i = 1/b_i` for each decaying source
        with :math:`b_i > 0`.

    Examples
    --------
    By hand: C = 1 J/K, G = 1 W/K gives tau = 1 s; a source with a = 2 s adds 2 s:

    >>> from screening.core.closed_form_history import linear_balance
    >>> time_scales(linear_balance(1.0, 1.0, 300.0, 300.0, 0.0, [1.0], [2.0]), 100.0)
    [1.0, 2.0]
    """
    scales = []
    lam = float(balance.rate)
    if lam > 0:
        scales.append(1.0 / lam)
    for b in np.atleast_1d(balance.decay_rate):
        if b > 0:
            scales.append(1.0 / float(b))
    return [s for s in scales if np.isfinite(s)]


def sampling_grid(balance: LinearBalance, horizon: float) -> np.ndarray:
    """A time grid on [0, horizon] that resolves every time scale of the case.

    Parameters
    ----------
    balance : LinearBalance
        Scalar coefficients (one vessel).
    horizon : float, [s]

    Returns
    -------
    numpy.ndarray, shape (M,), [s]
        Sorted, unique, from 0 to ``horizon``: the ends, 400 geometric points from
        1e-6 of the smallest time scale, 201 even points over the horizon, and 241 even
        points up to 60 times each time scale of :func:`time_scales`.

    Notes
    -----
    Used to find the sign changes of dT/dt (turning points) in :func:`history_shape`;
    a sum of k + 1 exponentials has at most k of them, and each lies within a few time
    scales of the others, which the grid resolves. With a daily cycle (``balance.forcing``)
    the grid adds every sunrise and sunset and a point every 10 minutes (:func:`cycle_grid`):
    the cycle gives about two turning points a day, hours apart.

    Examples
    --------
    >>> from screening.core.closed_form_history import linear_balance
    >>> grid = sampling_grid(linear_balance(1.0, 1.0, 473.15, 298.15), 60.0)
    >>> float(grid[0]), float(grid[-1]), bool(np.all(np.diff(grid) > 0))
    (0.0, 60.0, True)
    """
    scales = time_scales(balance, horizon)
    smallest = min(scales + [horizon])
    pieces = [np.array([0.0, horizon]),
              np.geomspace(max(horizon * 1e-12, smallest * 1e-6), horizon, 400),
              np.linspace(0.0, horizon, 201)]
    for s in scales:
        top = min(horizon, 60.0 * s)
        pieces.append(np.linspace(0.0, top, 241))
    if balance.forcing is not None:
        pieces.append(cycle_grid(balance.forcing, horizon))
    grid = np.unique(np.concatenate(pieces))
    return grid[(grid >= 0) & (grid <= horizon)]


def cycle_grid(forcing, horizon: float) -> np.ndarray:
    """Sunrises, sunsets and a point every 10 minutes (at most 200,001 points) on [0, horizon], s.

    Examples
    --------
    >>> from screening.core.daily_cycle import CycleForcing
    >>> g = cycle_grid(CycleForcing(1.0, 54000.0, 1.0, 46800.0, 0.0), 86400.0)
    >>> len(g), float(g[-1]), 5.5 * 3600.0 in g
    (145, 86400.0, True)
    """
    n = int(min(200_000, max(2, math.ceil(horizon / 600.0))))
    return np.unique(np.concatenate([np.linspace(0.0, horizon, n + 1), day_knots(forcing, horizon)]))


def history_shape(balance: LinearBalance, horizon: float) -> HistoryShape:
    r"""Turning points, peak and end state of the history on [0, horizon].

    Parameters
    ----------
    balance : LinearBalance
        Scalar coefficients (one vessel).
    horizon : float, [s]

    Returns
    -------
    HistoryShape

    Notes
    -----
    Turning points are the sign changes of :math:`\dot T` on :func:`sampling_grid`, each
    refined with Brent's method to full relative precision; the peak is the largest of
    T at 0, at the horizon and at the turning points (the history is monotone between
    them).

    References
    ----------
    Brent, R. P., *Algorithms for Minimization without Derivatives*, Prentice-Hall (1973), ch. 4;
    Incropera, F. P. et al., *Fundamentals of Heat and Mass Transfer*, 6th ed., Wiley (2007), ch. 5.

    Examples
    --------
    By hand: with C = 1 J/K, G = 1 W/K, T0 = T_a and one source P = 1 W with a = 2 s,
    :math:`T - T_0 = 2 (e^{-t/2} - e^{-t})`, whose maximum is at :math:`e^{t/2} = 2`,
    t = 2 ln 2 = 1.386294 s, where T - T0 = 2 (1/2 - 1/4) = 0.5 K:

    >>> from screening.core.closed_form_history import linear_balance
    >>> shape = history_shape(linear_balance(1.0, 1.0, 300.0, 300.0, 0.0, [1.0], [2.0]), 100.0)
    >>> [round(t, 6) for t in shape.turning_times], round(shape.peak_temperature, 9)
    ([1.386294], 300.5)
    """
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
    r"""First time T(t) reaches ``limit_temperature`` on [0, horizon]; None if it does not.

    Parameters
    ----------
    balance : LinearBalance
        Scalar coefficients (one vessel).
    limit_temperature : float, [K]
    horizon : float, [s]
    shape : HistoryShape, optional
        From :func:`history_shape`, if already computed.

    Returns
    -------
    float or None, [s]
        0 when the contents start at or above the limit; None when the limit is not
        reached within the horizon (which is not the same as never).

    Notes
    -----
    .. math:: t^* = \min\{t \in [0, H] : T(t) \ge T_{lim}\}

    The history is monotone between consecutive turning points, so the first piece
    whose larger end reaches the limit holds the first crossing, which is unique in it
    and found by Brent's method to full relative precision.

    References
    ----------
    Brent, R. P., *Algorithms for Minimization without Derivatives*, Prentice-Hall (1973), ch. 4;
    Incropera, F. P. et al., *Fundamentals of Heat and Mass Transfer*, 6th ed., Wiley (2007), ch. 5.

    Examples
    --------
    Incropera et al., Example 5.1 (from memory): tau = 1 s, from 25 degC in gas at
    200 degC, 199 degC is reached at tau ln(175 / 1) = 5.164786 s (by hand):

    >>> from screening.core.closed_form_history import linear_balance
    >>> junction = linear_balance(1.0, 1.0, 473.15, 298.15)
    >>> round(first_crossing(junction, 472.15, 60.0), 6)
    5.164786
    >>> first_crossing(junction, 290.0, 60.0), first_crossing(junction, 480.0, 60.0)
    (0.0, None)
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


METHODS = ("auto", "one-case", "vectorised")


def time_to_limit(heat_capacity, conductance, drive, initial_temperature, limits, horizon,
                  decaying_power=(), decay_time=(), *, method="auto"):
    r"""First time the contents reach each limit temperature within the horizon: the time-to-limit solver.

    For the lumped balance with constant and decaying sources and heating media, whose history
    has a closed form. One vessel or many (arrays along the first axis).

    Parameters
    ----------
    heat_capacity : float or array (N,), [J/K]
        C = m c_p + C_wall, > 0.
    conductance : float or array (N,), [W/K]
        G = UA + sum of heating-medium ua, >= 0 (0: adiabatic).
    drive : float or array (N,), [W]
        Q0 = UA T_a + sum of ua T_m + constant power.
    initial_temperature : float or array (N,), [K]
    limits : float or array (L,) or (N, L), [K]
        Limit temperatures; NaN marks an unused slot.
    horizon : float or array (N,), [s]
    decaying_power : array (k,) or (N, k), [W], optional
        Initial power P_i of each exponentially decaying source.
    decay_time : array like ``decaying_power``, [s], optional
        Time constant a_i of each source (inf: it does not decay).
    method : {"auto", "one-case", "vectorised"}
        "one-case": turning points by a resolving grid and Brent's method, then each first crossing by
        Brent's method (:func:`first_crossing`); "vectorised": all turning points at once and safeguarded
        Newton on arrays (:func:`screening.core.time_to_limit_batch.first_crossing_times`), for many
        vessels; "auto": one-case for a single vessel, vectorised otherwise. The two agree to about 1e-12
        relative (``tests/core/test_time_to_limit_batch.py`` and ``tests/core/test_time_to_limit.py``).

    Returns
    -------
    numpy.ndarray, shape (L,) for one vessel or (N, L), [s]
        0 when the contents start at or above a limit; NaN when a limit is not reached within the
        horizon (which is not the same as never).

    Notes
    -----
    .. math:: C \frac{dT}{dt} = Q_0 - G T + \sum_i P_i e^{-t/a_i}

    has the solution, with :math:`\lambda = G / C` and :math:`b_i = 1/a_i`,

    .. math:: T(t) = T_\infty + (T_0 - T_\infty) e^{-\lambda t}
              + \sum_i \frac{P_i}{C} \frac{e^{-b_i t} - e^{-\lambda t}}{\lambda - b_i},
              \qquad T_\infty = Q_0 / G

    (the term tends to :math:`(P_i/C)\,t\,e^{-\lambda t}` when :math:`b_i = \lambda`; with G = 0 the
    exponentials in :math:`\lambda` become powers of t). Between consecutive turning points the history is
    monotone, so the first piece that reaches a limit holds its first crossing, and the crossing is unique.

    References
    ----------
    Incropera, F. P., DeWitt, D. P., Bergman, T. L., Lavine, A. S., *Fundamentals of Heat and Mass
    Transfer*, 6th ed., Wiley (2007), section 5.2 (lumped capacitance; the general lumped analysis
    with a heat source, section 5.3; section numbers from memory).

    Examples
    --------
    Incropera et al., Example 5.1 (from memory): a thermocouple junction with a 1 s time constant
    (C / G = 1 s), from 25 degC in a gas stream at 200 degC, reaches 199 degC after
    tau ln(175 / 1) = 5.16 s:

    >>> t = time_to_limit(1.0, 1.0, 473.15, 298.15, [472.15], 60.0)
    >>> round(float(t[0]), 3)
    5.165
    >>> float(time_to_limit([1.0], [1.0], [473.15], [298.15], [472.15], [60.0], method="vectorised")[0, 0])
    5.164785...
    """
    if method not in METHODS:
        raise ValueError(f"method must be one of {METHODS}, got {method!r}")
    C = np.atleast_1d(np.asarray(heat_capacity, dtype=float))
    one_vessel = np.ndim(heat_capacity) == 0
    n = C.shape[0]
    G, Q0, T0, H = (np.broadcast_to(np.asarray(v, dtype=float), (n,)) for v in
                    (conductance, drive, initial_temperature, horizon))
    L = np.asarray(limits, dtype=float)
    L = np.broadcast_to(L if L.ndim == 2 else L.reshape(1, -1), (n, L.shape[-1] if L.ndim else 1))
    P = np.asarray(decaying_power, dtype=float)
    a = np.asarray(decay_time, dtype=float)
    k = P.shape[-1] if P.size else 0
    P = np.broadcast_to(P if P.ndim == 2 else P.reshape(1, -1), (n, k)) if k else np.zeros((n, 0))
    a = np.broadcast_to(a if a.ndim == 2 else a.reshape(1, -1), (n, k)) if k else np.zeros((n, 0))
    with np.errstate(divide="ignore"):
        b = np.where(np.isinf(a), 0.0, 1.0 / a)
    if method == "auto":
        method = "one-case" if n == 1 else "vectorised"
    if method == "vectorised":
        from screening.core.time_to_limit_batch import first_crossing_times  # numpy threads: only when asked

        Pv, bv = (P, b) if k else (np.zeros((n, 1)), np.zeros((n, 1)))
        out = np.asarray(first_crossing_times(C, G, Q0, T0, Pv, bv, L, H), dtype=float).reshape(n, -1)
    else:
        out = np.full(L.shape, np.nan)
        for i in range(n):
            balance = LinearBalance(np.asarray(C[i]), np.asarray(G[i]), np.asarray(Q0[i]), np.asarray(T0[i]),
                                    P[i], b[i])
            shape = history_shape(balance, float(H[i]))
            for j, lim in enumerate(L[i]):
                if np.isfinite(lim):
                    t = first_crossing(balance, float(lim), float(H[i]), shape)
                    out[i, j] = np.nan if t is None else t
    return out[0] if one_vessel else out
