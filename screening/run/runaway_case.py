"""Screen a case that has temperature-dependent (Arrhenius) heat sources.

Joins the numeric history (:mod:`screening.core.arrhenius_history`) and the runaway
criteria (:mod:`screening.core.runaway`) into the same result keys as the
closed-form path, plus the runaway keys.
"""
from __future__ import annotations

import dataclasses
import math

import numpy as np

from screening.case.display import dtemp, temp
from screening.case.prepare import PreparedCase
from screening.case.schema import ArrheniusSpec
from screening.core import runaway as rc
from screening.core.model import HeatingMedium, Limit, ScreeningModel
from screening.core.terms import constant_power, model_terms
from screening.run.recovery import detection_and_recovery

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
    cp = model.contents_specific_heat
    sources = model.arrhenius_sources
    X0 = _initial_conversions(model)
    P = constant_power(model)
    T0 = model.initial_temperature
    Ta = model.ambient_temperature

    # --- adiabatic criteria
    def add(ws):
        warnings.extend(w for w in ws if w not in warnings)

    tmr0 = float(rc.tmr_adiabatic(T0, cp, sources, conversion=X0))
    td24, ws = rc.t_d24(cp, sources, conversion=X0, full_output=True)
    add(ws)
    rise, rise_warnings = rc.adiabatic_temperature_rise(m, cp, sources, model.decaying_sources,
                                                        model.constant_sources, full_output=True)
    add(rise_warnings)
    unbounded = rise is not None and math.isinf(rise)
    mtsr_for_class = math.inf if unbounded else (rc.mtsr(T0, rise) if rise is not None else None)
    rise = None if (rise is None or unbounded) else float(rise)
    mtsr = rc.mtsr(T0, rise) if rise is not None else None
    tmr_mtsr = float(rc.tmr_adiabatic(mtsr, cp, sources, conversion=X0)) if mtsr is not None else None
    declared = _declared_accumulation_rise(prepared)
    mtsr_declared = T0 + declared if declared is not None else None
    if mtsr is not None and mtsr_declared is not None and mtsr_declared < mtsr - 1e-9:
        warnings.append(f"MTSR ({temp(mtsr, unit)}) includes the whole heat of reaction of every Arrhenius source "
                        f"that does not state accumulated_fraction (taken as 100 %). If such a source is a "
                        f"secondary decomposition rather than the process reaction, the MTSR of the process "
                        f"reaction alone is {temp(mtsr_declared, unit)}.")
    mtt = model.maximum_technical_temperature
    if mtt is None and model.boiling is not None and model.boiling.venting == "open":
        mtt = model.boiling.boiling_point
    crit_class = None
    if None not in (mtsr_for_class, mtt, td24):
        crit_class, ws = rc.criticality_class(T0, mtsr_for_class, mtt, td24, full_output=True)
        add(ws)
    if unbounded:
        warnings.append("The adiabatic temperature rise is unbounded (an Arrhenius source without a heat of "
                        "reaction releases heat without limit): MTSR and TMRad at MTSR are not given; the "
                        "criticality class is taken with MTSR above every other temperature (conservative).")

    # --- Semenov (stirred) or Frank-Kamenetskii (unstirred)
    sem_crit, ws = rc.semenov_critical_ambient(m, sources, P, model.ua, model.heating_media, conversion=X0,
                                               full_output=True)
    add(ws)
    steady, ws = rc.steady_states(m, sources, P, model.ua, Ta, model.heating_media, conversion=X0,
                                  full_output=True)
    add(ws)
    if model.decaying_sources and rc.WARNING_TRANSIENT_SOURCES not in warnings:
        warnings.append(rc.WARNING_TRANSIENT_SOURCES)
    crit_ambient, crit_T, method = sem_crit.ambient, sem_crit.temperature, "semenov"
    no_return = steady.unstable
    fk = None
    if model.mixing == "unstirred":
        fk = _frank_kamenetskii(model, X0, warnings, unit)
        method = "frank-kamenetskii"
        crit_ambient = fk["critical_ambient_K"] if fk else None
        crit_T = None
        no_return = None

    runs_away = hist.peak_is_ceiling or (hist.rising_at_end and steady.stable is None)
    stable = steady.stable if not runs_away else None
    final_X = [x if x is not None else x0 for x, x0 in zip(hist.final_conversion, X0)]
    if not runs_away and any(abs(a - b) > 1e-9 for a, b in zip(final_X, X0)):
        # the contents settle at the steady state of what is left of the reactions
        settled = rc.steady_states(m, sources, P, model.ua, Ta, model.heating_media, conversion=final_X)
        if settled.stable is not None:
            stable = settled.stable
    if steady.stable is not None and runs_away:
        warnings.append(f"A stable steady state exists at {temp(steady.stable, unit)}, but the contents do not "
                        f"settle there: they start above, or are pushed past, the no-return temperature "
                        f"({temp(no_return, unit) if no_return else '—'}).")
    if model.decaying_sources and steady.unstable is not None and hist.peak_temperature > steady.unstable \
            and T0 < steady.unstable:
        warnings.append(f"The transient (decaying) sources push the contents past the no-return temperature "
                        f"({temp(steady.unstable, unit)}): they run away even though the ambient is below the "
                        f"critical ambient.")
    if model.mixing == "stirred" and steady.unstable is not None and T0 >= steady.unstable:
        if runs_away:
            warnings.append(f"The contents start at {temp(T0, unit)}, above the no-return temperature "
                            f"({temp(steady.unstable, unit)}): they run away even though the ambient is below the "
                            f"critical ambient.")
        else:
            warnings.append(f"The contents start at {temp(T0, unit)}, above the no-return temperature at the "
                            f"initial conversion ({temp(steady.unstable, unit)}): heat generation exceeds the loss, "
                            f"so the temperature rises until the reaction is spent (peak "
                            f"{temp(hist.peak_temperature, unit)}). Only depletion of the reactant stops it; "
                            f"with more accumulation, or an autocatalytic reaction, it would run away.")

    used = [T0, mtsr, td24, crit_T, no_return, hist.peak_temperature] + [l.temperature for l in model.limits]
    warnings[:] = _consolidate(warnings, rc.kinetics_warnings(sources, temperatures=[t for t in used if t is not None],
                                                              conversion=X0))

    summary = _summary(model, unit, crit_ambient, method, stable, no_return, runs_away, hist)

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
        "tmr_adiabatic_s": tmr0 if math.isfinite(tmr0) else None,
        "tmr_at_mtsr_s": tmr_mtsr if (tmr_mtsr is not None and math.isfinite(tmr_mtsr)) else None,
        "t_d24_K": td24,
        "critical_ambient_temperature_K": crit_ambient,
        "critical_ambient_method": method if crit_ambient is not None or model.mixing == "unstirred" else method,
        "critical_temperature_K": crit_T,
        "no_return_temperature_K": no_return,
        "adiabatic_temperature_rise_K": rise,
        "adiabatic_rise_unbounded": unbounded,
        "mtsr_K": mtsr,
        "mtsr_declared_accumulation_K": mtsr_declared,
        "criticality_class": crit_class,
        "runaway_summary": summary,
        "semenov": {"critical_ambient_K": sem_crit.ambient, "critical_temperature_K": sem_crit.temperature,
                    "stable_K": steady.stable, "no_return_K": steady.unstable},
        "frank_kamenetskii": fk,
        "stop_reason": hist.stop_reason,
    }
    alarm_time = _alarm_time(hist)
    detection_and_recovery(prepared, result, alarm_time=alarm_time)
    _arrhenius_recovery(prepared, result, hist)
    result["_history"] = {"time_s": np.asarray(hist.time).tolist(), "temperature_K": np.asarray(hist.temperature).tolist(),
                          "generation_W": np.asarray(hist.heat_generation).tolist(),
                          "loss_W": np.asarray(hist.heat_loss_ambient).tolist()}
    result["_heat_balance"] = _heat_balance(model, X0, P, steady, crit_ambient if method == "semenov" else sem_crit.ambient)
    return result


def _is_extrapolation(text: str) -> bool:
    return "extrapolated far" in text


def _consolidate(warnings: list[str], kinetics: list[str]) -> list[str]:
    """One extrapolation warning per source (the farthest, from ``kinetics``), and the general
    zero-conversion caution only when no source-specific one says it."""
    out = [w for w in warnings if not _is_extrapolation(w)]
    specific = any("fitted at zero conversion" in w for w in out)
    if specific:
        out = [w for w in out if w != rc.WARNING_ZERO_CONVERSION]
    for w in kinetics:
        if specific and w == rc.WARNING_ZERO_CONVERSION:
            continue
        if w not in out:
            out.append(w)
    return out


def _declared_accumulation_rise(prepared: PreparedCase) -> float | None:
    """Adiabatic rise of decaying sources plus Arrhenius sources that state accumulated_fraction, K."""
    model = prepared.model
    energy = sum(s.power * s.time_constant for s in model.decaying_sources)
    specs = [s for s in prepared.spec.heat_sources if isinstance(s, ArrheniusSpec)]
    for spec, src in zip(specs, model.arrhenius_sources):
        if spec.accumulated_fraction is not None and src.specific_heat_of_reaction is not None:
            energy += src.accumulated_fraction * src.specific_heat_of_reaction * model.contents_mass
    return energy / (model.contents_mass * model.contents_specific_heat)


def _frank_kamenetskii(model: ScreeningModel, X0, warnings, unit) -> dict | None:
    k, r, h, rho = model.thermal_conductivity, model.conduction_radius, model.surface_coefficient, model.density
    if None in (k, r, rho) or model.conduction_geometry is None:
        warnings.append("Unstirred contents: the Frank-Kamenetskii criterion needs contents.thermal_conductivity, "
                        "contents.density and a vessel shape; it was not computed, and the Semenov (well-mixed) "
                        "critical ambient is not valid for unstirred contents.")
        return None
    biot = h * r / k if h is not None else math.inf
    delta_c = rc.frank_kamenetskii_critical(model.conduction_geometry, biot)
    ta_c, fk_warnings = rc.frank_kamenetskii_critical_ambient(model.conduction_geometry, biot, rho,
                                                              model.arrhenius_sources, r, k, conversion=X0,
                                                              full_output=True)
    warnings.extend(w for w in fk_warnings if w not in warnings)
    delta = rc.frank_kamenetskii_parameter(model.ambient_temperature, rho, model.arrhenius_sources, r, k, conversion=X0)
    warnings.append(f"Unstirred contents: the lumped temperature history assumes one temperature for the whole mass "
                    f"and is not valid for conduction-limited contents; the Frank-Kamenetskii criterion (geometry "
                    f"{model.conduction_geometry}, radius {r:.3g} m, surface Biot number "
                    f"{'infinite (no surface coefficient)' if math.isinf(biot) else f'{biot:.3g}'}) governs. A "
                    f"cylinder is treated as infinitely long and a box as a slab, which is conservative.")
    # JSON has no infinity: an infinite Biot number (surface held at ambient; its warning says so) is null
    return {"geometry": model.conduction_geometry, "radius_m": r,
            "surface_biot_number": None if math.isinf(biot) else biot,
            "delta": float(delta), "delta_critical": float(delta_c), "critical_ambient_K": ta_c}


def _summary(model, unit, crit_ambient, method, stable, no_return, runs_away, hist) -> str:
    Ta, T0 = model.ambient_temperature, model.initial_temperature
    name = "Semenov" if method == "semenov" else "Frank-Kamenetskii"
    if crit_ambient is None:
        if model.ua == 0 and not model.heating_media:
            return ("With no heat loss (UA = 0) no steady state exists at any ambient: the contents heat up until "
                    "the reaction is spent, or run away.")
        return f"The {name} critical ambient could not be computed for this case; see the warnings."
    margin = crit_ambient - Ta
    if margin <= 0:
        return (f"The contents CAN run away at the stated ambient: the ambient ({temp(Ta, unit)}) is at or above the "
                f"{name} critical ambient ({temp(crit_ambient, unit)}), so no stable steady state exists.")
    text = (f"The ambient ({temp(Ta, unit)}) is {dtemp(margin, unit)} below the {name} critical ambient "
            f"({temp(crit_ambient, unit)}).")
    if runs_away:
        text += (" Even so the contents run away in this scenario: they start above, or are pushed past, the "
                 "no-return temperature" + (f" ({temp(no_return, unit)})." if no_return else "."))
    elif stable is not None:
        text += f" The contents settle at a stable steady state of {temp(stable, unit)}"
        if no_return is not None:
            text += (f"; they would run away only if pushed above the no-return temperature of "
                     f"{temp(no_return, unit)}.")
        else:
            text += "."
    return text


def _heat_balance(model, X0, P, steady, crit_ambient) -> dict:
    Ta = model.ambient_temperature
    hi_candidates = [model.initial_temperature + 60, Ta + 80] + [l.temperature + 20 for l in model.limits]
    if steady.unstable is not None:
        hi_candidates.append(steady.unstable + 20)
    lo = min(Ta, model.initial_temperature) - 10
    hi = min(max(hi_candidates), lo + 400)
    T = np.linspace(lo, hi, 161)
    gen = np.asarray(rc.heat_generation(T, model.contents_mass, model.arrhenius_sources, P, conversion=X0), dtype=float)
    loss = np.asarray(rc.heat_loss(T, model.ua, Ta, model.heating_media), dtype=float)
    states = [s for s in (steady.stable, steady.unstable) if s is not None]
    return {"temperature_K": T.tolist(), "generation_W": gen.tolist(), "loss_W": loss.tolist(),
            "steady_states_K": states, "critical_ambient_K": crit_ambient, "ambient_K": Ta}


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
                                    decaying_sources=decaying, heating_media=media)
    rec = integrate_history(rec_model)
    reached = list(reached_before)
    for c in rec.limits:
        if c.time is not None and c.name not in reached:
            reached.append(c.name)
    steady = rc.steady_states(model.contents_mass, sources, constant_power(model), model.ua,
                              model.ambient_temperature, media,
                              conversion=[1.0 - s.accumulated_fraction if s.specific_heat_of_reaction else 0.0
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
