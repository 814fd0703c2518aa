"""Transient conduction with self-heating, against outside references.

- No source: the full series solutions for a convective surface (Incropera et al., Fundamentals of
  Heat and Mass Transfer, 6th ed., section 5.6; Carslaw and Jaeger, Conduction of Heat in Solids,
  1959), with eigenvalues from the transcendental equations solved here by scipy's brentq and the
  Bessel functions from scipy.special (reference libraries): slab z tan z = Bi, cylinder
  z J1(z) / J0(z) = Bi, sphere 1 - z cot z = Bi.
- With a source: below criticality the history settles on the steady solution of the same equation,
  computed by scipy.integrate.solve_bvp; the critical Frank-Kamenetskii delta at the actual Biot
  number separates settling from running away.
- The hot-filled bag of the issue (centre at 120 degC after about 50 h).
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import solve_bvp
from scipy.optimize import brentq
from scipy.special import j0, j1, jn_zeros

from screening.core.model import GAS_CONSTANT, ArrheniusSource
from screening.core.runaway import frank_kamenetskii_critical
from screening.core.transient_conduction import (
    GEOMETRY_INDEX,
    MESH_TOLERANCE,
    ConductionBody,
    hot_spot_history,
    hot_spot_with_mesh_check,
)


def _roots(geometry: str, biot: float, count: int = 80) -> np.ndarray:
    out = []
    if geometry == "cylinder":
        z0, z1 = np.concatenate([[0.0], jn_zeros(0, count + 1)]), np.concatenate([[0.0], jn_zeros(1, count + 1)])
    for k in range(count):
        if geometry == "slab":
            out.append(brentq(lambda z: z * math.tan(z) - biot, k * math.pi + 1e-12, k * math.pi + math.pi / 2 - 1e-12))
        elif geometry == "sphere":
            out.append(brentq(lambda z: 1 - z / math.tan(z) - biot, k * math.pi + 1e-9, (k + 1) * math.pi - 1e-9))
        else:
            out.append(brentq(lambda z: z * j1(z) / j0(z) - biot, z1[k] + 1e-9, z0[k + 1] - 1e-9))
    return np.array(out)


def series_theta(geometry: str, biot: float, fourier: float, r_star: float) -> float:
    """(T - Ta) / (T0 - Ta) at r / R = r_star: the full series with a convective surface."""
    z = _roots(geometry, biot)
    if geometry == "slab":
        c, f = 4 * np.sin(z) / (2 * z + np.sin(2 * z)), np.cos(z * r_star)
    elif geometry == "sphere":
        c, f = 4 * (np.sin(z) - z * np.cos(z)) / (2 * z - np.sin(2 * z)), np.sin(z * r_star) / (z * r_star)
    else:
        c, f = 2 / z * j1(z) / (j0(z) ** 2 + j1(z) ** 2), j0(z * r_star)
    return float(np.sum(c * np.exp(-z ** 2 * fourier) * f))


@pytest.mark.parametrize("geometry", ["slab", "cylinder", "sphere"])
@pytest.mark.parametrize("biot", [0.1, 1.0, 10.0, 100.0])
def test_cooling_without_a_source_follows_the_series_solution(geometry, biot):
    R, k, rho, cp = 0.1, 1.0, 1000.0, 1000.0
    alpha = k / (rho * cp)
    body = ConductionBody(geometry, R, rho, cp, k, biot * k / R, 300.0, 400.0)
    cells = 48
    for fourier in (0.05, 0.3, 1.0):
        hist = hot_spot_history(body, [], fourier * R * R / alpha, cells=cells, points=3)
        expected = 300.0 + 100.0 * series_theta(geometry, biot, fourier, 0.5 / cells)  # at the inner cell's centre
        assert hist.centre[-1] == pytest.approx(expected, abs=0.05)  # 5e-4 of the initial difference


def _steady_centre(geometry, biot, body: ConductionBody, source: ArrheniusSource) -> float | None:
    """Steady centre temperature by scipy's solve_bvp on k (1/r^j)(r^j T')' + rho q(T) = 0, -k T'(R) = h (T - Ta)."""
    j = GEOMETRY_INDEX[geometry]
    R, k, h, Ta = body.half_thickness, body.conductivity, body.surface_coefficient, body.ambient_temperature

    def q(T):
        return source.specific_power * np.exp(-source.activation_energy / GAS_CONSTANT
                                              * (1 / T - 1 / source.reference_temperature))

    def f(r, y):  # the j T' / r term is passed as solve_bvp's singular term S y / r
        return np.vstack([y[1], -body.density * q(y[0]) / k])

    def bc(ya, yb):
        return np.array([ya[1], k * yb[1] + h * (yb[0] - Ta)])

    r = np.linspace(0.0, R, 200)
    S = np.array([[0.0, 0.0], [0.0, -float(j)]])
    sol = solve_bvp(f, bc, r, np.vstack([np.full_like(r, Ta), np.zeros_like(r)]), S=S, tol=1e-8, max_nodes=100000)
    return float(sol.sol(0.0)[0]) if sol.success else None


def _delta_body(geometry, biot, delta):
    """A body at Frank-Kamenetskii delta (with E / (R Ta) = 60, close to the exponential approximation)."""
    Ta, R, k, rho, cp = 300.0, 0.1, 0.1, 500.0, 1500.0
    E = 60 * GAS_CONSTANT * Ta
    q_a = delta * k * GAS_CONSTANT * Ta ** 2 / (E * rho * R * R)  # delta = (E / (R Ta^2)) rho q(Ta) r^2 / k
    source = ArrheniusSource(q_a, Ta, E, 0.0, None, 1.0)
    return ConductionBody(geometry, R, rho, cp, k, biot * k / R, Ta, Ta, (source,)), source


@pytest.mark.parametrize("geometry", ["slab", "cylinder", "sphere"])
@pytest.mark.parametrize("biot", [1.0, 20.0])
def test_below_criticality_the_history_settles_on_the_steady_solution(geometry, biot):
    delta_c = frank_kamenetskii_critical(geometry, biot)
    body, source = _delta_body(geometry, biot, 0.7 * delta_c)
    steady = _steady_centre(geometry, biot, body, source)
    tau = body.half_thickness ** 2 * body.density * body.specific_heat / body.conductivity
    hist = hot_spot_history(body, [], 30 * tau * (1 + 1 / biot), cells=64, points=3)
    assert not hist.stopped
    assert hist.centre[-1] == pytest.approx(steady, abs=0.02 * (steady - body.ambient_temperature))


@pytest.mark.parametrize("geometry", ["slab", "cylinder", "sphere"])
@pytest.mark.parametrize("biot", [1.0, 20.0])
def test_the_critical_delta_at_the_actual_biot_number_separates_settling_from_runaway(geometry, biot):
    # Frank-Kamenetskii's critical delta for the exponential approximation; with E / (R Ta) = 60 the exact
    # Arrhenius law is within a few per cent of it, so 0.85 and 1.15 of it are on either side.
    delta_c = frank_kamenetskii_critical(geometry, biot)
    for factor, runs_away in ((0.85, False), (1.15, True)):
        body, _ = _delta_body(geometry, biot, factor * delta_c)
        tau = body.half_thickness ** 2 * body.density * body.specific_heat / body.conductivity
        hist = hot_spot_history(body, [400.0], 60 * tau * (1 + 1 / biot), cells=32, points=3)
        assert hist.stopped is runs_away, (factor, hist.peak_temperature)


@pytest.mark.parametrize("geometry", ["slab", "cylinder", "sphere"])
@pytest.mark.parametrize("biot", [0.5, 5.0, 50.0])
@pytest.mark.parametrize("hot_start", [20.0, 50.0])
def test_halving_the_mesh_moves_a_limit_time_by_less_than_the_tolerance(geometry, biot, hot_start):
    # over the accepted range: supercritical and subcritical bodies that start hot and cross a limit
    delta_c = frank_kamenetskii_critical(geometry, biot)
    reached = 0
    for factor in (0.5, 2.0):
        body, source = _delta_body(geometry, biot, factor * delta_c)
        body = ConductionBody(body.geometry, body.half_thickness, body.density, body.specific_heat,
                              body.conductivity, body.surface_coefficient, body.ambient_temperature,
                              body.ambient_temperature + hot_start, body.sources)
        tau = body.half_thickness ** 2 * body.density * body.specific_heat / body.conductivity
        limit = body.initial_temperature + 5.0
        hist, change = hot_spot_with_mesh_check(body, [limit], 30 * tau)
        if hist.limit_times[0] is not None:
            reached += 1
            assert change is not None and change < MESH_TOLERANCE, (factor, change)
    assert reached >= 1  # the supercritical body crosses its limit


def test_the_hot_filled_bag_runs_away_at_its_centre():
    # The case: a powder at 75 degC in a 1 m^3 bag (a sphere 1.241 m across), 480 kg/m^3,
    # 1.6 kJ/(kg K), 0.09 W/(m K), h = 6 W/(m^2 K), zero order 0.17 W/kg at 80 degC, E = 100 kJ/mol,
    # 2000 kJ/kg, in a 25 degC store: the centre reaches 120 degC after about 50 h.
    source = ArrheniusSource(0.17, 353.15, 100e3, 0.0, 2000e3, 1.0)
    body = ConductionBody("sphere", 1.241 / 2, 480.0, 1600.0, 0.09, 6.0, 298.15, 348.15, (source,))
    hist, change = hot_spot_with_mesh_check(body, [393.15], 7 * 86400.0)
    assert hist.limit_times[0] / 3600 == pytest.approx(50.0, rel=0.03)
    assert change < MESH_TOLERANCE
    assert hist.stopped  # it runs away past the limit
    assert hist.surface[len(hist.surface) // 4] < 320.0  # while its surface is cool


@pytest.mark.parametrize("geometry", ["slab", "sphere"])
def test_a_medium_at_the_surface_acts_as_one_film_to_the_weighted_temperature(geometry):
    # A film h to air at 300 K and a medium h_m at 420 K in parallel are one film h + h_m to
    # (h Ta + h_m Tm) / (h + h_m) (Incropera et al., ch. 3, resistances in parallel; common practice), so the
    # centre follows the full series solution (Incropera et al., section 5.6; Carslaw and Jaeger) with
    # Bi = (h + h_m) R / k, computed here with scipy's brentq for the eigenvalues.
    R, k, rho, cp, h, hm = 0.1, 1.0, 1000.0, 1000.0, 4.0, 6.0
    body = ConductionBody(geometry, R, rho, cp, k, h, 300.0, 400.0, medium_coefficient=hm, medium_temperature=420.0)
    t_inf = (h * 300.0 + hm * 420.0) / (h + hm)  # 372 K
    biot = (h + hm) * R / k
    cells = 48
    fourier = 0.3
    hist = hot_spot_history(body, [], fourier * R * R / (k / (rho * cp)), cells=cells, points=3)
    expected = t_inf + (400.0 - t_inf) * series_theta(geometry, biot, fourier, 0.5 / cells)
    assert hist.centre[-1] == pytest.approx(expected, abs=0.05)


def test_a_surface_flux_adds_its_heat_at_the_rate_it_enters():
    # An insulated sphere (h = 0) with a flux q'' into its surface gains q'' 4 pi R^2 t, so its mean
    # temperature rises by 3 q'' t / (rho c R) (energy balance, by hand); the hot spot is the surface.
    R, rho, cp, flux, t = 0.05, 800.0, 1500.0, 2000.0, 600.0
    body = ConductionBody("sphere", R, rho, cp, 0.2, 0.0, 300.0, 300.0, surface_flux=flux)
    limit = 301.0
    hist = hot_spot_history(body, [limit], t, cells=64)
    assert hist.hot_spot[-1] == pytest.approx(float(hist.surface[-1]), abs=0.5)
    assert hist.limit_times[0] is not None and hist.limit_times[0] < t
    # mean rise (by hand): 3 * 2000 * 600 / (800 * 1500 * 0.05) = 60 K; the centre lags, the surface leads
    assert hist.centre[-1] < 300.0 + 60.0 < hist.surface[-1]


def test_surface_limits_are_crossed_when_the_surface_history_crosses_them():
    # The surface of a sphere heated by a medium rises monotonically; the located crossing must agree with
    # the surface history interpolated (numpy's interp as the reference) to the history's resolution.
    body = ConductionBody("sphere", 0.1, 1000.0, 1000.0, 1.0, 10.0, 400.0, 300.0)
    hist = hot_spot_history(body, [], 20000.0, points=2001, surface_limits=[350.0, 250.0])
    t_interp = float(np.interp(350.0, hist.surface, hist.time))
    assert hist.surface_limit_times[0] == pytest.approx(t_interp, rel=2e-3)
    assert hist.surface_limit_times[1] == 0.0  # already above at t = 0
