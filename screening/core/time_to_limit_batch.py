r"""First time to each limit, turning points and peak for many vessels at once.

For a register of N vessels whose balances are linear,

.. math:: C \frac{dT}{dt} = Q_0 + \sum_{i=1}^{k} P_i e^{-b_i t} - G T,

the history has the closed form of :mod:`screening.core.closed_form_history`
(:math:`\lambda = G/C`, :math:`g(x) = (1 - e^{-x})/x`):

.. math:: T(t) = T_0 e^{-\lambda t} + \frac{Q_0}{C}\, t\, g(\lambda t)
          + \sum_i \frac{P_i}{C}\, e^{-\min(b_i,\lambda) t}\, t\, g(|\lambda - b_i| t).

This module evaluates that history for all N vessels together (numpy arrays,
no Python loop over vessels) and finds, for every vessel and limit, the *first*
time the contents reach the limit within the horizon.  Any root of
T(t) - limit would not do: the first one is guaranteed by bracketing it between
the history's turning points (the zeros of dT/dt), between which the history is
monotone, so that the first piece whose upper end reaches the limit holds it.

Turning points
--------------
Differentiating the closed form gives, with :math:`A = \dot T(0) = (Q_0 + \sum_i P_i - G T_0)/C`
and :math:`c_i = P_i b_i / C`,

.. math:: \dot T(t)\, e^{\lambda t} = A - \sum_i c_i\, \varphi_i(t), \qquad
          \varphi_i(t) = \frac{e^{(\lambda - b_i) t} - 1}{\lambda - b_i}
          \quad (\varphi_i(t) = t \text{ when } b_i = \lambda),

whose derivative is :math:`-\sum_i c_i e^{(\lambda - b_i) t}`.  No coefficient
here divides by :math:`\lambda - b_i`, so a source that decays at (or within
1e-9 of) the vessel's own rate needs no special case and its coefficients do
not cancel.  Zeros are found by the recursion behind Rolle's theorem: the zeros
of :math:`E_m(t) = \sum_{i \in I_m} a_i e^{-b_i t}` are separated by the zeros of
:math:`\frac{d}{dt}\,[E_m(t) e^{b_p t}]`, which is again such a sum, with one term
fewer and coefficients :math:`a_i (b_p - b_i)` (again no division).  Starting from
the one-term sum (no zeros), the two-term sum has its zero in closed form; each
level above is solved interval by interval (at most one zero per interval,
bracketed by a change of sign), up to :math:`\dot T` itself.  A history with k
decaying sources therefore has at most k turning points and all of them are
found.  For k = 1 the turning point has the closed form
:math:`t^* = \ln(1 + (\lambda - b) A/c)/(\lambda - b)` (see
:func:`_one_source_turning_point`).

A sign is trusted only where the value exceeds a bound on its rounding error.
:math:`\dot T` is evaluated in the form above and, where that cancels (late in
an adiabatic history, where :math:`\dot T` decays like the source while A and
the source term each stay finite), as the sum of exponentials with the
well-separated rates split out (:func:`_scaled_rate`); each evaluation uses the
form with the smaller error bound, and all terms are scaled by the slowest
exponential so that nothing overflows or underflows to zero.  Turning points
that lie within rounding of a flat stretch are therefore neither invented nor
needed: the history there moves by less than its own rounding.

Root finding
------------
Every root is bracketed.  Newton steps (with Halley's correction where the
second derivative is known: the crossings) that would leave the bracket, or that
shrink more slowly than bisection would, are replaced by bisection (the
safeguard of Numerical Recipes' ``rtsafe``).  The iteration is done on whole
arrays; an entry leaves the active set when its step falls below ``ROOT_RTOL``
(1e-13) of the root, when after two Newton steps in a row the error estimated
from the observed rate of convergence (:math:`\Delta_n^3/\Delta_{n-1}^2`) does,
or when its residual is at rounding level; a fixed cap (``MAX_ITERATIONS``)
ends the loop in every case.  Crossings start from one Halley step off the
lower end of their piece (off a minimum, from the osculating parabola).

All functions take SI floats or numpy arrays and return SI results.  Inputs
are accepted up to 1e30 in magnitude (C from 1e-30), a range in which no
intermediate result overflows, so no floating-point warning is raised.

References
----------
Incropera, F. P., DeWitt, D. P., Bergman, T. L., Lavine, A. S., *Fundamentals of
Heat and Mass Transfer*, 6th ed., Wiley (2007), ch. 5 (lumped capacitance).

Pólya, G. and Szegő, G., *Problems and Theorems in Analysis II*, Springer (1976),
Part Five, ch. 1 (Rolle's theorem and Descartes' rule of signs; from memory): a
real exponential sum with n terms has at most n - 1 real zeros, by the
recursion used here.

Press, W. H., Teukolsky, S. A., Vetterling, W. T., Flannery, B. P., *Numerical
Recipes*, 3rd ed., Cambridge University Press (2007), section 9.4 (Newton-Raphson
with bracketing, ``rtsafe``).
"""
from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor
from typing import NamedTuple

import numpy as np

__all__ = [
    "HistorySummary",
    "RegisterScreen",
    "first_crossing_times",
    "history_summary",
    "screen_register",
    "turning_times",
    "DEFAULT_CHUNK",
    "MAX_ITERATIONS",
    "ROOT_RTOL",
]

MAX_ITERATIONS = 100
"""Iteration cap of every root search (bisection alone would need about 60 to exhaust float64)."""

ROOT_RTOL = 1e-13
"""Relative error (last step, or the error estimated from the rate of convergence) at which a root search stops."""

DEFAULT_CHUNK = 1 << 15
"""Vessels handled together; keeps every temporary array within the CPU caches."""

_MAX_MAGNITUDE = 1e30
"""Inputs are accepted up to this magnitude (C down to its inverse): within that range no
intermediate overflows, so the engine raises no floating-point warnings."""

_EPS = np.finfo(float).eps
_TINY = 1e-300  # floor of the argument of g(x) = (1 - e^-x)/x, so that g(0) = 1 without a division by zero


class HistorySummary(NamedTuple):
    """Shape of each history on [0, horizon].

    Attributes
    ----------
    turning_times : numpy.ndarray, shape (N, k), [s]
        Interior turning points (dT/dt = 0 with a change of sign) in (0, horizon),
        ascending, padded with NaN.
    peak_temperature : numpy.ndarray, shape (N,), [K]
        Maximum of T over [0, horizon].
    peak_time : numpy.ndarray, shape (N,), [s]
        Time of that maximum (0 when the initial temperature is the maximum).
    end_temperature : numpy.ndarray, shape (N,), [K]
        T(horizon).
    end_rate : numpy.ndarray, shape (N,), [K/s]
        dT/dt at the horizon.
    """

    turning_times: np.ndarray
    peak_temperature: np.ndarray
    peak_time: np.ndarray
    end_temperature: np.ndarray
    end_rate: np.ndarray


class RegisterScreen(NamedTuple):
    """First crossing times and history shape of a register (see :func:`screen_register`).

    Attributes
    ----------
    times : numpy.ndarray, shape (N,) or (N, L), [s]
        As returned by :func:`first_crossing_times`.
    summary : HistorySummary
        As returned by :func:`history_summary`.
    """

    times: np.ndarray
    summary: HistorySummary


# ---------------------------------------------------------------------------
# input handling
# ---------------------------------------------------------------------------

def within_engine_range(C, G, Q0, T0, P, b, horizon):
    """Which vessels the engine accepts.

    Parameters
    ----------
    C, G, Q0, T0 : numpy.ndarray, shape (N,), [J/K], [W/K], [W], [K]
        As for :func:`first_crossing_times`, already broadcast.
    P, b : numpy.ndarray, shape (N, k), [W] and [1/s]
    horizon : numpy.ndarray, shape (N,), [s]

    Returns
    -------
    numpy.ndarray of bool, shape (N,)

    Notes
    -----
    Accepted: all finite, 1e-30 <= C <= 1e30, 0 <= G, b, horizon <= 1e30 and abs(Q0), abs(T0), abs(P) <= 1e30.
    Callers with vessels outside it (absurd but valid inputs) use the scalar engine for those.

    Examples
    --------
    >>> ones, none = np.ones(2), np.zeros((2, 1))
    >>> within_engine_range(np.array([1.0, 1e-40]), ones, ones, ones, none, none, ones).tolist()
    [True, False]
    """
    big = _MAX_MAGNITUDE
    with np.errstate(invalid="ignore"):
        finite = (np.isfinite(C) & np.isfinite(G) & np.isfinite(Q0) & np.isfinite(T0) & np.isfinite(horizon)
                  & np.isfinite(P).all(axis=1) & np.isfinite(b).all(axis=1))
        bad = (~finite | (C < 1.0 / big) | (C > big) | (G < 0) | (G > big) | (np.abs(Q0) > big) | (np.abs(T0) > big)
               | (horizon < 0) | (horizon > big) | (np.abs(P) > big).any(axis=1) | (b < 0).any(axis=1)
               | (b > big).any(axis=1))
    return ~bad


def _prepare(C, G, Q0, T0, P, b, horizon, limits=None):
    """Broadcast and check inputs; returns float64 arrays (N,), (N,k) and limits (N,L)."""
    C, G, Q0, T0, horizon = (np.asarray(v, dtype=float) for v in (C, G, Q0, T0, horizon))
    if any(v.ndim > 1 for v in (C, G, Q0, T0, horizon)):
        raise ValueError("C, G, Q0, T0 and horizon must be scalars or 1-D arrays (one entry per vessel)")
    P = np.zeros((0,)) if P is None else np.asarray(P, dtype=float)
    b = np.zeros((0,)) if b is None else np.asarray(b, dtype=float)
    if P.ndim == 1 and P.size and P.shape != b.shape:
        raise ValueError("P and b must have the same shape")
    P2 = P if P.ndim == 2 else P.reshape(1, -1)
    b2 = b if b.ndim == 2 else b.reshape(1, -1)
    if P2.ndim != 2 or b2.ndim != 2 or P2.shape[1] != b2.shape[1]:
        raise ValueError("P and b must have shape (N, k) (or (k,) shared by all vessels), with the same k")
    lim = None
    sizes = [v.size for v in (C, G, Q0, T0, horizon) if v.ndim == 1] + [P2.shape[0], b2.shape[0]]
    if limits is not None:
        lim = np.asarray(limits, dtype=float)
        if lim.ndim > 2:
            raise ValueError("limits must have shape (N,) or (N, L)")
        if lim.ndim == 2:
            sizes.append(lim.shape[0])
        elif lim.ndim == 1:
            sizes.append(lim.size)
    n = max(sizes) if sizes else 1
    if any(s not in (1, n) for s in sizes):
        raise ValueError(f"inconsistent numbers of vessels: {sorted(set(sizes))}")
    C, G, Q0, T0, horizon = (np.ascontiguousarray(np.broadcast_to(v, (n,))) for v in (C, G, Q0, T0, horizon))
    k = P2.shape[1]
    P2 = np.ascontiguousarray(np.broadcast_to(P2, (n, k)))
    b2 = np.ascontiguousarray(np.broadcast_to(b2, (n, k)))
    bad = ~within_engine_range(C, G, Q0, T0, P2, b2, horizon)
    if bad.any():
        first = int(np.argmax(bad))
        raise ValueError(f"{int(bad.sum())} vessel(s) out of range (first: index {first}); need finite inputs with "
                         f"1e-30 <= C <= 1e30, 0 <= G, b, horizon <= 1e30 and |Q0|, |T0|, |P| <= 1e30")
    if lim is not None:
        lim2 = lim.reshape(1, 1) if lim.ndim == 0 else (lim.reshape(-1, 1) if lim.ndim == 1 else lim)
        lim = np.ascontiguousarray(np.broadcast_to(lim2, (n, lim2.shape[1])))
    return C, G, Q0, T0, P2, b2, horizon, lim


class _Coefficients(NamedTuple):
    """Per-vessel coefficients of the closed form (rows of a chunk)."""

    lam: np.ndarray  # G/C, 1/s
    T0: np.ndarray  # K
    q: np.ndarray  # (Q0 + sum of non-decaying P_i)/C, K/s
    A: np.ndarray  # dT/dt at t = 0, K/s
    mu: np.ndarray  # min(lambda, b_i over sources that decay), 1/s
    p: np.ndarray  # (n, k) P_i / C of decaying sources (0 for the others), K/s
    c: np.ndarray  # (n, k) P_i b_i / C, K/s^2
    b: np.ndarray  # (n, k) b_i, replaced by lambda where c_i = 0 (the term is then absent), 1/s
    mn: np.ndarray  # (n, k) min(b_i, lambda), 1/s
    ad: np.ndarray  # (n, k) |lambda - b_i|, 1/s
    # the same rate written as a sum of exponentials (see _scaled_rate)
    W: np.ndarray  # coefficient of exp(-lambda t), K/s
    w: np.ndarray  # (n, k) c_i / (b_i - lambda) for the split sources, 0 for the others, K/s
    cu: np.ndarray  # (n, k) c_i for the sources not split, 0 for the others, K/s^2
    a_err: np.ndarray  # magnitude of the terms summed into A, K/s
    w_err: np.ndarray  # magnitude of the terms summed into W, K/s


def _coefficients(C, G, Q0, T0, P, b, H) -> _Coefficients:
    lam = G / C
    p = P / C[:, None]
    steady = b == 0  # a "decaying" source with infinite time constant is a constant one
    q = (Q0 + np.where(steady, P, 0.0).sum(axis=1)) / C
    A = (Q0 + P.sum(axis=1) - G * T0) / C
    p = np.where(steady, 0.0, p)
    c = p * b
    live = c != 0
    b_safe = np.where(live, b, lam[:, None])
    mu = np.minimum(lam, np.where(live, b, np.inf).min(axis=1, initial=np.inf))
    mn = np.minimum(b_safe, lam[:, None])
    delta = b_safe - lam[:, None]
    ad = np.abs(delta)
    # split the sources whose rate differs from the vessel's by more than 1/horizon
    split = live & (ad * H[:, None] >= 1.0)
    safe_delta = np.where(split, delta, 1.0)
    w = np.where(split, c / safe_delta, 0.0)
    Pl = np.where(split, P * (lam[:, None] / safe_delta), 0.0)
    W = (Q0 - G * T0 + np.where(split, 0.0, P).sum(axis=1) - Pl.sum(axis=1)) / C
    a_err = (np.abs(Q0) + np.abs(P).sum(axis=1) + np.abs(G * T0)) / C
    w_err = (np.abs(Q0) + np.abs(G * T0) + np.where(split, 0.0, np.abs(P)).sum(axis=1) + np.abs(Pl).sum(axis=1)) / C
    cu = np.where(split, 0.0, c)
    return _Coefficients(lam, T0, q, A, mu, p, c, b_safe, mn, ad, W, w, cu, a_err, w_err)


# ---------------------------------------------------------------------------
# kernels (broadcast: coefficient arrays (M,) or (M, 1) against times (M,) or (M, m))
# ---------------------------------------------------------------------------

def _tg(rate, t):
    """t g(rate t) = (1 - exp(-rate t)) / rate, equal to t when rate t = 0; s."""
    mx = -np.maximum(rate * t, _TINY)
    return t * (np.expm1(mx) / mx)


def _temperature_and_rate(t, lam, T0, q, A, p, c, mn, ad, b=None):
    """T(t) in K and dT/dt in K/s (and d2T/dt2 in K/s^2 when b is given).

    Per-source arrays carry the source axis first (k, ...).  The second
    derivative follows from differentiating the balance:
    d2T/dt2 = -lambda dT/dt - sum_i c_i exp(-b_i t).
    """
    E = np.exp(-lam * t)
    T = T0 * E + q * _tg(lam, t)
    R = A * E
    R2 = None if b is None else np.zeros_like(R)
    for i in range(p.shape[0]):
        S = np.exp(-mn[i] * t) * _tg(ad[i], t)
        T = T + p[i] * S
        R = R - c[i] * S
        if b is not None:
            R2 = R2 - c[i] * np.exp(-b[i] * t)
    if b is None:
        return T, R
    return T, R, R2 - lam * R


def _scaled_rate(t, lam, mu, A, c, b, mn, ad, W, w, cu, a_err, w_err):
    r"""U = e^{mu t} dT/dt, dU/dt, d2U/dt2 and the rounding noise of U.

    Scaling by :math:`e^{\mu t}` (mu the smallest rate present) keeps every term
    within [-|coefficient|, |coefficient|], so U neither overflows nor underflows
    to zero while dT/dt keeps its sign.  Two exact forms of the rate are evaluated,

    .. math:: \dot T = A e^{-\lambda t} - \sum_i c_i e^{-\min(b_i,\lambda) t}\, t\, g(|\lambda - b_i| t)
              = W e^{-\lambda t} + \sum_{i \in S} \frac{c_i}{b_i - \lambda} e^{-b_i t}
                - \sum_{i \notin S} c_i e^{-\min(b_i,\lambda) t}\, t\, g(|\lambda - b_i| t),

    :math:`W = A - \sum_{i \in S} c_i / (b_i - \lambda)`, S the sources with
    :math:`|b_i - \lambda| H \ge 1`.  The first never divides by
    :math:`\lambda - b_i`; the second does not cancel once the split terms have
    died away (e.g. an adiabatic vessel, where dT/dt decays like the source while
    A and the source term each stay finite).  At each time the form with the
    smaller rounding bound is used; the bound is returned as the noise level.
    """
    e0 = np.exp(-(lam - mu) * t)
    UA = A * e0
    UB = W * e0
    nA = a_err * e0
    nB = w_err * e0
    V = np.zeros_like(UA)
    V2 = np.zeros_like(UA)
    for i in range(c.shape[0]):
        S = np.exp(-(mn[i] - mu) * t) * _tg(ad[i], t)
        Ei = np.exp(-(b[i] - mu) * t)
        cS = c[i] * S
        cuS = cu[i] * S
        wE = w[i] * Ei
        UA = UA - cS
        nA = nA + np.abs(cS)
        UB = UB + wE - cuS
        nB = nB + np.abs(wE) + np.abs(cuS)
        cE = c[i] * Ei
        V = V - cE
        V2 = V2 + (b[i] - mu) * cE
    use_b = nB < nA
    U = np.where(use_b, UB, UA)
    noise = 8.0 * _EPS * np.where(use_b, nB, nA)
    # dU/dt = -(lambda - mu) U - sum c_i e^{-(b_i - mu) t}, differentiated once more for d2U/dt2
    V = V - (lam - mu) * U
    V2 = V2 - (lam - mu) * V
    return U, V, V2, noise


def _exp_sum(t, a, d):
    """sum_i a_i exp(-d_i t) (d_i >= 0), its first two derivatives and its rounding noise; source axis first."""
    F = np.zeros(np.broadcast_shapes(np.shape(t), a.shape[1:]))
    dF = np.zeros_like(F)
    d2F = np.zeros_like(F)
    scale = np.zeros_like(F)
    for i in range(a.shape[0]):
        term = a[i] * np.exp(-d[i] * t)
        F = F + term
        dterm = d[i] * term
        dF = dF - dterm
        d2F = d2F + d[i] * dterm
        scale = scale + np.abs(term)
    return F, dF, d2F, 8.0 * _EPS * scale


# ---------------------------------------------------------------------------
# safeguarded Newton on arrays
# ---------------------------------------------------------------------------

def _bracketed_newton(fdf, params, lo, hi, flo, x0, maxiter=MAX_ITERATIONS, rtol=ROOT_RTOL):
    """Roots of M independent functions, each bracketed in [lo, hi] with f(lo) f(hi) < 0.

    Parameters
    ----------
    fdf : callable (x, params) -> (f, df, d2f, floor)
        Values, first and second derivatives (d2f may be None: plain Newton;
        otherwise Halley's correction is applied) and the residual below which f
        is rounding noise (the search stops there), on the entries of ``params`` (a tuple of arrays
        whose first axis, or second for per-source arrays, runs over the M problems).
    params : tuple of arrays
    lo, hi : numpy.ndarray, shape (M,)
    flo : numpy.ndarray, f(lo) (only its sign is used)
    x0 : numpy.ndarray, starting points inside the brackets

    Returns
    -------
    numpy.ndarray, shape (M,)
    """
    m = lo.size
    out = np.empty(m)
    idx = np.arange(m)
    # orient so that f(xl) < 0 < f(xh)
    neg_lo = flo < 0
    xl = np.where(neg_lo, lo, hi)
    xh = np.where(neg_lo, hi, lo)
    x = x0.copy()
    dx = np.abs(hi - lo)
    dxold = dx.copy()
    alive = np.ones(m, dtype=bool)
    was_newton = np.zeros(m, dtype=bool)
    f, df, d2f, floor = fdf(x, params)
    for _ in range(maxiter):
        neg = f < 0
        xl = np.where(neg, x, xl)
        xh = np.where(neg, xh, x)
        # Newton step f/df, or inf where it would exceed 1e300 (no overflow)
        af = np.abs(f)
        step = np.divide(f, df, out=np.full_like(f, np.inf), where=np.abs(df) > af * 1e-300)
        if d2f is not None:
            # Halley's correction 1 / (1 - f d2f / (2 df^2)), used while it lies within [0.1, 10]
            # (a larger change means the curvature dominates: the plain Newton step is kept)
            num = f * d2f
            den = df * df
            shrink = 1.0 - 0.5 * np.divide(num, den, out=np.zeros_like(f), where=den > np.abs(num) * 1e-300)
            use = (shrink >= 0.1) & (shrink <= 10.0)
            step = np.where(use, step / np.where(use, shrink, 1.0), step)
        xn = x - step
        # bisect when Newton leaves the bracket or does not halve the step (Numerical Recipes' rtsafe)
        bisect = ~((xn > np.minimum(xl, xh)) & (xn < np.maximum(xl, xh))) | (2.0 * np.abs(step) > dxold)
        xnew = np.where(bisect, 0.5 * (xl + xh), xn)
        dxold = dx
        dx = np.abs(xnew - x)
        at_root = af <= floor
        tol = rtol * np.abs(xnew)
        # after two Newton/Halley steps in a row the convergence is at least quadratic, and the
        # error left after this step is about dx^3 / dxold^2: stop when that is below tol.
        # (A bisection step halves the bracket, so dx <= tol also ends a collapsed bracket.)
        newton = ~bisect
        fast = (dx * dx * dx <= tol * dxold * dxold) & newton & was_newton
        was_newton = newton
        done = at_root | (dx <= tol) | fast
        x = np.where(at_root, x, xnew)
        done &= alive
        if done.any():
            out[idx[done]] = x[done]
            alive &= ~done
            n_alive = np.count_nonzero(alive)
            if n_alive == 0:
                return out
            if n_alive < 0.75 * alive.size:  # work on the active subset (finished entries ride along until then)
                keep = alive
                idx, x, xl, xh, dx, dxold = idx[keep], x[keep], xl[keep], xh[keep], dx[keep], dxold[keep]
                was_newton = was_newton[keep]
                params = tuple(v[..., keep] if v.ndim > 1 else v[keep] for v in params)
                alive = np.ones(n_alive, dtype=bool)
        f, df, d2f, floor = fdf(x, params)
    out[idx[alive]] = x[alive]  # iteration cap: the bracket still holds the root, x is its best estimate
    return out


# ---------------------------------------------------------------------------
# turning points
# ---------------------------------------------------------------------------

def _first_axis(a):
    """(n, k) -> (k, n) contiguous, so that a[i] is source i for all rows."""
    return np.ascontiguousarray(a.T)


def _exp_sum_fdf(x, prm):
    return _exp_sum(x, prm[0], prm[1])


def _start_point(lo, hi, flo, fhi, d1lo, d1hi, d2lo, d2hi):
    """Starting point for a root bracketed in [lo, hi]: one Halley step from the end that meets
    Fourier's condition f f'' > 0 (Newton from there approaches the root from one side without
    overshooting it), else the secant point; the midpoint if either leaves the bracket.
    """
    use_hi = (fhi * d2hi > 0) & ~(flo * d2lo > 0)
    x, f, d1, d2 = (np.where(use_hi, u, v) for u, v in ((hi, lo), (fhi, flo), (d1hi, d1lo), (d2hi, d2lo)))
    # the quotients are kept below 1e100 in magnitude, so their product cannot overflow
    ad1 = np.abs(d1)
    step = np.divide(f, d1, out=np.full_like(f, np.inf), where=ad1 > np.abs(f) * 1e-100)
    curv = np.divide(d2, d1, out=np.zeros_like(f), where=ad1 > np.abs(d2) * 1e-100)
    shrink = 1.0 - 0.5 * np.where(np.isfinite(step), step, 0.0) * curv
    use = (shrink >= 0.1) & (shrink <= 10.0)
    x0 = x - np.where(use, step / np.where(use, shrink, 1.0), step)
    a, b = np.minimum(lo, hi), np.maximum(lo, hi)
    secant = lo + (hi - lo) * (flo / (flo - fhi))
    x0 = np.where((x0 > a) & (x0 < b), x0, secant)
    return np.where((x0 > a) & (x0 < b), x0, 0.5 * (lo + hi))


def _roots_between(values_at, fdf, params_of, knots, H):
    """At most one root of a function per interval between consecutive knots.

    values_at(knots) -> (values, first and second derivatives, noise), each (n, nk):
    a value within its noise has no reliable sign and counts as zero.  A clean change of sign between
    neighbouring knots is refined by :func:`_bracketed_newton`; a run of
    zero-sign knots between opposite signs marks a zero at its first knot.
    params_of(rows) -> params tuple for fdf.
    Returns roots (n, nk - 1) ascending, padded with H.
    """
    n, nk = knots.shape
    F, dF, d2F, noise = values_at(knots)
    sign = np.where(np.abs(F) > noise, np.sign(F), 0.0)
    nxt = sign.copy()  # next clean sign at or after each knot
    for j in range(nk - 2, -1, -1):
        nxt[:, j] = np.where(sign[:, j] != 0, sign[:, j], nxt[:, j + 1])
    a, bnd = knots[:, :-1], knots[:, 1:]
    sa, sb = sign[:, :-1], sign[:, 1:]
    change = (sa * sb < 0) & (bnd > a)
    roots = np.broadcast_to(H[:, None], a.shape).copy()
    knot_zero = (sb == 0) & (sa * nxt[:, 1:] < 0) & (bnd > 0) & (bnd < H[:, None])
    roots[knot_zero] = bnd[knot_zero]
    rows, cols = np.nonzero(change)
    if rows.size:
        lo, hi = a[rows, cols], bnd[rows, cols]
        flo, fhi = F[rows, cols], F[rows, cols + 1]
        x0 = _start_point(lo, hi, flo, fhi, dF[rows, cols], dF[rows, cols + 1], d2F[rows, cols], d2F[rows, cols + 1])
        roots[rows, cols] = _bracketed_newton(fdf, params_of(rows), lo, hi, flo, x0)
    roots.sort(axis=1)
    return roots


def _two_term_zero(a, r, H):
    """Zero in (0, H) of a0 exp(-r0 t) + a1 exp(-r1 t), or H when there is none; a, r shape (k=2, n)."""
    a0, a1, r0, r1 = a[0], a[1], r[0], r[1]
    dr = r1 - r0
    ok = (np.sign(a0) * np.sign(a1) < 0) & (dr != 0)
    la = np.log(np.where(ok, np.abs(a1), 1.0)) - np.log(np.where(ok, np.abs(a0), 1.0))
    ok &= (np.sign(la) * np.sign(dr) > 0) & (np.abs(la) < H * np.abs(dr))
    t = np.divide(la, dr, out=H.copy(), where=ok)
    return t[:, None]


def _turning_points(cf: _Coefficients, H):
    """All zeros of dT/dt in (0, H) with a change of sign, shape (n, k), ascending, padded with H."""
    n, k = cf.p.shape
    if k == 0:
        return np.empty((n, 0))
    # Only the zeros matter, so each row of each level is divided by a positive scale (no overflow in
    # the products of rate differences, nor in Halley's f f'' however large the inputs).
    s0 = cf.a_err + cf.w_err + np.abs(cf.c).sum(axis=1) * H
    s0 = np.where(s0 > 0, s0, 1.0)
    c, b = _first_axis(cf.c / s0[:, None]), _first_axis(cf.b)
    # level m (m = 1..k): sum over slots m-1..k-1 of coef_i exp(-b_i t); level m+1 pivots on its first slot
    coefs, rates = [c], [b]
    for _ in range(1, k):
        cm, rm = coefs[-1], rates[-1]
        nxt = cm[1:] * (rm[:1] - rm[1:])
        top = np.abs(nxt).max(axis=0)
        coefs.append(nxt / np.where(top > 0, top, 1.0))
        rates.append(rm[1:])
    zeros = np.empty((n, 0))  # zeros of level k (one term): none
    zero_col = np.zeros((n, 1))
    for level in range(k - 1, 0, -1):
        cm, rm = coefs[level - 1], rates[level - 1]
        if cm.shape[0] == 2:
            zeros = _two_term_zero(cm, rm, H)
            continue
        live = cm != 0
        beta = np.where(live, rm, np.inf).min(axis=0)
        d = np.maximum(rm - np.where(np.isfinite(beta), beta, 0.0), 0.0)
        knots = np.concatenate([zero_col, zeros, H[:, None]], axis=1)
        zeros = _roots_between(
            lambda tk, cm=cm, d=d: _exp_sum(tk, cm[:, :, None], d[:, :, None]),
            _exp_sum_fdf,
            lambda rows, cm=cm, d=d: (cm[:, rows], d[:, rows]),
            knots, H)
    # level 0: dT/dt itself, between the zeros of level 1
    row_fields = (cf.lam, cf.mu, cf.A / s0, cf.W / s0, cf.a_err / s0, cf.w_err / s0)
    src_fields = (c,) + tuple(_first_axis(v) for v in (cf.b, cf.mn, cf.ad, cf.w / s0[:, None], cf.cu / s0[:, None]))

    def rate(t, lam, mu, A, W, a_err, w_err, c, b, mn, ad, w, cu):
        return _scaled_rate(t, lam, mu, A, c, b, mn, ad, W, w, cu, a_err, w_err)

    def fdf(x, prm):
        return rate(x, *prm)

    def params_of(rows):
        return tuple(v[rows] for v in row_fields) + tuple(v[:, rows] for v in src_fields)

    if k == 1:
        return _one_source_turning_point(cf, H, rate(H, *row_fields, *src_fields), fdf, params_of)

    knots = np.concatenate([zero_col, zeros, H[:, None]], axis=1)

    def values_at(tk):
        return rate(tk, *(v[:, None] for v in row_fields), *(v[:, :, None] for v in src_fields))

    return _roots_between(values_at, fdf, params_of, knots, H)


def _one_source_turning_point(cf: _Coefficients, H, end, fdf, params_of):
    r"""The turning point of a history with one decaying source, shape (n, 1), H where there is none.

    dT/dt changes sign on (0, H) when its clean signs at 0 and H differ (one zero at most).
    The zero solves :math:`A = c\,\varphi(t)`, :math:`\varphi(t) = (e^{(\lambda - b)t} - 1)/(\lambda - b)`:

    .. math:: t^* = \frac{\ln(1 + x)}{\lambda - b} = y\,\frac{\ln(1 + x)}{x},
              \qquad y = A/c,\; x = (\lambda - b)\, y,

    which tends to y = A/c as :math:`\lambda - b \to 0` (no division by :math:`\lambda - b`).
    Where :math:`1 + x` is within 1e-6 of 0 (a zero late on the slowest exponential, where the
    formula loses digits) or the formula fails, the zero is found by safeguarded Newton instead.
    """
    U_H, _, _, noise_H = end
    sA = np.where(np.abs(cf.A) > 8.0 * _EPS * cf.a_err, np.sign(cf.A), 0.0)
    sH = np.where(np.abs(U_H) > noise_H, np.sign(U_H), 0.0)
    change = sA * sH < 0
    out = H.copy()
    rows = np.nonzero(change)[0]
    if rows.size == 0:
        return out[:, None]
    A, c = cf.A[rows], cf.c[rows, 0]
    d = cf.lam[rows] - cf.b[rows, 0]
    Hr = H[rows]
    # c != 0 and A / c > 0 on these rows (a sign change needs a decaying source opposing A); the
    # guards keep |y| and |x| below 1e250 (rows outside go to Newton), so nothing overflows
    y = np.divide(A, c, out=np.zeros_like(A), where=np.abs(A) * 1e-250 < np.abs(c))
    fits = (y > 0) & (y < 1e250 / np.maximum(np.abs(d), 1e-50))
    x = np.where(fits, d * np.where(fits, y, 0.0), 0.0)
    good = fits & (np.abs(1.0 + x) > 1e-6) & (x > -1.0)
    small = np.abs(x) < 1e-8
    xs = np.where(good & ~small, x, 1.0)
    ratio = np.where(small, 1.0 - 0.5 * x, np.log1p(xs) / xs)
    t = y * ratio
    good &= (t > 0) & (t < Hr)
    out[rows] = np.where(good, t, Hr)
    bad = rows[~good]
    if bad.size:
        lo, hi = np.zeros(bad.size), H[bad]
        x0 = 0.5 * hi
        out[bad] = _bracketed_newton(fdf, params_of(bad), lo, hi, cf.A[bad], x0)
    return out[:, None]


# ---------------------------------------------------------------------------
# one chunk
# ---------------------------------------------------------------------------

def _chunk(C, G, Q0, T0, P, b, H, limits, want_summary):
    cf = _coefficients(C, G, Q0, T0, P, b, H)
    n, k = P.shape
    tp = _turning_points(cf, H)
    knots = np.concatenate([np.zeros((n, 1)), tp, H[:, None]], axis=1)
    # T, dT/dt and d2T/dt2 at the knots: at t = 0 from the coefficients, at the horizon for every
    # vessel, at the turning points only where there are some (padding repeats the horizon)
    R2_0 = -cf.lam * cf.A - cf.c.sum(axis=1)
    T_H, R_H, R2_H = _temperature_and_rate(H, cf.lam, cf.T0, cf.q, cf.A,
                                           *(_first_axis(v) for v in (cf.p, cf.c, cf.mn, cf.ad)),
                                           b=_first_axis(cf.b))
    Tk = np.empty((n, k + 2))
    Rk = np.empty((n, k + 2))
    R2k = np.empty((n, k + 2))
    Tk[:, 0], Rk[:, 0], R2k[:, 0] = T0, cf.A, R2_0
    Tk[:, 1:] = T_H[:, None]
    Rk[:, 1:] = R_H[:, None]
    R2k[:, 1:] = R2_H[:, None]
    if k:
        rows, cols = np.nonzero(tp < H[:, None])
        if rows.size:
            Ti, Ri, R2i = _temperature_and_rate(tp[rows, cols], cf.lam[rows], cf.T0[rows], cf.q[rows], cf.A[rows],
                                                *(_first_axis(v[rows]) for v in (cf.p, cf.c, cf.mn, cf.ad)),
                                                b=_first_axis(cf.b[rows]))
            Tk[rows, cols + 1], Rk[rows, cols + 1], R2k[rows, cols + 1] = Ti, Ri, R2i
    times = None
    if limits is not None:
        times = _crossings(cf, knots, Tk, Rk, R2k, limits)
    summary = None
    if want_summary:
        j = np.argmax(Tk, axis=1)
        rows = np.arange(n)
        turning = np.where(tp < H[:, None], tp, np.nan)
        summary = HistorySummary(turning, Tk[rows, j], knots[rows, j], Tk[:, -1].copy(), _end_rate(cf, H))
    return times, summary


def _end_rate(cf: _Coefficients, H):
    """dT/dt at the horizon, K/s, from the form of the rate with the smaller rounding error."""
    U, _, _, _ = _scaled_rate(H, cf.lam, cf.mu, cf.A, *(_first_axis(v) for v in (cf.c, cf.b, cf.mn, cf.ad)),
                           cf.W, *(_first_axis(v) for v in (cf.w, cf.cu)), cf.a_err, cf.w_err)
    return U * np.exp(-cf.mu * H)


def _crossings(cf: _Coefficients, knots, Tk, Rk, R2k, limits):
    """First crossing of each limit given the monotone pieces between knots; (n, L).

    Tk, Rk, R2k: T, dT/dt and d2T/dt2 at the knots.
    """
    n, nl = limits.shape
    times = np.full((n, nl), np.nan)
    at_zero = cf.T0[:, None] >= limits
    times[at_zero] = 0.0
    above = Tk[:, None, 1:] >= limits[:, :, None]  # (n, L, k+1)
    reached = above.any(axis=2) & ~at_zero
    rows, cols = np.nonzero(reached)
    if rows.size == 0:
        return times
    j = np.argmax(above[rows, cols], axis=1)  # first knot at or above the limit (index into knots[1:])
    lo, hi = knots[rows, j], knots[rows, j + 1]
    L = limits[rows, cols]
    flo, fhi = Tk[rows, j] - L, Tk[rows, j + 1] - L  # flo < 0 <= fhi
    result = hi.copy()
    solve = fhi > 0
    if solve.any():
        r, lo_, hi_, flo_, fhi_, L_ = rows[solve], lo[solve], hi[solve], flo[solve], fhi[solve], L[solve]
        jl = j[solve]
        x0 = _start_point(lo_, hi_, flo_, fhi_, Rk[r, jl], Rk[r, jl + 1], R2k[r, jl], R2k[r, jl + 1])
        params = (cf.lam[r], cf.T0[r], cf.q[r], cf.A[r], L_) + tuple(
            _first_axis(v[r]) for v in (cf.p, cf.c, cf.mn, cf.ad, cf.b))

        def fdf(x, prm):
            lam, T0, q, A, Lm, p, c, mn, ad, bb = prm
            T, R, R2 = _temperature_and_rate(x, lam, T0, q, A, p, c, mn, ad, b=bb)
            return T - Lm, R, R2, _EPS * np.maximum(np.abs(T), np.abs(Lm))

        result[solve] = _bracketed_newton(fdf, params, lo_, hi_, flo_, x0)
    times[rows, cols] = result
    return times


# ---------------------------------------------------------------------------
# public functions
# ---------------------------------------------------------------------------

def _run(C, G, Q0, T0, P, b, horizon, limits, want_summary, chunk_size, workers):
    C, G, Q0, T0, P, b, H, lim = _prepare(C, G, Q0, T0, P, b, horizon, limits)
    n = C.size
    chunk_size = max(1, int(chunk_size))
    bounds = [(s, min(n, s + chunk_size)) for s in range(0, n, chunk_size)]

    def work(bound):
        s, e = bound
        return _chunk(C[s:e], G[s:e], Q0[s:e], T0[s:e], P[s:e], b[s:e], H[s:e],
                      None if lim is None else lim[s:e], want_summary)

    if workers is not None and workers > 1 and len(bounds) > 1:
        with ThreadPoolExecutor(max_workers=int(workers)) as pool:
            parts = list(pool.map(work, bounds))
    else:
        parts = [work(bd) for bd in bounds]
    times = summary = None
    if lim is not None:
        times = np.concatenate([p[0] for p in parts], axis=0) if parts else np.empty((0, lim.shape[1]))
    if want_summary:
        k = P.shape[1]
        if parts:
            summary = HistorySummary(*(np.concatenate([p[1][i] for p in parts], axis=0) for i in range(5)))
        else:
            summary = HistorySummary(np.empty((0, k)), *(np.empty(0) for _ in range(4)))
    return times, summary


def _shape_times(times, limits):
    lim = np.asarray(limits, dtype=float)
    return times[:, 0] if lim.ndim < 2 else times


def first_crossing_times(C, G, Q0, T0, P, b, limits, horizon, *, chunk_size=DEFAULT_CHUNK, workers=1):
    r"""First time each vessel's contents reach each limit temperature within its horizon.

    Parameters
    ----------
    C : array_like, shape (N,) or scalar, [J/K]
        Heat capacity of the contents and wall, C = m c_p + C_wall > 0.
    G : array_like, shape (N,) or scalar, [W/K]
        Total conductance (loss to ambient plus heating media), G >= 0 (0: adiabatic).
    Q0 : array_like, shape (N,) or scalar, [W]
        Constant drive: UA T_a + sum of medium ua T_m + constant power.
    T0 : array_like, shape (N,) or scalar, [K]
        Initial temperature.
    P : array_like, shape (N, k) or (k,), [W]
        Initial power of each decaying source (pad unused slots with 0; may be negative).
    b : array_like, shape like P, [1/s]
        Decay rate 1/a of each source, b >= 0 (b = 0: the source does not decay).
    limits : array_like, shape (N,) or (N, L) or scalar, [K]
        Limit temperatures: one per vessel (N,), or L per vessel (N, L); NaN marks an
        unused slot (its result is NaN).
    horizon : array_like, shape (N,) or scalar, [s]
        End of the time window, >= 0.
    chunk_size : int, optional
        Vessels handled together (memory and cache use; the results do not depend on it).
    workers : int, optional
        Threads working on separate chunks (numpy releases the GIL in its loops).

    Returns
    -------
    numpy.ndarray, shape (N,) or (N, L), [s]
        First time T(t) >= limit on [0, horizon]; 0 when T0 >= limit; NaN when
        the limit is not reached within the horizon (which is not the same as never).

    Raises
    ------
    ValueError
        Inconsistent shapes, or inputs outside the accepted range: all finite, with
        1e-30 <= C <= 1e30, 0 <= G, b, horizon <= 1e30 and abs(Q0), abs(T0), abs(P) <= 1e30
        (within it no intermediate result overflows; limits may be any float).

    Notes
    -----
    The history between consecutive turning points (zeros of dT/dt, all of them
    found, see the module notes) is monotone, so the first piece whose upper end
    reaches the limit holds the first crossing, and the crossing in that piece is
    unique.  It is refined by safeguarded Newton (with Halley's correction) on
    :math:`T(t) - T_{lim}`, with

    .. math:: \dot T(t) = A e^{-\lambda t} - \sum_i c_i\,
              e^{-\min(b_i,\lambda) t}\, t\, g(|\lambda - b_i| t),
              \qquad \ddot T(t) = -\lambda \dot T(t) - \sum_i c_i e^{-b_i t},

    :math:`A = (Q_0 + \sum_i P_i - G T_0)/C`, :math:`c_i = P_i b_i / C`, to a relative
    error of about ``ROOT_RTOL`` (1e-13), or until the residual is at rounding level
    (a crossing time is only defined to within the rounding of T divided by dT/dt).
    Where the limit is within rounding of a grazing peak the answer reached / not
    reached is decided by rounding, as it must be.

    References
    ----------
    Incropera, F. P. et al., *Fundamentals of Heat and Mass Transfer*, 6th ed., Wiley (2007),
    ch. 5 (lumped capacitance); Press, W. H. et al., *Numerical Recipes*, 3rd ed., Cambridge
    University Press (2007), section 9.4 (``rtsafe``); see the module docstring.

    Examples
    --------
    Incropera et al., Example 5.1 (from memory): tau = C / G = 1 s, from 25 degC in gas at
    200 degC reaches 199 degC at tau ln(175 / 1) = 5.164786 s; by hand, 400 K is reached at
    ln(175 / 73.15) = 0.872274 s, 480 K never and 290 K at once:

    >>> none = np.zeros((2, 1))
    >>> t = first_crossing_times([1.0, 1.0], [1.0, 1.0], [473.15, 473.15], [298.15, 298.15],
    ...                          none, none, [[472.15, 480.0], [290.0, 400.0]], [60.0, 60.0])
    >>> np.round(t, 6).tolist()
    [[5.164786, nan], [0.0, 0.872274]]
    """
    if limits is None:
        raise ValueError("limits are required")
    times, _ = _run(C, G, Q0, T0, P, b, horizon, limits, False, chunk_size, workers)
    return _shape_times(times, limits)


def history_summary(C, G, Q0, T0, P, b, horizon, *, chunk_size=DEFAULT_CHUNK, workers=1) -> HistorySummary:
    r"""Turning points, peak temperature and time, end temperature and rate for each vessel.

    Parameters
    ----------
    C, G, Q0, T0, P, b, horizon, chunk_size, workers
        As for :func:`first_crossing_times` ([J/K], [W/K], [W], [K], [W], [1/s], [s]).

    Returns
    -------
    HistorySummary
        turning_times (N, k) [s], NaN padded; peak_temperature (N,) [K]; peak_time (N,) [s];
        end_temperature (N,) [K]; end_rate (N,) [K/s].

    Notes
    -----
    The maximum of T on [0, H] lies at 0, at H or at an interior turning point,
    so it is the largest of T at those candidates (ties go to the earliest).  For one
    decaying source the turning point has the closed form

    .. math:: t^* = \frac{\ln\left(1 + (\lambda - b) A / c\right)}{\lambda - b},
              \qquad A = \dot T(0), \quad c = P b / C.

    References
    ----------
    Polya, G. and Szego, G., *Problems and Theorems in Analysis II*, Springer (1976), Part Five, ch. 1
    (an exponential sum with n terms has at most n - 1 real zeros; from memory); Press, W. H. et al.,
    *Numerical Recipes*, 3rd ed., Cambridge University Press (2007), section 9.4 (``rtsafe``).

    Examples
    --------
    By hand: C = 1 J/K, G = 1 W/K (lambda = 1/s), T0 = Q0 / G, one source P = 1 W with
    b = 0.5/s: A = 1 K/s, c = 0.5 K/s^2, t* = ln(1 + 0.5 x 1 / 0.5) / 0.5 = 2 ln 2 =
    1.386294 s, and T - T0 = 2 (e^{-t/2} - e^{-t}) peaks at 2 (1/2 - 1/4) = 0.5 K:

    >>> s = history_summary([1.0], [1.0], [300.0], [300.0], [[1.0]], [[0.5]], [100.0])
    >>> round(float(s.turning_times[0, 0]), 6), round(float(s.peak_temperature[0]), 9)
    (1.386294, 300.5)
    """
    _, summary = _run(C, G, Q0, T0, P, b, horizon, None, True, chunk_size, workers)
    return summary


def screen_register(C, G, Q0, T0, P, b, limits, horizon, *, chunk_size=DEFAULT_CHUNK, workers=1) -> RegisterScreen:
    """First crossing times and history summary in one pass (turning points found once).

    Parameters
    ----------
    C, G, Q0, T0, P, b, limits, horizon, chunk_size, workers
        As for :func:`first_crossing_times` ([J/K], [W/K], [W], [K], [W], [1/s], [K], [s]).

    Returns
    -------
    RegisterScreen
        ``times`` as :func:`first_crossing_times` returns them, ``summary`` as
        :func:`history_summary`.

    References
    ----------
    Polya, G. and Szego, G., *Problems and Theorems in Analysis II*, Springer (1976), Part Five, ch. 1
    (an exponential sum with n terms has at most n - 1 real zeros; from memory); Press, W. H. et al.,
    *Numerical Recipes*, 3rd ed., Cambridge University Press (2007), section 9.4 (``rtsafe``).

    Examples
    --------
    By hand: for the history T - T0 = 2 (e^{-t/2} - e^{-t}) of :func:`history_summary`,
    T - T0 = 0.25 K first at e^{-t/2} = (1 + sqrt(1/2)) / 2, t = 0.316694 s:

    >>> r = screen_register([1.0], [1.0], [300.0], [300.0], [[1.0]], [[0.5]], [[300.25]], [100.0])
    >>> round(float(r.times[0, 0]), 6), round(float(r.summary.peak_time[0]), 6)
    (0.316694, 1.386294)
    """
    if limits is None:
        raise ValueError("limits are required")
    times, summary = _run(C, G, Q0, T0, P, b, horizon, limits, True, chunk_size, workers)
    return RegisterScreen(_shape_times(times, limits), summary)


def turning_times(C, G, Q0, T0, P, b, horizon, **kwargs):
    """Interior turning points of each history in (0, horizon).

    Parameters
    ----------
    C, G, Q0, T0, P, b, horizon, **kwargs
        As for :func:`history_summary`.

    Returns
    -------
    numpy.ndarray, shape (N, k), [s]
        Ascending, NaN padded.

    References
    ----------
    Polya, G. and Szego, G., *Problems and Theorems in Analysis II*, Springer (1976), Part Five, ch. 1
    (an exponential sum with n terms has at most n - 1 real zeros; from memory); Press, W. H. et al.,
    *Numerical Recipes*, 3rd ed., Cambridge University Press (2007), section 9.4 (``rtsafe``).

    Examples
    --------
    By hand (see :func:`history_summary`): 2 ln 2 = 1.386294 s:

    >>> np.round(turning_times([1.0], [1.0], [300.0], [300.0], [[1.0]], [[0.5]], [100.0]), 6).tolist()
    [[1.386294]]
    """
    return history_summary(C, G, Q0, T0, P, b, horizon, **kwargs).turning_times
