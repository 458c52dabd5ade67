"""``phasewise plan``: optimise a campaign and write the night-by-night plan, diagnostics and sheets."""

from __future__ import annotations

import json
import sys
from pathlib import Path
from typing import Annotated

import typer

from planner.errors import InputError


def register(app: typer.Typer) -> None:
    @app.command("plan")
    def plan(
        campaign: Annotated[Path, typer.Argument(help="campaign file (TOML)")],
        out: Annotated[Path | None, typer.Option("--out", help="write the plan folder here (refuses a "
                                                 "non-empty folder)")] = None,
        force: Annotated[bool, typer.Option("--force", help="replace a non-empty --out folder")] = False,
        done: Annotated[Path | None, typer.Option("--done", help="CSV log of observed times and lost nights: "
                                                  "re-plan the remaining nights (the log is only read)")] = None,
        exact: Annotated[bool, typer.Option("--exact", help="also solve the coverage problem exactly (HiGHS) "
                                            "to measure the greedy's optimality gap")] = False,
        fmt: Annotated[str, typer.Option("--format", help="table, csv or json (printed output)")] = "table",
    ) -> None:
        """Optimise a multi-site campaign: when each site observes, night by night."""
        from planner.campaign import load_campaign
        from planner.planfiles import (
            PLAN_CSV_FLOAT_FORMAT,
            comparison_text,
            night_table,
            nights_text,
            plan_json,
            safety_text,
            table_for_files,
            write_plan_folder,
        )
        from planner.schedule import plan_campaign

        if fmt not in ("table", "csv", "json"):
            raise InputError("command line", "--format", f"{fmt!r} is not one of table, csv, json")
        if out is not None and out.is_dir() and any(out.iterdir()) and not force:
            raise InputError(str(out), "--out", "folder is not empty (use --force to replace it)")
        camp = load_campaign(campaign)
        result = plan_campaign(camp, done_log=done, exact=exact)
        if out is not None:
            write_plan_folder(result, out, force=force)
        if fmt == "csv":
            sys.stdout.write(table_for_files(result.blocks).to_csv(index=False, float_format=PLAN_CSV_FLOAT_FORMAT))
        elif fmt == "json":
            from planner.jsonsafe import json_safe
            from planner.planfiles import records

            doc = {**plan_json(result), "comparison": result.comparison, "objective": result.objective,
                   "robustness": result.robustness, "nights": records(result.nights)}
            sys.stdout.write(json.dumps(json_safe(doc), indent=1) + "\n")
        else:
            sys.stdout.write(f"{camp.name}: {len(result.blocks)} blocks at {result.blocks['site'].nunique()} "
                             f"sites, {camp.nights} nights from {camp.first_night.isoformat()}"
                             + (f" (re-planned from {result.done_log})" if result.done_log else "") + "\n\n")
            sys.stdout.write(night_table(result.blocks))
            sys.stdout.write(nights_text(result))
            sys.stdout.write(safety_text(result))
            sys.stdout.write("\n" + comparison_text(result))
            if out is not None:
                sys.stdout.write(f"\nplan folder: {out}\nreport:      {out / 'report.html'}\n")
