"""``phasewise ephem`` (placeholder until the geometry issue lands it)."""

import typer


def register(app: typer.Typer) -> None:
    @app.command("ephem")
    def ephem() -> None:
        """Geometry table for a target over a time span (not built yet)."""
        raise typer.Exit(1)
