"""Local search on the full objective (coverage, weather-expected coverage, alias, cadence, hours and quality).

Starting from the greedy's visits, try — in an order drawn from the campaign's seed — to move a
visit (shift it along the night), grow or shrink it at either end, swap it for a visit in another
site-night, or add a visit where a site-night still has time; keep the first change that raises
the objective, and repeat until a full pass changes nothing (a local optimum for these moves) or
the evaluation budget runs out. Every accepted change strictly raises the objective, so the result
is never worse than the greedy's schedule on the full objective. Deterministic for a fixed seed.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from planner.schedule.objective import coverage_gains, pack_cells
from planner.schedule.slots import SlotGrid
from planner.schedule.state import PlanState, Visit

_SHIFTS = (1, 2, 3, 6, 12, 24)
_RESIZE = (1, 3, 6, 12)
#: Candidates per swap or add, by coverage gain and a few drawn at random (for the non-coverage terms).
_TOP_K = 6
_RANDOM_K = 4
_IMPROVE = 1e-9


@dataclass
class SearchStats:
    passes: int = 0
    evaluations: int = 0
    accepted: int = 0
    stopped_by_budget: bool = False


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


def element_credit(state: PlanState) -> tuple[float, np.ndarray]:
    """Weight of one coverage cell and each greedy element's slot credit (quality and hours), as the greedy
    scores them: candidates are ranked by ``cell_weight · new cells + credit``."""
    c = state.model.slot_credit()
    cum = np.concatenate([[0.0], np.cumsum(c.value)])
    return c.cell_weight, cum[c.elem_i1] - cum[c.elem_i0]


def _candidates(
    state: PlanState,
    packed: np.ndarray,
    rng: np.random.Generator,
    ignore: Visit | None,
    credit: tuple[float, np.ndarray] | None = None,
) -> list[Visit]:
    """Greedy elements that could be added now: the best by the greedy's gain (coverage plus slot
    credit; an element never overlaps a kept visit of its site-night) plus a few at random."""
    grid = state.model.grid
    if grid.n_elements == 0:
        return []
    if ignore is not None:
        counts = state.counts.copy()
        counts -= state._pieces(ignore)[0]
        covered = np.asarray((counts > 0) | state.model.done_cells)
        cov_packed = pack_cells(covered)
    else:
        cov_packed = state.covered_packed()
    gains = coverage_gains(packed, cov_packed).astype(float)
    if credit is not None:
        gains = credit[0] * gains + credit[1]
    # Cheap vectorised screen: the site-night has room for another visit of its unit length.
    others = [v for v in state.visits if v != ignore]
    n_in = np.zeros(len(grid.site_nights), dtype=np.int64)
    used = np.zeros(len(grid.site_nights), dtype=np.int64)
    for v in others:
        n_in[v.site_night] += 1
        used[v.site_night] += v.length
    budget = np.array([p.budget_slots for p in grid.site_nights])
    room = (n_in < grid.max_per_night) & (budget - used >= grid.min_slots)
    ok = room[grid.elem_site_night]
    # An element that comes within a gap of a visit of its site-night keeps its longer part outside.
    starts, stops = grid.elem_start.copy(), grid.elem_start + grid.elem_len
    for v in others:
        lo, hi = v.start - grid.min_gap_slots, v.stop + grid.min_gap_slots
        over = (grid.elem_site_night == v.site_night) & (starts < hi) & (lo < stops)
        right = stops - hi > lo - starts
        starts = np.where(over & right, np.maximum(starts, hi), starts)
        stops = np.where(over & ~right, np.minimum(stops, lo), stops)
    ok &= stops - starts >= grid.min_slots
    idx = np.flatnonzero(ok)
    if idx.size == 0:
        return []
    order = idx[np.lexsort((idx, -gains[idx]))]
    picks = list(order[:_TOP_K])
    rest = order[_TOP_K:]
    if rest.size:
        picks += list(rng.choice(rest, size=min(_RANDOM_K, rest.size), replace=False))
    out = []
    for e in picks:
        v = Visit(int(grid.elem_site_night[e]), int(starts[e]), int(stops[e] - starts[e]))
        if fits(grid, others, v):
            out.append(v)
    return out


def local_search(
    state: PlanState, packed: np.ndarray, seed: int, max_evaluations: int = 6000, max_passes: int = 30
) -> SearchStats:
    """Improve ``state`` in place by first-improvement moves; see the module docstring."""
    grid = state.model.grid
    rng = np.random.default_rng(seed)
    stats = SearchStats()
    credit = element_credit(state)

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
        # Add where time is left.
        while try_moves([], _candidates(state, packed, rng, None, credit)):
            improved = True
        visits = list(state.visits)
        for i in rng.permutation(len(visits)):
            v = visits[i]
            if v not in state.visits:
                continue
            options = [n for n in _neighbours(v) if fits(grid, state.visits, n, ignore=v)]
            options = [options[j] for j in rng.permutation(len(options))]
            if try_moves([v], options):
                improved = True
                continue
            if try_moves([v], _candidates(state, packed, rng, v, credit)):
                improved = True
        if not improved:
            break
    return stats
