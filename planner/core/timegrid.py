"""Time parsing and time grids. All times are UTC as ``numpy.datetime64[ns]`` unless a name says otherwise."""

from __future__ import annotations

import re
from datetime import UTC, date, datetime

import numpy as np

from planner.core.errors import InputError

_DURATION = re.compile(r"^\s*(\d+(?:\.\d*)?|\.\d+)\s*(s|sec|m|min|h|hr|d|day)s?\s*$", re.IGNORECASE)
_UNIT_S = {"s": 1.0, "sec": 1.0, "m": 60.0, "min": 60.0, "h": 3600.0, "hr": 3600.0, "d": 86400.0, "day": 86400.0}


def parse_duration_s(text: str, file: str = "command line", field: str = "duration") -> float:
    """``'5m'`` → 300.0, ``'1h'`` → 3600.0, ``'1d'`` → 86400.0, ``'30s'`` → 30.0."""
    m = _DURATION.match(str(text))
    if not m:
        raise InputError(file, field, f"{text!r} is not a duration like 30s, 5m, 2h or 1d")
    value = float(m.group(1)) * _UNIT_S[m.group(2).lower()]
    if value <= 0:
        raise InputError(file, field, f"{text!r} must be longer than zero")
    return value


def parse_utc(
    text: str | datetime | date | np.datetime64, file: str = "command line", field: str = "time"
) -> np.datetime64:
    """ISO 8601 UTC (``2034-03-10``, ``2034-03-10T22:15``, ``2034-03-10 22:15:00Z``) → datetime64[ns]."""
    if isinstance(text, np.datetime64):
        return text.astype("datetime64[ns]")
    if isinstance(text, datetime):
        if text.tzinfo is not None:
            text = text.astimezone(UTC).replace(tzinfo=None)
        return np.datetime64(text, "ns")
    if isinstance(text, date):
        return np.datetime64(text.isoformat(), "ns")
    s = str(text).strip()
    if s.endswith(("Z", "z")):
        s = s[:-1]
    elif s.endswith("+00:00"):
        s = s[:-6]
    s = s.replace(" ", "T", 1)
    try:
        dt = datetime.fromisoformat(s)
    except ValueError:
        raise InputError(file, field, f"{text!r} is not an ISO 8601 UTC time such as 2034-03-10T22:15") from None
    if dt.tzinfo is not None:
        raise InputError(file, field, f"{text!r}: give times in UTC (no offset other than Z)")
    return np.datetime64(dt, "ns")


def parse_date(
    text: str, file: str = "command line", field: str = "date", example: str = "a date such as 2034-03-16"
) -> date:
    """ISO calendar date (``2034-03-16``), e.g. the local date on which a night begins."""
    try:
        return date.fromisoformat(str(text).strip())
    except ValueError:
        raise InputError(file, field, f"{text!r} is not {example}") from None


def time_grid(start: np.datetime64, stop: np.datetime64, step_s: float) -> np.ndarray:
    """Epochs from ``start`` to ``stop`` inclusive (when it falls on the grid) every ``step_s`` seconds."""
    start = np.datetime64(start, "ns")
    stop = np.datetime64(stop, "ns")
    if stop < start:
        raise InputError("command line", "stop", "stop is before start")
    step_ns = int(round(step_s * 1e9))
    n = int((stop - start).astype(np.int64) // step_ns) + 1
    return start + np.arange(n, dtype=np.int64) * np.timedelta64(step_ns, "ns")


def to_jd_utc(times_utc: np.ndarray) -> np.ndarray:
    """datetime64 → Julian date in the UTC scale (float64; ~20 µs resolution near 2030)."""
    t = np.asarray(times_utc, dtype="datetime64[ns]")
    ns = (t - np.datetime64("2000-01-01T12:00:00", "ns")).astype(np.int64)
    return 2451545.0 + ns / 86400e9


def from_jd_utc(jd_utc: np.ndarray | float) -> np.ndarray:
    """Julian date (UTC scale) → datetime64[ns]."""
    ns = np.round((np.asarray(jd_utc, dtype=float) - 2451545.0) * 86400e9).astype(np.int64)
    return np.datetime64("2000-01-01T12:00:00", "ns") + ns.astype("timedelta64[ns]")


def iso_utc(times_utc: np.ndarray, seconds: bool = False) -> list[str]:
    """ISO 8601 strings with a trailing Z, to the minute (or second)."""
    unit = "s" if seconds else "m"
    return [f"{s}Z" for s in np.datetime_as_string(np.asarray(times_utc, dtype="datetime64[ns]"), unit=unit)]
