r"""The Arrhenius law: temperature dependence of a specific heat-release rate.

Every engine evaluates it through :func:`log_arrhenius_rate` (the runaway criteria, the stiff
one-case integrator and the vectorised integrator for many samples), in logarithms so that
extreme inputs cannot overflow, with the cap and floor each engine needs passed as arguments.
"""
from __future__ import annotations

import math

import numpy as np

from screening.core.model import GAS_CONSTANT
from screening.core.root_finding import brent_root

__all__ = ["GAS_CONSTANT", "arrhenius_specific_power", "autocatalytic_term", "conversion_function",
           "conversion_of_maximum_rate", "log_arrhenius_rate"]


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


def autocatalytic_term(conversion, autocatalytic_order, initiation):
    r"""The autocatalytic factor :math:`g(\alpha) = \alpha^m + z` of the conversion function, and its slope.

    The one implementation every engine (the criteria, the one-case integrator, the vectorised
    integrator) multiplies into the depletion factor :math:`(1 - \alpha)^n`, so that
    :func:`conversion_function` is written once.

    Parameters
    ----------
    conversion : float or array, [-]
        :math:`\alpha`, taken within [0, 1].
    autocatalytic_order : float or array, [-]
        m > 0.  (m = 0 with z = 0 gives g = 1: an n-th order reaction.)
    initiation : float or array, [-]
        z >= 0, the ratio of the initiation to the autocatalytic rate constant.

    Returns
    -------
    (g, dg/dalpha) : floats or arrays, [-]
        The slope at :math:`\alpha = 0` with m < 1 is infinite in exact arithmetic; it is
        evaluated at :math:`\alpha = 10^{-12}` instead (a Jacobian only needs it finite).

    Notes
    -----
    .. math:: g(\alpha) = \alpha^m + z, \qquad g'(\alpha) = m \alpha^{m - 1}

    References
    ----------
    Sestak, J. and Berggren, G., Thermochimica Acta 3 (1971) 1 (the form
    :math:`\alpha^m (1 - \alpha)^n`); the initiation term z extends it so that the rate at zero
    conversion is not zero (extended Prout-Tompkins form, common practice).

    Examples
    --------
    By hand, m = 1, z = 0.02 at alpha = 0.3: g = 0.32, g' = 1:

    >>> g, dg = autocatalytic_term(0.3, 1.0, 0.02)
    >>> round(g, 12), dg
    (0.32, 1.0)
    """
    a = np.clip(np.asarray(conversion, dtype=float), 0.0, 1.0)
    m = np.asarray(autocatalytic_order, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        g = np.where(m == 0, 1.0, a ** m) + np.asarray(initiation, dtype=float)
        dg = np.where(m == 0, 0.0, m * np.maximum(a, 1e-12) ** (m - 1.0))
    if g.ndim == 0:
        return float(g), float(dg)
    return g, dg


def conversion_function(conversion, order, autocatalytic_order=0.0, initiation=0.0):
    r"""The conversion function :math:`f(\alpha) = (1 - \alpha)^n (\alpha^m + z)` of a reaction's rate.

    Parameters
    ----------
    conversion : float or array, [-]
        :math:`\alpha` within [0, 1].
    order : float or array, [-]
        n >= 0.
    autocatalytic_order : float or array, [-], default 0
        m; 0 (with z = 0) for an n-th order reaction, whose f is :math:`(1 - \alpha)^n`.
    initiation : float or array, [-], default 0
        z.

    Returns
    -------
    float or array, [-]

    Notes
    -----
    The rate of conversion and the heat release are

    .. math:: \frac{d\alpha}{dt} = k(T) f(\alpha), \qquad q = \Delta h\, k(T) f(\alpha)

    with k(T) from :func:`log_arrhenius_rate`.  The autocatalytic factor is
    :func:`autocatalytic_term`.

    References
    ----------
    Sestak, J. and Berggren, G., Thermochimica Acta 3 (1971) 1.

    Examples
    --------
    By hand, n = m = 1, z = 0.02 at alpha = 0.49: 0.51 x 0.51 = 0.2601:

    >>> round(conversion_function(0.49, 1.0, 1.0, 0.02), 12)
    0.2601
    >>> conversion_function(0.5, 2.0)  # n-th order: (1 - 0.5)^2
    0.25
    """
    a = np.clip(np.asarray(conversion, dtype=float), 0.0, 1.0)
    g, _ = autocatalytic_term(a, autocatalytic_order, initiation)
    with np.errstate(divide="ignore", invalid="ignore"):
        out = np.where(np.asarray(order) == 0, 1.0, (1.0 - a) ** np.asarray(order, dtype=float)) * g
    return out if out.ndim else float(out)


def conversion_of_maximum_rate(order, autocatalytic_order=0.0, initiation=0.0, initial_conversion=0.0):
    r"""The conversion at which :math:`f(\alpha) = (1 - \alpha)^n (\alpha^m + z)` is largest, on [alpha_0, 1].

    At a fixed temperature the rate is largest there: the steady criteria of an autocatalytic
    reaction take the rate at this conversion (conservative), and the isothermal induction time is
    the time to reach it.

    Parameters
    ----------
    order : float, [-]
        n >= 0.
    autocatalytic_order : float, [-], default 0
        m >= 0 (0 with z = 0: n-th order, whose maximum is at the initial conversion).
    initiation : float, [-], default 0
        z >= 0.
    initial_conversion : float, [-], default 0
        alpha_0: only conversions from there on count.

    Returns
    -------
    float, [-]

    Notes
    -----
    An interior maximum solves :math:`d \ln f / d\alpha = 0`, i.e.

    .. math:: m \alpha^{m-1} (1 - \alpha) = n (\alpha^m + z)

    found here by scanning f on a grid of 2001 points and solving that equation by Brent's
    method in the bracket of the best interior point; the ends of the interval are candidates too.  For n = m = 1 it is
    :math:`\alpha^* = (1 - z) / 2` when z < 1, else 0.  For n = 0 the maximum is at full
    conversion.

    Examples
    --------
    n = m = 1, z = 0.02: (1 - 0.02) / 2 = 0.49 (by hand):

    >>> round(conversion_of_maximum_rate(1.0, 1.0, 0.02), 9)
    0.49
    """
    a0 = min(max(float(initial_conversion), 0.0), 1.0)
    n, m, z = float(order), float(autocatalytic_order), float(initiation)
    if m == 0.0:
        return a0  # n-th order: (1 - alpha)^n only falls
    if n == 0.0:
        return 1.0
    grid = np.linspace(a0, 1.0, 2001)
    f = conversion_function(grid, n, m, z)
    i = int(np.argmax(f))
    if 0 < i < grid.size - 1:
        def slope(x):  # proportional to d ln f / d alpha, positive below the maximum
            return m * x ** (m - 1.0) * (1.0 - x) - n * (x ** m + z)

        lo, hi = float(grid[i - 1]), float(grid[i + 1])
        if slope(lo) > 0.0 > slope(hi):
            return brent_root(slope, lo, hi, xtol=1e-15, rtol=4 * np.finfo(float).eps, maxiter=200)
    return float(grid[i])
