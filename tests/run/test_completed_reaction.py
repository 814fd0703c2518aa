"""The demo reactor FW-R301 with a faster, more accumulated desired reaction screens to a verdict.

With its first source at 25 W/kg and 60 % or 100 % accumulated, the first-order synthesis runs to
completion within the horizon; its conversion came out at 1.0000000000000029 and the steady-state
analysis of what was left of the reactions stopped the run (exit 3).

Check values: exit codes 0 (pass) and 1 (review or fail) are the command's contract (cli.py); a
conversion is a fraction of the reactant charged, 0 <= X <= 1 (definition).
"""
from __future__ import annotations

import json

import pytest
import yaml

from screening.case.files import load_case_bytes
from screening.case.prepare import prepare_case
from screening.core.arrhenius_history import integrate_history
from screening.resources import demo_cases


def reactor_text(accumulated: str) -> str:
    data = yaml.safe_load(demo_cases().joinpath("fw-r301-reactor.yaml").read_text(encoding="utf-8"))
    synthesis = data["heat_sources"][0]
    assert synthesis["order"] == 1 and synthesis["label"].startswith("desired reaction")
    synthesis["specific_power"]["value"] = "25 W/kg"
    synthesis["accumulated_fraction"]["value"] = accumulated
    return yaml.safe_dump(data, sort_keys=False, allow_unicode=True)


@pytest.mark.parametrize("accumulated", ["60 %", "100 %"])
def test_a_synthesis_that_runs_to_completion_screens_to_a_verdict(accumulated, tmp_path, run_cli):
    text = reactor_text(accumulated)
    case = tmp_path / "r301.yaml"
    case.write_text(text, encoding="utf-8")
    proc = run_cli("check", case, "--json")
    assert proc.returncode in (0, 1), proc.stderr  # 0 pass, 1 review or fail (cli.py); never 3
    result = json.loads(proc.stdout)
    assert result["verdict"] in ("pass", "review", "fail")
    # the conversion the history reports for each tracked source is a fraction (definition)
    model = prepare_case(load_case_bytes(text.encode()).spec).model
    hist = integrate_history(model)
    for x in hist.final_conversion:
        assert x is not None and 0.0 <= x <= 1.0
    assert hist.final_conversion[0] == pytest.approx(1.0, abs=1e-9)  # the synthesis has run to completion
