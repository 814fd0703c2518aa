"""Unit parsing against exact unit definitions and against pint; customary and SI cases agree.

Exact definitions used (by definition, so exact):
* 1 lb = 0.45359237 kg (international pound, 1959); 1 ft = 0.3048 m; 1 in = 0.0254 m;
  1 US gal = 231 in^3 = 3.785411784e-3 m^3;
* 1 Btu (International Table) = 1055.05585262 J (references.md), so 1 Btu/(lb degF) = 4186.8 J/(kg K);
* T[K] = T[degC] + 273.15; T[K] = (T[degF] + 459.67) * 5/9; 1 degR = 5/9 K; a temperature unit inside a
  compound unit is a difference (references.md: 950 Btu/(h degF) = 501.15 W/K).
"""
from __future__ import annotations

import json
import math

import pint
import pytest

from screening.case.units import UnitError, kelvin_difference_to, kelvin_to, parse_quantity

LB, FT, INCH, BTU, HOUR = 0.45359237, 0.3048, 0.0254, 1055.05585262, 3600.0
DEGF = 5.0 / 9.0  # K per degF difference


def si(text, dimension):
    return parse_quantity(text, dimension).value


@pytest.mark.parametrize("text,dimension,expected", [
    ("1 lb", "mass", LB),  # exact definition
    ("20000 lb", "mass", 20000 * LB),
    ("12 t", "mass", 12000.0),  # tonne = 1000 kg (SI)
    ("1 ft", "length", FT),
    ("8 ft", "length", 8 * FT),
    ("1 in", "length", INCH),
    ("130 ft^2", "area", 130 * FT ** 2),
    ("1 ft^3", "volume", FT ** 3),
    ("2100 gal", "volume", 2100 * 231 * INCH ** 3),  # US gallon = 231 in^3
    ("62.4 lb/ft^3", "density", 62.4 * LB / FT ** 3),
    ("1 Btu/h", "power", BTU / HOUR),
    ("1.2e5 Btu/h", "power", 1.2e5 * BTU / HOUR),
    ("1 Btu/(lb*degF)", "specific_heat", 4186.8),  # references.md: exactly 4186.8 J/(kg K)
    ("0.8 Btu/(lb*degF)", "specific_heat", 0.8 * 4186.8),
    ("3.4 kJ/(kg*K)", "specific_heat", 3400.0),
    ("3.4 kJ/(kg*degC)", "specific_heat", 3400.0),  # degC inside a compound unit is a difference
    ("950 Btu/(h*degF)", "conductance", 950 * BTU / HOUR / DEGF),  # references.md: 501.15 W/K
    ("1 Btu/(h*ft^2*degF)", "heat_transfer_coefficient", BTU / HOUR / FT ** 2 / DEGF),
    ("1 W/(m^2*degF)", "heat_transfer_coefficient", 1.8),
    ("1 Btu/(h*ft*degF)", "thermal_conductivity", BTU / HOUR / FT / DEGF),
    ("4 h", "time", 14400.0),
    ("30 min", "time", 1800.0),
    ("2 d", "time", 172800.0),
    ("95 kJ/mol", "molar_energy", 95000.0),
    ("300 kJ/kg", "specific_energy", 3e5),
    ("1 Btu/lb", "specific_energy", BTU / LB),  # = 2326 J/kg exactly
    ("0.5 mW/g", "specific_power", 0.5),
    ("70 %", "fraction", 0.7),
])
def test_exact_unit_definitions(text, dimension, expected):
    assert si(text, dimension) == pytest.approx(expected, rel=1e-14)


def test_headline_conversions_from_references():
    # references.md: 950 Btu/(h degF) = 501.15 W/K; 1 Btu/(lb degF) = 4186.8 J/(kg K); 1 Btu = 1055.05585262 J.
    assert round(si("950 Btu/(h*degF)", "conductance"), 2) == 501.15
    assert si("1 Btu/(lb*degF)", "specific_heat") == pytest.approx(4186.8, rel=1e-15)
    assert si("3600 Btu/h", "power") == pytest.approx(1055.05585262, rel=1e-15)
    assert si("1 Btu/lb", "specific_energy") == pytest.approx(2326.0, rel=1e-15)  # exact: 1055.05585262/0.45359237


@pytest.mark.parametrize("text,expected", [
    ("32 degF", 273.15), ("212 degF", 373.15), ("-40 degF", 233.15), ("-459.67 degF", 0.0),
    ("86 degF", 303.15), ("0 degC", 273.15), ("25 degC", 298.15), ("-273.15 degC", 0.0),
    ("491.67 degR", 273.15), ("300 K", 300.0), ("75 degF", (75 + 459.67) * 5 / 9),
    ("100 °C", 373.15),
])
def test_absolute_temperatures(text, expected):
    # Exact scale definitions: degC offset 273.15 K; degF: T[K] = (T[degF] + 459.67) * 5/9.
    assert si(text, "temperature") == pytest.approx(expected, abs=1e-12)


@pytest.mark.parametrize("text,expected", [
    ("3.6 delta_degF", 2.0), ("1 degF", DEGF), ("10 degC", 10.0), ("2 K", 2.0), ("9 degR", 5.0),
])
def test_temperature_differences(text, expected):
    assert si(text, "temperature_difference") == pytest.approx(expected, rel=1e-14)


def test_display_conversions_round_trip():
    # Inverse of the exact scale definitions.
    assert kelvin_to(373.15, "degC") == pytest.approx(100.0, abs=1e-12)
    assert kelvin_to(373.15, "degF") == pytest.approx(212.0, abs=1e-12)
    assert kelvin_to(273.15, "degR") == pytest.approx(491.67, abs=1e-12)
    assert kelvin_to(300.0, "K") == 300.0
    assert kelvin_difference_to(5.0, "degF") == pytest.approx(9.0)
    assert kelvin_difference_to(5.0, "degC") == 5.0


_UREG = pint.UnitRegistry()


@pytest.mark.parametrize("text,dimension,si_unit", [
    ("8 ft", "length", "m"),
    ("130 ft^2", "area", "m^2"),
    ("2100 gal", "volume", "m^3"),
    ("1.2 kW", "power", "W"),
    ("0.5 mW/g", "specific_power", "W/kg"),
    ("95 kJ/mol", "molar_energy", "J/mol"),
    ("62.4 lb/ft^3", "density", "kg/m^3"),
    ("4.5 W/(m^2*K)", "heat_transfer_coefficient", "W/(m^2*K)"),
    ("12 t", "mass", "kg"),
    ("2.5 kcal/mol", "molar_energy", "J/mol"),
    ("3 day", "time", "s"),
])
def test_against_pint(text, dimension, si_unit):
    # Reference library: pint's own conversion of the same text (units without Btu or temperatures).
    expected = _UREG.Quantity(text).to(si_unit).magnitude
    assert si(text, dimension) == pytest.approx(expected, rel=1e-13)


def test_pint_agrees_on_temperatures_and_differences():
    # pint's offset-unit handling as a second opinion on the degF / degC scales.
    assert si("75 degF", "temperature") == pytest.approx(_UREG.Quantity(75, "degF").to("K").magnitude, rel=1e-14)
    assert si("-10 degC", "temperature") == pytest.approx(_UREG.Quantity(-10, "degC").to("K").magnitude, rel=1e-14)
    got = si("0.8 Btu/(lb*delta_degF)", "specific_heat")
    assert got == pytest.approx(_UREG.Quantity(0.8, "Btu_it/(lb*delta_degF)").to("J/(kg*K)").magnitude, rel=1e-13)


@pytest.mark.parametrize("value,dimension,fragment", [
    ("5 blorbs", "mass", "unknown unit"),
    ("5 m", "mass", "is not a mass"),
    ("5", "mass", "without a unit"),
    (5, "mass", "has no unit"),
    (True, "mass", "expected a mass"),
    (None, "mass", "as text"),
    ([1, 2], "time", "as text"),
    ("kg", "mass", "does not start with a number"),
    ("1e999 kg", "mass", "not a finite number"),
    ("3 delta_degC", "temperature", "temperature difference"),
    ("2 kW/", "power", "cannot read the unit"),
])
def test_bad_quantities_raise_unit_error(value, dimension, fragment):
    with pytest.raises(UnitError) as info:
        parse_quantity(value, dimension)
    assert fragment in str(info.value)


def test_bare_number_accepted_only_for_fractions():
    assert parse_quantity(0.7, "fraction").value == 0.7
    with pytest.raises(UnitError):
        parse_quantity(0.7, "length")


# --------------------------------------------------------------------------- customary vs SI case


def _numbers_equal(a, b, path="result"):
    """Every number in two JSON values agrees to 1e-9 relative; structure, booleans and nulls are identical.
    Strings are not compared (the text as written and display units differ between the two files)."""
    if isinstance(a, dict):
        assert isinstance(b, dict) and set(a) == set(b), f"{path}: keys differ"
        for k in a:
            _numbers_equal(a[k], b[k], f"{path}.{k}")
    elif isinstance(a, list):
        assert isinstance(b, list) and len(a) == len(b), f"{path}: lengths differ"
        for i, (x, y) in enumerate(zip(a, b)):
            _numbers_equal(x, y, f"{path}.{i}")
    elif isinstance(a, bool) or a is None:
        assert a is b, f"{path}: {a!r} != {b!r}"
    elif isinstance(a, (int, float)):
        assert isinstance(b, (int, float)) and not isinstance(b, bool), f"{path}: {a!r} vs {b!r}"
        assert math.isclose(a, b, rel_tol=1e-9, abs_tol=1e-9), f"{path}: {a!r} != {b!r}"
    else:
        assert isinstance(a, str) and isinstance(b, str), f"{path}: {a!r} vs {b!r}"


def test_customary_and_si_case_give_identical_results(data_dir, screen_text):
    # The two files are the same case (conversions by the exact definitions above, written beside each value).
    from screening.result import public_result

    custom = json.loads(json.dumps(public_result(screen_text((data_dir / "customary_units.yaml").read_bytes()))))
    metric = json.loads(json.dumps(public_result(screen_text((data_dir / "si_units.yaml").read_bytes()))))
    custom.pop("input_hash"), metric.pop("input_hash")  # hashes of different bytes
    _numbers_equal(custom, metric)
    # and the case is not trivial: limits reached and not reached, geometry used, detection by alarm
    reached = [r["reached"] for r in custom["limits"]]
    assert True in reached and False in reached
    assert custom["geometry"]["wetted_area_m2"] > 0
    assert custom["detection_time_s"] is not None and custom["detection_time_s"] > 0
    assert custom["units"]["temperature"] == "degF" and metric["units"]["temperature"] != "degF"
