"""What a reviewer needs to redo the calculation: every field of the case as written, and the
numbers the tool derived from them and used.

Both lists are plain rows for the memo and the web page (``result["_case_fields"]`` and
``result["_derived_inputs"]``, stripped from the JSON like the plotting arrays):

- :func:`case_fields` walks the validated case in the schema's own field order, so a field
  added to the schema appears without changes here or in the memo;
- :func:`derived_inputs` lists heat capacities, UA and the area it came from, fire wetted
  area and heat input, volumes, liquid height, Biot number with its length, the specific
  heat of the runaway criteria and the ambient they use, each with its SI value at full
  precision (the memo prints at least 6 significant figures).
"""
from __future__ import annotations

import math

from pydantic import BaseModel

from screening.case.prepare import PreparedCase
from screening.case.schema import Quantity
from screening.core.terms import model_terms

#: Fields shown elsewhere in the memo (the title block and the scope section).
ELSEWHERE = ("id", "title", "meta")


def _row(field: str, text: str, value_si=None, unit_si: str = "", source: str | None = None,
         written: bool = True) -> dict:
    return {"field": field, "text": text, "value_si": value_si, "unit_si": unit_si, "source": source,
            "written": written}


def _scalar_text(value) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    return str(value)


def _walk(obj, prefix: str, out: list[dict], written: bool = True) -> None:
    if obj is None:
        return
    if isinstance(obj, Quantity):
        out.append(_row(prefix, obj.text, obj.si, obj.si_unit, obj.source, written))
    elif isinstance(obj, BaseModel):
        names = list(type(obj).model_fields)
        if "kind" in names:  # a heat source: its kind first
            names.remove("kind")
            names.insert(0, "kind")
        given = obj.model_fields_set
        for name in names:
            if not prefix and name in ELSEWHERE:
                continue
            value = getattr(obj, name)
            path = f"{prefix}.{name}" if prefix else name
            if value is None:
                effective = getattr(obj, f"effective_{name}", None)  # e.g. a reaction's role by default
                if effective is not None and not isinstance(effective, BaseModel):
                    out.append(_row(path, _scalar_text(effective), written=False))
                continue
            _walk(value, path, out, written and name in given)
    elif isinstance(obj, dict):
        if "value" in obj and set(obj) <= {"value", "source"}:  # {value, source} left as written (tested_range)
            out.append(_row(prefix, _scalar_text(obj["value"]), source=obj.get("source"), written=written))
            return
        for key, value in obj.items():
            _walk(value, f"{prefix}.{key}", out, written)
    elif isinstance(obj, (list, tuple)):
        for i, item in enumerate(obj):
            _walk(item, f"{prefix}.{i}", out, written)
    else:
        out.append(_row(prefix, _scalar_text(obj), written=written))


def case_fields(spec) -> list[dict]:
    """Every field of a validated case, in schema order: path, text as written, SI value and unit
    (quantities only), source, and ``written`` (False for a default the case did not state)."""
    out: list[dict] = []
    _walk(spec, "", out)
    return out


def _d(key: str, value, unit: str, basis: str | None = None, **fields) -> dict:
    """A derived input: ``key`` names its label in the memo templates (``[derived]``), ``basis`` (default: the
    key) names how it was obtained (``[derived_basis]``), ``fields`` fill that text's placeholders."""
    return {"key": key, "value_si": float(value) if value is not None else None, "unit_si": unit,
            "basis": basis or key, "fields": fields}


def derived_inputs(prepared: PreparedCase, result: dict) -> list[dict]:
    """The numbers the tool computed from the inputs and used, with how each was obtained (see :func:`_d`)."""
    model = prepared.model
    spec = prepared.spec
    geo = prepared.geometry or {}
    out = []
    m, cp = model.contents_mass, model.contents_specific_heat
    c = spec.contents
    if c.mass is None:
        out.append(_d("contents_mass", m, "kg", "mass_from_fill" if c.fill is not None else "mass_from_volume"))
    out.append(_d("contents_heat_capacity", m * cp, "J/K"))
    out.append(_d("wall_heat_capacity", model.wall_heat_capacity, "J/K",
                  None if model.wall_heat_capacity else "no_wall"))
    out.append(_d("heat_capacity", model.heat_capacity, "J/K"))
    hl = spec.heat_loss
    if "heat_loss_area_m2" in geo:
        out.append(_d("heat_loss_area", geo["heat_loss_area_m2"], "m^2", "area_" + (
            hl.area if isinstance(hl.area, str) else "given")))
    if model.fire_sources:
        out.append(_d("ua", model.ua, "W/K", "ua_fire"))
    elif hl.ua is not None:
        out.append(_d("ua", model.ua, "W/K", "ua_given"))
    else:
        out.append(_d("ua", model.ua, "W/K", "ua_from_area", area=hl.area if isinstance(hl.area, str) else "given"))
    if model.heating_media:
        out.append(_d("conductance", model_terms(model).conductance, "W/K"))
    for i, f in enumerate(model.fire_sources):
        n = _source_index(spec, "fire", i)
        name = f"heat_sources.{n}"
        out.append(_d("fire_wetted_area", f.wetted_area, "m^2", "fire_wetted_area" if _fire_area_computed(spec, n)
                      else "fire_wetted_area_given", source=name))
        out.append(_d("fire_environment_factor", f.environment_factor, "1", source=name))
        out.append(_d("fire_heat_input", f.power, "W", "fire_drained" if f.drainage_and_firefighting
                      else "fire_undrained", source=name))
    for key, gkey, unit in (("vessel_volume", "vessel_volume_m3", "m^3"), ("total_area", "total_area_m2", "m^2"),
                            ("liquid_volume", "liquid_volume_m3", "m^3"), ("fill_fraction", "fill_fraction", "1"),
                            ("liquid_height", "liquid_height_m", "m"), ("wetted_area", "wetted_area_m2", "m^2")):
        if geo.get(gkey) is not None:
            out.append(_d(key, geo[gkey], unit))
    out += _cycle_inputs(spec, geo, result)
    for i, d in enumerate(model.decaying_sources):
        n = _source_index(spec, "decaying", i)
        half = n is not None and spec.heat_sources[n].half_life is not None
        out.append(_d("decaying_time_constant", d.time_constant, "s", "from_half_life" if half else "as_given",
                      source=f"heat_sources.{n}"))
    for s in model.arrhenius_sources:
        out.append(_d("zero_conversion_power", s.specific_power, "W/kg", source=s.label))
    if model.mixing != "stirred" or result.get("biot_number") is not None:
        if model.characteristic_length is not None:
            out.append(_d("biot_length", model.characteristic_length, "m"))
        if model.surface_coefficient is not None:
            out.append(_d("surface_coefficient", model.surface_coefficient, "W/(m^2*K)"))
        if result.get("biot_number") is not None:
            out.append(_d("biot", result["biot_number"], "1"))
    if model.arrhenius_sources or result.get("mtsr_K") is not None:
        out.append(_d("criteria_specific_heat", cp, "J/(kg*K)"))
        if result.get("daily_cycle") is not None and result.get("criteria_ambient_K") is not None:
            out.append(_d("criteria_ambient", result["criteria_ambient_K"], "K", "criteria_ambient_cycle"))
        else:
            out.append(_d("criteria_ambient", model.ambient_temperature, "K"))
        if result.get("storage_temperature_K") is not None:
            out.append(_d("storage_temperature", result["storage_temperature_K"], "K"))
    return [x for x in out if x["value_si"] is None or math.isfinite(x["value_si"])]


def _cycle_inputs(spec, geo: dict, result: dict) -> list[dict]:
    """The daily cycle's derived inputs: the exposed area and its share of UA, the outer coefficient, the sol-air
    rise, the effective ambient's daily maximum and the start time of day (none without a cycle)."""
    cycle = result.get("daily_cycle")
    if not isinstance(cycle, dict):
        return []
    out = []
    sun = cycle.get("sun")
    if isinstance(sun, dict):
        out.append(_d("exposed_area", sun.get("exposed_area_m2"), "m^2",
                      "exposed_projected" if sun.get("exposed_area_basis") == "projected" else "exposed_given"))
        out.append(_d("exposed_share", sun.get("exposed_share"), "1"))
        given = spec.sun is not None and spec.sun.outer_coefficient is not None
        out.append(_d("outer_coefficient", sun.get("outer_coefficient_W_per_m2K"), "W/(m^2*K)",
                      "outer_given" if given else "outer_default"))
        out.append(_d("sol_air_rise", sun.get("sol_air_rise_K"), "K"))
    out.append(_d("effective_ambient_max", cycle.get("effective_ambient_max_K"), "K"))
    out.append(_d("start_time_of_day", cycle.get("start_time_of_day_s"), "s",
                  "start_given" if spec.start_time_of_day is not None else "start_worst"))
    return out


def _source_index(spec, kind: str, i: int) -> int | None:
    """Position in heat_sources of the i-th source of a kind."""
    found = [n for n, s in enumerate(spec.heat_sources) if getattr(s, "kind", None) == kind]
    return found[i] if i < len(found) else None


def _fire_area_computed(spec, n) -> bool:
    return n is None or spec.heat_sources[n].wetted_area is None
