"""Each kind of bad input gives a CaseError naming the field (library) or exit code 2 (CLI), never a traceback.

The checks here are of the tool's own contract (field paths, messages, exit codes), with the physical facts
they lean on named where used: absolute zero is 0 K = -273.15 degC = -459.67 degF (definition of the scales).
"""
from __future__ import annotations

import pytest

from screening.case.files import load_case_bytes, load_case_file
from screening.case.schema import CaseError

GOOD = """\
id: T-1
contents:
  mass: 1000 kg
  specific_heat: 2 kJ/(kg*K)
  initial_temperature: 20 degC
heat_loss:
  ambient_temperature: 20 degC
  ua: 100 W/K
heat_sources:
  - kind: constant
    power: 1 kW
  - kind: decaying
    power: 2 kW
    time_constant: 1 h
limits:
  - name: onset
    temperature: 80 degC
"""


def problems(text: str | bytes, kind: str = "yaml") -> list[tuple[str, str]]:
    raw = text.encode() if isinstance(text, str) else text
    with pytest.raises(CaseError) as info:
        load_case_bytes(raw, kind)
    return [(p.field, p.message) for p in info.value.problems]


def edit(old: str, new: str) -> str:
    assert old in GOOD
    return GOOD.replace(old, new, 1)


def test_the_base_case_is_valid():
    loaded = load_case_bytes(GOOD.encode())
    assert loaded.spec.id == "T-1"


# (name, text, field expected, message fragments)
BAD = [
    ("negative mass", edit("mass: 1000 kg", "mass: -5 kg"), "contents.mass", ["greater than zero"]),
    ("mass in metres", edit("mass: 1000 kg", "mass: 5 m"), "contents.mass", ["not a mass"]),
    ("unknown unit", edit("mass: 1000 kg", "mass: 5 blorbs"), "contents.mass", ["unknown unit", "blorbs"]),
    ("below absolute zero (degC)", edit("initial_temperature: 20 degC", "initial_temperature: -300 degC"),
     "contents.initial_temperature", ["absolute zero"]),
    ("below absolute zero (degF)", edit("ambient_temperature: 20 degC", "ambient_temperature: -500 degF"),
     "heat_loss.ambient_temperature", ["absolute zero"]),
    ("at absolute zero (K)", edit("temperature: 80 degC", "temperature: 0 K"), "limits.0.temperature",
     ["absolute zero"]),
    ("misspelt field", edit("specific_heat:", "specfic_heat:"), "contents.specfic_heat",
     ["unknown field", "did you mean 'specific_heat'"]),
    ("unknown heat source kind", edit("kind: decaying", "kind: nuclear"), "heat_sources.1",
     ["unknown heat source kind 'nuclear'", "decaying"]),
    ("heat source without kind", edit("  - kind: decaying\n", "  - label: x\n"), "heat_sources.1",
     ["needs a kind"]),
    ("bare number for a time", edit("time_constant: 1 h", "time_constant: 30"), "heat_sources.1.time_constant",
     ["no unit", "time"]),
    ("bare number for a mass", edit("mass: 1000 kg", "mass: 1000"), "contents.mass", ["no unit"]),
    ("wrong dimension in a source", edit("time_constant: 1 h", "time_constant: 1 kg"),
     "heat_sources.1.time_constant", ["not a time"]),
    ("missing required field", edit("  initial_temperature: 20 degC\n", ""), "contents.initial_temperature",
     ["required field is missing"]),
    ("missing id", edit("id: T-1\n", ""), "id", ["required field is missing"]),
    ("list instead of mapping", edit("heat_loss:\n  ambient_temperature: 20 degC\n  ua: 100 W/K\n",
                                     "heat_loss: [20 degC, 100 W/K]\n"), "heat_loss", ["expected a mapping"]),
    ("mapping instead of list", edit("limits:\n  - name: onset\n    temperature: 80 degC\n",
                                     "limits:\n  name: onset\n  temperature: 80 degC\n"), "limits",
     ["expected a list"]),
    ("no limits", edit("limits:\n  - name: onset\n    temperature: 80 degC\n", "limits: []\n"), "limits",
     ["at least one limit"]),
    ("both time constant and half-life", edit("time_constant: 1 h", "time_constant: 1 h\n    half_life: 1 h"),
     "heat_sources.1", ["exactly one of time_constant and half_life"]),
    ("unknown key in a quantity mapping", edit("mass: 1000 kg", "mass: {value: 1000 kg, sorce: scale}"),
     "contents.mass", ["sorce"]),
    ("misspelt field in a source", edit("time_constant: 1 h", "tim_constant: 1 h"),
     "heat_sources.1.tim_constant", ["did you mean 'time_constant'"]),
    ("fill without a vessel", edit("mass: 1000 kg", "fill: 70 %\n  density: 1000 kg/m^3"), "contents.fill",
     ["needs a vessel"]),
    ("two amounts", edit("mass: 1000 kg", "mass: 1000 kg\n  volume: 1 m^3\n  density: 1000 kg/m^3"),
     "contents", ["only one of mass, fill and volume"]),
    ("bad mixing word", edit("initial_temperature: 20 degC", "initial_temperature: 20 degC\n  mixing: shaken"),
     "contents.mixing", ["'shaken' is not allowed", "stirred"]),
]


@pytest.mark.parametrize("name,text,field,fragments", BAD, ids=[b[0] for b in BAD])
def test_bad_input_names_its_field(name, text, field, fragments):
    found = problems(text)
    fields = [f for f, _ in found]
    assert field in fields, found
    message = dict(found)[field]
    for fragment in fragments:
        assert fragment in message, (fragment, message)


def test_heat_source_path_has_no_union_tag():
    # The path is heat_sources.1.time_constant, not heat_sources.1.decaying.time_constant (pydantic's tag).
    found = problems(edit("time_constant: 1 h", "time_constant: -1 h"))
    assert [f for f, _ in found] == ["heat_sources.1.time_constant"]
    for f, _ in problems(edit("kind: constant\n    power: 1 kW", "kind: constant\n    power: 1 kg")):
        assert "constant" not in f.split(".") and "function-" not in f


def test_several_problems_are_reported_together():
    text = edit("mass: 1000 kg", "mass: -5 kg").replace("ua: 100 W/K", "ua: 100 blorbs")
    fields = [f for f, _ in problems(text)]
    assert "contents.mass" in fields and "heat_loss.ua" in fields


def test_yaml_syntax_error_gives_line_number():
    text = GOOD.replace("  ua: 100 W/K\n", "  ua: [100 W/K\n")  # unclosed flow sequence on line 8
    ((field, message),) = problems(text)
    assert field == "(file)"
    assert "YAML syntax error" in message and "line 9" in message  # reported where the parser fails


def test_yaml_syntax_error_line_is_the_broken_line():
    text = "id: T-1\ncontents:\n  mass: 1000 kg\n   specific_heat: 2 kJ/(kg*K)\n"  # bad indent on line 4
    ((field, message),) = problems(text)
    assert field == "(file)" and "line 4" in message


def test_duplicate_yaml_key_is_rejected_with_its_line():
    text = GOOD.replace("  ua: 100 W/K\n", "  ua: 100 W/K\n  ua: 200 W/K\n")
    ((field, message),) = problems(text)
    assert field == "(file)"
    assert "'ua'" in message and "twice" in message and "line 9" in message


@pytest.mark.parametrize("raw", [b"", b"   \n", b"# only a comment\n"])
def test_empty_file(raw):
    ((field, message),) = problems(raw)
    assert field == "(file)" and "empty" in message


def test_top_level_list_is_rejected():
    ((field, message),) = problems("- 1\n- 2\n")
    assert field == "(case)" and "mapping" in message


def test_json_and_toml_syntax_errors():
    ((field, message),) = problems('{"id": "x",\n "contents": }', "json")
    assert field == "(file)" and "JSON syntax error at line 2" in message
    ((field, message),) = problems('id = "x"\ncontents = = 3\n', "toml")
    assert field == "(file)" and "TOML syntax error" in message


def test_not_utf8():
    ((field, message),) = problems(b"id: \xff\xfe\n")
    assert field == "(file)" and "UTF-8" in message


def test_missing_file(tmp_path):
    with pytest.raises(CaseError) as info:
        load_case_file(tmp_path / "nope.yaml")
    assert info.value.problems[0].field == "(file)" and "no such file" in info.value.problems[0].message


def _alias_bomb(levels: int = 9) -> str:
    """'Billion laughs': nested YAML aliases that stand for 9**levels strings (shared, not expanded)."""
    names = "abcdefghijkl"[: levels + 1]
    lines = ['  a: &a ["x","x","x","x","x","x","x","x","x"]']
    for prev, name in zip(names, names[1:]):
        lines.append(f"  {name}: &{name} [" + ",".join([f"*{prev}"] * 9) + "]")
    return "\n".join(lines), names[-1]


def test_yaml_alias_bomb_gives_a_short_message_quickly():
    import time

    anchors, top = _alias_bomb(9)
    text = "x_anchors:\n" + anchors + "\n" + GOOD.replace("id: T-1\n", f"id: T-1\ntitle: *{top}\nmeta:\n  notes: *{top}\n")
    start = time.perf_counter()
    found = problems(text)
    elapsed = time.perf_counter() - start
    fields = dict(found)
    # the loader refuses a document whose aliases expand past a fixed size, before any validation walks it
    assert list(fields) == ["(file)"] and "aliases" in fields["(file)"]
    assert all(len(m) < 2000 for m in fields.values())
    assert elapsed < 5.0


# --------------------------------------------------------------------------- through the CLI

CLI_BAD = [
    ("negative mass", edit("mass: 1000 kg", "mass: -5 kg"), ["contents.mass", "greater than zero"]),
    ("unknown unit", edit("mass: 1000 kg", "mass: 5 blorbs"), ["contents.mass", "blorbs"]),
    ("misspelt field", edit("specific_heat:", "specfic_heat:"), ["contents.specfic_heat", "specific_heat"]),
    ("yaml syntax", GOOD.replace("  ua: 100 W/K\n", "  ua: [100 W/K\n"), ["YAML syntax error", "line 9"]),
    ("duplicate key", GOOD.replace("  ua: 100 W/K\n", "  ua: 100 W/K\n  ua: 200 W/K\n"), ["'ua'", "twice"]),
    ("source path", edit("time_constant: 1 h", "time_constant: 30"), ["heat_sources.1.time_constant"]),
    ("empty", "", ["empty"]),
]


@pytest.mark.parametrize("name,text,fragments", CLI_BAD, ids=[b[0] for b in CLI_BAD])
def test_cli_bad_input_exit_2_without_traceback(name, text, fragments, tmp_path, run_cli):
    case = tmp_path / "case.yaml"
    case.write_text(text, encoding="utf-8")
    proc = run_cli("check", case, "--json")
    assert proc.returncode == 2, (proc.stdout, proc.stderr)
    assert "Traceback" not in proc.stderr and "Traceback" not in proc.stdout
    for fragment in fragments:
        assert fragment in proc.stderr, proc.stderr
    assert proc.stdout.strip() == ""  # no partial JSON on stdout


def test_cli_missing_file_exit_2(tmp_path, run_cli):
    proc = run_cli("check", tmp_path / "missing.yaml")
    assert proc.returncode == 2
    assert "no such file" in proc.stderr and "Traceback" not in proc.stderr
