"""``phasewise demo``: run the bundled demo campaign end to end and say where the report is."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer


def register(app: typer.Typer) -> None:
    @app.command("demo")
    def demo(
        out: Annotated[
            Path | None,
            typer.Option(
                "--out",
                metavar="DIR",
                help="folder for the demo's plan and report, default phasewise-demo (refreshed if an "
                "earlier demo made it; any other non-empty folder is refused)",
            ),
        ] = None,
    ) -> None:
        """Plan the bundled demo campaign (invented comet, four invented sites, one week), check it and
        write the plan folder with its HTML report."""
        from planner.demo import DEFAULT_OUT, run_demo
        from planner.outputs.terminal import comparison_text, night_table

        r = run_demo(DEFAULT_OUT if out is None else out)
        c = r.plan.campaign
        typer.echo(
            f"{c.name}: {len(r.plan.blocks)} blocks at {len(c.sites)} sites, {c.nights} nights from "
            f"{c.first_night.isoformat()} ({r.seconds:.0f} s)\n"
        )
        typer.echo(night_table(r.plan.blocks))
        typer.echo(comparison_text(r.plan))
        typer.echo(f"plan folder: {r.out_dir}")
        typer.echo(f"report:      {r.report_path.resolve()}  (open it in a browser; it works offline)")
