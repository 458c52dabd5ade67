"""Small synthetic scheduling instances (no geometry): windows tables, sites and models."""

from __future__ import annotations

import dataclasses
from datetime import date, timedelta
from pathlib import Path

import numpy as np
import pandas as pd

from planner.inputs.campaign import Campaign
from planner.inputs.settings import BlockRules, Rotation, Weights
from planner.inputs.sites import Allocation, Site
from planner.schedule.objective import alias_freq_grid
from planner.schedule.planmodel import Done, PlanModel
from planner.schedule.slots import build_slots

T_REF = np.datetime64("2034-03-15T00:00", "ns")

#: The small campaigns' block rules (10-minute slots, 1–3 h blocks, two a night).
SMALL_BLOCKS = BlockRules(slot_minutes=10, min_block_h=1.0, max_block_h=3.0, setup_minutes=10, max_per_night=2)


def small_campaign(sites, nights: int, **changes) -> Campaign:
    """A campaign built in Python over ``sites`` from 2034-03-16 (periods 3–20 h on 8 bins, a coarse grid,
    ten weather trials), with any field replaced by ``changes``."""
    base = Campaign(
        name="small",
        path=Path("small.toml"),
        target_path=Path("t.toml"),
        site_paths=(),
        sites=tuple(sites),
        first_night=date(2034, 3, 16),
        nights=nights,
        seed=3,
        rotation=Rotation(min_period_h=3.0, max_period_h=20.0, phase_bins=8, oversample=2.0),
        block_rules=SMALL_BLOCKS,
        weather_trials=10,
    )
    return dataclasses.replace(base, **changes)


def synthetic_windows(
    n_sites: int,
    n_nights: int,
    window_h: float = 8.0,
    stagger_h: float = 7.0,
    hours_per_night: float | None = 3.0,
    seed: int = 0,
):
    """Sites spread in longitude: site s opens ``stagger_h`` later than site s-1, jittered by the seed."""
    rng = np.random.default_rng(seed)
    rows, sites = [], []
    for s in range(n_sites):
        alloc = Allocation(hours_per_night=hours_per_night) if hours_per_night else Allocation()
        sites.append(
            Site(
                name=f"S{s}",
                latitude_deg=-30.0,
                longitude_deg=0.0,
                allocation=alloc,
                clear_fraction=float(0.6 + 0.1 * (s % 4)),
            )
        )
        for n in range(n_nights):
            jitter_min = int(rng.integers(0, 60))
            start = T_REF + np.timedelta64(24 * 60 * (n + 1) + int(s * stagger_h * 60) + jitter_min, "m")
            end = start + np.timedelta64(int(window_h * 60), "m")
            best = start + (end - start) // 2
            rows.append(
                dict(
                    site=f"S{s}",
                    night=(date(2034, 3, 16) + timedelta(days=n)).isoformat(),
                    start_utc=start,
                    end_utc=end,
                    hours=window_h,
                    best_utc=best,
                    max_alt_deg=60.0,
                )
            )
    return pd.DataFrame(rows), sites


def period_grid(min_h: float, max_h: float, n: int) -> np.ndarray:
    """Trial periods uniform in frequency (test-local; the real grid is planner.diagnostics.coverage.period_grid_h)."""
    return 1.0 / np.linspace(1.0 / min_h, 1.0 / max_h, n)


def model_for(
    n_sites=2,
    n_nights=2,
    *,
    window_h=8.0,
    hours=3.0,
    blocks=None,
    n_periods=40,
    n_bins=12,
    min_h=2.0,
    max_h=30.0,
    weights=None,
    done=None,
    seed=0,
    total_hours=None,
    **slot_kwargs,
):
    w, sites = synthetic_windows(n_sites, n_nights, window_h=window_h, hours_per_night=hours, seed=seed)
    blocks = blocks or BlockRules(slot_minutes=5, min_block_h=1.0, max_block_h=4.0, setup_minutes=10, max_per_night=2)
    grid = build_slots(w, sites, blocks, T_REF, total_hours=total_hours, **slot_kwargs)
    periods = period_grid(min_h, max_h, n_periods)
    freqs = alias_freq_grid(min_h, max_h, n_nights * 24.0, True)
    freqs = freqs[freqs <= 5.0]
    model = PlanModel(grid, periods, n_bins, freqs, weights or Weights(), 12.0, done or Done())
    return model, w, sites
