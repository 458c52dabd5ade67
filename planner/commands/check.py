"""``phasewise check``: coverage, alias and trend diagnostics for a list of observation times."""

from __future__ import annotations

import json
import sys
from enum import StrEnum
from pathlib import Path
from typing import Annotated

import typer

from planner.commands.common import StageProgress, show_progress, stamped
from planner.core.errors import InputError
from planner.inputs.settings import BlockRules, ExposureRules


class CheckFormat(StrEnum):
    table = "table"
    json = "json"


def _hours(text: str, field: str) -> float:
    """``'2h'``, ``'90m'``, ``'1.5d'`` or a bare number of hours."""
    from planner.core.timegrid import parse_duration_s

    try:
        value = float(text)
    except ValueError:
        return parse_duration_s(text, "command line", field) / 3600.0
    if not value > 0:
        raise InputError("command line", field, f"{text!r} must be longer than zero")
    return value


def period_range_h(min_text: str, max_text: str) -> tuple[float, float]:
    """``--min-period`` and ``--max-period`` in hours, checked (the shorter first)."""
    p_min, p_max = _hours(min_text, "--min-period"), _hours(max_text, "--max-period")
    if p_max < p_min:
        raise InputError("command line", "--max-period", "is shorter than --min-period")
    return p_min, p_max


def _amplitudes(text: str) -> tuple[float, float]:
    parts = text.replace(",", "-").split("-") if "-" in text or "," in text else [text, text]
    try:
        lo, hi = (float(x) for x in parts)
    except ValueError:
        raise InputError("command line", "--amplitude", f"{text!r} is not a range like 0.1-0.5 (mag)") from None
    if not (0 < lo <= hi):
        raise InputError("command line", "--amplitude", f"{text!r}: need 0 < low <= high (mag)")
    return lo, hi


def _f(x, fmt: str = ".3g", none: str = "n/a") -> str:
    return none if x is None else format(x, fmt)


def _duration(hours: float | None) -> str:
    if hours is None:
        return "n/a"
    if hours < 1 / 60:
        return f"{hours * 3600:.2g} s"
    if hours < 1:
        return f"{hours * 60:.2g} min"
    return f"{hours:.3g} h"


#: Nyquist frequency of times kept to the second on no common grid, c/d (1 / (2 × 1 s)).
TIMESTAMP_NYQUIST_PER_DAY = 86400.0 / 2.0


def render_table(d: dict) -> str:
    """The short readable summary of a check (``d`` is ``CheckResult.to_dict()``)."""
    s, inp = d["settings"], d["input"]
    lines = [f"CAUTION: {note.removeprefix('caution: ')}" for note in d["notes"] if note.startswith("caution")]
    sites = ", ".join(f"{k} {v}" for k, v in inp["sites"].items()) or "not given"
    points = f"{inp['n_times']} times"
    if s.get("stack_s"):
        points = (
            f"{inp['n_frames']} frames stacked into {inp['n_times']} points (one per site and "
            f"{_duration(s['stack_s'] / 3600.0)} slot)"
        )
    lines.append(
        f"{points}, {inp['first_utc']} to {inp['last_utc']} (span {inp['span_h']:.1f} h); points per site: {sites}"
    )
    src = inp.get("mag_err_sources")
    if src and inp.get("median_mag_err") is not None:
        parts = [
            f"{src[k]} {w}"
            for k, w in (
                ("log", "from the log"),
                ("model", "modelled from site instruments"),
                ("fallback", "from --mag-err"),
            )
            if src.get(k)
        ]
        frames = "frames" if s.get("stack_s") else "points"
        airmass = s.get("sys_err_mag_per_airmass")
        floor = f"; plus {airmass:g} mag per airmass, added in quadrature" if s.get("stack_s") and airmass else ""
        lines.append(
            f"photometric σ per point: median {inp['median_mag_err']:.4f} mag ({frames}' σ: {', '.join(parts)}{floor})"
        )
    if inp.get("light_time_corrected"):
        lines.append("periods computed on light-time corrected times (t − Δ/c, from the target's geometry)")
    shape = "double-peaked (rotation = 2 × photometric period; found at P/2 is not recovered)"
    shape = shape if s["double_peaked"] else "single-peaked"
    lines.append(
        f"rotation periods {s['min_period_h']:g}–{s['max_period_h']:g} h, {len(d['periods_h'])} trial "
        f"periods, {s['phase_bins']} phase bins; light curve {shape}, amplitude "
        f"{s['amplitude_range_mag'][0]:g}–{s['amplitude_range_mag'][1]:g} mag; "
        f"{s['trials']} injected light curves (seed {s['seed']})"
    )
    lines.append("")
    lines.append("Verdict by period band")
    lines.append(
        f"  {'band (h)':<13} {'verdict':<14} {'coverage min/med':>16} {'max gap':>8} "
        f"{'alias':>6} {'recovered':>9} {'at P/2':>6}  confusable periods (h)"
    )
    for b in d["bands"]:
        rec = "—" if b["recovery_fraction"] is None else f"{100 * b['recovery_fraction']:.0f} %"
        half = "—" if b.get("half_period_fraction") is None else f"{100 * b['half_period_fraction']:.0f} %"
        conf = ", ".join(f"{p:g}" for p in b["confusable_periods_h"][:6])
        if len(b["confusable_periods_h"]) > 6:
            conf += ", …"
        lines.append(
            f"  {b['min_period_h']:5.2f}–{b['max_period_h']:<6.2f} {b['verdict']:<14} "
            f"{_f(b['min_coverage'], '.2f')} / {_f(b['median_coverage'], '.2f'):<6} "
            f"{_f(b['max_phase_gap'], '.2f'):>8} {b['max_alias_height']:6.2f} {rec:>9} {half:>6}  {conf}"
        )
    lines.append("")
    if d["coverage"] and min(d["coverage"]) >= 1.0:
        lines.append(f"Phase coverage: every trial period has all {s['phase_bins']} phase bins covered.")
    else:
        worst = ", ".join(f"{w['period_h']:.2f} h ({100 * w['coverage']:.0f} %)" for w in d["worst_periods"][:6])
        lines.append(f"Worst-covered periods: {worst or 'none'}")
    daily = [c for c in d["commensurate"] if c["coverage"] < s["coverage_threshold"]]
    if daily:
        lines.append(
            "Periods commensurate with the day left under-covered: "
            + ", ".join(f"{c['period_h']:.3g} h ({100 * c['coverage']:.0f} %)" for c in daily)
        )
    peaks = ", ".join(f"{p['freq_per_day']:.3f} c/d ({p['height']:.2f})" for p in d["window_peaks"][:5])
    nyquist = d["nyquist_freq_per_day"]
    # Times on no common grid give the limit of one-second timestamps (43200 c/d): no news, not shown.
    shown = nyquist is not None and nyquist < TIMESTAMP_NYQUIST_PER_DAY * (1.0 - 1e-9)
    lines.append(
        f"Spectral window peaks: {peaks or 'none above 0.1'}"
        + (
            f"; Nyquist frequency {_f(nyquist, '.4g')} c/d (the times share a {86400 / (2 * nyquist):g} s step)"
            if shown
            else ""
        )
    )
    flagged = [a for a in d["aliases"] if a["flagged"]]
    if flagged:
        lines.append(f"Main alias pairs (window height ≥ {s['alias_threshold']:g}):")
        daily_p = {round(c["period_h"], 6) for c in d["commensurate"]}
        daily_a = sorted((a for a in flagged if round(a["period_h"], 6) in daily_p), key=lambda a: -a["period_h"])[:3]
        others = [a for a in flagged if a not in daily_a]
        shown = sorted(daily_a + others[:: max(1, len(others) // 3)][: 6 - len(daily_a)], key=lambda a: a["period_h"])
        for a in shown:
            parts = [
                f"{p['period_h']:.2f} h"
                for p in a["partners"]
                if p["height"] >= s["alias_threshold"] and p["harmonic"] == 1
            ][:4]
            if parts:
                lines.append(f"  {a['period_h']:6.2f} h ↔ {', '.join(parts)} (height {a['max_height']:.2f})")
    else:
        lines.append(f"No alias partner reaches window height {s['alias_threshold']:g}.")
    tr = d["trend"]
    lines.append("")
    lines.append(
        f"Trend: fading-rate σ {_f(tr['rate_sigma_mag_per_day'], '.2g')} mag/day (worst period, "
        f"median {_f(tr['median_rate_sigma_mag_per_day'], '.2g')}); smallest extra fading at "
        f"{s['n_sigma']:g}σ {_f(tr['min_detectable_mag_per_day'], '.2g')} mag/day"
    )
    if tr.get("geometric_trend_used"):
        lines.append(
            f"Geometric trend of the target over the span: {tr['geometric_trend_range_mag']:.3g} mag "
            "(known from r and Δ; fitted in the injection search)"
        )
    lines.append(
        f"Longest gap between visits: {_duration(tr['longest_gap_h'])} "
        f"({tr['longest_gap_start_utc']} → {tr['longest_gap_end_utc']})"
    )
    pc = d["period_change"]
    pick = pc[:: max(1, len(pc) // 5)]
    lines.append(
        f"Period change first vs second half detectable at {s['n_sigma']:g}σ "
        f"(amplitude {s['amplitude_range_mag'][0]:g} mag): "
        + ", ".join(f"P {p['period_h']:.3g} h: {_duration(p['min_detectable_change_h'])}" for p in pick)
    )
    syn = d.get("synodic")
    if syn:
        over = [p for p in syn["periods"] if p["exceeds_precision"]]
        lines.append(
            f"Synodic–sidereal: bisector longitude moves {syn['pab_lon_rate_deg_per_day']:.3g} °/day "
            f"({syn['phase_drift_cycles']:.3g} rotations of phase over the span); offset exceeds the "
            f"1σ period precision for {len(over)} of {len(syn['periods'])} candidate periods"
            + (f" (from {over[0]['period_h']:.3g} h)" if over else "")
        )
    for note in d["notes"]:
        if not note.startswith("caution"):
            lines.append(f"Note: {note}")
    return "\n".join(lines) + "\n"


def register(app: typer.Typer) -> None:
    @app.command("check")
    def check(
        times_csv: Annotated[
            Path,
            typer.Argument(
                metavar="LOG.csv",
                help="observation log CSV: time_utc, optional site, exposure_s, mag_err, status, night",
            ),
        ],
        min_period: Annotated[
            str, typer.Option("--min-period", metavar="PERIOD", help="shortest rotation period (2h, 90m)")
        ] = "2h",
        max_period: Annotated[
            str, typer.Option("--max-period", metavar="PERIOD", help="longest rotation period (30h, 2d)")
        ] = "30h",
        target: Annotated[
            Path | None,
            typer.Option(
                "--target",
                metavar="FILE",
                help="target file: adds the geometric trend and the synodic–sidereal drift",
            ),
        ] = None,
        object_name: Annotated[
            str | None,
            typer.Option("--object", metavar="NAME", help="which line of a multi-line MPC .txt target file"),
        ] = None,
        site: Annotated[
            list[Path] | None,
            typer.Option(
                "--site", metavar="FILE", help="site file (repeatable; with --target): σ per point from its instrument"
            ),
        ] = None,
        trials: Annotated[
            int, typer.Option("--trials", min=0, metavar="N", help="injected light curves (0: none)")
        ] = 200,
        seed: Annotated[int, typer.Option("--seed", metavar="N", help="random seed of the injections")] = 0,
        mag_err: Annotated[
            float, typer.Option("--mag-err", min=1e-6, metavar="MAG", help="σ (mag) where the log gives none")
        ] = 0.02,
        amplitude: Annotated[
            str, typer.Option("--amplitude", metavar="LOW-HIGH", help="peak-to-peak range, mag (0.1-0.5)")
        ] = "0.1-0.5",
        single_peaked: Annotated[bool, typer.Option("--single-peaked", help="assume one maximum per rotation")] = False,
        extra_fading: Annotated[
            float, typer.Option("--extra-fading", metavar="MAG/DAY", help="fading added to injections, mag/day")
        ] = 0.0,
        fmt: Annotated[CheckFormat, typer.Option("--format", help="table or json")] = CheckFormat.table,
        out: Annotated[Path | None, typer.Option("--out", metavar="FILE", help="write here instead of stdout")] = None,
        plot: Annotated[Path | None, typer.Option("--plot", metavar="DIR", help="folder for PNG figures")] = None,
        report: Annotated[
            Path | None,
            typer.Option(
                "--report", metavar="FILE", help="also write a self-contained HTML report of the check to this file"
            ),
        ] = None,
        progress: Annotated[
            bool | None,
            typer.Option("--progress/--no-progress", help="progress on stderr (default: only on a terminal)"),
        ] = None,
        stack: Annotated[
            str,
            typer.Option(
                "--stack", help="frames of one site within one slot of this length make one point (as a plan)"
            ),
        ] = f"{BlockRules.slot_minutes:g}m",
        sys_err: Annotated[
            float,
            typer.Option("--sys-err", min=0.0, help="extinction error per airmass added to each point, mag"),
        ] = ExposureRules.sys_err_mag_per_airmass,
        dask: Annotated[
            str | None,
            typer.Option(
                "--dask",
                metavar="ADDRESS",
                help="run the injected light curves on this Dask scheduler (optional extra 'dask'); same results",
            ),
        ] = None,
    ) -> None:
        """Coverage, alias and trend diagnostics for a list of observation times."""
        from planner.core.fileio import check_outputs, write_text_atomic
        from planner.diagnostics.check import check_times
        from planner.inputs.obslog import read_observation_log

        p_min, p_max = period_range_h(min_period, max_period)
        check_outputs((out, "--out"), (report, "--report"), (plot and plot / "check_coverage.png", "--plot"))
        log = read_observation_log(times_csv)
        if log.times_utc.size == 0:
            raise InputError(str(times_csv), "status", f"no observed rows to check ({len(log.lost)} lost rows only)")
        tgt = None
        if target is not None:
            from planner.inputs.targets import load_target

            tgt = load_target(target, object_name)
        sites = []
        if site:
            from planner.inputs.sites import load_site

            if tgt is None:
                raise InputError("command line", "--site", "needs --target: the noise model needs its brightness")
            sites = [load_site(p) for p in site]
            if log.site is None and len(sites) > 1:
                raise InputError("command line", "--site", "the log has no site column, so give exactly one --site")
        from planner.core.timegrid import parse_duration_s
        from planner.photometry.frames import log_frame_model

        stack_s = parse_duration_s(stack, "command line", "--stack")
        err, airmass, err_sources = log_frame_model(
            tgt,
            log.times_utc,
            log.site,
            sites,
            logged_mag_err=log.mag_err,
            exposure_s=log.exposure_s,
            fallback_mag_err=mag_err,
        )
        stages = {"injection–recovery and diagnostics" if trials else "diagnostics": 1.0}
        with StageProgress(stages, show_progress(progress), "phasewise check") as bar:
            bar(next(iter(stages)))
            result = check_times(
                log.times_utc,
                min_period_h=p_min,
                max_period_h=p_max,
                mag_err=err,
                sites=log.site,
                exposure_s=log.exposure_s,
                airmass=airmass,
                stack_s=stack_s,
                sys_err_mag_per_airmass=sys_err,
                target=tgt,
                trials=trials,
                seed=seed,
                amplitude_range_mag=_amplitudes(amplitude),
                double_peaked=not single_peaked,
                extra_fading_mag_per_day=extra_fading,
                progress=bar.fraction if trials else None,
                workers=None,
                dask_address=dask,
            )
        d = stamped(result.to_dict())
        if log.lost:
            d["notes"].append(f"the log's {len(log.lost)} lost site-night row(s) were skipped (no times to check)")
        d["input"]["mag_err_sources"] = err_sources
        text = json.dumps(d, indent=1, allow_nan=False) + "\n" if fmt == "json" else render_table(d)
        if plot is not None:
            from planner.outputs.figures_diag import write_check_plots

            write_check_plots(d, plot)
        if report is not None:
            from planner.outputs.report import render_check_report

            write_text_atomic(
                report, render_check_report(d, title=f"Sampling check: {times_csv.name}", source=str(times_csv))
            )
        if out is None:
            sys.stdout.write(text)
        else:
            write_text_atomic(out, text)
