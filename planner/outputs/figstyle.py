"""The one figure family of phasewise: palette, line styles, axes and figure helpers.

Colours and shapes are our own and never carry meaning alone: the plan is a solid line with filled
circles, the baseline a dashed line with open squares, a log of observations a dotted line with
diamonds; sites differ by colour *and* hatch; darkness levels are greys of increasing depth.
Everything stays readable printed in greyscale and by readers with any common colour-vision
deficiency (the palette's lightness steps are far apart). Figures are built directly on the Agg
canvas (no pyplot state, no backend switch at import).
"""

from __future__ import annotations

import io
from dataclasses import dataclass, field

import matplotlib
import matplotlib.dates as mdates
import numpy as np
import pandas as pd
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.ticker import FixedLocator, FuncFormatter, NullFormatter

from planner.core.timegrid import to_jd_utc
from planner.diagnostics.coverage import phase_bin_index

INK = "#1b2a41"  # near-black navy: the plan, text-like marks
AMBER = "#d98e04"  # light: the baseline
TEAL = "#2f7d6d"  # mid: observable windows
PLUM = "#8a3f72"  # mid-dark
SLATE = "#7a8591"

#: (face colour, hatch) per site, in order; lightness alternates so neighbours differ in greyscale too.
SITE_STYLES: list[tuple[str, str]] = [
    (INK, ""),
    (AMBER, "///"),
    (TEAL, "..."),
    (PLUM, "xx"),
    (SLATE, "\\\\\\"),
    ("#b9c4a0", "++"),
]

#: Marker per site for scattered points (light-curve figures), in the order of SITE_STYLES: shape and
#: colour both differ, so sites stay apart in greyscale.
SITE_MARKERS = ("o", "s", "D", "^", "v", "P")


def site_style(i: int) -> tuple[str, str]:
    """(colour, marker) of the i-th site of a figure."""
    return SITE_STYLES[i % len(SITE_STYLES)][0], SITE_MARKERS[i % len(SITE_MARKERS)]


#: Sun-altitude levels (deg) and the grey used below each: day, civil, nautical, astronomical, night.
DARKNESS_LEVELS_DEG = (-0.833, -6.0, -12.0, -18.0)
DARKNESS_GREYS = ("#ffffff", "#ececec", "#d9d9d9", "#c4c4c4", "#b0b0b0")
DARKNESS_NAMES = ("day", "civil twilight", "nautical twilight", "astronomical twilight", "night")


@dataclass(frozen=True)
class Series:
    """One schedule in a comparison (the plan, the baseline, or a log) and how to draw it."""

    label: str
    color: str = INK
    linestyle: str = "-"
    marker: str = "o"
    filled: bool = True
    check: dict = field(default_factory=dict)
    #: Observation times, UTC, used only when the check does not list its own (``input.times_utc``).
    times_utc: np.ndarray = field(default_factory=lambda: np.array([], dtype="datetime64[ns]"))

    def line_kw(self) -> dict:
        return dict(
            color=self.color,
            linestyle=self.linestyle,
            marker=self.marker,
            markersize=5,
            markerfacecolor=self.color if self.filled else "white",
            markeredgecolor=self.color,
            linewidth=1.8,
            label=self.label,
        )


def plan_series(label: str = "optimised plan", **kw) -> Series:
    return Series(label=label, color=INK, linestyle="-", marker="o", filled=True, **kw)


def baseline_series(label: str = "baseline (by hand)", **kw) -> Series:
    return Series(label=label, color=AMBER, linestyle="--", marker="s", filled=False, **kw)


def log_series(label: str = "observations", **kw) -> Series:
    """A log of times already observed (``phasewise check``)."""
    return Series(label=label, color=PLUM, linestyle=":", marker="D", filled=True, **kw)


def new_figure(width_in: float, height_in: float, constrained: bool = True) -> Figure:
    """A figure on its own Agg canvas; ``constrained=False`` leaves the layout to the caller (fixed
    margins: much cheaper to draw than constrained layout's measuring of every label)."""
    fig = Figure(figsize=(width_in, height_in), layout="constrained" if constrained else None)
    FigureCanvasAgg(fig)
    return fig


def fixed_margins(
    fig: Figure, left_in: float, right_in: float, bottom_in: float, top_in: float, wgap_in=0.0, hgap_in=0.0
) -> None:
    """Place a figure's grid of axes by margins and gaps in inches (so they stay put whatever the figure's
    size): the layout constrained layout would find for our labels, without its measuring every text."""
    w, h = fig.get_size_inches()
    grid = fig.axes[0].get_subplotspec().get_gridspec()
    rows, cols = grid.get_geometry()
    cell_w = (w - left_in - right_in - (cols - 1) * wgap_in) / cols
    cell_h = (h - bottom_in - top_in - (rows - 1) * hgap_in) / rows
    fig.subplots_adjust(
        left=left_in / w,
        right=1.0 - right_in / w,
        bottom=bottom_in / h,
        top=1.0 - top_in / h,
        wspace=wgap_in / cell_w,
        hspace=hgap_in / cell_h,
    )


def ytick_labels_in(ax, size_pt: float = 10.0) -> float:
    """Width (in) of an axis' widest y tick label, estimated from its characters (digits of DejaVu Sans
    are 0.64 em wide) without drawing: what a fixed left margin must leave beside the axis."""
    lo, hi = sorted(ax.get_ylim())
    locs = [v for v in ax.yaxis.get_major_locator()() if lo <= v <= hi]
    labels = ax.yaxis.get_major_formatter().format_ticks(locs) if locs else []
    return 0.64 * size_pt / 72.0 * max([len(t) for t in labels] or [0])


def floats(values) -> np.ndarray:
    """JSON numbers to floats; null (a non-finite value in the check JSON) becomes NaN."""
    return np.array([np.nan if v is None else float(v) for v in values], dtype=float)


def datetimes(values) -> np.ndarray:
    return pd.to_datetime(pd.Series(values), utc=True).dt.tz_localize(None).to_numpy(dtype="datetime64[ns]")


def timed_rows(df: pd.DataFrame) -> pd.DataFrame:
    """The rows of a blocks or windows table that have a start time (a site-night without a window has none)."""
    return df[df["start_utc"].notna() & (df["start_utc"].astype(str) != "")]


#: Round periods (h) that label every log-period axis.
PERIOD_TICKS_H = (0.5, 1, 1.5, 2, 3, 4, 6, 8, 12, 16, 24, 36, 48, 72, 96, 144, 168, 240)


def period_axis(axis, lo: float, hi: float) -> None:
    """Log-scaled period axis labelled at round hours (matplotlib's 2×10⁰ style is hard to read)."""
    ticks = [p for p in PERIOD_TICKS_H if lo * 0.999 <= p <= hi * 1.001] or [lo, hi]
    axis.set_major_locator(FixedLocator(ticks))
    axis.set_major_formatter(FuncFormatter(lambda v, _: f"{v:g}"))
    axis.set_minor_formatter(NullFormatter())


def date_axis(ax) -> None:
    loc = mdates.AutoDateLocator(minticks=4, maxticks=10)
    ax.xaxis.set_major_locator(loc)
    ax.xaxis.set_major_formatter(mdates.ConciseDateFormatter(loc))


def png_bytes(fig: Figure, dpi: int = 100) -> bytes:
    """The figure as PNG bytes (no timestamp in the metadata, so equal figures give equal files)."""
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi, metadata={"Software": None})
    return buf.getvalue()


def svg_bytes(fig: Figure) -> bytes:
    """The figure as SVG (text as ``<text>`` in the browser's sans-serif, as the charts written directly:
    much cheaper than a path per glyph; no date and a fixed id salt, so equal figures give equal files);
    rasterised parts (large meshes) at 200 dpi."""
    buf = io.BytesIO()
    with matplotlib.rc_context({"svg.hashsalt": "phasewise", "svg.fonttype": "none"}):
        fig.savefig(buf, format="svg", dpi=200, metadata={"Date": None})
    return buf.getvalue()


def check_times_utc(check: dict, fallback: np.ndarray, *, emission: bool = False) -> np.ndarray:
    """The observation times a check result was computed from (its ``input.times_utc``), else ``fallback``.

    ``emission``: minus the light time the check subtracted (``input.light_time_minutes``), i.e. the
    times its periods were computed on.
    """
    inp = check.get("input") or {}
    listed = inp.get("times_utc")
    if not listed:
        return np.asarray(fallback, dtype="datetime64[ns]")
    times = np.array([str(t).rstrip("Z") for t in listed], dtype="datetime64[ns]")
    light = inp.get("light_time_minutes")
    if emission and light and len(light) == times.size:
        times = times - np.round(np.asarray(light, dtype=float) * 60e9).astype("int64").astype("timedelta64[ns]")
    return times


def phase_occupancy(times_utc: np.ndarray, periods_h: np.ndarray, n_bins: int) -> np.ndarray:
    """Boolean map [period, phase bin]: does any time fall in the bin, folded on the period?

    Same bins as the check's coverage (planner.diagnostics.coverage.phase_bin_index, phase zero at the first
    time), so each row's mean is that period's coverage fraction. Chunked over periods for memory.
    """
    periods = np.asarray(periods_h, dtype=float)
    occupied = np.zeros((periods.size, n_bins), dtype=bool)
    t_jd = to_jd_utc(np.asarray(times_utc, dtype="datetime64[ns]"))
    if t_jd.size == 0:
        return occupied
    step = max(1, 2_000_000 // t_jd.size)
    for a in range(0, periods.size, step):
        idx = phase_bin_index(t_jd, periods[a : a + step], n_bins)
        idx += (np.arange(idx.shape[0]) * n_bins)[:, None]
        occupied[a : a + idx.shape[0]] = (
            np.bincount(idx.ravel(), minlength=idx.shape[0] * n_bins).reshape(-1, n_bins) > 0
        )
    return occupied


def period_edges(periods: np.ndarray) -> np.ndarray:
    return np.concatenate([[periods[0] * 0.995], 0.5 * (periods[1:] + periods[:-1]), [periods[-1] * 1.005]])
