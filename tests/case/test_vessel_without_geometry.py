"""A vessel block without geometry: accepted where the contents' mass and UA are given.

A vessel block with only its wall (wall_mass, wall_specific_heat) or only its venting was refused
("vessel.shape: required field is missing") although geometry is optional whenever the mass and UA
are given.  What does need the geometry (fill, a wetted or total heat-loss area, a fire's wetted
area, dimensions themselves) is refused with its own field named.

Check values: the lumped heat capacity C = m c + M_wall c_wall (Incropera et al., ch. 5, lumped
capacitance, with the wall at the contents' temperature: common practice); the rest is the tool's own
contract (field paths and messages).
"""
from __future__ import annotations

import pytest

from screening.case.files import load_case_bytes
from screening.case.prepare import prepare_case
from screening.case.schema import CaseError

CASE = """\
id: NG-1
{vessel}contents:
  mass: 2000 kg
  specific_heat: 4 kJ/(kg*K)
  initial_temperature: 20 degC
  boiling_point: 100 degC
  latent_heat: 2000 kJ/kg
heat_loss:
  ambient_temperature: 20 degC
  ua: 10 W/K
heat_sources:
  - kind: constant
    power: 50 kW
limits:
  - name: onset
    temperature: 90 degC
"""


def case(vessel: str, text: str = CASE) -> str:
    return text.format(vessel=vessel)


def prepared(text: str):
    return prepare_case(load_case_bytes(text.encode()).spec)


def problems(text: str) -> list[tuple[str, str]]:
    with pytest.raises(CaseError) as info:
        prepared(text)
    return [(p.field, p.message) for p in info.value.problems]


def test_wall_only_adds_the_wall_heat_capacity():
    p = prepared(case("vessel:\n  wall_mass: 800 kg\n  wall_specific_heat: 0.5 kJ/(kg*K)\n"))
    assert p.model.wall_heat_capacity == pytest.approx(800 * 500.0, rel=1e-12)  # M_wall c_wall
    assert p.model.heat_capacity == pytest.approx(2000 * 4000.0 + 800 * 500.0, rel=1e-12)  # m c + M_wall c_wall
    assert p.geometry == {}  # nothing computed from a geometry that was not given
    assert p.model.boiling.venting == "closed"  # the default venting


def test_venting_only_gives_an_open_vessel():
    p = prepared(case("vessel:\n  venting: open\n"))
    assert p.model.boiling.venting == "open"
    assert p.model.wall_heat_capacity == 0.0
    assert p.model.heat_capacity == pytest.approx(2000 * 4000.0, rel=1e-12)  # m c


def test_wall_and_venting_together_in_json():
    text = ('{"id": "NG-2", "vessel": {"wall_mass": "800 kg", "wall_specific_heat": "500 J/(kg*K)", "venting": "open"},'
            ' "contents": {"mass": "2000 kg", "specific_heat": "4 kJ/(kg*K)", "initial_temperature": "20 degC"},'
            ' "heat_loss": {"ambient_temperature": "20 degC", "ua": "10 W/K"},'
            ' "limits": [{"name": "onset", "temperature": "90 degC"}]}')
    p = prepare_case(load_case_bytes(text.encode(), "json").spec)
    assert p.model.heat_capacity == pytest.approx(2000 * 4000.0 + 800 * 500.0, rel=1e-12)  # m c + M_wall c_wall


GEOMETRY_NEEDED = [
    ("fill", case("vessel:\n  venting: open\n").replace("  mass: 2000 kg\n", "  fill: 70 %\n  density: 1000 kg/m^3\n"),
     "contents.fill", ["vessel.shape"]),
    ("wetted heat-loss area", case("vessel:\n  venting: open\n").replace(
        "  ua: 10 W/K\n", "  coefficient: 5 W/(m^2*K)\n  area: wetted\n"), "heat_loss.area", ["vessel.shape", "wetted"]),
    ("total heat-loss area", case("vessel:\n  venting: open\n").replace(
        "  ua: 10 W/K\n", "  coefficient: 5 W/(m^2*K)\n  area: total\n"), "heat_loss.area", ["vessel.shape", "total"]),
    ("fire without its wetted area", case("vessel:\n  venting: open\n").replace(
        "  - kind: constant\n    power: 50 kW\n", "  - kind: fire\n"), "heat_sources.0.wetted_area",
     ["vessel.shape", "wetted_area"]),
    ("a dimension without a shape", case("vessel:\n  diameter: 2 m\n  venting: open\n"), "vessel.shape",
     ["vessel.diameter", "vertical-cylinder"]),
    ("heads without a shape", case("vessel:\n  heads: ellipsoidal\n"), "vessel.shape", ["vessel.heads"]),
]


@pytest.mark.parametrize("name, text, field, fragments", GEOMETRY_NEEDED, ids=[g[0] for g in GEOMETRY_NEEDED])
def test_what_needs_the_geometry_names_its_field(name, text, field, fragments):
    found = problems(text)
    assert [f for f, _ in found] == [field], found
    message = found[0][1]
    for fragment in fragments:
        assert fragment in message, (fragment, message)


def test_a_fire_with_its_wetted_area_given_needs_no_geometry():
    # API 521 / ISO 23251 (references.md, from memory): Q = 43,200 F A^0.82 W with drainage and fire-fighting
    text = case("vessel:\n  venting: open\n").replace(
        "  - kind: constant\n    power: 50 kW\n", "  - kind: fire\n    wetted_area: 10 m^2\n")
    p = prepared(text)
    assert p.model.fire_sources[0].power == pytest.approx(43_200 * 10 ** 0.82, rel=1e-12)
