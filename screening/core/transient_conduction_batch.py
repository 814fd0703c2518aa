r"""Hot-spot histories of many unstirred bodies at once: transient conduction with self-heating on arrays.

The same equations as :mod:`screening.core.transient_conduction` (read its module notes), for M bodies
together, each with its own geometry index j (slab 0, cylinder 1, sphere 2), half-thickness or radius R,
properties, surface terms, sources, start, horizon, limits and stop temperature:

.. math:: \rho c_p \frac{\partial T}{\partial t} = \frac{k}{r^j}\frac{\partial}{\partial r}
          \left(r^j \frac{\partial T}{\partial r}\right) + \rho \sum_s q_s(T, X_s) + \rho\, p(t),
          \qquad \frac{\partial X_s}{\partial t} = \frac{q_s(T, X_s)}{\Delta h_s}

with symmetry at r = 0 and :math:`-k\,\partial T/\partial r = (h + h_m)(T_s - T_\infty(t)) - q''` at r = R,
:math:`T_\infty = (h T_{eff}(t) + h_m T_m) / (h + h_m)` (:math:`T_{eff}` the ambient, or the sol-air
daily cycle of :func:`screening.core.daily_cycle.effective_ambient`),
:math:`q_s = q_{ref} \exp[-E/R (1/T - 1/T_{ref})] (1 - X_s)^n` through
:func:`screening.core.arrhenius.log_arrhenius_rate` with the same rate cap (1e9 K/s) and log-rate floor,
a source without a heat of reaction zero order and unbounded, and :math:`p(t)` the uniform constant and
decaying specific power.

Method
------
* **Space.**  The finite-volume mesh of :class:`screening.core.transient_conduction._System`: N equal cells
  across R, cell-centred, conductances :math:`k A_f / \Delta r` between cells, the outer cell joined to
  :math:`T_\infty` through half a cell in series with the film, a conversion per cell and tracked source.
* **Time.**  RODAS (order 4, L-stable, stiffly accurate, embedded order-3 error estimate and order-3
  continuous extension; Hairer and Wanner 1996, section IV.7), the coefficients and step-size controller of
  :mod:`screening.core.arrhenius_history_batch`, with an analytic Jacobian and the time derivative of the
  right-hand side (decaying sources, daily cycle) in the stages.  **Each body has its own adaptive step**;
  every operation is elementwise over the body axis (no reduction across bodies, fixed iteration counts in
  the root searches), so a body's result does not depend on the other bodies of its batch (tested: equal
  to the last bit).
* **Linear systems.**  A stage solves :math:`(I/(\gamma h) - J) U = r`.  J couples temperatures only with
  their two neighbours and each conversion only with the temperature of its own cell, so the conversions
  are eliminated cell by cell (a Schur complement) and the remaining tridiagonal system in the temperatures
  is solved by cyclic reduction (Hockney 1965; Golub and Van Loan 2013, section 4.3), written over the cell
  and body axes at once: log2 N levels of array operations, so one body costs about what a Thomas sweep
  would cost for N bodies, and many bodies add little.  No pivoting: the conduction block is diagonally
  dominant, and a step whose solve is not finite is rejected.
* **Error and step.**  Per body, the maximum over cells of the error estimate against
  :math:`atol + rtol\,|T|` (atol 1e-7 K, as the scipy solver), a conversion weighted by the temperature
  it stands for (:math:`\Delta h / c_p`); the predictive controller of Gustafsson; steps of at most a tenth
  of the horizon (30 min with a daily cycle); a step never passes the horizon.
* **Events.**  After each accepted step the continuous extension of every cell is evaluated on a grid of
  the step; the first grid point at which the hottest cell is at or above a pending limit (or the stop
  temperature), or the surface at or above a pending surface limit, brackets the crossing, which
  60 bisections locate on the extension (the maximum over cells of piecewise cubics).
* **History.**  As the scipy solver's: ``points`` even points over the horizon plus each limit crossing
  and the stop point, from the continuous extension; peak from that history.

Accuracy is measured against the scipy solver (:func:`screening.core.transient_conduction.hot_spot_history`,
BDF, rtol 1e-8) and against the series solutions of Carslaw and Jaeger in ``tests/core``.

References
----------
Hairer, E. and Wanner, G., *Solving Ordinary Differential Equations II: Stiff and Differential-Algebraic
Problems*, 2nd ed., Springer (1996), sections IV.7 (RODAS) and IV.8 (step-size control).
Hockney, R. W., A fast direct solution of Poisson's equation using Fourier analysis, J. ACM 12 (1965) 95-113
(cyclic reduction).
Golub, G. H. and Van Loan, C. F., *Matrix Computations*, 4th ed., Johns Hopkins (2013), section 4.3 (banded
systems).
Incropera, F. P., DeWitt, D. P., Bergman, T. L., Lavine, A. S., *Fundamentals of Heat and Mass Transfer*,
6th ed., Wiley (2007), ch. 5; Carslaw, H. S. and Jaeger, J. C., *Conduction of Heat in Solids*, 2nd ed.,
Oxford (1959).
"""
from __future__ import annotations

import math
from typing import Sequence

import numpy as np

from screening.core.arrhenius import log_arrhenius_rate
from screening.core.arrhenius_history_batch import (
    _A_ROWS,
    _C_ROWS,
    _D1,
    _D2,
    _FAC_MAX_GROW,
    _FAC_MAX_SHRINK,
    _GAMMA,
    _SAFETY,
    _combine,
    _cubic,
)
from screening.core.daily_cycle import CycleForcing, DailyCycle, effective_ambient
from screening.core.model import GAS_CONSTANT
from screening.core.transient_conduction import (
    CEILING,
    DEFAULT_CELLS,
    GEOMETRY_INDEX,
    LN_RATE_FLOOR,
    RATE_CAP,
    ConductionBody,
    ConductionHistory,
)

__all__ = ["hot_spot_histories", "hot_spot_histories_with_mesh_check", "DEFAULT_RTOL"]

#: Relative tolerance of the local error per step (temperatures; atol T_ATOL).
DEFAULT_RTOL = 1e-8
T_ATOL = 1e-7  # K
#: Attempted steps allowed per body.
MAX_STEPS = 50_000
MAX_STEP_FRACTION = 0.1  # of the horizon
CYCLE_MAX_STEP = 1800.0  # s, with a daily cycle (sunrise and sunset are kinks)
#: Bodies integrated together (memory: about 60 N (1 + sources) bytes per body and stage).
DEFAULT_CHUNK = 1024
_BISECTIONS = 60
_GRID = np.linspace(0.0, 1.0, 9)

# U_t of each stage for the state t (dt/dt = 1) over h: (1/(gamma h)) U_t,i = 1 + sum_j C_ij U_t,j / h
_CT = []
for _i in range(6):
    _CT.append(_GAMMA * (1.0 + sum(c * _CT[j] for j, c in enumerate(_C_ROWS[_i]))))
# time of each stage's state Y_i over h (Y_i = y0 + sum_j A_ij U_j for i < 5, Y_5 = Y_4 + U_4)
_AT = [0.0] + [sum(a * _CT[j] for j, a in enumerate(_A_ROWS[i])) for i in range(1, 5)]
_AT.append(_AT[4] + _CT[4])


# --------------------------------------------------------------------------- inputs


class _Coef:
    """Per-body coefficients; the body axis is last. ``take`` selects bodies."""

    def take(self, rows):
        out = _Coef.__new__(_Coef)
        for k, v in self.__dict__.items():
            if isinstance(v, np.ndarray):
                setattr(out, k, v[..., rows])
            else:
                setattr(out, k, v)
        return out


def _coefficients(bodies, cells: int, limits, surface_limits, horizon, stop) -> _Coef:
    P = _Coef()
    M = len(bodies)
    n = cells
    j = np.array([GEOMETRY_INDEX[b.geometry] for b in bodies], dtype=float)
    R = np.array([b.half_thickness for b in bodies], dtype=float)
    rho = np.array([b.density for b in bodies], dtype=float)
    cp = np.array([b.specific_heat for b in bodies], dtype=float)
    k = np.array([b.conductivity for b in bodies], dtype=float)
    h = np.array([b.surface_coefficient for b in bodies], dtype=float)
    hm = np.array([b.medium_coefficient for b in bodies], dtype=float)
    hs = h + hm
    dr = R / n
    faces = np.arange(n + 1, dtype=float)[:, None] * dr
    # r^j and r^(j+1) by products: numpy's power takes shape-dependent shortcuts (a body's numbers would
    # depend on its batch)
    sq = faces * faces
    area = np.where(j == 0, 1.0, np.where(j == 1, faces, sq))
    upper = np.where(j == 0, faces, np.where(j == 1, sq, sq * faces))
    volume = (upper[1:] - upper[:-1]) / (j + 1)
    rc = rho * cp * volume  # J/K per cell and unit angle
    g_inner = k * area[1:-1] / dr
    resistance = dr / (2.0 * k) + np.where(hs > 0, 1.0 / np.where(hs > 0, hs, 1.0), np.inf)
    g_out = area[-1] / resistance
    P.ra = g_inner / rc[:-1]  # 1/s: cell c from cell c + 1
    P.lb = g_inner / rc[1:]  # 1/s: cell c + 1 from cell c
    P.out = g_out / rc[-1]  # 1/s: outer cell from the surroundings
    P.flux = np.array([b.surface_flux for b in bodies], dtype=float) * area[-1] / rc[-1]  # K/s
    P.icp = 1.0 / cp
    P.n = n
    # surroundings: T_inf = wa T_eff(t) + wm T_m
    Tm = np.array([b.medium_temperature for b in bodies], dtype=float)
    Ta = np.array([b.ambient_temperature for b in bodies], dtype=float)
    P.wa = np.where(hm > 0, h / np.where(hs > 0, hs, 1.0), 1.0)
    P.mterm = np.where(hm > 0, hm * Tm / np.where(hs > 0, hs, 1.0), 0.0)
    P.Ta = Ta
    cyc = [b.daily_cycle for b in bodies]
    P.cycle = np.array([c is not None for c in cyc])
    none = DailyCycle()
    cyc = [c if c is not None else none for c in cyc]
    P.c_range = np.where(P.cycle, [c.daily_range for c in cyc], 0.0)
    P.c_warm = np.array([c.warmest_time for c in cyc], dtype=float)
    P.c_start = np.array([c.start_time for c in cyc], dtype=float)
    P.c_solar = np.where(P.cycle, [c.solar_rise for c in cyc], 0.0)
    P.c_day = np.array([c.day_length for c in cyc], dtype=float)
    P.any_cycle = bool(P.cycle.any())
    # surface temperature from the outer cell: (T_N film + (T_inf + q'' film) half) / (half + film)
    half = dr / (2.0 * k)
    film = 1.0 / np.where(hs > 0, hs, 1.0)
    P.s_film = np.where(hs > 0, film / (half + film), 1.0)
    P.s_half = np.where(hs > 0, half / (half + film), 0.0)
    P.s_flux = np.array([b.surface_flux for b in bodies], dtype=float) * film
    # uniform power, W/kg: constant and decaying
    P.p0 = np.array([b.uniform_power for b in bodies], dtype=float)
    kd = max((len(b.decaying_power) for b in bodies), default=0)
    P.pd = np.zeros((kd, M))
    P.ad = np.ones((kd, M))
    for i, b in enumerate(bodies):
        for d, (p, a) in enumerate(b.decaying_power):
            P.pd[d, i], P.ad[d, i] = p, a
    # sources (J slots, padded with switched-off ones)
    J = max((len(b.sources) for b in bodies), default=0)
    P.J = J
    P.act = np.zeros((J, M))
    P.lnq = np.zeros((J, M))
    P.er = np.zeros((J, M))
    P.itr = np.full((J, M), 1.0 / 300.0)
    P.pw = np.zeros((J, M))
    P.zt = np.zeros((J, M), dtype=bool)  # tracked zero order: stops at X = 1
    P.idh = np.zeros((J, M))
    P.xw = np.zeros((J, M))  # K per unit conversion (error weight)
    X0 = np.zeros((J, M))
    for i, b in enumerate(bodies):
        for s, src in enumerate(b.sources):
            if src.specific_power > 0:
                P.act[s, i] = 1.0
                P.lnq[s, i] = math.log(src.specific_power)
            P.er[s, i] = src.activation_energy / GAS_CONSTANT
            P.itr[s, i] = 1.0 / src.reference_temperature
            if src.specific_heat_of_reaction is not None:
                P.pw[s, i] = float(src.order)
                P.zt[s, i] = float(src.order) == 0.0
                P.idh[s, i] = 1.0 / src.specific_heat_of_reaction
                P.xw[s, i] = src.specific_heat_of_reaction / b.specific_heat
                X0[s, i] = min(max(1.0 - src.accumulated_fraction, 0.0), 1.0)
    P.lncap = np.log(RATE_CAP * cp)
    P.any_pw = bool((P.pw != 0).any())
    P.limits = limits  # (L, M), NaN padded
    P.slimits = surface_limits  # (Ls, M)
    P.H = horizon
    P.stop = stop
    P.hmax = np.where(P.cycle, np.minimum(MAX_STEP_FRACTION * horizon, CYCLE_MAX_STEP), MAX_STEP_FRACTION * horizon)
    P.T0 = np.array([b.initial_temperature for b in bodies], dtype=float)
    P.X0 = X0
    return P


# --------------------------------------------------------------------------- right-hand side


def _surroundings(P, t, rate=False):
    """T_inf(t) per body (and dT_inf/dt with ``rate``)."""
    if P.any_cycle:
        cyc = DailyCycle(P.c_range, P.c_warm, P.c_start, P.c_solar, P.c_day)
        t_eff = effective_ambient(P.Ta, cyc, t)
    else:
        t_eff = P.Ta
    amb = P.wa * t_eff + P.mterm
    if not rate:
        return amb
    if P.any_cycle:
        d = CycleForcing(0.5 * P.c_range, P.c_warm, P.c_solar, P.c_day, P.c_start).power_rate(t) * P.wa
    else:
        d = np.zeros_like(P.Ta)
    return amb, d


def _uniform(P, t, rate=False):
    """Uniform specific power p(t), W/kg (and dp/dt with ``rate``)."""
    p = P.p0
    dp = np.zeros_like(p)
    if P.pd.shape[0]:
        x = t / P.ad
        e = np.where(x < 700.0, P.pd * np.exp(-np.minimum(x, 700.0)), 0.0)
        p = p + e.sum(axis=0)
        dp = -(e / P.ad).sum(axis=0)
    return (p, dp) if rate else p


def _power(x, p):
    """x ** p for x >= 0, the same for an element whatever the shapes of x and p (numpy's power takes
    shape-dependent shortcuts: sqrt or a square for a single exponent): exact for p = 0, 1, 2, else
    exp(p ln x)."""
    pos = x > 0
    with np.errstate(over="ignore"):
        g = np.exp(p * np.log(np.where(pos, x, 1.0)))
    g = np.where(pos, g, np.where(p > 0, 0.0, np.where(p == 0, 1.0, np.inf)))
    return np.where(p == 1.0, x, np.where(p == 2.0, x * x, np.where(p == 0.0, 1.0, g)))


def _sources(P, T, X, jac):
    """Self-heating per source q_s (J, N, M) in W/kg, and with ``jac`` dq/dT and dq/dX."""
    invT = 1.0 / np.maximum(T, 1.0)
    lk = log_arrhenius_rate(invT[None], P.lnq[:, None], P.er[:, None], P.itr[:, None], P.lncap[None, None],
                            LN_RATE_FLOOR)
    kq = np.exp(lk) * P.act[:, None]
    rem = np.minimum(np.maximum(1.0 - X, 0.0), 1.0)
    pw = P.pw[:, None]
    zt = P.zt[:, None]
    if P.any_pw:
        factor = np.where(zt, (rem > 0).astype(float), _power(rem, pw))
    else:
        factor = np.where(zt, (rem > 0).astype(float), 1.0)
    q = kq * factor
    if not jac:
        return q
    inside = (lk < P.lncap[None, None]) & (lk > LN_RATE_FLOOR) & (T > 1.0)[None]
    dqdT = q * (P.er[:, None] * invT * invT) * inside
    if P.any_pw:
        pos = rem > 0
        safe = np.where(pos, rem, 1.0)
        dqdX = np.where(pos & (pw != 0), -pw * kq * _power(safe, pw - 1.0), 0.0)
    else:
        dqdX = np.zeros_like(q)
    return q, dqdT, dqdX


def _rhs(P, T, X, t, jac=False):
    """dT/dt (N, M) and dX/dt (J, N, M); with ``jac`` also the Jacobian's parts:
    diagonal of dfT/dT (N, M), dfT/dX, dfX/dT, dfX/dX (J, N, M) and dfT/dt (N, M)."""
    F = np.zeros_like(T)
    d = T[1:] - T[:-1]
    F[:-1] += P.ra * d
    F[1:] -= P.lb * d
    if jac:
        amb, damb = _surroundings(P, t, rate=True)
        p, dp = _uniform(P, t, rate=True)
    else:
        amb = _surroundings(P, t)
        p = _uniform(P, t)
    F[-1] += P.out * (amb - T[-1]) + P.flux
    if P.J:
        res = _sources(P, T, X, jac)
        q = res[0] if jac else res
        F += (q.sum(axis=0) + p) * P.icp
        FX = q * P.idh[:, None]
    else:
        F += p * P.icp
        FX = np.zeros((0,) + T.shape)
    if not jac:
        return F, FX
    diag = np.zeros_like(T)
    diag[:-1] -= P.ra
    diag[1:] -= P.lb
    diag[-1] -= P.out
    Jt = np.broadcast_to(dp * P.icp, T.shape).copy()
    Jt[-1] += P.out * damb
    if P.J:
        _, dqdT, dqdX = res
        diag += dqdT.sum(axis=0) * P.icp
        JTX = dqdX * P.icp
        JXT = dqdT * P.idh[:, None]
        JXX = dqdX * P.idh[:, None]
    else:
        JTX = JXT = JXX = FX
    return F, FX, (diag, JTX, JXT, JXX, Jt)


# --------------------------------------------------------------------------- linear systems


def _cr_factor(sub, diag, sup):
    """Cyclic reduction of tridiagonal systems (n, M): sub[0] and sup[-1] are 0. Returns the levels.

    Level by level the odd-numbered unknowns are eliminated from the even-numbered equations (Hockney 1965):
    x_2k is coupled to x_2k-2 and x_2k+2 only, with the coefficients below; the last level is one equation.
    """
    levels = []
    a, b, c = sub, diag, sup
    while b.shape[0] > 1:
        n = b.shape[0]
        E, O = (n + 1) // 2, n // 2
        ae, be, ce = a[0::2], b[0::2], c[0::2]
        ao, bo, co = a[1::2], b[1::2], c[1::2]
        ibo = 1.0 / bo
        alpha = -ae[1:] * ibo[:E - 1]  # for the even equations 1..E-1 (the first has no left neighbour)
        beta = -ce[:O] * ibo  # for the even equations 0..O-1
        nb = be.copy()
        nb[1:] += alpha * co[:E - 1]
        nb[:O] += beta * ao
        na = np.empty_like(be)
        na[0] = 0.0
        np.multiply(alpha, ao[:E - 1], out=na[1:])
        nc = np.zeros_like(be)
        np.multiply(beta, co, out=nc[:O])
        levels.append((E, O, alpha, beta, ao, co, ibo))
        a, b, c = na, nb, nc
    levels.append(1.0 / b)
    return levels


def _cr_solve(levels, d):
    """Solve with the levels of :func:`_cr_factor` for right-hand sides d (n, M)."""
    stack = []
    for E, O, alpha, beta, ao, co, ibo in levels[:-1]:
        do = d[1::2]
        nd = d[0::2].copy()
        nd[1:] += alpha * do[:E - 1]
        nd[:O] += beta * do
        stack.append(do)
        d = nd
    x = d * levels[-1]
    for (E, O, alpha, beta, ao, co, ibo), do in zip(reversed(levels[:-1]), reversed(stack)):
        full = np.empty((E + O,) + x.shape[1:])
        full[0::2] = x
        r = do - ao * x[:O]
        if E > O:
            r -= co * x[1:]
        else:
            r[:-1] -= co[:-1] * x[1:]
        full[1::2] = r * ibo
        x = full
    return x


def _factor(P, dd, parts):
    """Factors of I dd - J (dd = 1/(gamma h) per body): conversions eliminated per cell, then cyclic reduction."""
    diag, JTX, JXT, JXX, _ = parts
    w = 1.0 / (dd - JXX)
    sd = dd - diag
    if P.J:
        sd = sd - (JTX * w * JXT).sum(axis=0)
    n = P.n
    sub = np.zeros_like(sd)
    sup = np.zeros_like(sd)
    sub[1:] = -P.lb
    sup[:-1] = -P.ra
    return _cr_factor(sub, sd, sup), w, JTX, JXT


def _solve(fac, rT, rX):
    levels, w, JTX, JXT = fac
    r = rT
    if rX.shape[0]:
        r = rT + (JTX * w * rX).sum(axis=0)
    UT = _cr_solve(levels, r)
    UX = w * (rX + JXT * UT) if rX.shape[0] else rX
    return UT, UX


def _step(P, T, X, t, h, F0, FX0, parts):
    """One RODAS step of size h (M,); returns (T1, X1, UT (6, N, M), UX (6, J, N, M))."""
    dd = 1.0 / (_GAMMA * h)
    fac = _factor(P, dd, parts)
    Jt = parts[4]
    n, M = T.shape
    UT = np.empty((6, n, M))
    UX = np.empty((6,) + X.shape)
    ih = 1.0 / h
    UT[0], UX[0] = _solve(fac, F0 + Jt * (_CT[0] * h), FX0)
    YT = YX = None
    for i in range(1, 6):
        if i < 5:
            YT = T + _combine(_A_ROWS[i], UT)
            YX = X + _combine(_A_ROWS[i], UX)
        else:
            YT = YT + UT[4]
            YX = YX + UX[4]
        Fi, FXi = _rhs(P, YT, YX, t + _AT[i] * h)
        rT = Fi + _combine(_C_ROWS[i], UT) * ih + Jt * (_CT[i] * h)
        rX = FXi + _combine(_C_ROWS[i], UX) * ih
        UT[i], UX[i] = _solve(fac, rT, rX)
    return YT + UT[5], YX + UX[5], UT, UX


# --------------------------------------------------------------------------- events and history


def _bisect(fun, lo, hi, rows):
    """theta in [lo, hi] where fun(theta, rows) >= 0 first holds on a shrinking bracket (fixed iterations)."""
    for _ in range(_BISECTIONS):
        mid = 0.5 * (lo + hi)
        up = fun(mid, rows) >= 0.0
        hi = np.where(up, mid, hi)
        lo = np.where(up, lo, mid)
    return hi


class _Out:
    def __init__(self, M, n, points, L, Ls):
        self.grid = np.full((3, M, points), np.nan)  # hot, centre, surface at the even points
        self.lim_t = np.full((L, M), np.nan)
        self.lim_v = np.full((3, L, M), np.nan)
        self.slim_t = np.full((Ls, M), np.nan)
        self.stop_t = np.full(M, np.nan)
        self.stop_v = np.full((3, M), np.nan)
        self.steps = np.zeros(M, dtype=np.int64)
        self.failed = np.zeros(M, dtype=bool)


def _dense(T0, T1, D1, D2, th):
    return _cubic(T0, T1, D1, D2, th)


def _integrate(P: _Coef, gidx, points: int, rtol: float, out: _Out):
    """Integrate bodies ``gidx`` (global indices into ``out``) of coefficients P to their horizon or stop."""
    n = P.n
    M = gidx.size
    T = np.repeat(P.T0[None], n, axis=0)
    X = np.repeat(P.X0[:, None, :], n, axis=1)
    t = np.zeros(M)
    pend = ~np.isnan(P.limits) & (P.limits > P.T0)
    s0 = _surface(P, T[-1], t)
    spend = ~np.isnan(P.slimits) & (P.slimits > s0)
    F0, FX0 = _rhs(P, T, X, t)
    scale = (np.abs(F0) / (1.0 + 1e-2 * np.abs(T))).max(axis=0)
    if P.J:
        scale = np.maximum(scale, (np.abs(FX0) / 1e-2).max(axis=(0, 1)))
    h = np.minimum(np.minimum(1e-5 * P.H, 1.0 / np.maximum(scale, 1e-300)), P.hmax)
    h_old = h.copy()
    err_old = np.ones(M)
    first = np.ones(M, dtype=bool)
    rejected = np.zeros(M, dtype=bool)
    nstep = np.zeros(M, dtype=np.int64)
    dt_grid = P.H / (points - 1)
    while M:
        F0, FX0, parts = _rhs(P, T, X, t, jac=True)
        h = np.minimum(h, P.hmax)
        last = h >= P.H - t
        h = np.where(last, P.H - t, h)
        with np.errstate(all="ignore"):
            T1, X1, UT, UX = _step(P, T, X, t, h, F0, FX0, parts)
            sc = T_ATOL + rtol * np.maximum(np.abs(T), np.abs(T1))
            err = (np.abs(UT[5]) / sc).max(axis=0)
            if P.J:
                err = np.maximum(err, (np.abs(UX[5]) * P.xw[:, None] / sc[None]).max(axis=(0, 1)))
        fin = np.isfinite(T1).all(axis=0) & np.isfinite(X1).all(axis=(0, 1)) & np.isfinite(err)
        err = np.where(fin, np.minimum(err, 1e10), 1e10)
        nstep += 1
        fac = np.clip(np.sqrt(np.sqrt(err)) / _SAFETY, _FAC_MAX_GROW, _FAC_MAX_SHRINK)  # err^(1/4)
        ok = err <= 1.0
        pred = ok & ~first
        if pred.any():
            fp = (h_old / h) * np.sqrt(np.sqrt(err * err / err_old)) / _SAFETY
            fac = np.where(pred, np.maximum(fac, np.clip(fp, _FAC_MAX_GROW, _FAC_MAX_SHRINK)), fac)
        h_new = h / fac
        h_new = np.where(ok & rejected, np.minimum(h_new, h), h_new)
        rejected = ~ok
        h_old = np.where(ok, h, h_old)
        err_old = np.where(ok, np.maximum(err, 1e-2), err_old)
        first &= ~ok
        done = np.zeros(M, dtype=bool)
        a = np.flatnonzero(ok)
        if a.size:
            t1 = np.where(last, P.H, t + h)
            D1 = _combine(_D1, UT)
            D2 = _combine(_D2, UT)
            done[a] = _events(P, a, gidx, T, T1, D1, D2, t, h, t1, pend, spend, dt_grid, points, out)
            done[a] |= last[a]
            T[:, a] = T1[:, a]
            X[:, :, a] = X1[:, :, a]
            t[a] = t1[a]
        h = h_new
        fail = (nstep >= MAX_STEPS) & ~done
        if fail.any():
            out.failed[gidx[fail]] = True
            done |= fail
        if done.any():
            out.steps[gidx[done]] = nstep[done]
            keep = np.flatnonzero(~done)
            P = P.take(keep)
            gidx, T, X, t, h, h_old, err_old = gidx[keep], T[:, keep], X[:, :, keep], t[keep], h[keep], \
                h_old[keep], err_old[keep]
            first, rejected, nstep, pend, spend, dt_grid = first[keep], rejected[keep], nstep[keep], \
                pend[:, keep], spend[:, keep], dt_grid[keep]
            M = keep.size


def _surface(P, T_outer, t):
    """Surface temperature from the outer cell's, K (P's bodies, or a subset ``P``)."""
    return T_outer * P.s_film + (_surroundings(P, t) + P.s_flux) * P.s_half


def _events(P, a, gidx, T, T1, D1, D2, t, h, t1, pend, spend, dt_grid, points, out):
    """Events of the accepted steps of bodies ``a``: limits, stop, surface limits, history points.
    Returns 'stopped' for those bodies; updates ``pend``, ``spend`` and ``out``."""
    Ta_, Tb, c1, c2 = T[:, a], T1[:, a], D1[:, a], D2[:, a]
    hot = _dense(Ta_[None], Tb[None], c1[None], c2[None], _GRID[:, None, None]).max(axis=1)  # (9, m)
    m = a.size
    levels = np.concatenate([P.limits[:, a], P.stop[None, a]])  # (L + 1, m)
    pending = np.concatenate([pend[:, a], np.ones((1, m), dtype=bool)])
    hit = (hot[1:, None, :] >= levels[None]) & pending[None]  # (8, L + 1, m)
    anyhit = hit.any(axis=0)
    theta_stop = np.full(m, 2.0)
    stopped = np.zeros(m, dtype=bool)
    lt_rows = lt_theta = None
    if anyhit.any():
        lv, r = np.nonzero(anyhit)
        kfirst = np.argmax(hit[:, lv, r], axis=0) + 1
        lo, hi = _GRID[kfirst - 1], _GRID[kfirst]
        lev = levels[lv, r]

        def g(th, rows):
            return _dense(Ta_[:, rows], Tb[:, rows], c1[:, rows], c2[:, rows], th).max(axis=0) - lev

        th = _bisect(g, lo, hi, r)
        is_stop = lv == levels.shape[0] - 1
        theta_stop[r[is_stop]] = th[is_stop]
        stopped[r[is_stop]] = True
        lim = ~is_stop & (th <= theta_stop[r])
        lt_rows, lt_lv, lt_theta = r[lim], lv[lim], th[lim]
        if lt_rows.size:
            ga = a[lt_rows]
            tc = t[ga] + lt_theta * h[ga]
            out.lim_t[lt_lv, gidx[ga]] = tc
            vals = _values(P, ga, Ta_[:, lt_rows], Tb[:, lt_rows], c1[:, lt_rows], c2[:, lt_rows], lt_theta, tc)
            out.lim_v[:, lt_lv, gidx[ga]] = vals
            pend[lt_lv, ga] = False
        if stopped.any():
            s = np.flatnonzero(stopped)
            ga = a[s]
            tc = t[ga] + theta_stop[s] * h[ga]
            out.stop_t[gidx[ga]] = tc
            out.stop_v[:, gidx[ga]] = _values(P, ga, Ta_[:, s], Tb[:, s], c1[:, s], c2[:, s], theta_stop[s], tc)
    t_end = np.where(stopped, t[a] + np.minimum(theta_stop, 1.0) * h[a], t1[a])
    # surface limits
    if spend.shape[0]:
        sp = spend[:, a]
        rows = np.flatnonzero(sp.any(axis=0))
        if rows.size:
            ga = a[rows]
            Ps = P.take(ga)
            tg = t[ga][None] + _GRID[:, None] * h[ga][None]
            sg = _surface(Ps, _dense(Ta_[-1, rows], Tb[-1, rows], c1[-1, rows], c2[-1, rows], _GRID[:, None]), tg)
            sl = P.slimits[:, ga]
            shit = (sg[1:, None, :] >= sl[None]) & sp[:, rows][None]
            sany = shit.any(axis=0)
            if sany.any():
                lv, r = np.nonzero(sany)
                kfirst = np.argmax(shit[:, lv, r], axis=0) + 1
                lev = sl[lv, r]
                Pr = Ps.take(r)
                gr = ga[r]

                def gs(th, _rows):
                    To = _dense(Ta_[-1, rows[r]], Tb[-1, rows[r]], c1[-1, rows[r]], c2[-1, rows[r]], th)
                    return _surface(Pr, To, t[gr] + th * h[gr]) - lev

                th = _bisect(gs, _GRID[kfirst - 1], _GRID[kfirst], r)
                tc = t[gr] + th * h[gr]
                valid = tc <= t_end[rows[r]]
                out.slim_t[lv[valid], gidx[gr[valid]]] = tc[valid]
                spend[lv[valid], gr[valid]] = False
    # history: the even points in (t, t_end]
    dg = dt_grid[a]
    t0 = t[a]
    k_lo = np.floor(t0 / dg)
    k_lo = np.where(k_lo * dg > t0, k_lo, k_lo + 1)
    k_lo = np.where((k_lo - 1) * dg > t0, k_lo - 1, k_lo)
    k_hi = np.minimum(np.floor(t_end / dg), points - 1)
    k_hi = np.where(k_hi * dg > t_end, k_hi - 1, k_hi)
    k_hi = np.where((k_hi + 1 <= points - 1) & ((k_hi + 1) * dg <= t_end), k_hi + 1, k_hi)
    # the last point is the horizon itself
    reach_end = t_end >= P.H[a]
    k_hi = np.where(reach_end, points - 1, np.minimum(k_hi, points - 2))
    count = np.maximum(k_hi - k_lo + 1, 0).astype(np.int64)
    if count.sum():
        r = np.repeat(np.arange(m), count)
        start = np.repeat(np.cumsum(count) - count, count)
        kk = (np.repeat(k_lo, count) + (np.arange(r.size) - start)).astype(np.int64)
        ga = a[r]
        tk = np.where(kk == points - 1, P.H[ga], kk * dg[r])
        th = (tk - t0[r]) / h[ga]
        out.grid[:, gidx[ga], kk] = _values(P, ga, Ta_[:, r], Tb[:, r], c1[:, r], c2[:, r], th, tk)
    return stopped


def _values(P, ga, Ta_, Tb, c1, c2, th, tc):
    """(hot spot, centre, surface) on the continuous extension at theta (bodies ``ga``)."""
    Tc = _dense(Ta_, Tb, c1, c2, th)
    Ps = P.take(ga)
    return np.stack([Tc.max(axis=0), Tc[0], _surface(Ps, Tc[-1], tc)])


# --------------------------------------------------------------------------- public entry


def _per_body(name, value, M, default=None):
    """A list of M lists of floats from a shared sequence or one sequence per body."""
    if value is None:
        value = () if default is None else default
    value = list(value)
    if value and all(np.ndim(v) == 0 for v in value):
        return [[float(v) for v in value]] * M
    if not value:
        return [[] for _ in range(M)]
    if len(value) != M:
        raise ValueError(f"{name}: one sequence per body ({M}) or one shared sequence of floats")
    return [[float(x) for x in v] for v in value]


def _pad(rows):
    L = max((len(r) for r in rows), default=0)
    out = np.full((L, len(rows)), np.nan)
    for i, r in enumerate(rows):
        out[:len(r), i] = r
    return out


def hot_spot_histories(bodies: Sequence[ConductionBody], limits, horizon, *, cells: int = DEFAULT_CELLS,
                       stop_temperature=None, points: int = 401, surface_limits=(), rtol: float = DEFAULT_RTOL,
                       chunk_size: int = DEFAULT_CHUNK) -> list[ConductionHistory]:
    r"""Hot-spot histories of many unstirred bodies, each with its own adaptive step, and their limit times.

    Parameters
    ----------
    bodies : sequence of ConductionBody
        Each with its own geometry, size, properties, surface terms, sources and start.
    limits : sequence of float, or sequence of sequences of float, [K]
        Limits shared by every body, or one sequence per body (of any length).
    horizon : float or sequence of float, [s]
    cells : int, optional
        Cells across the half-thickness or radius, the same for every body (default 64).
    stop_temperature : float, sequence of float or None, [K], optional
        Per body, or shared; None (or a None entry): 100 K above the body's highest limit, at most 2000 K
        (as :func:`screening.core.transient_conduction.hot_spot_history`).
    points : int, optional
        Even points of each returned history (plus every limit crossing and the stop point).
    surface_limits : sequence of float, or sequence of sequences of float, [K], optional
        Temperatures whose first upward crossing by the surface is located.
    rtol : float, optional
        Relative tolerance of the local error per step (default 1e-8, within [1e-12, 1e-4]).
    chunk_size : int, optional
        Bodies integrated together (results do not depend on it).

    Returns
    -------
    list of ConductionHistory
        One per body, with the meaning of :func:`screening.core.transient_conduction.hot_spot_history`.

    Raises
    ------
    ValueError
        A body out of range (as the scipy solver), a horizon not > 0, inconsistent per-body sequences.
    RuntimeError
        A body needed more than ``MAX_STEPS`` steps.

    Notes
    -----
    The method of lines of :mod:`screening.core.transient_conduction`, integrated by the Rosenbrock method
    RODAS with a step per body (see the module notes):

    .. math:: \rho c_p \frac{\partial T}{\partial t} = \frac{k}{r^j}\frac{\partial}{\partial r}
              \left(r^j \frac{\partial T}{\partial r}\right) + \rho \sum_s q_s(T, X_s) + \rho\, p(t)

    References
    ----------
    Hairer, E. and Wanner, G., *Solving Ordinary Differential Equations II*, 2nd ed., Springer (1996),
    section IV.7. Incropera, F. P. et al., *Fundamentals of Heat and Mass Transfer*, 6th ed., Wiley (2007),
    section 5.6.

    Examples
    --------
    Two spheres without a source at Bi = 1, from 400 K in air at 300 K (R = 0.1 m, alpha = 1e-6 m^2/s):
    Incropera et al., section 5.6, give the centre as a series in the roots of 1 - z cot z = Bi (first root
    pi/2); one term gives, by hand, theta = (4 / pi) exp(-(pi/2)^2 Fo), 0.4745 at Fo = 0.4 (the full series:
    0.47449), i.e. 347.45 K after 4000 s; and 0.2209 at Fo = 0.71 (full series 0.22090: 322.09 K after 7100 s):

    >>> b = ConductionBody("sphere", 0.1, 1000.0, 1000.0, 1.0, 10.0, 300.0, 400.0)
    >>> h = hot_spot_histories([b, b], [], [4000.0, 7100.0])
    >>> [round(float(x.centre[-1]), 2) for x in h]
    [347.45, 322.09]
    """
    bodies = list(bodies)
    M = len(bodies)
    if not M:
        return []
    if not (2 <= int(cells)):
        raise ValueError("cells must be at least 2")
    cells = int(cells)
    rtol = float(rtol)
    if not (1e-12 <= rtol <= 1e-4):
        raise ValueError("rtol must be within [1e-12, 1e-4]")
    if points < 2:
        raise ValueError("points must be at least 2")
    for i, b in enumerate(bodies):
        if b.geometry not in GEOMETRY_INDEX:
            raise ValueError(f"body {i}: geometry must be one of {sorted(GEOMETRY_INDEX)}")
        if not (b.half_thickness > 0 and b.density > 0 and b.specific_heat > 0 and b.conductivity > 0
                and b.surface_coefficient >= 0 and b.medium_coefficient >= 0):
            raise ValueError(f"body {i}: half_thickness, density, specific_heat, conductivity > 0, h >= 0, h_m >= 0")
    H = np.broadcast_to(np.asarray(horizon, dtype=float), (M,)).copy()
    if not (H > 0).all() or not np.isfinite(H).all():
        raise ValueError("horizon must be > 0 (s)")
    lims = _per_body("limits", limits, M)
    slims = _per_body("surface_limits", surface_limits, M)
    if stop_temperature is None or np.ndim(stop_temperature) == 0:
        stops = [stop_temperature] * M
    else:
        stops = list(stop_temperature)
        if len(stops) != M:
            raise ValueError("stop_temperature: one per body or one shared")
    T0 = np.array([b.initial_temperature for b in bodies], dtype=float)
    stop = np.empty(M)
    for i in range(M):
        s = stops[i] if stops[i] is not None else min(CEILING, max(lims[i] + [T0[i]]) + 100.0)
        stop[i] = max(float(s), T0[i] + 1e-6)
    L = _pad(lims)
    Ls = _pad(slims)
    out = _Out(M, cells, points, L.shape[0], Ls.shape[0])
    out.horizon = H
    chunk_size = max(int(chunk_size), 1)
    for c0 in range(0, M, chunk_size):
        rows = np.arange(c0, min(M, c0 + chunk_size))
        P = _coefficients([bodies[i] for i in rows], cells, L[:, rows], Ls[:, rows], H[rows], stop[rows])
        # the initial point
        s0 = _surface(P, P.T0, np.zeros(rows.size))
        out.grid[:, rows, 0] = np.stack([P.T0, P.T0, s0])
        with np.errstate(under="ignore"):
            _integrate(P, rows, points, rtol, out)
    if out.failed.any():
        i = int(np.argmax(out.failed))
        raise RuntimeError(f"the conduction integration failed: {int(out.failed.sum())} body(ies) needed more than "
                           f"{MAX_STEPS} steps (first index {i})")
    return [_history(out, i, bodies[i], lims[i], slims[i], cells, stop[i]) for i in range(M)]


def _first_times(levels, start, found) -> list:
    """First time each level is reached: 0 for a level at or below the start, None where ``found`` is NaN."""
    return [0.0 if L <= start else (None if np.isnan(found[l]) else float(found[l])) for l, L in enumerate(levels)]


def _history(out: _Out, i, body, limits, surface_limits, cells, stop) -> ConductionHistory:
    times = _first_times(limits, body.initial_temperature, out.lim_t[:, i])
    stimes = _first_times(surface_limits, out.grid[2, i, 0], out.slim_t[:, i])
    g = out.grid[:, i]
    have = ~np.isnan(g[0])
    H_pts = g.shape[1]
    stopped = not np.isnan(out.stop_t[i])
    vals = [g[:, have]]
    tt = [_grid_times(out, i, H_pts)[have]]
    for l in range(len(limits)):
        if times[l] is not None and times[l] > 0:
            tt.append(np.array([times[l]]))
            vals.append(out.lim_v[:, l, i][:, None])
    if stopped:
        tt.append(np.array([out.stop_t[i]]))
        vals.append(out.stop_v[:, i][:, None])
    t_all = np.concatenate(tt)
    v_all = np.concatenate(vals, axis=1)
    t_hist, first = np.unique(t_all, return_index=True)
    v = v_all[:, first]
    if stopped:
        keep = t_hist <= out.stop_t[i]
        t_hist, v = t_hist[keep], v[:, keep]
    hot = v[0]
    k = int(np.argmax(hot))
    return ConductionHistory(times, t_hist, hot, v[1], v[2], float(hot[k]), float(t_hist[k]), stopped, cells,
                             stimes)


def _grid_times(out, i, points):
    H = out.horizon[i]
    dg = H / (points - 1)
    tk = np.arange(points) * dg
    tk[-1] = H
    return tk


def hot_spot_histories_with_mesh_check(bodies: Sequence[ConductionBody], limits, horizon, *,
                                       cells: int = DEFAULT_CELLS, stop_temperature=None, surface_limits=(),
                                       rtol: float = DEFAULT_RTOL, chunk_size: int = DEFAULT_CHUNK) -> list:
    """Per body, the history on a mesh of 2 ``cells`` and the change of the limit times from the mesh of ``cells``.

    The meaning of :func:`screening.core.transient_conduction.hot_spot_with_mesh_check`, for many bodies
    (two batches: one per mesh). ``surface_limits`` are located on the finer mesh only.

    Returns
    -------
    list of (ConductionHistory, float or None)
        The finer mesh's history, and the largest relative change of a limit time (inf when a limit is reached
        on one mesh only, None when no limit is reached on either).

    Examples
    --------
    A sphere without a source heated from 300 K by air at 400 K (Bi = 1): the hot spot is the outer cell, whose
    centre moves outward as the mesh is refined, so its time to 350 K moves by 0.78 % between 64 and 128 cells
    (the scipy solver of :func:`screening.core.transient_conduction.hot_spot_with_mesh_check` gives the same),
    above the 0.1 % tolerance at which a warning is due:

    >>> b = ConductionBody("sphere", 0.1, 1000.0, 1000.0, 1.0, 10.0, 400.0, 300.0)
    >>> (hist, change), = hot_spot_histories_with_mesh_check([b], [350.0], 20000.0)
    >>> round(change, 4), hist.cells
    (0.0078, 128)
    """
    bodies = list(bodies)
    coarse = hot_spot_histories(bodies, limits, horizon, cells=cells, stop_temperature=stop_temperature, rtol=rtol,
                                chunk_size=chunk_size)
    fine = hot_spot_histories(bodies, limits, horizon, cells=2 * cells, stop_temperature=stop_temperature,
                              surface_limits=surface_limits, rtol=rtol, chunk_size=chunk_size)
    result = []
    for c, f in zip(coarse, fine):
        change = None
        for a, b in zip(c.limit_times, f.limit_times):
            if a is None and b is None:
                continue
            if (a is None) != (b is None):
                change = math.inf
                break
            rel = abs(b - a) / b if b > 0 else (0.0 if a == 0 else math.inf)
            change = rel if change is None else max(change, rel)
        result.append((f, change))
    return result
