"""The scheduling stage on a windows table: slots, objective model, optimiser, baseline, weather, notes.

``schedule_core`` needs only a windows table (and optionally each slot's photometric precision), so
tests and benchmarks drive it without geometry. Its result is typed (:class:`PlanCore`, with the
objective as an :class:`ObjectiveSummary`); dictionaries appear only when a file is written.
"""

from __future__ import annotations

import re
from collections.abc import Callable
from dataclasses import dataclass, field
from datetime import timedelta

import numpy as np
import pandas as pd

from planner.core.errors import InputError
from planner.diagnostics.coverage import period_grid_h, thin_periods
from planner.inputs.campaign import Campaign
from planner.inputs.donelog import DoneLog
from planner.inputs.settings import Weights
from planner.schedule.baseline import baseline_visits
from planner.schedule.discrimination import CandidatePeriods
from planner.schedule.exact import ExactResult, exact_coverage
from planner.schedule.greedy import greedy_lazy
from planner.schedule.localsearch import SearchStats
from planner.schedule.nightnotes import night_notes
from planner.schedule.objective import SEPARATION_SCALE, SOFTMIN_POWER, Terms, alias_freq_grid
from planner.schedule.optimise import optimise, total_slots
from planner.schedule.planmodel import Done, PlanModel, Visit
from planner.schedule.quality import slot_quality
from planner.schedule.replan import done_runs, used_hours
from planner.schedule.robustness import Robustness, weather_monte_carlo
from planner.schedule.slots import SlotGrid, build_slots

#: Highest window frequency (cycles/day) the alias term looks at, as in ``phasewise check``.
ALIAS_MAX_FREQ_PER_DAY = 5.0
#: The objective, in words (the weights are the campaign's ``[weights]``).
OBJECTIVE_DEFINITION = (
    "J = w_cov*coverage + w_rob*expected_coverage - w_alias*alias - w_cad*gap_fraction"
    " + w_hours*hours_fraction + w_quality*quality"
)
#: The term added when re-planning from a fitted light curve (planner.schedule.discrimination).
DISCRIMINATION_DEFINITION = " + w_disc*discrimination"


@dataclass
class ExactComparison:
    """The exact coverage optimum (or its bound) beside the coverage-only greedy it is measured against."""

    result: ExactResult
    coverage_greedy_cells: int

    @property
    def greedy_ratio(self) -> float | None:
        ex = self.result
        if ex.upper_bound_cells and (ex.optimal or ex.covered_cells):
            return self.coverage_greedy_cells / ex.upper_bound_cells
        return None

    def to_dict(self) -> dict:
        ex = self.result
        return {
            "covered_cells": ex.covered_cells,
            "upper_bound_cells": ex.upper_bound_cells,
            "optimal": ex.optimal,
            "seconds": ex.seconds,
            "status": ex.status,
            "coverage_greedy_cells": self.coverage_greedy_cells,
            "greedy_ratio": self.greedy_ratio,
        }


def thinned_periods_text(n_periods: int, n_periods_grid: int) -> str:
    """What the printed plan and the report say when the optimiser counted coverage on a sub-grid."""
    return (
        f"trial periods: the optimiser counted phase coverage on {n_periods} of the {n_periods_grid}, evenly "
        "spread in frequency (rotation.max_plan_periods); the plan's checks use all of them"
    )


@dataclass
class ObjectiveSummary:
    """The optimiser's objective terms for the plan, its greedy start and the baseline, with the guarantee."""

    weights: Weights
    heuristic: Terms
    greedy: Terms
    greedy_covered_cells: int
    n_cells: int
    greedy_evaluations: int
    n_elements: int
    baseline: Terms
    guarantee_ratio: float | None
    guarantee: str
    search: SearchStats
    n_periods: int
    #: Trial periods of the whole grid (``n_periods`` of them, evenly thinned, are the optimiser's).
    n_periods_grid: int
    phase_bins: int
    n_alias_freqs: int
    seconds: dict[str, float]
    exact: ExactComparison | None = None
    #: The candidate rotation periods separated by the discrimination term (re-planning from a light curve),
    #: and the pairs it separates.
    candidates_h: list[float] | None = None
    pairs_h: list[list[float]] | None = None

    def to_dict(self) -> dict:
        with_disc = self.candidates_h is not None
        out = {
            "definition": OBJECTIVE_DEFINITION + (DISCRIMINATION_DEFINITION if with_disc else ""),
            "weights": {k: float(v) for k, v in self.weights.__dict__.items() if with_disc or k != "discrimination"},
            "heuristic": self.heuristic.to_dict(),
            "greedy": {
                **self.greedy.to_dict(),
                "covered_cells": self.greedy_covered_cells,
                "n_cells": self.n_cells,
                "evaluations": self.greedy_evaluations,
                "elements": self.n_elements,
            },
            "baseline": self.baseline.to_dict(),
            "guarantee": {"ratio": self.guarantee_ratio, "statement": self.guarantee},
            "local_search": dict(self.search.__dict__),
            "n_periods": self.n_periods,
            "n_periods_grid": self.n_periods_grid,
            "phase_bins": self.phase_bins,
            "n_alias_freqs": self.n_alias_freqs,
            "seconds": self.seconds,
        }
        if self.exact is not None:
            out["exact"] = self.exact.to_dict()
        if with_disc:
            out["discrimination"] = {
                "candidates_h": self.candidates_h,
                "pairs_h": self.pairs_h,
                "separation_scale": SEPARATION_SCALE,
                "softmin_power": SOFTMIN_POWER,
            }
        return out


@dataclass
class PlanCore:
    """The pure scheduling result on a slot grid (no geometry or photometry): what tests and benchmarks drive."""

    grid: SlotGrid
    model: PlanModel
    visits: list[Visit]
    baseline: list[Visit]
    objective: ObjectiveSummary
    #: Weather Monte Carlo of the plan and of the baseline.
    robustness: dict[str, Robustness]
    #: Every site and campaign night: blocks planned, or why none (planner.schedule.nightnotes).
    nights: pd.DataFrame = field(default_factory=pd.DataFrame)


def t_ref_for(campaign: Campaign) -> np.datetime64:
    """Slot-grid origin: 00:00 UTC the day before the first night (earlier than any site's evening)."""
    return np.datetime64((campaign.first_night - timedelta(days=1)).isoformat(), "ns")


def hours_since(times_utc: np.ndarray, t_ref: np.datetime64) -> np.ndarray:
    return (np.asarray(times_utc, dtype="datetime64[ns]") - t_ref).astype(np.int64) / 3.6e12


def _why_no_window(windows: pd.DataFrame, log_end_utc: np.datetime64 | None = None) -> str:
    """``' (Site A: too close to the Sun: elongation 12.4° < 30°; ...)'``: each site's first reason for
    a night without a window, without the parenthesised detail, so the one-line error says why. When an
    observation log ends after the last window, that is the reason."""
    if "reason" not in windows or not len(windows):
        return ""
    ends = pd.to_datetime(windows["end_utc"]).dropna()
    if log_end_utc is not None and len(ends) and np.datetime64(ends.max().to_datetime64(), "ns") <= log_end_utc:
        return (
            f" (the observation log runs to {str(log_end_utc)[:16]}Z, after the campaign's last window ends "
            f"at {str(ends.max().to_datetime64())[:16]}Z)"
        )
    parts = []
    for site, rows in windows.groupby("site", sort=False):
        if (rows["hours"] > 0).any():
            continue  # this site has windows: they are too short or already past
        reasons = [r for r in rows["reason"].astype(str) if r.strip()]
        if reasons:
            short = re.sub(r"\s*\([^)]*\)", "", reasons[0]).strip()
            parts.append(f"{site}: {short}")
    return f" ({'; '.join(parts)})" if parts else ""


def quality_and_weights(
    precision: list[np.ndarray], airmass: list[np.ndarray], *, max_airmass: float
) -> tuple[list[np.ndarray], list[np.ndarray]]:
    """Per site-night slot arrays: spectral-window weight (precision 1/σ², mean 1 over the slots where it is
    known, the mean elsewhere) and quality (planner.schedule.quality.slot_quality, 0 where unknown)."""
    flat = np.concatenate(precision) if precision else np.zeros(0)
    finite = np.isfinite(flat) & (flat > 0)
    if not finite.any():
        return [np.ones(p.size) for p in precision], [np.zeros(p.size) for p in precision]
    mean, best = float(flat[finite].mean()), float(flat[finite].max())
    weight = [np.where(np.isfinite(p) & (p > 0), p, mean) / mean for p in precision]
    quality = [slot_quality(p, x, max_airmass, best) for p, x in zip(precision, airmass, strict=True)]
    return weight, quality


def schedule_core(
    campaign: Campaign,
    windows: pd.DataFrame,
    done: DoneLog | None = None,
    *,
    exact: bool = False,
    exact_time_limit_s: float = 60.0,
    max_evaluations: int | None = None,
    precision_fn: Callable[[SlotGrid], tuple[list[np.ndarray], list[np.ndarray]]] | None = None,
    candidates: CandidatePeriods | None = None,
    progress: Callable[[str], None] | None = None,
) -> PlanCore:
    """Optimise on a windows table: slots, greedy + local search, baseline, robustness, and the exact
    optimum when asked. ``precision_fn(grid)`` gives, per site-night, the precision 1/σ² and airmass
    of every slot of its span (planner.schedule.quality.slot_precision); they set the slots' quality and each
    site-night's spectral-window weight. Without it every slot has quality 1 and weight 1.

    ``candidates`` (re-planning from a fitted light curve, planner.schedule.discrimination): the trial
    periods become the windows around the candidate periods, and with two or more candidates the
    objective gains the discrimination term. ``progress(stage)``
    is told when the slots, the optimiser and the weather trials start."""
    progress = progress or (lambda stage: None)
    progress("slots")
    t_ref = t_ref_for(campaign)
    sites = campaign.sites
    kwargs: dict = {}
    done_model = Done()
    if done is not None:
        runs = done_runs(done)
        kwargs = dict(
            not_before_utc=done.end_utc,
            lost=done.lost,
            used_h=used_hours(runs, sites),
            busy_utc={k: v for k, v in runs.items() if k},
        )
        iv = [(a, b) for v in runs.values() for a, b in v]
        done_model = Done(
            times_h=hours_since(done.times_utc, t_ref),
            intervals_h=np.array([[hours_since(a, t_ref), hours_since(b, t_ref)] for a, b in iv]).reshape(-1, 2),
        )
    grid = build_slots(windows, sites, campaign.block_rules, t_ref, total_hours=campaign.total_hours, **kwargs)
    if not grid.site_nights:
        raise InputError(
            campaign.source,
            "sites",
            "no site has an observable window long enough for one block in the nights left to plan"
            + _why_no_window(windows, None if done is None else done.end_utc),
        )
    rot = campaign.rotation
    span_h = campaign.nights * 24.0
    band = (rot.min_period_h, rot.max_period_h)
    if candidates is None:
        grid_periods = period_grid_h(*band, span_h, rot.oversample)
    else:
        grid_periods = candidates.period_grid_h(span_h, rot.oversample)
        band = (float(grid_periods.min()), float(grid_periods.max()))
    periods = thin_periods(grid_periods, rot.max_plan_periods)
    freqs = alias_freq_grid(*band, span_h, rot.double_peaked)
    freqs = freqs[freqs <= ALIAS_MAX_FREQ_PER_DAY]
    weight = quality = precision = moments = None
    if precision_fn is not None:
        precision, airmass = precision_fn(grid)
        weight, quality = quality_and_weights(precision, airmass, max_airmass=campaign.photometry.max_airmass)
    if candidates is not None and candidates.n_pairs:
        moments = candidates.slot_moments(grid, precision)
    model = PlanModel(
        grid,
        periods,
        rot.phase_bins,
        freqs,
        campaign.weights,
        campaign.max_gap_h,
        done_model,
        slot_weight=weight,
        slot_quality=quality,
        slot_moments=moments,
    )
    progress("optimiser")
    opt = optimise(model, seed=campaign.seed, max_evaluations=max_evaluations)
    base = baseline_visits(grid, windows, total_slots(opt.visits))
    objective = ObjectiveSummary(
        weights=campaign.weights,
        heuristic=opt.terms,
        greedy=opt.greedy_terms,
        greedy_covered_cells=opt.greedy.covered_cells,
        n_cells=model.n_cells,
        greedy_evaluations=opt.greedy.evaluations,
        n_elements=grid.n_elements,
        baseline=model.terms(base),
        guarantee_ratio=opt.guarantee_ratio,
        guarantee=opt.guarantee,
        search=opt.search,
        n_periods=int(periods.size),
        n_periods_grid=int(grid_periods.size),
        phase_bins=int(rot.phase_bins),
        n_alias_freqs=int(freqs.size),
        seconds=opt.seconds,
        candidates_h=None if moments is None else candidates.candidates_h,
        pairs_h=None if moments is None else candidates.pairs_h,
    )
    if exact:
        # The exact mode solves coverage alone, so it is measured against the coverage-only greedy.
        cov_greedy = greedy_lazy(grid, model.element_cells(), model.done_cells)
        ex = exact_coverage(model, time_limit_s=exact_time_limit_s, greedy_cells=cov_greedy.covered_cells)
        objective.exact = ExactComparison(ex, cov_greedy.covered_cells)
    progress("weather trials")
    trials = campaign.weather_trials
    where = dict(workers=campaign.compute.workers, dask_address=campaign.compute.dask_address)
    robustness = {
        "plan": weather_monte_carlo(model, opt.visits, trials, campaign.seed, **where),
        "baseline": weather_monte_carlo(model, base, trials, campaign.seed, **where),
    }
    nights = night_notes(
        campaign,
        windows,
        grid,
        model,
        opt.visits,
        lost=None if done is None else done.lost,
        not_before_utc=None if done is None else done.end_utc,
        not_before_site=None if done is None else done.end_site,
        observed_h=kwargs.get("used_h"),
    )
    return PlanCore(
        grid=grid,
        model=model,
        visits=opt.visits,
        baseline=base,
        objective=objective,
        robustness=robustness,
        nights=nights,
    )
