"""The report's night charts, written as SVG directly: each site's nights, and sites against nights.

Both charts are rows of rectangles, one line per night and some text, so they are written as markup
from numpy arrays (:mod:`planner.outputs.svgdraw`) in milliseconds, in the palette and greys of
:mod:`planner.outputs.figstyle`. Darkness levels follow the Sun's altitude with the twilight
definitions of the Explanatory Supplement to the Astronomical Almanac (Urban & Seidelmann 2013, §7):
sunset/sunrise −0.833°, civil −6°, nautical −12°, astronomical −18°.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd

from planner.outputs.figstyle import (
    AMBER,
    DARKNESS_GREYS,
    DARKNESS_LEVELS_DEG,
    DARKNESS_NAMES,
    INK,
    SLATE,
    TEAL,
    datetimes,
    timed_rows,
)
from planner.outputs.svgdraw import PX_PER_IN, Svg, SvgChart, num, polyline_d

#: Within a night's row (0 = its top, 1 = its foot): altitude 0° at ALT_FOOT, 90° at ALT_FOOT − ALT_SPAN.
ALT_FOOT, ALT_SPAN = 0.92, 0.84
#: The observable window's strip and the planned blocks, as fractions of the row.
WINDOW_ROWS, BLOCK_ROWS = (0.80, 0.97), (0.06, 0.80)
#: Colours of the overview's hours planned, light to dark, over equal steps from 0 to the largest.
PLANNED_SHADES = ("#f2e3c4", "#e6c27a", "#d98e04", "#8a5a02", INK)

#: The night charts' key as (swatch CSS, words), for a page that shows it once above many charts.
NIGHT_KEY = (
    *[
        (f"background:{g};border:1px solid #999", nm)
        for g, nm in zip(DARKNESS_GREYS[1:], DARKNESS_NAMES[1:], strict=True)
    ],
    (f"border-top:2px solid {INK};height:0", "target altitude (row foot 0°, top 90°)"),
    (
        f"background:repeating-linear-gradient(45deg,#fff 0 2px,{TEAL} 2px 3px);border:1px solid {TEAL}",
        "observable window (strip at the row's foot)",
    ),
    (f"background:{AMBER};opacity:.6;border:1px solid {INK}", "planned block"),
    (f"border-top:2px dotted {SLATE};height:0", "the site's altitude limit"),
)


def darkness_index(sun_alt_deg: np.ndarray) -> np.ndarray:
    """0 = day … 4 = night, from the Sun's altitude (Explanatory Supplement twilight definitions)."""
    return np.searchsorted(-np.asarray(DARKNESS_LEVELS_DEG), -np.asarray(sun_alt_deg, dtype=float), side="left")


def row_samples(x_all_h: np.ndarray, values: np.ndarray, n_rows: int, xs_h: np.ndarray) -> np.ndarray:
    """``values`` sampled at hours ``x_all_h`` (after the first night's local noon), resampled on each
    night's grid ``24·k + xs_h``: (nights, len(xs_h)); NaN outside the samples."""
    grid = 24.0 * np.arange(n_rows)[:, None] + xs_h[None, :]
    out = np.interp(grid.ravel(), x_all_h, values, left=np.nan, right=np.nan).reshape(grid.shape)
    # A gap in the samples (more than two steps) is not bridged.
    step = np.median(np.diff(x_all_h)) if x_all_h.size > 1 else 1.0
    pos = np.clip(np.searchsorted(x_all_h, grid.ravel()), 1, max(x_all_h.size - 1, 1))
    far = (x_all_h[pos] - x_all_h[pos - 1]).reshape(grid.shape) > 2.5 * step if x_all_h.size > 1 else True
    return np.where(far, np.nan, out)


def level_runs(shade: np.ndarray, xs: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Each row's runs of one level in ``shade`` (rows × len(xs)): (row, x from, x to, level), a run's
    edges half-way between samples; runs of level 0 (daylight) are left out."""
    n, m = shade.shape
    bounds = np.concatenate([[xs[0]], 0.5 * (xs[1:] + xs[:-1]), [xs[-1]]])
    start = np.ones((n, m), dtype=bool)
    start[:, 1:] = shade[:, 1:] != shade[:, :-1]
    rows, first = np.nonzero(start)
    last = np.empty_like(first)
    last[:-1] = np.where(rows[1:] == rows[:-1], first[1:], m)
    last[-1:] = m
    level = shade[rows, first]
    keep = level > 0
    return rows[keep], bounds[first[keep]], bounds[last[keep]], level[keep]


def _hours_after(times_utc, night0: np.datetime64, offset: np.timedelta64) -> np.ndarray:
    return (datetimes(times_utc) + offset - night0) / np.timedelta64(1, "h")


def site_nights_svg(
    site: str,
    geometry: pd.DataFrame,
    windows: pd.DataFrame,
    blocks: pd.DataFrame,
    nights: Sequence[str],
    utc_offset_h: float,
    min_alt_deg: float | None = None,
) -> SvgChart:
    """Every night of one site in one chart: a row per night, local clock time across, darkness shaded,
    the target's altitude as a curve inside its row, the observable window as a hatched strip at the
    row's foot, the planned blocks filled, the altitude limit dotted.

    ``geometry`` (time_utc, alt_deg, sun_alt_deg), ``windows`` and ``blocks`` (night, start_utc, end_utc)
    are this site's rows. The x axis is local clock time (UTC + ``utc_offset_h``); each row runs from
    the evening of its date to the next morning. The key is not drawn (the page shows :data:`NIGHT_KEY`).
    """
    n = max(len(nights), 1)
    row_px = PX_PER_IN * (0.34 if n <= 10 else 0.24 if n <= 31 else max(0.1, 8.0 / n))
    top, bottom, left, right = 12.0, 50.0, 100.0, 15.0
    width, height = 860.0, top + bottom + row_px * n
    night0 = np.datetime64(f"{nights[0]}T12:00") if len(nights) else np.datetime64("2000-01-01T12:00")
    offset = np.timedelta64(int(round(utc_offset_h * 3600)), "s")
    x_all = _hours_after(geometry["time_utc"], night0, offset)
    order = np.argsort(x_all, kind="stable")
    x_all = x_all[order]
    alt = geometry["alt_deg"].to_numpy(dtype=float)[order]
    sun = geometry["sun_alt_deg"].to_numpy(dtype=float)[order]
    # Hours after each sample's local noon: the dark part of every night sets the x range.
    x_in = x_all - 24.0 * np.floor(x_all / 24.0)
    dark = (sun < 0.0) & (x_all >= 0) & (x_all <= 24.0 * n)
    x0, x1 = (float(x_in[dark].min()) - 0.75, float(x_in[dark].max()) + 0.75) if dark.any() else (4.0, 20.0)
    px_per_h = (width - left - right) / (x1 - x0)

    def px(hours):
        return left + (np.clip(np.asarray(hours, dtype=float), x0, x1) - x0) * px_per_h

    def py(rows, frac):
        return top + (np.asarray(rows, dtype=float) + frac) * row_px

    svg = Svg(width, height, f"Nights at {site}: altitude, darkness, windows and planned blocks")
    svg.hatch("window-hatch", TEAL, 4.0, 45.0, 1.0)
    if x_all.size >= 2:
        step_h = float(np.median(np.diff(x_all)))
        xs = np.arange(x0, x1 + step_h / 2, max(step_h, 1.0 / 60.0))
        sun_rows = row_samples(x_all, sun, n, xs)
        shade = np.where(np.isnan(sun_rows), 0, darkness_index(np.nan_to_num(sun_rows, nan=90.0)))
        rows, a, b, level = level_runs(shade, xs)
        svg.rects(px(a), py(rows, 0.0), px(b), py(rows, 1.0), [DARKNESS_GREYS[k] for k in level], class_="darkness")
        alt_rows = row_samples(x_all, alt, n, xs)
        y = py(np.arange(n)[:, None], ALT_FOOT - ALT_SPAN * np.where(alt_rows > 0, alt_rows, np.nan) / 90.0)
        svg.open(class_="altitude", fill="none", stroke=INK, stroke_width=1.9, stroke_linejoin="round")
        for k in range(n):
            svg.path(polyline_d(px(xs), y[k]), data_night=str(nights[k]) if k < len(nights) else None)
        svg.close()
    row_of = {str(night): k for k, night in enumerate(nights)}

    def spans(df: pd.DataFrame) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        d = timed_rows(df)
        d = d[d["night"].astype(str).isin(row_of)]
        rows = np.array([row_of[str(v)] for v in d["night"]], dtype=float)
        return (
            rows,
            _hours_after(d["start_utc"], night0, offset) - 24 * rows,
            _hours_after(d["end_utc"], night0, offset) - 24 * rows,
        )

    window_style = dict(class_="windows", fill="url(#window-hatch)", stroke=TEAL, stroke_width=1.1)
    block_style = dict(class_="blocks", fill=AMBER, fill_opacity=0.6, stroke=INK, stroke_width=1.4)
    window_rows = np.array([])
    for df, (lo, hi), style in ((windows, WINDOW_ROWS, window_style), (blocks, BLOCK_ROWS, block_style)):
        rows, a, b = spans(df)
        svg.rects(px(a), py(rows, lo), px(b), py(rows, hi), **style)
        window_rows = rows if style is window_style else window_rows
    if min_alt_deg is not None:
        svg.hlines(
            left,
            width - right,
            py(np.arange(n), ALT_FOOT - ALT_SPAN * float(min_alt_deg) / 90.0),
            class_="alt-limit",
            stroke=SLATE,
            stroke_width=1.4,
            stroke_dasharray="1.4 2.3",
        )
    svg.hlines(left, width - right, py(np.arange(1, n), 0.0), class_="night-rules", stroke="#ffffff", stroke_width=1.4)
    for k in sorted(set(range(len(nights))) - {int(r) for r in window_rows}):
        svg.text(px(x1 - 0.1), py(k, 0.5), "no window", 7, "end", class_="no-window", fill=INK)
    svg.frame(left, top, width - right, height - bottom)
    ticks = np.arange(np.ceil(x0 / 2) * 2, x1 + 0.01, 2)
    svg.open(class_="x-ticks")
    svg.path(" ".join(f"M{num(v)},{num(height - bottom)}v4.9" for v in px(ticks)), stroke="#000000", stroke_width=1.1)
    for v, h in zip(px(ticks), ticks, strict=True):
        svg.text(v, height - bottom + 13, f"{int((h + 12) % 24):02d}", 8, "middle", data_hour=f"{h:g}")
    svg.close()
    every = 1 if n <= 35 else int(np.ceil(n / 35))
    svg.open(class_="y-labels")
    for k in range(0, len(nights), every):
        label = pd.Timestamp(nights[k]).strftime("%a %d %b")
        svg.text(left - 5, py(k, 0.5), label, 8 if n <= 31 else 7, "end", data_night=str(nights[k]))
    svg.close()
    sign = "+" if utc_offset_h >= 0 else "−"
    svg.text(
        left + (width - left - right) / 2,
        height - 14,
        f"local time at {site} (UTC{sign}{abs(utc_offset_h):g} h); each row: the evening of its date to morning",
        9,
        "middle",
    )
    return svg.finish()


def _nice_step(top: float) -> float:
    """A round step giving at most six ticks from 0 to ``top``."""
    for step in (0.25, 0.5, 1.0, 2.0, 5.0, 10.0, 20.0, 50.0):
        if top / step <= 5.0:
            return step
    return float(10 ** np.ceil(np.log10(top / 5.0)))


def network_nights_svg(
    sites: Sequence[str], nights: Sequence[str], planned_h: np.ndarray, window_h: np.ndarray
) -> SvgChart:
    """The whole network at a glance: a row per site, a column per night; shade = hours planned (five
    equal steps up to the largest, a colour bar beside), a hatched cell = no observable window that
    night, an open dot = a window left unused.

    ``planned_h`` and ``window_h`` are (sites, nights) arrays of hours.
    """
    n_s, n_n = max(len(sites), 1), max(len(nights), 1)
    planned = np.asarray(planned_h, dtype=float).reshape(len(sites), len(nights))
    window = np.asarray(window_h, dtype=float).reshape(len(sites), len(nights))
    top_h = max(float(np.nanmax(planned)) if planned.size else 0.0, 1e-9)
    slanted = len(nights) > 8
    width = PX_PER_IN * min(max(6.0, 2.2 + 0.26 * n_n), 11.0)
    left = 12.0 + 6.4 * max([len(str(s)) for s in sites] or [4])
    right, top, bottom = 80.0, 34.0, 72.0 if slanted else 48.0
    plot_h = 32.0 * n_s
    height = top + plot_h + bottom
    cell_w, cell_h = (width - left - right) / n_n, plot_h / n_s
    svg = Svg(width, height, "Sites against nights: hours planned, nights without a window, windows unused")
    svg.hatch("none-hatch", SLATE, 6.0, 45.0, 0.8, cross=True)
    r, c = np.nonzero(planned > 0)
    shade = np.clip((planned[r, c] / top_h * len(PLANNED_SHADES)).astype(int), 0, len(PLANNED_SHADES) - 1)
    cx, cy = left + c * cell_w, top + r * cell_h
    svg.rects(cx, cy, cx + cell_w, cy + cell_h, [PLANNED_SHADES[k] for k in shade], class_="planned")
    r, c = np.nonzero(window <= 0)
    cx, cy = left + c * cell_w, top + r * cell_h
    svg.rects(cx, cy, cx + cell_w, cy + cell_h, class_="no-window", fill="url(#none-hatch)")
    r, c = np.nonzero((window > 0) & (planned <= 0))
    svg.circles(
        left + (c + 0.5) * cell_w,
        top + (r + 0.5) * cell_h,
        3.2,
        class_="unused",
        fill="#ffffff",
        stroke=INK,
        stroke_width=1.4,
    )
    svg.path(
        " ".join(f"M{num(left + j * cell_w)},{num(top)}V{num(top + plot_h)}" for j in range(1, n_n))
        + " "
        + " ".join(f"M{num(left)},{num(top + i * cell_h)}H{num(width - right)}" for i in range(1, n_s)),
        stroke="#ffffff",
        stroke_width=1.7,
    )
    svg.frame(left, top, width - right, top + plot_h)
    svg.open(class_="y-labels")
    for i, s in enumerate(sites):
        svg.text(left - 6, top + (i + 0.5) * cell_h, str(s), 8, "end")
    svg.close()
    every = 1 if n_n <= 16 else int(np.ceil(n_n / 16))
    svg.open(class_="x-labels")
    for j in range(0, len(nights), every):
        x, label = left + (j + 0.5) * cell_w, pd.Timestamp(nights[j]).strftime("%d %b")
        if slanted:
            svg.text(x + 3, top + plot_h + 10, label, 8, "end", rotate=-45.0, data_night=str(nights[j]))
        else:
            svg.text(x, top + plot_h + 12, label, 8, "middle", data_night=str(nights[j]))
    svg.close()
    svg.text(left + (width - left - right) / 2, height - 12, "night (local evening date)", 10, "middle")
    # Colour bar: equal steps from 0 (foot) to the largest hours planned (top), ticked at round hours.
    bx, bw = width - right + 10.0, 12.0
    edges = top + plot_h - np.arange(len(PLANNED_SHADES) + 1) * plot_h / len(PLANNED_SHADES)
    k = len(PLANNED_SHADES)
    svg.rects(np.full(k, bx), edges[1:], np.full(k, bx + bw), edges[:-1], list(PLANNED_SHADES), class_="colour-bar")
    svg.path(
        f"M{num(bx)},{num(top)}h{num(bw)}V{num(top + plot_h)}h{num(-bw)}Z",
        fill="none",
        stroke="#000000",
        stroke_width=0.8,
    )
    step = _nice_step(top_h)
    svg.open(class_="colour-ticks")
    for v in np.arange(0.0, top_h + 1e-9, step):
        y = top + plot_h - v / top_h * plot_h
        svg.path(f"M{num(bx + bw)},{num(y)}h4", stroke="#000000", stroke_width=0.8)
        svg.text(bx + bw + 6, y, f"{v:g}", 8, data_hours=f"{v:g}")
    svg.close()
    svg.text(width - 8, top + plot_h / 2, "hours planned", 8, "middle", rotate=-90.0)
    # The key, above the chart.
    kx = left + (width - left - right) / 2 - 170
    svg.rects([kx], [8.0], [kx + 22], [20.0], class_="key", fill="url(#none-hatch)", stroke=SLATE, stroke_width=0.8)
    svg.text(kx + 28, 14, "no observable window", 8)
    svg.circles([kx + 200.0], [14.0], 3.6, fill="#ffffff", stroke=INK, stroke_width=1.4)
    svg.text(kx + 210, 14, "window, nothing planned", 8)
    return svg.finish()
