"""Fading-rate, period and period-change sensitivity, and the synodic–sidereal offset."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from planner.diagnostics.sensitivity import (
    fading_rate_sigma,
    fading_rate_sigma_slow,
    frequency_sigma,
    frequency_sigma_slow,
    pab_motion,
    period_change_sensitivity_h,
    synodic_offset_h,
)

UNIFORM = 2460000.5 + np.linspace(0, 10, 2000)


def test_frequency_error_of_one_sinusoid_matches_the_analytic_formula():
    # Montgomery & O'Donoghue (1999) Delta Scuti Star Newsletter 13, 28:
    # σ_f = sqrt(6/N) σ / (π a T) for one sinusoid of semi-amplitude a over a span T.
    sigma, amp, span = 0.01, 0.2, 10.0
    got = frequency_sigma(UNIFORM, np.array([5.0, 11.0]), sigma, amp, harmonic=1, nterms=1)
    expected = math.sqrt(6 / UNIFORM.size) * sigma / (math.pi * amp / 2 * span)
    assert np.allclose(got, expected, rtol=0.01)


def test_double_peaked_rotation_frequency_error_is_half_the_harmonic_one():
    # the signal sits at 2f; its frequency error divided by 2 is that of the rotation frequency
    one = frequency_sigma(UNIFORM, np.array([10.0]), 0.01, 0.2, harmonic=1, nterms=1)
    two = frequency_sigma(UNIFORM, np.array([20.0]), 0.01, 0.2, harmonic=2, nterms=2)
    assert two[0] == pytest.approx(one[0] / 2, rel=0.01)


def test_fading_rate_error_matches_straight_line_fit():
    # Straight-line least squares: σ_slope = σ / sqrt(Σ (t − t̄)²) (e.g. Bevington & Robinson
    # 2003, Data Reduction and Error Analysis, ch. 6; (memory)); with many rotations covered the
    # harmonic nuisance terms barely correlate with the slope.
    got = fading_rate_sigma(UNIFORM, np.array([7.0]), 0.01)
    expected = 0.01 / math.sqrt(np.sum((UNIFORM - UNIFORM.mean()) ** 2))
    assert got[0] == pytest.approx(expected, rel=0.01)


def test_fading_rate_error_agrees_with_monte_carlo_refits():
    # Independent route: fit the full model (line + 2 harmonics) by lstsq to 400 noise
    # realisations and compare the scatter of the fitted slope with the predicted σ.
    rng = np.random.default_rng(2)
    t = 2460000.5 + np.sort(rng.uniform(0, 4, 120))
    sig = rng.uniform(0.01, 0.05, t.size)
    period_h = 9.0
    tc = t - 0.5 * (t.min() + t.max())
    ph = 2 * np.pi * tc * 24 / period_h
    x = np.column_stack([np.ones_like(tc), tc, np.cos(ph), np.sin(ph), np.cos(2 * ph), np.sin(2 * ph)])
    slopes = []
    for _ in range(400):
        y = rng.normal(0, sig)
        slopes.append(np.linalg.lstsq(x / sig[:, None], y / sig, rcond=None)[0][1])
    predicted = fading_rate_sigma(t, np.array([period_h]), sig)[0]
    assert np.std(slopes) == pytest.approx(predicted, rel=0.1)


def test_period_change_threshold_scales_with_noise_and_period():
    p = np.array([4.0, 8.0])
    a = period_change_sensitivity_h(UNIFORM, p, 0.01, 0.2)
    b = period_change_sensitivity_h(UNIFORM, p, 0.02, 0.2)
    assert np.allclose(b / a, 2.0, rtol=1e-6)  # linear in σ
    assert a[1] / a[0] == pytest.approx(4.0, rel=0.05)  # ΔP = P² Δf
    assert np.all(np.isinf(period_change_sensitivity_h(UNIFORM[:5], p, 0.01, 0.2)))


def test_synodic_offset_hand_value():
    # Harris et al. (1984) Icarus 57, 251: |P_syn − P_sid| ≈ ω P². ω = 1°/day = 1/360 c/d,
    # P = 10 h = 10/24 d → ΔP = (1/360)(10/24)² d = 0.011574 h (hand computation).
    assert synodic_offset_h(np.array([10.0]), 1.0)[0] == pytest.approx(0.0115741, rel=1e-5)


def test_pab_motion_across_the_zero_of_longitude():
    t = 2460000.5 + np.arange(11.0)
    lon = (355.0 + 1.0 * np.arange(11)) % 360
    m = pab_motion(t, lon, np.zeros(11))
    assert m["pab_lon_rate_deg_per_day"] == pytest.approx(1.0)
    assert m["pab_lon_change_deg"] == pytest.approx(10.0)
    assert m["pab_arc_deg"] == pytest.approx(10.0)


@settings(max_examples=25, deadline=None)
@given(seed=st.integers(0, 10_000), n=st.integers(8, 60), nterms=st.integers(1, 3), harmonic=st.integers(1, 2))
def test_fast_matches_slow(seed, n, nterms, harmonic):
    rng = np.random.default_rng(seed)
    t = 2460000.5 + np.sort(rng.uniform(0, rng.uniform(1, 15), n))
    sig = rng.uniform(0.005, 0.1, n)
    p = rng.uniform(2, 30, 4)
    a, b = fading_rate_sigma(t, p, sig, nterms), fading_rate_sigma_slow(t, p, sig, nterms)
    assert np.array_equal(np.isfinite(a), np.isfinite(b))
    finite = np.isfinite(a)
    assert np.allclose(a[finite], b[finite], rtol=1e-6)
    c = frequency_sigma(t, p, sig, 0.3, harmonic, nterms)
    d = frequency_sigma_slow(t, p, sig, 0.3, harmonic, nterms)
    finite = np.isfinite(c) & np.isfinite(d)
    assert np.allclose(c[finite], d[finite], rtol=1e-6)
    assert np.all(c > 0)
