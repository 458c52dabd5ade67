"""Figures of the campaign report: data in, matplotlib Figure out (Agg, no pyplot state, no files).

Colours and shapes are our own and never carry meaning alone: the plan is a solid line with filled
circles, the baseline a dashed line with open squares; sites differ by colour *and* hatch; darkness
levels are greys of increasing depth. Everything stays readable printed in greyscale and by readers
with any common colour-vision deficiency (the palette's lightness steps are far apart).
"""

from __future__ import annotations

import textwrap
from collections.abc import Sequence
from dataclasses import dataclass, field

import matplotlib

matplotlib.use("Agg")

import matplotlib.dates as mdates  # noqa: E402
import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402
from matplotlib.backends.backend_agg import FigureCanvasAgg  # noqa: E402
from matplotlib.colors import ListedColormap  # noqa: E402
from matplotlib.figure import Figure  # noqa: E402
from matplotlib.patches import Patch  # noqa: E402

from planner.coverage import phase_bin_index  # noqa: E402
from planner.timegrid import to_jd_utc  # noqa: E402
from planner.window import spectral_window  # noqa: E402

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


def new_figure(width_in: float, height_in: float) -> Figure:
    fig = Figure(figsize=(width_in, height_in), layout="constrained")
    FigureCanvasAgg(fig)
    return fig


def _floats(values) -> np.ndarray:
    """JSON numbers to floats; null (a non-finite value in the check JSON) becomes NaN."""
    return np.array([np.nan if v is None else float(v) for v in values], dtype=float)


def _datetimes(values) -> np.ndarray:
    return pd.to_datetime(pd.Series(values), utc=True).dt.tz_localize(None).to_numpy(dtype="datetime64[ns]")


_NICE_PERIODS_H = (1, 1.5, 2, 3, 4, 6, 8, 12, 16, 24, 36, 48, 72, 96, 168, 240)


def period_axis(axis, lo: float, hi: float) -> None:
    """Log-scaled period axis labelled at round hours (matplotlib's 2×10⁰ style is hard to read)."""
    ticks = [p for p in _NICE_PERIODS_H if lo * 0.999 <= p <= hi * 1.001] or [lo, hi]
    axis.set_major_locator(matplotlib.ticker.FixedLocator(ticks))
    axis.set_major_formatter(matplotlib.ticker.FuncFormatter(lambda v, _: f"{v:g}"))
    axis.set_minor_formatter(matplotlib.ticker.NullFormatter())


def _date_axis(ax) -> None:
    loc = mdates.AutoDateLocator(minticks=4, maxticks=10)
    ax.xaxis.set_major_locator(loc)
    ax.xaxis.set_major_formatter(mdates.ConciseDateFormatter(loc))


# ---------------------------------------------------------------------------------------- geometry


def geometry_figure(geometry: pd.DataFrame, seen_from: str, solar_caution_deg: float = 45.0) -> Figure:
    """Heliocentric and observer distance, phase angle, solar elongation and predicted magnitude.

    ``geometry`` holds ``time_utc`` and the geometry columns of one site (or the geocentre). Solar
    elongations below ``solar_caution_deg`` are shaded as a Sun-safety caution zone.
    """
    t = _datetimes(geometry["time_utc"])
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
    _date_axis(ax)
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
    t = _datetimes(geometry["time_utc"])
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
            return (_datetimes(v) + offset - noon) / np.timedelta64(1, "h")

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
            text = "no window" + (f":\n{textwrap.fill(str(reason.iloc[0]), 30)}"
                                  if len(reason) and str(reason.iloc[0]) != "nan" else "")
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
        a = mdates.date2num(_datetimes(d["start_utc"]))
        b = mdates.date2num(_datetimes(d["end_utc"]))
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
    _date_axis(ax)
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


# ---------------------------------------------------------------------------------------- diagnostics


def check_times_utc(check: dict, fallback: np.ndarray) -> np.ndarray:
    """The observation times a check result was computed from (its ``input.times_utc``), else ``fallback``."""
    listed = (check.get("input") or {}).get("times_utc")
    if listed:
        return np.array([str(t).rstrip("Z") for t in listed], dtype="datetime64[ns]")
    return np.asarray(fallback, dtype="datetime64[ns]")


def phase_occupancy(times_utc: np.ndarray, periods_h: np.ndarray, n_bins: int) -> np.ndarray:
    """Boolean map [period, phase bin]: does any time fall in the bin, folded on the period?

    Same bins as the check's coverage (planner.coverage.phase_bin_index, phase zero at the first
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
        occupied[np.arange(a, a + idx.shape[0])[:, None], idx] = True
    return occupied


def _period_edges(periods: np.ndarray) -> np.ndarray:
    return np.concatenate([[periods[0] * 0.995], 0.5 * (periods[1:] + periods[:-1]), [periods[-1] * 1.005]])


def coverage_figure(series: Sequence[Series]) -> Figure:
    """Coverage map (period × rotational phase) per schedule, and the coverage fraction per period.

    Each schedule is drawn on its own check's period grid (``periods_h``). The map bins the check's
    own observation times exactly as the check does (its ``phase_bins``); the fraction curve is the
    check's ``coverage`` number for each period, drawn as given.
    """
    fig = new_figure(3.0 * len(series) + 3.2, 4.6)
    axes = fig.subplots(1, len(series) + 1, sharey=True, gridspec_kw=dict(width_ratios=[3] * len(series) + [2.2]))
    cmap = ListedColormap(["#ffffff", INK])
    lo, hi = np.inf, 0.0
    for ax, s in zip(axes[:-1], series, strict=False):
        periods = _floats(s.check.get("periods_h") or [])
        if periods.size == 0:
            continue
        order = np.argsort(periods)
        periods = periods[order]
        edges = _period_edges(periods)
        lo, hi = min(lo, edges[0]), max(hi, edges[-1])
        n_bins = int((s.check.get("settings") or {}).get("phase_bins", 20))
        occupied = phase_occupancy(check_times_utc(s.check, s.times_utc), periods, n_bins)
        ax.pcolormesh(
            np.linspace(0, 1, n_bins + 1),
            edges,
            occupied.astype(float),
            cmap=cmap,
            vmin=0,
            vmax=1,
            shading="flat",
            rasterized=True,
        )
        ax.set_yscale("log")
        ax.set_xlabel(f"rotational phase ({n_bins} bins)")
        ax.set_title(s.label, fontsize=10)
        if s.check.get("coverage") is not None:
            kw = s.line_kw()
            kw["markevery"] = max(1, len(periods) // 25)
            axes[-1].plot(_floats(s.check["coverage"])[order], periods, **kw)
    axes[0].set_ylabel("trial period (h)")
    ax = axes[-1]
    shown = [np.nanmin(line.get_xdata()) for line in ax.lines if np.isfinite(line.get_xdata()).any()]
    ax.set_xlim(max(0.0, min(shown, default=0.0) - 0.05), 1.01)  # zoom on where coverage falls short
    ax.set_xlabel("phase covered (fraction)")
    ax.grid(True, color="#dddddd", lw=0.6)
    ax.legend(loc="lower left", fontsize=8)
    if hi > 0:
        axes[0].set_ylim(lo, hi)
        period_axis(axes[0].yaxis, lo, hi)
    return fig


def spectral_window_figure(series: Sequence[Series], max_freq_per_day: float = 5.0) -> Figure:
    """|W(f)| of each schedule, with the check's principal peaks marked and labelled.

    The curve is the check's own ``window`` (``freq_per_day``, ``height``) when it carries one; otherwise it
    is computed from the check's times with planner.window.spectral_window (Deeming 1975).
    """
    grid = np.linspace(0.0, max_freq_per_day, 4001)
    fig = new_figure(8.5, 2.4 * len(series) + 0.6)
    axes = np.atleast_1d(fig.subplots(len(series), 1, sharex=True, squeeze=False)).ravel()
    for ax, s in zip(axes, series, strict=True):
        kw = s.line_kw()
        marker = kw.pop("marker")
        kw.pop("markersize")
        window = s.check.get("window") or {}
        if window.get("freq_per_day") and window.get("height"):
            f, w = _floats(window["freq_per_day"]), _floats(window["height"])
        else:
            f, w = grid, spectral_window(to_jd_utc(check_times_utc(s.check, s.times_utc)), grid)
        top = s.check.get("highest_alias") or {}
        if top.get("min_freq_per_day"):
            # Below 2/span the peaks are the central lobe's sidelobes, shared by any campaign of that span.
            ax.axvspan(0.0, top["min_freq_per_day"], facecolor="#eeeeee", edgecolor="none", zorder=0,
                       label="span sidelobes (< 2/span, not aliases)")
        ax.plot(f, w, **{k: v for k, v in kw.items() if not k.startswith("marker")})
        peaks = [p for p in s.check.get("window_peaks", []) if p.get("freq_per_day", 0) <= max_freq_per_day]
        if peaks:
            pf = [p["freq_per_day"] for p in peaks]
            ph = [p["height"] for p in peaks]
            ax.plot(
                pf,
                ph,
                linestyle="none",
                marker="v" if marker == "o" else "^",
                markersize=8,
                markerfacecolor=s.color if s.filled else "white",
                markeredgecolor=INK,
                label="principal peaks",
            )
            # Label the three strongest (more would overlap); the table beside the figure lists them all.
            for k in np.argsort(ph)[::-1][:3]:
                ax.annotate(
                    f"{pf[k]:.3f} c/d\n{ph[k]:.2f}",
                    (pf[k], ph[k]),
                    textcoords="offset points",
                    xytext=(4, 6),
                    fontsize=7,
                )
        ax.set_ylim(0, 1.12)
        ax.set_ylabel("|W(f)|")
        ax.grid(True, color="#dddddd", lw=0.6)
        ax.legend(loc="upper right", fontsize=8)
    axes[-1].set_xlabel("frequency (cycles per day)")
    return fig


_VERDICT_STYLE = {
    "secure": ("#ffffff", ""),
    "alias-prone": ("#d9d9d9", "///"),
    "under-covered": ("#8c8c8c", "xx"),
}


def recovery_figure(
    series: Sequence[Series], min_period_h: float | None = None, max_period_h: float | None = None
) -> Figure:
    """Injection–recovery fraction against period, one line per schedule, band verdicts as strips below."""
    fig = new_figure(8.5, 4.4)
    ax, strip = fig.subplots(2, 1, sharex=True, gridspec_kw=dict(height_ratios=[4, 0.35 * len(series) + 0.3]))
    for s in series:
        rec = s.check.get("recovery", [])
        if rec:
            ax.plot(_floats([r["period_h"] for r in rec]), _floats([r["fraction"] for r in rec]), **s.line_kw())
    ax.set_xscale("log")
    ax.set_ylim(-0.02, 1.05)
    ax.set_ylabel("recovered fraction")
    ax.grid(True, which="both", color="#dddddd", lw=0.6)
    if any(s.check.get("recovery") for s in series):
        ax.legend(loc="lower left", fontsize=8)
    else:  # trials = 0: nothing was injected; say so instead of an empty legend
        ax.text(0.5, 0.5, "injection–recovery skipped (0 trials)", transform=ax.transAxes, ha="center",
                va="center", fontsize=9, color=SLATE)
    for i, s in enumerate(series):
        y = len(series) - 1 - i
        for band in s.check.get("bands", []):
            face, hatch = _VERDICT_STYLE.get(band.get("verdict"), ("#ffffff", ".."))
            strip.broken_barh(
                [(band["min_period_h"], band["max_period_h"] - band["min_period_h"])],
                (y - 0.4, 0.8),
                facecolors=face,
                edgecolors=INK,
                hatch=hatch,
                lw=0.8,
            )
    strip.set_yticks(range(len(series)), [s.label for s in reversed(series)], fontsize=8)
    strip.set_ylim(-0.6, len(series) - 0.4)
    strip.set_xlabel("rotation period (h)")
    lo, hi = strip.get_xlim() if not (min_period_h and max_period_h) else (min_period_h, max_period_h)
    strip.set_xlim(lo * 0.95, hi * 1.05)
    period_axis(strip.xaxis, lo, hi)
    handles = [Patch(facecolor=f, edgecolor=INK, hatch=h, label=v) for v, (f, h) in _VERDICT_STYLE.items()]
    fig.legend(handles=handles, loc="outside lower center", ncols=3, fontsize=8, frameon=False, title=None)
    return fig


def sensitivity_figure(series: Sequence[Series]) -> Figure:
    """Period-change sensitivity against period, and the trend numbers side by side per schedule."""
    fig = new_figure(8.5, 3.6)
    ax, *bxs = fig.subplots(1, 3, gridspec_kw=dict(width_ratios=[3, 1.1, 1.1]))
    for s in series:
        pc = s.check.get("period_change", [])
        x = _floats([r["period_h"] for r in pc])
        y = _floats([r["min_detectable_change_h"] for r in pc]) * 60.0
        ok = np.isfinite(x) & np.isfinite(y) & (x > 0) & (y > 0)  # null: too few points in a half
        if ok.any():
            ax.plot(x[ok], y[ok], **s.line_kw())
    if ax.lines:
        ax.set_xscale("log")
        ax.set_yscale("log")
        ax.legend(loc="upper left", fontsize=8)
    else:  # e.g. a log of a few points, or one whose first half holds a single visit
        ax.text(0.5, 0.5, "not defined: too few points\nin one half of the span", transform=ax.transAxes,
                ha="center", va="center", fontsize=9, color=SLATE)
    ax.set_xlabel("rotation period (h)")
    ax.set_ylabel("smallest detectable change (min)")
    ax.set_title("period change, first vs second half (3σ)", fontsize=9)
    ax.grid(True, which="both", color="#dddddd", lw=0.6)
    if ax.lines:
        xs = np.concatenate([line.get_xdata() for line in ax.lines])
        period_axis(ax.xaxis, float(xs.min()), float(xs.max()))
    ax.yaxis.set_major_formatter(matplotlib.ticker.FuncFormatter(lambda v, _: f"{v:g}"))
    ax.yaxis.set_minor_formatter(matplotlib.ticker.NullFormatter())
    keys = [
        ("min_detectable_mag_per_day", "smallest fading\ndetectable (mmag/day)", 1000.0),
        ("longest_gap_h", "longest gap\nbetween visits (h)", 1.0),
    ]
    for bx, (key, title, scale) in zip(bxs, keys, strict=True):
        for i, s in enumerate(series):
            value = float(_floats([s.check.get("trend", {}).get(key)])[0]) * scale
            bars = bx.bar(
                [i],
                [value],
                0.7,
                color=s.color if s.filled else "white",
                edgecolor=s.color,
                lw=1.5,
                hatch="" if s.filled else "///",
                label=s.label,
            )
            bx.bar_label(bars, fmt="%.3g", fontsize=7)
        bx.set_xticks(range(len(series)), [s.label.split(" ")[0] for s in series], fontsize=8)
        bx.set_title(title, fontsize=9)
        bx.margins(y=0.15)
        bx.grid(True, axis="y", color="#dddddd", lw=0.6)
    return fig
