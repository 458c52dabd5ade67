"""The plan's steps in order: loaded campaign, target and log in; a typed :class:`PlanResult` out.

1. windows: each site's observable intervals night by night (:mod:`planner.visibility.windows`);
2. schedule: slot grid, objective model, greedy + local search, baseline, weather, night notes
   (:func:`planner.schedule.solve.schedule_core`), with each slot's photometric precision
   (:func:`planner.schedule.quality.slot_precision`);
3. blocks: the observer's block rows and planned exposures (:mod:`planner.schedule.blocktable`),
   and a geometry sample for the report;
4. diagnostics: ``check_times`` on the light-curve points of plan and baseline (one error model:
   frames stacked per slot, plus the per-airmass systematic term);
5. the plan-versus-baseline comparison.

No file is read or written here: the command shell loads the inputs and :mod:`planner.outputs`
writes the plan folder.
"""

from __future__ import annotations

import time
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from planner.core.timegrid import time_grid
from planner.diagnostics.check import check_times
from planner.diagnostics.result import CheckResult
from planner.inputs.campaign import Campaign
from planner.inputs.donelog import DoneLog
from planner.inputs.targets import Target
from planner.schedule.blocktable import binned_points, block_table
from planner.schedule.quality import point_sigma_mag, slot_precision
from planner.schedule.robustness import Robustness
from planner.schedule.slots import SlotGrid
from planner.schedule.solve import ObjectiveSummary, schedule_core
from planner.sky.geometry import geometry
from planner.visibility.windows import observable_windows

#: Geometry sample step for the report's night charts (geometry.csv).
GEOMETRY_STEP_S = 600.0
#: The stages plan_campaign reports to its ``progress`` callback, in order, with their rough share of the
#: run's time (measured on the demo campaign: a progress display turns them into a time estimate).
PLAN_STAGES = {
    "windows": 1.0,
    "slots": 0.5,
    "optimiser": 7.0,
    "weather trials": 1.0,
    "blocks and geometry": 1.5,
    "diagnostics": 8.0,
}


@dataclass
class Comparison:
    """The short plan-vs-baseline comparison printed after the night-by-night table: ``(plan, baseline)``."""

    worst_period_coverage: tuple[float | None, float | None]
    highest_alias: tuple[float | None, float | None]
    trend_min_detectable_mag_per_day: tuple[float | None, float | None]
    n_times: tuple[int, int]

    def to_dict(self) -> dict:
        return {k: {"plan": v[0], "baseline": v[1]} for k, v in self.__dict__.items()}


@dataclass
class ReplanSummary:
    """What a ``--done`` log changed: how much it holds, from when the new plan starts, what was lost."""

    log: str
    n_done_times: int
    not_before_utc: str | None
    lost_site_nights: list[list[str]]

    def to_dict(self) -> dict:
        return dict(self.__dict__)


@dataclass
class PlanResult:
    """Everything ``phasewise plan`` writes and prints."""

    campaign: Campaign
    target: Target
    #: One row per planned block (planner.schedule.blocktable.BLOCK_COLUMNS).
    blocks: pd.DataFrame
    baseline: pd.DataFrame
    #: ``check_times`` of the light-curve points (with anything done), ``{"plan": ..., "baseline": ...}``.
    checks: dict[str, CheckResult]
    objective: ObjectiveSummary
    robustness: dict[str, Robustness]
    windows: pd.DataFrame
    #: Geometry every 10 min over the campaign, one block of rows per site (column ``site``).
    geometry: pd.DataFrame
    comparison: Comparison
    exposures: pd.DataFrame = field(default_factory=pd.DataFrame)
    baseline_exposures: pd.DataFrame = field(default_factory=pd.DataFrame)
    done: DoneLog | None = None
    replan: ReplanSummary | None = None
    timings_s: dict[str, float] = field(default_factory=dict)
    #: Every site and campaign night: blocks planned, or why none (planner.schedule.nightnotes.NOTE_COLUMNS).
    nights: pd.DataFrame = field(default_factory=pd.DataFrame)

    @property
    def target_name(self) -> str:
        return self.target.name

    @property
    def done_log(self) -> str | None:
        return None if self.done is None else self.done.path


def _worst_coverage(check: CheckResult) -> float | None:
    return float(np.min(check.coverage)) if np.size(check.coverage) else None


def _highest_alias(check: CheckResult) -> float:
    """The check's strongest window peak beyond the span's own sidelobes (f ≥ 2/span); 0 when none."""
    return float(check.highest_alias["height"]) if check.highest_alias else 0.0


def compare(plan: CheckResult, base: CheckResult) -> Comparison:
    """The headline numbers of plan and baseline side by side."""
    return Comparison(
        worst_period_coverage=(_worst_coverage(plan), _worst_coverage(base)),
        highest_alias=(_highest_alias(plan), _highest_alias(base)),
        trend_min_detectable_mag_per_day=(
            plan.trend.get("min_detectable_mag_per_day"),
            base.trend.get("min_detectable_mag_per_day"),
        ),
        n_times=(int(plan.times_jd.size), int(base.times_jd.size)),
    )


def geometry_sample(target: Target, sites, grid: SlotGrid, nights: int | None = None) -> pd.DataFrame:
    """Geometry every GEOMETRY_STEP_S over the campaign span, per site (column ``site`` first).

    With ``nights``, the span is every campaign night at every site (00:00 UTC the day before the
    first night to ``nights`` + 2 days later: local noon to noon anywhere from UTC−12 to UTC+14), so
    the report's night charts are complete also at sites whose windows are few or none."""
    lo, hi = grid.span_slots
    start = grid.slot_time(lo) - np.timedelta64(2, "h")
    stop = grid.slot_time(hi) + np.timedelta64(2, "h")
    if nights is not None:
        start = min(start, np.datetime64(grid.t_ref, "ns"))
        stop = max(stop, np.datetime64(grid.t_ref, "ns") + np.timedelta64(nights + 2, "D"))
    t0 = start.astype("datetime64[h]").astype("datetime64[ns]")
    times = time_grid(t0, stop, GEOMETRY_STEP_S)
    frames = geometry(target, times, list(sites))
    out = [df.assign(site=name)[["site", *df.columns]] for name, df in frames.items()]
    return pd.concat(out, ignore_index=True)


def diagnose_points(
    campaign: Campaign, target: Target, points: pd.DataFrame, done: DoneLog | None, trials: int
) -> CheckResult:
    """``check_times`` on light-curve points (one per slot: frames stacked) plus anything already done.

    Each point's σ is its stacked photometric error with the per-airmass systematic term
    (:func:`planner.schedule.quality.point_sigma_mag`), the error model the optimiser used.
    """
    times = points["time_utc"].to_numpy("datetime64[ns]")
    err = points["mag_err"].to_numpy(dtype=float)
    if "airmass" in points:
        err = point_sigma_mag(
            err, 1, points["airmass"].to_numpy(dtype=float), campaign.photometry.sys_err_mag_per_airmass
        )
    site = points["site"].to_numpy(dtype=object)
    if done is not None and done.times_utc.size:
        times = np.concatenate([done.times_utc, times])
        err = np.concatenate([done.mag_err, err])
        site = np.concatenate([done.site, site])
    fallback = float(np.nanmedian(err)) if np.isfinite(err).any() else 0.02
    err = np.where(np.isfinite(err) & (err > 0), err, fallback)
    rot = campaign.rotation
    return check_times(
        times,
        min_period_h=rot.min_period_h,
        max_period_h=rot.max_period_h,
        mag_err=err,
        sites=site,
        target=target,
        trials=trials,
        seed=campaign.seed,
        amplitude_range_mag=rot.amplitude_mag,
        double_peaked=rot.double_peaked,
        phase_bins=rot.phase_bins,
        oversample=rot.oversample,
    )


def plan_campaign(
    campaign: Campaign,
    target: Target | None = None,
    done: DoneLog | None = None,
    *,
    exact: bool = False,
    exact_time_limit_s: float = 60.0,
    check_trials: int | None = None,
    progress: Callable[[str], None] | None = None,
) -> PlanResult:
    """Optimise a campaign; compute its baseline, diagnostics, robustness, windows and geometry sample.

    Parameters
    ----------
    campaign : Campaign
        The loaded campaign (:func:`planner.inputs.campaign.load_campaign`), its sites included, or one
        built in Python from Site and Target objects.
    target : Target, optional
        The target (default: ``campaign.load_target()``, the target it was built with or the file it names).
    done : DoneLog, optional
        Observed times and lost nights (:func:`planner.inputs.donelog.read_done_log`); only the
        remaining nights are planned.
    exact : bool
        Also solve the coverage problem exactly (HiGHS, up to ``exact_time_limit_s``) to measure the
        heuristic's optimality gap.
    check_trials : int, optional
        Injection–recovery trials per diagnostics run (default: the campaign's).
    progress : callable, optional
        Told the name of each stage as it starts (:data:`PLAN_STAGES`), for a progress display.

    Returns
    -------
    PlanResult
        BlockRules, baseline, both checks, objective, weather robustness, windows, geometry sample,
        comparison and night notes; :func:`planner.outputs.planfolder.write_plan_folder` writes it.
    """
    target = campaign.load_target() if target is None else target
    progress = progress or (lambda stage: None)
    timings: dict[str, float] = {}
    t = time.perf_counter()
    progress("windows")
    windows = observable_windows(
        target, list(campaign.sites), campaign.first_night, campaign.nights, step_s=campaign.block_rules.slot_s
    )
    timings["windows"] = time.perf_counter() - t
    t = time.perf_counter()
    rules = campaign.photometry
    core = schedule_core(
        campaign,
        windows,
        done,
        exact=exact,
        exact_time_limit_s=exact_time_limit_s,
        precision_fn=lambda grid: slot_precision(grid, target, campaign.sites, rules),
        progress=progress,
    )
    timings["schedule"] = time.perf_counter() - t
    t = time.perf_counter()
    progress("blocks and geometry")
    blocks, exposures = block_table(core.visits, core.grid, target, campaign.sites, rules)
    baseline, base_exposures = block_table(core.baseline, core.grid, target, campaign.sites, rules)
    geo = geometry_sample(target, campaign.sites, core.grid, campaign.nights)
    timings["blocks_and_geometry"] = time.perf_counter() - t
    t = time.perf_counter()
    progress("diagnostics")
    trials = campaign.check_trials if check_trials is None else check_trials
    bin_s = campaign.block_rules.slot_s
    checks = {
        "plan": diagnose_points(campaign, target, binned_points(exposures, core.grid.t_ref, bin_s), done, trials),
        "baseline": diagnose_points(
            campaign, target, binned_points(base_exposures, core.grid.t_ref, bin_s), done, trials
        ),
    }
    timings["diagnostics"] = time.perf_counter() - t
    replan = None
    if done is not None:
        replan = ReplanSummary(
            log=done.path,
            n_done_times=int(done.times_utc.size),
            not_before_utc=None if done.end_utc is None else str(done.end_utc)[:16] + "Z",
            lost_site_nights=sorted([s, n.isoformat()] for s, n in done.lost),
        )
    return PlanResult(
        campaign=campaign,
        target=target,
        blocks=blocks,
        baseline=baseline,
        checks=checks,
        objective=core.objective,
        robustness=core.robustness,
        windows=windows,
        geometry=geo,
        comparison=compare(checks["plan"], checks["baseline"]),
        exposures=exposures,
        baseline_exposures=base_exposures,
        done=done,
        replan=replan,
        timings_s=timings,
        nights=core.nights,
    )
