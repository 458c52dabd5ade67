"""Figures of a sampling check: coverage map, spectral window, injection–recovery.

Pure functions: each takes a :class:`~planner.diagnostics.CheckResult` or its ``to_dict()``
(e.g. read back from JSON) and returns a matplotlib ``Figure`` (no pyplot state, no files).
Readable in greyscale and by colour-blind readers: dark-on-light maps, the Okabe & Ito (2008)
palette, and every category told apart by marker shape as well as colour.
"""

from __future__ import annotations

import io
from pathlib import Path

import numpy as np
from matplotlib.figure import Figure
from matplotlib.ticker import FixedLocator, FuncFormatter, NullFormatter

from planner.coverage import phase_bin_index
from planner.fileio import write_bytes_atomic
from planner.timegrid import to_jd_utc

# Okabe & Ito (2008) colour-universal-design palette
BLACK, BLUE, VERMILLION, ORANGE, SKY = "#000000", "#0072B2", "#D55E00", "#E69F00", "#56B4E9"


_PERIOD_TICKS_H = (0.5, 1, 1.5, 2, 3, 4, 6, 8, 12, 16, 24, 36, 48, 72, 96, 144, 240)


def _log_period_axis(axis, low: float, high: float) -> None:
    """Log scale with plain-number ticks at familiar periods (hours)."""
    ticks = [p for p in _PERIOD_TICKS_H if low <= p <= high] or [low, high]
    axis.set_major_locator(FixedLocator(ticks))
    axis.set_major_formatter(FuncFormatter(lambda v, _pos: f"{v:g}"))
    axis.set_minor_formatter(NullFormatter())


def _as_dict(result) -> dict:
    return result if isinstance(result, dict) else result.to_dict()


def _times_jd(d: dict) -> np.ndarray:
    times = np.array([s.rstrip("Z") for s in d["input"]["times_utc"]], dtype="datetime64[ns]")
    return to_jd_utc(times)


def coverage_map_figure(result) -> Figure:
    """Period × rotational phase: dark where a phase bin holds a time, white where it is empty;
    above it, the covered fraction per period with the 24/n-hour periods marked."""
    d = _as_dict(result)
    periods = np.asarray(d["periods_h"], dtype=float)
    n_bins = int(d["settings"]["phase_bins"])
    t = _times_jd(d)
    occupied = np.zeros((n_bins, periods.size))
    if t.size:
        idx = phase_bin_index(t, periods, n_bins)
        occupied[idx.T, np.arange(periods.size)[None, :]] = 1.0
    fig = Figure(figsize=(8, 5.5), layout="constrained")
    top, bottom = fig.subplots(2, 1, sharex=True, height_ratios=[1, 2])
    top.plot(periods, d["coverage"], color=BLACK, lw=1.2, label="phase coverage")
    top.plot(periods, d["largest_phase_gap"], color=VERMILLION, lw=1.0, ls="--",
             label="largest phase gap")
    for c in d["commensurate"]:
        top.axvline(c["period_h"], color="0.6", lw=0.6, ls=":")
    top.axhline(d["settings"]["coverage_threshold"], color=BLUE, lw=0.8, ls="-.",
                label="coverage threshold")
    top.set_ylim(0, 1.02)
    top.set_ylabel("fraction of a rotation")
    top.legend(loc="lower right", fontsize=8, frameon=False)
    edges = np.concatenate([[periods[0]], 0.5 * (periods[1:] + periods[:-1]), [periods[-1]]])
    bottom.pcolormesh(edges, np.linspace(0, 1, n_bins + 1), occupied, cmap="Greys", vmin=0, vmax=1.4,
                      shading="flat", rasterized=True)
    bottom.set_xscale("log")
    _log_period_axis(bottom.xaxis, periods[0], periods[-1])
    bottom.set_xlabel("rotation period (h)")
    bottom.set_ylabel(f"rotational phase (bins of 1/{n_bins})")
    bottom.set_title("dark: phase bin observed; white: never observed", fontsize=9)
    fig.suptitle(f"Rotational-phase coverage of {d['input']['n_times']} times")
    return fig


def window_figure(result) -> Figure:
    """Spectral window |W(f)| (Deeming 1975) with its principal peaks marked and labelled."""
    d = _as_dict(result)
    fig = Figure(figsize=(8, 3.8), layout="constrained")
    ax = fig.subplots()
    ax.plot(d["window"]["freq_per_day"], d["window"]["height"], color=BLACK, lw=1.0)
    for rank, pk in enumerate(d["window_peaks"]):
        ax.plot(pk["freq_per_day"], pk["height"], marker="v", color=VERMILLION, ms=7, ls="none")
        if rank >= 4:
            continue  # mark every peak, label the four strongest (labels would overlap)
        ax.annotate(f"{pk['freq_per_day']:.3f} c/d\n{pk['height']:.2f}", (pk["freq_per_day"], pk["height"]),
                    textcoords="offset points", xytext=(0, 6), ha="center", fontsize=7)
    ax.axhline(d["settings"]["alias_threshold"], color=BLUE, lw=0.8, ls="-.", label="alias threshold")
    ax.set_xlabel("frequency (cycles/day)")
    ax.set_ylabel("|W|")
    ax.set_ylim(0, 1.15)
    ax.legend(loc="upper right", fontsize=8, frameon=False)
    nyq = d.get("nyquist_freq_per_day")
    ax.set_title("Spectral window" + (f" (Nyquist frequency {nyq:.4g} c/d)" if nyq else ""), fontsize=10)
    return fig


def recovery_figure(result) -> Figure:
    """Recovery fraction per period bin (top) and found vs injected period per trial (bottom):
    filled circles recovered at P, open squares at P/2, crosses wrong (confusions)."""
    d = _as_dict(result)
    fig = Figure(figsize=(8, 6), layout="constrained")
    top, bottom = fig.subplots(2, 1, sharex=True, height_ratios=[1, 2])
    rec = d["recovery"]
    if rec:
        lo = np.array([r["min_period_h"] for r in rec])
        hi = np.array([r["max_period_h"] for r in rec])
        frac = np.array([np.nan if r["fraction"] is None else r["fraction"] for r in rec])
        top.stairs(frac, np.concatenate([lo, hi[-1:]]), color=BLACK, lw=1.4, baseline=None,
                   label="recovered")
        top.axhline(d["settings"]["recovery_threshold"], color=BLUE, lw=0.8, ls="-.", label="threshold")
        top.legend(loc="lower right", fontsize=8, frameon=False)
    top.set_ylim(0, 1.05)
    top.set_ylabel("fraction recovered")
    trials = d["recovery_trials"]
    styles = {"period": dict(marker="o", color=BLACK, ms=4, ls="none", label="found P"),
              "half": dict(marker="s", mfc="none", color=BLUE, ms=5, ls="none", label="found P/2"),
              "wrong": dict(marker="x", color=VERMILLION, ms=6, ls="none", label="confused")}
    for kind, style in styles.items():
        sel = [tr for tr in trials if tr["match"] == kind]
        if sel:
            bottom.plot([tr["true_period_h"] for tr in sel], [tr["found_period_h"] for tr in sel], **style)
    pr = [d["settings"]["min_period_h"], d["settings"]["max_period_h"]]
    bottom.plot(pr, pr, color="0.5", lw=0.7)
    bottom.plot(pr, [p / 2 for p in pr], color="0.5", lw=0.7, ls="--")
    bottom.set_xscale("log")
    bottom.set_yscale("log")
    _log_period_axis(bottom.xaxis, pr[0], pr[1])
    _log_period_axis(bottom.yaxis, pr[0] / 2, pr[1])
    bottom.set_xlabel("injected rotation period (h)")
    bottom.set_ylabel("highest peak (h)")
    if trials:
        bottom.legend(loc="upper left", fontsize=8, frameon=False)
    fig.suptitle("Injection–recovery" + ("" if trials else " (no trials run)"))
    return fig


FIGURES = {"coverage_map": coverage_map_figure, "spectral_window": window_figure,
           "recovery": recovery_figure}


def write_check_plots(result, folder: str | Path) -> list[Path]:
    """Render every figure to ``folder/check_<name>.png`` (atomic writes); returns the paths."""
    out = []
    for name, make in FIGURES.items():
        buf = io.BytesIO()
        make(result).savefig(buf, format="png", dpi=120)
        out.append(write_bytes_atomic(Path(folder) / f"check_{name}.png", buf.getvalue()))
    return out
