"""``phasewise demo``: run the bundled demo campaign end to end, and the re-planning loop after its first nights."""

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
        write the plan folder with its HTML report; then fit the invented light curve of its first three
        nights and re-plan the remaining nights to tell the candidate periods apart."""
        from planner.demo import DEFAULT_OUT, DEMO_LOG, run_demo
        from planner.outputs.fitdoc import fit_brief
        from planner.outputs.planfolder import lightcurve_json
        from planner.outputs.terminal import comparison_text, night_table, safety_text

        r = run_demo(DEFAULT_OUT if out is None else out)
        c = r.plan.campaign
        typer.echo(
            f"{c.name}: {len(r.plan.blocks)} blocks at {len(c.sites)} sites, {c.nights} nights from "
            f"{c.first_night.isoformat()} ({r.seconds:.0f} s for the plan, the fit and the re-plan)\n"
        )
        typer.echo(night_table(r.plan.blocks))
        typer.echo(safety_text(r.plan))
        typer.echo(comparison_text(r.plan))
        typer.echo(f"plan folder: {r.out_dir}")
        typer.echo(f"report:      {r.report_path.resolve()}  (open it in a browser; it works offline)\n")
        if r.replan is None:
            return
        re = r.replan
        typer.echo(
            f"After the first three nights (an invented log, {DEMO_LOG.name}: only Quebrada Alta was clear), "
            "its light curve fitted:"
        )
        doc = lightcurve_json(re)
        if doc is not None:
            typer.echo(fit_brief(doc))
        typer.echo(
            f"Re-planned from that log: {len(re.blocks)} blocks in the nights left, built to tell the candidates "
            "apart\n"
        )
        typer.echo(comparison_text(re))
        typer.echo(f"fit report:  {r.fit_report_path.resolve() if r.fit_report_path else '-'}")
        typer.echo(f"re-plan:     {r.replan_report_path.resolve()}")
