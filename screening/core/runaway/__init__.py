"""Runaway criteria for a self-heating mass: TMRad and T_D24, Semenov, Frank-Kamenetskii, Stoessel's classes.

Pure SI functions of temperatures, masses and :class:`screening.core.model.ArrheniusSource` sequences.

- :mod:`~screening.core.runaway.rates`: heat generation and loss curves, shared numerics, kinetics cautions
- :mod:`~screening.core.runaway.tmr`: time to maximum rate under adiabatic conditions, T_D24
- :mod:`~screening.core.runaway.semenov`: critical ambient and steady states of a well-stirred mass
- :mod:`~screening.core.runaway.stoessel`: adiabatic rise, MTSR, criticality, probability and severity classes
- :mod:`~screening.core.runaway.autocatalytic`: TMRad and T_D24 of the integrated adiabatic history, the
  isothermal induction time (autocatalytic reactions)
- :mod:`~screening.core.runaway.frank_kamenetskii`: critical conditions of unstirred contents with conduction

Each function documents its equation, its assumptions (well stirred or conduction, zero
order or n-th order at a given conversion, adiabatic) and its source, with a worked example.

References
----------
Townsend, D. I. and Tou, J. C., Thermochimica Acta 37 (1980) 1-30 (TMRad).
Semenov, N. N., Zeitschrift fuer Physik 48 (1928) 571-582 (volume and pages from memory).
Frank-Kamenetskii, D. A., *Diffusion and Heat Exchange in Chemical Kinetics*, Princeton
University Press (1955), 2nd ed. Plenum (1969).
Stoessel, F., *Thermal Safety of Chemical Processes*, Wiley-VCH (2008) (from memory).
"""

from screening.core.runaway.autocatalytic import (
    METHOD_CLOSED_FORM,
    METHOD_INTEGRATED,
    induction_integral,
    isothermal_induction_time,
    t_d24_integrated,
    tmr_adiabatic_integrated,
)
from screening.core.runaway.frank_kamenetskii import (
    frank_kamenetskii_critical,
    frank_kamenetskii_critical_ambient,
    frank_kamenetskii_parameter,
)
from screening.core.runaway.rates import (
    DEFAULT_MAX_EXTRAPOLATION,
    FK_GEOMETRIES,
    SEARCH_RANGE,
    SECONDS_PER_HOUR,
    T_D24_RANGE,
    T_D24_TIME,
    WARNING_CONSTANT_SOURCES_NOT_IN_RISE,
    WARNING_EXTRAPOLATION,
    WARNING_FK_ARRHENIUS_ONLY,
    WARNING_FK_SURFACE_AT_AMBIENT,
    WARNING_LOW_SEVERITY_PRESSURE,
    WARNING_TRANSIENT_SOURCES,
    WARNING_UNBOUNDED_RISE,
    WARNING_INITIATION_TEMPERATURE,
    WARNING_ZERO_CONVERSION,
    WARNING_ZERO_CONVERSION_REACTION,
    heat_generation,
    heat_generation_slope,
    heat_loss,
    initiation_warnings,
    kinetics_warnings,
    rate_conversion,
    zero_conversion_warning,
)
from screening.core.runaway.semenov import (
    SemenovCritical,
    SteadyStates,
    semenov_critical_ambient,
    semenov_critical_medium_temperature,
    steady_states,
)
from screening.core.runaway.stoessel import (
    accumulated_temperature_rise,
    adiabatic_temperature_rise,
    criticality_class,
    decaying_temperature_rise,
    mtsr,
    possible_criticality_classes,
    severity_class,
    tmr_probability_class,
)
from screening.core.runaway.tmr import t_d24, tmr_adiabatic

__all__ = [
    "DEFAULT_MAX_EXTRAPOLATION",
    "FK_GEOMETRIES",
    "SEARCH_RANGE",
    "SECONDS_PER_HOUR",
    "SemenovCritical",
    "SteadyStates",
    "T_D24_RANGE",
    "T_D24_TIME",
    "WARNING_CONSTANT_SOURCES_NOT_IN_RISE",
    "WARNING_EXTRAPOLATION",
    "WARNING_FK_ARRHENIUS_ONLY",
    "WARNING_FK_SURFACE_AT_AMBIENT",
    "WARNING_LOW_SEVERITY_PRESSURE",
    "WARNING_TRANSIENT_SOURCES",
    "WARNING_UNBOUNDED_RISE",
    "METHOD_CLOSED_FORM",
    "METHOD_INTEGRATED",
    "WARNING_INITIATION_TEMPERATURE",
    "WARNING_ZERO_CONVERSION",
    "WARNING_ZERO_CONVERSION_REACTION",
    "accumulated_temperature_rise",
    "adiabatic_temperature_rise",
    "criticality_class",
    "decaying_temperature_rise",
    "frank_kamenetskii_critical",
    "frank_kamenetskii_critical_ambient",
    "frank_kamenetskii_parameter",
    "heat_generation",
    "heat_generation_slope",
    "heat_loss",
    "induction_integral",
    "initiation_warnings",
    "isothermal_induction_time",
    "kinetics_warnings",
    "mtsr",
    "possible_criticality_classes",
    "rate_conversion",
    "semenov_critical_ambient",
    "semenov_critical_medium_temperature",
    "severity_class",
    "steady_states",
    "t_d24",
    "t_d24_integrated",
    "tmr_adiabatic",
    "tmr_adiabatic_integrated",
    "tmr_probability_class",
    "zero_conversion_warning",
]
