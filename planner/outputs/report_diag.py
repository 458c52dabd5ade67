"""The diagnostics sections of a report (coverage, spectral window, recovery, sensitivity), shared by the
plan report and ``phasewise check --report``: same figures, same tables, for one schedule or several."""

from __future__ import annotations

import html
from collections.abc import Sequence

from planner.outputs import figures_diag
from planner.outputs.figcache import FigureCache, drawn
from planner.outputs.figstyle import Series
from planner.outputs.htmlparts import figure_html, json_num, table

#: The diagnostics sections' anchors and titles, for the page's contents list.
DIAG_TOC = [
    ("coverage", "Rotational-phase coverage"),
    ("window", "Spectral window and aliases"),
    ("recovery", "Recovery of injected periods"),
    ("sensitivity", "Trend and period-change sensitivity"),
]


def _figure(cache: FigureCache | None, inputs: tuple, build, fig_id: str, caption: str, alt: str) -> str:
    return drawn(cache, fig_id, (*inputs, caption, alt), lambda: figure_html(build(), fig_id, caption, alt))


def diagnostics_sections(
    series: Sequence[Series],
    keys: Sequence[str],
    min_period_h: float | None = None,
    max_period_h: float | None = None,
    cache: FigureCache | None = None,
) -> str:
    """The coverage, spectral-window, recovery and sensitivity sections for one or more schedules.

    ``keys`` name each schedule's check result inside diagnostics.json (``plan``, ``baseline``; for a
    stand-alone check, ``""``), used in the data-src of every number. ``cache`` keeps the drawn figures
    (planner.outputs.figcache).
    """
    inputs = tuple((s.label, s.check, s.times_utc) for s in series)

    def src(key: str, path: str) -> str:
        return f"{key}.{path}" if key else path

    def jnum(key: str, check: dict, path: str, digits: int = 3, unit: str = "") -> str:
        return json_num({key: check} if key else check, src(key, path), digits, unit)

    out = []
    if any(s.check.get("periods_h") for s in series):
        out.append(
            '<section id="coverage"><h2>Rotational-phase coverage</h2>'
            + _figure(
                cache,
                inputs,
                lambda: figures_diag.coverage_figure(series),
                "fig-coverage",
                "Left: the observation times folded on every trial period, in the check's phase bins (dark = "
                "that phase is observed; phase zero at the first time). Right: fraction of phase covered per "
                "period, as computed by the check.",
                "Coverage map, period against rotational phase",
            )
            + "</section>"
        )
    peak_rows = []
    for key, s in zip(keys, series, strict=True):
        for i, _p in enumerate(s.check.get("window_peaks", [])):
            peak_rows.append(
                [
                    html.escape(s.label),
                    jnum(key, s.check, f"window_peaks.{i}.freq_per_day", 4),
                    jnum(key, s.check, f"window_peaks.{i}.height", 3),
                ]
            )
    out.append(
        '<section id="window"><h2>Spectral window and aliases</h2>'
        + _figure(
            cache,
            inputs,
            lambda: figures_diag.spectral_window_figure(series),
            "fig-window",
            "Spectral window |W(f)| of the exposure times (Deeming 1975). A tall peak at f_w means a period "
            "P is confused with 1/(1/P ± f_w): one site alone gives 1 cycle/day; sites at other longitudes "
            "lower it. Triangles: principal peaks found by the check.",
            "Spectral window",
        )
        + table(["schedule", "frequency (c/d)", "height"], peak_rows, "peaks")
        + "</section>"
    )
    band_rows = []
    for key, s in zip(keys, series, strict=True):
        for i, b in enumerate(s.check.get("bands", [])):
            verdict = str(b.get("verdict", ""))
            conf = b.get("confusable_periods_h") or []
            band_rows.append(
                [
                    html.escape(s.label),
                    jnum(key, s.check, f"bands.{i}.min_period_h", 2)
                    + "–"
                    + jnum(key, s.check, f"bands.{i}.max_period_h", 2),
                    f'<span class="verdict-{html.escape(verdict)}">{html.escape(verdict)}</span>',
                    jnum(key, s.check, f"bands.{i}.recovery_fraction", 2),
                    jnum(key, s.check, f"bands.{i}.half_period_fraction", 2),
                    ", ".join(jnum(key, s.check, f"bands.{i}.confusable_periods_h.{j}", 3) for j in range(len(conf)))
                    or "—",
                ]
            )
    out.append(
        '<section id="recovery"><h2>Recovery of injected periods</h2>'
        + _figure(
            cache,
            (*inputs, min_period_h, max_period_h),
            lambda: figures_diag.recovery_figure(series, min_period_h, max_period_h),
            "fig-recovery",
            "Fraction of synthetic light curves whose rotation period is recovered, against period (dotted: "
            "the share found at half the period, which a double-peaked curve with two alike halves gives and "
            "which does not count as recovered); strips below: the verdict per period band (blank: secure; "
            "hatched grey: alias-prone; dark crossed: under-covered).",
            "Recovery fraction against period",
        )
        + table(
            ["schedule", "periods (h)", "verdict", "recovered", "found P/2", "confusable with (h)"], band_rows, "bands"
        )
        + "</section>"
    )
    trow = []
    for name, path, d in (
        ("rate uncertainty, 1σ (mag/day)", "trend.rate_sigma_mag_per_day", 4),
        ("smallest detectable fading, 3σ (mag/day)", "trend.min_detectable_mag_per_day", 4),
        ("longest gap between visits (h)", "trend.longest_gap_h", 2),
    ):
        trow.append([name] + [jnum(k, s.check, path, d) for k, s in zip(keys, series, strict=True)])
    out.append(
        '<section id="sensitivity"><h2>Trend and period-change sensitivity</h2>'
        + _figure(
            cache,
            inputs,
            lambda: figures_diag.sensitivity_figure(series),
            "fig-sensitivity",
            "Left: the smallest change of period between the first and second half of the span detectable at "
            "3σ. Right: the smallest extra fading detectable at 3σ (with rotation fitted at the same time) "
            "and "
            "the longest gap between visits, i.e. how late an outburst or sudden fade would be noticed.",
            "Trend and period-change sensitivity",
        )
        + table(["", *[html.escape(s.label) for s in series]], trow, "trend")
        + "</section>"
    )
    return "\n".join(out)
