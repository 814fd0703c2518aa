"""The service screens a case with an autocatalytic source as ``check --json`` does, with a memo.

Reference: the CLI's own ``check --json`` output for the same bytes (the service's contract is to give the
same object); the physics of the case is checked in tests/core/test_autocatalytic.py.
"""
from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

from screening.service import tasks

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "screening" / "demo_cases" / "fw-t520-residue-tank.yaml"


def test_service_check_of_an_autocatalytic_case_matches_the_cli(tmp_path, monkeypatch):
    monkeypatch.setattr(tasks, "_SCRATCH", tmp_path)
    out = tasks.task_check(raw=DEMO.read_bytes(), kind="yaml", rules_path=None, sde=0, memo=True, locate=True)
    cli = subprocess.run([sys.executable, "-m", "screening.cli", "check", str(DEMO), "--json"], cwd=ROOT,
                         capture_output=True, text=True, timeout=300)
    expected = json.loads(cli.stdout)
    result = out["public"]
    for key in ("verdict", "reasons", "autocatalytic", "induction_time_at_storage_temperature_s",
                "tmr_at_storage_temperature_s", "t_d24_K", "runaway_summary"):
        assert result[key] == expected[key], key
    assert result["autocatalytic"]["tmr_method"] == "integrated adiabatic history (phi = 1)"
    assert out["memo"][:5] == b"%PDF-"
