"""The self-contained HTML campaign report, rendered from a plan folder's files alone.

``render_report(plan_dir)`` reads the plan folder (:mod:`planner.outputs.reader`) and returns one
HTML page: figures embedded as base64 PNG, CSS inline, no scripts, nothing fetched from the network,
so it opens from disk and can be mailed. Numbers are shown as the files give them (never recomputed);
see :mod:`planner.outputs.htmlparts` for how each keeps its source.
"""

from __future__ import annotations

import html
from pathlib import Path

import numpy as np
import pandas as pd

from planner.core.fileio import write_text_atomic
from planner.core.safety import CAUTION_TEXT, SUN_SAFETY_TEXT, sun_caution_limit_deg
from planner.outputs import layout
from planner.outputs.figcache import FigureCache
from planner.outputs.figstyle import baseline_series, check_times_utc, log_series, plan_series
from planner.outputs.htmlparts import json_num, num, page, table
from planner.outputs.reader import PlanFolder, load_plan_folder
from planner.outputs.report_diag import DIAG_TOC, diagnostics_sections
from planner.outputs.report_fit import FIT_TOC, replan_lightcurve_section
from planner.outputs.report_nights import NIGHT_CHART_COLUMNS, nights_section
from planner.outputs.report_sections import (
    GEOMETRY_COLUMNS,
    blocks_section,
    geometry_section,
    short_time,
    summary_section,
    timeline_section,
)

REPORT_NAME = layout.REPORT_HTML
#: The columns of geometry.csv the report reads: the file is a plan folder's largest, read only in part.
REPORT_GEOMETRY_COLUMNS = ("site", "time_utc", *GEOMETRY_COLUMNS, *NIGHT_CHART_COLUMNS)


def _block_label(r: pd.Series) -> str:
    return f"{html.escape(r['site'])} {html.escape(short_time(r['start_utc']))} UTC"


#: Headline of each caution kind in the report (the wording of the advice is CAUTION_TEXT's).
_CAUTION_TITLES = {"sun": "Near the Sun", "twilight": "Twilight", "airmass": "Low in the sky", "moon": "Bright Moon"}
#: The plan.csv column whose value each caution kind quotes.
_CAUTION_COLUMNS = {
    "sun": "solar_elong_deg",
    "twilight": "max_sun_alt_deg",
    "airmass": "max_airmass",
    "moon": "moon_sep_deg",
}


def cautions_section(pf: PlanFolder) -> str:
    """Sun safety first, then the blocks plan.csv's ``cautions`` column flags (the sheets flag the same)."""
    items = [f"<li><strong>Sun safety.</strong> {html.escape(SUN_SAFETY_TEXT)}</li>"]
    g, plan = pf.geometry, pf.plan
    limit = float(sun_caution_limit_deg(pf.min_solar_elong_deg()))
    if g is not None and "solar_elong_deg" in g and len(g):
        e = pd.to_numeric(g["solar_elong_deg"], errors="coerce")
        i = e.idxmin()
        if e[i] < limit:
            items.append(
                f"<li><strong>Low solar elongation:</strong> the target comes within "
                f"{num(g.at[i, 'solar_elong_deg'], f'geometry.csv:{i}:solar_elong_deg', 1, '°')} of the Sun "
                f"({html.escape(g.at[i, 'time_utc'])} UTC). Check each site's Sun-avoidance limit and never "
                "slew across the Sun.</li>"
            )
    if "cautions" in plan:
        for kind, title in _CAUTION_TITLES.items():
            column = _CAUTION_COLUMNS[kind]
            flagged = [
                f"{_block_label(r)} ({num(r[column], f'plan.csv:{i}:{column}', 1)})"
                for i, r in plan.iterrows()
                if kind in str(r["cautions"]).split(";")
            ]
            if flagged:
                items.append(
                    f"<li><strong>{html.escape(title)}:</strong> {'; '.join(flagged)}; "
                    f"{html.escape(CAUTION_TEXT[kind])}.</li>"
                )
    for note in pf.manifest.get("notes") or []:
        items.append(f"<li><strong>Orbit:</strong> {html.escape(str(note))}.</li>")
    w = pf.windows
    if w is not None and "caution" in w:
        notes: dict[str, list[str]] = {}
        for _, r in w[w["caution"].astype(str).str.strip() != ""].iterrows():
            notes.setdefault(str(r["caution"]), []).append(f"{r['site']} {r['night']}")
        for text, where in notes.items():
            items.append(f"<li><strong>Windows:</strong> {html.escape(text)} ({html.escape(', '.join(where))}).</li>")
    items.append(
        "<li><strong>Weather.</strong> The plan assumes every night is clear; the weather robustness table in "
        "the summary shows what each site's typical clear-night fraction leaves. Re-plan from the log of what "
        "was actually observed (<code>phasewise plan --done LOG.csv</code>).</li>"
    )
    items.append(
        "<li><strong>The observatory's own rules prevail</strong> over anything in this report: pointing "
        "limits, Sun and Moon avoidance, dome and weather closure, and licensed practice.</li>"
    )
    return '<section id="cautions"><h2>Cautions</h2><ul>' + "".join(items) + "</ul></section>"


def render_report(plan_dir: str | Path) -> str:
    """The campaign report of a plan folder, as one self-contained HTML page."""
    pf = load_plan_folder(plan_dir, geometry_columns=REPORT_GEOMETRY_COLUMNS)
    cache = FigureCache(plan_dir)
    diag = pf.diagnostics
    series = [plan_series(check=diag["plan"])]
    keys = ["plan"]
    if pf.baseline is not None and isinstance(diag.get("baseline"), dict):
        series.append(baseline_series(check=diag["baseline"]))
        keys.append("baseline")
    rot = pf.rotation
    if pf.lightcurve is not None:  # re-planned from a light curve: the checks looked at the candidates' range
        checked = diag["plan"].get("settings") or {}
        rot = {**rot, **{k: checked[k] for k in ("min_period_h", "max_period_h") if k in checked}}
    curve = [] if pf.lightcurve is None else [replan_lightcurve_section(pf.lightcurve, diag, cache)]
    body = "\n".join(
        [
            summary_section(pf),
            *curve,
            geometry_section(pf, cache),
            nights_section(pf, cache),
            timeline_section(pf, cache),
            diagnostics_sections(series, keys, rot.get("min_period_h"), rot.get("max_period_h"), cache),
            blocks_section(pf),
            cautions_section(pf),
        ]
    )
    title = f"Campaign report: {pf.target_name or pf.campaign_name or pf.path.name}"
    subtitle = html.escape(pf.campaign_name) + f" · {len(pf.sites)} sites · {len(pf.nights)} nights"
    toc = [
        ("summary", "Campaign summary"),
        *([] if pf.lightcurve is None else FIT_TOC),
        ("geometry", "Geometry over the span"),
        ("nights", "Night charts"),
        ("timeline", "Network timeline"),
        *DIAG_TOC,
        ("table", "Night by night"),
        ("cautions", "Cautions"),
    ]
    return page(title, subtitle, toc, body, version=pf.manifest.get("phasewise_version"))


def write_report(plan_dir: str | Path) -> Path:
    """Render the report of ``plan_dir`` and write it atomically as ``plan_dir/report.html``."""
    text = render_report(plan_dir)
    return write_text_atomic(Path(plan_dir) / REPORT_NAME, text)


def render_check_report(check: dict, title: str = "Sampling check", source: str = "") -> str:
    """The diagnostics sections alone, for one check result (``phasewise check --report FILE``).

    ``check`` is ``CheckResult.to_dict()`` (the ``phasewise check`` JSON); its ``input.times_utc`` are
    the times drawn. ``source`` names the log, shown as text.
    """
    times = check_times_utc(check, np.array([], dtype="datetime64[ns]"))
    s = log_series(check=check, times_utc=times)
    settings = check.get("settings") or {}
    inp = check.get("input") or {}
    rows = [
        ["times", json_num(check, "input.n_times")],
        ["first, last (UTC)", html.escape(f"{inp.get('first_utc') or '—'}, {inp.get('last_utc') or '—'}")],
        ["span", json_num(check, "input.span_h", 2, " h")],
        ["sites", html.escape(", ".join(f"{k} ({v})" for k, v in (inp.get("sites") or {}).items())) or "—"],
        [
            "candidate periods",
            json_num(check, "settings.min_period_h", 3) + "–" + json_num(check, "settings.max_period_h", 3) + " h",
        ],
        ["injected light curves", json_num(check, "settings.trials")],
    ]
    notes = "".join(f"<li>{html.escape(str(n))}</li>" for n in check.get("notes") or [])
    body = (
        '<section id="summary"><h2>What was checked</h2>'
        + table(["", ""], rows, "kv")
        + (f"<ul>{notes}</ul>" if notes else "")
        + "</section>"
    )
    body += diagnostics_sections([s], [""], settings.get("min_period_h"), settings.get("max_period_h"))
    body += '<section id="cautions"><h2>Cautions</h2><ul><li>' + html.escape(SUN_SAFETY_TEXT) + "</li></ul></section>"
    subtitle = f"{times.size} observation times" + (f" from {html.escape(source)}" if source else "")
    toc = [("summary", "What was checked"), *DIAG_TOC, ("cautions", "Cautions")]
    return page(title, subtitle, toc, body, version=check.get("phasewise_version"))
