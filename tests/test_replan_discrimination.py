"""The discrimination term of re-planning from a light curve: its soft minimum, the per-site-night zero
point, running sums against scoring from scratch, the candidates' period windows, and the measured gain
on seeded scenarios of an invented rotating ellipsoid (tests/replan_scenarios.py)."""

from __future__ import annotations

import math
import tempfile
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from planner.lightcurve.discriminate import CandidateModel, expected_min_delta_chi2_slow
from planner.schedule.discrimination import CandidatePeriods, SlotMoments, night_separation, separable_pairs
from planner.schedule.localsearch import fits
from planner.schedule.objective import SEPARATION_SCALE, SOFTMIN_FLOOR, discrimination
from planner.schedule.optimise import optimise
from planner.schedule.planmodel import PlanModel, Visit
from planner.schedule.quality import part_slot_centres
from planner.schedule.state import PlanState
from tests.schedule_helpers import T_REF, model_for

T0_JD = 2462576.5  # 2034-03-15, the synthetic grid's reference day


def _model(period_h, harmonics=(0.1, 0.0, 0.05, 0.02), mean=16.0):
    return CandidateModel(
        period_h=period_h,
        delta_chi2=0.0,
        t_ref_jd=T0_JD,
        mean_mag=mean,
        k1=10.0,
        log10_r_ref=0.18,
        harmonics=np.array(harmonics, dtype=float),
    )


def _candidates(models) -> CandidatePeriods:
    """Candidates with a flat geometry (light time 5 min, r = 1.5 au) over the synthetic grid's week."""
    t = T_REF + np.arange(0, 10 * 24 + 1, 2).astype("timedelta64[h]")
    return CandidatePeriods(
        models=tuple(models),
        rotation_period_h=np.array([m.period_h for m in models]),
        sigma_h=np.full(len(models), 0.05),
        delta_chi2=np.zeros(len(models)),
        sample_utc=t.astype("datetime64[ns]"),
        sample_light_time_min=np.full(t.size, 5.0),
        sample_helio_dist_au=np.full(t.size, 1.5),
        pairs=separable_pairs(tuple(models)),
    )


def test_soft_minimum_by_hand():
    # Two pairs equally separated: the power mean is their common value (plus the floor ε).
    term, low = discrimination(np.array([4.0, 4.0]))
    assert low == 4.0 and term == pytest.approx(1 - math.exp(-(4.0 + SOFTMIN_FLOOR) / SEPARATION_SCALE))
    # One pair far apart: S = (1 + ε) · (1/2)^(−1/8), the worst pair with a factor 2^(1/8) ≈ 1.09.
    term, low = discrimination(np.array([1.0, 1e6]))
    assert low == 1.0 and term == pytest.approx(1 - math.exp(-(1.0 + SOFTMIN_FLOOR) * 2**0.125 / SEPARATION_SCALE))
    # A pair at Δχ² = 25 (the fit's candidate cut) earns 95 % of the term (1 − e^−3).
    assert discrimination(np.array([25.0 - SOFTMIN_FLOOR]))[0] == pytest.approx(1 - math.exp(-3.0))


@settings(max_examples=50)
@given(st.lists(st.floats(0.0, 1e4), min_size=1, max_size=30))
def test_soft_minimum_lies_between_the_minimum_and_its_bound(values):
    d = np.array(values)
    term, low = discrimination(d)
    soft = -SEPARATION_SCALE * math.log(1.0 - term) if term < 1.0 else math.inf
    lo = low + SOFTMIN_FLOOR
    assert low == d.min()
    if math.isfinite(soft):
        assert lo * (1 - 1e-9) <= soft <= lo * d.size**0.125 * (1 + 1e-9)


def test_a_site_nights_zero_point_is_profiled_out():
    # Two slots, w = 100 (σ = 0.1 mag): differences +0.1 and −0.1 give Σ w (Δm − mean)² = 2;
    # a constant difference of 0.3 mag is absorbed by the night's zero point and counts 0.
    m = SlotMoments([np.array([[0.1, -0.1], [0.3, 0.3]])], [np.array([100.0, 100.0])])
    s0, s1, s2 = m.between(np.array([0]), np.array([2]))
    assert night_separation(s0, s1, s2)[0] == pytest.approx([2.0, 0.0], abs=1e-12)
    assert [float(x) for x in m.between_slow(0, 2)[1]] == pytest.approx([0.0, 60.0])


def test_nested_candidates_are_not_a_pair():
    # P and P/2 with two harmonics share a harmonic (P/2's fundamental is P's second): the
    # P-versus-2P question, left out; P against an alias at another frequency stays.
    models = (_model(12.0), _model(6.0), _model(9.3))
    i, j = separable_pairs(models)
    assert sorted(zip(i.tolist(), j.tolist(), strict=True)) == [(0, 2), (1, 2)]


def test_period_windows_hold_each_candidate_on_the_campaign_step():
    # Around each candidate: frequencies f ± k·step, step = 1/(oversample · span) as the campaign's
    # grid (planner.diagnostics.coverage.period_grid_h), out to ±3σ_f (σ_f = σ_P/P²), at least ±2 steps.
    c = _candidates([_model(12.0), _model(9.3)])
    grid = c.period_grid_h(7 * 24.0, 10.0)
    assert np.all(np.diff(grid) > 0)
    step = 1.0 / (10.0 * 7 * 24.0)
    f = np.sort(1.0 / grid)
    for p in (12.0, 9.3):
        half = max(2, math.ceil(3 * 0.05 / p**2 / step))
        near = f[np.abs(f - 1 / p) < (half + 0.5) * step]
        assert near.size == 2 * half + 1 and np.allclose(np.diff(near), step)
        assert np.min(np.abs(near - 1 / p)) < 1e-12  # the candidate itself is a trial period


def test_running_sums_equal_scoring_from_scratch_with_candidates():
    model0, _, _ = model_for(n_sites=2, n_nights=2, n_periods=20, n_bins=10)
    cands = _candidates([_model(12.0), _model(9.3, (0.05, 0.08, 0.0, 0.03)), _model(15.1, (0.0, 0.1, 0.02, 0.0))])
    grid = model0.grid
    model = PlanModel(
        grid,
        model0.periods_h,
        10,
        model0.freq_per_day,
        model0.weights,
        12.0,
        slot_moments=cands.slot_moments(grid, None),
    )
    opt = optimise(model, seed=2, max_evaluations=400)
    state = PlanState(model, opt.visits)
    rng = np.random.default_rng(1)
    checked = 0
    for _ in range(40):
        v = state.visits[int(rng.integers(len(state.visits)))]
        new = Visit(v.site_night, v.start + int(rng.integers(-12, 13)), v.length + int(rng.integers(-4, 5)))
        if not fits(grid, state.visits, new, ignore=v):
            continue
        predicted = state.score([v], [new])
        state.apply([v], [new])
        scratch = model.terms(state.visits)
        for k in ("discrimination", "min_delta_chi2", "total", "coverage"):
            assert getattr(predicted, k) == pytest.approx(getattr(scratch, k), rel=1e-9, abs=1e-12), k
        checked += 1
    assert checked >= 10
    # The optimiser's running sums against the discriminate module's term-by-term route: science-slot
    # centres, σ 0.02 mag, each site-night's zero point free (planner.lightcurve.discriminate).
    times, labels = [], []
    for v in state.visits:
        centres = part_slot_centres(grid, v.site_night)
        lo = grid.site_nights[v.site_night].intervals[0][0]
        times.append(centres[v.start + grid.setup_slots - lo : v.stop - lo])
        labels += [str(v.site_night)] * times[-1].size
    t = np.concatenate(times)
    emit, r = cands.emission(t)
    for k, (a, b) in enumerate(zip(*cands.pairs, strict=True)):
        slow = expected_min_delta_chi2_slow(emit, 0.02, [cands.models[a], cands.models[b]], r, np.array(labels))
        assert state.separation[k] == pytest.approx(slow, rel=1e-9)


@pytest.mark.slow
def test_replanning_with_the_light_curve_separates_candidates_better():
    # Two seeded scenarios (tests/replan_scenarios.py): three nights at one site leave two or three
    # aliases; one night is left at two sites. The plan made with the magnitudes must give a larger
    # smallest expected Δχ² between candidates (Atkinson & Fedorov 1975) at its new points, and refits
    # of old + simulated new data (the ellipsoid, not the fitted model) must find the true period more
    # often, than the plan made from the same times without magnitudes. scripts/measure_replan.py
    # prints the full table (five scenarios, 20 draws each).
    from tests.replan_scenarios import SCENARIOS, build, expected_min_delta_chi2, fit_log, refit_hits, replan

    folder = Path(tempfile.mkdtemp(prefix="replan-"))
    hits = {"mags": 0, "times": 0}
    for s in SCENARIOS[:2]:
        b = build(s, folder)
        fit = fit_log(b)
        assert 3 <= len(fit.candidates.models) <= 4  # two or three aliases beside the best
        with_mags, times_only = replan(b, fit), replan(b, None)
        assert expected_min_delta_chi2(b, fit, with_mags) > 3 * expected_min_delta_chi2(b, fit, times_only)
        hits["mags"] += refit_hits(b, with_mags, 8, seed=1)
        hits["times"] += refit_hits(b, times_only, 8, seed=1)
    assert hits["mags"] >= hits["times"] + 6, hits
