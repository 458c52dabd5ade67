"""Candidate models at new times and the Δχ² that would tell them apart (fast against slow)."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from planner.lightcurve import (
    CandidateModel,
    candidate_mags,
    expected_min_delta_chi2,
    expected_min_delta_chi2_slow,
    fit_light_curve,
    pairwise_delta_chi2,
)
from planner.lightcurve.model import rotation_mag
from tests.lightcurve_synth import SITES, campaign


def _model(period_h, mean=15.0, k1=10.0, harmonics=(0.1, 0.0, 0.05, 0.02)):
    return CandidateModel(
        period_h=period_h,
        delta_chi2=0.0,
        t_ref_jd=2460000.5,
        mean_mag=mean,
        k1=k1,
        log10_r_ref=0.2,
        harmonics=np.array(harmonics),
    )


def test_constant_offset_by_hand():
    # Two models 0.1 mag apart everywhere, σ = 0.05 mag, ten times: Δχ² = 10 · (0.1/0.05)² = 40.
    a, b = _model(6.0), _model(6.0, mean=15.1)
    t = 2460001.0 + np.arange(10) * 0.03
    assert expected_min_delta_chi2(t, 0.05, [a, b], 1.5) == pytest.approx(40.0, rel=1e-12)
    assert expected_min_delta_chi2(t, 0.05, [a], 1.5) == np.inf


@settings(max_examples=25, deadline=None)
@given(seed=st.integers(0, 10_000), n_models=st.integers(2, 5), n_times=st.integers(1, 30))
def test_fast_equals_slow(seed, n_models, n_times):
    rng = np.random.default_rng(seed)
    models = [
        _model(
            rng.uniform(2, 30),
            mean=15 + rng.normal(0, 0.05),
            k1=rng.uniform(5, 15),
            harmonics=rng.normal(0, 0.1, 2 * rng.integers(1, 4)),
        )
        for _ in range(n_models)
    ]
    t = 2460000.5 + np.sort(rng.uniform(0, 10, n_times))
    sigma = rng.uniform(0.01, 0.05, n_times)
    r = rng.uniform(1.0, 2.0, n_times)
    fast = expected_min_delta_chi2(t, sigma, models, r)
    slow = expected_min_delta_chi2_slow(t, sigma, models, r)
    assert fast == pytest.approx(slow, rel=1e-9, abs=1e-9)
    d = pairwise_delta_chi2(candidate_mags(models, t, r), sigma)
    assert np.allclose(d, d.T) and np.allclose(np.diag(d), 0.0, atol=1e-9)


def test_candidate_models_of_a_fit_reproduce_its_light_curve_and_separate_aliases():
    # A one-site campaign leaves daily aliases (VanderPlas 2018, ApJS 236, 16, §7.3). Each candidate
    # model, evaluated at the observed times, is the fit's own rotation + M + K1 log r; the two best
    # agree where the data are and differ half a day away, where another site would observe.
    kw = dict(
        nights=5,
        hours_per_night=5,
        points_per_night=15,
        sigma_range_mag=(0.03, 0.05),
        axes=(1.15, 1.0, 0.9),
        albedo_contrast=0.05,
        period_h=7.7,
        sites=SITES[:1],
    )
    c = campaign(np.random.default_rng(5), **kw)
    fit = fit_light_curve(c.points)
    models = fit.candidate_models
    assert len(models) >= 2 and models[0].period_h == pytest.approx(fit.periods.photometric_period_h)
    best = models[0]
    t_emit = fit.arrays.emission_jd
    mags = candidate_mags([best], t_emit, 10**fit.arrays.log10_r)[0]
    rot = rotation_mag(best.harmonics, 24.0 / best.period_h, t_emit - best.t_ref_jd)
    expected = best.mean_mag + best.k1 * (fit.arrays.log10_r - best.log10_r_ref) + rot
    assert np.allclose(mags, expected, atol=1e-12)
    if fit.periods.model_nterms == fit.nterms and fit.periods.rotation_factor == 1:
        assert np.allclose(rot, fit.arrays.rotation_signal_mag - fit.arrays.residual_mag, atol=1e-9)
    # the two best candidates nearly agree where the data are, and differ half a day away
    r = 10**fit.arrays.log10_r
    sigma = c.points.mag_err
    at_data = expected_min_delta_chi2(t_emit, sigma, models[:2], r)
    half_day_on = expected_min_delta_chi2(t_emit + 0.5, sigma, models[:2], r)
    assert half_day_on > 5 * at_data
