"""The optimiser's trial periods: a long campaign's grid is thinned evenly, and says so.

The scheduler counts phase coverage for every candidate visit on every trial period; both grow with the
campaign's span, so beyond ``rotation.max_plan_periods`` it counts on an even sub-grid
(planner.diagnostics.coverage.thin_periods). These checks hold that sub-grid to what it claims: even in
frequency, ends kept, an estimate of the whole grid's coverage, reported in the objective.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from planner.diagnostics.coverage import period_grid_h, thin_periods
from planner.inputs.settings import Rotation
from planner.pipeline import schedule_core
from planner.schedule.objective import arc_mask
from tests.schedule_helpers import small_campaign, synthetic_windows


def test_a_short_grid_is_left_whole():
    p = period_grid_h(2.0, 30.0, 7 * 24.0, 10.0)
    assert p.size < 4000
    assert np.array_equal(thin_periods(p, 4000), p)


@pytest.mark.parametrize("max_n", [2, 3, 100, 997, 4000])
def test_the_sub_grid_is_even_in_frequency_and_keeps_both_ends(max_n):
    # 90 nights: the grid's frequency step is 1/(10 · span) (VanderPlas 2018, ApJS 236, 16, §7.1).
    p = period_grid_h(2.0, 30.0, 90 * 24.0, 10.0)
    sub = thin_periods(p, max_n)
    assert sub.size == min(max_n, p.size)
    assert sub[0] == p[0] and sub[-1] == p[-1]
    assert np.all(np.isin(sub, p))  # every sub-grid period is a period of the grid
    step = np.diff(1.0 / p)[0]
    sub_steps = np.diff(1.0 / sub) / step  # in grid steps (negative: periods ascend, frequencies fall)
    k = np.ceil((p.size - 1) / (max_n - 1))
    assert np.all(np.abs(sub_steps) <= k + 1e-6) and np.ptp(np.round(np.abs(sub_steps))) <= 1


def test_thinning_refuses_fewer_than_two():
    with pytest.raises(ValueError):
        thin_periods(np.array([2.0, 3.0, 4.0]), 1)


def test_coverage_on_the_sub_grid_estimates_the_whole_grids():
    # A stratified sample of periods estimates the fraction of (period, bin) cells covered: twenty nights
    # of one site observing about 20 minutes a night at nearly the same hour (coverage left unsaturated),
    # 20 bins, the grid thinned to about one period in six.
    rng = np.random.default_rng(5)
    starts_h = np.arange(20) * 24.0 + rng.uniform(0.0, 2.0, 20)
    ends_h = starts_h + 0.3 * rng.uniform(0.7, 1.3, 20)
    grid = period_grid_h(2.0, 30.0, 20 * 24.0, 10.0)
    sub = thin_periods(grid, 400)
    whole = arc_mask(starts_h, ends_h, grid, 20).any(axis=0).mean()
    thinned = arc_mask(starts_h, ends_h, sub, 20).any(axis=0).mean()
    assert grid.size > 5 * sub.size and 0.5 < whole < 0.95  # thinned hard, not saturated
    assert thinned == pytest.approx(whole, abs=0.01)


def test_a_thinned_plan_reports_both_grids():
    w, sites = synthetic_windows(2, 4, window_h=6.0, hours_per_night=2.0, seed=2)
    rotation = Rotation(min_period_h=3.0, max_period_h=20.0, phase_bins=8, oversample=4.0, max_plan_periods=100)
    camp = small_campaign(sites, 4, rotation=rotation)
    full = period_grid_h(3.0, 20.0, 4 * 24.0, 4.0).size
    core = schedule_core(camp, w, max_evaluations=200)
    assert full > 100
    summary = core.objective.to_dict()
    assert summary["n_periods"] == 100 and summary["n_periods_grid"] == full
    assert core.model.periods_h.size == 100
    whole = schedule_core(dataclasses.replace(camp, rotation=dataclasses.replace(rotation, max_plan_periods=10_000)), w)
    assert whole.objective.to_dict()["n_periods"] == full


def test_the_setting_is_checked_like_every_other():
    with pytest.raises(Exception, match="max_plan_periods"):
        Rotation(max_plan_periods=1)


def test_the_printed_plan_and_the_report_say_when_the_periods_were_thinned(demo_plan, demo_folder, tmp_path):
    # The demo's week has fewer periods than the limit: nothing is said. Pretend its grid were larger.
    import json
    import shutil

    from planner.outputs.report import render_report
    from planner.outputs.terminal import comparison_text

    _, result = demo_plan
    assert "trial periods" not in comparison_text(result)
    n = result.objective.n_periods
    thinned = dataclasses.replace(result, objective=dataclasses.replace(result.objective, n_periods_grid=n + 500))
    assert f"on {n} of the {n + 500}" in comparison_text(thinned)
    folder = tmp_path / "plan"
    shutil.copytree(demo_folder, folder, ignore=shutil.ignore_patterns("replan", ".figures"))
    assert "optimiser counted phase coverage" not in render_report(folder)
    diag_path = folder / "diagnostics.json"
    diag = json.loads(diag_path.read_text(encoding="utf-8"))
    diag["objective"]["n_periods_grid"] = n + 500
    diag_path.write_text(json.dumps(diag), encoding="utf-8")
    assert f"Trial periods: the optimiser counted phase coverage on {n} of the {n + 500}" in render_report(folder)
