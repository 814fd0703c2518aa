"""Torispherical heads whose radii make no head are the case's error, naming the field.

Geometry of the head (ASME flanged-and-dished proportions, from memory): the knuckle (radius r_k) is
tangent to the shell (radius D/2) and to the crown (radius R_c), which needs R_c >= D/2 and
0 < r_k <= D/2.  Before, a knuckle radius above D/2 gave volumes and areas without meaning, silently.
"""
from __future__ import annotations

import math

import pytest

from screening.case.files import load_case_bytes
from screening.case.prepare import prepare_case
from screening.case.schema import CaseError

CASE = """id: T
vessel: {{shape: {shape}, diameter: 2 m, length: 3 m, heads: torispherical{extra}}}
contents: {{fill: 0.6, density: 900 kg/m^3, specific_heat: 2.1 kJ/(kg*K), initial_temperature: 25 degC}}
heat_loss: {{ambient_temperature: 30 degC, coefficient: 5 W/(m^2*K), area: wetted}}
limits: [{{name: onset, temperature: 60 degC}}]
"""


def _prepare(shape, extra):
    return prepare_case(load_case_bytes(CASE.format(shape=shape, extra=extra).encode()).spec)


@pytest.mark.parametrize("shape", ["vertical-cylinder", "horizontal-cylinder"])
@pytest.mark.parametrize("extra,field", [(", knuckle_radius: 1.2 m", "vessel.knuckle_radius"),
                                         (", crown_radius: 0.8 m", "vessel.crown_radius"),
                                         (", crown_radius: 0.9 m, knuckle_radius: 1.5 m", "vessel.knuckle_radius")])
def test_radii_that_make_no_head(shape, extra, field):
    with pytest.raises(CaseError) as info:
        _prepare(shape, extra)
    (problem,) = info.value.problems
    assert problem.field == field
    assert "at least half the diameter" in problem.message and "2 m" in problem.message


@pytest.mark.parametrize("extra", ["", ", knuckle_radius: 1 m", ", crown_radius: 1 m", ", crown_radius: 1 m, knuckle_radius: 1 m"])
def test_limiting_radii_are_heads(extra):
    # knuckle = D/2 or crown = D/2: a hemispherical head (the limiting torispherical proportions)
    prepared = _prepare("vertical-cylinder", extra)
    if extra:  # by hand: a cylinder of D = 2 m, L = 3 m, with two hemispheres: 3 pi + 4 pi / 3
        assert prepared.geometry["vessel_volume_m3"] == pytest.approx(3 * math.pi + 4 * math.pi / 3, rel=1e-12)
        assert prepared.geometry["total_area_m2"] == pytest.approx(6 * math.pi + 4 * math.pi, rel=1e-12)
    else:
        assert prepared.geometry["vessel_volume_m3"] > 3 * math.pi
