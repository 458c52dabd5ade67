"""Rotational-phase coverage of a set of observation times over a grid of trial periods.

The questions an observer asks before committing telescope time: on which rotation periods do
these times leave part of the light curve unseen, and how large is the largest unseen arc?

All functions are pure and vectorised over periods (no Python loop over epochs or periods,
apart from fixed-size chunks that bound memory). Each hot kernel has a slow, obvious twin with
the same signature (suffix ``_slow``) that the tests compare against.
"""

from __future__ import annotations

import math

import numpy as np

#: Upper bound on the number of (period, time) phase values held at once (~32 MB of float64).
_CHUNK_ELEMENTS = 4_000_000


def period_grid_h(min_period_h: float, max_period_h: float, span_h: float, oversample: float = 10.0) -> np.ndarray:
    """Trial periods (hours, ascending) uniform in frequency between ``1/max`` and ``1/min``.

    The frequency step is at most ``1 / (oversample · T)`` with ``T`` the baseline, so a peak of
    width ~1/T in frequency is sampled ``oversample`` times (VanderPlas 2018, ApJS 236, 16,
    section 7.1: step 1/(n₀ T) with n₀ ≈ 5–10). A baseline shorter than ``max_period_h`` is
    raised to ``max_period_h``, so a single night still gets a usable (coarse) grid.
    Both ends are included.
    """
    if not (min_period_h > 0 and max_period_h > 0):
        raise ValueError("periods must be positive")
    if max_period_h < min_period_h:
        raise ValueError("max_period_h is below min_period_h")
    if oversample <= 0:
        raise ValueError("oversample must be positive")
    span_h = max(float(span_h), float(max_period_h))
    f_low, f_high = 1.0 / max_period_h, 1.0 / min_period_h
    step_max = 1.0 / (oversample * span_h)
    n = max(2, int(math.ceil((f_high - f_low) / step_max - 1e-9)) + 1)
    if f_high == f_low:
        return np.array([float(min_period_h)])
    freq_per_h = np.linspace(f_high, f_low, n)  # descending frequency = ascending period
    return 1.0 / freq_per_h


def thin_periods(periods_h: np.ndarray, max_n: int) -> np.ndarray:
    """At most ``max_n`` of a period grid, evenly spread over its indices (so over frequency, for a
    grid uniform in frequency), both ends kept; the grid itself when it is no longer.

    The scheduler's objective counts phase coverage on every trial period for every candidate visit,
    so its cost grows as the number of visits times the number of periods, both in proportion to the
    campaign's span. Beyond ``max_n`` periods it counts on this sub-grid, a step of at most
    ``ceil((n − 1)/(max_n − 1))`` grid steps: the fraction of cells covered on it estimates the fraction on
    the whole grid as a stratified sample does, while the checks still evaluate every period.
    """
    p = np.asarray(periods_h, dtype=float)
    if max_n < 2:
        raise ValueError("max_n must be at least 2")
    if p.size <= max_n:
        return p
    return p[np.unique(np.rint(np.linspace(0, p.size - 1, int(max_n))).astype(np.int64))]


def _centred_days(times_jd: np.ndarray) -> np.ndarray:
    """Times in days from their first epoch: keeps phases exact to ~1e-12 cycles."""
    t = np.asarray(times_jd, dtype=float).ravel()
    return t - t.min() if t.size else t


def rotational_phase(times_jd: np.ndarray, periods_h: np.ndarray) -> np.ndarray:
    """Phase in [0, 1) of every time (columns) on every period (rows), zero at the first time."""
    t_h = _centred_days(times_jd) * 24.0
    p = np.atleast_1d(np.asarray(periods_h, dtype=float))
    cycles = t_h[None, :] / p[:, None]
    # x − floor(x) is the exact fractional part (the same value as np.mod(x, 1.0) for x ≥ 0), and faster.
    return np.subtract(cycles, np.floor(cycles), out=cycles)


def phase_bin_index(times_jd: np.ndarray, periods_h: np.ndarray, n_bins: int = 20) -> np.ndarray:
    """Phase bin (0 … n_bins−1) of every time on every period: int array (periods, times).

    Bins are equal arcs of rotational phase with phase zero at the first observation. The
    scheduler can use this to compute coverage gains of candidate slots with set operations.
    """
    phase = rotational_phase(times_jd, periods_h)
    phase *= n_bins
    idx = np.floor(phase, out=phase).astype(np.int64)
    return np.minimum(idx, n_bins - 1, out=idx)  # guard against phase rounding to exactly 1.0


def _chunks(n_periods: int, n_times: int):
    step = max(1, _CHUNK_ELEMENTS // max(n_times, 1))
    for start in range(0, n_periods, step):
        yield slice(start, min(start + step, n_periods))


#: Resolution of the largest phase gap: phases are counted in 2^-16 cycle steps for it (see phase_coverage).
GAP_RESOLUTION_CYCLES = 2.0**-16


def phase_coverage(times_jd: np.ndarray, periods_h: np.ndarray, n_bins: int = 20) -> tuple[np.ndarray, np.ndarray]:
    """Fraction of phase bins holding at least one time, and the largest phase gap, per period.

    Returns ``(fraction_covered, largest_gap)``, each shaped like ``periods_h``; the gap is the
    largest empty arc of rotational phase (in cycles, 0–1) between consecutive folded times,
    counted around the circle. No times gives coverage 0 and gap 1; one time gives gap 1.
    Vectorised over periods (chunked to bound memory).

    The gap is found on the folded phases counted in steps of 2^-16 cycle (16-bit integers, which
    numpy sorts by radix in linear time, several times faster than sorting floats); it is within
    :data:`GAP_RESOLUTION_CYCLES` (1.5e-5 cycle: 0.1 s of a 2-h rotation) of the exact value, far
    below the phase any exposure smears over. The bins are counted from the exact phases.
    """
    p = np.atleast_1d(np.asarray(periods_h, dtype=float))
    t = np.asarray(times_jd, dtype=float).ravel()
    frac = np.zeros(p.shape[0])
    gap = np.ones(p.shape[0])
    if t.size == 0:
        return frac, gap
    steps = 1 << 16
    for sl in _chunks(p.shape[0], t.size):
        phase = rotational_phase(t, p[sl])
        # phase < 1, so phase · 2^16 < 2^16 exactly (the product of a double below 1 by a power of two)
        ticks = (phase * steps).astype(np.uint16)
        idx = np.minimum(np.floor(phase * n_bins).astype(np.int64), n_bins - 1)
        idx += (np.arange(phase.shape[0]) * n_bins)[:, None]
        occupied = np.bincount(idx.ravel(), minlength=phase.shape[0] * n_bins).reshape(-1, n_bins) > 0
        frac[sl] = occupied.sum(axis=1) / n_bins
        ticks.sort(axis=1, kind="stable")  # radix sort for 16-bit integers
        inner = np.diff(ticks, axis=1).max(axis=1, initial=0).astype(np.int64)
        wrap = steps - ticks[:, -1].astype(np.int64) + ticks[:, 0]
        gap[sl] = np.maximum(inner, wrap) / steps
    return frac, gap


def phase_coverage_slow(times_jd: np.ndarray, periods_h: np.ndarray, n_bins: int = 20) -> tuple[np.ndarray, np.ndarray]:
    """Slow twin of :func:`phase_coverage`: one period and one time at a time, plain Python."""
    t = [float(x) for x in np.asarray(times_jd, dtype=float).ravel()]
    t0 = min(t) if t else 0.0
    fracs, gaps = [], []
    for period_h in np.atleast_1d(np.asarray(periods_h, dtype=float)):
        phases = sorted(((ti - t0) * 24.0 / period_h) % 1.0 for ti in t)
        bins = {min(int(math.floor(ph * n_bins)), n_bins - 1) for ph in phases}
        fracs.append(len(bins) / n_bins)
        if not phases:
            gaps.append(1.0)
            continue
        largest = 1.0 - phases[-1] + phases[0]
        for a, b in zip(phases[:-1], phases[1:], strict=True):
            largest = max(largest, b - a)
        gaps.append(largest)
    return np.array(fracs), np.array(gaps)
