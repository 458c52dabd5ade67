"""``phasewise plan``: optimise a campaign and write the night-by-night plan, diagnostics and sheets."""

from __future__ import annotations

import json
import sys
from pathlib import Path
from typing import Annotated

import typer

from planner.core.errors import InputError


def register(app: typer.Typer) -> None:
    @app.command("plan")
    def plan(
        campaign: Annotated[Path, typer.Argument(help="campaign file (TOML)")],
        out: Annotated[
            Path | None, typer.Option("--out", help="write the plan folder here (refuses a non-empty folder)")
        ] = None,
        force: Annotated[bool, typer.Option("--force", help="replace a non-empty --out folder")] = False,
        done: Annotated[
            Path | None,
            typer.Option(
                "--done",
                help="CSV log of observed times and lost nights: re-plan the remaining nights (the log is only read)",
            ),
        ] = None,
        exact: Annotated[
            bool,
            typer.Option(
                "--exact", help="also solve the coverage problem exactly (HiGHS) to measure the greedy's optimality gap"
            ),
        ] = False,
        fmt: Annotated[str, typer.Option("--format", help="table, csv or json (printed output)")] = "table",
    ) -> None:
        """Optimise a multi-site campaign: when each site observes, night by night."""
        from planner.core.fileio import check_writable
        from planner.inputs.campaign import load_campaign
        from planner.inputs.donelog import read_done_log
        from planner.outputs.planfolder import plan_manifest, write_plan_folder
        from planner.outputs.tablefiles import PLAN_CSV_FLOAT_FORMAT, records, table_for_files
        from planner.outputs.terminal import comparison_text, night_table, nights_text, safety_text
        from planner.pipeline import plan_campaign

        if fmt not in ("table", "csv", "json"):
            raise InputError("command line", "--format", f"{fmt!r} is not one of table, csv, json")
        if out is not None:
            check_writable(out, folder=True)
            if out.is_dir() and any(out.iterdir()) and not force:
                raise InputError(str(out), "--out", "folder is not empty (use --force to replace it)")
        camp = load_campaign(campaign)
        target = camp.load_target()
        done_log = read_done_log(done, camp.sites) if done is not None else None
        result = plan_campaign(camp, target, done_log, exact=exact)
        if out is not None:
            write_plan_folder(result, out, force=force)
        if fmt == "csv":
            sys.stdout.write(table_for_files(result.blocks).to_csv(index=False, float_format=PLAN_CSV_FLOAT_FORMAT))
        elif fmt == "json":
            from planner.core.jsonsafe import json_safe

            doc = {
                **plan_manifest(result),
                "comparison": result.comparison.to_dict(),
                "objective": result.objective.to_dict(),
                "robustness": {k: v.to_dict() for k, v in result.robustness.items()},
                "nights": records(result.nights),
            }
            if result.discrimination is not None:
                doc["discrimination"] = result.discrimination.to_dict()
            sys.stdout.write(json.dumps(json_safe(doc), indent=1) + "\n")
        else:
            sys.stdout.write(
                f"{camp.name}: {len(result.blocks)} blocks at {result.blocks['site'].nunique()} "
                f"sites, {camp.nights} nights from {camp.first_night.isoformat()}"
                + (f" (re-planned from {result.done_log})" if result.done_log else "")
                + "\n\n"
            )
            if result.light_curve is not None:
                from planner.outputs.fitdoc import fit_brief
                from planner.outputs.planfolder import lightcurve_json

                sys.stdout.write("light curve of the log:\n" + fit_brief(lightcurve_json(result)) + "\n")
            sys.stdout.write(night_table(result.blocks))
            sys.stdout.write(nights_text(result))
            sys.stdout.write(safety_text(result))
            sys.stdout.write("\n" + comparison_text(result))
            if out is not None:
                sys.stdout.write(f"\nplan folder: {out}\nreport:      {out / 'report.html'}\n")
