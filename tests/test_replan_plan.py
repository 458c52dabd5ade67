"""`plan --done LOG.csv` with magnitudes, on the demo's invented first-nights log (session fixtures): the
fit in the pipeline, the candidates' period range, diagnostics.json's discrimination, the printed line,
the report's light-curve section, the demo loop; and that a plan without magnitudes is unchanged."""

from __future__ import annotations

import json

import numpy as np
import pytest
from test_report import _parse

from planner.outputs.planfolder import diagnostics_json, plan_manifest
from planner.outputs.terminal import comparison_text
from planner.schedule.solve import OBJECTIVE_DEFINITION

#: The objective terms every plan reports (docs/formats.md, "The objective and the guarantee").
TERM_KEYS = {
    "coverage",
    "expected_coverage",
    "alias",
    "excess_gap_h",
    "gap_fraction",
    "hours_fraction",
    "quality",
    "total",
}
WEIGHT_KEYS = {"coverage", "robustness", "alias", "cadence", "hours", "quality"}


def _lookup(doc, path: str):
    for key in path.split("."):
        doc = doc[int(key)] if isinstance(doc, list) else doc[key]
    return doc


def test_the_log_is_fitted_and_its_candidates_drive_the_replan(demo_replan):
    r = demo_replan
    lc = r.light_curve
    periods = lc.fit.to_dict()["periods"]
    assert lc.curve.points.size == 180 and lc.curve.lost_rows == 9
    assert [round(p, 6) for p in r.discrimination.candidates_h] == [
        round(c["period_h"], 6) for c in periods["candidates"]
    ]
    # The checks look at the candidates' period range: the windows around them, not the campaign's 2–30 h.
    grid = np.array(r.discrimination.period_grid_h)
    settings = r.checks["plan"].settings
    assert settings.min_period_h == pytest.approx(grid.min()) and settings.max_period_h == pytest.approx(grid.max())
    for p in r.discrimination.candidates_h:
        assert np.min(np.abs(1 / grid - 1 / p)) < 1e-9
    assert r.objective.n_periods == grid.size
    # Two routes to the plan's smallest expected Δχ²: the optimiser's running sums over science slots
    # (slot precision) and the discriminate kernel over the plan's light-curve points (stacked frames).
    ours = r.objective.heuristic.min_delta_chi2
    measured = r.discrimination.expected_min_delta_chi2[0]
    assert measured == pytest.approx(ours, rel=0.25)


def test_diagnostics_and_the_printed_comparison_show_the_discrimination(demo_replan):
    r = demo_replan
    d = diagnostics_json(r)["discrimination"]
    assert set(d) == {"candidates_h", "expected_min_delta_chi2", "pairs_h", "period_grid_h"}
    assert set(d["expected_min_delta_chi2"]) == {"plan", "baseline"}
    assert all(v > 0 for v in d["expected_min_delta_chi2"].values())
    obj = r.objective.to_dict()
    assert obj["definition"].endswith("+ w_disc*discrimination") and obj["weights"]["discrimination"] == 1.0
    assert {"discrimination", "min_delta_chi2"} <= set(obj["heuristic"])
    text = comparison_text(r)
    assert "least Δχ² between candidate periods" in text and "13.89, 20.38" in text


def test_replan_folder_holds_the_fit_and_its_report_section(demo_folder):
    folder = demo_folder / "replan"
    curve = json.loads((folder / "lightcurve.json").read_text())
    diag = json.loads((folder / "diagnostics.json").read_text())
    assert {"periods", "fading", "period_change", "zero_points", "input", "arrays"} <= set(curve)
    assert len(curve["arrays"]["points"]["phase"]) == curve["input"]["n_times"] == 180
    assert "discrimination" in json.loads((folder / "plan.json").read_text())["settings"]["weights"]
    parsed = _parse((folder / "report.html").read_text())
    assert parsed.figures[:4] == ["fig-lc-folded", "fig-lc-chi2", "fig-lc-residuals", "fig-lc-law"]
    docs = {"lightcurve.json": curve, "diagnostics.json": diag}
    seen = set()
    for s in parsed.spans:
        file, _, path = s.get("data-src", "").partition(":")
        if file in docs:
            assert json.loads(s["data-value"]) == _lookup(docs[file], path), s
            seen.add(f"{file}:{path}")
    assert {
        "lightcurve.json:periods.best_h",
        "lightcurve.json:fading.k1",
        "diagnostics.json:discrimination.expected_min_delta_chi2.plan",
        "diagnostics.json:discrimination.expected_min_delta_chi2.baseline",
    } <= seen
    page = (demo_folder / "first-nights-fit.html").read_text()
    assert _parse(page).figures == ["fig-lc-folded", "fig-lc-chi2", "fig-lc-residuals", "fig-lc-law"]


def test_a_plan_without_magnitudes_is_unchanged(demo_plan, demo_folder):
    # No magnitudes, no fit: the objective, its terms and weights, the manifest and diagnostics keep
    # exactly the keys and words they had before light curves were fitted, and the report no section.
    _, r = demo_plan
    assert r.light_curve is None and r.discrimination is None
    obj = r.objective.to_dict()
    assert obj["definition"] == OBJECTIVE_DEFINITION and "discrimination" not in obj
    assert set(obj["weights"]) == WEIGHT_KEYS and set(plan_manifest(r)["settings"]["weights"]) == WEIGHT_KEYS
    for key in ("heuristic", "baseline"):
        assert set(obj[key]) == TERM_KEYS
    assert set(obj["greedy"]) == TERM_KEYS | {"covered_cells", "n_cells", "evaluations", "elements"}
    assert "discrimination" not in diagnostics_json(r) and "light_curve_fit" not in r.timings_s
    assert "Δχ²" not in comparison_text(r)
    # The J the optimiser reports is the sum of the old terms and weights alone.
    t, w = r.objective.heuristic, r.objective.weights
    total = (
        w.coverage * t.coverage
        + w.robustness * t.expected_coverage
        - w.alias * t.alias
        - w.cadence * t.gap_fraction
        + w.hours * t.hours_fraction
        + w.quality * t.quality
    )
    assert t.total == pytest.approx(total, abs=1e-12)
    assert not (demo_folder / "lightcurve.json").exists()
    assert 'id="lightcurve"' not in (demo_folder / "report.html").read_text()


def test_demo_command_prints_the_loop(demo_run, monkeypatch, capsys):
    from clirun import run_cli

    monkeypatch.setattr("planner.demo.run_demo", lambda out: demo_run)
    r = run_cli(capsys, "demo", "--out", demo_run.out_dir)
    assert r.returncode == 0, r.stderr
    out = r.stdout
    for words in (
        "After the first three nights",
        "best rotation period 13.8",
        "candidates: 13.89 h",
        "Re-planned from that log",
        "least Δχ² between candidate periods",
        "first-nights-fit.html",
        "replan/report.html",
    ):
        assert words in out, words


def test_plan_command_prints_the_fit_and_the_json_carries_the_discrimination(
    demo_plan, demo_replan, monkeypatch, capsys
):
    from clirun import run_cli

    campaign, _ = demo_plan
    monkeypatch.setattr("planner.pipeline.plan_campaign", lambda *a, **k: demo_replan)
    log = campaign.path.parent / "demo-first-nights.csv"
    r = run_cli(capsys, "plan", campaign.path, "--done", log)
    assert r.returncode == 0, r.stderr
    assert r.stdout.count("light curve of the log:") == 1 and "candidates: 13.89 h" in r.stdout
    r = run_cli(capsys, "plan", campaign.path, "--done", log, "--format", "json")
    doc = json.loads(r.stdout)
    assert doc["discrimination"]["candidates_h"] == demo_replan.discrimination.candidates_h


def test_replan_pages_render_in_headless_chromium(demo_folder):
    from browser import Browser, find_chromium

    exe = find_chromium()
    if exe is None:
        pytest.skip("headless Chromium not found: install the Debian packages chromium and chromium-driver")
    with Browser(exe) as b:
        for page in (demo_folder / "replan" / "report.html", demo_folder / "first-nights-fit.html"):
            b.open(page)
            ok = b.evaluate("Array.from(document.images).every(i => i.complete && i.naturalWidth > 100)")
            assert ok and b.problems() == [], page
