"""Injection–recovery: synthetic light curves and recovery of their periods."""

from __future__ import annotations

import numpy as np
import pytest
from astropy.timeseries import LombScargle

from planner.diagnostics.recovery import (
    classify_matches,
    injection_recovery,
    search_frequencies_per_day,
    stratified_periods_h,
    synthetic_light_curves,
)


def _dense_multisite(nights=6, step_min=12.0):
    # four longitudes 6 h apart, 7 h of darkness each: the day is covered round the clock
    t = []
    for site in range(4):
        for night in range(nights):
            start = night + site * 0.25
            t.append(start + np.arange(0, 7 * 60, step_min) / 1440)
    return 2460000.5 + np.sort(np.concatenate(t))


def test_dense_sampling_recovers_at_least_95_percent():
    # Dense, round-the-clock sampling leaves no aliases.
    t = _dense_multisite()
    r = injection_recovery(t, min_period_h=2, max_period_h=30, trials=200, seed=3, sigma_mag=0.02)
    assert np.mean(r.match != "wrong") >= 0.95
    assert all(b.fraction >= 0.85 for b in r.bins)


def test_recovery_with_geometric_trend_and_extra_fading():
    # A geometric trend (fitted as a free column) plus 0.05 mag/day of extra fading must not
    # spoil recovery: the Schwarzenberg-Czerny model here carries the trend terms.
    t = _dense_multisite(nights=5)
    days = t - t[0]
    trend = 5 * np.log10(0.8 + 0.02 * days) + 10 * np.log10(1.2 + 0.01 * days)
    r = injection_recovery(
        t,
        min_period_h=3,
        max_period_h=20,
        trials=60,
        seed=5,
        sigma_mag=0.02,
        trend_mag=trend - trend.mean(),
        fading_mag_per_day=0.05,
    )
    assert np.mean(r.match != "wrong") >= 0.95


def test_seeded_and_reproducible():
    t = _dense_multisite(nights=3, step_min=30)
    a = injection_recovery(t, min_period_h=2, max_period_h=12, trials=40, seed=9)
    b = injection_recovery(t, min_period_h=2, max_period_h=12, trials=40, seed=9)
    c = injection_recovery(t, min_period_h=2, max_period_h=12, trials=40, seed=10)
    assert np.array_equal(a.true_period_h, b.true_period_h)
    assert np.array_equal(a.found_period_h, b.found_period_h)
    assert not np.array_equal(a.true_period_h, c.true_period_h)


def test_synthetic_amplitude_and_double_peaked_shape():
    # Noise-free curves sampled densely over many rotations span exactly the requested
    # peak-to-peak amplitude; a double-peaked curve's strongest single-sine frequency is twice the
    # rotation frequency (common practice: two maxima per rotation), checked with astropy.
    rng = np.random.default_rng(0)
    t = 2460000.5 + np.linspace(0, 3, 6000)
    periods = np.array([5.0, 9.0, 13.0])
    amps = np.array([0.1, 0.3, 0.5])
    y = synthetic_light_curves(t, periods, amps, rng, sigma_mag=0.0)
    assert np.allclose(y.max(axis=0) - y.min(axis=0), amps, rtol=5e-3)
    f = np.linspace(0.5, 12, 20000)
    for j, p in enumerate(periods):
        best = f[np.argmax(LombScargle(t, y[:, j]).power(f))]
        assert best == pytest.approx(2 * 24 / p, rel=2e-3)
    y1 = synthetic_light_curves(t, periods, amps, rng, sigma_mag=0.0, double_peaked=False)
    for j, p in enumerate(periods):
        best = f[np.argmax(LombScargle(t, y1[:, j]).power(f))]
        assert best == pytest.approx(24 / p, rel=2e-3)


def test_noise_level_per_point():
    rng = np.random.default_rng(1)
    t = 2460000.5 + np.linspace(0, 2, 400)
    sigma = np.where(np.arange(400) < 200, 0.01, 0.1)
    y = synthetic_light_curves(t, np.full(300, 6.0), np.zeros(300) + 1e-12, rng, sigma_mag=sigma)
    assert np.std(y[:200]) == pytest.approx(0.01, rel=0.05)
    assert np.std(y[200:]) == pytest.approx(0.1, rel=0.05)


def test_search_grid_covers_half_the_shortest_period_when_double_peaked():
    f = search_frequencies_per_day(2, 30, 7 * 24, double_peaked=True)
    assert f[0] == pytest.approx(24 / 30) and f[-1] == pytest.approx(24.0)
    assert search_frequencies_per_day(2, 30, 7 * 24, double_peaked=False)[-1] == pytest.approx(12.0)


def test_stratified_periods_fill_every_bin():
    p, edges = stratified_periods_h(np.random.default_rng(0), 2, 30, 100, 10)
    counts = np.histogram(p, edges)[0]
    assert np.all(counts == 10)


def test_classify_matches():
    true = np.array([2.0, 2.0, 2.0, 2.0])
    found = np.array([2.001, 4.0, 3.0, 1.0])
    assert list(classify_matches(true, found, 0.01)) == ["period", "half", "wrong", "wrong"]
    assert list(classify_matches(true, found, 0.01, double_peaked=False)) == ["period", "wrong", "wrong", "wrong"]
