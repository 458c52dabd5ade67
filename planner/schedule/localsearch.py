"""Local search on the full objective (coverage, weather-expected coverage, alias, cadence, hours, quality and,
when re-planning from a light curve, discrimination).

Starting from the greedy's visits, try — in an order drawn from the campaign's seed — to move a
visit (shift it along the night), grow or shrink it at either end, swap it for a visit in another
site-night, or add a visit where a site-night still has time (and, with candidate periods to tell
apart, slide it to the night's most telling start or cut it in two there); keep the first change that raises
the objective, and repeat until a full pass changes nothing (a local optimum for these moves) or
the evaluation budget runs out. Every accepted change strictly raises the objective, so the result
is never worse than the greedy's schedule on the full objective. Deterministic for a fixed seed.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from planner.schedule.discrimination import night_separation
from planner.schedule.objective import coverage_gains, discrimination, discrimination_rows, pack_cells
from planner.schedule.slots import SlotGrid
from planner.schedule.state import PlanState, Visit

_SHIFTS = (1, 2, 3, 6, 12, 24)
_RESIZE = (1, 3, 6, 12)
#: Candidates per swap or add, by coverage gain and a few drawn at random (for the non-coverage terms).
_TOP_K = 6
_RANDOM_K = 4
_IMPROVE = 1e-9
#: Slides tried per visit when the objective has a discrimination term.
_SLIDE_K = 3


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
    point profiled afresh."""
    model = state.model
    total, moms, seps = state.separation, dict(state.night_moments), dict(state.night_separation)
    if ignore is not None:
        total, nights = state.moved_separation([ignore], [])
        for p, (s0, s1, s2, sep) in nights.items():
            moms[p], seps[p] = (s0, s1, s2), sep
    n_sn, pairs = len(model.grid.site_nights), model.n_pairs
    m0, m1, m2, sep = np.zeros(n_sn), np.zeros((n_sn, pairs)), np.zeros((n_sn, pairs)), np.zeros((n_sn, pairs))
    for p, (s0, s1, s2) in moms.items():
        m0[p], m1[p], m2[p], sep[p] = s0, s1, s2, seps[p]
    e = np.asarray(parts, dtype=np.int64)
    e0, e1, e2 = moments
    return total[None, :] - sep[e] + night_separation(m0[e] + e0, m1[e] + e1, m2[e] + e2)


def _candidates(
    state: PlanState,
    packed: np.ndarray,
    rng: np.random.Generator,
    ignore: Visit | None,
    credit: tuple[float, np.ndarray, np.ndarray | None] | None = None,
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
        if credit[2] is not None:
            now = discrimination(state.moved_separation([ignore] if ignore is not None else [], [])[0])[0]
            after = discrimination_rows(separation_if_added(state, grid.elem_site_night, credit[2], ignore))
            gains = gains + state.model.weights.discrimination * (after - now)
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
        if st != v.start and fits(state.model.grid, state.visits, new, ignore=v):
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
    same = sum(1 for x in state.visits if x.site_night == v.site_night)
    if same + 1 > grid.max_per_night or half < grid.min_slots or half <= grid.setup_slots:
        return []
    out = []
    for keep in (Visit(v.site_night, v.start, half), Visit(v.site_night, v.stop - half, half)):
        others = [x for x in state.visits if x != v] + [keep]
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
    state: PlanState, packed: np.ndarray, seed: int, max_evaluations: int = 6000, max_passes: int = 30
) -> SearchStats:
    """Improve ``state`` in place by first-improvement moves; see the module docstring."""
    grid = state.model.grid
    rng = np.random.default_rng(seed)
    stats = SearchStats()
    credit = element_credit(state)

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
            if state.model.n_pairs and (try_moves([v], _slides(state, v)) or try_moves([v], _splits(state, v))):
                improved = True
                continue
            if try_moves([v], _candidates(state, packed, rng, v, credit)):
                improved = True
        if not improved:
            break
    return stats
