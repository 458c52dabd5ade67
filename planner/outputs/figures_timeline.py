"""The network timeline, written as SVG directly: every site on one UTC axis.

A row per site (the first on top): the observable windows as hatched outlines over the whole row,
the optimised plan's blocks in the upper half in the site's colour and hatch
(:data:`planner.outputs.figstyle.SITE_STYLES`), the baseline's blocks open and dashed in the lower
half. The chart is rows of rectangles, so it is markup from numpy arrays
(:mod:`planner.outputs.svgdraw`), in the palette of :mod:`planner.outputs.figstyle`.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd

from planner.outputs.figstyle import INK, SITE_STYLES, TEAL, datetimes, timed_rows
from planner.outputs.svgdraw import PX_PER_PT, Svg, SvgChart, num

#: Within a site's row (0 = its top, 1 = its foot): the window, the plan's blocks and the baseline's.
WINDOW_ROWS, PLAN_ROWS, BASELINE_ROWS = (0.08, 0.92), (0.12, 0.49), (0.57, 0.88)
#: Tick steps tried on the UTC axis (hours), the first giving at most MAX_TICKS ticks is used.
TICK_STEPS_H = (1, 2, 3, 6, 12, 24, 48, 72, 96, 168, 336, 672, 1344, 2688)
MAX_TICKS = 10
#: Each matplotlib-style hatch of SITE_STYLES as an SVG fill: (kind, angle from vertical in degrees).
_HATCHES = {"///": ("lines", 45.0), "\\\\\\": ("lines", -45.0), "xx": ("cross", 45.0), "++": ("cross", 0.0)}


def utc_ticks(t0: np.datetime64, t1: np.datetime64) -> tuple[np.ndarray, int]:
    """Round UTC instants between ``t0`` and ``t1`` (multiples of the step after t0's midnight, at most
    :data:`MAX_TICKS`) and the step in hours."""
    span_h = (t1 - t0) / np.timedelta64(1, "h")
    step = next((s for s in TICK_STEPS_H if span_h / s <= MAX_TICKS), TICK_STEPS_H[-1])
    midnight = t0.astype("datetime64[D]").astype("datetime64[m]")
    first = np.ceil(((t0 - midnight) / np.timedelta64(1, "h")) / step) * step
    hours = np.arange(first, (t1 - midnight) / np.timedelta64(1, "h") + 1e-9, step)
    return midnight + (hours * 60).astype("int64").astype("timedelta64[m]"), step


def _spans(df: pd.DataFrame | None, sites: Sequence[str]) -> list[tuple[np.ndarray, np.ndarray]]:
    """Start and end (datetime64) of ``df``'s rows that have times, per site of ``sites`` (times parsed
    once for the whole table)."""
    empty = np.array([], dtype="datetime64[ns]")
    if df is None or df.empty:
        return [(empty, empty)] * len(sites)
    d = timed_rows(df)
    start, end, site = datetimes(d["start_utc"]), datetimes(d["end_utc"]), d["site"].astype(str).to_numpy()
    return [(start[site == str(s)], end[site == str(s)]) for s in sites]


def _site_fill(svg: Svg, i: int, made: set[str]) -> str:
    """The i-th site's fill (its colour, with its hatch drawn in ink over it as a pattern defined once:
    ``made`` holds the patterns already in ``svg``)."""
    color, hatch = SITE_STYLES[i % len(SITE_STYLES)]
    if not hatch:
        return color
    pid = f"site-hatch-{i % len(SITE_STYLES)}"
    if pid not in made:
        made.add(pid)
        if hatch == "...":
            svg.dots(pid, INK, 5.0, 0.9, ground=color)
        else:
            kind, angle = _HATCHES[hatch]
            svg.hatch(pid, INK, 5.0, angle, 0.8, cross=kind == "cross", ground=color)
    return f"url(#{pid})"


def network_timeline_svg(
    sites: Sequence[str], windows: pd.DataFrame, plan: pd.DataFrame, baseline: pd.DataFrame | None = None
) -> SvgChart:
    """All sites on one UTC axis: windows (hatched outline), plan blocks (upper half, the site's colour and
    hatch), baseline blocks (open, dashed, lower half).

    ``windows``, ``plan`` and ``baseline`` hold ``site``, ``start_utc`` and ``end_utc`` (ISO 8601 UTC);
    rows without times are left out.
    """
    n = max(len(sites), 1)
    spans = {name: _spans(df, sites) for name, df in (("windows", windows), ("plan", plan), ("baseline", baseline))}
    every = np.concatenate([a for rows in spans.values() for pair in rows for a in pair])
    if every.size:
        t0, t1 = every.min(), every.max()
    else:
        t0 = np.datetime64("2000-01-01T00:00", "ns")
        t1 = t0 + np.timedelta64(1, "D")
    pad = max((t1 - t0) * 0.02, np.timedelta64(30, "m"))
    t0, t1 = t0 - pad, t1 + pad
    left = 14.0 + 6.4 * max([len(str(s)) for s in sites] or [4])
    right, top, bottom, row_px = 20.0, 36.0, 58.0, 56.0
    width, height = 900.0, top + bottom + row_px * n
    span_h = (t1 - t0) / np.timedelta64(1, "h")
    px_per_h = (width - left - right) / span_h

    def px(t: np.ndarray) -> np.ndarray:
        return left + ((t - t0) / np.timedelta64(1, "h")) * px_per_h

    def py(i: int, frac: float) -> float:
        return top + (i + frac) * row_px

    svg = Svg(width, height, "Network timeline: every site's windows, plan blocks and baseline blocks on one UTC axis")
    svg.hatch("window-hatch", TEAL, 5.0, 45.0, 0.8)
    made: set[str] = set()
    ticks, step_h = utc_ticks(t0, t1)
    tick_x = px(ticks)
    svg.path(
        " ".join(f"M{num(x)},{num(top)}V{num(height - bottom)}" for x in tick_x), stroke="#dddddd", stroke_width=0.8
    )
    # (layer, rows of the site's row, style): the baseline's layer only when there is a baseline.
    layers = [("windows", WINDOW_ROWS, dict(fill="url(#window-hatch)", stroke=TEAL)), ("plan", PLAN_ROWS, None)]
    if baseline is not None:
        layers.append(("baseline", BASELINE_ROWS, dict(fill="#ffffff", stroke=INK, stroke_dasharray="4 2")))
    for i, site in enumerate(sites):
        for cls, (lo, hi), style in layers:
            a, b = spans[cls][i]
            look = style or dict(fill=_site_fill(svg, i, made), stroke=INK)
            svg.rects(px(a), py(i, lo), px(b), py(i, hi), class_=cls, data_site=str(site), stroke_width=1.1, **look)
    svg.hlines(left, width - right, [py(i, 0.0) for i in range(1, n)], stroke="#dddddd", stroke_width=0.8)
    svg.frame(left, top, width - right, height - bottom)
    svg.open(class_="y-labels")
    for i, site in enumerate(sites):
        svg.text(left - 6, py(i, 0.5), str(site), 8, "end", data_site=str(site))
    svg.close()
    svg.open(class_="x-ticks")
    svg.path(" ".join(f"M{num(x)},{num(height - bottom)}v4.9" for x in tick_x), stroke="#000000", stroke_width=1.1)
    last_day = None
    for x, t in zip(tick_x, pd.DatetimeIndex(ticks), strict=True):
        day = t.strftime("%d %b")
        label = day if step_h >= 24 else t.strftime("%H:%M")
        svg.text(x, height - bottom + 13, label, 8, "middle", data_utc=t.strftime("%Y-%m-%dT%H:%MZ"))
        if step_h < 24 and day != last_day:
            svg.text(x, height - bottom + 25, day, 8, "middle")
        last_day = day
    svg.close()
    year = pd.Timestamp(ticks[0] if ticks.size else t0).year
    svg.text(left + (width - left - right) / 2, height - 12, f"UTC ({year})", 9, "middle")
    # The key, above the chart: each entry as wide as its words (about 0.55 em a character).
    words = {
        "windows": "observable window",
        "plan": "plan block (upper half; site colour and hatch)",
        "baseline": "baseline block (lower half)",
    }
    key = [(words[cls], style or dict(fill=INK, stroke=INK)) for cls, _, style in layers]
    kx, ky = left, 10.0
    for words, style in key:
        svg.rects([kx], [ky], [kx + 22], [ky + 12], class_="key", stroke_width=1.1, **style)
        svg.text(kx + 28, ky + 6, words, 8)
        kx += 28 + 0.55 * 8 * PX_PER_PT * len(words) + 20
    return svg.finish()
