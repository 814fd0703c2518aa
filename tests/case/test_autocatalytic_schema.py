"""The autocatalytic source kind and initial_conversion: the issue's YAML contract, and errors that name the field.

Checks of the tool's own contract (field names, paths, exit code 2); the unit factors are pint's
(1 h = 3600 s, reference library) and the conversion of the rate constant to a specific power is
Delta h k by definition of the rate law q = Delta h d(alpha)/dt.
"""
from __future__ import annotations

import copy
import subprocess
import sys
from pathlib import Path

import pytest
import yaml

from screening.case.files import load_case_bytes
from screening.case.prepare import prepare_case
from screening.case.schema import CaseError

ROOT = Path(__file__).resolve().parents[2]

# the issue's source block, word for word
ISSUE_SOURCE = """\
- kind: autocatalytic              # d(alpha)/dt = k(T) (1 - alpha)^n (alpha^m + z)
  label: decomposition of the dried cake
  role: decomposition
  rate_constant: 2e-5 1/s          # k at reference_temperature
  reference_temperature: 150 degC
  activation_energy: 120 kJ/mol
  order: 1                         # n, 0 to 10
  autocatalytic_order: 1           # m, > 0 and up to 10
  initiation: 0.02                 # z > 0: the ratio of the initiation to the autocatalytic rate constant
  specific_heat_of_reaction: 500 kJ/kg
  initial_conversion: 0 %          # optional
  gas_generating: true
  tested_range: [120 degC, 200 degC]
"""

BASE = {
    "id": "AC-1",
    "contents": {"mass": "400 kg", "specific_heat": "1.6 kJ/(kg*K)", "initial_temperature": "30 degC"},
    "heat_loss": {"ambient_temperature": "30 degC", "ua": "2 W/K"},
    "heat_sources": yaml.safe_load(ISSUE_SOURCE),
    "limits": [{"name": "onset", "temperature": "60 degC"}],
}


def load(data):
    return load_case_bytes(yaml.safe_dump(data).encode(), "yaml")


def problems(data) -> list[tuple[str, str]]:
    with pytest.raises(CaseError) as info:
        load(data)
    return [(p.field, p.message) for p in info.value.problems]


def with_source(**changes):
    data = copy.deepcopy(BASE)
    src = data["heat_sources"][0]
    for k, v in changes.items():
        if v is None:
            src.pop(k, None)
        else:
            src[k] = v
    return data


def test_the_issue_block_is_read_as_written():
    prepared = prepare_case(load(BASE).spec)
    (src,) = prepared.model.arrhenius_sources
    assert src.autocatalytic and src.autocatalytic_order == 1.0 and src.initiation == 0.02 and src.order == 1.0
    assert src.specific_power == pytest.approx(500e3 * 2e-5, rel=1e-15)  # Delta h k (definition)
    assert src.reference_temperature == pytest.approx(423.15)  # 150 degC
    assert src.accumulated_fraction == 1.0 and src.gas_generating and src.role == "decomposition"
    assert src.tested_range == pytest.approx((393.15, 473.15))
    assert prepared.model.scenario == "storage"  # a decomposition alone: storage by default


def test_rate_constant_units():
    prepared = prepare_case(load(with_source(rate_constant="0.072 1/h")).spec)
    assert prepared.model.arrhenius_sources[0].specific_power == pytest.approx(500e3 * 0.072 / 3600.0, rel=1e-12)


@pytest.mark.parametrize("changes,field,words", [
    ({"initiation": 0}, "heat_sources.0.initiation", "greater than 0"),
    ({"initiation": None}, "heat_sources.0.initiation", "required"),
    ({"autocatalytic_order": 0}, "heat_sources.0.autocatalytic_order", "greater than 0"),
    ({"autocatalytic_order": 11}, "heat_sources.0.autocatalytic_order", "10"),
    ({"order": -1}, "heat_sources.0.order", "0"),
    ({"rate_constant": "2e-5 W/kg"}, "heat_sources.0.rate_constant", "rate constant"),
    ({"rate_constant": None}, "heat_sources.0.rate_constant", "required"),
    ({"specific_heat_of_reaction": None}, "heat_sources.0.specific_heat_of_reaction", "required"),
    ({"initial_conversion": "150 %"}, "heat_sources.0.initial_conversion", "from 0 to 1"),
    ({"specific_power": "1 W/kg"}, "heat_sources.0.specific_power", ""),
    ({"accumulated_fraction": "50 %"}, "heat_sources.0.accumulated_fraction", ""),
])
def test_bad_autocatalytic_fields_are_named(changes, field, words):
    found = problems(with_source(**changes))
    assert any(f == field and words in msg for f, msg in found), found


def test_initial_conversion_on_every_temperature_dependent_kind():
    data = copy.deepcopy(BASE)
    data["heat_sources"] = [{"kind": "arrhenius", "specific_power": "0.01 W/kg", "reference_temperature": "80 degC",
                             "activation_energy": "100 kJ/mol", "order": 1, "specific_heat_of_reaction": "300 kJ/kg",
                             "initial_conversion": "10 %"}]
    src = prepare_case(load(data).spec).model.arrhenius_sources[0]
    assert src.accumulated_fraction == pytest.approx(0.9)
    data["heat_sources"][0]["role"] = "synthesis"
    src = prepare_case(load(data).spec).model.arrhenius_sources[0]
    assert src.accumulated_fraction == pytest.approx(0.9)  # accumulated_fraction = 1 - initial_conversion


def test_a_synthesis_takes_one_of_accumulated_fraction_and_initial_conversion():
    data = copy.deepcopy(BASE)
    data["heat_sources"] = [{"kind": "arrhenius", "role": "synthesis", "specific_power": "1 W/kg",
                             "reference_temperature": "80 degC", "activation_energy": "100 kJ/mol", "order": 1,
                             "specific_heat_of_reaction": "300 kJ/kg", "accumulated_fraction": "40 %",
                             "initial_conversion": "60 %"}]
    found = problems(data)
    assert any(f == "heat_sources.0" and "accumulated_fraction" in m and "initial_conversion" in m
               for f, m in found), found


def test_cli_exit_code_2_names_the_field(tmp_path):
    case = tmp_path / "bad.yaml"
    case.write_text(yaml.safe_dump(with_source(initiation=-0.1)), encoding="utf-8")
    proc = subprocess.run([sys.executable, "-m", "screening.cli", "check", str(case)], capture_output=True,
                          text=True, cwd=ROOT, timeout=120)
    assert proc.returncode == 2
    assert "heat_sources.0.initiation" in proc.stdout + proc.stderr
    assert "Traceback" not in proc.stdout + proc.stderr
