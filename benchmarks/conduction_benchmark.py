"""Unstirred drums: ``heatscreen batch`` against a plain per-row method-of-lines loop, in one run.

    python benchmarks/conduction_benchmark.py              # 1,000 drums
    python benchmarks/conduction_benchmark.py --rows 200

A register of ``--rows`` drums of a self-heating powder (``contents.mixing: unstirred``; fill, ambient, start
temperature and conductivity vary by row) is screened by ``python -m screening.cli batch`` in a subprocess
(reading, validation, the lumped result, the conduction solution with its mesh check, criteria, rules and every
output file). The baseline, timed in the same run, is a plain loop that builds each row's body by hand and calls
``hot_spot_history`` once per row on the default mesh (no case files, no mesh check, no outputs); a second
baseline calls ``hot_spot_with_mesh_check`` per row (the conduction work the batch does for each row). The
ratios are batch time over each baseline: above 1 the batch is slower than the bare solver loop.

``--bodies 1,50,500`` instead times the core integrators alone: the per-body cost of
``hot_spot_histories`` (the batched RODAS integrator that one case and a register chunk both use) for groups of
each size, against ``hot_spot_history`` (scipy BDF) per body, on drums of random size, conductivity, ambient and
start (128 cells, the finer mesh of the check), with the largest relative difference of a limit time.

The load average is printed because other work on the machine slows the wall-clock figures.
"""
from __future__ import annotations

import argparse
import csv
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from screening.core.model import ArrheniusSource  # noqa: E402
from screening.core.transient_conduction import (  # noqa: E402
    ConductionBody,
    hot_spot_history,
    hot_spot_with_mesh_check,
)
from screening.core.transient_conduction_batch import hot_spot_histories  # noqa: E402

BASE = """\
id: DRUM
scenario: storage
vessel: {shape: vertical-cylinder, diameter: 0.57 m, length: 0.85 m, heads: flat}
contents:
  fill: 90 %
  density: 650 kg/m^3
  specific_heat: 1.3 kJ/(kg*K)
  initial_temperature: 30 degC
  mixing: unstirred
  thermal_conductivity: 0.12 W/(m*K)
heat_loss: {ambient_temperature: 38 degC, coefficient: 5 W/(m^2*K), area: total}
heat_sources:
  - {kind: arrhenius, role: decomposition, specific_power: 0.004 W/kg, reference_temperature: 60 degC,
     activation_energy: 135 kJ/mol, order: 0, specific_heat_of_reaction: 1200 kJ/kg, gas_generating: true}
limits:
  - {name: warm, temperature: 50 degC}
  - {name: self-accelerating region, temperature: 60 degC}
horizon: 30 d
response_time: 12 h
"""
LIMITS_K = (323.15, 333.15)
HORIZON = 30 * 86400.0


def rows(n: int) -> list[list]:
    out = []
    for i in range(n):
        out.append([f"D-{i:05d}", 60 + (i * 7) % 36, 25 + (i * 3) % 20, 20 + (i * 11) % 45,
                    round(0.08 + (i * 0.013) % 0.12, 4)])
    return out


def body_of(row) -> ConductionBody:
    """The drum of one row, by hand: an infinite cylinder of the drum's radius (h = 5 W/(m^2 K))."""
    _, _, ambient, start, k = row
    source = ArrheniusSource(0.004, 333.15, 135e3, 0.0, 1200e3, 1.0)
    return ConductionBody("cylinder", 0.285, 650.0, 1300.0, float(k), 5.0, ambient + 273.15, start + 273.15,
                          (source,))


def integrators(sizes: list[int], cells: int = 128) -> None:
    """Per-body cost of the batched integrator for groups of each size, against scipy's BDF per body."""
    import numpy as np

    rng = np.random.default_rng(17)
    source = ArrheniusSource(0.004, 333.15, 135e3, 0.0, 1200e3, 1.0)

    def drum():
        return ConductionBody("cylinder", float(rng.uniform(0.2, 0.35)), 650.0, 1300.0, float(rng.uniform(0.08, 0.2)),
                              5.0, float(rng.uniform(298.15, 328.15)), float(rng.uniform(303.15, 323.15)), (source,))

    print(f"load average {os.getloadavg()}; core integrators, {cells} cells, 30 d, limits 50 and 60 degC")
    warm = drum()  # imports and first calls outside the timings
    hot_spot_histories([warm], LIMITS_K, 86400.0, cells=cells)
    hot_spot_history(warm, LIMITS_K, 86400.0, cells=cells)
    for n in sizes:
        bodies = [drum() for _ in range(n)]
        t = time.perf_counter()
        got = hot_spot_histories(bodies, LIMITS_K, HORIZON, cells=cells)
        batch = (time.perf_counter() - t) / n
        m = min(n, 20)
        t = time.perf_counter()
        ref = [hot_spot_history(b, LIMITS_K, HORIZON, cells=cells) for b in bodies[:m]]
        scipy_per = (time.perf_counter() - t) / m
        worst = max((abs(a - r) / r for g, h in zip(got, ref) for a, r in zip(g.limit_times, h.limit_times)
                     if a is not None and r is not None and r > 0), default=0.0)
        print(f"{n:5d} bodies: batch {batch * 1e3:8.1f} ms/body, scipy BDF {scipy_per * 1e3:8.1f} ms/body "
              f"(first {m}), ratio {scipy_per / batch:5.2f}; largest relative difference of a limit time {worst:.1e}")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--rows", type=int, default=1000)
    ap.add_argument("--bodies", default=None, help="e.g. 1,50,500: time the core integrators alone")
    args = ap.parse_args()
    if args.bodies:
        integrators([int(x) for x in args.bodies.split(",")])
        return
    data = rows(args.rows)
    print(f"load average {os.getloadavg()}; {args.rows} unstirred drums")

    t = time.perf_counter()
    reached = sum(1 for r in data if hot_spot_history(body_of(r), LIMITS_K, HORIZON).limit_times[1] is not None)
    loop = time.perf_counter() - t
    print(f"plain loop, hot_spot_history per row (64 cells):        {loop:8.1f} s  ({reached} rows reach 60 degC)")

    t = time.perf_counter()
    for r in data:
        hot_spot_with_mesh_check(body_of(r), LIMITS_K, HORIZON)
    loop_mesh = time.perf_counter() - t
    print(f"plain loop, hot_spot_with_mesh_check per row (64/128):  {loop_mesh:8.1f} s")

    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        (tmp / "base.yaml").write_text(BASE, encoding="utf-8")
        with open(tmp / "drums.csv", "w", newline="", encoding="utf-8") as fh:
            w = csv.writer(fh)
            w.writerow(["id", "contents.fill [%]", "heat_loss.ambient_temperature [degC]",
                        "contents.initial_temperature [degC]", "contents.thermal_conductivity [W/(m*K)]"])
            w.writerows(data)
        env = dict(os.environ, PYTHONPATH=str(ROOT))
        t = time.perf_counter()
        proc = subprocess.run([sys.executable, "-m", "screening.cli", "batch", str(tmp / "drums.csv"), "--base",
                               str(tmp / "base.yaml"), "--out", str(tmp / "out")], cwd=ROOT, env=env,
                              capture_output=True, text=True)
        batch = time.perf_counter() - t
        print(proc.stdout.strip().splitlines()[-1] if proc.stdout.strip() else proc.stderr[-500:])
    print(f"heatscreen batch (subprocess, all outputs):             {batch:8.1f} s")
    print(f"ratio batch / plain loop:                 {batch / loop:6.2f}")
    print(f"ratio batch / plain loop with mesh check: {batch / loop_mesh:6.2f}")


if __name__ == "__main__":
    main()
