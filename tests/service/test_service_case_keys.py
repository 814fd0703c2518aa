"""The service screens a case through the same reader as the CLI: a JSON key given twice is refused, and
the problem carries the line the web page marks (the tool's own contract; the line counted by hand)."""
from __future__ import annotations

import pytest

from screening.case.schema import CaseError
from screening.service import tasks

CASE = b"""{
  "id": "T-1",
  "contents": {"mass": "1000 kg", "specific_heat": "2 kJ/(kg*K)", "initial_temperature": "20 degC"},
  "heat_loss": {"ambient_temperature": "20 degC", "ua": "100 W/K"},
  "limits": [{"name": "onset", "temperature": "80 degC"},
             {"name": "high", "temperature": "90 degC", "temperature": "95 degC"}]
}
"""


def test_service_check_refuses_a_json_key_given_twice_and_locates_it(tmp_path, monkeypatch):
    monkeypatch.setattr(tasks, "_SCRATCH", tmp_path)
    with pytest.raises(CaseError) as info:
        tasks.task_check(raw=CASE, kind="json", rules_path=None, sde=0, memo=False, locate=True)
    (problem,) = info.value.problems
    assert "'temperature'" in problem.message and "limits.1.temperature" in problem.message
    assert info.value._lines == {"(file)": 6}  # the line of the second 'temperature'
