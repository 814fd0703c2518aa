"""The sun and the daily cycle through a whole screening: hand calculations of the sol-air rise, the worst start,
the criteria ambient, the Arrhenius integrator with the forcing, and the schema's messages."""
from __future__ import annotations

import math

import numpy as np
import pytest

from screening.case.files import load_case_bytes
from screening.case.prepare import prepare_case
from screening.case.schema import CaseError, validate_case_data
from screening.run.screen_case import screen_prepared

H = 3600.0
DAY = 86400.0

DRUM = """
id: T-DRUM
vessel: {shape: vertical-cylinder, diameter: 0.57 m, length: 0.85 m}
contents: {fill: 90 %%, density: 820 kg/m^3, specific_heat: 2.0 kJ/(kg*K), initial_temperature: 28 degC}
heat_loss: {ambient_temperature: 28 degC, coefficient: 10 W/(m^2*K), area: total%(range)s}
%(sun)s
limits: [{name: hot, temperature: 60 degC}]
horizon: %(horizon)s
"""
SUN = "sun: {peak_irradiance: 850 W/m^2, absorptivity: 0.7, exposed_area: projected, day_length: 15 h}"


def screen(text: str) -> dict:
    loaded = load_case_bytes(text.encode(), "yaml")
    return screen_prepared(prepare_case(loaded.spec), loaded.input_hash)


def drum(sun=True, daily_range=None, horizon="10 d", start=None) -> str:
    text = DRUM % {"range": f", daily_range: {daily_range}" if daily_range else "", "sun": SUN if sun else "",
                   "horizon": horizon}
    return text + (f"start_time_of_day: {start}\n" if start else "")


def test_bare_drum_sol_air_rise_by_hand():
    # By hand (ASHRAE sol-air temperature, from memory): T_sa - T_air = alpha G / h_o = 0.7 x 850 / 15 = 39.667 K at
    # noon; the drum's UA = 10 W/(m^2 K) x A, A = pi D L + 2 pi D^2 / 4 = 1.522101 + 0.510352 = 2.032453 m^2
    # (flat heads); exposed area (largest projection, elevations 30-90 degrees): a = pi D^2 / 4 = 0.255176,
    # b = D L = 0.4845, tan x = a / b = 0.5267 < tan 30, so at 30 degrees: a / 2 + b cos 30 = 0.547177 m^2;
    # exposed share 0.547177 / 2.032453 = 0.269220; the effective ambient rises by 0.269220 x 39.667 = 10.679 K at
    # noon, i.e. UA_exposed alpha G / h_o = alpha G A_exposed x (U / h_o) = 325.57 x 10 / 15 = 217.05 W.
    r = screen(drum())
    sun = r["daily_cycle"]["sun"]
    assert sun["exposed_area_m2"] == pytest.approx(0.547177, abs=1e-6)
    assert sun["exposed_share"] == pytest.approx(0.547177 / 2.032453, rel=1e-5)
    assert sun["sol_air_rise_K"] == pytest.approx(10.679, abs=1e-3)
    assert r["ua_W_per_K"] * sun["sol_air_rise_K"] == pytest.approx(217.05, rel=1e-4)
    # Over a day the half sine averages 2 D / (pi x 24 h) = 30 / (24 pi) = 0.397887 of its peak, so in the periodic
    # state the drum's daily mean sits 10.679 x 0.397887 = 4.2490 K above the air's mean (by hand: a linear lumped
    # body's daily mean follows the daily mean of its effective ambient). With the range 0 and T0 at the mean, after
    # 10 days (55 time constants) the history's last day averages that (trapezoid on the history arrays).
    hist = r["_history"]
    t, T = np.array(hist["time_s"]), np.array(hist["temperature_K"])
    from screening.core.closed_form_history import balance_of, temperature
    prep = prepare_case(load_case_bytes(drum().encode(), "yaml").spec)
    from screening.run.daily_cycle import with_start
    model = with_start(prep, r["daily_cycle"]["start_time_of_day_s"]).model
    last = np.linspace(9 * DAY, 10 * DAY, 86401)
    mean = np.trapezoid(temperature(balance_of(model), last), last) / DAY
    assert mean - 301.15 == pytest.approx(10.679 * 30.0 / (24.0 * math.pi), abs=2e-3)
    assert r["steady_temperature_K"] - 301.15 == pytest.approx(10.679 * 30.0 / (24.0 * math.pi), abs=1e-3)
    assert T.max() == pytest.approx(r["peak_temperature_K"], abs=1e-9)


def test_drum_in_the_sun_peaks_higher_than_in_air_alone():
    # the same drum, the same air (14 K range): the sun raises its peak by a good share of the 10.68 K sol-air rise
    # (between the daily-mean rise 4.25 K and the full 10.68 K, by hand from the numbers above)
    in_sun = screen(drum(sun=True, daily_range="14 K", horizon="3 d"))
    shaded = screen(drum(sun=False, daily_range="14 K", horizon="3 d"))
    rise = in_sun["peak_temperature_K"] - shaded["peak_temperature_K"]
    assert 4.25 < rise < 10.68
    assert in_sun["criteria_ambient_K"] > shaded["criteria_ambient_K"] > 301.15 + 7.0 - 1e-6
    assert shaded["criteria_ambient_K"] == pytest.approx(301.15 + 7.0, abs=1e-6)  # mean + range / 2, by hand


def test_insulated_tank_small_rise_by_hand():
    # A 3 m x 4 m tank of water, insulated (U = 0.4 W/(m^2 K) on the whole area), T0 = daily mean, no range: the sun
    # brings in U A_exposed alpha G / h_o at noon. By hand: A = pi 3 x 4 + 2 pi 9 / 4 = 51.836279 m^2; exposed
    # (vertical cylinder, a = pi 9 / 4 = 7.068583, b = 12, tan x = 0.589 > tan 30 = 0.577, so the maximum
    # sqrt(a^2 + b^2) = 13.927127 m^2); peak gain 0.4 x 13.927127 x 0.7 x 850 / 15 = 220.97 W; the daily average
    # 2 x 14 h / (24 h pi) = 0.371362 of that, 82.06 W; over 3 days 82.06 x 259200 = 2.127e7 J into
    # C = 28.274 m^3 x 997 kg/m^3 x 4181 J/(kg K) = 1.17859e8 J/K: 0.1805 K. The time constant C / UA = 66 days, so
    # the loss back to the air over 3 days is a few per cent of that (hence the 5 % tolerance).
    text = """
id: T-TANK
vessel: {shape: vertical-cylinder, diameter: 3 m, length: 4 m}
contents: {fill: 100 %, density: 997 kg/m^3, specific_heat: 4.181 kJ/(kg*K), initial_temperature: 28 degC}
heat_loss: {ambient_temperature: 28 degC, coefficient: 0.4 W/(m^2*K), area: total}
sun: {peak_irradiance: 850 W/m^2, absorptivity: 0.7, exposed_area: projected, day_length: 14 h}
start_time_of_day: 0 h
limits: [{name: warm, temperature: 40 degC}]
horizon: 3 d
"""
    r = screen(text)
    assert r["daily_cycle"]["sun"]["exposed_area_m2"] == pytest.approx(13.927127, rel=1e-6)
    assert r["ua_W_per_K"] * r["daily_cycle"]["sun"]["sol_air_rise_K"] == pytest.approx(220.97, rel=1e-4)
    rise = r["peak_temperature_K"] - 301.15
    assert rise == pytest.approx(0.1805, rel=0.05)
    assert rise < 0.2  # a small rise, against 4-11 K for the bare drum
    # settled into the daily cycle (after months) it would sit near its daily mean: exposed share
    # 13.927127 / 51.836279 = 0.268675, solar rise 0.268675 x 39.667 = 10.6575 K, daily mean
    # 28 + 10.6575 x 28 / (24 pi) = 31.958 degC (by hand, as for the drum; it hardly swings with a 66-day time
    # constant): said as a warning
    assert r["steady_temperature_K"] - 301.15 == pytest.approx(10.6575 * 28.0 / (24.0 * math.pi), abs=1e-3)
    [climbing] = [w for w in r["warnings"] if w.startswith("The daily peaks are still climbing")]
    assert "32.0 °C" in climbing


def test_worst_start_against_brute_force():
    # The worst of the 24 hourly starts against scipy.integrate.solve_ivp (reference library) run from every hour:
    # the earliest crossing of the limit (event location), and the engine's time to the limit at that start.
    from scipy.integrate import solve_ivp

    text = drum(sun=True, daily_range="14 K", horizon="3 d").replace("temperature: 60 degC", "temperature: 38 degC")
    r = screen(text)
    prep = prepare_case(load_case_bytes(text.encode(), "yaml").spec)
    from screening.core.daily_cycle import effective_ambient

    model = prep.model
    C, UA, T0 = model.heat_capacity, model.ua, model.initial_temperature
    best = (math.inf, 99)
    for hour in range(24):
        cycle = model.daily_cycle.__class__(**{**model.daily_cycle.__dict__, "start_time": hour * H})

        def rhs(t, T, cycle=cycle):
            return [UA * (float(effective_ambient(model.ambient_temperature, cycle, t)) - T[0]) / C]

        def hit(t, T):
            return T[0] - 311.15
        hit.terminal, hit.direction = True, 1
        sol = solve_ivp(rhs, (0.0, 3 * DAY), [T0], method="DOP853", rtol=1e-12, atol=1e-10, max_step=600.0,
                        events=hit)
        t = sol.t_events[0][0] if sol.t_events[0].size else math.inf
        best = min(best, (t, hour))
    assert r["daily_cycle"]["start_time_of_day_s"] == best[1] * H
    assert r["daily_cycle"]["start_time_basis"] == "the worst of 24 hourly starts"
    assert abs(r["limits"][0]["time_s"] - best[0]) < 1e-5  # solve_ivp's event within its tolerance


def test_given_start_time_is_used_and_reported():
    r = screen(drum(sun=True, daily_range="14 K", horizon="2 d", start="6 h"))
    assert r["daily_cycle"]["start_time_of_day_s"] == 6 * H
    assert r["daily_cycle"]["start_time_basis"].startswith("given")


def test_arrhenius_with_cycle_against_solve_ivp():
    # a self-heating drum (zero order) in the sun: the stiff integrator with the forcing against a plain
    # solve_ivp (DOP853, rtol 1e-11) of C dT/dt = m q(T) + UA (T_eff(t) - T) (reference library)
    from scipy.integrate import solve_ivp

    from screening.core.daily_cycle import effective_ambient
    from screening.core.model import GAS_CONSTANT

    text = drum(sun=True, daily_range="14 K", horizon="4 d", start="3 h").replace(
        "limits:", "heat_sources: [{kind: arrhenius, specific_power: 1 W/kg, reference_temperature: 60 degC, "
                   "activation_energy: 100 kJ/mol, gas_generating: false}]\nscenario: heat-up\nlimits:").replace(
        "temperature: 60 degC}]", "temperature: 40 degC}]")
    r = screen(text)
    model = prepare_case(load_case_bytes(text.encode(), "yaml").spec).model
    C, UA, m = model.heat_capacity, model.ua, model.contents_mass
    src = model.arrhenius_sources[0]

    def rhs(t, T):
        q = src.specific_power * math.exp(-src.activation_energy / GAS_CONSTANT * (1 / T[0] - 1 / src.reference_temperature))
        return [(m * q + UA * (float(effective_ambient(model.ambient_temperature, model.daily_cycle, t)) - T[0])) / C]

    def hit(t, T):
        return T[0] - 313.15
    hit.terminal, hit.direction = True, 1
    sol = solve_ivp(rhs, (0.0, 4 * DAY), [model.initial_temperature], method="DOP853", rtol=1e-11, atol=1e-9,
                    max_step=600.0, events=hit)
    assert sol.t_events[0].size
    assert r["limits"][0]["time_s"] == pytest.approx(sol.t_events[0][0], abs=1.0)


def test_storage_criteria_use_the_daily_maximum():
    # Semenov storage of a decomposition in the sun: the margin is taken at the daily maximum of the effective
    # ambient, and the margin at the daily mean is given too (their difference is that maximum minus the mean)
    text = drum(sun=True, daily_range="14 K", horizon="3 d").replace(
        "limits:", "heat_sources: [{kind: arrhenius, specific_power: 0.002 W/kg, reference_temperature: 50 degC, "
                   "activation_energy: 120 kJ/mol}]\nscenario: storage\nlimits:")
    r = screen(text)
    assert r["criteria_ambient_K"] == pytest.approx(r["daily_cycle"]["effective_ambient_max_K"])
    assert r["criteria_ambient_basis"].startswith("daily maximum of the effective ambient")
    crit = r["critical_ambient_temperature_K"]
    assert r["critical_ambient_margin_K"] == pytest.approx(crit - r["criteria_ambient_K"])
    assert r["critical_ambient_margin_at_daily_mean_K"] == pytest.approx(crit - 301.15)
    assert r["storage_temperature_K"] >= r["criteria_ambient_K"]


@pytest.mark.parametrize("change, field", [
    ({"sun": {"peak_irradiance": "850 W/m^2", "absorptivity": 1.5, "exposed_area": "1 m^2", "day_length": "13 h"}},
     "sun.absorptivity"),
    ({"sun": {"peak_irradiance": "850 W/m^2", "absorptivity": 0.5, "exposed_area": "1 m^2"}}, "sun.day_length"),
    ({"sun": {"peak_irradiance": "850 W/m^2", "absorptivity": 0.5, "exposed_area": "1 m^2", "day_length": "25 h"}},
     "sun.day_length"),
    ({"sun": {"peak_irradiance": "850 W/m^2", "absorptivity": 0.5, "exposed_area": "projected", "day_length": "13 h"}},
     "sun.exposed_area"),
    ({"sun": {"peak_irradiance": "850 W/m^2", "absorptivity": 0.5, "exposed_area": "big", "day_length": "13 h"}},
     "sun.exposed_area"),
    ({"sun": {"peak_irradiance": "850 W", "absorptivity": 0.5, "exposed_area": "1 m^2", "day_length": "13 h"}},
     "sun.peak_irradiance"),
    ({"start_time_of_day": "6 h"}, "(case)"),
    ({"start_time_of_day": "24 h", "heat_loss": {"ambient_temperature": "28 degC", "ua": "20 W/K",
                                                 "daily_range": "10 K"}}, "start_time_of_day"),
    ({"heat_loss": {"ambient_temperature": "28 degC", "ua": "20 W/K", "warmest_time_of_day": "15 h"}}, "heat_loss"),
    ({"heat_loss": {"ambient_temperature": "28 degC", "ua": "20 W/K", "daily_range": "-3 K"}},
     "heat_loss.daily_range"),
])
def test_schema_errors_name_the_field(change, field):
    base = {"id": "x", "contents": {"mass": "200 kg", "specific_heat": "2 kJ/(kg*K)", "initial_temperature": "25 degC"},
            "heat_loss": {"ambient_temperature": "28 degC", "ua": "20 W/K"},
            "limits": [{"name": "a", "temperature": "50 degC"}]}
    with pytest.raises(CaseError) as exc:
        validate_case_data({**base, **change})
    assert any(p.field == field for p in exc.value.problems), exc.value.problems


def test_cli_exit_2_names_the_field(run_cli, tmp_path):
    case = tmp_path / "sunny.yaml"
    case.write_text(drum().replace("absorptivity: 0.7", "absorptivity: 7"), encoding="utf-8")
    out = run_cli("check", case)
    assert out.returncode == 2
    assert "sun.absorptivity" in out.stderr + out.stdout
    assert "Traceback" not in out.stderr


def test_json_keys_and_daily_mean_wording(run_cli):
    import json

    out = run_cli("check", "screening/demo_cases/fw-d52-drum-yard.yaml", "--json")
    r = json.loads(out.stdout)
    for key in ("criteria_ambient_K", "criteria_ambient_basis", "daily_cycle"):
        assert key in r
    text = run_cli("check", "screening/demo_cases/fw-d52-drum-yard.yaml").stdout
    assert "(daily mean)" in text and "sunlit side" in text


def test_margin_scan_keeps_absorptivity_and_times_of_day_possible(run_cli):
    # absorptivity is a fraction of the incident flux (at most 1) and a time of day lies in [0, 24 h): the
    # allowable-values scan stays within them (by definition)
    out = run_cli("margin", "screening/demo_cases/fw-d52-drum-yard.yaml", "--vary", "sun.absorptivity")
    assert out.returncode in (0, 1), out.stderr
    assert "scanned 0.14 to 1 1" in out.stdout
    out = run_cli("margin", "screening/demo_cases/fw-d52-drum-yard.yaml", "--vary", "heat_loss.warmest_time_of_day")
    assert out.returncode in (0, 1), out.stderr
    assert "to 24 h" in out.stdout or "to 86400" in out.stdout or "to 1440 min" in out.stdout, out.stdout


@pytest.mark.parametrize("rate", ["3e-6 1/s", "8e-6 1/s"])
def test_autocatalytic_source_in_the_sun_batch_equals_one_case_engine(rate):
    """Both switches of the batch integrator's early finish at once (an autocatalytic source and the daily cycle):
    its times and peak equal the one-case engine's (scipy solve_ivp with events, the reference), and the sun and
    the air's cycle are what bring the limit within the horizon."""
    import dataclasses

    import yaml

    from screening.core.arrhenius_history import integrate_history
    from screening.core.arrhenius_history_batch import first_crossing_times_arrhenius, samples_from_models

    case = {
        "id": "AC-SUN",
        "contents": {"mass": "400 kg", "specific_heat": "1.6 kJ/(kg*K)", "initial_temperature": "30 degC"},
        "heat_loss": {"ambient_temperature": "30 degC", "ua": "2 W/K", "daily_range": "14 K"},
        "sun": {"peak_irradiance": "850 W/m^2", "absorptivity": 0.7, "exposed_area": "1 m^2", "day_length": "13 h"},
        "start_time_of_day": "6 h",
        "heat_sources": [{"kind": "autocatalytic", "rate_constant": rate, "reference_temperature": "60 degC",
                          "activation_energy": "120 kJ/mol", "order": 1, "autocatalytic_order": 1,
                          "initiation": 0.02, "specific_heat_of_reaction": "500 kJ/kg", "initial_conversion": "1 %"}],
        "limits": [{"name": "a", "temperature": "43 degC"}, {"name": "b", "temperature": "80 degC"}],
        "horizon": "10 d",
    }
    model = prepare_case(load_case_bytes(yaml.safe_dump(case).encode(), "yaml").spec).model
    assert model.daily_cycle is not None and model.arrhenius_sources[0].autocatalytic
    one = integrate_history(model)
    params, limits, horizon = samples_from_models([model])
    assert params.forcing is not None and params.autocatalytic_order is not None
    batch = first_crossing_times_arrhenius(params, limits, horizon)
    t_one = one.limits[0].time
    assert t_one is not None and batch.times[0, 0] == pytest.approx(t_one, rel=1e-6)
    assert one.limits[1].time is None and math.isnan(batch.times[0, 1])
    assert batch.peak_temperature[0] == pytest.approx(one.peak_temperature, rel=1e-7)
    shade = integrate_history(dataclasses.replace(model, daily_cycle=None))
    assert shade.limits[0].time is None and shade.peak_temperature < one.peak_temperature
