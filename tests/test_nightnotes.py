"""Every site-night gets a line: its blocks, or why it has none (planner.schedule.nightnotes)."""

from __future__ import annotations

import numpy as np
import pandas as pd

from planner.inputs.settings import Weights
from planner.pipeline import schedule_core
from planner.schedule.nightnotes import night_notes
from planner.schedule.planmodel import Visit
from planner.schedule.state import PlanState
from tests.schedule_helpers import SMALL_BLOCKS, T_REF, small_campaign, synthetic_windows

BLOCKS = SMALL_BLOCKS
_campaign = small_campaign


def _windows():
    w, sites = synthetic_windows(3, 2, window_h=7.0, hours_per_night=2.0, seed=4)
    third = [
        # S0: target never up on the third night (a zero-hour row with the windows module's reason).
        dict(
            site="S0",
            night="2034-03-18",
            start_utc=pd.NaT,
            end_utc=pd.NaT,
            hours=0.0,
            best_utc=pd.NaT,
            max_alt_deg=np.nan,
            reason="below the horizon limit all dark time",
        ),
        # S1: only 40 minutes, under the shortest block.
        dict(
            site="S1",
            night="2034-03-18",
            start_utc=T_REF + np.timedelta64(3 * 24 * 60 + 420, "m"),
            end_utc=T_REF + np.timedelta64(3 * 24 * 60 + 460, "m"),
            hours=40 / 60,
            best_utc=T_REF + np.timedelta64(3 * 24 * 60 + 440, "m"),
            max_alt_deg=50.0,
        ),
    ]
    return pd.concat([w, pd.DataFrame(third)], ignore_index=True), sites


def test_every_site_night_has_a_line_with_its_reason():
    w, sites = _windows()
    camp = _campaign(sites, 3)
    core = schedule_core(camp, w, max_evaluations=600)
    n = core.nights
    assert len(n) == 3 * 3 and set(zip(n["site"], n["night"], strict=True)) == {
        (s.name, f"2034-03-{d}") for s in sites for d in (16, 17, 18)
    }
    row = n[(n["site"] == "S0") & (n["night"] == "2034-03-18")].iloc[0]
    assert row["status"] == "no window" and row["note"] == "no window: below the horizon limit all dark time"
    row = n[(n["site"] == "S1") & (n["night"] == "2034-03-18")].iloc[0]
    assert row["status"] == "too short" and "shortest block (1 h)" in row["note"]
    row = n[(n["site"] == "S2") & (n["night"] == "2034-03-18")].iloc[0]
    assert row["status"] == "no window"  # S2 has no row at all that night
    planned = n[n["status"] == "planned"]
    # Hours planned per site-night, recomputed from the visits themselves.
    hours = {}
    for v in core.visits:
        p = core.grid.site_nights[v.site_night]
        hours[(p.site, p.night.isoformat())] = hours.get((p.site, p.night.isoformat()), 0.0) + v.length / 6.0
    assert {(r.site, r.night): r.planned_h for r in planned.itertuples()} == hours


def _exhaustive_best(core, visits, site, night) -> float:
    g = core.grid
    state = PlanState(core.model, visits)
    part = next(i for i, p in enumerate(g.site_nights) if p.site == site and p.night.isoformat() == night)
    sel = g.elem_site_night == part
    return max(
        state.score([], [Visit(part, int(s), int(ln))]).total - state.current.total
        for s, ln in zip(g.elem_start[sel], g.elem_len[sel], strict=True)
    )


def test_not_needed_and_unplaced_agree_with_every_placement():
    # Only coverage and alias count: once coverage saturates, a further block only moves the alias peak,
    # so some site-nights are left empty on purpose.
    w, sites = synthetic_windows(3, 6, window_h=7.0, hours_per_night=2.0, seed=4)
    weights = Weights(coverage=1.0, robustness=0.0, alias=0.5, cadence=0.0, hours=0.0, quality=0.0)
    camp = _campaign(sites, 6, weights=weights)
    core = schedule_core(camp, w, max_evaluations=3000)
    n = core.nights
    empty = n[n["status"] != "planned"]
    assert len(empty) and set(empty["status"]) <= {"not needed", "unplaced"}
    for r in empty.itertuples():
        best = _exhaustive_best(core, core.visits, r.site, r.night)
        assert (r.status == "not needed") == (best <= 0) and f"{best:+.4f}" in r.note
        assert "alias" in r.note  # the term that makes a block here worse
    # Take a planned site-night's blocks away: the notes now say a block there would help.
    p0 = core.grid.site_nights[core.visits[0].site_night]
    kept = [v for v in core.visits if v.site_night != core.visits[0].site_night]
    n2 = night_notes(camp, w, core.grid, core.model, kept)
    row = n2[(n2["site"] == p0.site) & (n2["night"] == p0.night.isoformat())].iloc[0]
    best = _exhaustive_best(core, kept, p0.site, p0.night.isoformat())
    assert best > 0 and row["status"] == "unplaced" and f"{best:+.4f}" in row["note"]


def test_replan_notes_give_the_true_reason():
    # Three sites on UTC clocks; the log's last exposure ends at 04:00:30 UTC (2034-03-17) at S1.
    from planner.inputs.donelog import DoneLog
    from planner.inputs.sites import Allocation, Site

    sites = [Site(name=f"S{i}", latitude_deg=-30.0, longitude_deg=0.0, allocation=Allocation(2.0)) for i in range(3)]
    spans = {"S0": ("19:00", "02:00"), "S1": ("22:00", "05:00"), "S2": ("20:00", "04:45")}
    rows = []
    for night in ("2034-03-16", "2034-03-17"):
        for name, (a, b) in spans.items():
            start = np.datetime64(f"{night}T{a}", "ns")
            end = np.datetime64(f"{night}T{b}", "ns") + np.timedelta64(1, "D")
            rows.append(
                dict(site=name, night=night, start_utc=start, end_utc=end, hours=(end - start) / np.timedelta64(1, "h"))
            )
    w = pd.DataFrame(rows).assign(best_utc=lambda d: d["start_utc"] + (d["end_utc"] - d["start_utc"]) / 2)
    w["max_alt_deg"] = 60.0
    times = np.datetime64("2034-03-17T02:30:30", "ns") + np.arange(90) * np.timedelta64(60, "s")
    done = DoneLog("log.csv", times, np.array(["S1"] * 90, dtype=object), np.full(90, 60.0), np.full(90, np.nan))
    assert done.end_utc == np.datetime64("2034-03-17T04:00:00", "ns") and done.end_site == "S1"
    core = schedule_core(_campaign(sites, 2), w, done, max_evaluations=300)
    n = core.nights.set_index(["site", "night"])
    cut = "nothing is planned before the log's last time, 04:00 UTC on 2034-03-17"
    past = n.loc[("S0", "2034-03-16")]
    assert past["status"] == "past" and past["note"] == f"{cut} (S1), and this night's window ends at 02:00 UTC"
    logged = n.loc[("S1", "2034-03-16")]
    assert logged["status"] == "observed" and logged["note"] == (
        "observed: 1.50 h in the log; this night's 2 h allocation leaves 0.50 h after the log, "
        "under the shortest block (1 h)"
    )
    short = n.loc[("S2", "2034-03-16")]
    assert short["status"] == "too short" and short["note"] == (
        f"too short: {cut} (S1); what is left of the window after it (0.75 h at most) is under the shortest block (1 h)"
    )
    assert "no time left" not in " ".join(n["note"])
