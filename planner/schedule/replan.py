"""What a log of done observations means for re-planning.

Nothing is scheduled before the last logged exposure ends; lost site-nights are skipped; time already
observed at a site comes off that site-night's budget and those intervals stay blocked; the observed
times count towards coverage, the spectral window and cadence, so the new plan fills the gaps they
leave. The log itself is read by :mod:`planner.inputs.donelog`.
"""

from __future__ import annotations

from datetime import date, timedelta

import numpy as np
import pandas as pd

from planner.inputs.donelog import DoneLog
from planner.inputs.sites import Site

#: Observed times closer than this belong to one run (one visit).
RUN_GAP_S = 900.0


def evening_date(times_utc: np.ndarray, site: Site) -> list[date]:
    """Local date of the evening a time belongs to (local time minus 12 h)."""
    out = []
    for t in pd.to_datetime(np.asarray(times_utc)).tz_localize("UTC").tz_convert(site.tz):
        out.append((t - timedelta(hours=12)).date())
    return out


def done_runs(log: DoneLog) -> dict[str, list[tuple[np.datetime64, np.datetime64]]]:
    """Observed intervals per site: exposures closer than RUN_GAP_S merge into one run.

    Times with no site are grouped under ``""``.
    """
    out: dict[str, list[tuple[np.datetime64, np.datetime64]]] = {}
    for name in sorted(set(log.site.tolist())):
        sel = log.site == name
        t = log.times_utc[sel]
        half = (log.exposure_s[sel] * 0.5e9).astype("timedelta64[ns]")
        order = np.argsort(t)
        a, b = (t - half)[order], (t + half)[order]
        gaps = (a[1:] - b[:-1]).astype(np.int64) / 1e9 > RUN_GAP_S
        starts = np.concatenate([[0], np.flatnonzero(gaps) + 1])
        stops = np.concatenate([np.flatnonzero(gaps), [a.size - 1]])
        out[name] = [(a[i], np.max(b[i : j + 1])) for i, j in zip(starts, stops, strict=True)]
    return out


def used_hours(
    runs: dict[str, list[tuple[np.datetime64, np.datetime64]]], sites: tuple[Site, ...] | list[Site]
) -> dict[tuple[str, date], float]:
    """Hours already observed per (site, evening date)."""
    by_name = {s.name: s for s in sites}
    out: dict[tuple[str, date], float] = {}
    for name, iv in runs.items():
        if name not in by_name:
            continue
        for a, b in iv:
            night = evening_date(np.array([a]), by_name[name])[0]
            out[(name, night)] = out.get((name, night), 0.0) + float((b - a).astype(np.int64)) / 3.6e12
    return out
