"""SI data model shared by the physics core.

Everything here is plain floats in SI units (kg, m, s, K, W, J).  Case files are
parsed and unit-checked at the boundary (:mod:`screening.case.schema`) and turned
into a :class:`ScreeningModel`; the physics functions never see units objects.
"""
from __future__ import annotations

from dataclasses import dataclass

GAS_CONSTANT = 8.314462618  # J/(mol K), CODATA 2018


def heat_capacity(mass, specific_heat, wall_heat_capacity=0.0):
    r"""Heat capacity of the contents and the wall, J/K.

    Parameters
    ----------
    mass : float or array, [kg]
    specific_heat : float or array, [J/(kg K)]
    wall_heat_capacity : float or array, [J/K], default 0

    Returns
    -------
    float or array, [J/K]

    Notes
    -----
    .. math:: C = m c_p + C_{wall}

    Examples
    --------
    >>> heat_capacity(9000.0, 3400.0, 2100.0 * 490.0)
    31629000.0
    """
    return mass * specific_heat + wall_heat_capacity


@dataclass(frozen=True)
class ConstantSource:
    """Heat released at a constant rate, W."""

    power: float


@dataclass(frozen=True)
class DecayingSource:
    """Heat released as ``power * exp(-t / time_constant)``; power in W, time constant in s.

    ``role`` is "synthesis" for the remaining heat of the desired reaction given without kinetics, else None.
    """

    power: float
    time_constant: float
    role: str | None = None


@dataclass(frozen=True)
class HeatingMedium:
    """A jacket or coil left on: adds ``ua * (medium_temperature - T)`` W."""

    medium_temperature: float  # K
    ua: float  # W/K


@dataclass(frozen=True)
class ArrheniusSource:
    """Temperature-dependent heat release per kg of contents.

    q(T, X) = specific_power * exp(-E/R (1/T - 1/T_ref)) * (1 - X)^order   [W/kg]

    ``specific_power`` is the rate at ``reference_temperature`` and zero conversion.
    Conversion X starts at ``1 - accumulated_fraction`` and advances at
    dX/dt = q / specific_heat_of_reaction.  Without a heat of reaction (order 0
    only) release is unbounded.  ``role`` is "synthesis" (the desired reaction: its
    accumulated heat sets the MTSR) or "decomposition" (sets T_D24 and TMRad).
    """

    specific_power: float  # W/kg at reference temperature, zero conversion
    reference_temperature: float  # K
    activation_energy: float  # J/mol
    order: float = 0.0
    specific_heat_of_reaction: float | None = None  # J/kg
    accumulated_fraction: float = 1.0
    gas_generating: bool = False
    tested_range: tuple[float, float] | None = None  # K, where the kinetics were measured
    role: str = "decomposition"  # "synthesis" | "decomposition"
    label: str | None = None


@dataclass(frozen=True)
class StartRelease:
    """A synthesis given without kinetics: its accumulated heat is released at once at t = 0.

    Releasing it at once is conservative for the temperature history; the heat per kg of
    contents is ``accumulated_fraction * specific_heat_of_reaction``.
    """

    specific_heat_of_reaction: float  # J/kg
    accumulated_fraction: float = 1.0
    label: str | None = None


@dataclass(frozen=True)
class FireExposure:
    """External pool-fire heat input already evaluated at the boundary, W.

    ``power`` is the API 521 / ISO 23251 wetted-area correlation result; the
    other fields document how it was obtained.
    """

    power: float
    wetted_area: float  # m^2 counted (up to 7.6 m above the fire base)
    environment_factor: float
    drainage_and_firefighting: bool


@dataclass(frozen=True)
class Limit:
    name: str
    temperature: float  # K


@dataclass(frozen=True)
class BoilingData:
    boiling_point: float  # K
    latent_heat: float  # J/kg
    venting: str = "closed"  # "open" gives tempering credit, "closed" none


@dataclass(frozen=True)
class ScreeningModel:
    """One vessel, in SI, ready for the physics core."""

    contents_mass: float  # kg
    contents_specific_heat: float  # J/(kg K)
    wall_heat_capacity: float  # J/K (wall mass * wall specific heat, 0 if none)
    ua: float  # W/K, loss to ambient
    ambient_temperature: float  # K
    initial_temperature: float  # K
    horizon: float  # s
    constant_sources: tuple[ConstantSource, ...] = ()
    decaying_sources: tuple[DecayingSource, ...] = ()
    heating_media: tuple[HeatingMedium, ...] = ()
    arrhenius_sources: tuple[ArrheniusSource, ...] = ()
    fire_sources: tuple[FireExposure, ...] = ()
    limits: tuple[Limit, ...] = ()
    boiling: BoilingData | None = None
    maximum_technical_temperature: float | None = None  # K
    mixing: str = "stirred"  # "stirred" | "unstirred"
    thermal_conductivity: float | None = None  # W/(m K), unstirred contents
    characteristic_length: float | None = None  # m, volume / surface for Biot
    conduction_geometry: str | None = None  # "slab" | "cylinder" | "sphere" (unstirred)
    conduction_radius: float | None = None  # m, half-thickness or radius (unstirred)
    density: float | None = None  # kg/m^3
    surface_coefficient: float | None = None  # W/(m^2 K), for the Biot number
    released_at_start: tuple[StartRelease, ...] = ()  # syntheses without kinetics (see core.terms.start_temperature)
    scenario: str = "heat-up"  # "cooling-failure" | "storage" | "heat-up"

    @property
    def heat_capacity(self) -> float:
        """Total heat capacity C = m c + wall, J/K."""
        return heat_capacity(self.contents_mass, self.contents_specific_heat, self.wall_heat_capacity)
