"""Screening a vessel given only by its wall and venting: heat-up, boiling credit and its caution.

Hand calculation for a constant source P in an adiabatic lumped vessel (first law; Incropera et al.,
ch. 5, lumped capacitance, with the wall at the contents' temperature: common practice):

    C = m c + M_wall c_wall,   t(T) = C (T - T0) / P,   time to boil t_b = C (Tb - T0) / P;

in an open vessel the contents then hold at Tb and boil off at P / L, so by the horizon H the mass
boiled off is P (H - t_b) / L (while liquid remains).  Boiling credit needs free venting, so the
caution that says so must stand next to the boiling result (SAFETY.md; references.md, "Boiling and
external heat input").
"""
from __future__ import annotations

import json

import pytest

from screening.case.files import load_case_bytes
from screening.case.prepare import prepare_case
from screening.run.screen_case import screen_prepared

M, CP = 2000.0, 4000.0  # kg, J/(kg K)
MW, CW = 800.0, 500.0  # kg, J/(kg K): the wall
T0, TB, TL_BELOW, TL_ABOVE = 293.15, 373.15, 363.15, 393.15  # K: 20, 100, 90, 120 degC
P, L, H = 50e3, 2000e3, 24 * 3600.0  # W, J/kg, s

CASE = """\
id: OPEN-1
vessel:
{vessel}contents:
  mass: 2000 kg
  specific_heat: 4 kJ/(kg*K)
  initial_temperature: 20 degC
  boiling_point: 100 degC
  latent_heat: 2000 kJ/kg
heat_loss:
  ambient_temperature: 20 degC
  ua: 0 W/K
heat_sources:
  - kind: constant
    power: 50 kW
limits:
  - name: below boiling
    temperature: 90 degC
  - name: above boiling
    temperature: 120 degC
horizon: 24 h
"""
WALL = "  wall_mass: 800 kg\n  wall_specific_heat: 0.5 kJ/(kg*K)\n"


def screen(vessel: str) -> dict:
    loaded = load_case_bytes(CASE.format(vessel=vessel).encode())
    return screen_prepared(prepare_case(loaded.spec), loaded.input_hash)


def limit_time(result, name):
    return next(r["time_s"] for r in result["limits"] if r["name"] == name)


@pytest.mark.parametrize("wall", [True, False], ids=["wall and venting", "venting only"])
def test_open_vessel_without_geometry_boils_as_the_hand_calculation_says(wall):
    result = screen((WALL if wall else "") + "  venting: open\n")
    C = M * CP + (MW * CW if wall else 0.0)  # J/K, m c + M_wall c_wall
    t_boil = C * (TB - T0) / P  # s, adiabatic heat-up at constant power
    assert result["heat_capacity_J_per_K"] == pytest.approx(C, rel=1e-12)
    assert result["boiling"]["time_to_boil_s"] == pytest.approx(t_boil, rel=1e-9)
    assert result["boiling"]["peak_boil_off_kg_per_s"] == pytest.approx(P / L, rel=1e-9)  # P / L
    assert result["boiling"]["boiled_off_kg"] == pytest.approx(P * (H - t_boil) / L, rel=1e-9)  # P (H - t_b) / L
    assert limit_time(result, "below boiling") == pytest.approx(C * (TL_BELOW - T0) / P, rel=1e-9)
    assert limit_time(result, "above boiling") is None  # held at Tb on boiling credit
    assert result["peak_temperature_K"] == pytest.approx(TB, abs=1e-9)
    # the credit is not conservative if the vent is undersized or blocked: the output says so
    assert any("Boiling credit assumes an open or adequately vented vessel" in w for w in result["warnings"])
    assert any("above boiling" in w and "not conservative if the vent is undersized" in w for w in result["warnings"])


def test_closed_vessel_without_geometry_takes_no_boiling_credit():
    result = screen(WALL)  # venting defaults to closed
    C = M * CP + MW * CW
    assert limit_time(result, "above boiling") == pytest.approx(C * (TL_ABOVE - T0) / P, rel=1e-9)
    assert result["boiling"]["time_to_boil_s"] == pytest.approx(C * (TB - T0) / P, rel=1e-9)
    assert any("The vessel is closed" in w for w in result["warnings"])


def test_the_same_wall_with_and_without_geometry_gives_the_same_times():
    with_shape = screen("  shape: vertical-cylinder\n  diameter: 1.5 m\n  length: 1.5 m\n" + WALL + "  venting: open\n")
    without = screen(WALL + "  venting: open\n")
    for key in ("heat_capacity_J_per_K", "peak_temperature_K"):
        assert without[key] == with_shape[key]
    assert without["boiling"] == with_shape["boiling"]
    assert without["limits"] == with_shape["limits"]


def test_cli_screens_a_vessel_given_only_its_venting(tmp_path, run_cli):
    path = tmp_path / "open.yaml"
    path.write_text(CASE.format(vessel="  venting: open\n"), encoding="utf-8")
    proc = run_cli("check", path, "--json")
    assert proc.returncode in (0, 1), proc.stderr  # 0 pass, 1 review or fail (cli.py); not 2
    result = json.loads(proc.stdout)
    assert result["boiling"]["time_to_boil_s"] == pytest.approx(M * CP * (TB - T0) / P, rel=1e-9)
