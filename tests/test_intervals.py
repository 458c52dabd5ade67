"""Runs of True and bisection of their edges: fast kernels against their slow twins and exact answers."""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from planner.visibility.intervals import refine_edge_slow, refine_edges, true_runs, true_runs_slow

T0 = np.datetime64("2034-03-16T00:00:00", "ns")


@given(st.lists(st.booleans(), max_size=60), st.lists(st.integers(0, 2), max_size=60))
@settings(max_examples=200, deadline=None)
def test_true_runs_matches_slow_twin(mask, seg_steps):
    mask = np.array(mask, dtype=bool)
    segment = np.cumsum(np.resize(np.array(seg_steps or [0]), mask.size) > 1)
    for seg in (None, segment):
        fast = true_runs(mask, seg)
        slow = true_runs_slow(mask, seg)
        assert np.array_equal(fast[0], slow[0]) and np.array_equal(fast[1], slow[1])
    # Every True sample lies in exactly one run.
    first, last = true_runs(mask, segment)
    assert (last - first + 1).sum() == mask.sum()


def test_runs_are_cut_where_the_segment_changes():
    mask = np.array([True, True, True, False, True])
    first, last = true_runs(mask, np.array([0, 0, 1, 1, 1]))
    assert list(first) == [0, 2, 4] and list(last) == [1, 2, 4]


@given(st.lists(st.floats(1.0, 3599.0), min_size=1, max_size=20), st.floats(1.0, 60.0))
@settings(max_examples=40, deadline=None)
def test_bisection_brackets_known_thresholds(offsets_s, tol_s):
    # Condition "t < T0 + x_i" with each threshold x_i inside [T0, T0 + 1 h]: the exact crossing is x_i.
    x = (np.array(offsets_s) * 1e9).astype(np.int64).astype("timedelta64[ns]")
    calls = []

    def holds(t):
        calls.append(1)
        return t < T0 + x

    t_in, t_out = refine_edges(holds, np.full(x.size, T0), np.full(x.size, T0 + np.timedelta64(3600, "s")), tol_s)
    assert np.all(t_in < T0 + x) and np.all(t_out >= T0 + x)
    assert np.all((t_out - t_in) <= np.timedelta64(int(tol_s * 1e9), "ns"))
    # All brackets are halved together: log2(3600 / tol) calls, not one per bracket.
    assert len(calls) <= int(np.ceil(np.log2(3600.0 / tol_s))) + 1
    # The slow twin steps toward the same crossing.
    for i in range(1):
        slow = refine_edge_slow(lambda t, i=i: t < T0 + x[i], T0, T0 + np.timedelta64(3600, "s"), tol_s)
        assert abs((slow - t_in[i]).astype(np.int64)) <= tol_s * 1e9


def test_bisection_works_backwards_in_time():
    # A window's start: true at the later sample, false at the earlier one.
    edge = T0 + np.timedelta64(1234, "s")
    t_in, t_out = refine_edges(lambda t: t >= edge, np.array([T0 + np.timedelta64(3000, "s")]), np.array([T0]), 5.0)
    assert t_out[0] < edge <= t_in[0] and (t_in[0] - t_out[0]) <= np.timedelta64(5, "s")
