"""Figures of the sky side of a plan: the target's geometry, each site's nights, the network timeline."""

from __future__ import annotations

from collections.abc import Sequence

import matplotlib.dates as mdates
import numpy as np
import pandas as pd
from matplotlib.collections import LineCollection, PolyCollection
from matplotlib.colors import ListedColormap
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch

from planner.outputs.figstyle import (
    AMBER,
    DARKNESS_GREYS,
    DARKNESS_LEVELS_DEG,
    DARKNESS_NAMES,
    INK,
    PLUM,
    SITE_STYLES,
    SLATE,
    TEAL,
    date_axis,
    datetimes,
    new_figure,
)


def geometry_figure(geometry: pd.DataFrame, seen_from: str, solar_caution_deg: float = 45.0) -> Figure:
    """Heliocentric and observer distance, phase angle, solar elongation and predicted magnitude.

    ``geometry`` holds ``time_utc`` and the geometry columns of one site (or the geocentre). Solar
    elongations below ``solar_caution_deg`` are shaded as a Sun-safety caution zone.
    """
    t = datetimes(geometry["time_utc"])
    fig = new_figure(8.0, 7.2)
    axes = fig.subplots(4, 1, sharex=True)
    ax = axes[0]
    ax.plot(t, geometry["helio_dist_au"], color=INK, ls="-", lw=1.8, label="r (Sun–target)")
    ax.plot(t, geometry["obs_dist_au"], color=AMBER, ls="--", lw=2.0, label="Δ (observer–target)")
    ax.set_ylabel("distance (au)")
    ax.legend(loc="best", fontsize=8)
    axes[1].plot(t, geometry["phase_angle_deg"], color=INK, lw=1.8)
    axes[1].set_ylabel("phase angle (°)")
    ax = axes[2]
    elong = geometry["solar_elong_deg"].to_numpy(dtype=float)
    ax.plot(t, elong, color=INK, lw=1.8)
    low = min(float(np.nanmin(elong)) - 5.0, solar_caution_deg - 5.0)
    ax.axhspan(
        max(low, 0.0),
        solar_caution_deg,
        facecolor="none",
        edgecolor=PLUM,
        hatch="//",
        lw=0.0,
        label=f"< {solar_caution_deg:g}°: Sun-safety caution",
    )
    ax.set_ylim(max(low, 0.0), max(float(np.nanmax(elong)) + 5.0, solar_caution_deg + 10.0))
    ax.set_ylabel("solar elong. (°)")
    ax.legend(loc="best", fontsize=8)
    ax = axes[3]
    ax.plot(t, geometry["mag_pred"], color=INK, lw=1.8)
    ax.invert_yaxis()
    ax.set_ylabel("predicted mag")
    ax.set_xlabel(f"UTC (as seen from {seen_from})")
    date_axis(ax)
    for a in axes:
        a.grid(True, color="#dddddd", lw=0.6)
    return fig


# ---------------------------------------------------------------------------------------- nights


def _darkness_index(sun_alt_deg: np.ndarray) -> np.ndarray:
    """0 = day … 4 = night, from the Sun's altitude (Explanatory Supplement twilight definitions)."""
    return np.searchsorted(-np.asarray(DARKNESS_LEVELS_DEG), -np.asarray(sun_alt_deg, dtype=float), side="left")


def _row_geometry(x_all_h: np.ndarray, values: np.ndarray, n_rows: int, xs_h: np.ndarray) -> np.ndarray:
    """``values`` sampled at hours ``x_all_h`` (after the first night's local noon), resampled on each
    night's grid ``24·k + xs_h``: (nights, len(xs_h)); NaN outside the samples."""
    grid = 24.0 * np.arange(n_rows)[:, None] + xs_h[None, :]
    out = np.interp(grid.ravel(), x_all_h, values, left=np.nan, right=np.nan).reshape(grid.shape)
    # A gap in the samples (more than two steps) is not bridged.
    step = np.median(np.diff(x_all_h)) if x_all_h.size > 1 else 1.0
    pos = np.clip(np.searchsorted(x_all_h, grid.ravel()), 1, max(x_all_h.size - 1, 1))
    far = (x_all_h[pos] - x_all_h[pos - 1]).reshape(grid.shape) > 2.5 * step if x_all_h.size > 1 else True
    return np.where(far, np.nan, out)


def _darkness_bands(shade: np.ndarray, xs: np.ndarray) -> PolyCollection:
    """Each night's runs of one darkness level as grey rectangles (a few per night, not a pixel image)."""
    n, m = shade.shape
    bounds = np.concatenate([[xs[0]], 0.5 * (xs[1:] + xs[:-1]), [xs[-1]]])
    start = np.ones((n, m), dtype=bool)
    start[:, 1:] = shade[:, 1:] != shade[:, :-1]
    rows, first = np.nonzero(start)
    last = np.empty_like(first)
    last[:-1] = np.where(rows[1:] == rows[:-1], first[1:], m)
    last[-1:] = m
    level = shade[rows, first]
    keep = level > 0  # daylight stays white
    rows, first, last, level = rows[keep], first[keep], last[keep], level[keep]
    return PolyCollection(
        _rects(rows, bounds[first], bounds[last], 0.0, 1.0),
        facecolors=[DARKNESS_GREYS[k] for k in level],
        edgecolors="none",
        zorder=0,
    )


def _rects(rows: np.ndarray, a: np.ndarray, b: np.ndarray, y0: float, y1: float) -> list[np.ndarray]:
    """Rectangles [a, b] × [row + y0, row + y1] as polygons (one collection draws them all)."""
    return [
        np.array([[x0, r + y0], [x1, r + y0], [x1, r + y1], [x0, r + y1]]) for r, x0, x1 in zip(rows, a, b, strict=True)
    ]


def site_nights_figure(
    site: str,
    geometry: pd.DataFrame,
    windows: pd.DataFrame,
    blocks: pd.DataFrame,
    nights: Sequence[str],
    utc_offset_h: float,
    min_alt_deg: float | None = None,
    legend: bool = True,
) -> Figure:
    """Every night of one site in one panel: a row per night, local clock time across, darkness shaded,
    the target's altitude as a curve inside its row, the observable window as a hatched strip at the
    row's foot and the planned blocks filled.

    ``geometry`` (time_utc, alt_deg, sun_alt_deg), ``windows`` and ``blocks`` (night, start_utc, end_utc)
    are this site's rows. The x axis is local clock time (UTC + ``utc_offset_h``); each row runs from
    the evening of its date to the next morning. One axes and a handful of collections whatever the
    number of nights, so a month of nights draws as fast as one. ``legend=False`` leaves the key out
    (a page with many of these charts shows one key for all, :data:`NIGHT_KEY`); margins are fixed.
    """
    n = max(len(nights), 1)
    row_h = 0.34 if n <= 10 else 0.24 if n <= 31 else max(0.1, 8.0 / n)
    top_in, bottom_in, left_in, right_in = (0.75 if legend else 0.12), 0.5, 1.0, 0.15
    width_in, height_in = 8.6, top_in + bottom_in + row_h * n
    fig = new_figure(width_in, height_in, constrained=False)
    fig.subplots_adjust(
        left=left_in / width_in, right=1 - right_in / width_in, bottom=bottom_in / height_in, top=1 - top_in / height_in
    )
    ax = fig.subplots()
    night0 = np.datetime64(f"{nights[0]}T12:00") if len(nights) else np.datetime64("2000-01-01T12:00")
    offset = np.timedelta64(int(round(utc_offset_h * 3600)), "s")
    t = datetimes(geometry["time_utc"])
    x_all = (t + offset - night0) / np.timedelta64(1, "h")
    order = np.argsort(x_all, kind="stable")
    x_all = x_all[order]
    alt = geometry["alt_deg"].to_numpy(dtype=float)[order]
    sun = geometry["sun_alt_deg"].to_numpy(dtype=float)[order]
    # Night of each sample and hours after that night's local noon: the dark part sets the x range.
    x_in = x_all - 24.0 * np.floor(x_all / 24.0)
    dark = (sun < 0.0) & (x_all >= 0) & (x_all <= 24.0 * n)
    x0, x1 = (float(x_in[dark].min()) - 0.75, float(x_in[dark].max()) + 0.75) if dark.any() else (4.0, 20.0)
    step_h = float(np.median(np.diff(x_all))) if x_all.size > 1 else 1.0 / 6.0
    xs = np.arange(x0, x1 + step_h / 2, max(step_h, 1.0 / 60.0))
    if x_all.size >= 2:
        sun_rows = _row_geometry(x_all, sun, n, xs)
        shade = np.where(np.isnan(sun_rows), 0, _darkness_index(np.nan_to_num(sun_rows, nan=90.0)))
        ax.add_collection(_darkness_bands(shade, xs))
        alt_rows = _row_geometry(x_all, alt, n, xs)
        y = np.arange(n)[:, None] + 0.92 - 0.84 * np.where(alt_rows > 0, alt_rows, np.nan) / 90.0
        xx = np.broadcast_to(xs, y.shape)
        # One line for every night: rows joined by NaN breaks.
        ax.plot(
            np.column_stack([xx, np.full(n, np.nan)]).ravel(),
            np.column_stack([y, np.full(n, np.nan)]).ravel(),
            color=INK,
            lw=1.4,
            zorder=4,
        )
    if min_alt_deg is not None:
        yl = np.arange(n) + 0.92 - 0.84 * float(min_alt_deg) / 90.0
        ax.add_collection(
            LineCollection([[(x0, v), (x1, v)] for v in yl], colors=SLATE, linestyles=":", linewidths=1.0, zorder=3)
        )
    row_of = {str(night): k for k, night in enumerate(nights)}

    def spans(df: pd.DataFrame) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        d = df[df["start_utc"].notna() & (df["start_utc"].astype(str) != "")]
        d = d[d["night"].astype(str).isin(row_of)]
        rows = np.array([row_of[str(v)] for v in d["night"]], dtype=float)
        a = (datetimes(d["start_utc"]) + offset - night0) / np.timedelta64(1, "h") - 24.0 * rows
        b = (datetimes(d["end_utc"]) + offset - night0) / np.timedelta64(1, "h") - 24.0 * rows
        return rows, a, b

    rows, a, b = spans(windows)
    if rows.size:
        ax.add_collection(
            PolyCollection(
                _rects(rows, a, b, 0.80, 0.97), facecolors="white", edgecolors=TEAL, hatch="////", lw=0.8, zorder=2
            )
        )
    rows_b, a, b = spans(blocks)
    if rows_b.size:
        ax.add_collection(
            PolyCollection(
                _rects(rows_b, a, b, 0.06, 0.80), facecolors=AMBER, alpha=0.6, edgecolors=INK, lw=1.0, zorder=3
            )
        )
    empty = sorted(set(range(len(nights))) - {int(r) for r in rows})
    for k in empty:
        ax.text(x1 - 0.1, k + 0.5, "no window", ha="right", va="center", fontsize=7, color=INK, zorder=5)
    ax.set_xlim(x0, x1)
    ax.set_ylim(n, 0)
    ticks = np.arange(np.ceil(x0 / 2) * 2, x1 + 0.01, 2)
    ax.set_xticks(ticks, [f"{int((h + 12) % 24):02d}" for h in ticks], fontsize=8)
    every = 1 if n <= 35 else int(np.ceil(n / 35))
    ax.set_yticks(
        np.arange(0, n, every) + 0.5,
        [pd.Timestamp(night).strftime("%a %d %b") for night in list(nights)[::every]] if len(nights) else [],
        fontsize=8 if n <= 31 else 7,
    )
    ax.tick_params(axis="y", length=0)
    # White rules between the nights (a collection: minor ticks would cost a tick object per night).
    ax.add_collection(LineCollection([[(x0, v), (x1, v)] for v in range(1, n)], colors="white", linewidths=1.0))
    sign = "+" if utc_offset_h >= 0 else "−"
    ax.set_xlabel(
        f"local time at {site} (UTC{sign}{abs(utc_offset_h):g} h); each row: the evening of its date to morning",
        fontsize=9,
    )
    if legend:
        handles = [
            Patch(facecolor=g, edgecolor="#999999", label=nm)
            for g, nm in zip(DARKNESS_GREYS[1:], DARKNESS_NAMES[1:], strict=True)
        ]
        handles += [
            Line2D([], [], color=INK, lw=1.4, label="target altitude (row foot 0°, top 90°)"),
            Patch(facecolor="white", edgecolor=TEAL, hatch="////", label="observable window (strip at row foot)"),
            Patch(facecolor=AMBER, alpha=0.6, edgecolor=INK, label="planned block"),
        ]
        if min_alt_deg is not None:
            handles.append(Line2D([], [], color=SLATE, ls=":", lw=1.0, label=f"altitude limit {min_alt_deg:g}°"))
        fig.legend(handles=handles, loc="upper center", ncols=3, fontsize=8, frameon=False)
    return fig


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


def network_nights_figure(
    sites: Sequence[str], nights: Sequence[str], planned_h: np.ndarray, window_h: np.ndarray
) -> Figure:
    """The whole network at a glance: a row per site, a column per night; shade = hours planned,
    a hatched cell = no observable window that night, a dot = a window left unused.

    ``planned_h`` and ``window_h`` are (sites, nights) arrays of hours.
    """
    n_s, n_n = max(len(sites), 1), max(len(nights), 1)
    fig = new_figure(min(max(6.0, 2.2 + 0.26 * n_n), 11.0), 1.6 + 0.32 * n_s)
    ax = fig.subplots()
    planned = np.asarray(planned_h, dtype=float).reshape(len(sites), len(nights))
    window = np.asarray(window_h, dtype=float).reshape(len(sites), len(nights))
    top = max(float(np.nanmax(planned)) if planned.size else 0.0, 1e-9)
    im = ax.imshow(
        np.where(planned > 0, planned, np.nan),
        cmap=ListedColormap(["#f2e3c4", "#e6c27a", "#d98e04", "#8a5a02", INK]),
        vmin=0.0,
        vmax=top,
        aspect="auto",
        interpolation="nearest",
        extent=(-0.5, n_n - 0.5, n_s - 0.5, -0.5),
    )
    none = np.argwhere(window <= 0)
    if none.size:
        ax.add_collection(
            PolyCollection(
                [
                    np.array([[c - 0.5, r - 0.5], [c + 0.5, r - 0.5], [c + 0.5, r + 0.5], [c - 0.5, r + 0.5]])
                    for r, c in none
                ],
                facecolors="white",
                edgecolors=SLATE,
                hatch="xxx",
                lw=0.0,
            )
        )
    idle = np.argwhere((window > 0) & (planned <= 0))
    if idle.size:
        ax.plot(idle[:, 1], idle[:, 0], ls="none", marker="o", ms=3.5, mfc="white", mec=INK, mew=1.0)
    ax.set_xlim(-0.5, n_n - 0.5)
    ax.set_ylim(n_s - 0.5, -0.5)
    every = 1 if n_n <= 16 else int(np.ceil(n_n / 16))
    ax.set_xticks(
        np.arange(0, len(nights), every),
        [pd.Timestamp(x).strftime("%d %b") for x in list(nights)[::every]],
        fontsize=8,
        rotation=0 if len(nights) <= 8 else 45,
        ha="center" if len(nights) <= 8 else "right",
    )
    ax.set_yticks(range(len(sites)), list(sites), fontsize=8)
    ax.set_xticks(np.arange(n_n + 1) - 0.5, minor=True)
    ax.set_yticks(np.arange(n_s + 1) - 0.5, minor=True)
    ax.grid(True, which="minor", color="white", lw=1.2)
    ax.tick_params(which="minor", length=0)
    ax.set_xlabel("night (local evening date)")
    bar = fig.colorbar(im, ax=ax, shrink=0.9, pad=0.01)
    bar.set_label("hours planned", fontsize=8)
    handles = [
        Patch(facecolor="white", edgecolor=SLATE, hatch="xxx", label="no observable window"),
        Line2D([], [], ls="none", marker="o", ms=4, mfc="white", mec=INK, label="window, nothing planned"),
    ]
    fig.legend(handles=handles, loc="outside upper center", ncols=2, fontsize=8, frameon=False)
    return fig


# ---------------------------------------------------------------------------------------- network


def network_timeline_figure(
    sites: Sequence[str], windows: pd.DataFrame, plan: pd.DataFrame, baseline: pd.DataFrame | None = None
) -> Figure:
    """All sites on one UTC axis: windows (hatched outline), plan blocks (solid), baseline (open, lower)."""
    fig = new_figure(9.0, 0.75 * len(sites) + 1.6)
    ax = fig.subplots()

    def bars(df: pd.DataFrame, site: str) -> list[tuple[float, float]]:
        d = df[(df["site"].astype(str) == site) & df["start_utc"].notna() & (df["start_utc"].astype(str) != "")]
        a = mdates.date2num(datetimes(d["start_utc"]))
        b = mdates.date2num(datetimes(d["end_utc"]))
        return list(zip(a, b - a, strict=True))

    for i, site in enumerate(sites):
        y = len(sites) - 1 - i
        color, hatch = SITE_STYLES[i % len(SITE_STYLES)]
        ax.broken_barh(bars(windows, site), (y - 0.42, 0.84), facecolors="none", edgecolors=TEAL, hatch="///", lw=0.8)
        ax.broken_barh(bars(plan, site), (y - 0.02, 0.40), facecolors=color, edgecolors=INK, hatch=hatch, lw=1.0)
        if baseline is not None:
            ax.broken_barh(
                bars(baseline, site),
                (y - 0.38, 0.30),
                facecolors="white",
                edgecolors=INK,
                linestyle="--",
                lw=1.0,
            )
    ax.set_yticks(range(len(sites)), list(reversed(list(sites))))
    ax.set_ylim(-0.6, len(sites) - 0.4)
    ax.xaxis_date()
    date_axis(ax)
    ax.set_xlabel("UTC")
    ax.grid(True, axis="x", color="#dddddd", lw=0.6)
    handles = [
        Patch(facecolor="none", edgecolor=TEAL, hatch="///", label="observable window"),
        Patch(facecolor=INK, edgecolor=INK, label="plan block (upper half; site colour and hatch)"),
    ]
    if baseline is not None:
        handles.append(Patch(facecolor="white", edgecolor=INK, linestyle="--", label="baseline block (lower half)"))
    fig.legend(handles=handles, loc="outside upper center", ncols=3, fontsize=8, frameon=False)
    return fig
