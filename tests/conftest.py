"""Shared test set-up: no network, astropy kept offline, paths to the bundled demo files (DEMO_DIR)."""

from __future__ import annotations

from pathlib import Path

import pytest
from hypothesis import settings

from planner.sky.skydata import no_iers_download

ROOT = Path(__file__).resolve().parent.parent
#: The bundled demo inputs (package data: target, campaign and sites/), as planner.demo.DEMO_DIR finds them.
DEMO_DIR = ROOT / "planner" / "data" / "demo"

no_iers_download()

# Property tests draw the same examples on every run, so CI cannot pass or fail by luck of the draw.
settings.register_profile("phasewise", derandomize=True, deadline=None, print_blob=True)
settings.load_profile("phasewise")


@pytest.fixture
def root() -> Path:
    return ROOT


@pytest.fixture(scope="session")
def demo_plan():
    """The bundled demo campaign planned once for the whole session: ``(campaign, PlanResult)``."""
    from planner.inputs.campaign import load_campaign
    from planner.pipeline import plan_campaign

    campaign = load_campaign(DEMO_DIR / "demo-campaign.toml")
    return campaign, plan_campaign(campaign, campaign.load_target())


@pytest.fixture(scope="session")
def demo_replan(demo_plan):
    """The demo campaign re-planned once for the whole session from the invented first-nights log with
    magnitudes (planner/data/demo/demo-first-nights.csv): the PlanResult, its light-curve fit included."""
    from planner.inputs.donelog import read_done_log
    from planner.pipeline import plan_campaign

    campaign = demo_plan[0]
    done = read_done_log(ROOT / "planner" / "data" / "demo" / "demo-first-nights.csv", campaign.sites)
    return plan_campaign(campaign, campaign.load_target(), done)


@pytest.fixture(scope="session")
def demo_run(demo_plan, demo_replan, tmp_path_factory):
    """``phasewise demo``'s run (run_demo on the session's plan and re-plan), written once: its
    DemoResult. Read its folder, or copy it before changing anything."""
    import planner.demo

    out = tmp_path_factory.mktemp("demo") / "phasewise-demo"
    with pytest.MonkeyPatch.context() as mp:
        mp.setattr(
            planner.demo,
            "plan_campaign",
            lambda campaign, target, done=None, **kwargs: demo_plan[1] if done is None else demo_replan,
        )
        result = planner.demo.run_demo(out)
    assert result.report_path == out / "report.html"
    return result


@pytest.fixture(scope="session")
def demo_folder(demo_run) -> Path:
    """The demo's folder as ``phasewise demo`` writes it (the first plan at the top, the re-plan in
    ``replan/``): read it, or copy it before changing anything."""
    return demo_run.out_dir
