"""Every register shape end to end, each against a per-row loop of the same physics, in one run.

Run from the repository root:

    python benchmarks/register_shapes_benchmark.py                        # the sizes of issue 17
    python benchmarks/register_shapes_benchmark.py --scale 0.01           # a quick look (1 % of every size)
    python benchmarks/register_shapes_benchmark.py --shapes drums,unstirred --rows-unstirred 50 --repeat 3
    python benchmarks/register_shapes_benchmark.py --shapes simple --baseline-tree /path/to/older/checkout

It prints first how fast the machine is at that moment (the fixed pure-Python loop of register_benchmark.py),
then, for each register shape, a reproducible (seeded) invented register (a CSV and a base YAML case):

  simple     mass, UA, a constant and a decaying source, one limit (register_benchmark.py's register);
  geometry   tanks of every shape and head type by geometry, fill, density and a coefficient on the wetted
             area (geometry_register_benchmark.py's register);
  drums      stirred drums of a self-reactive liquid, one Arrhenius decomposition source (first order, with
             its heat of reaction), ``scenario: storage`` so that the SADT is computed; mass, UA, ambient,
             start temperature, specific power and activation energy vary by row;
  mixed      closed-form rows of five structures in turn: fire on a tank by geometry with boiling data
             (open venting); fire on a given wetted area; a heating medium above the boiling point (open
             venting); a heating medium with a constant source; a constant and a decaying source with
             boiling data (open venting);
  unstirred  unstirred drums, bags and cartons of a self-heating powder (vertical cylinder, sphere, box;
             conduction with thermal conductivity and density), one Arrhenius decomposition, storage.

For each shape it times ``heatscreen batch`` end to end in its own process (``python -m screening.cli
batch REG.csv --base BASE.yaml --out DIR``: reading, validation, screening, every output file; wall time,
rows/s and the peak resident memory of the batch process and its workers), and a per-row baseline loop
of the same physics on a sample of rows drawn the same way (another seed), extrapolated to the register's
size. The ratio printed is baseline / heatscreen (above 1: heatscreen is faster); one warm-up call of the
baseline on one row comes first, outside the timing. Each baseline:

  simple     per row, ``scipy.integrate.solve_ivp`` (LSODA, rtol 1e-10, atol 1e-12) of C dT/dt =
             P0 + P1 exp(-t/tau) - UA (T - Ta) over the tool's default 72 h horizon with a terminal event at
             the limit;
  geometry   per row, ``fluids.geometry`` (TANK volume, its exact inverse for the liquid height, the wetted
             area; the sphere's height by brentq; geometry_register_benchmark.py's function) and then the same
             solve_ivp as simple;
  drums      per row, the main run: solve_ivp (LSODA, rtol 1e-10) of temperature and conversion over the
             horizon with an event at the limit, stopped 100 K above it; the Semenov critical ambient by
             brentq on the tangency condition (the start of the search); and the SADT trials the tool runs:
             the same gallop-and-bisect search on the 5 degC grid (``screening.core.sadt.search_sadt``,
             the orchestration only) with one 7-day solve_ivp trial per step tried (from uniform at the
             trial ambient, the decomposition alone, an event at a 6 K rise, stopped 100 K above the
             ambient). TMRad, T_D24 and the other closed-form criteria are not in the baseline (cheap);
  mixed      per row, ``fluids.geometry`` where the row has geometry (the fire's wetted area up to 7.6 m
             above the fire base) and solve_ivp (LSODA, rtol 1e-10) of the lumped balance with the row's
             sources (API 521 fire input 43.2 kW F A^0.82, no loss credited with a fire; a medium's
             UA (Tm - T); constant; decaying) over the 24 h horizon, with an event at the limit and a
             terminal event at the boiling point of an open vessel, and from there the boil-off (net power
             over the latent heat) until the contents are boiled off or the horizon ends;
  unstirred  per row, a method-of-lines finite-volume solution of the 1-D heat equation with the Arrhenius
             source and its conversion in every cell (slab, infinite cylinder or sphere as the tool takes the
             shape; solve_ivp BDF with the Jacobian's sparsity, rtol 1e-8) on 64 cells and again on 128 (the
             tool's mesh check), over the horizon with an event at the limit; then the SADT search as for the
             drums with 7-day trials on 64 cells, started at the Frank-Kamenetskii critical ambient for an
             infinite Biot number (the tool starts at the one for the actual Biot number, a little lower, so
             the two may try a different number of steps: both averages are printed).

Targets from issue 17 are printed beside the figures they concern (met / not met): 100,000 geometry rows
under 10 s; 10,000 stirred Arrhenius drums (storage, SADT included) under 30 s; simple rows no slower than
today (judged only with --baseline-tree: this tree's best time at most 5 % above the other tree's in the
same run, the 5 % allowing for the noise of a shared machine); peak memory under 2 GB for every shape; a
stated figure (no target) for the unstirred drums. A size target is judged only at the size it names.

With --check, each baseline sample is also screened by heatscreen (not timed) and the baseline's figures are
compared row by row with heatscreen's (the first limit's time, time to boil and to dry, the critical ambient,
the SADT, the centre temperature at the horizon): evidence that the loop computes the same physics.

This is a script, not a test: it measures; it asserts nothing.
"""
from __future__ import annotations

import argparse
import csv
import math
import os
import shutil
import statistics
import sys
import tempfile
import time
import warnings
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

import geometry_register_benchmark as gb  # noqa: E402
import register_benchmark as rb  # noqa: E402

R_GAS = 8.314462618  # J/(mol K), CODATA 2018 (exact in the 2019 SI)
ZERO_C = 273.15
DAY = 86400.0
HOUR = 3600.0
SADT_WINDOW = 7 * DAY  # test series H: 7 days, 6 K rise, 5 degC steps (from memory, as the tool states)
SADT_RISE = 6.0
FIRE_ZONE = 7.6  # m, API 521 wetted area up to 25 ft above the fire base (from memory)
FIRE_C = 43_200.0  # W / m^1.64, API 521 with adequate drainage and fire-fighting, SI form (from memory)

DEFAULT_HORIZON = 72 * HOUR  # the tool's horizon when a case gives none

SHAPES = ("simple", "geometry", "drums", "mixed", "unstirred")
TARGET_ROWS = {"geometry": 100_000, "drums": 10_000}
TARGET_SECONDS = {"geometry": 10.0, "drums": 30.0}
MEMORY_TARGET_MB = 2048.0


# ----------------------------------------------------------------------------- reading a generated CSV


def read_rows(path: Path) -> list[dict]:
    """A generated register as dicts of column name (its unit stripped) -> cell text."""
    with open(path, newline="", encoding="utf-8") as fh:
        r = csv.reader(fh)
        header = [h.split(" [")[0] for h in next(r)]
        return [dict(zip(header, row)) for row in r]


def num(row: dict, key: str, default=None):
    cell = row.get(key, "")
    return float(cell) if cell not in ("", None) else default


def write_csv(path: Path, header: list[str], rows: list[list]) -> None:
    with open(path, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(header)
        w.writerows(rows)


# ----------------------------------------------------------------------------- (a) simple rows


def _two_source_run(C, ua, Ta, T0, p0, p1, tau, lim, horizon=DEFAULT_HORIZON):
    """solve_ivp of C dT/dt = p0 + p1 exp(-t/tau) - UA (T - Ta), terminal at the limit: its time or None."""
    from scipy.integrate import solve_ivp

    def rhs(t, T):
        return [(p0 + p1 * math.exp(-t / tau) - ua * (T[0] - Ta)) / C]

    def hit(t, T):
        return T[0] - lim

    hit.terminal = True
    sol = solve_ivp(rhs, (0.0, horizon), [T0], method="LSODA", events=hit, rtol=1e-10, atol=1e-12)
    return float(sol.t_events[0][0]) if len(sol.t_events[0]) else None


def simple_baseline(rows: list[dict]):
    """Seconds per row, None, per-row outcomes: solve_ivp of the lumped balance, constant + decaying source."""
    outcomes = {}
    t0 = time.perf_counter()
    for row in rows:
        C = num(row, "contents.mass") * num(row, "contents.specific_heat") * 1000.0
        ua, Ta = num(row, "heat_loss.ua"), num(row, "heat_loss.ambient_temperature") + ZERO_C
        p0, p1 = num(row, "heat_sources.0.power") * 1e3, num(row, "heat_sources.1.power") * 1e3
        tau, lim = num(row, "heat_sources.1.time_constant") * HOUR, num(row, "limits.0.temperature") + ZERO_C
        T0 = num(row, "contents.initial_temperature") + ZERO_C
        outcomes[row["id"]] = {"limit_s": _two_source_run(C, ua, Ta, T0, p0, p1, tau, lim)}
    return (time.perf_counter() - t0) / len(rows), None, outcomes


# ----------------------------------------------------------------------------- (b) geometry


def geometry_baseline(rows: list[dict]):
    """Seconds per row, None, per-row outcomes: geometry_register_benchmark's loop (fluids geometry, then
    solve_ivp of the balance with its base case's constant 1 kW and 3 h decaying source) on these rows."""
    order = [h.split(" [")[0] for h in gb.HEADER]
    outcomes = {}
    t0 = time.perf_counter()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # fluids' adaptive quadratures warn on some horizontal heads
        for row in rows:
            V, A = gb._fluids_geometry([row.get(k, "") for k in order])
            C = V * num(row, "contents.density") * 2200.0
            outcomes[row["id"]] = {"limit_s": _two_source_run(
                C, num(row, "heat_loss.coefficient") * A, 303.15, 298.15, 1000.0,
                num(row, "heat_sources.1.power") * 1e3, 3 * HOUR, num(row, "limits.0.temperature") + ZERO_C)}
    return (time.perf_counter() - t0) / len(rows), None, outcomes


def write_geometry(path: Path, n: int, seed: int) -> None:
    gb.write_tanks(path, gb.tank_rows(n, seed=seed))


# ----------------------------------------------------------------------------- (c) stirred drums

DRUMS_BASE = """\
# Invented: store S-40 of the demo site, 200 L drums of a self-reactive liquid (kinetics invented).
id: DRUM
title: FW store S-40, drums of an invented self-reactive liquid
contents:
  mass: 180 kg
  specific_heat: 1.9 kJ/(kg*K)
  initial_temperature: 25 degC
  mixing: stirred
heat_loss:
  ambient_temperature: 30 degC
  ua: 2.5 W/K
heat_sources:
  - kind: arrhenius
    role: decomposition
    label: decomposition
    specific_power: 0.03 W/kg
    reference_temperature: 50 degC
    activation_energy: 120 kJ/mol
    order: 1
    specific_heat_of_reaction: 600 kJ/kg
    gas_generating: true
    tested_range: [40 degC, 100 degC]
limits:
  - name: emergency action
    temperature: 50 degC
horizon: 30 d
scenario: storage
response_time: 4 h
"""
DRUMS_HEADER = ["id", "contents.mass [kg]", "heat_loss.ua [W/K]", "heat_loss.ambient_temperature [degC]",
                "contents.initial_temperature [degC]", "heat_sources.0.specific_power [W/kg]",
                "heat_sources.0.activation_energy [kJ/mol]"]
DRUM_TREF, DRUM_ORDER, DRUM_DH, DRUM_CP, DRUM_LIMIT, DRUM_HORIZON = 323.15, 1.0, 600e3, 1900.0, 323.15, 30 * DAY
DRUM_TESTED_TOP = 373.15


def write_drums(path: Path, n: int, seed: int) -> None:
    rng = np.random.default_rng(seed)
    mass = rng.integers(50, 250, n)
    ua = np.round(rng.uniform(0.8, 5.0, n), 2)
    ta = np.round(rng.uniform(15, 45, n), 1)
    t0 = np.round(ta - rng.uniform(0, 10, n), 1)
    q = np.round(10 ** rng.uniform(-3.0, 0.0, n), 5)
    E = np.round(rng.uniform(80, 160, n), 1)
    write_csv(path, DRUMS_HEADER, [[f"FW-S40-D{i:05d}", mass[i], ua[i], ta[i], t0[i], q[i], E[i]] for i in range(n)])


def _rate(T, q_ref, E, Tref):
    """W/kg at zero conversion."""
    return q_ref * np.exp(E / R_GAS * (1.0 / Tref - 1.0 / T))


def _lumped_arrhenius(m, C, ua, Ta, T0, q_ref, E, horizon, lim, stop):
    """solve_ivp of temperature and conversion; an event at ``lim`` (None: no limit), stopped at ``stop``."""
    from scipy.integrate import solve_ivp

    def rhs(t, y):
        T, X = y
        q = _rate(T, q_ref, E, DRUM_TREF) * max(1.0 - X, 0.0) ** DRUM_ORDER
        return [(m * q - ua * (T - Ta)) / C, q / DRUM_DH]

    events = []
    if lim is not None:
        def hit(t, y):
            return y[0] - lim
        events.append(hit)

    def runaway(t, y):
        return y[0] - stop

    runaway.terminal = True
    events.append(runaway)
    return solve_ivp(rhs, (0.0, horizon), [T0, 0.0], method="LSODA", events=events, rtol=1e-10, atol=1e-12)


def semenov_ambient(m, ua, q_ref, E, Tref):
    """Critical ambient (K) of zero-order self-heating: m q(T) = UA R T^2 / E and T - Ta = R T^2 / E."""
    from scipy.optimize import brentq

    if ua <= 0:
        return None
    f = lambda T: math.log(m * _rate(T, q_ref, E, Tref)) - math.log(ua * R_GAS * T * T / E)  # noqa: E731
    try:
        Tc = brentq(f, 150.0, 1200.0, xtol=1e-10)
    except ValueError:
        return None
    return Tc - R_GAS * Tc * Tc / E


def sadt_search(trial, estimate):
    """The tool's search on the 5 degC grid (orchestration only): its SadtSearch (the SADT and the trials run)."""
    from screening.core import sadt as cs

    grid = cs.sadt_grid(cs.SADT_LOWEST, cs.search_bound([DRUM_TESTED_TOP]))
    return cs.search_sadt(trial, grid, cs.start_index(grid, estimate))


def drums_baseline(rows: list[dict]):
    """Seconds per row, mean SADT trials per row, per-row outcomes: main run, Semenov estimate, 7-day trials."""
    from screening.core import sadt as cs

    n_trials, outcomes = 0, {}
    t0 = time.perf_counter()
    for row in rows:
        m, ua = num(row, "contents.mass"), num(row, "heat_loss.ua")
        Ta, T0 = num(row, "heat_loss.ambient_temperature") + ZERO_C, num(row, "contents.initial_temperature") + ZERO_C
        q, E = num(row, "heat_sources.0.specific_power"), num(row, "heat_sources.0.activation_energy") * 1e3
        C = m * DRUM_CP
        sol = _lumped_arrhenius(m, C, ua, Ta, T0, q, E, DRUM_HORIZON, DRUM_LIMIT, DRUM_LIMIT + 100.0)
        estimate = semenov_ambient(m, ua, q, E, DRUM_TREF)

        def trial(amb, m=m, C=C, ua=ua, q=q, E=E):
            sol = _lumped_arrhenius(m, C, ua, amb, amb, q, E, SADT_WINDOW, amb + SADT_RISE, amb + 100.0)
            return cs.SadtTrial(amb, len(sol.t_events[0]) > 0, None, None, float(sol.y[0].max()))

        search = sadt_search(trial, estimate)
        n_trials += len(search.trials)
        outcomes[row["id"]] = {"limit_s": float(sol.t_events[0][0]) if len(sol.t_events[0]) else None,
                               "critical_ambient_K": estimate, "sadt_K": search.sadt}
    return (time.perf_counter() - t0) / len(rows), n_trials / len(rows), outcomes


# ----------------------------------------------------------------------------- (d) mixed closed-form rows

MIXED_BASE = """\
# Invented: tanks and vessels of the demo site under fire, heating media and boiling (values invented).
id: MIXED
contents:
  specific_heat: 3.0 kJ/(kg*K)
  initial_temperature: 25 degC
heat_loss:
  ambient_temperature: 25 degC
limits:
  - name: coating limit
    temperature: 80 degC
horizon: 24 h
scenario: heat-up
response_time: 30 min
"""
MIXED_HEADER = ["id", "vessel.shape", "vessel.heads", "vessel.diameter [m]", "vessel.length [m]", "vessel.venting",
                "contents.mass [kg]", "contents.fill", "contents.density [kg/m^3]", "contents.boiling_point [degC]",
                "contents.latent_heat [kJ/kg]", "contents.initial_temperature [degC]",
                "heat_loss.ua [W/K]", "heat_loss.coefficient [W/(m^2*K)]", "heat_loss.area",
                "heat_sources.0.kind", "heat_sources.0.environment_factor", "heat_sources.0.elevation [m]",
                "heat_sources.0.wetted_area [m^2]", "heat_sources.0.medium_temperature [degC]",
                "heat_sources.0.ua [W/K]", "heat_sources.0.power [kW]", "heat_sources.1.kind",
                "heat_sources.1.power [kW]", "heat_sources.1.time_constant [h]", "limits.0.temperature [degC]"]
MIXED_HORIZON = 24 * HOUR
MIXED_KINDS = ("fire-geometry-boiling", "fire-area-boiling", "medium-boiling", "medium-constant",
               "decaying-boiling")
MIXED_SHAPES = [("vertical-cylinder", "ellipsoidal"), ("horizontal-cylinder", "torispherical"),
                ("horizontal-cylinder", "hemispherical"), ("vertical-cylinder", "flat")]


def write_mixed(path: Path, n: int, seed: int) -> None:
    rng = np.random.default_rng(seed)
    rows = []
    for i in range(n):
        kind = MIXED_KINDS[i % len(MIXED_KINDS)]
        cp = [""] * len(MIXED_HEADER)
        put = lambda col, v: cp.__setitem__(MIXED_HEADER.index(col), v)  # noqa: E731
        put("id", f"FW-M{i:06d}")
        put("contents.initial_temperature [degC]", round(float(rng.uniform(10, 40)), 1))
        put("limits.0.temperature [degC]", int(rng.integers(50, 95)))
        boiling = kind.endswith("boiling")
        if boiling:
            put("vessel.venting", "open")
            put("contents.boiling_point [degC]", round(float(rng.uniform(60, 140)), 1))
            put("contents.latent_heat [kJ/kg]", int(rng.integers(300, 2300)))
        if kind == "fire-geometry-boiling":
            shape, heads = MIXED_SHAPES[(i // len(MIXED_KINDS)) % len(MIXED_SHAPES)]
            put("vessel.shape", shape)
            put("vessel.heads", heads)
            put("vessel.diameter [m]", round(float(rng.uniform(1.0, 4.0)), 3))
            put("vessel.length [m]", round(float(rng.uniform(2.0, 10.0)), 3))
            put("contents.fill", round(float(rng.uniform(0.2, 0.95)), 4))
            put("contents.density [kg/m^3]", int(rng.integers(700, 1300)))
            put("heat_loss.coefficient [W/(m^2*K)]", round(float(rng.uniform(1, 8)), 2))
            put("heat_loss.area", "wetted")
            put("heat_sources.0.kind", "fire")
            put("heat_sources.0.environment_factor", round(float(rng.uniform(0.3, 1.0)), 2))
            put("heat_sources.0.elevation [m]", round(float(rng.uniform(0, 3)), 2))
        else:
            put("contents.mass [kg]", int(rng.integers(500, 40000)))
            put("heat_loss.ua [W/K]", int(rng.integers(10, 400)))
            if kind == "fire-area-boiling":
                put("heat_sources.0.kind", "fire")
                put("heat_sources.0.environment_factor", round(float(rng.uniform(0.3, 1.0)), 2))
                put("heat_sources.0.wetted_area [m^2]", round(float(rng.uniform(2, 80)), 2))
            elif kind.startswith("medium"):
                put("heat_sources.0.kind", "heating-medium")
                put("heat_sources.0.medium_temperature [degC]", int(rng.integers(90, 180)))
                put("heat_sources.0.ua [W/K]", int(rng.integers(50, 2000)))
                if kind == "medium-constant":
                    put("heat_sources.1.kind", "constant")
                    put("heat_sources.1.power [kW]", round(float(rng.uniform(0, 10)), 2))
            else:
                put("heat_sources.0.kind", "constant")
                put("heat_sources.0.power [kW]", round(float(rng.uniform(0, 5)), 2))
                put("heat_sources.1.kind", "decaying")
                put("heat_sources.1.power [kW]", round(float(rng.uniform(5, 100)), 2))
                put("heat_sources.1.time_constant [h]", round(float(rng.uniform(0.5, 12)), 2))
        rows.append(cp)
    write_csv(path, MIXED_HEADER, rows)


def _tank(row):
    """(fluids TANK, liquid height, liquid volume) of a geometry row."""
    from fluids.geometry import TANK

    D, L, heads = num(row, "vessel.diameter"), num(row, "vessel.length"), row["vessel.heads"] or "flat"
    kw = {}
    if heads == "hemispherical":
        kw = dict(sideA="spherical", sideB="spherical", sideA_a=D / 2, sideB_a=D / 2)
    elif heads == "ellipsoidal":
        kw = dict(sideA="ellipsoidal", sideB="ellipsoidal", sideA_a=D / 4, sideB_a=D / 4)
    elif heads == "torispherical":
        kw = dict(sideA="torispherical", sideB="torispherical", sideA_f=1.0, sideA_k=0.06, sideB_f=1.0, sideB_k=0.06)
    tank = TANK(D=D, L=L, horizontal=row["vessel.shape"] == "horizontal-cylinder", **kw)
    V = num(row, "contents.fill") * tank.V_total
    return tank, tank.h_from_V(V, method="brenth"), V


def mixed_baseline(rows: list[dict]):
    """Seconds per row, None, per-row outcomes: fluids geometry where given, solve_ivp of the lumped balance."""
    from scipy.integrate import solve_ivp

    outcomes = {}
    t0 = time.perf_counter()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # fluids' adaptive quadratures warn on some horizontal heads
        for row in rows:
            cp = 3000.0
            Ta, T0 = 298.15, num(row, "contents.initial_temperature") + ZERO_C
            lim = num(row, "limits.0.temperature") + ZERO_C
            Tb = num(row, "contents.boiling_point")
            Tb = None if Tb is None else Tb + ZERO_C
            k0, k1 = row["heat_sources.0.kind"], row["heat_sources.1.kind"]
            p_const, p_dec, tau, ua_m, Tm = 0.0, 0.0, 1.0, 0.0, 0.0
            if row["vessel.shape"]:
                tank, h, V = _tank(row)
                m = V * num(row, "contents.density")
                ua = num(row, "heat_loss.coefficient") * tank.SA_from_h(h)
                hc = min(h, max(0.0, FIRE_ZONE - num(row, "heat_sources.0.elevation", 0.0)))
                Aw = tank.SA_from_h(hc) if hc > 0 else 0.0
            else:
                m, ua = num(row, "contents.mass"), num(row, "heat_loss.ua")
                Aw = num(row, "heat_sources.0.wetted_area", 0.0)
            if k0 == "fire":
                p_const += FIRE_C * num(row, "heat_sources.0.environment_factor") * Aw ** 0.82
                ua = 0.0  # the fire input is net: no loss credited on the exposed surface
            elif k0 == "heating-medium":
                ua_m, Tm = num(row, "heat_sources.0.ua"), num(row, "heat_sources.0.medium_temperature") + ZERO_C
            else:
                p_const += num(row, "heat_sources.0.power") * 1e3
            if k1 == "constant":
                p_const += num(row, "heat_sources.1.power") * 1e3
            elif k1 == "decaying":
                p_dec, tau = num(row, "heat_sources.1.power") * 1e3, num(row, "heat_sources.1.time_constant") * HOUR
            C = m * cp

            def rhs(t, T):
                return [(p_const + p_dec * math.exp(-t / tau) + ua_m * (Tm - T[0]) - ua * (T[0] - Ta)) / C]

            def hit(t, T):
                return T[0] - lim

            events = [hit]  # not terminal: the tool goes on past a limit (boiling, boil-off, peak)
            if Tb is not None:
                def boil(t, T):
                    return T[0] - Tb
                boil.terminal = True  # open venting: held at the boiling point from here on
                events.append(boil)
            sol = solve_ivp(rhs, (0.0, MIXED_HORIZON), [T0], method="LSODA", events=events, rtol=1e-10, atol=1e-12)
            first = [float(e[0]) if len(e) else None for e in sol.t_events]
            got = outcomes[row["id"]] = {"limit_s": first[0], "time_to_boil_s": first[1] if Tb else None,
                                         "time_to_dry_s": None}
            if Tb is not None and len(sol.t_events[1]):  # boiling: held at Tb, boil-off at the net power / L
                L = num(row, "contents.latent_heat") * 1e3

                def boil_off(t, y):
                    return [-max(p_const + p_dec * math.exp(-t / tau) + ua_m * (Tm - Tb) - ua * (Tb - Ta), 0.0) / L]

                def dry(t, y):
                    return y[0]

                dry.terminal = True
                off = solve_ivp(boil_off, (float(sol.t_events[1][0]), MIXED_HORIZON), [m], method="LSODA",
                                events=dry, rtol=1e-10, atol=1e-9)
                got["time_to_dry_s"] = float(off.t_events[0][0]) if len(off.t_events[0]) else None
    return (time.perf_counter() - t0) / len(rows), None, outcomes


# ----------------------------------------------------------------------------- (e) unstirred drums

UNSTIRRED_BASE = """\
# Invented: store S-17 of the demo site, packages of a self-heating powder (kinetics invented).
id: PACK
title: FW store S-17, packages of an invented self-heating powder
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
     activation_energy: 135 kJ/mol, order: 0, specific_heat_of_reaction: 1200 kJ/kg, gas_generating: true,
     tested_range: [50 degC, 90 degC]}
limits:
  - {name: self-accelerating region, temperature: 60 degC}
horizon: 30 d
scenario: storage
response_time: 12 h
"""
UNSTIRRED_HEADER = ["id", "vessel.shape", "vessel.diameter [m]", "vessel.length [m]", "vessel.width [m]",
                    "vessel.height [m]", "heat_loss.ambient_temperature [degC]",
                    "contents.initial_temperature [degC]", "contents.thermal_conductivity [W/(m*K)]",
                    "contents.density [kg/m^3]", "heat_sources.0.specific_power [W/kg]"]
U_CP, U_H, U_TREF, U_E, U_DH, U_LIMIT, U_HORIZON, U_TESTED_TOP = (1300.0, 5.0, 333.15, 135e3, 1200e3, 333.15,
                                                                   30 * DAY, 363.15)
FK_DELTA_C = {0: 0.878, 1: 2.0, 2: 3.32}  # Frank-Kamenetskii critical delta, infinite Biot (common practice)


def write_unstirred(path: Path, n: int, seed: int) -> None:
    rng = np.random.default_rng(seed)
    rows = []
    for i in range(n):
        shape = ("vertical-cylinder", "sphere", "box")[i % 3]
        dims = {"vertical-cylinder": [round(float(rng.uniform(0.4, 0.6)), 3), round(float(rng.uniform(0.6, 0.9)), 3),
                                      "", ""],
                "sphere": [round(float(rng.uniform(0.8, 1.3)), 3), "", "", ""],
                "box": ["", round(float(rng.uniform(0.4, 1.2)), 3), round(float(rng.uniform(0.3, 1.0)), 3),
                        round(float(rng.uniform(0.2, 0.8)), 3)]}[shape]
        ta = round(float(rng.uniform(25, 50)), 1)
        rows.append([f"FW-S17-P{i:05d}", shape, *dims, ta, round(min(ta + float(rng.uniform(-10, 25)), 58.0), 1),
                     round(float(rng.uniform(0.07, 0.2)), 4), int(rng.integers(400, 900)),
                     round(float(10 ** rng.uniform(-2.5, 0.5)), 6)])
    write_csv(path, UNSTIRRED_HEADER, rows)


def _body(row):
    """(geometry index j, half-thickness m) as the tool takes the shape: sphere, infinite cylinder, slab."""
    shape = row["vessel.shape"]
    if shape == "sphere":
        return 2, num(row, "vessel.diameter") / 2
    if shape == "box":
        return 0, min(num(row, "vessel.length"), num(row, "vessel.width"), num(row, "vessel.height")) / 2
    return 1, num(row, "vessel.diameter") / 2


def conduction_run(j, R, rho, k, q_ref, Ta, T0, horizon, lim, stop, cells):
    """Method of lines (finite volumes) of rho cp dT/dt = div(k grad T) + rho q(T, X), dX/dt = q / dh;
    convective surface h (T_s - Ta); solve_ivp BDF with the Jacobian's sparsity; event at ``lim`` reached
    by the hottest cell; stopped when it reaches ``stop``."""
    from scipy.integrate import solve_ivp
    from scipy.sparse import diags, bmat, identity

    n = cells
    dr = R / n
    faces = np.arange(n + 1) * dr
    vol = (faces[1:] ** (j + 1) - faces[:-1] ** (j + 1)) / (j + 1)
    area = faces ** j if j else np.ones(n + 1)
    g_in = k * area[1:-1] / dr
    g_out = area[-1] / (dr / (2 * k) + 1.0 / U_H)
    rc = rho * U_CP * vol

    def rhs(t, y):
        T, X = y[:n], y[n:]
        q = np.where(X < 1.0, _rate(np.maximum(T, 1.0), q_ref, U_E, U_TREF), 0.0)
        flow = g_in * (T[1:] - T[:-1])
        dT = rho * vol * q
        dT[:-1] += flow
        dT[1:] -= flow
        dT[-1] -= g_out * (T[-1] - Ta)
        return np.concatenate([dT / rc, q / U_DH])

    tri = diags([np.ones(n - 1), np.ones(n), np.ones(n - 1)], [-1, 0, 1])
    sparsity = bmat([[tri, identity(n)], [identity(n), identity(n)]])

    def hit(t, y):
        return y[:n].max() - lim

    def runaway(t, y):
        return y[:n].max() - stop

    runaway.terminal = True
    y0 = np.concatenate([np.full(n, T0), np.zeros(n)])
    return solve_ivp(rhs, (0.0, horizon), y0, method="BDF", jac_sparsity=sparsity,
                     events=[hit, runaway],
                     rtol=1e-8, atol=np.concatenate([np.full(n, 1e-7), np.full(n, 1e-12)]))


def fk_ambient(j, R, rho, k, q_ref):
    """Frank-Kamenetskii critical ambient (K), infinite Biot: rho q(Ta) E R^2 / (k R_g Ta^2) = delta_c."""
    from scipy.optimize import brentq

    f = lambda Ta: math.log(rho * _rate(Ta, q_ref, U_E, U_TREF) * U_E * R * R / (k * R_GAS * Ta * Ta)) \
        - math.log(FK_DELTA_C[j])  # noqa: E731
    try:
        return brentq(f, 150.0, 1200.0, xtol=1e-10)
    except ValueError:
        return None


def unstirred_baseline(rows: list[dict]):
    """Seconds per row, mean SADT trials per row, per-row outcomes: 64- and 128-cell main runs, FK estimate,
    7-day trials."""
    from screening.core import sadt as cs

    n_trials, outcomes = 0, {}
    t0 = time.perf_counter()
    for row in rows:
        j, R = _body(row)
        rho, k = num(row, "contents.density"), num(row, "contents.thermal_conductivity")
        q = num(row, "heat_sources.0.specific_power")
        Ta, T0 = num(row, "heat_loss.ambient_temperature") + ZERO_C, num(row, "contents.initial_temperature") + ZERO_C
        runs = [conduction_run(j, R, rho, k, q, Ta, T0, U_HORIZON, U_LIMIT, U_LIMIT + 100.0, cells)
                for cells in (64, 128)]

        def trial(amb, j=j, R=R, rho=rho, k=k, q=q):
            sol = conduction_run(j, R, rho, k, q, amb, amb, SADT_WINDOW, amb + SADT_RISE, amb + 100.0, 64)
            return cs.SadtTrial(amb, len(sol.t_events[0]) > 0, None, None, float(sol.y[0].max()))

        grid = cs.sadt_grid(cs.SADT_LOWEST, cs.search_bound([U_TESTED_TOP]))
        search = cs.search_sadt(trial, grid, cs.start_index(grid, fk_ambient(j, R, rho, k, q)))
        n_trials += len(search.trials)
        ev = runs[1].t_events[0]  # the tool reports the limit times of the finer mesh, the history of the coarser
        outcomes[row["id"]] = {"limit_s": float(ev[0]) if len(ev) else None, "sadt_K": search.sadt,
                               "centre_at_horizon_K": None if runs[0].status == 1 else float(runs[0].y[0][-1])}
    return (time.perf_counter() - t0) / len(rows), n_trials / len(rows), outcomes


# ----------------------------------------------------------------------------- the runs


SPEC = {  # shape -> (base YAML text, register writer, baseline function, default sample, what a row is)
    "simple": (rb.BASE, lambda p, n, s: rb.write_register(p, n, seed=s), simple_baseline, 300,
               "mass, UA, constant + decaying source, one limit"),
    "geometry": (gb.BASE, write_geometry, geometry_baseline, 300, "tanks of every shape and head by geometry"),
    "drums": (DRUMS_BASE, write_drums, drums_baseline, 30,
              "stirred drums, one Arrhenius decomposition, storage with SADT"),
    "mixed": (MIXED_BASE, write_mixed, mixed_baseline, 300,
              "fire, heating media, boiling (open venting), constant and decaying sources"),
    "unstirred": (UNSTIRRED_BASE, write_unstirred, unstirred_baseline, 6,
                  "unstirred drums, bags and cartons (conduction), Arrhenius, storage with SADT"),
}


def outcome(out: Path) -> str:
    """Rows written to results.csv and to errors.csv of a batch's output folder."""
    def count(name):
        p = out / name
        if not p.exists():
            return None
        with open(p, newline="", encoding="utf-8") as fh:
            return max(sum(1 for _ in csv.reader(fh)) - 1, 0)

    res, err = count("results.csv"), count("errors.csv")
    return f"{res if res is not None else '?'} screened, {err if err is not None else '?'} in errors.csv"


def sadt_summary(out: Path) -> str:
    """What the batch's results.json says of the SADT: rows computed, mean trials a row, rows reaching a limit."""
    import json

    p = out / "results.json"
    if not p.exists():
        return "no results.json"
    items = json.loads(p.read_text(encoding="utf-8"))
    status, trials, reached = {}, [], 0
    for r in items:
        sadt = r.get("sadt") or {}
        status[sadt.get("status")] = status.get(sadt.get("status"), 0) + 1
        trials.append(len(sadt.get("trials") or []))
        reached += any(lim.get("time_s") is not None for lim in r.get("limits") or [])
    shown = ", ".join(f"{v} {k}" for k, v in sorted(status.items(), key=lambda kv: str(kv[0])))
    return (f"SADT status: {shown}; {statistics.mean(trials) if trials else 0:.1f} trials a row on average; "
            f"{reached} rows reach their limit within the horizon")


def rate(x: float) -> str:
    return f"{x:,.0f}" if x >= 100 else f"{x:.2g}"


def verdict(ok: bool) -> str:
    return "met" if ok else "NOT met"


#: outcome of the baseline -> how to read it from a result of results.json, and whether it is a time
TOOL_KEYS = {
    "limit_s": (lambda r: r["limits"][0]["time_s"], True),
    "time_to_boil_s": (lambda r: (r.get("boiling") or {}).get("time_to_boil_s"), True),
    "time_to_dry_s": (lambda r: (r.get("boiling") or {}).get("time_to_dry_s"), True),
    "critical_ambient_K": (lambda r: r.get("critical_ambient_temperature_K"), False),
    "sadt_K": (lambda r: r.get("sadt_K"), False),
    "centre_at_horizon_K": (lambda r: (r.get("conduction") or {}).get("centre_temperature_at_horizon_K"), False),
}


def check_against_tool(shape: str, samp: Path, base: Path, outcomes: dict, tmp: Path) -> None:
    """Screen the baseline's sample with heatscreen (not timed) and compare the figures row by row."""
    import json

    out = tmp / f"{shape}-check"
    gb.run_batch(samp, base, out)
    try:
        results = {r["id"]: r for r in json.loads((out / "results.json").read_text(encoding="utf-8"))}
    except (OSError, ValueError) as exc:
        print(f"  check: no results to compare ({exc})")
        return
    parts = []
    for key, (read, is_time) in TOOL_KEYS.items():
        pairs = [(got[key], read(results[i])) for i, got in outcomes.items() if key in got and i in results]
        if not pairs:
            continue
        both = [(a, b) for a, b in pairs if a is not None and b is not None]
        one = sum((a is None) != (b is None) for a, b in pairs)
        if is_time:
            worst = max((abs(a - b) / max(abs(b), 1e-300) for a, b in both), default=0.0)
            parts.append(f"{key} {len(both)} rows, largest relative difference {worst:.1e}")
        else:
            worst = max((abs(a - b) for a, b in both), default=0.0)
            parts.append(f"{key} {len(both)} rows, largest difference {worst:.2g} K")
        if one:
            parts[-1] += f", {one} rows given by only one of the two"
    missing = len(set(outcomes) - set(results))
    print(f"  check, baseline against heatscreen on the {len(outcomes)} sample rows: " + "; ".join(parts)
          + (f"; {missing} rows not screened" if missing else ""))


def run_shape(shape: str, n: int, sample: int, repeat: int, tmp: Path, baseline_tree: Path | None,
              check: bool = False) -> None:
    base_text, writer, baseline, _, what = SPEC[shape]
    print(f"\n[{shape}] {n:,} rows: {what}")
    base = tmp / f"{shape}-base.yaml"
    base.write_text(base_text, encoding="utf-8")
    reg = tmp / f"{shape}.csv"
    writer(reg, n, 1)
    samp = tmp / f"{shape}-sample.csv"
    writer(samp, sample, 2)
    rows = read_rows(samp)
    baseline(rows[:1])  # warm-up: imports and first calls outside the timing
    per_row, trials, outcomes = baseline(rows)
    extra = f", {trials:.1f} SADT trials a row on average" if trials is not None else ""
    print(f"  baseline, per-row loop: {per_row * 1000:,.1f} ms/row (sample of {sample}{extra}), "
          f"so {per_row * n:,.1f} s for {n:,} rows")
    trees = [("this tree", ROOT)] + ([("baseline tree", baseline_tree)] if baseline_tree and shape == "simple" else [])
    best = {}
    for name, tree in trees:
        runs = []
        for r in range(max(1, repeat)):
            out = tmp / f"{shape}-out-{name.replace(' ', '-')}-{r}"
            runs.append(gb.run_batch(reg, base, out, tree) + (outcome(out),))
            if r < max(1, repeat) - 1 or name != "this tree":
                shutil.rmtree(out, ignore_errors=True)  # 100,000 rows write about 0.5 GB
        walls = sorted(x[0] for x in runs)
        mb, code, seen = max(x[1] for x in runs), runs[-1][2], runs[-1][3]
        best[name] = walls[0]
        timing = (f"{walls[0]:.2f} s best, {statistics.median(walls):.2f} s median of {len(walls)}" if len(walls) > 1
                  else f"{walls[0]:.2f} s")
        print(f"  heatscreen batch ({name}): {timing} wall, {rate(n / walls[0])} rows/s, "
              f"ratio baseline / heatscreen {per_row * n / walls[0]:,.2f}, peak RSS {mb:,.0f} MB "
              f"[memory target 2 GB: {verdict(mb < MEMORY_TARGET_MB)}] (exit {code}; {seen})")
    last = tmp / f"{shape}-out-this-tree-{max(1, repeat) - 1}"
    if shape in ("drums", "unstirred"):
        print(f"  heatscreen's results: {sadt_summary(last)}")
    shutil.rmtree(last, ignore_errors=True)
    if check:
        check_against_tool(shape, samp, base, outcomes, tmp)
    wall = best["this tree"]
    if shape in TARGET_SECONDS:
        size, limit = TARGET_ROWS[shape], TARGET_SECONDS[shape]
        if n == size:
            print(f"  target: {size:,} rows under {limit:g} s: {verdict(wall < limit)} ({wall:.2f} s)")
        else:
            print(f"  target: {size:,} rows under {limit:g} s: not judged at {n:,} rows (the process start and "
                  f"the fixed costs do not scale with the rows: run the full size)")
    elif shape == "simple":
        if "baseline tree" in best:
            ratio = wall / best["baseline tree"]
            print(f"  target: no slower than today: this tree / baseline tree = {ratio:.3f}: "
                  f"{verdict(ratio <= 1.05)} (5 % allowed for noise)")
        else:
            print("  target: no slower than today: not judged (give --baseline-tree to run the same register "
                  "through the code of today in the same run)")
    elif shape == "unstirred":
        print(f"  stated figure (no target): {wall / n * 1000:,.0f} ms a row end to end")


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--shapes", default=",".join(SHAPES), help=f"comma-separated, from {','.join(SHAPES)}")
    ap.add_argument("--rows-simple", type=int, default=100_000)
    ap.add_argument("--rows-geometry", type=int, default=100_000)
    ap.add_argument("--rows-drums", type=int, default=10_000)
    ap.add_argument("--rows-mixed", type=int, default=10_000)
    ap.add_argument("--rows-unstirred", type=int, default=200)
    ap.add_argument("--sample", type=int, default=None,
                    help="rows in each per-row baseline loop (default: simple, geometry and mixed 300, drums 30, "
                         "unstirred 6; never more than the register's rows)")
    ap.add_argument("--scale", type=float, default=1.0, help="multiplies every row count (e.g. 0.01 for a quick run)")
    ap.add_argument("--repeat", type=int, default=1, help="run each batch this many times: best and median")
    ap.add_argument("--check", action="store_true",
                    help="also screen each baseline sample with heatscreen (not timed) and print how far the "
                         "baseline's figures (limit times, boiling, critical ambient, SADT) are from heatscreen's")
    ap.add_argument("--baseline-tree", type=Path, default=None,
                    help="another checkout (e.g. main before the change) to run the simple register through too")
    args = ap.parse_args(argv)
    shapes = [s.strip() for s in args.shapes.split(",") if s.strip()]
    unknown = [s for s in shapes if s not in SHAPES]
    if unknown:
        ap.error(f"unknown shape(s) {', '.join(unknown)}; expected some of {', '.join(SHAPES)}")

    print(f"heatscreen register shapes benchmark on {os.cpu_count()} cores, Python {sys.version.split()[0]}, "
          f"load average {', '.join(f'{x:.1f}' for x in os.getloadavg())}")
    print(f"machine speed now: {rb.python_loop_seconds():.2f} s for a plain Python loop of 10 million additions "
          f"(lower is faster)")
    print("ratio = per-row baseline loop (timed on a sample, extrapolated) / heatscreen batch end to end; "
          "above 1: heatscreen is faster")
    with tempfile.TemporaryDirectory() as tmpd:
        for shape in shapes:
            n = max(1, int(round(getattr(args, f"rows_{shape}") * args.scale)))
            sample = min(n, args.sample if args.sample is not None else SPEC[shape][3])
            run_shape(shape, n, max(1, sample), args.repeat, Path(tmpd),
                      args.baseline_tree.resolve() if args.baseline_tree else None, args.check)
    print(f"\nmachine speed after: {rb.python_loop_seconds():.2f} s for the same loop")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
