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

References
----------
Incropera, DeWitt, Bergman, Lavine, *Fundamentals of Heat and Mass Transfer*,
ch. 5 (lumped capacitance).  The closed form follows from the Laplace transform
of the linear first-order balance.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from screening.core.model import ScreeningModel
from screening.core.terms import conductance_and_drive, constant_power, model_start_temperature


def relaxation(x):
    r"""g(x) = (1 - exp(-x)) / x for x >= 0, with g(0) = 1, evaluated without cancellation.

    Parameters
    ----------
    x : array_like, dimensionless, x >= 0

    Returns
    -------
    numpy.ndarray
    """
    x = np.asarray(x, dtype=float)
    small = x < 1e-300
    safe = np.where(small, 1.0, x)
    return np.where(small, 1.0, -np.expm1(-safe) / safe)


@dataclass(frozen=True)
class LinearBalance:
    """Coefficients of the linear lumped balance, SI (arrays broadcast).

    heat_capacity : C, J/K
    conductance : G = UA + sum of heating-medium ua, W/K
    drive : Q0 = UA Ta + sum ua_k Tm_k + constant power, W
    initial_temperature : T0, K
    decaying_power : P_i, W, trailing axis one per source (may be empty)
    decay_rate : b_i = 1 / a_i, 1/s, same shape as decaying_power
    """

    heat_capacity: np.ndarray
    conductance: np.ndarray
    drive: np.ndarray
    initial_temperature: np.ndarray
    decaying_power: np.ndarray
    decay_rate: np.ndarray

    @property
    def rate(self):
        """lambda = G / C, 1/s."""
        return np.asarray(self.conductance) / np.asarray(self.heat_capacity)


def linear_balance(heat_capacity, ua, ambient_temperature, initial_temperature, constant_power=0.0,
                   decaying_power=(), decay_time_constant=(), medium_ua=(), medium_temperature=()):
    """Build a :class:`LinearBalance` from physical inputs.

    Parameters
    ----------
    heat_capacity : float or array, J/K
    ua : float or array, W/K, loss to ambient
    ambient_temperature, initial_temperature : float or array, K
    constant_power : float or array, W (sum of constant sources)
    decaying_power, decay_time_constant : sequences or arrays with a trailing source axis, W and s
    medium_ua, medium_temperature : sequences or arrays with a trailing axis, W/K and K
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
    t : float or array, s, t >= 0
        For scalar coefficients any shape; for n vessels shape (n,) (one time
        each) or (n, m) (m times each).

    Returns
    -------
    numpy.ndarray, K

    Notes
    -----
    See the module docstring for the closed form.
    """
    t = np.asarray(t, dtype=float)
    lam_, C_, T0_, Q0_, _, sources = _broadcast(balance, t)
    out = T0_ * np.exp(-lam_ * t) + (Q0_ / C_) * t * relaxation(lam_ * t)
    for Pi, bi in sources:
        out = out + (Pi / C_) * np.exp(-np.minimum(bi, lam_) * t) * t * relaxation(np.abs(lam_ - bi) * t)
    return out


def temperature_rate(balance: LinearBalance, t, temp=None):
    r"""dT/dt, K/s.

    Without ``temp``: the time derivative of the closed form,

    .. math:: \frac{dT}{dt} = \frac{Q_0 - G T_0}{C} e^{-\lambda t}
              + \sum_i \frac{P_i}{C} e^{-m_i t} \left(e^{-d_i t} - m_i\, t\, g(d_i t)\right),
              \qquad m_i = \min(b_i, \lambda),\; d_i = |\lambda - b_i|,

    whose error scales with the transients still present.  (Evaluating the
    balance (Q0 + sum P_i exp(-b_i t) - G T) / C instead leaves round-off of
    order eps * G T / C once T has settled, which shows up as spurious sign
    changes of dT/dt late in the history.)  With ``temp`` given: the balance at
    that temperature.
    """
    t = np.asarray(t, dtype=float)
    if temp is None:
        return _closed_form_rate(balance, t)
    _, C_, _, Q0_, G_, sources = _broadcast(balance, t)
    rate = Q0_ - G_ * temp
    for Pi, bi in sources:
        rate = rate + Pi * np.exp(-bi * t)
    return rate / C_


def _closed_form_rate(balance: LinearBalance, t):
    """Time derivative of :func:`temperature` (same broadcasting rules)."""
    lam_, C_, T0_, Q0_, G_, sources = _broadcast(balance, t)
    out = (Q0_ - G_ * T0_) / C_ * np.exp(-lam_ * t)
    for Pi, bi in sources:
        m = np.minimum(bi, lam_)
        d = np.abs(lam_ - bi)
        out = out + (Pi / C_) * np.exp(-m * t) * (np.exp(-d * t) - m * t * relaxation(d * t))
    return out


def steady_temperature(balance: LinearBalance):
    """Temperature the contents settle to as t -> infinity, K, or NaN when they never settle.

    With G > 0 it is the stable steady state Q0 / G (decaying sources have died
    away).  With G = 0 (adiabatic) the contents settle only when there is no
    constant drive: at T0 + sum P_i a_i / C.
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
        out = np.where(G > 0, Q0 / np.where(G > 0, G, 1.0), adiabatic)
    return out if np.ndim(out) else float(out)


def decaying_energy(decaying_power, decay_time_constant):
    """Total energy still to come from decaying sources, sum P_i a_i, J."""
    return float(np.sum(np.asarray(decaying_power, dtype=float) * np.asarray(decay_time_constant, dtype=float)))


def balance_of(model: ScreeningModel, ua: float | None = None, initial_temperature: float | None = None,
               time_shift: float = 0.0, extra_media: tuple = ()) -> LinearBalance:
    """The linear balance of a model's constant, decaying, fire and medium terms.

    ``time_shift`` starts the clock later (decaying sources have decayed by
    exp(-shift / a)); ``extra_media`` adds (temperature, ua) pairs such as restored cooling.
    """
    p_const = constant_power(model)
    powers = [s.power * math.exp(-time_shift / s.time_constant) for s in model.decaying_sources]
    taus = [s.time_constant for s in model.decaying_sources]
    media_ua = [h.ua for h in model.heating_media] + [u for _, u in extra_media]
    media_t = [h.medium_temperature for h in model.heating_media] + [t for t, _ in extra_media]
    return linear_balance(model.heat_capacity, model.ua if ua is None else ua, model.ambient_temperature,
                          model_start_temperature(model) if initial_temperature is None else initial_temperature,
                          p_const, powers, taus, media_ua, media_t)


def heat_rates(model: ScreeningModel, t, temp, extra_media: tuple = (), time_shift: float = 0.0):
    """(heat input, heat loss to ambient) in W at times t and temperatures temp.

    Heat input counts constant, decaying and fire sources and heating media
    (a medium colder than the contents counts as negative input).
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
    loss = model.ua * (temp - model.ambient_temperature)
    return gen, loss
