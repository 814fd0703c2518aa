"""Tests of screening.runaway_criteria against sources outside the project.

Check values name their source beside them.  References are those of
/work/shared/references.md; "from memory" marks a recalled value, "derived"
a short derivation written out in the test.
"""
from __future__ import annotations

import math
import time
import warnings

import mpmath
import numpy as np
import pytest
import sympy
from hypothesis import HealthCheck, given, settings, strategies as st
from scipy.integrate import quad, solve_bvp, solve_ivp
from scipy.optimize import brentq, fsolve, minimize_scalar

from screening.core import runaway as rc
from screening.core.arrhenius import arrhenius_specific_power
from screening.core.model import GAS_CONSTANT, ArrheniusSource, ConstantSource, DecayingSource, HeatingMedium

# Any numpy RuntimeWarning (overflow, divide, invalid) fails the test.
pytestmark = pytest.mark.filterwarnings("error::RuntimeWarning")

R = 8.314462618  # J/(mol K), CODATA 2018 (references.md)
HOUR = 3600.0


def zero_order(q=1.0, t_ref=400.0, e=100e3, **kw):
    return ArrheniusSource(specific_power=q, reference_temperature=t_ref,
                           activation_energy=e, **kw)


def q_explicit(t, q_ref, t_ref, e):
    """Arrhenius law k = A exp(-E/(R T)) written out (references.md)."""
    return q_ref * math.exp(-e / R * (1.0 / t - 1.0 / t_ref))


# --------------------------------------------------------------------------
# Heat balance pieces
# --------------------------------------------------------------------------

def test_gas_constant_is_codata():
    assert GAS_CONSTANT == R  # CODATA 2018 (references.md)


def test_heat_generation_matches_arrhenius_law():
    # Same law as screening.arrhenius (consistency with the simulator).
    sources = [zero_order(2.0, 380.0, 90e3),
               ArrheniusSource(0.5, 420.0, 140e3, order=1.5, specific_heat_of_reaction=4e5)]
    t = np.linspace(280.0, 520.0, 25)
    x = [0.0, 0.3]
    expected = 150.0 + 800.0 * sum(
        arrhenius_specific_power(t, s.specific_power, s.reference_temperature,
                                 s.activation_energy, xi, s.order)
        for s, xi in zip(sources, x))
    got = rc.heat_generation(t, 800.0, sources, 150.0, conversion=x)
    np.testing.assert_allclose(got, expected, rtol=1e-12)


def test_heat_generation_slope_matches_sympy_derivative():
    # Reference library: sympy symbolic differentiation.
    T = sympy.symbols("T", positive=True)
    srcs = [(2.0, 380.0, 90e3), (0.5, 420.0, 140e3)]
    m = 800.0
    expr = m * sum(q * sympy.exp(-e / R * (1 / T - 1 / tr)) for q, tr, e in srcs)
    d = sympy.lambdify(T, sympy.diff(expr, T))
    sources = [zero_order(q, tr, e) for q, tr, e in srcs]
    for t in (300.0, 365.0, 450.0):
        assert rc.heat_generation_slope(t, m, sources) == pytest.approx(d(t), rel=1e-11)


def test_heat_loss_lumps_ambient_and_media():
    media = [HeatingMedium(medium_temperature=420.0, ua=30.0)]
    t = np.array([300.0, 350.0])
    expected = 50.0 * (t - 290.0) + 30.0 * (t - 420.0)  # definition in the brief
    np.testing.assert_allclose(rc.heat_loss(t, 50.0, 290.0, media), expected)


# --------------------------------------------------------------------------
# TMRad (Townsend and Tou 1980) and T_D24
# --------------------------------------------------------------------------

def test_tmr_single_source_is_townsend_tou_formula():
    # TMRad = c_p R T0^2 / (q0 E): Townsend & Tou, Thermochim. Acta 37 (1980) 1-30.
    cp, src = 1800.0, zero_order(0.8, 390.0, 120e3)
    for t0 in (330.0, 360.0, 400.0):
        q0 = q_explicit(t0, 0.8, 390.0, 120e3)
        assert rc.tmr_adiabatic(t0, cp, [src]) == pytest.approx(cp * R * t0 ** 2 / (q0 * 120e3),
                                                                rel=1e-12)


def test_tmr_sum_form_is_cp_over_rate_derivative():
    # Sum form c_p / sum(dq_i/dT); derivative from sympy (reference library).
    T = sympy.symbols("T", positive=True)
    srcs = [(0.8, 390.0, 120e3), (0.05, 350.0, 60e3), (3.0, 450.0, 180e3)]
    q_total = sum(q * sympy.exp(-e / R * (1 / T - 1 / tr)) for q, tr, e in srcs)
    dq = sympy.lambdify(T, sympy.diff(q_total, T))
    sources = [zero_order(*s) for s in srcs]
    temps = np.array([300.0, 340.0, 380.0, 420.0])
    got = rc.tmr_adiabatic(temps, 2100.0, sources)
    assert got.shape == temps.shape  # vectorised
    np.testing.assert_allclose(got, [2100.0 / dq(t) for t in temps], rtol=1e-11)


def test_tmr_two_equal_sources_halve_the_time():
    one = rc.tmr_adiabatic(360.0, 2000.0, [zero_order()])
    two = rc.tmr_adiabatic(360.0, 2000.0, [zero_order(), zero_order()])
    assert two == pytest.approx(one / 2, rel=1e-13)


def test_tmr_without_temperature_dependence_is_infinite():
    assert rc.tmr_adiabatic(350.0, 2000.0, []) == math.inf
    assert rc.tmr_adiabatic(350.0, 2000.0, [zero_order(e=0.0)]) == math.inf
    assert rc.tmr_adiabatic(350.0, 2000.0, [zero_order(q=0.0)]) == math.inf


def test_tmr_conversion_uses_order():
    src = ArrheniusSource(1.0, 400.0, 100e3, order=2.0, specific_heat_of_reaction=3e5)
    t0 = rc.tmr_adiabatic(380.0, 2000.0, [src])
    assert rc.tmr_adiabatic(380.0, 2000.0, [src], conversion=0.5) == pytest.approx(t0 / 0.25)


def _exact_zero_order_time_quad(t0, t_final, gamma, cp=2000.0, q0=1.0):
    """Exact adiabatic time t = int c_p / q(T) dT for zero order, scipy quad."""
    e = gamma * R * t0

    def integrand(t):
        return cp / q0 * math.exp(e / R * (1.0 / t - 1.0 / t0))

    value, _ = quad(integrand, t0, t_final, epsabs=0.0, epsrel=1e-12, limit=200,
                    points=[t0 * (1 + 1 / gamma), t0 * (1 + 10 / gamma)])
    return value


def _exact_zero_order_time_ei(t0, t_final, gamma, cp=2000.0, q0=1.0):
    """Same integral in closed form with the exponential integral (mpmath):
    d/dT [T exp(b/T) - b Ei(b/T)] = exp(b/T), b = E/R (derived)."""
    mpmath.mp.dps = 60
    b = mpmath.mpf(gamma) * t0

    def antiderivative(t):
        t = mpmath.mpf(t)
        return t * mpmath.exp(b / t) - b * mpmath.ei(b / t)

    return float(cp / q0 * (antiderivative(t_final) - antiderivative(t0)) * mpmath.exp(-b / t0))


def test_townsend_tou_is_asymptote_of_exact_zero_order_time():
    # Note: the integral to T = infinity diverges for the full Arrhenius law
    # (q tends to the pre-exponential rate, so 1/q stays finite), so the exact
    # time is taken to T_f = 2 T0; the part beyond is exponentially small in
    # gamma = E/(R T0).  Expanding s/(1+s) in the integral gives
    # exact/TT = 1 + 2/gamma + O(gamma^-2) (derived).
    t0, cp, q0 = 350.0, 2000.0, 1.0
    ratios = []
    for gamma in (20.0, 40.0, 80.0, 160.0):
        src = zero_order(q0, t0, gamma * R * t0)
        tt = rc.tmr_adiabatic(t0, cp, [src])
        exact_quad = _exact_zero_order_time_quad(t0, 2 * t0, gamma, cp, q0)
        exact_ei = _exact_zero_order_time_ei(t0, 2 * t0, gamma, cp, q0)
        assert exact_quad == pytest.approx(exact_ei, rel=1e-9)  # two independent evaluations
        ratio = exact_quad / tt
        assert ratio > 1.0  # Townsend-Tou is conservative for zero order
        assert (ratio - 1.0) * gamma == pytest.approx(2.0, rel=6.0 / gamma)
        ratios.append(ratio)
    assert all(a > b for a, b in zip(ratios, ratios[1:]))
    assert ratios[-1] - 1.0 < 0.015


def test_exact_time_matches_adiabatic_simulation():
    # scipy solve_ivp of c_p dT/dt = q(T), stopped at 2 T0, vs the quadrature
    # used above: guards the reference itself.
    t0, gamma, cp = 350.0, 30.0, 2000.0
    e = gamma * R * t0

    def rhs(t, y):
        return [q_explicit(min(y[0], 2 * t0), 1.0, t0, e) / cp]

    def reach(t, y):
        return y[0] - 2 * t0

    reach.terminal = True
    sol = solve_ivp(rhs, (0.0, 1e9), [t0], events=reach, rtol=1e-11, atol=1e-9,
                    method="DOP853")
    assert sol.t_events[0][0] == pytest.approx(_exact_zero_order_time_quad(t0, 2 * t0, gamma, cp),
                                               rel=1e-7)


def test_t_d24_single_source_against_mpmath_root():
    # Root of c_p R T^2 / (q(T) E) = 24 h with mpmath.findroot (reference library).
    cp, q_ref, t_ref, e = 1900.0, 2.0, 420.0, 110e3
    src = zero_order(q_ref, t_ref, e)
    mpmath.mp.dps = 30

    def f(t):
        q = q_ref * mpmath.exp(-e / R * (1 / t - 1 / t_ref))
        return mpmath.log(cp * R * t ** 2 / (q * e)) - mpmath.log(86400)

    expected = float(mpmath.findroot(f, 360))
    got, warns = rc.t_d24(cp, [src], full_output=True)
    assert got == pytest.approx(expected, abs=1e-9)
    assert rc.tmr_adiabatic(got, cp, [src]) == pytest.approx(24 * HOUR, rel=1e-10)
    assert rc.WARNING_ZERO_CONVERSION in warns
    assert any("Arrhenius source 1" in w and "below" in w for w in warns)  # extrapolated


def test_t_d24_none_when_no_root_in_range():
    slow = zero_order(1e-25, 400.0, 150e3)  # TMRad > 24 h even at 1500 K
    value, warns = rc.t_d24(2000.0, [slow], full_output=True)
    assert value is None and any("exceeds 24 h" in w for w in warns)
    fast = zero_order(1e5, 250.0, 80e3)  # TMRad about 21 min at 200 K
    value, warns = rc.t_d24(2000.0, [fast], full_output=True)
    assert value is None and any("already" in w for w in warns)
    assert rc.t_d24(2000.0, []) is None


def test_t_d24_target_time():
    src = zero_order(2.0, 420.0, 110e3)
    t8 = rc.t_d24(1900.0, [src], target_time=8 * HOUR)
    assert rc.tmr_adiabatic(t8, 1900.0, [src]) == pytest.approx(8 * HOUR, rel=1e-10)
    assert t8 > rc.t_d24(1900.0, [src])


@pytest.mark.parametrize("depth", [0.1, 1e-6])
def test_t_d24_non_monotone_tmr_takes_lowest_crossing(depth):
    # With a small E, ln TMRad = const + 2 ln T + E/(R T) has its minimum at
    # T = E/(2R) (derived).  Scale the rate so that the minimum sits just below
    # 24 h; depth 1e-6 makes the dip narrower than the search grid.
    e, cp = 10e3, 2000.0
    t_min = e / (2 * R)
    base = zero_order(1.0, 500.0, e)
    tmr_min = cp * R * t_min ** 2 / (q_explicit(t_min, 1.0, 500.0, e) * e)
    src = zero_order(tmr_min / (86400 * (1 - depth)), 500.0, e)

    def g(t):
        return math.log(cp * R * t ** 2 / (q_explicit(t, src.specific_power, 500.0, e) * e)) \
            - math.log(86400)

    expected = brentq(g, 200.0, t_min, xtol=1e-13)  # scipy brentq on the explicit formula
    assert rc.t_d24(cp, [src]) == pytest.approx(expected, abs=1e-6)
    assert rc.t_d24(cp, [base]) is None or rc.t_d24(cp, [base]) < expected


# --------------------------------------------------------------------------
# Semenov
# --------------------------------------------------------------------------

def test_semenov_tangency_single_zero_order_source():
    # Tangency pair (Semenov 1928, references.md): m q(Tc) E/(R Tc^2) = UA and
    # Ta,c = Tc - R Tc^2 / E; solving the pair for Tc gives the classic
    # Tc = E/(2R) (1 - sqrt(1 - 4 R Ta,c / E)) (derived).
    m, ua, q_ref, t_ref, e = 5000.0, 40.0, 0.02, 380.0, 110e3
    ta_c, t_c = rc.semenov_critical_ambient(m, [zero_order(q_ref, t_ref, e)], 0.0, ua)
    assert m * q_explicit(t_c, q_ref, t_ref, e) * e / (R * t_c ** 2) == pytest.approx(ua, rel=1e-10)
    assert ta_c == pytest.approx(t_c - R * t_c ** 2 / e, rel=1e-12)
    assert t_c == pytest.approx(e / (2 * R) * (1 - math.sqrt(1 - 4 * R * ta_c / e)), rel=1e-10)
    # Approximation Tc - Ta,c ~ R Ta^2 / E (references.md); for E/(R Ta) ~ 36 it
    # is within ~2 R Ta / E of the exact value.
    gap = t_c - ta_c
    assert gap == pytest.approx(R * ta_c ** 2 / e, rel=3 * R * ta_c / e)


def test_semenov_tangency_with_power_and_medium_against_fsolve():
    # scipy fsolve on the two tangency equations written out.
    m, p, ua, e = 3000.0, 800.0, 60.0, 95e3
    media = [HeatingMedium(medium_temperature=360.0, ua=25.0)]
    sources = [zero_order(0.01, 370.0, e), zero_order(0.002, 400.0, 160e3)]

    def q_sum(t):
        return sum(q_explicit(t, s.specific_power, s.reference_temperature, s.activation_energy)
                   for s in sources)

    def dq_sum(t):
        return sum(q_explicit(t, s.specific_power, s.reference_temperature, s.activation_energy)
                   * s.activation_energy / (R * t ** 2) for s in sources)

    def equations(v):
        ta, tc = v
        return [p + m * q_sum(tc) - ua * (tc - ta) - 25.0 * (tc - 360.0),
                m * dq_sum(tc) - (ua + 25.0)]

    ta_c, t_c = rc.semenov_critical_ambient(m, sources, p, ua, media)
    ref = fsolve(equations, [ta_c - 5, t_c + 5], xtol=1e-13)
    assert ta_c == pytest.approx(ref[0], abs=1e-7)
    assert t_c == pytest.approx(ref[1], abs=1e-7)


def _balance(t, m, sources, p, ua, ta, media=()):
    """Explicit heat balance F = gen - loss (written out from the brief)."""
    gen = p + m * sum(q_explicit(t, s.specific_power, s.reference_temperature,
                                 s.activation_energy) for s in sources)
    loss = ua * (t - ta) + sum(k.ua * (t - k.medium_temperature) for k in media)
    return gen, loss


def test_steady_states_balance_and_stability():
    m, ua, sources = 5000.0, 40.0, [zero_order(0.02, 380.0, 110e3)]
    ta_c, t_c = rc.semenov_critical_ambient(m, sources, 0.0, ua)
    ta = ta_c - 15.0
    stable, unstable = rc.steady_states(m, sources, 0.0, ua, ta)
    assert stable < t_c < unstable
    for t in (stable, unstable):
        gen, loss = _balance(t, m, sources, 0.0, ua, ta)
        assert abs(gen - loss) <= 1e-9 * gen  # balance to 1e-9 relative
    h = 1e-4  # central differences of the explicit balance

    def slope(t):
        f1 = np.subtract(*_balance(t + h, m, sources, 0.0, ua, ta))
        f0 = np.subtract(*_balance(t - h, m, sources, 0.0, ua, ta))
        return (f1 - f0) / (2 * h)

    assert slope(stable) < 0 < slope(unstable)


def test_steady_states_across_critical_ambient():
    m, ua, sources = 2000.0, 25.0, [zero_order(0.05, 400.0, 130e3)]
    ta_c, t_c = rc.semenov_critical_ambient(m, sources, 0.0, ua)
    just_below = rc.steady_states(m, sources, 0.0, ua, ta_c - 1e-6)
    assert just_below.stable < t_c < just_below.unstable
    assert just_below.unstable - just_below.stable < 0.2
    res, warns = rc.steady_states(m, sources, 0.0, ua, ta_c + 1e-6, full_output=True)
    assert res == (None, None)
    assert any("critical ambient" in w for w in warns)
    assert rc.WARNING_TRANSIENT_SOURCES in warns


def test_no_return_temperature_by_simulation():
    # Contents started just below the unstable state cool back to the stable
    # one; started just above, they run away (scipy solve_ivp of the balance).
    m, cp, ua, sources = 2000.0, 2000.0, 25.0, [zero_order(0.05, 400.0, 130e3)]
    ta = rc.semenov_critical_ambient(m, sources, 0.0, ua).ambient - 10.0
    stable, unstable = rc.steady_states(m, sources, 0.0, ua, ta)

    def rhs(t, y):
        gen, loss = _balance(min(y[0], 700.0), m, sources, 0.0, ua, ta)
        return [(gen - loss) / (m * cp)]

    def hot(t, y):
        return y[0] - (unstable + 50.0)

    hot.terminal = True
    below = solve_ivp(rhs, (0.0, 5e7), [unstable - 0.5], events=hot, rtol=1e-9, atol=1e-9)
    above = solve_ivp(rhs, (0.0, 5e7), [unstable + 0.5], events=hot, rtol=1e-9, atol=1e-9)
    assert below.t_events[0].size == 0 and below.y[0, -1] == pytest.approx(stable, abs=0.05)
    assert above.t_events[0].size == 1


def test_heating_medium_equals_shifted_ambient():
    # G (T - Teq) with G = UA + ua_m, Teq = (UA Ta + ua_m Tm)/G (definition).
    m, sources = 2000.0, [zero_order(0.05, 400.0, 130e3)]
    media = [HeatingMedium(medium_temperature=340.0, ua=10.0)]
    with_medium = rc.steady_states(m, sources, 50.0, 25.0, 300.0, media)
    g = 35.0
    lumped = rc.steady_states(m, sources, 50.0, g, (25.0 * 300.0 + 10.0 * 340.0) / g)
    assert with_medium.stable == pytest.approx(lumped.stable, rel=1e-12)
    assert with_medium.unstable == pytest.approx(lumped.unstable, rel=1e-12)


def test_semenov_degenerate_inputs():
    sources = [zero_order()]
    res, warns = rc.semenov_critical_ambient(1000.0, sources, 0.0, 0.0, full_output=True)
    assert res == (None, None) and any("UA = 0" in w for w in warns)
    assert rc.semenov_critical_ambient(1000.0, [], 100.0, 20.0) == (None, None)
    assert rc.steady_states(1000.0, sources, 0.0, 0.0, 300.0) == (None, None)
    # No Arrhenius source: exact linear steady state Ta + P/UA.
    stable, unstable = rc.steady_states(1000.0, [], 100.0, 20.0, 300.0)
    assert stable == pytest.approx(305.0) and unstable is None
    # Weak temperature dependence: the loss line is steeper everywhere.
    weak = [zero_order(1e-3, 300.0, 2e3)]
    res, warns = rc.semenov_critical_ambient(10.0, weak, 0.0, 50.0, full_output=True)
    assert res == (None, None) and any("stays below" in w for w in warns)
    stable, unstable = rc.steady_states(10.0, weak, 0.0, 50.0, 300.0)
    assert unstable is None
    gen, loss = _balance(stable, 10.0, weak, 0.0, 50.0, 300.0)
    assert gen == pytest.approx(loss, rel=1e-9)


@settings(max_examples=40, deadline=None, database=None,
          suppress_health_check=[HealthCheck.too_slow])
@given(e=st.floats(50e3, 250e3), log_q=st.floats(-6, 1), mass=st.floats(10.0, 5e4),
       ua=st.floats(1.0, 500.0), p=st.floats(0.0, 2000.0), offset=st.floats(-80.0, 30.0))
def test_steady_states_property(e, log_q, mass, ua, p, offset):
    sources = [zero_order(10 ** log_q, 380.0, e)]
    ta_c, t_c = rc.semenov_critical_ambient(mass, sources, p, ua)
    if ta_c is None:
        return
    ta = ta_c + offset
    if ta <= 20.0 or abs(offset) < 1e-6:  # at Ta = Ta,c the two states merge
        return
    stable, unstable = rc.steady_states(mass, sources, p, ua, ta)
    if offset > 0:
        assert stable is None and unstable is None
        return
    assert stable is not None and stable <= t_c
    for t in (stable, unstable):
        if t is None:
            continue
        gen, loss = _balance(t, mass, sources, p, ua, ta)
        # 1e-9 relative, floored at the resolution of T itself (1e-12 T) times
        # the loss slope: gen and loss can both be far smaller than ua * T.
        assert abs(gen - loss) <= 1e-9 * max(gen, abs(loss)) + 1e-12 * ua * t
    if unstable is not None:
        assert unstable >= t_c


# --------------------------------------------------------------------------
# Adiabatic rise, MTSR, classes (Stoessel 2008)
# --------------------------------------------------------------------------

def test_adiabatic_rise_sums_accumulated_energy():
    # Decaying source energy int_0^inf P exp(-t/a) dt = P a (scipy quad check).
    p, a = 2000.0, 3600.0
    energy, _ = quad(lambda t: p * math.exp(-t / a), 0.0, np.inf)
    assert energy == pytest.approx(p * a, rel=1e-10)
    m, cp = 4000.0, 2500.0
    src = ArrheniusSource(0.1, 400.0, 100e3, order=1.0, specific_heat_of_reaction=3e5,
                          accumulated_fraction=0.4)
    rise, warns = rc.adiabatic_temperature_rise(m, cp, [src], [DecayingSource(p, a)],
                                                full_output=True)
    assert rise == pytest.approx((p * a + m * 0.4 * 3e5) / (m * cp), rel=1e-12)
    assert warns == []


def test_adiabatic_rise_unbounded_and_constant_warning():
    rise, warns = rc.adiabatic_temperature_rise(
        1000.0, 2000.0, [zero_order()], constant_sources=[ConstantSource(100.0)],
        full_output=True)
    assert math.isinf(rise)
    assert rc.WARNING_UNBOUNDED_RISE.format(index=1) in warns
    assert rc.WARNING_CONSTANT_SOURCES_NOT_IN_RISE in warns
    assert rc.mtsr(350.0, rise) == math.inf


def test_mtsr():
    # MTSR = Tp + X_ac dT_ad (Stoessel 2008, from memory; references.md).
    assert rc.mtsr(320.0, 0.4 * 120.0) == pytest.approx(368.0)
    assert rc.mtsr(320.0, None) is None
    np.testing.assert_allclose(rc.mtsr(np.array([300.0, 310.0]), 20.0), [320.0, 330.0])


@pytest.mark.parametrize("mtsr_t, mtt, td24, expected", [
    # Stoessel 2008 criticality classes (from memory; references.md).
    (350.0, 380.0, 420.0, 1),  # MTSR < MTT < T_D24
    (350.0, 420.0, 380.0, 2),  # MTSR < T_D24 < MTT
    (380.0, 350.0, 420.0, 3),  # MTT < MTSR < T_D24
    (420.0, 350.0, 380.0, 4),  # MTT < T_D24 < MTSR
    (380.0, 420.0, 350.0, 5),  # T_D24 < MTSR < MTT
    (420.0, 380.0, 350.0, 5),  # T_D24 < MTT < MTSR
    # Ties go to the more critical class (this module's documented choice).
    (380.0, 380.0, 420.0, 3),
    (350.0, 380.0, 380.0, 2),
    (380.0, 350.0, 380.0, 4),
    (380.0, 420.0, 380.0, 5),
    (math.inf, 350.0, 380.0, 4),
    (350.0, 380.0, math.inf, 1),
])
def test_criticality_class(mtsr_t, mtt, td24, expected):
    assert rc.criticality_class(300.0, mtsr_t, mtt, td24) == expected


def test_criticality_class_missing_and_checks():
    assert rc.criticality_class(300.0, None, 380.0, 420.0) is None
    assert rc.criticality_class(300.0, 350.0, float("nan"), 420.0) is None
    assert rc.criticality_class(None, 350.0, 380.0, 420.0) == 1
    cls, warns = rc.criticality_class(400.0, 410.0, 450.0, 390.0, full_output=True)
    assert cls == 5 and any("T_D24" in w for w in warns)


@pytest.mark.parametrize("hours, three, six", [
    # Stoessel 2008 (from memory; references.md); boundaries to the more probable class.
    (0.5, "high", "frequent"), (1.0, "high", "frequent"), (4.0, "high", "probable"),
    (8.0, "high", "probable"), (12.0, "medium", "occasional"), (24.0, "medium", "occasional"),
    (30.0, "low", "seldom"), (50.0, "low", "seldom"), (75.0, "low", "remote"),
    (100.0, "low", "remote"), (150.0, "low", "almost impossible"),
    (math.inf, "low", "almost impossible"),
])
def test_tmr_probability_class(hours, three, six):
    assert rc.tmr_probability_class(hours * HOUR) == three
    assert rc.tmr_probability_class(hours * HOUR, levels=6) == six


def test_severity_class():
    # Stoessel 2008 (from memory; references.md).
    assert rc.severity_class(250.0) == "high"
    assert rc.severity_class(200.0) == "high"  # boundary: more severe
    assert rc.severity_class(120.0) == "medium"
    assert rc.severity_class(50.0) == "medium"
    low, warns = rc.severity_class(20.0, full_output=True)
    assert low == "low" and warns == [rc.WARNING_LOW_SEVERITY_PRESSURE]
    assert rc.severity_class(math.inf) == "high"
    assert rc.severity_class(None) is None and rc.tmr_probability_class(None) is None


# --------------------------------------------------------------------------
# Frank-Kamenetskii
# --------------------------------------------------------------------------

J = {"slab": 0, "cylinder": 1, "sphere": 2}


def test_fk_parameter_formula():
    # delta = (E/(R Ta^2)) rho q(Ta) r^2 / k (Frank-Kamenetskii; references.md).
    rho, r, k, e = 950.0, 0.6, 0.18, 120e3
    src = zero_order(1e-3, 330.0, e)
    ta = np.array([300.0, 320.0])
    expected = [e / (R * t ** 2) * rho * q_explicit(t, 1e-3, 330.0, e) * r ** 2 / k for t in ta]
    np.testing.assert_allclose(rc.frank_kamenetskii_parameter(ta, rho, [src], r, k), expected,
                               rtol=1e-12)


def test_fk_critical_infinite_biot_textbook_values():
    # 0.878 slab, 2.000 cylinder, 3.322 sphere (Frank-Kamenetskii; from memory,
    # references.md).
    assert rc.frank_kamenetskii_critical("slab") == pytest.approx(0.878, abs=6e-4)
    assert rc.frank_kamenetskii_critical("cylinder") == pytest.approx(2.000, abs=5e-4)
    assert rc.frank_kamenetskii_critical("sphere") == pytest.approx(3.322, abs=5e-4)


def test_fk_slab_and_cylinder_closed_forms():
    # Slab, surface at ambient: theta = theta0 - 2 ln cosh(a x), delta = 2 a^2 /
    # cosh^2 a, maximal where a tanh a = 1 (Frank-Kamenetskii's exact slab
    # solution).  Cylinder: delta_c = 2 exactly (exact cylinder solution).
    a = brentq(lambda x: x * math.tanh(x) - 1.0, 0.5, 2.0, xtol=1e-15)
    assert rc.frank_kamenetskii_critical("slab") == pytest.approx(2 * a ** 2 / math.cosh(a) ** 2,
                                                                   rel=1e-11)
    assert rc.frank_kamenetskii_critical("cylinder") == pytest.approx(2.0, rel=1e-11)
    # Slab with a Robin surface: the same solution with -theta'(1) = Bi theta(1)
    # gives delta(a) = 2 a^2 / cosh^2 a * exp(-2 a tanh a / Bi) (derived);
    # maximise with scipy minimize_scalar.
    for bi in (0.05, 0.7, 3.0, 40.0):
        res = minimize_scalar(lambda x: -2 * x * x / math.cosh(x) ** 2 * math.exp(
            -2 * x * math.tanh(x) / bi), bounds=(1e-6, 3.0), method="bounded",
            options={"xatol": 1e-10})
        assert rc.frank_kamenetskii_critical("slab", bi) == pytest.approx(-res.fun, rel=1e-9)


def _bvp_delta(j, biot, theta0):
    """delta for which the steady problem has centre rise theta0, from
    scipy solve_bvp with delta as unknown parameter (reference library)."""
    kappa = 1.0 if math.isinf(biot) else biot / (2.0 + biot)
    x = np.linspace(0.0, 1.0, 41)
    y = np.vstack([theta0 * (1 - kappa * x ** 2), -2 * kappa * theta0 * x])
    s = np.array([[0.0, 0.0], [0.0, -float(j)]])

    def f(x, y, p):
        return np.vstack([y[1], -p[0] * np.exp(y[0])])

    def bc(ya, yb, p):
        surface = yb[0] if math.isinf(biot) else yb[1] + biot * yb[0]
        return np.array([ya[1], surface, ya[0] - theta0])

    sol = solve_bvp(f, bc, x, y, p=[1.0], S=s, tol=1e-9, max_nodes=20000)
    assert sol.success, sol.message
    return float(sol.p[0])


@pytest.mark.parametrize("geometry", ["slab", "cylinder", "sphere"])
@pytest.mark.parametrize("biot", [math.inf, 4.0, 0.3])
def test_fk_critical_against_solve_bvp_turning_point(geometry, biot):
    # Steady solutions exist for delta < delta_c; along the branch (centre
    # rise theta0) delta rises, turns at delta_c and falls again.
    j = J[geometry]
    res = minimize_scalar(lambda th: -_bvp_delta(j, biot, th), bounds=(0.3, 3.5),
                          method="bounded", options={"xatol": 1e-5})
    delta_c = rc.frank_kamenetskii_critical(geometry, biot)
    assert -res.fun == pytest.approx(delta_c, rel=2e-6)
    assert _bvp_delta(j, biot, res.x - 0.3) < delta_c
    assert _bvp_delta(j, biot, res.x + 0.3) < delta_c


@pytest.mark.parametrize("geometry", ["slab", "cylinder", "sphere"])
def test_fk_solution_exists_just_below_critical(geometry):
    # solve_bvp with delta fixed at 0.98 delta_c converges to the lower branch.
    j = J[geometry]
    delta = 0.98 * rc.frank_kamenetskii_critical(geometry, 2.0)
    x = np.linspace(0.0, 1.0, 41)
    sol = solve_bvp(lambda x, y: np.vstack([y[1], -delta * np.exp(y[0])]),
                    lambda ya, yb: np.array([ya[1], yb[1] + 2.0 * yb[0]]),
                    x, np.vstack([0.5 * (1 - 0.5 * x ** 2), -0.5 * x]),
                    S=np.array([[0.0, 0.0], [0.0, -float(j)]]), tol=1e-8)
    assert sol.success


@pytest.mark.parametrize("geometry", ["slab", "cylinder", "sphere"])
def test_fk_finite_biot_lower_and_semenov_limit(geometry):
    j = J[geometry]
    bis = [1e-6, 1e-3, 0.1, 1.0, 10.0, 100.0, 1e4]
    values = [rc.frank_kamenetskii_critical(geometry, b) for b in bis]
    assert all(a < b for a, b in zip(values, values[1:]))  # rises with Bi
    assert values[-1] < rc.frank_kamenetskii_critical(geometry)  # below Bi = inf
    # Small Bi: the lumped Semenov criterion rho q V E/(R Ta^2) = h A / e with
    # V/A = r/(j+1) gives delta_c = (j+1) Bi / e (derived from references.md's
    # Semenov tangency), i.e. delta_c / ((j+1) Bi) -> 1/e.
    for b, tol in ((1e-6, 1e-5), (1e-3, 1e-3)):
        assert rc.frank_kamenetskii_critical(geometry, b) / ((j + 1) * b) == pytest.approx(
            1 / math.e, rel=tol)
    assert rc.frank_kamenetskii_critical(geometry, 0.0) == 0.0
    assert rc.frank_kamenetskii_critical(geometry, 1e-200) > 0.0


def test_fk_critical_fast_for_many_vessels():
    rng = np.random.default_rng(1)
    start = time.perf_counter()
    for b in 10 ** rng.uniform(-3, 3, 300):
        rc.frank_kamenetskii_critical("cylinder", b)
    assert time.perf_counter() - start < 2.0


def test_fk_critical_ambient():
    rho, r, k = 900.0, 1.2, 0.2
    sources = [zero_order(1e-2, 360.0, 110e3)]
    ta, warns = rc.frank_kamenetskii_critical_ambient("cylinder", 5.0, rho, sources, r, k,
                                                      full_output=True)
    assert rc.frank_kamenetskii_parameter(ta, rho, sources, r, k) == pytest.approx(
        rc.frank_kamenetskii_critical("cylinder", 5.0), rel=1e-10)
    assert rc.WARNING_FK_ARRHENIUS_ONLY in warns
    assert rc.WARNING_FK_SURFACE_AT_AMBIENT not in warns
    ta_inf, warns_inf = rc.frank_kamenetskii_critical_ambient("cylinder", math.inf, rho, sources,
                                                              r, k, full_output=True)
    assert ta_inf > ta  # the textbook constant overstates the safe range
    assert rc.WARNING_FK_SURFACE_AT_AMBIENT in warns_inf
    assert rc.frank_kamenetskii_critical_ambient("cylinder", 5.0, rho, sources, 2 * r, k) < ta
    assert rc.frank_kamenetskii_critical_ambient("cylinder", 0.0, rho, sources, r, k) is None
    assert rc.frank_kamenetskii_critical_ambient("cylinder", 5.0, rho, [], r, k) is None


def test_fk_bad_geometry():
    with pytest.raises(ValueError):
        rc.frank_kamenetskii_critical("cube")


# --------------------------------------------------------------------------
# Warnings and robustness
# --------------------------------------------------------------------------

def test_kinetics_warnings():
    src = zero_order(1.0, 400.0, 100e3)
    assert rc.kinetics_warnings([]) == []
    only = rc.kinetics_warnings([src], [405.0])
    assert only == [rc.WARNING_ZERO_CONVERSION]
    far = rc.kinetics_warnings([src], [300.0, 330.0])
    assert len(far) == 2 and "300.0 K" in far[1] and "100 K below" in far[1]
    ranged = rc.kinetics_warnings([src], [330.0], tested_range=(320.0, 420.0))
    assert ranged == [rc.WARNING_ZERO_CONVERSION]
    above = rc.kinetics_warnings([src], [470.0], tested_range=(320.0, 420.0))
    assert "50 K above its tested range" in above[1]


EXTREME_SOURCES = [
    zero_order(1e6, 250.0, 2e6),
    zero_order(1e-30, 1500.0, 1e3),
    ArrheniusSource(1e4, 200.0, 5e5, order=3.0, specific_heat_of_reaction=1e3),
]


@pytest.mark.parametrize("sources", [EXTREME_SOURCES[:1], EXTREME_SOURCES[1:2],
                                     EXTREME_SOURCES[2:], EXTREME_SOURCES])
def test_extreme_inputs_raise_no_numpy_warnings(sources):
    with warnings.catch_warnings():
        warnings.simplefilter("error", RuntimeWarning)
        with np.errstate(all="raise", under="ignore"):
            t = np.array([1.0, 50.0, 300.0, 1e4, 1e6])
            assert np.all(np.isfinite(rc.heat_generation(t, 1e6, sources, 1e3)))
            assert np.all(np.isfinite(rc.heat_generation_slope(t, 1e6, sources)))
            assert np.all(rc.tmr_adiabatic(t, 1e3, sources) >= 0)
            rc.t_d24(1e3, sources, full_output=True)
            rc.t_d24(1e3, sources, conversion=1.0, full_output=True)
            for ua in (0.0, 1e-6, 1e6):
                rc.semenov_critical_ambient(1e6, sources, 1e3, ua, full_output=True)
                rc.steady_states(1e6, sources, 1e3, ua, 300.0, full_output=True)
            for geometry in J:
                rc.frank_kamenetskii_critical_ambient(geometry, 1e-3, 1e3, sources, 10.0, 0.1,
                                                      full_output=True)
            rc.frank_kamenetskii_parameter(t, 1e3, sources, 1e-3, 100.0)
            rc.adiabatic_temperature_rise(1e-9, 1e4, sources)


def test_invalid_inputs_rejected():
    with pytest.raises(ValueError):
        rc.tmr_adiabatic(0.0, 2000.0, [zero_order()])
    with pytest.raises(ValueError):
        rc.tmr_adiabatic(300.0, 2000.0, [zero_order(e=-1.0)])
    with pytest.raises(ValueError):
        rc.tmr_adiabatic(300.0, 2000.0, [zero_order()], conversion=1.5)
    with pytest.raises(ValueError):
        rc.tmr_adiabatic(300.0, 2000.0, [zero_order()], conversion=[0.1, 0.2])
    with pytest.raises(ValueError):
        rc.tmr_probability_class(3600.0, levels=4)
