r"""The self-accelerating decomposition temperature (SADT) of a package, and the temperatures that follow.

The SADT is the lowest ambient, on a grid of 5 °C steps, at which the centre of the contents, starting
uniform at that ambient, rises 6 K or more above it within 7 days (UN Manual of Tests and Criteria,
test series H; the step, the rise and the window from memory). Each trial is one 7-day integration of
the package at one ambient; this module does the search on the grid given a function that runs a
trial, and holds the Model Regulations' table of control and emergency temperatures.

The search assumes that triggering is monotonic in the ambient: if the centre rises 6 K within 7 days
at an ambient, it does so at every higher ambient. Without depletion this follows from the comparison
principle (every rate is higher at a higher ambient, at the same excess over it); with depletion it is
checked in the tests against a full scan of the grid. The search starts near a physical estimate (the
critical ambient of the Semenov or Frank-Kamenetskii criterion), gallops away from it in steps of
1, 2, 4 ... grid points until the answer changes, and bisects: a handful of integrations instead of one
per step from −40 °C.

References
----------
United Nations, *Recommendations on the Transport of Dangerous Goods, Manual of Tests and Criteria*,
Part II, test series H (SADT; from memory).
United Nations, *Recommendations on the Transport of Dangerous Goods, Model Regulations*, control and
emergency temperatures for single packagings and IBCs (from memory).
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

import numpy as np

__all__ = ["SADT_STEP", "SADT_WINDOW", "SADT_RISE", "SADT_LOWEST", "SADT_HIGHEST", "SADT_BOUND_ABOVE_TESTED",
           "SELF_REACTIVE_CONTROL_THRESHOLD", "ORGANIC_PEROXIDE_CONTROL_THRESHOLD",
           "ORGANIC_PEROXIDE_CONTROL_THRESHOLD_BY_TYPE", "IBC_LARGEST_VOLUME", "SINGLE_PACKAGING_LARGEST_MASS", "SadtTrial", "SadtSearch",
           "sadt_grid", "search_bound", "start_index", "search_sadt", "control_and_emergency_temperatures",
           "round_up_to_step"]

ZERO_CELSIUS = 273.15
#: Ambient step of the test, K (test series H, from memory).
SADT_STEP = 5.0
#: Test window, s: 7 days (test series H, from memory).
SADT_WINDOW = 7 * 86400.0
#: Rise of the centre above the ambient that counts as self-accelerating, K (test series H, from memory).
SADT_RISE = 6.0
#: Lowest ambient searched, K (−40 °C).
SADT_LOWEST = ZERO_CELSIUS - 40.0
#: Highest ambient ever searched, K (200 °C).
SADT_HIGHEST = ZERO_CELSIUS + 200.0
#: Default search bound above the top of the kinetics' tested range, K.
SADT_BOUND_ABOVE_TESTED = 50.0
#: SADT at or below which the Model Regulations require temperature control (from memory), K.
SELF_REACTIVE_CONTROL_THRESHOLD = ZERO_CELSIUS + 55.0
ORGANIC_PEROXIDE_CONTROL_THRESHOLD = ZERO_CELSIUS + 50.0
ORGANIC_PEROXIDE_CONTROL_THRESHOLD_BY_TYPE = ZERO_CELSIUS + 45.0
#: Largest capacity of an IBC, m^3 (from memory): a larger container is a tank, with its own row of the table.
IBC_LARGEST_VOLUME = 3.0

#: Largest net mass of a single packaging, kg (from memory): with the volume unknown, more than this cannot be
#: taken as a package.
SINGLE_PACKAGING_LARGEST_MASS = 400.0


@dataclass(frozen=True)
class SadtTrial:
    """One trial: the package at one ambient for 7 days.

    Attributes
    ----------
    ambient : float, [K]
    triggered : bool
        The centre rose ``SADT_RISE`` or more above the ambient within the window.
    rise_time : float or None, [s]
        When it first did (None: not within the window).
    centre_at_end : float or None, [K]
        Centre temperature at the end of the window (None: the integration stopped earlier, at a runaway).
    peak_centre : float, [K]
        Highest centre temperature within the window (or up to the stop).
    stopped_at : float or None, [s]
        When the integration stopped at its stop temperature (a runaway), else None.
    """

    ambient: float
    triggered: bool
    rise_time: float | None
    centre_at_end: float | None
    peak_centre: float
    stopped_at: float | None = None


@dataclass(frozen=True)
class SadtSearch:
    """The result of :func:`search_sadt`.

    Attributes
    ----------
    sadt : float or None, [K]
        Lowest triggering grid ambient (None: none up to the bound).
    trials : tuple of SadtTrial
        Every trial run, by increasing ambient.
    lowest, bound : float, [K]
        The grid searched.
    """

    sadt: float | None
    trials: tuple
    lowest: float
    bound: float


def round_up_to_step(temperature, step=SADT_STEP):
    """The lowest multiple of ``step`` °C at or above a temperature, in K.

    Parameters
    ----------
    temperature : float, [K]
    step : float, [K], default 5

    Returns
    -------
    float, [K]

    Notes
    -----
    .. math:: T_5 = 273.15 + 5 \\lceil (T - 273.15) / 5 \\rceil

    (with a 1e-9 K tolerance, so that 75 °C written as 348.15 K stays 75 °C.)

    Examples
    --------
    The Frank-Kamenetskii critical ambient 74.04 °C rounds up to 75 °C; 75 °C stays:

    >>> round(round_up_to_step(347.19) - 273.15, 6), round(round_up_to_step(348.15) - 273.15, 6)
    (75.0, 75.0)
    """
    c = (temperature - ZERO_CELSIUS) / step
    return ZERO_CELSIUS + step * math.ceil(c - 1e-9)


def search_bound(tested_tops, above=SADT_BOUND_ABOVE_TESTED, highest=SADT_HIGHEST, step=SADT_STEP):
    """Highest ambient the search covers, K: ``above`` K over the top of the tested range, at most ``highest``.

    Parameters
    ----------
    tested_tops : sequence of float or None, [K]
        Top of each source's tested range (None: not given).
    above, highest, step : float, [K]

    Returns
    -------
    float, [K]
        A multiple of ``step`` °C (rounded down). Without a tested range for every source: ``highest``.

    Examples
    --------
    Kinetics tested up to 90 °C: the search goes up to 140 °C; a top of 180 °C is capped at 200 °C:

    >>> round(search_bound([363.15]) - 273.15, 6), round(search_bound([453.15]) - 273.15, 6)
    (140.0, 200.0)
    """
    tops = list(tested_tops)
    if not tops or any(t is None for t in tops):
        return highest
    top = min(max(tops) + above, highest)
    return ZERO_CELSIUS + step * math.floor((top - ZERO_CELSIUS) / step + 1e-9)


def sadt_grid(lowest=SADT_LOWEST, bound=SADT_HIGHEST, step=SADT_STEP) -> np.ndarray:
    """The ambients searched: multiples of ``step`` °C from ``lowest`` to ``bound``, in K.

    Examples
    --------
    >>> g = sadt_grid(bound=273.15 + 200.0)
    >>> len(g), round(float(g[0]) - 273.15, 6), round(float(g[-1]) - 273.15, 6)
    (49, -40.0, 200.0)
    """
    n = int(math.floor((bound - lowest) / step + 1e-9)) + 1
    return lowest + step * np.arange(max(n, 1))


def start_index(grid: np.ndarray, estimate: float | None) -> int:
    """Index of the grid ambient at or just above an estimate (e.g. the critical ambient); the middle without one.

    Examples
    --------
    >>> start_index(sadt_grid(), 347.19), start_index(sadt_grid(), None)
    (23, 24)
    """
    if estimate is None or not math.isfinite(estimate):
        return len(grid) // 2
    i = int(np.searchsorted(grid, estimate - 1e-9))
    return min(max(i, 0), len(grid) - 1)


def search_sadt(trial: Callable[[float], SadtTrial], grid, start: int | None = None) -> SadtSearch:
    r"""The lowest grid ambient whose trial triggers, with as few trials as the monotonic answer allows.

    Parameters
    ----------
    trial : callable
        ``trial(ambient_K) -> SadtTrial``: one 7-day integration of the package.
    grid : array of float, [K]
        Increasing ambients (:func:`sadt_grid`).
    start : int, optional
        Grid index to try first (:func:`start_index` of the critical ambient); default the middle.

    Returns
    -------
    SadtSearch

    Notes
    -----
    From ``start``, steps of 1, 2, 4 ... grid points go down while the trials trigger, or up while they
    do not, until the answer changes or the grid ends; then bisection between the highest ambient
    that did not trigger and the lowest that did. If triggering is monotonic in the ambient (see the
    module notes), the result equals the lowest triggering ambient of a full scan of the grid.

    Examples
    --------
    A stand-in trial that triggers from 62 °C up: the SADT is 65 °C, after 4 trials instead of 22:

    >>> tried = []
    >>> def trial(ta):
    ...     tried.append(ta)
    ...     return SadtTrial(ta, ta >= 273.15 + 62, None, ta, ta)
    >>> res = search_sadt(trial, sadt_grid(), start_index(sadt_grid(), 273.15 + 52))
    >>> round(res.sadt - 273.15, 6), len(tried)
    (65.0, 4)
    """
    grid = np.asarray(grid, dtype=float)
    n = len(grid)
    done: dict[int, SadtTrial] = {}

    def fires(i: int) -> bool:
        if i not in done:
            done[i] = trial(float(grid[i]))
        return done[i].triggered

    i = (n // 2) if start is None else min(max(int(start), 0), n - 1)
    lo, hi = -1, None  # lo: highest index known not to trigger (-1: below the grid); hi: lowest known to trigger
    if fires(i):
        hi, step = i, 1
        while hi > 0:
            j = max(hi - step, 0)
            if fires(j):
                hi, step = j, 2 * step
            else:
                lo = j
                break
    else:
        lo, step = i, 1
        while lo < n - 1:
            j = min(lo + step, n - 1)
            if fires(j):
                hi = j
                break
            lo, step = j, 2 * step
    if hi is not None:
        while hi - lo > 1:
            mid = (lo + hi) // 2
            if fires(mid):
                hi = mid
            else:
                lo = mid
    trials = tuple(done[k] for k in sorted(done))
    return SadtSearch(None if hi is None else float(grid[hi]), trials, float(grid[0]), float(grid[-1]))


def control_and_emergency_temperatures(sadt):
    r"""Control and emergency temperatures for single packagings and IBCs from the SADT.

    Parameters
    ----------
    sadt : float or array, [K]

    Returns
    -------
    (control, emergency) : floats or arrays, [K]

    Notes
    -----
    UN Model Regulations, table of control and emergency temperatures (from memory):

    ============================  ================  ==================
    SADT                          control           emergency
    ============================  ================  ==================
    SADT <= 20 °C                 SADT − 20 K       SADT − 10 K
    20 °C < SADT <= 35 °C         SADT − 15 K       SADT − 10 K
    SADT > 35 °C                  SADT − 10 K       SADT − 5 K
    ============================  ================  ==================

    Portable tanks have their own row, not applied here.

    References
    ----------
    United Nations, *Recommendations on the Transport of Dangerous Goods, Model Regulations*, control
    and emergency temperatures (from memory).

    Examples
    --------
    SADT 50 °C: control 40 °C, emergency 45 °C (the table, from memory):

    >>> c, e = control_and_emergency_temperatures(323.15)
    >>> round(c - 273.15, 6), round(e - 273.15, 6)
    (40.0, 45.0)
    """
    s = np.asarray(sadt, dtype=float)
    celsius = s - ZERO_CELSIUS
    tol = 1e-9  # a band edge written in K (293.15, 308.15) belongs to the lower band
    control = np.where(celsius <= 20.0 + tol, s - 20.0, np.where(celsius <= 35.0 + tol, s - 15.0, s - 10.0))
    emergency = np.where(celsius <= 35.0 + tol, s - 10.0, s - 5.0)
    if control.ndim == 0:
        return float(control), float(emergency)
    return control, emergency
