"""Figures of the sky side of a plan: the target's geometry, each site's nights, the network timeline."""

from __future__ import annotations

import textwrap
from collections.abc import Sequence

import matplotlib.dates as mdates
import numpy as np
import pandas as pd
from matplotlib.colors import ListedColormap
from matplotlib.figure import Figure
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


def site_nights_figure(
    site: str,
    geometry: pd.DataFrame,
    windows: pd.DataFrame,
    blocks: pd.DataFrame,
    nights: Sequence[str],
    utc_offset_h: float,
    min_alt_deg: float | None = None,
) -> Figure:
    """One panel per night: target altitude against local time, darkness shaded, window and blocks marked.

    ``geometry`` (time_utc, alt_deg, sun_alt_deg), ``windows`` and ``blocks`` (night, start_utc, end_utc)
    are this site's rows. The x axis is local clock time (UTC + ``utc_offset_h``) in hours from the
    night's local noon, so every panel shows one evening-to-morning.
    """
    n = max(len(nights), 1)
    ncols = min(n, 4)
    nrows = int(np.ceil(n / ncols))
    fig = new_figure(2.3 * ncols + 0.6, 2.1 * nrows + 0.7)
    axes = np.atleast_1d(fig.subplots(nrows, ncols, sharey=True, squeeze=False)).ravel()
    t = datetimes(geometry["time_utc"])
    alt = geometry["alt_deg"].to_numpy(dtype=float)
    sun = geometry["sun_alt_deg"].to_numpy(dtype=float)
    dark = sun < 0.0
    # Hours after local noon of the first night; each panel then subtracts 24 h per night.
    offset = np.timedelta64(int(round(utc_offset_h * 3600)), "s")
    local = t + offset
    span_h = []
    for night in nights:
        x = (local - np.datetime64(f"{night}T12:00")) / np.timedelta64(1, "h")
        m = (x >= 0) & (x <= 24) & dark
        if m.any():
            span_h += [x[m].min(), x[m].max()]
    x0, x1 = (min(span_h) - 0.75, max(span_h) + 0.75) if span_h else (4.0, 20.0)
    cmap = ListedColormap(DARKNESS_GREYS)
    for i, ax in enumerate(axes):
        if i >= len(nights):
            ax.set_visible(False)
            continue
        night = nights[i]
        noon = np.datetime64(f"{night}T12:00")
        x = (local - noon) / np.timedelta64(1, "h")
        m = (x >= x0 - 0.2) & (x <= x1 + 0.2)
        if m.sum() >= 2:
            ax.imshow(
                _darkness_index(sun[m])[None, :],
                cmap=cmap,
                vmin=-0.5,
                vmax=4.5,
                aspect="auto",
                extent=(x[m][0], x[m][-1], 0, 90),
                interpolation="nearest",
                zorder=0,
            )
            ax.plot(x[m], np.where(alt[m] > 0, alt[m], np.nan), color=INK, lw=1.8, zorder=3)
        if min_alt_deg is not None:
            ax.axhline(min_alt_deg, color=SLATE, ls=":", lw=1.2, zorder=2)

        def hours(v, noon=noon):
            return (datetimes(v) + offset - noon) / np.timedelta64(1, "h")

        w = windows[
            (windows["night"].astype(str) == night)
            & windows["start_utc"].notna()
            & (windows["start_utc"].astype(str) != "")
        ]
        for a, b in zip(hours(w["start_utc"]), hours(w["end_utc"]), strict=True):
            # The window: a hatched strip along the foot of the panel, its edges as thin lines.
            ax.axvspan(a, b, ymin=0, ymax=0.1, facecolor="white", edgecolor=TEAL, hatch="///", lw=1.0, zorder=3)
            ax.axvline(a, color=TEAL, lw=1.0, zorder=3)
            ax.axvline(b, color=TEAL, lw=1.0, zorder=3)
        bl = blocks[blocks["night"].astype(str) == night]
        for a, b in zip(hours(bl["start_utc"]), hours(bl["end_utc"]), strict=True):
            ax.axvspan(a, b, ymin=0.0, ymax=1.0, facecolor=AMBER, alpha=0.55, edgecolor=INK, lw=1.2, zorder=2)
            ax.plot([a, b], [86, 86], color=INK, lw=5, solid_capstyle="butt", zorder=4)
        if w.empty:
            reason = windows.loc[windows["night"].astype(str) == night, "reason"] if "reason" in windows else []
            text = "no window" + (
                f":\n{textwrap.fill(str(reason.iloc[0]), 30)}" if len(reason) and str(reason.iloc[0]) != "nan" else ""
            )
            # Kept out of the layout: a long reason must not squeeze the panels to nothing.
            ax.text(
                0.5,
                0.5,
                text,
                transform=ax.transAxes,
                ha="center",
                va="center",
                fontsize=8,
                bbox=dict(facecolor="white", edgecolor=SLATE),
                in_layout=False,
                clip_on=True,
            )
        ax.set_xlim(x0, x1)
        ax.set_ylim(0, 90)
        ticks = np.arange(np.ceil(x0 / 3) * 3, x1 + 0.01, 3)
        ax.set_xticks(ticks, [f"{int((h + 12) % 24):02d}" for h in ticks], fontsize=8)
        ax.set_title(pd.Timestamp(night).strftime("%a %d %b"), fontsize=9)
        if i % ncols == 0:
            ax.set_ylabel("altitude (°)")
    sign = "+" if utc_offset_h >= 0 else "−"
    fig.supxlabel(f"local time at {site} (UTC{sign}{abs(utc_offset_h):g} h), evening of the date shown", fontsize=9)
    handles = [
        Patch(facecolor=g, edgecolor="#999999", label=nm)
        for g, nm in zip(DARKNESS_GREYS[1:], DARKNESS_NAMES[1:], strict=True)
    ]
    handles += [
        Patch(facecolor="white", edgecolor=TEAL, hatch="///", label="observable window (strip at foot)"),
        Patch(facecolor=AMBER, alpha=0.55, edgecolor=INK, label="planned block"),
    ]
    fig.legend(handles=handles, loc="outside upper center", ncols=3, fontsize=8, frameon=False)
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
