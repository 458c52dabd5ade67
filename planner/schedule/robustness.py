"""Weather robustness of a schedule: Monte Carlo over each site's clear-night fraction.

Each trial keeps every site-night's visits with probability equal to its site's clear-night
fraction, independently (common practice for planning: nights are treated as independent). The
coverage of what survives, over many trials, gives the expected coverage and its 10th percentile.
A period band whose covered phase bins are mostly seen from one site only is fragile: one cloudy
site loses it; those bands are listed. Vectorised: a matrix product (trials × site-nights) @
(site-nights × cells) per block of trials and chunk of periods.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from planner.core.parallel import FLOPS_PER_S, TrialBlock, run_blocks, trial_blocks
from planner.schedule.objective import arc_mask
from planner.schedule.planmodel import PlanModel, Visit

#: Bytes of the (trials or visits) × cells float32 products held at once.
_CHUNK_BYTES = 48_000_000


@dataclass
class Robustness:
    trials: int
    expected_coverage: float
    p10_coverage: float
    expected_worst_period_coverage: float
    p10_worst_period_coverage: float
    #: Share of covered (period, bin) cells touched from one site only.
    single_site_fraction: float
    #: Period ranges [low_h, high_h] where most covered cells are touched from one site only.
    single_site_bands_h: list[list[float]]

    def to_dict(self) -> dict:
        return {k: v for k, v in self.__dict__.items()}


def _bands(periods_h: np.ndarray, flag: np.ndarray) -> list[list[float]]:
    out = []
    idx = np.flatnonzero(flag)
    if idx.size == 0:
        return out
    breaks = np.flatnonzero(np.diff(idx) > 1)
    starts = np.concatenate([[idx[0]], idx[breaks + 1]])
    stops = np.concatenate([idx[breaks], [idx[-1]]])
    for a, b in zip(starts, stops, strict=True):
        out.append([round(float(periods_h[a]), 4), round(float(periods_h[b]), 4)])
    return out


@dataclass(frozen=True)
class _WeatherTask:
    """What a block of weather trials needs: each visit's science interval and site-night, the site-nights'
    clear fractions, the period grid and what was already observed."""

    t0_h: np.ndarray
    t1_h: np.ndarray
    part: np.ndarray
    clear_fraction: np.ndarray
    periods_h: np.ndarray
    n_bins: int
    done: np.ndarray


def _period_chunks(task: _WeatherTask, n_rows: int) -> list[slice]:
    """Period ranges whose (rows × cells) float32 product stays near _CHUNK_BYTES."""
    per_period = max(1, n_rows) * task.n_bins * 4
    step = max(1, _CHUNK_BYTES // per_period)
    return [slice(a, min(a + step, task.periods_h.size)) for a in range(0, task.periods_h.size, step)]


def _part_cells(task: _WeatherTask, rows: slice) -> np.ndarray:
    """Cells of each site-night with visits (the union of its visits, in site-night order) on the periods
    ``rows``: bool (S, cells)."""
    m = arc_mask(task.t0_h, task.t1_h, task.periods_h[rows], task.n_bins).reshape(task.t0_h.size, -1)
    first = np.flatnonzero(np.concatenate([[True], task.part[1:] != task.part[:-1]]))  # visits sorted by part
    return np.logical_or.reduceat(m, first, axis=0)


def _weather_block(block: TrialBlock) -> tuple[np.ndarray, np.ndarray]:
    """Coverage and worst-period coverage of each trial in the block (the draws of its own stream)."""
    task: _WeatherTask = block.data
    clear = block.rng().random((block.size, task.clear_fraction.size)) < task.clear_fraction[None, :]
    n_cells = task.periods_h.size * task.n_bins
    covered_n = np.zeros(block.size, dtype=np.int64)
    worst = np.full(block.size, np.inf)
    parts = np.unique(task.part)
    keep = clear[:, parts].astype(np.float32)
    for rows in _period_chunks(task, max(block.size, parts.size)):
        done = task.done[rows].ravel()
        if parts.size:
            masks = _part_cells(task, rows).astype(np.float32)
            covered = (keep @ masks > 0.5) | done[None, :]
        else:
            covered = np.broadcast_to(done, (block.size, done.size))
        covered_n += covered.sum(axis=1)
        per_period = covered.reshape(block.size, -1, task.n_bins).mean(axis=2)
        worst = np.minimum(worst, per_period.min(axis=1))
    return covered_n / max(n_cells, 1), worst


def weather_monte_carlo(
    model: PlanModel,
    visits: list[Visit],
    trials: int,
    seed: int,
    *,
    workers: int | None = 1,
    dask_address: str | None = None,
) -> Robustness:
    """Monte Carlo over clear nights; see the module docstring. Deterministic for a fixed seed, whatever the
    number of workers: trials run in blocks with their own random streams (planner.core.parallel), and the
    cells in chunks of periods, so memory stays bounded for any number of trials and nights."""
    n_p, n_b = model.periods_h.size, model.n_bins
    parts = model.grid.site_nights
    order = sorted(range(len(visits)), key=lambda i: visits[i].site_night)
    vs = [visits[i] for i in order]
    t0, t1 = model.science_h(
        np.array([v.start for v in vs], dtype=float), np.array([v.length for v in vs], dtype=float)
    )
    task = _WeatherTask(
        t0_h=np.asarray(t0, dtype=float).reshape(-1),
        t1_h=np.asarray(t1, dtype=float).reshape(-1),
        part=np.array([v.site_night for v in vs], dtype=np.int64),
        clear_fraction=np.array([p.clear_fraction for p in parts], dtype=float),
        periods_h=model.periods_h,
        n_bins=n_b,
        done=model.done_cells,
    )
    cost_s = 2.0 * trials * max(len({v.site_night for v in vs}), 1) * n_p * n_b / FLOPS_PER_S
    results = run_blocks(
        _weather_block, trial_blocks(trials, seed, task), workers=workers, dask_address=dask_address, cost_s=cost_s
    )
    cov = np.concatenate([r[0] for r in results]) if results else np.zeros(0)
    worst = np.concatenate([r[1] for r in results]) if results else np.zeros(0)
    # Cells seen from one site only (no randomness): per chunk of periods, sites touching each cell.
    site_of = np.array([parts[v.site_night].site_index for v in vs], dtype=np.int64)
    sites = np.unique(site_of)
    single_p = np.zeros(n_p)
    seen_p = np.zeros(n_p)
    for rows in _period_chunks(task, max(len(vs), 1)):
        done = model.done_cells[rows].ravel()
        if vs:
            m = arc_mask(task.t0_h, task.t1_h, model.periods_h[rows], n_b).reshape(len(vs), -1)
            n_sites = np.zeros(m.shape[1], dtype=np.int64)
            for s in sites:
                n_sites += m[site_of == s].any(axis=0)
        else:
            n_sites = np.zeros(done.size, dtype=np.int64)
        single = (n_sites == 1) & ~done
        seen = (n_sites > 0) | done
        single_p[rows] = single.reshape(-1, n_b).sum(axis=1)
        seen_p[rows] = seen.reshape(-1, n_b).sum(axis=1)
    frac_p = np.divide(single_p, seen_p, out=np.zeros(n_p), where=seen_p > 0)
    return Robustness(
        trials=int(trials),
        expected_coverage=float(cov.mean()),
        p10_coverage=float(np.percentile(cov, 10)),
        expected_worst_period_coverage=float(worst.mean()),
        p10_worst_period_coverage=float(np.percentile(worst, 10)),
        single_site_fraction=float(single_p.sum() / max(seen_p.sum(), 1)),
        single_site_bands_h=_bands(model.periods_h, frac_p > 0.5),
    )
