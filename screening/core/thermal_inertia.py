r"""Adiabatic calorimeter runs: the thermal-inertia factor phi, its correction and the self-heat-rate fit.

An adiabatic calorimeter heats its own cell as well as the sample, so a measured run is slower and
smaller than the runaway of the sample alone: the rise is the adiabatic rise divided by phi, and the
self-heat rate at a temperature is lower.  This module corrects a run to phi = 1 and fits n-th-order
kinetics to its self-heat rate.  Pure functions, SI units (K, s).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from screening.core.arrhenius import log_arrhenius_rate
from screening.core.model import GAS_CONSTANT

__all__ = ["phi_factor", "phi_corrected", "SelfHeatFit", "fit_self_heat_rate", "onset_index"]

#: The correction's published form, as the output names it.
PHI_CORRECTION_SOURCE = ("Fisher et al., Emergency Relief System Design Using DIERS Technology, AIChE (1992): "
                         "1/T0,corr = 1/T0 + (R/E) ln phi; T_corr = T0,corr + phi (T - T0); "
                         "(dT/dt)_corr = phi (dT/dt) exp[(E/R)(1/T - 1/T_corr)] (from memory, not checked "
                         "against the book)")


def phi_factor(sample_mass, sample_specific_heat, cell_mass, cell_specific_heat):
    r"""Thermal-inertia factor of an adiabatic calorimeter test.

    Parameters
    ----------
    sample_mass : float, [kg]
    sample_specific_heat : float, [J/(kg K)]
    cell_mass : float, [kg]
        The part of the cell (bomb) heated with the sample.
    cell_specific_heat : float, [J/(kg K)]

    Returns
    -------
    float, [-], >= 1

    Notes
    -----
    .. math:: \phi = 1 + \frac{m_{cell}\,c_{cell}}{m_{s}\,c_{s}}

    References
    ----------
    Townsend, D. I. and Tou, J. C., *Thermochimica Acta* 37 (1980) 1-30 (from memory).

    Examples
    --------
    5 g of sample at 2 kJ/(kg K) in a 10 g cell at 0.42 kJ/(kg K): 1 + 4.2 / 10 = 1.42:

    >>> round(phi_factor(0.005, 2000.0, 0.010, 420.0), 6)
    1.42
    """
    return 1.0 + (cell_mass * cell_specific_heat) / (sample_mass * sample_specific_heat)


def phi_corrected(temperature, self_heat_rate, onset_temperature, phi, activation_energy):
    r"""A measured adiabatic run corrected to phi = 1 (the sample alone, no heat to the cell).

    Parameters
    ----------
    temperature : array, [K]
        Measured temperatures from the onset on.
    self_heat_rate : array, [K/s]
        Measured dT/dt at those temperatures.
    onset_temperature : float, [K]
        Measured onset T0.
    phi : float, [-], >= 1
    activation_energy : float, [J/mol]

    Returns
    -------
    onset : float, [K]
        :math:`T_{0,corr}`.
    temperature : array, [K]
        :math:`T_{corr}`.
    self_heat_rate : array, [K/s]
        :math:`(dT/dt)_{corr}`.

    Notes
    -----
    .. math:: \frac{1}{T_{0,corr}} = \frac{1}{T_0} + \frac{R}{E}\ln\phi, \quad
              T_{corr} = T_{0,corr} + \phi (T - T_0), \quad
              \left(\frac{dT}{dt}\right)_{corr} = \phi \left(\frac{dT}{dt}\right)
              \exp\left[\frac{E}{R}\left(\frac{1}{T} - \frac{1}{T_{corr}}\right)\right]

    At the same conversion the sample alone is at :math:`T_{corr}` and reacts faster by the Arrhenius
    factor; its rise is phi times larger.  The onset moves down because the sample alone reaches the
    calorimeter's detection threshold at a rate phi times smaller.  An onset depends on the instrument's
    sensitivity and is not a property of the material.

    References
    ----------
    Fisher, H. G. et al., *Emergency Relief System Design Using DIERS Technology*, AIChE (1992) (the form
    here is from memory, not checked against the book).

    Examples
    --------
    By hand, phi = 1.5, E = 100 kJ/mol, T0 = 400 K: 1/T0,corr = 0.0025 + 8.314462618 x 0.405465 / 1e5
    = 0.00253371, so T0,corr = 394.68 K; at T = 420 K, T_corr = 394.68 + 1.5 x 20 = 424.68 K and a measured
    0.01 K/s becomes 1.5 x 0.01 x exp[12027.2 (1/420 - 1/424.678)] = 0.015 x 1.37088 = 0.02056 K/s:

    >>> import numpy as np
    >>> t0, t, m = phi_corrected(np.array([420.0]), np.array([0.01]), 400.0, 1.5, 100e3)
    >>> round(t0, 2), round(float(t[0]), 2), round(float(m[0]), 5)
    (394.68, 424.68, 0.02056)
    """
    temperature = np.asarray(temperature, dtype=float)
    rate = np.asarray(self_heat_rate, dtype=float)
    onset = 1.0 / (1.0 / onset_temperature + GAS_CONSTANT / activation_energy * math.log(phi))
    t_corr = onset + phi * (temperature - onset_temperature)
    # exp[(E/R)(1/T - 1/T_corr)]: the Arrhenius factor from T to T_corr
    r_corr = phi * rate * np.exp(log_arrhenius_rate(1.0 / t_corr, 0.0, activation_energy / GAS_CONSTANT,
                                                    1.0 / temperature))
    return float(onset), t_corr, r_corr


def onset_index(self_heat_rate, threshold):
    """Index of the first point from which the self-heat rate stays at or above ``threshold`` [K/s].

    Examples
    --------
    >>> onset_index([0.0, 0.5, 0.1, 1.0, 2.0], 0.4)
    3
    """
    r = np.asarray(self_heat_rate, dtype=float)
    peak = int(np.nanargmax(r))
    below = np.flatnonzero(~(r[:peak + 1] >= threshold))
    return int(below[-1]) + 1 if below.size else 0


@dataclass(frozen=True)
class SelfHeatFit:
    """n-th-order kinetics from an adiabatic run's self-heat rate."""

    rate_constant: float  # 1/s at reference_temperature
    reference_temperature: float  # K
    activation_energy: float  # J/mol
    activation_energy_standard_error: float  # J/mol
    ln_rate_constant_standard_error: float
    order: float
    r_squared: float
    linear_fails: bool  # the n-th-order linearisation does not straighten the data: a sign of autocatalysis
    points: int
    curvature: float = 0.0  # how far a parabola departs from the best line over the data, in ln k


def fit_self_heat_rate(temperature, self_heat_rate, onset_temperature, final_temperature,
                       orders=np.arange(0.0, 3.0001, 0.05), conversion_range=(0.02, 0.9),
                       r_squared_limit=0.99, curvature_limit=0.05):
    r"""n-th-order kinetics from the self-heat rate of an adiabatic run (Townsend and Tou).

    Parameters
    ----------
    temperature : array, [K]
    self_heat_rate : array, [K/s]
    onset_temperature, final_temperature : float, [K]
        T0 and Tf of the run (its measured rise is Tf - T0).
    orders : array, default 0 to 3 in steps of 0.05
        Orders tried.
    conversion_range : (float, float), default (0.02, 0.9)
        Points whose conversion (T - T0)/(Tf - T0) lies in this range are used.
    r_squared_limit : float, default 0.99
        Below this coefficient of determination of the best straight line the n-th-order form is said to
        fail (a sign of autocatalysis, to be checked, e.g. by an isothermal run).
    curvature_limit : float, default 0.05
        It also fails when a parabola in 1/T fits significantly better (F-test at 1 %) and departs from the
        line by more than this in ln k (5 % in the rate) over the data, or when the best order is at an end of
        ``orders``.

    Returns
    -------
    SelfHeatFit

    Notes
    -----
    With the conversion :math:`\alpha = (T - T_0)/\Delta T`, :math:`\Delta T = T_f - T_0`, an n-th-order
    reaction in an adiabatic cell follows :math:`d\alpha/dt = k(T)(1-\alpha)^n`, so

    .. math:: k(T) = \frac{dT/dt}{\Delta T}\left(\frac{\Delta T}{T_f - T}\right)^n

    and :math:`\ln k` is a straight line in :math:`1/T` of slope :math:`-E/R` for the right n (Townsend and Tou's
    rate constant :math:`k^* = k C_0^{n-1}`, in conversion form).  The order is the one whose line has the least
    squared residual.  This holds in the measured run whatever phi is (the cell only slows the rise), so the
    kinetics come from the measured data; phi enters the heat of reaction and the correction of the run.

    References
    ----------
    Townsend, D. I. and Tou, J. C., *Thermochimica Acta* 37 (1980) 1-30.

    Examples
    --------
    A first-order run, k(450 K) = 1e-3 1/s, E = 100 kJ/mol, from 400 to 500 K:

    >>> import numpy as np
    >>> R = 8.314462618
    >>> T = np.linspace(402, 490, 50)
    >>> k = 1e-3 * np.exp(-1e5 / R * (1 / T - 1 / 450))
    >>> fit = fit_self_heat_rate(T, 100 * k * (500 - T) / 100, 400.0, 500.0)
    >>> round(fit.activation_energy), round(fit.order, 3), fit.linear_fails
    (100000, 1.0, False)
    """
    temp = np.asarray(temperature, dtype=float)
    rate = np.asarray(self_heat_rate, dtype=float)
    rise = final_temperature - onset_temperature
    alpha = (temp - onset_temperature) / rise
    keep = (alpha >= conversion_range[0]) & (alpha <= conversion_range[1]) & (rate > 0)
    if keep.sum() < 5:
        raise ValueError("fewer than 5 points between the onset and the end of the run")
    temp, rate, alpha = temp[keep], rate[keep], alpha[keep]
    tref = 1.0 / float(np.mean(1.0 / temp))
    x = 1.0 / temp - 1.0 / tref
    best = None
    for n in orders:
        y = np.log(rate / rise) - n * np.log(1.0 - alpha)
        slope, intercept = np.polyfit(x, y, 1)
        resid = y - (slope * x + intercept)
        ssr = float(resid @ resid)
        if best is None or ssr < best[0]:
            best = (ssr, float(n), float(slope), float(intercept), y)
    ssr, n, slope, intercept, y = best
    sst = float(((y - y.mean()) ** 2).sum())
    r2 = 1.0 - ssr / sst if sst > 0 else 1.0
    npts = temp.size
    s2 = ssr / max(npts - 2, 1)
    se_slope = math.sqrt(s2 / float((x ** 2).sum() - npts * x.mean() ** 2)) if npts > 2 else float("nan")
    se_icpt = math.sqrt(s2 * (1.0 / npts + x.mean() ** 2 / float(((x - x.mean()) ** 2).sum())))
    curvature = 0.0
    if npts > 4:
        from scipy.stats import f as f_dist

        quad = np.polyfit(x, y, 2)
        ssr2 = float(((y - np.polyval(quad, x)) ** 2).sum())
        curvature = float(np.ptp(np.polyval(quad, x) - (slope * x + intercept)))
        f_stat = (ssr - ssr2) / (ssr2 / (npts - 3)) if ssr2 > 0 else math.inf
        significant = f_stat > f_dist.ppf(0.99, 1, npts - 3)
    else:
        significant = False
    fails = r2 < r_squared_limit or n <= orders[0] or n >= orders[-1] or (
        significant and curvature > curvature_limit)
    return SelfHeatFit(math.exp(intercept), tref, -slope * GAS_CONSTANT, se_slope * GAS_CONSTANT, se_icpt, n, r2,
                       bool(fails), npts, curvature)
