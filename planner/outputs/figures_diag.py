"""Figures of a sampling check, for one schedule or several side by side (plan, baseline, a log).

The plan report and ``phasewise check --plot/--report`` draw the same figures: one function per
question (phase coverage, spectral window, injection–recovery, trend and period-change
sensitivity), each taking :class:`~planner.outputs.figstyle.Series` whose ``check`` is the check
JSON (``CheckResult.to_dict()``, or read back from diagnostics.json).
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

import numpy as np
from matplotlib.colors import ListedColormap
from matplotlib.figure import Figure
from matplotlib.patches import Patch
from matplotlib.ticker import FuncFormatter, NullFormatter

from planner.core.fileio import write_bytes_atomic
from planner.core.timegrid import to_jd_utc
from planner.diagnostics.specwindow import spectral_window
from planner.outputs.figstyle import (
    INK,
    SLATE,
    Series,
    check_times_utc,
    fixed_margins,
    floats,
    log_series,
    new_figure,
    period_axis,
    period_edges,
    phase_occupancy,
    png_bytes,
    ytick_labels_in,
)

#: Trial periods folded for the coverage map at most (rows of the picture).
MAP_ROWS = 600


def coverage_figure(series: Sequence[Series]) -> Figure:
    """Coverage map (period × rotational phase) per schedule, and the coverage fraction per period.

    Each schedule is drawn on its own check's period grid (``periods_h``; at most MAP_ROWS of them,
    evenly spread, in the map). The map bins the check's own observation times exactly as the check
    does (its ``phase_bins``); the fraction curve is the check's ``coverage`` number for every period,
    drawn as given.
    """
    fig = new_figure(3.0 * len(series) + 3.2, 4.6, constrained=False)
    axes = fig.subplots(1, len(series) + 1, sharey=True, gridspec_kw=dict(width_ratios=[3] * len(series) + [2.2]))
    cmap = ListedColormap(["#ffffff", INK])
    lo, hi = np.inf, 0.0
    for ax, s in zip(axes[:-1], series, strict=False):
        periods = floats(s.check.get("periods_h") or [])
        if periods.size == 0:
            continue
        order = np.argsort(periods)
        periods = periods[order]
        # The map has a few hundred pixel rows: it folds on at most MAP_ROWS of the trial periods, evenly
        # spread (the fraction curve beside it keeps every period).
        rows = np.unique(np.linspace(0, periods.size - 1, min(periods.size, MAP_ROWS)).round().astype(int))
        edges = period_edges(periods[rows])
        lo, hi = min(lo, edges[0]), max(hi, edges[-1])
        n_bins = int((s.check.get("settings") or {}).get("phase_bins", 20))
        occupied = phase_occupancy(check_times_utc(s.check, s.times_utc, emission=True), periods[rows], n_bins)
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
            axes[-1].plot(floats(s.check["coverage"])[order], periods, **kw)
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
    fixed_margins(fig, 0.62, 0.12, 0.52, 0.3, wgap_in=0.3)
    return fig


def spectral_window_figure(series: Sequence[Series], max_freq_per_day: float = 5.0) -> Figure:
    """|W(f)| of each schedule, with the check's principal peaks marked and labelled.

    The curve is the check's own ``window`` (``freq_per_day``, ``height``) when it carries one; otherwise it
    is computed from the check's times with planner.diagnostics.specwindow.spectral_window (Deeming 1975).
    """
    grid = np.linspace(0.0, max_freq_per_day, 4001)
    fig = new_figure(8.5, 2.4 * len(series) + 0.6, constrained=False)
    axes = np.atleast_1d(fig.subplots(len(series), 1, sharex=True, squeeze=False)).ravel()
    for ax, s in zip(axes, series, strict=True):
        kw = s.line_kw()
        marker = kw.pop("marker")
        kw.pop("markersize")
        window = s.check.get("window") or {}
        if window.get("freq_per_day") and window.get("height"):
            f, w = floats(window["freq_per_day"]), floats(window["height"])
        else:
            f, w = grid, spectral_window(to_jd_utc(check_times_utc(s.check, s.times_utc, emission=True)), grid)
        top = s.check.get("highest_alias") or {}
        if top.get("min_freq_per_day"):
            # Below 2/span the peaks are the central lobe's sidelobes, shared by any campaign of that span.
            ax.axvspan(
                0.0,
                top["min_freq_per_day"],
                facecolor="#eeeeee",
                edgecolor="none",
                zorder=0,
                label="span sidelobes (< 2/span, not aliases)",
            )
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
    fixed_margins(fig, 0.62, 0.12, 0.52, 0.08, hgap_in=0.17)
    return fig


_VERDICT_STYLE = {
    "secure": ("#ffffff", ""),
    "alias-prone": ("#d9d9d9", "///"),
    "under-covered": ("#8c8c8c", "xx"),
}


def recovery_figure(
    series: Sequence[Series], min_period_h: float | None = None, max_period_h: float | None = None
) -> Figure:
    """Injection–recovery fraction against period, one line per schedule (dotted: the share found at P/2,
    not counted as recovered), band verdicts as strips below."""
    fig = new_figure(8.5, 4.4, constrained=False)
    ax, strip = fig.subplots(2, 1, sharex=True, gridspec_kw=dict(height_ratios=[4, 0.35 * len(series) + 0.3]))
    for s in series:
        rec = s.check.get("recovery", [])
        if rec:
            periods = floats([r["period_h"] for r in rec])
            ax.plot(periods, floats([r["fraction"] for r in rec]), **s.line_kw())
            half = floats([r.get("fraction_at_half_period") for r in rec])
            if np.nansum(half) > 0:  # found at P/2: reported apart, not a recovery
                ax.plot(periods, half, color=s.color, linestyle=":", linewidth=1.2, label=f"{s.label}: found P/2")
    ax.set_xscale("log")
    ax.set_ylim(-0.02, 1.05)
    ax.set_ylabel("recovered fraction")
    ax.grid(True, which="both", color="#dddddd", lw=0.6)
    if any(s.check.get("recovery") for s in series):
        ax.legend(loc="lower left", fontsize=8)
    else:  # trials = 0: nothing was injected; say so instead of an empty legend
        ax.text(
            0.5,
            0.5,
            "injection–recovery skipped (0 trials)",
            transform=ax.transAxes,
            ha="center",
            va="center",
            fontsize=9,
            color=SLATE,
        )
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
    fig.legend(handles=handles, loc="lower center", ncols=3, fontsize=8, frameon=False, title=None)
    # The strip's labels (8 pt, about 0.056 in a character) set the left margin.
    left_in = max(0.75, 0.3 + 0.056 * max([len(s.label) for s in series] or [0]))
    fixed_margins(fig, left_in, 0.12, 0.8, 0.08, hgap_in=0.15)
    return fig


def sensitivity_figure(series: Sequence[Series]) -> Figure:
    """Period-change sensitivity against period, and the trend numbers side by side per schedule."""
    fig = new_figure(8.5, 3.6, constrained=False)
    ax, *bxs = fig.subplots(1, 3, gridspec_kw=dict(width_ratios=[3, 1.1, 1.1]))
    for s in series:
        pc = s.check.get("period_change", [])
        x = floats([r["period_h"] for r in pc])
        y = floats([r["min_detectable_change_h"] for r in pc]) * 60.0
        ok = np.isfinite(x) & np.isfinite(y) & (x > 0) & (y > 0)  # null: too few points in a half
        if ok.any():
            ax.plot(x[ok], y[ok], **s.line_kw())
    if ax.lines:
        ax.set_xscale("log")
        ax.set_yscale("log")
        ax.legend(loc="upper left", fontsize=8)
    else:  # e.g. a log of a few points, or one whose first half holds a single visit
        ax.text(
            0.5,
            0.5,
            "not defined: too few points\nin one half of the span",
            transform=ax.transAxes,
            ha="center",
            va="center",
            fontsize=9,
            color=SLATE,
        )
    ax.set_xlabel("rotation period (h)")
    ax.set_ylabel("smallest detectable change (min)")
    ax.set_title("period change, first vs second half (3σ)", fontsize=9)
    ax.grid(True, which="both", color="#dddddd", lw=0.6)
    if ax.lines:
        xs = np.concatenate([line.get_xdata() for line in ax.lines])
        period_axis(ax.xaxis, float(xs.min()), float(xs.max()))
    ax.yaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{v:g}"))
    ax.yaxis.set_minor_formatter(NullFormatter())
    keys = [
        ("min_detectable_mag_per_day", "smallest fading\ndetectable (mmag/day)", 1000.0),
        ("longest_gap_h", "longest gap\nbetween visits (h)", 1.0),
    ]
    for bx, (key, title, scale) in zip(bxs, keys, strict=True):
        for i, s in enumerate(series):
            value = float(floats([s.check.get("trend", {}).get(key)])[0]) * scale
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
    # The y tick labels depend on the numbers: the margin and gaps are made from their widths.
    fixed_margins(
        fig,
        0.4 + ytick_labels_in(ax),
        0.1,
        0.52,
        0.45,
        wgap_in=0.25 + max(ytick_labels_in(bx) for bx in bxs),
    )
    return fig


#: Figures ``phasewise check --plot DIR`` writes, by file-name stem.
CHECK_FIGURES = {
    "coverage_map": coverage_figure,
    "spectral_window": spectral_window_figure,
    "recovery": recovery_figure,
    "sensitivity": sensitivity_figure,
}


def write_check_plots(check: dict, folder: str | Path) -> list[Path]:
    """Render the check's figures to ``folder/check_<name>.png`` (atomic writes); returns the paths.

    The same figures as the plan report, for one series: the log's observation times.
    """
    series = [log_series(check=check)]
    settings = check.get("settings") or {}
    out = []
    for name, make in CHECK_FIGURES.items():
        if make is recovery_figure:
            fig = make(series, settings.get("min_period_h"), settings.get("max_period_h"))
        else:
            fig = make(series)
        out.append(write_bytes_atomic(Path(folder) / f"check_{name}.png", png_bytes(fig, dpi=120)))
    return out
