"""A schedule being optimised: its visits, and the running sums that make the objective cheap to update.

``PlanModel`` fixes what a schedule is scored on (slot grid, period grid, phase bins, alias
frequencies, weights, anything already observed, and, when re-planning from a light curve, each
slot's model differences between every pair of candidates). ``PlanState`` holds one schedule plus
the running cell counts, per-site-night counts, spectral-window sums and per-site-night sums of the
pairs' differences, so that scoring a move (remove some visits, add others) costs
O(periods × bins + frequencies + pairs), never a full rescore.
``PlanModel.terms`` scores a schedule from scratch and is the reference the tests compare against.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from planner.inputs.settings import Weights
from planner.schedule.discrimination import SlotMoments, night_separation
from planner.schedule.objective import (
    Terms,
    arc_mask,
    discrimination,
    excess_gap_h,
    pack_cells,
    point_mask,
    point_window_sum,
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
_ELEMENT_CHUNK = 256
#: Visits whose cells and phasors are kept between moves (~20 kB each on the demo grid).
_CACHE_VISITS = 2000


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
        slot_moments: SlotMoments | None = None,
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
        # Prefix sums of w·e^{2πiνt} and of w: any visit's window sum in O(frequencies).
        phasors = self.slot_weight[:, None] * np.exp(
            2j * np.pi * np.outer(self.slot_centre_h / 24.0, self.freq_per_day)
        )
        self._phasor_cum = np.vstack([np.zeros((1, self.freq_per_day.size), dtype=complex), np.cumsum(phasors, axis=0)])
        self._weight_cum = np.concatenate([[0.0], np.cumsum(self.slot_weight)])
        #: Weights and candidate-pair differences of every flat slot, or None without candidates
        #: (planner.schedule.discrimination).
        self.slot_moments = slot_moments
        if slot_moments is not None and slot_moments.n_slots != n_flat:
            raise ValueError(f"slot_moments holds {slot_moments.n_slots} slots, the site-nights span {n_flat}")
        clear = np.array([p.clear_fraction for p in grid.site_nights], dtype=float)
        self.log_cloudy = np.log1p(-np.clip(clear, *_CLEAR_CLIP))
        lo, hi = grid.span_slots
        self.span_h = (lo * grid.slot_h, hi * grid.slot_h)
        if len(self.done.intervals_h):
            self.span_h = (min(self.span_h[0], float(np.min(self.done.intervals_h[:, 0]))), self.span_h[1])
        self._elem_packed: np.ndarray | None = None
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
        """Weighted window sums Σ w e^{2πiνt} over each visit's science slots (N, F), and Σ w (N,)."""
        i0, i1 = self.science_flat(parts, starts, lengths)
        return self._phasor_cum[i1] - self._phasor_cum[i0], self._weight_cum[i1] - self._weight_cum[i0]

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

    @property
    def n_pairs(self) -> int:
        """Candidate pairs the discrimination term separates (0 without candidates)."""
        return 0 if self.slot_moments is None else self.slot_moments.n_pairs

    def visit_moments(
        self, parts: np.ndarray, starts: np.ndarray, lengths: np.ndarray
    ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(S0, S1, S2) of each visit's science slots: Σ w, Σ w Δm, Σ w Δm² per pair, from prefix sums."""
        return self.slot_moments.between(*self.science_flat(parts, starts, lengths))

    def visit_moments_slow(self, part: int, start: int, length: int) -> tuple[float, np.ndarray, np.ndarray]:
        """Slow twin of :meth:`visit_moments` for one visit: add slot by slot."""
        a, b = self.science_flat(np.array([part]), np.array([start]), np.array([length]))
        return self.slot_moments.between_slow(int(a[0]), int(b[0]))

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

    def element_packed(self) -> np.ndarray:
        """Cells of every greedy element, packed (E, W); built once, in chunks to bound memory."""
        if self._elem_packed is None:
            g = self.grid
            chunks = [
                pack_cells(self.visit_masks(g.elem_start[i : i + _ELEMENT_CHUNK], g.elem_len[i : i + _ELEMENT_CHUNK]))
                for i in range(0, g.n_elements, _ELEMENT_CHUNK)
            ]
            n_words = -(-self.n_cells // 64)
            self._elem_packed = np.concatenate(chunks) if chunks else np.zeros((0, n_words), dtype=np.uint64)
        return self._elem_packed

    def element_masks(self, idx: np.ndarray) -> np.ndarray:
        g = self.grid
        return self.visit_masks(g.elem_start[idx], g.elem_len[idx])

    # --- scoring from scratch (reference) --------------------------------------------------------
    def combine(
        self,
        coverage: float,
        expected: float,
        alias: float,
        gap_h: float,
        used_slots: int,
        quality_slots: float = 0.0,
        separation: np.ndarray | None = None,
    ) -> Terms:
        """The terms and J of a schedule; ``separation``: its expected Δχ² per candidate pair (with candidates)."""
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
        disc = low = None
        if self.slot_moments is not None:
            disc, low = discrimination(np.zeros(self.n_pairs) if separation is None else separation)
            total += w.discrimination * disc
        return Terms(
            coverage=coverage,
            expected_coverage=expected,
            alias=alias,
            excess_gap_h=gap_h,
            gap_fraction=gap_frac,
            hours_fraction=hours_frac,
            quality=quality,
            total=total,
            discrimination=disc,
            min_delta_chi2=low,
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
        moments: dict[int, list] = {}
        for v in visits:
            m = self.visit_masks(np.array([v.start]), np.array([v.length]))[0]
            covered |= m
            per_part[v.site_night] = per_part.get(v.site_night, np.zeros_like(m)) | m
            ph, w = self.visit_phasors_slow(v.site_night, v.start, v.length)
            phasor = phasor + ph
            n += w
            if self.n_pairs:
                m0, m1, m2 = self.visit_moments_slow(v.site_night, v.start, v.length)
                acc = moments.setdefault(v.site_night, [0.0, np.zeros(self.n_pairs), np.zeros(self.n_pairs)])
                acc[0], acc[1], acc[2] = acc[0] + m0, acc[1] + m1, acc[2] + m2
        separation = np.zeros(self.n_pairs)
        for m0, m1, m2 in moments.values():
            separation += night_separation(m0, m1, m2)
        log_surv = np.zeros(covered.shape)
        for p, m in per_part.items():
            log_surv += m * self.log_cloudy[p]
        expected = np.where(self.done_cells, 1.0, 1.0 - np.exp(log_surv)).mean()
        alias = float(np.abs(phasor).max() / n) if n > 0 and phasor.size else 0.0
        gap = excess_gap_h(self.intervals_h(visits), self.span_h, self.max_gap_h)
        return self.combine(
            float(covered.mean()),
            float(expected),
            alias,
            gap,
            sum(v.length for v in visits),
            self.quality_sum(visits),
            separation,
        )


class PlanState:
    """One schedule with running sums; ``score`` a move without applying it, ``apply`` to keep it."""

    def __init__(self, model: PlanModel, visits: list[Visit] | tuple[Visit, ...] = ()) -> None:
        self.model = model
        shape = (model.periods_h.size, model.n_bins)
        self.visits: list[Visit] = []
        self.counts = np.zeros(shape, dtype=np.int32)
        self.part_counts: dict[int, np.ndarray] = {}
        self.log_surv = np.zeros(shape)
        self.phasor = model.done_phasor.copy()
        self.n_slots = model.done_n
        #: Expected Δχ² per candidate pair over the schedule's science slots, and its share per site-night.
        self.separation = np.zeros(model.n_pairs)
        self.night_separation: dict[int, np.ndarray] = {}
        #: (S0, S1, S2) of each site-night's visits (planner.schedule.discrimination).
        self.night_moments: dict[int, tuple] = {}
        self._cache: dict[Visit, tuple] = {}
        for v in visits:
            self.apply([], [v])
        self.current = self.score([], [])

    def _pieces(self, v: Visit) -> tuple:
        """A visit's cells, window phasors and weight, and (with candidates) its (S0, S1, S2)."""
        hit = self._cache.get(v)
        if hit is None:
            model = self.model
            args = (np.array([v.site_night]), np.array([v.start]), np.array([v.length]))
            m = model.visit_masks(args[1], args[2])[0]
            ph, w = model.visit_phasors(*args)
            mom = None
            if model.n_pairs:
                s0, s1, s2 = model.visit_moments(*args)
                mom = (float(s0[0]), s1[0], s2[0])
            hit = (m, ph[0], float(w[0]), mom)
            if len(self._cache) > _CACHE_VISITS:
                self._cache.clear()
            self._cache[v] = hit
        return hit

    def _updated(self, remove: list[Visit], add: list[Visit]):
        model = self.model
        counts = self.counts.copy()
        phasor = self.phasor.copy()
        n = self.n_slots
        touched: dict[int, np.ndarray] = {}
        for sign, group in ((-1, remove), (1, add)):
            for v in group:
                m, ph, w, _ = self._pieces(v)
                counts += sign * m
                phasor += sign * ph
                n += sign * w
                pc = touched.get(v.site_night)
                if pc is None:
                    base = self.part_counts.get(v.site_night)
                    pc = np.zeros(counts.shape, dtype=np.int32) if base is None else base.copy()
                    touched[v.site_night] = pc
                pc += sign * m
        log_surv = self.log_surv.copy() if touched else self.log_surv
        for p, pc in touched.items():
            old = self.part_counts.get(p)
            was = np.zeros(pc.shape, dtype=bool) if old is None else old > 0
            log_surv += ((pc > 0).astype(float) - was) * model.log_cloudy[p]
        separation, nights = self.moved_separation(remove, add)
        return counts, phasor, n, touched, log_surv, separation, nights

    def moved_separation(self, remove: list[Visit], add: list[Visit]) -> tuple[np.ndarray, dict[int, tuple]]:
        """Pairs' expected Δχ² after a move, and each touched site-night's new (S0, S1, S2, Δχ²), its sums
        taken afresh from the visits' cached moments (no rounding accumulates)."""
        if not self.model.n_pairs:
            return self.separation, {}
        separation = self.separation.copy()
        nights: dict[int, tuple] = {}
        zero = np.zeros(self.model.n_pairs)
        for p in {v.site_night for v in remove} | {v.site_night for v in add}:
            kept = [v for v in self.visits if v.site_night == p and v not in remove]
            moms = [self._pieces(v)[3] for v in kept + [v for v in add if v.site_night == p]]
            s0 = sum(m[0] for m in moms)
            s1, s2 = sum((m[1] for m in moms), zero), sum((m[2] for m in moms), zero)
            new = night_separation(s0, s1, s2)
            separation += new - self.night_separation.get(p, zero)
            nights[p] = (s0, s1, s2, new)
        return separation, nights

    def score(self, remove: list[Visit], add: list[Visit]) -> Terms:
        model = self.model
        counts, phasor, n, _, log_surv, separation, _ = self._updated(remove, add)
        covered = (counts > 0) | model.done_cells
        expected = np.where(model.done_cells, 1.0, -np.expm1(log_surv)).mean()
        alias = float(np.abs(phasor).max() / n) if n > 0 and phasor.size else 0.0
        visits = [v for v in self.visits if v not in remove] + list(add)
        gap = excess_gap_h(model.intervals_h(visits), model.span_h, model.max_gap_h)
        return model.combine(
            float(covered.mean()),
            float(expected),
            alias,
            gap,
            sum(v.length for v in visits),
            model.quality_sum(visits),
            separation,
        )

    def apply(self, remove: list[Visit], add: list[Visit]) -> None:
        counts, phasor, n, touched, log_surv, separation, nights = self._updated(remove, add)
        self.counts, self.phasor, self.n_slots, self.log_surv = counts, phasor, n, log_surv
        for p, (s0, s1, s2, sep) in nights.items():
            self.night_moments[p], self.night_separation[p] = (s0, s1, s2), sep
        if nights:
            self.separation = np.sum(list(self.night_separation.values()), axis=0)
        for p, pc in touched.items():
            self.part_counts[p] = pc
        for v in remove:
            self.visits.remove(v)
        self.visits.extend(add)
        self.visits.sort(key=lambda v: (v.start, v.site_night))
        self.current = self.score([], [])

    def covered_packed(self) -> np.ndarray:
        return pack_cells((self.counts > 0) | self.model.done_cells)
