"""``phasewise init DIR``: a starter target, site and campaign, with comments, that validate as they stand.

The target comes from an MPC one-line orbit (``--mpc-line`` or ``--mpc-file`` with ``--object``), the
site from options (asked for on a terminal when missing), the campaign's settings as commented lines
holding the defaults of the settings types. ``--demo`` copies the bundled demo inputs instead. Nothing
is ever overwritten.
"""

from __future__ import annotations

import dataclasses
import sys
import tempfile
from datetime import date, timedelta
from pathlib import Path
from typing import Annotated

import typer

from planner.core.errors import InputError
from planner.core.limits import MAX_CAMPAIGN_NIGHTS
from planner.core.version import __version__

#: The campaign file's tables and the settings type whose defaults each one lists.
_SETTINGS_TABLES = (
    ("rotation", "Rotation"),
    ("blocks", "BlockRules"),
    ("weights", "Weights"),
    ("photometry", "ExposureRules"),
)


def _toml_value(value) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str):
        return '"' + value.replace("\\", "\\\\").replace('"', '\\"') + '"'
    if isinstance(value, (tuple, list)):
        return "[" + ", ".join(_toml_value(v) for v in value) + "]"
    return repr(float(value)) if isinstance(value, float) else str(value)


def target_toml(target, source: str) -> str:
    """A target file for a loaded target (from an MPC line): elements exactly as read, Julian dates TDB."""
    o, b = target.orbit, target.brightness
    lines = [
        f"# Target file written by `phasewise init` (phasewise {__version__}) from {source}.",
        "# Schema: docs/formats.md, 'Target file'. Angles: ecliptic and equinox J2000. Times: Julian dates, TDB.",
        "# Osculating elements drift under planetary perturbations: refresh them for the dates you plan for.",
        f"name = {_toml_value(target.name)}",
        f'kind = "{target.kind}"',
        "",
        "[orbit]",
        f"epoch = {o.epoch_tdb_jd!r}                # osculation epoch, JD TDB",
        f"eccentricity = {o.eccentricity!r}",
        f"inclination_deg = {o.inclination_deg!r}",
        f"ascending_node_deg = {o.ascending_node_deg!r}",
        f"arg_perihelion_deg = {o.arg_perihelion_deg!r}",
    ]
    if target.kind == "comet":
        lines += [
            f"perihelion_time = {o.perihelion_tdb_jd!r}      # JD TDB",
            f"perihelion_dist_au = {o.perihelion_dist_au!r}",
        ]
    else:
        import math

        from planner.core.constants import GM_SUN_AU3_D2

        a_au = o.semimajor_axis_au
        mean_motion_deg_d = math.degrees(math.sqrt(GM_SUN_AU3_D2 / abs(a_au) ** 3))
        lines += [
            f"semimajor_axis_au = {a_au!r}",
            f"mean_anomaly_deg = {mean_motion_deg_d * (o.epoch_tdb_jd - o.perihelion_tdb_jd)!r}   # at the epoch",
        ]
    given = {k: v for k, v in dataclasses.asdict(b).items() if v is not None}
    if given.get("law_band") == "V" or target.kind != "comet":  # V is the default; H,G is V by definition
        given.pop("law_band", None)
    lines += ["", "[brightness]"]
    if given:
        lines += [f"{k} = {v!r}" for k, v in given.items()]
    else:
        lines.append("# M1 = 12.0  K1 = 10.0 (comet total), or H = 15.0  G = 0.15 (asteroid): no magnitudes given")
    return "\n".join(lines) + "\n"


def site_toml(name: str, latitude_deg: float, longitude_deg: float, height_m: float, timezone: str) -> str:
    """A site file with the position given and every other key commented at its default."""
    from planner.inputs.sites import Instrument, Site

    site = Site(name=name, latitude_deg=latitude_deg, longitude_deg=longitude_deg, height_m=height_m, timezone=timezone)
    defaults = [
        f"# {f.name} = {_toml_value(getattr(site, f.name))}"
        for f in dataclasses.fields(Site)
        if f.name
        in (
            "min_alt_deg",
            "twilight",
            "moon_min_sep_deg",
            "moon_sep_per_illum_deg",
            "min_solar_elong_deg",
            "clear_fraction",
        )
    ]
    inst = [
        f"# {f.name} = {_toml_value(f.default)}"
        for f in dataclasses.fields(Instrument)
        if f.default is not dataclasses.MISSING
    ]
    return (
        "\n".join(
            [
                f"# Site file written by `phasewise init` (phasewise {__version__}).",
                "# Schema: docs/formats.md, 'Site file'.",
                "# Commented keys show their defaults; uncomment to change them.",
                f"name = {_toml_value(site.name)}",
                f"latitude_deg = {site.latitude_deg!r}      # geodetic, north positive",
                f"longitude_deg = {site.longitude_deg!r}     # east positive",
                f"height_m = {site.height_m!r}           # above the WGS84 ellipsoid",
                f"timezone = {_toml_value(site.timezone)}   # IANA zone: nights run from local noon to local noon",
                *defaults,
                "# horizon = [[0, 25], [90, 30], [180, 20], [270, 25]]   # [az_deg, min_alt_deg] mask",
                "",
                "# The camera, for exposure times and S/N (without it, blocks carry no exposure prediction):",
                "# [instrument]",
                "# aperture_m = 0.5",
                "# pixel_scale_arcsec = 1.0",
                *inst,
                "",
                "# Time granted to the campaign (absent: every dark minute):",
                "# [allocation]",
                "# hours_per_night = 4",
            ]
        )
        + "\n"
    )


def campaign_toml(name: str, site_files: list[str], first_night: date, nights: int) -> str:
    """A campaign file naming target and sites, with every setting commented at its type's default."""
    from planner.inputs import settings
    from planner.inputs.campaign import Campaign

    out = [
        f"# Campaign file written by `phasewise init` (phasewise {__version__}).",
        "# Schema: docs/formats.md, 'Campaign file'. Paths are relative to this file.",
        "# Commented keys show their defaults; uncomment to change them. Run: phasewise plan campaign.toml --out plan",
        f"name = {_toml_value(name)}",
        'target = "target.toml"',
        f"sites = {_toml_value(site_files)}",
        f"first_night = {first_night.isoformat()}     # local date of the first evening",
        f"nights = {nights}",
        f"# seed = {Campaign.__dataclass_fields__['seed'].default}",
    ]
    for table, type_name in _SETTINGS_TABLES:
        cls = getattr(settings, type_name)
        out += ["", f"[{table}]"]
        out += [f"# {f.name} = {_toml_value(f.default)}" for f in dataclasses.fields(cls)]
    fields = Campaign.__dataclass_fields__
    out += [
        "",
        "[cadence]",
        f"# max_gap_h = {fields['max_gap_h'].default!r}",
        "",
        "[weather]",
        f"# trials = {fields['weather_trials'].default}",
        "",
        "[diagnostics]",
        f"# trials = {fields['check_trials'].default}",
    ]
    return "\n".join(out) + "\n"


def _target_from_mpc(line: str | None, mpc_file: Path | None, object_name: str | None):
    from planner.inputs.targets import load_target

    if mpc_file is not None:
        return load_target(mpc_file, object_name), str(mpc_file.name)
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "mpc-line.txt"
        path.write_text(line + "\n", encoding="utf-8")
        try:
            return load_target(path), "an MPC one-line orbit"
        except InputError as exc:
            raise InputError("command line", f"--mpc-line: {exc.field}", exc.message) from None


def _ask(value, prompt: str, cast, example: str):
    if value is not None:
        return value
    if not sys.stdin.isatty():
        raise InputError("command line", prompt, f"missing (e.g. {prompt} {example}); on a terminal init asks for it")
    return typer.prompt(f"{prompt.lstrip('-')} (e.g. {example})", type=cast)


def _write_all(files: dict[Path, str]) -> None:
    taken = [p for p in files if p.exists()]
    if taken:
        raise InputError(str(taken[0]), "-", "exists: init never overwrites a file; choose another folder")
    from planner.core.fileio import write_text_atomic

    for path, text in files.items():
        path.parent.mkdir(parents=True, exist_ok=True)
        write_text_atomic(path, text)


def register(app: typer.Typer) -> None:
    @app.command("init")
    def init(
        folder: Annotated[Path, typer.Argument(metavar="DIR", help="folder for the starter files")] = Path("."),
        mpc_line: Annotated[
            str | None, typer.Option("--mpc-line", metavar="LINE", help="the target as one MPC one-line orbit")
        ] = None,
        mpc_file: Annotated[
            Path | None, typer.Option("--mpc-file", metavar="FILE", help="a file of MPC one-line orbits")
        ] = None,
        object_name: Annotated[
            str | None, typer.Option("--object", metavar="NAME", help="which line of --mpc-file")
        ] = None,
        site_name: Annotated[str | None, typer.Option("--site-name", metavar="NAME", help="the site's name")] = None,
        latitude: Annotated[
            float | None, typer.Option("--latitude", metavar="DEG", help="geodetic latitude, north positive")
        ] = None,
        longitude: Annotated[
            float | None, typer.Option("--longitude", metavar="DEG", help="longitude, east positive")
        ] = None,
        height: Annotated[float, typer.Option("--height", metavar="M", help="height above the ellipsoid")] = 0.0,
        timezone: Annotated[
            str | None, typer.Option("--timezone", metavar="ZONE", help="IANA time zone, e.g. America/Santiago")
        ] = None,
        first_night: Annotated[
            str | None, typer.Option("--first-night", metavar="DATE", help="first evening (default: tomorrow)")
        ] = None,
        nights: Annotated[
            int, typer.Option("--nights", min=1, max=MAX_CAMPAIGN_NIGHTS, metavar="N", help="nights to plan")
        ] = 7,
        demo: Annotated[
            bool, typer.Option("--demo", help="copy the bundled demo inputs (invented comet, four sites) instead")
        ] = False,
    ) -> None:
        """Write a starter target, site and campaign (commented) into DIR; never overwrites."""
        if demo:
            from planner.demo import DEMO_DIR

            sources = [DEMO_DIR / "c2034-b3-quillfeather.toml", DEMO_DIR / "demo-campaign.toml"]
            sources += [DEMO_DIR / "demo-first-nights.csv"]
            sources += sorted((DEMO_DIR / "sites").glob("*.toml"))
            files = {folder / p.relative_to(DEMO_DIR): p.read_text(encoding="utf-8") for p in sources}
            _write_all(files)
            camp, log = folder / "demo-campaign.toml", folder / "demo-first-nights.csv"
            typer.echo(
                f"demo inputs in {folder} (invented comet, four sites, and a log of its first three nights); next:\n"
                f"  phasewise plan {camp} --out plan\n"
                f"  phasewise fit {log} --target {folder / 'c2034-b3-quillfeather.toml'}\n"
                f"  phasewise plan {camp} --done {log} --out replan"
            )
            return
        if (mpc_line is None) == (mpc_file is None):
            raise InputError("command line", "--mpc-line", "give the target as --mpc-line LINE or --mpc-file FILE")
        from planner.core.timegrid import parse_date
        from planner.inputs.campaign import load_campaign
        from planner.outputs.layout import slug

        target, source = _target_from_mpc(mpc_line, mpc_file, object_name)
        site_name = _ask(site_name, "--site-name", str, '"Hill Top"')
        latitude = _ask(latitude, "--latitude", float, "-30.2")
        longitude = _ask(longitude, "--longitude", float, "-70.7")
        timezone = _ask(timezone, "--timezone", str, "America/Santiago")
        try:
            site_text = site_toml(site_name, latitude, longitude, height, timezone)
        except InputError as exc:
            option = {"name": "--site-name", "latitude_deg": "--latitude", "longitude_deg": "--longitude"}
            raise InputError("command line", option.get(exc.field, f"--{exc.field}"), exc.message) from None
        start = (
            date.today() + timedelta(days=1) if first_night is None else parse_date(first_night, field="--first-night")
        )
        site_file = f"sites/{slug(site_name)}.toml"
        files = {
            folder / "target.toml": target_toml(target, source),
            folder / site_file: site_text,
            folder / "campaign.toml": campaign_toml(f"{target.name} from {site_name}", [site_file], start, nights),
        }
        _write_all(files)
        load_campaign(folder / "campaign.toml").load_target()  # what init writes must load as it stands
        for path in files:
            typer.echo(f"wrote {path}")
        typer.echo(f"next: phasewise validate {folder / 'campaign.toml'}; phasewise plan {folder / 'campaign.toml'}")
