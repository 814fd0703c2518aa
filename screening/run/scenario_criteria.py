"""Runaway criteria by scenario: cooling failure, storage, heat-up, and a heating medium left on.

Reactions have roles. The desired reaction (synthesis) sets the MTSR; the decomposition (secondary
reaction) sets T_D24, TMRad and the severity (Stoessel, *Thermal Safety of Chemical Processes*, 2008):

- cooling failure: MTSR = Tp + sum X_ac dT_ad of the syntheses + sum P tau / (m c_p) of the decaying
  sources; T_D24, TMRad and TMRad at MTSR of the decompositions only; MTT; the criticality class from
  the order of Tp, MTSR, MTT and T_D24 (as far as it can be determined); the decomposition's rise and
  the final temperature; whether MTSR lies above the decomposition's no-return temperature.
- storage: no MTSR and no class; the critical ambient (Semenov for stirred contents, Frank-Kamenetskii
  at the actual Biot number for unstirred ones) against the storage ambient; TMRad at the storage
  temperature (the higher of the initial and the ambient temperature); gas.
- heat-up: time-to-limit criteria only (TMRad and T_D24 of a decomposition are given for information).

MTSR and TMRad use the contents' specific heat alone (phi = 1, the wall not credited: conservative);
the temperature history keeps the total heat capacity. Both the closed-form and the numeric path take
their criteria from :func:`scenario_criteria`, so a case says the same things on either path.
"""
from __future__ import annotations

import math
import re
from dataclasses import dataclass

import numpy as np

from screening.case.display import dtemp, duration, temp
from screening.case.prepare import PreparedCase, source_name
from screening.case.schema import TEMPERATURE_DEPENDENT
from screening.core import runaway as rc
from screening.core.model import ScreeningModel
from screening.core.terms import constant_power, model_start_temperature
from screening.run import autocatalytic_criteria as ac
from screening.run.daily_cycle import criteria_ambient

#: Every key :func:`scenario_criteria` writes (None / empty when it does not apply).
SCENARIO_KEYS = (
    "scenario", "synthesis_sources", "decomposition_sources", "gas_generating_sources",
    "tmr_adiabatic_s", "tmr_at_mtsr_s", "t_d24_K", "critical_ambient_temperature_K", "critical_ambient_method",
    "critical_temperature_K", "no_return_temperature_K", "adiabatic_temperature_rise_K", "adiabatic_rise_unbounded",
    "mtsr_K", "mtsr_parts", "synthesis_temperature_rise_K", "decaying_temperature_rise_K",
    "decomposition_temperature_rise_K", "decomposition_rise_unbounded", "final_temperature_K",
    "final_minus_process_K", "maximum_technical_temperature_K", "mtt_basis", "criticality_class",
    "criticality_classes_possible", "mtsr_above_no_return", "mtt_barrier", "decomposition_shares_at_mtsr",
    "storage_temperature_K", "tmr_at_storage_temperature_s", "critical_ambient_margin_K", "gas_in_closed_package",
    "unstirred_hot_start", "critical_medium_temperature_K", "heating_medium_temperature_K", "medium_above_t_d24",
    "runaway_summary", "semenov", "frank_kamenetskii",
)

_LIST_KEYS = ("synthesis_sources", "decomposition_sources", "gas_generating_sources")

T_D24_MISSING = ("No decomposition (secondary reaction) source is given, so T_D24, TMRad at MTSR and the "
                 "decomposition's temperature rise are not known: T_D24 must be measured.")

PHI_NOTE = ("MTSR, TMRad and T_D24 use the contents' specific heat alone (phi = 1: the vessel wall is not credited, "
            "which is conservative); the temperature history keeps the wall's heat capacity.")


@dataclass(frozen=True)
class HistoryFacts:
    """What the computed temperature history says, for statements about running away."""

    peak_temperature: float  # K
    peak_time: float  # s
    runs_away: bool  # reaches the integration ceiling, or keeps rising with no stable state
    rising_at_end: bool  # still rising at the horizon
    start_temperature: float  # K, at t = 0 after any heat released at once
    steady_temperature: float | None = None  # K, the stable state the history settles toward, if any
    end_temperature: float | None = None  # K, at the end of the history (None: not given)


def empty_criteria(scenario: str | None = None) -> dict:
    """The scenario keys with nothing in them."""
    out = dict.fromkeys(SCENARIO_KEYS)
    for key in _LIST_KEYS:
        out[key] = []
    out["adiabatic_rise_unbounded"] = False
    out["decomposition_rise_unbounded"] = False
    out["scenario"] = scenario
    return out


def roles_of(model: ScreeningModel) -> tuple[tuple, tuple]:
    """(synthesis, decomposition) Arrhenius sources of a model."""
    synthesis = tuple(s for s in model.arrhenius_sources if s.role == "synthesis")
    decomposition = tuple(s for s in model.arrhenius_sources if s.role != "synthesis")
    return synthesis, decomposition


def _names(prepared: PreparedCase, role: str) -> list[str]:
    out = []
    for i, s in enumerate(prepared.spec.heat_sources):
        r = s.effective_role if isinstance(s, TEMPERATURE_DEPENDENT) else getattr(s, "role", None)
        if r == role:
            out.append(source_name(s, i))
    return out


def _label(s, i: int) -> str:
    return s.label or f"Arrhenius source {i}"


def _finite(x):
    return float(x) if x is not None and math.isfinite(float(x)) else None


_EXTRAPOLATION = re.compile(r"^Arrhenius source (\d+): kinetics used at")


def named_kinetics_warnings(sources, temperatures) -> list[str]:
    """Extrapolation warnings per source, each naming the source by its label (one call per source)."""
    out = []
    temps = [t for t in temperatures if t is not None and math.isfinite(t)]
    for i, s in enumerate(sources, start=1):
        for w in rc.kinetics_warnings([s], temps):
            if _EXTRAPOLATION.match(w):
                out.append(_EXTRAPOLATION.sub(f"{_label(s, i)}: kinetics used at", w, count=1))
    return out


def drop_extrapolation(warnings: list[str]) -> list[str]:
    """Warnings without the criteria functions' own extrapolation texts (they number sources by list position)."""
    return [w for w in warnings if "extrapolated far" not in w]


def scenario_criteria(prepared: PreparedCase, facts: HistoryFacts) -> tuple[dict, list[str], list[float]]:
    """The scenario keys of a result, the warnings that go with them, and the temperatures at which the
    decomposition kinetics were used (for the extrapolation cautions, :func:`named_kinetics_warnings`)."""
    model = prepared.model
    unit = prepared.display_temperature_unit
    out = empty_criteria(model.scenario)
    out["synthesis_sources"] = _names(prepared, "synthesis")
    out["decomposition_sources"] = _names(prepared, "decomposition")
    out["gas_generating_sources"] = [_label(s, i) for i, s in enumerate(model.arrhenius_sources, start=1)
                                     if s.gas_generating]
    warnings: list[str] = []
    _, decomposition = roles_of(model)
    cp, m, T0 = model.contents_specific_heat, model.contents_mass, model.initial_temperature
    used = [T0]
    if decomposition:
        out["tmr_adiabatic_s"] = _finite(ac.tmr(T0, cp, decomposition))
        td24, ws = ac.td24(cp, decomposition)
        warnings += ws
        out["t_d24_K"] = td24
        rise, ws = rc.adiabatic_temperature_rise(m, cp, decomposition, full_output=True)
        warnings += ws
        out["decomposition_rise_unbounded"] = math.isinf(rise)
        out["decomposition_temperature_rise_K"] = _finite(rise)
        used.append(td24)
    if model.scenario == "cooling-failure":
        warnings += _cooling_failure(prepared, facts, out, decomposition, used)
    elif model.scenario == "storage":
        warnings += _storage(prepared, facts, out, decomposition, used)
    else:
        warnings += _heat_up(prepared, facts, out, decomposition)
    warnings += _heating_medium(prepared, out, decomposition, used)
    warnings += ac.add_block(prepared, out, decomposition)
    if decomposition and out["decomposition_rise_unbounded"]:
        warnings.append("A decomposition source has no heat of reaction, so its temperature rise is unbounded: the "
                        "severity is taken as high and no final temperature is given.")
    out["runaway_summary"] = _summary(prepared, facts, out, unit)
    return out, _unique(drop_extrapolation(warnings)), [t for t in used if t is not None]


def _unique(items):
    seen, out = set(), []
    for x in items:
        if x not in seen:
            seen.add(x)
            out.append(x)
    return out


# ------------------------------------------------------------------ cooling failure


def maximum_technical_temperature(model: ScreeningModel) -> tuple[float | None, str | None]:
    """(MTT, basis): the stated MTT, or the boiling point of an open vessel."""
    if model.maximum_technical_temperature is not None:
        return model.maximum_technical_temperature, "given"
    if model.boiling is not None and model.boiling.venting == "open":
        return model.boiling.boiling_point, "boiling point (open vessel)"
    return None, None


def boiling_credited(model: ScreeningModel) -> bool:
    """Whether the history holds an open vessel at its boiling point (no gas-generating reaction)."""
    return (model.boiling is not None and model.boiling.venting == "open"
            and not any(s.gas_generating for s in model.arrhenius_sources))


def _cooling_failure(prepared, facts, out, decomposition, used) -> list[str]:
    model = prepared.model
    unit = prepared.display_temperature_unit
    warnings: list[str] = []
    cp, m, T0 = model.contents_specific_heat, model.contents_mass, model.initial_temperature
    synthesis, _ = roles_of(model)
    parts = []
    for s in synthesis:
        parts.append({"source": s.label, "kind": "synthesis", "accumulated_fraction": s.accumulated_fraction,
                      "temperature_rise_K": float(rc.accumulated_temperature_rise(
                          cp, s.specific_heat_of_reaction, s.accumulated_fraction))})
    for r in model.released_at_start:
        parts.append({"source": r.label, "kind": "synthesis without kinetics (released at t = 0 in the history)",
                      "accumulated_fraction": r.accumulated_fraction,
                      "temperature_rise_K": float(rc.accumulated_temperature_rise(
                          cp, r.specific_heat_of_reaction, r.accumulated_fraction))})
    decaying_rise = 0.0
    decaying_names = [source_name(s, i) for i, s in enumerate(prepared.spec.heat_sources) if s.kind == "decaying"]
    for j, d in enumerate(model.decaying_sources):
        rise = rc.decaying_temperature_rise(m, cp, d.power, d.time_constant)
        decaying_rise += rise
        name = decaying_names[j] if j < len(decaying_names) else f"decaying source {j + 1}"
        parts.append({"source": name, "kind": "decaying, synthesis" if d.role else "decaying",
                      "accumulated_fraction": None, "temperature_rise_K": rise})
    synthesis_rise = sum((p["temperature_rise_K"] for p in parts if p["kind"].startswith("synthesis")), 0.0)
    mtsr = rc.mtsr(T0, synthesis_rise + decaying_rise)
    out.update(mtsr_K=mtsr, mtsr_parts=parts, synthesis_temperature_rise_K=synthesis_rise,
               decaying_temperature_rise_K=decaying_rise, adiabatic_temperature_rise_K=mtsr - T0)
    used.append(mtsr)
    if model.constant_sources and any(c.power > 0 for c in model.constant_sources):
        warnings.append(rc.WARNING_CONSTANT_SOURCES_NOT_IN_RISE)
    mtt, basis = maximum_technical_temperature(model)
    out["maximum_technical_temperature_K"], out["mtt_basis"] = mtt, basis
    if mtt is None:
        warnings.append("No maximum technical temperature (MTT) is given (maximum_technical_temperature, or boiling "
                        "data for an open vessel): the criticality class is not determined.")
    td24 = out["t_d24_K"]
    if not decomposition:  # said in the summary, next to the MTSR
        if mtt is not None:
            out["criticality_classes_possible"] = list(rc.possible_criticality_classes(mtsr, mtt))
    else:
        tmr_mtsr = ac.tmr(mtsr, cp, decomposition)
        out["tmr_at_mtsr_s"] = _finite(tmr_mtsr)
        rates = [float(rc.heat_generation(mtsr, 1.0, [s])) for s in decomposition]
        total = sum(rates)
        out["decomposition_shares_at_mtsr"] = [
            {"source": _label(s, i), "specific_power_W_per_kg": q, "share": q / total if total > 0 else None}
            for i, (s, q) in enumerate(zip(decomposition, rates), start=1)]
        if out["decomposition_temperature_rise_K"] is not None:
            out["final_temperature_K"] = mtsr + out["decomposition_temperature_rise_K"]
            out["final_minus_process_K"] = out["final_temperature_K"] - T0
        if mtt is not None:
            td24_class = td24
            if td24 is None:  # TMRad is above 24 h everywhere searched, or below it everywhere
                low = rc.T_D24_RANGE[0]
                td24_class = -math.inf if ac.tmr(low, cp, decomposition) <= rc.T_D24_TIME else math.inf
            cls, ws = rc.criticality_class(T0, mtsr, mtt, td24_class, full_output=True)
            out["criticality_class"] = cls
            warnings += ws
        if model.mixing == "stirred":
            steady, ws = rc.steady_states(m, decomposition, constant_power(model), model.ua,
                                          model.ambient_temperature, model.heating_media, full_output=True)
            warnings += [w for w in ws if w != rc.WARNING_TRANSIENT_SOURCES]
            out["no_return_temperature_K"] = steady.unstable
            out["semenov"] = {"critical_ambient_K": None, "critical_temperature_K": None,
                              "stable_K": steady.stable, "no_return_K": steady.unstable,
                              "sources": "decomposition"}
            if steady.unstable is not None:
                out["mtsr_above_no_return"] = bool(mtsr >= steady.unstable)
                used.append(steady.unstable)
            elif steady.stable is None and (model.ua > 0 or model.heating_media):
                out["mtsr_above_no_return"] = True  # no steady state at all: the decomposition runs away from any T
    if mtt is not None and mtsr >= mtt:
        out["mtt_barrier"] = bool(boiling_credited(model) and model.boiling.boiling_point <= mtt + 1e-9)
    if mtt is not None and out["criticality_class"] in (3, 4) and not out["mtt_barrier"]:
        if model.boiling is not None and model.boiling.venting == "open":
            warnings.append(f"MTSR ({temp(mtsr, unit)}) lies above the MTT, but boiling is not credited as a barrier: "
                            f"a reaction is declared gas-generating, and permanent gas is not tempered by boiling.")
    return warnings


# ------------------------------------------------------------------ storage


def _storage(prepared, facts, out, decomposition, used) -> list[str]:
    model = prepared.model
    unit = prepared.display_temperature_unit
    warnings: list[str] = []
    cp, m, T0 = model.contents_specific_heat, model.contents_mass, model.initial_temperature
    Ta = criteria_ambient(model)[0]  # with a daily cycle: the daily maximum of the effective ambient
    storage_T = max(T0, Ta)
    out["storage_temperature_K"] = storage_T
    out["tmr_at_storage_temperature_s"] = _finite(ac.tmr(storage_T, cp, decomposition))
    used.append(storage_T)
    P = constant_power(model)
    if model.mixing == "stirred":
        sem, ws = rc.semenov_critical_ambient(m, decomposition, P, model.ua, model.heating_media, full_output=True)
        warnings += ws
        steady, ws = rc.steady_states(m, decomposition, P, model.ua, Ta, model.heating_media, full_output=True)
        transient = bool(model.decaying_sources or model.fire_sources or T0 > Ta)  # what could push it past no-return
        warnings += [w for w in ws if w != rc.WARNING_TRANSIENT_SOURCES or transient]
        out.update(critical_ambient_temperature_K=sem.ambient, critical_temperature_K=sem.temperature,
                   critical_ambient_method="semenov", no_return_temperature_K=steady.unstable)
        out["semenov"] = {"critical_ambient_K": sem.ambient, "critical_temperature_K": sem.temperature,
                          "stable_K": steady.stable, "no_return_K": steady.unstable, "sources": "decomposition"}
        used += [sem.temperature, steady.unstable]
    else:
        fk = frank_kamenetskii_block(model, decomposition, warnings)
        out["frank_kamenetskii"] = fk
        out["critical_ambient_method"] = "frank-kamenetskii"
        out["critical_ambient_temperature_K"] = fk["critical_ambient_K"] if fk else None
    crit = out["critical_ambient_temperature_K"]
    if crit is not None:
        out["critical_ambient_margin_K"] = crit - Ta
        used.append(crit)
    closed = prepared.spec.vessel is None or prepared.spec.vessel.venting == "closed"
    gas = [s for s in decomposition if s.gas_generating]
    out["gas_in_closed_package"] = bool(gas) and closed
    if gas and prepared.spec.vessel is None:
        warnings.append("No vessel is described, so the vessel or package is taken as closed (conservative): the gas of the "
                        "decomposition pressurises it.")
    hot = model.mixing == "unstirred" and T0 > Ta
    out["unstirred_hot_start"] = hot
    if hot:
        warnings.append(f"Unstirred contents that start at {temp(T0, unit)}, above the ambient ({temp(Ta, unit)}): the "
                        f"critical ambient is a steady-state criterion and does not cover the hot start, while the "
                        f"centre stays hot for a long time; the limit times come from the transient conduction "
                        f"solution, which covers the hot start within the horizon only.")
    return warnings


def frank_kamenetskii_block(model: ScreeningModel, sources, warnings) -> dict | None:
    """The Frank-Kamenetskii criterion of unstirred contents at the actual surface Biot number."""
    k, r, h, rho = model.thermal_conductivity, model.conduction_radius, model.surface_coefficient, model.density
    if None in (k, r, rho) or model.conduction_geometry is None:
        warnings.append("Unstirred contents: the Frank-Kamenetskii criterion needs contents.thermal_conductivity, "
                        "contents.density and a vessel shape; it was not computed, and the Semenov (well-mixed) "
                        "critical ambient is not valid for unstirred contents.")
        return None
    biot = h * r / k if h is not None else math.inf
    delta_c = rc.frank_kamenetskii_critical(model.conduction_geometry, biot)
    ta_c, fk_warnings = rc.frank_kamenetskii_critical_ambient(model.conduction_geometry, biot, rho, sources, r, k,
                                                              full_output=True)
    warnings.extend(fk_warnings)
    delta = rc.frank_kamenetskii_parameter(model.ambient_temperature, rho, sources, r, k)
    warnings.append(f"Unstirred contents: the critical ambient is the Frank-Kamenetskii criterion (geometry "
                    f"{model.conduction_geometry}, radius {r:.3g} m, surface Biot number "
                    f"{'infinite (no surface coefficient)' if math.isinf(biot) else f'{biot:.3g}'}), a steady-state "
                    f"criterion; the limit times come from the transient conduction solution of the same body. A "
                    f"cylinder is treated as infinitely long and a box as a slab, which is conservative.")
    # JSON has no infinity: an infinite Biot number (surface held at ambient; its warning says so) is null
    return {"geometry": model.conduction_geometry, "radius_m": r,
            "surface_biot_number": None if math.isinf(biot) else biot,
            "delta": float(delta), "delta_critical": float(delta_c), "critical_ambient_K": ta_c}


# ------------------------------------------------------------------ heat-up


def _heat_up(prepared, facts, out, decomposition) -> list[str]:
    model = prepared.model
    if not model.arrhenius_sources or model.mixing != "stirred":
        return []
    X0 = steady_conversions(model)
    steady = rc.steady_states(model.contents_mass, model.arrhenius_sources, constant_power(model), model.ua,
                              model.ambient_temperature, model.heating_media, conversion=X0)
    out["no_return_temperature_K"] = steady.unstable
    out["semenov"] = {"critical_ambient_K": None, "critical_temperature_K": None, "stable_K": steady.stable,
                      "no_return_K": steady.unstable, "sources": "all"}
    return []


def initial_conversions(model: ScreeningModel) -> list[float]:
    return [1.0 - s.accumulated_fraction if s.specific_heat_of_reaction is not None else 0.0
            for s in model.arrhenius_sources]


def steady_conversions(model: ScreeningModel) -> list[float]:
    """The conversions at which the steady states of the whole balance take the rates: the initial conversion
    of an n-th order source, the conversion of maximum rate of an autocatalytic one (conservative)."""
    return [rc.rate_conversion(s) if s.autocatalytic else x0
            for s, x0 in zip(model.arrhenius_sources, initial_conversions(model))]


# ------------------------------------------------------------------ heating medium left on


def _heating_medium(prepared, out, decomposition, used) -> list[str]:
    model = prepared.model
    unit = prepared.display_temperature_unit
    media = [h for h in model.heating_media if h.ua > 0]
    if not media or not decomposition:
        return []
    warnings = []
    tm = max(h.medium_temperature for h in media)
    out["heating_medium_temperature_K"] = tm
    td24 = out["t_d24_K"]
    if td24 is not None:
        out["medium_above_t_d24"] = bool(tm > td24)
        if tm > td24:
            warnings.append(f"The heating medium ({temp(tm, unit)}) is hotter than T_D24 of the decomposition "
                            f"({temp(td24, unit)}): contents that approach the medium temperature reach the "
                            f"decomposition's maximum rate within a day even without any heat loss credit.")
    if model.mixing != "stirred":
        warnings.append("Unstirred contents with a heating medium: no critical medium temperature is given (the "
                        "Semenov criterion needs well-mixed contents, and the medium heats the surface only).")
        return warnings
    crit, ws = rc.semenov_critical_medium_temperature(model.contents_mass, decomposition, constant_power(model),
                                                      model.ua, model.ambient_temperature, media, full_output=True)
    warnings += ws
    out["critical_medium_temperature_K"] = crit.ambient
    used.append(crit.temperature)
    if len(media) > 1:
        warnings.append("Several heating media: the critical medium temperature takes them at one common "
                        "temperature with their conductances added.")
    return warnings


# ------------------------------------------------------------------ summary


def _summary(prepared, facts: HistoryFacts, out: dict, unit: str) -> str:
    model = prepared.model
    scenario = model.scenario
    parts = []
    if scenario == "cooling-failure":
        parts.append(_cooling_failure_summary(model, facts, out, unit))
    elif scenario == "storage":
        parts.append(_storage_summary(model, facts, out, unit))
    elif model.arrhenius_sources:
        parts.append("Heat-up scenario: the verdict rests on the time to each limit; no MTSR, criticality class or "
                     "critical ambient is given.")
        parts += ac.summary_sentences(out, unit)
        parts.append(_history_sentence(facts, unit))
    if out["critical_medium_temperature_K"] is not None:
        tm, tmc = out["heating_medium_temperature_K"], out["critical_medium_temperature_K"]
        where = "at or above" if tm >= tmc else f"{dtemp(tmc - tm, unit)} below"
        parts.append(f"With the heating medium left on, the medium temperature governs, not the air: the medium "
                     f"({temp(tm, unit)}) is {where} the critical medium temperature ({temp(tmc, unit)}, Semenov, "
                     f"with the stated ambient and conductances).")
    return " ".join(p for p in parts if p)


def _history_sentence(facts: HistoryFacts, unit: str) -> str:
    if facts.runs_away:
        return (f"In the computed history (with the heat loss as stated) the contents run away: they reach "
                f"{temp(facts.peak_temperature, unit)} after {duration(facts.peak_time)}.")
    if facts.rising_at_end and facts.steady_temperature is not None \
            and abs(facts.peak_temperature - facts.steady_temperature) < 0.5:
        return (f"In the computed history (with the heat loss as stated) the contents approach their stable steady "
                f"state ({temp(facts.steady_temperature, unit)}) by the end of the horizon.")
    if facts.rising_at_end and facts.end_temperature is not None \
            and facts.peak_temperature - facts.end_temperature > 0.05:
        first = (f"start at {temp(facts.peak_temperature, unit)}" if facts.peak_time <= 0 else
                 f"peak at {temp(facts.peak_temperature, unit)} after {duration(facts.peak_time)}")
        return (f"In the computed history (with the heat loss as stated) the contents {first}, cool, and are rising "
                f"again at the end of the horizon ({temp(facts.end_temperature, unit)}).")
    if facts.rising_at_end:
        return (f"In the computed history (with the heat loss as stated) the contents are still rising at the end of "
                f"the horizon ({temp(facts.peak_temperature, unit)}).")
    if facts.peak_time > 0:
        return (f"In the computed history (with the heat loss as stated) the contents peak at "
                f"{temp(facts.peak_temperature, unit)} after {duration(facts.peak_time)} and then cool.")
    return (f"In the computed history (with the heat loss as stated) the contents do not rise above "
            f"{temp(facts.peak_temperature, unit)}.")


def _cooling_failure_summary(model, facts, out, unit) -> str:
    T0, mtsr = model.initial_temperature, out["mtsr_K"]
    terms = "; ".join(f"{p['source']} {dtemp(p['temperature_rise_K'], unit)}" for p in out["mtsr_parts"])
    text = [f"Cooling failure: MTSR {temp(mtsr, unit)} = process temperature {temp(T0, unit)} + "
            f"{dtemp(mtsr - T0, unit)} of accumulated heat" + (f" ({terms})." if terms else ".")]
    mtt = out["maximum_technical_temperature_K"]
    td24 = out["t_d24_K"]
    if not out["decomposition_sources"]:
        text.append(T_D24_MISSING)
        if out["criticality_classes_possible"]:
            classes = out["criticality_classes_possible"]
            text.append(f"From MTSR and MTT ({temp(mtt, unit)}) alone the criticality class is "
                        f"{' or '.join(str(c) for c in classes) if len(classes) == 2 else '3, 4 or 5'}.")
    else:
        if td24 is not None:
            text.append(f"T_D24 of the decomposition is {temp(td24, unit)}; TMRad at MTSR "
                        f"{duration(out['tmr_at_mtsr_s'])}.")
        else:
            text.append(f"The decomposition has no T_D24 in the range searched; TMRad at MTSR "
                        f"{duration(out['tmr_at_mtsr_s'])}.")
        if out["criticality_class"] is not None:
            text.append(f"Criticality class {out['criticality_class']} (MTT {temp(mtt, unit)}, "
                        f"{out['mtt_basis']}).")
        nr = out["no_return_temperature_K"]
        if out["mtsr_above_no_return"] is True and nr is not None:
            text.append(f"MTSR lies above the decomposition's no-return temperature ({temp(nr, unit)}): once the "
                        f"synthesis heat is released, the heat loss no longer holds the decomposition, and it runs "
                        f"away in about TMRad at MTSR unless something else acts.")
        elif out["mtsr_above_no_return"] is True:
            text.append("The decomposition has no stable steady state at the stated ambient and heat loss: it runs "
                        "away from any temperature, in about TMRad.")
        elif out["mtsr_above_no_return"] is False:
            text.append(f"MTSR lies below the decomposition's no-return temperature ({temp(nr, unit)}): with the "
                        f"heat loss as stated the decomposition alone does not run away from the MTSR.")
    text += ac.summary_sentences(out, unit)
    text.append(_history_sentence(facts, unit))
    if not facts.runs_away and out["synthesis_sources"] and facts.peak_temperature < (mtsr or math.inf):
        text.append("The synthesis is self-limiting here: the contents peak and cool instead of running away, and "
                    "the MTSR (adiabatic, no heat loss) bounds the peak.")
    text.append(PHI_NOTE)
    return " ".join(text)


def _storage_summary(model, facts, out, unit) -> str:
    Ta = criteria_ambient(model)[0]
    name = "Semenov" if out["critical_ambient_method"] == "semenov" else "Frank-Kamenetskii"
    crit = out["critical_ambient_temperature_K"]
    text = []
    if crit is None:
        if model.ua == 0 and not model.heating_media:
            text.append("Storage with no heat loss (UA = 0): no steady state exists at any ambient; the contents "
                        "heat up until the decomposition is spent, or run away.")
        else:
            text.append(f"Storage: the {name} critical ambient could not be computed for this case; see the warnings.")
    else:
        margin = crit - Ta
        if model.heating_media:
            text.append(f"Storage with a heating medium on: the critical ambient ({temp(crit, unit)}, {name}) is the "
                        f"air temperature that is critical with the medium as stated; the medium temperature governs.")
        elif model.daily_cycle is not None:
            mean_margin = crit - model.ambient_temperature
            if margin <= 0:
                text.append(f"Storage: the contents CAN run away: the daily maximum of the effective ambient "
                            f"({temp(Ta, unit)}, air and sun) is at or above the {name} critical ambient "
                            f"({temp(crit, unit)}), which the store may cross every afternoon.")
            else:
                text.append(f"Storage: the daily maximum of the effective ambient ({temp(Ta, unit)}, air and sun) is "
                            f"{dtemp(margin, unit)} below the {name} critical ambient ({temp(crit, unit)}).")
            text.append(f"At the daily mean ({temp(model.ambient_temperature, unit)}) the margin is "
                        f"{dtemp(mean_margin, unit)}; the criterion uses the daily maximum.")
        elif margin <= 0:
            text.append(f"Storage: the contents CAN run away at the stated ambient: the ambient ({temp(Ta, unit)}) is "
                        f"at or above the {name} critical ambient ({temp(crit, unit)}).")
        else:
            text.append(f"Storage: the ambient ({temp(Ta, unit)}) is {dtemp(margin, unit)} below the {name} critical "
                        f"ambient ({temp(crit, unit)}).")
    text.append(f"TMRad at the storage temperature ({temp(out['storage_temperature_K'], unit)}): "
                f"{duration(out['tmr_at_storage_temperature_s'])}; T_D24 {temp(out['t_d24_K'], unit)}.")
    if out["decomposition_temperature_rise_K"] is not None:
        text.append(f"Decomposition temperature rise {dtemp(out['decomposition_temperature_rise_K'], unit)}.")
    if out["gas_generating_sources"]:
        text.append("Gas generation: " + ", ".join(out["gas_generating_sources"])
                    + (" in a closed vessel or package." if out["gas_in_closed_package"] else "."))
    if out["unstirred_hot_start"]:
        text.append("The unstirred contents start above the ambient: the steady criterion does not cover the hot "
                    "start; the transient conduction solution does, within the horizon.")
    text += ac.summary_sentences(out, unit)
    if model.mixing == "stirred":
        text.append(_history_sentence(facts, unit))
    return " ".join(text)


def heat_balance_curves(model: ScreeningModel, sources, conversion, steady_states, critical_ambient) -> dict:
    """Heat generation and loss against contents temperature, for the heat-balance diagram."""
    Ta = model.ambient_temperature
    T0 = model_start_temperature(model)
    hi_candidates = [T0 + 60, Ta + 80] + [lim.temperature + 20 for lim in model.limits]
    states = [s for s in steady_states if s is not None]
    hi_candidates += [s + 20 for s in states]
    lo = min(Ta, model.initial_temperature) - 10
    hi = min(max(hi_candidates), lo + 400)
    T = np.linspace(lo, hi, 161)
    gen = np.asarray(rc.heat_generation(T, model.contents_mass, sources, constant_power(model), conversion=conversion),
                     dtype=float)
    loss = np.asarray(rc.heat_loss(T, model.ua, Ta, model.heating_media), dtype=float)
    return {"temperature_K": T.tolist(), "generation_W": gen.tolist(), "loss_W": loss.tolist(),
            "steady_states_K": states, "critical_ambient_K": critical_ambient, "ambient_K": Ta}
