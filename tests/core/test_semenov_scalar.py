"""The float evaluator of the generation curve used inside root finding equals the array functions bit for bit.

Semenov's critical ambient and the steady states are roots found by Brent's method; each step evaluates the
generation curve at one temperature. ``rates._ScalarCurve`` does that in plain floats instead of numpy 0-d
arrays (much faster), performing the same operations in the same order. Here it is compared with the array
functions it replaces (``heat_generation``, ``_log_energy_weighted_rate``) on random sources, one to eight of
them, n-th order and autocatalytic, at random conversions: every value identical, not merely close. The
physics of both is checked against outside references in tests/core/test_runaway*.py (Semenov's relation
Ta,c = Tc - R Tc^2/E by hand, scipy brentq).
"""
from __future__ import annotations

import math

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from screening.core.model import ArrheniusSource
from screening.core.runaway import rates, semenov, tmr


def _forget():
    semenov._TANGENCIES.clear()
    semenov._STEADY_STATES.clear()


source = st.builds(
    lambda q, tref, e, n, auto, m, z, acc: ArrheniusSource(
        q, tref, e, order=n, autocatalytic_order=m if auto else 0.0, initiation=z if auto else 0.0,
        accumulated_fraction=acc),
    st.floats(1e-6, 1e3), st.floats(250.0, 600.0), st.floats(0.0, 3e5), st.sampled_from([0.0, 0.5, 1.0, 2.0]),
    st.booleans(), st.floats(0.1, 2.0), st.floats(1e-4, 1.0), st.floats(0.0, 1.0))


@settings(max_examples=300, deadline=None)
@given(st.lists(source, min_size=1, max_size=rates._SCALAR_SOURCES), st.floats(1e-3, 1e5), st.floats(0.0, 1e4),
       st.floats(200.0, 900.0), st.one_of(st.none(), st.floats(0.0, 0.99)))
def test_scalar_curve_is_the_array_curve_bit_for_bit(sources, mass, power, t, conversion):
    curve = rates._ScalarCurve(mass, sources, conversion)
    t0 = np.asarray(t)
    assert curve.generation(t, power) == float(rates.heat_generation(t0, mass, sources, power, conversion))
    a = float(rates._log_energy_weighted_rate(t0, sources, conversion))
    b = curve.log_slope_part(t)
    assert a == b or (math.isinf(a) and a == b)


@settings(max_examples=60, deadline=None)
@given(st.lists(source, min_size=1, max_size=3), st.floats(10.0, 5e4), st.floats(0.5, 500.0), st.floats(250.0, 400.0))
def test_roots_are_those_of_the_array_curve(sources, mass, ua, ambient):
    """Steady states, the critical ambient and T_D24 equal those found through the array functions."""
    _forget()
    fast = (semenov.steady_states(mass, sources, 0.0, ua, ambient),
            semenov.semenov_critical_ambient(mass, sources, 0.0, ua), tmr.t_d24(1900.0, sources))
    _forget()
    original = semenov._scalar_curve
    semenov._scalar_curve = tmr._scalar_curve = lambda *a: None  # the array functions in every root-finding step
    try:
        slow = (semenov.steady_states(mass, sources, 0.0, ua, ambient),
                semenov.semenov_critical_ambient(mass, sources, 0.0, ua), tmr.t_d24(1900.0, sources))
    finally:
        semenov._scalar_curve = tmr._scalar_curve = original
        _forget()
    assert fast == slow


def test_a_repeated_question_is_answered_from_the_cache():
    _forget()
    src = [ArrheniusSource(1.0, 400.0, 100e3)]
    first = semenov.semenov_critical_ambient(1000.0, src, 0.0, 50.0)
    assert len(semenov._TANGENCIES) == 1
    assert semenov.semenov_critical_ambient(1000.0, src, 0.0, 50.0) == first
    assert len(semenov._TANGENCIES) == 1
    states, warnings = semenov.steady_states(1000.0, src, 0.0, 50.0, 300.0, full_output=True)
    warnings.append("changed by the caller")
    again, warnings_again = semenov.steady_states(1000.0, src, 0.0, 50.0, 300.0, full_output=True)
    assert again == states and "changed by the caller" not in warnings_again
    assert len(semenov._STEADY_STATES) == 1
