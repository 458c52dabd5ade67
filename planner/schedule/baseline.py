"""The plan an observer would make by hand, for comparison: one visit per site-night, centred on
the target's highest altitude, all visits as equal as the windows allow, same total hours as the
optimised plan (common practice: observe around transit, where the airmass is lowest)."""

from __future__ import annotations

import numpy as np
import pandas as pd

from planner.schedule.planmodel import Visit
from planner.schedule.slots import SlotGrid, to_slot


def _levels(caps: np.ndarray, total: int) -> np.ndarray:
    """Equal shares of ``total`` slots, none above its cap (water-filling), whole slots."""
    caps = np.asarray(caps, dtype=np.int64)
    total = int(min(total, caps.sum()))
    lo, hi = 0, int(caps.max(initial=0))
    while lo < hi:
        mid = (lo + hi + 1) // 2
        if np.minimum(caps, mid).sum() <= total:
            lo = mid
        else:
            hi = mid - 1
    out = np.minimum(caps, lo)
    left = total - int(out.sum())
    for i in np.flatnonzero(out < caps):
        if left <= 0:
            break
        out[i] += 1
        left -= 1
    return out


def baseline_visits(grid: SlotGrid, windows: pd.DataFrame, total_slots: int) -> list[Visit]:
    """One visit per usable site-night around the window's highest-altitude time (``best_utc``)."""
    if not grid.site_nights or total_slots <= 0:
        return []
    w = windows[windows["best_utc"].notna()].copy()
    w["_night"] = pd.to_datetime(w["night"]).dt.date
    best, caps, homes = [], [], []
    for part in grid.site_nights:
        rows = w[(w["site"] == part.site) & (w["_night"] == part.night)]
        if len(rows):
            row = rows.loc[rows["max_alt_deg"].idxmax()] if "max_alt_deg" in rows else rows.iloc[0]
            b = int(to_slot(np.datetime64(row["best_utc"], "ns"), grid.t_ref, grid.slot_s, up=False))
        else:
            b = (part.intervals[0][0] + part.intervals[-1][1]) // 2
        # The usable interval holding the best time, else the nearest one.
        home = min(part.intervals, key=lambda iv: 0 if iv[0] <= b < iv[1] else min(abs(b - iv[0]), abs(b - iv[1])))
        best.append(b)
        homes.append(home)
        caps.append(min(part.budget_slots, grid.max_slots, home[1] - home[0]))
    lengths = _levels(np.array(caps), total_slots)
    visits = []
    for pi, (b, home, n) in enumerate(zip(best, homes, lengths, strict=True)):
        n = int(n)
        if n <= grid.setup_slots:
            continue
        start = int(np.clip(b - n // 2, home[0], home[1] - n))
        visits.append(Visit(pi, start, n))
    return sorted(visits, key=lambda v: (v.start, v.site_night))
