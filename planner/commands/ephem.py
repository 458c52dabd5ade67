"""``phasewise ephem``: geometry table of a target from the geocentre or from sites over a time span."""

from __future__ import annotations

import json
import math
import sys
from pathlib import Path
from typing import TYPE_CHECKING, Annotated

import typer

from planner.commands.common import TableFormat, exposure_rules, stamped, table_format
from planner.core.errors import InputError
from planner.inputs.settings import ExposureRules

if TYPE_CHECKING:
    import pandas as pd

MAX_ROWS = 200_000

# (column, header, unit, format) for the people's table; site-only columns at the end.
_TABLE_COLUMNS = [
    ("ra_deg", "RA", "deg", "{:8.4f}"),
    ("dec_deg", "Dec", "deg", "{:8.4f}"),
    ("helio_dist_au", "r", "au", "{:7.4f}"),
    ("obs_dist_au", "Delta", "au", "{:7.4f}"),
    ("phase_angle_deg", "phase", "deg", "{:6.2f}"),
    ("solar_elong_deg", "elong", "deg", "{:6.1f}"),
    ("motion_arcsec_per_min", "motion", '"/min', "{:7.3f}"),
    ("motion_pa_deg", "PA", "deg", "{:6.1f}"),
    ("sunward_pa_deg", "sun PA", "deg", "{:6.1f}"),
    ("mag_pred", "mag", "mag", "{:6.2f}"),
    ("km_per_arcsec", "scale", 'km/"', "{:7.1f}"),
]
_SITE_TABLE_COLUMNS = [
    ("alt_deg", "alt", "deg", "{:6.1f}"),
    ("az_deg", "az", "deg", "{:6.1f}"),
    ("airmass", "airm", "", "{:5.2f}"),
    ("hour_angle_h", "HA", "h", "{:6.2f}"),
    ("sun_alt_deg", "sun alt", "deg", "{:6.1f}"),
    ("moon_sep_deg", "moon sep", "deg", "{:6.1f}"),
    ("moon_illum", "moon", "frac", "{:5.2f}"),
]
# Photometry columns, for sites with an [instrument] (docs/formats.md "Photometry columns").
_PHOT_TABLE_COLUMNS = [
    ("mag_band_pred", "mag band", "mag", "{:6.2f}"),
    ("sky_mag_arcsec2", "sky", 'mag/"2', "{:5.2f}"),
    ("aperture_arcsec", "aper", '"', "{:5.1f}"),
    ("exposure_s", "exp", "s", "{:6.1f}"),
    ("snr_pred", "S/N", "", "{:6.1f}"),
    ("mag_err_pred", "sigma", "mag", "{:6.3f}"),
    ("n_exposures_per_hour", "n/h", "", "{:4.0f}"),
    ("afrho_cm", "Afrho", "cm", "{:7.1f}"),
]


def _cell(fmt: str, value: float) -> str:
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "-"
    return fmt.format(value)


def render_table(frames: dict[str, pd.DataFrame], caution: str | None) -> str:
    """Aligned text for people: units in the header, RA/Dec also in sexagesimal."""
    from planner.core.textfmt import dec_dms, ra_hms
    from planner.core.timegrid import iso_utc
    from planner.sky.brightness import format_law

    blocks = []
    for name, frame in frames.items():
        cols = list(_TABLE_COLUMNS) + (list(_SITE_TABLE_COLUMNS) if "alt_deg" in frame else [])
        cols += [c for c in _PHOT_TABLE_COLUMNS if c[0] in frame]
        headers = ["time_utc", "RA (h m s)", "Dec (d m s)"] + [h for _, h, _, _ in cols] + ["!"]
        units = ["", "", ""] + [u for _, _, u, _ in cols] + [""]
        body = [
            iso_utc(frame["time_utc"].to_numpy()),
            [ra_hms(v, 2, letters=False) for v in frame["ra_deg"]],
            [dec_dms(v, 1, letters=False) for v in frame["dec_deg"]],
        ]
        for col, _, _, fmt in cols:
            body.append([_cell(fmt, v) for v in frame[col].to_numpy(dtype=float)])
        body.append(["SUN" if flag else "" for flag in frame["low_solar_elong"]])
        widths = [
            max(len(h), len(u), *(len(v) for v in column)) if len(column) else max(len(h), len(u))
            for h, u, column in zip(headers, units, body, strict=True)
        ]
        law = format_law(frame.attrs.get("mag_law", ""), frame.attrs.get("mag_params", {}))
        lines = [
            f"# {frame.attrs.get('target', '')} from {name}; predicted magnitude: "
            f"{law} in {frame.attrs.get('law_band', 'V')}; RA/Dec astrometric ICRF"
            + (f"; {frame.attrs['air']}" if "air" in frame.attrs else "")
            + (f"; mag band = {_band_words(frame)}" if "band" in frame else "")
        ]
        lines.append("  ".join(h.rjust(w) for h, w in zip(headers, widths, strict=True)).rstrip())
        lines.append("  ".join(u.rjust(w) for u, w in zip(units, widths, strict=True)).rstrip())
        for row in zip(*body, strict=True):
            lines.append("  ".join(v.rjust(w) for v, w in zip(row, widths, strict=True)).rstrip())
        blocks.append("\n".join(lines))
    text = "\n\n".join(blocks) + "\n"
    if caution:
        text = f"# {caution}\n# '!' = SUN marks epochs below the limit.\n" + text
    return text


def _band_words(frame: pd.DataFrame) -> str:
    """``R, colours solar (comet default)``: the instrument's band and the colours that reach it."""
    colours = frame.attrs.get("colour_indices") or {}
    shown = ", ".join(f"{k} {v:.2f}" for k, v in colours.items())
    return f"{frame['band'].iloc[0]} (colours {shown}: {frame.attrs.get('colour_source', '')})"


def _long_frame(frames: dict[str, pd.DataFrame]) -> pd.DataFrame:
    import pandas as pd

    from planner.core.timegrid import iso_utc

    parts = []
    for name, frame in frames.items():
        part = frame.copy()
        part.insert(0, "site", name)
        part["time_utc"] = iso_utc(frame["time_utc"].to_numpy(), seconds=True)
        parts.append(part)
    return pd.concat(parts, ignore_index=True)


def render_csv(frames: dict[str, pd.DataFrame]) -> str:
    from planner.outputs.tablefiles import csv_text

    return csv_text(_long_frame(frames), "%.10g")


def render_json(frames: dict[str, pd.DataFrame], caution: str | None) -> str:
    first = next(iter(frames.values()))
    rows = json.loads(_long_frame(frames).to_json(orient="records", double_precision=10))
    doc = {
        "target": first.attrs.get("target"),
        "mag_law": first.attrs.get("mag_law"),
        "mag_params": first.attrs.get("mag_params", {}),
        "law_band": first.attrs.get("law_band"),
        "colour_indices": first.attrs.get("colour_indices"),
        "colour_source": first.attrs.get("colour_source"),
        "min_solar_elong_deg": first.attrs.get("min_solar_elong_deg"),
        "caution": caution,
        "rows": rows,
    }
    return json.dumps(stamped(doc), indent=1, ensure_ascii=False) + "\n"


def render_ecsv(frames: dict[str, pd.DataFrame], caution: str | None) -> str:
    """The same rows as the CSV, with units, UTC times and the header's facts as metadata (ECSV)."""
    from planner.outputs.tablefiles import ecsv_text

    return ecsv_text(frames, stamped({"caution": caution}), "%.10g")


_Target = Annotated[
    Path, typer.Option("--target", metavar="FILE", help="Target file: TOML, or .txt of MPC orbit lines.")
]
_Start = Annotated[str, typer.Option("--start", metavar="TIME", help="First epoch, UTC ISO 8601.")]
_Stop = Annotated[str, typer.Option("--stop", metavar="TIME", help="Last epoch, UTC ISO 8601.")]
_Object = Annotated[
    str | None, typer.Option("--object", metavar="NAME", help="Which line of a multi-line MPC .txt file.")
]
_Sites = Annotated[
    list[Path] | None, typer.Option("--site", metavar="FILE", help="Site file (repeatable); none: geocentre.")
]
_Step = Annotated[str, typer.Option("--step", metavar="DURATION", help="Grid step: 30s, 5m, 1h, 1d.")]
_Format = Annotated[
    TableFormat | None,
    typer.Option("--format", help="table (for people), csv, json or ecsv (default: table, or --out's extension)."),
]
_Out = Annotated[Path | None, typer.Option("--out", metavar="FILE", help="Write here (atomically), not to stdout.")]
_MinElong = Annotated[
    float | None,
    typer.Option("--min-elong", metavar="DEG", help="Solar-elongation caution limit, deg (default 30)."),
]
_Snr = Annotated[
    float, typer.Option("--snr", min=1.0, metavar="S/N", help="S/N goal per exposure (sites with an instrument).")
]
_MinExp = Annotated[
    str,
    typer.Option("--min-exposure", metavar="DURATION", help="Shortest exposure worth taking (trailing may cut it)."),
]


def register(app: typer.Typer) -> None:
    @app.command("ephem")
    def ephem(
        target: _Target,
        start: _Start,
        stop: _Stop,
        object_name: _Object = None,
        site: _Sites = None,
        step: _Step = "1h",
        fmt: _Format = None,
        out: _Out = None,
        min_elong: _MinElong = None,
        snr: _Snr = ExposureRules.snr_target,
        min_exposure: _MinExp = f"{ExposureRules.min_exposure_s:g}s",
    ) -> None:
        """Geometry table: RA/Dec, r, Delta, phase, elongation, motion, magnitude; alt/az per site."""
        import numpy as np

        from planner.core.fileio import check_outputs, write_text_atomic
        from planner.core.safety import DEFAULT_MIN_SOLAR_ELONG_DEG
        from planner.core.timegrid import parse_duration_s, parse_utc, time_grid
        from planner.inputs.sites import load_site
        from planner.inputs.targets import load_target
        from planner.photometry.tables import add_photometry
        from planner.sky.geometry import geometry, safety_warning
        from planner.sky.propagation import approach_warnings_utc
        from planner.sky.skydata import utc_times

        fmt = table_format(fmt, out)
        min_elong = DEFAULT_MIN_SOLAR_ELONG_DEG if min_elong is None else min_elong
        if not (0.0 <= min_elong <= 180.0):
            raise InputError("command line", "min-elong", f"{min_elong:g} is outside [0, 180]")
        t0 = parse_utc(start, field="start")
        t1 = parse_utc(stop, field="stop")
        step_s = parse_duration_s(step, field="step")
        min_exposure_s = parse_duration_s(min_exposure, field="min-exposure")
        if t1 < t0:
            raise InputError("command line", "stop", f"{stop} is before start {start}")
        if (t1 - t0) / np.timedelta64(1, "s") / step_s + 1 > MAX_ROWS:
            raise InputError("command line", "step", f"{step} gives more than {MAX_ROWS} epochs; use a longer step")
        utc_times(np.array([t0, t1]), "command line", "start/stop")  # inside DE421's span?
        check_outputs((out, "--out"))
        tgt = load_target(target, object_name)
        sites = [load_site(p) for p in (site or [])]
        frames = add_photometry(
            geometry(tgt, time_grid(t0, t1, step_s), sites, min_solar_elong_deg=min_elong),
            sites,
            rules=exposure_rules(snr, min_exposure_s),
        )
        caution = safety_warning(frames)
        for note in approach_warnings_utc(tgt, t0, t1):
            print(f"note: {note}", file=sys.stderr)
        if fmt == "table":
            text = render_table(frames, caution)
        elif fmt == "csv":
            text = render_csv(frames)
        elif fmt == "ecsv":
            text = render_ecsv(frames, caution)
        else:
            text = render_json(frames, caution)
        if caution:
            print(caution, file=sys.stderr)
        if out is None:
            sys.stdout.write(text)
        else:
            write_text_atomic(out, text)
