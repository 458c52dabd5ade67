"""The discrimination term's running sums over a schedule (re-planning from a fitted light curve).

Each site-night has a zero point of its own in the fit, so the expected Δχ² of a pair of candidate
models over a schedule is a sum over site-nights of S2 − S1²/S0 (planner.schedule.discrimination,
Atkinson & Fedorov 1975, Biometrika 62, 57, with the zero point profiled out), where S0 = Σ w,
S1 = Σ w Δm, S2 = Σ w Δm² over the site-night's science slots. A move touches one or two site-nights:
:class:`SeparationSums` keeps each site-night's sums and Δχ², so a move's separation costs O(pairs)
per touched site-night, its sums taken afresh from the visits' own sums (no rounding accumulates).
"""

from __future__ import annotations

import numpy as np

from planner.schedule.discrimination import night_separation

#: A visit's (S0, S1, S2): Σ w, and Σ w Δm, Σ w Δm² per pair.
Moments = tuple[float, np.ndarray, np.ndarray]


def summed_moments(moments: list[Moments], n_pairs: int) -> Moments:
    """(S0, S1, S2) of several visits of one site-night, added in the order given."""
    zero = np.zeros(n_pairs)
    return sum(m[0] for m in moments), sum((m[1] for m in moments), zero), sum((m[2] for m in moments), zero)


class SeparationSums:
    """Pairs' expected Δχ² over a schedule (``total``), with each site-night's (S0, S1, S2) and Δχ²."""

    def __init__(self, n_pairs: int) -> None:
        self.n_pairs = int(n_pairs)
        self.total = np.zeros(self.n_pairs)
        self.night_moments: dict[int, Moments] = {}
        self.night_separation: dict[int, np.ndarray] = {}

    def moved(self, nights: dict[int, list[Moments]]) -> tuple[np.ndarray, dict[int, tuple]]:
        """Pairs' Δχ² after a move, given the moments of every visit each touched site-night holds after
        it; and each touched site-night's new (S0, S1, S2, Δχ²)."""
        if not self.n_pairs:
            return self.total, {}
        total = self.total.copy()
        zero = np.zeros(self.n_pairs)
        out: dict[int, tuple] = {}
        for p, moms in nights.items():
            s0, s1, s2 = summed_moments(moms, self.n_pairs)
            new = night_separation(s0, s1, s2)
            total += new - self.night_separation.get(p, zero)
            out[p] = (s0, s1, s2, new)
        return total, out

    def keep(self, nights: dict[int, tuple]) -> None:
        """Take a move's site-nights (from :meth:`moved`) into the sums; the total re-added from them."""
        for p, (s0, s1, s2, sep) in nights.items():
            self.night_moments[p], self.night_separation[p] = (s0, s1, s2), sep
        if nights:
            self.total = np.sum(list(self.night_separation.values()), axis=0)

    def if_added(
        self, n_nights: int, parts: np.ndarray, moments: tuple, moved: tuple[np.ndarray, dict[int, tuple]] | None = None
    ) -> np.ndarray:
        """Pairs' Δχ² (N, pairs) if each of N visits (site-nights ``parts``, their (S0, S1, S2) ``moments``)
        joined the schedule, after the move ``moved`` (from :meth:`moved`; None: none): only the visit's
        own site-night changes, its zero point profiled afresh."""
        total, moms, seps = self.total, dict(self.night_moments), dict(self.night_separation)
        if moved is not None:
            total, nights = moved
            for p, (s0, s1, s2, sep) in nights.items():
                moms[p], seps[p] = (s0, s1, s2), sep
        m0 = np.zeros(n_nights)
        m1, m2, sep = (np.zeros((n_nights, self.n_pairs)) for _ in range(3))
        for p, (s0, s1, s2) in moms.items():
            m0[p], m1[p], m2[p], sep[p] = s0, s1, s2, seps[p]
        e = np.asarray(parts, dtype=np.int64)
        e0, e1, e2 = moments
        return total[None, :] - sep[e] + night_separation(m0[e] + e0, m1[e] + e1, m2[e] + e2)
