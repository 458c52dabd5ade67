"""Logs of what was done, read for re-planning: observed times and lost site-nights.

The log is an observation log (read, never written) in the one format of :mod:`planner.inputs.obslog`:
``time_utc``, ``site``, ``exposure_s``, ``mag``, ``mag_err``, ``band``, ``status`` (``observed`` or
``lost``) and ``night`` (a ``lost`` row with no ``site`` loses that night at every site). Rows with a
``mag`` make a light curve the re-plan fits (planner.pipeline). Site names are checked
against the campaign's here, at the input boundary; what the log means for the new plan is
:mod:`planner.schedule.replan`.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import date
from pathlib import Path

import numpy as np

from planner.core.errors import InputError
from planner.inputs.obslog import ObservationLog, read_observation_log
from planner.inputs.sites import Site

_DEFAULT_EXPOSURE_S = 60.0


@dataclass
class DoneLog:
    path: str
    times_utc: np.ndarray
    site: np.ndarray
    exposure_s: np.ndarray
    mag_err: np.ndarray
    lost: set[tuple[str, date]] = field(default_factory=set)
    #: The observation log as read: magnitudes, bands and nights for the light-curve fit of a re-plan.
    log: ObservationLog | None = None

    @property
    def has_magnitudes(self) -> bool:
        """Whether any observed row carries a magnitude."""
        return self.log is not None and bool(self.log.has_mag.any())

    @property
    def end_utc(self) -> np.datetime64 | None:
        """When the last logged exposure ends (nothing is planned before it)."""
        if self.times_utc.size == 0:
            return None
        half = (self.exposure_s * 0.5e9).astype("timedelta64[ns]")
        return np.max(self.times_utc + half)

    @property
    def end_site(self) -> str | None:
        """The site of the exposure that ends last ("" when the log names none)."""
        if self.times_utc.size == 0:
            return None
        half = (self.exposure_s * 0.5e9).astype("timedelta64[ns]")
        return str(self.site[int(np.argmax(self.times_utc + half))])


def read_done_log(path: str | Path, sites: tuple[Site, ...] | list[Site]) -> DoneLog:
    """Read a log of observed times and lost nights (planner.inputs.obslog, the one log reader; the file is
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
        for name in [row.site] if row.site else sorted(names):
            lost.add((name, row.night))
    return DoneLog(
        path=log.path,
        times_utc=log.times_utc,
        site=log.site_or(),
        exposure_s=log.exposure_or(_DEFAULT_EXPOSURE_S),
        mag_err=log.mag_err_or(np.nan),
        lost=lost,
        log=log,
    )
