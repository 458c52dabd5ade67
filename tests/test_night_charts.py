"""The report's night charts (SVG written directly): what an observer reads off them is where it should be.

The charts are read back with xml.etree from the demo report (tests/conftest.py's demo_folder, planned
once per session). Expected positions are worked out here from the plan folder's own columns: local
times from plan.csv's ``start_local``/``end_local`` (ISO 8601 with the site's UTC offset, ISO 8601-1:2019
§5.3.4), the x scale from the chart's own hour ticks, the rows from its date labels. Twilight levels:
Explanatory Supplement to the Astronomical Almanac (Urban & Seidelmann 2013, §7): sunrise/sunset −0.833°,
civil −6°, nautical −12°, astronomical −18°.
"""

from __future__ import annotations

import base64
import calendar
import re
import xml.etree.ElementTree as ET
from datetime import date, datetime

import numpy as np
import pandas as pd
import pytest

from planner.outputs import figures_nights
from planner.outputs.figstyle import DARKNESS_GREYS
from planner.outputs.reader import load_plan_folder
from planner.outputs.report_nights import _chart_jobs

SVG = "{http://www.w3.org/2000/svg}"
_NUMERIC = {"x", "y", "width", "height"}


def _figure_svg(report_html: str, fig_id: str) -> ET.Element:
    m = re.search(f'<figure id="{fig_id}"><img src="data:image/svg\\+xml;base64,([^"]+)"', report_html)
    assert m, fig_id
    return ET.fromstring(base64.b64decode(m.group(1)))


def _group(root: ET.Element, cls: str) -> ET.Element | None:
    return next((g for g in root.iter(f"{SVG}g") if g.get("class") == cls), None)


def _day_label(night: str) -> str:
    """'Thu 16 Mar' by the calendar module (not the chart's own formatting route)."""
    d = date.fromisoformat(night)
    return f"{calendar.day_abbr[d.weekday()]} {d.day:02d} {calendar.month_abbr[d.month]}"


class NightChart:
    """One site's chart read back: rows from the date labels, the hour scale from the x ticks."""

    def __init__(self, root: ET.Element) -> None:
        self.root = root
        labels = list(_group(root, "y-labels"))
        self.nights = [t.get("data-night") for t in labels]
        self.texts = [t.text for t in labels]
        self.row_y = np.array([float(t.get("y")) for t in labels])
        self.row_h = float(np.median(np.diff(self.row_y))) if len(labels) > 1 else None
        ticks = list(_group(root, "x-ticks").iter(f"{SVG}text"))
        clock = np.array([int(t.text) for t in ticks], dtype=float)
        clock = np.where(clock < 12, clock + 24, clock)  # hours after the evening's midnight run on past 24
        xs = np.array([float(t.get("x")) for t in ticks])
        self.px_per_h, self.x_at_0h = np.polyfit(clock, xs, 1)

    def x(self, local_clock_h: float) -> float:
        return self.x_at_0h + self.px_per_h * local_clock_h

    def row_top(self, night: str) -> float:
        return self.row_y[self.nights.index(night)] - self.row_h / 2

    def rects(self, cls: str) -> list[dict]:
        g = _group(self.root, cls)
        return [] if g is None else [{k: float(v) if k in _NUMERIC else v for k, v in r.attrib.items()} for r in g]


def _local_clock_h(iso_local: str, evening: str) -> float:
    """Hours after the evening date's midnight, local clock (so 02:30 next morning is 26.5)."""
    t = datetime.fromisoformat(iso_local)
    return (t.replace(tzinfo=None) - datetime.fromisoformat(evening)).total_seconds() / 3600.0


@pytest.fixture(scope="module")
def demo_report(demo_folder):
    return (demo_folder / "report.html").read_text(encoding="utf-8")


@pytest.fixture(scope="module")
def demo_pf(demo_folder):
    return load_plan_folder(demo_folder)


def test_one_row_per_night_in_order_with_its_date(demo_report, demo_pf):
    for i, _site in enumerate(demo_pf.sites):
        chart = NightChart(_figure_svg(demo_report, f"fig-site-{i}"))
        assert chart.nights == list(demo_pf.nights)
        assert chart.texts == [_day_label(n) for n in demo_pf.nights]
        assert np.all(np.diff(chart.row_y) > 0)  # first night on top


def test_planned_blocks_sit_at_their_local_times_on_their_nights_row(demo_report, demo_pf):
    plan = pd.read_csv(demo_pf.path / "plan.csv", dtype=str)
    for i, site in enumerate(demo_pf.sites):
        chart = NightChart(_figure_svg(demo_report, f"fig-site-{i}"))
        rects = chart.rects("blocks")
        rows = plan[plan["site"] == site]
        assert len(rects) == len(rows) > 0
        for r in rows.itertuples():
            a = chart.x(_local_clock_h(r.start_local, r.night))
            b = chart.x(_local_clock_h(r.end_local, r.night))
            top = chart.row_top(r.night)
            hits = [
                q
                for q in rects
                if abs(q["x"] - a) <= 1.0 and abs(q["x"] + q["width"] - b) <= 1.0 and top <= q["y"] < top + chart.row_h
            ]
            assert len(hits) == 1, (site, r.night, r.start_local)
            assert hits[0]["y"] + hits[0]["height"] <= top + chart.row_h


def test_darkness_band_greys_follow_the_suns_altitude(demo_report, demo_pf):
    geo = pd.read_csv(demo_pf.path / "geometry.csv")
    edges = (-0.833, -6.0, -12.0, -18.0)  # Explanatory Supplement §7
    lightness = [int(g[1:3], 16) for g in DARKNESS_GREYS]
    assert lightness == sorted(lightness, reverse=True)  # deeper darkness, darker grey
    site, i = demo_pf.sites[1], 1
    chart = NightChart(_figure_svg(demo_report, f"fig-site-{i}"))
    bands = chart.rects("darkness")
    g = geo[geo["site"] == site]
    offset_h = demo_pf.utc_offset_h(site, demo_pf.nights[0])
    checked = 0
    for t, sun in zip(g["time_utc"], g["sun_alt_deg"], strict=True):
        if min(abs(sun - e) for e in edges) < 1.5:
            continue  # band edges fall half-way between 10-min samples: up to 5 min (≈1.3° of the Sun) off
        local = pd.Timestamp(t).tz_localize(None) + pd.Timedelta(hours=offset_h)
        evening = (local - pd.Timedelta(hours=12)).strftime("%Y-%m-%d")
        if evening not in chart.nights:
            continue
        x = chart.x(_local_clock_h(local.isoformat(), evening))
        y = chart.row_top(evening) + chart.row_h / 2
        if not chart.x(17) < x < chart.x(31):
            continue
        level = sum(sun <= e for e in edges)
        fills = [q["fill"] for q in bands if q["x"] <= x < q["x"] + q["width"] and q["y"] <= y < q["y"] + q["height"]]
        if level == 0:
            assert fills == [], (t, sun)  # daylight: no band
        else:
            assert fills == [DARKNESS_GREYS[level]], (t, sun)
        checked += 1
    assert checked > 50


def test_altitude_curve_and_limit_line_at_the_right_heights(demo_report, demo_pf):
    geo = pd.read_csv(demo_pf.path / "geometry.csv")
    i, site = 0, demo_pf.sites[0]
    root = _figure_svg(demo_report, f"fig-site-{i}")
    chart = NightChart(root)
    min_alt = float(demo_pf.site_info[site]["min_alt_deg"])
    limit = next(p for p in root.iter(f"{SVG}path") if p.get("class") == "alt-limit")
    ys = sorted({float(v) for v in re.findall(r"M[\d.]+,([\d.]+)", limit.get("d"))})
    frac = figures_nights.ALT_FOOT - figures_nights.ALT_SPAN * min_alt / 90.0
    np.testing.assert_allclose(ys, [chart.row_top(n) + frac * chart.row_h for n in chart.nights], atol=0.1)
    curves = {p.get("data-night"): p.get("d") for p in _group(root, "altitude")}
    offset_h = demo_pf.utc_offset_h(site, demo_pf.nights[0])
    g = geo[(geo["site"] == site) & (geo["alt_deg"] > 5)]
    checked = 0
    for t, alt in zip(g["time_utc"].iloc[::7], g["alt_deg"].iloc[::7], strict=True):
        local = pd.Timestamp(t).tz_localize(None) + pd.Timedelta(hours=offset_h)
        evening = (local - pd.Timedelta(hours=12)).strftime("%Y-%m-%d")
        if evening not in curves:
            continue
        pts = np.array([[float(a), float(b)] for a, b in re.findall(r"([\d.]+),([\d.]+)", curves[evening])])
        x = chart.x(_local_clock_h(local.isoformat(), evening))
        if not pts[0, 0] < x < pts[-1, 0]:
            continue
        expected = chart.row_top(evening) + chart.row_h * (
            figures_nights.ALT_FOOT - figures_nights.ALT_SPAN * alt / 90.0
        )
        assert np.interp(x, pts[:, 0], pts[:, 1]) == pytest.approx(expected, abs=1.0)
        checked += 1
    assert checked > 10


def _site_job(demo_pf, i: int = 0):
    return _chart_jobs(demo_pf, demo_pf.windows)[i]


def test_a_night_without_a_window_says_so(demo_pf):
    _, site, gs, ws, bs, nights, off, min_alt = _site_job(demo_pf)
    lost = nights[2]
    chart = figures_nights.site_nights_svg(
        site, gs, ws[ws["night"] != lost], bs[bs["night"] != lost], nights, off, min_alt
    )
    root = ET.fromstring(chart.text)
    read = NightChart(root)
    notes = [t for t in root.iter(f"{SVG}text") if t.get("class") == "no-window"]
    assert [t.text for t in notes] == ["no window"]
    y = float(notes[0].get("y"))
    assert read.row_top(lost) < y < read.row_top(lost) + read.row_h
    assert len(read.rects("windows")) == len(ws[ws["night"] != lost])


def test_site_names_are_escaped_and_output_is_byte_for_byte_repeatable(demo_pf):
    _, _, gs, ws, bs, nights, off, min_alt = _site_job(demo_pf)
    name = 'North <&"> Ridge'
    a = figures_nights.site_nights_svg(name, gs, ws, bs, nights, off, min_alt)
    b = figures_nights.site_nights_svg(name, gs.copy(), ws.copy(), bs.copy(), list(nights), off, min_alt)
    assert a.text == b.text
    root = ET.fromstring(a.text)
    assert root.get("role") == "img" and name in root.find(f"{SVG}title").text
    assert any(name in (t.text or "") for t in root.iter(f"{SVG}text"))
    net = figures_nights.network_nights_svg([name, "B"], nights[:2], np.ones((2, 2)), np.ones((2, 2)))
    assert [t.text for t in _group(ET.fromstring(net.text), "y-labels")] == [name, "B"]
    assert (a.width_px, a.height_px) == (int(root.get("width")), int(root.get("height")))


def test_network_overview_holds_one_cell_per_site_and_night():
    # Sixteen sites over a month: a row per site, a column per night; crossed cells exactly where a site
    # has no window, open dots where a window went unused, darker shades for more hours planned.
    rng = np.random.default_rng(1)
    sites = [f"Site {i:02d}" for i in range(16)]
    nights = [f"2034-04-{d:02d}" for d in range(1, 31)]
    window = np.where(rng.random((16, 30)) < 0.2, 0.0, rng.uniform(2, 9, (16, 30)))
    planned = np.where(window > 0, np.minimum(window, rng.uniform(-1, 5, (16, 30))).clip(0), 0.0)
    root = ET.fromstring(figures_nights.network_nights_svg(sites, nights, planned, window).text)
    labels = list(_group(root, "y-labels"))
    assert [t.text for t in labels] == sites
    row_y = np.array([float(t.get("y")) for t in labels])
    label_x = [float(t.get("x")) for t in _group(root, "x-labels")]
    assert [t.get("data-night") for t in _group(root, "x-labels")] == nights[::2]
    cells = [*_group(root, "planned"), *_group(root, "no-window")]
    left, cell_w = min(float(r.get("x")) for r in cells), float(cells[0].get("width"))

    def cell(x_mid: float, y_mid: float) -> tuple[int, int]:
        return int(np.argmin(abs(row_y - y_mid))), int(np.floor((x_mid - left) / cell_w))

    def rect_cell(r: ET.Element) -> tuple[int, int]:
        return cell(float(r.get("x")) + float(r.get("width")) / 2, float(r.get("y")) + float(r.get("height")) / 2)

    # Each date label stands at its column (a slanted label ends a few px right of the centre).
    np.testing.assert_allclose(label_x, left + (np.arange(0, 30, 2) + 0.5) * cell_w, atol=4.0)
    assert {rect_cell(r) for r in _group(root, "no-window")} == {tuple(v) for v in np.argwhere(window <= 0)}
    dots = {cell(float(c.get("cx")), float(c.get("cy"))) for c in _group(root, "unused")}
    assert dots == {tuple(v) for v in np.argwhere((window > 0) & (planned <= 0))}
    shades = list(figures_nights.PLANNED_SHADES)
    lightness = [sum(int(s[k : k + 2], 16) for k in (1, 3, 5)) for s in shades]
    assert lightness == sorted(lightness, reverse=True)
    cells = _group(root, "planned")
    assert len(cells) == int((planned > 0).sum())
    by_cell = {rect_cell(r): shades.index(r.get("fill")) for r in cells}
    assert set(by_cell) == {tuple(v) for v in np.argwhere(planned > 0)}
    hours = np.array([planned[k] for k in by_cell])
    level = np.array(list(by_cell.values()))
    assert np.all(np.diff(level[np.argsort(hours)]) >= 0)  # more hours, never a lighter shade


def test_darkness_levels_follow_the_twilight_definitions():
    # Explanatory Supplement (Urban & Seidelmann 2013): civil −6°, nautical −12°, astronomical −18°;
    # sunrise/sunset at −0.833° (upper limb with standard refraction).
    idx = figures_nights.darkness_index(np.array([10.0, -0.5, -3.0, -6.5, -12.5, -18.5, -40.0]))
    assert idx.tolist() == [0, 0, 1, 2, 3, 4, 4]


def test_a_month_of_nights_is_thirty_rows_of_bands():
    t = np.arange(np.datetime64("2034-04-01T00:00"), np.datetime64("2034-05-02T00:00"), np.timedelta64(10, "m"))
    hours = (t - t[0]) / np.timedelta64(1, "h")
    geo = pd.DataFrame(
        {
            "time_utc": t.astype(str),
            "alt_deg": 50 * np.sin(2 * np.pi * hours / 23.93),
            "sun_alt_deg": -40 * np.sin(2 * np.pi * hours / 24),
        }
    )
    empty = pd.DataFrame(columns=["site", "night", "start_utc", "end_utc", "reason"])
    nights = [f"2034-04-{d:02d}" for d in range(1, 31)]
    root = ET.fromstring(figures_nights.site_nights_svg("A", geo, empty, empty, nights, 0.0, 25.0).text)
    chart = NightChart(root)
    tops = sorted({round(q["y"], 1) for q in chart.rects("darkness")})
    np.testing.assert_allclose(tops, [chart.row_top(n) for n in nights], atol=0.15)
    assert len(_group(root, "altitude")) == 30
    assert sum(t.get("class") == "no-window" for t in root.iter(f"{SVG}text")) == 30
