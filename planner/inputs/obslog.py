"""Observation logs (CSV): what was observed, and which site-nights were lost.

One format for every command that reads a log (``phasewise check``, ``phasewise fit`` and
``phasewise plan --done``): ``time_utc`` (mid-exposure, ISO 8601 UTC) and optional ``site``,
``exposure_s``, ``mag`` (the measured magnitude, any calibrated band), ``mag_err``, ``band`` (the
band's name, free text), ``status`` (``observed``, the default, or ``lost``) and ``night`` (local
date of the evening; a ``lost`` row needs it and may leave ``time_utc`` empty; a ``lost`` row with
no ``site`` stands for every site). Lines whose first cell starts with ``#`` are comments. Rows
without ``mag`` are times only: ``check`` and ``plan --done`` read them as before.

Every bad cell is reported as ``FILE: COLUMN (row N): message``, N counting data rows from 1
(the header is row 0; comment and blank lines are not counted).
"""

from __future__ import annotations

import csv
import io
import math
from dataclasses import dataclass, field
from datetime import date
from pathlib import Path

import numpy as np

from planner.core.errors import InputError
from planner.core.fileio import read_text
from planner.core.textfmt import control_char
from planner.core.timegrid import parse_date, parse_utc

KNOWN_COLUMNS = ("time_utc", "site", "exposure_s", "mag", "mag_err", "band", "status", "night")
STATUSES = ("observed", "lost")
#: Longest exposure a log may give (one day): anything longer is a typing error.
MAX_EXPOSURE_S = 86400.0
#: Magnitudes a log may give: from the brightest comets seen in daylight to beyond the deepest
#: surveys; anything outside is a typing error (or a flux, or a placeholder such as 99).
MAG_RANGE = (-30.0, 40.0)
#: Longest band name (a filter's name, e.g. ``R``, ``sdss_r``, ``clear``).
MAX_BAND_CHARS = 20


@dataclass
class LostNight:
    """A ``lost`` row: ``site`` empty means every site lost that night."""

    site: str
    night: date
    row: int


@dataclass
class ObservationLog:
    """The observed rows (datetime64[ns], file order) with optional per-row site, exposure, magnitude,
    σ and band (NaN or "" = not given; ``None`` when the column is absent), plus the lost site-nights."""

    path: str
    times_utc: np.ndarray
    site: np.ndarray | None
    exposure_s: np.ndarray | None
    mag_err: np.ndarray | None
    mag: np.ndarray | None = None
    band: np.ndarray | None = None
    #: Data-row number (from 1) of each observed time, for error messages downstream.
    rows: np.ndarray = field(default_factory=lambda: np.zeros(0, dtype=np.int64))
    #: Local evening date given in the ``night`` column of observed rows (``None`` where empty).
    night: list[date | None] = field(default_factory=list)
    lost: list[LostNight] = field(default_factory=list)

    @property
    def has_mag(self) -> np.ndarray:
        """Which observed rows carry a magnitude (all False without a ``mag`` column)."""
        if self.mag is None:
            return np.zeros(self.times_utc.size, dtype=bool)
        return np.isfinite(self.mag)

    def mag_err_or(self, default_mag: float) -> np.ndarray:
        """Per-point σ: the log's value where given, ``default_mag`` elsewhere."""
        n = self.times_utc.size
        if self.mag_err is None:
            return np.full(n, float(default_mag))
        return np.where(np.isfinite(self.mag_err), self.mag_err, float(default_mag))

    def site_or(self, default: str = "") -> np.ndarray:
        """Per-point site name (object array), ``default`` where the log gives none."""
        if self.site is None:
            return np.full(self.times_utc.size, default, dtype=object)
        return np.array([s or default for s in self.site], dtype=object)

    def exposure_or(self, default_s: float) -> np.ndarray:
        """Per-point exposure (s), ``default_s`` where the log gives none."""
        if self.exposure_s is None:
            return np.full(self.times_utc.size, float(default_s))
        return np.where(np.isfinite(self.exposure_s), self.exposure_s, float(default_s))


def _positive(text: str, file: str, field_name: str, upper: float = math.inf) -> float:
    try:
        value = float(text)
    except ValueError:
        raise InputError(file, field_name, f"{text!r} is not a number") from None
    if not math.isfinite(value) or value <= 0:
        raise InputError(file, field_name, f"{text!r} must be a positive number")
    if value >= upper:
        raise InputError(file, field_name, f"{text!r} must be below {upper:g}")
    return value


def _site(cell: dict[str, str], file: str, n: int) -> str:
    """A site cell: plain text (a control character would reach the terminal and the figures raw)."""
    name = cell.get("site", "")
    bad = control_char(name)
    if bad is not None:
        raise InputError(file, f"site (row {n})", f"{name!r} holds a control character ({bad})")
    return name


def _magnitude(text: str, file: str, field_name: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise InputError(file, field_name, f"{text!r} is not a number (a magnitude)") from None
    lo, hi = MAG_RANGE
    if not (lo <= value <= hi):
        raise InputError(file, field_name, f"{text!r} is outside [{lo:g}, {hi:g}] (a magnitude)")
    return value


def _band(text: str, file: str, field_name: str) -> str:
    if len(text) > MAX_BAND_CHARS or any(c.isspace() or c in ",;\"'" for c in text):
        raise InputError(
            file, field_name, f"{text[:30]!r} is not a band name (up to {MAX_BAND_CHARS} characters, no spaces)"
        )
    return text


def _night(text: str, file: str, n: int) -> date:
    return parse_date(text, file, f"night (row {n})", "a local evening date such as 2034-03-17")


def read_observation_log(path: str | Path) -> ObservationLog:
    """Read and validate a CSV log (the file is only read); see the module docstring for the format.

    Unknown columns are rejected; empty optional cells are allowed; a log with no data rows is an
    error. A log of ``lost`` rows only is valid (no observed times).
    """
    p = Path(path)
    file = str(p)
    text = read_text(p, "CSV file")
    try:
        rows = list(csv.reader(io.StringIO(text, newline="")))
    except csv.Error as exc:
        raise InputError(file, "-", f"not a readable CSV file ({exc})") from None
    rows = [r for r in rows if any(c.strip() for c in r) and not r[0].lstrip().startswith("#")]
    if not rows:
        raise InputError(file, "time_utc", "the file is empty (expected a header with time_utc)")
    header = [h.strip() for h in rows[0]]
    if "time_utc" not in header:
        raise InputError(
            file,
            "time_utc",
            "missing column (mid-exposure times, ISO 8601 UTC); the first row "
            f"must name the columns: {', '.join(KNOWN_COLUMNS)}",
        )
    for h in header:
        if h not in KNOWN_COLUMNS:
            name = h if len(h) <= 40 else h[:37] + "..."
            raise InputError(file, name or "(blank)", f"unknown column (known: {', '.join(KNOWN_COLUMNS)})")
    if len(set(header)) != len(header):
        raise InputError(file, "-", "a column name appears twice in the header")
    col = {h: i for i, h in enumerate(header)}
    data = rows[1:]
    if not data:
        raise InputError(file, "time_utc", "no observation times (only a header)")
    times, sites, exposures, errs, row_no, nights, mags, bands = [], [], [], [], [], [], [], []
    lost: list[LostNight] = []
    for n, row in enumerate(data, start=1):
        if len(row) != len(header):
            raise InputError(file, f"row {n}", f"has {len(row)} cells, the header has {len(header)}")
        cell = {h: row[i].strip() for h, i in col.items()}
        status = (cell.get("status") or "observed").lower()
        if status not in STATUSES:
            raise InputError(file, f"status (row {n})", f"{cell['status']!r} is not observed or lost")
        if status == "lost":
            if not cell.get("night"):
                raise InputError(
                    file, f"night (row {n})", "a lost row needs the local date of the evening, e.g. 2034-03-17"
                )
            lost.append(LostNight(site=_site(cell, file, n), night=_night(cell["night"], file, n), row=n))
            continue
        if not cell["time_utc"]:
            raise InputError(file, f"time_utc (row {n})", "empty; every observed row needs a time")
        times.append(parse_utc(cell["time_utc"], file, f"time_utc (row {n})"))
        sites.append(_site(cell, file, n))
        exposures.append(
            _positive(cell["exposure_s"], file, f"exposure_s (row {n})", MAX_EXPOSURE_S)
            if cell.get("exposure_s")
            else math.nan
        )
        errs.append(_positive(cell["mag_err"], file, f"mag_err (row {n})") if cell.get("mag_err") else math.nan)
        mags.append(_magnitude(cell["mag"], file, f"mag (row {n})") if cell.get("mag") else math.nan)
        bands.append(_band(cell["band"], file, f"band (row {n})") if cell.get("band") else "")
        nights.append(_night(cell["night"], file, n) if cell.get("night") else None)
        row_no.append(n)
    return ObservationLog(
        path=file,
        times_utc=np.array(times, dtype="datetime64[ns]"),
        site=np.array(sites, dtype=object) if "site" in col else None,
        exposure_s=np.array(exposures, dtype=float) if "exposure_s" in col else None,
        mag_err=np.array(errs, dtype=float) if "mag_err" in col else None,
        mag=np.array(mags, dtype=float) if "mag" in col else None,
        band=np.array(bands, dtype=object) if "band" in col else None,
        rows=np.array(row_no, dtype=np.int64),
        night=nights,
        lost=lost,
    )
