"""A schedule being optimised: its visits, and the running sums that make the objective cheap to update.

``PlanState`` holds one schedule of a :class:`planner.schedule.planmodel.PlanModel` plus the running
cell counts, weather log-survival, spectral-window sums and, when re-planning from a light curve,
per-site-night sums of the candidate pairs' differences (planner.schedule.separation), so that scoring
a move (remove some visits, add others) costs O(periods × bins + frequencies + pairs), never a full
rescore. ``PlanModel.terms`` scores a schedule from scratch and is the reference the tests compare against.
"""

from __future__ import annotations

import numpy as np

from planner.schedule.objective import Terms, excess_gap_h
from planner.schedule.planmodel import PlanModel, Visit
from planner.schedule.separation import SeparationSums

#: Bytes of visit cells, phasors and moments kept between moves (a visit holds periods × bins
#: + 16 × frequencies + 16 × pairs).
_CACHE_BYTES = 64_000_000


def _touched(remove: list[Visit], add: list[Visit]) -> list[int]:
    return list(dict.fromkeys(v.site_night for v in [*remove, *add]))


class PlanState:
    """One schedule with running sums; ``score`` a move without applying it, ``apply`` to keep it.

    ``score`` costs a few byte-wide passes over the cells plus work on the cells the move changes:
    the covered count and the weather-expected coverage are updated where a site-night's cells change
    (usually a thin rim of the arcs a visit moves by), never re-summed over every cell; with candidate
    periods, the touched site-nights' discrimination sums are taken afresh from their visits' moments
    (planner.schedule.separation). ``apply`` recomputes the cell sums from scratch, so no rounding
    accumulates over many moves."""

    def __init__(self, model: PlanModel, visits: list[Visit] | tuple[Visit, ...] = ()) -> None:
        self.model = model
        shape = (model.periods_h.size, model.n_bins)
        self.visits: list[Visit] = []
        self.counts = np.zeros(shape, dtype=np.int32)
        #: The schedule's visits per site-night, by start (a site-night's cells are the union of its visits').
        self._by_part: dict[int, list[Visit]] = {}
        self.log_surv = np.zeros(shape)
        self.phasor = model.done_phasor.copy()
        self.n_slots = model.done_n
        #: Expected Δχ² per candidate pair over the schedule's science slots, per site-night and in total.
        self.sums = SeparationSums(model.n_pairs)
        self._cache: dict[Visit, tuple] = {}
        self._cache_bytes = 0
        self._not_done = ~model.done_cells
        for v in visits:
            self._apply_arrays([], [v])
        self._refresh()

    @property
    def separation(self) -> np.ndarray:
        """Expected Δχ² per candidate pair over the schedule's science slots (empty without candidates)."""
        return self.sums.total

    def _pieces(self, v: Visit) -> tuple:
        """A visit's cells, window phasors and weight, and (with candidates) its (S0, S1, S2)."""
        hit = self._cache.get(v)
        if hit is None:
            model = self.model
            args = (np.array([v.site_night]), np.array([v.start]), np.array([v.length]))
            m = model.visit_masks(args[1], args[2])[0]
            ph, w = model.visit_phasors(*args)
            mom = None
            size = m.nbytes + ph[0].nbytes
            if model.n_pairs:
                s0, s1, s2 = model.visit_moments(*args)
                mom = (float(s0[0]), s1[0], s2[0])
                size += s1[0].nbytes + s2[0].nbytes
            hit = (m, ph[0], float(w[0]), mom)
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

    def moved_separation(self, remove: list[Visit], add: list[Visit]) -> tuple[np.ndarray, dict[int, tuple]]:
        """Pairs' expected Δχ² after a move, and each touched site-night's new (S0, S1, S2, Δχ²), its sums
        taken afresh from the visits' cached moments (no rounding accumulates)."""
        if not self.model.n_pairs:
            return self.sums.total, {}
        nights = {}
        for p in _touched(remove, add):
            kept = [v for v in self._by_part.get(p, []) if v not in remove]
            nights[p] = [self._pieces(v)[3] for v in kept + [v for v in add if v.site_night == p]]
        return self.sums.moved(nights)

    def _apply_arrays(self, remove: list[Visit], add: list[Visit]) -> None:
        model = self.model
        for sign, group in ((-1, remove), (1, add)):
            for v in group:
                m, ph, w, _ = self._pieces(v)
                if sign > 0:
                    self.counts += m
                else:
                    self.counts -= m
                self.phasor += sign * ph
                self.n_slots += sign * w
        for p in _touched(remove, add):
            was, now = self._part_change(p, remove, add)
            self.log_surv += (now.astype(float) - was) * model.log_cloudy[p]
        self.sums.keep(self.moved_separation(remove, add)[1])
        for v in remove:
            self.visits.remove(v)
            self._by_part[v.site_night].remove(v)
        self.visits.extend(add)
        for v in add:
            self._by_part.setdefault(v.site_night, []).append(v)
            self._by_part[v.site_night].sort(key=lambda x: x.start)
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
                    m, ph, w, _ = self._pieces(v)
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
                    step = np.take(now.ravel(), jdx).astype(float) - np.take(was.ravel(), jdx)
                    new_ls += step * model.log_cloudy[p]
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
            self.moved_separation(remove, add)[0],
        )

    def apply(self, remove: list[Visit], add: list[Visit]) -> None:
        self._apply_arrays(remove, add)
        self._refresh()

    def holds(self, v: Visit) -> bool:
        """Whether ``v`` is in the schedule."""
        return v in self._index

    def part_visits(self, part: int) -> list[Visit]:
        """The schedule's visits in site-night ``part``, by start."""
        return list(self._by_part.get(part, []))

    def covered_mask(self) -> np.ndarray:
        """Cells covered by the schedule or already observed: bool (periods, bins)."""
        return (self.counts > 0) | self.model.done_cells
