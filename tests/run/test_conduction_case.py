"""Unstirred contents through the transient conduction solution (run.conduction_case), against outside references.

- The hot-filled bag of the issue, with the body built by hand from the issue's numbers (a sphere of 1 m^3, 480
  kg/m^3, 1.6 kJ/(kg K), 0.09 W/(m K), h = 6 W/(m^2 K), zero order 0.17 W/kg at 80 degC, E = 100 kJ/mol,
  2000 kJ/kg, from 75 degC in a 25 degC store): the result's limit time is the core solver's (the batched
  integrator of core.transient_conduction_batch, one case a group of one), within 1e-4 of scipy's BDF method of
  lines (core.transient_conduction), and about 50 h. The core solvers themselves are checked against the series
  solutions, the steady Frank-Kamenetskii solution and the critical delta in tests/core.
- Uniform sources per unit mass: an insulated unstirred body with a constant source heats uniformly at
  P / (m c_p) (energy balance, by hand), so its limit time is m c_p dT / P.
- Heat brought at the surface per unit mass: the mass per unit surface of a slab, cylinder and sphere is
  rho R / (j + 1) (geometry, by hand).
"""
from __future__ import annotations

import copy
import math

import numpy as np
import pytest
import yaml

from screening.case.files import load_case_bytes
from screening.case.prepare import prepare_case
from screening.case.schema import CaseError
from dataclasses import replace

from screening.core.model import ArrheniusSource, FireExposure, Limit, ScreeningModel
from screening.core.transient_conduction import (
    DEFAULT_CELLS,
    ConductionBody,
    hot_spot_history,
    hot_spot_with_mesh_check,
)
from screening.core.transient_conduction_batch import hot_spot_histories, hot_spot_histories_with_mesh_check
from screening.run.conduction_case import _rows, conduction_body
from screening.run.monte_carlo import unstirred_sample_times
from screening.run.screen_case import screen_prepared
from screening.verdict.rule_file import apply_rules

BAG = {
    "id": "BAG", "scenario": "storage",
    "vessel": {"shape": "sphere", "diameter": "1.241 m"},
    "contents": {"fill": "100 %", "density": "480 kg/m^3", "specific_heat": "1.6 kJ/(kg*K)",
                 "initial_temperature": "75 degC", "mixing": "unstirred", "thermal_conductivity": "0.09 W/(m*K)"},
    "heat_loss": {"ambient_temperature": "25 degC", "coefficient": "6 W/(m^2*K)", "area": "total"},
    "heat_sources": [{"kind": "arrhenius", "role": "decomposition", "specific_power": "0.17 W/kg",
                      "reference_temperature": "80 degC", "activation_energy": "100 kJ/mol", "order": 0,
                      "specific_heat_of_reaction": "2000 kJ/kg", "gas_generating": False}],
    "limits": [{"name": "runaway", "temperature": "120 degC"}],
    "horizon": "7 d",
}


def prepared_of(data: dict):
    return prepare_case(load_case_bytes(yaml.safe_dump(data).encode(), "yaml").spec)


def screen(data: dict, rules: bool = True) -> dict:
    result = screen_prepared(prepared_of(data))
    if rules:
        apply_rules(result, None)
    return result


def hand_built_bag() -> ConductionBody:
    source = ArrheniusSource(0.17, 353.15, 100e3, 0.0, 2000e3, 1.0)
    return ConductionBody("sphere", 1.241 / 2, 480.0, 1600.0, 0.09, 6.0, 298.15, 348.15, (source,))


def test_the_hot_filled_bag_reports_its_centre_runaway_time_and_fails():
    r = screen(BAG)
    (fine, change), = hot_spot_histories_with_mesh_check([hand_built_bag()], [393.15], 7 * 86400.0)
    (lim,) = r["limits"]
    assert lim["time_s"] == pytest.approx(fine.limit_times[0], rel=1e-9)  # the body the builder makes is the issue's
    scipy_fine, _ = hot_spot_with_mesh_check(hand_built_bag(), [393.15], 7 * 86400.0)  # scipy BDF (reference library)
    assert lim["time_s"] == pytest.approx(scipy_fine.limit_times[0], rel=1e-4)
    assert lim["time_s"] / 3600 == pytest.approx(50.0, rel=0.03)  # the issue: the centre at 120 degC after ~50 h
    assert r["conduction"]["mesh_relative_change"] == pytest.approx(change, rel=1e-9)
    assert r["conduction"]["geometry"] == "sphere" and r["conduction"]["half_thickness_m"] == pytest.approx(0.6205)
    assert r["conduction"]["biot_number"] == pytest.approx(6.0 * 0.6205 / 0.09)
    assert r["conduction"]["centre_temperature_at_horizon_K"] is None and r["conduction"]["runs_away"] is True
    # the lumped result, kept for comparison, cools to the store (the complaint) and reaches nothing
    assert r["lumped"]["limits"][0]["time_s"] is None
    assert r["lumped"]["steady_temperature_K"] == pytest.approx(298.15, abs=0.1)
    assert r["steady_temperature_K"] is None
    assert r["peak_temperature_K"] >= 393.15  # the hot spot's peak, not the lumped one
    assert r["verdict"] == "fail"
    assert not any("settles at" in w for w in r["warnings"])


def test_unstirred_limit_times_equal_the_core_solvers_directly():
    # FW-S17-like drums with a hot start and a low limit: the limit is reached; the result's times are the core
    # solver's on the finer mesh of the check (2 x DEFAULT_CELLS)
    data = copy.deepcopy(BAG)
    data.update(vessel={"shape": "vertical-cylinder", "diameter": "0.57 m", "length": "0.85 m", "heads": "flat"},
                limits=[{"name": "warm", "temperature": "60 degC"}, {"name": "hot", "temperature": "90 degC"}],
                horizon="10 d")
    data["contents"].update(initial_temperature="70 degC", thermal_conductivity="0.12 W/(m*K)",
                            density="650 kg/m^3", fill="90 %")
    prepared = prepared_of(data)
    r = screen_prepared(prepared)
    body = conduction_body(prepared.model)
    direct, = hot_spot_histories([body], [333.15, 363.15], 10 * 86400.0, cells=2 * DEFAULT_CELLS)
    assert direct.limit_times[1] is not None or r["limits"][1]["time_s"] is None
    for row, t in zip(r["limits"], direct.limit_times):
        assert (row["time_s"] is None and t is None) or row["time_s"] == pytest.approx(t, rel=1e-9, abs=1e-9)
    assert r["limits"][0]["time_s"] == 0.0  # 70 degC start: the 60 degC limit is reached at once
    assert body.geometry == "cylinder" and body.half_thickness == pytest.approx(0.285)
    assert r["conduction"]["geometry_approximated"] is True
    assert "infinitely long" in r["conduction"]["geometry_approximation"]


def test_constant_sources_are_uniform_per_unit_mass():
    # An insulated (UA = 0) unstirred body with a 48 W constant source in 480 kg at 1.6 kJ/(kg K) heats
    # uniformly at 48 / (480 * 1600) K/s, so it gains 10 K in 480 * 1600 * 10 / 48 = 160000 s (by hand).
    data = copy.deepcopy(BAG)
    data.update(heat_sources=[{"kind": "constant", "power": "48 W"}], limits=[{"name": "+10 K", "temperature": "85 degC"}],
                heat_loss={"ambient_temperature": "25 degC", "ua": "0 W/K"}, horizon="3 d", scenario="heat-up")
    prepared = prepared_of(data)
    body = conduction_body(prepared.model)
    assert body.surface_coefficient == 0.0
    assert body.uniform_power == pytest.approx(48.0 / prepared.model.contents_mass, rel=1e-12)
    r = screen_prepared(prepared)
    mass = prepared.model.contents_mass
    assert r["limits"][0]["time_s"] == pytest.approx(mass * 1600.0 * 10.0 / 48.0, rel=1e-5)


@pytest.mark.parametrize("shape, j", [("sphere", 2), ("box", 0), ("horizontal-cylinder", 1)])
def test_fire_and_media_enter_at_the_surface_per_unit_mass(shape, j):
    # mass per unit surface of the body: rho R / (j + 1) (geometry, by hand); a fire of Q W over m kg gives a
    # flux Q / m * rho R / (j + 1), a medium of ua W/K a conductance ua / m * rho R / (j + 1) per m^2
    vessel = {"sphere": {"shape": "sphere", "diameter": "1.2 m"},
              "box": {"shape": "box", "length": "2 m", "width": "1.5 m", "height": "0.8 m"},
              "horizontal-cylinder": {"shape": "horizontal-cylinder", "diameter": "1 m", "length": "3 m"}}[shape]
    data = copy.deepcopy(BAG)
    data.update(vessel=vessel, heat_sources=[{"kind": "heating-medium", "medium_temperature": "150 degC",
                                              "ua": "20 W/K"}], scenario="heat-up")
    model = prepared_of(data).model
    body = conduction_body(model)
    per_area = 480.0 * body.half_thickness / (j + 1)
    assert body.medium_coefficient == pytest.approx(20.0 / model.contents_mass * per_area, rel=1e-12)
    assert body.medium_temperature == pytest.approx(423.15)
    assert body.surface_coefficient == pytest.approx(6.0)
    fire = ScreeningModel(model.contents_mass, 1600.0, 0.0, 0.0, 298.15, 298.15, 3600.0,
                          fire_sources=(FireExposure(1.0e5, 5.0, 1.0, True),), mixing="unstirred", thermal_conductivity=0.09,
                          conduction_geometry=body.geometry, conduction_radius=body.half_thickness, density=480.0,
                          surface_coefficient=6.0)
    fbody = conduction_body(fire)
    assert fbody.surface_flux == pytest.approx(1.0e5 / model.contents_mass * per_area, rel=1e-12)
    assert fbody.surface_coefficient == 0.0  # UA = 0 with a fire: no loss credited (net heat input)


def test_sources_and_start_can_be_chosen_for_other_callers():
    # e.g. a self-accelerating temperature search: the temperature-dependent sources alone, from the ambient
    data = copy.deepcopy(BAG)
    data["heat_sources"].append({"kind": "constant", "power": "48 W"})
    model = prepared_of(data).model
    body = conduction_body(model, initial_temperature=model.ambient_temperature, other_heat=False)
    assert body.initial_temperature == 298.15 and body.uniform_power == 0.0 and len(body.sources) == 1
    assert conduction_body(model, sources=()).sources == ()


@pytest.mark.parametrize("drop, field", [("thermal_conductivity", "contents.thermal_conductivity"),
                                         ("density", "contents.density"), ("vessel", "vessel.shape")])
def test_unstirred_without_what_conduction_needs_is_an_error_naming_the_field(drop, field):
    data = copy.deepcopy(BAG)
    if drop == "vessel":
        del data["vessel"]
        data["heat_loss"] = {"ambient_temperature": "25 degC", "ua": "29 W/K"}
        data["contents"]["mass"] = "480 kg"
        del data["contents"]["fill"]
    elif drop == "density":
        data["contents"]["mass"] = "480 kg"
        del data["contents"]["fill"]
        del data["contents"]["density"]
    else:
        del data["contents"][drop]
    with pytest.raises(CaseError) as exc:
        prepared_of(data)
    fields = [p.field for p in exc.value.problems]
    assert field in fields
    message = next(p.message for p in exc.value.problems if p.field == field)
    assert "add " + field in message and "transient conduction" in message


def test_cli_error_exit_2_for_unstirred_without_conductivity(run_cli, tmp_path):
    data = copy.deepcopy(BAG)
    del data["contents"]["thermal_conductivity"]
    path = tmp_path / "case.yaml"
    path.write_text(yaml.safe_dump(data), encoding="utf-8")
    proc = run_cli("check", path)
    assert proc.returncode == 2 and "Traceback" not in proc.stderr
    assert "contents.thermal_conductivity" in proc.stderr


def test_a_mesh_change_above_the_tolerance_is_said_next_to_the_time():
    model = ScreeningModel(1.0, 1.0, 0.0, 0.0, 300.0, 300.0, 10.0, limits=(Limit("L", 350.0),))
    hist = type("H", (), {"limit_times": [5.0]})()
    rows, warnings = _rows(model, hist, 0.004, "K")
    assert "0.4 %" in rows[0]["time_note"] and "ill-conditioned" in rows[0]["time_note"]
    assert warnings and "reached by the hot spot after" in warnings[0]
    rows, warnings = _rows(model, hist, 0.0004, "K")
    assert "time_note" not in rows[0] and not warnings


def test_the_biot_rule_gives_way_to_notes_on_conduction_results():
    r = screen(dict(BAG, vessel={"shape": "vertical-cylinder", "diameter": "1 m", "length": "1.3 m"}))
    text = " | ".join(r["reasons"])
    assert "hot spot can be hotter" not in text  # the lumped-validity reason would be false here
    assert "treated as infinitely long" in text and "conservative" in text


def test_an_unstirred_liquid_says_conduction_is_very_conservative_and_reports_the_hot_spot_boiling_time():
    data = copy.deepcopy(BAG)
    data["contents"].update(boiling_point="110 degC", latent_heat="800 kJ/kg")
    r = screen(data)
    assert any("natural convection" in w and "very conservative" in w for w in r["warnings"])
    assert any("natural convection" in x for x in r["reasons"])
    (fine, _), = hot_spot_histories_with_mesh_check([hand_built_bag()], [393.15, 383.15], 7 * 86400.0)
    assert r["boiling"]["time_to_boil_s"] == pytest.approx(fine.limit_times[1], rel=1e-9)
    assert r["boiling"]["boiled_off_kg"] is None
    assert any("Boiling is not modelled in the conduction solution" in a for a in r["assumptions"])


def test_an_alarm_sounds_when_the_surface_reaches_it():
    data = copy.deepcopy(BAG)
    data["detection"] = {"alarm_temperature": "40 degC"}
    data["heat_loss"]["ambient_temperature"] = "45 degC"
    data["contents"]["initial_temperature"] = "30 degC"
    prepared = prepared_of(data)
    r = screen_prepared(prepared)
    h, = hot_spot_histories([conduction_body(prepared.model)], [], 7 * 86400.0, cells=2 * DEFAULT_CELLS,
                            surface_limits=[313.15])
    scipy_h = hot_spot_history(conduction_body(prepared.model), [], 7 * 86400.0, cells=2 * DEFAULT_CELLS,
                               surface_limits=[313.15])  # scipy BDF (reference library)
    assert r["detection_time_s"] == pytest.approx(scipy_h.surface_limit_times[0], rel=1e-4)
    assert r["detection_basis"] == "alarm"
    assert r["detection_time_s"] == pytest.approx(h.surface_limit_times[0], rel=1e-9)


def test_monte_carlo_samples_of_unstirred_contents_are_the_core_solvers():
    data = copy.deepcopy(BAG)
    data["uncertainty"] = {"samples": 12, "seed": 4, "inputs": {
        "contents.thermal_conductivity": {"distribution": "uniform", "low": "0.08 W/(m*K)", "high": "0.1 W/(m*K)"}}}
    prepared = prepared_of(data)
    values = np.array([[0.08], [0.09], [0.1]])
    times = unstirred_sample_times(prepared, prepared.uncertainty_plan, values).limit_times[:, 0]
    for k, t in zip(values[:, 0], times):
        direct, = hot_spot_histories([replace(hand_built_bag(), conductivity=float(k))], [393.15], 7 * 86400.0)
        if direct.limit_times[0] is None:
            assert not np.isfinite(t)
        else:
            assert t == pytest.approx(direct.limit_times[0], rel=1e-9)
    r = screen_prepared(prepared)
    u = r["uncertainty"]
    assert "transient conduction" in u["method"] and u["accepted"] == 12
    assert 0.0 <= u["limits"][0]["probability_within_horizon"] <= 1.0


def test_an_autocatalytic_source_in_unstirred_contents_is_refused_not_understated():
    # the conduction core takes the n-th order form only; an autocatalytic rate (its rise with conversion,
    # Sestak and Berggren 1971) would be understated, so the case is refused naming the source
    data = copy.deepcopy(BAG)
    data["heat_sources"] = [{"kind": "autocatalytic", "rate_constant": "1e-6 1/s", "reference_temperature": "60 degC",
                             "activation_energy": "120 kJ/mol", "order": 1, "autocatalytic_order": 1,
                             "initiation": 0.01, "specific_heat_of_reaction": "500 kJ/kg", "gas_generating": False}]
    with pytest.raises(CaseError) as exc:
        prepared_of(data)
    assert [p.field for p in exc.value.problems] == ["heat_sources.0.kind"]


def test_a_case_in_a_batch_of_cases_has_the_solution_it_has_alone():
    # a register chunk integrates its unstirred rows together: each row's solution must be the one its case
    # gets alone (to the last bit), whatever the other rows
    from screening.run.conduction_case import conduction_solutions

    cases = []
    for k, t0, amb in (("0.09", "75 degC", "25 degC"), ("0.2", "60 degC", "40 degC"), ("0.12", "30 degC", "38 degC")):
        data = copy.deepcopy(BAG)
        data["contents"].update(thermal_conductivity=f"{k} W/(m*K)", initial_temperature=t0)
        data["heat_loss"]["ambient_temperature"] = amb
        cases.append(prepared_of(data))
    together = conduction_solutions(cases)
    for p, sol in zip(cases, together):
        alone, = conduction_solutions([p])
        assert sol.history.limit_times == alone.history.limit_times and sol.mesh_change == alone.mesh_change
        assert np.array_equal(sol.history.hot_spot, alone.history.hot_spot)
