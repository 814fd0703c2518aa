"""Registers of tanks given by geometry, end to end, against a per-row loop of the same physics.

Run from the repository root:

    python benchmarks/geometry_register_benchmark.py                    # 100,000 geometry rows
    python benchmarks/geometry_register_benchmark.py --rows 20000 --simple 100000
    python benchmarks/geometry_register_benchmark.py --baseline-tree /path/to/older/checkout

In one run it prints:
  * how fast the machine is at that moment (the fixed pure-Python loop of register_benchmark.py);
  * the per-row baseline: for a sample of the same rows, ``fluids.geometry.TANK`` (volume, the
    liquid height by fluids' own exact inverse, the wetted area) plus a per-row
    ``scipy.integrate.solve_ivp`` of the heat balance with a terminal event at the limit,
    extrapolated to the register's size;
  * ``heatscreen batch`` of a CSV register of N tanks of every shape and head (vertical and
    horizontal cylinders with flat, hemispherical, 2:1 ellipsoidal and torispherical heads,
    spheres, boxes; fill, density and a coefficient on the wetted area varying per row), wall time,
    rows/s, the ratio against the loop, and the peak resident memory of the batch process;
  * optionally (--simple N) the simple register of register_benchmark.py (mass, UA and sources
    given) through this tree and, with --baseline-tree, through another checkout in the same run.

This is a script, not a test: it measures; it asserts nothing.
"""
from __future__ import annotations

import argparse
import csv
import os
import resource
import subprocess
import sys
import tempfile
import time
import warnings
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT / "benchmarks"))

import register_benchmark as rb  # noqa: E402

BASE = """id: BASE
vessel: {shape: vertical-cylinder, diameter: 2 m, length: 3 m}
contents: {fill: 0.7, density: 950 kg/m^3, specific_heat: 2.2 kJ/(kg*K), initial_temperature: 25 degC}
heat_loss: {ambient_temperature: 30 degC, coefficient: 4 W/(m^2*K), area: wetted}
heat_sources:
  - {kind: constant, power: 1 kW}
  - {kind: decaying, power: 10 kW, time_constant: 3 h}
limits: [{name: onset, temperature: 60 degC}]
response_time: 2 h
"""

SHAPES = [("vertical-cylinder", h) for h in ("flat", "hemispherical", "ellipsoidal", "torispherical")] \
    + [("horizontal-cylinder", h) for h in ("flat", "hemispherical", "ellipsoidal", "torispherical")] \
    + [("sphere", "flat"), ("box", "flat")]
HEADER = ["id", "vessel.shape", "vessel.heads", "vessel.diameter [m]", "vessel.length [m]", "vessel.width [m]",
          "vessel.height [m]", "contents.fill", "contents.density [kg/m^3]", "heat_loss.coefficient [W/(m^2*K)]",
          "heat_sources.1.power [kW]", "limits.0.temperature [degC]"]


def tank_rows(n: int, seed: int = 1) -> list[list[str]]:
    """n tanks, the shapes in turn, dimensions and fill at random."""
    rng = np.random.default_rng(seed)
    D = np.round(rng.uniform(0.8, 4.0, n), 3)
    L = np.round(rng.uniform(0.5, 12.0, n), 3)
    W = np.round(rng.uniform(0.5, 3.0, n), 3)
    H = np.round(rng.uniform(0.5, 3.0, n), 3)
    fill = np.round(rng.uniform(0.05, 0.98, n), 4)
    rho = rng.integers(700, 1400, n)
    coef = np.round(rng.uniform(0.5, 10.0, n), 2)
    p1 = np.round(rng.uniform(1, 60, n), 2)
    lim = rng.integers(45, 120, n)
    rows = []
    for i in range(n):
        shape, heads = SHAPES[i % len(SHAPES)]
        box = shape == "box"
        rows.append([f"T{i:07d}", shape, "" if shape in ("sphere", "box") else heads,
                     "" if box else D[i], "" if shape == "sphere" else L[i], W[i] if box else "",
                     H[i] if box else "", fill[i], rho[i], coef[i], p1[i], lim[i]])
    return rows


def write_tanks(path: Path, rows) -> None:
    with open(path, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(HEADER)
        w.writerows(rows)


def _fluids_geometry(row):
    """(liquid volume, wetted area) of a row with fluids.geometry (its exact inverse for the height)."""
    from fluids.geometry import SA_partial_sphere, TANK, V_partial_sphere

    shape, heads = row[1], row[2] or "flat"
    fill = float(row[7])
    if shape == "box":
        Lb, Wb, Hb = float(row[4]), float(row[5]), float(row[6])
        h = fill * Hb
        return fill * Lb * Wb * Hb, Lb * Wb + 2 * (Lb + Wb) * h
    D = float(row[3])
    if shape == "sphere":
        V = fill * np.pi * D ** 3 / 6
        from scipy.optimize import brentq
        h = brentq(lambda x: V_partial_sphere(D, x) - V, 0, D, xtol=1e-13)
        return V, SA_partial_sphere(D, h)
    kw = {}
    if heads == "hemispherical":
        kw = dict(sideA="spherical", sideB="spherical", sideA_a=D / 2, sideB_a=D / 2)
    elif heads == "ellipsoidal":
        kw = dict(sideA="ellipsoidal", sideB="ellipsoidal", sideA_a=D / 4, sideB_a=D / 4)
    elif heads == "torispherical":
        kw = dict(sideA="torispherical", sideB="torispherical", sideA_f=1.0, sideA_k=0.06, sideB_f=1.0, sideB_k=0.06)
    tank = TANK(D=D, L=float(row[4]), horizontal=shape == "horizontal-cylinder", **kw)
    V = fill * tank.V_total
    h = tank.h_from_V(V, method="brenth")
    return V, tank.SA_from_h(h)


def per_row_loop(rows) -> float:
    """Seconds per row: fluids geometry, then solve_ivp of the heat balance with a terminal event."""
    from scipy.integrate import solve_ivp

    t0 = time.perf_counter()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # fluids' adaptive quadratures warn on some horizontal heads
        for row in rows:
            V, A = _fluids_geometry(row)
            m = V * float(row[8])
            C = m * 2200.0
            ua = float(row[9]) * A
            p0, p1, tau = 1000.0, float(row[10]) * 1000.0, 3 * 3600.0
            Ta, lim = 303.15, float(row[11]) + 273.15

            def rhs(t, T):
                return [(p0 + p1 * np.exp(-t / tau) - ua * (T[0] - Ta)) / C]

            def hit(t, T):
                return T[0] - lim

            hit.terminal = True
            solve_ivp(rhs, (0.0, 24 * 3600.0), [298.15], method="LSODA", events=hit, rtol=1e-10, atol=1e-12)
    return (time.perf_counter() - t0) / len(rows)


def run_batch(register: Path, base: Path, out: Path, tree: Path = ROOT) -> tuple[float, float, int]:
    """Wall time, peak RSS (MB) and exit code of `heatscreen batch` run from ``tree``, in its own process."""
    code = ("import resource, runpy, sys; sys.argv = ['heatscreen'] + sys.argv[1:]\n"
            "try:\n    runpy.run_module('screening.cli', run_name='__main__')\n"
            "finally:\n    print('PEAK_KB', resource.getrusage(resource.RUSAGE_SELF).ru_maxrss, "
            "resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss, file=sys.stderr)")
    env = dict(os.environ, PYTHONPATH=str(tree))
    t0 = time.perf_counter()
    proc = subprocess.run([sys.executable, "-c", code, "batch", str(register), "--out", str(out), "--base", str(base)],
                          capture_output=True, text=True, cwd=tree, env=env)
    wall = time.perf_counter() - t0
    peak = 0.0
    for line in proc.stderr.splitlines():
        if line.startswith("PEAK_KB"):
            self_kb, children_kb = map(int, line.split()[1:3])
            peak = max(self_kb, children_kb) / 1024.0
    if proc.returncode not in (0, 1):
        print(proc.stderr[-3000:], file=sys.stderr)
    if "Warning" in proc.stderr:
        print("  (the batch printed a warning:)\n" + proc.stderr[-1500:], file=sys.stderr)
    return wall, peak, proc.returncode


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--rows", type=int, default=100_000, help="geometry rows in the register")
    ap.add_argument("--sample", type=int, default=300, help="rows in the per-row baseline loop")
    ap.add_argument("--simple", type=int, default=0, help="also time a simple register of this many rows")
    ap.add_argument("--baseline-tree", type=Path, default=None,
                    help="another checkout to run the simple register through, for comparison in the same run")
    args = ap.parse_args(argv)

    print(f"heatscreen geometry register benchmark on {os.cpu_count()} cores, Python {sys.version.split()[0]}")
    print(f"machine speed now: {rb.python_loop_seconds():.2f} s for a plain Python loop of 10 million additions "
          f"(lower is faster)")
    rows = tank_rows(args.rows)
    sample = tank_rows(args.sample, seed=2)
    per_row = per_row_loop(sample)
    print(f"baseline: per-row loop, fluids geometry + solve_ivp with a terminal event: {per_row * 1000:.1f} ms/row "
          f"(sample of {args.sample}), so {per_row * args.rows:,.0f} s for {args.rows:,} rows")
    with tempfile.TemporaryDirectory() as tmpd:
        tmp = Path(tmpd)
        base = tmp / "base.yaml"
        base.write_text(BASE, encoding="utf-8")
        reg = tmp / "tanks.csv"
        write_tanks(reg, rows)
        wall, mb, code = run_batch(reg, base, tmp / "out")
        print(f"heatscreen batch, {args.rows:,} tanks of every shape and head: {wall:.2f} s wall, "
              f"{args.rows / wall:,.0f} rows/s, {per_row * args.rows / wall:,.0f} x the per-row loop, "
              f"peak RSS {mb:,.0f} MB (exit {code})")
        if args.simple:
            sbase = tmp / "simple.yaml"
            sbase.write_text(rb.BASE, encoding="utf-8")
            sreg = tmp / "simple.csv"
            rb.write_register(sreg, args.simple)
            trees = [("this tree", ROOT)] + ([("baseline", args.baseline_tree.resolve())] if args.baseline_tree else [])
            for name, tree in trees:
                wall, mb, code = run_batch(sreg, sbase, tmp / f"simple-{name.replace(' ', '-')}", tree)
                print(f"simple register ({args.simple:,} rows: mass, UA, sources given), {name}: {wall:.2f} s wall, "
                      f"{args.simple / wall:,.0f} rows/s, peak RSS {mb:,.0f} MB (exit {code})")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
