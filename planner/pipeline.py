"""The plan's steps in order: loaded campaign, target and log in; a typed :class:`PlanResult` out.

1. windows: each site's observable intervals night by night (:mod:`planner.visibility.windows`);
2. schedule: slot grid, objective model, greedy + local search, baseline, weather, night notes
   (:func:`planner.schedule.solve.schedule_core`), with each slot's photometric precision
   (:func:`planner.schedule.quality.slot_precision`);
3. blocks: the observer's block rows and planned exposures (:mod:`planner.schedule.blocktable`),
   and a geometry sample for the report;
4. diagnostics: ``check_times`` on the light-curve points of plan and baseline (one error model,
   :mod:`planner.photometry.points`: frames stacked per slot, plus the per-airmass systematic term);
5. the plan-versus-baseline comparison.

A log with magnitudes (re-planning) is fitted first (planner.lightcurve.fit_light_curve): its surviving
candidate periods become the rotation diagnostics' trial periods, and the optimiser gains a term for
telling them apart (planner.schedule.discrimination); both schedules' expected least Δχ² between two
candidates is then measured on their light-curve points, by the discriminate module's own route.

No file is read or written here: the command shell loads the inputs and :mod:`planner.outputs`
writes the plan folder.
"""

from __future__ import annotations

import dataclasses
import time
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from planner.core.timegrid import time_grid, to_jd_utc
from planner.diagnostics.check import check_times
from planner.diagnostics.result import CheckResult
from planner.inputs.campaign import Campaign
from planner.inputs.donelog import DoneLog
from planner.inputs.targets import Target
from planner.lightcurve.fit import LightCurveFit, fit_light_curve
from planner.lightcurve.logpoints import FALLBACK_MAG_ERR, LogLightCurve, expected_k1, log_light_curve
from planner.lightcurve.model import NIGHT_OFFSET_SIGMA_MAG
from planner.lightcurve.points import nights_from_gaps
from planner.photometry.frames import log_frame_model
from planner.photometry.points import SLOT_EPOCH, light_curve_points
from planner.schedule.blocktable import block_table
from planner.schedule.discrimination import CandidatePeriods, candidate_periods
from planner.schedule.quality import slot_precision
from planner.schedule.robustness import Robustness
from planner.schedule.slots import SlotGrid
from planner.schedule.solve import ObjectiveSummary, schedule_core, t_ref_for
from planner.sky.geometry import geometry
from planner.sky.propagation import approach_warnings_utc
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
class LightCurveReplan:
    """The fit of a re-plan's log with magnitudes, and the candidates the new plan separates."""

    fit: LightCurveFit
    curve: LogLightCurve
    settings: dict
    candidates: CandidatePeriods


@dataclass
class Discrimination:
    """How well plan and baseline tell the candidates apart: the least expected Δχ² over pairs at their
    new light-curve points, ``(plan, baseline)`` (None with fewer than two candidates or no points)."""

    candidates_h: list[float]
    expected_min_delta_chi2: tuple[float | None, float | None]
    period_grid_h: list[float]
    pairs_h: list[list[float]] = field(default_factory=list)

    def to_dict(self) -> dict:
        plan, base = self.expected_min_delta_chi2
        return {
            "candidates_h": self.candidates_h,
            "expected_min_delta_chi2": {"plan": plan, "baseline": base},
            "pairs_h": self.pairs_h,
            "period_grid_h": self.period_grid_h,
        }


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
    #: Notes on the target's motion over the campaign: close approaches, distance from the elements' epoch.
    notes: list[str] = field(default_factory=list)
    #: The fit of a log with magnitudes and its candidates (None without magnitudes).
    light_curve: LightCurveReplan | None = None
    discrimination: Discrimination | None = None

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


def done_frames(campaign: Campaign, target: Target, done: DoneLog | None) -> pd.DataFrame:
    """The frames of a done log with σ and airmass from the same model as ``phasewise check``
    (:func:`planner.photometry.frames.log_frame_model`: the log's σ, else the site's instrument)."""
    if done is None or not done.times_utc.size:
        return pd.DataFrame({"time_utc": np.array([], "datetime64[ns]"), "site": [], "mag_err": [], "airmass": []})
    err, airmass, _ = log_frame_model(
        target,
        done.times_utc,
        done.site,
        campaign.sites,
        logged_mag_err=done.mag_err,
        exposure_s=done.exposure_s,
        fallback_mag_err=np.nan,
        rules=campaign.photometry,
    )
    return pd.DataFrame({"time_utc": done.times_utc, "site": done.site, "mag_err": err, "airmass": airmass})


def diagnose_points(
    campaign: Campaign,
    target: Target,
    frames: pd.DataFrame,
    trials: int,
    t_ref: np.datetime64 = SLOT_EPOCH,
) -> CheckResult:
    """``check_times`` on the light-curve points of ``frames`` (planned exposures, and any done).

    The frames of one site are stacked per campaign slot (counted from ``t_ref``) and each point's σ
    gets the per-airmass systematic term: :func:`planner.photometry.points.light_curve_points`, the
    error model the optimiser scored slots with and the one ``phasewise check`` uses on a log.
    """
    rot = campaign.rotation
    return check_times(
        frames["time_utc"].to_numpy("datetime64[ns]"),
        min_period_h=rot.min_period_h,
        max_period_h=rot.max_period_h,
        mag_err=frames["mag_err"].to_numpy(dtype=float),
        sites=frames["site"].to_numpy(dtype=object),
        airmass=frames["airmass"].to_numpy(dtype=float),
        stack_s=campaign.block_rules.slot_s,
        sys_err_mag_per_airmass=campaign.photometry.sys_err_mag_per_airmass,
        stack_ref_utc=t_ref,
        target=target,
        trials=trials,
        seed=campaign.seed,
        amplitude_range_mag=rot.amplitude_mag,
        double_peaked=rot.double_peaked,
        phase_bins=rot.phase_bins,
        oversample=rot.oversample,
        workers=campaign.compute.workers,
        dask_address=campaign.compute.dask_address,
    )


def fit_done_log(campaign: Campaign, target: Target, done: DoneLog) -> LightCurveReplan:
    """Fit the light curve of a re-plan's log (its rows with a magnitude) over the campaign's period
    range, with the defaults of ``phasewise fit``, and keep its surviving candidates."""
    rot = campaign.rotation
    curve = log_light_curve(done.log, target, campaign.sites, site_names=done.site)
    k1, k1_source = expected_k1(target, None)
    fit = fit_light_curve(curve.points, min_period_h=rot.min_period_h, max_period_h=rot.max_period_h, expected_k1=k1)
    start = t_ref_for(campaign)
    stop = start + np.timedelta64(campaign.nights + 2, "D")
    settings = {
        "min_period_h": rot.min_period_h,
        "max_period_h": rot.max_period_h,
        "nterms": fit.nterms,
        "night_offset_sigma_mag": NIGHT_OFFSET_SIGMA_MAG,
        "expected_k1_source": k1_source,
        "fallback_mag_err": FALLBACK_MAG_ERR,
    }
    return LightCurveReplan(fit, curve, settings, candidate_periods(fit, target, start, stop))


def discrimination_of(
    candidates: CandidatePeriods, periods_h: np.ndarray, points: dict[str, pd.DataFrame]
) -> Discrimination:
    """The least expected Δχ² between two candidates at each schedule's light-curve points (their σ as
    :func:`planner.photometry.points.light_curve_points` gives it, the extinction term included)."""

    def least(p: pd.DataFrame) -> float | None:
        if candidates.n_pairs == 0 or p.empty:
            return None
        sigma = p["mag_err"].to_numpy(dtype=float)
        ok = np.isfinite(sigma) & (sigma > 0)
        times = p["time_utc"].to_numpy("datetime64[ns]")[ok]
        site = p["site"].to_numpy(dtype=object)[ok]
        nights = nights_from_gaps(to_jd_utc(times), site)  # each new site-night's zero point free
        return float(candidates.pair_delta_chi2(times, sigma[ok], nights).min())

    return Discrimination(
        candidates_h=candidates.candidates_h,
        expected_min_delta_chi2=(least(points["plan"]), least(points["baseline"])),
        period_grid_h=[float(x) for x in periods_h],
        pairs_h=candidates.pairs_h,
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
    light_curve = None
    if done is not None and done.has_magnitudes:
        t = time.perf_counter()
        light_curve = fit_done_log(campaign, target, done)
        timings["light_curve_fit"] = time.perf_counter() - t
    candidates = None if light_curve is None else light_curve.candidates
    t = time.perf_counter()
    t_ref = t_ref_for(campaign)
    notes = approach_warnings_utc(target, t_ref, t_ref + np.timedelta64(campaign.nights + 2, "D"))
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
        candidates=candidates,
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
    logged = done_frames(campaign, target, done)
    frames = {"plan": exposures, "baseline": base_exposures}
    diag_campaign, discrimination = campaign, None
    if candidates is not None:
        # The rotation diagnostics look at the candidates: their period range (planner.schedule.discrimination).
        grid_h = candidates.period_grid_h(campaign.nights * 24.0, campaign.rotation.oversample)
        rotation = dataclasses.replace(
            campaign.rotation, min_period_h=float(grid_h.min()), max_period_h=float(grid_h.max())
        )
        diag_campaign = dataclasses.replace(campaign, rotation=rotation)
        points = {
            k: light_curve_points(
                f, campaign.block_rules.slot_s, campaign.photometry.sys_err_mag_per_airmass, core.grid.t_ref
            )
            for k, f in frames.items()
        }
        discrimination = discrimination_of(candidates, grid_h, points)
    checks = {
        name: diagnose_points(diag_campaign, target, pd.concat([logged, f], ignore_index=True), trials, core.grid.t_ref)
        for name, f in frames.items()
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
        notes=notes,
        light_curve=light_curve,
        discrimination=discrimination,
    )
