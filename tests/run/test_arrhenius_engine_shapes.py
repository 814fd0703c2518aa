"""Stirred Arrhenius cases of further shapes on the vectorised engine (a daily cycle of the air and the sun; fire
exposure): every key of the result against the same case screened by the single-case integrator, and the engine's
numbers against scipy's ``solve_ivp`` of the same balance.

References: scipy.integrate.solve_ivp (Radau, rtol 1e-11; a general-purpose reference library) for the physics;
the single-case integrator (``core.arrhenius_history``, itself checked against quadrature and solve_ivp in
tests/core) for the texts, flags and every key. Tolerances are those of tests/run/test_arrhenius_engine_values.py
(numbers to 1e-6 relative). Invented cases (FW-... tags).
"""
from __future__ import annotations

import math
import re

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from screening.core.daily_cycle import cycle_forcing
from screening.core.model import GAS_CONSTANT
from screening.core.terms import conductance_and_drive, constant_power, model_start_temperature
from screening.result import public_result
from screening.run import runaway_case
from screening.run.daily_cycle import choose_start
from screening.run.runaway_case import arrhenius_values, engine_eligible
from screening.run.screen_case import screen_prepared

from test_arrhenius_engine_values import compare, prepared_of, random_case


def with_cycle(rng, data):
    data["heat_loss"]["daily_range"] = f"{rng.uniform(0, 16):.3g} K"
    data["heat_loss"]["warmest_time_of_day"] = f"{rng.uniform(13, 16):.3g} h"
    if rng.random() < 0.7:
        data["sun"] = {"peak_irradiance": f"{rng.uniform(500, 1000):.4g} W/m^2",
                       "absorptivity": f"{rng.uniform(0.2, 0.9):.2g}",
                       "exposed_area": f"{rng.uniform(0.3, 3):.3g} m^2", "day_length": f"{rng.uniform(9, 15):.3g} h"}
    if rng.random() < 0.4:
        data["start_time_of_day"] = f"{rng.uniform(0, 24):.3g} h"
    data["horizon"] = f"{rng.uniform(1, 12):.3g} d"
    return data


def with_fire(rng, data):
    data["heat_sources"].append({"kind": "fire", "wetted_area": f"{rng.uniform(0.5, 20):.3g} m^2",
                                 "environment_factor": f"{rng.choice([1.0, 0.3, 0.15]):g}",
                                 "drainage_and_firefighting": bool(rng.random() < 0.5)})
    data["horizon"] = f"{rng.uniform(0.5, 12):.3g} h"  # a fire is screened over hours
    data["limits"][1]["temperature"] = f"{rng.uniform(80, 400):.3g} degC"
    return data


def with_recovery(rng, data):
    data["scenario"] = "heat-up"  # (a storage case without detection is unmonitored: no recovery path)
    data["recovery"] = {"medium_temperature": f"{rng.uniform(5, 40):.3g} degC", "ua": f"{rng.uniform(20, 2000):.4g} W/K"}
    data["response_time"] = f"{rng.uniform(0.1, 48):.3g} h"
    if "detection" not in data and rng.random() < 0.5:
        data["detection"] = {"delay": f"{rng.uniform(0, 24):.3g} h"}
    return data


def with_boiling(rng, data):
    """Boiling data without tempering credit: a closed vessel, or an open one with a gas-generating decomposition
    (the schema's default for a decomposition)."""
    venting = str(rng.choice(["open", "closed"]))
    data["vessel"] = {"venting": venting}
    start = float(data["contents"]["initial_temperature"].split()[0])
    low = start + 1.0 if venting == "open" else start - 10.0  # a closed vessel may start superheated (warned)
    data["contents"].update(boiling_point=f"{rng.uniform(low, 160):.4g} degC",
                            latent_heat=f"{rng.uniform(200, 2300):.4g} kJ/kg")
    if venting == "closed" and rng.random() < 0.5:
        data["heat_sources"][0]["gas_generating"] = False
    if rng.random() < 0.5:
        with_recovery(rng, data)
    return data


SHAPES = {"cycle": with_cycle, "fire": with_fire, "recovery": with_recovery, "boiling": with_boiling}
SEEDS = {"cycle": 31, "fire": 47, "recovery": 59, "boiling": 61}
N_CASES = 6  # per shape (more were run while developing: see the commit message)


def reference(model, limits=(), span=None, y0=None, medium=None):
    """solve_ivp (Radau, rtol 1e-11) of C dT/dt = P + sum P_d e^(-t/a) - (G T - D) + F(t) + m sum q_j
    [+ ua_r (T_r - T)], dX_j/dt = q_j / dh_j, with F the daily cycle's forcing: a dense solution over ``span``
    (default the horizon) from ``y0`` (default the start), a maximum of T (event 0) and the first crossing of
    each limit temperature (events 1...) in ``t_events``; ``medium`` (T_r, ua_r) a recovery medium on."""
    C, m = model.heat_capacity, model.contents_mass
    G, D = conductance_and_drive(model.ua, model.ambient_temperature, 0.0, [h.ua for h in model.heating_media],
                                 [h.medium_temperature for h in model.heating_media])
    P = constant_power(model)
    forcing = cycle_forcing(model.daily_cycle, model.ua)
    sources = model.arrhenius_sources

    def rhs(t, y):
        dT = P - (G * y[0] - D) + (float(forcing.power(t)) if forcing is not None else 0.0)
        dT += sum(d.power * math.exp(-t / d.time_constant) for d in model.decaying_sources)
        if medium is not None:
            dT += medium[1] * (medium[0] - y[0])
        out = [0.0]
        for j, s in enumerate(sources):
            k = s.specific_power * math.exp(-s.activation_energy / GAS_CONSTANT
                                            * (1.0 / y[0] - 1.0 / s.reference_temperature))
            if s.specific_heat_of_reaction is None:
                q = k
                out.append(0.0)
            else:
                left = min(max(1.0 - y[1 + j], 0.0), 1.0)
                q = k * left ** s.order if left > 0 else 0.0
                out.append(q / s.specific_heat_of_reaction)
            dT += m * q
        out[0] = dT / C
        return out

    if y0 is None:
        y0 = [model_start_temperature(model)] + [1.0 - s.accumulated_fraction for s in sources]
    step = 600.0 if forcing is not None else np.inf  # the forcing's kinks at sunrise and sunset
    peak = (lambda t, y: rhs(t, y)[0])  # dT/dt falling through 0: a maximum
    peak.direction = -1.0
    events = [peak]
    for temperature in limits:
        event = (lambda t, y, L=temperature: y[0] - L)
        event.direction = 1.0
        events.append(event)
    return solve_ivp(rhs, span or (0.0, model.horizon), y0, method="Radau", rtol=1e-11, atol=1e-10,
                     dense_output=True, max_step=step, events=events)


def reference_peak(sol):
    """The highest of the start, the maxima (events) and the end of a :func:`reference` solution: (T, t)."""
    candidates = [(float(sol.y[0, 0]), float(sol.t[0])), (float(sol.y[0, -1]), float(sol.t[-1]))]
    candidates += [(float(y[0]), float(t)) for t, y in zip(sol.t_events[0], sol.y_events[0])]
    return max(candidates, key=lambda c: (c[0], -c[1]))


def single_case(monkeypatch, prepared):
    with monkeypatch.context() as mp:
        mp.setattr(runaway_case, "engine_eligible", lambda p: False)
        return public_result(screen_prepared(prepared, with_history=False))


def compare_with_flat_peaks(engine, single, temperature_at, recovery_temperature_at=None):
    """:func:`compare`, except the time of a maximum that recurs (daily peaks) or is flat, equal to within the
    engines' accuracy: there either time is right when solve_ivp's temperature at it is the peak to 1e-8
    relative (about 3e-6 K, the accuracy of the engines' temperatures). ``temperature_at(t)``: solve_ivp's
    temperature of the main history; ``recovery_temperature_at(t)``: of the recovery path."""
    engine = dict(engine)
    a, b = engine["peak_time_s"], single["peak_time_s"]
    if a != pytest.approx(b, rel=1e-4, abs=1e-9):
        for t in (a, b):
            assert temperature_at(t) == pytest.approx(engine["peak_temperature_K"], rel=1e-8), (a, b)
        engine["peak_time_s"] = b
        for key in ("runaway_summary",):  # the sentence that states the peak's time: the same but for it
            if isinstance(engine.get(key), str) and engine[key] != single[key]:
                assert _without_times(engine[key]) == _without_times(single[key]), key
                engine[key] = single[key]
    ra, rb = engine.get("recovery") or {}, single.get("recovery") or {}
    if ra.get("peak_temperature_K") is not None and rb.get("peak_temperature_K") is not None and \
            ra["peak_temperature_K"] != pytest.approx(rb["peak_temperature_K"], rel=1e-6):
        # the single-case path takes the state at the restart by linear interpolation of its sampled history
        # (samples up to horizon / 400 apart): it may be 1e-6 off where the engine's state is integrated; the
        # engine's was checked against solve_ivp to 1e-8 (check_recovery_against_reference), the single-case
        # path's is accepted to 1e-5
        reference_peak_T = recovery_temperature_at.peak
        assert reference_peak_T is not None
        assert ra["peak_temperature_K"] == pytest.approx(reference_peak_T, rel=1e-8)
        assert rb["peak_temperature_K"] == pytest.approx(reference_peak_T, rel=1e-5)
        ra = engine["recovery"] = dict(ra, peak_temperature_K=rb["peak_temperature_K"])
    if ra.get("peak_time_s") is not None and rb.get("peak_time_s") is not None:
        a, b = ra["peak_time_s"], rb["peak_time_s"]
        if a != pytest.approx(b, rel=1e-4, abs=1e-9):
            for t in (a, b):
                assert recovery_temperature_at(t) == pytest.approx(ra["peak_temperature_K"], rel=1e-8), (a, b)
            engine["recovery"] = dict(ra, peak_time_s=b)
    compare(engine, single)


def settled_at_ambient(prepared):
    """The reactions are spent and the contents have settled at the ambient to rounding by the horizon: whether
    they are "still rising" there is decided by rounding (the single-case integrator compares a net power of
    about 1e-12 W with 1e-12 of powers that are themselves about 0), and with it whether the summary calls the
    history a runaway. Such a case is compared with solve_ivp only."""
    v = arrhenius_values([prepared])[0]
    return (not v.peak_is_ceiling and abs(v.end_temperature - prepared.model.ambient_temperature) < 1e-9
            and all(x is None or x >= 1.0 - 1e-12 for x in v.final_conversion))


def _without_times(text):
    return re.sub(r"after [0-9.]+ [a-z]+( \([0-9.]+ [a-z]+\))?", "after (time)", text)


def recovery_reference(model, recovery, start):
    """The recovery path by solve_ivp: the main balance to ``start``, then with the recovery medium on."""
    limits = [lim.temperature for lim in model.limits]
    before = reference(model, limits, span=(0.0, start))
    after = reference(model, limits, span=(start, model.horizon), y0=before.y[:, -1], medium=recovery)
    return before, after


def check_recovery_against_reference(model, recovery, block):
    before, after = recovery_reference(model, recovery, block["start_s"])

    def temperature_at(t):
        return float((before if t <= block["start_s"] else after).sol(t)[0])

    temperature_at.peak = None
    if before.status or after.status:
        return temperature_at  # solve_ivp stopped inside a runaway: nothing to compare with
    peak_T, peak_t = max(reference_peak(before), reference_peak(after), key=lambda c: (c[0], -c[1]))
    if block["peak_temperature_K"] < model_ceiling(model) - 1.0:  # (a run to the ceiling stops there)
        temperature_at.peak = peak_T
        assert block["peak_temperature_K"] == pytest.approx(peak_T, rel=1e-8)
        assert block["peak_time_s"] == pytest.approx(peak_t, rel=1e-4) or \
            temperature_at(block["peak_time_s"]) == pytest.approx(peak_T, rel=1e-8)
    reached = [lim.name for lim, c0, c1 in zip(model.limits, before.t_events[1:], after.t_events[1:])
               if c0.size or c1.size or lim.temperature <= float(before.y[0, 0])]
    assert sorted(block["limits_reached"]) == sorted(reached)
    return temperature_at


def model_ceiling(model):
    """The stop temperature of both engines (common to them; a screening choice of this tool)."""
    T0 = model_start_temperature(model)
    return max(2000.0, max([lim.temperature for lim in model.limits], default=T0) + 100.0, T0 + 100.0)


@pytest.mark.parametrize("shape", sorted(SHAPES))
def test_engine_gives_the_single_case_result_and_solve_ivp_numbers(shape, monkeypatch):
    rng = np.random.default_rng(SEEDS[shape])
    seen = set()
    for i in range(N_CASES):
        p = prepared_of(SHAPES[shape](rng, random_case(rng, i)))
        assert engine_eligible(p), i
        engine = public_result(screen_prepared(p, with_history=False))
        single = single_case(monkeypatch, p)
        model = choose_start(p)[0].model
        sol = reference(model, [row["temperature_K"] for row in engine["limits"]])
        recovery_at = None
        if engine.get("recovery") and engine["recovery"]["peak_temperature_K"] is not None:
            recovery_at = check_recovery_against_reference(model, p.recovery, engine["recovery"])
            seen.add("recovery followed")
        if not settled_at_ambient(choose_start(p)[0]):
            compare_with_flat_peaks(engine, single, lambda t: float(sol.sol(t)[0]), recovery_at)
        # the engine's limit times and peak against solve_ivp (1e-6 relative, the engines' stated accuracy)
        for row, crossings in zip(engine["limits"], sol.t_events[1:]):
            if row["time_s"] is not None and row["time_s"] > 0 and crossings.size:
                assert row["time_s"] == pytest.approx(float(crossings[0]), rel=1e-6)
            elif row["time_s"] is None and sol.status == 0:
                assert crossings.size == 0 or crossings[0] >= model.horizon * (1 - 1e-9)
        # (solve_ivp in plain time may stop inside a fast runaway, "step size less than spacing": then only the
        # crossings before it are compared)
        if engine["stop_reason"] == "horizon" and sol.status == 0:
            peak_T, peak_t = reference_peak(sol)
            assert engine["peak_temperature_K"] == pytest.approx(peak_T, rel=1e-8)
            assert engine["peak_time_s"] == pytest.approx(peak_t, rel=1e-4) or \
                float(sol.sol(engine["peak_time_s"])[0]) == pytest.approx(peak_T, rel=1e-8)  # a recurring maximum
        seen.add(engine["stop_reason"])
        if engine["boiling"] is not None:  # the time to the boiling point against solve_ivp
            boil = reference(model, [model.boiling.boiling_point])
            t_boil = engine["boiling"]["time_to_boil_s"]
            if t_boil is not None and t_boil > 0:
                assert t_boil == pytest.approx(float(boil.t_events[1][0]), rel=1e-6)
            elif t_boil is None and boil.status == 0:
                assert boil.t_events[1].size == 0
            seen.add("boiling point reached" if t_boil is not None else "boiling point not reached")
    if shape == "fire":
        assert seen == {"ceiling", "horizon"}  # fire cases both run away and stop at the horizon
    if shape == "recovery":
        assert "recovery followed" in seen
    if shape == "boiling":
        assert {"boiling point reached", "boiling point not reached"} <= seen


@pytest.mark.parametrize("shape", sorted(SHAPES))
def test_a_group_gives_each_case_its_own_numbers(shape):
    rng = np.random.default_rng({"cycle": 5, "fire": 6, "recovery": 7, "boiling": 8}[shape])
    cases = [choose_start(prepared_of(SHAPES[shape](rng, random_case(rng, i))))[0] for i in range(6)]
    cases += [prepared_of(random_case(rng, 9))]  # mixed with a case without the shape
    group = arrhenius_values(cases)
    for p, values in zip(cases, group):
        assert values is not None
        assert values == arrhenius_values([p])[0]  # bit for bit, alone or in a group


def test_a_chunk_chooses_the_starts_and_runs_the_cycle_rows_together(monkeypatch):
    from screening.register.chunks import _arrhenius_row_values
    from screening.run import screen_case

    rng = np.random.default_rng(8)
    cases = [prepared_of(with_cycle(rng, random_case(rng, i))) for i in range(5)]
    values = _arrhenius_row_values(cases)
    assert all(v is not None and v.start_info is not None for v in values)
    alone = [public_result(screen_prepared(p, with_history=False)) for p in cases]
    with monkeypatch.context() as mp:  # the chunk's values are used as they are: no second search, no second run
        mp.setattr(screen_case, "choose_start", None)
        mp.setattr(runaway_case, "arrhenius_values", None)
        together = [public_result(screen_prepared(p, arrhenius_values=v, with_history=False))
                    for p, v in zip(cases, values)]
    assert together == alone
