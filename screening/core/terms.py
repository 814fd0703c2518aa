"""The terms of the lumped balance C dT/dt = P(t, T) - UA (T - T_amb) for one model.

Constant, decaying, fire and heating-medium terms as a linear balance (closed form), and
the heat input and loss rates along a history. Pure SI.
"""
from __future__ import annotations

import math

import numpy as np

from screening.core.closed_form_history import LinearBalance, linear_balance
from screening.core.model import ScreeningModel


def balance_of(model: ScreeningModel, ua: float | None = None, initial_temperature: float | None = None,
               time_shift: float = 0.0, extra_media: tuple = ()) -> LinearBalance:
    """The linear balance of a model's constant, decaying, fire and medium terms.

    ``time_shift`` starts the clock later (decaying sources have decayed by
    exp(-shift / a)); ``extra_media`` adds (temperature, ua) pairs such as restored cooling.
    """
    p_const = sum(s.power for s in model.constant_sources) + sum(f.power for f in model.fire_sources)
    powers = [s.power * math.exp(-time_shift / s.time_constant) for s in model.decaying_sources]
    taus = [s.time_constant for s in model.decaying_sources]
    media_ua = [h.ua for h in model.heating_media] + [u for _, u in extra_media]
    media_t = [h.medium_temperature for h in model.heating_media] + [t for t, _ in extra_media]
    return linear_balance(model.heat_capacity, model.ua if ua is None else ua, model.ambient_temperature,
                          model.initial_temperature if initial_temperature is None else initial_temperature,
                          p_const, powers, taus, media_ua, media_t)


def heat_rates(model: ScreeningModel, t, temp, extra_media: tuple = (), time_shift: float = 0.0):
    """(heat input, heat loss to ambient) in W at times t and temperatures temp.

    Heat input counts constant, decaying and fire sources and heating media
    (a medium colder than the contents counts as negative input).
    """
    t = np.asarray(t, dtype=float)
    temp = np.asarray(temp, dtype=float)
    gen = np.full(t.shape, sum(s.power for s in model.constant_sources) + sum(f.power for f in model.fire_sources))
    for s in model.decaying_sources:
        gen = gen + s.power * np.exp(-(t + time_shift) / s.time_constant)
    for h in model.heating_media:
        gen = gen + h.ua * (h.medium_temperature - temp)
    for tm, u in extra_media:
        gen = gen + u * (tm - temp)
    loss = model.ua * (temp - model.ambient_temperature)
    return gen, loss
