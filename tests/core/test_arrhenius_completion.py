"""A first-order reaction that runs to completion: the conversion reported stays within [0, 1].

The integrator carried the conversion state a few rounding errors past 1 (1.0000000000000029 in the
case that exposed it) and the steady-state analysis downstream refused it.  The numbers are those of
the demo reactor FW-R301 with its desired reaction at 25 W/kg and 60 % or 100 % accumulated.

Check values: conversion is a fraction of the reactant charged, so 0 <= X <= 1 (definition); with no
heat loss the released heat a m dh raises the lumped heat capacity C = m c + C_wall by a m dh / C once
the reaction is complete (first law for an adiabatic lumped mass, common practice).
"""
from __future__ import annotations

import numpy as np
import pytest

from screening.core.arrhenius_history import integrate_history
from screening.core.model import ArrheniusSource, Limit, ScreeningModel

MASS, CP = 4200.0, 2100.0  # kg, J/(kg K): FW-R301's contents
WALL = 3200.0 * 490.0  # J/K: FW-R301's wall, 3200 kg of steel at 490 J/(kg K)
DH = 160e3  # J/kg, heat of the desired reaction
T0 = 353.15  # K (80 degC)


def reactor(accumulated: float, ua: float) -> ScreeningModel:
    synthesis = ArrheniusSource(specific_power=25.0, reference_temperature=T0, activation_energy=70e3, order=1.0,
                                specific_heat_of_reaction=DH, accumulated_fraction=accumulated)
    return ScreeningModel(contents_mass=MASS, contents_specific_heat=CP, wall_heat_capacity=WALL, ua=ua,
                          ambient_temperature=298.15, initial_temperature=T0, horizon=24 * 3600.0,
                          arrhenius_sources=(synthesis,), limits=(Limit("high", 500.0),))


@pytest.mark.parametrize("accumulated", [0.6, 1.0])
@pytest.mark.parametrize("ua", [0.0, 68.93490477700125])  # W/K: adiabatic, and FW-R301's 6 W/(m^2 K) on its wetted area
def test_conversion_of_a_completed_first_order_reaction_stays_within_0_and_1(accumulated, ua):
    hist = integrate_history(reactor(accumulated, ua))
    x = hist.conversion[0]
    assert np.all((x >= 0.0) & (x <= 1.0))  # a fraction (definition)
    assert 0.0 <= hist.final_conversion[0] <= 1.0
    assert hist.final_conversion[0] == pytest.approx(1.0, abs=1e-9)  # the reaction has run to completion
    if ua == 0.0:
        # first law, adiabatic lumped mass: T0 + a m dh / (m c + C_wall) (common practice)
        expected = T0 + accumulated * MASS * DH / (MASS * CP + WALL)
        assert hist.temperature[-1] == pytest.approx(expected, rel=1e-9)

