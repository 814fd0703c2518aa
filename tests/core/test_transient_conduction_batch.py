"""The batched conduction integrator against outside references.

- No source: the full series solutions for a convective surface (Incropera et al., Fundamentals of Heat and
  Mass Transfer, 6th ed., section 5.6; Carslaw and Jaeger, Conduction of Heat in Solids, 1959), eigenvalues by
  scipy's brentq and Bessel functions from scipy.special (``series_theta`` of test_transient_conduction.py),
  to the same tolerance as the scipy solver's test (5e-4 of the initial difference), all bodies in one batch.
- Self-heating: below criticality the centre settles on the steady solution by scipy.integrate.solve_bvp.
- Random self-heating bodies: the limit times, surface-limit times and histories of the scipy BDF method of
  lines (``hot_spot_history``, scipy.integrate.solve_ivp, rtol 1e-8), the reference library here.
- A body's result is identical (to the last bit) alone and in a batch of 50 random others.
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from test_transient_conduction import _delta_body, _steady_centre, series_theta

from screening.core.daily_cycle import DailyCycle
from screening.core.model import GAS_CONSTANT, ArrheniusSource
from screening.core.runaway import frank_kamenetskii_critical
from screening.core.transient_conduction import ConductionBody, hot_spot_history, hot_spot_with_mesh_check
from screening.core.transient_conduction_batch import (
    _AT,
    _CT,
    hot_spot_histories,
    hot_spot_histories_with_mesh_check,
)

DAY = 86400.0


def test_stage_times_of_the_time_state_are_those_of_rodas():
    # Hairer and Wanner (1996), Table IV.7.? of RODAS (from memory): alpha = (0, 0.386, 0.21, 0.63, 1, 1), and a
    # consistent method carries t to t + h exactly
    assert _AT == pytest.approx([0.0, 0.386, 0.21, 0.63, 1.0, 1.0], abs=1e-14)
    assert _AT[5] + _CT[5] == pytest.approx(1.0, abs=1e-14)


def test_cooling_without_a_source_follows_the_series_solution_in_one_batch():
    R, k, rho, cp = 0.1, 1.0, 1000.0, 1000.0
    alpha = k / (rho * cp)
    cells = 48
    bodies, horizons, expected = [], [], []
    for geometry in ("slab", "cylinder", "sphere"):
        for biot in (0.1, 1.0, 10.0, 100.0):
            for fourier in (0.05, 0.3, 1.0):
                bodies.append(ConductionBody(geometry, R, rho, cp, k, biot * k / R, 300.0, 400.0))
                horizons.append(fourier * R * R / alpha)
                # Incropera et al. 5.6 / Carslaw and Jaeger series, at the inner cell's centre
                expected.append(300.0 + 100.0 * series_theta(geometry, biot, fourier, 0.5 / cells))
    hists = hot_spot_histories(bodies, [], horizons, cells=cells, points=3)
    for h, e in zip(hists, expected):
        assert h.centre[-1] == pytest.approx(e, abs=0.05)  # 5e-4 of the initial difference, as the BDF solver's test


@pytest.mark.parametrize("geometry", ["slab", "sphere"])
def test_a_medium_at_the_surface_acts_as_one_film_to_the_weighted_temperature(geometry):
    # one film h + h_m to (h Ta + h_m Tm) / (h + h_m) (Incropera et al., ch. 3, resistances in parallel; common
    # practice): the series solution (Incropera 5.6, Carslaw and Jaeger) with Bi = (h + h_m) R / k
    R, k, rho, cp, h, hm = 0.1, 1.0, 1000.0, 1000.0, 4.0, 6.0
    body = ConductionBody(geometry, R, rho, cp, k, h, 300.0, 400.0, medium_coefficient=hm, medium_temperature=420.0)
    t_inf = (h * 300.0 + hm * 420.0) / (h + hm)
    cells, fourier = 48, 0.3
    hist, = hot_spot_histories([body], [], fourier * R * R / (k / (rho * cp)), cells=cells, points=3)
    expected = t_inf + (400.0 - t_inf) * series_theta(geometry, (h + hm) * R / k, fourier, 0.5 / cells)
    assert hist.centre[-1] == pytest.approx(expected, abs=0.05)


def test_a_surface_flux_adds_its_heat_at_the_rate_it_enters():
    # insulated sphere with a flux q'' into its surface: the mean rises by 3 q'' t / (rho c R) = 60 K (energy
    # balance, by hand); the centre lags and the surface leads
    R, rho, cp, flux, t = 0.05, 800.0, 1500.0, 2000.0, 600.0
    body = ConductionBody("sphere", R, rho, cp, 0.2, 0.0, 300.0, 300.0, surface_flux=flux)
    hist, = hot_spot_histories([body], [301.0], t, cells=64)
    assert hist.hot_spot[-1] == pytest.approx(float(hist.surface[-1]), abs=0.5)
    assert hist.limit_times[0] is not None and hist.limit_times[0] < t
    assert hist.centre[-1] < 360.0 < hist.surface[-1]


def test_below_criticality_the_centre_settles_on_the_steady_solution():
    # steady centre by scipy.integrate.solve_bvp (the helper of test_transient_conduction.py)
    cases, bodies, horizons = [], [], []
    for geometry in ("slab", "cylinder", "sphere"):
        for biot in (1.0, 20.0):
            body, source = _delta_body(geometry, biot, 0.7 * frank_kamenetskii_critical(geometry, biot))
            tau = body.half_thickness ** 2 * body.density * body.specific_heat / body.conductivity
            cases.append((geometry, biot, body, source))
            bodies.append(body)
            horizons.append(30 * tau * (1 + 1 / biot))
    hists = hot_spot_histories(bodies, [], horizons, cells=64, points=3)
    for (geometry, biot, body, source), hist in zip(cases, hists):
        steady = _steady_centre(geometry, biot, body, source)
        assert not hist.stopped
        assert hist.centre[-1] == pytest.approx(steady, abs=0.02 * (steady - body.ambient_temperature))


def test_the_critical_delta_separates_settling_from_runaway():
    # Frank-Kamenetskii's critical delta at the actual Biot number (E / (R Ta) = 60: within a few per cent of it)
    bodies, expect, horizons = [], [], []
    for geometry in ("slab", "cylinder", "sphere"):
        for biot in (1.0, 20.0):
            for factor, runs_away in ((0.85, False), (1.15, True)):
                body, _ = _delta_body(geometry, biot, factor * frank_kamenetskii_critical(geometry, biot))
                tau = body.half_thickness ** 2 * body.density * body.specific_heat / body.conductivity
                bodies.append(body)
                horizons.append(60 * tau * (1 + 1 / biot))
                expect.append(runs_away)
    hists = hot_spot_histories(bodies, [400.0], horizons, cells=32, points=3)
    assert [h.stopped for h in hists] == expect


def _random_body(rng, *, allow_cycle=True):
    """A drum, bag or slab of self-heating material: sizes, properties, kinetics and surroundings at random."""
    geometry = ["slab", "cylinder", "sphere"][int(rng.integers(3))]
    R = float(rng.uniform(0.05, 0.6))
    rho, cp, k = float(rng.uniform(300, 1500)), float(rng.uniform(900, 2500)), float(rng.uniform(0.05, 0.5))
    h = float(rng.choice([0.0, rng.uniform(1, 50)], p=[0.1, 0.9]))
    Ta = float(rng.uniform(280, 330))
    T0 = Ta + float(rng.uniform(-10, 50))
    E = float(rng.uniform(60e3, 160e3))
    # delta of the first source between 0.3 and 3 times the infinite-Biot critical value (Frank-Kamenetskii)
    j = {"slab": 0, "cylinder": 1, "sphere": 2}[geometry]
    delta = float(rng.uniform(0.3, 3.0)) * (0.878, 2.0, 3.322)[j]
    q_a = delta * k * GAS_CONSTANT * Ta ** 2 / (E * rho * R * R)
    order = float(rng.choice([0.0, 0.5, 1.0, 2.0]))
    dh = float(rng.choice([np.nan, rng.uniform(2e5, 2e6)], p=[0.2, 0.8]))
    sources = [ArrheniusSource(q_a, Ta, E, order, None if math.isnan(dh) else dh, float(rng.uniform(0.8, 1.0)))]
    if rng.random() < 0.3:
        sources.append(ArrheniusSource(0.3 * q_a, Ta + 20, 0.8 * E, 1.0, float(rng.uniform(2e5, 1e6)), 1.0))
    uniform = float(rng.choice([0.0, rng.uniform(0, 0.02)]))
    decaying = ((float(rng.uniform(0, 0.5)), float(rng.uniform(1e3, 1e5))),) if rng.random() < 0.3 else ()
    hm, tm = (float(rng.uniform(1, 20)), float(rng.uniform(290, 360))) if rng.random() < 0.2 else (0.0, 0.0)
    flux = float(rng.uniform(0, 50)) if rng.random() < 0.15 else 0.0
    cycle = None
    if allow_cycle and rng.random() < 0.25:
        cycle = DailyCycle(float(rng.uniform(0, 15)), 54000.0, float(rng.uniform(0, 86400)), float(rng.uniform(0, 8)),
                           43200.0)
    return ConductionBody(geometry, R, rho, cp, k, h, Ta, T0, tuple(sources), uniform, decaying, flux, hm, tm,
                          daily_cycle=cycle)


def test_random_self_heating_bodies_agree_with_the_scipy_method_of_lines():
    rng = np.random.default_rng(20261203)
    bodies, limits, horizons = [], [], []
    for _ in range(16):
        b = _random_body(rng)
        bodies.append(b)
        limits.append([b.initial_temperature + d for d in (2.0, 10.0, 40.0)])
        horizons.append(float(rng.uniform(2, 30)) * DAY)
    surface = [[b.initial_temperature + 1.0] for b in bodies]
    batch = hot_spot_histories(bodies, limits, horizons, cells=64, surface_limits=surface)
    worst, compared = 0.0, 0
    for b, lim, H, s, got in zip(bodies, limits, horizons, surface, batch):
        ref = hot_spot_history(b, lim, H, cells=64, surface_limits=s)  # scipy BDF, rtol 1e-8: the reference
        for L, a, r in zip(lim, got.limit_times, ref.limit_times):
            if abs(ref.peak_temperature - L) < 0.05 or (r is not None and r > 0.999 * H):
                continue  # a grazing crossing or one at the horizon is ill-conditioned: either answer stands
            assert (a is None) == (r is None), (b, L)
            if r is not None:
                compared += 1
                worst = max(worst, abs(a - r) / r)
        for a, r in zip(got.surface_limit_times, ref.surface_limit_times):
            if r is not None and a is not None and r > 0:
                assert a == pytest.approx(r, rel=1e-4)
        assert got.stopped == ref.stopped
        if not ref.stopped:  # the same even points and crossings; the hot spot to 2 mK
            assert got.time.shape == ref.time.shape and np.allclose(got.time, ref.time, rtol=1e-4)
            assert np.max(np.abs(got.hot_spot - ref.hot_spot)) < 2e-3  # K
            assert got.peak_temperature == pytest.approx(ref.peak_temperature, abs=2e-3)
    assert compared >= 10
    assert worst < 1e-4, worst  # observed 2.8e-5 at most, 1e-6 typically: the scipy solver's own error at rtol 1e-8


def test_limit_times_agree_with_a_tight_scipy_solution(monkeypatch):
    # scipy BDF at rtol 1e-11 as the reference: observed differences about 1e-6 relative or below (the scipy solver
    # at its default rtol 1e-8 is itself about 1e-5 off on these bodies)
    import screening.core.transient_conduction as tc

    monkeypatch.setattr(tc, "RTOL", 1e-11)
    rng = np.random.default_rng(5)
    bodies = [_random_body(rng) for _ in range(5)]
    limits = [[b.initial_temperature + d for d in (2.0, 10.0)] for b in bodies]
    batch = hot_spot_histories(bodies, limits, 10 * DAY, cells=32, surface_limits=[[b.initial_temperature + 0.5]
                                                                               for b in bodies])
    compared = 0
    for b, lim, got in zip(bodies, limits, batch):
        ref = hot_spot_history(b, lim, 10 * DAY, cells=32, surface_limits=[b.initial_temperature + 0.5])
        for L, a, r in zip(lim, got.limit_times, ref.limit_times):
            if abs(ref.peak_temperature - L) < 0.05:
                continue
            assert (a is None) == (r is None)
            if r:
                compared += 1
                assert a == pytest.approx(r, rel=1e-5)
        for a, r in zip(got.surface_limit_times, ref.surface_limit_times):
            if r:
                assert a == pytest.approx(r, rel=1e-5)
    assert compared >= 3


def test_a_body_gives_the_same_result_alone_and_in_a_batch_of_50():
    rng = np.random.default_rng(7)
    others = [_random_body(rng) for _ in range(50)]
    limits = [[b.initial_temperature + d for d in (3.0, 25.0)] for b in others]
    horizons = [float(rng.uniform(1, 20)) * DAY for _ in others]
    batch = hot_spot_histories(others, limits, horizons, cells=32, surface_limits=[[b.initial_temperature + 1.0]
                                                                               for b in others])
    for i in (0, 17, 49):
        alone, = hot_spot_histories([others[i]], [limits[i]], horizons[i], cells=32,
                                    surface_limits=[[others[i].initial_temperature + 1.0]])
        b = batch[i]
        assert alone.limit_times == b.limit_times
        assert alone.surface_limit_times == b.surface_limit_times
        assert alone.stopped == b.stopped and alone.peak_temperature == b.peak_temperature
        for key in ("time", "hot_spot", "centre", "surface"):
            assert np.array_equal(getattr(alone, key), getattr(b, key)), key
    # and in chunks of 7
    chunked = hot_spot_histories(others, limits, horizons, cells=32, chunk_size=7,
                                 surface_limits=[[b.initial_temperature + 1.0] for b in others])
    assert all(a.limit_times == b.limit_times and np.array_equal(a.hot_spot, b.hot_spot)
               for a, b in zip(chunked, batch))


def test_the_mesh_check_agrees_with_the_scipy_one():
    # the hot-filled bag of test_transient_conduction.py: centre at 120 degC after about 50 h (the case)
    source = ArrheniusSource(0.17, 353.15, 100e3, 0.0, 2000e3, 1.0)
    body = ConductionBody("sphere", 1.241 / 2, 480.0, 1600.0, 0.09, 6.0, 298.15, 348.15, (source,))
    (hist, change), = hot_spot_histories_with_mesh_check([body], [393.15], 7 * DAY)
    ref, ref_change = hot_spot_with_mesh_check(body, [393.15], 7 * DAY)
    assert hist.limit_times[0] == pytest.approx(ref.limit_times[0], rel=1e-5)
    assert change == pytest.approx(ref_change, abs=2e-5)
    assert hist.stopped and hist.cells == 128


def test_limits_at_the_start_inputs_and_errors():
    b = ConductionBody("slab", 0.1, 1000.0, 1000.0, 1.0, 10.0, 300.0, 350.0)
    h, = hot_spot_histories([b], [340.0, 360.0], 1000.0, surface_limits=[300.0])
    assert h.limit_times == [0.0, None] and h.surface_limit_times == [0.0]
    with pytest.raises(ValueError):
        hot_spot_histories([b], [], 0.0)
    with pytest.raises(ValueError):
        hot_spot_histories([ConductionBody("cube", 0.1, 1.0, 1.0, 1.0, 1.0, 300.0, 300.0)], [], 10.0)
    with pytest.raises(ValueError):
        hot_spot_histories([b, b], [[340.0]], 10.0)
    assert hot_spot_histories([], [], 10.0) == []
