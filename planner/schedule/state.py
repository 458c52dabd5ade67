"""A schedule being optimised: its visits, and the running sums that make the objective cheap to update.

``PlanModel`` fixes what a schedule is scored on (slot grid, period grid, phase bins, alias
frequencies, weights, anything already observed). ``PlanState`` holds one schedule plus the
running cell counts, per-site-night counts and spectral-window sums, so that scoring a move
(remove some visits, add others) costs O(periods × bins + frequencies), never a full rescore.
``PlanModel.terms`` scores a schedule from scratch and is the reference the tests compare against.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from planner.inputs.settings import Weights
from planner.schedule.cells import ElementCells
from planner.schedule.objective import (
    Terms,
    arc_mask,
    excess_gap_h,
    point_mask,
    point_window_sum,
    run_window_sums,
    slot_powers,
)
from planner.schedule.slots import SlotGrid


@dataclass(frozen=True)
class SlotCredit:
    """The greedy's per-slot credit: ``value`` per flat slot (quality and hours shares), each
    element's science-slot range ``[elem_i0, elem_i1)`` in that layout, and the weight of one cell."""

    value: np.ndarray
    elem_i0: np.ndarray
    elem_i1: np.ndarray
    cell_weight: float


#: Chance a site-night is clear is kept inside (0, 1) so log-survival stays finite.
_CLEAR_CLIP = (1e-6, 1.0 - 1e-9)
#: Bytes of visit cells and phasors kept between moves (a visit holds periods × bins + 16 × frequencies).
_CACHE_BYTES = 64_000_000


@dataclass(frozen=True)
class Visit:
    """A contiguous block of slots at one site-night: telescope time ``[start, start+length)``."""

    site_night: int
    start: int
    length: int

    @property
    def stop(self) -> int:
        return self.start + self.length


@dataclass
class Done:
    """What was already observed (re-planning): instants and runs, hours from t_ref."""

    times_h: np.ndarray = field(default_factory=lambda: np.zeros(0))
    intervals_h: np.ndarray = field(default_factory=lambda: np.zeros((0, 2)))


class PlanModel:
    def __init__(
        self,
        grid: SlotGrid,
        periods_h: np.ndarray,
        n_bins: int,
        freq_per_day: np.ndarray,
        weights: Weights,
        max_gap_h: float,
        done: Done | None = None,
        slot_weight: list[np.ndarray] | None = None,
        slot_quality: list[np.ndarray] | None = None,
    ) -> None:
        self.grid = grid
        self.periods_h = np.asarray(periods_h, dtype=float)
        self.n_bins = int(n_bins)
        self.freq_per_day = np.asarray(freq_per_day, dtype=float)
        self.weights = weights
        self.max_gap_h = float(max_gap_h)
        self.done = done or Done()
        self.n_cells = self.periods_h.size * self.n_bins
        self.done_cells = point_mask(self.done.times_h, self.periods_h, self.n_bins)
        # Already-observed instants count once per slot, like planned science slots.
        done_slots = (
            np.unique(np.floor(np.asarray(self.done.times_h) / grid.slot_h)) if len(self.done.times_h) else np.zeros(0)
        )
        self.done_phasor = point_window_sum((done_slots + 0.5) * grid.slot_h, self.freq_per_day)
        self.done_n = float(done_slots.size)
        # Quality of every slot (planner.schedule.quality), parts laid end to end over their slot spans.
        self.part_lo, self.part_off, n_flat = grid.part_spans()
        q_flat = self._flat(slot_quality, n_flat, "slot_quality", 1.0)
        self.slot_quality = q_flat
        self._quality_cum = np.concatenate([[0.0], np.cumsum(q_flat)])
        #: Weight of each science slot in the spectral window (its precision 1/σ², mean 1), as in a
        #: weighted window W = Σ w e^{2πiνt} / Σ w (what ``check`` computes); already-observed slots weigh 1.
        self.slot_weight = self._flat(slot_weight, n_flat, "slot_weight", 1.0)
        sizes = [p.intervals[-1][1] - p.intervals[0][0] for p in grid.site_nights]
        slots = (
            np.concatenate([np.arange(a, a + n) for a, n in zip(self.part_lo, sizes, strict=True)])
            if sizes
            else np.zeros(0)
        )
        #: Centre of every flat slot, hours from t_ref.
        self.slot_centre_h = (slots + 0.5) * grid.slot_h
        # z^k, z = e^{2πiν·slot}, for k up to the longest visit so far (objective.run_window_sums).
        self._zpow = np.zeros((0, self.freq_per_day.size), dtype=complex)
        self._weight_cum = np.concatenate([[0.0], np.cumsum(self.slot_weight)])
        clear = np.array([p.clear_fraction for p in grid.site_nights], dtype=float)
        self.log_cloudy = np.log1p(-np.clip(clear, *_CLEAR_CLIP))
        lo, hi = grid.span_slots
        self.span_h = (lo * grid.slot_h, hi * grid.slot_h)
        if len(self.done.intervals_h):
            self.span_h = (min(self.span_h[0], float(np.min(self.done.intervals_h[:, 0]))), self.span_h[1])
        self._elem_cells: ElementCells | None = None
        # Time the plan may use: the site-nights' budgets, capped by any whole-campaign site budget.
        per_site: dict[int, int] = {}
        for p in grid.site_nights:
            per_site[p.site_index] = per_site.get(p.site_index, 0) + p.budget_slots
        self.budget_slots = int(sum(min(v, grid.site_budget_slots.get(k, v)) for k, v in per_site.items()))

    @staticmethod
    def _flat(arrays: list[np.ndarray] | None, n_flat: int, name: str, default: float) -> np.ndarray:
        if arrays is None:
            return np.full(n_flat, default)
        flat = np.concatenate([np.asarray(a, dtype=float) for a in arrays]) if arrays else np.zeros(0)
        if flat.size != n_flat:
            raise ValueError(f"{name} holds {flat.size} slots, the site-nights span {n_flat}")
        return flat

    # --- per-visit pieces -------------------------------------------------------------------------
    def science_h(self, start: np.ndarray, length: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        return self.grid.science_hours(start, length)

    def visit_masks(self, starts: np.ndarray, lengths: np.ndarray) -> np.ndarray:
        t0, t1 = self.science_h(starts, lengths)
        return arc_mask(t0, t1, self.periods_h, self.n_bins)

    def visit_phasors(
        self, parts: np.ndarray, starts: np.ndarray, lengths: np.ndarray
    ) -> tuple[np.ndarray, np.ndarray]:
        """Weighted window sums Σ w e^{2πiνt} over each visit's science slots (N, F), and Σ w (N,)
        (:func:`planner.schedule.objective.run_window_sums`)."""
        i0, i1 = self.science_flat(parts, starts, lengths)
        scalar = np.ndim(i0) == 0
        i0, i1 = np.atleast_1d(i0), np.atleast_1d(i1)
        longest = int(np.max(i1 - i0, initial=0))
        if self._zpow.shape[0] < longest:
            self._zpow = slot_powers(longest, self.grid.slot_h, self.freq_per_day)
        phasor = run_window_sums(self.slot_weight, self.slot_centre_h, i0, i1, self._zpow, self.freq_per_day)
        weight = self._weight_cum[i1] - self._weight_cum[i0]
        return (phasor[0], weight[0]) if scalar else (phasor, weight)

    def visit_phasors_slow(self, part: int, start: int, length: int) -> tuple[np.ndarray, float]:
        """Slow twin of :meth:`visit_phasors` for one visit: add each science slot's phasor in turn."""
        a, b = self.science_flat(np.array([part]), np.array([start]), np.array([length]))
        i0, i1 = int(a[0]), int(b[0])
        total = np.zeros(self.freq_per_day.size, dtype=complex)
        weight = 0.0
        for i in range(i0, i1):
            total += self.slot_weight[i] * np.exp(2j * np.pi * self.freq_per_day * self.slot_centre_h[i] / 24.0)
            weight += float(self.slot_weight[i])
        return total, weight

    def science_flat(self, part: np.ndarray, start: np.ndarray, length: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Flat index range ``[i0, i1)`` (``slot_quality`` layout) of the science slots of visits."""
        p = np.asarray(part, dtype=np.int64)
        base = self.part_off[p] - self.part_lo[p]
        st = np.asarray(start, dtype=np.int64)
        return base + st + self.grid.setup_slots, base + st + np.asarray(length, dtype=np.int64)

    def quality_sum(self, visits: list[Visit]) -> float:
        """Σ slot quality over the science slots of visits (visits of one site-night never overlap)."""
        if not visits:
            return 0.0
        i0, i1 = self.science_flat(
            np.array([v.site_night for v in visits]),
            np.array([v.start for v in visits]),
            np.array([v.length for v in visits]),
        )
        return float(np.sum(self._quality_cum[i1] - self._quality_cum[i0]))

    def slot_credit(self) -> SlotCredit:
        """What the greedy adds to coverage: each science slot's share of the quality and hours terms."""
        g = self.grid
        w = self.weights
        value = (w.quality * self.slot_quality + w.hours) / max(self.budget_slots, 1)
        i0, i1 = self.science_flat(g.elem_site_night, g.elem_start, g.elem_len)
        return SlotCredit(value=value, elem_i0=i0, elem_i1=i1, cell_weight=w.coverage / max(self.n_cells, 1))

    def element_cells(self) -> ElementCells:
        """Cells of every greedy element, counted from their arcs on demand (no element × cell table)."""
        if self._elem_cells is None:
            g = self.grid
            t0, t1 = self.science_h(g.elem_start, g.elem_len)
            self._elem_cells = ElementCells(t0, t1, self.periods_h, self.n_bins)
        return self._elem_cells

    # --- scoring from scratch (reference) --------------------------------------------------------
    def combine(
        self, coverage: float, expected: float, alias: float, gap_h: float, used_slots: int, quality_slots: float = 0.0
    ) -> Terms:
        span = max(self.span_h[1] - self.span_h[0], 1e-9)
        w = self.weights
        gap_frac = gap_h / span
        hours_frac = used_slots / max(self.budget_slots, 1)
        quality = quality_slots / max(self.budget_slots, 1)
        total = (
            w.coverage * coverage
            + w.robustness * expected
            - w.alias * alias
            - w.cadence * gap_frac
            + w.hours * hours_frac
            + w.quality * quality
        )
        return Terms(
            coverage=coverage,
            expected_coverage=expected,
            alias=alias,
            excess_gap_h=gap_h,
            gap_fraction=gap_frac,
            hours_fraction=hours_frac,
            quality=quality,
            total=total,
        )

    def intervals_h(self, visits: list[Visit]) -> np.ndarray:
        if not visits:
            iv = np.zeros((0, 2))
        else:
            t0, t1 = self.science_h(np.array([v.start for v in visits]), np.array([v.length for v in visits]))
            iv = np.column_stack([t0, t1])
        return np.concatenate([iv, np.asarray(self.done.intervals_h, dtype=float).reshape(-1, 2)])

    def terms(self, visits: list[Visit]) -> Terms:
        """Score a schedule from scratch (no running sums)."""
        covered = self.done_cells.copy()
        per_part: dict[int, np.ndarray] = {}
        phasor = self.done_phasor.copy()
        n = self.done_n
        for v in visits:
            m = self.visit_masks(np.array([v.start]), np.array([v.length]))[0]
            covered |= m
            per_part[v.site_night] = per_part.get(v.site_night, np.zeros_like(m)) | m
            ph, w = self.visit_phasors_slow(v.site_night, v.start, v.length)
            phasor = phasor + ph
            n += w
        log_surv = np.zeros(covered.shape)
        for p, m in per_part.items():
            log_surv += m * self.log_cloudy[p]
        expected = np.where(self.done_cells, 1.0, 1.0 - np.exp(log_surv)).mean()
        alias = float(np.abs(phasor).max() / n) if n > 0 and phasor.size else 0.0
        gap = excess_gap_h(self.intervals_h(visits), self.span_h, self.max_gap_h)
        return self.combine(
            float(covered.mean()), float(expected), alias, gap, sum(v.length for v in visits), self.quality_sum(visits)
        )


def _touched(remove: list[Visit], add: list[Visit]) -> list[int]:
    return list(dict.fromkeys(v.site_night for v in [*remove, *add]))


class PlanState:
    """One schedule with running sums; ``score`` a move without applying it, ``apply`` to keep it.

    ``score`` costs a few byte-wide passes over the cells plus work on the cells the move changes:
    the covered count and the weather-expected coverage are updated where a site-night's cells change
    (usually a thin rim of the arcs a visit moves by), never re-summed over every cell. ``apply``
    recomputes the sums from scratch, so no rounding accumulates over many moves."""

    def __init__(self, model: PlanModel, visits: list[Visit] | tuple[Visit, ...] = ()) -> None:
        self.model = model
        shape = (model.periods_h.size, model.n_bins)
        self.visits: list[Visit] = []
        self.counts = np.zeros(shape, dtype=np.int32)
        #: The schedule's visits per site-night (a site-night's cells are the union of its visits').
        self._by_part: dict[int, list[Visit]] = {}
        self.log_surv = np.zeros(shape)
        self.phasor = model.done_phasor.copy()
        self.n_slots = model.done_n
        self._cache: dict[Visit, tuple[np.ndarray, np.ndarray, float]] = {}
        self._cache_bytes = 0
        self._not_done = ~model.done_cells
        for v in visits:
            self._apply_arrays([], [v])
        self._refresh()

    def _pieces(self, v: Visit) -> tuple[np.ndarray, np.ndarray, float]:
        hit = self._cache.get(v)
        if hit is None:
            m = self.model.visit_masks(np.array([v.start]), np.array([v.length]))[0]
            ph, w = self.model.visit_phasors(np.array([v.site_night]), np.array([v.start]), np.array([v.length]))
            hit = (m, ph[0], float(w[0]))
            size = m.nbytes + hit[1].nbytes
            if self._cache_bytes + size > _CACHE_BYTES:
                self._cache.clear()
                self._cache_bytes = 0
            self._cache[v] = hit
            self._cache_bytes += size
        return hit

    def _part_cells(self, visits: list[Visit]) -> np.ndarray | None:
        """Cells touched by a site-night's visits (None when it has none)."""
        out = None
        for v in visits:
            m = self._pieces(v)[0]
            out = m.copy() if out is None else np.logical_or(out, m, out=out)
        return out

    def _part_change(self, p: int, remove: list[Visit], add: list[Visit]) -> tuple[np.ndarray, np.ndarray]:
        """Site-night ``p``'s cells before and after the move (bool, periods × bins)."""
        before = self._by_part.get(p, [])
        after = [v for v in before if v not in remove] + [v for v in add if v.site_night == p]
        old, new = self._part_cells(before), self._part_cells(after)
        was = np.zeros(self.counts.shape, dtype=bool) if old is None else old
        now = np.zeros(self.counts.shape, dtype=bool) if new is None else new
        return was, now

    def _apply_arrays(self, remove: list[Visit], add: list[Visit]) -> None:
        model = self.model
        for sign, group in ((-1, remove), (1, add)):
            for v in group:
                m, ph, w = self._pieces(v)
                if sign > 0:
                    self.counts += m
                else:
                    self.counts -= m
                self.phasor += sign * ph
                self.n_slots += sign * w
        for p in _touched(remove, add):
            was, now = self._part_change(p, remove, add)
            self.log_surv += (now.astype(float) - was) * model.log_cloudy[p]
        for v in remove:
            self.visits.remove(v)
            self._by_part[v.site_night].remove(v)
        self.visits.extend(add)
        for v in add:
            self._by_part.setdefault(v.site_night, []).append(v)
        self.visits.sort(key=lambda v: (v.start, v.site_night))

    def _refresh(self) -> None:
        """Sums over every cell and the visits' per-visit numbers, from scratch; then ``current``."""
        model = self.model
        covered = (self.counts > 0) | model.done_cells
        self._covered_n = int(np.count_nonzero(covered))
        self._expected_sum = float(np.where(model.done_cells, 1.0, -np.expm1(self.log_surv)).sum())
        v = self.visits
        self._lengths = np.array([x.length for x in v], dtype=np.int64)
        parts = np.array([x.site_night for x in v], dtype=np.int64)
        starts = np.array([x.start for x in v], dtype=np.int64)
        i0, i1 = model.science_flat(parts, starts, self._lengths) if v else (np.zeros(0, int), np.zeros(0, int))
        self._quality = model._quality_cum[i1] - model._quality_cum[i0]
        t0, t1 = model.science_h(starts, self._lengths)
        self._intervals = np.column_stack([t0, t1]) if v else np.zeros((0, 2))
        self._index = {x: i for i, x in enumerate(v)}
        self.current = self.score([], [])

    def score(self, remove: list[Visit], add: list[Visit]) -> Terms:
        """The objective's terms if ``remove`` left the schedule and ``add`` joined it (nothing is changed)."""
        model = self.model
        n_cells = max(model.n_cells, 1)
        covered_n, expected_sum = self._covered_n, self._expected_sum
        phasor, n = self.phasor, self.n_slots
        if remove or add:
            delta = np.zeros(self.counts.shape, dtype=np.int8)
            phasor = phasor.copy()
            for sign, group in ((-1, remove), (1, add)):
                for v in group:
                    m, ph, w = self._pieces(v)
                    delta += m.view(np.int8) if sign > 0 else -m.view(np.int8)
                    phasor += sign * ph
                    n += sign * w
            # Cells whose count changes: only there can a cell become covered or uncovered.
            idx = np.flatnonzero((delta != 0).ravel() & self._not_done.ravel())
            if idx.size:
                old = np.take(self.counts.ravel(), idx)
                new = old + np.take(delta.ravel(), idx)
                covered_n += int(np.count_nonzero(new > 0)) - int(np.count_nonzero(old > 0))
            # Weather-expected coverage changes only where a touched site-night's cells change.
            changed = None
            shift = {}
            for p in _touched(remove, add):
                was, now = self._part_change(p, remove, add)
                diff = was != now
                if diff.any():
                    shift[p] = (was, now)
                    changed = diff if changed is None else changed | diff
            if changed is not None:
                jdx = np.flatnonzero((changed & self._not_done).ravel())
                old_ls = np.take(self.log_surv.ravel(), jdx)
                new_ls = old_ls.copy()
                for p, (was, now) in shift.items():
                    new_ls += (np.take(now.ravel(), jdx).astype(float) - np.take(was.ravel(), jdx)) * model.log_cloudy[
                        p
                    ]
                expected_sum += float(np.sum(np.expm1(old_ls) - np.expm1(new_ls)))
        alias = float(np.abs(phasor).max() / n) if n > 0 and phasor.size else 0.0
        if remove:
            keep = np.ones(len(self.visits), dtype=bool)
            keep[[self._index[v] for v in remove]] = False
            lengths, quality, iv = self._lengths[keep], self._quality[keep], self._intervals[keep]
        else:
            lengths, quality, iv = self._lengths, self._quality, self._intervals
        if add:
            starts = np.array([v.start for v in add], dtype=np.int64)
            add_len = np.array([v.length for v in add], dtype=np.int64)
            i0, i1 = model.science_flat(np.array([v.site_night for v in add], dtype=np.int64), starts, add_len)
            t0, t1 = model.science_h(starts, add_len)
            lengths = np.concatenate([lengths, add_len])
            quality = np.concatenate([quality, model._quality_cum[i1] - model._quality_cum[i0]])
            iv = np.concatenate([iv, np.column_stack([t0, t1])])
        done_iv = np.asarray(model.done.intervals_h, dtype=float).reshape(-1, 2)
        gap = excess_gap_h(np.concatenate([iv, done_iv]), model.span_h, model.max_gap_h)
        return model.combine(
            covered_n / n_cells,
            expected_sum / n_cells,
            alias,
            gap,
            int(lengths.sum()),
            float(np.sum(quality)) if quality.size else 0.0,
        )

    def apply(self, remove: list[Visit], add: list[Visit]) -> None:
        self._apply_arrays(remove, add)
        self._refresh()

    def holds(self, v: Visit) -> bool:
        """Whether ``v`` is in the schedule."""
        return v in self._index

    def part_visits(self, part: int) -> list[Visit]:
        """The schedule's visits in site-night ``part``."""
        return list(self._by_part.get(part, []))

    def covered_mask(self) -> np.ndarray:
        """Cells covered by the schedule or already observed: bool (periods, bins)."""
        return (self.counts > 0) | self.model.done_cells
