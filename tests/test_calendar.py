"""Each site's blocks as an iCalendar file, read back by an independent parser (the icalendar package)
against plan.csv; line form and time zones as RFC 5545 (Desruisseaux 2009) defines them."""

from __future__ import annotations

import json
from datetime import UTC, datetime, timedelta
from zoneinfo import ZoneInfo

import pandas as pd
import pytest

from planner.outputs.calendar import MAX_LINE_OCTETS, date_time, escape_text, fold, vtimezone
from planner.outputs.layout import CALENDARS_DIR, calendar_name

icalendar = pytest.importorskip("icalendar", reason="the icalendar package reads the calendars independently")


def _utc(dt: datetime) -> pd.Timestamp:
    return pd.Timestamp(dt.astimezone(UTC)).tz_localize(None)


def test_every_planned_block_is_an_event_at_its_site(demo_folder):
    plan = pd.read_csv(demo_folder / "plan.csv")
    manifest = json.loads((demo_folder / "plan.json").read_text())
    target = manifest["target"]["name"]
    uids = set()
    for site in manifest["sites"]:
        cal = icalendar.Calendar.from_ical((demo_folder / CALENDARS_DIR / calendar_name(site["name"])).read_bytes())
        assert str(cal["VERSION"]) == "2.0" and "phasewise" in str(cal["PRODID"])
        assert [str(z["TZID"]) for z in cal.walk("VTIMEZONE")] == [site["timezone"]]
        rows = plan[plan["site"] == site["name"]]
        events = cal.walk("VEVENT")
        assert len(events) == len(rows) > 0
        for ev, (_, row) in zip(events, rows.iterrows(), strict=True):
            start, end = ev.decoded("DTSTART"), ev.decoded("DTEND")
            assert _utc(start) == pd.Timestamp(row["start_utc"]).tz_localize(None)
            assert _utc(end) == pd.Timestamp(row["end_utc"]).tz_localize(None)
            assert start.utcoffset() is not None  # on a clock, never floating
            assert target in str(ev["SUMMARY"]) and site["name"] in str(ev["SUMMARY"])
            text = str(ev["DESCRIPTION"])
            assert "point (mid-block): RA" in text and "exposures:" in text and "SAFETY" in text
            assert ev.decoded("DTSTAMP").utcoffset() == timedelta(0)
            geo = ev["GEO"]
            assert (geo.latitude, geo.longitude) == pytest.approx((site["latitude_deg"], site["longitude_deg"]))
            uids.add(str(ev["UID"]))
    assert len(uids) == len(plan)


def test_lines_end_in_crlf_and_fold_at_75_octets(demo_folder):
    for path in (demo_folder / CALENDARS_DIR).iterdir():
        raw = path.read_bytes()
        assert raw.endswith(b"\r\n") and b"\n" not in raw.replace(b"\r\n", b"")
        assert max(len(line) for line in raw.split(b"\r\n")) <= MAX_LINE_OCTETS


def test_folding_never_splits_a_character_and_unfolds_to_the_text():
    value = "Quebrada Alta, señal; très sombre " * 6 + "Ω" * 40
    folded = fold("DESCRIPTION:" + escape_text(value)).encode("utf-8")
    lines = folded.split(b"\r\n")[:-1]
    assert all(len(line) <= 75 for line in lines) and all(line.startswith(b" ") for line in lines[1:])
    for line in lines:
        line.decode("utf-8")  # each physical line is whole characters
    doc = "BEGIN:VCALENDAR\r\nVERSION:2.0\r\nPRODID:t\r\nBEGIN:VEVENT\r\nUID:1\r\nDTSTAMP:20340101T000000Z\r\n"
    ev = icalendar.Calendar.from_ical(doc + folded.decode() + "END:VEVENT\r\nEND:VCALENDAR\r\n").walk("VEVENT")[0]
    assert str(ev["DESCRIPTION"]) == value


def test_time_zone_rules_read_by_another_parser_match_the_zone():
    # Berlin: summer time from 2034-03-26 01:00 UTC to 2034-10-29 01:00 UTC (EU rule, Directive 2000/84/EC:
    # last Sunday of March and of October at 01:00 UTC).
    zone = ZoneInfo("Europe/Berlin")
    start, stop = datetime(2034, 3, 20, tzinfo=UTC), datetime(2034, 11, 5, tzinfo=UTC)
    body = "".join(fold(line) for line in vtimezone(zone, start, stop)).replace("Europe/Berlin", "Test/Berlin")
    cal = icalendar.Calendar.from_ical(f"BEGIN:VCALENDAR\r\nVERSION:2.0\r\nPRODID:t\r\n{body}END:VCALENDAR\r\n")
    rules = cal.walk("VTIMEZONE")[0].to_tz()  # built from the component alone: the name is unknown
    t = start
    while t < stop:
        local = t.astimezone(zone).replace(tzinfo=None)
        if t.astimezone(zone).fold == 0 and not (t + timedelta(hours=1)).astimezone(zone).fold:
            assert local.replace(tzinfo=rules).utcoffset() == t.astimezone(zone).utcoffset(), t
        t += timedelta(hours=7)
    assert datetime(2034, 3, 26, 12, tzinfo=rules).utcoffset() == timedelta(hours=2)
    assert datetime(2034, 10, 29, 12, tzinfo=rules).utcoffset() == timedelta(hours=1)


def test_an_edge_in_the_repeated_hour_is_written_in_utc():
    # 2034-10-29 00:30 and 01:30 UTC are both 02:30 on Berlin's clock (clocks go back at 03:00 CEST).
    zone = ZoneInfo("Europe/Berlin")
    first, second = (datetime(2034, 10, 29, h, 30, tzinfo=UTC) for h in (0, 1))
    assert date_time("DTSTART", first, zone) == "DTSTART:20341029T003000Z"
    assert date_time("DTSTART", second, zone) == "DTSTART:20341029T013000Z"
    before = datetime(2034, 10, 28, 21, 0, tzinfo=UTC)
    assert date_time("DTSTART", before, zone) == "DTSTART;TZID=Europe/Berlin:20341028T230000"


def test_text_values_are_escaped():
    assert escape_text("a, b; c\\d\ne") == "a\\, b\\; c\\\\d\\ne"
