"""Batched harmonic least squares: the normal-equation kernel against its lstsq twin, the prior as
pseudo-observations, degenerate frequencies, and the astropy route for the plain case."""

from __future__ import annotations

import numpy as np
import pytest
from astropy.timeseries import LombScargle
from hypothesis import given, settings
from hypothesis import strategies as st

from planner.diagnostics.harmonic_lsq import (
    harmonic_chi2,
    harmonic_chi2_slow,
    harmonic_columns,
    harmonic_solve,
    harmonic_solve_slow,
)


def _campaign(seed: int, n: int = 160, span_d: float = 7.0, trials: int = 3):
    rng = np.random.default_rng(seed)
    t = 2460000.5 + np.sort(rng.uniform(0, span_d, n))
    w = 1.0 / rng.uniform(0.01, 0.03, n) ** 2
    night = np.floor(t - t[0]).astype(int)
    x = np.column_stack([np.ones(n), (t - t.mean()) / span_d, np.eye(night.max() + 1)[night]])
    y = (
        15
        + 0.2 * np.cos(2 * np.pi * 3.1 * t)[:, None]
        + rng.normal(0, 0.02, (n, trials))
        + rng.normal(0, 0.02, night.max() + 1)[night][:, None]
    )
    return t, y, w, x


def _rel(a, b, scale):
    return float(np.max(np.abs(np.asarray(a) - np.asarray(b)) / scale))


def test_fast_matches_lstsq_with_priors_trials_and_rank_deficient_columns():
    # Night columns sum to the constant column (rank deficient without a prior); a prior of
    # σ = 0.02 mag on the nights (precision 2500) makes them identifiable.
    t, y, w, x = _campaign(1)
    lam = np.r_[0.0, 0.0, np.full(x.shape[1] - 2, 1 / 0.02**2)]
    f = np.r_[np.linspace(0.5, 12.0, 97), 3.1]
    for prior in (lam, None):
        fast = harmonic_chi2(t, y, w, f, 2, fixed=x, prior_precision=prior)
        slow = harmonic_chi2_slow(t, y, w, f, 2, fixed=x, prior_precision=prior)
        assert fast.chi2.shape == (f.size, 3) and fast.chi2_fixed.shape == (3,)
        assert _rel(fast.chi2_fixed, slow.chi2_fixed, slow.chi2_fixed) < 1e-9
        assert _rel(fast.chi2, slow.chi2, slow.chi2_fixed) < 1e-9
        assert np.allclose(fast.reduction, fast.chi2_fixed - fast.chi2, rtol=0, atol=1e-9 * fast.chi2_fixed.max())


@pytest.mark.parametrize("nterms", [1, 3, 4])
def test_fast_matches_lstsq_for_other_orders(nterms):
    t, y, w, x = _campaign(2, n=90)
    lam = np.r_[0.0, 0.0, np.full(x.shape[1] - 2, 100.0)]
    f = np.linspace(0.3, 9.0, 41)
    fast = harmonic_chi2(t, y[:, 0], w, f, nterms, fixed=x, prior_precision=lam)
    slow = harmonic_chi2_slow(t, y[:, 0], w, f, nterms, fixed=x, prior_precision=lam)
    assert fast.chi2.shape == (f.size,)
    assert _rel(fast.chi2, slow.chi2, slow.chi2_fixed) < 1e-9


def test_degenerate_frequencies_drop_explained_columns_like_lstsq():
    # At f = 0 the cosine is the constant column and the sine is zero; with whole-day times,
    # f = 1 c/d does the same. Both must give χ² of the fixed model alone, as lstsq does.
    rng = np.random.default_rng(3)
    t = np.repeat(np.arange(6.0), 5)
    y = rng.normal(size=t.size)
    x = np.column_stack([np.ones(t.size), t])
    f = np.array([0.0, 1.0, 2.0, 0.37])
    fast = harmonic_chi2(t, y, 1.0, f, 2, fixed=x)
    slow = harmonic_chi2_slow(t, y, 1.0, f, 2, fixed=x)
    assert _rel(fast.chi2, slow.chi2, slow.chi2_fixed) < 1e-9
    assert fast.chi2[:3] == pytest.approx([fast.chi2_fixed] * 3, rel=1e-12)
    assert fast.chi2[3] < fast.chi2_fixed


def test_uniform_grid_recurrence_over_many_blocks_matches_exact_trig():
    # 3000 uniformly spaced frequencies run the trig recurrence across many blocks and reseeds; a
    # grid with one frequency nudged off uniform takes exact sines and cosines everywhere.
    t, y, w, x = _campaign(4, n=400, span_d=25.0, trials=1)
    f = np.linspace(0.8, 24.0, 3000)
    rec = harmonic_chi2(t, y, w, f, 2, fixed=x[:, :2])
    nudged = f.copy()
    nudged[-1] += 1e-7
    exact = harmonic_chi2(t, y, w, nudged, 2, fixed=x[:, :2])
    assert _rel(rec.chi2[:-1], exact.chi2[:-1], rec.chi2_fixed) < 1e-11
    pick = np.arange(0, f.size, 150)
    slow = harmonic_chi2_slow(t, y, w, f[pick], 2, fixed=x[:, :2])
    assert _rel(rec.chi2[pick], slow.chi2, slow.chi2_fixed) < 1e-9


def test_matches_astropy_chi2_without_fixed_columns_but_a_mean():
    # VanderPlas (2018), ApJS 236, 16, §6: LombScargle(nterms) 'standard' power is
    # 1 − χ²(f)/χ²_ref with a floating mean, solved per frequency by astropy's 'chi2' method.
    t, y, w, _ = _campaign(5, trials=1)
    dy = 1 / np.sqrt(w)
    f = np.linspace(0.5, 10.0, 200)
    ours = harmonic_chi2(t, y[:, 0], w, f, 2, fixed=np.ones((t.size, 1)))
    ref = LombScargle(t, y[:, 0], dy, nterms=2).power(f, method="chi2")
    assert np.allclose(ours.reduction / ours.chi2_fixed, ref, atol=1e-9)


def test_prior_equals_the_gaussian_posterior_mean():
    # A Gaussian prior N(0, 1/λ) gives the posterior mean (XᵀWX + Λ)⁻¹ XᵀWy (ridge regression,
    # e.g. Press et al. 2007, Numerical Recipes 3rd ed. §15.4 with a prior term): solved here by
    # scipy's symmetric solver on the normal equations, a route separate from our SVD.
    from scipy.linalg import solve

    t, y, w, x = _campaign(6, trials=1)
    tc = t - t.mean()
    lam = np.r_[0.0, 0.0, np.full(x.shape[1] - 2, 400.0)]
    fit = harmonic_solve(tc, y[:, 0], w, 3.1, 2, fixed=x, prior_precision=lam)
    a = np.hstack([x, harmonic_columns(tc, 3.1, 2)])
    lam_full = np.r_[lam, np.zeros(4)]
    g = a.T @ (w[:, None] * a) + np.diag(lam_full)
    beta = solve(g, a.T @ (w * y[:, 0]), assume_a="sym")
    assert np.allclose(fit.coef, beta, rtol=0, atol=1e-9)
    assert np.allclose(fit.cov, np.linalg.inv(g), rtol=1e-8, atol=1e-14)
    chi2 = np.sum(w * (y[:, 0] - a @ beta) ** 2) + np.sum(lam_full * beta**2)
    assert fit.chi2 == pytest.approx(chi2, rel=1e-10)
    scan = harmonic_chi2(t, y[:, 0], w, [3.1], 2, fixed=x, prior_precision=lam)
    assert scan.chi2[0] == pytest.approx(fit.chi2, rel=1e-9)
    slow = harmonic_solve_slow(tc, y[:, 0], w, 3.1, 2, fixed=x, prior_precision=lam)
    assert np.allclose(fit.coef, slow.coef, atol=1e-9) and fit.rank == slow.rank == a.shape[1]


def test_solve_reports_rank_of_a_deficient_design():
    t, y, w, x = _campaign(7, trials=1)
    fit = harmonic_solve(t - t.mean(), y[:, 0], w, 3.1, 2, fixed=x)  # nights duplicate the constant
    assert fit.rank == x.shape[1] + 4 - 1
    assert np.isfinite(fit.chi2) and np.all(np.isfinite(fit.coef))


@settings(max_examples=40, deadline=None)
@given(
    seed=st.integers(0, 10_000),
    n=st.integers(15, 80),
    nterms=st.integers(1, 3),
    p=st.integers(0, 4),
    trials=st.integers(1, 3),
    with_prior=st.booleans(),
    span=st.floats(0.3, 30.0),
)
def test_fast_equals_slow_on_random_problems(seed, n, nterms, p, trials, with_prior, span):
    rng = np.random.default_rng(seed)
    t = 2460000.5 + np.sort(rng.uniform(0, span, n))
    y = rng.normal(size=(n, trials)) * rng.uniform(0.1, 10)
    w = rng.uniform(0.2, 5.0, n)
    w[rng.uniform(size=n) < 0.1] = 0.0  # a few points without weight
    x = rng.normal(size=(n, p))
    if p >= 2:
        x[:, -1] = x[:, 0] + x[:, 1]  # a dependent column
    lam = rng.uniform(0, 3, p) * (rng.uniform(size=p) < 0.6) if with_prior else None
    f = np.r_[np.sort(rng.uniform(0.05, 12, 9)), np.linspace(1.0, 1.5, 5)]
    fast = harmonic_chi2(t, y, w, f, nterms, fixed=x, prior_precision=lam)
    slow = harmonic_chi2_slow(t, y, w, f, nterms, fixed=x, prior_precision=lam)
    scale = np.maximum(slow.chi2_fixed, 1e-300)
    assert np.all(fast.chi2 >= 0) and np.all(fast.chi2 <= fast.chi2_fixed * (1 + 1e-12))
    assert _rel(fast.chi2_fixed, slow.chi2_fixed, scale) < 1e-9
    assert _rel(fast.chi2, slow.chi2, scale) < 1e-9


def test_bad_inputs_are_refused():
    t = np.linspace(0, 1, 10)
    with pytest.raises(ValueError, match="weights"):
        harmonic_chi2(t, t, -1.0, [1.0])
    with pytest.raises(ValueError, match="prior_precision"):
        harmonic_chi2(t, t, 1.0, [1.0], fixed=np.ones((10, 2)), prior_precision=[1.0])
    with pytest.raises(ValueError, match="finite"):
        harmonic_chi2(t, np.r_[t[:-1], np.nan], 1.0, [1.0])
