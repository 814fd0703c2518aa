"""A register of horizontal torispherical tanks, run as a user runs it, with every warning an error.

Their partial-fill volumes and wetted areas have no closed form; an adaptive quadrature printed
library IntegrationWarnings to the user here.  The geometry is now a fixed Gauss-Legendre rule on
arrays (checked against mpmath in tests/core/test_geometry_arrays.py), so nothing is printed:
the array path (a group of rows) and the one-case path (with --memos every row is screened
on its own) both run under ``python -W error``.
"""
from __future__ import annotations

import csv
import json
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

ROOT = Path(__file__).resolve().parents[2]

BASE = """id: BASE
vessel: {shape: horizontal-cylinder, diameter: 2.5 m, length: 6 m, heads: torispherical}
contents: {fill: 0.6, density: 900 kg/m^3, specific_heat: 2.1 kJ/(kg*K), initial_temperature: 25 degC}
heat_loss: {ambient_temperature: 30 degC, coefficient: 5 W/(m^2*K), area: wetted}
heat_sources:
  - {kind: constant, power: 1 kW}
limits: [{name: onset, temperature: 60 degC}]
"""


def _register(path: Path, n: int) -> None:
    rng = np.random.default_rng(3)
    with open(path, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["id", "vessel.diameter [m]", "vessel.length [m]", "vessel.knuckle_radius [m]", "contents.fill"])
        for i in range(n):  # fills from nearly empty to nearly full, knuckles from small to the largest (D/2)
            d = round(float(rng.uniform(1, 4)), 3)
            w.writerow([f"T{i}", d, round(float(rng.uniform(1, 10)), 3),
                        round(float(rng.uniform(0.02, 0.5)) * d, 4), round(float(rng.uniform(0.001, 0.999)), 4)])


@pytest.mark.parametrize("memos", [False, True])
def test_horizontal_torispherical_register_prints_no_warning(tmp_path, memos):
    (tmp_path / "base.yaml").write_text(BASE, encoding="utf-8")
    _register(tmp_path / "tanks.csv", 4 if memos else 200)
    args = [sys.executable, "-W", "error", "-m", "screening.cli", "batch", str(tmp_path / "tanks.csv"),
            "--base", str(tmp_path / "base.yaml"), "--out", str(tmp_path / "out")] + (["--memos"] if memos else [])
    proc = subprocess.run(args, capture_output=True, text=True, cwd=ROOT, env=dict(os.environ), timeout=300)
    assert proc.returncode in (0, 1), proc.stderr  # 1: some rows are for review
    assert "Warning" not in proc.stderr and "Traceback" not in proc.stderr, proc.stderr
    results = json.loads((tmp_path / "out" / "results.json").read_text(encoding="utf-8"))
    assert len(results) == (4 if memos else 200)
    assert all(r["geometry"]["wetted_area_m2"] > 0 for r in results)
