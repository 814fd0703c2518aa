"""Screen one prepared case: the full result dict (without a verdict).

Closed-form cases go to :mod:`screening.run.closed_form_case`, cases with
temperature-dependent sources to :mod:`screening.run.runaway_case`; uncertain inputs
to :mod:`screening.run.monte_carlo`.
"""
from __future__ import annotations

from screening import __version__
from screening.case.prepare import PreparedCase
from screening.core.fire_exposure import FIRE_CAUTIONS
from screening.case.display import temp
from screening.core.terms import model_start_temperature
from screening.run.closed_form_case import ClosedFormValues, screen_closed_form
from screening.run.closed_form_group import write_case_keys
from screening.run.daily_cycle import add_cycle_keys, choose_start, with_start
from screening.run.memo_inputs import case_fields, derived_inputs
from screening.run.monte_carlo import analyse
from screening.run.runaway_case import screen_with_arrhenius
from screening.run.sadt_case import sadt_results
from screening.run.scenario_criteria import HistoryFacts, empty_criteria, scenario_criteria
from screening.run.warnings import biot_and_validity, case_assumptions


def screen_prepared(prepared: PreparedCase, input_hash: str | None = None,
                    values: ClosedFormValues | None = None, with_history: bool = True,
                    sadt_searches: dict | None = None, arrhenius_values=None, conduction=None) -> dict:
    """Full result dict for one prepared case (without a verdict).

    ``values`` (closed-form cases only) are engine results computed elsewhere,
    e.g. by the vectorised engine for a register; ``sadt_searches`` likewise the SADT
    searches of a register chunk's storage rows (:func:`screening.run.sadt_case.sadt_searches`),
    ``arrhenius_values`` the vectorised engine's runs of a case with Arrhenius sources
    (:func:`screening.run.runaway_case.arrhenius_values`; with a daily cycle only runs that carry the start
    time of day they were made with, ``start_info``), and ``conduction`` (unstirred cases) the
    case's :class:`screening.run.conduction_case.ConductionSolution` from a register chunk's batch.
    """
    if prepared.model.daily_cycle is not None:
        values = conduction = None  # engine values from elsewhere do not know the start time of day chosen here
        if arrhenius_values is not None and arrhenius_values.start_info is None:
            arrhenius_values = None
    if arrhenius_values is not None and arrhenius_values.start_info is not None:  # runs made from a chosen start
        start_info = arrhenius_values.start_info
        prepared = with_start(prepared, start_info["start_time_of_day_s"])
    else:
        prepared, start_info = choose_start(prepared)  # a daily cycle without a stated start: the worst hourly start
    model = prepared.model
    if model.arrhenius_sources:
        core = screen_with_arrhenius(prepared, arrhenius_values, with_history=with_history)
    else:
        core = screen_closed_form(prepared, values, with_history=with_history)
        core.update(_closed_form_criteria(prepared, core))
    if model.mixing == "unstirred":  # the limit times become the hot spot's (transient conduction)
        from screening.run.conduction_case import apply_conduction

        apply_conduction(prepared, core, conduction)
    spec = prepared.spec
    result = {
        "id": spec.id,
        "title": spec.title,
        **{k: v for k, v in core.items() if not k.startswith("_")},
    }
    result["warnings"] = list(prepared.warnings) + core["warnings"]
    if model.scenario == "storage":  # SADT, control and emergency temperatures of a package
        result.update(sadt_results(prepared, result, sadt_searches))
    write_case_keys(result, model.initial_temperature, model.ambient_temperature, model.horizon,
                    model.heat_capacity, model.ua, core["limits"])
    result["start_release"] = _start_release(prepared)
    if result.get("maximum_technical_temperature_K") is None:
        result["maximum_technical_temperature_K"] = model.maximum_technical_temperature
    biot_and_validity(prepared, result)
    result["assumptions"].extend(case_assumptions(prepared))
    add_cycle_keys(prepared, result, start_info)
    if model.fire_sources:
        result["fire"] = [{"power_W": f.power, "wetted_area_m2": f.wetted_area, "environment_factor": f.environment_factor,
                           "drainage_and_firefighting": f.drainage_and_firefighting} for f in model.fire_sources]
        result["warnings"].extend(c for c in FIRE_CAUTIONS if c not in result["warnings"])
    result["geometry"] = prepared.geometry or None
    result["inputs"] = prepared.inputs
    result["units"] = {"temperature": prepared.display_temperature_unit}
    meta = spec.meta
    result["meta"] = {"prepared_by": meta.prepared_by if meta else None, "prepared_for": meta.prepared_for if meta else None,
                      "revision": meta.revision if meta else None, "notes": meta.notes if meta else None}
    result["tool_version"] = __version__
    result["input_hash"] = input_hash
    if core.get("_history") is not None:
        result["_history"] = core["_history"]
    if with_history:  # what a memo or the web page shows; not in the JSON (a register without memos skips it)
        result["_case_fields"] = case_fields(spec)
        result["_derived_inputs"] = derived_inputs(prepared, result)
    if prepared.uncertainty_plan is not None:
        unc = analyse(prepared, prepared.uncertainty_plan)
        result["_uncertainty_cdf"] = unc.pop("_cdf", None)
        result["uncertainty"] = unc
    else:
        result["uncertainty"] = None
    if "_recovery_history" in core:
        result["_recovery_history"] = core["_recovery_history"]
    if "_conduction_history" in core:
        result["_conduction_history"] = core["_conduction_history"]
    if "_heat_balance" in core:
        result["_heat_balance"] = core["_heat_balance"]
    return result


def _start_release(prepared: PreparedCase) -> dict | None:
    """Where the history starts when a synthesis without kinetics is released at t = 0 (said next to the history)."""
    model = prepared.model
    if not model.released_at_start:
        return None
    start = model_start_temperature(model)
    unit = prepared.display_temperature_unit
    names = ", ".join(r.label for r in model.released_at_start if r.label)
    return {"temperature_K": start,
            "note": (f"The history starts at {temp(start, unit)}, not at the process temperature "
                     f"({temp(model.initial_temperature, unit)}): the synthesis given without kinetics ({names}) is "
                     f"released at once at t = 0 (conservative: the times to the limits, the peak and the "
                     f"alarm time assume the heat is there from the start; the real release is slower).")}


def _closed_form_criteria(prepared: PreparedCase, core: dict) -> dict:
    """The scenario keys of a closed-form case: empty for a heat-up; MTSR and what follows for a cooling failure
    (a synthesis given as a decaying source, or a stated cooling failure)."""
    if prepared.model.scenario != "cooling-failure":
        return empty_criteria(prepared.model.scenario)
    start = model_start_temperature(prepared.model)
    rising = core["peak_time_s"] >= prepared.model.horizon * (1 - 1e-12) and core["peak_temperature_K"] > start
    facts = HistoryFacts(core["peak_temperature_K"], core["peak_time_s"], False, rising, start,
                         core.get("steady_temperature_K"))
    criteria, warnings, _ = scenario_criteria(prepared, facts)
    core["warnings"].extend(w for w in warnings if w not in core["warnings"])
    return criteria

