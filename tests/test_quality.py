"""Slot quality (planner.schedule.quality) and the objective's preference for precise, low-airmass time.

Sources: Bouguer's extinction law m = m0 + k·X (e.g. Sterken & Manfroid 1992, Astronomical
Photometry: A Guide, ch. 4; from memory), so an error δk in the extinction coefficient leaves δk·X
in the corrected magnitude; independent errors add in quadrature and stacking n frames divides
the random part by √n (common practice). Greedy bound: Fisher, Nemhauser & Wolsey (1978), Math.
Prog. Study 8, 73 (½ under a matroid for a monotone submodular function).
"""

from __future__ import annotations

import dataclasses
import itertools

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from planner.inputs.settings import BlockRules, Weights
from planner.photometry.points import point_sigma_mag
from planner.schedule.greedy import greedy_lazy, greedy_plain
from planner.schedule.objective import arc_mask_slow
from planner.schedule.optimise import optimise
from planner.schedule.planmodel import PlanModel, Visit
from planner.schedule.quality import slot_quality, slot_quality_slow
from planner.schedule.state import PlanState
from planner.sky.geometry import airmass
from tests.schedule_helpers import model_for

SMALL = BlockRules(slot_minutes=15, min_block_h=1.0, max_block_h=4.0, setup_minutes=15, max_per_night=2)


def test_extinction_error_follows_bouguer():
    # Independent route: correct an instrumental magnitude with a wrong extinction coefficient.
    m0, k_true, dk = 12.0, 0.12, 0.02
    for x in (1.0, 1.5, 2.0, 2.8):
        m_obs = m0 + k_true * x
        m_corrected = m_obs - (k_true + dk) * x
        assert point_sigma_mag(0.0, 1, x, dk) == pytest.approx(abs(m_corrected - m0), rel=1e-12)


def test_stacked_photon_noise_and_extinction_add_in_quadrature():
    # Hand computation: 0.01 mag per frame, 4 frames -> 0.005; 0.005 mag/airmass at X = 2 -> 0.01.
    assert point_sigma_mag(0.01, 4, 2.0, 0.005) == pytest.approx(np.sqrt(0.005**2 + 0.01**2), rel=1e-12)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(st.floats(0.0, 1e6), st.floats(1.0, 40.0)), min_size=1, max_size=30), st.floats(1.0, 5.0))
def test_slot_quality_matches_slow_twin(pairs, max_x):
    prec = np.array([p for p, _ in pairs])
    x = np.array([a for _, a in pairs])
    best = float(prec.max()) if prec.max() > 0 else 1.0
    fast = slot_quality(prec, x, max_x, best)
    assert np.allclose(fast, slot_quality_slow(prec, x, max_x, best))
    assert ((fast >= 0) & (fast <= 1)).all() and (fast[x > max_x] == 0).all()


def _airmass_quality(model: PlanModel, max_x: float = 2.0) -> tuple[list[np.ndarray], list[np.ndarray]]:
    """A fixed star culminating mid-window: altitude from the hour angle (lat -30°, dec -20°), airmass by
    Kasten & Young (1989); quality 1/X² (σ ∝ X), 0 above ``max_x``."""
    g = model.grid
    qs, xs = [], []
    for p in g.site_nights:
        lo, hi = p.intervals[0][0], p.intervals[-1][1]
        mid = 0.5 * (lo + hi)
        ha_rad = np.radians(15.0 * (np.arange(lo, hi) + 0.5 - mid) * g.slot_h)
        lat, dec = np.radians(-30.0), np.radians(-20.0)
        alt = np.degrees(np.arcsin(np.sin(lat) * np.sin(dec) + np.cos(lat) * np.cos(dec) * np.cos(ha_rad)))
        x = airmass(alt)
        xs.append(x)
        qs.append(slot_quality(1.0 / x**2, x, max_x, 1.0))
    return qs, xs


def _with_quality(model: PlanModel, weights: Weights, quality) -> PlanModel:
    return PlanModel(
        model.grid, model.periods_h, model.n_bins, model.freq_per_day, weights, model.max_gap_h, slot_quality=quality
    )


def test_blocks_sit_at_low_airmass_when_quality_counts():
    base, _, _ = model_for(n_sites=1, n_nights=2, window_h=9.0, hours=3.0, n_periods=30, n_bins=10)
    quality, xs = _airmass_quality(base)
    x_flat = np.concatenate(xs)
    mean_x = {}
    for wq in (0.0, 1.0):
        m = _with_quality(base, dataclasses.replace(Weights(), quality=wq), quality)
        opt = optimise(m, seed=0, max_evaluations=800)
        sel = np.concatenate(
            [
                np.arange(
                    *[
                        int(a[0])
                        for a in m.science_flat(np.array([v.site_night]), np.array([v.start]), np.array([v.length]))
                    ]
                )
                for v in opt.visits
            ]
        )
        mean_x[wq] = float(x_flat[sel].mean())
        if wq > 0:
            assert x_flat[sel].max() <= 2.0  # the soft limit holds where the window allows it
            # Within 5 % of the lowest mean airmass any placement of the same science time could reach.
            best = min(
                np.convolve(x, np.ones(len(sel) // len(m.grid.site_nights)), "valid").min()
                / (len(sel) // len(m.grid.site_nights))
                for x in xs
            )
            assert mean_x[wq] <= 1.05 * best
    assert mean_x[1.0] <= mean_x[0.0] + 1e-9


@pytest.mark.parametrize("seed", range(4))
def test_lazy_equals_plain_with_slot_credit(seed):
    base, _, _ = model_for(n_sites=3, n_nights=2, hours=2.0 + seed % 3, n_periods=25, n_bins=10, seed=seed)
    rng = np.random.default_rng(seed)
    m = _with_quality(
        base, Weights(), [rng.uniform(0, 1, p.intervals[-1][1] - p.intervals[0][0]) for p in base.grid.site_nights]
    )
    cells, start, credit = m.element_cells(), m.done_cells, m.slot_credit()
    lazy = greedy_lazy(m.grid, cells, start, credit)
    plain = greedy_plain(m.grid, cells, start, credit)
    assert lazy.elements == plain.elements and lazy.evaluations < plain.evaluations
    assert np.allclose(lazy.gains, plain.gains)


def _g_slow(m: PlanModel, elements) -> float:
    """The greedy's function by an independent route: slow arcs for cells, a Python set for slots."""
    g = m.grid
    if not elements:
        return 0.0
    idx = np.array(elements)
    t0, t1 = g.science_hours(g.elem_start[idx], g.elem_len[idx])
    cells = int(arc_mask_slow(t0, t1, m.periods_h, m.n_bins).any(axis=0).sum())
    credit = m.slot_credit()
    slots = {i for e in elements for i in range(int(credit.elem_i0[e]), int(credit.elem_i1[e]))}
    return credit.cell_weight * cells + sum(float(credit.value[i]) for i in slots)


@pytest.mark.parametrize("seed", range(3))
def test_greedy_with_credit_reaches_half_of_brute_force(seed):
    base, _, _ = model_for(
        n_sites=2, n_nights=1, window_h=2.5, hours=2.0, blocks=SMALL, n_periods=12, n_bins=6, seed=seed
    )
    rng = np.random.default_rng(seed)
    m = _with_quality(
        base,
        dataclasses.replace(Weights(), quality=2.0, hours=0.5),
        [rng.uniform(0, 1, p.intervals[-1][1] - p.intervals[0][0]) for p in base.grid.site_nights],
    )
    lazy = greedy_lazy(m.grid, m.element_cells(), m.done_cells, m.slot_credit())
    per_part = []
    for p, part in enumerate(m.grid.site_nights):
        idx = np.flatnonzero(m.grid.elem_site_night == p).tolist()
        per_part.append([c for k in range(part.capacity + 1) for c in itertools.combinations(idx, k)])
    best = max(_g_slow(m, [e for c in choice for e in c]) for choice in itertools.product(*per_part))
    ratio, statement = lazy.guarantee(m.grid)
    assert "slot quality" in statement
    assert _g_slow(m, lazy.elements) >= ratio * best - 1e-12
    assert sum(lazy.gains) == pytest.approx(_g_slow(m, lazy.elements), rel=1e-9)


def test_running_quality_and_window_match_scratch():
    base, _, _ = model_for(n_sites=2, n_nights=2, hours=3.0, n_periods=20, n_bins=8)
    quality, xs = _airmass_quality(base)
    m = PlanModel(
        base.grid,
        base.periods_h,
        base.n_bins,
        base.freq_per_day,
        Weights(),
        12.0,
        slot_weight=[1.0 / x**2 for x in xs],
        slot_quality=quality,
    )
    opt = optimise(m, seed=1, max_evaluations=300)
    state = PlanState(m, opt.visits)
    scratch = m.terms(opt.visits)
    assert state.current.quality == pytest.approx(scratch.quality, rel=1e-9)
    assert state.current.alias == pytest.approx(scratch.alias, rel=1e-9)
    v = opt.visits[0]
    moved = Visit(v.site_night, v.start + 1, v.length - 1)
    assert state.score([v], [moved]).total == pytest.approx(m.terms([moved, *opt.visits[1:]]).total, rel=1e-9)
