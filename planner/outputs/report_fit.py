"""The light-curve sections of a report, and the page ``phasewise fit --report FILE`` writes.

Everything is drawn from the fit's document (``lightcurve.json`` in a plan folder; the ``phasewise
fit`` JSON with ``arrays`` for ``--report``). Every number carries ``data-src="lightcurve.json:PATH"``,
PATH the dotted key inside that document.
"""

from __future__ import annotations

import html

from planner.core.safety import SUN_SAFETY_TEXT
from planner.outputs import figures_fit
from planner.outputs.figcache import FigureCache, drawn
from planner.outputs.htmlparts import figure_html, json_num, page, table

#: The light-curve section's anchor and title, for a page's contents list.
FIT_TOC = [("lightcurve", "Light curve: period, fading, period change")]
#: Name of the document in data-src attributes (a plan folder's file; the fit JSON has the same keys).
FIT_FILE = "lightcurve.json"


def _n(doc: dict, path: str, digits: int = 3, unit: str = "") -> str:
    return json_num(doc, path, digits, unit, file=FIT_FILE)


def _summary(doc: dict) -> str:
    p, f = doc.get("periods") or {}, doc.get("fading") or {}
    rows = [
        ["best rotation period", _n(doc, "periods.best_h", 4, " h") + " ± " + _n(doc, "periods.sigma_h", 4, " h")],
        ["shape", "double-peaked" if p.get("double_peaked") else "single-peaked"],
        [
            "verdict",
            f"<strong>{html.escape(str(p.get('verdict', '')))}</strong>: {html.escape(str(p.get('reason', '')))}",
        ],
    ]
    if f.get("measurable"):
        rows += [
            [
                "K1 (fading with r)",
                _n(doc, "fading.k1", 3)
                + " ± "
                + _n(doc, "fading.k1_sigma", 3)
                + " against "
                + _n(doc, "fading.expected_k1", 3)
                + ": "
                + _n(doc, "fading.excess_sigma", 2, " σ"),
            ],
            [
                "extra fading beyond the law",
                _n(doc, "fading.extra_mag_per_day", 4)
                + " ± "
                + _n(doc, "fading.extra_mag_per_day_sigma", 4, " mag/day"),
            ],
        ]
    else:
        rows.append(["fading", html.escape(str(f.get("message", "not measurable")))])
    rows += [
        [
            "period change Ṗ",
            _n(doc, "period_change.rate_h_per_day", 4)
            + " ± "
            + _n(doc, "period_change.rate_sigma_h_per_day", 4, " h/day")
            + " ("
            + _n(doc, "period_change.significance_sigma", 2, " σ")
            + ")",
        ],
        ["synodic drift from the geometry alone", _n(doc, "period_change.synodic_drift_h_per_day", 4, " h/day")],
        ["χ² scale (χ²/dof, ≥ 1)", _n(doc, "chi2.scale", 3)],
        [
            "points",
            _n(doc, "input.n_times") + " (" + html.escape(", ".join((doc.get("input") or {}).get("sites") or {})) + ")",
        ],
    ]
    cand = [
        [_n(doc, f"periods.candidates.{i}.period_h", 4), _n(doc, f"periods.candidates.{i}.delta_chi2", 1)]
        + [_n(doc, f"periods.candidates.{i}.relative_likelihood", 3)]
        for i in range(len(p.get("candidates") or []))
    ]
    return (
        table(["", ""], rows, "kv")
        + "<h3>Candidate periods (Δχ² &lt; 25)</h3>"
        + table(["rotation period (h)", "Δχ²", "relative likelihood"], cand, "candidates")
    )


def _zero_points(doc: dict) -> str:
    zps = doc.get("zero_points") or []
    rows = [
        [
            html.escape(str(z.get("site", ""))),
            html.escape(str(z.get("night", ""))),
            _n(doc, f"zero_points.{i}.offset_mag", 3) + " ± " + _n(doc, f"zero_points.{i}.offset_sigma_mag", 3),
        ]
        for i, z in enumerate(zps)
    ]
    ref = html.escape(str(zps[0]["site"])) if zps else ""
    return f"<h3>Zero points (mag, relative to {ref})</h3>" + table(["site", "night", "offset (mag)"], rows, "zero")


def lightcurve_section(
    doc: dict, heading: str = "Light curve: period, fading, period change", cache: FigureCache | None = None
) -> str:
    """The light-curve section: the numbers, the candidates, the four figures and the zero points. ``cache``
    keeps the drawn figures (planner.outputs.figcache)."""
    parts = [f'<section id="lightcurve"><h2>{html.escape(heading)}</h2>', _summary(doc)]
    if doc.get("arrays"):
        figures = [
            (
                figures_fit.folded_figure,
                "fig-lc-folded",
                "The rotational signal (magnitude at Δ = 1 au less the fitted mean, distance law and zero points) "
                "folded at the best rotation period, per site; the line is the fitted Fourier model. Phase is "
                "counted at the emission time.",
                "Folded light curve per site",
            ),
            (
                figures_fit.chi2_figure,
                "fig-lc-chi2",
                "Δχ² of the model against rotation period (scaled by the χ² scale). Triangles: the candidate "
                "periods, every minimum within Δχ² = 25 of the best (dotted line).",
                "Chi-square curve against period",
            ),
            (
                figures_fit.residuals_figure,
                "fig-lc-residuals",
                "Residuals of the final model against time, per site (bars: the points' σ). Structure here is "
                "what the model leaves out: an outburst, a drifting zero point, a period change.",
                "Residuals against time",
            ),
            (
                figures_fit.law_figure,
                "fig-lc-law",
                "Magnitude at Δ = 1 au less rotation and zero points against log10 r: the fitted law (solid) and "
                "the expected law through the same mean (dashed).",
                "Reduced magnitude against log r",
            ),
        ]
        parts += [
            drawn(
                cache,
                fig_id,
                (doc, caption, alt),
                lambda d=draw, i=fig_id, c=caption, a=alt: figure_html(d(doc), i, c, a),
            )
            for draw, fig_id, caption, alt in figures
        ]
    parts += [_zero_points(doc), "</section>"]
    return "".join(parts)


def replan_lightcurve_section(doc: dict, diagnostics: dict, cache: FigureCache | None = None) -> str:
    """The plan report's light-curve section (a folder planned with ``--done LOG.csv`` with magnitudes):
    the fit of the log, and how well plan and baseline tell its candidate periods apart."""
    disc = diagnostics.get("discrimination") or {}
    rows = [
        [
            "least expected Δχ² between two candidates at the new points",
            json_num(diagnostics, "discrimination.expected_min_delta_chi2.plan", 1),
            json_num(diagnostics, "discrimination.expected_min_delta_chi2.baseline", 1),
        ]
    ]
    intro = (
        "<p>The log's magnitudes were fitted first. The plan's trial periods are windows around the "
        "candidate periods below, and the optimiser maximised how well the new slots tell them apart: for "
        "each pair of candidate models the expected Δχ² = Σ (m<sub>i</sub> − m<sub>j</sub>)²/σ² at the new "
        "points, each new night's zero point free (Atkinson &amp; Fedorov 1975, T-optimal design); the table "
        "gives the smallest pair (pairs of nested periods, P and P/2, left out). Candidates: "
        + ", ".join(
            json_num(diagnostics, f"discrimination.candidates_h.{i}", 4, " h")
            for i in range(len(disc.get("candidates_h") or []))
        )
        + ".</p>"
        + table(["", "plan", "baseline"], rows, "discrimination")
    )
    section = lightcurve_section(doc, "Light curve of the log, and the candidates the plan separates", cache)
    head, _, rest = section.partition("</h2>")
    return head + "</h2>" + intro + rest


def render_fit_report(doc: dict, title: str = "", source: str = "") -> str:
    """The page of one fit (``phasewise fit --report``): what was fitted, the light-curve section, cautions."""
    inp = doc.get("input") or {}
    geo = inp.get("geometry") or {}
    rows = [
        ["target", html.escape(str(inp.get("target", "")))],
        ["log", html.escape(str(inp.get("log", "")))],
        ["points", _n(doc, "input.n_times")],
        ["first, last (UTC)", html.escape(f"{inp.get('first_utc') or '—'}, {inp.get('last_utc') or '—'}")],
        ["span", _n(doc, "input.span_h", 2, " h")],
        ["sites (geometry)", html.escape(", ".join(f"{k} ({v})" for k, v in geo.items())) or "—"],
        [
            "periods searched",
            _n(doc, "settings.min_period_h", 3) + "–" + _n(doc, "settings.max_period_h", 3) + " h",
        ],
        ["harmonics", _n(doc, "settings.nterms")],
        ["nightly zero-point prior σ", _n(doc, "settings.night_offset_sigma_mag", 3, " mag")],
    ]
    notes = "".join(f"<li>{html.escape(str(n))}</li>" for n in inp.get("notes") or [])
    body = (
        '<section id="summary"><h2>What was fitted</h2>'
        + table(["", ""], rows, "kv")
        + "<p>Times are light-time corrected (phase at the emission time t − Δ/c); magnitudes are reduced to "
        "Δ = 1 au.</p>"
        + (f"<ul>{notes}</ul>" if notes else "")
        + "</section>"
        + lightcurve_section(doc)
        + '<section id="cautions"><h2>Cautions</h2><ul><li>'
        + html.escape(SUN_SAFETY_TEXT)
        + "</li></ul></section>"
    )
    title = title or f"Light-curve fit: {inp.get('target', '')}"
    subtitle = f"{int(inp.get('n_times') or 0)} points" + (f" from {html.escape(source)}" if source else "")
    return page(title, subtitle, [("summary", "What was fitted"), *FIT_TOC, ("cautions", "Cautions")], body)
