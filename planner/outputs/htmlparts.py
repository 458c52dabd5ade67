"""HTML building blocks of the reports: numbers that carry their source, tables, figures, the page.

Every number shown keeps its exact source value in a ``data-value`` attribute and its origin in
``data-src`` (``plan.csv:ROW:COLUMN`` or ``diagnostics.json:plan.trend.longest_gap_h``), so a test
can compare the page with the files. Every string that came from a user goes through
:func:`html.escape`. The page has no scripts and fetches nothing.
"""

from __future__ import annotations

import base64
import html
import json
import re
from collections.abc import Sequence

import numpy as np

from planner.core.safety import SUN_SAFETY_TEXT
from planner.core.textfmt import readable
from planner.outputs.figstyle import svg_bytes
from planner.outputs.reader import cell_float
from planner.outputs.svgdraw import SvgChart


def fmt(value, digits: int = 3) -> str:
    """Readable rounding for display; the exact value stays in data-value."""
    if isinstance(value, bool) or value is None:
        return "—" if value is None else str(value).lower()
    if isinstance(value, (int, np.integer)):
        return f"{int(value):,}".replace(",", " ")
    v = cell_float(value)
    if np.isnan(v):
        return "—" if str(value).strip() in ("", "nan", "NaN") else html.escape(str(value))
    return readable(v, digits)


def num(value, src: str, digits: int = 3, unit: str = "") -> str:
    """A number as HTML: rounded text, exact source value and origin in attributes."""
    exact = value if isinstance(value, str) else json.dumps(value)
    return (
        f'<span class="num" data-src="{html.escape(src)}" data-value="{html.escape(exact)}">'
        f"{fmt(value, digits)}{html.escape(unit)}</span>"
    )


def json_num(diag: dict, path: str, digits: int = 3, unit: str = "", file: str = "diagnostics.json") -> str:
    """The number at dotted ``path`` of a JSON document, its origin ``FILE:path``; a dash when absent."""
    value: object = diag
    for key in path.split("."):
        if isinstance(value, dict) and key in value:
            value = value[key]
        elif isinstance(value, list) and key.isdigit() and int(key) < len(value):
            value = value[int(key)]
        else:
            return '<span class="missing">—</span>'
    return num(value, f"{file}:{path}", digits, unit)


def _figure(src: str, width_px: int, height_px: int, fig_id: str, caption: str, alt: str) -> str:
    return (
        f'<figure id="{fig_id}"><img src="{src}" alt="{html.escape(alt)}" width="{width_px}" height="{height_px}">'
        f"<figcaption>{caption}</figcaption></figure>"
    )


def figure_html(fig, fig_id: str, caption: str, alt: str) -> str:
    """Embed a Figure as base64 SVG inside <figure> (vector: sharp on any screen, and smaller and faster
    to write than a PNG of the same sharpness); ``width``/``height`` give its CSS size (100 px per inch).
    The figure is cleared afterwards."""
    width_in, height_in = fig.get_size_inches()
    data = base64.b64encode(svg_bytes(fig)).decode("ascii")
    fig.clear()
    return _figure(
        f"data:image/svg+xml;base64,{data}", round(width_in * 100), round(height_in * 100), fig_id, caption, alt
    )


def svg_figure_html(chart: SvgChart, fig_id: str, caption: str, alt: str) -> str:
    """Embed an SVG written directly (:mod:`planner.outputs.svgdraw`) the same way as :func:`figure_html`."""
    return _figure(chart.data_uri(), chart.width_px, chart.height_px, fig_id, caption, alt)


def _label(header: str) -> str:
    """A header's text for a cell's data-label (shown beside the value when a table reflows as cards)."""
    return html.escape(html.unescape(re.sub(r"<[^>]*>", "", header)), quote=True)


def table(header: Sequence[str], rows: Sequence[Sequence[str]], cls: str = "") -> str:
    """A table; a header row of only empty cells is left out (key–value tables). Each cell carries its
    column's header as ``data-label`` so narrow screens can show rows as labelled cards."""
    labels = [_label(h) for h in header]
    head = (
        "<thead><tr>" + "".join(f"<th>{h}</th>" for h in header) + "</tr></thead>"
        if any(str(h).strip() for h in header)
        else ""
    )
    body = "".join(
        "<tr>"
        + "".join(
            f'<td data-label="{labels[i]}">{c}</td>' if i < len(labels) and labels[i] else f"<td>{c}</td>"
            for i, c in enumerate(row)
        )
        + "</tr>"
        for row in rows
    )
    return f'<table class="{cls}">{head}<tbody>{body}</tbody></table>'


CSS = """
:root { --ink:#1b2a41; --rule:#c9ced6; --soft:#f3f4f6; --warn:#8a3f72; }
* { box-sizing: border-box; }
body { font-family: system-ui, -apple-system, "Segoe UI", Roboto, "Helvetica Neue", Arial, sans-serif;
       color: var(--ink); max-width: 1240px; margin: 0 auto; padding: 1.2rem 1.4rem 3rem; line-height: 1.45;
       overflow-wrap: break-word; }
h1 { font-size: 1.6rem; margin-bottom: .2rem; }
h2 { border-bottom: 2px solid var(--ink); padding-bottom: .2rem;
     margin-top: 2.2rem; } h3 { margin-bottom: .3rem; }
.sub { color: #4a5566; margin-top: 0; }
nav ol { columns: 2; font-size: .95rem; }
table { border-collapse: collapse; margin: .6rem 0 1rem; font-size: .88rem; }
th, td { border: 1px solid var(--rule); padding: .25rem .5rem; text-align: left; vertical-align: top; }
th { background: var(--soft); } tbody tr:nth-child(even) { background: #fafafa; }
td .num, td.numcol { font-variant-numeric: tabular-nums; }
.wide { max-width: 100%; overflow-x: auto; }
table.blocks { font-size: .78rem; } table.blocks th, table.blocks td { padding: .2rem .35rem; }
table.blocks .num, table.blocks td:first-child { white-space: nowrap; }
tr.nightstart td { border-top: 2px solid var(--ink); }
figure { margin: 1rem 0; } figure img { max-width: 100%; height: auto; border: 1px solid var(--rule); }
figcaption { font-size: .88rem; color: #3d4757; margin-top: .3rem; }
details.site { border: 1px solid var(--rule); border-radius: 4px; margin: .5rem 0; padding: .3rem .7rem; }
details.site > summary { cursor: pointer; font-weight: 600; padding: .2rem 0; }
.caution { border: 2px solid var(--warn); border-left-width: 8px; padding: .6rem .9rem; margin: 1rem 0;
           background: #fbf5f9; }
.caution strong { color: var(--warn); }
.verdict-secure { font-weight: 600; } .verdict-alias-prone { font-style: italic; }
.verdict-under-covered { text-decoration: underline; }
.missing { color: #888; }
ul.key { list-style: none; padding: 0; display: flex; flex-wrap: wrap; gap: .2rem 1.2rem; font-size: .85rem; }
ul.key li { display: flex; align-items: center; gap: .4rem; }
.swatch { display: inline-block; width: 1.6rem; height: .8rem; }
@media (max-width: 760px) {
  body { padding: .6rem .7rem 2rem; }
  nav ol { columns: 1; }
  table, thead, tbody, tr, th, td { display: block; width: 100%; }
  thead { position: absolute; width: 1px; height: 1px; overflow: hidden; clip: rect(0 0 0 0); }
  tbody tr { border: 1px solid var(--rule); margin: 0 0 .6rem; }
  td { border: 0; border-bottom: 1px solid #eceef1; overflow-wrap: anywhere; }
  td[data-label]::before { content: attr(data-label) ": "; font-weight: 600; }
  table.kv td:first-child { font-weight: 600; border-bottom: 0; padding-bottom: 0; }
  tr.nightstart td { border-top: 0; } tr.nightstart { border-top: 3px solid var(--ink); }
  .wide { overflow-x: visible; }
}
@media print { nav { display: none; } h2 { break-before: page; } figure { break-inside: avoid; }
               details.site { border: 0; } }
"""


def page(title: str, subtitle: str, toc: Sequence[tuple[str, str]], body: str, version: str | None = None) -> str:
    """The report page; ``version`` is the phasewise version that wrote the files (shown in the footer)."""
    by = f"Written by phasewise {html.escape(str(version))}; rendered" if version else "Rendered by phasewise"
    nav = "".join(f'<li><a href="#{a}">{html.escape(t)}</a></li>' for a, t in toc)
    return (
        '<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8">'
        '<meta name="viewport" content="width=device-width, initial-scale=1">'
        f"<title>{html.escape(title)}</title><style>{CSS}</style></head><body>"
        f'<header><h1>{html.escape(title)}</h1><p class="sub">{subtitle}</p>'
        f'<div class="caution" role="note"><strong>Sun safety.</strong> {html.escape(SUN_SAFETY_TEXT)}</div>'
        f"<nav><ol>{nav}</ol></nav></header><main>{body}</main>"
        f'<footer><p class="sub">{by} from the files in this folder. Times are UTC unless '
        "marked local.</p></footer></body></html>\n"
    )
