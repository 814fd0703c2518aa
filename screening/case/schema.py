"""The case-file schema: one vessel, validated with pydantic v2.

Every physical quantity is text with a unit (``"9000 kg"``) or a mapping
``{value: "9000 kg", source: "weigh ticket"}``.  Validation turns each into a
:class:`Quantity` holding the SI value, the text as written and its source.
The same schema validates case files and register rows.
"""
from __future__ import annotations

import difflib
import reprlib
import typing
from dataclasses import dataclass
from typing import Annotated, Any, Literal, Union

from pydantic import (
    BaseModel,
    BeforeValidator,
    ConfigDict,
    Discriminator,
    Field,
    Tag,
    ValidationError,
    WithJsonSchema,
    field_validator,
    model_validator,
)

from screening.case.units import (
    DIMENSION_WORDS,
    DIMENSIONS,
    UnitError,
    non_finite,
    not_finite_message,
    parse_quantity,
)
from screening.errors import InputError

DEFAULT_HORIZON_TEXT = "72 h"


@dataclass(frozen=True)
class Quantity:
    """A validated input: SI value, the text as written, and its stated source."""

    si: float
    text: str
    source: str | None
    dimension: str

    @property
    def si_unit(self) -> str:
        return DIMENSIONS[self.dimension][0]


def _make_quantity_validator(dimension: str, check: str | None):
    def validate(value: Any) -> Quantity:
        if isinstance(value, Quantity):
            return value
        source = None
        if isinstance(value, dict):
            extra = set(value) - {"value", "source"}
            if extra:
                raise ValueError(f"unknown key(s) {', '.join(sorted(extra))} in a quantity; "
                                 f"expected {{value: ..., source: ...}}")
            if "value" not in value:
                raise ValueError("a quantity written as a mapping needs 'value' (and optionally 'source')")
            source = value.get("source")
            if source is not None and not isinstance(source, str):
                source = str(source)
            value = value["value"]
        try:
            parsed = parse_quantity(value, dimension)
        except UnitError as exc:
            raise ValueError(str(exc)) from None
        si = parsed.value
        if check == "positive" and not si > 0:
            raise ValueError(f"must be greater than zero (got {parsed.text}); expected {DIMENSION_WORDS[dimension]}")
        if check == "nonnegative" and si < 0:
            raise ValueError(f"must not be negative (got {parsed.text}); expected {DIMENSION_WORDS[dimension]}")
        if check == "unit_fraction" and not 0 < si <= 1:
            raise ValueError(f"must be above 0 and at most 1 (100 %) (got {parsed.text}); expected "
                             f"{DIMENSION_WORDS[dimension]}")
        if check == "time_of_day" and not 0.0 <= si < 86400.0:
            raise ValueError(f"must be a solar time of day from 0 h to below 24 h (got {parsed.text}); expected "
                             f"{DIMENSION_WORDS[dimension]}")
        if check == "day_length" and not 0.0 < si <= 86400.0:
            raise ValueError(f"must be above 0 h and at most 24 h (got {parsed.text}); expected "
                             f"{DIMENSION_WORDS[dimension]}")
        if check == "absolute" and not si > 0:
            raise ValueError(f"{parsed.text} is at or below absolute zero; expected {DIMENSION_WORDS[dimension]}")
        return Quantity(si, parsed.text, source, dimension)

    return validate


@dataclass(frozen=True)
class QuantityField:
    """Marker on a quantity field: its dimension and range check (used by the register fast path)."""

    dimension: str
    check: str | None

    def validator(self):
        return _make_quantity_validator(self.dimension, self.check)


def Q(dimension: str, check: str | None = None):
    """Annotated type for a quantity field of a given dimension."""
    example = DIMENSION_WORDS[dimension]
    schema = {
        "description": f"{example}; text with a unit, or {{value, source}}",
        "anyOf": [
            {"type": "string"},
            {"type": "object", "properties": {"value": {"type": "string"}, "source": {"type": "string"}},
             "required": ["value"], "additionalProperties": False},
        ] + ([{"type": "number"}] if dimension == "fraction" else []),
    }
    return Annotated[Any, BeforeValidator(_make_quantity_validator(dimension, check)), WithJsonSchema(schema),
                     QuantityField(dimension, check)]


def quantity_field(owner: BaseModel, name: str) -> QuantityField | None:
    """The QuantityField marker of field ``name`` on a validated model instance, if it is a quantity."""
    info = type(owner).model_fields.get(name)
    if info is None:
        return None
    for item in info.metadata:
        if isinstance(item, QuantityField):
            return item
    return None


class Strict(BaseModel):
    # allow_inf_nan=False: plain-number fields (order) refuse inf and nan like quantities do
    model_config = ConfigDict(extra="forbid", frozen=True, arbitrary_types_allowed=True, allow_inf_nan=False)


ShapeName = Literal["vertical-cylinder", "horizontal-cylinder", "sphere", "box"]
HeadName = Literal["flat", "hemispherical", "ellipsoidal", "torispherical"]


GEOMETRY_FIELDS = ("diameter", "length", "width", "height", "heads", "crown_radius", "knuckle_radius")


class VesselSpec(Strict):
    """The vessel: its geometry (optional where the contents' mass and UA are given), wall and venting."""

    shape: ShapeName | None = None
    diameter: Q("length", "positive") = None
    length: Q("length", "positive") = None
    width: Q("length", "positive") = None
    height: Q("length", "positive") = None
    heads: HeadName = "flat"
    crown_radius: Q("length", "positive") = None
    knuckle_radius: Q("length", "positive") = None
    wall_mass: Q("mass", "nonnegative") = None
    wall_specific_heat: Q("specific_heat", "positive") = None
    venting: Literal["open", "closed"] = "closed"

    @model_validator(mode="after")
    def _dimensions(self):
        if self.shape is not None:
            need = {"vertical-cylinder": ("diameter", "length"), "horizontal-cylinder": ("diameter", "length"),
                    "sphere": ("diameter",), "box": ("length", "width", "height")}[self.shape]
            missing = [n for n in need if getattr(self, n) is None]
            if missing:
                raise ValueError(f"a {self.shape} vessel needs {', '.join(missing)}")
        if (self.wall_mass is None) != (self.wall_specific_heat is None):
            raise ValueError("wall_mass and wall_specific_heat go together: give both or neither")
        if self.heads != "torispherical" and (self.crown_radius or self.knuckle_radius):
            raise ValueError("crown_radius and knuckle_radius apply only to torispherical heads")
        return self


class ContentsSpec(Strict):
    mass: Q("mass", "positive") = None
    fill: Q("fraction", "positive") = None
    volume: Q("volume", "positive") = None
    density: Q("density", "positive") = None
    specific_heat: Q("specific_heat", "positive")
    initial_temperature: Q("temperature", "absolute")
    mixing: Literal["stirred", "unstirred"] = "stirred"
    thermal_conductivity: Q("thermal_conductivity", "positive") = None
    boiling_point: Q("temperature", "absolute") = None
    latent_heat: Q("specific_energy", "positive") = None

    @model_validator(mode="after")
    def _amount(self):
        given = [n for n in ("mass", "fill", "volume") if getattr(self, n) is not None]
        if not given:
            raise ValueError("give the amount of contents: mass, or fill (with density and a vessel), "
                             "or volume (with density)")
        if len(given) > 1:
            raise ValueError(f"give only one of mass, fill and volume (got {', '.join(given)})")
        if given[0] in ("fill", "volume") and self.density is None:
            raise ValueError(f"contents.{given[0]} needs contents.density to give the mass")
        if (self.boiling_point is None) != (self.latent_heat is None):
            raise ValueError("boiling_point and latent_heat go together: give both or neither")
        return self


class HeatLossSpec(Strict):
    ambient_temperature: Q("temperature", "absolute")
    ua: Q("conductance", "nonnegative") = None
    ua_per_mass: Q("specific_conductance", "nonnegative") = None
    coefficient: Q("heat_transfer_coefficient", "nonnegative") = None
    area: Any = Field(default=None, json_schema_extra={
        "description": "'wetted', 'total', or an area with a unit such as '12 m^2'"})
    daily_range: Annotated[Q("temperature_difference", "nonnegative"), Field(description=(
        "warmest minus coolest air over the day (sinusoidal); ambient_temperature is then the daily mean"))] = None
    warmest_time_of_day: Annotated[Q("time", "time_of_day"), Field(description=(
        "solar time of the warmest air; default 15 h"))] = None

    @model_validator(mode="after")
    def _one_way(self):
        if self.warmest_time_of_day is not None and self.daily_range is None:
            raise ValueError("warmest_time_of_day needs daily_range (the warmest minus the coolest air)")
        given = [name for name in ("ua", "ua_per_mass", "coefficient") if getattr(self, name) is not None]
        if len(given) > 1 or (self.area is not None and self.coefficient is None and given):
            both = given + (["area"] if self.area is not None and "coefficient" not in given else [])
            raise ValueError(f"give exactly one of ua, ua_per_mass, or coefficient with area, not "
                             f"{' and '.join(both)}")
        if self.ua is None and self.ua_per_mass is None and self.coefficient is None:
            raise ValueError("give ua (e.g. 180 W/K), ua_per_mass (e.g. 90 mW/(kg*K), per kg of contents), or "
                             "coefficient (e.g. 4.5 W/(m^2*K)) with area")
        if self.coefficient is not None and self.area is None:
            raise ValueError("coefficient needs area: wetted, total, or an area such as '12 m^2'")
        return self


class SunSpec(Strict):
    """The sun on the exposed surface: a half sine between sunrise and sunset, centred on solar noon."""

    peak_irradiance: Annotated[Q("irradiance", "nonnegative"), Field(description=(
        "irradiance at solar noon on the exposed area"))]
    absorptivity: Annotated[Q("fraction", "unit_fraction"), Field(description=(
        "solar absorptivity of the outer surface (white paint about 0.2, dark about 0.9)"))]
    exposed_area: Any = Field(json_schema_extra={
        "description": "'projected' (the largest projection of the vessel for solar elevations 30-90 degrees), "
                       "or an area with a unit such as '3 m^2'"})
    day_length: Annotated[Q("time", "day_length"), Field(description="sunrise to sunset, centred on solar noon")]
    outer_coefficient: Annotated[Q("heat_transfer_coefficient", "positive"), Field(description=(
        "outer film coefficient for the sol-air temperature; default 15 W/(m^2*K)"))] = None


def _exposed_area_value(value: Any):
    if value == "projected":
        return value
    return _make_quantity_validator("area", "positive")(value)


def _area_value(value: Any):
    if value is None or value in ("wetted", "total"):
        return value
    return _make_quantity_validator("area", "positive")(value)


class _Source(Strict):
    label: str | None = None


class ConstantSpec(_Source):
    kind: Literal["constant"]
    power: Q("power", "nonnegative")


class DecayingSpec(_Source):
    kind: Literal["decaying"]
    role: Literal["synthesis"] | None = Field(default=None, description=(
        "optional: 'synthesis' marks the remaining heat of the desired reaction, released without kinetics; it "
        "enters the MTSR and makes cooling-failure the default scenario"))
    power: Q("power", "nonnegative")
    time_constant: Q("time", "positive") = None
    half_life: Q("time", "positive") = None

    @model_validator(mode="after")
    def _decay(self):
        if (self.time_constant is None) == (self.half_life is None):
            raise ValueError("a decaying source needs exactly one of time_constant and half_life")
        return self


class HeatingMediumSpec(_Source):
    kind: Literal["heating-medium"]
    medium_temperature: Q("temperature", "absolute")
    ua: Q("conductance", "nonnegative")


#: The migration message for ``accumulated_fraction`` on a source that is not declared a synthesis.
ACCUMULATED_FRACTION_NEEDS_SYNTHESIS = (
    "accumulated_fraction applies to the desired (synthesis) reaction: add `role: synthesis`; if this source is "
    "a decomposition, remove accumulated_fraction")

_KINETIC_FIELDS = ("specific_power", "initial_specific_power", "reference_temperature", "activation_energy")


class ArrheniusSpec(_Source):
    """A temperature-dependent reaction: the desired reaction (synthesis) or a decomposition.

    ``specific_power`` is the heat-release rate per kg at ``reference_temperature`` and zero conversion;
    ``initial_specific_power`` is the rate at ``reference_temperature`` and the conversion at the start of
    the scenario, so that the zero-conversion rate is initial_specific_power / accumulated_fraction^order.
    A synthesis may be given without kinetics (only specific_heat_of_reaction and accumulated_fraction):
    it enters the MTSR and, in the history, its heat is released at once at t = 0 (conservative).
    """

    kind: Literal["arrhenius"]
    role: Literal["synthesis", "decomposition"] | None = Field(default=None, description=(
        "'synthesis' (the desired reaction: its accumulated heat sets the MTSR) or 'decomposition' (a "
        "self-heating hazard: it sets T_D24 and TMRad); default decomposition"))
    specific_power: Annotated[Q("specific_power", "nonnegative"), Field(description=(
        "heat-release rate per kg at reference_temperature and zero conversion (W/kg); or give "
        "initial_specific_power"))] = None
    initial_specific_power: Annotated[Q("specific_power", "nonnegative"), Field(description=(
        "heat-release rate per kg at reference_temperature and at the conversion at the start of the scenario; "
        "the zero-conversion rate is initial_specific_power / accumulated_fraction^order"))] = None
    reference_temperature: Q("temperature", "absolute") = None
    activation_energy: Q("molar_energy", "positive") = None
    order: float = Field(default=0.0, ge=0.0, le=10.0)
    specific_heat_of_reaction: Q("specific_energy", "positive") = None
    accumulated_fraction: Annotated[Q("fraction", None), Field(description=(
        "synthesis only: the fraction of its heat of reaction still to be released when cooling fails "
        "(0 % for a fully dosing-controlled reaction); default 100 %"))] = None
    initial_conversion: Annotated[Q("fraction", None), Field(description=(
        "optional: the conversion at the start of the scenario (default 0 %); on a synthesis it is "
        "1 - accumulated_fraction, so give one of the two"))] = None
    gas_generating: bool | None = Field(default=None, description=(
        "whether the reaction makes permanent gas; a decomposition defaults to true (said in the output)"))
    tested_range: list[Any] | None = Field(default=None, description=(
        "optional [low, high] temperatures over which the kinetics were measured"))

    @field_validator("accumulated_fraction")
    @classmethod
    def _accumulation_is_synthesis(cls, value, info):
        if value is not None and info.data.get("role") != "synthesis":
            raise ValueError(ACCUMULATED_FRACTION_NEEDS_SYNTHESIS)
        if value is not None and not (0 <= value.si <= 1):
            raise ValueError(f"must be from 0 to 1 (100 %) (got {value.text})")
        return value

    @field_validator("initial_conversion")
    @classmethod
    def _conversion_range(cls, value):
        return _check_initial_conversion(value)

    @property
    def effective_role(self) -> str:
        """The role, with the default (decomposition) filled in."""
        return self.role or "decomposition"

    @property
    def has_kinetics(self) -> bool:
        return any(getattr(self, name) is not None for name in _KINETIC_FIELDS)

    @property
    def remaining_fraction(self) -> float | None:
        """1 - initial conversion: accumulated_fraction, or 1 - initial_conversion; None when neither is given."""
        if self.accumulated_fraction is not None:
            return self.accumulated_fraction.si
        if self.initial_conversion is not None:
            return 1.0 - self.initial_conversion.si
        return None

    @model_validator(mode="after")
    def _kinetics(self):
        role = self.effective_role
        if self.accumulated_fraction is not None and self.initial_conversion is not None:
            raise ValueError("give one of accumulated_fraction and initial_conversion, not both: on a synthesis "
                             "accumulated_fraction = 1 - initial_conversion")
        if self.initial_conversion is not None and self.specific_heat_of_reaction is None:
            raise ValueError("initial_conversion needs specific_heat_of_reaction (conversion advances as power / "
                             "heat of reaction)")
        if not self.has_kinetics:
            if role != "synthesis":
                raise ValueError("a decomposition needs its kinetics: specific_power (or initial_specific_power), "
                                 "reference_temperature and activation_energy")
            if self.specific_heat_of_reaction is None:
                raise ValueError("a synthesis without kinetics needs specific_heat_of_reaction (its accumulated "
                                 "heat sets the MTSR)")
            extra = [name for name, given in (("order", self.order != 0), ("tested_range", self.tested_range))
                     if given]
            if extra:
                raise ValueError(f"{', '.join(extra)} describe kinetics: give specific_power (or "
                                 f"initial_specific_power), reference_temperature and activation_energy with "
                                 f"{'them' if len(extra) > 1 else 'it'}, or leave {', '.join(extra)} out")
            return self
        if (self.specific_power is None) == (self.initial_specific_power is None):
            raise ValueError("give exactly one of specific_power (the rate at reference_temperature and zero "
                             "conversion) and initial_specific_power (the rate at the conversion at the start)")
        missing = [n for n in ("reference_temperature", "activation_energy") if getattr(self, n) is None]
        if missing:
            raise ValueError(f"the kinetics need {' and '.join(missing)} with the specific power")
        if self.order > 0 and self.specific_heat_of_reaction is None:
            raise ValueError("order > 0 needs specific_heat_of_reaction (conversion advances as power / heat of reaction)")
        if role == "synthesis" and self.specific_heat_of_reaction is None:
            raise ValueError("a synthesis needs specific_heat_of_reaction (its accumulated heat sets the MTSR)")
        if self.accumulated_fraction is not None and self.specific_heat_of_reaction is None:
            raise ValueError("accumulated_fraction needs specific_heat_of_reaction")
        if (self.initial_specific_power is not None and self.order > 0 and self.remaining_fraction is not None
                and self.remaining_fraction == 0):
            which = ("accumulated_fraction 0 %" if self.accumulated_fraction is not None
                     else "initial_conversion 100 %")
            raise ValueError(f"initial_specific_power with {which} and order > 0: the "
                             "zero-conversion rate initial_specific_power / accumulated_fraction^order is undefined; "
                             "give specific_power (the rate at zero conversion) instead")
        return self


def _check_initial_conversion(value):
    if value is not None and not (0 <= value.si <= 1):
        raise ValueError(f"must be from 0 to 1 (100 %) (got {value.text})")
    return value


class AutocatalyticSpec(_Source):
    """An autocatalytic reaction: d(alpha)/dt = k(T) (1 - alpha)^n (alpha^m + z), heat = Delta h d(alpha)/dt.

    k(T) is the Arrhenius law through ``rate_constant`` at ``reference_temperature``; z is taken as
    independent of temperature (one activation energy for the initiation and the autocatalytic path).
    """

    kind: Literal["autocatalytic"]
    role: Literal["synthesis", "decomposition"] | None = Field(default=None, description=(
        "'synthesis' (the desired reaction: its accumulated heat sets the MTSR) or 'decomposition' (a "
        "self-heating hazard: it sets T_D24 and TMRad); default decomposition"))
    rate_constant: Annotated[Q("rate_constant", "positive"), Field(description=(
        "k at reference_temperature (1/s), the autocatalytic rate constant"))]
    reference_temperature: Q("temperature", "absolute")
    activation_energy: Q("molar_energy", "positive")
    order: float = Field(ge=0.0, le=10.0, description="n, the order in the remaining fraction 1 - alpha, 0 to 10")
    autocatalytic_order: float = Field(gt=0.0, le=10.0, description="m, the order in the conversion alpha, "
                                                                     "above 0 and up to 10")
    initiation: float = Field(gt=0.0, le=1e6, description=(
        "z > 0, the ratio of the initiation to the autocatalytic rate constant"))
    specific_heat_of_reaction: Q("specific_energy", "positive")
    initial_conversion: Annotated[Q("fraction", None), Field(description=(
        "optional: the conversion at the start of the scenario, default 0 % (aged, recycled or contaminated "
        "material may be partly converted)"))] = None
    gas_generating: bool | None = Field(default=None, description=(
        "whether the reaction makes permanent gas; a decomposition defaults to true (said in the output)"))
    tested_range: list[Any] | None = Field(default=None, description=(
        "optional [low, high] temperatures over which the kinetics were measured"))

    @field_validator("initial_conversion")
    @classmethod
    def _conversion_range(cls, value):
        return _check_initial_conversion(value)

    @property
    def effective_role(self) -> str:
        """The role, with the default (decomposition) filled in."""
        return self.role or "decomposition"

    @property
    def has_kinetics(self) -> bool:
        return True

    @property
    def remaining_fraction(self) -> float | None:
        """1 - initial_conversion, None when it is not given."""
        return None if self.initial_conversion is None else 1.0 - self.initial_conversion.si


#: The temperature-dependent source kinds (those with a role and kinetics).
TEMPERATURE_DEPENDENT = (ArrheniusSpec, AutocatalyticSpec)


class FireSpec(_Source):
    kind: Literal["fire"]
    environment_factor: Q("fraction", "unit_fraction") = None  # API 521: 1 for a bare vessel, less with credit
    drainage_and_firefighting: bool = True
    wetted_area: Q("area", "positive") = None
    elevation: Q("length", "nonnegative") = None


SOURCE_KINDS = {"constant": ConstantSpec, "decaying": DecayingSpec, "heating-medium": HeatingMediumSpec,
                "arrhenius": ArrheniusSpec, "autocatalytic": AutocatalyticSpec, "fire": FireSpec}


def _source_kind(value: Any):
    if isinstance(value, dict):
        return value.get("kind")
    return getattr(value, "kind", None)


HeatSource = Annotated[
    Union[tuple(Annotated[cls, Tag(kind)] for kind, cls in SOURCE_KINDS.items())],
    Discriminator(_source_kind),
]


class LimitSpec(Strict):
    name: str = Field(min_length=1)
    temperature: Q("temperature", "absolute")


class DetectionSpec(Strict):
    alarm_temperature: Q("temperature", "absolute") = None
    delay: Q("time", "nonnegative") = None

    @model_validator(mode="after")
    def _one(self):
        if (self.alarm_temperature is None) == (self.delay is None):
            raise ValueError("detection needs exactly one of alarm_temperature and delay")
        return self


class RecoverySpec(Strict):
    medium_temperature: Q("temperature", "absolute")
    ua: Q("conductance", "positive")


class MetaSpec(Strict):
    prepared_by: str | None = None
    prepared_for: str | None = None
    revision: str | None = None
    notes: str | None = None
    date: str | None = None


class CaseSpec(Strict):
    id: str = Field(min_length=1)
    title: str | None = None
    vessel: VesselSpec | None = None
    contents: ContentsSpec
    heat_loss: HeatLossSpec
    heat_sources: list[HeatSource] = Field(default_factory=list)
    limits: list[LimitSpec] = Field(min_length=1)
    horizon: Q("time", "positive") = None
    response_time: Q("time", "nonnegative") = None
    detection: DetectionSpec | None = None
    recovery: RecoverySpec | None = None
    maximum_technical_temperature: Q("temperature", "absolute") = None
    sun: SunSpec | None = None
    start_time_of_day: Annotated[Q("time", "time_of_day"), Field(description=(
        "solar time at t = 0 with a daily cycle; default: the worst of 24 hourly starts (reported)"))] = None
    scenario: Literal["cooling-failure", "storage", "heat-up"] | None = Field(default=None, description=(
        "what is screened: cooling-failure (a reactor loses cooling: MTSR, criticality class), storage "
        "(critical ambient, TMRad at the storage temperature) or heat-up (time to limits only); the default "
        "follows from the heat sources"))
    meta: MetaSpec | None = None
    uncertainty: dict | None = None

    @model_validator(mode="before")
    @classmethod
    def _coerce_id(cls, data):
        if isinstance(data, dict) and isinstance(data.get("id"), (int, float)) and not isinstance(data.get("id"), bool):
            data = dict(data)
            data["id"] = str(data["id"])
        return data

    @model_validator(mode="after")
    def _needs_vessel(self):
        names = [lim.name for lim in self.limits]
        dupes = sorted({n for n in names if names.count(n) > 1})
        if dupes:
            raise ValueError(f"limit names must differ: {', '.join(dupes)} given more than once")
        if self.start_time_of_day is not None and self.sun is None and self.heat_loss.daily_range is None:
            raise ValueError("start_time_of_day applies to a daily cycle: give heat_loss.daily_range or sun, or "
                             "leave start_time_of_day out")
        return self


# ---------------------------------------------------------------- scenario

SCENARIOS = ("cooling-failure", "storage", "heat-up")


def synthesis_sources(spec: CaseSpec) -> list:
    """The heat sources declared as the desired reaction (Arrhenius or decaying with role synthesis)."""
    return [s for s in spec.heat_sources if getattr(s, "role", None) == "synthesis"]


def decomposition_sources(spec: CaseSpec) -> list:
    return [s for s in spec.heat_sources if isinstance(s, TEMPERATURE_DEPENDENT) and s.effective_role == "decomposition"]


def default_scenario(spec: CaseSpec) -> str | None:
    """The scenario a case gets when it does not state one; None when the mix of sources needs it stated.

    cooling-failure when a synthesis source is present; storage when the temperature-dependent sources are
    all decompositions and there is no decaying source, fire or heating medium; heat-up when there is no
    temperature-dependent source.
    """
    if synthesis_sources(spec):
        return "cooling-failure"
    arrhenius = [s for s in spec.heat_sources if isinstance(s, TEMPERATURE_DEPENDENT)]
    if not arrhenius:
        return "heat-up"
    if not any(isinstance(s, (DecayingSpec, FireSpec, HeatingMediumSpec)) for s in spec.heat_sources):
        return "storage"
    return None


def scenario_problem(spec: CaseSpec) -> str | None:
    """Why the case's scenario (stated or default) does not fit its sources, or None."""
    if spec.scenario is None:
        if default_scenario(spec) is None:
            kinds = sorted({s.kind for s in spec.heat_sources if not isinstance(s, TEMPERATURE_DEPENDENT)} - {"constant"})
            return (f"state the scenario: the decomposition source(s) come with {', '.join(kinds)} heat input, so "
                    f"it is not clear what is screened; expected one of cooling-failure (a reactor after loss of "
                    f"cooling: MTSR and criticality class), storage (critical ambient and TMRad at the storage "
                    f"temperature) or heat-up (time to each limit only)")
        return None
    if spec.scenario == "storage":
        if synthesis_sources(spec):
            return ("storage has no synthesis reaction: a source with role synthesis belongs to a cooling-failure "
                    "scenario; state scenario: cooling-failure, or remove the role")
        if not decomposition_sources(spec):
            return ("storage needs a decomposition (an arrhenius source): every storage criterion (critical ambient, "
                    "TMRad at the storage temperature) comes from it; for a heat-up without one state scenario: heat-up")
    return None


def effective_scenario(spec: CaseSpec) -> str:
    """The stated scenario, or the default one (raises CaseError when it must be stated)."""
    problem = scenario_problem(spec)
    if problem is not None:
        raise CaseError([FieldProblem("scenario", problem)])
    return spec.scenario or default_scenario(spec)


# ---------------------------------------------------------------- errors


@dataclass(frozen=True)
class FieldProblem:
    field: str
    message: str


class CaseError(InputError):
    """Invalid case input: one or more problems, each naming its field."""

    def __init__(self, problems: list[FieldProblem]):
        self.problems = problems
        super().__init__("; ".join(f"{p.field}: {p.message}" for p in problems))


_SHORT = reprlib.Repr()
_SHORT.maxstring, _SHORT.maxother, _SHORT.maxlist, _SHORT.maxdict, _SHORT.maxlevel = 60, 60, 4, 4, 2


def _show(value: Any) -> str:
    """A short repr of an offending input for a message.

    YAML aliases can make a small file hold a structure with billions of
    elements (shared, never expanded in memory); a plain repr would expand it.
    """
    return _SHORT.repr(value)


def _allowed_fields(model: type[BaseModel]) -> list[str]:
    return list(model.model_fields)


def clean_location(loc: tuple) -> tuple:
    """Drop pydantic's union tags and function-validator names from a location."""
    out = []
    for i, part in enumerate(loc):
        if isinstance(part, str) and i > 0 and isinstance(loc[i - 1], int) and part in SOURCE_KINDS:
            continue
        if isinstance(part, str) and part.startswith("function-"):
            continue
        out.append(part)
    return tuple(out)


def format_location(loc: tuple) -> str:
    return ".".join(str(p) for p in loc)


def problems_from_validation_error(exc: ValidationError, data: Any = None) -> list[FieldProblem]:
    problems: list[FieldProblem] = []
    for err in exc.errors(include_url=False):
        raw_loc = tuple(err.get("loc", ()))
        loc = clean_location(raw_loc)
        etype = err.get("type", "")
        msg = err.get("msg", "")
        if msg.startswith("Value error, "):
            msg = msg[len("Value error, "):]
        if etype == "extra_forbidden":
            name = loc[-1] if loc else "?"
            owner = _owner_for(raw_loc)
            hint = ""
            if owner is not None:
                allowed = _allowed_fields(owner)
                close = difflib.get_close_matches(str(name), allowed, n=1)
                hint = (f"; did you mean '{close[0]}'?" if close else "") + f"; expected one of: {', '.join(allowed)}"
            msg = f"unknown field '{name}'{hint}"
        elif etype == "missing":
            msg = "required field is missing"
        elif etype in ("union_tag_invalid", "union_tag_not_found"):
            kind = err.get("input", {}).get("kind") if isinstance(err.get("input"), dict) else None
            if kind is None:
                msg = f"a heat source needs a kind: one of {', '.join(SOURCE_KINDS)}"
            else:
                msg = f"unknown heat source kind {_show(kind)}; expected one of {', '.join(SOURCE_KINDS)}"
        elif etype == "literal_error":
            expected = err.get("ctx", {}).get("expected", "")
            msg = f"{_show(err.get('input'))} is not allowed; expected {expected}"
        elif etype in ("model_type", "model_attributes_type", "dict_type"):
            msg = f"expected a mapping of fields, got {type(err.get('input')).__name__}"
        elif etype == "list_type":
            msg = f"expected a list, got {type(err.get('input')).__name__}"
        elif etype == "too_short" and loc and loc[-1] == "limits":
            msg = "give at least one limit (a name and a temperature)"
        elif etype == "string_too_short":
            msg = "must not be empty"
        elif etype in ("string_type",):
            msg = f"expected text, got {_show(err.get('input'))}"
        elif etype == "finite_number" or (etype in ("float_parsing", "float_type", "greater_than_equal",
                                                     "less_than_equal") and non_finite(err.get("input"))):
            msg = not_finite_message(err.get("input"))
        elif etype in ("float_parsing", "float_type"):
            msg = f"expected a number, got {_show(err.get('input'))}"
        elif etype in ("bool_parsing", "bool_type"):
            msg = f"expected true or false, got {_show(err.get('input'))}"
        elif etype in ("greater_than_equal", "less_than_equal"):
            msg = f"{msg.lower()} (got {_show(err.get('input'))})"
        problems.append(FieldProblem(format_location(loc) or "(case)", msg))
    return problems


def _owner_for(raw_loc: tuple) -> type[BaseModel] | None:
    """Find the model that rejected an extra field, following the raw pydantic loc."""
    model: Any = CaseSpec
    i = 0
    parts = list(raw_loc[:-1])
    while i < len(parts):
        part = parts[i]
        if isinstance(part, int):
            i += 1
            continue
        if model is None:
            return None
        if part in SOURCE_KINDS and i > 0 and isinstance(parts[i - 1], int):
            model = SOURCE_KINDS[part]
            i += 1
            continue
        field = model.model_fields.get(part)
        if field is None:
            return None
        ann = field.annotation
        nxt = None
        for candidate in (VesselSpec, ContentsSpec, HeatLossSpec, LimitSpec, DetectionSpec, RecoverySpec, MetaSpec,
                          SunSpec):
            if candidate is ann or candidate in getattr(ann, "__args__", ()):
                nxt = candidate
        if part == "heat_sources":
            nxt = CaseSpec  # placeholder until the kind tag
        model = nxt
        i += 1
    return model


def validate_case_data(data: Any) -> CaseSpec:
    """Validate a parsed mapping; raise :class:`CaseError` with one problem per field."""
    if not isinstance(data, dict):
        raise CaseError([FieldProblem("(case)", f"a case must be a mapping of fields, got {type(data).__name__}")])
    try:
        spec = CaseSpec.model_validate(data)
    except ValidationError as exc:
        raise CaseError(problems_from_validation_error(exc, data)) from None
    problems = _geometry_problems(spec)
    area = spec.heat_loss.area
    if area is not None:
        try:
            _area_value(area)
        except ValueError as exc:
            problems.append(FieldProblem("heat_loss.area", f"{exc} (or 'wetted' / 'total')"))
    if spec.sun is not None:
        try:
            _exposed_area_value(spec.sun.exposed_area)
        except ValueError as exc:
            problems.append(FieldProblem("sun.exposed_area", f"{exc} (or 'projected')"))
    for i, src in enumerate(spec.heat_sources):
        if isinstance(src, TEMPERATURE_DEPENDENT) and src.tested_range is not None:
            if len(src.tested_range) != 2:
                problems.append(FieldProblem(f"heat_sources.{i}.tested_range", "expected [low, high] temperatures"))
            else:
                ends = []
                for j, v in enumerate(src.tested_range):
                    try:
                        ends.append(_make_quantity_validator("temperature", "absolute")(v))
                    except ValueError as exc:
                        problems.append(FieldProblem(f"heat_sources.{i}.tested_range.{j}", str(exc)))
                if len(ends) == 2 and ends[0].si > ends[1].si:
                    problems.append(FieldProblem(f"heat_sources.{i}.tested_range",
                                                 f"the low end ({ends[0].text}) is above the high end "
                                                 f"({ends[1].text}); expected [low, high]"))
    problem = scenario_problem(spec)
    if problem is not None:
        problems.append(FieldProblem("scenario", problem))
    if problems:
        raise CaseError(problems)
    return spec


_SHAPES = ", ".join(typing.get_args(ShapeName))


def _geometry_problems(spec: CaseSpec) -> list[FieldProblem]:
    """What needs the vessel's geometry (shape and dimensions), each on its own field."""
    problems = []
    vessel = spec.vessel
    has_shape = vessel is not None and vessel.shape is not None
    if vessel is not None and not has_shape:
        given = [n for n in GEOMETRY_FIELDS if n in vessel.model_fields_set and getattr(vessel, n) is not None]
        if given:
            problems.append(FieldProblem("vessel.shape", (
                f"required with {', '.join(f'vessel.{n}' for n in given)} (they describe the vessel's geometry); "
                f"expected one of: {_SHAPES}")))
    if not has_shape:
        need = "vessel.shape and its dimensions" if vessel is not None else "a vessel (shape and dimensions)"
        if spec.contents.fill is not None:
            problems.append(FieldProblem("contents.fill", (
                f"needs {need} to take the volume from; or give contents.mass (or volume with density)")))
        if spec.sun is not None and spec.sun.exposed_area == "projected":
            problems.append(FieldProblem("sun.exposed_area", (
                f"'projected' needs {need} to project; or give an area such as '3 m^2'")))
        if spec.heat_loss.area in ("wetted", "total"):
            problems.append(FieldProblem("heat_loss.area", (
                f"'{spec.heat_loss.area}' needs {need} to take the area from; or give an area such as "
                f"'12 m^2', or ua")))
    return problems


def case_json_schema() -> dict:
    schema = CaseSpec.model_json_schema()
    schema["title"] = "heatscreen case file"
    schema["description"] = ("One vessel for loss-of-cooling screening. Every physical quantity is text with a unit, "
                             "or {value, source}. Screening only: results defer to codes, test data and qualified review.")
    return schema
