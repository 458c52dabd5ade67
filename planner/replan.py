"""Re-planning from a log of what was done: observed times and lost nights.

The log is an observation log (read, never written) in the one format of :mod:`planner.obslog`:
``time_utc``, ``site``, ``exposure_s``, ``mag_err``, ``status`` (``observed`` or ``lost``) and
``night`` (a ``lost`` row with no ``site`` loses that night at every site).

What it means for the plan: nothing is scheduled before the last logged exposure ends; lost
site-nights are skipped; time already observed at a site comes off that site-night's budget and
those intervals stay blocked; the observed times count towards coverage, the spectral window and
cadence, so the new plan fills the gaps they leave.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import date, timedelta
from pathlib import Path

import numpy as np
import pandas as pd

from planner.errors import InputError
from planner.obslog import read_observation_log
from planner.sites import Site

#: Observed times closer than this belong to one run (one visit).
RUN_GAP_S = 900.0
_DEFAULT_EXPOSURE_S = 60.0


@dataclass
class DoneLog:
    path: str
    times_utc: np.ndarray
    site: np.ndarray
    exposure_s: np.ndarray
    mag_err: np.ndarray
    lost: set[tuple[str, date]] = field(default_factory=set)

    @property
    def end_utc(self) -> np.datetime64 | None:
        """When the last logged exposure ends (nothing is planned before it)."""
        if self.times_utc.size == 0:
            return None
        half = (self.exposure_s * 0.5e9).astype("timedelta64[ns]")
        return np.max(self.times_utc + half)


def read_done_log(path: str | Path, sites: tuple[Site, ...] | list[Site]) -> DoneLog:
    """Read a log of observed times and lost nights (planner.obslog, the one log reader; the file is
    only read) and check its site names against the campaign's. Observed rows with no exposure take
    a default of 60 s; lost rows with no site stand for every campaign site."""
    log = read_observation_log(path)
    names = {s.name for s in sites}
    known = ", ".join(sorted(names))
    for site, n in zip(log.site_or().tolist(), log.rows.tolist(), strict=True):
        if site and site not in names:
            raise InputError(log.path, f"site (row {n})", f"{site!r} is not a campaign site ({known})")
    lost: set[tuple[str, date]] = set()
    for row in log.lost:
        if row.site and row.site not in names:
            raise InputError(log.path, f"site (row {row.row})", f"{row.site!r} is not a campaign site ({known})")
        for name in ([row.site] if row.site else sorted(names)):
            lost.add((name, row.night))
    return DoneLog(path=log.path, times_utc=log.times_utc, site=log.site_or(),
                   exposure_s=log.exposure_or(_DEFAULT_EXPOSURE_S), mag_err=log.mag_err_or(np.nan), lost=lost)


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
        out[name] = [(a[i], np.max(b[i:j + 1])) for i, j in zip(starts, stops, strict=True)]
    return out


def used_hours(runs: dict[str, list[tuple[np.datetime64, np.datetime64]]],
               sites: tuple[Site, ...] | list[Site]) -> dict[tuple[str, date], float]:
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
