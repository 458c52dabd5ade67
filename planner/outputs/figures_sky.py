"""Figures of the sky side of a plan: the target's geometry (the night charts and the network timeline are
written as SVG directly: :mod:`planner.outputs.figures_nights`, :mod:`planner.outputs.figures_timeline`)."""

from __future__ import annotations

import numpy as np
import pandas as pd
from matplotlib.figure import Figure

from planner.outputs.figstyle import (
    AMBER,
    INK,
    PLUM,
    date_axis,
    datetimes,
    fixed_margins,
    new_figure,
    ytick_labels_in,
)


def geometry_figure(geometry: pd.DataFrame, seen_from: str, solar_caution_deg: float = 45.0) -> Figure:
    """Heliocentric and observer distance, phase angle, solar elongation and predicted magnitude.

    ``geometry`` holds ``time_utc`` and the geometry columns of one site (or the geocentre). Solar
    elongations below ``solar_caution_deg`` are shaded as a Sun-safety caution zone.
    """
    t = datetimes(geometry["time_utc"])
    fig = new_figure(8.0, 7.2, constrained=False)
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
    fixed_margins(fig, 0.4 + max(ytick_labels_in(a) for a in axes), 0.12, 0.52, 0.08, hgap_in=0.17)
    return fig
