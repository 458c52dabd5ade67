"""Nights and darkness at a site.

A night is named by the local date on which it begins and runs from local noon (in the site's time
zone) to the next local noon. Darkness is the Sun's centre below the site's twilight altitude:
−6° civil, −12° nautical, −18° astronomical (Explanatory Supplement to the Astronomical Almanac,
3rd ed., Urban & Seidelmann 2013, on twilight). The Sun's altitude is sampled on a coarse grid and
each crossing is refined by bisection (:mod:`planner.visibility.intervals`) to ``tol_s``.
"""

from __future__ import annotations

from datetime import UTC, date, datetime, timedelta

import numpy as np
import pandas as pd

from planner.core.errors import InputError
from planner.inputs.sites import Site
from planner.sky.geometry import sun_alt_deg
from planner.visibility.intervals import refine_edges, true_runs

#: Altitude of the Sun's centre at rise and set: 34′ of refraction plus 16′ of semi-diameter
#: (Explanatory Supplement to the Astronomical Almanac).
SUNRISE_SUN_ALT_DEG = -0.8333

#: Default grid step for the Sun's altitude, seconds; crossings are then refined by bisection.
SUN_STEP_S = 600.0
#: Default precision of refined crossings, seconds.
EDGE_TOL_S = 10.0

_TWILIGHT_WORD = {-6.0: "civil", -12.0: "nautical", -18.0: "astronomical"}


def night_bounds_utc(site: Site, first_night: date, nights: int) -> np.ndarray:
    """UTC instants of local noon starting each night, plus the noon ending the last: ``nights + 1`` values.

    Local noon is taken in the site's time zone, so daylight-saving changes give 23 h or 25 h nights.
    """
    if nights < 1:
        raise InputError("command line", "nights", f"{nights} must be at least 1")
    out = []
    for k in range(nights + 1):  # one value per night, not per epoch
        d = first_night + timedelta(days=k)
        noon = datetime(d.year, d.month, d.day, 12, tzinfo=site.tz).astimezone(UTC)
        out.append(np.datetime64(noon.replace(tzinfo=None), "ns"))
    return np.array(out, dtype="datetime64[ns]")


def spans_grid(starts_utc: np.ndarray, ends_utc: np.ndarray, step_s: float) -> tuple[np.ndarray, np.ndarray]:
    """Sample each span [start, end] every ``step_s`` seconds, both ends included.

    Returns (times, span_index): all samples in order and the span each belongs to. Vectorised.
    """
    starts = np.asarray(starts_utc, dtype="datetime64[ns]")
    ends = np.asarray(ends_utc, dtype="datetime64[ns]")
    step_ns = int(round(step_s * 1e9))
    length_ns = (ends - starts).astype(np.int64)
    counts = np.ceil(length_ns / step_ns).astype(np.int64) + 1  # samples per span incl. both ends
    counts[length_ns <= 0] = 1
    span = np.repeat(np.arange(starts.size), counts)
    first = np.concatenate(([0], np.cumsum(counts)[:-1]))
    k = np.arange(span.size) - first[span]
    offset_ns = np.minimum(k * step_ns, length_ns[span])
    return starts[span] + offset_ns.astype("timedelta64[ns]"), span


def local_iso(times_utc: np.ndarray, tz_name: str) -> list[str]:
    """ISO 8601 local times with their UTC offset, to the minute (``2034-03-16T21:05-03:00``); NaT → ''."""
    idx = pd.DatetimeIndex(np.asarray(times_utc, dtype="datetime64[ns]")).tz_localize("UTC")
    idx = idx.tz_convert(tz_name)
    return ["" if pd.isna(t) else t.isoformat(timespec="minutes") for t in idx]


def night_labels(first_night: date, nights: int) -> list[str]:
    return [(first_night + timedelta(days=k)).isoformat() for k in range(nights)]


def sun_below_intervals(
    site: Site,
    first_night: date,
    nights: int,
    sun_alt_limit_deg: float,
    *,
    step_s: float = SUN_STEP_S,
    tol_s: float = EDGE_TOL_S,
    interpolate: bool = True,
) -> pd.DataFrame:
    """Intervals of each night when the Sun's centre is below ``sun_alt_limit_deg``.

    Crossings are bisected on a cubic spline through the sampled altitudes (``interpolate=True``;
    over a 10-minute step the spline's error is far below 0.001°, so the Sun is computed once per
    grid point), or on fresh Sun positions at every halving (``interpolate=False``, the slow twin).

    One row per interval, or one zero-hour row with a reason for a night without one. Columns:
    site, night, start_utc, end_utc, start_local, end_local, hours, sun_min_alt_deg, sun_max_alt_deg,
    start_is_twilight, end_is_twilight (False where the interval is cut by the night's noon edge,
    e.g. in polar night), reason, note.
    """
    bounds = night_bounds_utc(site, first_night, nights)
    times, night = spans_grid(bounds[:-1], bounds[1:], step_s)
    unique_t, back = np.unique(times, return_inverse=True)  # each noon ends one night and starts the next
    unique_alt = sun_alt_deg(site, unique_t)
    alt = unique_alt[back]
    if interpolate:
        from scipy.interpolate import CubicSpline

        spline = CubicSpline((unique_t - unique_t[0]).astype(np.int64) / 3.6e12, unique_alt)

        def below_at(t):
            return spline((t - unique_t[0]).astype(np.int64) / 3.6e12) < sun_alt_limit_deg
    else:

        def below_at(t):
            return sun_alt_deg(site, t) < sun_alt_limit_deg

    below = alt < sun_alt_limit_deg
    first, last = true_runs(below, night)

    # Refine every crossing at once: a run's start unless it opens the night, its end unless it closes it.
    opens = (first == 0) | (night[np.maximum(first - 1, 0)] != night[first])
    closes = (last == times.size - 1) | (night[np.minimum(last + 1, times.size - 1)] != night[last])
    t_in = np.concatenate((times[first[~opens]], times[last[~closes]]))
    t_out = np.concatenate((times[first[~opens] - 1], times[last[~closes] + 1]))
    # Halvings of the spline cost no ephemeris reads: go to 1 s there.
    edge, _ = refine_edges(below_at, t_in, t_out, min(tol_s, 1.0) if interpolate else tol_s)
    start = times[first].copy()
    end = times[last].copy()
    n_open = int((~opens).sum())
    start[~opens] = edge[:n_open]
    end[~closes] = edge[n_open:]

    min_alt = np.minimum.reduceat(alt, np.searchsorted(night, np.arange(nights)))
    max_alt = np.maximum.reduceat(alt, np.searchsorted(night, np.arange(nights)))
    labels = night_labels(first_night, nights)
    word = _TWILIGHT_WORD.get(sun_alt_limit_deg, f"{sun_alt_limit_deg:g}°")
    rows = []
    for k in range(nights):  # assemble one output row per interval or per empty night
        runs = np.flatnonzero(night[first] == k)
        polar = max_alt[k] < SUNRISE_SUN_ALT_DEG
        note = "polar night: the Sun stays below the horizon all day" if polar else ""
        common = dict(
            site=site.name, night=labels[k], sun_min_alt_deg=min_alt[k], sun_max_alt_deg=max_alt[k], note=note
        )
        if runs.size == 0:
            if min_alt[k] >= SUNRISE_SUN_ALT_DEG:
                reason = "midnight Sun: the Sun stays above the horizon all night"
            else:
                reason = (
                    f"no {word} darkness at this latitude and season: the Sun gets no lower than "
                    f"{min_alt[k]:.1f}° (the night needs {sun_alt_limit_deg:g}°)"
                )
            rows.append(
                dict(
                    common,
                    start_utc=np.datetime64("NaT", "ns"),
                    end_utc=np.datetime64("NaT", "ns"),
                    hours=0.0,
                    start_is_twilight=False,
                    end_is_twilight=False,
                    reason=reason,
                )
            )
        for j in runs:
            rows.append(
                dict(
                    common,
                    start_utc=start[j],
                    end_utc=end[j],
                    hours=float((end[j] - start[j]).astype(np.int64) / 3.6e12),
                    start_is_twilight=bool(~opens[j]),
                    end_is_twilight=bool(~closes[j]),
                    reason="",
                )
            )
    df = pd.DataFrame(rows)
    df["start_utc"] = df["start_utc"].astype("datetime64[ns]")
    df["end_utc"] = df["end_utc"].astype("datetime64[ns]")
    df["start_local"] = local_iso(df["start_utc"].to_numpy(), site.timezone)
    df["end_local"] = local_iso(df["end_utc"].to_numpy(), site.timezone)
    return df[list(DARK_COLUMNS)]


DARK_COLUMNS = (
    "site",
    "night",
    "start_utc",
    "end_utc",
    "start_local",
    "end_local",
    "hours",
    "sun_min_alt_deg",
    "sun_max_alt_deg",
    "start_is_twilight",
    "end_is_twilight",
    "reason",
    "note",
)


def dark_intervals(
    site: Site, first_night: date, nights: int, *, step_s: float = SUN_STEP_S, tol_s: float = EDGE_TOL_S
) -> pd.DataFrame:
    """Dark time per night: the Sun below the site's twilight altitude (see :func:`sun_below_intervals`)."""
    return sun_below_intervals(site, first_night, nights, site.night_sun_alt_deg, step_s=step_s, tol_s=tol_s)
