r"""The Arrhenius law: temperature dependence of a specific heat-release rate.

Every engine evaluates it through :func:`log_arrhenius_rate` (the runaway criteria, the stiff
one-case integrator and the vectorised integrator for many samples), in logarithms so that
extreme inputs cannot overflow, with the cap and floor each engine needs passed as arguments.
"""
from __future__ import annotations

import math

import numpy as np

from screening.core.model import GAS_CONSTANT

__all__ = ["GAS_CONSTANT", "arrhenius_specific_power", "log_arrhenius_rate"]


def log_arrhenius_rate(inverse_temperature, log_reference_rate, activation_temperature,
                       inverse_reference_temperature, log_cap=math.inf, log_floor=-math.inf):
    r"""Natural logarithm of an Arrhenius rate, limited to ``[log_floor, log_cap]``.

    The arguments are in the form the integrators keep them (reciprocal temperatures and E / R),
    so that the hot loops do no extra division.

    Parameters
    ----------
    inverse_temperature : float or array, [1/K]
        1 / T.
    log_reference_rate : float or array
        ln of the rate at the reference temperature (for a specific power: ln of W/kg).
    activation_temperature : float or array, [K]
        E / R, the activation energy over the gas constant.
    inverse_reference_temperature : float or array, [1/K]
        1 / T_ref.
    log_cap, log_floor : float or array, default +inf and -inf
        Bounds on the result (the integrators cap the self-heating rate and floor negligible rates).

    Returns
    -------
    float or array
        ln k(T); a float for float inputs.

    Notes
    -----
    .. math:: \ln k(T) = \ln k_{ref} - \frac{E}{R}\left(\frac{1}{T} - \frac{1}{T_{ref}}\right)

    References
    ----------
    Arrhenius, S., Z. Phys. Chem. 4 (1889) 226; R = 8.314462618 J/(mol K) (CODATA 2018).

    Examples
    --------
    A rate of 12 W/kg at 80 degC with E = 70 kJ/mol, at 90 degC; by hand,
    12 exp[-(70000 / 8.314462618) (1/363.15 - 1/353.15)] = 23.136 W/kg:

    >>> import math
    >>> e_over_r = 70e3 / GAS_CONSTANT
    >>> lq = log_arrhenius_rate(1 / 363.15, math.log(12.0), e_over_r, 1 / 353.15)
    >>> round(math.exp(lq), 3)
    23.136
    """
    x = log_reference_rate - activation_temperature * (inverse_temperature - inverse_reference_temperature)
    if isinstance(x, float):
        if x > log_cap:
            return float(log_cap)
        return float(log_floor) if x < log_floor else x
    return np.maximum(np.minimum(x, log_cap), log_floor)


def arrhenius_specific_power(temperature, specific_power, reference_temperature,
                             activation_energy, conversion=0.0, order=0.0):
    r"""Specific heat-release rate of a reaction at a temperature.

    Parameters
    ----------
    temperature : float or array, [K]
    specific_power : float or array, [W/kg]
        Rate at ``reference_temperature`` and zero conversion, > 0.
    reference_temperature : float or array, [K]
    activation_energy : float or array, [J/mol]
    conversion : float or array, [-], default 0
    order : float or array, [-], default 0

    Returns
    -------
    float or array, [W/kg]

    Notes
    -----
    .. math:: q(T, X) = q_{ref} \exp\left[-\frac{E}{R}\left(\frac{1}{T}
              - \frac{1}{T_{ref}}\right)\right] (1 - X)^n

    Evaluated by :func:`log_arrhenius_rate` with the exponent capped at 700 (exp(700) is about
    1e304), so that the result never overflows.

    References
    ----------
    Arrhenius law; R = 8.314462618 J/(mol K) (CODATA 2018).

    Examples
    --------
    >>> round(arrhenius_specific_power(363.15, 12.0, 353.15, 70e3), 3)
    23.136
    >>> round(arrhenius_specific_power(353.15, 12.0, 353.15, 70e3, conversion=0.5, order=1), 3)
    6.0
    """
    temperature = np.asarray(temperature, dtype=float)
    log_q = log_arrhenius_rate(1.0 / temperature, np.log(specific_power), np.asarray(activation_energy) / GAS_CONSTANT,
                               1.0 / np.asarray(reference_temperature, dtype=float),
                               log_cap=np.log(specific_power) + 700.0)
    remaining = np.clip(1.0 - np.asarray(conversion, dtype=float), 0.0, 1.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        depletion = np.where(np.asarray(order) == 0, 1.0, remaining ** np.asarray(order, dtype=float))
    out = np.exp(log_q) * depletion
    return out if out.ndim else float(out)
