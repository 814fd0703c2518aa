r"""A calorimeter run's exotherm: where it is, its baseline, its heat and its conversion.

Pure functions on arrays (SI): a heat-flow signal per mass against time (and temperature) in,
the exotherm's window, a straight baseline, the heat of reaction and the conversion history out.

The baseline is a straight line fitted by least squares to the run outside the exotherm (a sloping
baseline from a changing heat capacity or instrument drift is taken out); a sigmoid baseline (a
heat capacity that changes *during* the reaction) is not modelled, so a large heat-capacity step
makes the heat of reaction and the conversion at the ends less accurate.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["Exotherm", "noise_level", "find_exotherm", "conversion_history"]


@dataclass(frozen=True)
class Exotherm:
    """One run's exotherm: the integration window (indices), the baseline and the net signal."""

    start: int  # first index of the integration window
    stop: int  # last index (inclusive)
    baseline: np.ndarray  # W/kg at every point of the run
    net: np.ndarray  # heat flow minus baseline, W/kg (exothermic positive)
    noise: float  # standard deviation of the signal's noise about the baseline, W/kg


def noise_level(signal) -> float:
    r"""Standard deviation of white noise on a smooth signal, from its successive differences.

    Parameters
    ----------
    signal : array, any unit

    Returns
    -------
    float, same unit as ``signal``

    Notes
    -----
    For white noise of standard deviation :math:`\sigma` on a signal that changes little between
    samples, successive differences have standard deviation :math:`\sigma\sqrt{2}`; the median absolute
    deviation, divided by 0.6745 (its ratio to the standard deviation of a normal distribution), makes the
    estimate robust to the few large differences across a peak:

    .. math:: \hat\sigma = \frac{\operatorname{median}|\Delta y - \operatorname{median}\Delta y|}
              {0.6745\,\sqrt{2}}

    References
    ----------
    Median absolute deviation as a robust scale estimate (common practice; Hampel 1974).

    Examples
    --------
    A straight line has no noise:

    >>> noise_level([0.0, 1.0, 2.0, 3.0, 4.0])
    0.0
    """
    d = np.diff(np.asarray(signal, dtype=float))
    if d.size == 0:
        return 0.0
    return float(np.median(np.abs(d - np.median(d))) / (0.6744897501960817 * np.sqrt(2.0)))


def _line(x, y):
    """Least-squares straight line through (x, y); a constant when x does not vary."""
    if x.size >= 2 and np.ptp(x) > 0:
        slope, intercept = np.polyfit(x, y, 1)
        return float(slope), float(intercept)
    return 0.0, float(np.mean(y)) if y.size else 0.0


def find_exotherm(x, heat_flow, limits=None, edge_fraction=0.1, threshold_fraction=0.01,
                  widen=1.0) -> Exotherm:
    r"""Find the main exotherm of a run and its straight baseline.

    Parameters
    ----------
    x : array, [K] or [s]
        The run's abscissa: the temperature of a scanning run, the time of an isothermal one;
        increasing.
    heat_flow : array, [W/kg]
        Heat flow per mass, exothermic positive.
    limits : (float, float) or None
        Integration limits in the unit of ``x``; None finds them.
    edge_fraction : float, default 0.1
        Share of the run at each end taken as baseline for the first estimate.
    threshold_fraction : float, default 0.01
        The exotherm's ends are where the net signal falls below this share of its peak (or four noise
        standard deviations of its moving average over 0.5 % of the run, whichever is larger).
    widen : float, default 1.0
        The window is widened on each side by this share of its width, so the tails below the threshold
        are integrated too; the final baseline is fitted to the run outside the widened window.

    Returns
    -------
    Exotherm

    Notes
    -----
    First a line through the first and last ``edge_fraction`` of the run; the peak of the net signal; the
    ends where it falls below the threshold; the window widened; the baseline fitted again outside it.
    With ``limits`` the window is the given range and the baseline is fitted outside it (or, if too few
    points lie outside, is the line through the signal at the two limits).

    References
    ----------
    Straight (linear) baselines between points outside the peak, common practice in DSC evaluation
    (Höhne, Hemminger and Flammersheim, *Differential Scanning Calorimetry*, 2nd ed., Springer 2003,
    ch. 5; from memory).

    Examples
    --------
    A triangular peak of height 10 on a baseline 1 + 0.01 x:

    >>> import numpy as np
    >>> x = np.arange(0.0, 200.0)
    >>> y = 1 + 0.01 * x + np.clip(10 - np.abs(x - 100), 0, None)
    >>> e = find_exotherm(x, y)
    >>> round(float(e.net.max()), 6), round(float(e.baseline[100]), 6)
    (10.0, 2.0)
    """
    x = np.asarray(x, dtype=float)
    y = np.asarray(heat_flow, dtype=float)
    n = x.size
    idx = np.arange(n)
    if limits is not None:
        lo, hi = float(limits[0]), float(limits[1])
        inside = (x >= lo) & (x <= hi)
        if inside.sum() < 3:
            raise ValueError("fewer than 3 points between the integration limits")
        start, stop = int(idx[inside][0]), int(idx[inside][-1])
    else:
        k = max(int(edge_fraction * n), 2)
        outside = (idx < k) | (idx >= n - k)
        slope, icpt = _line(x[outside], y[outside])
        net = y - (slope * x + icpt)
        noise = noise_level(y[outside])
        span = max(5, n // 200) | 1  # a moving average over about 0.5 % of the run finds the ends in noise
        smooth = np.convolve(net, np.ones(span) / span, mode="same")
        peak = int(np.argmax(smooth))
        level = max(threshold_fraction * smooth[peak], 4.0 * noise / np.sqrt(span))
        net = smooth
        below = net < level
        left = idx[(idx < peak) & below]
        right = idx[(idx > peak) & below]
        start = int(left[-1]) if left.size else 0
        stop = int(right[0]) if right.size else n - 1
        width = stop - start
        start = max(0, start - int(widen * width))
        stop = min(n - 1, stop + int(widen * width))
    outside = (idx < start) | (idx > stop)
    if outside.sum() >= 4 and (idx < start).any() and (idx > stop).any():
        slope, icpt = _line(x[outside], y[outside])
        noise = noise_level(y[outside])
    else:  # too little run outside the window: the line through the signal at its two ends
        a, b = max(start, 0), min(stop, n - 1)
        slope = (y[b] - y[a]) / (x[b] - x[a]) if x[b] > x[a] else 0.0
        icpt = y[a] - slope * x[a]
        noise = noise_level(y)
    baseline = slope * x + icpt
    return Exotherm(start, stop, baseline, y - baseline, noise)


def conversion_history(time, net, start, stop):
    r"""Heat of reaction and conversion from the net heat flow of one exotherm.

    Parameters
    ----------
    time : array, [s]
    net : array, [W/kg]
        Heat flow above the baseline, exothermic positive.
    start, stop : int
        Integration window (indices, inclusive).

    Returns
    -------
    heat : float, [J/kg]
        :math:`Q = \int_{t_1}^{t_2} \dot q_{net}\,dt` (trapezoidal rule).
    conversion : array, [-]
        :math:`\alpha(t) = \int_{t_1}^{t} \dot q_{net}\,dt / Q` over the window (0 before, 1 after).
    rate : array, [1/s]
        :math:`d\alpha/dt = \dot q_{net} / Q`.

    Notes
    -----
    The conversion is the share of the heat released so far (the usual DSC assumption that heat flow is
    proportional to the reaction rate).

    References
    ----------
    Vyazovkin et al., ICTAC Kinetics Committee recommendations, *Thermochimica Acta* 520 (2011) 1-19
    (from memory): conversion as the partial area of the peak.

    Examples
    --------
    A constant 2 W/kg for 10 s releases 20 J/kg; half of it after 5 s:

    >>> import numpy as np
    >>> t = np.arange(0.0, 11.0)
    >>> q, a, r = conversion_history(t, np.full(11, 2.0), 0, 10)
    >>> q, float(a[5]), float(r[0])
    (20.0, 0.5, 0.1)
    """
    t = np.asarray(time, dtype=float)
    q = np.asarray(net, dtype=float)
    w = slice(start, stop + 1)
    inc = np.concatenate([[0.0], 0.5 * (q[w][1:] + q[w][:-1]) * np.diff(t[w])])
    cumulative = np.cumsum(inc)
    heat = float(cumulative[-1])
    if not heat > 0:
        raise ValueError("the exotherm releases no heat (its area above the baseline is not positive)")
    conversion = np.zeros_like(t)
    conversion[w] = cumulative / heat
    conversion[stop + 1:] = 1.0
    return heat, conversion, q / heat


@dataclass(frozen=True)
class RunExotherm:
    """One run's exotherm reduced for the kinetic fits."""

    exotherm: Exotherm
    heat: float  # J/kg
    conversion: np.ndarray  # [-] at every point
    rate: np.ndarray  # 1/s at every point
    rate_noise: float  # 1/s
    heating_rate: float  # K/s over the window (about 0 for an isothermal run)
    peak_temperature: float  # K, at the peak of the net heat flow
    peak_time: float  # s
    isothermal: bool = False

    def fit_input(self, time, temperature, heat_flow):
        """The run as the kinetic fits take it (:class:`screening.core.kinetics_fit.RunRates`): conversion and
        rate at every point, and the measured signal over the exotherm's window with the first estimates of its
        baseline and heat, so that the fit can take the heat flow itself."""
        from screening.core.kinetics_fit import RunRates

        t = np.asarray(time, dtype=float)
        temp = np.asarray(temperature, dtype=float)
        q = np.asarray(heat_flow, dtype=float)
        w = slice(self.exotherm.start, self.exotherm.stop + 1)
        x = t if self.isothermal else temp
        slope, intercept = np.polyfit(x[w], self.exotherm.baseline[w], 1) if np.ptp(x[w]) > 0 else (0.0, 0.0)
        return RunRates(temp, self.conversion, self.rate, self.rate_noise, time=t[w], heat_flow=q[w],
                        baseline=(float(intercept), float(slope)), heat=self.heat,
                        heat_flow_noise=self.exotherm.noise, baseline_abscissa=(t[w] if self.isothermal else None),
                        signal_temperature=temp[w])


def analyse_run(time, temperature, heat_flow, limits=None, isothermal=False) -> RunExotherm:
    r"""Baseline, heat, conversion and rate of one scanning or isothermal run.

    Parameters
    ----------
    time : array, [s], increasing
    temperature : array, [K]
    heat_flow : array, [W/kg], exothermic positive
    limits : (float, float) or None
        Integration limits: temperatures [K] for a scanning run, times [s] for an isothermal one.
    isothermal : bool, default False
        The run's abscissa for the window is time, not temperature.

    Returns
    -------
    RunExotherm

    Notes
    -----
    :func:`find_exotherm` on the heat flow against temperature (scanning) or time (isothermal), then
    :func:`conversion_history`; the heating rate is the slope of a straight line through T(t) over the
    window, the peak position a parabola through the points around the largest value of the net heat flow's
    moving average over 1 % of the window.

    References
    ----------
    As :func:`find_exotherm` and :func:`conversion_history`.

    Examples
    --------
    A symmetric triangular peak on a flat baseline, 1 K/s: its peak at 100 K, the heating rate 1 K/s:

    >>> import numpy as np
    >>> t = np.arange(0.0, 200.0)
    >>> r = analyse_run(t, t + 0.0, np.clip(10 - np.abs(t - 100), 0, None))
    >>> round(r.peak_temperature, 6), round(r.heating_rate, 6), round(r.heat, 6)
    (100.0, 1.0, 100.0)
    """
    from screening.core.kinetics_fit import peak_position

    t = np.asarray(time, dtype=float)
    temp = np.asarray(temperature, dtype=float)
    x = t if isothermal else temp
    ex = find_exotherm(x, heat_flow, limits=limits)
    heat, conversion, rate = conversion_history(t, ex.net, ex.start, ex.stop)
    w = slice(ex.start, ex.stop + 1)
    slope = float(np.polyfit(t[w], temp[w], 1)[0]) if ex.stop > ex.start else 0.0
    m = ex.stop - ex.start + 1
    span = max(3, m // 100) | 1  # the peak of a moving average over 1 % of the window, then a parabola
    smooth = np.convolve(ex.net[w], np.ones(span) / span, mode="same")
    peak_t = peak_position(t[w], smooth, half_width=max(5, m // 50))
    return RunExotherm(ex, heat, conversion, rate, ex.noise / heat, slope,
                       float(np.interp(peak_t, t, temp)), peak_t, bool(isothermal))
