"""Local search on the full objective (coverage, weather-expected coverage, alias, cadence, hours and quality).

Starting from the greedy's visits, try — in an order drawn from the campaign's seed — to move a
visit (shift it along the night), grow or shrink it at either end, swap it for a visit in another
site-night, or add a visit where a site-night still has time; keep the first change that raises
the objective, and repeat until a full pass changes nothing (a local optimum for these moves), a
full pass gains less than MIN_PASS_GAIN, or the evaluation budget runs out. The budget scales with
the instance (:func:`search_budget`: so many moves per visit); the statistics say which rule
stopped the search. Every accepted change strictly raises the objective, so the result is never
worse than the greedy's schedule on the full objective. Deterministic for a fixed seed.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from planner.schedule.cells import ElementCells
from planner.schedule.slots import SlotGrid
from planner.schedule.state import PlanState, Visit

_SHIFTS = (1, 2, 3, 6, 12, 24)
_RESIZE = (1, 3, 6, 12)
#: Candidates per swap or add, by coverage gain and a few drawn at random (for the non-coverage terms).
_TOP_K = 6
_RANDOM_K = 4
_IMPROVE = 1e-9


#: The move budget: at least MIN_EVALUATIONS, else EVALUATIONS_PER_VISIT for each visit of the greedy's
#: schedule (every visit gets about as many tries in a large network as in a small one).
MIN_EVALUATIONS = 6000
EVALUATIONS_PER_VISIT = 15
#: A full pass that raises the objective by less than this stops the search (J is of order 1).
MIN_PASS_GAIN = 1e-6


def search_budget(n_visits: int) -> int:
    """Moves the local search may score for a schedule of ``n_visits`` visits."""
    return max(MIN_EVALUATIONS, EVALUATIONS_PER_VISIT * int(n_visits))


@dataclass
class SearchStats:
    passes: int = 0
    evaluations: int = 0
    accepted: int = 0
    stopped_by_budget: bool = False
    #: The move budget it ran with, and why it stopped: "local optimum" (a pass changed nothing),
    #: "budget", "small gain" (a pass gained less than MIN_PASS_GAIN) or "passes" (the pass limit).
    budget: int = 0
    stopped_by: str = ""
    #: Objective after the search minus before it.
    gain: float = 0.0


def fits(grid: SlotGrid, visits: list[Visit], new: Visit, ignore: Visit | None = None) -> bool:
    """Whether ``new`` may join ``visits`` (minus ``ignore``): inside a usable interval, length rules,
    at least one free slot from the site-night's other visits, the night's count and hour budget,
    and the site's whole-campaign budget."""
    part = grid.site_nights[new.site_night]
    if new.length < grid.min_slots or new.length > grid.max_slots or new.length <= grid.setup_slots:
        return False
    if not part.contains(new.start, new.stop):
        return False
    same = [v for v in visits if v.site_night == new.site_night and v != ignore]
    if len(same) + 1 > grid.max_per_night:
        return False
    if sum(v.length for v in same) + new.length > part.budget_slots:
        return False
    for v in same:
        if new.start <= v.stop and v.start <= new.stop:  # overlap or touch: would be one visit
            return False
    budget = grid.site_budget_slots.get(part.site_index)
    if budget is not None:
        used = sum(
            v.length for v in visits if v != ignore and grid.site_nights[v.site_night].site_index == part.site_index
        )
        if used + new.length > budget:
            return False
    return True


def _neighbours(v: Visit) -> list[Visit]:
    out = []
    for d in _SHIFTS:
        out += [Visit(v.site_night, v.start + d, v.length), Visit(v.site_night, v.start - d, v.length)]
    for d in _RESIZE:
        out += [
            Visit(v.site_night, v.start - d, v.length + d),
            Visit(v.site_night, v.start, v.length + d),
            Visit(v.site_night, v.start + d, v.length - d),
            Visit(v.site_night, v.start, v.length - d),
        ]
    return out


def element_credit(state: PlanState) -> tuple[float, np.ndarray]:
    """Weight of one coverage cell and each greedy element's slot credit (quality and hours), as the greedy
    scores them: candidates are ranked by ``cell_weight · new cells + credit``."""
    c = state.model.slot_credit()
    cum = np.concatenate([[0.0], np.cumsum(c.value)])
    return c.cell_weight, cum[c.elem_i1] - cum[c.elem_i0]


def _candidates(
    state: PlanState,
    cells: ElementCells,
    rng: np.random.Generator,
    ignore: Visit | None,
    credit: tuple[float, np.ndarray] | None = None,
) -> list[Visit]:
    """Greedy elements that could be added now: the best by the greedy's gain (coverage plus slot
    credit; an element never overlaps a kept visit of its site-night) plus a few at random. Gains are
    counted only for the elements that pass the cheap screen (room in their site-night, no clash)."""
    grid = state.model.grid
    if grid.n_elements == 0:
        return []
    # Cheap vectorised screen: the site-night has room for another visit of its unit length.
    n_parts = len(grid.site_nights)
    others = [v for v in state.visits if v != ignore]
    parts = np.array([v.site_night for v in others], dtype=np.int64)
    n_in = np.bincount(parts, minlength=n_parts)
    used = np.bincount(parts, weights=np.array([v.length for v in others], dtype=float), minlength=n_parts)
    budget = np.array([p.budget_slots for p in grid.site_nights])
    room = (n_in < grid.max_per_night) & (budget - used >= np.array([p.unit_slots for p in grid.site_nights]))
    # Elements are laid out site-night by site-night: only those of site-nights with room are screened.
    bounds = np.searchsorted(grid.elem_site_night, np.arange(n_parts + 1))
    open_parts = np.flatnonzero(room)
    if open_parts.size == 0:
        return []
    idx = np.concatenate([np.arange(bounds[p], bounds[p + 1]) for p in open_parts])
    part_of, start, length = grid.elem_site_night[idx], grid.elem_start[idx], grid.elem_len[idx]
    keep = np.ones(idx.size, dtype=bool)
    for p in open_parts:
        for v in state.part_visits(int(p)):
            if v != ignore:
                keep &= ~((part_of == p) & (start <= v.stop) & (v.start <= start + length))
    idx = idx[keep]
    if ignore is not None:
        counts = state.counts.copy()
        counts -= state._pieces(ignore)[0]
        covered = np.asarray((counts > 0) | state.model.done_cells)
    else:
        covered = state.covered_mask()
    gains = cells.gains(covered, idx).astype(float)
    if credit is not None:
        gains = credit[0] * gains + credit[1][idx]
    order = idx[np.lexsort((idx, -gains))]
    picks = list(order[:_TOP_K])
    rest = order[_TOP_K:]
    if rest.size:
        picks += list(rng.choice(rest, size=min(_RANDOM_K, rest.size), replace=False))
    out = []
    for e in picks:
        v = Visit(int(grid.elem_site_night[e]), int(grid.elem_start[e]), int(grid.elem_len[e]))
        if fits(grid, [x for x in _relevant(state, v.site_night) if x != ignore], v):
            out.append(v)
    return out


def _relevant(state: PlanState, part: int) -> list[Visit]:
    """The visits :func:`fits` looks at for a visit in site-night ``part``: that site-night's, or every
    visit of the site when the site has a whole-campaign budget."""
    grid = state.model.grid
    site = grid.site_nights[part].site_index
    if site in grid.site_budget_slots:
        return [v for v in state.visits if grid.site_nights[v.site_night].site_index == site]
    return state.part_visits(part)


def local_search(
    state: PlanState, cells: ElementCells, seed: int, max_evaluations: int | None = None, max_passes: int = 30
) -> SearchStats:
    """Improve ``state`` in place by first-improvement moves; see the module docstring. ``max_evaluations``
    None: :func:`search_budget` of the starting schedule."""
    grid = state.model.grid
    rng = np.random.default_rng(seed)
    if max_evaluations is None:
        max_evaluations = search_budget(len(state.visits))
    stats = SearchStats(budget=int(max_evaluations))
    credit = element_credit(state)
    start_total = state.current.total

    def try_moves(remove: list[Visit], options: list[Visit]) -> bool:
        for new in options:
            if stats.evaluations >= max_evaluations:
                stats.stopped_by_budget = True
                return False
            t = state.score(remove, [new])
            stats.evaluations += 1
            if t.total > state.current.total + _IMPROVE:
                state.apply(remove, [new])
                stats.accepted += 1
                return True
        return False

    while stats.passes < max_passes and not stats.stopped_by_budget:
        stats.passes += 1
        improved = False
        pass_start = state.current.total
        # Add where time is left.
        while try_moves([], _candidates(state, cells, rng, None, credit)):
            improved = True
        visits = list(state.visits)
        for i in rng.permutation(len(visits)):
            v = visits[i]
            if not state.holds(v):
                continue
            near = _relevant(state, v.site_night)
            options = [n for n in _neighbours(v) if fits(grid, near, n, ignore=v)]
            options = [options[j] for j in rng.permutation(len(options))]
            if try_moves([v], options):
                improved = True
                continue
            if try_moves([v], _candidates(state, cells, rng, v, credit)):
                improved = True
        if stats.stopped_by_budget:
            break
        if not improved:
            stats.stopped_by = "local optimum"
            break
        if state.current.total - pass_start < MIN_PASS_GAIN:
            stats.stopped_by = "small gain"
            break
    if not stats.stopped_by:
        stats.stopped_by = "budget" if stats.stopped_by_budget else "passes"
    stats.gain = float(state.current.total - start_total)
    return stats
