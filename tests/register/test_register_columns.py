"""Uniform row groups screened a column at a time give exactly what the row-by-row path gives.

The reference here is the project's own general register path (each row validated, prepared and
screened on its own), which tests/register/test_register_batch.py in turn checks against case files and
`check`; the physics behind both is checked against scipy/sympy in test_closed_form.py and
tests/core/test_time_to_limit_batch.py.  What this file pins down is that the fast path changes nothing: the
same result objects, the same errors, the same results.csv, byte for byte.
"""
from __future__ import annotations

import csv
import json
from pathlib import Path

import pytest
import yaml
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import screening.register.chunks as chunks
import screening.register.columns as columns
from screening import verdict as rules
from screening.verdict import engine
from screening.register.batch import run_batch

BASE = {
    "id": "BASE",
    "contents": {"mass": "1 t", "specific_heat": "3 kJ/(kg*K)", "initial_temperature": "25 degC"},
    "heat_loss": {"ambient_temperature": "30 degC", "ua": "100 W/K"},
    "heat_sources": [{"kind": "constant", "power": "1 kW"},
                     {"kind": "decaying", "power": "10 kW", "half_life": "2 h"},
                     {"kind": "decaying", "power": "3 kW", "time_constant": "30 min"}],
    "limits": [{"name": "onset", "temperature": "60 degC"}, {"name": "boil", "temperature": "100 degC"}],
    "response_time": "2 h",
}

# column -> strategy of cell texts (valid values, edge cases, and a few cells the fast parse refuses)
COLUMNS = {
    "title": st.sampled_from(["", "Hold tank", "Tote, bay 3"]),
    "contents.mass [t]": st.one_of(st.floats(0.001, 60).map(lambda v: f"{v:.5g}"), st.just("1e26"),
                                   st.just("-2"), st.just("12 kg")),
    "contents.specific_heat": st.sampled_from(["2.1 kJ/(kg*K)", "0.5 Btu/(lb*degF)", "4180 J/(kg*K)", "3 m", ""]),
    "contents.initial_temperature [degF]": st.sampled_from(["59", "77", "140", "212", "-500"]),
    "heat_loss.ambient_temperature [K]": st.sampled_from(["273.15", "300", "320.5"]),
    "heat_loss.ua [W/K]": st.one_of(st.floats(0, 900).map(lambda v: f"{v:.4g}"), st.just("0"), st.just("inf")),
    "horizon [h]": st.sampled_from(["0.5", "3", "72", "400"]),
    "response_time [min]": st.sampled_from(["0", "30", "120", "6000", ""]),
    "heat_sources.0.power [kW]": st.sampled_from(["0", "0.5", "8", "-1"]),
    "heat_sources.1.power [kW]": st.floats(0, 80).map(lambda v: f"{v:.4g}"),
    "heat_sources.1.half_life [h]": st.sampled_from(["0.2", "3", "48", "0"]),
    "heat_sources.2.time_constant": st.sampled_from(["10 min", "1 h", "1e-3 s"]),
    "limits.0.temperature [degC]": st.sampled_from(["20", "40", "55", "90"]),
    "limits.1.temperature [degC]": st.sampled_from(["60", "100", "150"]),
}


@st.composite
def registers(draw):
    chosen = draw(st.lists(st.sampled_from(sorted(COLUMNS)), min_size=1, max_size=8, unique=True))
    header = ["id"] + chosen
    n = draw(st.integers(2, 10))
    rows = [[f"V-{i}"] + [draw(COLUMNS[c]) for c in chosen] for i in range(n)]
    with_detection = draw(st.booleans())
    return header, rows, with_detection


def _run(tmp: Path, header, rows, base, general: bool, monkeypatch):
    reg = tmp / "register.csv"
    with open(reg, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(header)
        w.writerows(rows)
    base_file = tmp / "base.yaml"
    base_file.write_text(yaml.safe_dump(base, sort_keys=False), encoding="utf-8")
    out = tmp / ("general" if general else "columnar")
    with monkeypatch.context() as m:
        if general:
            m.setattr(columns, "plan_group", lambda rep, fast_cols: None)
        summary = run_batch(reg, out, base_path=base_file, workers=1)
    return (summary, json.loads((out / "results.json").read_text(encoding="utf-8")),
            (out / "errors.csv").read_text(encoding="utf-8"), (out / "results.csv").read_text(encoding="utf-8"))


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(case=registers())
def test_columnar_group_equals_row_by_row(tmp_path_factory, monkeypatch, case):
    header, rows, with_detection = case
    base = dict(BASE, detection={"delay": "15 min"}) if with_detection else BASE
    tmp = tmp_path_factory.mktemp("cols")
    fast = _run(tmp, header, rows, base, False, monkeypatch)
    slow = _run(tmp, header, rows, base, True, monkeypatch)
    assert fast[0] == {**slow[0], "out_dir": fast[0]["out_dir"]}
    assert fast[1] == slow[1]  # every result object, every key
    assert fast[2] == slow[2]  # errors.csv
    assert fast[3] == slow[3]  # results.csv


def test_clean_uniform_register_is_screened_columnwise(tmp_path, monkeypatch):
    taken = []
    real = columns.screen_group

    def spy(*args, **kwargs):
        out = real(*args, **kwargs)
        taken.append(len(out.results))
        return out

    monkeypatch.setattr(chunks, "screen_group", spy)
    header = ["id", "contents.mass [t]", "heat_loss.ua [W/K]", "limits.0.temperature [degC]"]
    rows = [[f"T-{i}", f"{1 + i}", f"{50 + 10 * i}", f"{40 + i}"] for i in range(30)]
    fast = _run(tmp_path, header, rows, BASE, False, monkeypatch)
    # each chunk of rows is one group: all rows but its representative (screened in full) go columnwise
    assert len(taken) >= 1 and sum(taken) == len(rows) - len(taken)
    slow = _run(tmp_path, header, rows, BASE, True, monkeypatch)
    assert fast[1] == slow[1] and fast[3] == slow[3]


def test_known_quantities_give_the_same_verdicts(tmp_path, monkeypatch):
    """evaluate() with a group's known quantities equals evaluate() from scratch, for every row."""
    header = ["id", "contents.mass [t]", "heat_loss.ua [W/K]", "response_time [min]", "limits.0.temperature [degC]"]
    rows = [[f"T-{i}", f"{0.5 + 3 * i}", f"{20 * i}", f"{30 * i}", f"{26 + 9 * i}"] for i in range(12)]
    _, results, _, _ = _run(tmp_path, header, rows, BASE, False, monkeypatch)
    rule_set = rules.load_rule_set(None)
    bare = [{k: v for k, v in r.items() if k not in ("verdict", "reasons", "rule_set", "register_row")}
            for r in results]
    known = rules.constant_quantities(bare[0], columns.VARYING_KEYS)
    assert "tmr_adiabatic" in known.values and "smallest_margin" not in known.values
    for r in bare:
        assert rules.evaluate(rule_set, r, known).to_dict() == rules.evaluate(rule_set, r).to_dict()


def test_key_trace_sees_every_read():
    traced = engine._KeyTrace({"a": 1, "b": {"c": 2}})
    traced.get("a")
    _ = traced["b"]["c"]
    assert "z" not in traced
    assert traced.seen == {"a", "b", "z"}
    list(traced.items())
    assert "*" in traced.seen


def test_results_csv_columns_when_limit_names_differ_between_chunks(tmp_path, monkeypatch):
    """Chunks with other limit names than the register's are re-laid under the register's columns."""
    from screening.register.outputs import csv_parts, results_csv_from_parts

    header = ["id", "contents.mass [t]", "limits.1.name", "limits.1.temperature [degC]"]
    rows = [[f"T-{i}", f"{1 + i}", "", ""] for i in range(6)] + [["T-6", "2", "rupture", "140"],
                                                                 ["T-7", "3", "rupture", "150"]]
    base = dict(BASE, limits=[BASE["limits"][0]])
    _, results, errors, text = _run(tmp_path, header, rows, base, False, monkeypatch)
    assert errors.splitlines() == ["row,id,field,message"]
    expected = results_csv_from_parts([csv_parts(r) for r in results], ["onset", "rupture"])
    assert text == expected
    assert text.splitlines()[0].count("time_to_limit_h") == 2


def test_summary_from_rows_in_parts_equals_summary_from_results(monkeypatch):
    """The register summary built from per-part rows is the PDF built from all the results at once."""
    from screening.report.register_summary import render_register_summary, summarise_register_results

    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1767225600")
    from memo_fixtures import all_cases

    # more vessels than the summary's table shows (250), so the table is the first of an ordering
    results = [dict(c, id=f"V-{i:03d}") for i, c in enumerate(all_cases() * 90)]
    whole = render_register_summary(results)
    k = len(results) // 2
    rows = summarise_register_results(results[:k]) + summarise_register_results(results[k:], start=k)
    assert render_register_summary(rows, summarised=True) == whole


# ------------------------------------------------------------------ tanks given by geometry

TANK_BASE = {
    "id": "BASE",
    "vessel": {"shape": "horizontal-cylinder", "diameter": "2.5 m", "length": "6 m", "heads": "torispherical"},
    "contents": {"fill": "0.6", "density": "900 kg/m^3", "specific_heat": "2.1 kJ/(kg*K)",
                 "initial_temperature": "25 degC"},
    "heat_loss": {"ambient_temperature": "30 degC", "coefficient": "5 W/(m^2*K)", "area": "wetted"},
    "heat_sources": [{"kind": "constant", "power": "1 kW"},
                     {"kind": "decaying", "power": "10 kW", "time_constant": "3 h"}],
    "limits": [{"name": "onset", "temperature": "60 degC"}],
    "response_time": "2 h",
}

# every shape and head the schema accepts (structure, the same for a whole register here)
TANK_SHAPES = [("vertical-cylinder", h) for h in ("flat", "hemispherical", "ellipsoidal", "torispherical")] \
    + [("horizontal-cylinder", h) for h in ("flat", "hemispherical", "ellipsoidal", "torispherical")] \
    + [("sphere", None), ("box", None)]

TANK_COLUMNS = {
    "vessel.diameter [m]": st.one_of(st.floats(0.3, 6).map(lambda v: f"{v:.4g}"), st.just("1e-200")),
    "vessel.length [m]": st.floats(0.1, 20).map(lambda v: f"{v:.4g}"),
    "vessel.width [m]": st.floats(0.2, 5).map(lambda v: f"{v:.4g}"),
    "vessel.height [m]": st.floats(0.2, 5).map(lambda v: f"{v:.4g}"),
    "vessel.crown_radius [m]": st.sampled_from(["2.5", "3.1", "1.0"]),  # 1.0 m is below D/2: an error
    "vessel.knuckle_radius [m]": st.sampled_from(["0.15", "0.4"]),
    "contents.fill": st.one_of(st.floats(0.001, 1.0).map(lambda v: f"{v:.4g}"), st.just("1.2"), st.just("0")),
    "contents.density [kg/m^3]": st.sampled_from(["800", "1000", "1450"]),
    "heat_loss.coefficient [W/(m^2*K)]": st.sampled_from(["0", "2.5", "8", "40"]),
    "contents.specific_heat [kJ/(kg*K)]": st.sampled_from(["2.1", "4.18"]),
    "heat_sources.1.power [kW]": st.floats(0, 80).map(lambda v: f"{v:.4g}"),
    "limits.0.temperature [degC]": st.sampled_from(["40", "55", "90"]),
}


@st.composite
def tank_registers(draw):
    shape, heads = draw(st.sampled_from(TANK_SHAPES))
    need = {"box": ["vessel.length [m]", "vessel.width [m]", "vessel.height [m]"],
            "sphere": ["vessel.diameter [m]"]}.get(shape, ["vessel.diameter [m]", "vessel.length [m]"])
    optional = sorted(c for c in TANK_COLUMNS if c not in need and not c.startswith("vessel."))
    if heads == "torispherical":
        optional += ["vessel.crown_radius [m]", "vessel.knuckle_radius [m]"]
    chosen = need + draw(st.lists(st.sampled_from(optional), max_size=5, unique=True))
    n = draw(st.integers(2, 8))
    rows = [[f"V-{i}"] + [draw(TANK_COLUMNS[c]) for c in chosen] for i in range(n)]
    area = draw(st.sampled_from(["wetted", "total", "ua"]))
    amount = draw(st.sampled_from(["fill", "mass", "volume"]))
    return shape, heads, ["id"] + chosen, rows, area, amount


def _tank_base(shape, heads, area, amount):
    base = json.loads(json.dumps(TANK_BASE))
    base["vessel"] = {"shape": shape} if heads is None else {"shape": shape, "heads": heads}
    if area == "ua":
        base["heat_loss"] = {"ambient_temperature": "30 degC", "ua": "40 W/K"}
    else:
        base["heat_loss"]["area"] = area
    if amount == "mass":
        base["contents"].pop("fill")
        base["contents"]["mass"] = "3 t"
    elif amount == "volume":
        base["contents"].pop("fill")
        base["contents"]["volume"] = "2 m^3"
    return base


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(case=tank_registers())
def test_tank_groups_equal_row_by_row(tmp_path_factory, monkeypatch, case):
    """Tanks given by geometry, every shape and head: the array path's result objects equal the general path's."""
    import warnings

    shape, heads, header, rows, area, amount = case
    if amount != "fill" and "contents.fill" in header:  # the amount is given another way: no fill column
        k = header.index("contents.fill")
        header = header[:k] + header[k + 1:]
        rows = [r[:k] + r[k + 1:] for r in rows]
    base = _tank_base(shape, heads, area, amount)
    tmp = tmp_path_factory.mktemp("tanks")
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # no library warning on either path
        fast = _run(tmp, header, rows, base, False, monkeypatch)
        slow = _run(tmp, header, rows, base, True, monkeypatch)
    assert fast[0] == {**slow[0], "out_dir": fast[0]["out_dir"]}
    assert fast[1] == slow[1]  # every result object, every key
    assert fast[2] == slow[2]  # errors.csv
    assert fast[3] == slow[3]  # results.csv


def test_tank_register_goes_the_array_path(tmp_path, monkeypatch):
    """A register of horizontal torispherical tanks is screened as a group, without a warning."""
    import warnings

    taken = []
    real = columns.screen_group

    def spy(*args, **kwargs):
        out = real(*args, **kwargs)
        taken.append(len(out.results))
        return out

    monkeypatch.setattr(chunks, "screen_group", spy)
    header = ["id", "vessel.diameter [m]", "vessel.length [m]", "contents.fill"]
    rows = [[f"T-{i}", f"{1 + 0.1 * i:.3g}", f"{2 + 0.3 * i:.3g}", f"{0.05 + 0.03 * i:.3g}"] for i in range(30)]
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        fast = _run(tmp_path, header, rows, TANK_BASE, False, monkeypatch)
    assert len(taken) >= 1 and sum(taken) == len(rows) - len(taken)
    slow = _run(tmp_path, header, rows, TANK_BASE, True, monkeypatch)
    assert fast[1] == slow[1] and fast[3] == slow[3]


@pytest.mark.parametrize("shape,heads", TANK_SHAPES)
def test_every_tank_shape_equals_row_by_row(tmp_path, monkeypatch, shape, heads):
    """Each shape and head once, with its dimensions, fill, density and coefficient varying per row."""
    import random

    rnd = random.Random(f"{shape}-{heads}")
    dims = {"box": ["vessel.length [m]", "vessel.width [m]", "vessel.height [m]"],
            "sphere": ["vessel.diameter [m]"]}.get(shape, ["vessel.diameter [m]", "vessel.length [m]"])
    header = ["id"] + dims + ["contents.fill", "contents.density [kg/m^3]", "heat_loss.coefficient [W/(m^2*K)]"]
    rows = [[f"V-{i}"] + [f"{rnd.uniform(0.3, 5):.4g}" for _ in dims]
            + [f"{rnd.uniform(0.001, 1.05):.4g}", f"{rnd.uniform(600, 1500):.4g}", f"{rnd.uniform(0, 30):.3g}"]
            for i in range(12)]
    base = _tank_base(shape, heads, "wetted", "fill")
    fast = _run(tmp_path, header, rows, base, False, monkeypatch)
    slow = _run(tmp_path, header, rows, base, True, monkeypatch)
    assert fast[1] == slow[1] and fast[2] == slow[2] and fast[3] == slow[3]
    assert all(r["geometry"]["wetted_area_m2"] > 0 for r in fast[1])
