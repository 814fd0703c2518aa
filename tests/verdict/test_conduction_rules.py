"""Default rules on conduction results of unstirred contents: the lumped-validity (Biot) rule gives way, and the
notes on an approximated geometry and on liquids fire exactly when their flags are true.

Check values: the flags come from the result; the reasons' facts are common practice (an infinite slab or
cylinder loses less heat than the finite body; natural convection in an unstirred liquid carries heat faster
than conduction)."""
from __future__ import annotations

import sys
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).resolve().parent))

from test_rules import base_result, fired, fired_ids  # noqa: E402

from screening.verdict.rule_file import load_rule_set  # noqa: E402


@pytest.fixture(scope="module")
def default():
    return load_rule_set()


def conduction(**changes) -> dict:
    block = {"geometry": "cylinder", "half_thickness_m": 0.285, "biot_number": 11.9,
             "centre_temperature_at_horizon_K": 311.2, "mesh_relative_change": None, "mesh_converged": None,
             "geometry_approximated": True, "geometry_approximation": "the finite cylinder is treated as infinitely "
                                                                     "long", "liquid": False, "notes": []}
    block.update(changes)
    return block


def test_the_biot_rule_is_not_applicable_to_conduction_results(default):
    from screening.verdict.engine import evaluate

    lumped_only = evaluate(default, base_result(mixing="unstirred", biot_number=5.0))
    assert "biot-unstirred" in fired_ids(lumped_only)  # without a conduction solution it still applies
    v = evaluate(default, base_result(mixing="unstirred", biot_number=5.0, conduction=conduction()))
    assert "biot-unstirred" not in fired_ids(v) and "biot-unstirred" in v.not_applicable


def test_geometry_note_fires_only_when_the_geometry_was_approximated(default):
    from screening.verdict.engine import evaluate

    v = evaluate(default, base_result(mixing="unstirred", conduction=conduction()))
    f = fired(v, "conduction-geometry")
    assert f is not None and f.verdict == "pass"
    assert "treated as infinitely long" in f.reason and "conservative" in f.reason
    v = evaluate(default, base_result(mixing="unstirred", conduction=conduction(
        geometry="sphere", geometry_approximated=False, geometry_approximation=None)))
    assert "conduction-geometry" not in fired_ids(v)
    assert "conduction-geometry" in evaluate(default, base_result()).not_applicable  # stirred


def test_liquid_note_fires_only_for_liquids(default):
    from screening.verdict.engine import evaluate

    f = fired(evaluate(default, base_result(mixing="unstirred", conduction=conduction(liquid=True))),
              "conduction-liquid")
    assert f is not None and f.verdict == "pass" and "very conservative" in f.reason
    assert "conduction-liquid" not in fired_ids(evaluate(default, base_result(mixing="unstirred",
                                                                             conduction=conduction())))
