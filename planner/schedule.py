"""``plan_campaign``: from a campaign file to an optimised multi-site plan, its baseline and diagnostics.

Data flow: target + sites → observable windows (planner.windows) → slot grid and greedy elements
(planner.slots) → objective model (planner.planstate, planner.objective) → greedy with lazy gains
and local search (planner.optimise) → block table with pointing, tracking and exposure plan
(planner.blocktable) → diagnostics of the planned exposure times (planner.diagnostics.check_times),
beside the hand-made baseline (planner.baseline) with the same total hours. Weather robustness by
Monte Carlo (planner.robustness); an exact optimum of the coverage problem on request
(planner.exact); re-planning from a log of what was done (planner.replan).
"""

from __future__ import annotations

import re
import time
from collections.abc import Callable
from dataclasses import dataclass, field
from datetime import timedelta
from pathlib import Path

import numpy as np
import pandas as pd

from planner.baseline import baseline_visits
from planner.blocktable import binned_points, block_table
from planner.campaign import Campaign
from planner.errors import InputError
from planner.nightnotes import night_notes
from planner.objective import alias_freq_grid
from planner.optimise import optimise, total_slots
from planner.planstate import Done, PlanModel, Visit
from planner.quality import slot_precision
from planner.replan import DoneLog, done_runs, read_done_log, used_hours
from planner.robustness import weather_monte_carlo
from planner.slots import SlotGrid, build_slots

#: Geometry sample step for the report's night charts (geometry.csv).
GEOMETRY_STEP_S = 600.0
#: Highest window frequency (cycles/day) the alias term looks at, as in ``phasewise check``.
ALIAS_MAX_FREQ_PER_DAY = 5.0


@dataclass
class PlanResult:
    """Everything ``phasewise plan`` writes and prints."""

    campaign: Campaign
    #: One row per planned block (planner.blocktable.BLOCK_COLUMNS).
    blocks: pd.DataFrame
    baseline: pd.DataFrame
    #: ``{"plan": check JSON, "baseline": check JSON}`` for the exposure times (with anything done).
    diagnostics: dict
    #: Objective terms and values: heuristic, greedy, baseline, exact (when computed), guarantee.
    objective: dict
    #: ``{"plan": ..., "baseline": ...}`` weather Monte Carlo summaries.
    robustness: dict
    windows: pd.DataFrame
    #: Geometry every 10 min over the campaign, one block of rows per site (column ``site``).
    geometry: pd.DataFrame
    #: Short plan-vs-baseline comparison (worst-period coverage, highest alias, trend sensitivity).
    comparison: dict
    exposures: pd.DataFrame = field(default_factory=pd.DataFrame)
    baseline_exposures: pd.DataFrame = field(default_factory=pd.DataFrame)
    done_log: str | None = None
    replan: dict = field(default_factory=dict)
    timings_s: dict = field(default_factory=dict)
    #: Every site and campaign night: blocks planned, or why none (planner.nightnotes.NOTE_COLUMNS).
    nights: pd.DataFrame = field(default_factory=pd.DataFrame)
    #: The target's name (from its file; an MPC line's designation and name).
    target_name: str = ""


@dataclass
class PlanCore:
    """The pure scheduling result on a slot grid (no geometry or photometry): what tests and benchmarks drive."""

    grid: SlotGrid
    model: PlanModel
    visits: list[Visit]
    baseline: list[Visit]
    objective: dict
    robustness: dict
    #: Every site and campaign night: blocks planned, or why none (planner.nightnotes).
    nights: pd.DataFrame = field(default_factory=pd.DataFrame)


def t_ref_for(campaign: Campaign) -> np.datetime64:
    """Slot-grid origin: 00:00 UTC the day before the first night (earlier than any site's evening)."""
    return np.datetime64((campaign.first_night - timedelta(days=1)).isoformat(), "ns")


def _hours_since(times_utc: np.ndarray, t_ref: np.datetime64) -> np.ndarray:
    return (np.asarray(times_utc, dtype="datetime64[ns]") - t_ref).astype(np.int64) / 3.6e12


def _why_no_window(windows: pd.DataFrame, log_end_utc: np.datetime64 | None = None) -> str:
    """``' (Site A: too close to the Sun: elongation 12.4° < 30°; ...)'``: each site's first reason for
    a night without a window, without the parenthesised detail, so the one-line error says why. When an
    observation log ends after the last window, that is the reason."""
    if "reason" not in windows or not len(windows):
        return ""
    ends = pd.to_datetime(windows["end_utc"]).dropna()
    if log_end_utc is not None and len(ends) and np.datetime64(ends.max().to_datetime64(), "ns") <= log_end_utc:
        return (f" (the observation log runs to {str(log_end_utc)[:16]}Z, after the campaign's last window ends "
                f"at {str(ends.max().to_datetime64())[:16]}Z)")
    parts = []
    for site, rows in windows.groupby("site", sort=False):
        if (rows["hours"] > 0).any():
            continue  # this site has windows: they are too short or already past
        reasons = [r for r in rows["reason"].astype(str) if r.strip()]
        if reasons:
            short = re.sub(r"\s*\([^)]*\)", "", reasons[0]).strip()
            parts.append(f"{site}: {short}")
    return f" ({'; '.join(parts)})" if parts else ""


def schedule_core(campaign: Campaign, windows: pd.DataFrame, done: DoneLog | None = None, *,
                  exact: bool = False, exact_time_limit_s: float = 60.0, max_evaluations: int = 6000,
                  precision_fn: Callable[[SlotGrid], tuple[list[np.ndarray], list[np.ndarray]]] | None = None
                  ) -> PlanCore:
    """Optimise on a windows table: slots, greedy + local search, baseline, robustness, and the exact
    optimum when asked. ``precision_fn(grid)`` gives, per site-night, the precision 1/σ² and airmass
    of every slot of its span (planner.quality.slot_precision); they set the slots' quality and each
    site-night's spectral-window weight. Without it every slot has quality 1 and weight 1."""
    from planner.coverage import period_grid_h

    t_ref = t_ref_for(campaign)
    sites = campaign.sites
    kwargs: dict = {}
    done_model = Done()
    if done is not None:
        runs = done_runs(done)
        kwargs = dict(not_before_utc=done.end_utc, lost=done.lost, used_h=used_hours(runs, sites),
                      busy_utc={k: v for k, v in runs.items() if k})
        iv = [(a, b) for v in runs.values() for a, b in v]
        done_model = Done(times_h=_hours_since(done.times_utc, t_ref),
                          intervals_h=np.array([[_hours_since(a, t_ref), _hours_since(b, t_ref)] for a, b in iv])
                          .reshape(-1, 2))
    grid = build_slots(windows, sites, campaign.blocks, t_ref, total_hours=campaign.total_hours, **kwargs)
    if not grid.parts:
        raise InputError(str(campaign.path), "sites",
                         "no site has an observable window long enough for one block in the nights left to plan"
                         + _why_no_window(windows, None if done is None else done.end_utc))
    rot = campaign.rotation
    span_h = campaign.nights * 24.0
    periods = period_grid_h(rot.min_period_h, rot.max_period_h, span_h, rot.oversample)
    freqs = alias_freq_grid(rot.min_period_h, rot.max_period_h, span_h, rot.double_peaked)
    freqs = freqs[freqs <= ALIAS_MAX_FREQ_PER_DAY]
    weight = quality = None
    if precision_fn is not None:
        weight, quality = quality_and_weights(*precision_fn(grid), max_airmass=campaign.max_airmass)
    model = PlanModel(grid, periods, rot.phase_bins, freqs, campaign.weights, campaign.max_gap_h, done_model,
                      slot_weight=weight, slot_quality=quality)
    opt = optimise(model, seed=campaign.seed, max_evaluations=max_evaluations)
    base = baseline_visits(grid, windows, total_slots(opt.visits))
    base_terms = model.terms(base)
    objective = {
        "definition": ("J = w_cov*coverage + w_rob*expected_coverage - w_alias*alias - w_cad*gap_fraction"
                       " + w_hours*hours_fraction + w_quality*quality"),
        "weights": {k: float(v) for k, v in campaign.weights.__dict__.items()},
        "heuristic": opt.terms.to_dict(),
        "greedy": {**opt.greedy_terms.to_dict(), "covered_cells": opt.greedy.covered_cells,
                   "n_cells": model.n_cells, "evaluations": opt.greedy.evaluations,
                   "elements": grid.n_elements},
        "baseline": base_terms.to_dict(),
        "guarantee": {"ratio": opt.guarantee_ratio, "statement": opt.guarantee},
        "local_search": dict(opt.search.__dict__),
        "n_periods": int(periods.size), "phase_bins": int(rot.phase_bins), "n_alias_freqs": int(freqs.size),
        "seconds": opt.seconds,
    }
    if exact:
        from planner.exact import exact_coverage
        from planner.greedy import greedy_lazy
        from planner.objective import pack_cells

        # The exact mode solves coverage alone, so it is measured against the coverage-only greedy.
        cov_greedy = greedy_lazy(grid, model.element_packed(), pack_cells(model.done_cells))
        ex = exact_coverage(model, time_limit_s=exact_time_limit_s, greedy_cells=cov_greedy.covered_cells)
        objective["exact"] = {
            "covered_cells": ex.covered_cells, "upper_bound_cells": ex.upper_bound_cells, "optimal": ex.optimal,
            "seconds": ex.seconds, "status": ex.status, "coverage_greedy_cells": cov_greedy.covered_cells,
            "greedy_ratio": (cov_greedy.covered_cells / ex.upper_bound_cells
                             if ex.upper_bound_cells and (ex.optimal or ex.covered_cells) else None),
        }
    trials = campaign.weather_trials
    robustness = {
        "plan": weather_monte_carlo(model, opt.visits, trials, campaign.seed).to_dict(),
        "baseline": weather_monte_carlo(model, base, trials, campaign.seed).to_dict(),
    }
    nights = night_notes(campaign, windows, grid, model, opt.visits, lost=None if done is None else done.lost,
                         not_before_utc=None if done is None else done.end_utc, observed_h=kwargs.get("used_h"))
    return PlanCore(grid=grid, model=model, visits=opt.visits, baseline=base, objective=objective,
                    robustness=robustness, nights=nights)


def quality_and_weights(precision: list[np.ndarray], airmass: list[np.ndarray], *,
                        max_airmass: float) -> tuple[list[np.ndarray], list[np.ndarray]]:
    """Per site-night slot arrays: spectral-window weight (precision 1/σ², mean 1 over the slots where it is
    known, the mean elsewhere) and quality (planner.quality.slot_quality, 0 where unknown)."""
    from planner.quality import slot_quality

    flat = np.concatenate(precision) if precision else np.zeros(0)
    finite = np.isfinite(flat) & (flat > 0)
    if not finite.any():
        return [np.ones(p.size) for p in precision], [np.zeros(p.size) for p in precision]
    mean, best = float(flat[finite].mean()), float(flat[finite].max())
    weight = [np.where(np.isfinite(p) & (p > 0), p, mean) / mean for p in precision]
    quality = [slot_quality(p, x, max_airmass, best) for p, x in zip(precision, airmass, strict=True)]
    return weight, quality


def _worst_coverage(check: dict) -> float | None:
    cov = check.get("coverage") or []
    return float(min(cov)) if cov else None


def _highest_alias(check: dict) -> float | None:
    """The check's strongest window peak beyond the span's own sidelobes (f ≥ 2/span)."""
    if "highest_alias" not in check:
        return None
    top = check["highest_alias"]
    return float(top["height"]) if top else 0.0


def compare(plan_check: dict, base_check: dict) -> dict:
    """The short plan-vs-baseline comparison printed after the night-by-night table."""
    out = {}
    for key, fn in (("worst_period_coverage", _worst_coverage), ("highest_alias", _highest_alias)):
        out[key] = {"plan": fn(plan_check), "baseline": fn(base_check)}
    out["trend_min_detectable_mag_per_day"] = {
        "plan": (plan_check.get("trend") or {}).get("min_detectable_mag_per_day"),
        "baseline": (base_check.get("trend") or {}).get("min_detectable_mag_per_day"),
    }
    out["n_times"] = {"plan": (plan_check.get("input") or {}).get("n_times"),
                      "baseline": (base_check.get("input") or {}).get("n_times")}
    return out


def geometry_sample(target, sites, grid: SlotGrid, nights: int | None = None) -> pd.DataFrame:
    """Geometry every GEOMETRY_STEP_S over the campaign span, per site (column ``site`` first).

    With ``nights``, the span is every campaign night at every site (00:00 UTC the day before the
    first night to ``nights`` + 2 days later: local noon to noon anywhere from UTC−12 to UTC+14), so
    the report's night charts are complete also at sites whose windows are few or none."""
    from planner.ephemeris import geometry
    from planner.timegrid import time_grid

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


def _check(campaign: Campaign, exposures: pd.DataFrame, done: DoneLog | None, target, trials: int) -> dict:
    from planner.diagnostics import check_times
    from planner.quality import point_sigma_mag

    times = exposures["time_utc"].to_numpy("datetime64[ns]")
    err = exposures["mag_err"].to_numpy(dtype=float)
    if "airmass" in exposures:  # each point also carries the airmass-dependent error (planner.quality)
        err = point_sigma_mag(err, 1, exposures["airmass"].to_numpy(dtype=float), campaign.sys_err_mag_per_airmass)
    site = exposures["site"].to_numpy(dtype=object)
    if done is not None and done.times_utc.size:
        times = np.concatenate([done.times_utc, times])
        err = np.concatenate([done.mag_err, err])
        site = np.concatenate([done.site, site])
    fallback = float(np.nanmedian(err)) if np.isfinite(err).any() else 0.02
    err = np.where(np.isfinite(err) & (err > 0), err, fallback)
    rot = campaign.rotation
    result = check_times(times, min_period_h=rot.min_period_h, max_period_h=rot.max_period_h, mag_err=err,
                         sites=site, target=target, trials=trials, seed=campaign.seed,
                         amplitude_range_mag=rot.amplitude_mag, double_peaked=rot.double_peaked,
                         phase_bins=rot.phase_bins, oversample=rot.oversample)
    return result.to_dict()


def plan_campaign(campaign: Campaign, done_log: str | Path | None = None, *, exact: bool = False,
                  exact_time_limit_s: float = 60.0, check_trials: int | None = None) -> PlanResult:
    """Optimise a campaign; compute its baseline, diagnostics, robustness, windows and geometry sample.

    ``done_log``: CSV of observed times and lost nights (planner.replan); only the remaining nights
    are planned and the log is never modified. ``exact``: also solve the coverage problem exactly
    (HiGHS, up to ``exact_time_limit_s``) to measure the heuristic's optimality gap.
    ``check_trials``: injection–recovery trials per diagnostics run (default: the campaign's).
    """
    from planner.windows import observable_windows

    timings: dict[str, float] = {}
    t = time.perf_counter()
    target = campaign.load_target()
    done = read_done_log(done_log, campaign.sites) if done_log is not None else None
    windows = observable_windows(target, list(campaign.sites), campaign.first_night, campaign.nights,
                                 step_s=campaign.blocks.slot_s)
    timings["windows"] = time.perf_counter() - t
    t = time.perf_counter()
    phot = dict(snr_target=campaign.snr_target, min_exposure_s=campaign.min_exposure_s,
                max_exposure_s=campaign.max_exposure_s)
    core = schedule_core(campaign, windows, done, exact=exact, exact_time_limit_s=exact_time_limit_s,
                         precision_fn=lambda grid: slot_precision(
                             grid, target, campaign.sites, sys_err_mag_per_airmass=campaign.sys_err_mag_per_airmass,
                             **phot))
    timings["schedule"] = time.perf_counter() - t
    t = time.perf_counter()
    blocks, exposures = block_table(core.visits, core.grid, target, campaign.sites, **phot)
    baseline, base_exposures = block_table(core.baseline, core.grid, target, campaign.sites, **phot)
    geo = geometry_sample(target, campaign.sites, core.grid, campaign.nights)
    timings["blocks_and_geometry"] = time.perf_counter() - t
    t = time.perf_counter()
    trials = campaign.check_trials if check_trials is None else check_trials
    bin_s = campaign.blocks.slot_s
    diagnostics = {"plan": _check(campaign, binned_points(exposures, core.grid.t_ref, bin_s), done, target, trials),
                   "baseline": _check(campaign, binned_points(base_exposures, core.grid.t_ref, bin_s), done, target,
                                      trials)}
    timings["diagnostics"] = time.perf_counter() - t
    replan = {}
    if done is not None:
        replan = {"log": done.path, "n_done_times": int(done.times_utc.size),
                  "not_before_utc": None if done.end_utc is None else str(done.end_utc)[:16] + "Z",
                  "lost_site_nights": sorted([s, n.isoformat()] for s, n in done.lost)}
    return PlanResult(campaign=campaign, blocks=blocks, baseline=baseline, diagnostics=diagnostics,
                      objective=core.objective, robustness=core.robustness, windows=windows, geometry=geo,
                      comparison=compare(diagnostics["plan"], diagnostics["baseline"]), exposures=exposures,
                      baseline_exposures=base_exposures, done_log=None if done is None else done.path,
                      replan=replan, timings_s=timings, nights=core.nights, target_name=target.name)
