"""Each site's planned blocks as an iCalendar file (RFC 5545), to load into an observer's calendar.

One VEVENT per block: DTSTART/DTEND on the site's own clock (``TZID`` with a VTIMEZONE built from the
IANA zone for the campaign's dates), SUMMARY naming target and site, DESCRIPTION with the pointing,
tracking, exposures and cautions of the observing sheet, GEO with the site's position. A block edge that
falls in a repeated local hour (the night clocks go back) is written in UTC instead, since a local time
there names two instants. Lines end in CRLF and are folded at 75 octets (RFC 5545 §3.1).
"""

from __future__ import annotations

import uuid
from datetime import UTC, datetime, timedelta
from zoneinfo import ZoneInfo

import numpy as np

from planner.core.safety import SUN_SAFETY_TEXT
from planner.core.textfmt import clock_hm
from planner.core.version import __version__
from planner.inputs.sites import Site
from planner.outputs.sheets import block_lines
from planner.outputs.tablefiles import table_for_files
from planner.pipeline import PlanResult

#: RFC 5545 §3.1: content lines are folded so that no line is longer than 75 octets.
MAX_LINE_OCTETS = 75


def escape_text(text: str) -> str:
    """A TEXT value (RFC 5545 §3.3.11): backslash, semicolon and comma escaped, newlines as ``\\n``."""
    return text.replace("\\", "\\\\").replace(";", "\\;").replace(",", "\\,").replace("\r\n", "\n").replace("\n", "\\n")


def fold(line: str) -> str:
    """One content line folded at 75 octets (UTF-8; a character is never split), lines joined by CRLF
    and each continuation started with one space."""
    out, current, size = [], "", 0
    for ch in line:
        n = len(ch.encode("utf-8"))
        limit = MAX_LINE_OCTETS if not out else MAX_LINE_OCTETS - 1  # the leading space counts
        if size + n > limit:
            out.append(current)
            current, size = "", 0
        current += ch
        size += n
    out.append(current)
    return "\r\n ".join(out) + "\r\n"


def _utc(t) -> datetime:
    us = np.datetime64(t, "us").astype(np.int64)
    return datetime(1970, 1, 1, tzinfo=UTC) + timedelta(microseconds=int(us))


def _stamp(dt: datetime) -> str:
    return dt.astimezone(UTC).strftime("%Y%m%dT%H%M%SZ")


def _ambiguous(local: datetime) -> bool:
    """True when the wall-clock time occurs twice (the hour repeated when clocks go back)."""
    naive = local.replace(tzinfo=None)
    return (
        naive.replace(tzinfo=local.tzinfo, fold=0).utcoffset() != naive.replace(tzinfo=local.tzinfo, fold=1).utcoffset()
    )


def date_time(name: str, instant: datetime, zone: ZoneInfo) -> str:
    """``DTSTART;TZID=Zone:YYYYMMDDTHHMMSS`` on the site's clock, or in UTC where that clock repeats an hour."""
    local = instant.astimezone(zone)
    if _ambiguous(local):
        return f"{name}:{_stamp(instant)}"
    return f"{name};TZID={zone.key}:{local.strftime('%Y%m%dT%H%M%S')}"


def _offset(td: timedelta) -> str:
    minutes = int(td.total_seconds() // 60)
    sign = "+" if minutes >= 0 else "-"
    return f"{sign}{abs(minutes) // 60:02d}{abs(minutes) % 60:02d}"


def transitions(zone: ZoneInfo, start: datetime, stop: datetime) -> list[datetime]:
    """The instants (UTC, to the minute) in [start, stop] where the zone's UTC offset changes: hourly
    samples, then bisection of each change."""
    out = []
    t = start
    while t < stop:
        nxt = min(t + timedelta(hours=1), stop)
        if t.astimezone(zone).utcoffset() != nxt.astimezone(zone).utcoffset():
            lo, hi = t, nxt
            while hi - lo > timedelta(minutes=1):
                mid = lo + (hi - lo) / 2
                same = mid.astimezone(zone).utcoffset() == lo.astimezone(zone).utcoffset()
                lo, hi = (mid, hi) if same else (lo, mid)
            out.append(hi.replace(second=0, microsecond=0))
        t = nxt
    return out


def vtimezone(zone: ZoneInfo, start: datetime, stop: datetime) -> list[str]:
    """A VTIMEZONE for the zone over [start, stop] (RFC 5545 §3.6.5): the observance in force at
    ``start`` and one STANDARD or DAYLIGHT onset per offset change in the span."""
    first = start.astimezone(zone)
    onsets = [(start, first.utcoffset(), first)]
    for t in transitions(zone, start, stop):
        onsets.append((t, (t - timedelta(minutes=1)).astimezone(zone).utcoffset(), t.astimezone(zone)))
    lines = ["BEGIN:VTIMEZONE", f"TZID:{zone.key}"]
    for instant, offset_from, local in onsets:
        kind = "DAYLIGHT" if local.dst() else "STANDARD"
        wall = (instant + offset_from).replace(tzinfo=None)  # the onset on the clock it replaces
        lines += [
            f"BEGIN:{kind}",
            f"DTSTART:{wall.strftime('%Y%m%dT%H%M%S')}",
            f"TZOFFSETFROM:{_offset(offset_from)}",
            f"TZOFFSETTO:{_offset(local.utcoffset())}",
            f"TZNAME:{local.tzname()}",
            f"END:{kind}",
        ]
    return [*lines, "END:VTIMEZONE"]


def site_calendar(result: PlanResult, site: Site, stamp_utc: datetime | None = None) -> str:
    """The site's planned blocks as one iCalendar document (CRLF lines, folded).

    ``stamp_utc`` is the DTSTAMP of every event (default: now): when this calendar was written.
    """
    camp = result.campaign
    zone = ZoneInfo(site.timezone)
    stamp = _stamp(stamp_utc or datetime.now(UTC))
    rows = table_for_files(result.blocks[result.blocks["site"] == site.name])
    starts = [_utc(t) for t in result.blocks.loc[result.blocks["site"] == site.name, "start_utc"]]
    ends = [_utc(t) for t in result.blocks.loc[result.blocks["site"] == site.name, "end_utc"]]
    span_start = datetime.combine(camp.first_night, datetime.min.time(), UTC) - timedelta(days=1)
    span_stop = span_start + timedelta(days=camp.nights + 3)
    if starts:
        span_start, span_stop = min(span_start, *starts), max(span_stop, *ends)
    lines = [
        "BEGIN:VCALENDAR",
        "VERSION:2.0",
        f"PRODID:-//phasewise//phasewise {__version__}//EN",
        "CALSCALE:GREGORIAN",
        "METHOD:PUBLISH",
        f"X-WR-CALNAME:{escape_text(f'{result.target_name} from {site.name}')}",
        f"X-WR-TIMEZONE:{zone.key}",
        *vtimezone(zone, span_start, span_stop),
    ]
    for k, (r, start, end) in enumerate(zip(rows.itertuples(index=False), starts, ends, strict=True)):
        key = f"{camp.name}|{site.name}|{r.start_utc}|{k}"
        description = [
            f"{result.target_name} from {site.name}, night of {r.night} (local evening date)",
            f"{r.hours:.2f} h including {r.setup_minutes:g} min of set-up; "
            f"science from {clock_hm(r.science_start_utc)} UTC",
            *block_lines(r, camp.photometry.max_airmass),
            "Coordinates: astrometric RA/Dec (ICRF, equinox J2000), as a star catalogue gives them.",
            "SAFETY: " + SUN_SAFETY_TEXT,
            f"Campaign: {camp.name} (phasewise {__version__})",
        ]
        lines += [
            "BEGIN:VEVENT",
            f"UID:{uuid.uuid5(uuid.NAMESPACE_URL, 'phasewise:' + key)}@phasewise",
            f"DTSTAMP:{stamp}",
            date_time("DTSTART", start, zone),
            date_time("DTEND", end, zone),
            f"SUMMARY:{escape_text(f'{result.target_name} from {site.name}')}",
            f"LOCATION:{escape_text(site.name)}",
            f"GEO:{site.latitude_deg:.6f};{site.longitude_deg:.6f}",
            f"DESCRIPTION:{escape_text(chr(10).join(description))}",
            "CATEGORIES:OBSERVING",
            "TRANSP:OPAQUE",
            "END:VEVENT",
        ]
    lines.append("END:VCALENDAR")
    return "".join(fold(line) for line in lines)
