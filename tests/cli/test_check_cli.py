"""The command line: ``check --json`` contract, ``--history`` CSV, ``schema``, ``example``.

Outside references: the lumped solution T = Ta + (T0 - Ta) exp(-t/tau) of Incropera et al., ch. 5, with the
data of their Example 5.1 (from memory, per /work/shared/references.md), in tests/data/thermocouple_sphere.yaml;
the definitions heat loss = UA (T - Ta) and (no sources) heat generation = 0.

Note: ``check`` also applies the rule set of ``screening/rules.py`` (verdict and reasons). These tests rely only
on the JSON contract keys (id, time_constant_s, peak_temperature_K, peak_time_s, steady_temperature_K, limits,
warnings) and on exit codes 0/1 for a valid case, so they hold whatever the rules decide.
"""
from __future__ import annotations

import csv
import json
import math
import time

import pytest

CONTRACT_KEYS = ("id", "time_constant_s", "peak_temperature_K", "peak_time_s", "steady_temperature_K", "limits",
                 "warnings")
LIMIT_KEYS = ("name", "temperature_K", "time_s", "reached", "margin_s")


def _check_json(run_cli, path, *extra):
    proc = run_cli("check", path, "--json", *extra)
    if proc.returncode == 2 and proc.stderr.startswith("rule set:"):
        # `check` applies the shipped rule set (screening/rules.py, rules/default.toml), which is written
        # separately; this test passes again once that rule set loads.
        pytest.fail(f"the shipped rule set does not load, so `check` cannot run: {proc.stderr.strip()}")
    assert proc.returncode in (0, 1), proc.stderr  # 0 pass, 1 review/fail verdict: both are valid results
    assert "Traceback" not in proc.stderr
    return json.loads(proc.stdout), proc


def test_check_json_contract_and_values(run_cli, data_dir, tmp_path):
    # One subprocess for --json and --history (keeps the run short); timed, not asserted on.
    history = tmp_path / "history.csv"
    start = time.perf_counter()
    result, _ = _check_json(run_cli, data_dir / "thermocouple_sphere.yaml", "--history", history)
    elapsed = time.perf_counter() - start
    print(f"\nheatscreen check --json --history (subprocess, incl. interpreter start): {elapsed:.2f} s")
    for key in CONTRACT_KEYS:
        assert key in result, key
    assert result["id"] == "incropera-5.1"
    assert isinstance(result["warnings"], list) and all(isinstance(w, str) for w in result["warnings"])
    (lim,) = result["limits"]
    for key in LIMIT_KEYS:
        assert key in lim, key
    # Incropera Example 5.1: tau = 1 s, t(199 degC) = tau ln(175) = 5.1648 s, settles at the gas temperature.
    assert result["time_constant_s"] == pytest.approx(1.0, rel=1e-9)
    assert lim["reached"] is True and lim["time_s"] == pytest.approx(math.log(175.0), rel=1e-9)
    assert lim["temperature_K"] == pytest.approx(472.15, abs=1e-12)
    assert lim["margin_s"] == pytest.approx(math.log(175.0) - 1.0, rel=1e-9)  # response time 1 s, detection at 0
    assert result["steady_temperature_K"] == pytest.approx(473.15, rel=1e-12)
    # monotone approach from below: the peak is at the horizon (20 s), T = 200 - 175 exp(-20) degC
    assert result["peak_time_s"] == pytest.approx(20.0)
    assert result["peak_temperature_K"] == pytest.approx(473.15 - 175 * math.exp(-20.0), abs=1e-9)

    # --history: time, temperature, heat generation, heat loss columns
    with history.open(newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    header = list(rows[0])
    assert header[0].startswith("time")
    assert any(h.startswith("temperature") for h in header)
    assert any("generation" in h for h in header) and any("loss" in h for h in header)
    times = [float(r["time_s"]) for r in rows]
    assert times[0] == 0.0 and times[-1] == pytest.approx(20.0) and times == sorted(times)
    ua = 400.0 * math.pi * 0.0007058823529411765 ** 2  # h A, A = pi D^2
    for r in rows[:: max(1, len(rows) // 25)]:
        t, T = float(r["time_s"]), float(r["temperature_K"])
        T_exact = 473.15 - 175.0 * math.exp(-t)  # lumped solution
        assert T == pytest.approx(T_exact, abs=1e-6)  # the CSV carries 9 significant digits
        assert float(r["heat_loss_W"]) == pytest.approx(ua * (T_exact - 473.15), rel=1e-6, abs=ua * 1e-6)
        assert float(r["heat_generation_W"]) == 0.0
    # the crossing time itself is one of the rows
    assert any(abs(t - math.log(175.0)) < 1e-6 for t in times)


def test_check_json_matches_the_library(run_cli, data_dir, screen_text):
    # The CLI prints the library's result: every contract number agrees with screen_prepared in-process.
    result, _ = _check_json(run_cli, data_dir / "customary_units.yaml")
    direct = screen_text((data_dir / "customary_units.yaml").read_bytes())
    for key in ("time_constant_s", "peak_temperature_K", "peak_time_s", "steady_temperature_K"):
        assert result[key] == pytest.approx(direct[key], rel=1e-12)
    for a, b in zip(result["limits"], direct["limits"]):
        assert a["name"] == b["name"] and a["reached"] == b["reached"]
        assert (a["time_s"] is None) == (b["time_s"] is None)
        if a["time_s"] is not None:
            assert a["time_s"] == pytest.approx(b["time_s"], rel=1e-12)


def test_schema_prints_json_schema(run_cli):
    proc = run_cli("schema")
    assert proc.returncode == 0, proc.stderr
    schema = json.loads(proc.stdout)
    assert "properties" in schema
    for key in ("id", "contents", "heat_loss", "heat_sources", "limits"):
        assert key in schema["properties"]
    assert set(schema.get("required", [])) >= {"id", "contents", "heat_loss", "limits"}


def test_example_output_is_a_valid_case(run_cli, tmp_path, screen_text):
    proc = run_cli("example")
    assert proc.returncode == 0, proc.stderr
    from screening.case.files import load_case_bytes

    loaded = load_case_bytes(proc.stdout.encode("utf-8"))
    assert loaded.spec.id
    result = screen_text(proc.stdout)  # and it screens
    for key in CONTRACT_KEYS:
        assert key in result
    # written to a file, it is the same text and `check` accepts it
    target = tmp_path / "example.yaml"
    proc2 = run_cli("example", target)
    assert proc2.returncode == 0 and target.read_text(encoding="utf-8") == proc.stdout
    result2, _ = _check_json(run_cli, target)
    assert result2["id"] == loaded.spec.id
