"""End-to-end checks of cases with Arrhenius sources through the case-file path.

Reference values come from independent calculations written out here: quadrature
of dt/dT (scipy.integrate.quad), the Townsend-Tou formula, and Semenov's tangency.
"""
from __future__ import annotations

import json
import math
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest
from scipy.integrate import quad

from screening.case.files import load_case_bytes
from screening.case.prepare import prepare_case
from screening.result import public_result
from screening.run.screen_case import screen_prepared

R = 8.314462618  # J/(mol K), CODATA 2018
ROOT = Path(__file__).resolve().parents[2]


def screen_text(text: str) -> dict:
    loaded = load_case_bytes(text.encode(), "yaml")
    return screen_prepared(prepare_case(loaded.spec), loaded.input_hash)


BASE = """
id: RX-1
contents: {{mass: 1000 kg, specific_heat: 2 kJ/(kg*K), initial_temperature: {t0}}}
heat_loss: {{ambient_temperature: {ta}, ua: {ua}}}
heat_sources:
  - kind: arrhenius
    specific_power: {q} W/kg
    reference_temperature: 60 degC
    activation_energy: {e} kJ/mol
limits:
  - {{name: onset, temperature: {lim}}}
horizon: {h}
"""


def q_of(T, q0=2.0, Tref=333.15, E=95e3):
    return q0 * math.exp(-E / R * (1 / T - 1 / Tref))


def test_adiabatic_zero_order_time_matches_quadrature():
    text = BASE.format(t0="60 degC", ta="60 degC", ua="0 W/K", q=2, e=95, lim="120 degC", h="1000 h")
    r = screen_text(text)
    # t = integral C / (m q(T)) dT from T0 to the limit (exact for zero order, adiabatic)
    exact, _ = quad(lambda T: 2000.0 / q_of(T), 333.15, 393.15, epsabs=0, epsrel=1e-12)
    assert r["limits"][0]["time_s"] == pytest.approx(exact, rel=1e-6)
    # Townsend-Tou: TMRad = cp R T0^2 / (q0 E)
    assert r["tmr_adiabatic_s"] == pytest.approx(2000.0 * R * 333.15 ** 2 / (2.0 * 95e3), rel=1e-9)
    assert r["critical_ambient_temperature_K"] is None  # adiabatic: no steady state at any ambient


def test_with_heat_loss_matches_quadrature_and_semenov_tangency():
    ua = 40.0
    text = BASE.format(t0="70 degC", ta="40 degC", ua=f"{ua} W/K", q=2, e=95, lim="110 degC", h="2000 h")
    r = screen_text(text)
    m, cp, Ta = 1000.0, 2000.0, 313.15

    def net(T):
        return m * q_of(T) - ua * (T - Ta)

    assert net(343.15) > 0  # generation exceeds loss from the start to the limit
    exact, _ = quad(lambda T: m * cp / net(T), 343.15, 383.15, epsabs=0, epsrel=1e-12, limit=200)
    assert r["limits"][0]["time_s"] == pytest.approx(exact, rel=1e-6)
    # Semenov tangency (Semenov 1928): m q(Tc) E / (R Tc^2) = UA and Ta,c = Tc - m q(Tc) / UA
    Tc = r["critical_temperature_K"]
    assert m * q_of(Tc) * 95e3 / (R * Tc ** 2) == pytest.approx(ua, rel=1e-8)
    assert r["critical_ambient_temperature_K"] == pytest.approx(Tc - m * q_of(Tc) / ua, rel=1e-10)
    assert r["critical_ambient_method"] == "semenov"
    assert r["critical_temperature_K"] - r["critical_ambient_temperature_K"] == pytest.approx(R * Tc ** 2 / 95e3, rel=1e-9)


def test_runaway_keys_present_and_null_for_closed_form():
    closed = screen_text("""
id: CF
contents: {mass: 1000 kg, specific_heat: 2 kJ/(kg*K), initial_temperature: 20 degC}
heat_loss: {ambient_temperature: 20 degC, ua: 10 W/K}
heat_sources: [{kind: constant, power: 1 kW}]
limits: [{name: a, temperature: 50 degC}]
""")
    for key in ("tmr_adiabatic_s", "tmr_at_mtsr_s", "t_d24_K", "critical_ambient_temperature_K",
                "critical_temperature_K", "no_return_temperature_K", "adiabatic_temperature_rise_K", "mtsr_K",
                "criticality_class"):
        assert closed[key] is None, key
    assert closed["boiling"] is None


def test_cautions_in_output_and_safety_document():
    text = BASE.format(t0="60 degC", ta="30 degC", ua="20 W/K", q=2, e=95, lim="200 degC", h="100 h")
    r = screen_text(text)
    joined = " ".join(r["warnings"]).lower()
    assert "zero conversion" in joined and "autocatalytic" in joined
    assert "extrapolated" in joined and "not conservative" in joined
    safety = (ROOT / "SAFETY.md").read_text(encoding="utf-8").lower()
    assert "zero conversion" in safety and "autocatalytic" in safety
    assert "extrapolated" in safety and "not conservative" in safety


def test_no_return_start_is_reported():
    # ambient far below critical, but the contents start above the upper steady state
    text = BASE.format(t0="150 degC", ta="20 degC", ua="50 W/K", q=2, e=95, lim="250 degC", h="100 h")
    r = screen_text(text)
    assert r["no_return_temperature_K"] is not None
    assert r["initial_temperature_K"] > r["no_return_temperature_K"]
    assert r["ambient_temperature_K"] < r["critical_ambient_temperature_K"]
    assert any("no-return" in w for w in r["warnings"])
    from screening.verdict.rule_file import apply_rules

    apply_rules(r, None)
    assert r["verdict"] == "fail"
    assert any("no-return" in reason for reason in r["reasons"])


def test_stiff_cases_finish_quickly_without_numpy_warnings():
    cases = [
        BASE.format(t0="150 degC", ta="150 degC", ua="0 W/K", q=2, e=95, lim="400 degC", h="10 h"),  # seconds
        BASE.format(t0="20 degC", ta="20 degC", ua="100 W/K", q=2, e=95, lim="100 degC", h="1000 h"),  # never
    ]
    with np.errstate(all="raise", under="ignore"):
        for text in cases:
            t0 = time.perf_counter()
            r = screen_text(text)
            assert time.perf_counter() - t0 < 10
            json.dumps(public_result(r), allow_nan=False)
    fast = screen_text(cases[0])
    assert fast["limits"][0]["time_s"] < 60  # runs away within a minute
    slow = screen_text(cases[1])
    assert slow["limits"][0]["time_s"] is None


def test_boiling_open_vessel_energy_closes_with_iapws_water():
    iapws = pytest.importorskip("iapws")
    sat_l = iapws.IAPWS97(P=0.101325, x=0)
    sat_v = iapws.IAPWS97(P=0.101325, x=1)
    Tb = sat_l.T  # 373.124 K, IAPWS-IF97 (reference library)
    latent = (sat_v.h - sat_l.h) * 1e3  # J/kg, about 2256.5 kJ/kg
    text = f"""
id: W-1
vessel: {{shape: vertical-cylinder, diameter: 1 m, length: 1 m, venting: open}}
contents: {{mass: 500 kg, specific_heat: 4.181 kJ/(kg*K), initial_temperature: 25 degC,
           boiling_point: {Tb} K, latent_heat: {latent} J/kg}}
heat_loss: {{ambient_temperature: 25 degC, ua: 20 W/K}}
heat_sources: [{{kind: constant, power: 60 kW}}]
limits: [{{name: boil, temperature: {Tb - 1e-6} K}}]
horizon: 10 h
"""
    r = screen_text(text)
    b = r["boiling"]
    m, cp, Ta, ua, P = 500.0, 4181.0, 298.15, 20.0, 60e3
    # time to boil: closed form of C dT/dt = P - UA (T - Ta)
    tau = m * cp / ua
    t_boil = -tau * math.log(1 - (Tb - Ta) * ua / P)
    assert b["time_to_boil_s"] == pytest.approx(t_boil, rel=1e-6)
    assert b["peak_boil_off_kg_per_s"] == pytest.approx((P - ua * (Tb - Ta)) / latent, rel=1e-9)
    t_dry = t_boil + m * latent / (P - ua * (Tb - Ta))
    assert b["time_to_dry_s"] == pytest.approx(t_dry, rel=1e-6)
    # energy balance: generation = sensible + losses + latent
    gen = P * t_dry
    sensible = m * cp * (Tb - Ta)
    # losses during heat-up: integral UA (T - Ta) dt = P t_boil - C (Tb - Ta)
    loss_heat_up = P * t_boil - sensible
    loss_boiling = ua * (Tb - Ta) * (t_dry - t_boil)
    assert gen == pytest.approx(sensible + loss_heat_up + loss_boiling + m * latent, rel=1e-12)
    assert b["boiled_off_kg"] == pytest.approx(m, rel=1e-6)


def test_check_runaway_wall_time_cli():
    case = ROOT / "screening" / "demo_cases" / "fw-r301-reactor.yaml"
    t0 = time.perf_counter()
    proc = subprocess.run([sys.executable, "-m", "screening.cli", "check", str(case), "--json"],
                          capture_output=True, text=True, cwd=ROOT, timeout=120)
    elapsed = time.perf_counter() - t0
    assert proc.returncode in (0, 1), proc.stderr
    data = json.loads(proc.stdout)
    for key in ("tmr_adiabatic_s", "tmr_at_mtsr_s", "t_d24_K", "critical_ambient_temperature_K",
                "critical_ambient_method", "critical_temperature_K", "no_return_temperature_K",
                "steady_temperature_K", "adiabatic_temperature_rise_K", "mtsr_K", "criticality_class", "boiling"):
        assert key in data
    print(f"runaway check wall time {elapsed:.2f} s")
