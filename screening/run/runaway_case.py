"""Screen a case that has temperature-dependent (Arrhenius) heat sources.

Joins the numeric history (:mod:`screening.core.arrhenius_history`) and the runaway
criteria (:mod:`screening.core.runaway`) into the same result keys as the
closed-form path, plus the runaway keys.
"""
from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

import numpy as np

from screening.case.display import temp
from screening.case.prepare import PreparedCase
from screening.core import runaway as rc
from screening.core.daily_cycle import cycle_forcing, mean_rise
from screening.core.model import GAS_CONSTANT, HeatingMedium, Limit, ScreeningModel
from screening.core.terms import conductance_and_drive, constant_power, model_start_temperature, model_terms
from screening.run.recovery import detection_and_recovery, detection_time
from screening.run.warnings import detection_basis
from screening.run.scenario_criteria import (
    HistoryFacts,
    heat_balance_curves,
    named_kinetics_warnings,
    roles_of,
    scenario_criteria,
    steady_conversions,
)

ALARM = "\x00alarm"
_PAD = "\x00pad"


@dataclass(frozen=True)
class ArrheniusValues:
    """The vectorised engine's numbers for one case (like :class:`screening.run.closed_form_case.ClosedFormValues`).

    Attributes
    ----------
    times : tuple of (float or None), [s]
        First time each limit of the case is reached, then the detection alarm's (if the case has one).
    peak_temperature, peak_time : float, [K] and [s]
    peak_is_ceiling : bool
        The run reached its stop temperature (``ceiling``, K): a runaway; the peak is a lower bound.
    stop_time, end_temperature : float, [s] and [K]
        End of the run (the horizon, or the stop) and the temperature there.
    rising_at_end : bool
        Still heating at the horizon (net heat input above 1e-12 of the gross, as the single-case engine).
    final_conversion : tuple of (float or None)
        Per source at the end; None without a heat of reaction.
    adiabatic_times : tuple of (float or None), [s]
        The case's limits without heat loss (UA = 0).
    start_info : dict or None
        With a daily cycle: the start time of day the runs were made with and how it was chosen
        (:func:`screening.run.daily_cycle.choose_start`), so that the case is screened from that start.
    recovery : RecoveryRun or None
        The recovery path's runs, when cooling is restored within the horizon before the run stopped.
    boil_time : float or None, [s]
        Boiling data without tempering credit (a closed vessel, or a gas-generating reaction): the first time
        the contents reach the boiling point (0 if they start there); None if not reached, or no boiling data.
    """

    times: tuple
    peak_temperature: float
    peak_time: float
    peak_is_ceiling: bool
    ceiling: float
    stop_time: float
    end_temperature: float
    rising_at_end: bool
    final_conversion: tuple
    adiabatic_times: tuple
    start_info: dict | None = None
    recovery: RecoveryRun | None = None
    boil_time: float | None = None


@dataclass(frozen=True)
class RecoveryRun:
    """The vectorised engine's runs of a recovery path (cooling restored at ``start``).

    Attributes
    ----------
    start : float, [s]
        Detection + response.
    temperature, conversion : float [K] and tuple of (float or None)
        The state at ``start`` (a run of the main model to ``start``); conversion None without a heat of reaction.
    pre_peak_temperature, pre_peak_time : float, [K] and [s]
        Highest temperature before ``start`` and when.
    times : tuple of (float or None), [s]
        First time each limit of the case is reached after ``start`` (counted from ``start``).
    peak_temperature, peak_time : float, [K] and [s]
        Highest temperature after ``start`` (time counted from ``start``); the stop temperature of a runaway.
    """

    start: float
    temperature: float
    conversion: tuple
    pre_peak_temperature: float
    pre_peak_time: float
    times: tuple
    peak_temperature: float
    peak_time: float


@dataclass(frozen=True)
class _Numbers:
    """What the result reads of a run, from the single-case history or from engine values."""

    limits: tuple  # LimitCrossing-like: name, temperature, time, warnings
    warnings: tuple
    peak_warnings: tuple
    peak_temperature: float
    peak_time: float
    peak_is_ceiling: bool
    rising_at_end: bool
    final_conversion: tuple
    stop_reason: str
    stop_time: float
    end_temperature: float


def _run_model(prepared: PreparedCase) -> ScreeningModel:
    limits = list(prepared.model.limits)
    if prepared.detection_alarm is not None:
        limits.append(Limit(ALARM, prepared.detection_alarm))
    return dataclasses.replace(prepared.model, limits=tuple(limits))


def _adiabatic_model(model: ScreeningModel) -> ScreeningModel:
    return dataclasses.replace(model, ua=0.0, boiling=None)


def engine_eligible(prepared: PreparedCase) -> bool:
    """Whether the vectorised engine gives this case's numbers (and texts) as the single-case engine would.

    Stirred contents without tempering credit from boiling (boiling data of a closed vessel, or with a
    gas-generating reaction, change nothing in the history: the time the boiling point is reached is an extra
    limit of the run; a daily cycle is taken: the engine adds the same forcing with the
    same 30-minute step limit; fire exposure is a constant input over the horizon in both engines, through
    :func:`screening.core.terms.constant_power`; a recovery path as three runs: to the restart, then from the
    state there with the recovery medium on, :class:`RecoveryRun`), but not a recovery path with a daily
    cycle; unstirred contents without boiling data, daily cycle, fire or recovery (the values are then those
    of the lumped comparison, kept under ``lumped``); and no limit where the single-case engine's rate cap
    (m q / C <= 1e9 K/s) could act (its warning is not reproduced).
    """
    from screening.core.arrhenius import log_arrhenius_rate
    from screening.core.arrhenius_history_batch import LN_RATE_FLOOR, RATE_CAP

    from screening.core.arrhenius_history import takes_tempering_credit

    model = prepared.model
    unstirred_extra = model.mixing != "stirred" and (model.boiling is not None or model.daily_cycle is not None
                                                      or model.fire_sources or prepared.recovery is not None)
    if (not model.arrhenius_sources or unstirred_extra or takes_tempering_credit(model)
            or (prepared.recovery is not None and model.daily_cycle is not None)):
        return False
    ln_cap = math.log(RATE_CAP * model.heat_capacity / model.contents_mass)
    for lim in _run_model(prepared).limits:
        for s in model.arrhenius_sources:
            if s.specific_power <= 0:
                continue
            ex = log_arrhenius_rate(1.0 / lim.temperature, math.log(s.specific_power), s.activation_energy / GAS_CONSTANT,
                                    1.0 / s.reference_temperature, math.inf, LN_RATE_FLOOR)
            if ex >= ln_cap - 1e-6:
                return False
    return True


def _batch_runs(models, extra=None):
    """(screen, limit counts, ceilings) of the vectorised engine for models (limits padded with the stop);
    ``extra``: per model a further temperature whose first crossing is wanted (or None), after the model's
    limits (the stop temperature is the model's own, as without it)."""
    from screening.core.arrhenius_history_batch import (CEILING_MARGIN, DEFAULT_CEILING,
                                                        first_crossing_times_arrhenius, samples_from_models)

    counts = [len(md.limits) for md in models]
    width = max(c + (extra is not None and extra[k] is not None) for k, c in enumerate(counts))
    ceilings = []
    padded = []
    for md in models:
        T0 = model_start_temperature(md)
        highest = max([lim.temperature for lim in md.limits], default=T0)
        ceiling = max(DEFAULT_CEILING, highest + CEILING_MARGIN, T0 + CEILING_MARGIN)  # as the single-case engine
        ceilings.append(ceiling)
        more = () if extra is None or extra[len(padded)] is None else (Limit(_PAD, extra[len(padded)]),)
        pad = tuple(Limit(_PAD, ceiling) for _ in range(width - len(md.limits) - len(more)))
        padded.append(dataclasses.replace(md, limits=tuple(md.limits) + more + pad))
    if width == 0:
        padded = [dataclasses.replace(md, limits=(Limit(_PAD, c),)) for md, c in zip(padded, ceilings)]
    params, limits, horizon = samples_from_models(padded)
    res = first_crossing_times_arrhenius(params, limits, horizon, stop_temperature=ceilings, to_horizon=True,
                                         on_failure="flag")
    return res, counts, ceilings


def arrhenius_values(prepared_cases) -> list:
    """:class:`ArrheniusValues` of each case the vectorised engine takes (:func:`engine_eligible`), else None;
    all of them in one run of the engine for the main runs (with the alarm limit) and one for the adiabatic runs."""
    from screening.core.arrhenius_history_batch import STATUS_FAILED, STATUS_HORIZON

    prepared_cases = list(prepared_cases)
    out: list = [None] * len(prepared_cases)
    idx = [i for i, p in enumerate(prepared_cases) if engine_eligible(p)]
    if not idx:
        return out
    mains = [_run_model(prepared_cases[i]) for i in idx]
    ads = [_adiabatic_model(prepared_cases[i].model) for i in idx]
    boiling_points = [None if m.boiling is None else m.boiling.boiling_point for m in mains]
    try:
        res, counts, ceilings = _batch_runs(mains, boiling_points)
        ad, ad_counts, _ = _batch_runs(ads)
    except (ValueError, RuntimeError, ArithmeticError):  # inputs out of the engine's range: the single-case engine
        return out
    for k, i in enumerate(idx):
        if res.status[k] == STATUS_FAILED or ad.status[k] == STATUS_FAILED:
            continue  # no conclusion within the step cap: the single-case engine says why
        model = prepared_cases[i].model
        times = tuple(None if not math.isfinite(t) else float(t) for t in res.times[k, :counts[k]])
        ad_times = tuple(None if not math.isfinite(t) else float(t) for t in ad.times[k, :ad_counts[k]])
        horizon_end = res.status[k] == STATUS_HORIZON
        T_end = float(res.end_temperature[k])
        rising = False
        if horizon_end:
            g, drive = conductance_and_drive(model.ua, model.ambient_temperature, 0.0,
                                             [h.ua for h in model.heating_media],
                                             [h.medium_temperature for h in model.heating_media])
            net = model.heat_capacity * float(res.end_rate[k])
            loss = float(g) * T_end - float(drive)
            forcing = cycle_forcing(model.daily_cycle, model.ua)
            if forcing is not None:  # the loss to the effective ambient, as the single-case engine counts it
                loss -= float(forcing.power(float(res.end_time[k])))
            rising = net > 1e-12 * (abs(net + loss) + abs(loss))
        conv = tuple(None if s.specific_heat_of_reaction is None else float(res.end_conversion[k, j])
                     for j, s in enumerate(model.arrhenius_sources))
        boil = None
        if boiling_points[k] is not None and math.isfinite(res.times[k, counts[k]]):
            boil = float(res.times[k, counts[k]])
        out[i] = ArrheniusValues(times, float(res.peak_temperature[k]), float(res.peak_time[k]),
                                 not horizon_end, float(ceilings[k]), float(res.end_time[k]), T_end, bool(rising),
                                 conv, ad_times, boil_time=boil)
    _recovery_runs(prepared_cases, out)
    return out


def _recovery_start(prepared: PreparedCase, values: ArrheniusValues) -> float | None:
    """When cooling is restored (detection + response), s, if the engine follows the path from there: within the
    horizon and before the main run stopped; else None (the path is written from the main run alone)."""
    if prepared.recovery is None or prepared.response_time is None:
        return None
    alarm = values.times[-1] if prepared.detection_alarm is not None else None
    detection = detection_time(detection_basis(prepared)[0], prepared.detection_delay, alarm)
    if detection is None:
        return None
    start = detection + prepared.response_time
    if start >= prepared.model.horizon or values.stop_time < start:
        return None
    return start


def _recovery_runs(prepared_cases, out) -> None:
    """Add the recovery path's runs (:class:`RecoveryRun`) to the values of every case that has one: a run of each
    main model to its restart, then one from the state there with the recovery medium on; a case whose runs do
    not end as they should loses its values (the single-case engine then screens it)."""
    from screening.core.arrhenius_history_batch import STATUS_FAILED, STATUS_HORIZON

    starts = {}
    for i, (p, v) in enumerate(zip(prepared_cases, out)):
        if v is not None:
            start = _recovery_start(p, v)
            if start is not None:
                starts[i] = start
    if not starts:
        return
    idx = list(starts)
    try:
        pre, pre_counts, _ = _batch_runs([dataclasses.replace(_run_model(prepared_cases[i]), horizon=starts[i])
                                          for i in idx])
    except (ValueError, RuntimeError, ArithmeticError):
        for i in idx:
            out[i] = None
        return
    states = {}
    for k, i in enumerate(idx):
        if pre.status[k] != STATUS_HORIZON:
            out[i] = None
            continue
        model = prepared_cases[i].model
        X = tuple(None if s.specific_heat_of_reaction is None else float(pre.end_conversion[k, j])
                  for j, s in enumerate(model.arrhenius_sources))
        states[i] = (float(pre.end_temperature[k]), X, float(pre.peak_temperature[k]), float(pre.peak_time[k]))
    idx = list(states)
    if not idx:
        return
    recs = [_recovery_model(prepared_cases[i], starts[i], states[i][0], states[i][1]) for i in idx]
    try:
        rec, counts, _ = _batch_runs(recs)
    except (ValueError, RuntimeError, ArithmeticError):
        for i in idx:
            out[i] = None
        return
    for k, i in enumerate(idx):
        if rec.status[k] == STATUS_FAILED:
            out[i] = None
            continue
        T_start, X, pre_T, pre_t = states[i]
        times = tuple(None if not math.isfinite(t) else float(t) for t in rec.times[k, :counts[k]])
        out[i] = dataclasses.replace(out[i], recovery=RecoveryRun(
            starts[i], T_start, X, pre_T, pre_t, times, float(rec.peak_temperature[k]), float(rec.peak_time[k])))


def _recovery_model(prepared: PreparedCase, start: float, T_start: float, X_start) -> ScreeningModel:
    """The model from the restart of cooling: the state at ``start`` (temperature, conversions; None for a source
    without a heat of reaction), decaying sources decayed, the recovery medium added, the rest of the horizon."""
    model = prepared.model
    tm, ua_r = prepared.recovery
    sources = tuple(dataclasses.replace(s, accumulated_fraction=max(1e-12, 1.0 - X_start[j]))
                    if s.specific_heat_of_reaction is not None else s
                    for j, s in enumerate(model.arrhenius_sources))
    decaying = tuple(dataclasses.replace(s, power=s.power * math.exp(-start / s.time_constant))
                     for s in model.decaying_sources)
    media = model.heating_media + (HeatingMedium(tm, ua_r),)
    return dataclasses.replace(model, initial_temperature=T_start, horizon=model.horizon - start,
                               arrhenius_sources=sources, decaying_sources=decaying, heating_media=media,
                               released_at_start=())


def _numbers_of_history(hist) -> _Numbers:
    return _Numbers(tuple(hist.limits), tuple(hist.warnings), tuple(hist.peak_warnings), hist.peak_temperature,
                    hist.peak_time, bool(hist.peak_is_ceiling), bool(hist.rising_at_end), tuple(hist.final_conversion),
                    hist.stop_reason, float(hist.stop_time), float(hist.temperature[-1]))


def _numbers_of_values(model: ScreeningModel, run: ScreeningModel, v: ArrheniusValues) -> _Numbers:
    """The history's numbers and texts from engine values, as :func:`screening.core.arrhenius_history.
    integrate_history` words them for a case :func:`engine_eligible` takes."""
    from screening.core.arrhenius_history import FIRE_NET_INPUT, LimitCrossing, boiling_cautions, source_warnings

    every, on_times = source_warnings(run)
    if run.fire_sources and run.ua > 0:  # (prepare sets UA to 0 under fire; a model built otherwise is warned)
        on_times.append(FIRE_NET_INPUT)
        every.append(FIRE_NET_INPUT)
    T0 = model_start_temperature(run)
    above_boiling = boiling_cautions(run)[1]
    crossings = []
    for i, (lim, t) in enumerate(zip(run.limits, v.times)):
        w = [above_boiling[i]] if i in above_boiling else []
        if lim.temperature <= T0:
            w.append("Limit at or below the temperature the history starts at: reached at t = 0.")
        if t is not None and t > 0:
            w += on_times
        crossings.append(LimitCrossing(lim.name, float(lim.temperature), t, tuple(w)))
    peak_warnings = []
    if v.peak_is_ceiling:
        peak_warnings.append(f"The runaway passed the ceiling of {v.ceiling:.1f} K where integration stopped; "
                             f"the true peak is higher and is not computed.")
    if any(s.specific_power > 0 and s.specific_heat_of_reaction is None for s in run.arrhenius_sources):
        peak_warnings.append("Unbounded (zero-order, no heat of reaction) release: the peak temperature "
                             "reflects the horizon or the ceiling, not a physical end point.")
    return _Numbers(tuple(crossings), tuple(every), tuple(peak_warnings), v.peak_temperature, v.peak_time,
                    v.peak_is_ceiling, v.rising_at_end, v.final_conversion,
                    "ceiling" if v.peak_is_ceiling else "horizon", v.stop_time, v.end_temperature)


def _initial_conversions(model: ScreeningModel) -> list[float]:
    return [1.0 - s.accumulated_fraction if s.specific_heat_of_reaction is not None else 0.0
            for s in model.arrhenius_sources]


def _limit_rows(hist, model):
    rows, warnings = [], []
    for crossing in hist.limits:
        if crossing.name == ALARM:
            continue
        rows.append({"name": crossing.name, "temperature_K": crossing.temperature, "time_s": crossing.time,
                     "reached": crossing.time is not None})
        warnings.extend(w for w in crossing.warnings if w not in warnings)
    return rows, warnings


def _alarm_time(hist):
    for crossing in hist.limits:
        if crossing.name == ALARM:
            return crossing.time
    return None


def screen_with_arrhenius(prepared: PreparedCase, values: ArrheniusValues | None = None,
                          with_history: bool = True) -> dict:
    """The core of the result of a case with Arrhenius sources.

    ``values``: the vectorised engine's numbers computed elsewhere (a register's group); for a case the
    engine takes (:func:`engine_eligible`) they are computed here as a group of one. The chart arrays
    (``with_history``) still come from the single-case integrator; every number in the result is the
    engine's. Other cases (tempering credit from boiling, a recovery path with a daily cycle, unstirred
    contents, a limit where the rate cap could act) use the single-case integrator.
    """
    from screening.core.arrhenius_history import integrate_history

    model = prepared.model
    unit = prepared.display_temperature_unit
    warnings: list[str] = []
    run_model = _run_model(prepared)
    if values is None and engine_eligible(prepared):
        values = arrhenius_values([prepared])[0]
    if values is not None:
        nums = _numbers_of_values(model, run_model, values)
        hist = integrate_history(run_model) if with_history else None
    else:
        hist = integrate_history(run_model)
        nums = _numbers_of_history(hist)
    rows, limit_warnings = _limit_rows(nums, model)
    warnings.extend(w for w in nums.warnings if w not in warnings)
    warnings.extend(w for w in limit_warnings if w not in warnings)
    warnings.extend(w for w in nums.peak_warnings if w not in warnings)

    C = model.heat_capacity
    G = model_terms(model).conductance
    tau = C / G if G > 0 else None
    m = model.contents_mass
    sources = model.arrhenius_sources
    X0 = _initial_conversions(model)
    P = constant_power(model)
    T0 = model_start_temperature(model)
    Ta = model.ambient_temperature + mean_rise(model.daily_cycle)  # with a daily cycle: its daily mean
    scenario = model.scenario

    def add(ws):
        warnings.extend(w for w in ws if w not in warnings)

    # --- steady states of the whole balance (all reactions at their initial conversion): where it settles
    X_rate = steady_conversions(model)  # an autocatalytic source at its conversion of maximum rate (conservative)
    steady, ws = rc.steady_states(m, sources, P, model.ua, Ta, model.heating_media, conversion=X_rate,
                                  full_output=True)
    transient = bool(model.decaying_sources or model.fire_sources or T0 > Ta)
    if scenario != "cooling-failure" and model.mixing == "stirred":
        add(w for w in ws if w != rc.WARNING_TRANSIENT_SOURCES or (transient and scenario == "storage"))
    runs_away = nums.peak_is_ceiling or (nums.rising_at_end and steady.stable is None)
    stable = steady.stable if not runs_away else None
    final_X = [x if x is not None else x0 for x, x0 in zip(nums.final_conversion, X0)]
    if not runs_away and any(abs(a - b) > 1e-9 for a, b in zip(final_X, X0)):
        # the contents settle at the steady state of what is left of the reactions
        settled = rc.steady_states(m, sources, P, model.ua, Ta, model.heating_media, conversion=final_X)
        if settled.stable is not None:
            stable = settled.stable
    no_return = steady.unstable
    if scenario != "cooling-failure" and model.mixing == "stirred":
        _steady_state_statements(model, nums, steady, runs_away, T0, unit, warnings)

    facts = HistoryFacts(nums.peak_temperature, nums.peak_time, bool(runs_away), bool(nums.rising_at_end), T0, stable,
                         nums.end_temperature)
    criteria, ws, used = scenario_criteria(prepared, facts)
    add(ws)
    _, decomposition = roles_of(model)
    general = rc.zero_conversion_warning(sources)
    kinetics = [general] if general is not None else []
    for s in sources:  # one extrapolation caution per source, at the farthest temperature its kinetics were used at
        kinetics += named_kinetics_warnings([s], [T0, nums.peak_temperature] + (used if s in decomposition else []))
    kinetics += rc.initiation_warnings(sources, [T0, nums.peak_temperature] + used)
    warnings[:] = _consolidate(warnings, kinetics)

    # --- adiabatic bound
    if values is not None:
        ad_limits = [{"name": lim.name, "time_s": t} for lim, t in zip(model.limits, values.adiabatic_times)]
    else:
        ad_hist = integrate_history(_adiabatic_model(model))
        ad_limits = [{"name": c.name, "time_s": c.time} for c in ad_hist.limits]
    adiabatic = {"limits": ad_limits,
                 "temperature_rise_K": sum(s.power * s.time_constant for s in model.decaying_sources) / C}

    boiling = None
    if model.boiling is not None and values is not None:  # no tempering credit (engine_eligible)
        from screening.core.arrhenius_history import boiling_cautions

        boiling = {"time_to_boil_s": values.boil_time, "peak_boil_off_kg_per_s": None, "boiled_off_kg": None,
                   "time_to_dry_s": None}
        warnings.extend(w for w in boiling_cautions(run_model)[0] if w not in warnings)
    elif model.boiling is not None and hist is not None and hist.boiling is not None:
        b = hist.boiling
        boiled = b.time_to_boil is not None and b.tempering_credited
        boiling = {"time_to_boil_s": b.time_to_boil,
                   "peak_boil_off_kg_per_s": b.peak_boil_off_rate if boiled else None,
                   "boiled_off_kg": b.boiled_off_mass if b.tempering_credited else None,
                   "time_to_dry_s": b.time_to_dry}
        warnings.extend(w for w in b.warnings if w not in warnings)

    result = {
        "time_constant_s": tau,
        "peak_temperature_K": nums.peak_temperature,
        "peak_time_s": nums.peak_time,
        "steady_temperature_K": stable,
        "limits": rows,
        "adiabatic": adiabatic,
        "boiling": boiling,
        "warnings": warnings,
        "method": "numeric",
        **criteria,
        "stop_reason": nums.stop_reason,
    }
    if scenario == "heat-up":
        result["no_return_temperature_K"] = no_return if model.mixing == "stirred" else None
    alarm_time = _alarm_time(nums)
    detection_and_recovery(prepared, result, alarm_time=alarm_time)
    if hist is not None or values is not None:
        _arrhenius_recovery(prepared, result, hist, values)
    if hist is not None:
        result["_history"] = {"time_s": np.asarray(hist.time).tolist(),
                              "temperature_K": np.asarray(hist.temperature).tolist(),
                              "generation_W": np.asarray(hist.heat_generation).tolist(),
                              "loss_W": np.asarray(hist.heat_loss_ambient).tolist()}
    if scenario == "heat-up":
        curve_sources, curve_X, states = sources, X_rate, (steady.stable, steady.unstable)
    else:
        block = criteria["semenov"] or {}
        curve_sources, curve_X, states = decomposition, None, (block.get("stable_K"), block.get("no_return_K"))
    if curve_sources:
        result["_heat_balance"] = heat_balance_curves(
            model, curve_sources, curve_X, states,
            criteria["critical_ambient_temperature_K"] if criteria["critical_ambient_method"] == "semenov" else None)
    return result


def _is_extrapolation(text: str) -> bool:
    return "extrapolated far" in text


def _consolidate(warnings: list[str], kinetics: list[str]) -> list[str]:
    """One extrapolation warning per source (the farthest, from ``kinetics``), and the general
    zero-conversion caution only when no source-specific one says it."""
    out = [w for w in warnings if not _is_extrapolation(w)]
    specific = any("fitted at zero conversion" in w for w in out)
    general = (rc.WARNING_ZERO_CONVERSION, rc.WARNING_ZERO_CONVERSION_REACTION)
    if specific:
        out = [w for w in out if w not in general]
    for w in kinetics:
        if specific and w in general:
            continue
        if w not in out:
            out.append(w)
    return out


def _steady_state_statements(model, hist, steady, runs_away, T0, unit, warnings) -> None:
    """What the steady states of the whole balance say about the computed history (storage, heat-up)."""
    no_return = steady.unstable
    if steady.stable is not None and runs_away:
        warnings.append(f"A stable steady state exists at {temp(steady.stable, unit)}, but the contents do not "
                        f"settle there: they start above, or are pushed past, the no-return temperature "
                        f"({temp(no_return, unit) if no_return else '—'}).")
    if model.decaying_sources and no_return is not None and hist.peak_temperature > no_return and T0 < no_return:
        warnings.append(f"The transient (decaying) sources push the contents past the no-return temperature "
                        f"({temp(no_return, unit)}): they run away even though the ambient is below the "
                        f"critical ambient.")
    if no_return is not None and T0 >= no_return:
        if runs_away:
            warnings.append(f"The contents start at {temp(T0, unit)}, above the no-return temperature "
                            f"({temp(no_return, unit)}): they run away even though the ambient is below the "
                            f"critical ambient.")
        else:
            warnings.append(f"The contents start at {temp(T0, unit)}, above the no-return temperature at the "
                            f"initial conversion ({temp(no_return, unit)}): heat generation exceeds the loss, "
                            f"so the temperature rises until the reaction is spent (peak "
                            f"{temp(hist.peak_temperature, unit)}). Only depletion of the reactant stops it; "
                            f"with more accumulation, or an autocatalytic reaction, it would run away.")


def _arrhenius_recovery(prepared: PreparedCase, result: dict, hist, values: ArrheniusValues | None = None) -> None:
    """Restore cooling at detection + response for an Arrhenius case and follow the path: from the engine's
    runs (``values.recovery``) when there are values, else from the single-case history; the chart
    (``_recovery_history``) from the single-case integrator when there is a history."""
    from screening.core.arrhenius_history import integrate_history

    model = prepared.model
    if prepared.recovery is None or prepared.response_time is None or result.get("detection_time_s") is None:
        return
    start = result["detection_time_s"] + prepared.response_time
    H = model.horizon
    reached_before = [r["name"] for r in result["limits"] if r["time_s"] is not None and r["time_s"] <= start]
    stop_time, ceiling_stop = ((values.stop_time, values.peak_is_ceiling) if values is not None
                               else (hist.stop_time, hist.peak_is_ceiling))
    if start >= H or stop_time < start:
        result["recovery"] = {"start_s": start, "peak_temperature_K": None, "peak_time_s": None,
                              "limits_reached": [r["name"] for r in result["limits"] if r["reached"]],
                              "past_no_return": True if stop_time < start and ceiling_stop else None}
        return
    rec = None
    if values is not None:
        run = values.recovery
        T_start, X_start = run.temperature, run.conversion
        pre_T, pre_t = run.pre_peak_temperature, run.pre_peak_time
        rec_times, peak_T, peak_t = run.times, run.peak_temperature, start + run.peak_time
    else:
        t = np.asarray(hist.time)
        T_start = float(np.interp(start, t, np.asarray(hist.temperature)))
        conv = np.atleast_2d(np.asarray(hist.conversion, dtype=float))
        if conv.shape[0] != len(t) and conv.shape[-1] == len(t):
            conv = conv.T
        X_start = [float(np.interp(start, t, conv[:, j])) if conv.size else 0.0
                   for j in range(len(model.arrhenius_sources))]
        rec = integrate_history(_recovery_model(prepared, start, T_start, X_start))
        rec_times, peak_T, peak_t = [c.time for c in rec.limits], rec.peak_temperature, start + rec.peak_time
        pre = np.asarray(hist.temperature)[t <= start]
        k = int(np.argmax(pre)) if pre.size else 0
        pre_T, pre_t = (float(pre[k]), float(t[t <= start][k])) if pre.size else (-math.inf, 0.0)
    rec_model = _recovery_model(prepared, start, T_start, X_start)
    reached = list(reached_before)
    for lim, time in zip(model.limits, rec_times):
        if time is not None and lim.name not in reached:
            reached.append(lim.name)
    sources = rec_model.arrhenius_sources
    steady = rc.steady_states(model.contents_mass, sources, constant_power(model), model.ua,
                              model.ambient_temperature, rec_model.heating_media,
                              conversion=[rc.rate_conversion(s) if s.autocatalytic  # its largest rate from here on
                                          else 1.0 - s.accumulated_fraction if s.specific_heat_of_reaction else 0.0
                                          for s in sources])
    past = bool(steady.unstable is not None and T_start >= steady.unstable) or (steady.stable is None)
    if pre_T > peak_T:
        peak_T, peak_t = pre_T, pre_t
    result["recovery"] = {"start_s": start, "peak_temperature_K": peak_T, "peak_time_s": peak_t,
                          "limits_reached": reached, "past_no_return": past}
    if hist is None:
        return
    if rec is None:  # the chart from the engine's state at the restart
        rec = integrate_history(rec_model)
    t = np.asarray(hist.time)
    times = np.concatenate([t[t <= start], start + np.asarray(rec.time)])
    temps = np.concatenate([np.asarray(hist.temperature)[t <= start], np.asarray(rec.temperature)])
    result["_recovery_history"] = {"time_s": times.tolist(), "temperature_K": temps.tolist()}
