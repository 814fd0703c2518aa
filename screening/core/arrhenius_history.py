r"""Temperature history of a lumped vessel with temperature-dependent heat sources.

The contents are taken as well mixed at one temperature T.  The balance is

.. math::

    C \frac{dT}{dt} = \sum P_c + \sum_i P_i e^{-t/a_i} + \sum Q_{fire}
        + \sum_k UA_k (T_{m,k} - T) + m_0 \sum_j q_j(T, X_j) - UA (T - T_a)

    \frac{dX_j}{dt} = \frac{q_j(T, X_j)}{\Delta h_j}

    q_j(T, X) = q_{ref,j} \exp\left[-\frac{E_j}{R}\left(\frac{1}{T}
        - \frac{1}{T_{ref,j}}\right)\right] (1 - X)^{n_j}

with C = m c + C_wall.  Each Arrhenius source j that has a heat of reaction
:math:`\Delta h_j` (J/kg) carries its own conversion X_j, which starts at
``1 - accumulated_fraction`` and stops releasing heat at X_j = 1 for every
order (zero order included).  A zero-order source without a heat of reaction
releases heat without bound (conservative).

Boiling with tempering credit (open venting, no gas-generating reaction): once
T reaches the boiling point T_b it is held there while the net heat input
P = generation - loss is positive, vapour leaves at P / L (kg/s), the contents
mass falls, and the reactions keep converting at T_b.  When P turns negative
the contents cool again with the reduced heat capacity.  Heat generation of
the Arrhenius sources is always taken on the initial contents mass m_0: exact
when the reactive material stays in the liquid, an overstatement when some of
it leaves with the vapour; either way conservative for the boil-off rate, the
time to dry out and any later reheating.

The system is integrated with the implicit Radau IIA method (order 5, analytic
Jacobian, relative tolerance 1e-9) in a stretched time s, dt/ds = 1/rho with
rho = sqrt(1 + (dT/dt / 1 K/s)^2 + sum (dX_j/dt / 0.01 s^-1)^2): s follows t
while the contents change slowly, and a runaway advances about 1 K per unit s,
so its last moments are resolved even when they are shorter than the
floating-point resolution of t.  Time itself is a state variable.  Limit
crossings, the boiling point, the end of each reaction, the horizon and the
ceiling are sign changes of event functions, located on the solver's
continuous output and refined by re-integrating the step that holds them at
1e-13, so times to limits are accurate to about 1e-9 relative (checked against
quadrature in the tests; the requirement is 1e-6).

References
----------
Townsend, D. I. and Tou, J. C., "Thermal hazard evaluation by an accelerating
rate calorimeter", Thermochimica Acta 37 (1980) 1-30 (adiabatic self-heating,
time to maximum rate).

Semenov, N. N. (1928), thermal explosion theory for a well-stirred mass.

Hairer, E. and Wanner, G., *Solving Ordinary Differential Equations II*,
2nd ed., Springer (1996), section IV.8 (Radau IIA, as implemented in
``scipy.integrate.Radau``).

Hairer, E., Lubich, C. and Wanner, G., *Geometric Numerical Integration*, 2nd
ed., Springer (2006), section VIII.2 (time transformations, as the stretched
time s here).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.integrate import Radau, solve_ivp
from scipy.optimize import brentq

from screening.core.arrhenius import autocatalytic_term, log_arrhenius_rate
from screening.core.model import GAS_CONSTANT, ScreeningModel
from screening.core.daily_cycle import cycle_forcing
from screening.core.terms import conductance_and_drive, constant_power, model_start_temperature

#: Default temperature at which a runaway is no longer followed, K.
DEFAULT_CEILING = 2000.0
#: The ceiling is at least this far above the highest limit and the start, K.
CEILING_MARGIN = 100.0
#: Largest self-heating rate of any one Arrhenius source, K/s.  Above it the
#: rate is held constant for numerical safety; from there the remaining time to
#: any temperature below the ceiling is under 2e-6 s.
RATE_CAP = 1.0e9
#: Rates below exp(LN_RATE_FLOOR) W/kg are held there (avoids underflow).
LN_RATE_FLOOR = -600.0
#: Distance from the reference temperature beyond which the kinetics are
#: called extrapolated, K (a screening choice of this tool).
EXTRAPOLATION_SPAN = 50.0
#: Stretched-time scales: a runaway advances about STRETCH_RATE_T kelvin (or a
#: reaction STRETCH_RATE_X in conversion) per unit of the integration variable.
STRETCH_RATE_T = 1.0  # K/s
STRETCH_RATE_X = 0.01  # 1/s
#: Relative tolerance of the main integration and of event refinement.
RTOL = 1.0e-9
REFINE_RTOL = 1.0e-13
#: Bounds that keep every integration finite.
MAX_STEPS = 200_000
MAX_PHASES = 200
#: Evenly spaced sample times over the horizon (added to the solver's steps).
N_GRID = 401
#: The caution on a time to a limit under fire when heat loss to ambient is also credited.
FIRE_NET_INPUT = ("Fire heat input is a net value for the exposed surface: the ambient heat-loss credit UA must not "
                  "include the fire-exposed surface (not conservative if it does).")
CYCLE_MAX_STEP = 1800.0  # s, the longest solver step with a daily cycle (sunrise and sunset are kinks of the forcing)


# --------------------------------------------------------------------------- results


@dataclass(frozen=True)
class LimitCrossing:
    """First time the contents reach one limit temperature.

    Attributes
    ----------
    name : str
    temperature : float, [K]
    time : float or None, [s]
        None: not reached within the horizon.
    warnings : tuple of str
        Cautions that apply to this time.
    """

    name: str
    temperature: float
    time: float | None
    warnings: tuple[str, ...] = ()


@dataclass(frozen=True)
class BoilingSummary:
    r"""What boiling did to the history.

    Attributes
    ----------
    boiling_point : float, [K]
    latent_heat : float, [J/kg]
    venting : {"open", "closed"}
    tempering_credited : bool
        True when the temperature was held at the boiling point.
    time_to_boil : float or None, [s]
        First time the boiling point was reached.
    flash_mass : float, [kg]
        Flashed at t = 0 when the contents start above the boiling point.
    peak_boil_off_rate : float, [kg/s]
        0 if never boiled; the flash is not a rate.
    boiled_off_mass : float, [kg]
        Within the horizon, flash included.
    time_to_dry : float or None, [s]
        When all contents had boiled off.
    boiling_at_end : bool
        Still boiling when the horizon ended.
    warnings : tuple of str

    Notes
    -----
    While tempered, :math:`\dot m_{vap} = (Q_{gen} - Q_{loss}) / L` at :math:`T = T_b`.
    """

    boiling_point: float
    latent_heat: float
    venting: str
    tempering_credited: bool
    time_to_boil: float | None
    flash_mass: float
    peak_boil_off_rate: float
    boiled_off_mass: float
    time_to_dry: float | None
    boiling_at_end: bool = False
    warnings: tuple[str, ...] = ()


@dataclass(frozen=True)
class NumericHistory:
    """Temperature history of one vessel, SI (returned by :func:`integrate_history`).

    Sampled arrays have one entry per sample (solver steps plus an even grid plus
    event times, increasing time; at a boiling transition two samples may share
    a time), shape (n_samples,) unless stated.

    Attributes
    ----------
    time : numpy.ndarray, [s]
    temperature : numpy.ndarray, [K]
    heat_generation : numpy.ndarray, [W]
        Constant + decaying + fire + Arrhenius sources.
    heat_loss : numpy.ndarray, [W]
        To ambient and to heating media, UA (T - Ta) + sum ua_k (T - Tm_k)
        (negative when the media heat the contents).
    heat_loss_ambient : numpy.ndarray, [W]
        UA (T - Ta) only.
    conversion : numpy.ndarray, shape (n_arrhenius, n_samples), [-]
        Rows of sources without a heat of reaction are NaN (their conversion is not tracked).
    contents_mass : numpy.ndarray, [kg]
        Falls while boiling.
    boil_off_rate : numpy.ndarray, [kg/s]
    energy_generated, energy_lost : numpy.ndarray, [J]
        Running integrals of the two powers.
    limits : tuple of LimitCrossing
        In the order of ``model.limits``.
    peak_temperature : float, [K]
        Highest temperature within [0, stop_time].
    peak_time : float, [s]
        First time it was reached.
    peak_is_ceiling : bool
        The runaway passed the ceiling, so the true peak is higher than ``peak_temperature``.
    rising_at_end : bool
        dT/dt > 0 when the integration stopped at the horizon (also True for contents
        still creeping up towards a stable steady state; see ``end_heating_rate``).
    end_heating_rate : float, [K/s]
        dT/dt at the last sample.
    stop_reason : {"horizon", "ceiling", "dry", "step-limit", "solver-failure"}
    stop_time : float, [s]
    ceiling_temperature : float, [K]
    boiling : BoilingSummary or None
    final_conversion : tuple of (float or None), [-]
        One per Arrhenius source.
    warnings : tuple of str
        Cautions that apply to the whole history.
    peak_warnings : tuple of str
        Cautions on the peak temperature.
    """

    time: np.ndarray
    temperature: np.ndarray
    heat_generation: np.ndarray
    heat_loss: np.ndarray
    heat_loss_ambient: np.ndarray
    conversion: np.ndarray
    contents_mass: np.ndarray
    boil_off_rate: np.ndarray
    energy_generated: np.ndarray
    energy_lost: np.ndarray
    limits: tuple[LimitCrossing, ...]
    peak_temperature: float
    peak_time: float
    peak_is_ceiling: bool
    rising_at_end: bool
    end_heating_rate: float
    stop_reason: str
    stop_time: float
    ceiling_temperature: float
    boiling: BoilingSummary | None
    final_conversion: tuple[float | None, ...]
    warnings: tuple[str, ...] = ()
    peak_warnings: tuple[str, ...] = ()

    def time_to(self, name: str) -> float | None:
        """Time to the limit called ``name``, [s] (None if not reached; KeyError if no such limit)."""
        for lim in self.limits:
            if lim.name == name:
                return lim.time
        raise KeyError(name)

    def limit(self, name: str) -> LimitCrossing:
        """The :class:`LimitCrossing` called ``name`` (KeyError if there is none)."""
        for lim in self.limits:
            if lim.name == name:
                return lim
        raise KeyError(name)


# --------------------------------------------------------------------------- balance


class _Balance:
    """Right-hand side, Jacobian and derived powers of the lumped balance.

    State vector z = [T, v_1 .. v_k, E_gen, E_loss, m_boiled, t], one v per
    source with a heat of reaction: its conversion X for order n >= 1, or
    u = (1 - X)^(1 - n) for n < 1.  The independent variable is the stretched time s with
    dt/ds = 1 / rho, rho = sqrt(1 + (dT/dt / V)^2 + sum_j (dv_j/dt / W)^2)
    (V = STRETCH_RATE_T, W = STRETCH_RATE_X).  While the contents change slowly
    s advances with t; during a runaway T advances by about V per unit of s, so
    the last seconds before the ceiling are resolved even when they are far
    shorter than the floating-point resolution of t itself.
    """

    def __init__(self, model: ScreeningModel):
        self.m0 = float(model.contents_mass)
        self.cp = float(model.contents_specific_heat)
        self.cw = float(model.wall_heat_capacity)
        self.ua = float(model.ua)
        self.ta = float(model.ambient_temperature)
        self.p_const = float(constant_power(model))
        self.decay = [(float(s.power), float(s.time_constant)) for s in model.decaying_sources]
        # G and the part of Q0 without the constant power (that is added with the decaying sources)
        g_total, drive = conductance_and_drive(self.ua, self.ta, 0.0, [float(h.ua) for h in model.heating_media],
                                               [float(h.medium_temperature) for h in model.heating_media])
        self.g_total, self.drive = float(g_total), float(drive)
        # the daily cycle of the air and the sun: F(t) = UA (T_eff(t) - T_a), part of the loss to ambient
        self.forcing = cycle_forcing(model.daily_cycle, self.ua)

        src = model.arrhenius_sources
        self.n_src = len(src)
        qref = np.array([s.specific_power for s in src], dtype=float)
        self.active = qref > 0
        self.lnq = np.log(np.where(self.active, qref, 1.0))
        self.e_r = np.array([s.activation_energy for s in src], dtype=float) / GAS_CONSTANT
        self.inv_tref = 1.0 / np.array([s.reference_temperature for s in src], dtype=float)
        self.tracked = np.array([s.specific_heat_of_reaction is not None for s in src], dtype=bool)
        self.order = np.where(self.tracked, np.array([float(s.order) for s in src], dtype=float), 0.0)
        self.dh = np.array([s.specific_heat_of_reaction if s.specific_heat_of_reaction is not None
                            else 1.0 for s in src], dtype=float)
        self.x0 = np.clip(np.where(self.tracked, 1.0 - np.array([s.accumulated_fraction for s in src],
                                                                  dtype=float), 0.0), 0.0, 1.0)
        # autocatalytic sources: f(X) = (1 - X)^n (X^m + z), the factor X^m + z from core.arrhenius
        self.am = np.array([float(s.autocatalytic_order) if s.specific_heat_of_reaction is not None else 0.0
                            for s in src], dtype=float)
        self.az = np.array([float(s.initiation) for s in src], dtype=float)
        self.auto = self.am > 0
        # each source's specific power is capped so that m q / C <= RATE_CAP
        self.ln_cap = math.log(RATE_CAP * self.heat_capacity(0.0) / self.m0)
        self.track_idx = [int(j) for j in np.nonzero(self.tracked)[0]]
        self.pos = {j: 1 + i for i, j in enumerate(self.track_idx)}  # source -> state index
        self.k = len(self.track_idx)
        self.iG, self.iL, self.iM, self.it = self.k + 1, self.k + 2, self.k + 3, self.k + 4
        self.n = self.k + 5
        # Order below 1 reaches full conversion in finite time with a singular
        # slope (1 - X)^n; such a source carries u = (1 - X)^(1 - n) instead of X,
        # which falls at the smooth rate du/dt = -(1 - n) k(T) / dh and reaches 0
        # exactly at full conversion (an event then ends the reaction).
        self.u_mode = self.tracked & (self.order < 1.0)
        self.done = self.tracked & (self.x0 >= 1.0)  # reaction finished (X reached 1)
        self.boiling_point = None
        self.latent = None
        # plain-float copies for the scalar right-hand side
        self._src = [(j, float(self.lnq[j]), float(self.e_r[j]), float(self.inv_tref[j]),
                      float(self.order[j]), self.pos.get(j), float(self.dh[j]), bool(self.u_mode[j]))
                     for j in range(self.n_src) if self.active[j]]
        self._auto = {j: (float(self.am[j]), float(self.az[j])) for j in range(self.n_src) if self.auto[j]}

    def state_of_conversion(self, j, x):
        """State variable of tracked source j at conversion x."""
        if self.u_mode[j]:
            return max(1.0 - x, 0.0) ** (1.0 - self.order[j])
        return x

    def conversion_of_state(self, j, v):
        """Conversion of tracked source j from its state variable (float or array), within [0, 1].

        The integrator may carry X a few rounding errors past 1 as a reaction runs to
        completion (the rate there is floored, not zero); the conversion reported is clipped.
        """
        if self.u_mode[j]:
            return np.clip(1.0 - np.maximum(v, 0.0) ** (1.0 / (1.0 - self.order[j])), 0.0, 1.0)
        return np.clip(v, 0.0, 1.0)

    def heat_capacity(self, mb):
        """C = (m0 - m_boiled) c + C_wall, J/K."""
        return (self.m0 - mb) * self.cp + self.cw

    # ---- scalar path (solver right-hand side)
    def _external(self, t):
        p, dp = self.p_const, 0.0
        for P, a in self.decay:
            e = P * math.exp(-t / a) if t / a < 700.0 else 0.0
            p += e
            dp -= e / a
        return p, dp

    def _cycle(self, t):
        """F(t) and dF/dt of the daily cycle (0 without one), plain floats."""
        if self.forcing is None:
            return 0.0, 0.0
        return float(self.forcing.power(t)), float(self.forcing.power_rate(t))

    def _sources(self, T, z, with_derivatives):
        """Per-source terms, plain floats; finished sources are left out.

        Each entry: (pos, q, dq/dT, dq/dv, dv/dt, d(dv/dt)/dT, d(dv/dt)/dv) with
        q in W/kg and v the source's state variable (X, or u for order < 1).
        """
        Te = T if T > 1.0 else 1.0
        inv_T = 1.0 / Te
        out = []
        for j, lnq, e_r, inv_tref, order, pos, dh, u_mode in self._src:
            if self.done[j]:
                continue
            # the cap acts on the temperature factor only, so depletion stays smooth under it
            ex = log_arrhenius_rate(inv_T, lnq, e_r, inv_tref, self.ln_cap)
            capped = ex >= self.ln_cap
            k_T = math.exp(ex if ex > LN_RATE_FLOOR else LN_RATE_FLOOR)  # q at zero conversion
            v = z[pos] if pos is not None else 0.0
            if pos is None or order == 0.0:
                q, power, base = k_T, 0.0, 1.0
            elif u_mode:  # q = k u^(n / (1 - n))
                power = order / (1.0 - order)
                base = v
            else:  # q = k (1 - X)^n
                power = order
                base = 1.0 - v
            if power:
                lq = ex + power * math.log(base if base > 1e-300 else 1e-300)
                q = math.exp(lq if lq > LN_RATE_FLOOR else LN_RATE_FLOOR)
            if pos is None:
                rate = 0.0
            elif u_mode:
                rate = -(1.0 - order) * k_T / dh
            else:
                rate = q / dh
            dq_dT = dq_dv = drate_dT = drate_dv = 0.0
            auto = self._auto.get(j) if pos is not None else None
            if auto is not None:  # times X^m + z (one implementation: core.arrhenius.autocatalytic_term)
                if u_mode:
                    vu = v if v > 0.0 else 0.0
                    X = 1.0 - vu ** (1.0 / (1.0 - order))
                    dX_dv = -vu ** (order / (1.0 - order)) / (1.0 - order)
                else:
                    X, dX_dv = v, 1.0
                g, dg = autocatalytic_term(X, auto[0], auto[1])
                q_plain, k_plain = q, k_T
                q, rate = q * g, rate * g
            if with_derivatives:
                slope = e_r * inv_T * inv_T if (not capped and T > 1.0) else 0.0
                dq_dT = q * slope
                if power:
                    dq_dv = power * q / (base if base > 1e-12 else 1e-12) * (1.0 if u_mode else -1.0)
                if auto is not None:
                    dq_dv += q_plain * dg * dX_dv
                if pos is not None:
                    if u_mode:
                        drate_dT = rate * slope
                        if auto is not None:
                            drate_dv = -(1.0 - order) * k_plain * dg * dX_dv / dh
                    else:
                        drate_dT, drate_dv = dq_dT / dh, dq_dv / dh
            out.append((pos, q, dq_dT, dq_dv, rate, drate_dT, drate_dv))
        return out

    def _flux(self, z, boiling, with_jac):
        T, t, mb = float(z[0]), float(z[self.it]), float(z[self.iM])
        ext, dext = self._external(t)
        srcs = self._sources(T, z, with_jac)
        gen = ext + self.m0 * sum(s[1] for s in srcs)
        cyc, dcyc = self._cycle(t)
        loss = self.g_total * T - self.drive - cyc
        net = gen - loss
        F = np.zeros(self.n)
        C = self.heat_capacity(mb)
        if boiling:
            F[self.iM] = net / self.latent
        else:
            F[0] = net / C
        for pos, _, _, _, rate, _, _ in srcs:
            if pos is not None:
                F[pos] = rate
        F[self.iG] = gen
        F[self.iL] = loss
        F[self.it] = 1.0
        if not with_jac:
            return F, None
        J = np.zeros((self.n, self.n))
        dgen_dT = self.m0 * sum(s[2] for s in srcs)
        row = self.iM if boiling else 0
        scale = self.latent if boiling else C
        J[row, 0] = (dgen_dT - self.g_total) / scale
        J[row, self.it] = (dext + dcyc) / scale
        if not boiling:
            J[0, self.iM] = net * self.cp / (C * C)
        for pos, _, _, dq_dv, _, drate_dT, drate_dv in srcs:
            if pos is not None:
                J[row, pos] = self.m0 * dq_dv / scale
                J[pos, 0] = drate_dT
                J[pos, pos] = drate_dv
                J[self.iG, pos] = self.m0 * dq_dv
        J[self.iG, 0] = dgen_dT
        J[self.iG, self.it] = dext
        J[self.iL, 0] = self.g_total
        J[self.iL, self.it] = -dcyc
        return F, J

    def _rho(self, F):
        acc = 1.0 + (F[0] / STRETCH_RATE_T) ** 2
        for pos in range(1, 1 + self.k):
            acc += (F[pos] / STRETCH_RATE_X) ** 2
        return math.sqrt(acc)

    def system(self, boiling):
        """(fun, jac) of dz/ds for the stretched time s."""
        k = self.k

        def fun(s, z):
            F, _ = self._flux(z, boiling, False)
            return F / self._rho(F)

        def jac(s, z):
            F, JF = self._flux(z, boiling, True)
            rho = self._rho(F)
            w = np.zeros(self.n)
            w[0] = F[0] / STRETCH_RATE_T ** 2
            w[1:1 + k] = F[1:1 + k] / STRETCH_RATE_X ** 2
            grad = (w @ JF) / rho
            return (JF - np.outer(F, grad) / rho) / rho

        return fun, jac

    def net_power(self, z):
        """Generation minus loss, W, at one state."""
        T, t = float(z[0]), float(z[self.it])
        ext, _ = self._external(t)
        gen = ext + self.m0 * sum(s[1] for s in self._sources(T, z, False))
        return gen - (self.g_total * T - self.drive - self._cycle(t)[0])

    def atol(self):
        c0 = self.heat_capacity(0.0)
        a = np.empty(self.n)
        a[0] = 1e-9  # K
        a[1:1 + self.k] = 1e-13
        a[self.iG] = a[self.iL] = 1e-9 * c0  # J, 1e-9 K worth of heat
        a[self.iM] = 1e-12 * self.m0
        a[self.it] = 1e-12  # s
        return a

    # ---- vectorised path (sampled history)
    def powers(self, Z, done_rows):
        """Generation (W), loss (W) and 'rate capped' flags for states Z (n, N).

        ``done_rows`` (n_src, N) marks sources already finished at each sample.
        """
        T = np.maximum(Z[0], 1.0)
        t = Z[self.it]
        gen = self.p_const + np.zeros_like(T)
        for P, a in self.decay:
            gen = gen + P * np.exp(np.maximum(-t / a, -700.0))
        capped_any = np.zeros(T.shape, dtype=bool)
        for j, lnq, e_r, inv_tref, order, pos, dh, u_mode in self._src:
            ex = log_arrhenius_rate(1.0 / T, lnq, e_r, inv_tref, self.ln_cap, LN_RATE_FLOOR)
            capped = ex >= self.ln_cap
            if pos is not None and order > 0:
                if u_mode:
                    ex = ex + order / (1.0 - order) * np.log(np.maximum(Z[pos], 1e-300))
                else:
                    ex = ex + order * np.log(np.maximum(1.0 - Z[pos], 1e-300))
            if pos is not None and j in self._auto:
                ex = ex + np.log(autocatalytic_term(self.conversion_of_state(j, Z[pos]), *self._auto[j])[0])
            q = np.exp(np.maximum(ex, LN_RATE_FLOOR))
            live = ~done_rows[j]
            gen = gen + self.m0 * np.where(live, q, 0.0)
            capped_any |= capped & live
        loss = self.g_total * Z[0] - self.drive
        if self.forcing is not None:
            loss = loss - self.forcing.power(t)
        return gen, loss, capped_any


# --------------------------------------------------------------------------- events


@dataclass
class _Event:
    kind: str  # limit | ceiling | horizon | boil | boil-mark | boil-end | dry | done | peak
    index: int
    g: object  # g(z) -> float
    direction: int
    terminal: bool
    refine: bool


def _crossed(g_old, g_new, direction):
    if direction > 0:
        return g_old < 0.0 <= g_new
    return g_old > 0.0 >= g_new


def _refine(fun, jac, atol, s_a, z_a, s_b, ev):
    """Re-integrate [s_a, s_b] at REFINE_RTOL and locate ``ev`` again; None if not found."""

    def g(s, z):
        return ev.g(z)

    g.terminal = True
    g.direction = ev.direction
    sol = solve_ivp(fun, (s_a, s_b), z_a, method="Radau", jac=jac, rtol=REFINE_RTOL,
                    atol=atol * 1e-3, events=[g])
    if sol.status == 1 and len(sol.t_events[0]):
        return float(sol.t_events[0][0]), np.array(sol.y_events[0][0], dtype=float)
    return None


@dataclass
class _PhaseResult:
    zs: list  # sampled states (t is the last component)
    fired: list  # (event, z) of non-terminal events, in order
    terminal: tuple | None  # (event, z)
    status: str  # horizon | terminal | step-limit | solver-failure
    steps: int


def _run_phase(bal, boiling, z0, events, grid, step_budget):
    """Integrate one phase (sensible or boiling) until a terminal event, the step budget or failure."""
    fun, jac = bal.system(boiling)
    atol = bal.atol()
    it = bal.it
    zs, fired = [np.array(z0, dtype=float)], []
    # with a daily cycle, steps of at most 30 min (in stretched time, so also in time) follow the sun and the air
    max_step = CYCLE_MAX_STEP if bal.forcing is not None else np.inf
    solver = Radau(fun, 0.0, z0, np.inf, rtol=RTOL, atol=atol, jac=jac, max_step=max_step)
    g_old = [ev.g(z0) for ev in events]
    steps = 0
    eps4 = 4 * np.finfo(float).eps
    while solver.status == "running":
        if steps >= step_budget:
            return _PhaseResult(zs, fired, None, "step-limit", steps)
        s_a, z_a = solver.t, solver.y.copy()
        try:
            solver.step()
        except (ValueError, ArithmeticError):  # rates beyond floating-point range (inf or NaN in a step)
            return _PhaseResult(zs, fired, None, "solver-failure", steps)
        steps += 1
        if solver.status == "failed":
            return _PhaseResult(zs, fired, None, "solver-failure", steps)
        s_b, z_b = solver.t, solver.y.copy()
        dense = solver.dense_output()
        g_new = [ev.g(z_b) for ev in events]
        hits = []
        for ev, ga, gb in zip(events, g_old, g_new):
            if _crossed(ga, gb, ev.direction):
                if gb == 0.0:
                    se = s_b
                else:
                    se = brentq(lambda s, ev=ev: ev.g(dense(s)), s_a, s_b, xtol=1e-300, rtol=eps4,
                                maxiter=200)
                hits.append([float(se), ev, None])
        hits.sort(key=lambda hit: hit[0])
        term = next((hit for hit in hits if hit[1].terminal), None)
        cut = term[0] if term is not None else s_b
        kept = []
        for hit in hits:
            if hit[0] > cut or (hit[1].terminal and hit is not term):
                continue
            se, ev = hit[0], hit[1]
            ze = None
            if ev.refine:
                ref = _refine(fun, jac, atol, s_a, z_a, s_b, ev)
                if ref is not None:
                    se, ze = ref
            if ze is None:
                ze = np.array(dense(se), dtype=float)
            hit[0], hit[2] = se, ze
            kept.append(hit)
        if term is not None:
            cut = term[0]
            kept = [h for h in kept if h is term or (h[0] <= cut and h[2][it] <= term[2][it])]
        kept.sort(key=lambda hit: hit[2][it])
        end = cut if term is not None else s_b
        _sample(bal, boiling, grid, s_a, end, z_a[it], (term[2] if term else z_b)[it], dense, zs,
                [h[2] for h in kept if h is not term])
        for hit in kept:
            if hit is not term:
                fired.append((hit[1], hit[2]))
        if term is not None:
            zs.append(term[2])
            return _PhaseResult(zs, fired, (term[1], term[2]), "terminal", steps)
        zs.append(z_b)
        g_old = g_new
    return _PhaseResult(zs, fired, None, "solver-failure", steps)  # pragma: no cover


def _sample(bal, boiling, grid, s_a, s_b, t_a, t_b, dense, zs, extra):
    """Append dense-output states at the grid times inside (t_a, t_b) and the event states."""
    lo = np.searchsorted(grid, t_a, side="right")
    hi = np.searchsorted(grid, t_b, side="left")
    out = list(extra)
    if hi > lo and t_b > t_a:
        target = grid[lo:hi]
        s = s_a + (target - t_a) / (t_b - t_a) * (s_b - s_a)
        for _ in range(3):  # Newton on t(s) = target, dt/ds = 1 / rho
            Z = dense(s)
            rho = np.array([bal._rho(bal._flux(Z[:, i], boiling, False)[0]) for i in range(Z.shape[1])])
            s = np.clip(s + (target - Z[bal.it]) * rho, s_a, s_b)
        Z = dense(s)
        out += [Z[:, i].copy() for i in range(Z.shape[1])]
    out.sort(key=lambda z: z[bal.it])
    zs.extend(out)


# --------------------------------------------------------------------------- warnings


def _source_warnings(model: ScreeningModel) -> tuple[list[str], list[str]]:
    """Cautions on the Arrhenius data: (all of them, those that also bear on times to limits)."""
    out, on_times = [], []
    T0 = model_start_temperature(model)
    for j, s in enumerate(model.arrhenius_sources, start=1):
        tag = s.label or f"Arrhenius source {j}"
        if s.specific_heat_of_reaction is None:
            if s.order != 0:
                out.append(f"{tag}: order {s.order:g} given without a heat of reaction; conversion cannot "
                           f"be tracked, so it is treated as zero order with unbounded release (conservative).")
            else:
                out.append(f"{tag}: no heat of reaction, so release never stops (zero order, unbounded); "
                           f"this is conservative but the peak temperature is not physical.")
        elif s.autocatalytic:
            on_times.append(autocatalytic_caution(tag, s))
        elif s.role == "synthesis":
            on_times.append(f"{tag}: depletion is credited with n-th order kinetics fitted at zero "
                            f"conversion; if the reaction speeds up as it converts (autocatalytic), a rate "
                            f"measured at zero conversion understates it (not conservative): give it as an "
                            f"autocatalytic source.")
        else:
            on_times.append(f"{tag}: depletion is credited with n-th order kinetics fitted at zero "
                            f"conversion; an autocatalytic decomposition speeds up as it converts, and a "
                            f"rate measured at zero conversion then understates it (not conservative).")
        span = abs(T0 - s.reference_temperature)
        if span > EXTRAPOLATION_SPAN:
            on_times.append(f"{tag}: the start temperature {T0:.1f} K, where the rate governs the time to a "
                            f"limit, is {span:.0f} K from the reference temperature "
                            f"{s.reference_temperature:.1f} K; kinetics extrapolated far from their tested "
                            f"range are not conservative (other reactions may dominate).")
    return out + on_times, on_times


def takes_tempering_credit(model: ScreeningModel) -> bool:
    """Boiling holds the temperature at the boiling point: open venting and no gas-generating reaction."""
    return (model.boiling is not None and model.boiling.venting == "open"
            and not any(s.gas_generating for s in model.arrhenius_sources))


def boiling_cautions(model: ScreeningModel) -> tuple[list[str], dict[int, str]]:
    """The cautions :func:`integrate_history` gives on boiling data before integrating: (those of the boiling
    summary, {index of a limit above the boiling point: its caution} without tempering credit)."""
    boil = model.boiling
    out: list[str] = []
    above: dict[int, str] = {}
    if boil is None:
        return out, above
    gas = any(s.gas_generating for s in model.arrhenius_sources)
    out.append("Vent and relief sizing are out of scope: boiling credit assumes the vapour leaves "
               "freely at the pressure the boiling point refers to.")
    out.append("A mixture's boiling point climbs as the light component leaves; boiling credit "
               "is not conservative for mixtures.")
    if boil.venting == "closed":
        out.append("Closed vessel: no tempering credit; temperature and pressure keep rising; "
                   "the tool does not model pressure.")
    if gas:
        out.append("A gas-generating reaction is not tempered by boiling (permanent gas keeps "
                   "pressurising the vessel): no tempering credit; integrated straight through "
                   "the boiling point.")
    if takes_tempering_credit(model):
        out.append("Tempering credit taken: the temperature is held at the boiling point while the "
                   "net heat input is positive. Heat generation of the Arrhenius sources is taken "
                   "on the initial contents mass throughout (conservative for boil-off).")
    else:
        for i, lim in enumerate(model.limits):
            if lim.temperature > boil.boiling_point:
                above[i] = ("Limit above the boiling point with no tempering credit: the "
                            "contents are pressurised; latent heat is not counted.")
    return out, above


def source_warnings(model: ScreeningModel) -> tuple[list[str], list[str]]:
    """The cautions :func:`integrate_history` gives on a model's Arrhenius data: (all of them, those that
    also go with every time to a limit reached after t = 0); for engine values computed elsewhere."""
    return _source_warnings(model)


def autocatalytic_caution(tag: str, source) -> str:
    """The caution that goes with every time computed from an autocatalytic source."""
    return (f"{tag}: autocatalytic kinetics (rate k(T) (1 - X)^n (X^m + z)); the times are very sensitive to the "
            f"initiation term z = {source.initiation:.4g} and to the initial conversion "
            f"({(1.0 - source.accumulated_fraction) * 100:.4g} %): aged, recycled or contaminated material, already "
            f"partly converted or seeded with its own products, reacts much sooner.")


# --------------------------------------------------------------------------- main entry


def _validate(model: ScreeningModel):
    checks = [
        (model.contents_mass > 0, "contents_mass must be positive"),
        (model.contents_specific_heat > 0, "contents_specific_heat must be positive"),
        (model.wall_heat_capacity >= 0, "wall_heat_capacity must be non-negative"),
        (model.ua >= 0, "ua must be non-negative"),
        (model.ambient_temperature > 0, "ambient_temperature must be positive"),
        (model.initial_temperature > 0, "initial_temperature must be positive"),
        (math.isfinite(model.horizon) and model.horizon > 0, "horizon must be positive and finite"),
    ]
    for d in model.decaying_sources:
        checks.append((d.time_constant > 0, "decaying source time_constant must be positive"))
    for h in model.heating_media:
        checks.append((h.ua >= 0 and h.medium_temperature > 0, "heating medium needs ua >= 0 and T > 0"))
    for s in model.arrhenius_sources:
        checks += [
            (s.specific_power >= 0, "Arrhenius specific_power must be non-negative"),
            (s.reference_temperature > 0, "Arrhenius reference_temperature must be positive"),
            (s.activation_energy >= 0, "Arrhenius activation_energy must be non-negative"),
            (s.order >= 0, "Arrhenius order must be non-negative"),
            (s.specific_heat_of_reaction is None or s.specific_heat_of_reaction > 0,
             "specific_heat_of_reaction must be positive"),
            (0 <= s.accumulated_fraction <= 1, "accumulated_fraction must be within [0, 1]"),
            (s.autocatalytic_order >= 0 and s.initiation >= 0, "autocatalytic_order and initiation must be >= 0"),
            (not s.autocatalytic or s.specific_heat_of_reaction is not None,
             "an autocatalytic source needs specific_heat_of_reaction"),
        ]
    if model.boiling is not None:
        checks += [(model.boiling.boiling_point > 0, "boiling_point must be positive"),
                   (model.boiling.latent_heat > 0, "latent_heat must be positive"),
                   (model.boiling.venting in ("open", "closed"), "venting must be 'open' or 'closed'")]
    vals = [model.contents_mass, model.contents_specific_heat, model.wall_heat_capacity, model.ua,
            model.ambient_temperature, model.initial_temperature]
    checks.append((all(math.isfinite(v) for v in vals), "model values must be finite"))
    for ok, msg in checks:
        if not ok:
            raise ValueError(msg)


def integrate_history(model: ScreeningModel, stop_temperature: float | None = None) -> NumericHistory:
    r"""Integrate the lumped heat balance with temperature-dependent sources.

    Parameters
    ----------
    model : ScreeningModel
        The vessel in SI units ([kg], [J/(kg K)], [J/K], [W/K], [K], [s], [W], [W/kg],
        [J/mol], [J/kg]).
    stop_temperature : float, optional, [K]
        Stop once the contents reach this temperature.  Default: the ceiling
        max(2000 K, highest limit + 100 K, initial temperature + 100 K).

    Returns
    -------
    NumericHistory
        Sampled history, first time to each limit [s], peak temperature [K],
        boiling summary and warning texts.

    Raises
    ------
    ValueError
        A model value out of range (non-positive mass, specific heat or temperature,
        negative UA, an Arrhenius parameter out of range, ...).

    Notes
    -----
    The balance integrated (see the module docstring) is

    .. math:: C \frac{dT}{dt} = \sum P_c + \sum_i P_i e^{-t/a_i} + \sum Q_{fire}
              + \sum_k UA_k (T_{m,k} - T) + m_0 \sum_j q_j(T, X_j) - UA (T - T_a),
              \qquad \frac{dX_j}{dt} = \frac{q_j}{\Delta h_j}

    with the implicit Radau IIA method (scipy) and an analytic Jacobian,
    relative tolerance 1e-9; each limit crossing and phase change is refined by
    re-integrating its step at 1e-13.  A limit at or below the initial
    temperature is reached at t = 0.  The integration stops at the horizon, at
    the ceiling (the reported peak is then the ceiling, flagged), when the
    contents have boiled dry, or after 200,000 steps or 200 phase changes.

    Each source's self-heating rate m q_j / C is capped at 1e9 K/s for
    numerical safety; where it acts, it lengthens the time to a limit by at
    most (ceiling / 1e9 K/s), about 2e-6 s, and a warning is attached to that
    limit.

    Well stirred: one temperature for contents and wall (the lumped model); for
    unstirred contents this understates the hot spot and a warning says so (the screening result of
    unstirred contents takes its limit times from :mod:`screening.core.transient_conduction`).

    References
    ----------
    Townsend, D. I. and Tou, J. C., Thermochimica Acta 37 (1980) 1-30.
    Semenov, N. N. (1928), thermal explosion of a well-stirred mass.
    Hairer, E. and Wanner, G., *Solving Ordinary Differential Equations II*, 2nd ed.,
    Springer (1996), section IV.8 (Radau IIA).

    Examples
    --------
    Incropera et al., Example 5.1 (from memory), without any Arrhenius source: the
    thermocouple junction (D = 0.706 mm, rho = 8500 kg/m^3, c = 400 J/(kg K),
    h = 400 W/(m^2 K), tau = 1 s) from 25 degC in gas at 200 degC reaches 199 degC at
    tau ln(175) = 5.164786 s (by hand):

    >>> import math
    >>> from screening.core.model import Limit
    >>> D = 6 * 400.0 * 1.0 / (8500.0 * 400.0)
    >>> junction = ScreeningModel(8500.0 * math.pi * D**3 / 6, 400.0, 0.0, 400.0 * math.pi * D**2,
    ...                           473.15, 298.15, 60.0, limits=(Limit("199 degC", 472.15),))
    >>> round(integrate_history(junction).time_to("199 degC"), 6)
    5.164786

    By hand, a first-order reaction with no temperature dependence (E = 0), q_ref =
    10 W/kg, Delta h = 200 kJ/kg, in 1000 kg at c_p = 2000 J/(kg K) without heat loss:
    X = 1 - exp(-t q_ref / Delta h) and T = T0 + X Delta h / c_p, so half the 100 K rise
    takes (Delta h / q_ref) ln 2 = 20000 ln 2 = 13862.944 s:

    >>> from screening.core.model import ArrheniusSource
    >>> src = ArrheniusSource(10.0, 300.0, 0.0, order=1.0, specific_heat_of_reaction=200e3)
    >>> batch = ScreeningModel(1000.0, 2000.0, 0.0, 0.0, 300.0, 300.0, 1e6, arrhenius_sources=(src,),
    ...                        limits=(Limit("half", 350.0),))
    >>> h = integrate_history(batch)
    >>> round(h.time_to("half"), 3), round(h.peak_temperature, 6)
    (13862.944, 400.0)
    """
    _validate(model)
    # Underflow to zero is benign here (scipy's step-size floor at t = 0 and decayed
    # exponentials produce it); overflow, division by zero and invalid operations are
    # left to the caller's numpy error settings and do not occur.
    with np.errstate(under="ignore"):
        return _integrate(model, stop_temperature)


def _integrate(model: ScreeningModel, stop_temperature: float | None) -> NumericHistory:
    bal = _Balance(model)
    T0 = float(model_start_temperature(model))
    horizon = float(model.horizon)
    limits = list(model.limits)
    highest = max([lim.temperature for lim in limits], default=T0)
    if stop_temperature is None:
        ceiling = max(DEFAULT_CEILING, highest + CEILING_MARGIN, T0 + CEILING_MARGIN)
    else:
        ceiling = float(stop_temperature)

    warnings, time_warnings = _source_warnings(model)
    if model.fire_sources and model.ua > 0:
        time_warnings.append(FIRE_NET_INPUT)
        warnings.append(time_warnings[-1])
    if model.mixing == "unstirred":
        time_warnings.append("Contents are unstirred: the lumped (well-mixed) history understates the "
                             "hot-spot temperature (not conservative); the transient conduction solution "
                             "(core.transient_conduction) gives the hot spot.")
        warnings.append(time_warnings[-1])
    limit_warn = {i: [] for i in range(len(limits))}

    # ---- boiling set-up
    boil = model.boiling
    tempering = takes_tempering_credit(model)
    boil_warn, above = boiling_cautions(model)
    if boil is not None:
        bal.boiling_point = float(boil.boiling_point)
        bal.latent = float(boil.latent_heat)
        for i, w in above.items():
            limit_warn[i].append(w)

    # ---- initial state
    z = np.zeros(bal.n)
    z[0] = T0
    for j, pos in bal.pos.items():
        z[pos] = bal.state_of_conversion(j, bal.x0[j])
    flash = 0.0
    boiling = False
    time_to_boil = None
    time_to_dry = None
    stop_reason = "horizon"
    if tempering and T0 >= bal.boiling_point:
        time_to_boil = 0.0
        flash = min(bal.heat_capacity(0.0) * (T0 - bal.boiling_point) / bal.latent, bal.m0)
        if flash > 0:
            boil_warn.append(f"Contents start {T0 - bal.boiling_point:.3g} K above the boiling point: "
                             f"{flash:.4g} kg is taken to flash off at t = 0 (the flash itself is not "
                             f"modelled as a rate).")
        z[0] = bal.boiling_point
        z[bal.iM] = flash
        if flash >= bal.m0:
            time_to_dry, stop_reason = 0.0, "dry"
        boiling = bal.net_power(z) > 0
    if stop_reason == "horizon" and z[0] >= ceiling:
        stop_reason = "ceiling"

    reached: dict[int, float] = {}
    for i, lim in enumerate(limits):
        if lim.temperature <= T0:
            reached[i] = 0.0
            limit_warn[i].append("Limit at or below the temperature the history starts at: reached at t = 0.")
        elif lim.temperature > ceiling:
            limit_warn[i].append(f"Limit above the stop temperature {ceiling:.1f} K: not evaluated.")

    # ---- phases
    grid = np.linspace(0.0, horizon, N_GRID)
    zs, flags = [z.copy()], [boiling]
    peaks = [(0.0, T0)]
    boil_mark = 0.0 if (boil is not None and T0 >= boil.boiling_point) else None
    steps_left = MAX_STEPS
    n_phase = 0
    while stop_reason == "horizon" and z[bal.it] < horizon:
        n_phase += 1
        if n_phase > MAX_PHASES:
            stop_reason = "step-limit"
            warnings.append(f"Stopped after {MAX_PHASES} phase changes (boiling switching on and off?); "
                            f"results after t = {z[bal.it]:.6g} s are missing.")
            break
        events = _phase_events(bal, boiling, tempering, limits, reached, ceiling, horizon)
        res = _run_phase(bal, boiling, z, events, grid, steps_left)
        steps_left -= res.steps
        zs.extend(res.zs[1:])
        flags.extend([boiling] * (len(res.zs) - 1))
        for ev, ze in res.fired:
            te = float(ze[bal.it])
            if ev.kind == "limit" and ev.index not in reached:
                reached[ev.index] = te
            elif ev.kind == "peak":
                peaks.append((te, float(ze[0])))
            elif ev.kind == "boil-mark" and boil_mark is None:
                boil_mark = te
        z = np.array(zs[-1], dtype=float)
        if res.status != "terminal":
            stop_reason = res.status
            warnings.append(f"Integration stopped early ({res.status}) at t = {z[bal.it]:.6g} s; results "
                            f"after that time are missing.")
            break
        ev = res.terminal[0]
        if ev.kind == "horizon":
            z[bal.it] = horizon
        elif ev.kind == "ceiling":
            stop_reason = "ceiling"
            z[0] = ceiling
        elif ev.kind == "done":
            z[bal.pos[ev.index]] = bal.state_of_conversion(ev.index, 1.0)
            bal.done[ev.index] = True
        elif ev.kind == "boil":
            z[0] = bal.boiling_point
            if bal.net_power(z) > 0:
                zs[-1] = z.copy()
                zs.append(z.copy())  # same instant, now boiling
                flags.append(True)
                boiling = True
                if time_to_boil is None:
                    time_to_boil = float(z[bal.it])
        elif ev.kind == "boil-end":
            zs[-1] = z.copy()
            zs.append(z.copy())  # same instant, boiling over
            flags.append(False)
            boiling = False
        elif ev.kind == "dry":
            z[bal.iM] = bal.m0
            time_to_dry = float(z[bal.it])
            stop_reason = "dry"
        zs[-1] = z.copy()

    # a limit exactly at the boiling point can coincide with the onset of boiling
    if tempering and time_to_boil is not None:
        for i, lim in enumerate(limits):
            if i not in reached and T0 < lim.temperature <= bal.boiling_point:
                reached[i] = time_to_boil

    # ---- sampled arrays
    Z = np.array(zs, dtype=float).T
    flag = np.array(flags, dtype=bool)
    time = Z[bal.it].copy()
    done_rows = np.zeros((bal.n_src, time.size), dtype=bool)
    for j in range(bal.n_src):
        if bal.u_mode[j]:
            done_rows[j] = Z[bal.pos[j]] <= 0.0
    gen, loss, capped = bal.powers(Z, done_rows)
    loss_amb = bal.ua * (Z[0] - bal.ta)
    if bal.forcing is not None:
        loss_amb = loss_amb - bal.forcing.power(Z[bal.it])  # UA (T - T_eff(t))
    mb = Z[bal.iM]
    net = gen - loss
    if bal.latent:
        boil_rate = np.where(flag, np.maximum(net, 0.0) / bal.latent, 0.0)
    else:
        boil_rate = np.zeros(time.size)
    conv = np.full((bal.n_src, time.size), np.nan)
    for j, pos in bal.pos.items():
        conv[j] = bal.conversion_of_state(j, Z[pos])

    # ---- peak
    imax = int(np.argmax(Z[0]))
    peaks.append((float(time[imax]), float(Z[0, imax])))
    peak_T = max(p[1] for p in peaks)
    peak_t = min(p[0] for p in peaks if p[1] >= peak_T)
    peak_is_ceiling = stop_reason == "ceiling"
    peak_warnings = []
    if peak_is_ceiling and ceiling > peak_T:
        peak_T, peak_t = ceiling, float(time[-1])
    if peak_is_ceiling:
        peak_warnings.append(f"The runaway passed the ceiling of {ceiling:.1f} K where integration stopped; "
                             f"the true peak is higher and is not computed.")
    if any(bal.active[j] and not bal.tracked[j] for j in range(bal.n_src)):
        peak_warnings.append("Unbounded (zero-order, no heat of reaction) release: the peak temperature "
                             "reflects the horizon or the ceiling, not a physical end point.")

    end_boiling = bool(flag[-1])
    if end_boiling or stop_reason == "dry":
        end_rate = 0.0
    else:
        end_rate = float(net[-1] / bal.heat_capacity(float(mb[-1])))
    rising = (stop_reason in ("horizon", "step-limit", "solver-failure") and not end_boiling
              and net[-1] > 1e-12 * float(abs(gen[-1]) + abs(loss[-1])))

    # ---- limits
    crossings = []
    for i, lim in enumerate(limits):
        tl = reached.get(i)
        w = list(limit_warn[i])
        if tempering and tl is None and lim.temperature > bal.boiling_point:
            w.append(f"Not reached while liquid remains: boiling holds the temperature at "
                     f"{bal.boiling_point:.2f} K (tempering credit, which needs free venting and a "
                     f"pure-component boiling point).")
            if stop_reason == "dry":
                w.append("The contents boiled dry; a non-volatile residue can then overheat (not modelled).")
        if tl is not None and tl > 0:
            w += time_warnings
            k = int(np.searchsorted(time, tl))
            if capped[max(k - 1, 0):k + 1].any():
                w.append("The heat-release rate reached the numerical cap of 1e9 K/s before this limit; "
                         "the time is resolved only to about 2e-6 s.")
        if tl is None and stop_reason in ("step-limit", "solver-failure"):
            w.append("Not reached before the integration stopped early: no conclusion.")
        crossings.append(LimitCrossing(lim.name, float(lim.temperature), tl, tuple(w)))

    boiling_summary = None
    if boil is not None:
        if stop_reason == "dry":
            boil_warn.append("The contents boiled dry within the horizon and integration stopped there "
                             "(a non-volatile residue would overheat; not modelled).")
        boiling_summary = BoilingSummary(
            boiling_point=float(boil.boiling_point), latent_heat=float(boil.latent_heat),
            venting=boil.venting, tempering_credited=bool(tempering),
            time_to_boil=time_to_boil if tempering else boil_mark,
            flash_mass=float(flash), peak_boil_off_rate=float(boil_rate.max()),
            boiled_off_mass=float(mb[-1]), time_to_dry=time_to_dry,
            boiling_at_end=end_boiling and stop_reason == "horizon", warnings=tuple(boil_warn))

    final_conv = tuple(float(conv[j, -1]) if bal.tracked[j] else None for j in range(bal.n_src))
    return NumericHistory(
        time=time, temperature=Z[0].copy(), heat_generation=gen, heat_loss=loss,
        heat_loss_ambient=loss_amb, conversion=conv, contents_mass=bal.m0 - mb, boil_off_rate=boil_rate,
        energy_generated=Z[bal.iG].copy(), energy_lost=Z[bal.iL].copy(),
        limits=tuple(crossings), peak_temperature=float(peak_T), peak_time=float(peak_t),
        peak_is_ceiling=peak_is_ceiling, rising_at_end=bool(rising), end_heating_rate=end_rate,
        stop_reason=stop_reason, stop_time=float(time[-1]), ceiling_temperature=float(ceiling),
        boiling=boiling_summary, final_conversion=final_conv, warnings=tuple(warnings),
        peak_warnings=tuple(peak_warnings))


def _phase_events(bal, boiling, tempering, limits, reached, ceiling, horizon):
    it = bal.it
    events = [_Event("horizon", 0, lambda z: float(z[it] - horizon), +1, True, True)]
    if boiling:
        events.append(_Event("boil-end", 0, bal.net_power, -1, True, True))
        events.append(_Event("dry", 0, lambda z: float(bal.m0 - z[bal.iM]), -1, True, True))
    else:
        for i, lim in enumerate(limits):
            if i in reached or lim.temperature > ceiling:
                continue
            events.append(_Event("limit", i, (lambda z, L=lim.temperature: float(z[0] - L)), +1, False, True))
        events.append(_Event("ceiling", 0, lambda z: float(z[0] - ceiling), +1, True, False))
        if tempering:
            events.append(_Event("boil", 0, lambda z: float(z[0] - bal.boiling_point), +1, True, True))
        elif bal.boiling_point is not None:
            events.append(_Event("boil-mark", 0, lambda z: float(z[0] - bal.boiling_point), +1, False, True))
        events.append(_Event("peak", 0, bal.net_power, -1, False, False))
    for j, pos in bal.pos.items():
        if bal.u_mode[j] and not bal.done[j] and bal.active[j]:
            # u = (1 - X)^(1 - n) falls to 0 at full conversion
            events.append(_Event("done", j, (lambda z, p=pos: float(-z[p])), +1, True, True))
    return events
