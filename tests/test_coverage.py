"""Phase coverage and the period grid: fast vs slow, and hand-worked cases."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from planner.diagnostics.coverage import (
    GAP_RESOLUTION_CYCLES,
    period_grid_h,
    phase_bin_index,
    phase_coverage,
    phase_coverage_slow,
)


def test_period_grid_step_in_frequency():
    # VanderPlas (2018) ApJS 236, 16, §7.1: frequency step 1/(n0 T), here n0 = 10.
    periods = period_grid_h(2.0, 30.0, span_h=7 * 24.0, oversample=10)
    freq = 1.0 / periods
    assert periods[0] == pytest.approx(2.0) and periods[-1] == pytest.approx(30.0)
    assert np.all(np.diff(periods) > 0)
    assert np.max(np.abs(np.diff(freq))) <= 1.0 / (10 * 7 * 24.0) + 1e-15
    assert np.allclose(np.diff(freq), np.diff(freq)[0])  # uniform in frequency


def test_period_grid_short_baseline_is_usable():
    periods = period_grid_h(2.0, 30.0, span_h=0.0)
    assert periods.size >= 2 and periods[0] == pytest.approx(2.0)


def test_coverage_of_a_24h_period_sampled_at_the_same_hour_daily():
    # Hand-worked: one time per day at the same hour folds to a single phase on P = 24 h,
    # so one bin of 20 is filled and the gap is the whole cycle (common practice example).
    t = 2460000.5 + np.arange(10.0)
    frac, gap = phase_coverage(t, np.array([24.0, 48.0]))
    assert frac[0] == pytest.approx(1 / 20) and gap[0] == pytest.approx(1.0)
    # on 48 h the days alternate between two phases half a cycle apart
    assert frac[1] == pytest.approx(2 / 20) and gap[1] == pytest.approx(0.5)


def test_evenly_spread_times_cover_every_bin():
    period_h = 10.0
    t = 2460000.5 + (np.arange(40) * period_h / 40 + 0.01) / 24.0
    frac, gap = phase_coverage(t, np.array([period_h]))
    assert frac[0] == 1.0 and gap[0] == pytest.approx(1 / 40, abs=GAP_RESOLUTION_CYCLES)


def test_empty_and_single_time():
    frac, gap = phase_coverage(np.array([]), np.array([5.0]))
    assert frac[0] == 0 and gap[0] == 1
    frac, gap = phase_coverage(np.array([2460000.5]), np.array([5.0]))
    assert frac[0] == 1 / 20 and gap[0] == 1


def test_bin_index_matches_coverage():
    rng = np.random.default_rng(1)
    t = 2460000.5 + np.sort(rng.uniform(0, 5, 60))
    periods = period_grid_h(3, 20, 120)
    idx = phase_bin_index(t, periods, 20)
    frac, _ = phase_coverage(t, periods, 20)
    assert np.allclose([np.unique(r).size / 20 for r in idx], frac)


@settings(max_examples=60, deadline=None)
@given(
    offsets=st.lists(st.floats(0, 30, allow_nan=False), min_size=1, max_size=40),
    periods=st.lists(st.floats(0.5, 100, allow_nan=False), min_size=1, max_size=6),
    n_bins=st.integers(1, 40),
)
def test_fast_matches_slow(offsets, periods, n_bins):
    t = 2460000.5 + np.array(offsets)
    p = np.array(periods)
    f1, g1 = phase_coverage(t, p, n_bins)
    f2, g2 = phase_coverage_slow(t, p, n_bins)
    # the gap is counted in 2^-16-cycle steps (documented resolution)
    assert np.allclose(g1, g2, rtol=0, atol=GAP_RESOLUTION_CYCLES)
    # a phase within rounding of a bin edge may land either side; allow one bin
    assert np.all(np.abs(f1 - f2) <= 1 / n_bins + 1e-12)
    assert np.all((f1 > 0) & (f1 <= 1) & (g1 > 0) & (g1 <= 1))
    # the largest gap can never be smaller than the mean gap
    assert np.all(g1 >= 1.0 / len(offsets) - GAP_RESOLUTION_CYCLES)
