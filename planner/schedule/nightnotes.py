"""Every site-night of a campaign, and what the plan does with it: its blocks, or why it has none.

Observers granted time expect to be told how to use it, or why it is not needed. For a site-night
without a block the note says which of these holds (first match):

- ``observed``: the log holds observations that night and no usable time is left; the note says why
  (nothing is planned before the log's last time, the night's allocation is used, or what is left
  of the window is under the shortest block);
- ``lost``: the observation log marks it lost;
- ``past``: re-planning, and the night's window ended before the log's last exposure (the note gives
  that time and the site it was taken at);
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
from planner.schedule.planmodel import PlanModel, Visit
from planner.schedule.slots import SlotGrid
from planner.schedule.state import PlanState

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


def _window_left_h(open_: pd.DataFrame, not_before_utc: np.datetime64) -> float:
    """Hours of a night's windows that lie after ``not_before_utc``."""
    start = np.maximum(open_["start_utc"].to_numpy("datetime64[ns]"), not_before_utc)
    end = open_["end_utc"].to_numpy("datetime64[ns]")
    return float(np.clip((end - start).astype(np.int64), 0, None).sum()) / 3.6e12


def _why_nothing_left(
    site, open_: pd.DataFrame, observed_h: float, min_h: float, log_end: tuple[np.datetime64, str] | None
) -> str:
    """Why a site-night with a window gets no block when re-planning from a log: the true reason."""
    hpn = site.allocation.hours_per_night
    if log_end is not None:
        t, where = log_end
        text = np.datetime_as_string(t, unit="m")
        at = "this site" if where == site.name else (where or "a site the log does not name")
        cut = f"nothing is planned before the log's last time, {text[11:16]} UTC on {text[:10]} ({at})"
        left = _window_left_h(open_, t)
        if left == 0.0:
            end = np.datetime_as_string(open_["end_utc"].to_numpy("datetime64[ns]").max(), unit="m")
            return f"{cut}, and this night's window ends at {end[11:16]} UTC"
    else:
        cut, left = "", float(open_["hours"].sum())
    if hpn is not None and observed_h > 0 and hpn - observed_h < min_h:
        return (
            f"this night's {hpn:g} h allocation leaves {max(hpn - observed_h, 0.0):.2f} h after the log, "
            f"under the shortest block ({min_h:g} h)"
        )
    around = " and around the observed runs" if observed_h > 0 else ""
    after = f"{cut}; what is left of the window after it{around}" if cut else f"what is left of the window{around}"
    return f"{after} ({left:.2f} h at most) is under the shortest block ({min_h:g} h)"


def night_notes(
    campaign: Campaign,
    windows: pd.DataFrame,
    grid: SlotGrid,
    model: PlanModel,
    visits: list[Visit],
    lost: set[tuple[str, date]] | None = None,
    not_before_utc: np.datetime64 | None = None,
    observed_h: dict[tuple[str, date], float] | None = None,
    not_before_site: str | None = None,
) -> pd.DataFrame:
    """One row per site and campaign night (NOTE_COLUMNS): blocks and hours planned, the site-night's
    hour budget (allocation within the window, less anything observed; 0 when unusable), hours
    already observed (``observed_h``, from the log), window hours,
    ``status`` (``planned``, ``observed``, ``lost``, ``past``, ``no window``, ``too short``, ``site budget``,
    ``not needed``, ``unplaced``) and a one-line ``note`` for the observer. ``not_before_site`` names
    the site of the log's last exposure (which ends at ``not_before_utc``), for the notes."""
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
    log_end = None if not_before_utc is None else (np.datetime64(not_before_utc, "ns"), not_before_site or "")
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
                why = _why_nothing_left(site, open_, row["observed_h"], min_h, log_end)
                status, note = "observed", f"observed: {row['observed_h']:.2f} h in the log; {why}"
            elif (site.name, night) in lost:
                status, note = "lost", "lost (observation log): nothing planned"
            elif log_end is not None and len(open_) and _window_left_h(open_, log_end[0]) == 0.0:
                status, note = "past", _why_nothing_left(site, open_, 0.0, min_h, log_end)
            elif not len(open_):
                reasons = [str(r) for r in ws.get("reason", pd.Series(dtype=object)).dropna() if str(r)]
                status, note = "no window", "no window: " + (reasons[0] if reasons else "target not observable")
            elif pi is None:
                status = "too short"
                note = (
                    f"too short: the usable window (within the allocation, after anything already "
                    f"observed) is under the shortest block ({min_h:g} h)"
                )
                if log_end is not None and _window_left_h(open_, log_end[0]) < window_h:
                    note = "too short: " + _why_nothing_left(site, open_, 0.0, min_h, log_end)
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
