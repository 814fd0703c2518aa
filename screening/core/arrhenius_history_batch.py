r"""Times to limit temperatures for many vessels with temperature-dependent heat sources at once.

For uncertainty analysis (Monte Carlo) the same lumped balance as
:mod:`screening.core.arrhenius_history` is integrated for N sample-cases together,
each with its own parameters (arrays over samples):

.. math::

    C \frac{dT}{dt} = P_0 + \sum_d P_d e^{-t/a_d} + \sum_k ua_k (T_{m,k} - T)
        + m \sum_j q_j(T, X_j) - UA (T - T_a)

    \frac{dX_j}{dt} = \frac{q_j(T, X_j)}{\Delta h_j}, \qquad
    q_j = q_{ref,j} \exp\left[-\frac{E_j}{R}\left(\frac{1}{T}
        - \frac{1}{T_{ref,j}}\right)\right] (1 - X_j)^{n_j}

with R = 8.314462618 J/(mol K).  A source with a heat of reaction
:math:`\Delta h_j` (J/kg) carries its conversion, which starts at
:math:`X_{0,j}` and stops releasing heat at :math:`X_j = 1` for every order; a
source without one (``heat_of_reaction`` NaN) is zero order and releases heat
without bound (conservative).  Boiling is not modelled here: cases with
tempering credit (open venting) belong to :func:`screening.core.arrhenius_history.
integrate_history`, and :func:`samples_from_models` rejects them.

Method
------
A Rosenbrock (linearly implicit Runge-Kutta) method advances every sample by
its own adaptive step in one set of array operations:

* **Integrator.**  RODAS, the stiffly accurate, L-stable 6-stage method of
  order 4 with an embedded order-3 error estimate and an order-3 continuous
  extension (Hairer and Wanner 1996, section IV.7; the coefficients of their
  code RODAS, checked against the order conditions in the tests).  The
  Jacobian is analytic.  Each sample's linear systems are only
  (2 + K) x (2 + K) (K sources with a tracked conversion); they are solved by
  Gaussian elimination written over the sample axis, without row exchanges
  where the pivots allow it and with partial pivoting for the samples where
  they do not (Golub and Van Loan 2013, section 3.4), so a step costs a few
  hundred numpy operations whatever the number of samples.
* **Step size.**  Per sample: the error of each component against
  ``atol + rtol |y|`` in the maximum norm (T relative; time relative to
  itself; a conversion state absolute, at the tolerance that stands for the
  same heat as the temperature tolerance), the predictive controller of
  Gustafsson (Hairer and Wanner 1996, section IV.8), steps of at most a tenth
  of the horizon in time, and at most ``MAX_STEPS`` attempted steps.
* **Runaway.**  The independent variable is a stretched time s (a Sundman
  transformation, Hairer, Lubich and Wanner 2006, section VIII.2) with
  :math:`dt/ds = 1/\rho`,
  :math:`\rho = \sqrt{1 + (\dot T / V)^2 + \sum_j (\dot v_j / W)^2}`,
  V = 1 K/s, W = 0.01 1/s, as in the single-case engine; time itself is a
  state.  While the contents change slowly s follows t; in a runaway T
  advances about 1 K per unit of s, so a rise within microseconds is resolved
  and the error in t stays relative to t.  Every right-hand side is bounded
  (:math:`|dT/ds| \le V`).  A sample is no longer followed once it reaches its
  stop temperature (by default that of the single-case engine, above every
  limit).
* **Conversion.**  For order n >= 1 the state is the remaining fraction
  w = 1 - X; for n < 1 it is :math:`u = (1 - X)^{1 - n}`, which falls at the
  smooth rate :math:`-(1 - n) k(T)/\Delta h` and reaches 0 at full
  conversion in finite time.  Steps are aimed at u = 0 (no longer than
  u / abs(du/ds)), a step that would carry u below zero is shortened to the root
  of its continuous extension, and the reaction is switched off once u is
  within 1e-3 of its absolute tolerance of zero.
* **Events.**  After each accepted step the continuous extension gives the
  interior maximum of T and the first crossings of the horizon, of the stop
  temperature and of every limit (also a limit touched between two step ends,
  below an interior maximum); the root is bracketed on a grid and found by
  safeguarded Newton iteration.  Each limit crossing is then refined by a
  re-step of the method from the step's start to the crossing and one Newton
  step along the exact right-hand side, and each interior maximum likewise
  (the extension alone is of order 3).
* **Cooling samples.**  With time-independent sources (or decaying sources of
  non-negative power), f = dT/dt obeys f' = a(t) f + b(t) with b <= 0 (every
  rate grows with the reactant left, which only falls), so once f < 0 it stays
  negative: no limit above the present temperature is reached and the peak so
  far is final.  Such a sample finishes at once (status ``STATUS_HORIZON``)
  when f < 0 by more than the effect of 1000 local tolerances.
* **Rate cap.**  As in the single-case engine, each source's self-heating rate
  :math:`m q_j / C` is capped at 1e9 K/s and rates below exp(-600) W/kg are
  held there; where the cap acts it lengthens a time to a limit by at most
  (stop temperature)/1e9 K/s, about 2e-6 s.
* **Work sharing.**  Samples are integrated in working sets of ``chunk_size``
  refilled as samples finish, and split over up to two worker processes; the
  result of each sample does not depend on the grouping (tested).

Accuracy is measured, not assumed: the tests compare every time with
``scipy.integrate.solve_ivp`` (Radau, rtol 1e-10) per sample on random cases
(runaways within seconds, creeping near criticality, never running away,
decaying sources, heating media, two reactions) and with
``scipy.integrate.quad`` where the time is an integral over temperature or
conversion; ``benchmarks/arrhenius_benchmark.py`` prints throughput, a sampled
accuracy check and peak memory.  With the default rtol = 1e-9 the largest
relative error of a time measured on 900 random cases was 7.6e-8 (near
criticality; 1.6e-8 on typical cases), of a peak temperature 1.4e-7; times
near a grazing crossing (the peak just at a limit) or at the horizon are
ill-conditioned, and so is the time of a flat maximum.

References
----------
Hairer, E. and Wanner, G., *Solving Ordinary Differential Equations II: Stiff
and Differential-Algebraic Problems*, 2nd ed., Springer (1996), section IV.7
(Rosenbrock methods, the RODAS coefficients and their dense output) and
section IV.8 (step-size control).

Hairer, E., Lubich, C. and Wanner, G., *Geometric Numerical Integration*, 2nd
ed., Springer (2006), section VIII.2 (time transformations).

Golub, G. H. and Van Loan, C. F., *Matrix Computations*, 4th ed., Johns
Hopkins (2013), section 3.4 (Gaussian elimination with partial pivoting).

Semenov, N. N. (1928), thermal explosion of a well-stirred mass; Townsend,
D. I. and Tou, J. C., Thermochimica Acta 37 (1980) 1-30 (adiabatic
self-heating).
"""
from __future__ import annotations

import multiprocessing
import os
from concurrent.futures import ProcessPoolExecutor
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass
from typing import NamedTuple, Sequence

import numpy as np

from screening.core.arrhenius import autocatalytic_term, log_arrhenius_rate
from screening.core.daily_cycle import CycleForcing, cycle_forcing
from screening.core.model import GAS_CONSTANT, ScreeningModel
from screening.core.terms import constant_power, model_start_temperature
from screening.workers import die_with_parent, stop_pool

__all__ = [
    "ArrheniusSamples",
    "ArrheniusScreen",
    "first_crossing_times_arrhenius",
    "samples_from_models",
    "STATUS_HORIZON",
    "STATUS_STOP",
    "STATUS_FAILED",
]

# --------------------------------------------------------------------------- constants

#: Default temperature at which a runaway is no longer followed, K (as the single-case engine).
DEFAULT_CEILING = 2000.0
#: The default stop temperature is at least this far above the highest limit and the start, K.
CEILING_MARGIN = 100.0
#: Largest self-heating rate m q_j / C of any one source, K/s (as the single-case engine).
RATE_CAP = 1.0e9
#: Rates below exp(LN_RATE_FLOOR) W/kg are held there.
LN_RATE_FLOOR = -600.0
#: Stretched-time scales: in a runaway T advances about STRETCH_RATE_T kelvin
#: (a conversion state STRETCH_RATE_X) per unit of the integration variable.
STRETCH_RATE_T = 1.0  # K/s
STRETCH_RATE_X = 0.01  # 1/s
#: Default relative tolerance of the local error per step.
DEFAULT_RTOL = 1.0e-9
#: Attempted steps allowed per sample (accepted and rejected together).
MAX_STEPS = 20_000
#: Largest step, as a fraction of the sample's horizon (in time t).
MAX_STEP_FRACTION = 0.1
CYCLE_MAX_STEP = 1800.0  # s, the longest step in time with a daily cycle
#: Highest temperature accepted anywhere, K (the right-hand side is evaluated at
#: temperatures clipped to [1, T_CLIP]).
T_CLIP = 1.0e6
#: Shortest and longest horizons accepted, s (1 ns; about 30,000 years).
MIN_HORIZON = 1.0e-9
MAX_HORIZON = 1.0e12
#: Highest reaction order accepted.
MAX_ORDER = 10.0
#: Largest magnitude accepted for powers, conductances, capacities, masses, rates,
#: heats of reaction and time constants (SI units); keeps every product finite.
MAX_MAGNITUDE = 1.0e30
#: Largest activation energy accepted, J/mol.
MAX_ACTIVATION_ENERGY = 1.0e7
#: Samples integrated together by default.
DEFAULT_CHUNK = 8192

#: ``status`` codes of :class:`ArrheniusScreen`.
STATUS_HORIZON = 0  #: integrated to the horizon
STATUS_STOP = 1  #: reached the stop temperature (runaway) before the horizon
STATUS_FAILED = 2  #: step cap reached: no conclusion for limits not yet reached

# RODAS (Hairer and Wanner 1996, section IV.7; coefficients of their code RODAS,
# gamma = 1/4), in the form with stages U_i:
#   (I/(gamma h) - J) U_i = f(y0 + sum_j A_ij U_j) + sum_j (C_ij / h) U_j
#   y1 = y0 + sum_j A_6j U_j + U_6 (stiffly accurate), error estimate U_6,
#   y(theta) = (1 - theta) y0 + theta (y1 + (1 - theta) (D1 . U + theta D2 . U)).
_GAMMA = 0.25
_A = (
    (),
    (1.544,),
    (0.9466785280815826, 0.2557011698983284),
    (3.314825187068521, 2.896124015972201, 0.9986419139977817),
    (1.221224509226641, 6.019134481288629, 12.53708332932087, -0.6878860361058950),
)
_C = (
    (),
    (-5.6688,),
    (-2.430093356833875, -0.2063599157091915),
    (-0.1073529058151375, -9.594562251023355, -20.47028614809616),
    (7.496443313967647, -10.24680431464352, -33.99990352819905, 11.70890893206160),
    (8.083246795921522, -7.981132988064893, -31.52159432874371, 16.31930543123136, -6.058818238834054),
)
_D1 = (10.12623508344586, -7.487995877610167, -34.80091861555747, -7.992771707568823, 1.025137723295662)
_D2 = (-0.6762803392801253, 6.087714651680015, 16.43084320892478, 24.76722511418386, -6.594389125716872)
_A_ROWS = _A
_C_ROWS = _C
_SAFETY = 0.9
_FAC_MAX_SHRINK = 5.0  # h_new >= h / 5
_FAC_MAX_GROW = 1.0 / 6.0  # h_new <= 6 h
_ROOT_ITER = 60  # iteration cap of the root searches on the continuous extension
_GRID = np.linspace(0.0, 1.0, 9)[:, None]  # root bracketing grid on [0, 1]
_LAND_TOL = 1e-3  # |u| below this times its absolute tolerance is the end of an n < 1 reaction


# --------------------------------------------------------------------------- inputs


@dataclass(frozen=True)
class ArrheniusSamples:
    """Parameters of N sample-cases, SI units, arrays over samples.

    Per-sample fields are scalars (shared) or arrays of shape (N,).  Fields
    with a second axis (decaying sources d, heating media k, Arrhenius sources
    j) have shape (N, n_items), or (n_items,) shared by every sample.

    Attributes
    ----------
    heat_capacity : float or array (N,), [J/K]
        Total heat capacity C = m c + C_wall (> 0).
    contents_mass : float or array (N,), [kg]
        Mass m on which the Arrhenius sources act (> 0).
    ua : float or array (N,), [W/K]
        Heat-loss conductance to ambient (>= 0).
    ambient_temperature : float or array (N,), [K]
    initial_temperature : float or array (N,), [K]
    constant_power : float or array (N,), [W]
        Sum of the constant sources (fire exposure included), default 0.
    decaying_power, decay_time : array (N, kd) or (kd,), [W] and [s]
        Sources P_d exp(-t / a_d) (a_d > 0).  Default: none.
    media_ua, media_temperature : array (N, km) or (km,), [W/K] and [K]
        Heating media left on, ua_k (T_m,k - T).  Default: none.
    specific_power : array (N, J) or (J,), [W/kg]
        q_ref,j, the rate at the reference temperature and zero conversion
        (>= 0; 0 switches the source off).  Default: no Arrhenius source.
    reference_temperature : array (N, J) or (J,), [K]
    activation_energy : array (N, J) or (J,), [J/mol]
        E_j >= 0.
    order : array (N, J) or (J,), [-]
        In [0, 10], default 0; taken as 0 for a source without a heat of reaction
        (as the single-case engine does).
    heat_of_reaction : array (N, J) or (J,), [J/kg]
        Delta h_j > 0; default NaN: none, the release is zero order and unbounded
        (conservative).
    initial_conversion : array (N, J) or (J,), [-]
        X_0 = 1 - accumulated fraction, in [0, 1], default 0.
    autocatalytic_order, initiation : array (N, J) or (J,), [-]
        m in [0, 10] and z >= 0 of an autocatalytic source, whose rate is
        q_ref exp(...) (1 - X)^n (X^m + z) (q_ref = Delta h k_ref); default 0 and 0: n-th order.
        m > 0 needs a heat of reaction.
    forcing : CycleForcing or None, default None
        The daily cycle of the air and the sun (:class:`screening.core.daily_cycle.CycleForcing`, fields
        scalars or arrays (N,), W and s): the drive UA (T_eff(t) - T_a) added to the balance. With it, steps
        are at most 30 min and a cooling sample is not finished early (the cycle may turn it round).

    Temperatures are within [1, 1e6] K; capacities, masses, powers,
    conductances, rates, heats of reaction and time constants at most 1e30 in
    magnitude (SI), capacities and masses at least 1e-6.
    """

    heat_capacity: object
    contents_mass: object
    ua: object
    ambient_temperature: object
    initial_temperature: object
    constant_power: object = 0.0
    decaying_power: object = None
    decay_time: object = None
    media_ua: object = None
    media_temperature: object = None
    specific_power: object = None
    reference_temperature: object = None
    activation_energy: object = None
    order: object = None
    heat_of_reaction: object = None
    initial_conversion: object = None
    autocatalytic_order: object = None
    initiation: object = None
    forcing: object = None


class ArrheniusScreen(NamedTuple):
    """Result of :func:`first_crossing_times_arrhenius`.

    Attributes
    ----------
    times : numpy.ndarray, shape (N, L), [s]
        First time each limit is reached; 0 when the initial temperature is at
        or above it; NaN when not reached within the horizon (status
        ``STATUS_HORIZON``) or not reached before the step cap
        (``STATUS_FAILED``: no conclusion).
    peak_temperature : numpy.ndarray, shape (N,), [K]
        Highest temperature within [0, horizon]; the stop temperature when the
        sample reached it (the true peak is then higher, see ``peak_is_stop``).
    peak_time : numpy.ndarray, shape (N,), [s]
        First time the peak temperature is reached.
    peak_is_stop : numpy.ndarray of bool, shape (N,)
        The sample reached the stop temperature (a runaway); the peak is a lower bound.
    status : numpy.ndarray of int, shape (N,)
        ``STATUS_HORIZON``, ``STATUS_STOP`` or ``STATUS_FAILED``.
    steps : numpy.ndarray of int, shape (N,)
        Steps attempted (accepted and rejected).
    end_temperature : numpy.ndarray, shape (N,), [K]
        Temperature at the end of the run: at the horizon (status ``STATUS_HORIZON``), or
        the stop temperature (``STATUS_STOP``). NaN for a sample that failed, and for a
        cooling sample finished early unless ``to_horizon`` was asked for.
    end_rate : numpy.ndarray, shape (N,), [K/s]
        dT/dt there (the balance's right-hand side at the end state); NaN likewise.
    end_time : numpy.ndarray, shape (N,), [s]
        The horizon, or when the stop temperature was reached; NaN likewise.
    end_conversion : numpy.ndarray, shape (N, J), [-]
        Conversion X_j of each source there; NaN for a source without a heat of
        reaction (not tracked) and, for every source, where the end is not known.
    """

    times: np.ndarray
    peak_temperature: np.ndarray
    peak_time: np.ndarray
    peak_is_stop: np.ndarray
    status: np.ndarray
    steps: np.ndarray
    end_temperature: np.ndarray
    end_rate: np.ndarray
    end_time: np.ndarray
    end_conversion: np.ndarray


def _per_sample(name, value, n=None):
    a = np.asarray(value, dtype=float)
    if a.ndim > 1:
        raise ValueError(f"{name} must be a scalar or a 1-D array over samples, got shape {a.shape}")
    return a


def _per_item(name, value):
    if value is None:
        return None
    a = np.asarray(value, dtype=float)
    if a.ndim == 0:
        a = a.reshape(1, 1)
    elif a.ndim == 1:
        a = a.reshape(1, -1)
    elif a.ndim != 2:
        raise ValueError(f"{name} must have shape (N, n_items) or (n_items,), got {a.shape}")
    return a


class _Inputs(NamedTuple):
    C: np.ndarray
    m: np.ndarray
    ua: np.ndarray
    Ta: np.ndarray
    T0: np.ndarray
    P0: np.ndarray
    Pd: np.ndarray  # (N, kd)
    ad: np.ndarray  # (N, kd)
    mua: np.ndarray  # (N, km)
    mT: np.ndarray  # (N, km)
    q: np.ndarray  # (N, J)
    Tr: np.ndarray
    E: np.ndarray
    n: np.ndarray
    dh: np.ndarray
    X0: np.ndarray
    am: np.ndarray  # (N, J) autocatalytic order m (0: n-th order)
    az: np.ndarray  # (N, J) initiation z
    limits: np.ndarray  # (N, L)
    horizon: np.ndarray  # (N,)
    stop: np.ndarray  # (N,)
    fa: np.ndarray  # (N,) daily cycle: air drive amplitude, W
    ftw: np.ndarray  # (N,) warmest time of day, s
    fs: np.ndarray  # (N,) peak solar drive, W
    fday: np.ndarray  # (N,) day length, s
    fs0: np.ndarray  # (N,) solar time at t = 0, s
    follow: np.ndarray  # (N,) bool: no early finish of a cooling sample (its end state is wanted)


def _bad(mask, message):
    if np.any(mask):
        idx = np.flatnonzero(np.broadcast_to(mask, mask.shape).reshape(mask.shape[0], -1).any(axis=1)
                             if mask.ndim else np.array([0]))
        raise ValueError(f"{message} ({idx.size} sample(s), first index {int(idx[0])})")


def _prepare(params: ArrheniusSamples, limits, horizon, stop_temperature) -> _Inputs:
    if not isinstance(params, ArrheniusSamples):
        raise TypeError("params must be an ArrheniusSamples")
    scal = {k: _per_sample(k, getattr(params, k)) for k in
            ("heat_capacity", "contents_mass", "ua", "ambient_temperature", "initial_temperature",
             "constant_power")}
    H = _per_sample("horizon", horizon)
    items = {k: _per_item(k, getattr(params, k)) for k in
             ("decaying_power", "decay_time", "media_ua", "media_temperature", "specific_power",
              "reference_temperature", "activation_energy", "order", "heat_of_reaction",
              "initial_conversion", "autocatalytic_order", "initiation")}
    lim = np.asarray(limits, dtype=float)
    if lim.ndim == 0:
        lim = lim.reshape(1, 1)
    elif lim.ndim == 1:
        lim = lim.reshape(1, -1)
    elif lim.ndim != 2:
        raise ValueError("limits must have shape (L,) or (N, L)")
    sizes = [a.size for a in list(scal.values()) + [H] if a.ndim == 1]
    sizes += [a.shape[0] for a in items.values() if a is not None] + [lim.shape[0]]
    if stop_temperature is not None:
        st = _per_sample("stop_temperature", stop_temperature)
        if st.ndim == 1:
            sizes.append(st.size)
    N = max(sizes)
    if any(s not in (1, N) for s in sizes):
        raise ValueError(f"inconsistent numbers of samples: {sorted(set(sizes))}")

    def vec(a):
        return np.ascontiguousarray(np.broadcast_to(a, (N,)), dtype=float)

    def mat(a, k):
        return np.ascontiguousarray(np.broadcast_to(a, (N, k)), dtype=float)

    C, m, ua, Ta, T0, P0 = (vec(scal[k]) for k in ("heat_capacity", "contents_mass", "ua",
                                                  "ambient_temperature", "initial_temperature",
                                                  "constant_power"))
    H = vec(H)

    def group(names, defaults):
        arrs = [items[k] for k in names]
        given = [a for a in arrs if a is not None]
        if not given:
            return [np.zeros((N, 0)) for _ in names]
        if any(a is None for a in arrs):
            missing = [k for k, a in zip(names, arrs) if a is None and defaults.get(k) is None]
            if missing:
                raise ValueError(f"{', '.join(missing)} must be given together with "
                                 f"{', '.join(k for k, a in zip(names, arrs) if a is not None)}")
        k = max(a.shape[1] for a in given)
        out = []
        for name, a in zip(names, arrs):
            if a is None:
                a = np.full((1, k), defaults[name])
            if a.shape[1] != k:
                raise ValueError(f"{name} has {a.shape[1]} items, expected {k}")
            out.append(mat(a, k))
        return out

    Pd, ad = group(("decaying_power", "decay_time"), {})
    mua, mT = group(("media_ua", "media_temperature"), {})
    q, Tr, E, n, dh, X0, am, az = group(("specific_power", "reference_temperature", "activation_energy", "order",
                                         "heat_of_reaction", "initial_conversion", "autocatalytic_order",
                                         "initiation"),
                                        {"order": 0.0, "heat_of_reaction": np.nan, "initial_conversion": 0.0,
                                         "autocatalytic_order": 0.0, "initiation": 0.0})
    lim = mat(lim, lim.shape[1])

    fin = [np.isfinite(a) for a in (C, m, ua, Ta, T0, P0, H)]
    _bad(~np.logical_and.reduce(fin), "non-finite per-sample input")
    _bad(~(C > 0), "heat_capacity must be positive")
    _bad(~(m > 0), "contents_mass must be positive")
    _bad(~(ua >= 0), "ua must be non-negative")
    _bad(~((Ta >= 1.0) & (Ta <= T_CLIP)), f"ambient_temperature must be within [1, {T_CLIP:g}] K")
    _bad(~((T0 >= 1.0) & (T0 <= T_CLIP)), f"initial_temperature must be within [1, {T_CLIP:g}] K")
    _bad(~((H >= MIN_HORIZON) & (H <= MAX_HORIZON)), f"horizon must be within [{MIN_HORIZON:g}, {MAX_HORIZON:g}] s")
    _bad(~((C >= 1e-6) & (m >= 1e-6)), "heat_capacity and contents_mass must be at least 1e-6 (J/K, kg)")
    for name, a in (("heat_capacity", C), ("contents_mass", m), ("ua", ua), ("constant_power", P0),
                    ("decaying_power", Pd), ("media_ua", mua), ("specific_power", q),
                    ("heat_of_reaction", np.nan_to_num(dh)), ("decay_time", ad)):
        _bad(np.abs(a) > MAX_MAGNITUDE, f"{name} must be at most {MAX_MAGNITUDE:g} in magnitude (SI)")
    _bad(E > MAX_ACTIVATION_ENERGY, f"activation_energy must be at most {MAX_ACTIVATION_ENERGY:g} J/mol")
    for name, a in (("decaying_power", Pd), ("media_ua", mua), ("specific_power", q),
                    ("reference_temperature", Tr), ("activation_energy", E), ("order", n),
                    ("initial_conversion", X0), ("decay_time", ad), ("media_temperature", mT)):
        _bad(~np.isfinite(a), f"{name} must be finite")
    _bad(~(ad > 0), "decay_time must be positive")
    _bad(~(mua >= 0), "media_ua must be non-negative")
    _bad(~((mT >= 1.0) & (mT <= T_CLIP)), f"media_temperature must be within [1, {T_CLIP:g}] K")
    _bad(~(q >= 0), "specific_power must be non-negative")
    _bad(~((Tr >= 1.0) & (Tr <= T_CLIP)), f"reference_temperature must be within [1, {T_CLIP:g}] K")
    _bad(~(E >= 0), "activation_energy must be non-negative")
    _bad(~((n >= 0) & (n <= MAX_ORDER)), f"order must be within [0, {MAX_ORDER:g}]")
    _bad(~(np.isnan(dh) | ((dh > 0) & np.isfinite(dh))), "heat_of_reaction must be positive or NaN")
    _bad(~((X0 >= 0) & (X0 <= 1)), "initial_conversion must be within [0, 1]")
    _bad(~(np.isfinite(am) & (am >= 0) & (am <= MAX_ORDER)), f"autocatalytic_order must be within [0, {MAX_ORDER:g}]")
    _bad(~(np.isfinite(az) & (az >= 0) & (az <= MAX_MAGNITUDE)), "initiation must be finite and >= 0")
    _bad((am > 0) & np.isnan(dh), "an autocatalytic source (autocatalytic_order > 0) needs a heat_of_reaction")
    _bad(~(np.isfinite(lim) & (lim > 0) & (lim <= T_CLIP)), f"limits must be within (0, {T_CLIP:g}] K")
    hi = lim.max(axis=1, initial=0.0)
    if stop_temperature is None:
        stop = np.maximum.reduce([np.full(N, DEFAULT_CEILING), hi + CEILING_MARGIN, T0 + CEILING_MARGIN])
    else:
        stop = vec(_per_sample("stop_temperature", stop_temperature))
        _bad(~(np.isfinite(stop) & (stop <= T_CLIP)), f"stop_temperature must be finite and at most {T_CLIP:g} K")
        _bad(~(stop >= hi), "stop_temperature must be at or above every limit of its sample")
    _bad(~(stop <= T_CLIP), f"the stop temperature must be at most {T_CLIP:g} K")
    f = params.forcing
    if f is None:
        fa, ftw, fs, fday, fs0 = np.zeros(N), np.zeros(N), np.zeros(N), np.full(N, 43200.0), np.zeros(N)
    else:
        fa, ftw, fs, fday, fs0 = (vec(_per_sample(k, getattr(f, k))) for k in
                                  ("air", "warmest_time", "solar", "day_length", "start_time"))
        _bad(~np.logical_and.reduce([np.isfinite(a) for a in (fa, ftw, fs, fday, fs0)]), "non-finite forcing")
        _bad(~((fday > 0) & (fday <= 86400.0)), "forcing.day_length must be within (0, 86400] s")
    return _Inputs(C, m, ua, Ta, T0, P0, Pd, ad, mua, mT, q, Tr, E, n, dh, X0, am, az, lim, H, stop,
                   fa, ftw, fs, fday, fs0, np.zeros(N, dtype=bool))


# --------------------------------------------------------------------------- per-sample coefficients


class _Coef:
    """Per-sample coefficients of the right-hand side and event data; the sample axis is last."""

    per_sample = ("iC", "mC", "g", "p0", "lncap", "H", "stop", "hmax", "peakT", "peakt", "monotone",
                  "fa", "ftw", "fs", "fday", "fs0")
    per_item = ("pd", "nia", "lnq", "act", "er", "itr", "pw", "cu", "cw", "umode", "lim", "reached", "atol",
                "dTad", "am", "az", "auto", "xu")
    shared = ("cols", "K", "J", "n", "all_tracked", "rel")

    def take(self, rows):
        out = _Coef.__new__(_Coef)
        for k in self.per_sample:
            setattr(out, k, getattr(self, k)[rows])
        for k in self.per_item:
            setattr(out, k, getattr(self, k)[:, rows])
        for k in self.shared:
            setattr(out, k, getattr(self, k))
        out.flags()
        return out

    def extend(self, other):
        out = _Coef.__new__(_Coef)
        for k in self.per_sample:
            setattr(out, k, np.concatenate([getattr(self, k), getattr(other, k)]))
        for k in self.per_item:
            setattr(out, k, np.concatenate([getattr(self, k), getattr(other, k)], axis=1))
        for k in self.shared:
            setattr(out, k, getattr(self, k))
        out.flags()
        return out

    def flags(self):
        """Shortcuts valid for every sample of the set (they only skip work)."""
        self.all_active = bool(self.act.all())
        self.any_cycle = bool((self.fa != 0.0).any() or (self.fs != 0.0).any())
        self.any_umode = bool(self.umode.any())
        self.pw_zero = not self.pw.any()
        self.pw_one = bool((self.pw == 1.0).all())
        self.any_auto = bool(self.auto.any())


def _coefficients(inp: _Inputs, rows, cols, rtol) -> tuple[_Coef, np.ndarray]:
    """Coefficients of samples ``rows`` and their initial state (n, M)."""
    P = _Coef()
    C, m = inp.C[rows], inp.m[rows]
    P.iC = 1.0 / C
    P.mC = m / C
    P.g = inp.ua[rows] + inp.mua[rows].sum(axis=1)
    drive = inp.ua[rows] * inp.Ta[rows] + (inp.mua[rows] * inp.mT[rows]).sum(axis=1)
    P.p0 = inp.P0[rows] + drive  # W: constant sources and the drive of ambient and media
    P.pd = np.ascontiguousarray(inp.Pd[rows].T)
    # with no decaying source of negative power, a sample that cools keeps cooling (see _advance)
    P.monotone = (P.pd >= 0.0).all(axis=0)
    P.nia = np.ascontiguousarray(-1.0 / inp.ad[rows].T)
    q = inp.q[rows].T
    P.act = (q > 0).astype(float)
    P.lnq = np.log(np.where(q > 0, q, 1.0))
    P.er = inp.E[rows].T / GAS_CONSTANT
    P.itr = 1.0 / inp.Tr[rows].T
    P.lncap = np.log(RATE_CAP) - np.log(P.mC)
    dh = inp.dh[rows].T
    order = inp.n[rows].T
    tracked = np.isfinite(dh)
    umode = tracked & (order < 1.0)
    wmode = tracked & ~umode
    safe_dh = np.where(tracked, dh, 1.0)
    P.pw = np.where(umode, order / np.where(umode, 1.0 - order, 1.0), np.where(wmode, order, 0.0))
    P.cu = np.where(umode, (1.0 - order) / safe_dh, 0.0)
    P.cw = np.where(wmode, 1.0 / safe_dh, 0.0)
    P.umode = umode
    # autocatalytic sources: f = (1 - X)^n (X^m + z), the factor from core.arrhenius.autocatalytic_term;
    # X = 1 - v for the state v = w, X = 1 - u^xu (xu = 1 / (1 - n)) for the state u
    P.am = np.where(tracked, inp.am[rows].T, 0.0)
    P.az = np.where(tracked, inp.az[rows].T, 0.0)
    P.auto = P.am > 0
    P.xu = np.where(umode, 1.0 / np.where(umode, 1.0 - order, 1.0), 1.0)
    # an autocatalytic rate can grow as the reactant falls: no early finish of cooling samples
    P.monotone = P.monotone & ~P.auto.any(axis=0)
    P.cols = cols
    P.K = len(cols)
    P.J = q.shape[0]
    P.n = P.K + 2
    P.all_tracked = P.K == P.J
    P.H = inp.horizon[rows].copy()
    P.stop = inp.stop[rows].copy()
    P.hmax = MAX_STEP_FRACTION * P.H
    P.fa, P.ftw, P.fs, P.fday, P.fs0 = (a[rows].copy() for a in (inp.fa, inp.ftw, inp.fs, inp.fday, inp.fs0))
    cyc = (P.fa != 0.0) | (P.fs != 0.0)
    P.hmax = np.where(cyc, np.minimum(P.hmax, CYCLE_MAX_STEP), P.hmax)  # follow the sun and the air
    P.monotone = P.monotone & ~cyc  # the cycle may turn a cooling sample round
    P.monotone = P.monotone & ~inp.follow[rows]  # the end state at the horizon is wanted
    P.lim = np.ascontiguousarray(inp.limits[rows].T)
    T0 = inp.T0[rows]
    P.reached = P.lim <= T0
    P.peakT = T0.copy()  # running peak temperature, K, and the first time it was reached, s
    P.peakt = np.zeros(T0.size)
    # error scales (n, M): T relative, with atol 1e-3 rtol K; time relative to itself; a
    # conversion state absolute, rtol T0 / dT_ad (the heat it stands for, in kelvin, equals
    # the temperature tolerance), within [1e-2, 1e2] rtol
    P.rel = np.concatenate([[rtol], np.zeros(P.K), [rtol]])[:, None]
    atol = np.zeros((P.n, T0.size))
    atol[0] = 1e-3 * rtol
    P.dTad = np.zeros((P.K, T0.size))  # adiabatic temperature rise of the whole charge, K
    for c, j in enumerate(cols):
        dT_ad = np.where(tracked[j], safe_dh[j] * P.mC, 1.0)
        atol[1 + c] = rtol * np.clip(T0 / dT_ad, 1e-2, 1e2)
        P.dTad[c] = np.where(tracked[j], dT_ad, 0.0)
    atol[-1] = 1e-30  # s
    P.atol = atol
    P.flags()

    Z = np.zeros((P.n, T0.size))
    Z[0] = T0
    w0 = 1.0 - inp.X0[rows].T
    for c, j in enumerate(cols):
        expo = np.where(umode[j], 1.0 - order[j], 1.0)
        u0 = np.where(umode[j], np.power(np.maximum(w0[j], 0.0), expo), w0[j])
        Z[1 + c] = np.where(tracked[j], u0, 0.0)
    return P, Z


# --------------------------------------------------------------------------- right-hand side


def _flux(P: _Coef, Z, jac=False):
    """dz/ds of the stretched system at states Z (n, M); with ``jac`` also dG/dz (n, n, M)."""
    n, M = Z.shape
    T = Z[0]
    Te = np.minimum(np.maximum(T, 1.0), T_CLIP)
    invT = 1.0 / Te
    net = P.p0 - P.g * Te  # W, all but the Arrhenius sources
    dnet_dt = None
    if P.pd.shape[0]:
        e = P.pd * np.exp(np.minimum(np.maximum(Z[-1] * P.nia, -700.0), 0.0))  # t < 0 only in a stage
        net += e.sum(axis=0)
        if jac:
            dnet_dt = (e * P.nia).sum(axis=0)
    if P.any_cycle:
        forcing = CycleForcing(P.fa, P.ftw, P.fs, P.fday, P.fs0)
        net = net + forcing.power(Z[-1])
        if jac:
            dnet_dt = forcing.power_rate(Z[-1]) + (dnet_dt if dnet_dt is not None else 0.0)
    J, K = P.J, P.K
    F = np.empty((n, M))
    F[-1] = 1.0
    if J:
        ex = log_arrhenius_rate(invT, P.lnq, P.er, P.itr, P.lncap, LN_RATE_FLOOR)
        capped = ex >= P.lncap
        k = np.exp(ex)
        if not P.all_active:
            k *= P.act
        if K:
            if P.all_tracked:
                V = Z[1:1 + J]
            else:
                V = np.zeros((J, M))
                V[P.cols] = Z[1:1 + K]
            if P.any_umode:  # a finished n < 1 source releases nothing
                kl = np.where(P.umode & (V <= 0.0), 0.0, k)
            else:
                kl = k
            if P.any_auto:  # kl times X^m + z; the slope of that factor with the state for the Jacobian
                Vc = np.minimum(np.maximum(V, 0.0), 1.0)
                X = np.where(P.umode, 1.0 - np.power(Vc, P.xu), 1.0 - Vc)
                ga, dga = autocatalytic_term(X, P.am, P.az)
                ga = np.where(P.auto, ga, 1.0)
                dX_dv = np.where(P.umode, -P.xu * np.power(Vc, P.pw), -1.0)
                kl0, kl = kl, kl * ga
            # states lie in [0, 1]; a stage of a step about to be rejected may not, and is held
            # within [0, 4] so that no power overflows
            if P.pw_zero:
                qs = kl
            elif P.pw_one:
                base = np.minimum(np.maximum(V, 0.0), 4.0)
                qs = kl * base
            else:
                base = np.minimum(np.maximum(V, 0.0), 4.0)
                qs = kl * np.power(base, P.pw)
            rate = -(P.cu * kl + P.cw * qs)
            F[1:1 + K] = rate if P.all_tracked else rate[P.cols]
        else:
            qs = k
        F[0] = net * P.iC + P.mC * (qs[0] if J == 1 else qs.sum(axis=0))
    else:
        F[0] = net * P.iC
    # rho = sqrt(1 + (F_T / V)^2 + sum (F_v / W)^2); |F| is bounded by the rate cap and the clip
    acc = F[0] * (1.0 / STRETCH_RATE_T)
    acc *= acc
    acc += 1.0
    for c in range(K):
        fv = F[1 + c] * (1.0 / STRETCH_RATE_X)
        acc += fv * fv
    irho = 1.0 / np.sqrt(acc)
    G = F * irho
    if not jac:
        return G
    JF = np.zeros((n, n, M))
    inside = (T > 1.0) & (T < T_CLIP)
    JF[0, 0] = -P.g * P.iC * inside
    if dnet_dt is not None:
        JF[0, -1] = dnet_dt * P.iC
    if J:
        slope = P.er * (invT * invT)
        slope *= ~capped & inside
        qsl = qs * slope
        JF[0, 0] += P.mC * (qsl[0] if J == 1 else qsl.sum(axis=0))
        if K:
            if P.pw_zero:
                dqdv = None
            elif P.pw_one:
                dqdv = kl
            else:
                dqdv = kl * P.pw * np.power(np.maximum(base, 1e-12), P.pw - 1.0)
            drdv = None
            if P.any_auto:  # d(k g(X(v)) v^pw)/dv and d(rate)/dv of the autocatalytic factor
                dgv = np.where(P.auto, kl0 * dga * dX_dv, 0.0)
                pv = 1.0 if P.pw_zero else np.power(np.minimum(np.maximum(V, 0.0), 4.0), P.pw)
                dqdv = dgv * pv if dqdv is None else dqdv + dgv * pv
                drdv = -(P.cu * dgv + P.cw * dqdv)
            drdT = rate * slope
            for c, j in enumerate(P.cols):
                JF[1 + c, 0] = drdT[j]
                if dqdv is not None:
                    JF[0, 1 + c] = P.mC * dqdv[j]
                    JF[1 + c, 1 + c] = -P.cw[j] * dqdv[j] if drdv is None else drdv[j]
    # d rho / dz = (F_T JF[0] / V^2 + sum F_v JF[v] / W^2) / rho
    grad = JF[0] * (F[0] * (irho / STRETCH_RATE_T ** 2))
    for c in range(K):
        grad += JF[1 + c] * (F[1 + c] * (irho / STRETCH_RATE_X ** 2))
    JF -= G[:, None, :] * grad[None, :, :]
    JF *= irho
    return G, JF


# --------------------------------------------------------------------------- batched linear algebra


def _lu_pivoted(A):
    """LU factors with partial pivoting of matrices A (n, n, M), in place; see :func:`_lu`."""
    n, _, M = A.shape
    perm = np.repeat(np.arange(n)[:, None], M, axis=1)
    scale = np.abs(A).max(axis=(0, 1))
    singular = ~(scale > 0) | ~np.isfinite(scale)
    scale = np.where(singular, 1.0, scale)
    inv_diag = np.empty((n, M))
    for k in range(n):
        if k < n - 1:
            p = k + np.argmax(np.abs(A[k:, k]), axis=0)
            sw = np.flatnonzero(p != k)
            if sw.size:
                pk = p[sw]
                rowk = A[k][:, sw].copy()
                A[k][:, sw] = A[pk, :, sw].T
                A[pk, :, sw] = rowk.T
                pr = perm[k, sw].copy()
                perm[k, sw] = perm[pk, sw]
                perm[pk, sw] = pr
        piv = A[k, k]
        bad = ~(np.abs(piv) > 1e-14 * scale)
        singular |= bad
        piv = np.where(bad, scale, piv)
        A[k, k] = piv
        inv_diag[k] = 1.0 / piv
        for i in range(k + 1, n):
            l = A[i, k] * inv_diag[k]
            A[i, k] = l
            A[i, k + 1:] -= l * A[k, k + 1:]
    return A, perm, inv_diag, singular


def _lu(A, d):
    """LU factors of matrices A (n, n, M) (Golub and Van Loan 2013, section 3.4), in place.

    Elimination runs without row exchanges while every pivot is at least a
    tenth of the largest entry below it in its column (threshold pivoting,
    growth below 10^(n-1)) and above 1e-14 d (d (M,) the scale of the matrix,
    here 1/(gamma h)); the few matrices that fail this test are factored again
    from a copy with partial pivoting, where a pivot below 1e-14 of the largest
    entry marks the matrix singular (that step is then rejected).  Returns (A
    holding L below and U on and above the diagonal, flat gather index of the
    row permutation or None, 1 / diag(U) (n, M), singular (M,)).
    """
    n, _, M = A.shape
    if n == 1:
        raise ValueError("at least two states")  # pragma: no cover - T and t are always present
    A0 = A.copy()
    d = np.broadcast_to(d, (M,))
    weak = np.zeros(M, dtype=bool)
    inv_diag = np.empty((n, M))
    for k in range(n):
        piv = A[k, k]
        apiv = np.abs(piv)
        if k < n - 1:
            below = np.abs(A[k + 1, k])
            for i in range(k + 2, n):
                below = np.maximum(below, np.abs(A[i, k]))
            weak |= ~(apiv >= 0.1 * below)
        ok = apiv > 1e-14 * d
        inv_diag[k] = 1.0 / np.where(ok, piv, 1.0)
        weak |= ~ok
        for i in range(k + 1, n):
            l = A[i, k] * inv_diag[k]
            A[i, k] = l
            A[i, k + 1:] -= l * A[k, k + 1:]
    singular = np.zeros(M, dtype=bool)
    flat = None
    w = np.flatnonzero(weak)
    if w.size:
        Aw, perm_w, inv_w, sing_w = _lu_pivoted(A0[:, :, w])
        A[:, :, w] = Aw
        inv_diag[:, w] = inv_w
        singular[w] = sing_w
        perm = np.repeat(np.arange(n)[:, None], M, axis=1)
        perm[:, w] = perm_w
        flat = (perm * M + np.arange(M)).ravel()
    return A, flat, inv_diag, singular


def _solve(lu, b):
    """Solve with the factors of :func:`_lu` for right-hand sides b (n, M)."""
    A, flat, inv_diag, _ = lu
    n = b.shape[0]
    x = b.copy() if flat is None else b.ravel()[flat].reshape(b.shape)
    for i in range(1, n):
        for j in range(i):
            x[i] -= A[i, j] * x[j]
    for i in range(n - 1, -1, -1):
        for j in range(i + 1, n):
            x[i] -= A[i, j] * x[j]
        x[i] *= inv_diag[i]
    return x


# --------------------------------------------------------------------------- one RODAS step


def _combine(coef, U):
    """sum_j coef_j U_j over the first len(coef) stages U (.., n, M).

    Plain array arithmetic: a BLAS call here costs more in thread start-up than it saves.
    """
    r = coef[0] * U[0]
    for j in range(1, len(coef)):
        r += coef[j] * U[j]
    return r


def _rodas_step(P, Z, G0, JG, h):
    """One RODAS step of size h (M,) from Z; returns (Z1, U, singular) with stages U (6, n, M)."""
    n, M = Z.shape
    A = -JG
    d = 1.0 / (_GAMMA * h)
    for i in range(n):
        A[i, i] += d
    lu = _lu(A, d)
    U = np.empty((6, n, M))
    ih = 1.0 / h
    U[0] = _solve(lu, G0)
    Y = None
    for i in range(1, 6):
        Y = Z + _combine(_A_ROWS[i], U) if i < 5 else Y + U[4]
        rhs = _flux(P, Y) + _combine(_C_ROWS[i], U) * ih
        U[i] = _solve(lu, rhs)
    return Y + U[5], U, lu[3]


def _cubic(a, b, c, d, th):
    """Continuous extension (1 - th) a + th (b + (1 - th)(c + th d))."""
    return a + th * ((b - a) + (1.0 - th) * (c + th * d))


def _cubic_slope(a, b, c, d, th):
    return (b - a) + (1.0 - 2.0 * th) * (c + th * d) + th * (1.0 - th) * d


def _first_root(a, b, c, d, target, hi):
    """First theta in (0, hi] where the cubic extension reaches ``target``; arrays (m,).

    The value at 0 is below target and the value at ``hi`` at or above it.  The
    first sign change on a grid of 8 cells brackets the root, which is
    then found by Newton's method safeguarded by bisection.
    """
    m = a.size
    th_grid = _GRID * hi[None, :]
    vals = _cubic(a, b, c, d, th_grid) - target
    above = vals >= 0.0
    above[-1] = True
    k = np.argmax(above[1:], axis=0) + 1
    ar = np.arange(m)
    lo, up = th_grid[k - 1, ar], th_grid[k, ar]
    flo, fup = np.minimum(vals[k - 1, ar], 0.0), vals[k, ar]
    den = fup - flo
    x = np.where(den > 0, lo - flo * (up - lo) / np.where(den > 0, den, 1.0), 0.5 * (lo + up))
    x = np.clip(x, lo, up)
    for _ in range(_ROOT_ITER):
        f = _cubic(a, b, c, d, x) - target
        pos = f >= 0.0
        up = np.where(pos, x, up)
        lo = np.where(pos, lo, x)
        s = _cubic_slope(a, b, c, d, x)
        ok = np.abs(s) > 1e-200
        xn = x - f / np.where(ok, s, 1.0)
        xn = np.where(ok & (xn >= lo) & (xn <= up), xn, 0.5 * (lo + up))
        done = (np.abs(xn - x) <= 1e-15) | (f == 0.0)
        x = np.where(f == 0.0, x, xn)
        if done.all():
            break
    return x


# --------------------------------------------------------------------------- the working set


class _Out(NamedTuple):
    times: np.ndarray  # (N, L)
    peakT: np.ndarray
    peakt: np.ndarray
    pstop: np.ndarray
    status: np.ndarray
    steps: np.ndarray
    endT: np.ndarray  # (N,) temperature at the end of the run (horizon or stop), K
    endrate: np.ndarray  # (N,) dT/dt there, K/s
    endt: np.ndarray  # (N,) time of the end, s
    endX: np.ndarray  # (N, J) conversion of each source there (NaN: not tracked)


class _Work:
    """Samples being integrated together: coefficients, states and step-size controller data.

    Finished samples are marked ``dead`` and dropped in batches (``compact``).
    """

    fields = ("h", "h_old", "err_old", "first", "rejected", "nstep", "gidx", "dead")

    def __init__(self, inp, rows, cols, rtol):
        self.P, self.Z = _coefficients(inp, rows, cols, rtol)
        P, Z = self.P, self.Z
        G0 = _flux(P, Z)
        # first step: a 1 % change of T or of a conversion state, at most 1e-5 of the horizon
        scale = np.concatenate([[1.0], np.full(P.K, 1e-2)])[:, None] + 1e-2 * np.abs(Z[:-1])
        rate = (np.abs(G0[:-1]) / scale).max(axis=0)
        self.h = np.minimum(1e-5 * P.H, 1.0 / np.maximum(rate, 1e-300))
        self.h_old = self.h.copy()
        self.err_old = np.ones(rows.size)
        self.first = np.ones(rows.size, dtype=bool)
        self.rejected = np.zeros(rows.size, dtype=bool)
        self.nstep = np.zeros(rows.size, dtype=np.int64)
        self.gidx = np.asarray(rows)
        self.dead = np.zeros(rows.size, dtype=bool)
        self.n_dead = 0

    @property
    def size(self):
        return self.gidx.size

    @property
    def alive(self):
        return self.gidx.size - self.n_dead

    def compact(self):
        if self.n_dead:
            rows = np.flatnonzero(~self.dead)
            self.P = self.P.take(rows)
            self.Z = self.Z[:, rows]
            for k in self.fields:
                setattr(self, k, getattr(self, k)[rows])
            self.n_dead = 0

    def extend(self, other):
        self.compact()
        self.P = self.P.extend(other.P)
        self.Z = np.concatenate([self.Z, other.Z], axis=1)
        for k in self.fields:
            setattr(self, k, np.concatenate([getattr(self, k), getattr(other, k)]))


def _run_queue(inp: _Inputs, rows, cols, rtol, capacity, out: _Out):
    """Integrate samples ``rows`` with a working set of about ``capacity`` samples, refilled as they finish."""
    pos = 0
    W = None
    # every sample gets at most MAX_STEPS attempts and each pass gives one to every live sample
    # in the set; the set is refilled once it has lost a quarter, so this bound is never reached
    max_pass = MAX_STEPS * (4 * (rows.size // max(capacity, 1)) + 8)
    for _ in range(max_pass):
        if pos < rows.size and (W is None or W.alive <= 0.75 * capacity):
            new = rows[pos:pos + capacity - (0 if W is None else W.alive)]
            pos += new.size
            add = _Work(inp, new, cols, rtol)
            if W is None:
                W = add
            else:
                W.extend(add)
        if W is None or W.alive == 0:
            break
        if W.n_dead * 8 > W.size:
            W.compact()
        _advance(W, out)
    if W is not None and W.alive:  # pragma: no cover - see max_pass
        g = ~W.dead
        out.status[W.gidx[g]] = STATUS_FAILED
        out.steps[W.gidx[g]] = W.nstep[g]
        out.peakT[W.gidx[g]] = W.P.peakT[g]
        out.peakt[W.gidx[g]] = W.P.peakt[g]


def _advance(W: _Work, out: _Out):
    """One attempted step for every live sample of the set, then events and finishing.

    Cooling samples finish early.  With time-independent sources, or decaying
    sources of non-negative power, f = dT/dt obeys f' = a(t) f + b(t) with
    b = (m/C) sum_j (dq_j/dw_j) dw_j/dt - sum_d P_d/(a_d C) e^(-t/a_d) <= 0
    (every rate grows with the reactant left, which only decreases), so
    f(t0) < 0 gives f(t) < 0 for all later t: no limit above the present
    temperature is reached and the running peak is final.  The test is
    f < -margin, the margin covering a state error of 1000 local tolerances
    (for a reactant all but used up, the heat it can still release, which
    must also leave T below the next limit).  Two kinds of sample never finish
    early: one with an autocatalytic source (its rate can grow as the reactant
    falls) and one with a daily cycle (the air and the sun may turn it round).
    """
    P, Z = W.P, W.Z
    G0, JG = _flux(P, Z, jac=True)
    # largest step: a tenth of the horizon in time t (dt/ds = G_t = 1/rho)
    h = np.minimum(W.h, P.hmax / G0[-1])
    live_set = ~W.dead
    cooling = live_set & P.monotone & (G0[0] < 0.0)
    if cooling.any():
        # state errors of 1000 tolerances: in T through dT/ds; in a conversion state through
        # dT/ds, or, for a reactant all but used up, through the heat it can still release
        dT = 1e3 * (P.atol[0] + P.rel[0] * np.abs(Z[0]))
        margin = np.zeros(Z.shape[1])
        rise = np.zeros(Z.shape[1])
        for c in range(P.K):
            dv = 1e3 * P.atol[1 + c]
            spent = np.abs(Z[1 + c]) <= dv
            heat = P.dTad[c] * (np.maximum(Z[1 + c], 0.0) + 2.0 * dv)
            rise += np.where(spent, heat, 0.0)
            margin += np.where(spent, 0.0, np.abs(JG[0, 1 + c]) * dv)
        margin += np.abs(JG[0, 0]) * (dT + rise)
        nxt = np.where(P.reached, np.inf, P.lim).min(axis=0, initial=np.inf)
        cooling &= (G0[0] < -margin) & (Z[0] + dT + rise < nxt)
    if cooling.any():
        live_set &= ~cooling
    if P.any_umode:
        # aim at the end of an n < 1 reaction: no step longer than u / |du/ds| (Newton's estimate)
        for c, j in enumerate(P.cols):
            r = 1 + c
            ending = P.umode[j] & (Z[r] > 0.0) & (G0[r] < 0.0)
            if ending.any():
                dist = Z[r] / np.where(ending, -G0[r], 1.0)
                h = np.where(ending, np.minimum(h, dist), h)
    Z1, U, singular = _rodas_step(P, Z, G0, JG, h)
    W.nstep += live_set
    sc = P.atol + P.rel * np.maximum(np.abs(Z), np.abs(Z1))
    err = (np.abs(U[5]) / sc).max(axis=0)
    err = np.where(singular | ~np.isfinite(err), 1e10, np.minimum(err, 1e10))
    # step-size controller (Hairer and Wanner 1996, IV.8; predictive after an accepted step)
    fac = np.clip(np.power(err, 0.25) / _SAFETY, _FAC_MAX_GROW, _FAC_MAX_SHRINK)
    ok = (err <= 1.0) & live_set
    pred = ok & ~W.first
    if pred.any():
        fp = (W.h_old / h) * np.power(err * err / W.err_old, 0.25) / _SAFETY
        fac = np.where(pred, np.maximum(fac, np.clip(fp, _FAC_MAX_GROW, _FAC_MAX_SHRINK)), fac)
    h_new = h / fac
    h_new = np.where(ok & W.rejected, np.minimum(h_new, h), h_new)

    D1 = _combine(_D1, U)
    D2 = _combine(_D2, U)
    # end of an n < 1 reaction: a step may not carry u below zero; it is cut to end on u = 0
    if P.any_umode:
        for c, j in enumerate(P.cols):
            um = P.umode[j]
            if not um.any():
                continue
            r = 1 + c
            live = um & (Z[r] > 0.0) & live_set
            land_tol = _LAND_TOL * P.atol[r]
            over = live & (Z1[r] < -land_tol)
            near = live & ~over & (Z1[r] <= land_tol)
            if over.any():
                s = np.flatnonzero(over)
                th = _first_root(-Z[r, s], -Z1[r, s], -D1[r, s], -D2[r, s], 0.0, np.ones(s.size))
                hl = np.maximum(th, 1e-3) * h[s]
                h_new[s] = np.where(ok[s], hl, np.minimum(hl, h_new[s]))
                ok[s] = False
            Z1[r] = np.where(near & ok, 0.0, Z1[r])

    W.rejected = ~ok
    W.h_old = np.where(ok, h, W.h_old)
    W.err_old = np.where(ok, np.maximum(err, 1e-2), W.err_old)
    W.first &= ~ok
    finished = _events(P, ok, W.gidx, Z, Z1, D1, D2, out, (G0, JG, h))
    if ok.all():
        W.Z = Z1
    else:
        Z[:, ok] = Z1[:, ok]
    W.h = h_new
    fail = W.nstep >= MAX_STEPS
    fail &= live_set
    if finished is not None:
        fail &= ~finished
    if fail.any():
        out.status[W.gidx[fail]] = STATUS_FAILED
        finished = fail if finished is None else finished | fail
    if cooling.any():
        finished = cooling if finished is None else finished | cooling
    if finished is not None and finished.any():
        g = W.gidx[finished]
        out.steps[g] = W.nstep[finished]
        out.peakT[g] = P.peakT[finished]
        out.peakt[g] = P.peakt[finished]
        W.dead |= finished
        W.n_dead = int(W.dead.sum())


def _refine_crossings(P, rows, za, step, th, target, t_dense):
    """Times at which T = target: a re-step of length theta h from the step's start, then one Newton step.

    The continuous extension is of order 3 only; the re-step has the full
    order 4 of the method, and the remaining temperature difference (of the
    size of the extension's error) is closed by a linear correction along the
    exact right-hand side.  Samples may appear once per limit in ``rows``.
    """
    G0, JG, h = step
    Ps = P.take(rows)
    Zr, _, sing = _rodas_step(Ps, za, G0[:, rows], JG[:, :, rows], h[rows] * th)
    Gr = _flux(Ps, Zr)
    ok = ~sing & (Gr[0] > 0.0) & np.isfinite(Zr).all(axis=0) & (np.abs(target - Zr[0]) < 1.0)
    t_new = Zr[-1] + (target - Zr[0]) * Gr[-1] / np.where(ok, Gr[0], 1.0)
    return np.where(ok, t_new, t_dense)


def _refine_peaks(P, rows, za, step, th, T_dense, t_dense):
    """Interior maxima of T: a re-step of length theta h to the extension's maximum, then one
    Newton step on dT/ds = 0 along the exact right-hand side; (T_peak, t_peak) for ``rows``."""
    G0, JG, h = step
    Ps = P.take(rows)
    hs = h[rows] * th
    Zr, _, sing = _rodas_step(Ps, za, G0[:, rows], JG[:, :, rows], hs)
    Gr, Jr = _flux(Ps, Zr, jac=True)
    curv = (Jr[0] * Gr).sum(axis=0)  # d(dT/ds)/ds along the solution
    ok = ~sing & (curv < 0.0) & np.isfinite(Zr).all(axis=0)
    ds = -Gr[0] / np.where(ok, curv, -1.0)
    ok &= np.abs(ds) <= 0.5 * hs
    T_new = Zr[0] + 0.5 * ds * Gr[0]  # maximum of the local quadratic
    t_new = Zr[-1] + ds * Gr[-1]
    return np.where(ok, T_new, T_dense), np.where(ok, t_new, t_dense)


def _peak_theta(a, b, c, d):
    """Interior maximum of the cubic extension, for slope > 0 at 0 and <= 0 at 1; arrays (m,).

    The slope alpha + beta th + gamma th^2 (alpha = b - a + c, beta = 2 (d - c),
    gamma = -3 d) has exactly one root in (0, 1]; Newton's method safeguarded by
    bisection finds it.
    """
    al = b - a + c
    be = 2.0 * (d - c)
    ga = -3.0 * d
    lo = np.zeros(a.size)
    up = np.ones(a.size)
    f1 = al + be + ga
    x = np.clip(al / np.where(al - f1 > 0, al - f1, 1.0), 0.0, 1.0)
    for _ in range(_ROOT_ITER):
        f = al + x * (be + x * ga)
        neg = f <= 0.0
        up = np.where(neg, x, up)
        lo = np.where(neg, lo, x)
        s = be + 2.0 * ga * x
        ok = s < -1e-300 * np.abs(f)
        xn = x - f / np.where(ok, s, -1.0)
        xn = np.where(ok & (xn >= lo) & (xn <= up), xn, 0.5 * (lo + up))
        done = (np.abs(xn - x) <= 1e-15) | (f == 0.0)
        x = np.where(f == 0.0, x, xn)
        if done.all():
            break
    return x


def _events(P, ok, gidx, Z, Z1, D1, D2, out: _Out, step):
    """Events inside the accepted steps (mask ``ok``); updates P and ``out``; returns 'finished'.

    In order: the interior maximum of T on the continuous extension; the first
    crossings of the horizon (by t), of the stop temperature and of every limit
    not yet reached (one batched root search); limit crossings beyond the
    horizon or the stop point are dropped, the others refined by a re-step;
    then the running peak and the finishing samples.
    """
    M = ok.size
    Ta, Tb, c1, c2 = Z[0], Z1[0], D1[0], D2[0]
    dT = Tb - Ta
    # interior maximum of T on the continuous extension (slope + at 0, <= 0 at 1)
    pk = np.flatnonzero(ok & (dT + c1 > 0.0) & (dT - c1 - c2 <= 0.0))
    if pk.size:
        th_pk = _peak_theta(Ta[pk], Tb[pk], c1[pk], c2[pk])
        Tp_pk = _cubic(Ta[pk], Tb[pk], c1[pk], c2[pk], th_pk)
        tp_pk = _cubic(Z[-1, pk], Z1[-1, pk], D1[-1, pk], D2[-1, pk], th_pk)
        Tp_pk, tp_pk = _refine_peaks(P, pk, Z[:, pk], step, th_pk, Tp_pk, tp_pk)
        Tmax = Tb.copy()
        Tmax[pk] = np.maximum(Tb[pk], Tp_pk)
    else:
        Tmax = Tb
    hor = np.flatnonzero(ok & (Z1[-1] >= P.H))
    stp = np.flatnonzero(ok & (Tmax >= P.stop))
    lim_hit = (Tmax >= P.lim) & ~P.reached
    lim_hit &= ok
    lk, lr = np.nonzero(lim_hit)
    if not (hor.size or stp.size or lk.size):
        # no event: running peak only (the step's interior maximum or its end)
        s = np.flatnonzero(ok & (Tmax > P.peakT))
        if s.size:
            P.peakT[s] = Tmax[s]
            tp = Z1[-1].copy()
            if pk.size:
                inner = Tp_pk >= Tb[pk]
                tp[pk[inner]] = tp_pk[inner]
            P.peakt[s] = tp[s]
        return None
    th_p = np.full(M, 2.0)
    Tp = np.full(M, -np.inf)
    tp = np.zeros(M)
    if pk.size:
        th_p[pk] = th_pk
        Tp[pk] = Tp_pk
        tp[pk] = tp_pk
    # one batched root search: horizon (component t), stop temperature and limits (component T)
    rows = np.concatenate([hor, stp, lr])
    nh, ns = hor.size, stp.size
    comp = np.zeros(rows.size, dtype=np.intp)
    comp[:nh] = Z.shape[0] - 1
    target = np.concatenate([P.H[hor], P.stop[stp], P.lim[lk, lr]])
    a_, b_ = Z[comp, rows], Z1[comp, rows]
    hi = np.where(b_ >= target, 1.0, th_p[rows])
    hi[:nh] = 1.0
    th_all = _first_root(a_, b_, D1[comp, rows], D2[comp, rows], target, hi)
    th_h = np.full(M, 2.0)
    th_c = np.full(M, 2.0)
    th_h[hor] = th_all[:nh]
    th_c[stp] = th_all[nh:nh + ns]
    th_end = np.minimum(np.minimum(th_h, th_c), 1.0)
    # limit crossings within the step's valid part, refined
    if lk.size:
        th_l = th_all[nh + ns:]
        keep = th_l <= th_end[lr]
        r, l, th = lr[keep], lk[keep], th_l[keep]
        if r.size:
            t_dense = _cubic(Z[-1, r], Z1[-1, r], D1[-1, r], D2[-1, r], th)
            out.times[gidx[r], l] = _refine_crossings(P, r, Z[:, r], step, th, P.lim[l, r], t_dense)
            P.reached[l, r] = True
    # running peak: the interior maximum, then the end of the step (horizon or stop point)
    if pk.size:
        s = pk[(th_p[pk] <= th_end[pk]) & (Tp[pk] > P.peakT[pk])]
        if s.size:
            P.peakT[s] = Tp[s]
            P.peakt[s] = tp[s]
    fin = np.concatenate([hor, stp])
    is_stop = np.zeros(M, dtype=bool)
    is_stop[stp] = th_c[stp] <= np.minimum(th_h[stp], 1.0)
    is_hor = np.zeros(M, dtype=bool)
    is_hor[hor] = ~is_stop[hor] & (th_h[hor] <= 1.0)
    s = np.flatnonzero(ok & (Tb > P.peakT) & ~is_stop & ~is_hor)
    P.peakT[s] = Tb[s]
    P.peakt[s] = Z1[-1, s]
    if fin.size:
        f = np.unique(fin)
        end_T = np.where(is_stop[f], P.stop[f], _cubic(Ta[f], Tb[f], c1[f], c2[f], th_end[f]))
        end_t = np.where(is_hor[f], P.H[f], _cubic(Z[-1, f], Z1[-1, f], D1[-1, f], D2[-1, f], th_end[f]))
        up = end_T > P.peakT[f]
        P.peakT[f[up]] = end_T[up]
        P.peakt[f[up]] = end_t[up]
        g = gidx[f]
        out.pstop[g] = is_stop[f]
        out.status[g] = np.where(is_stop[f], STATUS_STOP, STATUS_HORIZON)
        end_T = _end_state(P, f, g, Z, Z1, D1, D2, step, th_end[f], is_stop[f], out)
        # a run still rising at its horizon peaks there: the re-stepped end, not the extension's value
        up = ~is_stop[f] & (end_T > P.peakT[f])
        P.peakT[f[up]] = end_T[up]
        P.peakt[f[up]] = out.endt[g[up]]
    return is_stop | is_hor


def _end_state(P, f, g, Z, Z1, D1, D2, step, th, at_stop, out: _Out):
    """State at the end of the run of samples ``f`` (global ``g``): the horizon, or the stop temperature.

    As for a limit crossing (:func:`_refine_crossings`): a re-step of length theta h from the step's
    start, then one Newton step along the exact right-hand side to t = horizon (or T = stop); where
    that fails, the continuous extension. The end time (horizon) or temperature (stop) is then set
    exactly, and dT/dt and the conversions are read from the state.
    """
    G0, JG, h = step
    Ps = P.take(f)
    dense = _cubic(Z[:, f], Z1[:, f], D1[:, f], D2[:, f], th[None, :])
    Zr, _, sing = _rodas_step(Ps, Z[:, f], G0[:, f], JG[:, :, f], h[f] * th)
    Gr = _flux(Ps, Zr)
    comp = np.where(at_stop, 0, Zr.shape[0] - 1)
    ar = np.arange(f.size)
    target = np.where(at_stop, Ps.stop, Ps.H)
    slope = Gr[comp, ar]
    ok = ~sing & np.isfinite(Zr).all(axis=0) & (slope > 0.0)
    ds = (target - Zr[comp, ar]) / np.where(ok, slope, 1.0)
    ok &= np.abs(ds) <= 0.5 * h[f] * np.maximum(th, 1e-3)
    Ze = np.where(ok[None, :], Zr + ds[None, :] * Gr, dense)
    Ze[comp, ar] = target
    Ge = _flux(Ps, Ze)
    out.endT[g] = Ze[0]
    out.endt[g] = Ze[-1]
    out.endrate[g] = Ge[0] / Ge[-1]
    for c, j in enumerate(P.cols):
        v = np.minimum(np.maximum(Ze[1 + c], 0.0), 1.0)
        w = np.where(Ps.umode[j], np.power(v, Ps.xu[j]), v)
        tracked = (Ps.cu[j] != 0.0) | (Ps.cw[j] != 0.0)
        out.endX[g, j] = np.where(tracked, 1.0 - w, np.nan)
    return Ze[0]


def _initial_out(inp: _Inputs) -> _Out:
    """Results before integration: limits at or below T0 reached at t = 0; T0 >= stop already stopped."""
    N = inp.C.size
    at_stop = inp.T0 >= inp.stop
    return _Out(times=np.where(inp.T0[:, None] >= inp.limits, 0.0, np.nan), peakT=inp.T0.copy(),
                peakt=np.zeros(N), pstop=at_stop.copy(), status=np.where(at_stop, STATUS_STOP, STATUS_HORIZON),
                steps=np.zeros(N, dtype=np.int64), endT=np.full(N, np.nan), endrate=np.full(N, np.nan),
                endt=np.full(N, np.nan), endX=np.full(inp.dh.shape, np.nan))


def _subset(inp: _Inputs, rows) -> _Inputs:
    return _Inputs(*(np.ascontiguousarray(a[rows]) for a in inp))


def _integrate_rows(inp: _Inputs, cols, rtol, capacity) -> _Out:
    """Integrate every sample of ``inp`` (run in this process or in a worker process)."""
    out = _initial_out(inp)
    with np.errstate(under="ignore"):
        _run_queue(inp, np.arange(inp.C.size), cols, rtol, capacity, out)
    return out


def _process_context():
    """Start method for worker processes: fork where the platform has it (no re-import of the
    caller's main module), else the platform default."""
    if "fork" in multiprocessing.get_all_start_methods():
        return multiprocessing.get_context("fork")
    return multiprocessing.get_context()  # pragma: no cover - platforms without fork


def _integrate_parallel(inp, parts, cols, rtol, chunk_size, workers):
    """Results of ``_integrate_rows`` for each part, from worker processes (None if they cannot run)."""
    try:
        pool = ProcessPoolExecutor(max_workers=workers, mp_context=_process_context(), initializer=die_with_parent,
                                   initargs=(os.getpid(),))
        try:
            futures = [pool.submit(_integrate_rows, _subset(inp, rows), cols, rtol, chunk_size) for rows in parts]
            return [f.result() for f in futures]
        except BaseException:
            stop_pool(pool)  # an error or a signal: the workers stop now
            raise
        finally:
            pool.shutdown(wait=True)
    except (BrokenProcessPool, OSError):  # pragma: no cover - e.g. no main-module guard under spawn
        return None


# --------------------------------------------------------------------------- public entry


def first_crossing_times_arrhenius(params: ArrheniusSamples, limits, horizon, *, stop_temperature=None,
                                   rtol: float = DEFAULT_RTOL, chunk_size: int = DEFAULT_CHUNK,
                                   workers: int | None = None, on_failure: str = "raise",
                                   to_horizon=False) -> ArrheniusScreen:
    r"""First time each limit temperature is reached, for N sample-cases at once.

    Parameters
    ----------
    params : ArrheniusSamples
        Parameters of the samples, SI units (see :class:`ArrheniusSamples`).
    limits : array, shape (L,) or (N, L), [K]
        Limit temperatures, shared or per sample.
    horizon : float or array (N,), [s]
        Time span examined, within [1e-9, 1e12] s.
    stop_temperature : float or array (N,), [K], optional
        A sample is no longer followed once its temperature reaches this value,
        which must be at or above its highest limit.  Default, as in the
        single-case engine: max(2000 K, highest limit + 100 K, initial
        temperature + 100 K).  Passing the highest limit saves the steps of a
        runaway above it; the peak is then only known to exceed it.
    rtol : float, [-], default 1e-9
        Relative tolerance of the local error per step, within [1e-14, 1e-3].
        The accuracy of the times it gives is measured, not implied: below
        1e-7 relative with the default on 900 random cases (see the module
        notes).
    chunk_size : int, default 8192
        Samples integrated together in one working set.
    workers : int, optional
        Worker processes (default: up to 2, the CPU count).  With fewer than
        2 ``chunk_size`` samples to integrate, or where worker processes cannot
        start, everything runs in this process; the results are the same.
    on_failure : {"raise", "flag"}, default "raise"
        A sample that needs more than ``MAX_STEPS`` attempted steps has no
        conclusion for the limits it has not reached: "raise" raises
        RuntimeError, "flag" returns it with status ``STATUS_FAILED``.
    to_horizon : bool or array of bool (N,), default False
        Follow a cooling sample to its horizon (or stop) instead of finishing it
        early (see the module notes), so that its ``end_*`` fields are known.
        The other fields do not change (an early finish only skips steps).

    Returns
    -------
    ArrheniusScreen
        ``times`` (N, L) [s]: first time each limit is reached (0 when the
        initial temperature is at or above it, NaN when it is not reached
        within the horizon); ``peak_temperature`` [K] and ``peak_time`` [s]:
        the highest temperature within the horizon and when it was first
        reached; ``peak_is_stop``, ``status`` and ``steps`` per sample;
        the state at the end of the run (``end_temperature``, ``end_rate``,
        ``end_time``, ``end_conversion``).

    Raises
    ------
    ValueError
        Inputs out of range or of inconsistent shapes (the message names the
        field, the number of samples affected and the first of them).
    RuntimeError
        A sample reached the step cap and ``on_failure`` is "raise".

    Notes
    -----
    For each sample the balance

    .. math:: C \frac{dT}{dt} = P_0 + \sum_d P_d e^{-t/a_d} + \sum_k ua_k (T_{m,k} - T)
              + m \sum_j q_j(T, X_j) - UA (T - T_a), \qquad
              \frac{dX_j}{dt} = \frac{q_j}{\Delta h_j},

    .. math:: q_j = q_{ref,j} \exp\left[-\frac{E_j}{R}\left(\frac{1}{T}
              - \frac{1}{T_{ref,j}}\right)\right] (1 - X_j)^{n_j}

    with R = 8.314462618 J/(mol K) is integrated in the stretched time s
    (:math:`dt/ds = 1/\rho`, see the module notes) by the Rosenbrock method
    RODAS (order 4, L-stable, analytic Jacobian) with per-sample step-size
    control; crossings are located on its continuous extension and refined by
    a re-step.  A conversion stops at X_j = 1 for every order.  Boiling is not
    modelled: a case with tempering credit (open venting, no gas-generating
    reaction) belongs to :func:`screening.core.arrhenius_history.integrate_history`,
    and :func:`samples_from_models` rejects it.  No warning texts are produced
    here; the single-case engine gives them for any sample of interest.

    Reached / not reached is ill-conditioned when the temperature only just
    touches a limit (a peak at the limit) or crosses it at the horizon; the
    tests accept either answer there.

    References
    ----------
    Hairer, E. and Wanner, G., *Solving Ordinary Differential Equations II:
    Stiff and Differential-Algebraic Problems*, 2nd ed., Springer (1996),
    sections IV.7 (Rosenbrock methods, RODAS) and IV.8 (step-size control).

    Hairer, E., Lubich, C. and Wanner, G., *Geometric Numerical Integration*,
    2nd ed., Springer (2006), section VIII.2 (time transformations).

    Semenov, N. N. (1928), thermal explosion of a well-stirred mass.

    Examples
    --------
    Two samples checked by hand: the Incropera et al. Example 5.1 junction (from memory;
    C / UA = 1 s, no source) from 25 degC in gas at 200 degC reaches 199 degC at
    ln(175) = 5.164786 s; a first-order reaction with E = 0, q_ref = 10 W/kg,
    Delta h = 200 kJ/kg, in 1000 kg at 2000 J/(kg K) without heat loss rises by
    Delta h (1 - exp(-t q_ref / Delta h)) / c_p and reaches half its 100 K rise at
    20000 ln 2 = 13862.94 s:

    >>> p = ArrheniusSamples(heat_capacity=[1.0, 2e6], contents_mass=[1.0, 1000.0], ua=[1.0, 0.0],
    ...                      ambient_temperature=[473.15, 300.0], initial_temperature=[298.15, 300.0],
    ...                      specific_power=[[0.0], [10.0]], reference_temperature=[300.0],
    ...                      activation_energy=[0.0], order=[1.0], heat_of_reaction=[[np.nan], [200e3]])
    >>> r = first_crossing_times_arrhenius(p, [[472.15], [350.0]], [60.0, 1e6])
    >>> round(float(r.times[0, 0]), 6), round(float(r.times[1, 0]), 2), r.status.tolist()
    (5.164786, 13862.94, [0, 0])
    """
    if on_failure not in ("raise", "flag"):
        raise ValueError("on_failure must be 'raise' or 'flag'")
    rtol = float(rtol)
    if not (1e-14 <= rtol <= 1e-3):
        raise ValueError("rtol must be within [1e-14, 1e-3]")
    inp = _prepare(params, limits, horizon, stop_temperature)
    follow = np.broadcast_to(np.asarray(to_horizon, dtype=bool), inp.follow.shape)
    inp = inp._replace(follow=np.ascontiguousarray(follow))
    tracked = np.isfinite(inp.dh) & (inp.q > 0)
    cols = [int(j) for j in np.flatnonzero(tracked.any(axis=0))]
    chunk_size = max(int(chunk_size), 1)
    if workers is None:
        workers = min(2, os.cpu_count() or 1)
    workers = max(1, int(workers))
    if multiprocessing.current_process().daemon:
        workers = 1  # a daemonic process (e.g. a service worker) cannot start processes of its own

    todo = np.flatnonzero(inp.T0 < inp.stop)
    out = _initial_out(inp)
    at_stop = np.flatnonzero(~(inp.T0 < inp.stop))
    if at_stop.size:  # already at the stop temperature: the end state is the start
        P, Z = _coefficients(inp, at_stop, cols, rtol)
        G = _flux(P, Z)
        out.endT[at_stop] = Z[0]
        out.endt[at_stop] = 0.0
        out.endrate[at_stop] = G[0] / G[-1]
        out.endX[at_stop] = np.where(np.isfinite(inp.dh[at_stop]), inp.X0[at_stop], np.nan)
    done = False
    if workers > 1 and todo.size >= 2 * chunk_size:
        parts = [todo[w::workers] for w in range(workers)]
        results = _integrate_parallel(inp, parts, cols, rtol, chunk_size, workers)
        if results is not None:
            for rows, res in zip(parts, results):
                for dest, src in zip(out, res):
                    dest[rows] = src
            done = True
    if not done and todo.size:
        res = _integrate_rows(_subset(inp, todo), cols, rtol, chunk_size)
        for dest, src in zip(out, res):
            dest[todo] = src
    times, peakT, peakt, pstop, status, steps = out[:6]
    # a source with a heat of reaction but no column (no power in any sample) keeps its conversion
    fixed = np.isfinite(out.endT)[:, None] & np.isfinite(inp.dh)
    fixed[:, cols] = False
    out.endX[fixed] = inp.X0[fixed]
    failed = status == STATUS_FAILED
    if failed.any() and on_failure == "raise":
        raise RuntimeError(f"{int(failed.sum())} sample(s) needed more than {MAX_STEPS} steps (first index "
                           f"{int(np.argmax(failed))}); rerun with on_failure='flag' to see the others, and "
                           f"check the failed ones with the single-case engine")
    return ArrheniusScreen(times, peakT, peakt, pstop, status, steps, out.endT, out.endrate, out.endt, out.endX)


def samples_from_models(models: Sequence[ScreeningModel]):
    """Stack single-case models into :class:`ArrheniusSamples` with their limits and horizons.

    Parameters
    ----------
    models : sequence of ScreeningModel
        All with the same number of limits.  Models with boiling credit
        (``boiling`` with open venting and no gas-generating source) are
        rejected: the single-case engine handles them.  A closed vessel's
        boiling data change nothing in the history (no latent heat is counted)
        and are ignored.

    Returns
    -------
    params : ArrheniusSamples
        Heat capacity C = m c_p + C_wall, constant power including fire
        (:func:`screening.core.terms.constant_power`); sources padded to the largest
        count with switched-off entries (zero power).
    limits : numpy.ndarray, shape (N, L), [K]
    horizon : numpy.ndarray, shape (N,), [s]

    Raises
    ------
    ValueError
        No models, different numbers of limits, or a model with boiling credit.

    Examples
    --------
    By hand: 1000 kg at 2000 J/(kg K) and no wall give C = 2e6 J/K:

    >>> from screening.core.model import ArrheniusSource, Limit
    >>> src = ArrheniusSource(10.0, 300.0, 0.0, order=1.0, specific_heat_of_reaction=200e3)
    >>> m = ScreeningModel(1000.0, 2000.0, 0.0, 0.0, 300.0, 300.0, 1e6, arrhenius_sources=(src,),
    ...                    limits=(Limit("half", 350.0),))
    >>> params, limits, horizon = samples_from_models([m, m])
    >>> params.heat_capacity.tolist(), limits.tolist(), horizon.tolist()
    ([2000000.0, 2000000.0], [[350.0], [350.0]], [1000000.0, 1000000.0])
    """
    models = list(models)
    if not models:
        raise ValueError("no models given")
    nl = {len(md.limits) for md in models}
    if len(nl) != 1:
        raise ValueError("every model must have the same number of limits")
    for i, md in enumerate(models):
        if md.boiling is not None and md.boiling.venting == "open" and not any(
                s.gas_generating for s in md.arrhenius_sources):
            raise ValueError(f"model {i} takes boiling (tempering) credit, which the vectorised engine does not "
                             f"model; use screening.core.arrhenius_history.integrate_history for it")
    N = len(models)
    kd = max(len(md.decaying_sources) for md in models)
    km = max(len(md.heating_media) for md in models)
    J = max(len(md.arrhenius_sources) for md in models)
    Pd = np.zeros((N, kd))
    ad = np.ones((N, kd))
    mua = np.zeros((N, km))
    mT = np.full((N, km), 300.0)
    q = np.zeros((N, J))
    Tr = np.full((N, J), 300.0)
    E = np.zeros((N, J))
    n = np.zeros((N, J))
    dh = np.full((N, J), np.nan)
    X0 = np.zeros((N, J))
    am = np.zeros((N, J))
    az = np.zeros((N, J))
    for i, md in enumerate(models):
        for d, s in enumerate(md.decaying_sources):
            Pd[i, d], ad[i, d] = s.power, s.time_constant
        for k, s in enumerate(md.heating_media):
            mua[i, k], mT[i, k] = s.ua, s.medium_temperature
        for j, s in enumerate(md.arrhenius_sources):
            q[i, j], Tr[i, j], E[i, j] = s.specific_power, s.reference_temperature, s.activation_energy
            if s.specific_heat_of_reaction is not None:
                dh[i, j] = s.specific_heat_of_reaction
                n[i, j] = s.order
                X0[i, j] = min(max(1.0 - s.accumulated_fraction, 0.0), 1.0)
                am[i, j], az[i, j] = s.autocatalytic_order, s.initiation
    params = ArrheniusSamples(
        heat_capacity=np.array([md.heat_capacity for md in models]),
        contents_mass=np.array([md.contents_mass for md in models]),
        ua=np.array([md.ua for md in models]),
        ambient_temperature=np.array([md.ambient_temperature for md in models]),
        initial_temperature=np.array([model_start_temperature(md) for md in models]),
        constant_power=np.array([constant_power(md) for md in models]),
        decaying_power=Pd, decay_time=ad, media_ua=mua, media_temperature=mT,
        specific_power=q, reference_temperature=Tr, activation_energy=E, order=n, heat_of_reaction=dh,
        initial_conversion=X0, autocatalytic_order=am if am.any() else None,
        initiation=az if am.any() else None, forcing=_stacked_forcing(models))
    limits = np.array([[lim.temperature for lim in md.limits] for md in models]).reshape(N, -1)
    horizon = np.array([md.horizon for md in models])
    return params, limits, horizon


def _stacked_forcing(models) -> CycleForcing | None:
    """The daily-cycle forcing of each model as arrays (zero drive for a model without a cycle), or None."""
    forcings = [cycle_forcing(md.daily_cycle, md.ua) for md in models]
    if all(f is None for f in forcings):
        return None
    none = CycleForcing(0.0, 0.0, 0.0, 43200.0, 0.0)
    forcings = [f if f is not None else none for f in forcings]
    return CycleForcing(*(np.array([float(getattr(f, k)) for f in forcings]) for k in
                          ("air", "warmest_time", "solar", "day_length", "start_time")))
