"""Screen one prepared case: the full result dict (without a verdict).

Closed-form cases go to :mod:`screening.run.closed_form_case`, cases with
temperature-dependent sources to :mod:`screening.run.runaway_case`; uncertain inputs
to :mod:`screening.run.monte_carlo`.
"""
from __future__ import annotations

from screening import __version__
from screening.case.prepare import PreparedCase
from screening.core.fire_exposure import FIRE_CAUTIONS
from screening.run.closed_form_case import ClosedFormValues, screen_closed_form
from screening.run.monte_carlo import analyse
from screening.run.runaway_case import screen_with_arrhenius
from screening.run.warnings import biot_and_validity


def screen_prepared(prepared: PreparedCase, input_hash: str | None = None,
                    values: ClosedFormValues | None = None, with_history: bool = True) -> dict:
    """Full result dict for one prepared case (without a verdict).

    ``values`` (closed-form cases only) are engine results computed elsewhere,
    e.g. by the vectorised engine for a register.
    """
    model = prepared.model
    if model.arrhenius_sources:
        core = screen_with_arrhenius(prepared)
    else:
        core = screen_closed_form(prepared, values, with_history=with_history)
    spec = prepared.spec
    result = {
        "id": spec.id,
        "title": spec.title,
        **{k: v for k, v in core.items() if not k.startswith("_")},
    }
    result["warnings"] = list(prepared.warnings) + core["warnings"]
    result.update(
        initial_temperature_K=model.initial_temperature,
        ambient_temperature_K=model.ambient_temperature,
        horizon_s=model.horizon,
        heat_capacity_J_per_K=model.heat_capacity,
        ua_W_per_K=model.ua,
        limit_exceeded_at_start=any(r["time_s"] == 0.0 for r in core["limits"]),
    )
    for key in ("tmr_adiabatic_s", "tmr_at_mtsr_s", "t_d24_K", "critical_ambient_temperature_K",
                "critical_ambient_method", "critical_temperature_K", "no_return_temperature_K",
                "adiabatic_temperature_rise_K", "mtsr_K", "criticality_class"):
        result.setdefault(key, None)
    result["maximum_technical_temperature_K"] = model.maximum_technical_temperature
    biot_and_validity(prepared, result)
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
    if prepared.uncertainty_plan is not None:
        unc = analyse(prepared, prepared.uncertainty_plan)
        result["_uncertainty_cdf"] = unc.pop("_cdf", None)
        result["uncertainty"] = unc
    else:
        result["uncertainty"] = None
    if "_recovery_history" in core:
        result["_recovery_history"] = core["_recovery_history"]
    if "_heat_balance" in core:
        result["_heat_balance"] = core["_heat_balance"]
    return result
