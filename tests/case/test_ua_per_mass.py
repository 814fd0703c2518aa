"""heat_loss.ua_per_mass: the package's heat loss per kg of contents (exactly one of ua, ua_per_mass,
coefficient with area), and its caution.

Check values: UA = (UA/m) m by definition; 90 mW/(kg K) x 50 kg = 4.5 W/K (by hand). The caution's figures
(80-100 mW/(kg K) stands for a package of about 50 kg) are from memory (UN Manual of Tests and Criteria,
heat-accumulation storage test; /work/shared/references.md).
"""
from __future__ import annotations

import pytest

from screening.case.files import load_case_bytes
from screening.case.prepare import prepare_case
from screening.case.schema import CaseError

from tests.case.test_case_errors import GOOD, problems


def edit(new_heat_loss: str) -> str:
    old = "  ua: 100 W/K\n"
    assert old in GOOD
    return GOOD.replace(old, new_heat_loss, 1)


def test_ua_is_the_mass_times_the_loss_per_kg():
    text = edit("  ua_per_mass: 90 mW/(kg*K)\n").replace("mass: 1000 kg", "mass: 50 kg")
    prepared = prepare_case(load_case_bytes(text.encode()).spec)
    assert prepared.model.ua == pytest.approx(4.5, rel=1e-12)  # 0.090 W/(kg K) x 50 kg, by hand
    assert any(w.startswith("heat_loss.ua_per_mass:") and "about 50 kg" in w and "not conservative" in w
               for w in prepared.warnings)


@pytest.mark.parametrize("unit_text, si", [("0.09 W/(kg*K)", 0.09), ("90 mW/(kg*degC)", 0.09),
                                           ("0.09 W/kg/K", 0.09)])
def test_units_of_the_loss_per_kg(unit_text, si):
    # a temperature unit inside a compound unit is a difference (references.md, units): degC as K
    text = edit(f"  ua_per_mass: {unit_text}\n")
    assert prepare_case(load_case_bytes(text.encode()).spec).model.ua == pytest.approx(si * 1000.0, rel=1e-12)


@pytest.mark.parametrize("heat_loss, field, words", [
    ("  ua: 100 W/K\n  ua_per_mass: 90 mW/(kg*K)\n", "heat_loss", "exactly one of ua, ua_per_mass"),
    ("  ua_per_mass: 90 mW/(kg*K)\n  coefficient: 5 W/(m^2*K)\n  area: 2 m^2\n", "heat_loss",
     "not ua_per_mass and coefficient"),
    ("  ua_per_mass: 90 mW/(kg*K)\n  area: 2 m^2\n", "heat_loss", "not ua_per_mass and area"),
    ("  ua_per_mass: 90 W/K\n", "heat_loss.ua_per_mass", "heat loss per kg of contents"),
    ("  ua_per_mass: -90 mW/(kg*K)\n", "heat_loss.ua_per_mass", ""),
    ("", "heat_loss", "ua_per_mass"),
])
def test_bad_heat_loss_names_the_field(heat_loss, field, words):
    found = problems(edit(heat_loss))
    assert any(f == field and words in m for f, m in found), found


def test_error_is_a_case_error_not_a_traceback():
    with pytest.raises(CaseError):
        load_case_bytes(edit("  ua: 1 W/K\n  ua_per_mass: 1 W/(kg*K)\n").encode())
