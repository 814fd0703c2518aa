"""Adiabatic runs: the phi correction against its published form, and a run simulated with a known phi
(integrated by scipy's solve_ivp) recovered."""
from __future__ import annotations

import math
import sys
from pathlib import Path

import numpy as np
import pytest

from screening.core.thermal_inertia import fit_self_heat_rate, onset_index, phi_corrected, phi_factor

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
import kinetics_synthetic as syn  # noqa: E402

R = 8.314462618  # J/(mol K), CODATA 2018
TRUTH = {"model": "nth-order", "k": 5e-4, "E": 110e3, "Tref": 450.0, "n": 1.0}


def test_phi_correction_against_the_published_form():
    # Fisher et al., DIERS (AIChE 1992), from memory (not checked against the book):
    # 1/T0,corr = 1/T0 + (R/E) ln phi; T_corr = T0,corr + phi (T - T0); (dT/dt)_corr = phi (dT/dt) exp[(E/R)(1/T - 1/T_corr)]
    temp = np.array([410.0, 430.0, 455.0])
    rate = np.array([0.001, 0.01, 0.2])
    t0, phi, e = 400.0, 1.8, 90e3
    onset, tc, rc = phi_corrected(temp, rate, t0, phi, e)
    onset_ref = 1.0 / (1.0 / t0 + (R / e) * math.log(phi))
    assert onset == pytest.approx(onset_ref, rel=1e-14)
    assert tc == pytest.approx(onset_ref + phi * (temp - t0), rel=1e-14)
    assert rc == pytest.approx(phi * rate * np.exp((e / R) * (1 / temp - 1 / (onset_ref + phi * (temp - t0)))),
                               rel=1e-12)


def test_phi_factor_by_hand():
    # phi = 1 + m_cell c_cell / (m_s c_s) (Townsend and Tou 1980, from memory): 1 + 0.02 x 460 / (0.004 x 1800)
    assert phi_factor(0.004, 1800.0, 0.02, 460.0) == pytest.approx(1 + 9.2 / 7.2, rel=1e-14)


def test_run_with_known_phi_recovered():
    # reference: adiabatic runs integrated by solve_ivp (in conversion) for the sample in a cell (phi = 1.6) and
    # for the sample alone (phi = 1), each from where its self-heat rate reaches the detection threshold at zero
    # conversion (an adiabatic calorimeter's search steps bring the sample there)
    from scipy.optimize import brentq

    phi, rise_ad, threshold = 1.6, 160.0, 0.02 / 60  # K, K/s
    k = lambda temp: TRUTH["k"] * math.exp(-TRUTH["E"] / R * (1 / temp - 1 / TRUTH["Tref"]))  # noqa: E731
    t0 = brentq(lambda temp: rise_ad / phi * k(temp) - threshold, 250, 600)  # the measured onset
    t0_alone = brentq(lambda temp: rise_ad * k(temp) - threshold, 250, 600)  # the onset of the sample alone
    t, temp, rate = syn.adiabatic_run(TRUTH, phi, t0, rise_ad)
    t1, temp1, rate1 = syn.adiabatic_run(TRUTH, 1.0, t0_alone, rise_ad)
    i = onset_index(rate, threshold)
    assert temp[i] == pytest.approx(t0, abs=0.01)
    fit = fit_self_heat_rate(temp[i:], rate[i:], float(temp[i]), float(temp.max()))
    # kinetics: the self-heat-rate fit gives E, n and k back (Townsend and Tou 1980)
    assert fit.activation_energy == pytest.approx(TRUTH["E"], rel=2e-3)
    assert fit.order == pytest.approx(TRUTH["n"], abs=0.051)
    assert fit.rate_constant == pytest.approx(k(fit.reference_temperature), rel=0.01)
    assert not fit.linear_fails
    # phi back from the rises: the adiabatic rise is phi times the measured one
    assert rise_ad / (float(temp.max()) - t0) == pytest.approx(phi, rel=2e-3)
    # the corrected onset is where the sample alone reaches the same threshold (exact at zero conversion)
    onset_corr, tc, rc = phi_corrected(temp, rate, t0, phi, fit.activation_energy)
    assert onset_corr == pytest.approx(t0_alone, abs=0.1)
    # the corrected run follows the run of the sample alone
    inside = (tc > temp1[5]) & (tc < temp1[-5])
    assert rc[inside] == pytest.approx(np.interp(tc[inside], temp1, rate1), rel=0.02)


def test_autocatalytic_run_fails_the_nth_order_linearisation():
    auto = {"model": "autocatalytic", "k": 2e-4, "E": 110e3, "Tref": 450.0, "n": 1.0, "m": 1.0, "z": 0.01}
    # the same integration (solve_ivp in conversion), with the autocatalytic rate law
    phi, t0, rise = 1.5, 420.0, 150.0
    t, temp, rate = syn.adiabatic_run(auto, phi, t0, rise)
    fit = fit_self_heat_rate(temp, rate, t0, float(temp.max()))
    assert fit.linear_fails
