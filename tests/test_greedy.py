"""Greedy with lazy gains: equal to the plain greedy; against the exact optimum (HiGHS) and brute force.

Bounds checked: Nemhauser, Wolsey & Fisher (1978), Math. Programming 14, 265 — greedy ≥ (1 − 1/e)·OPT
for a monotone submodular function under a cardinality constraint; Fisher, Nemhauser & Wolsey (1978),
Math. Prog. Study 8, 73 — greedy ≥ ½·OPT under a matroid (here a partition matroid: per site-night).
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest

from planner.inputs.settings import BlockRules
from planner.schedule.exact import exact_coverage
from planner.schedule.greedy import greedy_lazy, greedy_plain, merge_elements
from planner.schedule.objective import arc_mask_slow
from tests.schedule_helpers import model_for

SMALL = BlockRules(slot_minutes=15, min_block_h=1.0, max_block_h=4.0, setup_minutes=15, max_per_night=2)


def _run(model):
    cells = model.element_cells()
    return greedy_lazy(model.grid, cells, model.done_cells), greedy_plain(model.grid, cells, model.done_cells)


@pytest.mark.parametrize("seed", range(6))
def test_lazy_greedy_picks_what_the_plain_greedy_picks(seed):
    model, _, _ = model_for(n_sites=3, n_nights=2, hours=2.0 + seed % 3, n_periods=25, n_bins=10, seed=seed)
    lazy, plain = _run(model)
    assert lazy.elements == plain.elements
    assert lazy.gains == plain.gains
    assert lazy.covered_cells == plain.covered_cells
    assert lazy.evaluations < plain.evaluations  # the point of lazy gains (Minoux 1978)


def _cells_slow(model, elements) -> int:
    """Covered cells of a set of elements via the slow arc twin (an independent route)."""
    if not elements:
        return 0
    g = model.grid
    idx = np.array(elements)
    t0, t1 = g.science_hours(g.elem_start[idx], g.elem_len[idx])
    return int(arc_mask_slow(t0, t1, model.periods_h, model.n_bins).any(axis=0).sum())


def _brute_force(model) -> int:
    """Best coverage over every feasible choice (≤ capacity elements per site-night), by enumeration."""
    g = model.grid
    per_part = []
    for p, part in enumerate(g.site_nights):
        idx = np.flatnonzero(g.elem_site_night == p).tolist()
        per_part.append([c for k in range(part.capacity + 1) for c in itertools.combinations(idx, k)])
    best = 0
    for choice in itertools.product(*per_part):
        best = max(best, _cells_slow(model, [e for c in choice for e in c]))
    return best


def test_exact_equals_brute_force_and_greedy_meets_the_cardinality_bound():
    # One site-night: a cardinality constraint, bound 1 − 1/e.
    model, _, _ = model_for(
        n_sites=1, n_nights=1, window_h=3.0, hours=2.0, blocks=SMALL, n_periods=8, n_bins=8, min_h=1.0, max_h=6.0
    )
    lazy, _ = _run(model)
    ex = exact_coverage(model, time_limit_s=30)
    brute = _brute_force(model)
    assert ex.optimal and ex.covered_cells == brute
    assert _cells_slow(model, lazy.elements) == lazy.covered_cells
    ratio, text = lazy.guarantee(model.grid)
    assert ratio == pytest.approx(1 - 1 / np.e) and "cardinality" in text
    assert lazy.covered_cells >= ratio * brute - 1e-9


def test_exact_equals_brute_force_on_a_partition_matroid():
    model, _, _ = model_for(
        n_sites=2, n_nights=1, window_h=2.5, hours=2.0, blocks=SMALL, n_periods=6, n_bins=6, min_h=1.0, max_h=5.0
    )
    lazy, _ = _run(model)
    ex = exact_coverage(model, time_limit_s=30)
    assert ex.optimal and ex.covered_cells == _brute_force(model)
    assert lazy.covered_cells >= 0.5 * ex.covered_cells


@pytest.mark.parametrize("seed", range(4))
def test_greedy_against_exact_on_small_instances(seed, record_property):
    # Sized so coverage does not saturate (the greedy must choose) and HiGHS proves optimality in < 1 s.
    model, _, _ = model_for(
        n_sites=2, n_nights=2, window_h=4.0, hours=2.0, blocks=SMALL, n_periods=12, n_bins=16, seed=seed
    )
    lazy, _ = _run(model)
    ex = exact_coverage(model, time_limit_s=60)
    assert ex.optimal
    assert ex.covered_cells >= lazy.covered_cells  # an optimum is never below a feasible solution
    ratio, _ = lazy.guarantee(model.grid)
    assert ratio == 0.5
    measured = lazy.covered_cells / ex.covered_cells
    record_property("greedy_over_exact", measured)
    print(f"seed {seed}: greedy/exact = {measured:.4f}")
    assert measured >= ratio


def test_merged_visits_cover_at_least_their_elements():
    model, _, _ = model_for(n_sites=2, n_nights=2, hours=4.0, n_periods=20, n_bins=10)
    lazy, _ = _run(model)
    visits = merge_elements(model.grid, lazy.elements)
    assert model.terms(visits).coverage * model.n_cells >= lazy.covered_cells - 1e-9


def test_longest_visit_rule_is_enforced_and_voids_the_bound():
    blocks = BlockRules(slot_minutes=5, min_block_h=1.0, max_block_h=1.5, setup_minutes=10, max_per_night=2)
    model, _, _ = model_for(n_sites=1, n_nights=2, hours=4.0, blocks=blocks, n_periods=20, n_bins=10)
    lazy, plain = _run(model)
    assert lazy.elements == plain.elements
    for v in merge_elements(model.grid, lazy.elements):
        assert v.length <= model.grid.max_slots
    if lazy.extra_rule_bound:
        assert lazy.guarantee(model.grid)[0] is None
