"""The self-contained HTML campaign report, rendered from a plan folder's files alone.

``render_report(plan_dir)`` reads plan.csv, baseline.csv, windows.csv, geometry.csv, diagnostics.json
and campaign.toml (the files ``phasewise plan`` writes) and returns one HTML page: figures embedded as
base64 PNG, CSS inline, no scripts, nothing fetched from the network, so it opens from disk and can be
mailed. Numbers are shown as the files give them (never recomputed): each carries its exact source
value in a ``data-value`` attribute and its origin in ``data-src`` (``plan.csv:ROW:COLUMN`` or
``diagnostics.json:plan.trend.longest_gap_h``), so a test can compare the page with the files.
Every string that came from a user (target, campaign and site names, notes) goes through
:func:`html.escape`.
"""

from __future__ import annotations

import base64
import html
import io
import json
import math
import re
from collections.abc import Sequence
from dataclasses import dataclass, field
from datetime import datetime
from pathlib import Path

import numpy as np
import pandas as pd
import tomllib

from planner import plots
from planner.errors import InputError
from planner.fileio import write_text_atomic

REPORT_NAME = "report.html"
#: Solar elongation (deg) below which the report raises a Sun-safety caution (common practice; each
#: site's own min_solar_elong_deg still applies).
SOLAR_CAUTION_DEG = 45.0
#: Sun altitude (deg) above which a block edge is reported as twilight (nautical, Explanatory Supplement).
TWILIGHT_CAUTION_SUN_ALT_DEG = -12.0
#: Airmass above which a block is reported as low in the sky (common practice).
HIGH_AIRMASS = 2.5
#: Moon separation (deg) below which a block is reported (common practice).
MOON_CAUTION_SEP_DEG = 30.0

SUN_SAFETY_TEXT = (
    "Pointing a telescope near the Sun can destroy equipment and blind people. Never point or slew near "
    "the Sun, take extra care at low solar elongation and in twilight, and follow the observatory's own "
    "rules and licensed practice: they always prevail over this plan."
)


# ---------------------------------------------------------------------------------------- reading


@dataclass
class PlanFolder:
    """The files of one plan folder, as read (CSV cells kept as their exact text)."""

    path: Path
    plan: pd.DataFrame
    diagnostics: dict
    campaign: dict
    baseline: pd.DataFrame | None = None
    windows: pd.DataFrame | None = None
    geometry: pd.DataFrame | None = None
    target_name: str = ""
    sheets: list[str] = field(default_factory=list)

    @property
    def sites(self) -> list[str]:
        """Site names in the order they first appear (windows first: a site may have no block)."""
        names: dict[str, None] = {}
        for df in (self.windows, self.plan, self.baseline, self.geometry):
            if df is not None and "site" in df:
                names.update(dict.fromkeys(df["site"].astype(str)))
        return list(names)

    @property
    def nights(self) -> list[str]:
        nights: set[str] = set()
        for df in (self.windows, self.plan, self.baseline):
            if df is not None and "night" in df:
                nights |= {str(n) for n in df["night"] if str(n)}
        return sorted(nights)


def _read_csv(path: Path, required: Sequence[str]) -> pd.DataFrame:
    try:
        df = pd.read_csv(path, dtype=str, keep_default_na=False)
    except FileNotFoundError:
        raise InputError(str(path), "-", "file not found; is this a folder written by `phasewise plan`?") from None
    except (pd.errors.EmptyDataError, pd.errors.ParserError, UnicodeDecodeError) as exc:
        raise InputError(str(path), "-", f"not a readable CSV table ({exc})") from None
    missing = [c for c in required if c not in df.columns]
    if missing:
        raise InputError(str(path), missing[0], "column missing")
    return df


def _read_json(path: Path) -> dict:
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise InputError(str(path), "-", "file not found; is this a folder written by `phasewise plan`?") from None
    except (json.JSONDecodeError, UnicodeDecodeError) as exc:
        raise InputError(str(path), "-", f"not valid JSON ({exc})") from None
    if not isinstance(data, dict):
        raise InputError(str(path), "-", "expected a JSON object")
    return data


def _read_toml(path: Path) -> dict:
    try:
        with path.open("rb") as fh:
            return tomllib.load(fh)
    except FileNotFoundError:
        return {}
    except tomllib.TOMLDecodeError as exc:
        raise InputError(str(path), "-", f"not valid TOML ({exc})") from None


_BLOCK_COLUMNS = ("site", "night", "start_utc", "end_utc")


def load_plan_folder(plan_dir: str | Path) -> PlanFolder:
    """Read a plan folder. plan.csv and diagnostics.json are required; the rest is drawn when present."""
    d = Path(plan_dir)
    if not d.is_dir():
        raise InputError(str(d), "-", "not a folder; give the folder written by `phasewise plan --out`")
    plan = _read_csv(d / "plan.csv", _BLOCK_COLUMNS)
    diagnostics = _read_json(d / "diagnostics.json")
    if "plan" not in diagnostics or not isinstance(diagnostics["plan"], dict):
        raise InputError(str(d / "diagnostics.json"), "plan", "missing: expected the check result of the plan")
    campaign = _read_toml(d / "campaign.toml")
    try:
        target = _read_toml(d / "target.toml")
    except InputError:  # only the target's name is wanted; a target given as MPC lines has no TOML copy
        target = {}
    if not target.get("name") and (d / "plan.json").is_file():  # plan.json names an MPC-line target
        target = {"name": _read_json(d / "plan.json").get("target")}
    target_name = str(target.get("name") or Path(str(campaign.get("target", ""))).stem or "")

    def optional(name: str, required: Sequence[str]) -> pd.DataFrame | None:
        return _read_csv(d / name, required) if (d / name).exists() else None

    return PlanFolder(
        path=d,
        plan=plan,
        diagnostics=diagnostics,
        campaign=campaign,
        baseline=optional("baseline.csv", _BLOCK_COLUMNS),
        windows=optional("windows.csv", _BLOCK_COLUMNS),
        geometry=optional("geometry.csv", ("site", "time_utc")),
        target_name=target_name,
        sheets=sorted(p.name for p in (d / "sheets").glob("*.txt")) if (d / "sheets").is_dir() else [],
    )


# ---------------------------------------------------------------------------------------- helpers


def _utc(values) -> np.ndarray:
    return (
        pd.to_datetime(pd.Series(list(values), dtype=str), utc=True)
        .dt.tz_localize(None)
        .to_numpy(dtype="datetime64[ns]")
    )


def sheet_utc_offset_h(plan_dir: Path, site: str, night: str | None) -> float | None:
    """The site's clock offset from UTC (h) at local noon of ``night``, from the time zone its observing
    sheet names (``sheets/<slug>.txt``, line ``site: ... time zone ZONE``); None when unknown."""
    from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

    from planner.planfiles import slug

    sheet = plan_dir / "sheets" / f"{slug(site)}.txt"
    if night is None or not sheet.is_file():
        return None
    found = re.search(r"^site: .*time zone (\S+)\s*$", sheet.read_text(encoding="utf-8"), re.MULTILINE)
    if not found:
        return None
    try:
        zone = ZoneInfo(found.group(1))
        noon = datetime.fromisoformat(f"{night}T12:00").replace(tzinfo=zone)
    except (ZoneInfoNotFoundError, ValueError):
        return None
    return noon.utcoffset().total_seconds() / 3600.0


def utc_offset_h(df: pd.DataFrame | None) -> float | None:
    """The site's clock offset from UTC (h), read from paired ``start_utc``/``start_local`` cells."""
    if df is None or "start_local" not in df or df.empty:
        return None
    rows = df[(df["start_utc"] != "") & (df["start_local"] != "")]
    offsets = []
    for u, loc in zip(rows["start_utc"], rows["start_local"], strict=True):
        try:
            tu = pd.Timestamp(u)
            tl = pd.Timestamp(loc)
        except ValueError:
            continue
        if tl.tzinfo is not None:
            offsets.append(tl.utcoffset().total_seconds() / 3600.0)
        else:
            tu = tu.tz_convert(None) if tu.tzinfo is not None else tu
            offsets.append((tl - tu).total_seconds() / 3600.0)
    return float(np.median(offsets)) if offsets else None


def _float(text) -> float:
    try:
        return float(text)
    except (TypeError, ValueError):
        return math.nan


def _fmt(value, digits: int = 3) -> str:
    """Readable rounding for display; the exact value stays in data-value."""
    if isinstance(value, bool) or value is None:
        return "—" if value is None else str(value).lower()
    if isinstance(value, (int, np.integer)):
        return f"{int(value):,}".replace(",", " ")
    v = _float(value)
    if math.isnan(v):
        return "—" if str(value).strip() in ("", "nan", "NaN") else html.escape(str(value))
    if v != 0 and (abs(v) >= 1e5 or abs(v) < 0.01):
        # small rates (mag/day) keep significant figures, so 2.6e-4 and 2.7e-4 stay apart
        return f"{v:.{max(digits - 1, 2)}g}"
    return f"{v:.{digits}f}".rstrip("0").rstrip(".") if "." in f"{v:.{digits}f}" else f"{v:.{digits}f}"


def num(value, src: str, digits: int = 3, unit: str = "") -> str:
    """A number as HTML: rounded text, exact source value and origin in attributes."""
    exact = value if isinstance(value, str) else json.dumps(value)
    return (
        f'<span class="num" data-src="{html.escape(src)}" data-value="{html.escape(exact)}">'
        f"{_fmt(value, digits)}{html.escape(unit)}</span>"
    )


def _json_num(diag: dict, path: str, digits: int = 3, unit: str = "") -> str:
    value: object = diag
    for key in path.split("."):
        if isinstance(value, dict) and key in value:
            value = value[key]
        elif isinstance(value, list) and key.isdigit() and int(key) < len(value):
            value = value[int(key)]
        else:
            return '<span class="missing">—</span>'
    return num(value, f"diagnostics.json:{path}", digits, unit)


def figure_html(fig, fig_id: str, caption: str, alt: str) -> str:
    """Embed a Figure as a base64 PNG inside <figure>; the figure is closed afterwards."""
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=100, metadata={"Software": None})
    fig.clear()
    data = base64.b64encode(buf.getvalue()).decode("ascii")
    return (
        f'<figure id="{fig_id}"><img src="data:image/png;base64,{data}" alt="{html.escape(alt)}">'
        f"<figcaption>{caption}</figcaption></figure>"
    )


def _table(header: Sequence[str], rows: Sequence[Sequence[str]], cls: str = "") -> str:
    head = "".join(f"<th>{h}</th>" for h in header)
    body = "".join("<tr>" + "".join(f"<td>{c}</td>" for c in row) + "</tr>" for row in rows)
    return f'<table class="{cls}"><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>'


# ---------------------------------------------------------------------------------------- sections

CSS = """
:root { --ink:#1b2a41; --rule:#c9ced6; --soft:#f3f4f6; --warn:#8a3f72; }
* { box-sizing: border-box; }
body { font-family: system-ui, -apple-system, "Segoe UI", Roboto, "Helvetica Neue", Arial, sans-serif;
       color: var(--ink); max-width: 1100px; margin: 0 auto; padding: 1.2rem 1.4rem 3rem; line-height: 1.45; }
h1 { font-size: 1.6rem; margin-bottom: .2rem; }
h2 { border-bottom: 2px solid var(--ink); padding-bottom: .2rem;
     margin-top: 2.2rem; } h3 { margin-bottom: .3rem; }
.sub { color: #4a5566; margin-top: 0; }
nav ol { columns: 2; font-size: .95rem; }
table { border-collapse: collapse; margin: .6rem 0 1rem; font-size: .88rem; }
th, td { border: 1px solid var(--rule); padding: .25rem .5rem; text-align: left; vertical-align: top; }
th { background: var(--soft); } tbody tr:nth-child(even) { background: #fafafa; }
td .num, td.numcol { font-variant-numeric: tabular-nums; }
table.blocks { font-size: .8rem; } table.blocks td { white-space: nowrap; }
tr.nightstart td { border-top: 2px solid var(--ink); }
figure { margin: 1rem 0; } figure img { max-width: 100%; height: auto; border: 1px solid var(--rule); }
figcaption { font-size: .88rem; color: #3d4757; margin-top: .3rem; }
.caution { border: 2px solid var(--warn); border-left-width: 8px; padding: .6rem .9rem; margin: 1rem 0;
           background: #fbf5f9; }
.caution strong { color: var(--warn); }
.verdict-secure { font-weight: 600; } .verdict-alias-prone { font-style: italic; }
.verdict-under-covered { text-decoration: underline; }
.missing { color: #888; }
@media print { nav { display: none; } h2 { break-before: page; } figure { break-inside: avoid; } }
"""


def _summary_section(pf: PlanFolder) -> str:
    c = pf.campaign
    diag = pf.diagnostics
    rot = c.get("rotation", {}) if isinstance(c.get("rotation"), dict) else {}
    nights = pf.nights
    span = f"{html.escape(nights[0])} to {html.escape(nights[-1])} ({len(nights)} nights)" if nights else "—"
    rows = [
        ("Target", html.escape(pf.target_name) or "—"),
        ("Campaign", html.escape(str(c.get("name", ""))) or "—"),
        ("Sites", html.escape(", ".join(pf.sites)) or "—"),
        ("Nights (local evening dates)", span),
    ]
    if rot:
        rows.append(
            (
                "Candidate periods",
                f"{html.escape(_fmt(rot.get('min_period_h')))}–{html.escape(_fmt(rot.get('max_period_h')))} h"
                + (", double-peaked light curve assumed" if rot.get("double_peaked") else ""),
            )
        )
    if c.get("notes"):
        rows.append(("Notes", html.escape(str(c["notes"]))))
    replan = diag.get("replan")
    if isinstance(replan, dict) and replan.get("log"):
        lost = ", ".join(" ".join(str(x) for x in pair) for pair in replan.get("lost_site_nights") or []) or "none"
        rows.append(("Re-planned from", f"{html.escape(str(replan['log']))}: "
                     f"{_json_num(diag, 'replan.n_done_times')} times already observed, planning from "
                     f"{html.escape(str(replan.get('not_before_utc') or '—'))} UTC; lost site-nights: "
                     f"{html.escape(lost)}"))
    out = ['<section id="summary"><h2>Campaign summary</h2>', _table(["", ""], rows, "kv")]

    # Totals per site: sums of plan.csv / baseline.csv cells.
    head = ["Site", "plan blocks", "plan hours", "plan exposures"]
    if pf.baseline is not None:
        head += ["baseline blocks", "baseline hours"]
    trows = []

    def totals(df: pd.DataFrame | None, site: str | None) -> tuple[int, float, int]:
        if df is None or df.empty:
            return 0, 0.0, 0
        d = df if site is None else df[df["site"] == site]
        hours = float(((_utc(d["end_utc"]) - _utc(d["start_utc"])) / np.timedelta64(1, "h")).sum()) if len(d) else 0.0
        nexp = (
            int(sum(int(_float(x)) for x in d["n_exposures"] if not math.isnan(_float(x)))) if "n_exposures" in d else 0
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
    out += ["<h3>Time on target</h3>", _table(head, trows, "totals")]

    # Headline comparison, straight from diagnostics.json.
    kinds = [k for k in ("plan", "baseline") if isinstance(diag.get(k), dict)]
    crow = []

    def worst(kind: str) -> str:
        cov = diag[kind].get("coverage") or []
        if not cov:
            return "—"
        i = int(np.argmin(cov))
        return _json_num(diag, f"{kind}.coverage.{i}") + " at " + _json_num(diag, f"{kind}.periods_h.{i}", 2, " h")

    def highest_alias(kind: str) -> str:
        if not diag[kind].get("highest_alias"):
            return "—"
        return (
            _json_num(diag, f"{kind}.highest_alias.height")
            + " at "
            + _json_num(diag, f"{kind}.highest_alias.freq_per_day", 4, " c/d")
        )

    crow.append(["worst-period phase coverage"] + [worst(k) for k in kinds])
    crow.append(["highest spectral-window alias (peak beyond 2/span)"] + [highest_alias(k) for k in kinds])
    crow.append(
        ["smallest detectable fading, 3σ (mag/day)"]
        + [_json_num(diag, f"{k}.trend.min_detectable_mag_per_day", 4) for k in kinds]
    )
    crow.append(["longest gap between visits"] + [_json_num(diag, f"{k}.trend.longest_gap_h", 2, " h") for k in kinds])
    out += [
        "<h3>Plan against the baseline</h3>",
        "<p>The baseline is the plan an observer would make by hand: one block per site and night, centred "
        "on the target's highest altitude, with the same total hours.</p>",
        _table(["", *kinds], crow, "compare"),
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


def _nested_table(diag: dict, key: str, columns: Sequence[str] | None = None) -> str:
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
            cells.append(_json_num(diag, f"{key}.{c}.{r}", 4) if _is_number(v) and r in block[c] else "—")
        rows.append([_label(r), *cells])
    for r in [k for k, v in block[cols[0]].items() if isinstance(v, list) and v and isinstance(v[0], list)]:
        cells = []
        for c in cols:
            ranges = block[c].get(r) or []
            cells.append(
                ", ".join(
                    _json_num(diag, f"{key}.{c}.{r}.{i}.0", 2) + "–" + _json_num(diag, f"{key}.{c}.{r}.{i}.1", 2)
                    for i in range(len(ranges))
                )
                or "none"
            )
        rows.append([_label(r), *cells])
    return _table(["", *[_label(c) for c in cols]], rows, "kv")


def _optimiser_tables(diag: dict) -> list[str]:
    """The optimiser's objective terms and the weather Monte Carlo, as diagnostics.json gives them."""
    out = []
    obj = diag.get("objective")
    if isinstance(obj, dict):
        table = _nested_table(diag, "objective", ("heuristic", "greedy", "baseline", "exact"))
        if table:
            out += ["<h3>Optimiser objective</h3>"]
            if isinstance(obj.get("definition"), str):
                out.append(f"<p><code>{html.escape(obj['definition'])}</code></p>")
            weights = obj.get("weights")
            if isinstance(weights, dict):
                out.append(
                    "<p>Weights: "
                    + ", ".join(
                        f"{_label(k)} {_json_num(diag, f'objective.weights.{k}')}"
                        for k, v in weights.items()
                        if _is_number(v)
                    )
                    + ".</p>"
                )
            out.append(table)
        guarantee = obj.get("guarantee")
        if isinstance(guarantee, dict) and isinstance(guarantee.get("statement"), str):
            out.append(f"<p>Guarantee: {html.escape(guarantee['statement'])}</p>")
    table = _nested_table(diag, "robustness")
    if table:
        out += ["<h3>Weather robustness (Monte Carlo over each site's clear-night fraction)</h3>", table]
    return out


def _geometry_section(pf: PlanFolder) -> str:
    out = ['<section id="geometry"><h2>Geometry over the span</h2>']
    g = pf.geometry
    need = ["helio_dist_au", "obs_dist_au", "phase_angle_deg", "solar_elong_deg", "mag_pred"]
    if g is None or g.empty or any(c not in g for c in need):
        out.append('<p class="missing">geometry.csv is missing or lacks the geometry columns.</p></section>')
        return "\n".join(out)
    sites = list(dict.fromkeys(g["site"]))
    seen = "geocentre" if "geocentre" in sites else sites[0]
    gs = g[g["site"] == seen].copy()
    for c in need:
        gs[c] = pd.to_numeric(gs[c], errors="coerce")
    fig = plots.geometry_figure(gs, seen, SOLAR_CAUTION_DEG)
    out.append(
        figure_html(
            fig,
            "fig-geometry",
            f"Sun–target distance r and observer–target distance Δ (au), phase angle, solar elongation and "
            f"predicted magnitude, as seen from {html.escape(seen)} (UTC). Hatched: solar elongation below "
            f"{SOLAR_CAUTION_DEG:g}°, where Sun safety needs particular care.",
            "Geometry of the target over the campaign",
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
    out.append(_table(["", "start", "end", "minimum", "maximum"], rows, "geo"))
    out.append("</section>")
    return "\n".join(out)


def _nights_section(pf: PlanFolder) -> str:
    out = [
        '<section id="nights"><h2>Night charts per site</h2>',
        "<p>Target altitude against local clock time; grey shades deepen from civil twilight to full night; "
        "hatched: the observable window; filled with a bar on top: the planned blocks. Dotted: 20° "
        "altitude for reference.</p>",
    ]
    g = pf.geometry
    windows = pf.windows if pf.windows is not None else pd.DataFrame(columns=[*_BLOCK_COLUMNS, "reason"])
    if g is None or "alt_deg" not in g or "sun_alt_deg" not in g:
        out.append('<p class="missing">geometry.csv lacks alt_deg / sun_alt_deg: no night charts.</p>')
    else:
        for i, site in enumerate(pf.sites):
            gs = g[g["site"] == site]
            if gs.empty:
                continue
            ws = windows[windows["site"] == site]
            bs = pf.plan[pf.plan["site"] == site]
            off = utc_offset_h(ws) if utc_offset_h(ws) is not None else utc_offset_h(bs)
            if off is None:  # no window and no block: the site's sheet names its time zone
                off = sheet_utc_offset_h(pf.path, site, pf.nights[0] if pf.nights else None)
            fig = plots.site_nights_figure(site, gs, ws, bs, pf.nights, off or 0.0, 20.0)
            out.append(
                figure_html(fig, f"fig-site-{i}", f"Nights at {html.escape(site)}.", f"Altitude charts for {site}")
            )
    if pf.windows is not None:
        out.append("<h3>Windows and planned hours per night</h3>")
        rows = []
        for site in pf.sites:
            cells = [html.escape(site)]
            for night in pf.nights:
                w = pf.windows[(pf.windows["site"] == site) & (pf.windows["night"] == night)]
                p = pf.plan[(pf.plan["site"] == site) & (pf.plan["night"] == night)]
                hours = sum(_float(h) for h in w.get("hours", []) if not math.isnan(_float(h)))
                planned = (
                    float(((_utc(p["end_utc"]) - _utc(p["start_utc"])) / np.timedelta64(1, "h")).sum())
                    if len(p)
                    else 0.0
                )
                reasons = "; ".join(html.escape(r) for r in w.get("reason", []) if r)
                text = f"{hours:.1f} h window, {planned:.1f} h planned" if hours > 0 else "no window"
                cells.append(text + (f"<br><small>{reasons}</small>" if reasons else ""))
            rows.append(cells)
        out.append(_table(["Site", *[html.escape(n) for n in pf.nights]], rows, "windows"))
    out.append("</section>")
    return "\n".join(out)


def _timeline_section(pf: PlanFolder) -> str:
    windows = pf.windows if pf.windows is not None else pd.DataFrame(columns=list(_BLOCK_COLUMNS))
    fig = plots.network_timeline_figure(pf.sites, windows, pf.plan, pf.baseline)
    return (
        '<section id="timeline"><h2>Network timeline</h2>'
        + figure_html(
            fig,
            "fig-timeline",
            "Every site on one UTC axis. Hatched outline: observable window; upper half: the optimised "
            "plan's "
            "blocks; lower dashed half: the baseline's blocks.",
            "Timeline of all sites' blocks",
        )
        + "</section>"
    )


def diagnostics_sections(
    series: Sequence[plots.Series],
    keys: Sequence[str],
    min_period_h: float | None = None,
    max_period_h: float | None = None,
) -> str:
    """The coverage, spectral-window, recovery and sensitivity sections for one or more schedules.

    ``keys`` name each schedule's check result inside diagnostics.json (``plan``, ``baseline``; for a
    stand-alone check, ``""``), used in the data-src of every number.
    """

    def src(key: str, path: str) -> str:
        return f"{key}.{path}" if key else path

    def jnum(key: str, check: dict, path: str, digits: int = 3, unit: str = "") -> str:
        return _json_num({key: check} if key else check, src(key, path), digits, unit)

    out = []
    if any(s.check.get("periods_h") for s in series):
        fig = plots.coverage_figure(series)
        out.append(
            '<section id="coverage"><h2>Rotational-phase coverage</h2>'
            + figure_html(
                fig,
                "fig-coverage",
                "Left: the observation times folded on every trial period, in the check's phase bins (dark = "
                "that phase is observed; phase zero at the first time). Right: fraction of phase covered per "
                "period, as computed by the check.",
                "Coverage map, period against rotational phase",
            )
            + "</section>"
        )
    fig = plots.spectral_window_figure(series)
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
        + figure_html(
            fig,
            "fig-window",
            "Spectral window |W(f)| of the exposure times (Deeming 1975). A tall peak at f_w means a period "
            "P is confused with 1/(1/P ± f_w): one site alone gives 1 cycle/day; sites at other longitudes "
            "lower it. Triangles: principal peaks found by the check.",
            "Spectral window",
        )
        + _table(["schedule", "frequency (c/d)", "height"], peak_rows, "peaks")
        + "</section>"
    )
    fig = plots.recovery_figure(series, min_period_h, max_period_h)
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
                    ", ".join(jnum(key, s.check, f"bands.{i}.confusable_periods_h.{j}", 3) for j in range(len(conf)))
                    or "—",
                ]
            )
    out.append(
        '<section id="recovery"><h2>Recovery of injected periods</h2>'
        + figure_html(
            fig,
            "fig-recovery",
            "Fraction of synthetic light curves whose period is recovered, against period; strips below: the "
            "verdict per period band (blank: secure; hatched grey: alias-prone; dark crossed: "
            "under-covered).",
            "Recovery fraction against period",
        )
        + _table(["schedule", "periods (h)", "verdict", "confusable with (h)"], band_rows, "bands")
        + "</section>"
    )
    fig = plots.sensitivity_figure(series)
    trow = []
    for name, path, d in (
        ("rate uncertainty, 1σ (mag/day)", "trend.rate_sigma_mag_per_day", 4),
        ("smallest detectable fading, 3σ (mag/day)", "trend.min_detectable_mag_per_day", 4),
        ("longest gap between visits (h)", "trend.longest_gap_h", 2),
    ):
        trow.append([name] + [jnum(k, s.check, path, d) for k, s in zip(keys, series, strict=True)])
    out.append(
        '<section id="sensitivity"><h2>Trend and period-change sensitivity</h2>'
        + figure_html(
            fig,
            "fig-sensitivity",
            "Left: the smallest change of period between the first and second half of the span detectable at "
            "3σ. Right: the smallest extra fading detectable at 3σ (with rotation fitted at the same time) "
            "and "
            "the longest gap between visits, i.e. how late an outburst or sudden fade would be noticed.",
            "Trend and period-change sensitivity",
        )
        + _table(["", *[html.escape(s.label) for s in series]], trow, "trend")
        + "</section>"
    )
    return "\n".join(out)


_TABLE_COLUMNS = [
    # (header, columns shown together in one cell, digits or None for times)
    ("local time", ("start_local", "end_local"), None),
    ("UTC", ("start_utc", "end_utc"), None),
    ("exposures × s", ("n_exposures", "exposure_s"), 0),
    ("RA, Dec (°)", ("ra_deg", "dec_deg"), 4),
    ("motion (″/min, PA °)", ("motion_arcsec_min", "motion_pa_deg"), 2),
    ("altitude (°)", ("alt_min_deg", "alt_max_deg"), 1),
    ("airmass", ("airmass_min", "airmass_max"), 2),
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


def _short_time(text: str) -> str:
    """'2034-03-16T20:15:00-10:00' → '03-16 20:15' (the exact text stays in data-value)."""
    s = str(text)
    return f"{s[5:10]} {s[11:16]}" if len(s) >= 16 and s[10] in "T " else s


def _blocks_section(pf: PlanFolder) -> str:
    plan = pf.plan
    cols = [(h, [c for c in cs if c in plan.columns], d) for h, cs, d in _TABLE_COLUMNS]
    cols = [(h, cs, d) for h, cs, d in cols if cs]
    order = plan.assign(_k=_utc(plan["start_utc"])).sort_values(["night", "_k"]).index if len(plan) else []
    rows, classes, last = [], [], None
    for i in order:
        r = plan.loc[i]
        cells = [html.escape(str(r["night"])), html.escape(str(r["site"]))]
        for header, names, digits in cols:
            parts, shown = [], ""
            for c in names:
                v = r[c]
                if digits is None:
                    text = _short_time(v)
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
    head = "".join(f"<th>{html.escape(h)}</th>" for h in ["night", "site", *[h for h, _, _ in cols]])
    body = "".join(
        ('<tr class="nightstart">' if new else "<tr>") + "".join(f"<td>{c}</td>" for c in row) + "</tr>"
        for row, new in zip(rows, classes, strict=True)
    )
    return (
        '<section id="table"><h2>Night by night</h2><p>One row per planned block, from plan.csv. Local '
        "times are the site's clock; RA/Dec at mid-block (track at the given motion for non-sidereal "
        "targets).</p>" + f'<div style="overflow-x:auto"><table class="blocks"><thead><tr>{head}</tr></thead>'
        f"<tbody>{body}</tbody></table></div></section>"
    )


def _block_label(r: pd.Series) -> str:
    return f"{html.escape(r['site'])} {html.escape(_short_time(r['start_utc']))} UTC"


def _flagged_blocks(plan: pd.DataFrame, column: str, test) -> list[str]:
    """Blocks whose plan.csv ``column`` passes ``test``, each with the value as written in the file."""
    if column not in plan:
        return []
    return [
        f"{_block_label(r)} ({num(r[column], f'plan.csv:{i}:{column}', 1)})"
        for i, r in plan.iterrows()
        if test(_float(r[column]))
    ]


def _twilight_from_geometry(pf: PlanFolder) -> list[str]:
    """Blocks with the Sun above the caution altitude at an edge, from geometry.csv (nearest sample)."""
    g, out = pf.geometry, []
    if g is None or "sun_alt_deg" not in g:
        return out
    for _, r in pf.plan.iterrows():
        gs = g[g["site"] == r["site"]]
        if gs.empty:
            continue
        t = _utc(gs["time_utc"])
        sun = pd.to_numeric(gs["sun_alt_deg"], errors="coerce").to_numpy()
        k = [int(np.argmin(np.abs(t - _utc([r[e]])[0]))) for e in ("start_utc", "end_utc")]
        if max(sun[k]) > TWILIGHT_CAUTION_SUN_ALT_DEG:
            out.append(f"{_block_label(r)} (Sun at {max(sun[k]):.1f}°)")
    return out


def _cautions_section(pf: PlanFolder) -> str:
    items = [f"<li><strong>Sun safety.</strong> {html.escape(SUN_SAFETY_TEXT)}</li>"]
    g, plan = pf.geometry, pf.plan
    if g is not None and "solar_elong_deg" in g and len(g):
        e = pd.to_numeric(g["solar_elong_deg"], errors="coerce")
        i = e.idxmin()
        if e[i] < SOLAR_CAUTION_DEG:
            items.append(
                f"<li><strong>Low solar elongation:</strong> the target comes within "
                f"{num(g.at[i, 'solar_elong_deg'], f'geometry.csv:{i}:solar_elong_deg', 1, '°')} of the Sun "
                f"({html.escape(g.at[i, 'time_utc'])} UTC). Check each site's Sun-avoidance limit and never "
                "slew across the Sun.</li>"
            )
    checks = [
        (
            "solar_elong_deg",
            lambda v: v < SOLAR_CAUTION_DEG,
            f"Blocks at solar elongation below {SOLAR_CAUTION_DEG:g}°",
            "keep well clear of the Sun",
        ),
        (
            "sun_alt_max_deg",
            lambda v: v > TWILIGHT_CAUTION_SUN_ALT_DEG,
            f"Twilight: blocks with the Sun above {TWILIGHT_CAUTION_SUN_ALT_DEG:g}° (highest Sun altitude)",
            "follow the site's rules for twilight pointing",
        ),
        (
            "airmass_max",
            lambda v: v > HIGH_AIRMASS,
            f"Low in the sky: airmass above {HIGH_AIRMASS:g}",
            "expect extinction and seeing losses; check the horizon",
        ),
        (
            "moon_sep_deg",
            lambda v: v < MOON_CAUTION_SEP_DEG,
            f"Moon closer than {MOON_CAUTION_SEP_DEG:g}°",
            "expect a bright, graded sky background",
        ),
    ]
    for column, test, title, advice in checks:
        bad = _flagged_blocks(plan, column, test)
        if column == "sun_alt_max_deg" and column not in plan:
            bad = _twilight_from_geometry(pf)
        if bad:
            items.append(f"<li><strong>{html.escape(title)}:</strong> {'; '.join(bad)}; {html.escape(advice)}.</li>")
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


def _page(title: str, subtitle: str, toc: Sequence[tuple[str, str]], body: str) -> str:
    nav = "".join(f'<li><a href="#{a}">{html.escape(t)}</a></li>' for a, t in toc)
    return (
        '<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8">'
        '<meta name="viewport" content="width=device-width, initial-scale=1">'
        f"<title>{html.escape(title)}</title><style>{CSS}</style></head><body>"
        f'<header><h1>{html.escape(title)}</h1><p class="sub">{subtitle}</p>'
        f'<div class="caution" role="note"><strong>Sun safety.</strong> {html.escape(SUN_SAFETY_TEXT)}</div>'
        f"<nav><ol>{nav}</ol></nav></header><main>{body}</main>"
        '<footer><p class="sub">Rendered by phasewise from the files in this folder. Times are UTC unless '
        "marked local.</p></footer></body></html>\n"
    )


_DIAG_TOC = [
    ("coverage", "Rotational-phase coverage"),
    ("window", "Spectral window and aliases"),
    ("recovery", "Recovery of injected periods"),
    ("sensitivity", "Trend and period-change sensitivity"),
]


def render_report(plan_dir: str | Path) -> str:
    """The campaign report of a plan folder, as one self-contained HTML page."""
    pf = load_plan_folder(plan_dir)
    diag = pf.diagnostics
    series = [plots.plan_series(check=diag["plan"])]
    keys = ["plan"]
    if pf.baseline is not None and isinstance(diag.get("baseline"), dict):
        series.append(plots.baseline_series(check=diag["baseline"]))
        keys.append("baseline")
    rot = pf.campaign.get("rotation", {}) if isinstance(pf.campaign.get("rotation"), dict) else {}
    body = "\n".join(
        [
            _summary_section(pf),
            _geometry_section(pf),
            _nights_section(pf),
            _timeline_section(pf),
            diagnostics_sections(series, keys, rot.get("min_period_h"), rot.get("max_period_h")),
            _blocks_section(pf),
            _cautions_section(pf),
        ]
    )
    title = f"Campaign report: {pf.target_name or pf.campaign.get('name') or pf.path.name}"
    subtitle = html.escape(str(pf.campaign.get("name", ""))) + (f" · {len(pf.sites)} sites · {len(pf.nights)} nights")
    toc = [
        ("summary", "Campaign summary"),
        ("geometry", "Geometry over the span"),
        ("nights", "Night charts"),
        ("timeline", "Network timeline"),
        *_DIAG_TOC,
        ("table", "Night by night"),
        ("cautions", "Cautions"),
    ]
    return _page(title, subtitle, toc, body)


def write_report(plan_dir: str | Path) -> Path:
    """Render the report of ``plan_dir`` and write it atomically as ``plan_dir/report.html``."""
    text = render_report(plan_dir)
    return write_text_atomic(Path(plan_dir) / REPORT_NAME, text)


def render_check_report(check: dict, title: str = "Sampling check", source: str = "") -> str:
    """The diagnostics sections alone, for one check result (``phasewise check --report FILE``).

    ``check`` is ``CheckResult.to_dict()`` (the ``phasewise check`` JSON); its ``input.times_utc`` are
    the times drawn. ``source`` names the log, shown as text.
    """
    times = plots.check_times_utc(check, np.array([], dtype="datetime64[ns]"))
    s = plots.Series(label="observations", check=check, times_utc=times)
    settings = check.get("settings") or {}
    inp = check.get("input") or {}
    rows = [
        ["times", _json_num(check, "input.n_times")],
        ["first, last (UTC)", html.escape(f"{inp.get('first_utc') or '—'}, {inp.get('last_utc') or '—'}")],
        ["span", _json_num(check, "input.baseline_h", 2, " h")],
        ["sites", html.escape(", ".join(f"{k} ({v})" for k, v in (inp.get("sites") or {}).items())) or "—"],
        [
            "candidate periods",
            _json_num(check, "settings.min_period_h", 3) + "–" + _json_num(check, "settings.max_period_h", 3) + " h",
        ],
        ["injected light curves", _json_num(check, "settings.trials")],
    ]
    notes = "".join(f"<li>{html.escape(str(n))}</li>" for n in check.get("notes") or [])
    body = (
        '<section id="summary"><h2>What was checked</h2>'
        + _table(["", ""], rows, "kv")
        + (f"<ul>{notes}</ul>" if notes else "")
        + "</section>"
    )
    body += diagnostics_sections([s], [""], settings.get("min_period_h"), settings.get("max_period_h"))
    body += '<section id="cautions"><h2>Cautions</h2><ul><li>' + html.escape(SUN_SAFETY_TEXT) + "</li></ul></section>"
    subtitle = f"{times.size} observation times" + (f" from {html.escape(source)}" if source else "")
    return _page(title, subtitle, [("summary", "What was checked"), *_DIAG_TOC, ("cautions", "Cautions")], body)
