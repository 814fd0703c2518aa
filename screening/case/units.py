"""Unit parsing at the boundary: text with units in, SI floats out.

This is the only module that touches pint.  Quantities are written as text
(``"2.4 m"``, ``"75 degF"``, ``"1.2e5 Btu/h"``).  A temperature unit inside a
compound unit (``Btu/(lb*degF)``, ``W/(m^2*degC)``) means a temperature
*difference* and is converted as such.  A temperature field (and a temperature
difference field) takes exactly one temperature unit, from the accepted spellings
below, optionally in redundant parentheses; anything else is refused, never read
as a multiplier.
"""
from __future__ import annotations

import functools
import math
import re
from dataclasses import dataclass

from screening.errors import InputError
from screening.resources import shipped, unit_table_path

# Each dimension the case format uses: name -> (SI unit text, pint dimensionality string)
DIMENSIONS: dict[str, tuple[str, str]] = {
    "length": ("m", "[length]"),
    "area": ("m^2", "[length] ** 2"),
    "volume": ("m^3", "[length] ** 3"),
    "mass": ("kg", "[mass]"),
    "density": ("kg/m^3", "[mass] / [length] ** 3"),
    "time": ("s", "[time]"),
    "temperature": ("K", "[temperature]"),
    "temperature_difference": ("K", "[temperature]"),
    "power": ("W", "[mass] * [length] ** 2 / [time] ** 3"),
    "specific_power": ("W/kg", "[length] ** 2 / [time] ** 3"),
    "specific_heat": ("J/(kg*K)", "[length] ** 2 / [time] ** 2 / [temperature]"),
    "heat_capacity": ("J/K", "[mass] * [length] ** 2 / [time] ** 2 / [temperature]"),
    "conductance": ("W/K", "[mass] * [length] ** 2 / [time] ** 3 / [temperature]"),
    "heat_transfer_coefficient": ("W/(m^2*K)", "[mass] / [time] ** 3 / [temperature]"),
    "specific_conductance": ("W/(kg*K)", "[length] ** 2 / [time] ** 3 / [temperature]"),
    "thermal_conductivity": ("W/(m*K)", "[mass] * [length] / [time] ** 3 / [temperature]"),
    "molar_energy": ("J/mol", "[mass] * [length] ** 2 / [time] ** 2 / [substance]"),
    "specific_energy": ("J/kg", "[length] ** 2 / [time] ** 2"),
    "fraction": ("1", "[]"),
    "irradiance": ("W/m^2", "[mass] / [time] ** 3"),
    "rate_constant": ("1/s", "1 / [time]"),
}

# Human words for error messages.
DIMENSION_WORDS = {
    "length": "a length (e.g. 2.4 m, 8 ft)",
    "area": "an area (e.g. 12 m^2, 130 ft^2)",
    "volume": "a volume (e.g. 8 m^3, 2100 gal)",
    "mass": "a mass (e.g. 9000 kg, 12 t, 20000 lb)",
    "density": "a density (e.g. 1100 kg/m^3)",
    "time": "a time (e.g. 4 h, 30 min)",
    "temperature": "a temperature (e.g. 30 degC, 86 degF, 303.15 K)",
    "temperature_difference": "a temperature difference (e.g. 2 K, 3.6 delta_degF)",
    "power": "a power (e.g. 2.2 kW, 1.2e5 Btu/h)",
    "specific_power": "a power per mass (e.g. 2 W/kg, 0.5 mW/g)",
    "specific_heat": "a specific heat (e.g. 3.4 kJ/(kg*K), 0.8 Btu/(lb*degF))",
    "heat_capacity": "a heat capacity (e.g. 5 MJ/K)",
    "conductance": "a heat-loss conductance UA (e.g. 180 W/K, 950 Btu/(h*degF))",
    "heat_transfer_coefficient": "a heat-transfer coefficient (e.g. 4.5 W/(m^2*K))",
    "specific_conductance": "a heat loss per kg of contents and kelvin (e.g. 90 mW/(kg*K))",
    "thermal_conductivity": "a thermal conductivity (e.g. 0.55 W/(m*K))",
    "molar_energy": "an activation energy (e.g. 95 kJ/mol)",
    "specific_energy": "an energy per mass (e.g. 300 kJ/kg)",
    "fraction": "a fraction (e.g. 70 %, 0.7)",
    "irradiance": "an irradiance (e.g. 850 W/m^2)",
    "rate_constant": "a rate constant (e.g. 2e-5 1/s, 0.07 1/h)",
}

# Temperature scales: scale -> (K per degree, offset in K), so that T[K] = value * scale + offset.
# By definition of the scales: T[K] = T[degC] + 273.15; T[K] = (T[degF] + 459.67) * 5/9;
# T[K] = T[degR] * 5/9; T[K] = T[degRe] * 5/4 + 273.15.
_SCALES: dict[str, tuple[float, float]] = {
    "K": (1.0, 0.0),
    "degC": (1.0, 273.15),
    "degF": (5.0 / 9.0, 459.67 * 5.0 / 9.0),
    "degR": (5.0 / 9.0, 0.0),
    "degRe": (5.0 / 4.0, 273.15),
}
# The spellings of one temperature, by scale: pint's name, symbol and aliases of kelvin,
# degree_Celsius, degree_Fahrenheit, degree_Rankine and degree_Reaumur, plus C, F and R, which a
# temperature field has always read as degC, degF and degR.  A temperature field takes exactly one
# of these (optionally in redundant parentheses) and nothing else: no prefixes (mK), no other
# temperature units of pint's (planck_temperature, atomic_unit_of_temperature), no expressions
# (degC*m/m).  tests/case/test_temperature_units.py checks this table against pint's registry.
_TEMPERATURE_SPELLINGS: dict[str, tuple[str, ...]] = {
    "K": ("K", "kelvin", "degK", "°K", "degree_Kelvin", "degreeK"),
    "degC": ("degC", "°C", "celsius", "degree_Celsius", "degreeC", "C"),
    "degF": ("degF", "°F", "fahrenheit", "degree_Fahrenheit", "degreeF", "F"),
    "degR": ("degR", "°R", "rankine", "degree_Rankine", "degreeR", "R"),
    "degRe": ("degRe", "°Re", "reaumur", "degree_Reaumur", "degreeRe", "degree_Réaumur", "réaumur"),
}
# pint's difference units of the offset scales (a temperature difference field also takes these).
_DIFFERENCE_SPELLINGS: dict[str, tuple[str, ...]] = {
    "degC": ("delta_degC", "delta_celsius", "delta_degree_Celsius", "delta_degreeC",
             "Δ°C", "ΔdegC", "Δcelsius", "ΔdegreeC"),
    "degF": ("delta_degF", "delta_fahrenheit", "delta_degree_Fahrenheit", "delta_degreeF",
             "Δ°F", "ΔdegF", "Δfahrenheit", "ΔdegreeF"),
    "degRe": ("delta_degRe", "delta_reaumur", "delta_degree_Reaumur", "delta_degreeRe", "delta_degree_Réaumur",
              "delta_réaumur", "Δ°Re", "ΔdegRe", "Δreaumur", "ΔdegreeRe", "Δdegree_Réaumur", "Δréaumur"),
}
_SCALE_OF = {spelling: scale for scale, spellings in _TEMPERATURE_SPELLINGS.items() for spelling in spellings}
_DIFFERENCE_SCALE_OF = {spelling: scale for scale, spellings in _DIFFERENCE_SPELLINGS.items()
                        for spelling in spellings}
# Inside a compound unit of another dimension every temperature unit is a difference: the spellings of the
# offset scales are swapped for pint's difference units (C and F stay coulomb and farad there).
_OFFSET_TO_DIFFERENCE = {spelling: _DIFFERENCE_SPELLINGS[scale][0] for scale in ("degC", "degF", "degRe")
                         for spelling in _TEMPERATURE_SPELLINGS[scale] if spelling not in ("C", "F")}
# The same spellings with case and spaces ignored, to suggest the right one for 'Celsius', 'deg C', '°c'.
_SPELLING_GUESS: dict[str, str] = {}
for _spelling in (*_SCALE_OF, *_DIFFERENCE_SCALE_OF):
    _SPELLING_GUESS.setdefault(_spelling.casefold(), _spelling)

_NUMBER = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*$")
_WORD = re.compile(r"(?:[^\W\d]|°)(?:\w|°)*")  # a unit name: letters (any script), digits, _, °
# infinity and not-a-number as YAML, JSON, TOML and Python spell them (.inf, -.Inf, Infinity, nan, .NaN ...)
_NON_FINITE = re.compile(r"^\s*[-+]?\.?(?:inf(?:inity)?|nan)(?![A-Za-z0-9_])|^\s*[-+]?∞", re.IGNORECASE)
FINITE_EXPECTED = "a finite number is expected"


class UnitError(InputError, ValueError):
    """A quantity could not be read; the message says what was wrong and what is expected."""


@dataclass(frozen=True)
class Parsed:
    value: float  # SI
    text: str  # as written
    unit: str  # unit text as written ("" if none)


@functools.lru_cache(maxsize=1)
def registry():
    """The shared pint registry (built once; cached on disk by pint where possible)."""
    import pint

    try:
        ureg = pint.UnitRegistry(cache_folder=":auto:")
    except Exception:  # pragma: no cover - cache folder not writable
        ureg = pint.UnitRegistry()
    return ureg


def _normalise_unit_text(unit: str) -> str:
    unit = unit.strip().replace("µ", "u").replace("μ", "u").replace("·", "*").replace("²", "^2").replace("³", "^3")
    # Btu means the International Table Btu (1055.05585262 J), not pint's rounded 1055.056 J.
    unit = re.sub(r"\b(?:Btu|BTU|btu)\b", "Btu_it", unit)
    return unit


def _compound_to_differences(unit: str) -> str:
    """Inside a compound unit every temperature unit is a difference."""
    return _WORD.sub(lambda m: _OFFSET_TO_DIFFERENCE.get(m.group(0), m.group(0)), unit)


def strip_parentheses(unit: str) -> str:
    """The unit text without redundant outer parentheses: '((degC))' -> 'degC'; '(K)*(K)' is left alone."""
    text = unit.strip()
    while text.startswith("(") and text.endswith(")"):
        depth = 0
        for i, ch in enumerate(text):
            depth += ch == "("
            depth -= ch == ")"
            if depth == 0 and i < len(text) - 1:
                return text  # the first parenthesis closes before the end
        text = text[1:-1].strip()
    return text


def temperature_scale(unit: str) -> str | None:
    """The scale ("K", "degC", "degF", "degR", "degRe") of one accepted temperature unit text, else None."""
    return _SCALE_OF.get(strip_parentheses(unit))


def _accepted_temperature_units(dimension: str) -> str:
    text = "; ".join(f"{scale} (also {', '.join(spellings[1:])})"
                     for scale, spellings in _TEMPERATURE_SPELLINGS.items())
    if dimension == "temperature_difference":
        text += "; or a difference unit: " + "; ".join(
            f"{spellings[0]} (also {', '.join(spellings[1:])})" for spellings in _DIFFERENCE_SPELLINGS.values())
    return text


def _temperature_factor(unit: str, dimension: str) -> tuple[float, float]:
    """(scale, offset) of a temperature or temperature-difference field: exactly one temperature unit."""
    text = strip_parentheses(unit)
    scale = _SCALE_OF.get(text)
    if scale is not None:
        factor, offset = _SCALES[scale]
        return (factor, offset) if dimension == "temperature" else (factor, 0.0)
    scale = _DIFFERENCE_SCALE_OF.get(text)
    if scale is not None and dimension == "temperature_difference":
        return (_SCALES[scale][0], 0.0)
    raise UnitError(f"{_why_not_a_temperature_unit(unit, text, dimension)}; expected {DIMENSION_WORDS[dimension]}, "
                    f"written with one of the accepted units: {_accepted_temperature_units(dimension)}")


def _why_not_a_temperature_unit(unit: str, text: str, dimension: str) -> str:
    """What is wrong with a unit text refused in a temperature field (pint is loaded only to say so)."""
    if text == "":
        return "a number without a unit"
    if text in _DIFFERENCE_SCALE_OF:
        return f"'{unit}' is a temperature difference, not a temperature"
    guess = _SPELLING_GUESS.get("".join(text.split()).casefold())
    if guess is not None:
        return f"'{unit}' is not a unit as written (units are case-sensitive; did you mean '{guess}'?)"
    import pint

    ureg = registry()
    try:
        dimensionality = ureg.get_dimensionality(_normalise_unit_text(text))
    except pint.errors.UndefinedUnitError as exc:
        bad = ", ".join(f"'{u}'" for u in getattr(exc, "unit_names", ()) or ()) or f"'{unit}'"
        return f"unknown unit {bad}"
    except Exception:
        return f"cannot read the unit '{unit}'"
    if dimensionality != ureg.get_dimensionality("[temperature]"):
        return f"'{unit}' is not {DIMENSION_WORDS[dimension].split(' (')[0]}"
    if _WORD.fullmatch(text):
        return (f"'{unit}' is not one of the temperature units accepted here (prefixed units such as mK and units "
                f"far from process temperatures are refused)")
    return f"'{unit}' is an expression, not one temperature unit"


def _refuse_odd_temperature_units(ureg, unit: str, text: str, dimension: str) -> None:
    """Refuse a compound unit holding a temperature unit that is not one of the accepted spellings
    (``W/mK`` is watts per millikelvin, ``W/planck_temperature`` is absurd)."""
    import pint

    temperature = ureg.get_dimensionality("[temperature]")
    for word in _WORD.findall(text):
        if word in _SCALE_OF or word in _DIFFERENCE_SCALE_OF:
            continue
        try:
            if ureg.get_dimensionality(word) != temperature:
                continue
        except (pint.errors.PintError, ValueError, TypeError, KeyError, AttributeError):
            continue
        hint = ""
        if word.startswith("m") and word[1:] in _SCALE_OF:
            hint = f" ('{word}' reads as milli-{word[1:]}; for metre times {word[1:]} write m*{word[1:]})"
        raise UnitError(f"'{unit}' contains '{word}', which is not one of the accepted temperature units{hint}; "
                        f"expected {DIMENSION_WORDS[dimension]}, with K, degC, degF, degR or degRe (or another "
                        f"spelling of one of them) as its temperature unit")


# Units common on data sheets, by dimension. Their SI factors are computed with pint once and
# shipped in screening/data/unit_table.json (rebuilt with `python -m screening.case.units`), so that a
# case that uses only these never pays for building a pint registry. A test checks the table
# against pint; any other unit text goes to pint.
COMMON_UNITS: dict[str, tuple[str, ...]] = {
    "length": ("m", "mm", "cm", "km", "ft", "in", "inch", "yd"),
    "area": ("m^2", "m**2", "cm^2", "mm^2", "ft^2", "ft**2", "in^2"),
    "volume": ("m^3", "m**3", "L", "l", "liter", "litre", "mL", "gal", "ft^3", "ft**3", "bbl"),
    "mass": ("kg", "g", "t", "tonne", "lb", "lbs", "mg"),
    "density": ("kg/m^3", "kg/m**3", "g/cm^3", "g/mL", "kg/L", "lb/ft^3", "lb/gal", "t/m^3"),
    "time": ("s", "sec", "min", "h", "hr", "hour", "hours", "d", "day", "days", "week", "ms"),
    "power": ("W", "kW", "MW", "mW", "Btu/h", "Btu/hr", "hp", "kcal/h", "J/s", "MJ/h", "kJ/h", "kJ/s"),
    "specific_power": ("W/kg", "mW/g", "mW/kg", "W/g", "kW/kg", "W/t", "Btu/(lb*h)", "J/(kg*s)"),
    "specific_heat": ("J/(kg*K)", "kJ/(kg*K)", "J/(g*K)", "kJ/(kg*degC)", "J/(kg*degC)", "J/(g*degC)",
                      "Btu/(lb*degF)", "cal/(g*K)", "cal/(g*degC)", "kcal/(kg*K)", "kcal/(kg*degC)",
                      "kJ/kg/K", "J/kg/K"),
    "heat_capacity": ("J/K", "kJ/K", "MJ/K", "Btu/degF", "J/degC", "kJ/degC"),
    "conductance": ("W/K", "kW/K", "W/degC", "kW/degC", "Btu/(h*degF)", "Btu/(hr*degF)", "Btu/h/degF"),
    "heat_transfer_coefficient": ("W/(m^2*K)", "W/(m^2*degC)", "W/m^2/K", "kW/(m^2*K)",
                                  "Btu/(h*ft^2*degF)", "Btu/(hr*ft^2*degF)"),
    "specific_conductance": ("W/(kg*K)", "mW/(kg*K)", "W/(kg*degC)", "mW/(kg*degC)", "W/kg/K", "mW/kg/K"),
    "thermal_conductivity": ("W/(m*K)", "W/(m*degC)", "W/m/K", "Btu/(h*ft*degF)", "Btu/(hr*ft*degF)"),
    "molar_energy": ("J/mol", "kJ/mol", "kcal/mol", "cal/mol", "MJ/kmol", "kJ/kmol"),
    "specific_energy": ("J/kg", "kJ/kg", "MJ/kg", "J/g", "kJ/g", "cal/g", "kcal/kg", "Btu/lb"),
    "temperature_difference": ("delta_degC", "delta_degF"),
    "irradiance": ("W/m^2", "W/m**2", "kW/m^2"),
    "rate_constant": ("1/s", "1/min", "1/h", "1/d", "s^-1", "h^-1"),
}


@functools.lru_cache(maxsize=1)
def _shipped_table() -> dict:
    import json

    try:
        text = shipped("data/unit_table.json").read_text(encoding="utf-8")
    except (FileNotFoundError, OSError):
        return {}
    return json.loads(text)


def build_unit_table() -> dict:
    """SI factors of COMMON_UNITS computed with pint (for screening/data/unit_table.json)."""
    table: dict[str, dict[str, float]] = {}
    for dimension, units in COMMON_UNITS.items():
        table[dimension] = {u: _pint_factor(u, dimension)[0] for u in units}
    return table


@functools.lru_cache(maxsize=4096)
def unit_factor(unit: str, dimension: str) -> tuple[float, float]:
    """(scale, offset) such that SI = value * scale + offset, for a unit text.

    Raises UnitError for an unknown unit or the wrong dimension.
    """
    stripped = unit.strip()
    if stripped in ("ton", "tons"):
        raise UnitError("'ton' is ambiguous (short ton 907.18 kg, long ton 1016.05 kg, tonne 1000 kg); "
                        "write t or tonne, short_ton or long_ton")
    shipped = _shipped_table().get(dimension, {})
    if stripped in shipped:
        return (float(shipped[stripped]), 0.0)
    return _pint_factor(unit, dimension)


def _pint_factor(unit: str, dimension: str) -> tuple[float, float]:
    if dimension in ("temperature", "temperature_difference"):
        return _temperature_factor(unit, dimension)
    unit = _normalise_unit_text(unit)
    if dimension == "fraction":
        if unit in ("%", "percent"):
            return (0.01, 0.0)
        if unit == "":
            return (1.0, 0.0)
    si_text, dim_text = DIMENSIONS[dimension]
    if unit == "":
        raise UnitError(f"a number without a unit; expected {DIMENSION_WORDS[dimension]}")
    ureg = registry()
    import pint

    text = _compound_to_differences(unit)
    try:
        q = ureg.Quantity(1.0, ureg.parse_units(text))
    except (pint.errors.UndefinedUnitError,) as exc:
        bad = ", ".join(f"'{u}'" for u in getattr(exc, "unit_names", ()) or ()) or f"'{unit}'"
        raise UnitError(f"unknown unit {bad}; expected {DIMENSION_WORDS[dimension]}") from None
    except Exception:
        raise UnitError(f"cannot read the unit '{unit}'; expected {DIMENSION_WORDS[dimension]}") from None
    if q.dimensionality != ureg.get_dimensionality(dim_text):
        raise UnitError(f"'{unit}' is not {DIMENSION_WORDS[dimension].split(' (')[0]}; expected {DIMENSION_WORDS[dimension]}")
    _refuse_odd_temperature_units(ureg, unit, text, dimension)
    try:
        scale = float(q.to(ureg.parse_units(si_text.replace("K", "kelvin")) if dimension != "fraction" else "dimensionless").magnitude)
    except Exception:  # pragma: no cover
        raise UnitError(f"cannot convert '{unit}' to {si_text}") from None
    return (scale, 0.0)


def non_finite(value) -> bool:
    """Whether a number, or a text that starts with one, is infinite or not a number.

    Every spelling counts: a float or int from any file format, ``inf``, ``-.inf``, ``Infinity``,
    ``nan``, ``.NaN`` or ``1e999`` (too large for a float) at the start of a text such as ``"inf kg"``.
    """
    if isinstance(value, bool):
        return False
    if isinstance(value, (int, float)):
        try:
            return not math.isfinite(value)
        except OverflowError:  # an integer too large for a float
            return True
    if isinstance(value, str):
        if _NON_FINITE.match(value):
            return True
        m = _NUMBER.match(value.strip().rstrip("%"))
        return bool(m) and not math.isfinite(float(m.group(1)))
    return False


def not_finite_message(value, expected: str | None = None) -> str:
    """'<value> is not a finite number; a finite number is expected[: <expected>]'."""
    if isinstance(value, str):
        shown = f"'{value}'" if len(value) <= 60 else f"'{value[:57]}...'"
    elif isinstance(value, float):
        shown = str(value)
    else:
        shown = "a whole number of more than 308 digits"
    return f"{shown} is not a finite number; {FINITE_EXPECTED}" + (f": {expected}" if expected else "")


def split_number(text: str) -> tuple[float, str]:
    """Split '12.5 kg' into (12.5, 'kg'); raises UnitError if there is no leading finite number."""
    if non_finite(text):
        raise UnitError(not_finite_message(text))
    m = _NUMBER.match(text)
    if not m:
        raise UnitError(f"'{text}' does not start with a number")
    return float(m.group(1)), m.group(2)


def parse_quantity(value, dimension: str) -> Parsed:
    """Parse text with a unit into an SI float of the given dimension.

    A bare number is accepted only for fractions.  Raises UnitError.
    """
    if isinstance(value, bool):
        raise UnitError(f"expected {DIMENSION_WORDS[dimension]}, got {value!r}")
    if non_finite(value):
        raise UnitError(not_finite_message(value, DIMENSION_WORDS[dimension]))
    if isinstance(value, (int, float)):
        if dimension == "fraction":
            v = float(value)
            return Parsed(v, str(value), "")
        raise UnitError(f"the number {value!r} has no unit; expected {DIMENSION_WORDS[dimension]}, "
                        f"written as text with its unit")
    if not isinstance(value, str):
        raise UnitError(f"expected {DIMENSION_WORDS[dimension]} as text, got {type(value).__name__}")
    number, unit = split_number(value)
    scale, offset = unit_factor(unit, dimension)
    si = number * scale + offset
    if not math.isfinite(si):
        raise UnitError(f"'{value}' is not a finite number")
    return Parsed(si, value, unit)


def temperature_unit_of(text: str) -> str | None:
    """The display family ("degC", "degF", "K", "degR") of a temperature text, if any."""
    try:
        _, unit = split_number(text)
    except UnitError:
        return None
    scale = temperature_scale(unit)
    return scale if scale in ("degC", "degF", "K", "degR") else None


def kelvin_to(value_k: float, unit: str) -> float:
    """Convert an absolute temperature from K to a display unit."""
    if unit == "degC":
        return value_k - 273.15
    if unit == "degF":
        return value_k * 9.0 / 5.0 - 459.67
    if unit == "degR":
        return value_k * 9.0 / 5.0
    return value_k


def kelvin_difference_to(value_k: float, unit: str) -> float:
    """Convert a temperature difference from K to a display unit's difference."""
    return value_k * 9.0 / 5.0 if unit in ("degF", "degR") else value_k


if __name__ == "__main__":  # rebuild the shipped table of common units
    import json

    target = unit_table_path()
    target.parent.mkdir(exist_ok=True)
    target.write_text(json.dumps(build_unit_table(), indent=1, sort_keys=True) + "\n", encoding="utf-8")
    print(f"wrote {target}")
