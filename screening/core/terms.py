r"""The terms of the lumped energy balance, assembled in one place for every engine.

.. math:: C \frac{dT}{dt} = Q_0 - G\,T + \sum_i P_i e^{-t/a_i} + m \sum_j q_j(T, X_j)

with the heat capacity :math:`C = m c_p + C_{wall}`, the loss conductance
:math:`G = UA + \sum_k ua_k` (heat loss to ambient plus heating media) and the constant drive
:math:`Q_0 = UA\,T_a + \sum_k ua_k T_{m,k} + P_{const}`, where :math:`P_{const}` is the sum of
the constant sources and the fire heat input. The one-case closed form, the vectorised engines, the
columnar register path, Monte Carlo and the stiff integrators all take C, G, Q0 and P_const from
here, so a term is added (or summed in a different order) in one place only.

Every function takes floats or numpy arrays (one element per case); with floats it returns
plain floats.
"""
from __future__ import annotations

from typing import NamedTuple

from screening.core.model import ScreeningModel, heat_capacity

__all__ = ["LumpedTerms", "conductance_and_drive", "constant_power", "fire_power", "heat_capacity", "model_terms",
           "released_specific_energy", "start_temperature", "model_start_temperature"]


class LumpedTerms(NamedTuple):
    r"""C, G, Q0 and the time-dependent terms of one model (SI), as :func:`model_terms` returns them.

    Attributes
    ----------
    heat_capacity : float, [J/K]
        C = m c_p + C_wall.
    conductance : float, [W/K]
        G = UA + sum of heating-medium ua.
    drive : float, [W]
        Q0 = UA T_a + sum ua_k T_m,k + P_const.
    constant_power : float, [W]
        P_const, constant sources plus fire heat input.
    decaying_power : tuple of float, [W]
        P_i, one per decaying source.
    decay_time : tuple of float, [s]
        a_i, one per decaying source.

    Notes
    -----
    .. math:: C \frac{dT}{dt} = Q_0 - G\,T + \sum_i P_i e^{-t/a_i}
    """

    heat_capacity: float  #: C, J/K
    conductance: float  #: G = UA + sum of media ua, W/K
    drive: float  #: Q0 = UA Ta + sum ua_k Tm_k + P_const, W
    constant_power: float  #: P_const, constant sources plus fire exposure, W
    decaying_power: tuple  #: P_i, W
    decay_time: tuple  #: a_i, s


def conductance_and_drive(ua, ambient_temperature, constant_power=0.0, media_ua=(), media_temperature=()):
    r"""Loss conductance G and constant drive Q0 of the linear part of the balance.

    Parameters
    ----------
    ua : float or array, [W/K]
        Heat loss to ambient.
    ambient_temperature : float or array, [K]
    constant_power : float or array, [W], default 0
        Constant sources plus fire heat input (:func:`constant_power`).
    media_ua, media_temperature : sequences of floats or arrays, [W/K] and [K]
        One entry per heating medium (a jacket or coil left on).

    Returns
    -------
    (G, Q0) : floats or arrays, [W/K] and [W]

    Notes
    -----
    .. math:: G = UA + \sum_k ua_k, \qquad Q_0 = UA\,T_a + \sum_k ua_k T_{m,k} + P_{const}

    The balance :math:`C\,dT/dt = Q_0 - G T + \ldots` settles at :math:`Q_0 / G`.  Linear
    terms only: the loss to ambient with a constant UA (no radiation, no change of UA with
    temperature) and media at a fixed temperature.

    References
    ----------
    Incropera, F. P. et al., *Fundamentals of Heat and Mass Transfer*, 6th ed., Wiley (2007),
    section 5.3 (general lumped capacitance analysis with heat generation; section number from
    memory).

    Examples
    --------
    A tank losing 180 W/K to air at 32 degC with a 2.2 kW agitator settles at
    Q0 / G = 32 degC + 2200 / 180 K = 44.2 degC (by hand):

    >>> G, Q0 = conductance_and_drive(180.0, 305.15, 2200.0)
    >>> G, round(Q0, 6), round(Q0 / G - 273.15, 4)
    (180.0, 57127.0, 44.2222)
    """
    media_g = sum(media_ua)
    media_q = sum(u * t for u, t in zip(media_ua, media_temperature))
    return ua + media_g, ua * ambient_temperature + media_q + constant_power


def fire_power(model: ScreeningModel) -> float:
    r"""Fire heat input of a model: the sum of its fire sources, each already evaluated by the correlation.

    Parameters
    ----------
    model : ScreeningModel

    Returns
    -------
    float, [W]

    Notes
    -----
    .. math:: P_{fire} = \sum_f Q_f

    with each :math:`Q_f` from :func:`screening.core.fire_exposure.api521_fire_heat_input`.

    Examples
    --------
    By hand: two exposures of 1.2 MW and 0.3 MW give 1.5 MW:

    >>> from screening.core.model import FireExposure
    >>> fires = (FireExposure(1.2e6, 60.0, 1.0, True), FireExposure(0.3e6, 10.0, 1.0, True))
    >>> fire_power(ScreeningModel(1000.0, 4180.0, 0.0, 50.0, 293.15, 293.15, 3600.0, fire_sources=fires))
    1500000.0
    """
    return sum(f.power for f in model.fire_sources)


def constant_power(model: ScreeningModel) -> float:
    r"""Constant heat input of a model: its constant sources plus the fire heat input.

    Parameters
    ----------
    model : ScreeningModel

    Returns
    -------
    float, [W]

    Notes
    -----
    .. math:: P_{const} = \sum_c P_c + \sum_f Q_f

    Examples
    --------
    By hand: a 2.2 kW agitator and a 1.5 kW pump give 3.7 kW:

    >>> from screening.core.model import ConstantSource
    >>> sources = (ConstantSource(2200.0), ConstantSource(1500.0))
    >>> constant_power(ScreeningModel(1000.0, 4180.0, 0.0, 50.0, 293.15, 293.15, 3600.0,
    ...                               constant_sources=sources))
    3700.0
    """
    return sum(s.power for s in model.constant_sources) + fire_power(model)


def released_specific_energy(model: ScreeningModel) -> float:
    """Heat per kg of contents released at t = 0 by syntheses given without kinetics, J/kg."""
    return sum((r.accumulated_fraction * r.specific_heat_of_reaction for r in model.released_at_start), 0.0)


def start_temperature(initial_temperature, mass, heat_capacity, released_specific_energy=0.0):
    r"""Temperature at which the history starts, K: the initial temperature plus the heat released at t = 0.

    Parameters
    ----------
    initial_temperature : float or array, [K]
        The process (initial) temperature.
    mass : float or array, [kg]
        Contents mass.
    heat_capacity : float or array, [J/K]
        Total heat capacity C of contents and wall (:func:`heat_capacity`).
    released_specific_energy : float or array, [J/kg], default 0
        Heat per kg released at once at t = 0 (:func:`released_specific_energy`): a synthesis given
        without kinetics, whose accumulated heat is taken as released at the start (conservative).

    Returns
    -------
    float or array, [K]

    Notes
    -----
    .. math:: T(0^+) = T_0 + \frac{m \sum_s X_{ac,s} \Delta h_s}{C}

    The history keeps the total heat capacity C (wall included); the MTSR uses the contents'
    specific heat alone.

    Examples
    --------
    4200 kg at 80 degC releasing 35 % of 160 kJ/kg into C = 4200 * 2100 J/K: 80 + 26.67 K (by hand).

    >>> round(start_temperature(353.15, 4200.0, 4200.0 * 2100.0, 0.35 * 160e3) - 273.15, 3)
    106.667
    """
    if isinstance(released_specific_energy, float) and released_specific_energy == 0.0:
        return initial_temperature
    return initial_temperature + mass * released_specific_energy / heat_capacity


def model_start_temperature(model: ScreeningModel) -> float:
    """The temperature at which a model's history starts (:func:`start_temperature`), K."""
    return start_temperature(model.initial_temperature, model.contents_mass, model.heat_capacity,
                             released_specific_energy(model))


def model_terms(model: ScreeningModel, ua: float | None = None) -> LumpedTerms:
    r"""The terms C, G, Q0, P_const and the decaying sources of one model.

    Parameters
    ----------
    model : ScreeningModel
    ua : float or None, [W/K], optional
        Replaces the model's heat loss to ambient (``ua=0`` gives the adiabatic bound).

    Returns
    -------
    LumpedTerms

    Notes
    -----
    .. math:: C = m c_p + C_{wall}, \quad G = UA + \sum_k ua_k, \quad
              Q_0 = UA\,T_a + \sum_k ua_k T_{m,k} + P_{const}

    (:func:`heat_capacity`, :func:`conductance_and_drive`, :func:`constant_power`).

    Examples
    --------
    By hand, for 9000 kg at 3400 J/(kg K) with a 1.029e6 J/K wall, UA = 180 W/K to air at
    305.15 K and a 2.2 kW agitator: C = 3.1629e7 J/K, G = 180 W/K,
    Q0 = 180 x 305.15 + 2200 = 57127 W:

    >>> from screening.core.model import ConstantSource
    >>> m = ScreeningModel(9000.0, 3400.0, 2100.0 * 490.0, 180.0, 305.15, 303.15, 86400.0,
    ...                    constant_sources=(ConstantSource(2200.0),))
    >>> t = model_terms(m)
    >>> t.heat_capacity, t.conductance, round(t.drive, 6), t.constant_power
    (31629000.0, 180.0, 57127.0, 2200.0)
    >>> model_terms(m, ua=0.0).drive
    2200.0
    """
    p_const = constant_power(model)
    g, q0 = conductance_and_drive(model.ua if ua is None else ua, model.ambient_temperature, p_const,
                                  [h.ua for h in model.heating_media],
                                  [h.medium_temperature for h in model.heating_media])
    return LumpedTerms(model.heat_capacity, g, q0, p_const, tuple(s.power for s in model.decaying_sources),
                       tuple(s.time_constant for s in model.decaying_sources))
