"""A key given twice, in any case-file format, is refused with the key, its path and its line.

JSON's standard reading keeps the last value of a key given twice and YAML's merge key ('<<') lets a later
key override a merged one: either way a value the author wrote is silently dropped.  The contract checked
here is the tool's own (the problem is reported on '(file)', as syntax errors are, naming key, path and
line); the line numbers are counted by hand in the texts below.
"""
from __future__ import annotations

import json

import pytest

from screening.case.files import load_case_bytes
from screening.case.schema import CaseError

CASE = {
    "id": "T-1",
    "contents": {"mass": "1000 kg", "specific_heat": "2 kJ/(kg*K)", "initial_temperature": "20 degC"},
    "heat_loss": {"ambient_temperature": "20 degC", "ua": "100 W/K"},
    "heat_sources": [{"kind": "constant", "power": "1 kW"},
                     {"kind": "decaying", "power": "2 kW", "time_constant": "1 h"}],
    "limits": [{"name": "onset", "temperature": "80 degC"}],
}


def messages(text: str, kind: str) -> list[str]:
    with pytest.raises(CaseError) as info:
        load_case_bytes(text.encode(), kind)
    assert all(p.field == "(file)" for p in info.value.problems), info.value.problems
    return [p.message for p in info.value.problems]


def json_lines() -> list[str]:
    """The case as indented JSON, one key per line (line n of the file is lines[n - 1])."""
    return json.dumps(CASE, indent=2).splitlines()


def with_line_after(lines: list[str], anchor: str, extra: str) -> tuple[str, int]:
    """Insert ``extra`` after the line containing ``anchor``; the text and the inserted line's number."""
    i = next(k for k, line in enumerate(lines) if anchor in line)
    indent = lines[i][: len(lines[i]) - len(lines[i].lstrip())]
    out = lines[: i + 1] + [indent + extra] + lines[i + 1:]
    return "\n".join(out) + "\n", i + 2


@pytest.mark.parametrize("anchor, extra, key, path", [
    ('"id": "T-1"', '"id": "T-2",', "id", "id"),  # top level
    ('"mass": "1000 kg"', '"mass": "10 kg",', "mass", "contents.mass"),  # nested in an object
    ('"ua": "100 W/K"', ',"ua": "1 W/K"', "ua", "heat_loss.ua"),  # last key of its object, repeated
    ('"time_constant": "1 h"', ',"power": "0 W"', "power", "heat_sources.1.power"),  # in a list item
])
def test_json_key_given_twice_is_refused_with_key_path_and_line(anchor, extra, key, path):
    text, line = with_line_after(json_lines(), anchor, extra)
    (message,) = messages(text, "json")
    assert f"'{key}'" in message and "twice" in message
    assert path in message and f"line {line}" in message


def test_json_keys_given_twice_in_several_places_are_all_reported():
    doc = ('{"id": "T-1", "id": "T-1",\n'
           ' "contents": {"mass": "1000 kg", "specific_heat": "2 kJ/(kg*K)",\n'
           '  "initial_temperature": "20 degC", "specific_heat": "2 kJ/(kg*K)"},\n'
           ' "heat_loss": {"ambient_temperature": "20 degC", "ua": "100 W/K"},\n'
           ' "limits": [{"name": "onset", "temperature": "80 degC", "name": "onset"}]}\n')
    found = messages(doc, "json")
    assert len(found) == 3
    assert "id (line 1)" in found[0]
    assert "contents.specific_heat (line 3)" in found[1]  # the same value twice is still refused
    assert "limits.0.name (line 5)" in found[2]


def test_json_key_given_twice_with_escapes_and_braces_in_strings():
    # strings holding quotes, braces and brackets do not confuse the search for the line
    case = {"title": 'a "quoted" {title} [x], with: punctuation', **CASE}
    lines = json.dumps(case, indent=2).splitlines()
    text, line = with_line_after(lines, '"title"', '"title": "again",')
    (message,) = messages(text, "json")
    assert "'title'" in message and f"title (line {line})" in message


def yaml_text() -> str:
    return """\
id: T-1
contents:
  mass: 1000 kg
  specific_heat: 2 kJ/(kg*K)
  initial_temperature: 20 degC
heat_loss:
  ambient_temperature: 20 degC
  ua: 100 W/K
heat_sources:
  - kind: decaying
    power: 2 kW
    time_constant: 1 h
limits:
  - name: onset
    temperature: 80 degC
"""


def test_yaml_key_given_twice_in_a_list_item_names_its_path():
    text = yaml_text().replace("    time_constant: 1 h\n", "    time_constant: 1 h\n    power: 0 W\n")
    (message,) = messages(text, "yaml")
    assert "'power'" in message and "heat_sources.0.power" in message and "line 13" in message


@pytest.mark.parametrize("where", ["heat_loss", "top"])
def test_yaml_merge_key_is_refused_with_a_clear_message(where):
    if where == "top":
        text = "defaults: &d {horizon: 8 h}\n<<: *d\n" + yaml_text()
        line, path = 2, "the top level"
    else:
        text = "x_loss: &loss {ua: 5 W/K}\n" + yaml_text().replace("heat_loss:\n", "heat_loss:\n  <<: *loss\n")
        line, path = 8, "heat_loss"
    found = messages(text, "yaml")
    assert len(found) == 1
    (message,) = found
    assert "merge key '<<'" in message and f"at {path} (line {line})" in message
    assert "override" in message  # says why: a key beside it would silently override the merged value


def test_toml_key_given_twice_is_refused_naming_the_key():
    text = ('id = "T-1"\nhorizon = "8 h"\nhorizon = "9 h"\n'
            '[contents]\nmass = "1000 kg"\nspecific_heat = "2 kJ/(kg*K)"\ninitial_temperature = "20 degC"\n')
    (message,) = messages(text, "toml")
    assert "line 3" in message and "'horizon'" in message and "twice" in message
