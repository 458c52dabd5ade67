"""Figures of a light-curve fit, drawn from its document (``phasewise fit`` JSON with ``arrays``, or a
plan folder's ``lightcurve.json``): the folded light curve per site with the model, the χ² curve with
the candidates, residuals over time, and the reduced magnitude against log10 r with the fitted and
expected laws. Magnitude axes run bright side up.
"""

from __future__ import annotations

import numpy as np
from matplotlib.figure import Figure

from planner.outputs.figstyle import (
    AMBER,
    INK,
    SLATE,
    date_axis,
    floats,
    new_figure,
    period_axis,
    site_style,
)

#: Most sites drawn as separate panels of the folded light curve.
MAX_PANELS = 6
#: Julian date of the Unix epoch.
_UNIX_EPOCH_JD = 2440587.5


def _points(doc: dict) -> dict:
    return (doc.get("arrays") or {}).get("points") or {}


def _groups(doc: dict) -> tuple[np.ndarray, list[str]]:
    g = np.array([str(x) for x in _points(doc).get("group", [])], dtype=object)
    return g, list(dict.fromkeys(g))


def _scatter(ax, x, y, i: int, label: str, err=None) -> None:
    color, marker = site_style(i)
    kw = dict(linestyle="none", marker=marker, markersize=3.2, color=color, markeredgewidth=0.6, label=label)
    if i % 2:
        kw["markerfacecolor"] = "white"
    if err is not None:
        ax.errorbar(x, y, yerr=err, elinewidth=0.5, ecolor="#b0b0b0", capsize=0, **kw)
    else:
        ax.plot(x, y, **kw)


def folded_figure(doc: dict) -> Figure:
    """The rotational signal (reduced magnitude less mean, distance law and zero points) folded at the
    best rotation period, one panel per site, with the fitted model drawn over two turns of phase."""
    pts = _points(doc)
    g, names = _groups(doc)
    shown = names[:MAX_PANELS]
    ncols = min(len(shown), 2) or 1
    nrows = int(np.ceil(max(len(shown), 1) / ncols))
    fig = new_figure(4.4 * ncols + 0.4, 2.6 * nrows + 0.6)
    axes = np.atleast_1d(fig.subplots(nrows, ncols, sharex=True, sharey=True, squeeze=False)).ravel()
    phase, signal, err = floats(pts.get("phase", [])), floats(pts.get("rotation_signal_mag", [])), None
    err = floats(pts.get("mag_err", []))
    model = (doc.get("arrays") or {}).get("model") or {}
    mp, mm = floats(model.get("phase", [])), floats(model.get("mag", []))
    for i, ax in enumerate(axes):
        if i >= len(shown):
            ax.set_visible(False)
            continue
        sel = g == shown[i]
        for shift in (0.0, 1.0):  # two turns, so a feature at phase 0 is whole
            _scatter(ax, phase[sel] + shift, signal[sel], i, shown[i] if shift == 0 else "_", err[sel])
        if mp.size:
            ax.plot(np.r_[mp, mp + 1.0], np.r_[mm, mm], color=INK, lw=1.6, label="model")
        ax.set_title(f"{shown[i]} ({int(sel.sum())} points)", fontsize=9)
        ax.set_xlim(0, 2)
        ax.grid(True, color="#e4e4e4", lw=0.5)
    axes[0].invert_yaxis()
    for ax in axes[-ncols:]:
        ax.set_xlabel("rotational phase (two turns)")
    for ax in axes[::ncols]:
        ax.set_ylabel("rotation signal (mag)")
    p = doc.get("periods") or {}
    if p.get("best_h"):
        fig.suptitle(f"folded at the best rotation period, {p['best_h']:.4f} h", fontsize=10)
    return fig


def chi2_figure(doc: dict) -> Figure:
    """Δχ² (scaled by the χ² scale) against rotation period, with the candidates marked and the
    candidate cut (Δχ² = 25) dotted; symmetric-log vertical axis so the minima and the far curve show.
    The period axis spans the searched rotation periods (``settings``; the scan itself reaches half the
    shortest, where a double-peaked curve's first harmonic lies)."""
    scan = (doc.get("arrays") or {}).get("scan") or {}
    period, delta = floats(scan.get("period_h", [])), floats(scan.get("delta_chi2", []))
    fig = new_figure(8.5, 3.4)
    ax = fig.subplots()
    order = np.argsort(period)
    ax.plot(period[order], delta[order], color=INK, lw=1.0)
    cands = (doc.get("periods") or {}).get("candidates") or []
    cp = np.array([c["period_h"] for c in cands], dtype=float)
    cd = np.array([c["delta_chi2"] for c in cands], dtype=float)
    if cp.size:
        ax.plot(
            cp, cd, linestyle="none", marker="v", markersize=8, color=AMBER, markeredgecolor=INK, label="candidates"
        )
        for k in range(min(cp.size, 6)):
            ax.annotate(f"{cp[k]:.3f} h", (cp[k], cd[k]), textcoords="offset points", xytext=(3, -12), fontsize=7)
    ax.axhline(25.0, color=SLATE, ls=":", lw=1.2, label="candidate cut, Δχ² = 25")
    ax.set_yscale("symlog", linthresh=10.0)
    ax.set_xscale("log")
    settings = doc.get("settings") or {}
    lo = settings.get("min_period_h") or (float(period.min()) if period.size else None)
    hi = settings.get("max_period_h") or (float(period.max()) if period.size else None)
    if lo and hi:
        period_axis(ax.xaxis, lo, hi)
        ax.set_xlim(lo, hi)
    ax.set_ylim(-0.5, max(100.0, float(np.nanmax(delta)) * 1.2) if delta.size else 100.0)
    ax.set_xlabel("rotation period (h)")
    ax.set_ylabel("Δχ² (scaled)")
    ax.grid(True, color="#e4e4e4", lw=0.5)
    ax.legend(loc="upper right", fontsize=8)
    return fig


def residuals_figure(doc: dict) -> Figure:
    """Residuals of the final model against time (emission time, UTC), per site."""
    pts = _points(doc)
    g, names = _groups(doc)
    jd = floats(pts.get("emission_jd", []))
    when = (np.round((jd - _UNIX_EPOCH_JD) * 86400.0) * 1e9).astype("int64").astype("datetime64[ns]")
    resid, err = floats(pts.get("residual_mag", [])), floats(pts.get("mag_err", []))
    fig = new_figure(8.5, 3.0)
    ax = fig.subplots()
    for i, name in enumerate(names):
        sel = g == name
        _scatter(ax, when[sel], resid[sel], i, name, err[sel])
    ax.axhline(0.0, color=INK, lw=1.0)
    ax.invert_yaxis()
    date_axis(ax)
    ax.set_ylabel("residual (mag)")
    ax.set_xlabel("emission time (UTC)")
    ax.grid(True, color="#e4e4e4", lw=0.5)
    ax.legend(loc="upper right", fontsize=8, ncols=min(len(names), 4) or 1)
    return fig


def law_figure(doc: dict) -> Figure:
    """Reduced magnitude less rotation and zero points against log10 r, with the fitted law (solid) and
    the expected law through the same point at the mean log10 r (dashed)."""
    pts = _points(doc)
    law = (doc.get("arrays") or {}).get("law") or {}
    g, names = _groups(doc)
    x, y = floats(pts.get("log10_r", [])), floats(pts.get("distance_law_mag", []))
    fig = new_figure(6.0, 3.6)
    ax = fig.subplots()
    for i, name in enumerate(names):
        sel = g == name
        _scatter(ax, x[sel], y[sel], i, name)
    if x.size and law:
        xs = np.linspace(x.min(), x.max(), 50)
        ref, mean = law["log10_r_ref"], law["mean_mag"]
        fitted = "fitted" if law.get("fitted") else "held (not measurable)"
        ax.plot(xs, mean + law["k1"] * (xs - ref), color=INK, lw=1.8, label=f"K1 = {law['k1']:.3g} ({fitted})")
        ax.plot(
            xs,
            mean + law["expected_k1"] * (xs - ref),
            color=AMBER,
            lw=1.8,
            ls="--",
            label=f"expected K1 = {law['expected_k1']:.3g}",
        )
    ax.invert_yaxis()
    ax.set_xlabel("log10 r (r in au)")
    ax.set_ylabel("magnitude at Δ = 1 au,\nless rotation and zero points")
    ax.grid(True, color="#e4e4e4", lw=0.5)
    ax.legend(loc="best", fontsize=8)
    return fig
