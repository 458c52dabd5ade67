"""Local search on the full objective (coverage, weather-expected coverage, alias, cadence, hours, quality and,
when re-planning from a light curve, discrimination).

Starting from the greedy's visits, try — in an order drawn from the campaign's seed — to move a
visit (shift it along the night), grow or shrink it at either end, swap it for a visit in another
site-night, or add a visit where a site-night still has time (and, with candidate periods to tell
apart, slide it to the night's most telling start or cut it in two there); keep the first change that
raises the objective, and repeat until a full pass changes nothing (a local optimum for these moves), a
full pass gains less than MIN_PASS_GAIN, or the evaluation budget runs out. The budget scales with
the instance (:func:`search_budget`: so many moves per visit); the statistics say which rule
stopped the search. Every accepted change strictly raises the objective, so the result is never
worse than the greedy's schedule on the full objective. Deterministic for a fixed seed.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from planner.schedule.cells import ElementCells
from planner.schedule.objective import discrimination, discrimination_rows
from planner.schedule.planmodel import Visit
from planner.schedule.slots import SlotGrid
from planner.schedule.state import PlanState

_SHIFTS = (1, 2, 3, 6, 12, 24)
_RESIZE = (1, 3, 6, 12)
#: Candidates per swap or add, by coverage gain and a few drawn at random (for the non-coverage terms).
_TOP_K = 6
_RANDOM_K = 4
_IMPROVE = 1e-9
#: Slides tried per visit when the objective has a discrimination term.
_SLIDE_K = 3


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
    at least ``grid.min_gap_slots`` from the site-night's other visits, the night's count and hour
    budget, and the site's whole-campaign budget."""
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
    gap = grid.min_gap_slots
    for v in same:
        if new.start < v.stop + gap and v.start < new.stop + gap:  # overlap, touch or a useless pause
            return False
    budget = grid.site_budget_slots.get(part.site_index)
    if budget is not None:
        used = sum(
            v.length for v in visits if v != ignore and grid.site_nights[v.site_night].site_index == part.site_index
        )
        if used + new.length > budget:
            return False
    return True


def separate_close_visits(grid: SlotGrid, visits: list[Visit]) -> list[Visit]:
    """Visits of one site-night closer than ``grid.min_gap_slots`` (the greedy leaves them: its elements
    merge only when they touch) become one visit, the pause filled, when the rules allow it (a
    merged visit's science slots hold both visits', so coverage can only grow), or cut as little as
    the length and hour rules ask; else the later one starts, or the earlier one ends, a full gap
    away; else the shorter one goes. All but the first can leave the greedy's schedule below the
    value of its elements (the greedy's bound is about those); the local search starts from the
    result either way."""
    out = sorted(visits, key=lambda v: (v.site_night, v.start))
    i = 0
    while i + 1 < len(out):
        a, b = out[i], out[i + 1]
        if a.site_night != b.site_night or b.start - a.stop >= grid.min_gap_slots:
            i += 1
            continue
        rest = out[:i] + out[i + 2 :]
        gap = grid.min_gap_slots
        span = max(a.stop, b.stop) - a.start
        options = [
            *([Visit(a.site_night, a.start, n)] for n in range(span, a.length, -1)),
            [a, Visit(b.site_night, a.stop + gap, b.stop - a.stop - gap)],
            [Visit(a.site_night, a.start, b.start - gap - a.start), b],
            [max(a, b, key=lambda v: (v.length, -v.start))],
        ]
        for pair in options:
            if all(v.length > 0 and fits(grid, rest + pair[:k], v) for k, v in enumerate(pair)):
                out[i : i + 2] = pair
                break
        else:  # nothing fits: drop both
            out[i : i + 2] = []
    return sorted(out, key=lambda v: (v.start, v.site_night))


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


def element_credit(state: PlanState) -> tuple[float, np.ndarray, tuple | None]:
    """Weight of one coverage cell, each greedy element's slot credit (quality and hours) as the greedy
    scores them, and each element's (S0, S1, S2) for the candidate pairs (None without candidates):
    candidates are ranked by ``cell_weight · new cells + credit`` plus the discrimination term's gain."""
    model = state.model
    c = model.slot_credit()
    cum = np.concatenate([[0.0], np.cumsum(c.value)])
    g = model.grid
    moments = model.visit_moments(g.elem_site_night, g.elem_start, g.elem_len) if model.n_pairs else None
    return c.cell_weight, cum[c.elem_i1] - cum[c.elem_i0], moments


def separation_if_added(state: PlanState, parts: np.ndarray, moments: tuple, ignore: Visit | None) -> np.ndarray:
    """Pairs' expected Δχ² (N, pairs) if each of N visits (site-nights ``parts``, their (S0, S1, S2)
    ``moments``) were added after removing ``ignore``: only the visit's own site-night changes, its zero
    point profiled afresh (planner.schedule.separation.SeparationSums.if_added)."""
    moved = None if ignore is None else state.moved_separation([ignore], [])
    return state.sums.if_added(len(state.model.grid.site_nights), parts, moments, moved)


def _candidates(
    state: PlanState,
    cells: ElementCells,
    rng: np.random.Generator,
    ignore: Visit | None,
    credit: tuple[float, np.ndarray, np.ndarray | None] | None = None,
) -> list[Visit]:
    """Greedy elements that could be added now: the best by the greedy's gain (coverage plus slot
    credit, plus the discrimination term's gain with candidate periods; an element that comes within a
    gap of a kept visit of its site-night keeps its longer part outside) plus a few at random. Gains are
    counted only for the elements that pass the cheap screen (room in their site-night, a part left)."""
    grid = state.model.grid
    if grid.n_elements == 0:
        return []
    # Cheap vectorised screen: the site-night has room for another visit of the shortest length.
    n_parts = len(grid.site_nights)
    others = [v for v in state.visits if v != ignore]
    parts = np.array([v.site_night for v in others], dtype=np.int64)
    n_in = np.bincount(parts, minlength=n_parts)
    used = np.bincount(parts, weights=np.array([v.length for v in others], dtype=float), minlength=n_parts)
    budget = np.array([p.budget_slots for p in grid.site_nights])
    room = (n_in < grid.max_per_night) & (budget - used >= grid.min_slots)
    # Elements are laid out site-night by site-night: only those of site-nights with room are screened.
    bounds = np.searchsorted(grid.elem_site_night, np.arange(n_parts + 1))
    open_parts = np.flatnonzero(room)
    if open_parts.size == 0:
        return []
    idx = np.concatenate([np.arange(bounds[p], bounds[p + 1]) for p in open_parts])
    part_of = grid.elem_site_night[idx]
    starts = grid.elem_start[idx].copy()
    stops = starts + grid.elem_len[idx]
    # An element that comes within a gap of a visit of its site-night keeps its longer part outside.
    for p in open_parts:
        for v in state.part_visits(int(p)):
            if v == ignore:
                continue
            lo, hi = v.start - grid.min_gap_slots, v.stop + grid.min_gap_slots
            over = (part_of == p) & (starts < hi) & (lo < stops)
            right = stops - hi > lo - starts
            starts = np.where(over & right, np.maximum(starts, hi), starts)
            stops = np.where(over & ~right, np.minimum(stops, lo), stops)
    keep = stops - starts >= grid.min_slots
    idx, part_of, starts, stops = idx[keep], part_of[keep], starts[keep], stops[keep]
    if idx.size == 0:
        return []
    if ignore is not None:
        counts = state.counts.copy()
        counts -= state._pieces(ignore)[0]
        covered = np.asarray((counts > 0) | state.model.done_cells)
    else:
        covered = state.covered_mask()
    gains = cells.gains(covered, idx).astype(float)
    if credit is not None:
        gains = credit[0] * gains + credit[1][idx]
        if credit[2] is not None:
            moved = state.moved_separation([ignore] if ignore is not None else [], [])
            now = discrimination(moved[0])[0]
            moments = tuple(m[idx] for m in credit[2])
            after = discrimination_rows(separation_if_added(state, part_of, moments, ignore))
            gains = gains + state.model.weights.discrimination * (after - now)
    order = np.lexsort((idx, -gains))
    picks = list(order[:_TOP_K])
    rest = order[_TOP_K:]
    if rest.size:
        picks += list(rng.choice(rest, size=min(_RANDOM_K, rest.size), replace=False))
    out = []
    for e in picks:
        v = Visit(int(part_of[e]), int(starts[e]), int(stops[e] - starts[e]))
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


def _ranked_starts(state: PlanState, part: int, length: int, ignore: Visit, keep: Visit | None = None) -> np.ndarray:
    """Starts of a ``length``-slot visit in ``part``'s intervals, best first by the discrimination term's
    gain plus the slots' quality credit (vectorised), as if ``ignore`` were removed and ``keep`` added."""
    model = state.model
    starts = np.concatenate([np.arange(a, b - length + 1) for a, b in model.grid.site_nights[part].intervals])
    if starts.size == 0:
        return starts
    parts, lengths = np.full(starts.size, part), np.full(starts.size, length)
    s0, s1, s2 = model.visit_moments(parts, starts, lengths)
    if keep is not None:
        k0, k1, k2 = model.visit_moments(np.array([part]), np.array([keep.start]), np.array([keep.length]))
        s0, s1, s2 = s0 + k0, s1 + k1, s2 + k2
    w = model.weights
    after = discrimination_rows(separation_if_added(state, parts, (s0, s1, s2), ignore))
    i0, i1 = model.science_flat(parts, starts, lengths)
    credit = w.quality * (model._quality_cum[i1] - model._quality_cum[i0]) / max(model.budget_slots, 1)
    return starts[np.argsort(-(w.discrimination * after + credit), kind="stable")]


def _slides(state: PlanState, v: Visit, k: int = _SLIDE_K) -> list[Visit]:
    """With candidate periods only: ``v`` moved to any start in its site-night, same length, ranked by
    :func:`_ranked_starts`; the ``k`` best that fit. The term's landscape has a bump every few hours of
    rotational phase, which small shifts climb one at a time only when every step helps."""
    out = []
    for st in _ranked_starts(state, v.site_night, v.length, v):
        new = Visit(v.site_night, int(st), v.length)
        if st != v.start and fits(state.model.grid, _relevant(state, v.site_night), new, ignore=v):
            out.append(new)
            if len(out) == k:
                break
    return out


def _splits(state: PlanState, v: Visit, k: int = _SLIDE_K) -> list[tuple[Visit, Visit]]:
    """With candidate periods only: ``v`` cut in two halves, one kept at either end of it and the other
    moved to the best starts of :func:`_ranked_starts` in the same night (a longer stretch of rotational
    phase within one zero point tells shapes apart better than one block)."""
    grid = state.model.grid
    half = v.length // 2
    same = len(state.part_visits(v.site_night))
    if same + 1 > grid.max_per_night or half < grid.min_slots or half <= grid.setup_slots:
        return []
    out = []
    for keep in (Visit(v.site_night, v.start, half), Visit(v.site_night, v.stop - half, half)):
        others = [x for x in _relevant(state, v.site_night) if x != v] + [keep]
        found = 0
        for st in _ranked_starts(state, v.site_night, half, v, keep):
            new = Visit(v.site_night, int(st), half)
            if fits(grid, others, new):
                out.append((keep, new))
                found += 1
                if found == k:
                    break
    return out


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

    def try_moves(remove: list[Visit], options: list) -> bool:
        for new in options:
            if stats.evaluations >= max_evaluations:
                stats.stopped_by_budget = True
                return False
            add = list(new) if isinstance(new, tuple) else [new]
            t = state.score(remove, add)
            stats.evaluations += 1
            if t.total > state.current.total + _IMPROVE:
                state.apply(remove, add)
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
            if state.model.n_pairs and (try_moves([v], _slides(state, v)) or try_moves([v], _splits(state, v))):
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
