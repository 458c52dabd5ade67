"""Objective kernels against their slow twins and against hand-worked cases."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from planner.schedule.cells import arc_gains
from planner.schedule.objective import (
    alias_freq_grid,
    arc_mask,
    arc_mask_slow,
    coverage_gains_slow,
    excess_gap_h,
    excess_gap_h_slow,
    point_mask,
    window_sum,
    window_sum_slow,
)


def test_arc_covering_a_whole_period_touches_every_bin():
    # An interval as long as the period sees the whole rotation (definition of phase coverage).
    m = arc_mask(np.array([1.3]), np.array([1.3 + 6.0]), np.array([6.0, 12.0]), 10)
    assert m[0, 0].all()
    assert m[0, 1].sum() == 6  # half the 12 h period: 5 bins spanned, straddling one boundary → 6 touched


def test_arc_worked_example():
    # Hand-worked: P = 10 h, 10 bins of 1 h; interval 9.5 h → 11.2 h touches bins 9, 0 and 1 (wrapping).
    m = arc_mask(np.array([9.5]), np.array([11.2]), np.array([10.0]), 10)[0, 0]
    assert np.flatnonzero(m).tolist() == [0, 1, 9]


@settings(max_examples=60, deadline=None)
@given(t0=st.floats(0, 500), dur=st.floats(0, 40), p=st.floats(0.5, 60), n_bins=st.integers(4, 30))
def test_arc_mask_matches_slow_twin(t0, dur, p, n_bins):
    fast = arc_mask(np.array([t0]), np.array([t0 + dur]), np.array([p]), n_bins)
    slow = arc_mask_slow(np.array([t0]), np.array([t0 + dur]), np.array([p]), n_bins)
    assert np.array_equal(fast, slow)


def test_point_mask_agrees_with_a_zero_length_arc():
    t = np.array([0.2, 5.7, 13.1])
    p = np.array([3.0, 7.5])
    arcs = arc_mask(t, t, p, 16).any(axis=0)
    assert np.array_equal(point_mask(t, p, 16), arcs)


@settings(max_examples=40, deadline=None)
@given(seed=st.integers(0, 10_000), n=st.integers(1, 12), n_bins=st.integers(4, 70))
def test_arc_gains_match_cell_counting(seed, n, n_bins):
    # The cells an arc adds to a coverage map, counted from prefix sums, equal the cells counted one by
    # one on the arc's mask (definition of phase coverage); arcs up to longer than a period, bins past 64.
    rng = np.random.default_rng(seed)
    t0 = rng.uniform(0, 400, n)
    t1 = t0 + rng.uniform(0, 14, n)
    periods = np.geomspace(2.0, 30.0, 7)
    for covered in (rng.random((7, n_bins)) < 0.5, np.zeros((7, n_bins), dtype=bool)):  # an empty map too
        fast = arc_gains(t0, t1, periods, n_bins, covered)
        assert np.array_equal(fast, coverage_gains_slow(arc_mask_slow(t0, t1, periods, n_bins), covered))


@settings(max_examples=40, deadline=None)
@given(t0=st.floats(0, 300), n=st.integers(1, 40), slot_minutes=st.sampled_from([1.0, 5.0, 10.0]))
def test_window_sum_matches_slot_by_slot_sum(t0, n, slot_minutes):
    # Deeming (1975): W(ν) = Σ exp(2πiν t_k); the closed-form geometric series must equal the plain sum.
    nu = np.linspace(0.05, 6.0, 37)
    fast = window_sum(np.array([t0]), np.array([n]), slot_minutes / 60.0, nu)
    slow = window_sum_slow(np.array([t0]), np.array([n]), slot_minutes / 60.0, nu)
    assert np.allclose(fast, slow, atol=1e-8 * n)


def test_window_of_one_site_peaks_at_one_cycle_per_day():
    # VanderPlas (2018) §4.2: nightly sampling from one site puts a window peak near 1 c/d.
    nights = np.arange(7) * 24.0
    nu = np.array([0.5, 1.0, 1.5])
    w = np.abs(window_sum(nights, np.full(7, 36), 5 / 60.0, nu).sum(axis=0)) / (7 * 36)
    assert w[1] > 0.9 and w[1] > 3 * max(w[0], w[2])


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(st.floats(0, 100), st.floats(0, 20)), max_size=12), st.floats(0.5, 30))
def test_excess_gap_matches_slow_twin(pairs, max_gap):
    iv = np.array([[a, a + d] for a, d in pairs]).reshape(-1, 2)
    assert excess_gap_h(iv, (0.0, 130.0), max_gap) == pytest.approx(excess_gap_h_slow(iv, (0.0, 130.0), max_gap))


def test_excess_gap_worked_example():
    # Span 0–48 h, visits 0–2 h and 20–22 h, max gap 12 h: silences 18 h and 26 h → 6 + 14 = 20 h over.
    assert excess_gap_h(np.array([[0, 2], [20, 22]]), (0.0, 48.0), 12.0) == pytest.approx(20.0)


def test_alias_band_covers_aliases_that_land_in_the_search_range():
    # Double-peaked, 2–30 h: photometric frequencies 1.6–24 c/d, so window peaks up to 22.4 c/d matter.
    nu = alias_freq_grid(2.0, 30.0, 7 * 24.0, True)
    assert nu[0] == pytest.approx(2.0 / 7.0)
    assert nu[-1] == pytest.approx(22.4, abs=0.05)
