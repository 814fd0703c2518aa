"""Infinite and not-a-number values are refused wherever a case file gives a number, naming the field.

YAML (.inf, -.inf, .nan in any capitalisation), JSON (Infinity, -Infinity, NaN, as Python's reader takes
them) and TOML (inf, +inf, -inf, nan) each have spellings for these; a quantity's text may start with one
("inf kg", "nan K") or with a number too large for a float ("1e999 kg").  A value like that once screened
and passed (fill: .inf; an uncertainty gsd: .inf).

The fields are generated from the case schema: every quantity field and every plain-number field of every
model, heat-source kinds included.  A field the valid cases below do not set stops the
collection of this file, so a new field cannot go untested.

The spellings are those of the YAML 1.1 type repository (float), RFC 8259 / Python's json module
(which reads Infinity and NaN although RFC 8259 has no such values) and TOML 1.0 (float: inf, nan),
from memory.  The check is the tool's own contract: the problem names the field and says a finite
number is expected.
"""
from __future__ import annotations

import copy
import json
import typing

import pytest
import yaml
from pydantic import BaseModel

from screening.case import schema as cs
from screening.case.files import load_case_bytes
from screening.case.schema import CaseError, QuantityField
from screening.case.uncertainty_plan import DISTRIBUTION_PARAMETERS, plan_uncertainty
from screening.case.units import DIMENSIONS

BAD = "@@BAD@@"  # placeholder replaced by a spelling in the file text

# Valid cases that together set every number field of the schema (mutually exclusive fields in different cases).
FULL = {
    "id": "NF-1",
    "vessel": {"shape": "vertical-cylinder", "diameter": "2 m", "length": "3 m", "heads": "torispherical",
               "crown_radius": "2 m", "knuckle_radius": "0.2 m", "wall_mass": "1500 kg",
               "wall_specific_heat": "0.5 kJ/(kg*K)", "venting": "open"},
    "contents": {"mass": "5000 kg", "density": "1000 kg/m^3", "specific_heat": "3 kJ/(kg*K)",
                 "initial_temperature": "25 degC", "mixing": "unstirred", "thermal_conductivity": "0.5 W/(m*K)",
                 "boiling_point": "100 degC", "latent_heat": "2000 kJ/kg"},
    "heat_loss": {"ambient_temperature": "20 degC", "coefficient": "5 W/(m^2*K)", "area": "12 m^2"},
    "heat_sources": [
        {"kind": "constant", "power": "1 kW"},
        {"kind": "decaying", "power": "2 kW", "time_constant": "1 h"},
        {"kind": "heating-medium", "medium_temperature": "60 degC", "ua": "50 W/K"},
        {"kind": "arrhenius", "role": "synthesis", "specific_power": "0.1 W/kg", "reference_temperature": "80 degC",
         "activation_energy": "100 kJ/mol", "order": 1, "specific_heat_of_reaction": "300 kJ/kg",
         "accumulated_fraction": "50 %", "tested_range": ["60 degC", "120 degC"]},
        {"kind": "fire", "environment_factor": 0.3, "wetted_area": "20 m^2", "elevation": "1 m"},
    ],
    "limits": [{"name": "onset", "temperature": "90 degC"}],
    "horizon": "24 h",
    "response_time": "1 h",
    "detection": {"alarm_temperature": "40 degC"},
    "recovery": {"medium_temperature": "20 degC", "ua": "500 W/K"},
    "maximum_technical_temperature": "100 degC",
}
BOX = {
    "id": "NF-2",
    "vessel": {"shape": "box", "length": "2 m", "width": "2 m", "height": "2 m"},
    "contents": {"fill": "50 %", "density": "1000 kg/m^3", "specific_heat": "3 kJ/(kg*K)",
                 "initial_temperature": "25 degC"},
    "heat_loss": {"ambient_temperature": "20 degC", "ua": "100 W/K"},
    "heat_sources": [{"kind": "decaying", "power": "2 kW", "half_life": "1 h"},
                     {"kind": "arrhenius", "role": "synthesis", "initial_specific_power": "0.1 W/kg",
                      "reference_temperature": "80 degC", "activation_energy": "100 kJ/mol",
                      "specific_heat_of_reaction": "300 kJ/kg", "accumulated_fraction": "40 %", "order": 1}],
    "limits": [{"name": "onset", "temperature": "90 degC"}],
    "detection": {"delay": "10 min"},
}
BY_VOLUME = {
    "id": "NF-3",
    "contents": {"volume": "2 m^3", "density": "1000 kg/m^3", "specific_heat": "3 kJ/(kg*K)",
                 "initial_temperature": "25 degC"},
    "heat_loss": {"ambient_temperature": "20 degC", "ua_per_mass": "90 mW/(kg*K)"},
    "limits": [{"name": "onset", "temperature": "90 degC"}],
}
AUTOCATALYTIC = {
    "id": "NF-4",
    "contents": {"mass": "400 kg", "specific_heat": "1.6 kJ/(kg*K)", "initial_temperature": "30 degC"},
    "heat_loss": {"ambient_temperature": "30 degC", "ua": "2 W/K"},
    "heat_sources": [{"kind": "arrhenius", "specific_power": "0.001 W/kg", "reference_temperature": "80 degC",
                      "activation_energy": "100 kJ/mol", "order": 1, "specific_heat_of_reaction": "300 kJ/kg",
                      "initial_conversion": "5 %"},
                     {"kind": "autocatalytic", "rate_constant": "2e-5 1/s", "reference_temperature": "150 degC",
                      "activation_energy": "120 kJ/mol", "order": 1, "autocatalytic_order": 1, "initiation": 0.02,
                      "specific_heat_of_reaction": "500 kJ/kg", "initial_conversion": "1 %"}],
    "limits": [{"name": "onset", "temperature": "60 degC"}],
}
SUNNY = {
    "id": "NF-5",
    "contents": {"mass": "200 kg", "specific_heat": "2 kJ/(kg*K)", "initial_temperature": "25 degC"},
    "heat_loss": {"ambient_temperature": "28 degC", "ua": "20 W/K", "daily_range": "14 K",
                  "warmest_time_of_day": "15 h"},
    "sun": {"peak_irradiance": "850 W/m^2", "absorptivity": 0.7, "exposed_area": "0.5 m^2", "day_length": "13 h",
            "outer_coefficient": "15 W/(m^2*K)"},
    "start_time_of_day": "6 h",
    "limits": [{"name": "onset", "temperature": "90 degC"}],
}
CASES = (FULL, BOX, BY_VOLUME, AUTOCATALYTIC, SUNNY)
# Quantities the schema types as free values and validates itself: each needs its own entry here.
CHECKED_OUTSIDE_THE_MODEL = [("heat_loss", "area"), ("heat_sources", 3, "tested_range", 0),
                             ("heat_sources", 3, "tested_range", 1), ("sun", "exposed_area")]


def _model_of(annotation):
    if isinstance(annotation, type) and issubclass(annotation, BaseModel):
        return annotation
    for arg in typing.get_args(annotation):
        found = _model_of(arg)
        if found is not None:
            return found
    return None


def schema_number_fields(model=cs.CaseSpec, prefix=()):
    """(path pattern, kind) of every quantity and plain-number field; '*' stands for a list index."""
    out = []
    for name, info in model.model_fields.items():
        path = prefix + (name,)
        marker = next((m for m in info.metadata if isinstance(m, QuantityField)), None)
        if marker is not None:
            out.append((path, marker.dimension))
        elif info.annotation is float:
            out.append((path, "number"))
        elif name == "heat_sources":
            for cls in cs.SOURCE_KINDS.values():
                out += [p for p in schema_number_fields(cls, path + ("*",)) if p not in out]
        else:
            sub = _model_of(info.annotation)
            if sub is not None:
                is_list = typing.get_origin(info.annotation) is list
                out += schema_number_fields(sub, path + ("*",) if is_list else path)
    return out


def dotted(path) -> str:
    return ".".join(str(p) for p in path)


def _get(data, path):
    for part in path:
        data = data[part]
    return data


def _find(pattern) -> tuple[dict, tuple] | None:
    """A case of CASES that sets the field, and the field's concrete path."""
    for case in CASES:
        if pattern[0] not in case:
            continue
        if "*" in pattern:
            i = pattern.index("*")
            for k, item in enumerate(_get(case, pattern[:i])):
                try:
                    _get(item, pattern[i + 1:])
                except (KeyError, TypeError):
                    continue
                if "kind" in item and pattern[i + 1] not in type(_source_spec(item)).model_fields:
                    continue
                return case, pattern[:i] + (k,) + pattern[i + 1:]
        else:
            try:
                _get(case, pattern)
                return case, pattern
            except (KeyError, TypeError):
                continue
    return None


def _source_spec(item):
    return cs.SOURCE_KINDS[item["kind"]].model_construct()


def targets():
    """(case, concrete path, dimension) for every number field of the schema.

    Checked while the tests are collected: every field is set by one of the (valid) cases, and the
    fields validated outside the model are still typed as free values there.
    """
    out = []
    for pattern, dimension in schema_number_fields():
        found = _find(pattern)
        assert found is not None, f"no case of test_non_finite.CASES sets {dotted(pattern)}: add it to one"
        out.append((found[0], found[1], dimension))
    for case in CASES:
        load_case_bytes(json.dumps(case).encode(), "json")
    assert cs.HeatLossSpec.model_fields["area"].annotation is typing.Any
    assert cs.ArrheniusSpec.model_fields["tested_range"].annotation == (list[typing.Any] | None)
    for path in CHECKED_OUTSIDE_THE_MODEL:
        case = SUNNY if path[0] == "sun" else FULL
        out.append((case, path, "area" if path[-1] in ("area", "exposed_area") else "temperature"))
    return out


TARGETS = targets()


def with_value(case: dict, path: tuple, value) -> dict:
    data = copy.deepcopy(case)
    _get(data, path[:-1])[path[-1]] = value
    return data


def to_toml(data: dict) -> str:
    """A minimal TOML writer: top-level keys with inline values (enough for these cases)."""

    def value(v):
        if isinstance(v, bool):
            return "true" if v else "false"
        if isinstance(v, (int, float)):
            return repr(v)
        if isinstance(v, str):
            return json.dumps(v, ensure_ascii=False)
        if isinstance(v, list):
            return "[" + ", ".join(value(x) for x in v) + "]"
        return "{" + ", ".join(f"{json.dumps(k)} = {value(x)}" for k, x in v.items()) + "}"

    return "".join(f"{json.dumps(k)} = {value(v)}\n" for k, v in data.items())


def text_of(data: dict, kind: str) -> str:
    if kind == "yaml":
        return yaml.safe_dump(data, sort_keys=False, allow_unicode=True)
    if kind == "json":
        return json.dumps(data, indent=1, ensure_ascii=False)
    return to_toml(data)


# Spellings of a bare number in each format (the placeholder's quoted form is replaced by them).
SCALARS = {
    "yaml": [".inf", "-.inf", ".nan", ".Inf", "-.INF", "+.inf", ".NaN", ".NAN"],
    "json": ["Infinity", "-Infinity", "NaN"],
    "toml": ["inf", "+inf", "-inf", "nan", "+nan", "-nan"],
}
# Texts a quantity may be written as: {unit} is the field's SI unit.
TEXTS = ["inf {unit}", "-inf {unit}", ".inf {unit}", "-.Inf {unit}", "Infinity {unit}", "+infinity {unit}",
         "nan {unit}", "NaN {unit}", ".nan {unit}", "1e999 {unit}", "-1e999 {unit}", "inf", "nan"]
PERCENTAGES = ["inf %", "-inf %", "nan %", "1e999 %", "Infinity%"]


def placeholder(kind: str) -> str:
    return {"yaml": f"'{BAD}'", "json": f'"{BAD}"', "toml": f'"{BAD}"'}[kind]


def refused(text: str, kind: str) -> list[tuple[str, str]]:
    with pytest.raises(CaseError) as info:
        load_case_bytes(text.encode(), kind)
    return [(p.field, p.message) for p in info.value.problems]


def assert_only_this_field_refused(found, path):
    assert len(found) == 1, found
    ((field, message),) = found
    assert field == dotted(path), found
    assert "not a finite number" in message and "finite number is expected" in message, message


@pytest.mark.parametrize("kind", ["yaml", "json", "toml"])
@pytest.mark.parametrize("case, path, dimension", TARGETS, ids=[dotted(t[1]) for t in TARGETS])
def test_non_finite_bare_number_is_refused_in_every_field(case, path, dimension, kind):
    text = text_of(with_value(case, path, BAD), kind)
    assert placeholder(kind) in text
    for spelling in SCALARS[kind]:
        found = refused(text.replace(placeholder(kind), spelling), kind)
        assert_only_this_field_refused(found, path)


@pytest.mark.parametrize("case, path, dimension", TARGETS, ids=[dotted(t[1]) for t in TARGETS])
def test_non_finite_text_is_refused_in_every_field(case, path, dimension):
    unit = DIMENSIONS[dimension][0] if dimension in DIMENSIONS else ""
    unit = "K" if unit == "K" else ("%" if dimension == "fraction" else unit)
    spellings = [t.format(unit=unit).strip() for t in TEXTS] + PERCENTAGES * (dimension == "fraction")
    for spelling in spellings:
        found = refused(json.dumps(with_value(case, path, spelling)), "json")
        assert_only_this_field_refused(found, path)
    if dimension != "number":  # the {value, source} form of a quantity
        found = refused(json.dumps(with_value(case, path, {"value": f"inf {unit}", "source": "x"})), "json")
        assert_only_this_field_refused(found, path)


def test_a_whole_number_too_large_for_a_float_is_refused():
    # YAML and JSON read 400 digits as an integer; it overflows a float (about 1.8e308, IEEE 754 double)
    found = refused(json.dumps(with_value(FULL, ("heat_sources", 4, "environment_factor"), 10 ** 400)), "json")
    assert_only_this_field_refused(found, ("heat_sources", 4, "environment_factor"))


@pytest.mark.parametrize("kind", ["yaml", "json", "toml"])
@pytest.mark.parametrize("sign", ["", "-"])
def test_an_integer_of_more_digits_than_python_reads_is_an_input_error(kind, sign):
    # Python refuses to convert integers of more than 4300 decimal digits (its default limit, from memory)
    text = text_of(with_value(BOX, ("contents", "fill"), BAD), kind).replace(placeholder(kind), sign + "7" * 5000)
    with pytest.raises(CaseError) as info:
        load_case_bytes(text.encode(), kind)
    ((field, message),) = [(p.field, p.message) for p in info.value.problems]
    assert "finite number is expected" in message and len(message) < 300
    assert field == ("(file)" if kind == "toml" else "contents.fill")  # TOML's reader stops at the file


def test_a_yaml_date_that_does_not_exist_is_an_input_error():
    # YAML 1.1 reads 2024-13-45 as a date (timestamp type, from memory); there is no month 13
    found = refused(text_of(dict(BOX, meta={"date": BAD}), "yaml").replace(placeholder("yaml"), "2024-13-45"), "yaml")
    assert found == [("(file)", "YAML value not readable: month must be in 1..12")]


# ------------------------------------------------------------------ the uncertainty block

VALID = {  # a valid value of every parameter, for an input of each kind: with a unit, a temperature, a fraction
    "contents.mass": {"low": "4000 kg", "high": "6000 kg", "half_width": "10 %", "mode": "5000 kg",
                      "mean": "5000 kg", "sd": "10 %", "median": "5000 kg", "gsd": 1.2},
    "heat_loss.ambient_temperature": {"low": "15 degC", "high": "25 degC", "half_width": "5 K", "mode": "20 degC",
                                      "mean": "20 degC", "sd": "2 K", "median": "20 degC", "gsd": 1.01},
    "heat_sources.3.accumulated_fraction": {"low": 0.4, "high": 0.6, "half_width": 0.05, "mode": 0.5,
                                            "mean": 0.5, "sd": 0.05, "median": 0.5, "gsd": 1.1},
}
UNIT = {"contents.mass": "kg", "heat_loss.ambient_temperature": "K", "heat_sources.3.accumulated_fraction": "%"}
NEEDED = {"uniform": ("low", "high"), "triangular": ("low", "high"), "normal": ("sd",), "lognormal": ("gsd",)}
UNCERTAINTY_CASES = [(inp, distribution, param) for inp in VALID
                     for distribution, params in DISTRIBUTION_PARAMETERS.items() for param in sorted(params)]


def uncertain_case(inp, distribution, param, value):
    """FULL with one uncertain input whose ``param`` is ``value`` (the others valid)."""
    keys = ("half_width",) if param == "half_width" else tuple(dict.fromkeys(NEEDED[distribution] + (param,)))
    block = {"distribution": distribution, **{k: VALID[inp][k] for k in keys}}
    block[param] = value
    return dict(FULL, uncertainty={"samples": 100, "inputs": {inp: block}})


def plan_refused(text: str, kind: str) -> list[tuple[str, str]]:
    spec = load_case_bytes(text.encode(), kind).spec
    with pytest.raises(CaseError) as info:
        plan_uncertainty(spec)
    return [(p.field, p.message) for p in info.value.problems]


@pytest.mark.parametrize("inp, distribution, param", UNCERTAINTY_CASES,
                         ids=[f"{a}-{b}-{c}" for a, b, c in UNCERTAINTY_CASES])
def test_non_finite_distribution_parameter_is_refused(inp, distribution, param):
    valid = uncertain_case(inp, distribution, param, VALID[inp][param])
    assert plan_uncertainty(load_case_bytes(json.dumps(valid).encode(), "json").spec) is not None
    where = f"uncertainty.inputs.{inp}.{param}"
    for kind in ("yaml", "json", "toml"):
        text = text_of(uncertain_case(inp, distribution, param, BAD), kind)
        for spelling in SCALARS[kind]:
            found = plan_refused(text.replace(placeholder(kind), spelling), kind)
            assert len(found) == 1 and found[0][0] == where and "not a finite number" in found[0][1], found
    for value in [t.format(unit=UNIT[inp]) for t in TEXTS] + PERCENTAGES:
        found = plan_refused(json.dumps(uncertain_case(inp, distribution, param, value)), "json")
        assert len(found) == 1 and found[0][0] == where, found
        assert "not a finite number" in found[0][1] and "finite number is expected" in found[0][1], found


def test_a_relative_spread_that_overflows_is_refused():
    # 1e307 % of 5000 kg is 5e310 kg: beyond a float (about 1.8e308, IEEE 754 double)
    spec = load_case_bytes(json.dumps(uncertain_case("contents.mass", "normal", "sd", "1e307 %")).encode(),
                           "json").spec
    with pytest.raises(CaseError) as info:
        plan_uncertainty(spec)
    ((field, message),) = [(p.field, p.message) for p in info.value.problems]
    assert field == "uncertainty.inputs.contents.mass.sd" and "finite number is expected" in message


# ------------------------------------------------------------------ through the command line

def test_cli_refuses_infinite_fill_and_gsd_with_exit_2(tmp_path, run_cli):
    fill = with_value(BOX, ("contents", "fill"), BAD)
    (tmp_path / "fill.yaml").write_text(text_of(fill, "yaml").replace(placeholder("yaml"), ".inf"), encoding="utf-8")
    gsd = uncertain_case("contents.mass", "lognormal", "gsd", BAD)
    (tmp_path / "gsd.yaml").write_text(text_of(gsd, "yaml").replace(placeholder("yaml"), ".inf"), encoding="utf-8")
    for name, field in (("fill.yaml", "contents.fill"), ("gsd.yaml", "uncertainty.inputs.contents.mass.gsd")):
        proc = run_cli("check", tmp_path / name)
        assert proc.returncode == 2, (proc.stdout, proc.stderr)  # invalid input (cli.py)
        assert f"{field}: inf is not a finite number" in proc.stderr
        assert "Traceback" not in proc.stderr
