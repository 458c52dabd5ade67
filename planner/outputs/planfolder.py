"""The plan folder: every file of a plan, written into a temporary folder and renamed into place.

A failure never leaves half a plan and never destroys an earlier one. The manifest (plan.json) holds
what the report needs to know about the inputs (target, sites with their time zones and limits,
settings, version), so the report never re-reads TOML files or sheets.
"""

from __future__ import annotations

import dataclasses
import gc
import json
import os
import shutil
import tempfile
from datetime import UTC, datetime
from pathlib import Path
from typing import TYPE_CHECKING

from planner.core.errors import InputError
from planner.core.fileio import PART_SUFFIX, check_writable, signals_held, temp_prefix
from planner.core.jsonsafe import json_safe
from planner.core.version import __version__
from planner.outputs import layout
from planner.outputs.calendar import site_calendar
from planner.outputs.fitdoc import fit_document
from planner.outputs.report import write_report
from planner.outputs.sheets import site_sheet
from planner.outputs.tablefiles import PLAN_CSV_FLOAT_FORMAT, csv_text, ecsv_text, records, table_for_files
from planner.pipeline import PlanResult
from planner.sky.brightness import law_name, law_params

if TYPE_CHECKING:
    import pandas as pd


def diagnostics_json(result: PlanResult) -> dict:
    """diagnostics.json: both checks, the objective, weather robustness, comparison, re-plan, timings, and
    (re-planning from a log with magnitudes) how well plan and baseline tell the candidate periods apart."""
    doc = {
        "schema_version": layout.SCHEMA_VERSION,
        "phasewise_version": __version__,
        "plan": result.checks["plan"].to_dict(),
        "baseline": result.checks["baseline"].to_dict(),
        "objective": result.objective.to_dict(),
        "robustness": {k: v.to_dict() for k, v in result.robustness.items()},
        "comparison": result.comparison.to_dict(),
        "replan": None if result.replan is None else result.replan.to_dict(),
        "timings_s": result.timings_s,
    }
    if result.discrimination is not None:
        doc["discrimination"] = result.discrimination.to_dict()
    return json_safe(doc)


def lightcurve_json(result: PlanResult) -> dict | None:
    """lightcurve.json: the fit of the re-plan's log with its arrays (None without magnitudes)."""
    lc = result.light_curve
    return None if lc is None else fit_document(lc.fit, lc.curve, lc.settings)


def plan_manifest(result: PlanResult) -> dict:
    """plan.json: the plan's inputs as the report and other tools need them, and its blocks."""
    c, t = result.campaign, result.target
    return json_safe(
        {
            "schema_version": layout.SCHEMA_VERSION,
            "phasewise_version": __version__,
            "campaign": {
                "name": c.name,
                "first_night": c.first_night.isoformat(),
                "nights": c.nights,
                "seed": c.seed,
                "file": layout.CAMPAIGN_COPY if c.path is not None else None,
            },
            "target": {
                "name": t.name,
                "kind": t.kind,
                "source": Path(t.source).name if t.source else "",
                "mag_law": law_name(t.kind, t.brightness),
                "mag_params": law_params(t.kind, t.brightness),
            },
            "sites": [
                {
                    "name": s.name,
                    "timezone": s.timezone,
                    "latitude_deg": s.latitude_deg,
                    "longitude_deg": s.longitude_deg,
                    "height_m": s.height_m,
                    "min_alt_deg": s.min_alt_deg,
                    "min_solar_elong_deg": s.min_solar_elong_deg,
                    "twilight": s.twilight,
                    "sheet": f"{layout.SHEETS_DIR}/{layout.sheet_name(s.name, [x.name for x in c.sites])}",
                }
                for s in c.sites
            ],
            "settings": {
                "rotation": dataclasses.asdict(c.rotation),
                "blocks": dataclasses.asdict(c.block_rules),
                "weights": {
                    k: v
                    for k, v in dataclasses.asdict(c.weights).items()
                    if k != "discrimination" or result.light_curve is not None
                },
                "photometry": dataclasses.asdict(c.photometry),
                "max_gap_h": c.max_gap_h,
                "weather_trials": c.weather_trials,
                "check_trials": c.check_trials,
                "total_hours": dict(c.total_hours),
            },
            "replan": None if result.replan is None else result.replan.to_dict(),
            "notes": list(result.notes),
            "blocks": records(result.blocks),
        }
    )


def _write_json(path: Path, doc: dict) -> None:
    path.write_text(json.dumps(doc, indent=1, ensure_ascii=False) + "\n", encoding="utf-8")


def _ecsv_meta(result: PlanResult, table: str) -> dict:
    """What an ECSV twin says about itself: which table of which plan, by which version."""
    return {
        "table": table,
        "campaign": result.campaign.name,
        "target": result.target.name,
        "phasewise_version": __version__,
        "schema_version": layout.SCHEMA_VERSION,
    }


def folder_tables(result: PlanResult) -> dict[str, tuple[pd.DataFrame, str | None]]:
    """The plan folder's tables by CSV name, each with the number format of its CSV and its ECSV twin."""
    return {
        layout.PLAN_CSV: (result.blocks, PLAN_CSV_FLOAT_FORMAT),
        layout.BASELINE_CSV: (result.baseline, PLAN_CSV_FLOAT_FORMAT),
        layout.WINDOWS_CSV: (result.windows, None),
        layout.GEOMETRY_CSV: (result.geometry, "%.6g"),
        layout.NIGHTS_CSV: (result.nights, "%.4g"),
    }


def _write_folder(result: PlanResult, folder: Path) -> None:
    (folder / layout.SHEETS_DIR).mkdir(parents=True)
    (folder / layout.CALENDARS_DIR).mkdir()
    tables = folder_tables(result)
    for name, (df, float_format) in tables.items():
        if name == layout.GEOMETRY_CSV:  # the long table: one formatting pass per column (same text)
            (folder / name).write_text(csv_text(table_for_files(df), float_format), encoding="utf-8")
        elif name == layout.NIGHTS_CSV:
            df.to_csv(folder / name, index=False, float_format=float_format)
        else:
            table_for_files(df).to_csv(folder / name, index=False, float_format=float_format)
    for name in layout.ECSV_TWINS:
        df, float_format = tables[name]
        ecsv = ecsv_text(df, _ecsv_meta(result, name.removesuffix(".csv")), float_format)
        (folder / layout.ecsv_twin(name)).write_text(ecsv, encoding="utf-8")
    _write_json(folder / layout.MANIFEST_JSON, plan_manifest(result))
    _write_json(folder / layout.DIAGNOSTICS_JSON, diagnostics_json(result))
    curve = lightcurve_json(result)
    if curve is not None:
        _write_json(folder / layout.LIGHTCURVE_JSON, curve)
    if result.campaign.path is not None:  # a campaign built in Python has no file to copy
        shutil.copyfile(result.campaign.path, folder / layout.CAMPAIGN_COPY)
    if result.campaign.target_path is not None and result.campaign.target_path.suffix.lower() == ".toml":
        shutil.copyfile(result.campaign.target_path, folder / layout.TARGET_COPY)
    stamp = datetime.now(UTC)
    names = [s.name for s in result.campaign.sites]
    for site in result.campaign.sites:
        (folder / layout.SHEETS_DIR / layout.sheet_name(site.name, names)).write_text(
            site_sheet(result, site), encoding="utf-8"
        )
        (folder / layout.CALENDARS_DIR / layout.calendar_name(site.name, names)).write_bytes(
            site_calendar(result, site, stamp).encode("utf-8")
        )
    # Last: rendered from the files above alone, inside the not-yet-renamed folder. The plan's objects
    # are frozen out of the garbage collector meanwhile: its passes over them cost the render ~0.2 s
    # at 16 sites x 30 nights, and nothing of the plan becomes garbage while the report is drawn.
    gc.freeze()
    try:
        write_report(folder)
    finally:
        gc.unfreeze()


def write_plan_folder(result: PlanResult, out: str | Path, force: bool = False) -> Path:
    """Write the plan folder atomically: build it beside ``out`` under a temporary name, then rename.

    Parameters
    ----------
    result : PlanResult
        What :func:`planner.pipeline.plan_campaign` returned.
    out : path
        The plan folder. A non-empty folder is refused unless ``force``.
    force : bool
        Replace a non-empty ``out``; the old folder goes only once the new one is complete.

    Returns
    -------
    Path
        ``out``.
    """
    out = check_writable(out, folder=True)
    if out.is_dir() and any(out.iterdir()) and not force:
        raise InputError(str(out), "--out", "folder is not empty (use --force to replace it)")
    try:
        out.parent.mkdir(parents=True, exist_ok=True)
        tmp = Path(tempfile.mkdtemp(prefix=temp_prefix(out), suffix=PART_SUFFIX, dir=out.parent))
    except OSError as exc:
        raise InputError(str(out), "--out", f"cannot write ({exc.strerror or exc})") from None
    try:
        _write_folder(result, tmp / "plan")
        with signals_held():  # the old folder goes only once the new one is in place
            if out.is_dir():
                old = tmp / "old"
                os.replace(out, old)
                try:
                    os.replace(tmp / "plan", out)
                except BaseException:
                    os.replace(old, out)
                    raise
            else:
                os.replace(tmp / "plan", out)
    except OSError as exc:
        raise InputError(str(out), "--out", f"cannot write ({exc.strerror or exc})") from None
    finally:
        with signals_held():
            shutil.rmtree(tmp, ignore_errors=True)
    return out
