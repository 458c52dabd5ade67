"""``phasewise windows``: when the target can be observed from each site, night by night, and why not."""

from __future__ import annotations

import json
import sys
from pathlib import Path
from typing import TYPE_CHECKING, Annotated

import typer

from planner.commands.common import TableFormat, exposure_rules, stamped, table_format
from planner.inputs.settings import ExposureRules

if TYPE_CHECKING:
    import pandas as pd

_TIME_COLUMNS = ("start_utc", "end_utc", "best_utc")

_EDGE_WORD = {
    "twilight": "twilight",
    "noon": "noon",
    "horizon": "horizon",
    "hour_angle": "HA limit",
    "dec_range": "dec limit",
    "moon": "Moon",
    "sun_elong": "Sun",
    "allocation": "allocation",
}


def _plain(df: pd.DataFrame) -> pd.DataFrame:
    """Times as ISO 8601 UTC strings to the second ('' for none); numbers rounded for reading."""
    import numpy as np

    from planner.core.timegrid import iso_utc

    out = df.copy()
    for c in _TIME_COLUMNS:
        t = out[c].to_numpy(dtype="datetime64[ns]")
        out[c] = ["" if np.isnat(x) else s for x, s in zip(t, iso_utc(t, seconds=True), strict=True)]
    return out


def render_csv(df: pd.DataFrame) -> str:
    return _plain(df).to_csv(index=False, float_format="%.4f", lineterminator="\n")


def render_json(df: pd.DataFrame) -> str:
    from planner.core.safety import SUN_SAFETY_TEXT

    rows = json.loads(_plain(df).to_json(orient="records", double_precision=6))
    doc = stamped({"caution": SUN_SAFETY_TEXT, "windows": rows})
    return json.dumps(doc, indent=1, ensure_ascii=False) + "\n"


def render_ecsv(df: pd.DataFrame) -> str:
    """The CSV's rows with units and UTC times (ECSV); the Sun-safety caution in the metadata."""
    from planner.core.safety import SUN_SAFETY_TEXT
    from planner.outputs.tablefiles import ecsv_text

    return ecsv_text(df, stamped({"caution": SUN_SAFETY_TEXT}), "%.6g")


def _hhmm(iso_local: str) -> str:
    return iso_local[11:16] if iso_local else ""


def _exposures(r: pd.Series) -> str:
    """``n × t s`` for the window's allowed hours, or blank where the site has no instrument."""
    import pandas as pd

    n, t = r.get("n_exposures_window"), r.get("exposure_s")
    if n is None or t is None or pd.isna(n) or pd.isna(t):
        return ""
    return f"{int(n)}×{t:.0f}s"


def _snr(r: pd.Series) -> str:
    import pandas as pd

    v = r.get("snr_pred")
    return "" if v is None or pd.isna(v) else f"{v:.0f}"


def render_table(df: pd.DataFrame, sites) -> str:
    """One block per site: local and UTC times, hours, the night's budget, best moment and a short note."""
    import numpy as np

    from planner.core.safety import SUN_CAUTION_MARGIN_DEG, SUN_SAFETY_TEXT, TWILIGHT_CAUTION_SUN_ALT_DEG
    from planner.core.timegrid import iso_utc

    lines = []
    for s in sites:
        rows = df[df["site"] == s.name]
        alloc = (
            "all dark time"
            if s.allocation.unlimited
            else f"{s.allocation.hours_per_night:g} h per night"
            if s.allocation.hours_per_night is not None
            else f"{len(s.allocation.granted_utc)} UTC block(s)"
        )
        offset = rows["start_local"].str[-6:].replace("", np.nan).dropna()
        zone = f"{s.timezone} (UTC{offset.iloc[0]})" if len(offset) else s.timezone
        lines += [
            f"{s.name}  lat {s.latitude_deg:+.3f}  lon {s.longitude_deg:+.3f}  {zone}",
            f"  night ends at {s.twilight} twilight (Sun {s.night_sun_alt_deg:g}°), altitude ≥ "
            f"{s.min_alt_deg:g}°{' with horizon mask' if s.horizon else ''}, allocation: {alloc}",
            f"  {'night':<10}  {'local':<11}  {'UTC':<11}  {'hours':>5}  {'budget':>6}  {'best':>5}  "
            f"{'alt':>4}  {'X':>4}  {'moon':>8}  {'mag':>5}  {'exposures':>11}  {'S/N':>4}  note",
        ]
        flagged = False
        for _, r in rows.iterrows():  # output rows, not epochs
            if r["hours"] == 0:
                lines.append(
                    f"  {r['night']:<10}  {'-':<11}  {'-':<11}  {0:5.2f}  {'':>6}  {'':>5}  {'':>4}  "
                    f"{'':>4}  {'':>8}  {'':>5}  {'':>11}  {'':>4}  {r['reason']}" + ("  !" if r["caution"] else "")
                )
                flagged |= bool(r["caution"])
                continue
            utc = [iso_utc(np.array([r[c]], dtype="datetime64[ns]"))[0][11:16] for c in _TIME_COLUMNS]
            moon = f"{r['moon_sep_deg']:3.0f}° {100 * r['moon_illum']:2.0f}%"
            note = f"{_EDGE_WORD.get(r['start_limit'], r['start_limit'])} → {_EDGE_WORD.get(r['end_limit'], '')}"
            if r["caution"]:
                note += "  !"
                flagged = True
            lines.append(
                f"  {r['night']:<10}  {_hhmm(r['start_local'])}–{_hhmm(r['end_local'])}  "
                f"{utc[0]}–{utc[1]}  {r['hours']:5.2f}  {r['night_budget_h']:6.2f}  {utc[2]:>5}  "
                f"{r['max_alt_deg']:4.0f}  {r['min_airmass']:4.2f}  {moon:>8}  {r['mag_pred']:5.1f}  "
                f"{_exposures(r):>11}  {_snr(r):>4}  {note}"
            )
        if flagged:
            lines.append(
                f"  ! opens or closes in twilight with the Sun above {TWILIGHT_CAUTION_SUN_ALT_DEG:g}°, or the Sun is "
                f"within {SUN_CAUTION_MARGIN_DEG:g}° of the site's elongation limit: keep clear of the Sun's side "
                "of the sky. " + SUN_SAFETY_TEXT
            )
        lines.append("")
    lines.append(
        "hours: window length; budget: hours the allocation allows that night; best: UTC of highest "
        "altitude; X: airmass there; moon: separation and illuminated fraction there; mag: predicted "
        "magnitude; exposures: how many of what length fit the budget (sites with an instrument, "
        "exposure set by the S/N goal, the --min-exposure floor or the trailing limit); S/N: per "
        "exposure; note: what opens → closes each window."
    )
    return "\n".join(lines) + "\n"


def register(app: typer.Typer) -> None:
    @app.command("windows")
    def windows(
        target: Annotated[
            Path, typer.Option("--target", metavar="FILE", help="target file (TOML or MPC one-line orbit)")
        ],
        site: Annotated[list[Path], typer.Option("--site", metavar="FILE", help="site file; repeat for several sites")],
        start: Annotated[str, typer.Option("--start", metavar="DATE", help="first night, by the local date it begins")],
        nights: Annotated[int, typer.Option("--nights", min=1, max=366, metavar="N", help="number of nights")] = 7,
        step: Annotated[
            str, typer.Option("--step", metavar="DURATION", help="coarse grid step; edges are then refined")
        ] = "5m",
        fmt: Annotated[
            TableFormat | None,
            typer.Option("--format", help="table, csv, json or ecsv (default: table, or --out's extension)"),
        ] = None,
        out: Annotated[
            Path | None, typer.Option("--out", metavar="FILE", help="write here (atomically), not to the screen")
        ] = None,
        snr: Annotated[
            float,
            typer.Option("--snr", min=1.0, metavar="S/N", help="S/N goal per exposure (sites with an instrument)"),
        ] = ExposureRules.snr_target,
        min_exposure: Annotated[
            str,
            typer.Option(
                "--min-exposure", metavar="DURATION", help="shortest exposure worth taking (trailing may cut it)"
            ),
        ] = f"{ExposureRules.min_exposure_s:g}s",
        object_name: Annotated[
            str | None, typer.Option("--object", metavar="NAME", help="which line of a multi-line MPC .txt file")
        ] = None,
    ) -> None:
        """Observable windows per site and night, with the reason when there is none.

        Sites with an instrument table also get the exposure plan at each window's best moment."""
        import numpy as np

        from planner.core.fileio import check_outputs, write_text_atomic
        from planner.core.timegrid import check_nights_in_span, parse_date, parse_duration_s
        from planner.inputs.sites import load_site
        from planner.inputs.targets import load_target
        from planner.photometry.tables import window_photometry
        from planner.sky.propagation import approach_warnings_utc
        from planner.visibility.windows import observable_windows

        fmt = table_format(fmt, out)
        first = parse_date(start, field="start")
        check_nights_in_span(first, nights, "command line", "start")
        step_s = parse_duration_s(step, field="step")
        check_outputs((out, "--out"))
        sites = [load_site(p) for p in site]
        tgt = load_target(target, object_name)
        df = observable_windows(tgt, sites, first, nights, step_s=step_s)
        span = (
            np.datetime64(first.isoformat(), "ns") - np.timedelta64(12, "h"),
            np.datetime64(first.isoformat(), "ns") + np.timedelta64(nights + 1, "D"),
        )
        for note in approach_warnings_utc(tgt, *span):
            print(f"note: {note}", file=sys.stderr)
        df = df.join(
            window_photometry(
                df,
                tgt,
                sites,
                rules=exposure_rules(snr, parse_duration_s(min_exposure, field="min-exposure")),
            )
        )
        text = {
            "table": lambda: render_table(df, sites),
            "csv": lambda: render_csv(df),
            "json": lambda: render_json(df),
            "ecsv": lambda: render_ecsv(df),
        }[fmt]()
        if out is None:
            typer.echo(text, nl=False)
        else:
            write_text_atomic(out, text)
