"""Weather robustness of a schedule: Monte Carlo over each site's clear-night fraction.

Each trial keeps every site-night's visits with probability equal to its site's clear-night
fraction, independently (common practice for planning: nights are treated as independent). The
coverage of what survives, over many trials, gives the expected coverage and its 10th percentile.
A period band whose covered phase bins are mostly seen from one site only is fragile: one cloudy
site loses it; those bands are listed. Vectorised: one matrix product (trials × visits) @ (visits ×
cells) per schedule.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from planner.schedule.state import PlanModel, Visit


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


def weather_monte_carlo(model: PlanModel, visits: list[Visit], trials: int, seed: int) -> Robustness:
    """Monte Carlo over clear nights; see the module docstring. Deterministic for a fixed seed."""
    n_p, n_b = model.periods_h.size, model.n_bins
    done = model.done_cells.ravel()
    rng = np.random.default_rng(seed)
    parts = model.grid.site_nights
    clear_p = np.array([p.clear_fraction for p in parts], dtype=float)
    clear = rng.random((trials, len(parts))) < clear_p[None, :]
    if visits:
        masks = model.visit_masks(np.array([v.start for v in visits]), np.array([v.length for v in visits]))
        masks = masks.reshape(len(visits), -1)
        keep = clear[:, [v.site_night for v in visits]].astype(np.float32)
        covered = (keep @ masks.astype(np.float32) > 0.5) | done[None, :]
        site_of = np.array([parts[v.site_night].site_index for v in visits])
        per_site = np.stack([masks[site_of == s].any(axis=0) for s in np.unique(site_of)])
        n_sites = per_site.sum(axis=0)
    else:
        covered = np.broadcast_to(done, (trials, done.size))
        n_sites = np.zeros(done.size, dtype=int)
    cov = covered.mean(axis=1)
    worst = covered.reshape(trials, n_p, n_b).mean(axis=2).min(axis=1)
    single = (n_sites == 1) & ~done
    seen = (n_sites > 0) | done
    single_p = single.reshape(n_p, n_b).sum(axis=1)
    seen_p = seen.reshape(n_p, n_b).sum(axis=1)
    frac_p = np.divide(single_p, seen_p, out=np.zeros(n_p), where=seen_p > 0)
    return Robustness(
        trials=int(trials),
        expected_coverage=float(cov.mean()),
        p10_coverage=float(np.percentile(cov, 10)),
        expected_worst_period_coverage=float(worst.mean()),
        p10_worst_period_coverage=float(np.percentile(worst, 10)),
        single_site_fraction=float(single.sum() / max(seen.sum(), 1)),
        single_site_bands_h=_bands(model.periods_h, frac_p > 0.5),
    )
