"""Every site-night of a campaign, and what the plan does with it: its blocks, or why it has none.

Observers granted time expect to be told how to use it, or why it is not needed. For a site-night
without a block the note says which of these holds (first match):

- ``observed``: the log holds observations that night and no usable time is left;
- ``lost``: the observation log marks it lost;
- ``past``: re-planning, and the night ended before the log's last exposure;
- ``no window``: the target is not observable (the windows table's reason);
- ``too short``: windows or allocation left (after anything already observed) are shorter than the
  shortest block, or fixed allocation blocks miss the window;
- ``site budget``: the site's whole-campaign hours (``total_hours``) are already planned elsewhere;
- ``not needed``: a block would fit, but the best one lowers the objective; the note gives the
  change and the term that makes it worse;
- ``unplaced``: a block would raise the objective but the search stopped (evaluation budget)
  before placing it; the note says so.
"""

from __future__ import annotations

from datetime import date, timedelta

import numpy as np
import pandas as pd

from planner.inputs.campaign import Campaign
from planner.schedule.localsearch import fits
from planner.schedule.slots import SlotGrid
from planner.schedule.state import PlanModel, PlanState, Visit

NOTE_COLUMNS = ("site", "night", "blocks", "planned_h", "budget_h", "observed_h", "window_h", "status", "note")
#: Placements tried per empty site-night when explaining it (all of them up to this many, else spread).
_TRIES = 400
_TERM_WORDS = {
    "alias": ("alias", -1),
    "gap_fraction": ("cadence gaps", -1),
    "coverage": ("coverage", 1),
    "expected_coverage": ("weather-expected coverage", 1),
    "hours_fraction": ("hours", 1),
    "quality": ("quality", 1),
}


def _best_addition(model: PlanModel, state: PlanState, part: int) -> tuple[float, Visit | None, dict]:
    """Best change of the objective from one greedy-length block in ``part`` (and its term changes)."""
    g = model.grid
    idx = np.flatnonzero(g.elem_site_night == part)
    if idx.size > _TRIES:
        idx = idx[np.linspace(0, idx.size - 1, _TRIES).round().astype(int)]
    best, best_v, best_terms = -np.inf, None, {}
    now = state.current
    for e in idx:
        v = Visit(part, int(g.elem_start[e]), int(g.elem_len[e]))
        if not fits(g, state.visits, v):
            continue
        t = state.score([], [v])
        if t.total - now.total > best:
            best, best_v = t.total - now.total, v
            best_terms = {k: (getattr(now, k), getattr(t, k)) for k in _TERM_WORDS}
    return best, best_v, best_terms


def _worst_term(model: PlanModel, terms: dict) -> str:
    w = model.weights
    weight = {
        "alias": w.alias,
        "gap_fraction": w.cadence,
        "coverage": w.coverage,
        "expected_coverage": w.robustness,
        "hours_fraction": w.hours,
        "quality": w.quality,
    }
    contrib = {k: sign * weight[k] * (b - a) for k, (a, b) in terms.items() for _, sign in [_TERM_WORDS[k]]}
    k = min(contrib, key=contrib.get)
    a, b = terms[k]
    return f"{_TERM_WORDS[k][0]} {a:.3f} -> {b:.3f}"


def night_notes(
    campaign: Campaign,
    windows: pd.DataFrame,
    grid: SlotGrid,
    model: PlanModel,
    visits: list[Visit],
    lost: set[tuple[str, date]] | None = None,
    not_before_utc: np.datetime64 | None = None,
    observed_h: dict[tuple[str, date], float] | None = None,
) -> pd.DataFrame:
    """One row per site and campaign night (NOTE_COLUMNS): blocks and hours planned, the site-night's
    hour budget (allocation within the window, less anything observed; 0 when unusable), hours
    already observed (``observed_h``, from the log), window hours,
    ``status`` (``planned``, ``observed``, ``lost``, ``past``, ``no window``, ``too short``, ``site budget``,
    ``not needed``, ``unplaced``) and a one-line ``note`` for the observer."""
    lost = lost or set()
    observed_h = observed_h or {}
    nights = [campaign.first_night + timedelta(days=k) for k in range(campaign.nights)]
    w = windows.copy()
    w["_night"] = pd.to_datetime(w["night"]).dt.date
    part_of = {(p.site, p.night): i for i, p in enumerate(grid.site_nights)}
    planned: dict[int, list[Visit]] = {}
    for v in visits:
        planned.setdefault(v.site_night, []).append(v)
    state = PlanState(model, visits)
    min_h = campaign.block_rules.min_block_h
    rows = []
    for site in campaign.sites:
        for night in nights:
            ws = w[(w["site"] == site.name) & (w["_night"] == night)]
            open_ = ws[ws["start_utc"].notna()]
            window_h = float(open_["hours"].sum()) if len(open_) else 0.0
            pi = part_of.get((site.name, night))
            mine = planned.get(pi, []) if pi is not None else []
            row = dict(
                site=site.name,
                night=night.isoformat(),
                blocks=len(mine),
                planned_h=sum(v.length for v in mine) * grid.slot_h,
                budget_h=0.0 if pi is None else grid.site_nights[pi].budget_slots * grid.slot_h,
                observed_h=float(observed_h.get((site.name, night), 0.0)),
                window_h=window_h,
            )
            if mine:
                status, note = "planned", f"{len(mine)} block(s), {row['planned_h']:.2f} h"
            elif row["observed_h"] > 0 and pi is None:
                status, note = "observed", f"observed: {row['observed_h']:.2f} h in the log, no time left to plan"
            elif (site.name, night) in lost:
                status, note = "lost", "lost (observation log): nothing planned"
            elif (
                not_before_utc is not None
                and len(open_)
                and np.datetime64(open_["end_utc"].max(), "ns") <= np.datetime64(not_before_utc, "ns")
            ):
                status, note = "past", "already over when the log ends: nothing planned"
            elif not len(open_):
                reasons = [str(r) for r in ws.get("reason", pd.Series(dtype=object)).dropna() if str(r)]
                status, note = "no window", "no window: " + (reasons[0] if reasons else "target not observable")
            elif pi is None:
                status = "too short"
                note = (
                    f"too short: the usable window (within the allocation, after anything already "
                    f"observed) is under the shortest block ({min_h:g} h)"
                )
            else:
                delta, v, terms = _best_addition(model, state, pi)
                if v is None:
                    status = "site budget"
                    note = (
                        f"site budget: its campaign hours (total_hours = {campaign.total_hours.get(site.name)}) "
                        "are planned on other nights"
                    )
                elif delta <= 0:
                    status = "not needed"
                    note = (
                        f"not needed: the best {v.length * grid.slot_h:.1f} h block here would change the "
                        f"objective by {delta:+.4f} ({_worst_term(model, terms)})"
                    )
                else:
                    status = "unplaced"
                    note = (
                        f"unplaced: the search stopped before placing a block here; a "
                        f"{v.length * grid.slot_h:.1f} h block would raise the objective by {delta:+.4f}"
                    )
            rows.append({**row, "status": status, "note": note})
    return pd.DataFrame(rows, columns=list(NOTE_COLUMNS))
