"""The report's night section: the sites × nights overview, then each site's night chart and table."""

from __future__ import annotations

import html
import math

import numpy as np
import pandas as pd

from planner.outputs import figures_nights
from planner.outputs.figcache import FigureCache, drawn
from planner.outputs.htmlparts import svg_figure_html, table
from planner.outputs.reader import PlanFolder, cell_float, utc_offset_h, utc_times

_BLOCK_COLUMNS = ("site", "night", "start_utc", "end_utc")


#: geometry.csv's columns the night charts read (besides site and time_utc).
NIGHT_CHART_COLUMNS = ("alt_deg", "sun_alt_deg")


def _night_hours(pf: PlanFolder) -> tuple[np.ndarray, np.ndarray, dict[tuple[str, str], str]]:
    """Window hours and planned hours per (site, night), (sites × nights) arrays, and each site-night's
    reasons from windows.csv."""
    sites, nights = pf.sites, pf.nights
    s_of = {s: i for i, s in enumerate(sites)}
    n_of = {n: j for j, n in enumerate(nights)}
    window = np.zeros((len(sites), len(nights)))
    planned = np.zeros((len(sites), len(nights)))
    reasons: dict[tuple[str, str], str] = {}
    if pf.windows is not None and len(pf.windows):
        w = pf.windows
        hours = np.array([cell_float(h) for h in w["hours"]]) if "hours" in w else np.zeros(len(w))
        for site, night, h in zip(w["site"], w["night"].astype(str), hours, strict=True):
            if site in s_of and night in n_of and not math.isnan(h):
                window[s_of[site], n_of[night]] += h
        if "reason" in w:
            for site, night, r in zip(w["site"], w["night"].astype(str), w["reason"], strict=True):
                if r and str(r) != "nan":
                    key = (str(site), night)
                    reasons[key] = f"{reasons[key]}; {r}" if key in reasons else str(r)
    if len(pf.plan):
        hours = (utc_times(pf.plan["end_utc"]) - utc_times(pf.plan["start_utc"])) / np.timedelta64(1, "h")
        for site, night, h in zip(pf.plan["site"], pf.plan["night"].astype(str), hours, strict=True):
            if site in s_of and night in n_of:
                planned[s_of[site], n_of[night]] += h
    return window, planned, reasons


def _chart_jobs(pf: PlanFolder, windows: pd.DataFrame) -> list[tuple]:
    """Each site's inputs for its night chart (geometry, windows, blocks, clock, limit)."""
    g = pf.geometry
    by_site = dict(tuple(g.groupby("site", sort=False))) if g is not None else {}
    jobs = []
    for i, site in enumerate(pf.sites):
        gs = by_site.get(site)
        if gs is None or gs.empty:
            jobs.append(None)
            continue
        ws = windows[windows["site"] == site]
        bs = pf.plan[pf.plan["site"] == site]
        off = pf.utc_offset_h(site, pf.nights[0] if pf.nights else None)
        if off is None:  # a folder without the site in its manifest: the tables' local times tell
            off = utc_offset_h(ws) if utc_offset_h(ws) is not None else utc_offset_h(bs)
        min_alt = (pf.site_info.get(site) or {}).get("min_alt_deg")
        cols = [c for c in ("time_utc", *NIGHT_CHART_COLUMNS) if c in gs]
        jobs.append(
            (i, site, gs[cols], ws, bs, list(pf.nights), off or 0.0, None if min_alt is None else float(min_alt))
        )
    return jobs


def _site_chart(job: tuple | None) -> str:
    """One site's night chart as its <figure>."""
    if job is None:
        return ""
    i, site, gs, ws, bs, nights, off, min_alt = job
    return svg_figure_html(
        figures_nights.site_nights_svg(site, gs, ws, bs, nights, off, min_alt),
        f"fig-site-{i}",
        f"Nights at {html.escape(site)}: one row per night, local clock time across; grey shades deepen from "
        "civil twilight to full night; the curve is the target's altitude within the row; hatched strip: the "
        "observable window; filled: the planned blocks; dotted: the site's altitude limit.",
        f"Altitude charts for {site}",
    )


def _charts(pf: PlanFolder, windows: pd.DataFrame, cache: FigureCache | None) -> dict[int, str]:
    """Every site's chart: from the cache where drawn before, the rest drawn here (milliseconds each)."""
    jobs = _chart_jobs(pf, windows)
    keys = [None if j is None or cache is None else cache.key("fig-site", j) for j in jobs]
    out = {i: (cache.get(k) if k is not None else None) for i, k in enumerate(keys)}
    todo = [i for i, j in enumerate(jobs) if j is not None and out[i] is None]
    for i in todo:
        out[i] = text = _site_chart(jobs[i])
        if keys[i] is not None:
            cache.put(keys[i], text)
    return {i: t for i, t in out.items() if t}


def nights_section(pf: PlanFolder, cache: FigureCache | None = None) -> str:
    out = [
        '<section id="nights"><h2>Nights at every site</h2>',
        "<p>The network at a glance: one row per site, one column per night; the shade gives the hours "
        "planned, a crossed cell a night without an observable window, an open dot a window left unused. "
        "Below, each site's nights in detail.</p>",
    ]
    window, planned, reasons = _night_hours(pf)
    if pf.sites and pf.nights:
        out.append(
            drawn(
                cache,
                "fig-network",
                (pf.sites, pf.nights, planned, window),
                lambda: svg_figure_html(
                    figures_nights.network_nights_svg(pf.sites, pf.nights, planned, window),
                    "fig-network",
                    "Hours planned per site and night (darker: more); crossed: no observable window; open dot: "
                    "a window with nothing planned.",
                    "Sites against nights: hours planned",
                ),
            )
        )
    g = pf.geometry
    charts = g is not None and "alt_deg" in g and "sun_alt_deg" in g
    if not charts:
        out.append('<p class="missing">geometry.csv lacks alt_deg / sun_alt_deg: no night charts.</p>')
    else:
        key = "".join(
            f'<li><span class="swatch" style="{css}"></span>{html.escape(words)}</li>'
            for css, words in figures_nights.NIGHT_KEY
        )
        out.append(f'<p>Key to the night charts below:</p><ul class="key">{key}</ul>')
    windows = pf.windows if pf.windows is not None else pd.DataFrame(columns=[*_BLOCK_COLUMNS, "reason"])
    charts = _charts(pf, windows, cache) if charts else {}
    for i, site in enumerate(pf.sites):
        n_blocks = int((pf.plan["site"] == site).sum()) if len(pf.plan) else 0
        dark = int((window[i] <= 0).sum())
        summary = (
            f"{html.escape(site)}: {n_blocks} block{'s' if n_blocks != 1 else ''}, "
            f"{planned[i].sum():.1f} h planned of {window[i].sum():.1f} h of windows"
            + (f", {dark} night{'s' if dark != 1 else ''} without a window" if dark else "")
        )
        body = [charts[i]] if charts.get(i) else []
        if pf.windows is not None:
            rows = []
            for j, night in enumerate(pf.nights):
                why = reasons.get((site, night), "")
                rows.append(
                    [
                        html.escape(night),
                        f"{window[i, j]:.1f}" if window[i, j] > 0 else "none",
                        f"{planned[i, j]:.1f}",
                        html.escape(why) or "—",
                    ]
                )
            body.append(table(["night", "window (h)", "planned (h)", "reason"], rows, "windows"))
        is_open = " open" if len(pf.sites) <= 4 else ""
        out.append(
            f'<details class="site" id="site-{i}"{is_open}><summary>{summary}</summary>{"".join(body)}</details>'
        )
    out.append("</section>")
    return "\n".join(out)
