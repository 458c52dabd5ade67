"""The report's network timeline (SVG written directly): every block where plan.csv puts it.

The chart is read back with xml.etree. Expected positions are worked out here from the plan folder's
own text columns: ``start_utc``/``end_utc`` parsed with the standard library's ISO 8601 reader
(ISO 8601-1:2019 §5.4), the x scale fitted to the chart's own tick labels (each carries its instant as
``data-utc``), the rows from its site labels. The demo folder is tests/conftest.py's (planned once per
session); the folder with a baseline is tests/planfolder.py's hand-made one.
"""

from __future__ import annotations

import xml.etree.ElementTree as ET
from datetime import datetime

import numpy as np
import pandas as pd
import pytest
from planfolder import make_plan_folder
from test_night_charts import SVG, _figure_svg, _group

from planner.outputs import figures_timeline
from planner.outputs.figstyle import SITE_STYLES
from planner.outputs.reader import load_plan_folder


def _hours(iso_utc: str) -> float:
    """Hours since 2000-01-01 UTC, by the standard library (not the chart's numpy route)."""
    t = datetime.fromisoformat(iso_utc.replace("Z", "+00:00"))
    return (t - datetime.fromisoformat("2000-01-01T00:00+00:00")).total_seconds() / 3600.0


class Timeline:
    """The chart read back: a row per site label, the UTC scale from the x ticks."""

    def __init__(self, root: ET.Element) -> None:
        self.root = root
        labels = list(_group(root, "y-labels"))
        self.sites = [t.text for t in labels]
        self.row_y = np.array([float(t.get("y")) for t in labels])
        self.row_h = float(np.median(np.diff(self.row_y))) if len(labels) > 1 else 56.0
        ticks = [t for t in _group(root, "x-ticks").iter(f"{SVG}text") if t.get("data-utc")]
        self.px_per_h, self.x_at_0 = np.polyfit(
            [_hours(t.get("data-utc")) for t in ticks], [float(t.get("x")) for t in ticks], 1
        )

    def x(self, iso_utc: str) -> float:
        return self.x_at_0 + self.px_per_h * _hours(iso_utc)

    def rects(self, cls: str, site: str) -> list[dict]:
        groups = [g for g in self.root.iter(f"{SVG}g") if g.get("class") == cls and g.get("data-site") == site]
        return [
            {k: float(v) for k, v in r.attrib.items() if k in ("x", "y", "width", "height")} for g in groups for r in g
        ]

    def assert_blocks_at(self, table: pd.DataFrame, cls: str) -> None:
        """Every row of ``table`` is one rectangle of class ``cls`` in its site's row, within a pixel."""
        for site in self.sites:
            rows = table[table["site"] == site]
            rects = self.rects(cls, site)
            assert len(rects) == len(rows), (cls, site)
            top = self.row_y[self.sites.index(site)] - self.row_h / 2
            for r in rows.itertuples():
                a, b = self.x(r.start_utc), self.x(r.end_utc)
                hits = [q for q in rects if abs(q["x"] - a) <= 1.0 and abs(q["x"] + q["width"] - b) <= 1.0]
                assert len(hits) == 1, (cls, site, r.start_utc)
                assert top <= hits[0]["y"] and hits[0]["y"] + hits[0]["height"] <= top + self.row_h


@pytest.fixture(scope="module")
def demo_timeline(demo_folder):
    return Timeline(_figure_svg((demo_folder / "report.html").read_text(encoding="utf-8"), "fig-timeline"))


@pytest.fixture(scope="module")
def baseline_folder(tmp_path_factory):
    return make_plan_folder(tmp_path_factory.mktemp("timeline"))


def test_every_site_is_a_row_in_the_plans_order(demo_timeline, demo_folder):
    pf = load_plan_folder(demo_folder)
    assert demo_timeline.sites == list(pf.sites)
    assert np.all(np.diff(demo_timeline.row_y) > 0)  # first site on top


def test_plan_blocks_and_windows_sit_at_their_utc_times(demo_timeline, demo_folder):
    plan = pd.read_csv(demo_folder / "plan.csv", dtype=str)
    windows = pd.read_csv(demo_folder / "windows.csv", dtype=str).dropna(subset=["start_utc"])
    assert len(plan) > 0 and len(windows) > 0
    demo_timeline.assert_blocks_at(plan, "plan")
    demo_timeline.assert_blocks_at(windows, "windows")


def test_baseline_blocks_are_drawn_below_the_plans_when_a_baseline_exists(baseline_folder):
    pf = load_plan_folder(baseline_folder)
    chart = figures_timeline.network_timeline_svg(pf.sites, pf.windows, pf.plan, pf.baseline)
    read = Timeline(ET.fromstring(chart.text))
    baseline = pd.read_csv(baseline_folder / "baseline.csv", dtype=str)
    plan = pd.read_csv(baseline_folder / "plan.csv", dtype=str)
    assert len(baseline) > 0
    read.assert_blocks_at(baseline, "baseline")
    read.assert_blocks_at(plan, "plan")
    for site in read.sites:  # the baseline's blocks in the lower half of the row, the plan's in the upper
        mid = read.row_y[read.sites.index(site)]
        assert all(q["y"] >= mid for q in read.rects("baseline", site))
        assert all(q["y"] + q["height"] <= mid for q in read.rects("plan", site))
    keys = [t.text for t in ET.fromstring(chart.text).iter(f"{SVG}text")]
    assert "baseline block (lower half)" in keys
    without = ET.fromstring(figures_timeline.network_timeline_svg(pf.sites, pf.windows, pf.plan, None).text)
    assert not any(g.get("class") == "baseline" for g in without.iter(f"{SVG}g"))
    assert "baseline block (lower half)" not in [t.text for t in without.iter(f"{SVG}text")]


def test_sites_differ_by_colour_and_hatch_and_names_are_escaped(baseline_folder):
    pf = load_plan_folder(baseline_folder)
    names = [f'Site <{i}> & "co"' for i in range(len(SITE_STYLES))]
    plan = pd.concat([pf.plan.assign(site=name) for name in names], ignore_index=True)
    a = figures_timeline.network_timeline_svg(names, pf.windows, plan, pf.baseline)
    b = figures_timeline.network_timeline_svg(list(names), pf.windows.copy(), plan.copy(), pf.baseline.copy())
    assert a.text == b.text  # byte for byte repeatable
    root = ET.fromstring(a.text)
    assert Timeline(root).sites == names
    fills = [
        next(g for g in root.iter(f"{SVG}g") if g.get("data-site") == n and g.get("class") == "plan") for n in names
    ]
    fills = [g.get("fill") for g in fills]
    assert len(set(fills)) == len(SITE_STYLES)
    patterns = {p.get("id"): p for p in root.iter(f"{SVG}pattern")}
    for (colour, hatch), fill in zip(SITE_STYLES, fills, strict=True):
        if not hatch:
            assert fill == colour
        else:  # the site's colour as the ground under an ink hatch
            ground = patterns[fill.removeprefix("url(#").removesuffix(")")].find(f"{SVG}rect")
            assert ground.get("fill") == colour


def test_utc_ticks_are_round_and_few():
    t0, t1 = np.datetime64("2034-03-16T10:00"), np.datetime64("2034-04-15T06:00")
    ticks, step_h = figures_timeline.utc_ticks(t0, t1)
    assert step_h == 72 and 1 < ticks.size <= figures_timeline.MAX_TICKS
    assert t0 <= ticks[0] and ticks[-1] <= t1
    assert all(str(t).endswith("T00:00") for t in ticks)  # whole days
    ticks, step_h = figures_timeline.utc_ticks(np.datetime64("2034-03-16T20:10"), np.datetime64("2034-03-17T07:00"))
    assert step_h == 2 and str(ticks[0]) == "2034-03-16T22:00"
