"""The daily cycle in a result: the start time of day (given, or the worst of 24 hourly starts), the ambient the
criteria compare with (the daily maximum of the effective ambient), and what the output says about it."""
from __future__ import annotations

import dataclasses
import math

from screening.case.display import dtemp, temp
from screening.case.prepare import PreparedCase
import numpy as np

from screening.core.closed_form_history import balance_of, temperature
from screening.core.daily_cycle import DAY, CycleForcing, daily_maximum
from screening.core.daily_cycle_batch import first_crossing_times_cycle

HOURLY_STARTS = tuple(h * 3600.0 for h in range(24))
BASIS_GIVEN = "given (start_time_of_day)"
BASIS_WORST = "the worst of 24 hourly starts"
CRITERIA_BASIS = "daily maximum of the effective ambient (air plus the exposed share of the sol-air excess)"

SUNLIT_SIDE_NOTE = ("The sun is spread over the whole surface of the body (lumped, or one-dimensional for unstirred "
                    "contents): the sunlit side of the vessel and the contents "
                    "next to it run hotter than the mean shown (a one-dimensional or lumped model does not show the "
                    "hot side; not conservative for unstirred contents or a sensitive layer at the wall).")


def with_start(prepared: PreparedCase, start: float) -> PreparedCase:
    """A copy of the prepared case whose cycle starts at solar time ``start`` (s)."""
    cycle = dataclasses.replace(prepared.model.daily_cycle, start_time=float(start))
    return dataclasses.replace(prepared, model=dataclasses.replace(prepared.model, daily_cycle=cycle))


def _severity(prepared: PreparedCase) -> tuple:
    """Sort key of one start (smaller is worse): the earliest time to a limit, then the highest peak."""
    from screening.core.arrhenius_history import integrate_history

    hist = integrate_history(prepared.model)
    times = [lim.time for lim in hist.limits if lim.time is not None]
    return (min(times) if times else math.inf, -hist.peak_temperature)


def _arrhenius_severities(prepared: PreparedCase, starts) -> list[tuple]:
    """Sort keys of every start: all starts at once through the vectorised Rosenbrock integrator (with the
    forcing), or one integration each when that engine does not take the case (boiling credit)."""
    return _arrhenius_severities_of([prepared], starts)[0]


def _arrhenius_severities_of(cases, starts) -> list[list[tuple]]:
    """:func:`_arrhenius_severities` of several cases: every start of every case the vectorised engine takes in
    one run (each sample's numbers do not depend on the others, so a case's keys are those of the case alone:
    its own limits, its default stop temperature; limits padded with the stop, whose times are not read)."""
    from screening.core.arrhenius_history_batch import (CEILING_MARGIN, DEFAULT_CEILING,
                                                        first_crossing_times_arrhenius, samples_from_models)
    from screening.core.model import Limit
    from screening.core.terms import model_start_temperature

    out: list = [None] * len(cases)
    models, owners, stops, counts = [], [], [], []
    for i, prepared in enumerate(cases):
        group = [with_start(prepared, start).model for start in starts]
        try:
            samples_from_models(group[:1])
        except ValueError:  # boiling credit: one integration each
            out[i] = [_severity(with_start(prepared, start)) for start in starts]
            continue
        md = group[0]
        T0 = model_start_temperature(md)
        stop = max(DEFAULT_CEILING, max([lim.temperature for lim in md.limits], default=T0) + CEILING_MARGIN,
                   T0 + CEILING_MARGIN)
        models += group
        owners += [i] * len(group)
        stops += [stop] * len(group)
        counts += [len(md.limits)] * len(group)
    if models:
        width = max(max(counts), 1)
        models = [dataclasses.replace(md, limits=tuple(md.limits) + tuple(Limit("pad", s) for _ in range(width - c)))
                  for md, s, c in zip(models, stops, counts)]
        params, limits, horizon = samples_from_models(models)
        screen = first_crossing_times_arrhenius(params, limits, horizon, stop_temperature=stops)
        for k, (i, c) in enumerate(zip(owners, counts)):
            times = screen.times[k, :c]
            first = float(np.where(np.isnan(times), np.inf, times).min()) if c else math.inf
            if out[i] is None:
                out[i] = []
            out[i].append((first, -float(screen.peak_temperature[k])))
    return out


def _closed_form_severities(prepared: PreparedCase, starts) -> list[tuple]:
    """Sort keys of every start at once: the vectorised closed form (the same history as the one-case engine)."""
    model = prepared.model
    bal = balance_of(model)
    n = len(starts)
    rep = lambda v: np.repeat(np.asarray(v, dtype=float).reshape(1, -1), n, axis=0)  # noqa: E731
    f = bal.forcing
    if f is None:  # no drive from the cycle (UA = 0): every start is the same
        return [(0.0, 0.0)] * n
    forcing = CycleForcing(np.full(n, float(f.air)), np.full(n, float(f.warmest_time)), np.full(n, float(f.solar)),
                           np.full(n, float(f.day_length)), np.asarray(starts, dtype=float))
    P = rep(bal.decaying_power) if np.size(bal.decaying_power) else np.zeros((n, 1))
    b = rep(bal.decay_rate) if np.size(bal.decay_rate) else np.zeros((n, 1))
    limits = [lim.temperature for lim in model.limits]
    if prepared.detection_alarm is not None:
        limits = limits or [prepared.detection_alarm]
    times, peaks = first_crossing_times_cycle(
        np.full(n, float(bal.heat_capacity)), np.full(n, float(bal.conductance)), np.full(n, float(bal.drive)),
        np.full(n, float(bal.initial_temperature)), P, b, forcing, rep(limits), np.full(n, model.horizon),
        with_peak=True)
    first = np.where(np.isnan(times), np.inf, times).min(axis=1)
    return [(float(t), -float(p)) for t, p in zip(first, peaks)]


def choose_start(prepared: PreparedCase) -> tuple[PreparedCase, dict | None]:
    """The case with its start time of day fixed, and how it was chosen (None without a daily cycle).

    Without ``start_time_of_day`` every whole hour is tried and the worst kept: the earliest time to any
    limit, and among starts that reach none, the highest peak.
    """
    cycle = prepared.model.daily_cycle
    if cycle is None:
        return prepared, None
    if prepared.spec.start_time_of_day is not None:
        return prepared, {"start_time_of_day_s": cycle.start_time, "basis": BASIS_GIVEN}
    if prepared.model.arrhenius_sources:
        keys = _arrhenius_severities(prepared, HOURLY_STARTS)
    else:
        keys = _closed_form_severities(prepared, HOURLY_STARTS)
    _, start = min(zip(keys, HOURLY_STARTS))
    return with_start(prepared, start), {"start_time_of_day_s": start, "basis": BASIS_WORST}


def choose_starts(cases) -> list[tuple[PreparedCase, dict | None]]:
    """:func:`choose_start` of several cases (a register chunk's rows): the hourly starts of every case with
    Arrhenius sources in one run of the vectorised engine; the same starts as each case alone."""
    cases = list(cases)
    out: list = [None] * len(cases)
    search = [i for i, p in enumerate(cases) if p.model.daily_cycle is not None and p.spec.start_time_of_day is None
              and p.model.arrhenius_sources]
    keys = dict(zip(search, _arrhenius_severities_of([cases[i] for i in search], HOURLY_STARTS))) if search else {}
    for i, prepared in enumerate(cases):
        if i in keys:
            _, start = min(zip(keys[i], HOURLY_STARTS))
            out[i] = (with_start(prepared, start), {"start_time_of_day_s": start, "basis": BASIS_WORST})
        else:
            out[i] = choose_start(prepared)
    return out


def periodic_peak(model, balance) -> float:
    """The daily peak of the contents once settled into the daily cycle (the periodic state), K.

    The exact history evaluated over one day, a whole number of days after the horizon and 40 of the slowest time
    constants (vessel, decaying sources) later, when the start's transient is gone (e^-40), every minute.
    """
    C, G = float(balance.heat_capacity), float(balance.conductance)
    slow = max([C / G] + [s.time_constant for s in model.decaying_sources])
    t0 = model.horizon + math.ceil(40.0 * slow / DAY) * DAY
    return float(np.max(temperature(balance, t0 + np.linspace(0.0, DAY, 1441))))


def climbing_peaks_warning(model, balance, peak: float, unit: str) -> str | None:
    """With a daily cycle: a warning when the daily peaks still climb at the horizon (the periodic state's peak is
    above the peak within the horizon), else None. Rising or falling at the horizon itself is only the time of day."""
    settled = periodic_peak(model, balance)
    if settled <= peak + 0.01:
        return None
    return (f"The daily peaks are still climbing at the end of the horizon: settled into the daily cycle, the "
            f"contents would peak at {temp(settled, unit)} each day (now {temp(peak, unit)}). A limit not reached "
            f"within the horizon may be reached later.")


def criteria_ambient(model) -> tuple[float, str]:
    """The ambient the criteria compare with, K, and its basis: the daily maximum of the effective ambient with a
    daily cycle, else the stated ambient."""
    if model.daily_cycle is None:
        return model.ambient_temperature, "ambient_temperature"
    return daily_maximum(model.ambient_temperature, model.daily_cycle)[0], CRITERIA_BASIS


def cycle_block(prepared: PreparedCase, start_info: dict) -> dict:
    """The result's ``daily_cycle`` object (SI), its criteria keys and its notes."""
    model = prepared.model
    cycle = model.daily_cycle
    unit = prepared.display_temperature_unit
    t_max, when = daily_maximum(model.ambient_temperature, cycle)
    geo = prepared.geometry
    sun = prepared.spec.sun
    block = {
        "mean_ambient_K": model.ambient_temperature,
        "daily_range_K": cycle.daily_range,
        "warmest_time_of_day_s": cycle.warmest_time,
        "start_time_of_day_s": start_info["start_time_of_day_s"],
        "start_time_basis": start_info["basis"],
        "effective_ambient_max_K": t_max,
        "effective_ambient_max_time_of_day_s": when,
        "sun": None,
    }
    if sun is not None:
        block["sun"] = {
            "peak_irradiance_W_per_m2": sun.peak_irradiance.si, "absorptivity": sun.absorptivity.si,
            "exposed_area_m2": geo.get("exposed_area_m2"), "exposed_area_basis": geo.get("exposed_area_basis"),
            "exposed_share": geo.get("exposed_share"), "day_length_s": cycle.day_length,
            "outer_coefficient_W_per_m2K": geo.get("outer_coefficient_W_per_m2K"),
            "sol_air_rise_K": cycle.solar_rise,
        }
    notes = [f"ambient_temperature ({temp(model.ambient_temperature, unit)}) is the daily mean of the air; the air "
             f"cycles by {dtemp(cycle.daily_range, unit)} (warmest at {cycle.warmest_time / 3600.0:.4g} h solar "
             f"time) and the effective ambient peaks at {temp(t_max, unit)} at {when / 3600.0:.4g} h."]
    start_h = start_info["start_time_of_day_s"] / 3600.0
    if start_info["basis"] == BASIS_WORST:
        notes.append(f"The scenario is taken to start at {start_h:.4g} h solar time, the worst of 24 hourly "
                     f"starts (earliest limit, else highest peak); a start between the hours may be slightly worse.")
    else:
        notes.append(f"The scenario starts at {start_h:.4g} h solar time (start_time_of_day); another start time "
                     f"may be worse.")
    if sun is not None:
        notes.append(SUNLIT_SIDE_NOTE)
        if model.ua == 0 and model.fire_sources:
            notes.append("With a fire source the heat loss (and so the sun and the air's cycle) is not credited.")
    block["notes"] = notes
    return block


def add_cycle_keys(prepared: PreparedCase, result: dict, start_info: dict | None) -> None:
    """Add ``daily_cycle``, ``criteria_ambient_K``, ``criteria_ambient_basis`` and the margin at the daily mean."""
    if start_info is None:
        return
    block = cycle_block(prepared, start_info)
    result["daily_cycle"] = block
    result["criteria_ambient_K"], result["criteria_ambient_basis"] = criteria_ambient(prepared.model)
    crit = result.get("critical_ambient_temperature_K")
    if crit is not None:
        result["critical_ambient_margin_at_daily_mean_K"] = crit - prepared.model.ambient_temperature
    result["warnings"].extend(n for n in block["notes"][2:] if n not in result["warnings"])
    result.setdefault("assumptions", []).extend(block["notes"][:2])


def time_of_day(seconds: float) -> str:
    """Solar time of day as h:mm."""
    s = math.fmod(seconds, DAY)
    return f"{int(s // 3600):02d}:{int(round((s % 3600) / 60.0)) % 60:02d}"
