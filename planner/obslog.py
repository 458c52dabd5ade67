"""Logs of observation times (CSV): ``time_utc`` and optional ``site``, ``exposure_s``, ``mag_err``.

``time_utc`` is the mid-exposure time in UTC (ISO 8601). Every bad cell is reported as
``FILE: COLUMN (row N): message``, N counting data rows from 1 (the header is row 0).
"""

from __future__ import annotations

import csv
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from planner.errors import InputError
from planner.timegrid import parse_utc

KNOWN_COLUMNS = ("time_utc", "site", "exposure_s", "mag_err")


@dataclass
class ObservationLog:
    """Times (datetime64[ns], file order) with optional per-row site, exposure and σ (NaN = not given)."""

    times_utc: np.ndarray
    site: np.ndarray | None
    exposure_s: np.ndarray | None
    mag_err: np.ndarray | None

    def mag_err_or(self, default_mag: float) -> np.ndarray:
        """Per-point σ: the log's value where given, ``default_mag`` elsewhere."""
        n = self.times_utc.size
        if self.mag_err is None:
            return np.full(n, float(default_mag))
        return np.where(np.isfinite(self.mag_err), self.mag_err, float(default_mag))


def _positive(text: str, file: str, field: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise InputError(file, field, f"{text!r} is not a number") from None
    if not math.isfinite(value) or value <= 0:
        raise InputError(file, field, f"{text!r} must be a positive number")
    return value


def read_observation_log(path: str | Path) -> ObservationLog:
    """Read and validate a CSV log; unknown columns are rejected, empty optional cells allowed."""
    p = Path(path)
    file = str(p)
    try:
        with p.open(newline="", encoding="utf-8-sig") as fh:
            rows = list(csv.reader(fh))
    except FileNotFoundError:
        raise InputError(file, "-", "file not found") from None
    except IsADirectoryError:
        raise InputError(file, "-", "is a folder, expected a CSV file") from None
    except UnicodeDecodeError:
        raise InputError(file, "-", "not a UTF-8 text file") from None
    rows = [r for r in rows if any(c.strip() for c in r)]
    if not rows:
        raise InputError(file, "time_utc", "the file is empty (expected a header with time_utc)")
    header = [h.strip() for h in rows[0]]
    for h in header:
        if h not in KNOWN_COLUMNS:
            raise InputError(file, h or "(blank)", f"unknown column (known: {', '.join(KNOWN_COLUMNS)})")
    if "time_utc" not in header:
        raise InputError(file, "time_utc", "missing column")
    if len(set(header)) != len(header):
        raise InputError(file, "-", "a column name appears twice in the header")
    col = {h: i for i, h in enumerate(header)}
    data = rows[1:]
    if not data:
        raise InputError(file, "time_utc", "no observation times (only a header)")
    times, sites, exposures, errs = [], [], [], []
    for n, row in enumerate(data, start=1):
        if len(row) != len(header):
            raise InputError(file, f"row {n}", f"has {len(row)} cells, the header has {len(header)}")
        cell = {h: row[i].strip() for h, i in col.items()}
        times.append(parse_utc(cell["time_utc"], file, f"time_utc (row {n})") if cell["time_utc"]
                     else _missing(file, n))
        sites.append(cell.get("site", ""))
        exposures.append(_positive(cell["exposure_s"], file, f"exposure_s (row {n})")
                         if cell.get("exposure_s") else math.nan)
        errs.append(_positive(cell["mag_err"], file, f"mag_err (row {n})")
                    if cell.get("mag_err") else math.nan)
    return ObservationLog(
        times_utc=np.array(times, dtype="datetime64[ns]"),
        site=np.array(sites) if "site" in col else None,
        exposure_s=np.array(exposures) if "exposure_s" in col else None,
        mag_err=np.array(errs) if "mag_err" in col else None,
    )


def _missing(file: str, n: int):
    raise InputError(file, f"time_utc (row {n})", "empty; every row needs a time")
