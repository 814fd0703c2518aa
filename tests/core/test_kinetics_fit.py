"""Kinetics from calorimeter runs (core): model-free estimates against their formulas, model fits against
synthetic runs integrated with scipy's solve_ivp (the reference), the autocatalytic TMRad against quadrature."""
from __future__ import annotations

import math
import sys
from pathlib import Path

import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from screening.core.calorimetry_baseline import analyse_run, find_exotherm
from screening.core.kinetics_fit import (
    autocatalytic_tmr_adiabatic,
    fit_autocatalytic,
    fit_nth_order,
    flynn_wall_ozawa,
    friedman,
    kissinger,
)

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
import kinetics_synthetic as syn  # noqa: E402

R = 8.314462618  # J/(mol K), CODATA 2018
RATES = (1.0, 2.0, 5.0, 10.0)  # K/min


def _fit_runs(truth, fitter, clean_runs, seed, noise=4.0, heat=4e5):
    rng = np.random.default_rng(seed)
    inputs, peaks = [], []
    for clean in clean_runs:
        t, temp = clean[0], clean[1]
        q = syn.with_noise(clean, heat, rng, noise=noise)
        r = analyse_run(t, temp, q)
        inputs.append(r.fit_input(t, temp, q))
        peaks.append(r.peak_temperature)
    fit = fitter(inputs, 1.0 / float(np.mean(1.0 / np.array(peaks))))
    return fit.at_reference(fit.uncorrelated_reference())


@pytest.mark.parametrize("truth, fitter", [(syn.NTH, fit_nth_order), (syn.AUTO, fit_autocatalytic)],
                         ids=["nth-order", "autocatalytic"])
def test_true_values_inside_the_95_percent_intervals_in_90_percent_of_50_seeds(truth, fitter):
    # reference: runs made by integrating the known kinetics with scipy's solve_ivp (LSODA, rtol 1e-10), with
    # white noise (4 W/kg, about 1 % of the slowest run's peak) on a sloping baseline (300 W/kg + 0.8 W/(kg K))
    clean = [syn.scanning_run(truth, beta) for beta in RATES]
    names = ["ln_rate_constant", "activation_energy", "order"]
    true = {"activation_energy": truth["E"], "order": truth["n"]}
    if truth["model"] == "autocatalytic":
        names += ["autocatalytic_order", "ln_initiation"]
        true.update(autocatalytic_order=truth["m"], ln_initiation=math.log(truth["z"]))
    inside = dict.fromkeys(names + ["heat"], 0)
    for seed in range(50):
        fit = _fit_runs(truth, fitter, clean, seed)
        true["ln_rate_constant"] = math.log(truth["k"]) - truth["E"] / R * (1 / fit.reference_temperature
                                                                             - 1 / truth["Tref"])
        for name in names:
            lo, hi = fit.interval(name)
            inside[name] += lo <= true[name] <= hi
        heat = float(np.mean(fit.heats))
        sd = math.sqrt(float(np.ones(4) @ fit.heat_covariance @ np.ones(4))) / 4
        inside["heat"] += abs(heat - 4e5) <= 1.96 * sd
    # the criterion: inside in at least about 90 % of 50 seeds
    assert all(count >= 45 for count in inside.values()), inside


def _kissinger_peak(beta, e, a):
    # Kissinger (1957): ln(beta / Tp^2) = ln(A R / E) - E / (R Tp), solved for Tp
    return brentq(lambda tp: math.log(beta / tp ** 2) - math.log(a * R / e) + e / (R * tp), 250.0, 1500.0)


def test_kissinger_against_its_formula():
    # peaks from Kissinger's equation itself (Kissinger, Anal. Chem. 29 (1957) 1702) give E and A back exactly
    e, a = 135e3, 3e12
    betas = np.array([0.5, 1, 2, 5, 10, 20]) / 60
    k = kissinger(betas, [_kissinger_peak(b, e, a) for b in betas])
    assert k["activation_energy"] == pytest.approx(e, rel=1e-9)
    assert k["pre_exponential"] == pytest.approx(a, rel=1e-7)


def test_kissinger_on_first_order_runs_integrated_by_solve_ivp():
    # Kissinger's relation is exact for a first-order reaction at the peak (Kissinger 1957): peaks of runs
    # integrated by solve_ivp give E within 0.3 % (the temperature programme starts at a finite temperature)
    truth = dict(syn.NTH, n=1.0)
    peaks, betas = [], []
    for beta in RATES:
        t, temp, alpha, rate = syn.scanning_run(truth, beta, dt=1.0)
        i = int(np.argmax(rate))
        peaks.append(np.polyfit(temp[i - 3:i + 4] - temp[i], rate[i - 3:i + 4], 2))
        a2, a1, _ = peaks[-1]
        peaks[-1] = temp[i] - a1 / (2 * a2)
        betas.append(beta / 60)
    assert kissinger(betas, peaks)["activation_energy"] == pytest.approx(truth["E"], rel=3e-3)


def test_flynn_wall_ozawa_against_its_formula():
    # ASTM E698 / Doyle (1962): log10(beta) = C - 0.4567 E / (R Tp); peaks on that line give E back exactly
    e = 95e3
    betas = np.array([1, 2, 5, 10, 20]) / 60
    tp = 0.4567 * e / (R * (8.0 - np.log10(betas)))
    assert flynn_wall_ozawa(betas, tp)["activation_energy"] == pytest.approx(e, rel=1e-12)
    # and the slope by hand from two points: E = -(R / 0.4567) (log10 b2 - log10 b1) / (1/T2 - 1/T1)
    by_hand = -(R / 0.4567) * (np.log10(betas[-1]) - np.log10(betas[0])) / (1 / tp[-1] - 1 / tp[0])
    assert flynn_wall_ozawa(betas[[0, -1]], tp[[0, -1]])["activation_energy"] == pytest.approx(by_hand, rel=1e-12)


def test_friedman_recovers_a_single_step_activation_energy():
    # Friedman (1964): for one rate law, ln(d alpha/dt) at fixed alpha is linear in 1/T with slope -E/R at
    # every conversion; noise-free runs integrated by solve_ivp give E within 0.2 % from alpha 0.1 to 0.9
    from screening.core.kinetics_fit import RunRates

    runs = []
    for beta in RATES:
        t, temp, alpha, rate = syn.scanning_run(syn.AUTO, beta, dt=2.0)
        runs.append(RunRates(temp, alpha, rate))
    iso = friedman(runs, np.arange(0.1, 0.91, 0.1))
    assert len(iso) == 9
    for point in iso:
        assert point["activation_energy"] == pytest.approx(syn.AUTO["E"], rel=2e-3), point


def test_baseline_and_heat_of_a_gaussian_peak_on_a_sloping_baseline():
    # the area of a Gaussian, H sqrt(2 pi) sigma (analytic), on the baseline 2 + 0.01 T
    temp = np.linspace(300.0, 600.0, 3001)
    peak = 50.0 * np.exp(-0.5 * ((temp - 450.0) / 12.0) ** 2)
    q = 2.0 + 0.01 * temp + peak
    time = (temp - 300.0) * 6.0  # 10 K/min
    r = analyse_run(time, temp, q)
    assert r.heat == pytest.approx(50.0 * math.sqrt(2 * math.pi) * 12.0 * 6.0, rel=1e-4)
    assert r.peak_temperature == pytest.approx(450.0, abs=0.05)
    assert r.heating_rate == pytest.approx(1 / 6.0, rel=1e-9)
    e = find_exotherm(temp, q)
    assert np.allclose(e.baseline, 2.0 + 0.01 * temp, atol=1e-6)


def _adiabatic_tmr_by_solve_ivp(t0, rise, truth):
    # reference: the adiabatic history integrated by solve_ivp; the time of the maximum rate found by the event
    # d(rate)/dt = 0 (rate increasing before it)
    def f(t, y):
        return [syn.rate(truth, t0 + rise * y[0], y[0])]

    def slope(t, y):
        a = y[0]
        h = 1e-7
        return (syn.rate(truth, t0 + rise * (a + h), a + h) - syn.rate(truth, t0 + rise * a, a)) / h

    slope.terminal = True
    slope.direction = -1
    sol = solve_ivp(f, (0.0, 1e9), [0.0], method="LSODA", rtol=1e-11, atol=1e-14, events=slope)
    return float(sol.t_events[0][0])


@pytest.mark.parametrize("n, m, z", [(1.0, 1.0, 0.01), (1.5, 0.7, 0.05), (0.5, 2.0, 0.002)])
def test_autocatalytic_tmr_against_solve_ivp(n, m, z):
    truth = {"model": "autocatalytic", "k": 1e-4, "E": 100e3, "Tref": 400.0, "n": n, "m": m, "z": z}
    t0, rise = 380.0, 150.0
    tmr = autocatalytic_tmr_adiabatic(t0, rise, truth["k"], truth["Tref"], truth["E"], n, m, z)
    assert tmr == pytest.approx(_adiabatic_tmr_by_solve_ivp(t0, rise, truth), rel=1e-4)
