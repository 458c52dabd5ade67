"""Plan and check tell the same story: a log made of the demo plan's own exposures, run through
``phasewise check`` with the same target and sites, gives the plan's diagnostics.

Both stack the frames of one site per slot and add the per-airmass extinction term
(:mod:`planner.photometry.points`); without that, the brightest site's many frames dominate the
spectral window and check reports aliases the plan does not have.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from clirun import run_cli

from planner.inputs.sites import load_site
from planner.photometry.points import light_curve_points, point_sigma_mag, stack_frames

ROOT = Path(__file__).resolve().parent.parent


def _log_from_plan_csv(folder: Path, campaign, out: Path) -> pd.DataFrame:
    """One row per planned exposure, from plan.csv alone: science start, then exposure + readout
    cycles, each logged at mid-exposure (the readout from the site files)."""
    readout = {s.name: s.instrument.readout_s for s in campaign.sites}
    rows = []
    for b in pd.read_csv(folder / "plan.csv").itertuples():
        t0 = np.datetime64(b.science_start_utc.rstrip("Z"), "ns")
        k = np.arange(int(b.n_exposures))
        mid_ns = np.round((k * (b.exposure_s + readout[b.site]) + 0.5 * b.exposure_s) * 1e9).astype(np.int64)
        rows.append(
            pd.DataFrame(
                {"time_utc": t0 + mid_ns.astype("timedelta64[ns]"), "site": b.site, "exposure_s": b.exposure_s}
            )
        )
    log = pd.concat(rows, ignore_index=True)
    text = log.assign(time_utc=[f"{t}Z" for t in np.datetime_as_string(log["time_utc"].to_numpy(), unit="ms")])
    text.to_csv(out, index=False)
    return log


def _check(capsys, log: Path, campaign, *extra) -> dict:
    sites = [a for p in campaign.site_paths for a in ("--site", p)]
    r = run_cli(
        capsys, "check", log, "--target", campaign.target_path, *sites, "--trials", "0", "--format", "json", *extra
    )
    assert r.returncode == 0, r.stderr
    return json.loads(r.stdout)


@pytest.mark.slow
def test_a_log_of_the_plans_exposures_gives_the_plans_diagnostics(tmp_path, capsys, demo_plan, demo_folder):
    campaign, result = demo_plan
    log = _log_from_plan_csv(demo_folder, campaign, tmp_path / "log.csv")
    # The log rebuilt from plan.csv holds the planned exposures themselves (to 0.01 s: plan.csv keeps
    # seven significant digits of exposure_s, and a block holds up to ~500 cycles).
    planned = result.exposures["time_utc"].to_numpy("datetime64[ns]")
    assert len(log) == planned.size
    assert np.abs(np.sort(log["time_utc"].to_numpy()) - np.sort(planned)).max() < np.timedelta64(10, "ms")

    plan = json.loads((demo_folder / "diagnostics.json").read_text())["plan"]
    check = _check(capsys, tmp_path / "log.csv", campaign)
    assert check["input"]["n_frames"] == len(log) and check["input"]["n_times"] == plan["input"]["n_times"]
    assert check["settings"]["stack_s"] == plan["settings"]["stack_s"] == campaign.block_rules.slot_s
    assert check["highest_alias"]["height"] == pytest.approx(plan["highest_alias"]["height"], abs=0.02)
    assert min(check["coverage"]) == pytest.approx(min(plan["coverage"]), abs=0.02)
    assert check["trend"]["min_detectable_mag_per_day"] == pytest.approx(
        plan["trend"]["min_detectable_mag_per_day"], rel=0.02
    )

    # Frame by frame with no extinction term (what check did before): the brightest site dominates.
    frames = _check(capsys, tmp_path / "log.csv", campaign, "--stack", "1s", "--sys-err", "0")
    assert frames["input"]["n_times"] == len(log)
    assert abs(frames["highest_alias"]["height"] - plan["highest_alias"]["height"]) > 0.1


def test_points_are_frames_stacked_per_slot_with_the_extinction_term():
    # Four frames of σ = 0.02 mag in one 5-minute slot: the mean has σ/√4 = 0.01 mag (standard error of
    # a mean); at airmass 1.5 with s = 0.005 mag per airmass the point's σ is √(0.01² + 0.0075²) = 0.0125.
    t0 = np.datetime64("2034-03-19T01:00:00", "ns")
    t = t0 + np.array([30, 90, 150, 210, 330], dtype="timedelta64[s]").astype("timedelta64[ns]")
    frames = pd.DataFrame(
        {"time_utc": t, "site": "A", "mag_err": [0.02] * 4 + [0.03], "airmass": [1.4, 1.5, 1.5, 1.6, 1.7]}
    )
    points = light_curve_points(frames, 300.0, 0.005)
    assert list(points["n_frames"]) == [4, 1]
    assert points["time_utc"].iloc[0] == t0 + np.timedelta64(120, "s")
    assert points["mag_err"].iloc[0] == pytest.approx(0.0125, rel=1e-12)
    assert points["mag_err"].iloc[1] == pytest.approx(np.hypot(0.03, 0.005 * 1.7), rel=1e-12)
    # Slots count from 00:00 UTC whatever the grid's own origin, when the slot divides the day.
    other = stack_frames(frames, 300.0, np.datetime64("2034-03-18T00:00:00", "ns"))
    assert other["time_utc"].tolist() == points["time_utc"].tolist()
    assert point_sigma_mag(0.02, 4, 1.5, 0.005) == pytest.approx(0.0125, rel=1e-12)


def test_check_stacks_a_small_log_as_the_plan_would(tmp_path, capsys):
    site = load_site(ROOT / "planner" / "data" / "demo" / "sites" / "karoo-ridge.toml")
    times = np.datetime64("2034-03-19T20:00:00") + np.arange(0, 6 * 3600, 40).astype("timedelta64[s]")
    log = tmp_path / "log.csv"
    pd.DataFrame({"time_utc": [f"{t}Z" for t in times], "site": site.name, "mag_err": 0.01}).to_csv(log, index=False)
    r = run_cli(capsys, "check", log, "--trials", "0", "--format", "json")
    d = json.loads(r.stdout)
    # 6 h of frames every 40 s in 5-minute slots: 72 points of 7 or 8 frames (σ 0.01/√7.5 ≈ 0.0037 mag).
    assert d["input"]["n_frames"] == times.size and d["input"]["n_times"] == 72
    assert d["input"]["median_mag_err"] == pytest.approx(0.01 / np.sqrt(7.5), rel=0.05)
