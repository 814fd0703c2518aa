"""A row of a uniform register group equals ``heatscreen check --json`` of the same case written as a file.

Rows of one shape are screened as a group on arrays (``register/columns.py``) and written by the
closed-form writer of ``run/closed_form_group.py``, the same writer ``check`` uses for a group of one.
Here each screened row is compared, every key, with ``check --json`` of the equivalent case file
(the base case with the row's cells written in), on random registers of the simple shape (mass, UA
and sources given) and of tanks given by geometry (every shape and head). The physics behind both
is checked against outside references elsewhere: the closed form against scipy's ``solve_ivp`` and
sympy (tests/core/test_closed_form.py, tests/core/test_time_to_limit_batch.py), the geometry against
mpmath quadrature and ``fluids`` (tests/core). What this file pins down is that the register's array
path and the one-case path write the same object.

The register screens every closed-form row with the vectorised time-to-limit engine, ``check`` with the
one-case engine, so their numbers agree to the engines' stated tolerance, not bit for bit: every float
is compared at 1e-9 relative (tests/core/test_time_to_limit_batch.py: TIME_RTOL, the accuracy asked of
the vectorised engine against the one-case engine; times also within 1e-12 of the horizon), the time of
the peak at 1e-6 (a maximum is flat: the temperature is quadratic in time there, so its time is known
only to about the square root of the rounding of the temperature); texts exactly but for a number shown
one unit apart in its last digit (a value within the engines' agreement of a rounding boundary); every other
value (flags, names, None) exactly.

Keys that differ by design and are left out: ``input_hash`` (a register row hashes the base case and
its cells, ``check`` the file), ``register_row`` and ``backend`` (register only), ``allowable_values``
(``check`` only: the pipeline adds it for uncertain inputs; None here, the cases have none).
"""
from __future__ import annotations

import copy
import json
import math
import re
import warnings
from pathlib import Path

import yaml
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from typer.testing import CliRunner

import screening.register.chunks as chunks
from screening.cli import app
from test_register_columns import BASE, _run, _tank_base, registers, tank_registers

REGISTER_ONLY = ("input_hash", "register_row", "backend", "allowable_values")


def _same(a, b, key: str, horizon: float) -> bool:
    """Equal values: floats within the engines' tolerance (module docstring), everything else exactly."""
    if isinstance(a, float) and isinstance(b, float):
        rel = 1e-6 if key == "peak_time_s" else 1e-9
        return math.isclose(a, b, rel_tol=rel, abs_tol=1e-12 * horizon)
    if isinstance(a, dict) and isinstance(b, dict):
        return list(a) == list(b) and all(_same(a[k], b[k], k, horizon) for k in a)
    if isinstance(a, list) and isinstance(b, list):
        return len(a) == len(b) and all(_same(x, y, key, horizon) for x, y in zip(a, b))
    if isinstance(a, str) and isinstance(b, str) and a != b:
        return _same_text(a, b)
    return type(a) is type(b) and a == b


_NUMBER = re.compile(r"-?\d+(?:\.\d+)?(?:e[-+]?\d+)?")


def _same_text(a: str, b: str) -> bool:
    """The same text up to the rounding of its numbers: a number that lies within the engines' agreement of a
    rounding boundary may show one unit apart in its last digit ("15.7 h" and "15.8 h" for 15.75 h)."""
    na, nb = _NUMBER.findall(a), _NUMBER.findall(b)
    if _NUMBER.sub("#", a) != _NUMBER.sub("#", b) or len(na) != len(nb):
        return False
    for x, y in zip(na, nb):
        if x == y:
            continue
        decimals = len(x.split(".")[1].split("e")[0]) if "." in x else 0
        if "e" in x or abs(float(x) - float(y)) > 1.0001 * 10.0 ** -decimals:
            return False
    return True


def _is_number(cell: str) -> bool:
    try:
        float(cell)
    except ValueError:
        return False
    return True


def _row_case(base: dict, header: list[str], row: list[str]) -> dict:
    """The case file equivalent of a register row: the base case with each filled cell written in (a plain
    number with the header's unit, any other cell as written, as the register reads cells)."""
    data = copy.deepcopy(base)
    for head, cell in zip(header, row):
        if cell == "":
            continue
        path, _, unit = head.partition(" [")
        unit = unit.rstrip("]")
        value = f"{cell.strip()} {unit}" if unit and _is_number(cell) else cell  # a cell's own unit wins
        node = data
        parts = [int(p) if p.isdigit() else p for p in path.split(".")]
        for p in parts[:-1]:
            node = node[p]
        node[parts[-1]] = value
    return data


def _check_json(tmp: Path, case: dict) -> tuple[int, dict | None]:
    path = tmp / "case.yaml"
    path.write_text(yaml.safe_dump(case, sort_keys=False), encoding="utf-8")
    out = CliRunner().invoke(app, ["check", "--json", str(path)])
    if out.exit_code == 2:
        return 2, out.output
    return out.exit_code, json.loads(out.stdout)


def _compare(tmp: Path, base: dict, header, rows, monkeypatch) -> tuple[int, int]:
    """Run the register (counting the rows its groups take) and compare each row with check --json."""
    tmp.mkdir(parents=True, exist_ok=True)
    taken, calls = [], []
    real = chunks.screen_group

    def spy(*args, **kwargs):
        got = real(*args, **kwargs)
        taken.extend(got.results)
        calls.append(1)
        return got

    with monkeypatch.context() as m:
        m.setattr(chunks, "screen_group", spy)
        summary, results, errors, _ = _run(tmp, header, rows, base, False, monkeypatch)
    by_row = {r["register_row"]: r for r in results}
    error_rows = {int(line.split(",", 1)[0]) for line in errors.splitlines()[1:] if line[:1].isdigit()}
    for n, row in enumerate(rows, start=2):
        code, single = _check_json(tmp, _row_case(base, header, row))
        if code == 2:  # a case file check refuses: the register refuses the row too
            assert n not in by_row and n in error_rows, (n, row, single)
            continue
        batch = by_row[n]
        assert single["allowable_values"] is None
        assert set(batch) - set(REGISTER_ONLY) == set(single) - set(REGISTER_ONLY)
        for key in single:
            if key not in REGISTER_ONLY:
                assert _same(batch[key], single[key], key, single["horizon_s"]), (n, key, batch[key], single[key])
        assert list(k for k in batch if k not in REGISTER_ONLY) == list(k for k in single if k not in REGISTER_ONLY)
    _compare.results = results  # the last register's result objects, for a test to look at
    return len(taken), len(calls)


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(case=registers())
def test_simple_register_rows_equal_check_json(tmp_path_factory, monkeypatch, case):
    header, rows, with_detection = case
    base = dict(BASE, detection={"delay": "15 min"}) if with_detection else BASE
    _compare(tmp_path_factory.mktemp("simple"), base, header, rows, monkeypatch)


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(case=tank_registers())
def test_tank_register_rows_equal_check_json(tmp_path_factory, monkeypatch, case):
    shape, heads, header, rows, area, amount = case
    if amount != "fill" and "contents.fill" in header:  # the amount is given another way: no fill column
        k = header.index("contents.fill")
        header = header[:k] + header[k + 1:]
        rows = [r[:k] + r[k + 1:] for r in rows]
    base = _tank_base(shape, heads, area, amount)
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # no library warning on either path
        _compare(tmp_path_factory.mktemp("tanks"), base, header, rows, monkeypatch)


def test_group_rows_are_taken_and_equal_check(tmp_path, monkeypatch):
    """A clean register of each shape goes the array path (all rows but each group's representative), and each row
    still equals check --json."""
    header = ["id", "contents.mass [t]", "heat_loss.ua [W/K]", "limits.0.temperature [degC]", "response_time [min]"]
    rows = [[f"T-{i}", f"{1 + i}", f"{10 * i}", f"{30 + 3 * i}", f"{20 * i}"] for i in range(12)]
    taken, groups = _compare(tmp_path / "simple", BASE, header, rows, monkeypatch)
    assert groups >= 1 and taken == len(rows) - groups  # each group's representative is screened on its own
    tank_header = ["id", "vessel.diameter [m]", "vessel.length [m]", "contents.fill"]
    tank_rows = [[f"V-{i}", f"{1 + 0.2 * i:.3g}", f"{2 + 0.5 * i:.3g}", f"{0.05 + 0.09 * i:.3g}"] for i in range(12)]
    base = _tank_base("horizontal-cylinder", "torispherical", "wetted", "fill")
    taken, groups = _compare(tmp_path / "tanks", base, tank_header, tank_rows, monkeypatch)
    assert groups >= 1 and taken == len(tank_rows) - groups


# ------------------------------------------------------------------ heating media, boiling and an alarm

MEDIA_BASE = {
    "id": "BASE",
    "contents": {"mass": "4 t", "specific_heat": "2.5 kJ/(kg*K)", "initial_temperature": "30 degC",
                 "boiling_point": "95 degC", "latent_heat": "900 kJ/kg"},
    "heat_loss": {"ambient_temperature": "20 degC", "ua": "60 W/K"},
    "heat_sources": [{"kind": "constant", "power": "2 kW"},
                     {"kind": "heating-medium", "medium_temperature": "140 degC", "ua": "150 W/K"},
                     {"kind": "decaying", "power": "20 kW", "time_constant": "2 h"}],
    "limits": [{"name": "onset", "temperature": "70 degC"}, {"name": "high", "temperature": "120 degC"}],
    "response_time": "30 min",
}

MEDIA_COLUMNS = {
    "contents.mass [t]": st.sampled_from(["0.05", "0.4", "4", "30"]),
    "contents.initial_temperature [degC]": st.sampled_from(["10", "30", "94", "99"]),  # 99: above the boiling point
    "heat_loss.ua [W/K]": st.sampled_from(["0", "20", "400"]),
    "heat_sources.1.ua [W/K]": st.sampled_from(["0", "50", "300", "2000"]),
    "heat_sources.1.medium_temperature [degC]": st.sampled_from(["60", "90", "140", "180"]),
    "heat_sources.2.power [kW]": st.sampled_from(["0", "5", "80"]),
    "horizon [h]": st.sampled_from(["1", "12", "200"]),
    "limits.0.temperature [degC]": st.sampled_from(["25", "50", "90"]),
    "limits.1.temperature [degC]": st.sampled_from(["96", "120", "200"]),
    "response_time [min]": st.sampled_from(["0", "45", "5000"]),
}


@st.composite
def media_registers(draw):
    chosen = draw(st.lists(st.sampled_from(sorted(MEDIA_COLUMNS)), min_size=1, max_size=6, unique=True))
    venting = draw(st.sampled_from([None, "open", "closed"]))  # None: no vessel block (a closed vessel)
    boiling = draw(st.booleans())
    detection = draw(st.sampled_from([None, "delay", "alarm"]))
    header = ["id"] + chosen
    if detection == "alarm" and draw(st.booleans()):
        header.append("detection.alarm_temperature [degC]")
    n = draw(st.integers(2, 8))
    rows = []
    for i in range(n):
        row = [f"M-{i}"] + [draw(MEDIA_COLUMNS[c]) for c in chosen]
        if len(header) > len(chosen) + 1:
            row.append(draw(st.sampled_from(["35", "60", "110"])))
        rows.append(row)
    return header, rows, venting, boiling, detection


def _media_base(venting, boiling, detection) -> dict:
    base = copy.deepcopy(MEDIA_BASE)
    if venting is not None:
        base["vessel"] = {"venting": venting}
    if not boiling:
        base["contents"].pop("boiling_point")
        base["contents"].pop("latent_heat")
    if detection == "delay":
        base["detection"] = {"delay": "10 min"}
    elif detection == "alarm":
        base["detection"] = {"alarm_temperature": "45 degC"}
    return base


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(case=media_registers())
def test_media_boiling_alarm_register_rows_equal_check_json(tmp_path_factory, monkeypatch, case):
    """Rows with a heating medium left on, boiling data (open or closed vessel) and an alarm, varying the
    medium's ua and temperature, the alarm and the start (some above the boiling point, which the general
    path refuses or warns about), equal check --json of the same case file, every key."""
    header, rows, venting, boiling, detection = case
    _compare(tmp_path_factory.mktemp("media"), _media_base(venting, boiling, detection), header, rows, monkeypatch)


def test_media_boiling_alarm_rows_go_the_array_path(tmp_path, monkeypatch):
    """A clean register of such rows is screened as a group (all rows but each group's representative),
    including rows that boil (open vessel: held at the boiling point, boil-off and drying) and rows whose
    alarm never sounds."""
    header = ["id", "contents.mass [t]", "heat_sources.1.ua [W/K]", "detection.alarm_temperature [degC]",
              "horizon [h]"]
    rows = [[f"B-{i}", f"{0.05 + 0.6 * i:.3g}", f"{100 * i}", f"{40 + 15 * i}", f"{2 + 20 * i}"] for i in range(12)]
    base = _media_base("open", True, "alarm")
    taken, groups = _compare(tmp_path / "media", base, header, rows, monkeypatch)
    assert groups >= 1 and taken == len(rows) - groups
    results = _compare.results
    assert any(r["boiling"]["time_to_boil_s"] is not None for r in results)
    assert any(r["boiling"]["time_to_dry_s"] is not None for r in results)
    assert any(r["detection_basis"] == "alarm" and r["detection_time_s"] is None for r in results)


# ------------------------------------------------------------------ fire exposure

FIRE_BASE = {
    "id": "BASE",
    "vessel": {"venting": "open"},
    "contents": {"mass": "6 t", "specific_heat": "2.2 kJ/(kg*K)", "initial_temperature": "20 degC",
                 "boiling_point": "110 degC", "latent_heat": "600 kJ/kg"},
    "heat_loss": {"ambient_temperature": "25 degC", "ua": "80 W/K"},  # set to 0 under fire (prepare warns)
    "heat_sources": [{"kind": "constant", "power": "1 kW"},
                     {"kind": "fire", "wetted_area": "12 m^2", "environment_factor": "0.5"}],
    "limits": [{"name": "onset", "temperature": "60 degC"}, {"name": "rupture", "temperature": "150 degC"}],
    "response_time": "20 min",
}

FIRE_COLUMNS = {
    "contents.mass [t]": st.sampled_from(["0.5", "6", "40"]),
    "contents.initial_temperature [degC]": st.sampled_from(["5", "20", "80", "115"]),  # 115: above boiling
    "heat_sources.0.power [kW]": st.sampled_from(["0", "1", "50"]),
    "horizon [h]": st.sampled_from(["0.5", "4", "48"]),
    "limits.0.temperature [degC]": st.sampled_from(["30", "60", "100"]),
    "limits.1.temperature [degC]": st.sampled_from(["105", "150"]),
}


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(chosen=st.lists(st.sampled_from(sorted(FIRE_COLUMNS)), min_size=1, max_size=5, unique=True),
       n=st.integers(2, 8), boiling=st.booleans(), data=st.data())
def test_fire_register_rows_equal_check_json(tmp_path_factory, monkeypatch, chosen, n, boiling, data):
    """Rows under fire exposure (API 521 heat input on a given wetted area; UA set to 0 with prepare's warning;
    the fire cautions), with and without boiling in an open vessel, equal check --json, every key."""
    base = copy.deepcopy(FIRE_BASE)
    if not boiling:
        base["contents"].pop("boiling_point")
        base["contents"].pop("latent_heat")
    header = ["id"] + chosen
    rows = [[f"F-{i}"] + [data.draw(FIRE_COLUMNS[c]) for c in chosen] for i in range(n)]
    _compare(tmp_path_factory.mktemp("fire"), base, header, rows, monkeypatch)


def test_fire_rows_go_the_array_path(tmp_path, monkeypatch):
    header = ["id", "contents.mass [t]", "heat_sources.0.power [kW]", "limits.0.temperature [degC]"]
    rows = [[f"F-{i}", f"{0.5 + 2 * i}", f"{5 * i}", f"{40 + 5 * i}"] for i in range(12)]
    taken, groups = _compare(tmp_path / "fire", FIRE_BASE, header, rows, monkeypatch)
    assert groups >= 1 and taken == len(rows) - groups
    assert all(r["fire"] and r["ua_W_per_K"] == 0.0 for r in _compare.results)
