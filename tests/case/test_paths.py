"""The one table from case paths to model slots, used by every fast path (register rows, Monte Carlo)."""
from __future__ import annotations

from screening.case.files import load_case_bytes
from screening.case.paths import SCALAR_SLOTS, SOURCE_SLOTS, Slot, model_slot, source_positions

CASE = b"""
id: P-1
contents: {mass: 1000 kg, specific_heat: 2 kJ/(kg*K), initial_temperature: 20 degC}
heat_loss: {ambient_temperature: 25 degC, ua: 100 W/K}
heat_sources:
  - {kind: constant, power: 1 kW}
  - {kind: decaying, power: 5 kW, time_constant: 2 h}
  - {kind: constant, power: 2 kW}
  - {kind: decaying, power: 3 kW, half_life: 1 h}
limits: [{name: a, temperature: 50 degC}, {name: b, temperature: 60 degC}]
"""


def _spec():
    return load_case_bytes(CASE, "yaml").spec


def test_sources_are_numbered_within_their_kind():
    assert source_positions(_spec()) == (0, 0, 1, 1)


def test_paths_map_to_slots():
    spec = _spec()
    assert model_slot(spec, ("contents", "mass")) == Slot("mass")
    assert model_slot(spec, ("limits", 1, "temperature")) == Slot("limit", 1)
    assert model_slot(spec, ("heat_sources", 2, "power")) == Slot("const", 1)
    assert model_slot(spec, ("heat_sources", 3, "half_life")) == Slot("dhalf", 1)
    assert model_slot(spec, ("heat_sources", 1, "time_constant")) == Slot("dtau", 0)
    assert model_slot(spec, ("contents", "density")) is None  # changes geometry: no fast path
    assert model_slot(spec, ("heat_sources", 9, "power")) is None


def test_every_fast_path_writes_only_slots_of_the_table():
    from screening.register.columns import _COLUMN_KINDS
    from screening.register.validation import _MODEL_FIELD_OF_SLOT
    from screening.run.monte_carlo import _ARRAY_OF_SLOT

    kinds = set(SCALAR_SLOTS.values()) | set(SOURCE_SLOTS.values()) | {"limit"}
    for name, used in (("register columns", set(_COLUMN_KINDS)), ("register direct path", set(_MODEL_FIELD_OF_SLOT)),
                       ("Monte Carlo", set(_ARRAY_OF_SLOT))):
        assert used <= kinds, f"{name} writes slots outside the table: {used - kinds}"
