r"""Exact temperature history of a lumped vessel with constant and decaying sources.

The balance

.. math:: C \frac{dT}{dt} = P_0 + \sum_i P_i e^{-t/a_i} + \sum_k UA_k (T_{m,k} - T) - UA (T - T_a)

is linear in T, so with :math:`G = UA + \sum_k UA_k`, :math:`\lambda = G / C`,
:math:`Q_0 = UA\,T_a + \sum_k UA_k T_{m,k} + P_0` and :math:`b_i = 1/a_i`, the
Laplace transform gives

.. math:: T(t) = T_0 e^{-\lambda t} + \frac{Q_0}{C}\, t\, g(\lambda t)
          + \sum_i \frac{P_i}{C}\, e^{-\min(b_i, \lambda) t}\, t\, g(|\lambda - b_i| t),
          \qquad g(x) = \frac{1 - e^{-x}}{x},\; g(0) = 1.

This one expression covers every case without division by zero: the
adiabatic vessel (:math:`\lambda = 0`), a source that decays at the vessel's own
time constant (:math:`b_i = \lambda`, where the term becomes
:math:`(P_i/C)\,t\,e^{-\lambda t}`), and a source that does not decay
(:math:`b_i = 0`).

All functions take SI floats or numpy arrays and broadcast; decaying-source
parameters carry a trailing axis (one entry per source).

Assumptions: the contents and the wall are at one temperature (well stirred, or
a Biot number below 0.1 for a solid), UA, C and the medium temperatures are
constant, and the heat input does not depend on temperature (temperature-
dependent sources go to :mod:`screening.core.arrhenius_history`).

References
----------
Incropera, F. P., DeWitt, D. P., Bergman, T. L., Lavine, A. S., *Fundamentals of
Heat and Mass Transfer*, 6th ed., Wiley (2007), ch. 5 (lumped capacitance;
Example 5.1, the thermocouple junction, from memory).  The closed form follows
from the Laplace transform of the linear first-order balance (checked against
sympy's inverse Laplace transform and ``scipy.integrate.solve_ivp`` in the tests).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from screening.core.daily_cycle import DAY, cycle_forcing, cycle_response, effective_ambient
from screening.core.model import ScreeningModel
from screening.core.terms import conductance_and_drive, constant_power, model_start_temperature


def relaxation(x):
    r"""g(x) = (1 - exp(-x)) / x for x >= 0, with g(0) = 1, evaluated without cancellation.

    Parameters
    ----------
    x : float or array_like, [-]
        x >= 0 (any shape).

    Returns
    -------
    numpy.ndarray, [-]
        Same shape as ``x``; in (0, 1].

    Notes
    -----
    .. math:: g(x) = \frac{1 - e^{-x}}{x} = \int_0^1 e^{-x s}\,ds, \qquad g(0) = 1

    Computed as ``-expm1(-x) / x``, so that small x loses no digits; g(x) t is the
    time integral of :math:`e^{-\lambda t}` with :math:`x = \lambda t`.

    Examples
    --------
    By hand: g(0) = 1, g(1) = 1 - 1/e = 0.632121, g(50) = 1/50 to within e^-50, and
    g(1e-20) = 1 - 5e-21, which rounds to 1 (a naive (1 - exp(-x)) / x gives 0 there):

    >>> [round(float(v), 6) for v in relaxation([0.0, 1.0, 50.0, 1e-20])]
    [1.0, 0.632121, 0.02, 1.0]
    """
    x = np.asarray(x, dtype=float)
    small = x < 1e-300
    safe = np.where(small, 1.0, x)
    return np.where(small, 1.0, -np.expm1(-safe) / safe)


@dataclass(frozen=True)
class LinearBalance:
    r"""Coefficients of the linear lumped balance, SI (arrays broadcast).

    Build one with :func:`linear_balance` (from physical inputs) or :func:`balance_of`
    (from a :class:`~screening.core.model.ScreeningModel`).

    Parameters
    ----------
    heat_capacity : float or array (n,), [J/K]
        C > 0.
    conductance : float or array (n,), [W/K]
        G = UA + sum of heating-medium ua, >= 0.
    drive : float or array (n,), [W]
        Q0 = UA T_a + sum ua_k T_m,k + constant power.
    initial_temperature : float or array (n,), [K]
        T0.
    decaying_power : array (k,) or (n, k), [W]
        P_i, trailing axis one per source (may be empty).
    decay_rate : array like ``decaying_power``, [1/s]
        b_i = 1 / a_i >= 0 (0: the source does not decay).
    forcing : CycleForcing or None, default None
        The daily cycle's drive F(t) (:mod:`screening.core.daily_cycle`), fields shaped like ``conductance``.

    Notes
    -----
    .. math:: C \frac{dT}{dt} = Q_0 - G T + \sum_i P_i e^{-b_i t} + F(t), \qquad T(0) = T_0
    """

    heat_capacity: np.ndarray
    conductance: np.ndarray
    drive: np.ndarray
    initial_temperature: np.ndarray
    decaying_power: np.ndarray
    decay_rate: np.ndarray
    forcing: object = None

    @property
    def rate(self):
        """lambda = G / C, [1/s]: the reciprocal of the vessel's time constant."""
        return np.asarray(self.conductance) / np.asarray(self.heat_capacity)


def linear_balance(heat_capacity, ua, ambient_temperature, initial_temperature, constant_power=0.0,
                   decaying_power=(), decay_time_constant=(), medium_ua=(), medium_temperature=()):
    r"""Build a :class:`LinearBalance` from physical inputs.

    Parameters
    ----------
    heat_capacity : float or array (n,), [J/K]
        C = m c_p + C_wall, > 0.
    ua : float or array (n,), [W/K]
        Loss to ambient, >= 0.
    ambient_temperature : float or array (n,), [K]
    initial_temperature : float or array (n,), [K]
    constant_power : float or array (n,), [W], default 0
        Sum of the constant sources (and fire heat input).
    decaying_power : sequence or array (k,) or (n, k), [W], default ()
        P_i, trailing axis one per decaying source.
    decay_time_constant : like ``decaying_power``, [s], default ()
        a_i > 0 (``inf``: the source does not decay).
    medium_ua : sequence or array (km,) or (n, km), [W/K], default ()
        ua_k of each heating medium.
    medium_temperature : like ``medium_ua``, [K], default ()
        T_m,k of each heating medium.

    Returns
    -------
    LinearBalance
        With :math:`G` and :math:`Q_0` from
        :func:`screening.core.terms.conductance_and_drive` and :math:`b_i = 1 / a_i`.

    Notes
    -----
    .. math:: G = UA + \sum_k ua_k, \qquad Q_0 = UA\,T_a + \sum_k ua_k T_{m,k} + P_0

    References
    ----------
    Incropera, F. P. et al., *Fundamentals of Heat and Mass Transfer*, 6th ed., Wiley (2007),
    sections 5.1-5.3 (lumped capacitance; section numbers from memory).

    Examples
    --------
    Incropera et al., Example 5.1 (from memory): a spherical thermocouple junction with
    h = 400 W/(m^2 K), c = 400 J/(kg K), rho = 8500 kg/m^3, sized for a 1 s time constant,
    D = 6 h tau / (rho c) = 0.706 mm; by hand, its C / (h A) = rho c D / (6 h) = 1 s:

    >>> import math
    >>> D = 6 * 400.0 * 1.0 / (8500.0 * 400.0)
    >>> C, UA = 8500.0 * 400.0 * math.pi * D**3 / 6, 400.0 * math.pi * D**2
    >>> junction = linear_balance(C, UA, 473.15, 298.15)
    >>> round(1 / float(junction.rate), 12), round(D * 1e3, 3)
    (1.0, 0.706)
    """
    mua = np.asarray(medium_ua, dtype=float)
    mt = np.asarray(medium_temperature, dtype=float)
    g, q0 = conductance_and_drive(np.asarray(ua, dtype=float), np.asarray(ambient_temperature, dtype=float),
                                  np.asarray(constant_power, dtype=float),
                                  list(np.moveaxis(mua, -1, 0)) if mua.size else (),
                                  list(np.moveaxis(mt, -1, 0)) if mua.size else ())
    p = np.asarray(decaying_power, dtype=float)
    a = np.asarray(decay_time_constant, dtype=float)
    with np.errstate(divide="ignore"):
        b = np.where(np.isinf(a), 0.0, 1.0 / np.where(a == 0, np.inf, a))
    return LinearBalance(np.asarray(heat_capacity, dtype=float), g, q0,
                         np.asarray(initial_temperature, dtype=float), p, b)


def _broadcast(balance: LinearBalance, t: np.ndarray):
    """Vessel coefficients reshaped against t, and each decaying source as (P_i, b_i) reshaped likewise.

    Returns (lam, C, T0, Q0, G, sources), every array broadcastable with ``t``: the vessel axes
    of the balance come first, any further axes of ``t`` are time axes.
    """
    C = np.asarray(balance.heat_capacity, dtype=float)
    G = np.asarray(balance.conductance, dtype=float)
    lam = G / C
    T0 = np.asarray(balance.initial_temperature, dtype=float)
    Q0 = np.asarray(balance.drive, dtype=float)
    shape = lam.shape + (1,) * (t.ndim - lam.ndim)  # trailing time axes beyond the vessel axes
    lam_, C_, T0_, Q0_, G_ = (np.reshape(v, shape) for v in np.broadcast_arrays(lam, C, T0, Q0, G))
    sources = []
    P = np.asarray(balance.decaying_power, dtype=float)
    if P.size:
        b = np.asarray(balance.decay_rate, dtype=float)
        n_src = P.shape[-1]
        Pb = np.broadcast_to(P, lam.shape + (n_src,))
        bb = np.broadcast_to(b, lam.shape + (n_src,))
        sources = [(np.reshape(Pb[..., i], shape), np.reshape(bb[..., i], shape)) for i in range(n_src)]
    return lam_, C_, T0_, Q0_, G_, sources


def temperature(balance: LinearBalance, t):
    r"""Temperature T(t) of the contents, K.

    Parameters
    ----------
    balance : LinearBalance
        Scalar coefficients, or arrays of shape (n,) for n vessels.
    t : float or array, [s]
        t >= 0.  For scalar coefficients any shape; for n vessels shape (n,) (one time
        each) or (n, m) (m times each).

    Returns
    -------
    numpy.ndarray, [K]
        Shape of ``t`` broadcast against the vessel axes.

    Notes
    -----
    .. math:: T(t) = T_0 e^{-\lambda t} + \frac{Q_0}{C}\, t\, g(\lambda t)
              + \sum_i \frac{P_i}{C}\, e^{-\min(b_i, \lambda) t}\, t\, g(|\lambda - b_i| t)

    with :math:`\lambda = G/C` and :math:`g` = :func:`relaxation`; exact for the linear
    balance (see the module docstring), including :math:`\lambda = 0` and
    :math:`b_i = \lambda`.

    References
    ----------
    Incropera, F. P. et al., *Fundamentals of Heat and Mass Transfer*, 6th ed., Wiley (2007),
    ch. 5: :math:`(T - T_\infty)/(T_0 - T_\infty) = e^{-t/\tau}` for a step in ambient.

    Examples
    --------
    Incropera et al., Example 5.1 (from memory): the junction (tau = 1 s) from 25 degC in a
    200 degC gas stream reaches 199 degC at t = tau ln(175 / 1) = 5.165 s; by hand, at 1 s it
    is at 473.15 - 175 / e = 408.771 K:

    >>> import math
    >>> junction = linear_balance(1.0, 1.0, 473.15, 298.15)
    >>> [round(float(T), 3) for T in temperature(junction, [0.0, 1.0, math.log(175.0)])]
    [298.15, 408.771, 472.15]

    A source decaying at the vessel's own rate (a = C / G = 1 s) gives, by hand,
    :math:`T_0 + (P_1/C)\, t\, e^{-t/\tau}`, i.e. 300 + 1/e = 300.367879 K at t = 1 s:

    >>> b = linear_balance(1.0, 1.0, 300.0, 300.0, 0.0, [1.0], [1.0])
    >>> round(float(temperature(b, 1.0)), 6)
    300.367879
    """
    t = np.asarray(t, dtype=float)
    lam_, C_, T0_, Q0_, _, sources = _broadcast(balance, t)
    out = T0_ * np.exp(-lam_ * t) + (Q0_ / C_) * t * relaxation(lam_ * t)
    for Pi, bi in sources:
        out = out + (Pi / C_) * np.exp(-np.minimum(bi, lam_) * t) * t * relaxation(np.abs(lam_ - bi) * t)
    if balance.forcing is not None:
        out = out + _cycle(balance, t, lam_, C_)[0]
    return out


def _cycle(balance: LinearBalance, t, lam_, C_):
    """The daily cycle's response and rate (:func:`screening.core.daily_cycle.cycle_response`), shaped like t."""
    f = balance.forcing
    shape = lam_.shape
    fields = [np.reshape(np.broadcast_to(np.asarray(v, dtype=float), np.shape(balance.conductance)), shape)
              for v in (f.air, f.warmest_time, f.solar, f.day_length, f.start_time)]
    return cycle_response(lam_, C_, type(f)(*fields), t)


def temperature_rate(balance: LinearBalance, t, temp=None):
    r"""dT/dt of the contents, [K/s].

    Parameters
    ----------
    balance : LinearBalance
        Scalar coefficients, or arrays of shape (n,) for n vessels.
    t : float or array, [s]
        t >= 0, shaped as for :func:`temperature`.
    temp : float or array or None, [K], optional
        A temperature at which to evaluate the balance instead of the closed form.

    Returns
    -------
    numpy.ndarray, [K/s]

    Notes
    -----
    Without ``temp``: the time derivative of the closed form,

    .. math:: \frac{dT}{dt} = \frac{Q_0 - G T_0}{C} e^{-\lambda t}
              + \sum_i \frac{P_i}{C} e^{-m_i t} \left(e^{-d_i t} - m_i\, t\, g(d_i t)\right),
              \qquad m_i = \min(b_i, \lambda),\; d_i = |\lambda - b_i|,

    whose error scales with the transients still present.  (Evaluating the
    balance (Q0 + sum P_i exp(-b_i t) - G T) / C instead leaves round-off of
    order eps * G T / C once T has settled, which shows up as spurious sign
    changes of dT/dt late in the history.)  With ``temp`` given: the balance at
    that temperature.

    References
    ----------
    Incropera, F. P. et al., *Fundamentals of Heat and Mass Transfer*, 6th ed., Wiley (2007), ch. 5
    (lumped capacitance).

    Examples
    --------
    By hand: the Incropera Example 5.1 junction (tau = 1 s, from memory) starts heating at
    (473.15 - 298.15) / 1 s = 175 K/s, and at 1 s at 175 / e = 64.379 K/s; the balance at
    400 K gives (473.15 - 400) / 1 s = 73.15 K/s:

    >>> junction = linear_balance(1.0, 1.0, 473.15, 298.15)
    >>> [round(float(r), 3) for r in temperature_rate(junction, [0.0, 1.0])]
    [175.0, 64.379]
    >>> round(float(temperature_rate(junction, 0.0, temp=400.0)), 9)
    73.15
    """
    t = np.asarray(t, dtype=float)
    if temp is None:
        return _closed_form_rate(balance, t)
    _, C_, _, Q0_, G_, sources = _broadcast(balance, t)
    rate = Q0_ - G_ * temp
    for Pi, bi in sources:
        rate = rate + Pi * np.exp(-bi * t)
    if balance.forcing is not None:
        rate = rate + balance.forcing.power(t)
    return rate / C_


def _closed_form_rate(balance: LinearBalance, t):
    """Time derivative of :func:`temperature` (same broadcasting rules)."""
    lam_, C_, T0_, Q0_, G_, sources = _broadcast(balance, t)
    out = (Q0_ - G_ * T0_) / C_ * np.exp(-lam_ * t)
    for Pi, bi in sources:
        m = np.minimum(bi, lam_)
        d = np.abs(lam_ - bi)
        out = out + (Pi / C_) * np.exp(-m * t) * (np.exp(-d * t) - m * t * relaxation(d * t))
    if balance.forcing is not None:
        out = out + _cycle(balance, t, lam_, C_)[1]
    return out


def steady_temperature(balance: LinearBalance):
    r"""Temperature the contents settle to as t -> infinity, or NaN when they never settle.

    Parameters
    ----------
    balance : LinearBalance

    Returns
    -------
    float or numpy.ndarray, [K]

    Notes
    -----
    .. math:: T_\infty = \frac{Q_0}{G} \quad (G > 0), \qquad
              T_\infty = T_0 + \frac{\sum_i P_i a_i}{C} \quad (G = 0,\ Q_0 = 0)

    With G > 0 it is the stable steady state Q0 / G (decaying sources have died
    away); with a daily cycle, the daily mean of the periodic state (the sun's mean drive
    added to Q0).  With G = 0 (adiabatic) the contents settle only when there is no
    constant drive: at T0 + sum P_i a_i / C.

    References
    ----------
    Incropera, F. P. et al., *Fundamentals of Heat and Mass Transfer*, 6th ed., Wiley (2007), ch. 5
    (lumped capacitance).

    Examples
    --------
    By hand: 180 W/K to air at 305.15 K with a 2.2 kW agitator settles at
    305.15 + 2200 / 180 = 317.372 K; adiabatic, 1 kW decaying with a = 3600 s into
    C = 3.6e6 J/K adds 1000 x 3600 / 3.6e6 = 1 K:

    >>> round(steady_temperature(linear_balance(3.1629e7, 180.0, 305.15, 303.15, 2200.0)), 3)
    317.372
    >>> round(steady_temperature(linear_balance(3.6e6, 0.0, 293.15, 293.15, 0.0, [1000.0], [3600.0])), 6)
    294.15
    """
    G = np.asarray(balance.conductance, dtype=float)
    Q0 = np.asarray(balance.drive, dtype=float)
    C = np.asarray(balance.heat_capacity, dtype=float)
    P = np.asarray(balance.decaying_power, dtype=float)
    b = np.asarray(balance.decay_rate, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        energy = (np.where(b > 0, P / np.where(b > 0, b, 1.0), np.inf * (P > 0))).sum(axis=-1) if P.size else 0.0
        adiabatic = np.where((Q0 == 0) & np.isfinite(energy),
                             np.asarray(balance.initial_temperature) + energy / C, np.nan)
        if balance.forcing is not None:  # the daily mean of the periodic state: the sun's mean drive added
            Q0 = Q0 + np.asarray(balance.forcing.solar, dtype=float) * 2.0 * np.asarray(
                balance.forcing.day_length, dtype=float) / (np.pi * DAY)
        out = np.where(G > 0, Q0 / np.where(G > 0, G, 1.0), adiabatic)
    return out if np.ndim(out) else float(out)


def decaying_energy(decaying_power, decay_time_constant):
    r"""Total energy still to come from decaying sources.

    Parameters
    ----------
    decaying_power : sequence or array, [W]
        P_i.
    decay_time_constant : like ``decaying_power``, [s]
        a_i.

    Returns
    -------
    float, [J]

    Notes
    -----
    .. math:: E = \sum_i \int_0^\infty P_i e^{-t/a_i}\,dt = \sum_i P_i a_i

    Examples
    --------
    By hand: 1 kW over a = 1 h and 0.5 kW over a = 10 min give 3.6e6 + 3.0e5 = 3.9e6 J:

    >>> decaying_energy([1000.0, 500.0], [3600.0, 600.0])
    3900000.0
    """
    return float(np.sum(np.asarray(decaying_power, dtype=float) * np.asarray(decay_time_constant, dtype=float)))


def balance_of(model: ScreeningModel, ua: float | None = None, initial_temperature: float | None = None,
               time_shift: float = 0.0, extra_media: tuple = ()) -> LinearBalance:
    r"""The linear balance of a model's constant, decaying, fire and medium terms.

    Parameters
    ----------
    model : ScreeningModel
        Its Arrhenius sources, if any, are not included (they are not linear).
    ua : float or None, [W/K], optional
        Replaces the model's heat loss to ambient (0: the adiabatic bound).
    initial_temperature : float or None, [K], optional
        Replaces the model's initial temperature.
    time_shift : float, [s], default 0
        Starts the clock later: decaying sources have decayed by exp(-shift / a).
    extra_media : tuple of (float, float), ([K], [W/K]), default ()
        (temperature, ua) pairs added as heating media, such as restored cooling.

    Returns
    -------
    LinearBalance

    Notes
    -----
    .. math:: P_i' = P_i\, e^{-t_{shift}/a_i}

    and the other terms as in :func:`screening.core.terms.model_terms`.

    References
    ----------
    Incropera, F. P. et al., *Fundamentals of Heat and Mass Transfer*, 6th ed., Wiley (2007), ch. 5
    (lumped capacitance).

    Examples
    --------
    By hand: a 1 kW source with a = 1 h, one hour later, starts at 1000 / e = 367.879 W:

    >>> from screening.core.model import DecayingSource
    >>> m = ScreeningModel(1000.0, 4180.0, 0.0, 50.0, 293.15, 293.15, 86400.0,
    ...                    decaying_sources=(DecayingSource(1000.0, 3600.0),))
    >>> round(float(balance_of(m, time_shift=3600.0).decaying_power[0]), 3)
    367.879
    """
    p_const = constant_power(model)
    powers = [s.power * math.exp(-time_shift / s.time_constant) for s in model.decaying_sources]
    taus = [s.time_constant for s in model.decaying_sources]
    media_ua = [h.ua for h in model.heating_media] + [u for _, u in extra_media]
    media_t = [h.medium_temperature for h in model.heating_media] + [t for t, _ in extra_media]
    balance = linear_balance(model.heat_capacity, model.ua if ua is None else ua, model.ambient_temperature,
                             model_start_temperature(model) if initial_temperature is None else initial_temperature,
                             p_const, powers, taus, media_ua, media_t)
    forcing = cycle_forcing(model.daily_cycle, model.ua if ua is None else ua, time_shift)
    if forcing is None:
        return balance
    return replace(balance, forcing=forcing)


def heat_rates(model: ScreeningModel, t, temp, extra_media: tuple = (), time_shift: float = 0.0):
    r"""Heat input and heat loss to ambient at times t and temperatures temp.

    Parameters
    ----------
    model : ScreeningModel
    t : float or array, [s]
    temp : float or array, [K]
        Contents temperature at each t (same shape).
    extra_media : tuple of (float, float), ([K], [W/K]), default ()
        (temperature, ua) pairs added as heating media.
    time_shift : float, [s], default 0
        Decaying sources are evaluated at t + time_shift.

    Returns
    -------
    (numpy.ndarray, numpy.ndarray), [W]
        Heat input and heat loss to ambient, shaped like ``t``.

    Notes
    -----
    .. math:: P_{in} = P_{const} + \sum_i P_i e^{-(t + t_{shift})/a_i} + \sum_k ua_k (T_{m,k} - T),
              \qquad P_{loss} = UA (T - T_a)

    (with a daily cycle, :math:`T_a` is the effective ambient :math:`T_{eff}(t)` of
    :func:`screening.core.daily_cycle.effective_ambient`).

    Heat input counts constant, decaying and fire sources and heating media
    (a medium colder than the contents counts as negative input).  Arrhenius sources
    are not included.

    References
    ----------
    Incropera, F. P. et al., *Fundamentals of Heat and Mass Transfer*, 6th ed., Wiley (2007), ch. 5
    (lumped capacitance).

    Examples
    --------
    By hand: 50 W/K to air at 293.15 K with the contents at 303.15 K loses 500 W; a 1 kW
    source with a = 1 h gives 1000 W at t = 0:

    >>> from screening.core.model import DecayingSource
    >>> m = ScreeningModel(1000.0, 4180.0, 0.0, 50.0, 293.15, 293.15, 86400.0,
    ...                    decaying_sources=(DecayingSource(1000.0, 3600.0),))
    >>> gen, loss = heat_rates(m, [0.0], [303.15])
    >>> float(gen[0]), round(float(loss[0]), 9)
    (1000.0, 500.0)
    """
    t = np.asarray(t, dtype=float)
    temp = np.asarray(temp, dtype=float)
    gen = np.full(t.shape, constant_power(model))
    for s in model.decaying_sources:
        gen = gen + s.power * np.exp(-(t + time_shift) / s.time_constant)
    for h in model.heating_media:
        gen = gen + h.ua * (h.medium_temperature - temp)
    for tm, u in extra_media:
        gen = gen + u * (tm - temp)
    ambient = model.ambient_temperature
    if model.daily_cycle is not None:
        cycle = model.daily_cycle
        ambient = effective_ambient(ambient, replace(cycle, start_time=math.fmod(cycle.start_time + time_shift, DAY)),
                                    t)
    loss = model.ua * (temp - ambient)
    return gen, loss
