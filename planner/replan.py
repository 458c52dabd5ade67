"""Re-planning from a log of what was done: observed times and lost nights.

The log is a CSV file (read, never written): ``time_utc`` (mid-exposure, ISO 8601 UTC) and optional
``site``, ``exposure_s``, ``mag_err`` like any observation log, plus two columns of our own for
re-planning: ``status`` (``observed``, the default, or ``lost``) and ``night`` (local date of the
evening, for ``lost`` rows; a ``lost`` row with no ``site`` loses that night at every site).

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
from planner.sites import Site
from planner.timegrid import parse_utc

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
    """Read and validate a log of observed times and lost nights (the file is only read)."""
    p = Path(path)
    if not p.is_file():
        raise InputError(str(p), "-", "file not found")
    try:
        df = pd.read_csv(p, dtype=str, keep_default_na=False, comment="#")
    except (pd.errors.ParserError, UnicodeDecodeError, pd.errors.EmptyDataError) as exc:
        raise InputError(str(p), "-", f"not a readable CSV file ({str(exc).splitlines()[0]})") from None
    cols = [c.strip() for c in df.columns]
    df.columns = cols
    if "time_utc" not in cols:
        raise InputError(str(p), "time_utc", "missing column (mid-exposure times, ISO 8601 UTC)")
    names = {s.name for s in sites}
    times, site_col, exp_col, err_col, lost = [], [], [], [], set()
    for i, row in enumerate(df.to_dict("records")):
        line = i + 2
        status = (row.get("status") or "observed").strip().lower()
        site = (row.get("site") or "").strip()
        if site and site not in names:
            raise InputError(str(p), f"line {line}: site",
                             f"{site!r} is not a campaign site ({', '.join(sorted(names))})")
        if status == "lost":
            text = (row.get("night") or "").strip()
            try:
                night = date.fromisoformat(text)
            except ValueError:
                raise InputError(str(p), f"line {line}: night",
                                 f"{text!r}: a lost row needs the local date of the evening, e.g. 2034-03-17") from None
            for name in ([site] if site else sorted(names)):
                lost.add((name, night))
            continue
        if status != "observed":
            raise InputError(str(p), f"line {line}: status", f"{status!r} is not observed or lost")
        times.append(parse_utc(row["time_utc"], str(p), f"line {line}: time_utc"))
        site_col.append(site)
        exp_text = (row.get("exposure_s") or "").strip()
        err_text = (row.get("mag_err") or "").strip()
        try:
            exp = float(exp_text) if exp_text else _DEFAULT_EXPOSURE_S
            err = float(err_text) if err_text else np.nan
        except ValueError:
            raise InputError(str(p), f"line {line}: exposure_s/mag_err", "not a number") from None
        if not (0.0 < exp < 86400.0):
            raise InputError(str(p), f"line {line}: exposure_s", f"{exp:g} is outside (0, 86400)")
        exp_col.append(exp)
        err_col.append(err)
    return DoneLog(path=str(p), times_utc=np.array(times, dtype="datetime64[ns]"),
                   site=np.array(site_col, dtype=object),
                   exposure_s=np.array(exp_col, dtype=float), mag_err=np.array(err_col, dtype=float), lost=lost)


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
