"""Coverage cells of the greedy's elements, counted from their phase arcs without building the cells.

A visit's science interval folded on period ``P`` covers one circular run of phase bins
(:func:`planner.schedule.objective.arc_bins`: first bin and run length). The cells a run would add
to a coverage map are its length less the bins of the run already covered, and a per-period
prefix sum over the map laid out twice (so a run that wraps past the last bin stays one
difference) counts those in two look-ups. Counting every element this way costs O(elements ×
periods) and holds no (element × cell) table: the memory of the greedy and the local search stays
that of one coverage map, whatever the number of nights.

:func:`arc_gains_slow` (masks built bin by bin, then counted) is the slow twin the tests compare with.
"""

from __future__ import annotations

import numpy as np

from planner.schedule.objective import arc_bins, arc_lengths, arc_mask, arc_mask_slow, coverage_gains_slow

#: (elements × periods) pairs counted per chunk: each int64 temporary stays near 16 MB.
_CHUNK_PAIRS = 2_000_000


def run_prefix(covered: np.ndarray) -> np.ndarray:
    """Cumulative covered cells along each period's bins laid out twice: int32 (P, 2·n_bins + 1)."""
    c = np.asarray(covered, dtype=bool)
    twice = np.concatenate([c, c], axis=1).astype(np.int32)
    out = np.zeros((c.shape[0], 2 * c.shape[1] + 1), dtype=np.int32)
    np.cumsum(twice, axis=1, out=out[:, 1:])
    return out


def arc_gains(
    t0_h: np.ndarray, t1_h: np.ndarray, periods_h: np.ndarray, n_bins: int, covered: np.ndarray
) -> np.ndarray:
    """Cells each interval would newly cover given the map ``covered`` (P, n_bins): int64 (N,).

    Equal to ``(arc_mask(t0, t1, periods, n_bins) & ~covered).sum(axis=(1, 2))`` without the masks.
    Periods whose bins are all covered add nothing and are skipped.
    """
    c = np.asarray(covered, dtype=bool)
    rows = open_periods(c)
    return arc_gains_prefix(t0_h, t1_h, np.asarray(periods_h, dtype=float)[rows], n_bins, run_prefix(c[rows]))


def open_periods(covered: np.ndarray) -> np.ndarray:
    """Indices of the periods with at least one bin not yet covered (the only ones a gain can come from)."""
    return np.flatnonzero(~np.asarray(covered, dtype=bool).all(axis=1))


def arc_gains_prefix(
    t0_h: np.ndarray, t1_h: np.ndarray, periods_h: np.ndarray, n_bins: int, prefix: np.ndarray
) -> np.ndarray:
    """:func:`arc_gains` with the map's :func:`run_prefix` already computed (reused while the map stands)."""
    t0 = np.asarray(t0_h, dtype=float).ravel()
    t1 = np.asarray(t1_h, dtype=float).ravel()
    n_p = prefix.shape[0]
    row = (np.arange(n_p, dtype=np.int64) * prefix.shape[1])[None, :]
    flat = prefix.ravel()
    out = np.empty(t0.size, dtype=np.int64)
    chunk = max(1, _CHUNK_PAIRS // max(n_p, 1))
    if n_p and not prefix[:, -1].any():
        # An empty map (the greedy's first pass over every element): each run is all new, no look-ups.
        for a in range(0, t0.size, chunk):
            out[a : a + chunk] = arc_lengths(t0[a : a + chunk], t1[a : a + chunk], periods_h, n_bins).sum(axis=1)
        return out
    for a in range(0, t0.size, chunk):
        first, n_cov = arc_bins(t0[a : a + chunk], t1[a : a + chunk], periods_h, n_bins)
        lo = first + row
        seen = np.take(flat, lo + n_cov) - np.take(flat, lo)
        out[a : a + chunk] = n_cov.sum(axis=1) - seen.sum(axis=1)
    return out


def arc_gains_slow(
    t0_h: np.ndarray, t1_h: np.ndarray, periods_h: np.ndarray, n_bins: int, covered: np.ndarray
) -> np.ndarray:
    """Slow twin of :func:`arc_gains`: walk each arc bin by bin, then count cell by cell."""
    return coverage_gains_slow(arc_mask_slow(t0_h, t1_h, periods_h, n_bins), np.asarray(covered, dtype=bool))


class ElementCells:
    """The greedy elements' cells, on demand: counts from arcs, masks one small batch at a time.

    ``t0_h``, ``t1_h``: each element's science interval (hours from the slot grid's origin).
    """

    def __init__(self, t0_h: np.ndarray, t1_h: np.ndarray, periods_h: np.ndarray, n_bins: int) -> None:
        self.t0_h = np.asarray(t0_h, dtype=float).ravel()
        self.t1_h = np.asarray(t1_h, dtype=float).ravel()
        self.periods_h = np.asarray(periods_h, dtype=float)
        self.n_bins = int(n_bins)

    def __len__(self) -> int:
        return int(self.t0_h.size)

    def gains(self, covered: np.ndarray, idx: np.ndarray | None = None) -> np.ndarray:
        """Cells each element (all, or ``idx``) would newly cover given the map ``covered`` (P, n_bins)."""
        c = np.asarray(covered, dtype=bool)
        rows = open_periods(c)
        return self.gains_prefix(run_prefix(c[rows]), rows, idx)

    def gains_prefix(self, prefix: np.ndarray, rows: np.ndarray, idx: np.ndarray | None = None) -> np.ndarray:
        """:meth:`gains` from the :func:`run_prefix` of the map's periods ``rows`` (every period with a bin
        left uncovered)."""
        sel = slice(None) if idx is None else np.asarray(idx, dtype=np.int64)
        return arc_gains_prefix(self.t0_h[sel], self.t1_h[sel], self.periods_h[rows], self.n_bins, prefix)

    def masks(self, idx: np.ndarray) -> np.ndarray:
        """Cells of the elements ``idx``: bool (len(idx), P, n_bins)."""
        i = np.asarray(idx, dtype=np.int64)
        return arc_mask(self.t0_h[i], self.t1_h[i], self.periods_h, self.n_bins)

    def incidence(self) -> int:
        """Σ over elements of the cells each touches (the exact programme's non-zeros)."""
        return int(self.gains(np.zeros((self.periods_h.size, self.n_bins), dtype=bool)).sum())
