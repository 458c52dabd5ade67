"""``phasewise report DIR``: re-render the HTML report of an existing plan folder."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer


def register(app: typer.Typer) -> None:
    @app.command("report")
    def report(
        plan_dir: Annotated[
            Path, typer.Argument(metavar="DIR", help="Plan folder written by `phasewise plan --out DIR`.")
        ],
    ) -> None:
        """Re-render report.html in a plan folder from its files (plan.csv, diagnostics.json, ...).

        The report is one self-contained HTML page (figures embedded, nothing fetched from the network):
        open it from disk or send it on.
        """
        from planner.core.fileio import check_writable
        from planner.outputs.layout import REPORT_HTML
        from planner.outputs.report import write_report

        check_writable(plan_dir / REPORT_HTML, field="PLAN_DIR")
        path = write_report(plan_dir)
        typer.echo(f"report: {path}")
