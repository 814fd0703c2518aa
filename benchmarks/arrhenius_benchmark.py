"""Throughput, accuracy and memory of screening.core.arrhenius_history_batch in one run.

    python benchmarks/arrhenius_benchmark.py                # 100,000 samples per mix
    python benchmarks/arrhenius_benchmark.py --n 20000 --check 60

For each mix of random sample-cases (typical; near Semenov criticality;
runaways within seconds) it times ``first_crossing_times_arrhenius`` on
``--n`` samples with the default settings, then compares ``--check`` of those
samples per mix with scipy ``solve_ivp`` (Radau, rtol 1e-10, the balance
written out here in plain time and conversion, independent of the module) and
prints the largest relative errors of the times, the peak temperatures and
the times of interior maxima.  Peak resident memory of this process and of its worker
processes comes from ``resource.getrusage``.  The load average is printed
because other work on the machine slows the wall-clock figures.
"""
from __future__ import annotations

import argparse
import math
import os
import resource
import sys
import time
from multiprocessing import Pool
from pathlib import Path

import numpy as np
from scipy.integrate import solve_ivp

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from screening.core.model import GAS_CONSTANT
from screening.core.arrhenius_history_batch import ArrheniusSamples, first_crossing_times_arrhenius

R = GAS_CONSTANT
HOUR = 3600.0
LIMITS = np.array([380.0, 420.0, 500.0, 700.0])
HORIZON = 500 * HOUR


def cases(kind, N, seed, J=1, kd=1, km=1):
    """Random sample-cases of one kind (see the module docstring)."""
    rng = np.random.default_rng(seed)
    T0 = rng.uniform(300, 380, N)
    C = rng.uniform(1e6, 4e7, N)
    m = C / rng.uniform(1500, 3000, N)
    E = rng.uniform(60e3, 180e3, (N, J))
    Tr = T0[:, None] + rng.uniform(-10, 40, (N, J))
    rate0 = 10 ** (rng.uniform(-1, 1.5, (N, J)) if kind == "fast" else rng.uniform(-6, -2, (N, J)))  # K/s at T0
    k0 = rate0 * C[:, None] / m[:, None]
    q = k0 * np.exp(E / R * (1 / T0[:, None] - 1 / Tr))
    n = rng.choice([0.0, 0.3, 0.5, 1.0, 1.5, 2.0], (N, J))
    dh = 10 ** rng.uniform(1.5, 3.0, (N, J)) * C[:, None] / m[:, None]
    dh[rng.random((N, J)) < 0.2] = np.nan
    X0 = np.where(rng.random((N, J)) < 0.3, rng.uniform(0, 0.5, (N, J)), 0.0)
    slope = (m[:, None] * k0 * E / (R * T0[:, None] ** 2)).sum(1)
    gen0 = (m[:, None] * k0).sum(1)
    Ta = T0 - rng.uniform(0, 30, N)
    Pd = rng.uniform(0, 20, (N, kd)) * slope[:, None] * (rng.random((N, kd)) < 0.5)
    mua = rng.uniform(0, 1, (N, km)) * slope[:, None] * (rng.random((N, km)) < 0.5)
    if kind == "critical":  # loss line tangent to generation at T0, UA within -4 %..+1 %
        ua = slope * np.exp(rng.uniform(-0.04, 0.01, N))
        Ta = np.maximum(T0 - gen0 / slope, 200.0)
        dh = np.where(rng.random((N, J)) < 0.5, np.nan, 10 ** rng.uniform(2.5, 3.3, (N, J)) * C[:, None] / m[:, None])
        X0 = np.zeros((N, J))
        Pd[:] = 0.0
        mua[:] = 0.0
    elif kind == "fast":
        ua = slope * 10 ** rng.uniform(-3, -1, N)
    else:
        ua = slope * 10 ** rng.uniform(-1.5, 1.5, N)
        ua[rng.random(N) < 0.15] = 0.0
    P0 = np.where(rng.random(N) < 0.3, rng.uniform(0, 3, N) * slope, 0.0) if kind == "typical" else np.zeros(N)
    ad = 10 ** rng.uniform(2, 5, (N, kd))
    mT = T0[:, None] + rng.uniform(-20, 30, (N, km))
    return dict(C=C, m=m, ua=ua, Ta=Ta, T0=T0, P0=P0, Pd=Pd, ad=ad, mua=mua, mT=mT, q=q, Tr=Tr, E=E, n=n,
                dh=dh, X0=X0)


def to_params(d):
    return ArrheniusSamples(
        heat_capacity=d["C"], contents_mass=d["m"], ua=d["ua"], ambient_temperature=d["Ta"],
        initial_temperature=d["T0"], constant_power=d["P0"], decaying_power=d["Pd"], decay_time=d["ad"],
        media_ua=d["mua"], media_temperature=d["mT"], specific_power=d["q"], reference_temperature=d["Tr"],
        activation_energy=d["E"], order=d["n"], heat_of_reaction=d["dh"], initial_conversion=d["X0"])


def one(d, i):
    return {k: (v[i].tolist() if v.ndim == 2 else float(v[i])) for k, v in d.items()}


def reference(s, limits=LIMITS, horizon=HORIZON, stop=LIMITS.max() + 20.0, rtol=1e-10):
    """solve_ivp (Radau) in plain time: (times, peak, peak_time, stopped, end temperature); a time of
    -1: plain-time integration could not follow the runaway that far."""
    J = len(s["q"])
    C, m = s["C"], s["m"]
    g = s["ua"] + sum(s["mua"])
    drive = s["ua"] * s["Ta"] + sum(u * T for u, T in zip(s["mua"], s["mT"]))
    lncap = math.log(1e9 * C / m)
    tracked = [not math.isnan(dd) and q > 0 for dd, q in zip(s["dh"], s["q"])]
    off = [tracked[j] and s["X0"][j] >= 1 for j in range(J)]

    def k_of(T, j):
        if s["q"][j] <= 0:
            return 0.0
        ex = math.log(s["q"][j]) - s["E"][j] / R * (1 / T - 1 / s["Tr"][j])
        return math.exp(max(min(ex, lncap), -600.0))

    def rhs(t, y):
        T = y[0]
        net = s["P0"] + sum(P * math.exp(-t / a) for P, a in zip(s["Pd"], s["ad"])) - g * T + drive
        dy = np.zeros(1 + J)
        for j in range(J):
            if off[j]:
                continue
            k = k_of(max(T, 1.0), j)
            if tracked[j]:
                rem = max(1 - y[1 + j], 0.0)
                n = s["n"][j]
                q = k * (rem ** n if n > 0 else (1.0 if rem > 0 else 0.0))
                dy[1 + j] = q / s["dh"][j]
            else:
                q = k
            net += m * q
        dy[0] = net / C
        return dy

    y = np.array([s["T0"]] + list(s["X0"]), dtype=float)
    t = 0.0
    times = [0.0 if s["T0"] >= L else math.nan for L in limits]
    peak, peak_t = s["T0"], 0.0
    for _ in range(10):
        evs, kinds = [], []
        for i, L in enumerate(limits):
            if math.isnan(times[i]):
                ev = (lambda t, y, L=L: y[0] - L)
                ev.direction, ev.terminal = 1, False
                evs.append(ev)
                kinds.append(("limit", i))
        ev = (lambda t, y: y[0] - stop)
        ev.direction, ev.terminal = 1, True
        evs.append(ev)
        kinds.append(("stop", 0))
        ev = (lambda t, y: rhs(t, y)[0])
        ev.direction, ev.terminal = -1, False
        evs.append(ev)
        kinds.append(("peak", 0))
        for j in range(J):
            if tracked[j] and not off[j] and s["n"][j] < 1:
                ev = (lambda t, y, j=j: 1 - y[1 + j])
                ev.direction, ev.terminal = -1, True
                evs.append(ev)
                kinds.append(("end", j))
        sol = solve_ivp(rhs, (t, horizon), y, method="Radau", rtol=rtol, atol=np.r_[1e-12, np.full(J, 1e-14)],
                        events=evs)
        term = None
        for e, (kind, i) in enumerate(kinds):
            for te, ye in zip(sol.t_events[e], sol.y_events[e]):
                if kind == "limit" and math.isnan(times[i]):
                    times[i] = te
                elif kind == "peak" and ye[0] > peak:
                    peak, peak_t = ye[0], te
                elif kind in ("stop", "end"):
                    term = (kind, i, te, ye)
        imax = int(np.argmax(sol.y[0]))
        if sol.y[0, imax] > peak:
            peak, peak_t = sol.y[0, imax], sol.t[imax]
        if sol.status == -1:
            return [x if not math.isnan(x) else -1.0 for x in times], math.nan, math.nan, True, math.nan
        if term is None:
            break
        kind, i, te, ye = term
        if kind == "stop":
            return times, stop, te, True, stop
        t, y = te, ye.copy()
        off[i] = True
    return times, peak, peak_t, False, float(sol.y[0, -1])


def accuracy(d, res, idx):
    """Largest relative errors (time, peak T, interior peak time) and reached mismatches on samples idx."""
    with Pool(min(2, os.cpu_count() or 1)) as pool:
        refs = pool.map(reference, [one(d, i) for i in idx], chunksize=2)
    e_t, e_T, e_tp, mism, n_t = 0.0, 0.0, 0.0, 0, 0
    for i, (tr, peak, peak_t, stopped, T_end) in zip(idx, refs):
        tr = np.array(tr)
        known = tr >= 0
        tr[~known] = np.nan
        tv = res.times[i]
        for l in np.flatnonzero(known):
            if np.isnan(tr[l]) != np.isnan(tv[l]):
                mism += 1
            elif np.isfinite(tr[l]) and tr[l] > 0:
                e_t = max(e_t, abs(tv[l] - tr[l]) / tr[l])
                n_t += 1
        if not stopped:
            e_T = max(e_T, abs(res.peak_temperature[i] - peak) / peak)
            # the time of a genuine interior maximum (not of a plateau, where "first reached" is
            # decided by rounding in the reference)
            if 0 < peak_t < HORIZON * (1 - 1e-9) and peak - T_end > 1e-6 * peak:
                e_tp = max(e_tp, abs(res.peak_time[i] - peak_t) / peak_t)
    return e_t, e_T, e_tp, mism, n_t


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--n", type=int, default=100_000, help="samples per mix")
    ap.add_argument("--check", type=int, default=100, help="samples per mix compared with solve_ivp")
    ap.add_argument("--mixes", default="typical,critical,fast")
    args = ap.parse_args()
    print(f"cpus {os.cpu_count()}, load average at start {os.getloadavg()[0]:.2f}")
    rng = np.random.default_rng(7)
    for seed, kind in enumerate(args.mixes.split(",")):
        d = cases(kind, args.n, 100 + seed)
        p = to_params(d)
        t0 = time.perf_counter()
        res = first_crossing_times_arrhenius(p, LIMITS, HORIZON)
        wall = time.perf_counter() - t0
        reached = np.isfinite(res.times).mean(axis=0)
        print(f"\n[{kind}] {args.n} samples, 4 limits, horizon 500 h: {wall:.2f} s wall, "
              f"{args.n / wall:,.0f} samples/s; steps mean {res.steps.mean():.0f}, max {res.steps.max()}; "
              f"stopped (runaway) {int((res.status == 1).sum())}, failed {int((res.status == 2).sum())}; "
              f"share reaching each limit {np.round(reached, 3).tolist()}; load average now "
              f"{os.getloadavg()[0]:.2f}")
        if args.check:
            idx = np.sort(rng.choice(args.n, size=min(args.check, args.n), replace=False))
            t1 = time.perf_counter()
            e_t, e_T, e_tp, mism, n_t = accuracy(d, res, idx)
            print(f"[{kind}] accuracy on {idx.size} samples ({n_t} crossing times) against solve_ivp Radau "
                  f"rtol 1e-10: time {e_t:.2e}, peak temperature {e_T:.2e}, time of an interior maximum {e_tp:.2e} "
                  f"(largest relative errors); reached/not reached mismatches {mism} "
                  f"[{time.perf_counter() - t1:.0f} s]")
    own = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    kids = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024
    print(f"\npeak resident memory: this process {own:.0f} MiB, largest child process (solver workers, reference pool) {kids:.0f} MiB")


if __name__ == "__main__":
    main()
