"""The scheduler's objective: rotational-phase coverage, weather-expected coverage, alias and cadence terms.

Times here are float hours from the plan's reference epoch (``SlotGrid.t_ref``). A visit's science
interval ``[t0, t1]`` folded on a trial period ``P`` covers a circular arc of rotational phase; cut
into ``n_bins`` equal bins, the *cells* (period, bin) it touches are what it contributes.

Terms of the objective (all in [0, 1]; the plan maximises
``J = w_cov·Cov + w_rob·ECov − w_alias·Alias − w_cad·Gap + w_hours·Hours + w_quality·Quality``, plus
``w_disc·Disc`` when re-planning from a light curve):

- ``Cov``: fraction of (period, bin) cells touched by at least one visit. A coverage function, hence
  monotone submodular (Nemhauser, Wolsey & Fisher 1978): the greedy works on it.
- ``ECov``: expected ``Cov`` when each site-night is clear with its site's clear-night fraction,
  independently: a cell's chance of being seen is ``1 − Π (1 − c_sn)`` over the site-nights touching it.
  It rewards cells seen from several sites, so a period band held by one site only counts less.
- ``Alias``: the highest spectral-window peak ``|W(ν)|`` (Deeming 1975, Ap&SS 36, 137) over the
  frequencies whose aliases land in the searched band, using science-slot centres as the times;
  equal to the length of the mean unit phasor at ν (Eyer & Bartholdi 1999, A&AS 135, 1); each slot
  weighted by its precision 1/σ², as ``check`` weights its window.
- ``Gap``: hours of network-wide silence beyond ``max_gap_h``, as a fraction of the campaign span.
- ``Hours``: telescope time used, as a fraction of what the allocations allow (granted time left
  unused is lost; more frames also sharpen the brightness trend). Modular, so the sum stays submodular.
- ``Quality``: the science slots' photometric quality (planner.schedule.quality: precision 1/σ² with an
  airmass-proportional extinction error, relative to the campaign's best slot, 0 above the soft
  ``max_airmass``) summed, over the slots the allocations allow: favours precise, low-airmass time.
  A weighted coverage of slots (non-negative weights), so it keeps the greedy's function submodular.
- ``Disc`` (only when re-planning from a fitted light curve, planner.schedule.discrimination): how well
  the new slots tell the surviving candidate periods apart. Each pair's expected Δχ², D = Σ (m_i − m_j)²/σ²
  over the science slots, is the T-optimality criterion of Atkinson & Fedorov (1975), Biometrika 62, 57;
  the plan should maximise the smallest pair. The local search climbs a smooth surrogate of that
  minimum (:func:`discrimination`): the power mean S = (mean (D + ε)^−q)^(−1/q) with q = 8, a soft
  minimum with no scale of its own (min D ≤ S − ε ≤ min D · pairs^(1/8), 1.45 × at 20 pairs; a soft
  minimum with a fixed temperature turns into the mean when every D is small, which is when the plan
  matters most), mapped to 1 − exp(−S/scale) in [0, 1) with scale = 25/3, so a pair separated by
  Δχ² = 25, the fit's candidate cut, earns 95 % of the term. ε = scale/100 keeps a pair that nothing
  can separate from freezing the rest. The true minimum is what is reported (``Terms.min_delta_chi2``).
  Not submodular: the greedy leaves it to the local search.

Each vectorised kernel keeps a slow, obvious twin (suffix ``_slow``) that the tests compare against.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np


def _arc_runs(t0_h, t1_h, periods_h, n_bins: int) -> tuple[np.ndarray, np.ndarray]:
    """Absolute first bin (a whole float, phase zero at t = 0) and run length (int64, at most ``n_bins``)
    of each interval on each period: (N, P) arrays. The one rounding rule of :func:`arc_bins` and
    :func:`arc_lengths`."""
    t0 = np.asarray(t0_h, dtype=float).reshape(-1, 1)
    t1 = np.asarray(t1_h, dtype=float).reshape(-1, 1)
    p = np.asarray(periods_h, dtype=float).reshape(1, -1)
    cyc0 = t0 / p
    last_abs = (t1 - t0) / p
    last_abs += cyc0
    last_abs *= n_bins
    np.floor(last_abs, out=last_abs)
    first_abs = np.multiply(cyc0, n_bins, out=cyc0)
    np.floor(first_abs, out=first_abs)
    last_abs -= first_abs
    last_abs += 1
    return first_abs, np.minimum(last_abs, n_bins, out=last_abs).astype(np.int64)


def arc_bins(t0_h: np.ndarray, t1_h: np.ndarray, periods_h: np.ndarray, n_bins: int) -> tuple[np.ndarray, np.ndarray]:
    """First phase bin and number of bins touched by each interval on each period: int arrays (N, P).

    Phase zero is at t = 0. An interval as long as the period touches every bin.
    """
    first_abs, n_cov = _arc_runs(t0_h, t1_h, periods_h, n_bins)
    # first_abs is a whole number below 2^53, so its floor division by n_bins is exact: the same value
    # as np.mod(first_abs, n_bins), several times faster.
    wraps = np.floor(first_abs / n_bins)
    wraps *= n_bins
    first_abs -= wraps
    return first_abs.astype(np.int64), n_cov


def arc_lengths(t0_h: np.ndarray, t1_h: np.ndarray, periods_h: np.ndarray, n_bins: int) -> np.ndarray:
    """Number of bins touched by each interval on each period (the second half of :func:`arc_bins`): int64 (N, P).

    What an interval adds to an empty coverage map, without locating its first bin.
    """
    return _arc_runs(t0_h, t1_h, periods_h, n_bins)[1]


def arc_mask(t0_h: np.ndarray, t1_h: np.ndarray, periods_h: np.ndarray, n_bins: int) -> np.ndarray:
    """Cells touched by each interval: bool array (N, P, n_bins). Vectorised over intervals, periods, bins."""
    first, n_cov = arc_bins(t0_h, t1_h, periods_h, n_bins)
    # Every (first bin, run length) pair has one row of bins: look the rows up instead of comparing
    # bin by bin.
    return np.take(_run_rows(int(n_bins)), first * (n_bins + 1) + n_cov, axis=0)


@functools.lru_cache(maxsize=8)
def _run_rows(n_bins: int) -> np.ndarray:
    """Bins touched by a circular run starting at bin ``f`` of length ``n``: row ``f·(n_bins+1) + n``."""
    f = np.arange(n_bins)[:, None, None]
    n = np.arange(n_bins + 1)[None, :, None]
    b = np.arange(n_bins)[None, None, :]
    return (np.mod(b - f, n_bins) < n).reshape(n_bins * (n_bins + 1), n_bins)


def arc_mask_slow(t0_h: np.ndarray, t1_h: np.ndarray, periods_h: np.ndarray, n_bins: int) -> np.ndarray:
    """Slow twin of :func:`arc_mask`: walk the phase from t0 to t1 bin by bin, in plain Python."""
    t0s = [float(x) for x in np.ravel(t0_h)]
    t1s = [float(x) for x in np.ravel(t1_h)]
    ps = [float(x) for x in np.ravel(periods_h)]
    out = np.zeros((len(t0s), len(ps), n_bins), dtype=bool)
    for i, (a, b) in enumerate(zip(t0s, t1s, strict=True)):
        for j, period in enumerate(ps):
            k = math.floor(a / period * n_bins)
            k_end = math.floor((a / period + (b - a) / period) * n_bins)
            steps = 0
            while k <= k_end and steps < n_bins:
                out[i, j, k % n_bins] = True
                k += 1
                steps += 1
    return out


def point_mask(times_h: np.ndarray, periods_h: np.ndarray, n_bins: int) -> np.ndarray:
    """Cells holding at least one of the given instants: bool (P, n_bins) (for already-observed times)."""
    t = np.asarray(times_h, dtype=float).ravel()
    p = np.asarray(periods_h, dtype=float)
    out = np.zeros((p.size, n_bins), dtype=bool)
    if t.size:
        idx = np.minimum(np.floor(np.mod(t[None, :] / p[:, None], 1.0) * n_bins).astype(np.int64), n_bins - 1)
        out[np.arange(p.size)[:, None], idx] = True
    return out


def coverage_gains_slow(element_masks: np.ndarray, covered: np.ndarray) -> np.ndarray:
    """Cells each mask would newly cover, counted cell by cell (the reference for
    :func:`planner.schedule.cells.arc_gains`)."""
    out = []
    for m in element_masks:
        out.append(sum(1 for a, c in zip(m.ravel().tolist(), covered.ravel().tolist(), strict=True) if a and not c))
    return np.array(out, dtype=np.int64)


def window_sum(t0_h: np.ndarray, n_slots: np.ndarray, slot_h: float, freq_per_day: np.ndarray) -> np.ndarray:
    """Σ exp(2πiν t_k) over slot centres t_k = t0 + (k + ½)·slot, k < n: complex (N, F), closed form.

    Summed as a geometric series, so a visit of any length costs O(F).
    """
    t0 = np.asarray(t0_h, dtype=float).reshape(-1, 1) / 24.0
    n = np.asarray(n_slots, dtype=float).reshape(-1, 1)
    nu = np.asarray(freq_per_day, dtype=float).reshape(1, -1)
    d = slot_h / 24.0
    z_arg = 2.0 * np.pi * nu * d
    lead = np.exp(1j * 2.0 * np.pi * nu * (t0 + 0.5 * d))
    # (1 − z^n)/(1 − z) = e^{iπ(n−1)x}·sin(πnx)/sin(πx), x = ν·d; limit n at x → integer.
    s_half = np.sin(0.5 * z_arg)
    safe = np.abs(s_half) > 1e-12
    ratio = np.where(safe, np.sin(0.5 * z_arg * n) / np.where(safe, s_half, 1.0), n)
    return lead * np.exp(1j * 0.5 * z_arg * (n - 1.0)) * ratio


def window_sum_slow(t0_h: np.ndarray, n_slots: np.ndarray, slot_h: float, freq_per_day: np.ndarray) -> np.ndarray:
    """Slow twin of :func:`window_sum`: add the phasors slot by slot."""
    t0s = np.ravel(t0_h)
    ns = np.ravel(n_slots)
    nus = np.ravel(freq_per_day)
    out = np.zeros((t0s.size, nus.size), dtype=complex)
    for i, (a, n) in enumerate(zip(t0s, ns, strict=True)):
        for k in range(int(n)):
            t_day = (a + (k + 0.5) * slot_h) / 24.0
            out[i] += np.exp(2j * np.pi * nus * t_day)
    return out


def slot_powers(n: int, slot_h: float, freq_per_day: np.ndarray) -> np.ndarray:
    """z^k for k < n with z = e^{2πiν·slot}: complex (n, F), each power computed directly."""
    k = np.arange(n, dtype=float)[:, None]
    return np.exp(2j * np.pi * k * (slot_h / 24.0) * np.asarray(freq_per_day, dtype=float)[None, :])


def run_window_sums(
    slot_weight: np.ndarray,
    slot_centre_h: np.ndarray,
    i0: np.ndarray,
    i1: np.ndarray,
    powers: np.ndarray,
    freq_per_day: np.ndarray,
) -> np.ndarray:
    """Σ w_s e^{2πiν t_s} over runs of evenly spaced slots ``[i0, i1)`` of a flat slot layout: complex (N, F).

    The slots of a run are one slot apart, so the sum is e^{2πiν t₀} times a polynomial in
    z = e^{2πiν·slot} with the slots' weights as coefficients: one (runs × slots) @ (slots × frequencies)
    product against ``powers`` (:func:`slot_powers`, at least as many rows as the longest run), whatever
    the number of slots in the layout.
    """
    n = np.maximum(i1 - i0, 0)
    longest = int(n.max()) if n.size else 0
    k = np.arange(longest)
    inside = k[None, :] < n[:, None]
    idx = np.where(inside, i0[:, None] + k[None, :], 0)
    w = np.where(inside, slot_weight[idx] if idx.size else 0.0, 0.0)
    t0 = slot_centre_h[np.minimum(i0, max(slot_centre_h.size - 1, 0))] if i0.size else np.zeros(0)
    lead = np.exp(2j * np.pi * np.outer(t0 / 24.0, freq_per_day))
    return lead * (w @ powers[:longest])


def point_window_sum(times_h: np.ndarray, freq_per_day: np.ndarray) -> np.ndarray:
    """Σ exp(2πiν t) over instants (already-observed times): complex (F,)."""
    t = np.asarray(times_h, dtype=float).ravel() / 24.0
    nu = np.asarray(freq_per_day, dtype=float)
    if t.size == 0:
        return np.zeros(nu.size, dtype=complex)
    return np.exp(2j * np.pi * np.outer(t, nu)).sum(axis=0)


def alias_freq_grid(
    min_period_h: float, max_period_h: float, span_h: float, double_peaked: bool, oversample: float = 5.0
) -> np.ndarray:
    """Window frequencies (cycles/day) whose aliases land inside the searched band.

    A window peak at ν moves power from f to f ± ν (VanderPlas 2018, ApJS 236, 16, §7.2); with
    photometric frequencies in [f_lo, f_hi] only ν ≤ f_hi − f_lo matters. The central lobe
    (ν < 2/T) is left out. Grid step 1/(oversample·T).
    """
    harm = 2.0 if double_peaked else 1.0
    f_lo = harm * 24.0 / max_period_h
    f_hi = harm * 24.0 / min_period_h
    t_day = max(span_h / 24.0, 1.0)
    nu_lo = 2.0 / t_day
    nu_hi = max(f_hi - f_lo, nu_lo * 2.0)
    step = 1.0 / (oversample * t_day)
    return np.arange(nu_lo, nu_hi + 0.5 * step, step)


def excess_gap_h(intervals_h: np.ndarray, span_h: tuple[float, float], max_gap_h: float) -> float:
    """Hours of network-wide silence beyond ``max_gap_h`` within ``span_h``, intervals (N, 2) in hours.

    Overlapping intervals merge; the lead-in from the span's start and the tail to its end count.
    """
    iv = np.asarray(intervals_h, dtype=float).reshape(-1, 2)
    lo, hi = span_h
    if iv.shape[0] == 0:
        return max(0.0, (hi - lo) - max_gap_h)
    iv = iv[np.argsort(iv[:, 0], kind="stable")]
    reach = np.maximum.accumulate(iv[:, 1])
    starts = np.concatenate([iv[:, 0], [hi]])
    ends = np.concatenate([[lo], reach])
    gaps = starts - ends
    return float(np.clip(gaps - max_gap_h, 0.0, None).sum())


def excess_gap_h_slow(intervals_h: np.ndarray, span_h: tuple[float, float], max_gap_h: float) -> float:
    """Slow twin of :func:`excess_gap_h`: merge intervals one by one, then walk the gaps."""
    iv = sorted((float(a), float(b)) for a, b in np.asarray(intervals_h, dtype=float).reshape(-1, 2))
    merged: list[list[float]] = []
    for a, b in iv:
        if merged and a <= merged[-1][1]:
            merged[-1][1] = max(merged[-1][1], b)
        else:
            merged.append([a, b])
    lo, hi = span_h
    total, cursor = 0.0, lo
    for a, b in merged:
        total += max(0.0, a - cursor - max_gap_h)
        cursor = max(cursor, b)
    total += max(0.0, hi - cursor - max_gap_h)
    return total


#: Δχ² scale of the discrimination term: a pair separated by 3 × scale = 25 (the fit's candidate cut)
#: earns 95 % of it.
SEPARATION_SCALE = 25.0 / 3.0
#: Exponent of the power mean that softens the minimum over pairs.
SOFTMIN_POWER = 8.0
#: Floor added to every pair's Δχ² inside the soft minimum.
SOFTMIN_FLOOR = SEPARATION_SCALE / 100.0


def discrimination(delta_chi2: np.ndarray, scale: float = SEPARATION_SCALE) -> tuple[float, float]:
    """(term, true minimum) of the pairs' expected Δχ² (module docstring): term = 1 − exp(−S/scale),
    S the power mean of exponent −8 (computed as min · (mean (min/D)^8)^(−1/8)). No pairs: (0, ∞)."""
    d = np.asarray(delta_chi2, dtype=float).ravel()
    if d.size == 0:
        return 0.0, math.inf
    return float(discrimination_rows(d[None, :], scale)[0]), float(d.min())


def discrimination_rows(delta_chi2: np.ndarray, scale: float = SEPARATION_SCALE) -> np.ndarray:
    """The term of :func:`discrimination` for each row of a (N, pairs) array (candidate moves at once)."""
    d = np.atleast_2d(np.asarray(delta_chi2, dtype=float)) + SOFTMIN_FLOOR
    low = d.min(axis=1)
    soft = low * np.mean((low[:, None] / d) ** SOFTMIN_POWER, axis=1) ** (-1.0 / SOFTMIN_POWER)
    return 1.0 - np.exp(-soft / scale)


def discrimination_slow(delta_chi2: np.ndarray, scale: float = SEPARATION_SCALE) -> tuple[float, float]:
    """Slow twin of :func:`discrimination`: the power mean straight from its definition, pair by pair."""
    d = [float(x) for x in np.ravel(delta_chi2)]
    if not d:
        return 0.0, math.inf
    mean = sum((x + SOFTMIN_FLOOR) ** -SOFTMIN_POWER for x in d) / len(d)
    return 1.0 - math.exp(-(mean ** (-1.0 / SOFTMIN_POWER)) / scale), min(d)


@dataclass(frozen=True)
class Terms:
    """Values of the objective's terms for one schedule (the last two only with candidate periods)."""

    coverage: float
    expected_coverage: float
    alias: float
    excess_gap_h: float
    gap_fraction: float
    hours_fraction: float
    quality: float
    total: float
    discrimination: float | None = None
    #: The smallest expected Δχ² between two candidate models over the schedule's new slots.
    min_delta_chi2: float | None = None

    def to_dict(self) -> dict[str, float]:
        return {k: float(v) for k, v in self.__dict__.items() if v is not None}
