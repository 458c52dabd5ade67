"""Figures of the sky side of a plan: the target's geometry and the network timeline (the night charts are
written as SVG directly: :mod:`planner.outputs.figures_nights`)."""

from __future__ import annotations

from collections.abc import Sequence

import matplotlib.dates as mdates
import numpy as np
import pandas as pd
from matplotlib.figure import Figure
from matplotlib.patches import Patch

from planner.outputs.figstyle import (
    AMBER,
    INK,
    PLUM,
    SITE_STYLES,
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
