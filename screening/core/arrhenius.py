"""Arrhenius temperature dependence of a specific heat-release rate."""
from __future__ import annotations

import numpy as np

from screening.core.model import GAS_CONSTANT


def arrhenius_specific_power(temperature, specific_power, reference_temperature,
                             activation_energy, conversion=0.0, order=0.0):
    r"""Specific heat-release rate of a reaction at a temperature.

    Parameters
    ----------
    temperature : float or array, K
    specific_power : float or array, W/kg
        Rate at ``reference_temperature`` and zero conversion.
    reference_temperature : float or array, K
    activation_energy : float or array, J/mol
    conversion : float or array, dimensionless, default 0
    order : float or array, dimensionless, default 0

    Returns
    -------
    float or array, W/kg

    Notes
    -----
    .. math:: q(T, X) = q_{ref} \exp\left[-\frac{E}{R}\left(\frac{1}{T}
              - \frac{1}{T_{ref}}\right)\right] (1 - X)^n

    The exponent is clipped at 700 so that the result never overflows.

    References
    ----------
    Arrhenius law; R = 8.314462618 J/(mol K) (CODATA 2018).
    """
    temperature = np.asarray(temperature, dtype=float)
    exponent = -activation_energy / GAS_CONSTANT * (1.0 / temperature - 1.0 / reference_temperature)
    exponent = np.minimum(exponent, 700.0)
    remaining = np.clip(1.0 - np.asarray(conversion, dtype=float), 0.0, 1.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        depletion = np.where(np.asarray(order) == 0, 1.0, remaining ** np.asarray(order, dtype=float))
    out = specific_power * np.exp(exponent) * depletion
    return out if out.ndim else float(out)
