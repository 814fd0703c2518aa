"""Registers with the daily cycle's columns: each row equals its case file (the reference path), simple rows
without a cycle still take the fast paths, and a bad cell names its field."""
from __future__ import annotations

import copy

from test_register_batch import BASE, assert_same_result, run, screen_case_dict

SUNNY = copy.deepcopy(BASE)
SUNNY["sun"] = {"peak_irradiance": "850 W/m^2", "absorptivity": "0.7", "exposed_area": "2 m^2",
                "day_length": "14 h"}


def row_case(row: dict) -> dict:
    """The case file equivalent of a register row on the sunny base (the reference path)."""
    data = copy.deepcopy(SUNNY)
    for header, cell in row.items():
        if cell == "":
            continue
        path, _, unit = header.partition(" [")
        unit = unit.rstrip("]")
        value = f"{cell} {unit}" if unit else cell
        node = data
        parts = [int(p) if p.isdigit() else p for p in path.split(".")]
        for p in parts[:-1]:
            node = node[p]
        node[parts[-1]] = value
    return data


def test_rows_with_cycle_columns_equal_their_case_files(tmp_path):
    header = ["id", "contents.mass [kg]", "heat_loss.ua [W/K]", "heat_loss.daily_range [K]",
              "heat_loss.warmest_time_of_day [h]", "sun.peak_irradiance [W/m^2]", "sun.absorptivity",
              "start_time_of_day [h]", "limits.0.temperature [degC]"]
    rows = [
        ["S-1", "900", "40", "12", "15", "850", "0.7", "", "45"],
        ["S-2", "900", "40", "12", "14", "1000", "0.9", "6", "45"],
        ["S-3", "3000", "15", "0", "", "600", "0.3", "", "40"],
        ["S-4", "900", "40", "", "", "850", "0.7", "12", "45"],
    ]
    summary, results, errors, _ = run(tmp_path, header, rows, base=SUNNY)
    assert not errors, errors
    for row, batch in zip(rows, results):
        single, problems = screen_case_dict(row_case(dict(zip(header, row))))
        assert not problems, problems
        assert_same_result(batch, single)
        assert batch["criteria_ambient_K"] == single["criteria_ambient_K"]
        assert batch["daily_cycle"]["start_time_of_day_s"] == single["daily_cycle"]["start_time_of_day_s"]


def test_bad_cycle_cell_names_its_field(tmp_path):
    header = ["id", "contents.mass [kg]", "heat_loss.daily_range", "sun.absorptivity"]
    rows = [["OK", "900", "10 K", "0.5"], ["BAD-A", "900", "10 K", "1.7"], ["BAD-R", "900", "10 m", "0.5"]]
    summary, results, errors, _ = run(tmp_path, header, rows, base=SUNNY)
    assert [r["id"] for r in results] == ["OK"]
    fields = {(int(e["row"]), e["field"]) for e in errors}
    assert (3, "sun.absorptivity") in fields and (4, "heat_loss.daily_range") in fields
    assert summary["exit_code"] == 2


# ------------------------------------------------------------------ tanks given by geometry, in the sun

def _tank_case(base: dict, row: dict) -> dict:
    """The case file equivalent of a row of the tank register below."""
    data = copy.deepcopy(base)
    data["id"] = row["id"]
    data["vessel"]["diameter"] = f"{row['vessel.diameter [m]']} m"
    data["vessel"]["length"] = f"{row['vessel.length [m]']} m"
    data["contents"]["fill"] = row["contents.fill"]
    return data


def test_tank_rows_in_the_sun_stay_off_the_array_paths_and_equal_check_json(tmp_path, monkeypatch, run_cli):
    """A register of tanks given by geometry (the kind issue 17 sends down the columnar array path) with a sun
    block and a daily range on the base case: its rows go row by row (no columnar group, no vectorised values),
    and each row's result object equals `heatscreen check --json` of the equivalent case file (the reference:
    the one-case path, run as a user runs it), every key but the register's own (row number, backend), the
    input hash (a hash of the row, not of the case file) and check's allowable values (none without uncertain
    inputs). The same register without the sun does take the
    array path, so the test would notice if the cycle stopped keeping it off."""
    import json

    import yaml

    from screening.register import chunks
    from screening.register.batch import run_batch
    from test_register_batch import write_csv
    from test_register_columns import TANK_BASE

    grouped, closed_form = [], []
    real_group, real_values = chunks.screen_group, chunks.vectorised_values

    def spy_group(*args, **kwargs):
        out = real_group(*args, **kwargs)
        grouped.append(len(out.results))
        return out

    def spy_values(models):
        closed_form.extend(models)
        return real_values(models)

    monkeypatch.setattr(chunks, "screen_group", spy_group)
    monkeypatch.setattr(chunks, "vectorised_values", spy_values)

    sunny = copy.deepcopy(TANK_BASE)
    sunny["heat_loss"]["daily_range"] = "12 K"
    sunny["sun"] = {"peak_irradiance": "850 W/m^2", "absorptivity": "0.7", "exposed_area": "projected",
                    "day_length": "13 h"}
    header = ["id", "vessel.diameter [m]", "vessel.length [m]", "contents.fill"]
    # 12 rows: a register is split into chunks of a quarter of it or more, so each chunk holds a group
    rows = [[f"T-{i}", f"{1 + 0.2 * i:.3g}", f"{2 + 0.5 * i:.3g}", f"{0.1 + 0.07 * i:.3g}"] for i in range(12)]

    def batch(base, name):
        folder = tmp_path / name
        folder.mkdir()
        write_csv(folder / "register.csv", header, rows)
        (folder / "base.yaml").write_text(yaml.safe_dump(base, sort_keys=False), encoding="utf-8")
        run_batch(folder / "register.csv", folder / "out", base_path=folder / "base.yaml", workers=1)
        return json.loads((folder / "out" / "results.json").read_text(encoding="utf-8"))

    plain = batch(TANK_BASE, "plain")  # control: without the cycle the group takes the array path
    assert sum(grouped) == len(rows) - len(grouped) > 0
    grouped.clear()
    closed_form.clear()

    results = batch(sunny, "sunny")
    assert grouped == []  # no columnar group
    assert all(md.daily_cycle is None for md in closed_form)  # no vectorised engine values for the cycle's rows
    assert len(results) == len(rows)
    for row, res in zip(rows, results):
        case = tmp_path / f"{row[0]}.yaml"
        case.write_text(yaml.safe_dump(_tank_case(sunny, dict(zip(header, row))), sort_keys=False),
                        encoding="utf-8")
        proc = run_cli("check", case, "--json")
        assert proc.returncode in (0, 1), proc.stderr
        single = json.loads(proc.stdout)
        assert single.pop("allowable_values") is None  # check's scan of uncertain inputs (none here); not in registers
        own = {"register_row", "backend", "input_hash"}
        assert {k: v for k, v in res.items() if k not in own} == {k: v for k, v in single.items() if k not in own}
        assert res["daily_cycle"]["sun"]["exposed_area_basis"] == "projected"
        # the sun heats the tank: its peak is above the same tank's in the air's cycle alone
        shade = next(p for p in plain if p["id"] == row[0])
        assert res["peak_temperature_K"] > shade["peak_temperature_K"]
