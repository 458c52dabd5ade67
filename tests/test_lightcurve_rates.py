"""Rates over many seeded synthetic campaigns: period recovery, false period-change detections,
honest σ of K1. Slow (a few hundred fits): marked ``slow``."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.stats import binom, norm

from planner.lightcurve import fit_light_curve
from tests.lightcurve_synth import SITES, campaign

CAMPAIGNS = 200

pytestmark = pytest.mark.slow


@pytest.fixture(scope="module")
def results():
    """Three sites, five nights, 12 points a night, 15 % of site-nights clouded out; Ṗ = 0,
    true K1 = 10; period log-uniform in 3–20 h and a random ellipsoid, aspect and albedo spot."""
    rows = []
    for seed in range(CAMPAIGNS):
        rng = np.random.default_rng(20_000 + seed)
        period = float(np.exp(rng.uniform(np.log(3.0), np.log(20.0))))
        c = campaign(
            rng,
            period_h=period,
            axes=(rng.uniform(1.15, 1.6), 1.0, rng.uniform(0.7, 0.95)),
            aspect_deg=rng.uniform(50, 90),
            albedo_contrast=rng.uniform(0, 0.1),
            sites=SITES[:3],
            nights=5,
            points_per_night=12,
            clear_fraction=0.85,
        )
        fit = fit_light_curve(c.points)
        pc, fd = fit.period_change, fit.fading
        rows.append(
            (
                period,
                fit.periods.best_h,
                fit.periods.sigma_h,
                pc.rate_h_per_day / pc.rate_sigma_h_per_day,
                (fd.k1 - 10.0) / fd.k1_sigma,
                fd.extra_mag_per_day / fd.extra_mag_per_day_sigma,
            )
        )
    return np.array(rows)


def test_true_period_is_recovered(results):
    period, best, sigma = results[:, 0], results[:, 1], results[:, 2]
    hit = np.abs(best - period) / period < 0.005  # far inside the daily-alias spacing
    assert hit.mean() >= 0.95
    # the reported σ is honest: the errors of the recovered periods scatter like N(0, σ)
    pull = (best - period)[hit] / sigma[hit]
    assert 0.75 < np.std(pull) < 1.35 and abs(np.mean(pull)) < 0.3


def test_period_change_false_detections_match_gaussian_tails(results):
    # Ṗ = 0 in every campaign: |Ṗ|/σ beyond 2 should happen at the two-sided Gaussian rate 4.55 %,
    # beyond 3 at 0.27 % (< 1 %); limits are binomial 99.5 % bounds for this number of campaigns.
    z = np.abs(results[:, 3])
    for k in (2.0, 3.0):
        p0 = 2 * norm.sf(k)
        count = int(np.sum(z > k))
        assert binom.ppf(0.0025, CAMPAIGNS, p0) <= count <= binom.isf(0.0025, CAMPAIGNS, p0), (k, count)
    assert np.mean(z > 3.0) < 0.01 + 2 * np.sqrt(0.0027 / CAMPAIGNS)


def test_fading_sigmas_are_honest(results):
    # K1 = 10 and no extra fading in every campaign: the pulls should look like N(0, 1).
    for pull in (results[:, 4], results[:, 5]):
        assert abs(np.mean(pull)) < 0.25 and 0.8 < np.std(pull) < 1.25
