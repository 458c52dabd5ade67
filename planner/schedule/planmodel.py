"""What a schedule is scored on, and a schedule scored from scratch.

``PlanModel`` fixes what a schedule is scored on (slot grid, period grid, phase bins, alias
frequencies, weights, anything already observed, and, when re-planning from a light curve, each
slot's model differences between every pair of candidates), and gives any visit's pieces (cells,
weighted window sums, candidate-pair moments) without a pass over its slots. ``PlanModel.terms`` scores a schedule from
scratch and is the reference the tests compare the running sums of planner.schedule.state against.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from planner.inputs.settings import Weights
from planner.schedule.cells import ElementCells
from planner.schedule.discrimination import SlotMoments, night_separation
from planner.schedule.objective import (
    Terms,
    arc_mask,
    discrimination,
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


def visit_arrays(visits: list[Visit]) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Site-night, start and length of each visit as arrays, the order the vectorised kernels take them."""
    return (
        np.array([v.site_night for v in visits]),
        np.array([v.start for v in visits]),
        np.array([v.length for v in visits]),
    )


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
        # z^k, z = e^{2πiν·slot}, for k up to the longest visit so far (objective.run_window_sums).
        self._zpow = np.zeros((0, self.freq_per_day.size), dtype=complex)
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
        i0, i1 = self.science_flat(*visit_arrays(visits))
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
        if visits:  # every visit's window sum in one product (its slot-by-slot twin: visit_phasors_slow)
            ph, w = self.visit_phasors(*visit_arrays(visits))
            phasor = phasor + ph.sum(axis=0)
            n += float(w.sum())
        for v in visits:
            m = self.visit_masks(np.array([v.start]), np.array([v.length]))[0]
            covered |= m
            per_part[v.site_night] = per_part.get(v.site_night, np.zeros_like(m)) | m
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
