r"""The daily cycle of the air and the sun on the exposed surface: sol-air forcing of the lumped balance.

The air follows a cosine about its daily mean and the sun a half sine between sunrise and sunset
(zero at night). Solar gain enters through the sol-air temperature of the exposed surface,

.. math:: T_{sa} = T_{air} + \frac{\alpha\,G(t)}{h_o}

and the heat flow to the contents is :math:`UA_{exp}(T_{sa} - T) + UA_{rest}(T_{air} - T)` with
:math:`UA_{exp} = UA\,A_{exp}/A`, i.e. :math:`UA\,(T_{eff}(t) - T)` with the effective ambient

.. math:: T_{eff}(t) = \bar T_a + \frac{R}{2}\cos\left(\omega (\theta - t_w)\right)
          + f \frac{\alpha G_{pk}}{h_o}\, s(\theta),
          \qquad s(\theta) = \sin\left(\pi \frac{\theta_{day} - t_r}{D}\right) \text{ in daylight, else } 0

(:math:`\theta` solar time, :math:`\omega = 2\pi / 24\,\mathrm{h}`, :math:`t_w` the warmest time of
day, :math:`t_r = 12\,\mathrm{h} - D/2` sunrise, :math:`D` the day length, :math:`f = A_{exp}/A`).
The balance :math:`C\,dT/dt = Q_0 - G T + \sum_i P_i e^{-b_i t} + F(t)`, with
:math:`F(t) = UA\,(T_{eff}(t) - \bar T_a)`, stays linear in T: the history is the closed form of
:mod:`screening.core.closed_form_history` plus the response :math:`T_c` to F with
:math:`T_c(0) = 0`, which is exact too: the particular solution of
:math:`\dot y + \lambda y = a\cos(\omega t + \varphi)` is
:math:`y_p = a\,(\lambda \cos(\omega t + \varphi) + \omega \sin(\omega t + \varphi)) / (\lambda^2 + \omega^2)`,
so the air part is :math:`y_p(t) - y_p(0) e^{-\lambda t}`, and each daylight pulse contributes
its own particular solution while the sun is up and a decaying exponential after sunset (the sum
over past days is a geometric series). The pieces join at sunrise and sunset, where T and dT/dt are
continuous.

Assumptions (said in the outputs that use them): sinusoidal air, a half-sine irradiance on a fixed
exposed area, one outer film coefficient, a lumped (well-mixed) body: the sunlit side of a real
vessel runs hotter than the mean shown.

References
----------
ASHRAE Handbook, *Fundamentals*, chapter on heat gains through walls and roofs: sol-air temperature
T_sa = T_o + alpha I / h_o (from memory).
Incropera, F. P. et al., *Fundamentals of Heat and Mass Transfer*, 6th ed., Wiley (2007), ch. 5
(lumped capacitance). The particular solution of a first-order linear equation under sinusoidal
forcing: any text on ordinary differential equations (common practice).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

DAY = 86400.0  #: s, one solar day
NOON = 43200.0  #: s, solar noon
OMEGA = 2.0 * math.pi / DAY  #: rad/s
DEFAULT_WARMEST_TIME = 15 * 3600.0  #: s, 15 h solar time (common practice, from memory)
DEFAULT_OUTER_COEFFICIENT = 15.0  #: W/(m^2 K), outer film with wind and radiation (common practice, from memory)
MIN_ELEVATION = math.radians(30.0)  #: lowest solar elevation counted for the ``projected`` exposed area

__all__ = ["DAY", "DailyCycle", "CycleForcing", "air_temperature", "irradiance_fraction", "sol_air_temperature",
           "effective_ambient", "daily_maximum", "mean_rise", "largest_projection", "cycle_forcing", "cycle_response",
           "day_knots"]


@dataclass(frozen=True)
class DailyCycle:
    r"""The daily cycle of the effective ambient of one vessel, SI.

    Parameters
    ----------
    daily_range : float, [K]
        R >= 0, warmest minus coolest air.
    warmest_time : float, [s]
        t_w, solar time of the warmest air.
    start_time : float, [s]
        Solar time of day at t = 0, in [0, 86400).
    solar_rise : float, [K]
        f alpha G_pk / h_o >= 0: the peak excess of the effective ambient over the air (the exposed share f
        of the sol-air excess).
    day_length : float, [s]
        D in (0, 86400], sunrise to sunset, centred on solar noon.

    Notes
    -----
    .. math:: T_{eff}(t) = \bar T_a + \frac{R}{2}\cos(\omega(\theta - t_w)) + \Delta_{sun}\, s(\theta),
              \qquad \theta = t_{start} + t
    """

    daily_range: float = 0.0
    warmest_time: float = DEFAULT_WARMEST_TIME
    start_time: float = 0.0
    solar_rise: float = 0.0
    day_length: float = 43200.0


def air_temperature(mean, daily_range, warmest_time, time_of_day):
    r"""Air temperature over the day, K.

    Parameters
    ----------
    mean : float or array, [K]
        Daily mean.
    daily_range : float or array, [K]
        Warmest minus coolest.
    warmest_time : float or array, [s]
        Solar time of the warmest air.
    time_of_day : float or array, [s]
        Solar time (any real; taken modulo 24 h by the cosine).

    Returns
    -------
    numpy.ndarray, [K]

    Notes
    -----
    .. math:: T_{air} = \bar T + \frac{R}{2} \cos\left(2\pi \frac{\theta - t_w}{24\,\mathrm{h}}\right)

    Examples
    --------
    By hand: mean 28 degC, range 14 K, warmest at 15 h: 35 degC at 15 h, 21 degC at 3 h, 28 degC at 9 h:

    >>> [round(float(v) - 273.15, 9) for v in air_temperature(301.15, 14.0, 54000.0, [54000.0, 10800.0, 32400.0])]
    [35.0, 21.0, 28.0]
    """
    theta = np.asarray(time_of_day, dtype=float)
    return np.asarray(mean, dtype=float) + 0.5 * np.asarray(daily_range, dtype=float) * np.cos(
        OMEGA * (theta - np.asarray(warmest_time, dtype=float)))


def irradiance_fraction(day_length, time_of_day):
    r"""Irradiance as a fraction of its peak at solar noon: a half sine between sunrise and sunset, 0 at night.

    Parameters
    ----------
    day_length : float or array, [s]
        D in (0, 86400].
    time_of_day : float or array, [s]

    Returns
    -------
    numpy.ndarray, [-]

    Notes
    -----
    .. math:: s(\theta) = \sin\left(\pi \frac{\theta_{day} - (12\,\mathrm{h} - D/2)}{D}\right)
              \text{ for } |\theta_{day} - 12\,\mathrm{h}| < D/2, \text{ else } 0

    Examples
    --------
    By hand, a 12 h day: 1 at noon, sin(pi/4) = 0.707107 at 9 h, 0 at 5 h and at 20 h:

    >>> [round(float(v), 6) for v in irradiance_fraction(43200.0, [43200.0, 32400.0, 18000.0, 72000.0])]
    [1.0, 0.707107, 0.0, 0.0]
    """
    D = np.asarray(day_length, dtype=float)
    tod = np.mod(np.asarray(time_of_day, dtype=float), DAY)
    u = tod - (NOON - 0.5 * D)
    up = (u > 0) & (u < D)
    return np.where(up, np.sin(np.pi * np.clip(u, 0.0, D) / D), 0.0)


def sol_air_temperature(air_temperature, absorptivity, irradiance, outer_coefficient=DEFAULT_OUTER_COEFFICIENT):
    r"""Sol-air temperature of a sunlit surface, K.

    Parameters
    ----------
    air_temperature : float or array, [K]
    absorptivity : float or array, [-]
        alpha, solar absorptivity of the outer surface.
    irradiance : float or array, [W/m^2]
        G on the surface.
    outer_coefficient : float or array, [W/(m^2 K)], default 15
        h_o, outer film coefficient (convection and long-wave radiation; 15 common practice, from memory).

    Returns
    -------
    numpy.ndarray, [K]

    Notes
    -----
    .. math:: T_{sa} = T_{air} + \frac{\alpha G}{h_o}

    The long-wave correction for a surface facing the sky is left out (it lowers T_sa by a few kelvin
    on a horizontal surface: conservative to omit).

    References
    ----------
    ASHRAE Handbook, *Fundamentals*, sol-air temperature (from memory).

    Examples
    --------
    By hand: air at 35 degC, alpha = 0.7, G = 850 W/m^2, h_o = 15 W/(m^2 K): 35 + 595 / 15 = 74.667 degC:

    >>> round(float(sol_air_temperature(308.15, 0.7, 850.0, 15.0)) - 273.15, 3)
    74.667
    """
    return np.asarray(air_temperature, dtype=float) + np.asarray(absorptivity, dtype=float) * np.asarray(
        irradiance, dtype=float) / np.asarray(outer_coefficient, dtype=float)


def effective_ambient(mean, cycle: DailyCycle, t):
    r"""Effective ambient of the lumped balance at elapsed time t, K: the air plus the exposed share of the sol-air excess.

    Parameters
    ----------
    mean : float, [K]
        Daily mean of the air.
    cycle : DailyCycle
    t : float or array, [s]
        Time since the start (solar time ``cycle.start_time + t``).

    Returns
    -------
    numpy.ndarray, [K]

    Notes
    -----
    .. math:: T_{eff} = T_{air}(\theta) + \Delta_{sun}\, s(\theta), \qquad \theta = t_{start} + t

    Examples
    --------
    By hand: mean 28 degC, range 14 K, warmest 15 h, 4 K solar rise, 12 h day, start at midnight: at noon
    (t = 12 h) 28 + 7 cos(-pi/4) + 4 = 36.949747 degC:

    >>> c = DailyCycle(14.0, 54000.0, 0.0, 4.0, 43200.0)
    >>> round(float(effective_ambient(301.15, c, 43200.0)) - 273.15, 6)
    36.949747
    """
    theta = cycle.start_time + np.asarray(t, dtype=float)
    return air_temperature(mean, cycle.daily_range, cycle.warmest_time, theta) + cycle.solar_rise * \
        irradiance_fraction(cycle.day_length, theta)


def daily_maximum(mean, cycle: DailyCycle):
    r"""Daily maximum of the effective ambient and its solar time.

    Parameters
    ----------
    mean : float, [K]
    cycle : DailyCycle

    Returns
    -------
    (float, float)
        [K] the maximum and [s] its solar time of day.

    Notes
    -----
    The maximum of :math:`T_{eff}(\theta)` over one day, on a 10 s grid refined by a parabola through the best
    point and its neighbours (error below 1e-6 K for daily ranges and solar rises of tens of kelvin).

    Examples
    --------
    By hand, no sun: the warmest air, mean + range/2 = 35 degC at 15 h; sun only (range 0): the solar rise at
    noon:

    >>> T, when = daily_maximum(301.15, DailyCycle(14.0, 54000.0, 0.0, 0.0, 46800.0))
    >>> round(T - 273.15, 6), round(when / 3600.0, 3)
    (35.0, 15.0)
    >>> T, when = daily_maximum(301.15, DailyCycle(0.0, 54000.0, 0.0, 20.0, 46800.0))
    >>> round(T - 273.15, 6), round(when / 3600.0, 3)
    (48.0, 12.0)
    """
    step = 10.0
    theta = np.arange(0.0, DAY, step)
    start0 = DailyCycle(cycle.daily_range, cycle.warmest_time, 0.0, cycle.solar_rise, cycle.day_length)
    values = effective_ambient(mean, start0, theta)
    k = int(np.argmax(values))
    y0, y1, y2 = (float(v) for v in effective_ambient(mean, start0, theta[k] + np.array([-step, 0.0, step])))
    den = y0 - 2.0 * y1 + y2
    shift = 0.5 * (y0 - y2) / den * step if den < 0 else 0.0
    shift = max(-step, min(step, shift))
    best = float(effective_ambient(mean, start0, theta[k] + shift))
    if best < y1:
        best, shift = y1, 0.0
    return best, float(np.mod(theta[k] + shift, DAY))


def largest_projection(shape, diameter=None, length=None, width=None, height=None, min_elevation=MIN_ELEVATION):
    r"""Largest area a body shows to the sun for solar elevations from 30 degrees to 90 degrees (any azimuth).

    Parameters
    ----------
    shape : {"vertical-cylinder", "horizontal-cylinder", "sphere", "box"}
    diameter : float or array, [m]
        Cylinders and spheres.
    length : float or array, [m]
        Overall length of a cylinder (heads included: the bounding cylinder, conservative), or of a box.
    width, height : float or array, [m]
        Box.
    min_elevation : float, [rad], default 30 degrees

    Returns
    -------
    numpy.ndarray, [m^2]

    Notes
    -----
    A convex body's projection along a direction is the sum over its faces of area times
    :math:`|\cos|` of the angle to that direction, over the faces that see it. With elevation e:

    * sphere: :math:`\pi D^2/4`;
    * vertical cylinder: :math:`(\pi D^2/4) \sin e + D L \cos e`;
    * box (worst azimuth): :math:`L W \sin e + H \sqrt{L^2 + W^2} \cos e`;
    * horizontal cylinder, with :math:`c = \cos e \cos\phi` (:math:`\phi` the azimuth from the axis,
      :math:`0 \le c \le \cos 30^\circ`): :math:`(\pi D^2/4)\, c + D L \sqrt{1 - c^2}`.

    Each has the form :math:`a \sin x + b \cos x`, largest at :math:`\sqrt{a^2 + b^2}` when
    :math:`\tan x = a/b` lies in the range, else at the nearer end. A cylinder with dished heads is taken
    as its bounding cylinder (conservative).

    Examples
    --------
    By hand: a sphere of 2 m, pi; a drum of D = 0.6 m, L = 0.9 m standing: a = 0.282743, b = 0.54,
    tan x = 0.5236 (x = 27.6 degrees, below 30) so at 30 degrees 0.282743 / 2 + 0.54 x 0.866025 = 0.609025;
    lying down: c = a / sqrt(a^2 + b^2) = 0.4639 in range, sqrt(a^2 + b^2) = 0.609544:

    >>> [round(float(largest_projection(s, 0.6, 0.9)), 6) for s in ("vertical-cylinder", "horizontal-cylinder")]
    [0.609025, 0.609544]
    >>> round(float(largest_projection("sphere", 2.0)), 6), float(largest_projection("box", None, 2.0, 1.0, 1.0))
    (3.141593, 3.0)
    """
    lo, hi = min_elevation, 0.5 * math.pi
    if shape == "sphere":
        D = np.asarray(diameter, dtype=float)
        return np.pi * D ** 2 / 4.0
    if shape == "box":
        L, W, H = (np.asarray(v, dtype=float) for v in (length, width, height))
        a, b = L * W, H * np.hypot(L, W)  # a sin e + b cos e, e in [30, 90] degrees
    elif shape == "vertical-cylinder":
        D, L = np.asarray(diameter, dtype=float), np.asarray(length, dtype=float)
        a, b = np.pi * D ** 2 / 4.0, D * L
    elif shape == "horizontal-cylinder":
        D, L = np.asarray(diameter, dtype=float), np.asarray(length, dtype=float)
        a, b = np.pi * D ** 2 / 4.0, D * L  # a sin x + b cos x with sin x = c in [0, cos 30]
        lo, hi = 0.0, math.asin(math.cos(min_elevation))
    else:
        raise ValueError(f"unknown shape {shape!r}")
    x = np.clip(np.arctan2(a, b), lo, hi)
    return a * np.sin(x) + b * np.cos(x)


@dataclass(frozen=True)
class CycleForcing:
    r"""The time-dependent drive of the balance from the daily cycle, W (arrays broadcast).

    Attributes
    ----------
    air : float or array, [W]
        UA R / 2, amplitude of the air's drive.
    warmest_time : float or array, [s]
    solar : float or array, [W]
        UA Delta_sun, peak solar drive.
    day_length : float or array, [s]
    start_time : float or array, [s]
        Solar time at t = 0.

    Notes
    -----
    .. math:: F(t) = UA\frac{R}{2}\cos(\omega(t_{start} + t - t_w)) + UA\,\Delta_{sun}\, s(t_{start} + t)
    """

    air: object
    warmest_time: object
    solar: object
    day_length: object
    start_time: object

    def power(self, t):
        """F(t), W."""
        theta = np.asarray(self.start_time) + np.asarray(t, dtype=float)
        return np.asarray(self.air) * np.cos(OMEGA * (theta - np.asarray(self.warmest_time))) + \
            np.asarray(self.solar) * irradiance_fraction(self.day_length, theta)

    def power_rate(self, t):
        """dF/dt, W/s (one-sided at sunrise and sunset: the right-hand limit)."""
        theta = np.asarray(self.start_time) + np.asarray(t, dtype=float)
        D = np.asarray(self.day_length, dtype=float)
        tod = np.mod(theta, DAY)
        u = tod - (NOON - 0.5 * D)
        up = (u >= 0) & (u < D)
        return -np.asarray(self.air) * OMEGA * np.sin(OMEGA * (theta - np.asarray(self.warmest_time))) + \
            np.where(up, np.asarray(self.solar) * np.pi / D * np.cos(np.pi * np.clip(u, 0.0, D) / D), 0.0)


def cycle_forcing(cycle: DailyCycle | None, ua: float, time_shift: float = 0.0) -> CycleForcing | None:
    r"""The forcing of a vessel with heat loss ``ua`` under a daily cycle, or None without one.

    Parameters
    ----------
    cycle : DailyCycle or None
    ua : float, [W/K]
        Heat loss to ambient (0 gives no forcing: the adiabatic bound ignores the weather).
    time_shift : float, [s], default 0
        Starts the clock later (the cycle has moved on by the shift).

    Returns
    -------
    CycleForcing or None

    Examples
    --------
    By hand: 50 W/K, range 10 K, solar rise 4 K: air drive 250 W, solar drive 200 W:

    >>> f = cycle_forcing(DailyCycle(10.0, 54000.0, 0.0, 4.0, 43200.0), 50.0)
    >>> f.air, f.solar
    (250.0, 200.0)
    """
    if cycle is None or (cycle.daily_range == 0.0 and cycle.solar_rise == 0.0):
        return None
    return CycleForcing(0.5 * ua * cycle.daily_range, cycle.warmest_time, ua * cycle.solar_rise, cycle.day_length,
                        math.fmod(cycle.start_time + time_shift, DAY))


def mean_rise(cycle: DailyCycle | None) -> float:
    r"""Daily mean of the effective ambient above the air's daily mean, K (the sun's half sine averaged over 24 h).

    Parameters
    ----------
    cycle : DailyCycle or None

    Returns
    -------
    float, [K]
        0 without a cycle or without sun.

    Notes
    -----
    .. math:: \overline{T_{eff}} - \bar T_a = \Delta_{sun} \frac{1}{24\,\mathrm{h}} \int_0^D \sin\frac{\pi u}{D}\,du
              = \Delta_{sun} \frac{2 D}{\pi \cdot 24\,\mathrm{h}}

    (the air's cosine averages to zero). A linear lumped body settles into a periodic state whose daily mean is
    the daily mean of its effective ambient (plus its own drive / UA).

    Examples
    --------
    By hand: a 10.68 K solar rise over a 15 h day: 10.68 x 30 / (24 pi) = 4.2494 K:

    >>> round(mean_rise(DailyCycle(14.0, 54000.0, 0.0, 10.68, 15 * 3600.0)), 4)
    4.2494
    """
    if cycle is None:
        return 0.0
    return cycle.solar_rise * 2.0 * cycle.day_length / (math.pi * DAY)


def day_knots(forcing: CycleForcing, horizon: float) -> np.ndarray:
    """Sunrises and sunsets in elapsed time within (0, horizon), s (one vessel).

    Examples
    --------
    By hand: a 12 h day starting at midnight: sunrise 6 h, sunset 18 h, then 30 h and 42 h:

    >>> f = CycleForcing(1.0, 54000.0, 1.0, 43200.0, 0.0)
    >>> (day_knots(f, 48 * 3600.0) / 3600.0).tolist()
    [6.0, 18.0, 30.0, 42.0]
    """
    D, s0 = float(forcing.day_length), float(forcing.start_time)
    days = np.arange(0.0, math.ceil((horizon + s0) / DAY) + 1.0)
    knots = np.concatenate([days * DAY + NOON - 0.5 * D, days * DAY + NOON + 0.5 * D]) - s0
    knots = np.unique(knots)
    return knots[(knots > 0) & (knots < horizon)]


def _pulse(lam, W, u):
    """Particular solution of y' + lam y = sin(W u) and its derivative (per unit drive)."""
    k = lam * lam + W * W
    s, c = np.sin(W * u), np.cos(W * u)
    return (lam * s - W * c) / k, W * (lam * c + W * s) / k


def cycle_response(lam, heat_capacity, forcing: CycleForcing, t):
    r"""Exact response of the lumped balance to the daily-cycle forcing, starting from zero, and its rate.

    Parameters
    ----------
    lam : float or array, [1/s]
        lambda = G / C >= 0.
    heat_capacity : float or array, [J/K]
        C.
    forcing : CycleForcing
        Fields broadcastable with ``t`` (and ``lam``).
    t : float or array, [s]
        t >= 0.

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        [K] :math:`T_c(t)` and [K/s] :math:`\dot T_c(t)`, where :math:`C\dot T_c = -G T_c + F(t)`,
        :math:`T_c(0) = 0`.

    Notes
    -----
    With :math:`a = UA R / (2C)`, :math:`\varphi(t) = \omega(t_{start} + t - t_w)` and
    :math:`y_a(t) = a(\lambda\cos\varphi + \omega\sin\varphi)/(\lambda^2 + \omega^2)`, the air part is
    :math:`y_a(t) - y_a(0)e^{-\lambda t}`. With :math:`\sigma = UA\Delta_{sun}/C`, :math:`\Omega = \pi / D`
    and :math:`p(u) = (\lambda \sin\Omega u - \Omega\cos\Omega u)/(\lambda^2 + \Omega^2)`, a pulse that
    began at phase :math:`u_s` contributes :math:`\sigma(p(u) - p(u_s)e^{-\lambda(u - u_s)})` while the sun is
    up (u the time since sunrise) and, after sunset, its sunset value
    :math:`Y = \sigma\,\Omega(1 + e^{-\lambda D})/(\lambda^2 + \Omega^2)` (a full pulse) decaying as
    :math:`e^{-\lambda(t - t_{set})}`; the N full pulses already set sum as a geometric series of ratio
    :math:`q = e^{-\lambda\,24\,\mathrm{h}}`. A start in daylight makes the first pulse partial
    (:math:`u_s > 0`).

    Examples
    --------
    Adiabatic limit (lambda = 0): the response is the integral of the forcing. By hand, a 1 W solar drive into
    C = 1 J/K over a 12 h day gives 2 D / pi = 27501.974 K after one full day, and nothing from the air over a
    whole period:

    >>> f = CycleForcing(1.0, 54000.0, 1.0, 43200.0, 0.0)
    >>> T, rate = cycle_response(0.0, 1.0, f, 86400.0)
    >>> round(float(T), 3)
    27501.974
    """
    t = np.asarray(t, dtype=float)
    lam = np.asarray(lam, dtype=float)
    C = np.asarray(heat_capacity, dtype=float)
    s0 = np.asarray(forcing.start_time, dtype=float)
    D = np.asarray(forcing.day_length, dtype=float)
    theta = s0 + t
    with np.errstate(over="ignore", invalid="ignore", divide="ignore", under="ignore"):
        # air: a cosine from t = 0
        a = np.asarray(forcing.air, dtype=float) / C
        kw = lam * lam + OMEGA * OMEGA
        phi, phi0 = OMEGA * (theta - forcing.warmest_time), OMEGA * (s0 - forcing.warmest_time)
        ya0 = a * (lam * np.cos(phi0) + OMEGA * np.sin(phi0)) / kw
        decay = np.exp(-lam * t)
        value = a * (lam * np.cos(phi) + OMEGA * np.sin(phi)) / kw - ya0 * decay
        rate = a * OMEGA * (OMEGA * np.cos(phi) - lam * np.sin(phi)) / kw + lam * ya0 * decay
        # sun: half-sine pulses
        sig = np.asarray(forcing.solar, dtype=float) / C
        W = np.pi / D
        rise, set_ = NOON - 0.5 * D, NOON + 0.5 * D
        partial = (s0 > rise) & (s0 < set_)
        u0 = np.where(partial, s0 - rise, 0.0)
        first_full = np.where(s0 <= rise, 0.0, 1.0)
        # one phase u (time since the day's sunrise) decides both whether the sun is up and which pulses have
        # set, so that the two never count the same pulse at sunset
        day = np.floor(theta / DAY)
        u = theta - day * DAY - rise
        up = (u >= 0) & (u < D)
        last_set = np.where(u >= D, day, day - 1.0)  # day of the last sunset at or before theta
        n_full = np.maximum(0.0, last_set - first_full + 1.0)
        kW = lam * lam + W * W
        y_full = W * (1.0 + np.exp(-lam * D)) / kW
        q_sum = np.where(lam > 0, np.expm1(-lam * DAY * n_full) / np.expm1(-lam * DAY), n_full)
        since_set = np.where(u >= D, u - D, theta - (last_set * DAY + set_))
        done = np.where(n_full > 0, y_full * np.exp(-lam * since_set) * q_sum, 0.0)
        pu0, _ = _pulse(lam, W, u0)
        y_part = W / kW - pu0 * np.exp(-lam * (D - u0))
        partial_set = partial & ~((day == 0) & (u < D))
        done = done + np.where(partial_set, y_part * np.exp(-lam * np.maximum(theta - set_, 0.0)), 0.0)
        us = np.where(partial & (day == 0), u0, 0.0)
        pu, dpu = _pulse(lam, W, np.clip(u, 0.0, D))
        pus, _ = _pulse(lam, W, us)
        e = np.exp(-lam * np.maximum(u - us, 0.0))
        now = np.where(up, pu - pus * e, 0.0)
        now_rate = np.where(up, dpu + lam * pus * e, 0.0)
        value = value + sig * (done + now)
        rate = rate + sig * (now_rate - lam * done)
    return value, rate
