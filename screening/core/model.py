r"""SI data model shared by the physics core.

Everything here is plain floats in SI units (kg, m, s, K, W, J).  Case files are
parsed and unit-checked at the boundary (:mod:`screening.case.schema`) and turned
into a :class:`ScreeningModel`; the physics functions never see units objects.

The model describes one vessel for the lumped balance

.. math:: C \frac{dT}{dt} = P(t, T) - UA\,(T - T_a), \qquad C = m c_p + C_{wall}

with the heat input P(t, T) made of the sources below: constant, exponentially
decaying, heating media left on, pool-fire exposure and Arrhenius (self-heating)
reactions.

References
----------
Incropera, F. P., DeWitt, D. P., Bergman, T. L., Lavine, A. S., *Fundamentals of
Heat and Mass Transfer*, 6th ed., Wiley (2007), ch. 5 (lumped capacitance).

CODATA 2018: R = 8.314462618 J/(mol K) (:data:`GAS_CONSTANT`).
"""
from __future__ import annotations

from dataclasses import dataclass

GAS_CONSTANT = 8.314462618  # J/(mol K), CODATA 2018


def heat_capacity(mass, specific_heat, wall_heat_capacity=0.0):
    r"""Heat capacity of the contents and the wall, J/K.

    Parameters
    ----------
    mass : float or array, [kg]
        Contents mass m.
    specific_heat : float or array, [J/(kg K)]
        Specific heat of the contents c_p.
    wall_heat_capacity : float or array, [J/K], default 0
        Wall mass times wall specific heat, counted only where the wall follows the
        contents' temperature.

    Returns
    -------
    float or array, [J/K]
        Same shape as the broadcast inputs.

    Notes
    -----
    .. math:: C = m c_p + C_{wall}

    Lumped: contents and wall at one temperature (well stirred, thin wall).  Counting
    the wall slows the heat-up, so it is a credit; the runaway criteria leave it out
    (conservative).

    References
    ----------
    Incropera, F. P. et al., *Fundamentals of Heat and Mass Transfer*, 6th ed., Wiley
    (2007), section 5.1 (lumped capacitance; section number from memory).

    Examples
    --------
    By hand: 9000 kg at 3400 J/(kg K) and a 2100 kg steel wall at 490 J/(kg K) give
    3.06e7 + 1.029e6 = 3.1629e7 J/K:

    >>> heat_capacity(9000.0, 3400.0, 2100.0 * 490.0)
    31629000.0
    """
    return mass * specific_heat + wall_heat_capacity


@dataclass(frozen=True)
class ConstantSource:
    """Heat released at a constant rate (an agitator, a pump, a steady reaction).

    Parameters
    ----------
    power : float, [W]
        P_c, may be negative for a constant heat sink.
    """

    power: float


@dataclass(frozen=True)
class DecayingSource:
    r"""Heat released at an exponentially decaying rate (decay heat, a reaction dying away).

    Parameters
    ----------
    power : float, [W]
        P_i, the rate at t = 0.
    time_constant : float, [s]
        a_i > 0.
    role : str or None, default None
        "synthesis" for the remaining heat of the desired reaction given without kinetics (it
        enters the MTSR and makes cooling failure the default scenario), else None.

    Notes
    -----
    .. math:: P(t) = P_i e^{-t/a_i}, \qquad \int_0^\infty P(t)\,dt = P_i a_i
    """

    power: float
    time_constant: float
    role: str | None = None


@dataclass(frozen=True)
class HeatingMedium:
    r"""A jacket or coil left on, at a fixed medium temperature.

    Parameters
    ----------
    medium_temperature : float, [K]
        T_m, the temperature of the medium (steam, hot oil, a warm cooling loop).
    ua : float, [W/K]
        ua >= 0, conductance between the medium and the contents.

    Notes
    -----
    .. math:: P_m(T) = ua\,(T_m - T)

    It heats while the contents are colder than the medium and cools above it; it
    enters the linear part of the balance (:func:`screening.core.terms.conductance_and_drive`).
    """

    medium_temperature: float  # K
    ua: float  # W/K


@dataclass(frozen=True)
class ArrheniusSource:
    r"""Temperature-dependent heat release per kg of contents (a reaction or a decomposition).

    Parameters
    ----------
    specific_power : float, [W/kg]
        q_ref >= 0, the rate at ``reference_temperature`` per unit of the conversion function
        f(X): for an n-th order reaction (f(0) = 1) the rate at zero conversion; for an
        autocatalytic one Delta h times its rate constant k_ref.
    reference_temperature : float, [K]
        T_ref > 0.
    activation_energy : float, [J/mol]
        E >= 0.
    order : float, [-], default 0
        n >= 0, reaction order in the remaining fraction 1 - X.
    specific_heat_of_reaction : float or None, [J/kg], default None
        Delta h > 0, heat released per kg of contents at full conversion.  None: not
        known; the release is then taken as zero order and unbounded (conservative).
    accumulated_fraction : float, [-], default 1
        X_ac in [0, 1], the fraction of the heat of reaction still to be released
        (unreacted, accumulated reactant); conversion starts at X_0 = 1 - X_ac.
    gas_generating : bool, default False
        The reaction makes permanent gas, so boiling does not temper it.
    tested_range : (float, float) or None, [K], default None
        Temperatures over which the kinetics were measured; used to flag extrapolation.

    role : str, default "decomposition"
        "synthesis" (the desired reaction: its accumulated heat sets the MTSR) or
        "decomposition" (a self-heating hazard: it sets T_D24, TMRad and the severity).
    label : str or None, default None
        How the output names the source (the case's label and place).
    autocatalytic_order : float, [-], default 0
        m; 0 for an n-th order reaction, m > 0 for an autocatalytic one (which then needs a
        heat of reaction).
    initiation : float, [-], default 0
        z >= 0, the ratio of the initiation to the autocatalytic rate constant (autocatalytic
        only; taken as independent of temperature).

    Notes
    -----
    .. math:: q(T, X) = q_{ref} \exp\left[-\frac{E}{R}\left(\frac{1}{T}
              - \frac{1}{T_{ref}}\right)\right] f(X), \qquad
              \frac{dX}{dt} = \frac{q(T, X)}{\Delta h}

    with the conversion function :math:`f(X) = (1 - X)^n` (n-th order) or
    :math:`f(X) = (1 - X)^n (X^m + z)` (autocatalytic), written once in
    :func:`screening.core.arrhenius.conversion_function`.  Fitting n-th order kinetics at
    zero conversion understates an autocatalytic reaction, whose rate rises as it converts:
    not conservative.

    References
    ----------
    Arrhenius, S., Z. Phys. Chem. 4 (1889) 226 (from memory); Stoessel, F., *Thermal
    Safety of Chemical Processes*, Wiley-VCH (2008) (accumulation and the adiabatic
    temperature rise).
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
    autocatalytic_order: float = 0.0  # m; 0: n-th order
    initiation: float = 0.0  # z, autocatalytic only

    @property
    def autocatalytic(self) -> bool:
        """Whether the rate follows the autocatalytic form (1 - X)^n (X^m + z)."""
        return self.autocatalytic_order > 0


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
    """External pool-fire heat input, already evaluated at the boundary.

    Parameters
    ----------
    power : float, [W]
        Q, the API 521 / ISO 23251 wetted-area correlation result
        (:func:`screening.core.fire_exposure.api521_fire_heat_input`).
    wetted_area : float, [m^2]
        Wetted area counted (up to 7.6 m above the fire base).
    environment_factor : float, [-]
        F in (0, 1].
    drainage_and_firefighting : bool
        True: the constant 43,200; False: 70,900.

    Notes
    -----
    The fields other than ``power`` document how it was obtained.  The correlation is a
    net heat input: no heat loss to ambient is to be credited on the exposed surface.

    References
    ----------
    API Standard 521, *Pressure-relieving and Depressuring Systems*; ISO 23251 (see
    :mod:`screening.core.fire_exposure`).
    """

    power: float
    wetted_area: float  # m^2 counted (up to 7.6 m above the fire base)
    environment_factor: float
    drainage_and_firefighting: bool


@dataclass(frozen=True)
class Limit:
    """A named temperature that matters (a set point, a decomposition onset, a boiling point).

    Parameters
    ----------
    name : str
    temperature : float, [K]
    """

    name: str
    temperature: float  # K


@dataclass(frozen=True)
class BoilingData:
    """Boiling point and latent heat of the contents, and how the vessel is vented.

    Parameters
    ----------
    boiling_point : float, [K]
        T_b at the venting pressure.
    latent_heat : float, [J/kg]
        L > 0.
    venting : {"closed", "open"}, default "closed"
        "open" (adequately vented, vapour leaves at a known pressure) gives tempering
        credit: the temperature is held at T_b while the net heat input boils off
        contents at P / L.  "closed" gives none: temperature and pressure keep rising.

    Notes
    -----
    Boiling tempers a runaway only when the vapour can leave; a decomposition that makes
    permanent gas is not tempered, and a mixture's boiling point climbs as the light
    component leaves (common practice).
    """

    boiling_point: float  # K
    latent_heat: float  # J/kg
    venting: str = "closed"  # "open" gives tempering credit, "closed" none


@dataclass(frozen=True)
class ScreeningModel:
    r"""One vessel, in SI, ready for the physics core.

    Parameters
    ----------
    contents_mass : float, [kg]
        m > 0.
    contents_specific_heat : float, [J/(kg K)]
        c_p > 0.
    wall_heat_capacity : float, [J/K]
        C_wall >= 0 (wall mass times wall specific heat; 0 if not counted).
    ua : float, [W/K]
        UA >= 0, heat loss to ambient (0: adiabatic).
    ambient_temperature : float, [K]
        T_a.
    initial_temperature : float, [K]
        T_0, the contents at t = 0 (when cooling is lost).
    horizon : float, [s]
        End of the time window examined.
    constant_sources : tuple of ConstantSource, default ()
    decaying_sources : tuple of DecayingSource, default ()
    heating_media : tuple of HeatingMedium, default ()
    arrhenius_sources : tuple of ArrheniusSource, default ()
    fire_sources : tuple of FireExposure, default ()
    limits : tuple of Limit, default ()
    boiling : BoilingData or None, default None
    maximum_technical_temperature : float or None, [K], default None
        MTT for the criticality classes (boiling point when open, the allowed limit
        when closed).
    mixing : {"stirred", "unstirred"}, default "stirred"
        "unstirred" contents are judged by conduction (Frank-Kamenetskii) as well.
    thermal_conductivity : float or None, [W/(m K)], default None
        k of unstirred contents.
    characteristic_length : float or None, [m], default None
        L_c = V / A_s, for the Biot number.
    conduction_geometry : {"slab", "cylinder", "sphere"} or None, default None
        Shape for the Frank-Kamenetskii criterion (unstirred contents).
    conduction_radius : float or None, [m], default None
        Half-thickness of a slab, radius of a cylinder or sphere.
    density : float or None, [kg/m^3], default None
    surface_coefficient : float or None, [W/(m^2 K)], default None
        h at the outer surface, for the Biot number h r / k.
    daily_cycle : DailyCycle or None, default None
        The daily cycle of the air and the sun (:class:`screening.core.daily_cycle.DailyCycle`); with it
        ``ambient_temperature`` is the daily mean of the air and the loss term is UA (T - T_eff(t)).

    Notes
    -----
    .. math:: C \frac{dT}{dt} = \sum P_c + \sum_i P_i e^{-t/a_i} + \sum Q_{fire}
              + \sum_k ua_k (T_{m,k} - T) + m \sum_j q_j(T, X_j) - UA (T - T_a)

    Well stirred: one temperature for contents and wall.

    Examples
    --------
    By hand: C = 9000 kg x 3400 J/(kg K) + 1.029e6 J/K = 3.1629e7 J/K:

    >>> model = ScreeningModel(9000.0, 3400.0, 2100.0 * 490.0, 180.0, 305.15, 303.15, 86400.0,
    ...                        constant_sources=(ConstantSource(2200.0),))
    >>> model.heat_capacity
    31629000.0
    """

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
    daily_cycle: object = None  # screening.core.daily_cycle.DailyCycle: ambient_temperature is then the daily mean

    @property
    def heat_capacity(self) -> float:
        """Total heat capacity C = m c + wall, J/K."""
        return heat_capacity(self.contents_mass, self.contents_specific_heat, self.wall_heat_capacity)
