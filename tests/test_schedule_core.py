"""The optimiser on synthetic windows: constraints, determinism, running sums, baseline, weather, re-planning."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from planner.inputs.settings import BlockRules
from planner.schedule.baseline import baseline_visits
from planner.schedule.localsearch import fits
from planner.schedule.optimise import optimise, total_slots
from planner.schedule.planmodel import Done, Visit
from planner.schedule.robustness import weather_monte_carlo
from planner.schedule.state import PlanState
from tests.schedule_helpers import T_REF, model_for

BLOCKS = BlockRules(slot_minutes=5, min_block_h=1.0, max_block_h=3.0, setup_minutes=10, max_per_night=2)


def _utc(model, slot):
    return model.grid.slot_time(slot)


def check_constraints(model, windows: pd.DataFrame, sites, visits, blocks: BlockRules):
    """Independent check, from the windows table and site allocations rather than the slot grid."""
    g = model.grid
    per_night: dict = {}
    for v in visits:
        part = g.site_nights[v.site_night]
        a, b = _utc(model, v.start), _utc(model, v.stop)
        rows = windows[(windows["site"] == part.site) & (windows["night"] == part.night.isoformat())]
        w0, w1 = rows["start_utc"].to_numpy("datetime64[ns]"), rows["end_utc"].to_numpy("datetime64[ns]")
        inside = (w0 <= a) & (b <= w1)
        assert inside.any(), f"{v} outside every window of {part.site} {part.night}"
        hours = (b - a) / np.timedelta64(1, "h")
        assert blocks.min_block_h - 1e-9 <= hours <= blocks.max_block_h + 1e-9
        assert hours * 60 > blocks.setup_minutes  # the set-up leaves science time
        per_night.setdefault((part.site, part.night), []).append((a, b))
    by_name = {s.name: s for s in sites}
    for (site, _), iv in per_night.items():
        iv.sort()
        assert len(iv) <= blocks.max_per_night
        for (_, b0), (a1, _) in zip(iv[:-1], iv[1:], strict=True):
            assert b0 < a1, "visits of one site-night overlap or touch"
        total_h = sum((b - a) / np.timedelta64(1, "h") for a, b in iv)
        alloc = by_name[site].allocation.hours_per_night
        if alloc is not None:
            assert total_h <= alloc + 1e-9


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_every_visit_respects_windows_allocation_and_block_rules(seed):
    model, w, sites = model_for(n_sites=3, n_nights=3, hours=3.0, blocks=BLOCKS, n_periods=60, n_bins=16, seed=seed)
    opt = optimise(model, seed=seed, max_evaluations=1500)
    assert opt.visits
    check_constraints(model, w, sites, opt.visits, BLOCKS)
    check_constraints(model, w, sites, opt.greedy_visits, BLOCKS)
    assert opt.terms.total >= opt.greedy_terms.total  # local search only accepts improvements


def test_fixed_block_allocation_is_respected():
    from planner.inputs.sites import Allocation
    from planner.schedule.slots import build_slots
    from tests.schedule_helpers import synthetic_windows

    w, sites = synthetic_windows(1, 2, window_h=8.0, hours_per_night=None)
    start = w["start_utc"].iloc[0] + np.timedelta64(60, "m")
    stop = start + np.timedelta64(150, "m")
    import dataclasses

    sites = [dataclasses.replace(sites[0], allocation=Allocation(granted_utc=((start, stop),)))]
    grid = build_slots(w, sites, BLOCKS, T_REF)
    assert len(grid.site_nights) == 1  # the second night has no allocated time
    (iv,) = grid.site_nights[0].intervals
    assert grid.slot_time(iv[0]) >= start and grid.slot_time(iv[1]) <= stop


def test_same_seed_same_plan_and_other_seed_still_valid():
    runs = []
    for seed in (7, 7, 8):
        model, w, sites = model_for(n_sites=2, n_nights=3, blocks=BLOCKS, n_periods=40, n_bins=12)
        runs.append(optimise(model, seed=seed, max_evaluations=800))
    assert runs[0].visits == runs[1].visits
    assert runs[0].terms == runs[1].terms
    check_constraints(model, w, sites, runs[2].visits, BLOCKS)


def test_running_sums_equal_scoring_from_scratch():
    model, _, _ = model_for(n_sites=2, n_nights=2, blocks=BLOCKS, n_periods=30, n_bins=12)
    opt = optimise(model, seed=3, max_evaluations=300)
    state = PlanState(model, opt.visits)
    rng = np.random.default_rng(0)
    for _ in range(25):
        v = state.visits[int(rng.integers(len(state.visits)))]
        new = Visit(v.site_night, v.start + int(rng.integers(-6, 7)), v.length + int(rng.integers(-3, 4)))
        if not fits(model.grid, state.visits, new, ignore=v):
            continue
        predicted = state.score([v], [new])
        state.apply([v], [new])
        scratch = model.terms(state.visits)
        for k in ("coverage", "expected_coverage", "alias", "excess_gap_h", "total"):
            assert getattr(predicted, k) == pytest.approx(getattr(scratch, k), abs=1e-9)
    # Removing a visit, and adding it back: both scored on the cells they change, equal to scoring afresh.
    for v in list(state.visits)[:4]:
        rest = [x for x in state.visits if x != v]
        assert state.score([v], []).total == pytest.approx(model.terms(rest).total, abs=1e-9)
        state.apply([v], [])
        assert state.score([], [v]).total == pytest.approx(model.terms([*rest, v]).total, abs=1e-9)
        state.apply([], [v])


def test_baseline_one_visit_per_site_night_at_best_time_with_same_hours():
    model, w, sites = model_for(n_sites=2, n_nights=3, blocks=BLOCKS, n_periods=30, n_bins=12)
    opt = optimise(model, seed=1, max_evaluations=300)
    base = baseline_visits(model.grid, w, total_slots(opt.visits))
    assert total_slots(base) == total_slots(opt.visits)
    assert len({v.site_night for v in base}) == len(base)
    for v in base:
        part = model.grid.site_nights[v.site_night]
        row = w[(w["site"] == part.site) & (w["night"] == part.night.isoformat())].iloc[0]
        mid = _utc(model, v.start) + (_utc(model, v.stop) - _utc(model, v.start)) / 2
        # Centred on the highest-altitude time unless the window edge forces a shift.
        assert abs((mid - row["best_utc"]) / np.timedelta64(1, "m")) <= 5 or not part.contains(v.start - 1, v.stop + 1)


def test_weather_monte_carlo_agrees_with_the_closed_form_expectation():
    # Independent routes: the analytic E[coverage] = mean over cells of 1 − Π(1 − c) (independent
    # site-nights) against the Monte Carlo mean over 4000 trials.
    model, _, _ = model_for(n_sites=3, n_nights=2, blocks=BLOCKS, n_periods=30, n_bins=12)
    opt = optimise(model, seed=2, max_evaluations=300)
    rob = weather_monte_carlo(model, opt.visits, trials=4000, seed=5)
    analytic = model.terms(opt.visits).expected_coverage
    assert rob.expected_coverage == pytest.approx(analytic, abs=0.01)
    assert rob.p10_coverage <= rob.expected_coverage
    assert 0.0 <= rob.single_site_fraction <= 1.0


def test_all_clear_weather_reproduces_the_plain_coverage():
    from planner.inputs.sites import Allocation, Site
    from planner.schedule.slots import build_slots
    from tests.schedule_helpers import synthetic_windows

    w, _ = synthetic_windows(2, 2)
    sites = [
        Site(
            name=f"S{i}",
            latitude_deg=0,
            longitude_deg=0,
            clear_fraction=1.0,
            allocation=Allocation(hours_per_night=3.0),
        )
        for i in range(2)
    ]
    model, _, _ = model_for(n_sites=2, n_nights=2, blocks=BLOCKS, n_periods=20, n_bins=10)
    model.grid = build_slots(w, sites, BLOCKS, T_REF)
    model.log_cloudy = np.log1p(-np.full(len(model.grid.site_nights), 1 - 1e-9))
    visits = [Visit(0, model.grid.site_nights[0].intervals[0][0], 24)]
    rob = weather_monte_carlo(model, visits, trials=50, seed=0)
    assert rob.expected_coverage == pytest.approx(model.terms(visits).coverage)
    assert rob.p10_coverage == pytest.approx(model.terms(visits).coverage)


def test_replanning_never_schedules_before_the_log_or_over_done_time():
    model0, w, sites = model_for(n_sites=2, n_nights=3, blocks=BLOCKS, n_periods=30, n_bins=12)
    first = model0.grid.site_nights[0]
    a = first.intervals[0][0] + 6
    done_times = model0.grid.slot_time(np.arange(a, a + 18))  # 1.5 h observed at S0 on night 1
    cut = done_times.max()
    t_h = (done_times - T_REF).astype(np.int64) / 3.6e12
    done = Done(times_h=t_h, intervals_h=np.array([[t_h.min(), t_h.max()]]))
    model, _, _ = model_for(
        n_sites=2,
        n_nights=3,
        blocks=BLOCKS,
        n_periods=30,
        n_bins=12,
        done=done,
        not_before_utc=cut,
        used_h={("S0", first.night): 1.5},
        busy_utc={"S0": [(done_times.min(), done_times.max())]},
    )
    opt = optimise(model, seed=0, max_evaluations=500)
    assert opt.visits
    for v in opt.visits:
        assert model.grid.slot_time(v.start) >= cut
    # The already-observed cells count as covered from the start.
    assert model.terms([]).coverage > 0


def test_search_budget_grows_with_the_schedule_and_says_why_it_stopped():
    from planner.schedule.localsearch import MIN_EVALUATIONS, search_budget

    assert search_budget(10) == MIN_EVALUATIONS
    assert search_budget(2000) == 15 * 2000  # a month at sixteen sites gets its moves per visit too
    model, _, _ = model_for(n_sites=2, n_nights=2, blocks=BLOCKS, n_periods=30, n_bins=12)
    free = optimise(model, seed=3)
    assert free.search.budget == search_budget(len(free.greedy_visits))
    assert free.search.stopped_by in ("local optimum", "small gain", "budget", "passes")
    assert free.search.gain == pytest.approx(free.terms.total - free.greedy_terms.total, abs=1e-12)
    tight = optimise(model, seed=3, max_evaluations=5)
    assert (tight.search.evaluations, tight.search.stopped_by) == (5, "budget")
