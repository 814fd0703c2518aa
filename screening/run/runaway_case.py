"""Screen a case that has temperature-dependent (Arrhenius) heat sources.

Joins the numeric history (:mod:`screening.core.arrhenius_history`) and the runaway
criteria (:mod:`screening.core.runaway`) into the same result keys as the
closed-form path, plus the runaway keys.
"""
from __future__ import annotations

import dataclasses
import math

import numpy as np

from screening.case.display import temp
from screening.case.prepare import PreparedCase
from screening.core import runaway as rc
from screening.core.daily_cycle import mean_rise
from screening.core.model import HeatingMedium, Limit, ScreeningModel
from screening.core.terms import constant_power, model_start_temperature, model_terms
from screening.run.recovery import detection_and_recovery
from screening.run.scenario_criteria import (
    HistoryFacts,
    heat_balance_curves,
    named_kinetics_warnings,
    roles_of,
    scenario_criteria,
    steady_conversions,
)

ALARM = "\x00alarm"


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


def screen_with_arrhenius(prepared: PreparedCase) -> dict:
    from screening.core.arrhenius_history import integrate_history

    model = prepared.model
    unit = prepared.display_temperature_unit
    warnings: list[str] = []
    limits = list(model.limits)
    if prepared.detection_alarm is not None:
        limits.append(Limit(ALARM, prepared.detection_alarm))
    run_model = dataclasses.replace(model, limits=tuple(limits))
    hist = integrate_history(run_model)
    rows, limit_warnings = _limit_rows(hist, model)
    warnings.extend(w for w in hist.warnings if w not in warnings)
    warnings.extend(w for w in limit_warnings if w not in warnings)
    warnings.extend(w for w in hist.peak_warnings if w not in warnings)

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
    runs_away = hist.peak_is_ceiling or (hist.rising_at_end and steady.stable is None)
    stable = steady.stable if not runs_away else None
    final_X = [x if x is not None else x0 for x, x0 in zip(hist.final_conversion, X0)]
    if not runs_away and any(abs(a - b) > 1e-9 for a, b in zip(final_X, X0)):
        # the contents settle at the steady state of what is left of the reactions
        settled = rc.steady_states(m, sources, P, model.ua, Ta, model.heating_media, conversion=final_X)
        if settled.stable is not None:
            stable = settled.stable
    no_return = steady.unstable
    if scenario != "cooling-failure" and model.mixing == "stirred":
        _steady_state_statements(model, hist, steady, runs_away, T0, unit, warnings)

    facts = HistoryFacts(hist.peak_temperature, hist.peak_time, bool(runs_away), bool(hist.rising_at_end), T0, stable,
                         float(hist.temperature[-1]))
    criteria, ws, used = scenario_criteria(prepared, facts)
    add(ws)
    _, decomposition = roles_of(model)
    general = rc.zero_conversion_warning(sources)
    kinetics = [general] if general is not None else []
    for s in sources:  # one extrapolation caution per source, at the farthest temperature its kinetics were used at
        kinetics += named_kinetics_warnings([s], [T0, hist.peak_temperature] + (used if s in decomposition else []))
    kinetics += rc.initiation_warnings(sources, [T0, hist.peak_temperature] + used)
    warnings[:] = _consolidate(warnings, kinetics)

    # --- adiabatic bound
    ad_model = dataclasses.replace(model, ua=0.0, boiling=None)
    ad_hist = integrate_history(ad_model)
    adiabatic = {"limits": [{"name": c.name, "time_s": c.time} for c in ad_hist.limits],
                 "temperature_rise_K": sum(s.power * s.time_constant for s in model.decaying_sources) / C}

    boiling = None
    if model.boiling is not None and hist.boiling is not None:
        b = hist.boiling
        boiled = b.time_to_boil is not None and b.tempering_credited
        boiling = {"time_to_boil_s": b.time_to_boil,
                   "peak_boil_off_kg_per_s": b.peak_boil_off_rate if boiled else None,
                   "boiled_off_kg": b.boiled_off_mass if b.tempering_credited else None,
                   "time_to_dry_s": b.time_to_dry}
        warnings.extend(w for w in b.warnings if w not in warnings)

    result = {
        "time_constant_s": tau,
        "peak_temperature_K": hist.peak_temperature,
        "peak_time_s": hist.peak_time,
        "steady_temperature_K": stable,
        "limits": rows,
        "adiabatic": adiabatic,
        "boiling": boiling,
        "warnings": warnings,
        "method": "numeric",
        **criteria,
        "stop_reason": hist.stop_reason,
    }
    if scenario == "heat-up":
        result["no_return_temperature_K"] = no_return if model.mixing == "stirred" else None
    alarm_time = _alarm_time(hist)
    detection_and_recovery(prepared, result, alarm_time=alarm_time)
    _arrhenius_recovery(prepared, result, hist)
    result["_history"] = {"time_s": np.asarray(hist.time).tolist(), "temperature_K": np.asarray(hist.temperature).tolist(),
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


def _arrhenius_recovery(prepared: PreparedCase, result: dict, hist) -> None:
    """Restore cooling at detection + response for an Arrhenius case and follow the path."""
    from screening.core.arrhenius_history import integrate_history

    model = prepared.model
    if prepared.recovery is None or prepared.response_time is None or result.get("detection_time_s") is None:
        return
    start = result["detection_time_s"] + prepared.response_time
    H = model.horizon
    tm, ua_r = prepared.recovery
    reached_before = [r["name"] for r in result["limits"] if r["time_s"] is not None and r["time_s"] <= start]
    if start >= H or hist.stop_time < start:
        result["recovery"] = {"start_s": start, "peak_temperature_K": None, "peak_time_s": None,
                              "limits_reached": [r["name"] for r in result["limits"] if r["reached"]],
                              "past_no_return": True if hist.stop_time < start and hist.peak_is_ceiling else None}
        return
    t = np.asarray(hist.time)
    T_start = float(np.interp(start, t, np.asarray(hist.temperature)))
    conv = np.atleast_2d(np.asarray(hist.conversion, dtype=float))
    if conv.shape[0] != len(t) and conv.shape[-1] == len(t):
        conv = conv.T
    X_start = [float(np.interp(start, t, conv[:, j])) if conv.size else 0.0 for j in range(len(model.arrhenius_sources))]
    sources = tuple(dataclasses.replace(s, accumulated_fraction=max(1e-12, 1.0 - X_start[j]))
                    if s.specific_heat_of_reaction is not None else s
                    for j, s in enumerate(model.arrhenius_sources))
    decaying = tuple(dataclasses.replace(s, power=s.power * math.exp(-start / s.time_constant))
                     for s in model.decaying_sources)
    media = model.heating_media + (HeatingMedium(tm, ua_r),)
    rec_model = dataclasses.replace(model, initial_temperature=T_start, horizon=H - start, arrhenius_sources=sources,
                                    decaying_sources=decaying, heating_media=media, released_at_start=())
    rec = integrate_history(rec_model)
    reached = list(reached_before)
    for c in rec.limits:
        if c.time is not None and c.name not in reached:
            reached.append(c.name)
    steady = rc.steady_states(model.contents_mass, sources, constant_power(model), model.ua,
                              model.ambient_temperature, media,
                              conversion=[rc.rate_conversion(s) if s.autocatalytic  # its largest rate from here on
                                          else 1.0 - s.accumulated_fraction if s.specific_heat_of_reaction else 0.0
                                          for s in sources])
    past = bool(steady.unstable is not None and T_start >= steady.unstable) or (steady.stable is None)
    peak_T, peak_t = rec.peak_temperature, start + rec.peak_time
    pre = np.asarray(hist.temperature)[t <= start]
    if pre.size and pre.max() > peak_T:
        k = int(np.argmax(pre))
        peak_T, peak_t = float(pre[k]), float(t[t <= start][k])
    result["recovery"] = {"start_s": start, "peak_temperature_K": peak_T, "peak_time_s": peak_t,
                          "limits_reached": reached, "past_no_return": past}
    times = np.concatenate([t[t <= start], start + np.asarray(rec.time)])
    temps = np.concatenate([np.asarray(hist.temperature)[t <= start], np.asarray(rec.temperature)])
    result["_recovery_history"] = {"time_s": times.tolist(), "temperature_K": temps.tolist()}
