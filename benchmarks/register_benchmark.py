"""One run, all the register figures: engine, end-to-end batch, memos, uncertainty.

Run from the repository root:

    python benchmarks/register_benchmark.py                 # engine 1e3..1e6, batch 1e3..1e5
    python benchmarks/register_benchmark.py --batch-sizes 1e3 1e4 1e5 1e6 --memos 1000 --uncertain 1000
    python benchmarks/register_benchmark.py --repeat 3      # best and median of 3 runs per size

It prints first how fast the machine is at that moment (a fixed pure-Python loop; on a
shared virtual machine this varies by a factor of two), then, for each size:
  * the vectorised engine's throughput (cases/s) and its ratio against a per-case
    scipy.integrate.solve_ivp loop with a terminal event (timed on a sample and
    extrapolated; the baseline of every ratio is that loop, measured in the same run);
  * the end-to-end `heatscreen batch` wall time for a synthetic CSV register
    (constant + decaying source, one limit), run as a subprocess, with its peak
    resident memory (children's maxrss);
  * optionally, memos for N vessels (--memos N) and a register of N vessels with
    10,000 Monte Carlo samples each (--uncertain N).

This is a script, not a test: it measures; it asserts nothing.
"""
from __future__ import annotations

import argparse
import csv
import os
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

import engine_benchmark as eb  # noqa: E402
from screening.core.time_to_limit_batch import first_crossing_times

BASE = """id: BASE
contents: {specific_heat: 3 kJ/(kg*K), initial_temperature: 25 degC}
heat_loss: {ambient_temperature: 30 degC, ua: 100 W/K}
heat_sources:
  - {kind: constant, power: 1 kW}
  - {kind: decaying, power: 10 kW, time_constant: 3 h}
limits: [{name: onset, temperature: 60 degC}]
response_time: 2 h
"""

UNCERTAINTY = """uncertainty:
  samples: 10000
  seed: 1
  inputs:
    heat_loss.ua: {distribution: uniform, half_width: 50 %}
    heat_sources.1.power: {distribution: normal, sd: 15 %}
    contents.initial_temperature: {distribution: normal, sd: 2 K}
"""


def write_register(path: Path, n: int, seed: int = 1) -> None:
    rng = np.random.default_rng(seed)
    with open(path, "w", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["id", "contents.mass [kg]", "contents.specific_heat [kJ/(kg*K)]",
                    "contents.initial_temperature [degC]", "heat_loss.ambient_temperature [degC]",
                    "heat_loss.ua [W/K]", "heat_sources.0.power [kW]", "heat_sources.1.power [kW]",
                    "heat_sources.1.time_constant [h]", "limits.0.temperature [degC]"])
        mass = rng.integers(1000, 30000, n)
        cp = np.round(rng.uniform(1.8, 4.2, n), 3)
        t0 = rng.integers(15, 40, n)
        ta = rng.integers(20, 40, n)
        ua = rng.integers(20, 600, n)
        p0 = np.round(rng.uniform(0, 5, n), 2)
        p1 = np.round(rng.uniform(1, 100, n), 2)
        tau = np.round(rng.uniform(0.5, 24, n), 2)
        lim = rng.integers(45, 120, n)
        for i in range(n):
            w.writerow([f"V{i:07d}", mass[i], cp[i], t0[i], ta[i], ua[i], p0[i], p1[i], tau[i], lim[i]])


def python_loop_seconds() -> float:
    """Wall time of a fixed pure-Python loop: how fast this machine is at the moment of the run."""
    t0 = time.perf_counter()
    total = 0
    for i in range(10_000_000):
        total += i
    return time.perf_counter() - t0


def run_batch_cli(register: Path, base: Path, out: Path, extra=()) -> tuple[float, float, int]:
    before = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    t0 = time.perf_counter()
    proc = subprocess.run([sys.executable, "-m", "screening.cli", "batch", str(register), "--out", str(out),
                           "--base", str(base), *extra], capture_output=True, text=True, cwd=ROOT)
    wall = time.perf_counter() - t0
    peak_kb = max(before, resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss)
    if proc.returncode not in (0, 1):
        print(proc.stderr, file=sys.stderr)
    return wall, peak_kb / 1024.0, proc.returncode


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--engine-sizes", nargs="*", type=float, default=[1e3, 1e4, 1e5, 1e6])
    ap.add_argument("--batch-sizes", nargs="*", type=float, default=[1e3, 1e4, 1e5])
    ap.add_argument("--sample", type=int, default=200, help="cases in the solve_ivp baseline loop")
    ap.add_argument("--repeat", type=int, default=1,
                    help="run each end-to-end batch this many times and print the best and the median")
    ap.add_argument("--memos", type=int, default=0, help="also time a batch of this many vessels with --memos")
    ap.add_argument("--uncertain", type=int, default=0,
                    help="also time a register of this many vessels with 10,000 samples each")
    args = ap.parse_args(argv)

    print(f"heatscreen register benchmark on {os.cpu_count()} cores, Python {sys.version.split()[0]}")
    print(f"machine speed now: {python_loop_seconds():.2f} s for a plain Python loop of 10 million additions "
          f"(lower is faster; on the project's shared virtual machine it has taken from 0.35 s to 1.3 s)")
    print()
    # --- baseline: per-case solve_ivp loop with an event, on a sample
    data = eb.synthetic_register(max(args.sample, 1000), seed=7)
    idx = np.arange(args.sample)
    t0 = time.perf_counter()
    eb.ivp_loop(data, idx, 1e-10, 1e-12)
    ivp_rate = args.sample / (time.perf_counter() - t0)
    print(f"baseline: per-case solve_ivp loop with a terminal event (rtol 1e-10): {ivp_rate:,.0f} cases/s "
          f"(sample of {args.sample})")
    print()
    print("engine (vectorised closed form, one limit):")
    print(f"  {'cases':>9} {'wall s':>8} {'cases/s':>12} {'x solve_ivp loop':>17}")
    for n in map(int, args.engine_sizes):
        case = eb.synthetic_register(n, seed=11)
        first_crossing_times(*[a[: min(n, 1000)] for a in case])  # warm-up
        t0 = time.perf_counter()
        first_crossing_times(*case)
        wall = time.perf_counter() - t0
        print(f"  {n:>9,} {wall:>8.3f} {n / wall:>12,.0f} {n / wall / ivp_rate:>17,.0f}")
    print()
    print("end to end (heatscreen batch on a CSV register, constant + decaying source, one limit, no memos):")
    if args.repeat > 1:
        print(f"  (each size run {args.repeat} times: best and median wall time)")
        print(f"  {'rows':>9} {'best s':>8} {'median s':>9} {'rows/s':>10} {'peak RSS MB':>12}")
    else:
        print(f"  {'rows':>9} {'wall s':>8} {'rows/s':>10} {'peak RSS MB':>12}")
    with tempfile.TemporaryDirectory() as tmpd:
        tmp = Path(tmpd)
        base = tmp / "base.yaml"
        base.write_text(BASE, encoding="utf-8")
        for n in map(int, args.batch_sizes):
            reg = tmp / f"reg{n}.csv"
            write_register(reg, n)
            runs = [run_batch_cli(reg, base, tmp / f"out{n}") for _ in range(max(1, args.repeat))]
            walls = sorted(r[0] for r in runs)
            mb, code = max(r[1] for r in runs), runs[-1][2]
            if args.repeat > 1:
                print(f"  {n:>9,} {walls[0]:>8.2f} {statistics.median(walls):>9.2f} {n / walls[0]:>10,.0f} "
                      f"{mb:>12,.0f}   (exit {code})")
            else:
                print(f"  {n:>9,} {walls[0]:>8.2f} {n / walls[0]:>10,.0f} {mb:>12,.0f}   (exit {code})")
        if args.memos:
            reg = tmp / "memos.csv"
            write_register(reg, args.memos, seed=3)
            wall, mb, code = run_batch_cli(reg, base, tmp / "outm", ["--memos"])
            print()
            print(f"memos: {args.memos} vessels with one memo each in {wall:.1f} s wall "
                  f"({wall / args.memos * 1000:.0f} ms per vessel, both cores), peak RSS {mb:,.0f} MB")
        if args.uncertain:
            ubase = tmp / "ubase.yaml"
            ubase.write_text(BASE + UNCERTAINTY, encoding="utf-8")
            reg = tmp / "unc.csv"
            write_register(reg, args.uncertain, seed=5)
            wall, mb, code = run_batch_cli(reg, ubase, tmp / "outu")
            print()
            print(f"uncertainty: {args.uncertain} vessels x 10,000 samples = {args.uncertain * 10000:,} sample-cases "
                  f"in {wall:.1f} s wall, peak RSS {mb:,.0f} MB")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
