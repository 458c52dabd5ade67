"""``phasewise plan``: optimise a campaign and write the night-by-night plan, diagnostics and sheets."""

from __future__ import annotations

import json
import sys
from enum import StrEnum
from pathlib import Path
from typing import Annotated

import typer

from planner.commands.common import StageProgress, show_progress, stamped
from planner.core.errors import InputError

#: The stage ``phasewise plan`` adds after the pipeline's, with its rough share of the run's time.
WRITE_STAGE = ("plan folder and report", 16.0)


class PlanFormat(StrEnum):
    table = "table"
    csv = "csv"
    json = "json"


def register(app: typer.Typer) -> None:
    @app.command("plan")
    def plan(
        campaign: Annotated[Path, typer.Argument(metavar="CAMPAIGN.toml", help="campaign file (TOML)")],
        out: Annotated[
            Path | None,
            typer.Option("--out", metavar="DIR", help="write the plan folder here (refuses a non-empty folder)"),
        ] = None,
        force: Annotated[bool, typer.Option("--force", help="replace a non-empty --out folder")] = False,
        done: Annotated[
            Path | None,
            typer.Option(
                "--done",
                metavar="LOG.csv",
                help="CSV log of observed times and lost nights: re-plan the remaining nights (the log is only read)",
            ),
        ] = None,
        exact: Annotated[
            bool,
            typer.Option(
                "--exact", help="also solve the coverage problem exactly (HiGHS) to measure the greedy's optimality gap"
            ),
        ] = False,
        fmt: Annotated[PlanFormat, typer.Option("--format", help="printed output")] = PlanFormat.table,
        progress: Annotated[
            bool | None,
            typer.Option("--progress/--no-progress", help="progress by stage on stderr (default: only on a terminal)"),
        ] = None,
        dask: Annotated[
            str | None,
            typer.Option(
                "--dask",
                metavar="ADDRESS",
                help="run the weather and injection trials on this Dask scheduler (optional extra 'dask'); "
                "same results",
            ),
        ] = None,
    ) -> None:
        """Optimise a multi-site campaign: when each site observes, night by night."""
        from planner.core.fileio import check_writable
        from planner.inputs.campaign import load_campaign
        from planner.inputs.donelog import read_done_log
        from planner.outputs.planfolder import plan_manifest, write_plan_folder
        from planner.outputs.tablefiles import PLAN_CSV_FLOAT_FORMAT, records, table_for_files
        from planner.outputs.terminal import comparison_text, night_table, nights_text, safety_text
        from planner.pipeline import PLAN_STAGES, plan_campaign

        if out is not None:
            check_writable(out, folder=True)
            if out.is_dir() and any(out.iterdir()) and not force:
                raise InputError(str(out), "--out", "folder is not empty (use --force to replace it)")
        camp = load_campaign(campaign)
        if dask:
            import dataclasses

            from planner.inputs.settings import Compute

            camp = dataclasses.replace(camp, compute=Compute(dask_address=dask))
        target = camp.load_target()
        done_log = read_done_log(done, camp.sites) if done is not None else None
        stages = dict(PLAN_STAGES, **(dict([WRITE_STAGE]) if out is not None else {}))
        with StageProgress(stages, show_progress(progress), "phasewise plan") as bar:
            result = plan_campaign(camp, target, done_log, exact=exact, progress=bar)
            if out is not None:
                bar(WRITE_STAGE[0])
                write_plan_folder(result, out, force=force)
        if fmt == "csv":
            sys.stdout.write(table_for_files(result.blocks).to_csv(index=False, float_format=PLAN_CSV_FLOAT_FORMAT))
        elif fmt == "json":
            from planner.core.jsonsafe import json_safe

            doc = {
                **stamped(plan_manifest(result)),
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
