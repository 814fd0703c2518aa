"""Synthetic calorimeter runs from known kinetics, integrated with scipy's solve_ivp (the reference).

Used by the kinetics tests and to make the invented demo data set
(``python tests/kinetics_synthetic.py`` rewrites screening/demo_cases/kinetics/).
"""
from __future__ import annotations

import math

import numpy as np
from scipy.integrate import solve_ivp

R = 8.314462618  # J/(mol K), CODATA 2018

#: n-th-order truth used by the tests (invented values)
NTH = {"model": "nth-order", "k": 1e-3, "E": 120e3, "Tref": 460.0, "n": 1.3}
#: autocatalytic truth used by the tests (invented values)
AUTO = {"model": "autocatalytic", "k": 2e-3, "E": 110e3, "Tref": 460.0, "n": 1.0, "m": 1.0, "z": 0.05}


def rate(truth, temperature, alpha):
    a = min(max(alpha, 0.0), 1.0)
    k = truth["k"] * math.exp(-truth["E"] / R * (1.0 / temperature - 1.0 / truth["Tref"]))
    r = k * (1.0 - a) ** truth["n"]
    if truth["model"] == "autocatalytic":
        r *= a ** truth["m"] + truth["z"]
    return r


def scanning_run(truth, beta_k_per_min, dt=10.0, t_start=330.0, t_end=600.0):
    """Noise-free time [s], temperature [K], conversion and rate [1/s] of a run at a constant heating rate."""
    beta = beta_k_per_min / 60.0
    t = np.arange(0.0, (t_end - t_start) / beta, dt)
    sol = solve_ivp(lambda tt, y: [rate(truth, t_start + beta * tt, y[0])], (0.0, t[-1]), [0.0], t_eval=t,
                    method="LSODA", rtol=1e-10, atol=1e-13)
    temp = t_start + beta * t
    alpha = sol.y[0]
    return t, temp, alpha, np.array([rate(truth, T, a) for T, a in zip(temp, alpha)])


def isothermal_run(truth, temperature, duration, dt=10.0):
    t = np.arange(0.0, duration, dt)
    sol = solve_ivp(lambda tt, y: [rate(truth, temperature, y[0])], (0.0, t[-1]), [0.0], t_eval=t,
                    method="LSODA", rtol=1e-10, atol=1e-13)
    alpha = sol.y[0]
    return t, np.full(t.size, temperature), alpha, np.array([rate(truth, temperature, a) for a in alpha])


def with_noise(clean, heat, rng, noise=4.0, offset=300.0, slope=0.8):
    """Heat flow [W/kg] = heat x rate + a sloping baseline + white noise."""
    t, temp, _, r = clean
    return heat * r + offset + slope * (temp - temp[0]) + rng.normal(0.0, noise, t.size)


def adiabatic_run(truth, phi, onset_temperature, rise_ad, points=3000):
    """An adiabatic run with thermal inertia phi: T = T0 + (rise_ad / phi) alpha and d alpha/dt = rate(T, alpha), so
    dT/dt = (rise_ad / phi) rate.  Integrated by solve_ivp in conversion (dt/d alpha = 1 / rate), so the fast end
    of the run is sampled as finely as its start; returns time [s], temperature [K], self-heat rate [K/s] from
    alpha = 0 to 0.999."""
    rise = rise_ad / phi
    alpha = np.linspace(0.0, 0.999, points)
    sol = solve_ivp(lambda a, y: [1.0 / rate(truth, onset_temperature + rise * a, a)], (0.0, alpha[-1]), [0.0],
                    t_eval=alpha, method="LSODA", rtol=1e-10, atol=1e-6)
    temp = onset_temperature + rise * alpha
    return sol.y[0], temp, np.array([rise * rate(truth, T, a) for T, a in zip(temp, alpha)])


DEMO = {"model": "nth-order", "k": 8e-4, "E": 118e3, "Tref": 463.15, "n": 1.2}
DEMO_HEAT = 620e3  # J/kg
DEMO_RATES = (2.0, 4.0, 8.0, 16.0)


def write_demo(folder):
    """Four invented DSC runs of 'FW-K12 dried intermediate' (W/g, degC, s), exotherms up."""
    from pathlib import Path

    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    rng = np.random.default_rng(20261203)
    for beta in DEMO_RATES:
        dt = 270.0 / (beta / 60.0) / 1500.0
        clean = scanning_run(DEMO, beta, dt=dt, t_start=313.15, t_end=583.15)
        q = with_noise(clean, DEMO_HEAT, rng, noise=0.005 * DEMO_HEAT * 1e-3 * beta, offset=250.0, slope=0.6)
        t, temp = clean[0], clean[1]
        lines = ["# FW-K12 dried intermediate (invented demo data), DSC in a closed high-pressure crucible",
                 f"# heating rate {beta:g} K/min, sample 2.1 mg; exotherms up",
                 "time [s],temperature [degC],heat_flow [W/g]"]
        lines += [f"{ti:.1f},{Ti - 273.15:.3f},{qi / 1000:.5f}" for ti, Ti, qi in zip(t, temp, q)]
        (folder / f"fw-k12-dsc-{beta:02.0f}K-per-min.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")


if __name__ == "__main__":
    import sys

    write_demo(sys.argv[1] if len(sys.argv) > 1 else "screening/demo_cases/kinetics")
