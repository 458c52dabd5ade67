"""The bundled demo campaign, end to end: plan, diagnostics, plan folder and report.

The demo campaign (package data in planner/data/demo/: an invented comet, four invented sites under
sites/, and demo-campaign.toml) is planned with :func:`planner.pipeline.plan_campaign`, written with the
plan-folder writer, its report rendered last. The output folder is marked as the demo's, so a second
run refreshes it while a folder with anything else in it is never touched.
"""

from __future__ import annotations

import time
from dataclasses import dataclass
from importlib.resources import files
from pathlib import Path

from planner.core.errors import InputError
from planner.core.fileio import write_text_atomic
from planner.inputs.campaign import load_campaign
from planner.outputs.layout import REPORT_HTML
from planner.outputs.planfolder import write_plan_folder
from planner.pipeline import PlanResult, plan_campaign

#: The bundled demo inputs, shipped as package data (pip installs them with the code): the target and the
#: campaign file here, the site files under ``sites/``.
DEMO_DIR = Path(str(files("planner") / "data" / "demo"))
DEMO_CAMPAIGN = DEMO_DIR / "demo-campaign.toml"
DEFAULT_OUT = Path("phasewise-demo")
#: File that marks a folder as written by ``phasewise demo`` (so a later run may replace it).
DEMO_MARKER = ".phasewise-demo"


@dataclass
class DemoResult:
    out_dir: Path
    report_path: Path
    #: The plan (blocks, baseline, checks, comparison, ...).
    plan: PlanResult
    seconds: float


def check_demo_folder(out_dir: Path) -> None:
    """Refuse a folder that holds anything not made by the demo: the demo never clobbers other work."""
    if out_dir.exists() and not out_dir.is_dir():
        raise InputError(str(out_dir), "--out", "exists and is not a folder")
    if out_dir.is_dir() and any(out_dir.iterdir()) and not (out_dir / DEMO_MARKER).is_file():
        raise InputError(
            str(out_dir), "--out", "folder is not empty and was not made by `phasewise demo`; choose another --out"
        )


def run_demo(
    out_dir: str | Path = DEFAULT_OUT, campaign_path: str | Path = DEMO_CAMPAIGN, check_trials: int | None = None
) -> DemoResult:
    """Plan the demo campaign, write its plan folder and report into ``out_dir``; refresh an earlier demo.

    ``check_trials``: injection–recovery trials per diagnostics run (default: the campaign's).
    """
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
    result = plan_campaign(campaign, campaign.load_target(), check_trials=check_trials)
    write_plan_folder(result, out, force=True)
    write_text_atomic(
        out / DEMO_MARKER, "Written by `phasewise demo`; a later `phasewise demo` replaces this folder.\n"
    )
    return DemoResult(out_dir=out, report_path=out / REPORT_HTML, plan=result, seconds=time.perf_counter() - t0)
