"""Greedy choice of visits on the coverage objective, with lazy marginal gains.

Ground set: every placement of a site-night's fixed-length visit on the slot grid (the *elements*
of ``SlotGrid``). Constraint: at most ``capacity`` elements per site-night — a partition matroid —
plus, when a campaign sets them, a whole-campaign hour budget per site (with equal visit lengths
per site this nests the partition into a laminar matroid) and the longest visit
(``max_block_h``), which binds only when elements chosen in one site-night merge into a run
longer than it. Overlapping or touching elements of one site-night merge into one visit; a merged
visit's science interval contains each element's, so its coverage is at least theirs.

Objective: the number of (period, phase-bin) cells touched, a coverage function, hence monotone
submodular. The plan's greedy adds a *slot credit* (``SlotCredit``): each science slot (after the
set-up) taken by at least one chosen element earns ``(w_quality · q_s + w_hours) / budget`` once,
with ``q_s ≥ 0`` its photometric quality (planner.schedule.quality). That is a weighted coverage function of
the science slots (non-negative weights), also monotone submodular, and a non-negative sum of
monotone submodular functions is monotone submodular (Nemhauser, Wolsey & Fisher 1978, §2), so
``g = w_cov · cells / n_cells + credit`` keeps every guarantee below. A merged visit's science
slots contain each element's, so the schedule scores at least ``g`` of its elements on these
terms. Guarantees (for the element set and constraints above):

- one site-night only (a cardinality constraint): greedy ≥ (1 − 1/e) · optimum
  (Nemhauser, Wolsey & Fisher 1978, Math. Programming 14, 265);
- several site-nights (partition matroid) or a site budget with equal visit lengths (laminar
  matroid): greedy ≥ ½ · optimum (Fisher, Nemhauser & Wolsey 1978, Math. Prog. Study 8, 73);
- when the longest-visit rule or an unequal-length site budget actually rejects an element, the
  feasible sets are no longer a matroid and no bound is claimed: the exact mode measures the gap.

Lazy evaluation (Minoux 1978): by submodularity an element's gain can only shrink, so a stale
gain is an upper bound; the candidate at the top of the heap is re-evaluated and taken as soon as
its fresh gain still beats every other bound. Ties go to the lowest element index, exactly as in
the plain greedy (``greedy_plain``), which rescans every element at every step; the tests check
that both pick the same elements.
"""

from __future__ import annotations

import heapq
from dataclasses import dataclass

import numpy as np

from planner.schedule.cells import ElementCells, open_periods, run_prefix
from planner.schedule.planmodel import SlotCredit, Visit
from planner.schedule.slots import SlotGrid


@dataclass
class GreedyResult:
    elements: list[int]
    gains: list[int]
    #: Cells covered by the chosen elements (incl. anything already observed).
    covered_cells: int
    #: Gains evaluated (the lazy greedy's saving shows here).
    evaluations: int
    #: Whether the longest-visit or site-budget rule ever rejected an element (the bound then lapses).
    extra_rule_bound: bool
    #: Whether the greedy's function included the slot credit (quality and hours), not coverage alone.
    with_credit: bool = False

    def guarantee(self, grid: SlotGrid) -> tuple[float | None, str]:
        """The proven approximation ratio for the constraints met in this run, and its source."""
        of = "on coverage + slot quality and hours credit (monotone submodular)" if self.with_credit else "on coverage"
        if self.extra_rule_bound:
            return None, "none proven (longest-visit or site-budget rule was binding); see the exact mode's gap"
        if len(grid.site_nights) == 1 and not grid.site_budget_slots:
            return 1.0 - 1.0 / np.e, f"1 - 1/e {of} under a cardinality constraint (Nemhauser, Wolsey & Fisher 1978)"
        return 0.5, f"1/2 {of} under a partition (laminar) matroid (Fisher, Nemhauser & Wolsey 1978)"


class Feasibility:
    """Tracks chosen elements per site-night and per site; says whether one more element fits."""

    def __init__(self, grid: SlotGrid) -> None:
        self.grid = grid
        self.count = np.zeros(len(grid.site_nights), dtype=np.int64)
        self.site_used = np.zeros(len(grid.site_names), dtype=np.int64)
        self.runs: dict[int, list[tuple[int, int]]] = {}
        self.extra_rule_bound = False

    def _merged_len(self, part: int, start: int, stop: int) -> int:
        lo, hi = start, stop
        for a, b in sorted(self.runs.get(part, [])):
            if a <= hi and lo <= b:
                lo, hi = min(lo, a), max(hi, b)
        return hi - lo

    def ok(self, e: int) -> bool:
        g = self.grid
        p = int(g.elem_site_night[e])
        part = g.site_nights[p]
        if self.count[p] >= part.capacity:
            return False
        unit = int(g.elem_len[e])
        budget = g.site_budget_slots.get(part.site_index)
        if budget is not None and self.site_used[part.site_index] + unit > budget:
            self.extra_rule_bound = True
            return False
        if part.capacity * unit > g.max_slots:
            start = int(g.elem_start[e])
            if self._merged_len(p, start, start + unit) > g.max_slots:
                self.extra_rule_bound = True
                return False
        return True

    def add(self, e: int) -> None:
        g = self.grid
        p = int(g.elem_site_night[e])
        self.count[p] += 1
        self.site_used[g.site_nights[p].site_index] += int(g.elem_len[e])
        start = int(g.elem_start[e])
        self.runs.setdefault(p, []).append((start, start + int(g.elem_len[e])))


#: Elements whose cell gains are counted together with the one the lazy greedy asks for.
_AHEAD = 127


class _Gains:
    """Marginal gain of an element: coverage cells (times ``cell_weight`` when a credit is given)
    plus the credit of its science slots not yet taken. Without a credit, plain cell counts (ints).
    Cells are counted from the elements' arcs against the covered map (:mod:`planner.schedule.cells`)."""

    def __init__(self, cells: ElementCells, covered0: np.ndarray, credit: SlotCredit | None) -> None:
        self.cells = cells
        self.covered = np.asarray(covered0, dtype=bool).copy()
        self._prefix: np.ndarray | None = None
        self._rows = np.zeros(0, dtype=np.int64)
        #: Cell gains counted ahead, in one vectorised batch, for the map as it stands (cleared by ``take``).
        self._ahead: dict[int, int] = {}
        self.credit = credit
        self.taken = None if credit is None else np.zeros(credit.value.size, dtype=bool)

    def _cells(self, idx: np.ndarray | None) -> np.ndarray:
        if self._prefix is None:
            # Fully covered periods add nothing: as coverage fills, each gain looks at fewer periods.
            self._rows = open_periods(self.covered)
            self._prefix = run_prefix(self.covered[self._rows])
        if self._rows.size == 0:  # every cell covered: only the slot credit is left to gain
            return np.zeros(len(self.cells) if idx is None else len(idx), dtype=np.int64)
        return self.cells.gains_prefix(self._prefix, self._rows, idx)

    def count_ahead(self, idx: list[int]) -> None:
        """Count the cell gains of ``idx`` together (one call instead of one per element): the lazy greedy
        asks for the elements near the top of its heap one by one, and most of them in turn."""
        todo = [e for e in dict.fromkeys(idx) if e not in self._ahead]
        if todo:
            self._ahead.update(zip(todo, self._cells(np.array(todo)).tolist(), strict=True))

    def counted(self, e: int) -> bool:
        return e in self._ahead

    def one(self, e: int) -> float | int:
        if e not in self._ahead:
            self.count_ahead([e])
        cells = self._ahead[e]
        if self.credit is None:
            return cells
        c = self.credit
        i0, i1 = int(c.elem_i0[e]), int(c.elem_i1[e])
        return c.cell_weight * cells + float(c.value[i0:i1][~self.taken[i0:i1]].sum())

    def all(self) -> np.ndarray:
        cells = self._cells(None)
        if self.credit is None:
            return cells
        c = self.credit
        cum = np.concatenate([[0.0], np.cumsum(c.value)])
        # Nothing is taken yet; a hair of slack keeps these upper bounds of the exact sums in ``one``.
        slots = cum[c.elem_i1] - cum[c.elem_i0]
        return c.cell_weight * cells + slots * (1.0 + 1e-9) + 1e-12

    def take(self, e: int) -> None:
        self.covered |= self.cells.masks(np.array([e]))[0]
        self._prefix = None
        self._ahead.clear()
        if self.credit is not None:
            self.taken[int(self.credit.elem_i0[e]) : int(self.credit.elem_i1[e])] = True


def greedy_lazy(
    grid: SlotGrid, cells: ElementCells, covered0: np.ndarray, credit: SlotCredit | None = None
) -> GreedyResult:
    """Lazy greedy (Minoux 1978) on the elements' cells ``cells``, starting from the covered map ``covered0``
    (periods × bins); with ``credit``, on coverage plus the slots' quality and hours credit (see the module
    docstring)."""
    gain = _Gains(cells, covered0, credit)
    feas = Feasibility(grid)
    gains0 = gain.all()
    heap = [(-float(g), int(e)) for e, g in enumerate(gains0) if g > 0]
    heapq.heapify(heap)
    chosen, gains = [], []
    evaluations = len(gains0)
    while heap:
        _, e = heapq.heappop(heap)
        if not feas.ok(e):
            continue
        if not gain.counted(e):
            # The heap's first entries are its top levels: the elements most likely asked for next.
            gain.count_ahead([e, *(x for _, x in heap[:_AHEAD])])
        g = gain.one(e)
        evaluations += 1
        if g <= 0:
            continue
        if heap and (-g, e) > heap[0]:
            heapq.heappush(heap, (-g, e))
            continue
        chosen.append(e)
        gains.append(g)
        feas.add(e)
        gain.take(e)
    covered = int(gain.covered.sum())
    return GreedyResult(chosen, gains, covered, evaluations, feas.extra_rule_bound, credit is not None)


def greedy_plain(
    grid: SlotGrid, cells: ElementCells, covered0: np.ndarray, credit: SlotCredit | None = None
) -> GreedyResult:
    """Slow twin of :func:`greedy_lazy`: rescan every feasible element at every step, each gain counted
    on the element's cell mask (not from its arc)."""
    covered = np.asarray(covered0, dtype=bool).copy()
    taken = None if credit is None else np.zeros(credit.value.size, dtype=bool)

    def one(e: int) -> float | int:
        n = int((cells.masks(np.array([e]))[0] & ~covered).sum())
        if credit is None:
            return n
        i0, i1 = int(credit.elem_i0[e]), int(credit.elem_i1[e])
        return credit.cell_weight * n + float(credit.value[i0:i1][~taken[i0:i1]].sum())

    feas = Feasibility(grid)
    chosen, gains = [], []
    evaluations = 0
    while True:
        best_g, best_e = 0, -1
        for e in range(len(cells)):
            if not feas.ok(e):
                continue
            g = one(e)
            evaluations += 1
            if g > best_g:
                best_g, best_e = g, e
        if best_e < 0:
            break
        chosen.append(best_e)
        gains.append(best_g)
        feas.add(best_e)
        covered |= cells.masks(np.array([best_e]))[0]
        if taken is not None:
            taken[int(credit.elem_i0[best_e]) : int(credit.elem_i1[best_e])] = True
    return GreedyResult(chosen, gains, int(covered.sum()), evaluations, feas.extra_rule_bound, credit is not None)


def merge_elements(grid: SlotGrid, elements: list[int]) -> list[Visit]:
    """Chosen elements → visits: overlapping or touching elements of one site-night become one visit."""
    by_part: dict[int, list[tuple[int, int]]] = {}
    for e in elements:
        s = int(grid.elem_start[e])
        by_part.setdefault(int(grid.elem_site_night[e]), []).append((s, s + int(grid.elem_len[e])))
    visits = []
    for p, runs in by_part.items():
        runs.sort()
        lo, hi = runs[0]
        for a, b in runs[1:]:
            if a <= hi:
                hi = max(hi, b)
            else:
                visits.append(Visit(p, lo, hi - lo))
                lo, hi = a, b
        visits.append(Visit(p, lo, hi - lo))
    return sorted(visits, key=lambda v: (v.start, v.site_night))
