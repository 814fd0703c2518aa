"""Autocatalytic sources, d(alpha)/dt = k(T) (1 - alpha)^n (alpha^m + z), on every engine and in the criteria.

References (named beside each check):
- the adiabatic time to a temperature as a quadrature over conversion: with no heat loss and one source,
  T(alpha) = T0 + dT_ad (alpha - alpha0) exactly (energy balance), so t = integral of
  d(alpha) / (k(T(alpha)) f(alpha)), evaluated with mpmath.quad at 30 digits (reference library);
- the isothermal induction time for n = m = 1: the logistic solution, derived in the test below;
- the conversion of maximum rate for m = 1 and for n = 1, m = 2: roots of d ln f / d alpha = 0 solved by hand;
- the vectorised engine against the one-case engine (scipy's Radau, itself checked against quadrature above).
"""
from __future__ import annotations

import math

import mpmath
import numpy as np
import pytest

from screening.core.arrhenius import conversion_function, conversion_of_maximum_rate
from screening.core.arrhenius_history import integrate_history
from screening.core.arrhenius_history_batch import first_crossing_times_arrhenius, samples_from_models
from screening.core.model import GAS_CONSTANT, ArrheniusSource, Limit, ScreeningModel
from screening.core.runaway import (
    heat_generation,
    isothermal_induction_time,
    rate_conversion,
    semenov_critical_ambient,
    t_d24_integrated,
    tmr_adiabatic_integrated,
)

R = GAS_CONSTANT  # CODATA 2018
K_REF, T_REF, E = 2e-5, 423.15, 120e3  # the example source: 2e-5 1/s at 150 degC, 120 kJ/mol
DH, CP = 500e3, 2000.0  # 500 kJ/kg, 2 kJ/(kg K): dT_ad = 250 K


def source(n, m, z, a0=0.0, k=K_REF, e=E, dh=DH):
    return ArrheniusSource(dh * k, T_REF, e, order=n, specific_heat_of_reaction=dh, accumulated_fraction=1.0 - a0,
                           autocatalytic_order=m, initiation=z)


def k_of(T, k=K_REF, e=E):
    """The Arrhenius law written out independently (mpmath), 1/s."""
    return k * mpmath.exp(-e / R * (1 / mpmath.mpf(T) - 1 / mpmath.mpf(T_REF)))


def quadrature_time(T0, T_target, n, m, z, a0, dh=DH, cp=CP):
    """t = integral from alpha0 to alpha(T_target) of d(alpha) / (k(T(alpha)) (1 - alpha)^n (alpha^m + z))."""
    mpmath.mp.dps = 30
    dT = dh / cp
    a_end = a0 + (T_target - T0) / dT

    def integrand(a):
        return 1 / (k_of(T0 + dT * (a - a0)) * (1 - a) ** n * (a ** m + z))

    return float(mpmath.quad(integrand, [a0, (a0 + a_end) / 2, a_end]))


CASES = [(1.0, 1.0, 0.02, 0.0), (1.0, 1.0, 0.02, 0.1), (0.5, 1.0, 0.02, 0.0), (2.0, 0.5, 0.01, 0.05),
         (0.0, 1.0, 0.1, 0.0), (1.5, 2.0, 0.05, 0.0)]


def adiabatic_model(src, T0, limits, horizon=1e9):
    return ScreeningModel(1.0, CP, 0.0, 0.0, T0, T0, horizon, arrhenius_sources=(src,),
                          limits=tuple(Limit(f"L{i}", t) for i, t in enumerate(limits)))


@pytest.mark.parametrize("n,m,z,a0", CASES)
def test_adiabatic_time_to_each_limit_matches_quadrature(n, m, z, a0):
    T0 = 373.15
    targets = [T0 + 20.0, T0 + 100.0, T0 + 200.0]
    src = source(n, m, z, a0)
    hist = integrate_history(adiabatic_model(src, T0, targets))
    params, lim, horizon = samples_from_models([adiabatic_model(src, T0, targets)])
    batch = first_crossing_times_arrhenius(params, lim, horizon).times[0]
    for i, T in enumerate(targets):
        if T - T0 >= (1 - a0) * DH / CP:
            continue  # beyond the adiabatic end temperature
        ref = quadrature_time(T0, T, n, m, z, a0)  # mpmath.quad
        assert hist.time_to(f"L{i}") == pytest.approx(ref, rel=1e-7)  # one-case engine
        assert batch[i] == pytest.approx(ref, rel=1e-6)  # vectorised engine


def test_vectorised_and_one_case_engines_agree_with_heat_loss():
    # reference: the one-case engine (scipy Radau at rtol 1e-9, checked against quadrature above)
    rng = np.random.default_rng(7)
    models = []
    for _ in range(24):
        n = float(rng.choice([0.0, 0.5, 1.0, 2.0]))
        m = float(rng.choice([0.5, 1.0, 2.0]))
        z = float(10 ** rng.uniform(-3, -0.5))
        a0 = float(rng.choice([0.0, 0.02, 0.1]))
        src = source(n, m, z, a0, e=float(rng.uniform(80e3, 150e3)), dh=float(rng.uniform(200e3, 800e3)))
        T0 = float(rng.uniform(340.0, 400.0))
        ua = float(rng.choice([0.0, rng.uniform(1e-3, 5e-2)]))
        models.append(ScreeningModel(1.0, CP, 0.0, ua, T0 - 5.0, T0, 3e6, arrhenius_sources=(src,),
                                     limits=(Limit("a", T0 + 10.0), Limit("b", T0 + 60.0))))
    params, lim, horizon = samples_from_models(models)
    res = first_crossing_times_arrhenius(params, lim, horizon)
    reached = 0
    for i, md in enumerate(models):
        h = integrate_history(md)
        for j, name in enumerate(("a", "b")):
            t1 = h.time_to(name)
            if t1 is None:
                assert np.isnan(res.times[i, j])
            else:
                reached += 1
                assert res.times[i, j] == pytest.approx(t1, rel=1e-6)
        assert res.peak_temperature[i] == pytest.approx(h.peak_temperature, rel=1e-6)
    assert reached > 10


def test_cooling_then_accelerating_sample_is_followed_to_the_end():
    # an autocatalytic source can speed up after the contents have started to cool: the vectorised engine
    # must not finish such a sample early (reference: the one-case engine)
    src = source(1.0, 1.0, 0.001, 0.0, k=1e-3, e=60e3)
    md = ScreeningModel(1.0, CP, 0.0, 0.004, 313.15, 330.0, 60 * 86400.0, arrhenius_sources=(src,),
                        limits=(Limit("hot", 360.0),))
    h = integrate_history(md)
    assert h.temperature.min() < 315.0  # it cools to near the ambient first, then runs away
    t1 = h.time_to("hot")
    assert t1 is not None
    params, lim, horizon = samples_from_models([md])
    assert first_crossing_times_arrhenius(params, lim, horizon).times[0, 0] == pytest.approx(t1, rel=1e-6)


# ------------------------------------------------------------------ the conversion of maximum rate


@pytest.mark.parametrize("z", [0.001, 0.02, 0.3, 0.9])
def test_conversion_of_maximum_rate_n1_m1(z):
    # d ln f / d alpha = -1/(1 - alpha) + 1/(alpha + z) = 0  ->  alpha* = (1 - z) / 2 (by hand)
    assert conversion_of_maximum_rate(1.0, 1.0, z) == pytest.approx((1 - z) / 2, abs=1e-12)


def test_conversion_of_maximum_rate_other_forms():
    # m = 1: 1 - alpha = n (alpha + z)  ->  alpha* = (1 - n z) / (1 + n) (by hand)
    assert conversion_of_maximum_rate(2.0, 1.0, 0.01) == pytest.approx((1 - 0.02) / 3, abs=1e-12)
    # n = 1, m = 2: 2 alpha (1 - alpha) = alpha^2 + z  ->  3 alpha^2 - 2 alpha + z = 0, larger root (by hand)
    z = 0.1
    assert conversion_of_maximum_rate(1.0, 2.0, z) == pytest.approx((2 + math.sqrt(4 - 12 * z)) / 6, abs=1e-12)
    # z >= 1 with n = m = 1: the rate only falls, alpha* = 0; n = 0: the rate grows to full conversion
    assert conversion_of_maximum_rate(1.0, 1.0, 2.0) == 0.0
    assert conversion_of_maximum_rate(0.0, 1.0, 0.1) == 1.0
    # material already past alpha*: its own conversion
    assert conversion_of_maximum_rate(1.0, 1.0, 0.02, 0.7) == 0.7
    # n-th order (m = 0): the initial conversion
    assert conversion_of_maximum_rate(1.5, 0.0, 0.0, 0.1) == 0.1


def test_steady_criteria_take_the_rate_at_the_conversion_of_maximum_rate():
    src = source(1.0, 1.0, 0.02)
    a_star = (1 - 0.02) / 2  # by hand, as above
    assert rate_conversion(src) == pytest.approx(a_star, abs=1e-12)
    T = 390.0
    expected = DH * float(k_of(T)) * (1 - a_star) * (a_star + 0.02)  # q = dh k(T) f(alpha*), by hand
    assert heat_generation(T, 1.0, [src]) == pytest.approx(expected, rel=1e-12)
    assert conversion_function(a_star, 1.0, 1.0, 0.02) / conversion_function(0.0, 1.0, 1.0, 0.02) == \
        pytest.approx(0.51 * 0.51 / 0.02, rel=1e-12)
    # the same material as a zero-order source at the maximum rate has the same Semenov critical ambient
    equivalent = ArrheniusSource(DH * K_REF * (1 - a_star) * (a_star + 0.02), T_REF, E)
    a = semenov_critical_ambient(1000.0, [src], 0.0, 5.0).ambient
    b = semenov_critical_ambient(1000.0, [equivalent], 0.0, 5.0).ambient
    assert a == pytest.approx(b, rel=1e-12)


# ------------------------------------------------------------------ induction time, TMRad, T_D24


@pytest.mark.parametrize("z,a0,T", [(0.02, 0.0, 423.15), (0.001, 0.0, 400.0), (0.05, 0.1, 380.0),
                                    (0.3, 0.2, 450.0)])
def test_isothermal_induction_time_matches_the_logistic_solution(z, a0, T):
    # n = m = 1 at constant T: d(alpha)/dt = k (1 - alpha)(alpha + z). With
    # 1 / ((1 - alpha)(alpha + z)) = [1 / (1 - alpha) + 1 / (alpha + z)] / (1 + z),
    # k (1 + z) t = ln[(alpha + z)(1 - alpha0) / ((alpha0 + z)(1 - alpha))]: the logistic solution
    # (alpha + z) / (1 - alpha) = (alpha0 + z) / (1 - alpha0) exp(k (1 + z) t). At the maximum rate
    # alpha* = (1 - z) / 2 the ratio (alpha* + z) / (1 - alpha*) is 1, so
    # t_ind = ln[(1 - alpha0) / (alpha0 + z)] / (k (1 + z)).
    k = float(k_of(T))
    expected = math.log((1 - a0) / (a0 + z)) / (k * (1 + z))
    assert isothermal_induction_time(T, source(1.0, 1.0, z, a0)) == pytest.approx(expected, rel=1e-9)


def test_induction_time_is_zero_past_the_maximum_rate():
    assert isothermal_induction_time(400.0, source(1.0, 1.0, 0.02, 0.6)) == 0.0


def _tmr_by_quadrature(T0, n, m, z, a0):
    """mpmath: the conversion where d ln(rate)/d alpha = 0 along the adiabat (bisection), then the quadrature."""
    mpmath.mp.dps = 30
    dT = DH / CP

    def slope(a):
        T = T0 + dT * (a - a0)
        return E / (R * T ** 2) * dT - n / (1 - a) + m * a ** (m - 1) / (a ** m + z)

    lo, hi = mpmath.mpf(a0) + mpmath.mpf("1e-25"), mpmath.mpf(1) - mpmath.mpf("1e-25")
    for _ in range(200):
        mid = (lo + hi) / 2
        lo, hi = (mid, hi) if slope(mid) > 0 else (lo, mid)
    return float(mpmath.quad(lambda a: 1 / (k_of(T0 + dT * (a - a0)) * (1 - a) ** n * (a ** m + z)),
                             [a0, (a0 + lo) / 2, lo]))


@pytest.mark.parametrize("n,m,z,a0,T0", [(1.0, 1.0, 0.02, 0.0, 373.15), (1.0, 1.0, 0.02, 0.1, 373.15),
                                         (0.5, 1.0, 0.02, 0.0, 393.15), (2.0, 0.5, 0.01, 0.05, 373.15),
                                         (1.5, 2.0, 0.001, 0.0, 403.15)])
def test_tmr_of_the_integrated_adiabatic_history_matches_quadrature(n, m, z, a0, T0):
    ref = _tmr_by_quadrature(T0, n, m, z, a0)  # mpmath
    assert tmr_adiabatic_integrated(T0, CP, [source(n, m, z, a0)]) == pytest.approx(ref, rel=1e-7)


def test_t_d24_of_the_integrated_history_has_a_tmrad_of_24_h():
    src = source(1.0, 1.0, 0.02)
    td24 = t_d24_integrated(CP, [src])
    assert 380.0 < td24 < 450.0
    assert _tmr_by_quadrature(td24, 1.0, 1.0, 0.02, 0.0) == pytest.approx(86400.0, rel=1e-6)  # mpmath
