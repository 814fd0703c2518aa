"""The Semenov caution about transient inputs is given in storage only when there is one.

The caution (core/runaway: WARNING_TRANSIENT_SOURCES) says that a decaying source, a fire or a hot start can push
the contents past the no-return temperature, which the steady criterion does not see. Drums that start cooler
than the ambient and have no other input have no such transient (common practice: the Semenov criterion covers
contents that warm towards the ambient from below); a hot start has one.
"""
from __future__ import annotations

import yaml

from screening.case.files import load_case_bytes
from screening.case.prepare import prepare_case
from screening.core.runaway import WARNING_TRANSIENT_SOURCES
from screening.run.screen_case import screen_prepared

DRUM = {
    "id": "T-DRUM", "title": "drum of a self-reactive powder",
    "contents": {"mass": "200 kg", "specific_heat": "1.5 kJ/(kg*K)", "initial_temperature": "25 degC"},
    "heat_loss": {"ambient_temperature": "35 degC", "ua": "4 W/K"},
    "heat_sources": [{"kind": "arrhenius", "role": "decomposition", "specific_power": "0.01 W/kg",
                      "reference_temperature": "60 degC", "activation_energy": "120 kJ/mol", "order": 1,
                      "specific_heat_of_reaction": "500 kJ/kg"}],
    "limits": [{"name": "onset", "temperature": "60 degC"}],
    "horizon": "30 d", "scenario": "storage",
}


def _warnings(data: dict) -> list[str]:
    loaded = load_case_bytes(yaml.safe_dump(data).encode(), "yaml")
    return screen_prepared(prepare_case(loaded.spec), with_history=False)["warnings"]


def test_no_transient_caution_for_drums_warming_towards_the_ambient():
    assert WARNING_TRANSIENT_SOURCES not in _warnings(DRUM)


def test_a_hot_start_keeps_the_caution():
    hot = dict(DRUM, contents=dict(DRUM["contents"], initial_temperature="50 degC"))
    assert WARNING_TRANSIENT_SOURCES in _warnings(hot)


def test_a_decaying_source_keeps_the_caution():
    decaying = dict(DRUM, heat_sources=DRUM["heat_sources"] + [{"kind": "decaying", "power": "50 W",
                                                                 "time_constant": "2 h"}])
    assert WARNING_TRANSIENT_SOURCES in _warnings(decaying)
