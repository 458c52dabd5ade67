"""The bundled demo campaign, end to end: plan, fit the first nights' log, re-plan with it.

The demo campaign (package data in planner/data/demo/: an invented comet, four invented sites under sites/, and
demo-campaign.toml) is
planned with :func:`planner.pipeline.plan_campaign` and written with the plan-folder writer, its
report rendered last. Then the loop an observer runs after the first nights: the invented log of
those nights (planner/data/demo/demo-first-nights.csv, magnitudes of an invented rotating nucleus made by
scripts/make_demo_log.py) is fitted and the remaining nights re-planned from it, to tell its candidate
periods apart (the re-plan's folder ``replan/``, with the fit's own page ``first-nights-fit.html``).
The output folder is marked as the demo's, so a second run refreshes it while a folder with anything
else in it is never touched.
"""

from __future__ import annotations

import time
from dataclasses import dataclass
from importlib.resources import files
from pathlib import Path
from typing import TYPE_CHECKING

from planner.core.errors import InputError
from planner.core.fileio import check_writable, write_text_atomic
from planner.outputs.layout import REPORT_HTML

if TYPE_CHECKING:
    from planner.pipeline import PlanResult

#: The bundled demo inputs, shipped as package data (pip installs them with the code): the target and the
#: campaign file here, the site files under ``sites/``.
DEMO_DIR = Path(str(files("planner") / "data" / "demo"))
DEMO_CAMPAIGN = DEMO_DIR / "demo-campaign.toml"
#: The invented log of the demo week's first three nights (scripts/make_demo_log.py).
DEMO_LOG = DEMO_DIR / "demo-first-nights.csv"
DEFAULT_OUT = Path("phasewise-demo")
#: File that marks a folder as written by ``phasewise demo`` (so a later run may replace it).
DEMO_MARKER = ".phasewise-demo"
#: The re-plan's folder and the fit's page inside the demo folder.
REPLAN_DIR = "replan"
FIT_REPORT = "first-nights-fit.html"


@dataclass
class DemoResult:
    out_dir: Path
    report_path: Path
    #: The plan (blocks, baseline, checks, comparison, ...).
    plan: PlanResult
    seconds: float
    #: The re-plan from the first nights' log (its light-curve fit in ``replan.light_curve``).
    replan: PlanResult | None = None
    replan_report_path: Path | None = None
    fit_report_path: Path | None = None


def check_demo_folder(out_dir: Path) -> None:
    """Refuse a folder that holds anything not made by the demo: the demo never clobbers other work."""
    check_writable(out_dir, folder=True)
    if out_dir.is_dir() and any(out_dir.iterdir()) and not (out_dir / DEMO_MARKER).is_file():
        raise InputError(
            str(out_dir), "--out", "folder is not empty and was not made by `phasewise demo`; choose another --out"
        )


def plan_campaign(campaign, target, done=None, **kwargs) -> PlanResult:
    """:func:`planner.pipeline.plan_campaign`, imported when first called (tests replace this name)."""
    from planner.pipeline import plan_campaign as plan

    return plan(campaign, target, done, **kwargs)


def _plan(campaign, target, done, check_trials: int | None) -> PlanResult:
    return plan_campaign(campaign, target, done, check_trials=check_trials)


def run_demo(
    out_dir: str | Path = DEFAULT_OUT,
    campaign_path: str | Path = DEMO_CAMPAIGN,
    check_trials: int | None = None,
    log_path: str | Path | None = DEMO_LOG,
) -> DemoResult:
    """Plan the demo campaign, write its plan folder and report into ``out_dir``; then fit ``log_path``
    and re-plan from it into ``out_dir/replan`` (None skips the loop); refresh an earlier demo.

    ``check_trials``: injection–recovery trials per diagnostics run (default: the campaign's).
    """
    # Imported here, so `phasewise --help` (which reads DEFAULT_OUT) stays quick.
    from planner.inputs.campaign import load_campaign
    from planner.inputs.donelog import read_done_log
    from planner.outputs.planfolder import lightcurve_json, write_plan_folder
    from planner.outputs.report_fit import render_fit_report

    t0 = time.perf_counter()
    out = Path(out_dir)
    check_demo_folder(out)
    campaign_path = Path(campaign_path)
    if not campaign_path.is_file():
        raise InputError(
            str(campaign_path),
            "-",
            "demo campaign not found: the package data is missing; reinstall phasewise",
        )
    campaign = load_campaign(campaign_path)
    target = campaign.load_target()
    result = _plan(campaign, target, None, check_trials)
    write_plan_folder(result, out, force=True)
    write_text_atomic(
        out / DEMO_MARKER, "Written by `phasewise demo`; a later `phasewise demo` replaces this folder.\n"
    )
    demo = DemoResult(out_dir=out, report_path=out / REPORT_HTML, plan=result, seconds=0.0)
    if log_path is not None:
        done = read_done_log(log_path, campaign.sites)
        demo.replan = _plan(campaign, target, done, check_trials)
        write_plan_folder(demo.replan, out / REPLAN_DIR, force=True)
        demo.replan_report_path = out / REPLAN_DIR / REPORT_HTML
        doc = lightcurve_json(demo.replan)
        if doc is not None:
            demo.fit_report_path = write_text_atomic(
                out / FIT_REPORT,
                render_fit_report(
                    doc, title=f"Light-curve fit: {target.name}, first nights", source=Path(log_path).name
                ),
            )
    demo.seconds = time.perf_counter() - t0
    return demo
