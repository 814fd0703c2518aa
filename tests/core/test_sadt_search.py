"""The SADT search on the 5 °C grid and the control / emergency temperature table.

Check values: the table of control and emergency temperatures for single packagings and IBCs, UN
Model Regulations (from memory; /work/shared/references.md): SADT <= 20 °C: SADT - 20 K and SADT - 10 K;
20 °C < SADT <= 35 °C: SADT - 15 K and SADT - 10 K; SADT > 35 °C: SADT - 10 K and SADT - 5 K. The search
is checked against a full scan of the grid (the definition: the lowest triggering multiple of 5 °C, UN
Manual of Tests and Criteria, test series H, from memory).
"""
from __future__ import annotations

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from screening.core import sadt as cs

C0 = 273.15


@pytest.mark.parametrize("sadt_c, control_c, emergency_c", [
    # UN Model Regulations table (from memory), band by band and at both band edges
    (-10.0, -30.0, -20.0),
    (20.0, 0.0, 10.0),     # 20 °C is in the first band (SADT <= 20 °C)
    (25.0, 10.0, 15.0),    # first step of the second band
    (35.0, 20.0, 25.0),    # 35 °C is in the second band (SADT <= 35 °C)
    (40.0, 30.0, 35.0),    # first step of the third band
    (75.0, 65.0, 70.0),
])
def test_control_and_emergency_table_band_edges(sadt_c, control_c, emergency_c):
    control, emergency = cs.control_and_emergency_temperatures(C0 + sadt_c)
    assert control - C0 == pytest.approx(control_c, abs=1e-9)
    assert emergency - C0 == pytest.approx(emergency_c, abs=1e-9)


def test_table_just_above_the_band_edges():
    # a hair above 20 °C and 35 °C is in the next band (the table, from memory)
    c, e = cs.control_and_emergency_temperatures(C0 + 20.001)
    assert (c - C0, e - C0) == pytest.approx((5.001, 10.001))
    c, e = cs.control_and_emergency_temperatures(C0 + 35.001)
    assert (c - C0, e - C0) == pytest.approx((25.001, 30.001))


def test_grid_and_bound():
    # -40 °C to 200 °C in 5 °C steps (the search range; test series H steps, from memory)
    g = cs.sadt_grid()
    assert g[0] - C0 == pytest.approx(-40.0) and g[-1] - C0 == pytest.approx(200.0) and len(g) == 49
    # 50 K above the top of the tested range, at most 200 °C; without a tested range: 200 °C
    assert cs.search_bound([C0 + 90.0, C0 + 60.0]) - C0 == pytest.approx(140.0)
    assert cs.search_bound([C0 + 92.0]) - C0 == pytest.approx(140.0)  # rounded down to a multiple of 5 °C
    assert cs.search_bound([C0 + 90.0, None]) - C0 == pytest.approx(200.0)
    assert cs.round_up_to_step(C0 + 74.04) - C0 == pytest.approx(75.0)
    assert cs.round_up_to_step(C0 + 75.0) - C0 == pytest.approx(75.0)


def _scan(grid, threshold_index):
    """Full scan: the lowest grid index that triggers (the definition), or None."""
    hits = [i for i in range(len(grid)) if i >= threshold_index]
    return hits[0] if hits else None


@settings(max_examples=300, deadline=None)
@given(st.integers(0, 60), st.integers(-5, 60), st.integers(3, 49))
def test_search_equals_a_full_scan_for_any_start(threshold, start, size):
    # any monotonic trigger, any start: the galloping search and a full scan agree
    grid = cs.sadt_grid()[:size]
    tried = []

    def trial(ta):
        tried.append(ta)
        i = int(round((ta - grid[0]) / 5.0))
        return cs.SadtTrial(ta, i >= threshold, None, ta, ta)

    res = cs.search_sadt(trial, grid, start)
    expected = _scan(grid, threshold)
    assert (res.sadt is None) == (expected is None)
    if expected is not None:
        assert res.sadt == pytest.approx(grid[expected])
    assert len(set(tried)) == len(tried)  # no trial twice
    assert len(tried) <= 2 * len(grid).bit_length() + 2  # logarithmic, not a scan
    assert [t.ambient for t in res.trials] == sorted(t.ambient for t in res.trials)


def test_search_from_the_right_start_takes_two_trials():
    # started at the step at or above the critical ambient, a SADT there costs two integrations
    grid = cs.sadt_grid()
    n = []

    def trial(ta):
        n.append(ta)
        return cs.SadtTrial(ta, ta >= C0 + 75.0 - 1e-9, None, ta, ta)

    res = cs.search_sadt(trial, grid, cs.start_index(grid, C0 + 74.04))
    assert res.sadt - C0 == pytest.approx(75.0) and len(n) == 2


@settings(max_examples=100, deadline=None)
@given(st.lists(st.tuples(st.integers(0, 60), st.integers(-5, 60), st.integers(3, 49)), min_size=1, max_size=12))
def test_lockstep_search_equals_the_one_package_search_and_a_full_scan(packages):
    # many packages at once (any monotonic trigger, start and grid each): the same answer and the same trials
    # as the one-package search, and the answer of a full scan of the grid
    grids = [cs.sadt_grid()[:size] for _, _, size in packages]

    def trigger(p, ta):
        threshold = packages[p][0]
        i = int(round((ta - grids[p][0]) / 5.0))
        return cs.SadtTrial(ta, i >= threshold, None, ta, ta)

    rounds = []

    def trials(requests):
        assert len({p for p, _ in requests}) == len(requests)  # one request per package and round
        rounds.append(len(requests))
        return [trigger(p, ta) for p, ta in requests]

    many = cs.search_sadt_lockstep(trials, grids, [start for _, start, _ in packages])
    for p, (threshold, start, size) in enumerate(packages):
        one = cs.search_sadt(lambda ta, p=p: trigger(p, ta), grids[p], start)
        assert many[p] == one
        expected = _scan(grids[p], threshold)
        assert (many[p].sadt is None) == (expected is None)
        if expected is not None:
            assert many[p].sadt == pytest.approx(grids[p][expected])
    assert sum(rounds) == sum(len(r.trials) for r in many)  # every trial asked once


def test_lockstep_search_keeps_a_failed_package_apart():
    # a package whose trial fails ends with that exception; the others finish their searches
    grid = cs.sadt_grid()
    boom = RuntimeError("step cap")

    def trials(requests):
        return [boom if p == 1 else cs.SadtTrial(ta, ta >= C0 + 40.0 - 1e-9, None, ta, ta) for p, ta in requests]

    res = cs.search_sadt_lockstep(trials, [grid, grid, grid], [0, 10, 40])
    assert res[1] is boom
    assert res[0].sadt - C0 == pytest.approx(40.0) and res[2].sadt - C0 == pytest.approx(40.0)
