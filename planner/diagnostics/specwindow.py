"""Spectral window of a set of observation times: its peaks, the aliases they create, Nyquist.

A periodic signal sampled at the given times shows up in a periodogram at its own frequency and
again at ``f ± f_w`` for every peak ``f_w`` of the spectral window (Deeming 1975, Ap&SS 36, 137;
VanderPlas 2018, ApJS 236, 16, section 4). The height of the window at ``f_w`` says how strong
such an alias is. Frequencies are in cycles per day throughout.

Pure, vectorised functions; the hot kernel :func:`spectral_window` has a slow twin.
"""

from __future__ import annotations

import math

import numpy as np

from planner.diagnostics.trigsums import trig_sums, uniform_grid

_CHUNK_ELEMENTS = 4_000_000
#: (times × frequencies) from which a uniform grid is summed by Gaussian gridding.
_GRIDDED_FROM = 2_000_000


def days_from_first(times_jd: np.ndarray) -> np.ndarray:
    """Times in days from the first one (|W| does not depend on the origin; precision does)."""
    t = np.asarray(times_jd, dtype=float).ravel()
    return t - t.min() if t.size else t


def normalised_weights(weights: np.ndarray | None, n: int) -> np.ndarray:
    """Per-point weights summing to one (equal weights when none are given)."""
    if weights is None:
        return np.full(n, 1.0 / max(n, 1))
    w = np.asarray(weights, dtype=float).ravel()
    if w.shape[0] != n:
        raise ValueError("weights must have one value per time")
    if np.any(w < 0) or not np.any(w > 0):
        raise ValueError("weights must be non-negative and not all zero")
    return w / w.sum()


def spectral_window(
    times_jd: np.ndarray, freq_per_day: np.ndarray | float, weights: np.ndarray | None = None
) -> np.ndarray:
    """|W(f)| with W(f) = (1/N) Σ_k exp(2πi f t_k) (Deeming 1975, Ap&SS 36, 137, eq. 5).

    With ``weights`` (e.g. 1/σ²), W = Σ w_k exp(2πi f t_k) / Σ w_k. |W(0)| = 1 always.
    Shaped like ``freq_per_day``. Vectorised over frequencies, chunked to bound memory; a long uniform
    grid is summed by Gaussian gridding (planner.diagnostics.trigsums, agreeing to ~1e-13).
    """
    t = days_from_first(times_jd)
    f = np.asarray(freq_per_day, dtype=float)
    flat = f.ravel()
    out = np.zeros(flat.shape[0])
    if t.size == 0:
        return out.reshape(f.shape)
    w = normalised_weights(weights, t.size)
    grid = uniform_grid(flat)
    if grid is not None and flat.size * t.size >= _GRIDDED_FROM:
        # A uniform grid of many frequencies: the sums by Gaussian gridding (planner.diagnostics.trigsums).
        tc = t - 0.5 * t.max()
        return np.abs(trig_sums(tc, w, grid[0], grid[1], flat.size)[:, 0]).reshape(f.shape)
    step = max(1, _CHUNK_ELEMENTS // t.size)
    for start in range(0, flat.shape[0], step):
        arg = (2.0 * np.pi) * np.outer(flat[start : start + step], t)
        re = np.cos(arg) @ w
        im = np.sin(arg) @ w
        out[start : start + step] = np.hypot(re, im)
    return out.reshape(f.shape)


def spectral_window_slow(
    times_jd: np.ndarray, freq_per_day: np.ndarray | float, weights: np.ndarray | None = None
) -> np.ndarray:
    """Slow twin of :func:`spectral_window`: the sum of Deeming (1975) term by term."""
    t = [float(x) for x in days_from_first(times_jd)]
    w = normalised_weights(weights, len(t)) if t else np.array([])
    f = np.asarray(freq_per_day, dtype=float)
    out = []
    for fi in f.ravel():
        z = 0j
        for tk, wk in zip(t, w, strict=True):
            z += wk * complex(math.cos(2 * math.pi * fi * tk), math.sin(2 * math.pi * fi * tk))
        out.append(abs(z))
    return np.array(out).reshape(f.shape)


def window_frequency_grid(times_jd: np.ndarray, max_freq_per_day: float, oversample: float = 10.0) -> np.ndarray:
    """0 … ``max_freq_per_day`` with step 1/(oversample·T), T the span in days (at least 1 day)."""
    t = days_from_first(times_jd)
    span_d = max(float(t.max()) if t.size else 0.0, 1.0)
    step = 1.0 / (oversample * span_d)
    n = int(math.ceil(max_freq_per_day / step)) + 1
    return np.linspace(0.0, max_freq_per_day, max(n, 2))


def window_peaks(
    times_jd: np.ndarray,
    max_freq_per_day: float = 5.0,
    *,
    n_peaks: int = 8,
    min_height: float = 0.1,
    oversample: float = 10.0,
    weights: np.ndarray | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    """Principal peaks of |W| between the central lobe and ``max_freq_per_day``.

    Returns ``(freq_per_day, height)``, strongest first, at most ``n_peaks`` with height at
    least ``min_height``. The central peak at f = 0 (its lobe ends at the first minimum of |W|)
    is left out: it is the signal itself, not an alias. Peaks are found on a grid with step
    1/(oversample·T) and refined on a 20× finer grid around each maximum. With one site the
    strongest peak is near 1 c/d (the day); several longitudes lower it (VanderPlas 2018, §4.2).
    """
    t = days_from_first(times_jd)
    empty = (np.zeros(0), np.zeros(0))
    if t.size < 2 or float(t.max()) <= 0:
        return empty
    grid = window_frequency_grid(t, max_freq_per_day, oversample)
    height = spectral_window(t, grid, weights)
    # end of the central lobe: first local minimum
    falling = np.nonzero(np.diff(height) > 0)[0]
    if falling.size == 0:
        return empty
    first = falling[0]
    inner = height[first + 1 : -1]
    is_max = (inner >= height[first:-2]) & (inner > height[first + 2 :])
    idx = np.nonzero(is_max)[0] + first + 1
    if idx.size == 0:
        return empty
    # refine only the strongest coarse maxima (a refined peak moves by less than one step)
    idx = idx[np.argsort(-height[idx], kind="stable")[: 3 * n_peaks]]
    step = grid[1] - grid[0]
    fine = grid[idx][:, None] + np.linspace(-step, step, 41)[None, :]
    fine_h = spectral_window(t, fine, weights)
    best = fine_h.argmax(axis=1)
    freq = fine[np.arange(idx.size), best]
    peak_h = fine_h[np.arange(idx.size), best]
    keep = (peak_h >= min_height) & (freq <= max_freq_per_day) & (freq > 0)
    freq, peak_h = freq[keep], peak_h[keep]
    order = np.argsort(-peak_h, kind="stable")[:n_peaks]
    return freq[order], peak_h[order]


def nyquist_freq_per_day(times_jd: np.ndarray, resolution_s: float = 1.0) -> float:
    """Nyquist frequency of irregular sampling (Eyer & Bartholdi 1999, A&AS 135, 1, section 2).

    If every time is t₀ + n_k·p with integers n_k, the spectral window is periodic with period
    1/p and the periodogram is mirrored about 1/(2p): that is the Nyquist frequency. ``p`` is
    the largest such step: the greatest common divisor of the time offsets, counted in units of
    the timestamp ``resolution_s``. Times recorded to the second on no common grid give the
    limit 0.5 per second (43200 c/d); times on a 5-minute slot grid give 144 c/d. Fewer than two
    distinct times give ``inf``.
    """
    t = np.asarray(times_jd, dtype=float).ravel()
    if t.size < 2:
        return math.inf
    ticks = np.rint((t - t.min()) * 86400.0 / resolution_s).astype(np.int64)
    g = int(np.gcd.reduce(ticks))
    if g == 0:
        return math.inf
    return 1.0 / (2.0 * g * resolution_s / 86400.0)


def nyquist_freq_per_day_slow(times_jd: np.ndarray, resolution_s: float = 1.0) -> float:
    """Slow twin of :func:`nyquist_freq_per_day`: Euclid's algorithm one offset at a time."""
    t = [float(x) for x in np.asarray(times_jd, dtype=float).ravel()]
    if len(t) < 2:
        return math.inf
    t0 = min(t)
    g = 0
    for ti in t:
        a, b = g, int(round((ti - t0) * 86400.0 / resolution_s))
        while b:
            a, b = b, a % b
        g = a
    return math.inf if g == 0 else 1.0 / (2.0 * g * resolution_s / 86400.0)
