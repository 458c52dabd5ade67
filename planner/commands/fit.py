"""``phasewise fit``: rotation period, fading and period change from a log of magnitudes."""

from __future__ import annotations

import json
import math
import sys
from pathlib import Path
from typing import Annotated

import typer

from planner.core.errors import InputError


def _night_sigma(text: str) -> float | None:
    """``0.02`` (mag), or ``free`` / ``inf`` for nightly offsets without a prior (None)."""
    if text.strip().lower() in ("free", "inf", "none"):
        return None
    try:
        value = float(text)
    except ValueError:
        raise InputError("command line", "--night-offset-sigma", f"{text!r} is not a number (mag) or 'free'") from None
    if math.isinf(value):
        return None
    if not value > 0:
        raise InputError("command line", "--night-offset-sigma", f"{text!r} must be above 0 (or 'free')")
    return value


def register(app: typer.Typer) -> None:
    @app.command("fit")
    def fit(
        log_csv: Annotated[
            Path,
            typer.Argument(help="observation log CSV with a mag column (time_utc, site, mag, mag_err, band, ...)"),
        ],
        target: Annotated[Path, typer.Option("--target", help="target file: geometry and the expected K1")],
        object_name: Annotated[
            str | None, typer.Option("--object", help="which line of a multi-line MPC .txt target file")
        ] = None,
        site: Annotated[
            list[Path] | None,
            typer.Option("--site", help="site file (repeatable): topocentric geometry and σ from its instrument"),
        ] = None,
        min_period: Annotated[str, typer.Option("--min-period", help="shortest rotation period (2h, 90m)")] = "2h",
        max_period: Annotated[str, typer.Option("--max-period", help="longest rotation period (30h, 2d)")] = "30h",
        expected_k1: Annotated[
            float | None,
            typer.Option("--expected-k1", help="K1 to compare with when the target has no M1/K1 law (default 10)"),
        ] = None,
        night_offset_sigma: Annotated[
            str,
            typer.Option("--night-offset-sigma", help="prior σ of nightly zero points, mag ('free': no prior)"),
        ] = "0.02",
        nterms: Annotated[int, typer.Option("--nterms", min=1, max=8, help="harmonics of the light curve")] = 2,
        mag_err: Annotated[
            float, typer.Option("--mag-err", min=1e-6, help="σ (mag) where nothing else gives one")
        ] = 0.02,
        phase_law: Annotated[
            bool, typer.Option("--phase-law/--no-phase-law", help="remove the target law's phase term, if it has one")
        ] = True,
        fmt: Annotated[str, typer.Option("--format", help="table or json")] = "table",
        out: Annotated[Path | None, typer.Option("--out", help="write here instead of stdout")] = None,
        report: Annotated[
            Path | None, typer.Option("--report", help="also write a self-contained HTML page of the fit to this file")
        ] = None,
    ) -> None:
        """Fit the light curve of a log: rotation period with its alias candidates, fading, period change."""
        from planner.commands.check import period_range_h
        from planner.core.fileio import check_outputs, write_text_atomic
        from planner.inputs.obslog import read_observation_log
        from planner.inputs.sites import load_site
        from planner.inputs.targets import load_target
        from planner.lightcurve.fit import fit_light_curve
        from planner.lightcurve.logpoints import expected_k1 as choose_k1
        from planner.lightcurve.logpoints import log_light_curve
        from planner.outputs.fitdoc import fit_document, fit_text

        if fmt not in ("table", "json"):
            raise InputError("command line", "--format", f"{fmt!r}: choose table or json")
        check_outputs((out, "--out"), (report, "--report"))
        p_min, p_max = period_range_h(min_period, max_period)
        sigma_n = _night_sigma(night_offset_sigma)
        log = read_observation_log(log_csv)
        tgt = load_target(target, object_name)
        sites = [load_site(p) for p in site or []]
        names = None
        if log.site is None and len(sites) == 1:
            names = log.site_or(sites[0].name)
        elif log.site is None and len(sites) > 1:
            raise InputError("command line", "--site", "the log has no site column, so give at most one --site")
        k1, k1_source = choose_k1(tgt, expected_k1)
        lc = log_light_curve(log, tgt, sites, site_names=names, fallback_mag_err=mag_err, phase_law=phase_law)
        if expected_k1 is not None and k1_source != "option":
            lc.notes.append(f"--expected-k1 {expected_k1:g} not used: the target file's law gives K1 = {k1:g}")
        result = fit_light_curve(
            lc.points,
            min_period_h=p_min,
            max_period_h=p_max,
            nterms=nterms,
            night_offset_sigma_mag=sigma_n,
            expected_k1=k1,
        )
        settings = {
            "min_period_h": p_min,
            "max_period_h": p_max,
            "nterms": nterms,
            "night_offset_sigma_mag": sigma_n,
            "expected_k1_source": k1_source,
            "fallback_mag_err": mag_err,
        }
        doc = fit_document(result, lc, settings, arrays=report is not None)
        if report is not None:
            from planner.outputs.report_fit import render_fit_report

            write_text_atomic(report, render_fit_report(doc, source=str(log_csv)))
            doc.pop("arrays")
        text = json.dumps(doc, indent=1, allow_nan=False) + "\n" if fmt == "json" else fit_text(doc)
        if out is None:
            sys.stdout.write(text)
        else:
            write_text_atomic(out, text)
