"""From a validated case (text with units) to the SI model the physics core uses."""
from __future__ import annotations

import math
from collections import Counter
from dataclasses import dataclass, field, replace

import numpy as np
from pydantic import BaseModel

from screening.case.geometry_columns import (
    HIGH_COEFFICIENT,
    heat_loss_columns,
    high_coefficient_warning,
    is_over_full,
    over_full_warning,
    vessel_columns,
)
from screening.case.paths import source_positions
from screening.case.schema import (
    DEFAULT_HORIZON_TEXT,
    ArrheniusSpec,
    AutocatalyticSpec,
    CaseError,
    CaseSpec,
    ConstantSpec,
    DecayingSpec,
    FieldProblem,
    FireSpec,
    HeatingMediumSpec,
    Quantity,
    _area_value,
    _exposed_area_value,
    effective_scenario,
)
from screening.case.uncertainty_plan import plan_uncertainty
from screening.case.units import parse_quantity, temperature_unit_of
from screening.core import model as m
from screening.core.daily_cycle import (
    DEFAULT_OUTER_COEFFICIENT,
    DEFAULT_WARMEST_TIME,
    DailyCycle,
    largest_projection,
)
from screening.core.fire_exposure import api521_fire_heat_input, fire_wetted_area
from screening.core.vessel_geometry import (
    VesselShape,
    conduction_shape,
    liquid_height,
    maximum_height,
    wetted_area_below,
)
from screening.core.vessel_geometry_arrays import DEFAULT_CROWN_FRACTION, DEFAULT_KNUCKLE_FRACTION, VesselArrays


@dataclass
class PreparedCase:
    """The SI model plus what the shell needs to report it."""

    model: m.ScreeningModel
    spec: CaseSpec
    inputs: list[dict]
    display_temperature_unit: str
    warnings: list[str] = field(default_factory=list)
    assumptions: list[str] = field(default_factory=list)  # stated defaults, added to the result's assumptions
    geometry: dict = field(default_factory=dict)
    response_time: float | None = None
    detection_alarm: float | None = None  # K
    detection_delay: float | None = None  # s
    recovery: tuple[float, float] | None = None  # (medium temperature K, ua W/K)
    fill_fraction: float | None = None
    surface_coefficient: float | None = None
    uncertainty_plan: object = None
    source_positions: tuple = ()  # each heat source's position among sources of its kind (case.paths)


_FIELD_NAMES: dict = {}


def collect_inputs(obj, prefix: str = "", out: list | None = None) -> list[dict]:
    """Every quantity in a case, with its path, text as written, SI value and source."""
    if out is None:
        out = []
    if isinstance(obj, Quantity):
        out.append({"field": prefix, "text": obj.text, "value_si": obj.si, "unit_si": obj.si_unit,
                    "source": obj.source})
    elif isinstance(obj, BaseModel):
        cls = type(obj)
        names = _FIELD_NAMES.get(cls)
        if names is None:
            names = _FIELD_NAMES[cls] = tuple(cls.model_fields)
        d = obj.__dict__
        for name in names:
            value = d.get(name)
            if value is None or isinstance(value, (str, bool, int, float)):
                continue
            collect_inputs(value, f"{prefix}.{name}" if prefix else name, out)
    elif isinstance(obj, (list, tuple)):
        for i, item in enumerate(obj):
            collect_inputs(item, f"{prefix}.{i}", out)
    return out


def _display_unit(spec: CaseSpec) -> str:
    texts = [spec.contents.initial_temperature.text, spec.heat_loss.ambient_temperature.text]
    texts += [lim.temperature.text for lim in spec.limits]
    return display_unit_from_texts(texts)


def display_unit_from_texts(texts) -> str:
    """The temperature unit most used among the initial, ambient and limit temperatures."""
    units = [u for u in (temperature_unit_of(t) for t in texts) if u]
    return Counter(units).most_common(1)[0][0] if units else "K"


def _shape(spec: CaseSpec) -> VesselShape | None:
    v = spec.vessel
    if v is None or v.shape is None:  # a vessel block may give only its wall and venting
        return None
    val = lambda q: q.si if q is not None else None  # noqa: E731
    return VesselShape(v.shape, val(v.diameter), val(v.length), val(v.width), val(v.height), v.heads,
                       val(v.crown_radius), val(v.knuckle_radius))


#: Said wherever heat_loss.ua_per_mass is used (the figures from memory: the heat-accumulation storage test).
UA_PER_MASS_CAUTION = ("heat_loss.ua_per_mass: a heat loss of 80-100 mW/(kg K) stands for a package of about 50 kg "
                       "(the heat-accumulation storage test, from memory); applied to a larger package (drums, IBCs, "
                       "tanks), which loses less heat per kg, it is not conservative.")

_DIMENSIONS = ("diameter", "length", "width", "height", "crown_radius", "knuckle_radius")


def _geometry_problem(spec: CaseSpec) -> CaseError:
    """Dimensions so small or large that the vessel's volume, area or heights cannot be computed (or give a
    zero or infinite volume or area): the case's problem, named by field."""
    v = spec.vessel
    if v.heads == "torispherical" and v.shape in ("vertical-cylinder", "horizontal-cylinder"):
        D = v.diameter.si
        crown = v.crown_radius.si if v.crown_radius is not None else DEFAULT_CROWN_FRACTION * D
        knuckle = v.knuckle_radius.si if v.knuckle_radius is not None else DEFAULT_KNUCKLE_FRACTION * D
        if not (crown >= D / 2 and 0 < knuckle <= D / 2):
            name = "knuckle_radius" if not 0 < knuckle <= D / 2 else "crown_radius"
            stated = lambda q, default: q.text if q is not None else f"{default} x the diameter (default)"  # noqa: E731
            return CaseError([FieldProblem(f"vessel.{name}", (
                f"a torispherical head needs a crown radius of at least half the diameter and a knuckle radius of "
                f"at most half the diameter, so that the knuckle meets the shell and the crown tangentially "
                f"(diameter {v.diameter.text}, crown_radius {stated(v.crown_radius, DEFAULT_CROWN_FRACTION)}, "
                f"knuckle_radius {stated(v.knuckle_radius, DEFAULT_KNUCKLE_FRACTION)})"))])
    given = [f"vessel.{k} = {getattr(v, k).text}" for k in _DIMENSIONS
             if getattr(v, k, None) is not None and getattr(getattr(v, k), "text", None) is not None]
    return CaseError([FieldProblem("vessel", "the vessel's volume, area or height cannot be computed from its "
                                             f"dimensions ({'; '.join(given) or 'as given'}): they are too small "
                                             f"or too large for floating-point arithmetic; check their units")])


def prepare_case(spec: CaseSpec, inputs: list[dict] | None = None) -> PreparedCase:
    """Turn a validated case into SI; raises CaseError for problems only visible here.

    ``inputs`` may pass the case's inputs list when the caller already has it
    (a register row derived from a validated representative row).
    """
    warnings: list[str] = []
    problems: list[FieldProblem] = []
    shape = _shape(spec)
    geometry: dict = {}
    c = spec.contents
    vessel_volume = None
    fill_fraction = None
    if shape is None:
        if c.mass is not None:
            mass = c.mass.si
            liquid_volume = mass / c.density.si if c.density is not None else None
        else:
            liquid_volume = c.volume.si
            mass = liquid_volume * c.density.si
    else:  # the array functions with a group of one, as a register group of tanks takes them
        one = lambda q: None if q is None else np.array([q.si])  # noqa: E731
        cols = vessel_columns(VesselArrays.of([shape]), mass=one(c.mass), volume=one(c.volume), fill=one(c.fill),
                              density=one(c.density))
        if not cols.computable[0]:
            raise _geometry_problem(spec)
        vessel_volume = float(cols.vessel_volume[0])
        geometry.update(vessel_volume_m3=vessel_volume, total_area_m2=float(cols.total_area[0]),
                        height_m=float(cols.height[0]))
        mass = float(cols.mass[0])
        liquid_volume = None if cols.liquid_volume is None else float(cols.liquid_volume[0])
        if liquid_volume is not None:
            fill_fraction = float(cols.fill_fraction[0])
            if is_over_full(fill_fraction):
                warnings.append(over_full_warning(liquid_volume, fill_fraction, vessel_volume))
            if not cols.liquid_computable[0]:
                raise _geometry_problem(spec)
            geometry.update(liquid_volume_m3=liquid_volume, fill_fraction=fill_fraction,
                            liquid_height_m=float(cols.liquid_height[0]), wetted_area_m2=float(cols.wetted_area[0]))
    # heat loss
    hl = spec.heat_loss
    surface_coefficient = None
    area_used = None
    if hl.ua is not None:
        ua = hl.ua.si
    elif hl.ua_per_mass is not None:
        ua = hl.ua_per_mass.si * mass  # per kg of contents
        warnings.append(UA_PER_MASS_CAUTION)
    else:
        area = _area_value(hl.area)
        if area == "wetted":
            if "wetted_area_m2" not in geometry:
                problems.append(FieldProblem("heat_loss.area", "'wetted' needs the liquid volume: give contents.density "
                                             "with contents.mass, or fill / volume"))
                area_used = float("nan")
            else:
                area_used = geometry["wetted_area_m2"]
        elif area == "total":
            area_used = geometry["total_area_m2"]
        else:
            area_used = area.si
        geometry["heat_loss_area_m2"] = area_used
    ua_given = hl.ua is not None or hl.ua_per_mass is not None  # a UA (or one per kg), not a coefficient on an area
    if shape is not None:
        wet, tot = geometry.get("wetted_area_m2"), geometry.get("total_area_m2")
        ua_col, sc_col = heat_loss_columns(
            ua=np.array([ua]) if ua_given else None,
            coefficient=None if ua_given else np.array([hl.coefficient.si]),
            area_used=None if area_used is None else np.array([area_used]),
            wetted_area=None if wet is None else np.array([wet]), total_area=None if tot is None else np.array([tot]))
        ua = float(ua_col[0])
        surface_coefficient = None if sc_col is None or math.isnan(sc_col[0]) else float(sc_col[0])
    elif not ua_given:
        ua = hl.coefficient.si * area_used
        surface_coefficient = hl.coefficient.si
    if surface_coefficient is not None and surface_coefficient > HIGH_COEFFICIENT:
        warnings.append(high_coefficient_warning(surface_coefficient))
    # wall
    wall = 0.0
    if spec.vessel is not None and spec.vessel.wall_mass is not None:
        wall = spec.vessel.wall_mass.si * spec.vessel.wall_specific_heat.si
    # sources
    constants, decaying, media, arrh, fires, released = [], [], [], [], [], []
    assumptions: list[str] = []
    for i, s in enumerate(spec.heat_sources):
        if isinstance(s, ConstantSpec):
            constants.append(m.ConstantSource(s.power.si))
        elif isinstance(s, DecayingSpec):
            a = s.time_constant.si if s.time_constant is not None else s.half_life.si / math.log(2.0)
            decaying.append(m.DecayingSource(s.power.si, a, s.role))
        elif isinstance(s, HeatingMediumSpec):
            media.append(m.HeatingMedium(s.medium_temperature.si, s.ua.si))
        elif isinstance(s, AutocatalyticSpec):
            arrh.append(_autocatalytic_source(s, i, assumptions))
        elif isinstance(s, ArrheniusSpec):
            source = _arrhenius_source(s, i, assumptions)
            (arrh if isinstance(source, m.ArrheniusSource) else released).append(source)
        elif isinstance(s, FireSpec):
            fires.append(_fire_source(s, i, shape, liquid_volume, problems, warnings))
    problems.extend(unstirred_problems(spec))
    if problems:
        raise CaseError(problems)
    if fires and ua > 0:
        warnings.append("A fire source is present: heat loss to ambient is not credited (UA set to 0), since the "
                        "fire correlation is a net heat input to the exposed surface.")
        ua = 0.0
    daily_cycle = _daily_cycle(spec, shape, ua, geometry, assumptions, warnings)
    horizon = spec.horizon.si if spec.horizon is not None else parse_quantity(DEFAULT_HORIZON_TEXT, "time").value
    boiling = None
    if c.boiling_point is not None:
        venting = spec.vessel.venting if spec.vessel is not None else "closed"
        boiling = m.BoilingData(c.boiling_point.si, c.latent_heat.si, venting)
        if c.boiling_point.si < c.initial_temperature.si:
            if venting == "open":
                raise CaseError([FieldProblem("contents.boiling_point", (
                    f"{c.boiling_point.text} is below the initial temperature ({c.initial_temperature.text}): the "
                    f"contents of an open vessel cannot start above their boiling point; check both values and "
                    f"their units"))])
            warnings.append(f"The boiling point ({c.boiling_point.text}) is below the initial temperature "
                            f"({c.initial_temperature.text}): the contents start superheated, which a closed vessel "
                            f"holds only under pressure. The tool does not model pressure and takes no credit for "
                            f"boiling in a closed vessel; check both values and their units.")
    cond = conduction_shape(shape) if c.mixing == "unstirred" else None
    char_length = None
    if liquid_volume is not None and geometry.get("wetted_area_m2"):
        char_length = liquid_volume / geometry["wetted_area_m2"]
    model = m.ScreeningModel(
        contents_mass=mass, contents_specific_heat=c.specific_heat.si, wall_heat_capacity=wall, ua=ua,
        ambient_temperature=hl.ambient_temperature.si, initial_temperature=c.initial_temperature.si,
        horizon=horizon, constant_sources=tuple(constants), decaying_sources=tuple(decaying),
        heating_media=tuple(media), arrhenius_sources=tuple(arrh), fire_sources=tuple(fires),
        limits=tuple(m.Limit(lim.name, lim.temperature.si) for lim in spec.limits), boiling=boiling,
        maximum_technical_temperature=(spec.maximum_technical_temperature.si
                                       if spec.maximum_technical_temperature is not None else None),
        mixing=c.mixing, thermal_conductivity=c.thermal_conductivity.si if c.thermal_conductivity else None,
        characteristic_length=char_length, conduction_geometry=cond[0] if cond else None,
        conduction_radius=cond[1] if cond else None, density=c.density.si if c.density else None,
        surface_coefficient=surface_coefficient, released_at_start=tuple(released),
        scenario=effective_scenario(spec), daily_cycle=daily_cycle)
    prepared = PreparedCase(model, spec, inputs if inputs is not None else collect_inputs(spec), _display_unit(spec),
                            warnings, assumptions, geometry,
                            fill_fraction=fill_fraction, surface_coefficient=surface_coefficient,
                            source_positions=source_positions(spec))
    if spec.response_time is not None:
        prepared.response_time = spec.response_time.si
    if spec.detection is not None:
        if spec.detection.alarm_temperature is not None:
            prepared.detection_alarm = spec.detection.alarm_temperature.si
        else:
            prepared.detection_delay = spec.detection.delay.si
    if spec.recovery is not None:
        prepared.recovery = (spec.recovery.medium_temperature.si, spec.recovery.ua.si)
        hotter = [lim for lim in spec.limits if spec.recovery.medium_temperature.si > lim.temperature.si]
        if hotter:
            names = ", ".join(f"'{lim.name}' ({lim.temperature.text})" for lim in hotter)
            prepared.warnings.append(
                f"Recovery: the recovery medium ({spec.recovery.medium_temperature.text}) is hotter than the limit"
                f"{'s' if len(hotter) > 1 else ''} {names}: restored cooling drives the contents towards the "
                f"medium's temperature, so it cannot hold them below {'those limits' if len(hotter) > 1 else 'it'}; "
                f"the recovery result shows where the contents go, not a safe state.")
    if spec.uncertainty is not None:
        prepared.uncertainty_plan = plan_uncertainty(spec)
    return prepared


def unstirred_problems(spec: CaseSpec) -> list[FieldProblem]:
    """What unstirred contents lack for the transient conduction solution (their limit times come from it)."""
    c = spec.contents
    if c.mixing != "unstirred":
        return []
    why = ("unstirred contents (contents.mixing: unstirred) are screened by transient conduction through the mass, "
           "which needs")
    out = []
    if c.thermal_conductivity is None:
        out.append(FieldProblem("contents.thermal_conductivity", f"{why} the contents' thermal conductivity: add "
                                f"contents.thermal_conductivity (e.g. 0.12 W/(m*K)), or set contents.mixing: stirred "
                                f"if the contents are well mixed"))
    if c.density is None:
        out.append(FieldProblem("contents.density", f"{why} the contents' density: add contents.density "
                                f"(e.g. 650 kg/m^3)"))
    for i, s in enumerate(spec.heat_sources):
        if getattr(s, "kind", None) == "autocatalytic":
            out.append(FieldProblem(f"heat_sources.{i}.kind", "the transient conduction solution of unstirred "
                                    "contents does not yet take an autocatalytic source (its rate would be "
                                    "understated); screen these contents as stirred only with a stated reason, or "
                                    "give the source as an arrhenius one fitted conservatively"))
    if spec.vessel is None or spec.vessel.shape is None:
        out.append(FieldProblem("vessel.shape", f"{why} the shape of the mass: add vessel.shape (sphere, box, or a "
                                f"cylinder) with its dimensions; a box is taken as a slab of its smallest "
                                f"half-thickness and a cylinder as infinitely long (both conservative)"))
    return out
def _daily_cycle(spec: CaseSpec, shape, ua: float, geometry: dict, assumptions: list[str],
                 warnings: list[str]) -> DailyCycle | None:
    """The daily cycle of the air and the sun (SI), or None; the exposed area and its share go into ``geometry``.

    The share of UA on the exposed surface is the exposed area over the area the case's UA refers to
    (heat_loss.area, else the wetted or total area of the vessel, as for the surface coefficient); without
    an area the whole UA is taken as exposed (conservative). The start time is set later when not given
    (the worst of 24 hourly starts, :mod:`screening.run.daily_cycle`).
    """
    hl, sun = spec.heat_loss, spec.sun
    if hl.daily_range is None and sun is None:
        return None
    daily_range = hl.daily_range.si if hl.daily_range is not None else 0.0
    warmest = hl.warmest_time_of_day.si if hl.warmest_time_of_day is not None else DEFAULT_WARMEST_TIME
    if hl.daily_range is not None and hl.warmest_time_of_day is None:
        assumptions.append("heat_loss.warmest_time_of_day is not stated: the warmest air is taken at 15 h solar "
                           "time (common practice).")
    solar_rise, day_length = 0.0, 43200.0
    if sun is not None:
        h_o = sun.outer_coefficient.si if sun.outer_coefficient is not None else DEFAULT_OUTER_COEFFICIENT
        if sun.outer_coefficient is None:
            assumptions.append("sun.outer_coefficient is not stated: the outer film coefficient of the sol-air "
                               "temperature is taken as 15 W/(m^2*K) (common practice; a lower value, in still "
                               "air, gives a hotter surface).")
        if sun.exposed_area == "projected":
            exposed = float(_projected_area(shape))
            basis = "projected"
        else:
            exposed = _exposed_area_value(sun.exposed_area).si
            basis = "given"
        area = geometry.get("heat_loss_area_m2") or geometry.get("wetted_area_m2") or geometry.get("total_area_m2")
        if area:
            share = min(1.0, exposed / area)
            if exposed > area:
                warnings.append(f"sun.exposed_area ({exposed:.4g} m^2) is larger than the area the heat loss refers "
                                f"to ({area:.4g} m^2): the whole UA is taken as exposed.")
        else:
            share = 1.0
            assumptions.append("No area is known for the heat loss (ua given without a vessel geometry): the whole "
                               "UA is taken as exposed to the sun (conservative).")
        if area and ua > 0 and ua / area > h_o:
            warnings.append(f"The heat-loss coefficient ({ua / area:.3g} W/(m^2 K)) is above the outer film "
                            f"coefficient of the sol-air temperature ({h_o:.3g} W/(m^2 K)): the solar gain then "
                            f"exceeds what the surface absorbs (conservative).")
        solar_rise = share * sun.absorptivity.si * sun.peak_irradiance.si / h_o
        day_length = sun.day_length.si
        geometry.update(exposed_area_m2=exposed, exposed_area_basis=basis, exposed_share=share,
                        outer_coefficient_W_per_m2K=h_o)
    start = spec.start_time_of_day.si if spec.start_time_of_day is not None else 0.0
    return DailyCycle(daily_range, warmest, start, solar_rise, day_length)


def _projected_area(shape: VesselShape) -> float:
    """Largest projection of the vessel for solar elevations 30-90 degrees (a dished cylinder as its bounding one)."""
    if shape.shape in ("vertical-cylinder", "horizontal-cylinder"):
        overall = maximum_height(replace(shape, shape="vertical-cylinder"))
        return float(largest_projection(shape.shape, shape.diameter, overall))
    return float(largest_projection(shape.shape, shape.diameter, shape.length, shape.width, shape.height))


def source_name(spec: ArrheniusSpec, index: int) -> str:
    """How the output names a heat source: its label, or its place in the case."""
    return f"heat_sources.{index}" + (f" ({spec.label})" if spec.label else "")


def _arrhenius_source(s: ArrheniusSpec, index: int, assumptions: list[str]):
    """The SI source of an arrhenius entry: an ArrheniusSource, or a StartRelease for a synthesis without kinetics."""
    name = source_name(s, index)
    role = s.effective_role
    dh = s.specific_heat_of_reaction.si if s.specific_heat_of_reaction is not None else None
    if s.remaining_fraction is not None:
        af = s.remaining_fraction
    else:
        af = 1.0
        if role == "synthesis":
            assumptions.append(f"{name}: accumulated_fraction is not stated, so the whole heat of reaction (100 %) "
                               f"is taken as accumulated when cooling fails (conservative).")
    if not s.has_kinetics:
        assumptions.append(f"{name}: a synthesis given without kinetics. Its accumulated heat ({af * 100:.4g} % of "
                           f"{dh / 1e3:.4g} kJ/kg) enters the MTSR and, in the temperature history, is released at "
                           f"once at t = 0 (conservative: the real release is slower, so limits are reached no "
                           f"earlier than shown).")
        return m.StartRelease(dh, af, name)
    if s.specific_power is not None:
        q0 = s.specific_power.si
    elif s.order == 0 or af == 1.0:
        q0 = s.initial_specific_power.si
    else:
        q0 = s.initial_specific_power.si / af ** s.order  # the rate at zero conversion
    gas = _gas_generating(s, role, name, assumptions)
    return m.ArrheniusSource(q0, s.reference_temperature.si, s.activation_energy.si, float(s.order), dh, af, gas,
                             _tested_range(s), role, name)


def _gas_generating(s, role: str, name: str, assumptions: list[str]) -> bool:
    """Whether a temperature-dependent source makes permanent gas: as stated, else true for a decomposition
    (conservative, said among the assumptions)."""
    if s.gas_generating is not None:
        return s.gas_generating
    if role == "decomposition":
        assumptions.append(f"{name}: gas_generating is not stated, so the decomposition is taken to make "
                           f"permanent gas (conservative: no credit for boiling, and the gas pressurises a "
                           f"closed vessel or package).")
        return True
    return False


def _autocatalytic_source(s: AutocatalyticSpec, index: int, assumptions: list[str]) -> m.ArrheniusSource:
    """The SI source of an autocatalytic entry: an ArrheniusSource whose specific power is Delta h k_ref."""
    name = source_name(s, index)
    role = s.effective_role
    dh = s.specific_heat_of_reaction.si
    af = s.remaining_fraction if s.remaining_fraction is not None else 1.0
    if s.initial_conversion is None:
        assumptions.append(f"{name}: initial_conversion is not stated, so the material is taken as fresh (0 % "
                           f"converted). Aged, recycled or contaminated material may be partly converted or seeded "
                           f"with its own products, and then reacts much sooner: state its conversion if so.")
    if role == "synthesis" and s.initial_conversion is None:
        assumptions.append(f"{name}: the whole heat of reaction (100 %) is taken as accumulated when cooling fails "
                           f"(conservative).")
    gas = _gas_generating(s, role, name, assumptions)
    return m.ArrheniusSource(dh * s.rate_constant.si, s.reference_temperature.si, s.activation_energy.si,
                             float(s.order), dh, af, gas, _tested_range(s), role, name,
                             autocatalytic_order=float(s.autocatalytic_order), initiation=float(s.initiation))


def _tested_range(s: ArrheniusSpec):
    if s.tested_range is None:
        return None
    lo, hi = (parse_quantity(v["value"] if isinstance(v, dict) else v, "temperature").value for v in s.tested_range)
    return (min(lo, hi), max(lo, hi))


def _fire_source(s: FireSpec, index: int, shape, liquid_volume, problems, warnings) -> m.FireExposure:
    F = s.environment_factor.si if s.environment_factor is not None else 1.0
    if s.wetted_area is not None:
        area = s.wetted_area.si
    elif shape is not None and liquid_volume is not None:
        elevation = s.elevation.si if s.elevation is not None else 0.0
        area = fire_wetted_area(lambda h: wetted_area_below(shape, liquid_volume, h),
                                liquid_height(shape, liquid_volume), elevation)
    else:
        problems.append(FieldProblem(f"heat_sources.{index}.wetted_area",
                                     "a fire source needs wetted_area, or the vessel's geometry (vessel.shape "
                                     "and its dimensions) and the liquid volume (contents.density) to compute it"))
        return m.FireExposure(0.0, 0.0, F, s.drainage_and_firefighting)
    fire = api521_fire_heat_input(area, F, s.drainage_and_firefighting)
    warnings.extend(c for c in fire.cautions if c not in warnings)
    return m.FireExposure(float(fire.power), area, F, s.drainage_and_firefighting)
