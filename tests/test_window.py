"""Spectral window, alias heights and Nyquist frequency, checked against published identities."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from planner.diagnostics.aliases import alias_height, alias_partners
from planner.diagnostics.specwindow import (
    nyquist_freq_per_day,
    nyquist_freq_per_day_slow,
    spectral_window,
    spectral_window_slow,
    window_peaks,
)


def test_daily_sampling_has_unit_window_at_one_cycle_per_day_and_multiples():
    # Deeming (1975) Ap&SS 36, 137: W(ν) = (1/N) Σ exp(2πiνt_k); times spaced by exactly one
    # day give |W| = 1 at ν = 1, 2, 3 c/d (all terms in phase), and |W| < 1 in between.
    t = 2460000.5 + np.arange(30.0)
    assert np.allclose(spectral_window(t, [0.0, 1.0, 2.0, 3.0]), 1.0, atol=1e-12)
    assert spectral_window(t, 0.5) < 0.05
    freq, height = window_peaks(t, 3.5)
    assert np.allclose(np.sort(freq[height > 0.99]), [1.0, 2.0, 3.0], atol=1e-3)


def test_alias_height_equals_folded_centre_of_gravity():
    # Eyer & Bartholdi (1999) A&AS 135, 1: the alias height at Δf equals the length of the mean
    # unit vector of the times folded on Δf. Folding route vs the Deeming sum route.
    rng = np.random.default_rng(7)
    t = 2460000.5 + np.sort(rng.uniform(0, 12, 300))
    df = np.linspace(0.0, 4.0, 401)
    assert np.allclose(alias_height(t, df), spectral_window(t, df), atol=1e-12)


def test_alias_height_hand_case():
    # Two times half a cycle apart on Δf cancel; two at the same phase add (unit vectors).
    t = np.array([0.0, 0.5])
    assert alias_height(t, 1.0) == pytest.approx(0.0, abs=1e-12)
    assert alias_height(t, 2.0) == pytest.approx(1.0)


def test_single_site_window_peak_near_one_per_day_and_multisite_lower():
    # common practice: one longitude gives a strong 1 c/d window peak; three longitudes
    # 8 h apart fill the day and flatten it (VanderPlas 2018, ApJS 236, 16, §4.2).
    nights = np.arange(7.0)
    hours = np.arange(0, 6, 0.25) / 24.0
    one = 2460000.5 + (nights[:, None] + hours[None, :]).ravel()
    three = np.concatenate([one + k / 3.0 for k in range(3)])
    f1, h1 = window_peaks(one, 3.0)
    assert abs(f1[0] - 1.0) < 0.02 and h1[0] > 0.6
    assert spectral_window(three, 1.0) < 0.1


def test_nyquist_of_a_slot_grid():
    # Eyer & Bartholdi (1999): times on a common step p give ν_N = 1/(2p). Slots on a
    # 5-minute grid (with gaps) → 144 c/d.
    rng = np.random.default_rng(3)
    slots = np.sort(rng.choice(5000, 200, replace=False))
    t = 2460000.5 + slots * 300 / 86400
    assert nyquist_freq_per_day(t) == pytest.approx(144.0 * 1 / math.gcd(*map(int, slots - slots[0])))


@settings(max_examples=40, deadline=None)
@given(
    ticks=st.lists(st.integers(0, 10_000), min_size=2, max_size=30, unique=True),
    step_s=st.sampled_from([60.0, 300.0, 900.0]),
)
def test_window_mirrors_about_nyquist(ticks, step_s):
    # Eyer & Bartholdi (1999): |W| is periodic with 2ν_N and mirrored about ν_N.
    t = 2460000.5 + np.array(ticks) * step_s / 86400
    fn = nyquist_freq_per_day(t)
    assert fn == pytest.approx(nyquist_freq_per_day_slow(t))
    x = np.array([0.137, 0.9, 3.3])
    assert spectral_window(t, 2 * fn) == pytest.approx(1.0, abs=1e-6)
    assert np.allclose(spectral_window(t, fn + x), spectral_window(t, fn - x), atol=1e-6)


@settings(max_examples=40, deadline=None)
@given(
    offsets=st.lists(st.floats(0, 40, allow_nan=False), min_size=1, max_size=30),
    freqs=st.lists(st.floats(0, 20, allow_nan=False), min_size=1, max_size=5),
)
def test_window_fast_matches_slow(offsets, freqs):
    t = 2460000.5 + np.array(offsets)
    w = spectral_window(t, np.array(freqs))
    assert np.allclose(w, spectral_window_slow(t, np.array(freqs)), atol=1e-10)
    assert np.all((w >= 0) & (w <= 1 + 1e-12))


def test_weighted_window_fast_matches_slow():
    rng = np.random.default_rng(2)
    t = 2460000.5 + rng.uniform(0, 5, 50)
    wts = rng.uniform(0.1, 2, 50)
    f = np.linspace(0, 3, 17)
    assert np.allclose(spectral_window(t, f, wts), spectral_window_slow(t, f, wts), atol=1e-12)
    assert np.allclose(alias_height(t, f, wts), spectral_window(t, f, wts), atol=1e-12)


def test_alias_partners_of_a_12h_period():
    # f = 2 c/d with a 1 c/d window peak: partners at 1 c/d (24 h) and 3 c/d (8 h).
    p = alias_partners(np.array([2.0]), np.array([1.0]))
    assert np.allclose(p[0, 0], [1.0, 3.0])
    # double-peaked: the signal is at 2f = 4 c/d; its aliases 3 and 5 c/d are rotation 1.5, 2.5
    p2 = alias_partners(np.array([2.0]), np.array([1.0]), harmonic=2)
    assert np.allclose(p2[0, 0], [1.5, 2.5])
    assert np.isnan(alias_partners(np.array([0.5]), np.array([1.0]))[0, 0, 0])
