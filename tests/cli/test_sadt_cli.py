"""`check`, `margin` and `memo` on a package: SADT, control and emergency temperatures with their conventions.

Check values: the demo package FW-P08 (invented): SADT 45 °C by a direct solve_ivp scan
(tests/run/test_sadt_case.py); control 35 °C and emergency 40 °C by the UN Model Regulations table (from memory).
"""
from __future__ import annotations

import json
from pathlib import Path

import pytest

DEMO = Path(__file__).resolve().parents[2] / "screening" / "demo_cases"
P08 = DEMO / "fw-p08-peroxide-cans.yaml"


def test_check_text_names_the_conventions(run_cli):
    proc = run_cli("check", P08)
    assert proc.returncode in (0, 1), proc.stderr
    out = proc.stdout
    assert "SADT (UN test series H, from memory: 5 °C steps, centre +6 K in 7 d)  45.0 °C" in out
    assert "Control temperature (UN Model Regulations table, from memory)" in out and "35.0 °C (308.15 K)" in out
    assert "Emergency temperature (same table)" in out and "40.0 °C (313.15 K)" in out
    assert "Steps tried:" in out and "40.0 °C (313.15 K): centre" in out
    assert "Portable tanks have their own row" in out


def test_check_json_contract_keys(run_cli):
    proc = run_cli("check", P08, "--json")
    r = json.loads(proc.stdout)
    assert r["sadt_K"] == pytest.approx(318.15)
    assert r["control_temperature_K"] == pytest.approx(308.15)
    assert r["emergency_temperature_K"] == pytest.approx(313.15)
    assert isinstance(r["sadt_note"], str)


def test_margin_on_the_ambient_finds_the_control_temperature(run_cli):
    proc = run_cli("margin", P08, "--vary", "heat_loss.ambient_temperature", "--low", "25 degC", "--high",
                   "45 degC", "--points", "5", "--json", timeout=600)
    assert proc.returncode == 0, proc.stderr
    report = json.loads(proc.stdout)
    values = [c["value"] for c in report["changes"]]
    # review below (gas in a closed package), fail above the control temperature, 35 °C
    assert any(v == pytest.approx(35.0, abs=1e-4) for v in values), report["changes"]
    change = next(c for c in report["changes"] if c["value"] == pytest.approx(35.0, abs=1e-4))
    assert (change["below"], change["above"]) == ("review", "fail")


def test_memo_has_the_package_section(run_cli, tmp_path):
    from pypdf import PdfReader

    pdf = tmp_path / "p08.pdf"
    proc = run_cli("memo", P08, "-o", pdf)
    assert proc.returncode in (0, 1), proc.stderr  # 1: the verdict is review
    text = "\n".join(page.extract_text() for page in PdfReader(str(pdf)).pages)
    assert "Package: SADT, control and emergency temperatures" in text
    assert "Centre at 7 days" in text and "40.0 °C (313.15 K)" in text
    assert "test series H" in text and "from memory" in text
