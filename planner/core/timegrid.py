"""Time parsing and time grids. All times are UTC as ``numpy.datetime64[ns]`` unless a name says otherwise."""

from __future__ import annotations

import re
from datetime import UTC, date, datetime, timedelta

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


#: First and last dates phasewise accepts: inside the bundled DE421 ephemeris (JD 2414864.5 to 2471184.5
#: TDB, 1899-07-29 to 2053-10-09) with margin for light time and for nights that run past midnight.
FIRST_DATE = date(1900, 1, 1)
LAST_DATE = date(2053, 10, 7)
#: The same span as Julian dates (00:00 of FIRST_DATE, 24:00 of LAST_DATE).
FIRST_JD = 2415020.5
LAST_JD = 2471183.5
SPAN_TEXT = f"the bundled DE421 ephemeris ({FIRST_DATE.isoformat()} to {LAST_DATE.isoformat()})"


def _outside_span(shown: object, file: str, field: str) -> InputError:
    return InputError(file, field, f"{shown!r} is outside {SPAN_TEXT}")


def check_date_in_span(day: date, file: str, field: str, shown: object | None = None) -> date:
    """``day`` itself, or an InputError when it falls outside the ephemeris span (FIRST_DATE..LAST_DATE)."""
    if not FIRST_DATE <= day <= LAST_DATE:
        raise _outside_span(day.isoformat() if shown is None else shown, file, field)
    return day


def check_jd_in_span(jd: float, file: str, field: str, shown: object | None = None) -> float:
    """A Julian date inside the ephemeris span, or an InputError naming the file and field."""
    if not FIRST_JD <= jd <= LAST_JD:
        raise _outside_span(jd if shown is None else shown, file, field)
    return jd


#: Orbital elements may refer to instants outside the ephemeris (a perihelion in 2060, an epoch in
#: 1890): they only need to be times numpy can hold without wrapping (1678-2262), with a margin.
ORBIT_FIRST_JD = 2341972.5  # 1700-01-01
ORBIT_LAST_JD = 2543002.5  # 2250-06-01


def check_orbit_jd(jd: float, file: str, field: str, shown: object | None = None) -> float:
    """An element's instant (epoch, perihelion time) within 1700-2250, or an InputError naming it."""
    if not ORBIT_FIRST_JD <= jd <= ORBIT_LAST_JD:
        raise InputError(file, field, f"{jd if shown is None else shown!r} is outside the years 1700-2250")
    return jd


def check_nights_in_span(first_night: date, nights: int, file: str, field: str) -> None:
    """Every night from ``first_night`` (local noon to noon, anywhere on Earth) inside the ephemeris span."""
    last_morning = first_night + timedelta(days=int(nights))
    if first_night - timedelta(days=1) < FIRST_DATE or last_morning + timedelta(days=1) > LAST_DATE:
        raise InputError(
            file,
            field,
            f"nights {first_night.isoformat()} to {last_morning.isoformat()} run outside {SPAN_TEXT}",
        )


def parse_utc(
    text: str | datetime | date | np.datetime64, file: str = "command line", field: str = "time"
) -> np.datetime64:
    """ISO 8601 UTC (``2034-03-10``, ``2034-03-10T22:15``, ``2034-03-10 22:15:00Z``) → datetime64[ns].

    Times outside the ephemeris span (FIRST_DATE..LAST_DATE) are refused before they reach numpy, whose
    nanosecond times would otherwise wrap silently beyond 1678-2262.
    """
    if isinstance(text, np.datetime64):
        day = text.astype("datetime64[D]")
        if np.isnat(day) or not np.datetime64(FIRST_DATE) <= day <= np.datetime64(LAST_DATE):
            raise _outside_span(str(text), file, field)
        return text.astype("datetime64[ns]")
    if isinstance(text, datetime):
        if text.tzinfo is not None:
            text = text.astimezone(UTC).replace(tzinfo=None)
        check_date_in_span(text.date(), file, field, text.isoformat())
        return np.datetime64(text, "ns")
    if isinstance(text, date):
        check_date_in_span(text, file, field)
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
    check_date_in_span(dt.date(), file, field, text)
    return np.datetime64(dt, "ns")


def parse_date(
    text: str, file: str = "command line", field: str = "date", example: str = "a date such as 2034-03-16"
) -> date:
    """ISO calendar date (``2034-03-16``), e.g. the local date on which a night begins, inside the span."""
    try:
        day = date.fromisoformat(str(text).strip())
    except ValueError:
        raise InputError(file, field, f"{text!r} is not {example}") from None
    return check_date_in_span(day, file, field, text)


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
