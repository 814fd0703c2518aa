"""Monte Carlo with the daily cycle's inputs: every sample's times equal the one-case engine's on the case with
that sample's values (the closed form on arrays, and the batch Rosenbrock integrator with the forcing)."""
from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest

from screening.case.files import load_case_bytes
from screening.case.paths import apply_updates, locate_quantity
from screening.case.prepare import prepare_case
from screening.case.uncertainty_plan import draw
from screening.run.daily_cycle import choose_start, with_start
from screening.run.monte_carlo import sample_arrays, screen_samples

CASE = """
id: MC-SUN
vessel: {shape: vertical-cylinder, diameter: 0.57 m, length: 0.85 m}
contents: {fill: 90 %%, density: 820 kg/m^3, specific_heat: 2.0 kJ/(kg*K), initial_temperature: 24 degC}
heat_loss: {ambient_temperature: 28 degC, daily_range: 14 K, coefficient: 10 W/(m^2*K), area: total}
sun: {peak_irradiance: 850 W/m^2, absorptivity: 0.7, exposed_area: projected, day_length: 15 h}
%s
limits: [{name: a, temperature: 36 degC}, {name: b, temperature: 39 degC}]
horizon: 3 d
uncertainty:
  samples: 12
  seed: 5
  inputs:
    sun.peak_irradiance: {distribution: uniform, low: 600 W/m^2, high: 1000 W/m^2}
    sun.absorptivity: {distribution: uniform, low: 0.4, high: 0.9}
    heat_loss.daily_range: {distribution: uniform, low: 8 K, high: 18 K}
    heat_loss.coefficient: {distribution: uniform, low: 6 W/(m^2*K), high: 14 W/(m^2*K)}
    sun.outer_coefficient: {distribution: uniform, low: 10 W/(m^2*K), high: 25 W/(m^2*K)}
"""
ARRHENIUS = ("heat_sources: [{kind: arrhenius, specific_power: 1 W/kg, reference_temperature: 60 degC, "
             "activation_energy: 100 kJ/mol, gas_generating: false}]\nscenario: heat-up")


@pytest.mark.parametrize("sources", ["", ARRHENIUS])
def test_samples_equal_one_case_screening(sources):
    from screening.core.arrhenius_history import integrate_history
    from screening.run.closed_form_case import closed_form_values

    text = (CASE % sources).replace("sun: {peak", "sun: {outer_coefficient: 15 W/(m^2*K), peak")
    prepared, _ = choose_start(prepare_case(load_case_bytes(text.encode(), "yaml").spec))
    plan = prepared.uncertainty_plan
    values = draw(plan)
    times = screen_samples(prepared, sample_arrays(prepared, plan, values)).limit_times
    assert np.isfinite(times).any()
    start = prepared.model.daily_cycle.start_time
    for i in range(values.shape[0]):
        updates = []
        for j, inp in enumerate(plan.inputs):
            _, _, q, _ = locate_quantity(prepared.spec, inp.parts)
            updates.append((inp.parts, replace(q, si=float(values[i, j]))))
        one = with_start(prepare_case(apply_updates(prepared.spec, updates)), start)
        if sources:
            ref = [lim.time for lim in integrate_history(one.model).limits]
            tol = 2.0  # s: two stiff integrators at their own tolerances
        else:
            ref = closed_form_values(one).limit_times
            tol = 1e-6
        for j, t in enumerate(ref):
            if t is None:
                assert np.isnan(times[i, j])
            else:
                assert abs(times[i, j] - t) < tol, (i, j, times[i, j], t)
