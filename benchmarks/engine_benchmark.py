"""Throughput of the vectorised closed-form engine against a per-case solve_ivp loop.

Run from the repository root:

    python benchmarks/engine_benchmark.py [--sizes 1e3 1e4 1e5 1e6] [--sample 200] [--repeats 3] [--workers 1]

For each register size it builds synthetic vessels (one constant and one decaying
source, one limit each), times ``first_crossing_times`` on the prepared arrays
(best of ``--repeats``), and prints the throughput.  A per-case loop of
``scipy.integrate.solve_ivp`` with a terminal event at the limit is timed on a
sample of the same cases and extrapolated; the ratio of throughputs is printed
for a tight tolerance (comparable accuracy) and for solve_ivp's defaults.  Peak
memory is reported from tracemalloc (numpy allocations during one engine call)
and from resource.getrusage (peak resident set of the process).  The sample is
also checked against the single-case engine.

This is a script, not a test.
"""
from __future__ import annotations

import argparse
import os
import resource
import sys
import time
import tracemalloc

import numpy as np

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), ".."))

from screening.core.closed_form_history import LinearBalance
from screening.core.time_to_limit import first_crossing, history_shape
from screening.core.time_to_limit_batch import first_crossing_times

HOUR = 3600.0


def synthetic_register(n, seed=1):
    """n vessels: C, G, Q0 = G Ta + constant power, T0, one decaying source, one limit, 72 h."""
    rng = np.random.default_rng(seed)
    C = 10 ** rng.uniform(6.0, 8.0, n)  # J/K, 1 to 100 t of liquid
    G = 10 ** rng.uniform(0.0, 3.0, n)  # W/K
    Ta = rng.uniform(280.0, 310.0, n)  # K
    Q0 = G * Ta + rng.uniform(0.0, 5e3, n)  # W, ambient drive plus a constant source
    T0 = rng.uniform(280.0, 320.0, n)  # K
    P = 10 ** rng.uniform(3.0, 5.0, (n, 1))  # W
    b = 1.0 / 10 ** rng.uniform(3.0, 5.0, (n, 1))  # 1/s, time constants 1000 s to 28 h
    L = rng.uniform(300.0, 360.0, n)  # K
    H = np.full(n, 72 * HOUR)
    return C, G, Q0, T0, P, b, L, H


def time_engine(args, repeats, workers):
    best_wall, best_cpu, out = np.inf, np.inf, None
    for _ in range(repeats):
        w0, c0 = time.perf_counter(), time.process_time()
        out = first_crossing_times(*args, workers=workers)
        w1, c1 = time.perf_counter(), time.process_time()
        best_wall, best_cpu = min(best_wall, w1 - w0), min(best_cpu, c1 - c0)
    return best_wall, best_cpu, out


def ivp_loop(args, idx, rtol, atol):
    """Per-case solve_ivp with a terminal upward event at the limit; returns (times, seconds)."""
    from scipy.integrate import solve_ivp

    C, G, Q0, T0, P, b, L, H = args
    out = np.full(idx.size, np.nan)
    t0 = time.perf_counter()
    for j, i in enumerate(idx):
        Ci, Gi, Qi, Pi, bi, Li = C[i], G[i], Q0[i], P[i, 0], b[i, 0], L[i]
        if T0[i] >= Li:
            out[j] = 0.0
            continue

        def rhs(t, y):
            return [(Qi + Pi * np.exp(-bi * t) - Gi * y[0]) / Ci]

        def hit(t, y):
            return y[0] - Li
        hit.terminal = True
        hit.direction = 1
        kw = {} if rtol is None else dict(rtol=rtol, atol=atol)
        sol = solve_ivp(rhs, (0.0, H[i]), [T0[i]], events=hit, **kw)
        if sol.t_events[0].size:
            out[j] = sol.t_events[0][0]
    return out, time.perf_counter() - t0


def single_engine(args, idx):
    C, G, Q0, T0, P, b, L, H = args
    out = np.full(idx.size, np.nan)
    t0 = time.perf_counter()
    for j, i in enumerate(idx):
        bal = LinearBalance(C[i], G[i], Q0[i], T0[i], P[i], b[i])
        t = first_crossing(bal, L[i], H[i], history_shape(bal, H[i]))
        out[j] = np.nan if t is None else t
    return out, time.perf_counter() - t0


def rel_diff(a, b):
    both = ~np.isnan(a) & ~np.isnan(b)
    same_reach = np.array_equal(np.isnan(a), np.isnan(b))
    with np.errstate(invalid="ignore", divide="ignore"):
        d = np.abs(a[both] - b[both]) / np.where(b[both] > 0, b[both], 1.0)
    return (float(d.max()) if d.size else 0.0), same_reach


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", nargs="+", type=float, default=[1e3, 1e4, 1e5, 1e6])
    ap.add_argument("--sample", type=int, default=200)
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--workers", type=int, nargs="+", default=[1, 2])
    opts = ap.parse_args(argv)

    print(f"numpy {np.__version__}, {os.cpu_count()} CPU(s), load average {os.getloadavg()[0]:.2f}")
    sizes = [int(s) for s in opts.sizes]
    args_big = synthetic_register(max(sizes))
    idx = np.random.default_rng(2).choice(max(sizes), size=min(opts.sample, max(sizes)), replace=False)

    # per-case references on the sample
    t_tight, s_tight = ivp_loop(args_big, idx, rtol=1e-10, atol=1e-8)
    t_def, s_def = ivp_loop(args_big, idx, rtol=None, atol=None)
    t_single, s_single = single_engine(args_big, idx)
    ivp_tight_rate = idx.size / s_tight
    ivp_def_rate = idx.size / s_def
    print(f"solve_ivp loop, {idx.size} cases, rtol=1e-10 (RK45): {s_tight:.3f} s -> {ivp_tight_rate:,.0f} cases/s")
    print(f"solve_ivp loop, {idx.size} cases, default rtol=1e-3:  {s_def:.3f} s -> {ivp_def_rate:,.0f} cases/s")
    print(f"single-case engine loop, {idx.size} cases:              {s_single:.3f} s -> "
          f"{idx.size / s_single:,.0f} cases/s")

    print()
    print(f"{'cases':>9} {'workers':>7} {'wall s':>8} {'cpu s':>7} {'cases/s':>12} "
          f"{'x ivp tight':>11} {'x ivp default':>13}")
    for n in sizes:
        args = tuple(a[:n] for a in args_big)
        for w in opts.workers:
            wall, cpu, _ = time_engine(args, opts.repeats, w)
            rate = n / wall
            print(f"{n:>9,} {w:>7} {wall:>8.4f} {cpu:>7.3f} {rate:>12,.0f} "
                  f"{rate / ivp_tight_rate:>11,.0f} {rate / ivp_def_rate:>13,.0f}")

    # accuracy on the sample
    _, _, mine = time_engine(args_big, 1, 1)
    m = mine[idx]
    d_single, r_single = rel_diff(m, t_single)
    d_tight, r_tight = rel_diff(m, t_tight)
    d_def, r_def = rel_diff(m, t_def)
    print()
    print(f"sample accuracy: max rel. difference vs single-case engine {d_single:.2e} (same reached: {r_single}); "
          f"vs solve_ivp rtol=1e-10 {d_tight:.2e} ({r_tight}); vs default solve_ivp {d_def:.2e} ({r_def})")
    print(f"reached in the register: {np.count_nonzero(~np.isnan(mine)):,} of {mine.size:,} "
          f"({np.count_nonzero(mine == 0):,} at t = 0)")

    # memory: numpy allocations of one engine call at the largest size, then the process peak
    tracemalloc.start()
    first_crossing_times(*args_big)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    inputs = sum(a.nbytes for a in args_big)
    rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024  # Linux reports KiB
    print(f"peak memory at {max(sizes):,} cases: tracemalloc {peak / 2**20:.0f} MiB during the call "
          f"(inputs {inputs / 2**20:.0f} MiB held outside it); process peak RSS {rss / 2**20:.0f} MiB")


if __name__ == "__main__":
    main()
