"""``phasewise validate FILE...``: check input files without running anything; one line per file.

The kind of each file is told by its content: a TOML file with ``sites`` and ``first_night`` is a
campaign (its target and sites are loaded too), one with ``orbit`` a target, one with ``latitude_deg``
a site; ``.txt``/``.dat`` files hold MPC one-line orbits and ``.csv`` files are observation logs.
"""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from planner.core.errors import InputError


def describe(path: Path, object_name: str | None = None) -> str:
    """What the file holds, in a few words; raises :class:`InputError` for the first thing wrong in it."""
    suffix = path.suffix.lower()
    if suffix == ".csv":
        from planner.inputs.obslog import read_observation_log

        log = read_observation_log(path)
        return f"observation log, {log.times_utc.size} observed times, {len(log.lost)} lost site-nights"
    if suffix in (".txt", ".dat"):
        from planner.inputs.targets import load_target

        t = load_target(path, object_name)
        return f"MPC orbit line: {t.kind} {t.name!r}"
    if suffix != ".toml":
        raise InputError(
            str(path), "-", "not a phasewise input (.toml target, site or campaign; .txt orbits; .csv log)"
        )
    from planner.core.tomlfile import read_toml

    table = read_toml(path)
    if "sites" in table or "first_night" in table:
        from planner.inputs.campaign import load_campaign

        c = load_campaign(path)
        t = c.load_target()
        return f"campaign {c.name!r}: target {t.name!r}, {len(c.sites)} sites, {c.nights} nights from {c.first_night}"
    if "orbit" in table or "kind" in table:
        from planner.inputs.targets import load_target

        t = load_target(path)
        return f"target: {t.kind} {t.name!r}"
    if "latitude_deg" in table or "longitude_deg" in table:
        from planner.inputs.sites import load_site

        s = load_site(path)
        inst = "with an instrument" if s.instrument else "no instrument"
        return f"site {s.name!r} ({s.latitude_deg:+.3f}, {s.longitude_deg:+.3f}, {s.timezone}; {inst})"
    raise InputError(
        str(path), "-", "neither a campaign (sites, first_night), a target (orbit) nor a site (latitude_deg)"
    )


def register(app: typer.Typer) -> None:
    @app.command("validate")
    def validate(
        files: Annotated[list[Path], typer.Argument(metavar="FILE...", help="target, site, campaign or log files")],
        object_name: Annotated[
            str | None, typer.Option("--object", metavar="NAME", help="which line of a multi-line MPC .txt file")
        ] = None,
    ) -> None:
        """Check input files without running anything: one line per file, exit status 2 if any is bad."""
        bad = 0
        for path in files:
            try:
                typer.echo(f"ok: {path}: {describe(path, object_name)}")
            except InputError as exc:
                bad += 1
                typer.echo(f"error: {exc}")
        if bad:
            raise typer.Exit(2)
