"""The plan report's own sections: summary, geometry, night charts, network timeline, night-by-night table."""

from __future__ import annotations

import html
import math
from collections.abc import Sequence

import numpy as np
import pandas as pd

from planner.core.safety import sun_caution_limit_deg
from planner.outputs import figures_sky, figures_timeline
from planner.outputs.figcache import FigureCache, drawn
from planner.outputs.htmlparts import figure_html, fmt, json_num, num, svg_figure_html, table
from planner.outputs.reader import PlanFolder, cell_float, utc_times
from planner.schedule.solve import thinned_periods_text

_BLOCK_COLUMNS = ("site", "night", "start_utc", "end_utc")


def summary_section(pf: PlanFolder) -> str:
    diag = pf.diagnostics
    rot = pf.rotation
    nights = pf.nights
    span = f"{html.escape(nights[0])} to {html.escape(nights[-1])} ({len(nights)} nights)" if nights else "—"
    rows = [
        ("Target", html.escape(pf.target_name) or "—"),
        ("Campaign", html.escape(pf.campaign_name) or "—"),
        ("Sites", html.escape(", ".join(pf.sites)) or "—"),
        ("Nights (local evening dates)", span),
    ]
    if rot:
        rows.append(
            (
                "Candidate periods",
                f"{html.escape(fmt(rot.get('min_period_h')))}–{html.escape(fmt(rot.get('max_period_h')))} h"
                + (", double-peaked light curve assumed" if rot.get("double_peaked") else ""),
            )
        )
    replan = diag.get("replan")
    if isinstance(replan, dict) and replan.get("log"):
        lost = ", ".join(" ".join(str(x) for x in pair) for pair in replan.get("lost_site_nights") or []) or "none"
        rows.append(
            (
                "Re-planned from",
                f"{html.escape(str(replan['log']))}: "
                f"{json_num(diag, 'replan.n_done_times')} times already observed, planning from "
                f"{html.escape(str(replan.get('not_before_utc') or '—'))} UTC; lost site-nights: "
                f"{html.escape(lost)}",
            )
        )
    out = ['<section id="summary"><h2>Campaign summary</h2>', table(["", ""], rows, "kv")]

    # Totals per site: sums of plan.csv / baseline.csv cells.
    head = ["Site", "plan blocks", "plan hours", "plan exposures"]
    if pf.baseline is not None:
        head += ["baseline blocks", "baseline hours"]
    trows = []

    def totals(df: pd.DataFrame | None, site: str | None) -> tuple[int, float, int]:
        if df is None or df.empty:
            return 0, 0.0, 0
        d = df if site is None else df[df["site"] == site]
        hours = (
            float(((utc_times(d["end_utc"]) - utc_times(d["start_utc"])) / np.timedelta64(1, "h")).sum())
            if len(d)
            else 0.0
        )
        nexp = (
            int(sum(int(cell_float(x)) for x in d["n_exposures"] if not math.isnan(cell_float(x))))
            if "n_exposures" in d
            else 0
        )
        return len(d), hours, nexp

    for site in [*pf.sites, None]:
        b, h, n = totals(pf.plan, site)
        label = "<strong>all sites</strong>" if site is None else html.escape(site)
        key = "all" if site is None else html.escape(site)
        row = [
            label,
            f'<span data-total="plan-blocks:{key}">{b}</span>',
            f'<span data-total="plan-hours:{key}">{h:.2f}</span>',
            f'<span data-total="plan-exposures:{key}">{n}</span>',
        ]
        if pf.baseline is not None:
            bb, bh, _ = totals(pf.baseline, site)
            row += [
                f'<span data-total="baseline-blocks:{key}">{bb}</span>',
                f'<span data-total="baseline-hours:{key}">{bh:.2f}</span>',
            ]
        trows.append(row)
    out += ["<h3>Time on target</h3>", table(head, trows, "totals")]

    # Headline comparison, straight from diagnostics.json.
    kinds = [k for k in ("plan", "baseline") if isinstance(diag.get(k), dict)]
    crow = []

    def worst(kind: str) -> str:
        cov = diag[kind].get("coverage") or []
        if not cov:
            return "—"
        i = int(np.argmin(cov))
        return json_num(diag, f"{kind}.coverage.{i}") + " at " + json_num(diag, f"{kind}.periods_h.{i}", 2, " h")

    def highest_alias(kind: str) -> str:
        if not diag[kind].get("highest_alias"):
            return "—"
        return (
            json_num(diag, f"{kind}.highest_alias.height")
            + " at "
            + json_num(diag, f"{kind}.highest_alias.freq_per_day", 4, " c/d")
        )

    crow.append(["worst-period phase coverage"] + [worst(k) for k in kinds])
    crow.append(["highest spectral-window alias (peak beyond 2/span)"] + [highest_alias(k) for k in kinds])
    crow.append(
        ["smallest detectable fading, 3σ (mag/day)"]
        + [json_num(diag, f"{k}.trend.min_detectable_mag_per_day", 4) for k in kinds]
    )
    crow.append(["longest gap between visits"] + [json_num(diag, f"{k}.trend.longest_gap_h", 2, " h") for k in kinds])
    out += [
        "<h3>Plan against the baseline</h3>",
        "<p>The baseline is the plan an observer would make by hand: one block per site and night, centred "
        "on the target's highest altitude, with the same total hours.</p>",
        table(["", *kinds], crow, "compare"),
    ]
    out += _optimiser_tables(diag)
    if pf.sheets:
        links = ", ".join(f'<a href="sheets/{html.escape(s)}">{html.escape(s)}</a>' for s in pf.sheets)
        out.append(f"<p>Printable observing sheets, one per site: {links}.</p>")
    out.append("</section>")
    return "\n".join(out)


def _is_number(v) -> bool:
    return v is None or (isinstance(v, (int, float)) and not isinstance(v, bool))


def _label(key: str) -> str:
    return html.escape(key.replace("_h", " (h)").replace("_", " "))


def _nestedtable(diag: dict, key: str, columns: Sequence[str] | None = None) -> str:
    """A table of ``diag[key]``'s sub-dicts side by side (``columns``, or every sub-dict holding numbers;
    rows: the first column's numeric keys)."""
    block = diag.get(key)
    if not isinstance(block, dict):
        return ""
    cols = [
        c
        for c, v in block.items()
        if isinstance(v, dict) and any(_is_number(x) for x in v.values()) and (columns is None or c in columns)
    ]
    if not cols:
        return ""
    rows = []
    for r in [k for k, v in block[cols[0]].items() if _is_number(v)]:
        cells = []
        for c in cols:
            v = block[c].get(r, "")
            cells.append(json_num(diag, f"{key}.{c}.{r}", 4) if _is_number(v) and r in block[c] else "—")
        rows.append([_label(r), *cells])
    for r in [k for k, v in block[cols[0]].items() if isinstance(v, list) and v and isinstance(v[0], list)]:
        cells = []
        for c in cols:
            ranges = block[c].get(r) or []
            cells.append(
                ", ".join(
                    json_num(diag, f"{key}.{c}.{r}.{i}.0", 2) + "–" + json_num(diag, f"{key}.{c}.{r}.{i}.1", 2)
                    for i in range(len(ranges))
                )
                or "none"
            )
        rows.append([_label(r), *cells])
    return table(["", *[_label(c) for c in cols]], rows, "kv")


def _optimiser_tables(diag: dict) -> list[str]:
    """The optimiser's objective terms and the weather Monte Carlo, as diagnostics.json gives them."""
    out = []
    obj = diag.get("objective")
    if isinstance(obj, dict):
        table = _nestedtable(diag, "objective", ("heuristic", "greedy", "baseline", "exact"))
        if table:
            out += ["<h3>Optimiser objective</h3>"]
            if isinstance(obj.get("definition"), str):
                out.append(f"<p><code>{html.escape(obj['definition'])}</code></p>")
            weights = obj.get("weights")
            if isinstance(weights, dict):
                out.append(
                    "<p>Weights: "
                    + ", ".join(
                        f"{_label(k)} {json_num(diag, f'objective.weights.{k}')}"
                        for k, v in weights.items()
                        if _is_number(v)
                    )
                    + ".</p>"
                )
            out.append(table)
        guarantee = obj.get("guarantee")
        if isinstance(guarantee, dict) and isinstance(guarantee.get("statement"), str):
            out.append(f"<p>Guarantee: {html.escape(guarantee['statement'])}</p>")
        used, whole = obj.get("n_periods"), obj.get("n_periods_grid")
        if isinstance(used, int) and isinstance(whole, int) and used < whole:
            text = thinned_periods_text(used, whole)
            out.append(f"<p>{html.escape(text[:1].upper() + text[1:])}.</p>")
    table = _nestedtable(diag, "robustness")
    if table:
        out += ["<h3>Weather robustness (Monte Carlo over each site's clear-night fraction)</h3>", table]
    return out


#: geometry.csv's columns the geometry section reads (besides site and time_utc).
GEOMETRY_COLUMNS = ("helio_dist_au", "obs_dist_au", "phase_angle_deg", "solar_elong_deg", "mag_pred")


def geometry_section(pf: PlanFolder, cache: FigureCache | None = None) -> str:
    out = ['<section id="geometry"><h2>Geometry over the span</h2>']
    g = pf.geometry
    need = list(GEOMETRY_COLUMNS)
    if g is None or g.empty or any(c not in g for c in need):
        out.append('<p class="missing">geometry.csv is missing or lacks the geometry columns.</p></section>')
        return "\n".join(out)
    sites = list(dict.fromkeys(g["site"]))
    seen = "geocentre" if "geocentre" in sites else sites[0]
    gs = g[g["site"] == seen].copy()
    for c in need:
        gs[c] = pd.to_numeric(gs[c], errors="coerce")
    caution_deg = float(sun_caution_limit_deg(pf.min_solar_elong_deg()))
    out.append(
        drawn(
            cache,
            "fig-geometry",
            (gs[["time_utc", *need]], seen, caution_deg),
            lambda: figure_html(
                figures_sky.geometry_figure(gs, seen, caution_deg),
                "fig-geometry",
                f"Sun–target distance r and observer–target distance Δ (au), phase angle, solar elongation and "
                f"predicted magnitude, as seen from {html.escape(seen)} (UTC). Hatched: solar elongation below "
                f"{caution_deg:g}° (the sites' Sun limit plus the caution margin), where Sun safety needs "
                "particular care.",
                "Geometry of the target over the campaign",
            ),
        )
    )
    rows = []
    for c, label in zip(
        need, ["r (au)", "Δ (au)", "phase angle (°)", "solar elongation (°)", "predicted mag"], strict=True
    ):
        v = gs[c].to_numpy(dtype=float)
        i0, i1 = (0, len(v) - 1)
        imin, imax = int(np.nanargmin(v)), int(np.nanargmax(v))

        def cell(i: int, c=c, idx=gs.index) -> str:
            return num(g.at[idx[i], c], f"geometry.csv:{int(idx[i])}:{c}")

        rows.append([label, cell(i0), cell(i1), cell(imin), cell(imax)])
    out.append(table(["", "start", "end", "minimum", "maximum"], rows, "geo"))
    out.append("</section>")
    return "\n".join(out)


def timeline_section(pf: PlanFolder, cache: FigureCache | None = None) -> str:
    windows = pf.windows if pf.windows is not None else pd.DataFrame(columns=list(_BLOCK_COLUMNS))
    cols = list(_BLOCK_COLUMNS)
    parts = (
        pf.sites,
        *[d[cols] if d is not None and set(cols) <= set(d) else d for d in (windows, pf.plan, pf.baseline)],
    )
    return (
        '<section id="timeline"><h2>Network timeline</h2>'
        + drawn(
            cache,
            "fig-timeline",
            parts,
            lambda: svg_figure_html(
                figures_timeline.network_timeline_svg(pf.sites, windows, pf.plan, pf.baseline),
                "fig-timeline",
                "Every site on one UTC axis. Hatched outline: observable window; upper half: the optimised "
                "plan's blocks; lower dashed half: the baseline's blocks.",
                "Timeline of all sites' blocks",
            ),
        )
        + "</section>"
    )


_TABLE_COLUMNS = [
    # (header, columns shown together in one cell, digits or None for times)
    ("local time", ("start_local", "end_local"), None),
    ("UTC", ("start_utc", "end_utc"), None),
    ("exposures × s", ("n_exposures", "exposure_s"), 0),
    ("RA, Dec (°)", ("ra_deg", "dec_deg"), 4),
    ("motion (″/min, PA °)", ("motion_arcsec_per_min", "motion_pa_deg"), 2),
    ("altitude (°)", ("min_alt_deg", "max_alt_deg"), 1),
    ("airmass", ("min_airmass", "max_airmass"), 2),
    ("Moon sep. (°)", ("moon_sep_deg",), 0),
    ("mag", ("mag_pred",), 2),
    ("S/N", ("snr_pred",), 0),
]


_JOIN = {
    "local time": "–",
    "UTC": "–",
    "exposures × s": " × ",
    "RA, Dec (°)": ", ",
    "motion (″/min, PA °)": " at ",
    "altitude (°)": "–",
    "airmass": "–",
}


def short_time(text: str) -> str:
    """'2034-03-16T20:15:00-10:00' → '03-16 20:15' (the exact text stays in data-value)."""
    s = str(text)
    return f"{s[5:10]} {s[11:16]}" if len(s) >= 16 and s[10] in "T " else s


def blocks_section(pf: PlanFolder) -> str:
    plan = pf.plan
    cols = [(h, [c for c in cs if c in plan.columns], d) for h, cs, d in _TABLE_COLUMNS]
    cols = [(h, cs, d) for h, cs, d in cols if cs]
    order = plan.assign(_k=utc_times(plan["start_utc"])).sort_values(["night", "_k"]).index if len(plan) else []
    rows, classes, last = [], [], None
    for i in order:
        r = plan.loc[i]
        cells = [html.escape(str(r["night"])), html.escape(str(r["site"]))]
        for header, names, digits in cols:
            parts, shown = [], ""
            for c in names:
                v = r[c]
                if digits is None:
                    text = short_time(v)
                    if shown and text[:5] == shown[:5]:
                        text = text[6:]  # same date as the start: the clock time is enough
                    shown = shown or text
                    parts.append(
                        f'<span class="num" data-src="plan.csv:{i}:{c}" data-value="{html.escape(v)}">'
                        f"{html.escape(text)}</span>"
                    )
                else:
                    parts.append(num(v, f"plan.csv:{i}:{c}", 0 if c == "n_exposures" else digits))
            cells.append(_JOIN.get(header, " ").join(parts))
        rows.append(cells)
        classes.append(r["night"] != last)
        last = r["night"]
    headers = ["night", "site", *[h for h, _, _ in cols]]
    head = "".join(f"<th>{html.escape(h)}</th>" for h in headers)
    labels = [html.escape(h, quote=True) for h in headers]
    body = "".join(
        ('<tr class="nightstart">' if new else "<tr>")
        + "".join(f'<td data-label="{lab}">{c}</td>' for lab, c in zip(labels, row, strict=True))
        + "</tr>"
        for row, new in zip(rows, classes, strict=True)
    )
    return (
        '<section id="table"><h2>Night by night</h2><p>One row per planned block, from plan.csv. Local '
        "times are the site's clock; RA/Dec at mid-block (track at the given motion for non-sidereal "
        "targets).</p>" + f'<div class="wide"><table class="blocks"><thead><tr>{head}</tr></thead>'
        f"<tbody>{body}</tbody></table></div></section>"
    )
