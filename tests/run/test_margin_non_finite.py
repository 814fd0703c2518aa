"""`margin` scan bounds that spell infinity or not-a-number are refused, naming the option (exit 2).

Spellings as Python's float() and YAML/JSON/TOML write them, and a number too large for a float (1e999;
IEEE 754 double, about 1.8e308), from memory.  The check is the tool's own contract.
"""
from __future__ import annotations

import pytest

from screening.case.files import load_case_bytes
from screening.case.prepare import prepare_case
from screening.case.schema import CaseError
from screening.run.allowable_values import locate_input, parse_bound

CASE = """\
id: M-1
contents: {mass: 1000 kg, specific_heat: 2 kJ/(kg*K), initial_temperature: 20 degC}
heat_loss: {ambient_temperature: 20 degC, ua: 100 W/K}
heat_sources: [{kind: constant, power: 1 kW}]
limits: [{name: onset, temperature: 80 degC}]
"""
BOUNDS = {
    "contents.mass": ["inf kg", "-inf kg", "nan kg", ".inf kg", "Infinity kg", "1e999 kg", "inf", "nan"],
    "heat_loss.ambient_temperature": ["inf degC", "-inf K", "nan K", "1e999 degC", ".nan degC"],
}
PERCENT = ["inf %", "-inf%", "nan %", "NaN%", "1e999 %", "infinity %"]


@pytest.mark.parametrize("path", list(BOUNDS))
@pytest.mark.parametrize("option", ["--low", "--high"])
def test_non_finite_bound_is_refused_naming_the_option(path, option):
    spec = load_case_bytes(CASE.encode()).spec
    _, q, _ = locate_input(prepare_case(spec).spec, path)
    for text in BOUNDS[path] + PERCENT:
        with pytest.raises(CaseError) as info:
            parse_bound(text, q, option)
        ((field, message),) = [(p.field, p.message) for p in info.value.problems]
        assert field == option and "not a finite number" in message and "finite number is expected" in message


def test_a_percentage_that_is_not_a_number_is_an_input_error():
    _, q, _ = locate_input(prepare_case(load_case_bytes(CASE.encode()).spec).spec, "contents.mass")
    with pytest.raises(CaseError) as info:
        parse_bound("lots %", q, "--high")
    ((field, message),) = [(p.field, p.message) for p in info.value.problems]
    assert field == "--high" and "'lots %' is not a percentage" in message


def test_cli_margin_refuses_an_infinite_bound_with_exit_2(tmp_path, run_cli):
    case = tmp_path / "m.yaml"
    case.write_text(CASE, encoding="utf-8")
    proc = run_cli("margin", case, "--vary", "contents.mass", "--low", "100 kg", "--high", "inf %")
    assert proc.returncode == 2, (proc.stdout, proc.stderr)  # invalid input (cli.py)
    assert "--high: 'inf %' is not a finite number" in proc.stderr and "Traceback" not in proc.stderr
