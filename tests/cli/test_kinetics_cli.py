"""``heatscreen kinetics``: from calorimeter runs to a source block that screens, end to end.

References: the invented demo runs and the synthetic runs are made by integrating known kinetics with scipy's
solve_ivp (tests/kinetics_synthetic.py); the source block must match the case schema (screening/case/schema.py)
for the n-th-order kind and issue 19's YAML contract for the autocatalytic kind.
"""
from __future__ import annotations

import json
import math
import sys
from pathlib import Path

import numpy as np
import pytest
import yaml

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
import kinetics_synthetic as syn  # noqa: E402

REPO = Path(__file__).resolve().parents[2]
DEMO = REPO / "screening" / "demo_cases" / "kinetics"
RUNS = sorted(DEMO.glob("fw-k12-dsc-*.csv"))
KEYS = ("model", "activation_energy_J_per_mol", "activation_energy_interval_J_per_mol", "order",
        "specific_heat_of_reaction_J_per_kg", "reference_temperature_K", "tested_range_K",
        "kissinger_activation_energy_J_per_mol", "flynn_wall_ozawa_activation_energy_J_per_mol", "isoconversional",
        "covariance", "source")
AUTOCATALYTIC_BLOCK = ("kind", "label", "role", "rate_constant", "reference_temperature", "activation_energy", "order",
                       "autocatalytic_order", "initiation", "specific_heat_of_reaction", "gas_generating",
                       "tested_range")  # issue 19's contract (initial_conversion is optional there)


def _write_run(path, t, temp_k, heat_flow_w_per_kg):
    lines = ["time [s],temperature [degC],heat_flow [mW/mg]"]
    lines += [f"{a:.3f},{b - 273.15:.4f},{c / 1000:.6f}" for a, b, c in zip(t, temp_k, heat_flow_w_per_kg)]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")


def test_demo_runs_to_a_case_that_screens_with_the_fit_uncertainty(run_cli, tmp_path):
    out, plot = tmp_path / "source.yaml", tmp_path / "fit.pdf"
    proc = run_cli("kinetics", *RUNS, "--json", "--mass-fraction", "30 %", "--temperature-of-interest", "90 degC",
                   "--specific-heat", "2.4 kJ/(kg*K)", "--source-out", out, "--plot", plot)
    assert proc.returncode == 0, proc.stderr
    result = json.loads(proc.stdout)
    for key in KEYS:
        assert key in result, key
    # the demo runs were made with E = 118 kJ/mol, n = 1.2, 620 kJ/kg x 30 % (tests/kinetics_synthetic.py)
    assert result["model"] == "nth-order"
    lo, hi = result["activation_energy_interval_J_per_mol"]
    assert lo <= syn.DEMO["E"] <= hi
    assert result["specific_heat_of_reaction_J_per_kg"] == pytest.approx(0.3 * syn.DEMO_HEAT, rel=0.01)
    assert result["kissinger_activation_energy_J_per_mol"] == pytest.approx(syn.DEMO["E"], rel=0.05)
    assert result["flynn_wall_ozawa_activation_energy_J_per_mol"] == pytest.approx(syn.DEMO["E"], rel=0.05)
    assert {"conversion", "activation_energy_J_per_mol"} <= set(result["isoconversional"][0])
    src = result["source"]
    # the n-th-order block is the case's temperature-dependent kind, with its own fields (case/schema.py)
    from screening.case.schema import ArrheniusSpec

    assert src["kind"] == "arrhenius" and src["role"] == "decomposition" and src["gas_generating"] is True
    assert set(src) <= set(ArrheniusSpec.model_fields)
    k = result["rate_constant_per_s"]
    assert float(src["specific_power"].split()[0]) == pytest.approx(k * result["specific_heat_of_reaction_J_per_kg"],
                                                                    rel=1e-5)
    text = out.read_text(encoding="utf-8")
    assert "gas_generating: true  # unknown from DSC; set false only with evidence" in text
    assert "cover the fit of the data only" in text
    assert plot.read_bytes().startswith(b"%PDF")
    # paste it into the base case, screen it, and run Monte Carlo with the correlation
    block = yaml.safe_load(text)
    case = yaml.safe_load((DEMO / "fw-t512-hold-tank-base.yaml").read_text(encoding="utf-8"))
    case["heat_sources"] = block["heat_sources"]
    case["uncertainty"] = dict(block["uncertainty"], samples=300)
    (tmp_path / "case.yaml").write_text(yaml.safe_dump(case), encoding="utf-8")
    proc = run_cli("check", tmp_path / "case.yaml", "--json")
    assert proc.returncode in (0, 1), proc.stderr
    checked = json.loads(proc.stdout)
    unc = checked["uncertainty"]
    assert unc["accepted"] == 300
    assert unc["correlation"]["inputs"] == block["uncertainty"]["correlation"]["inputs"]
    assert unc["limits"][0]["probability_within_horizon"] is not None


def _autocatalytic_runs(folder, seed=3):
    rng = np.random.default_rng(seed)
    paths = []
    for beta in (1.0, 2.0, 5.0, 10.0):
        clean = syn.scanning_run(syn.AUTO, beta)
        path = folder / f"auto-{beta:g}.csv"
        _write_run(path, clean[0], clean[1], syn.with_noise(clean, 4e5, rng))
        paths.append(path)
    return paths


def test_autocatalytic_block_follows_the_contract(run_cli, tmp_path):
    out = tmp_path / "source.yaml"
    proc = run_cli("kinetics", *_autocatalytic_runs(tmp_path), "--json", "--source-out", out, "--source-index", "2")
    assert proc.returncode == 0, proc.stderr
    result = json.loads(proc.stdout)
    assert result["model"] == "autocatalytic", result["choice_reason"]
    assert result["aic_difference"] >= 10
    src = result["source"]
    assert tuple(src) == AUTOCATALYTIC_BLOCK
    assert src["kind"] == "autocatalytic" and src["role"] == "decomposition" and src["gas_generating"] is True
    # values: the block is the JSON's fit, and the fit is the truth within its intervals (syn.AUTO)
    assert float(src["rate_constant"].split()[0]) == pytest.approx(result["rate_constant_per_s"], rel=1e-5)
    assert src["rate_constant"].endswith(" 1/s")
    assert float(src["activation_energy"].split()[0]) * 1000 == pytest.approx(result["activation_energy_J_per_mol"],
                                                                              rel=1e-5)
    assert float(src["reference_temperature"].split()[0]) + 273.15 == pytest.approx(result["reference_temperature_K"],
                                                                                   abs=0.006)
    assert src["order"] == pytest.approx(result["order"], abs=1e-3)
    assert src["autocatalytic_order"] == pytest.approx(result["autocatalytic_order"], abs=1e-3)
    assert src["initiation"] == pytest.approx(result["initiation"], rel=1e-3)
    assert float(src["specific_heat_of_reaction"].split()[0]) * 1000 == pytest.approx(4e5, rel=0.01)
    lo, hi = result["activation_energy_interval_J_per_mol"]
    assert lo <= syn.AUTO["E"] <= hi
    text = out.read_text(encoding="utf-8")
    assert "gas_generating: true  # unknown from DSC; set false only with evidence" in text
    block = yaml.safe_load(text)
    assert set(block["uncertainty"]["inputs"]) == {"heat_sources.2.rate_constant", "heat_sources.2.activation_energy",
                                                   "heat_sources.2.specific_heat_of_reaction"}


def test_isothermal_runs_mark_autocatalysis(run_cli, tmp_path):
    rng = np.random.default_rng(5)
    paths = []
    for temp in (440.0, 450.0, 460.0):
        clean = syn.isothermal_run(syn.AUTO, temp, duration=6.0 / syn.rate(syn.AUTO, temp, 0.5))
        path = tmp_path / f"iso-{temp:g}.csv"
        t = clean[0]
        q = 4e5 * clean[3] + 200.0 + 2e-4 * t + rng.normal(0.0, 1.0, t.size)
        _write_run(path, t, clean[1], q)
        paths.append(path)
    proc = run_cli("kinetics", *paths, "--isothermal", "--json")
    assert proc.returncode == 0, proc.stderr
    result = json.loads(proc.stdout)
    assert result["autocatalysis_in_isothermal_hold"] is True
    assert result["model"] == "autocatalytic"
    assert result["kissinger_activation_energy_J_per_mol"] is None


def test_adiabatic_run_with_phi(run_cli, tmp_path):
    truth = {"model": "nth-order", "k": 5e-4, "E": 110e3, "Tref": 450.0, "n": 1.0}
    t, temp, rate = syn.adiabatic_run(truth, 1.6, 400.0, 160.0)
    path = tmp_path / "arc.csv"
    lines = ["time [min],temperature [degC],self_heat_rate [K/min]"]
    lines += [f"{a / 60:.6f},{b - 273.15:.5f},{c * 60:.8g}" for a, b, c in zip(t, temp, rate)]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    proc = run_cli("kinetics", "--adiabatic", path, "--phi", "1.6", "--sample-specific-heat", "2 kJ/(kg*K)", "--json")
    assert proc.returncode == 0, proc.stderr
    result = json.loads(proc.stdout)
    assert result["kind"] == "adiabatic" and result["model"] == "nth-order"
    assert result["activation_energy_J_per_mol"] == pytest.approx(truth["E"], rel=0.01)
    assert result["adiabatic_temperature_rise_K"] == pytest.approx(160.0, rel=0.01)
    assert result["specific_heat_of_reaction_J_per_kg"] == pytest.approx(2000.0 * 160.0, rel=0.01)
    assert result["onset_temperature_corrected_K"] < result["onset_temperature_measured_K"]
    assert "not a property of the material" in result["onset_note"]
    assert "from memory" in result["phi_correction"]
    assert "100 K" not in proc.stdout
    text = run_cli("kinetics", "--adiabatic", path, "--phi", "1.6", "--sample-specific-heat", "2 kJ/(kg*K)").stdout
    assert "not a property of the material" in text and "100 K" not in text
