"""χ² of the light-curve model over trial frequencies, its local minima and their widths.

Grid. The narrowest structure in χ²(f) comes from the highest harmonic n: between f and f + δ
its phase at the ends of a span T drifts apart by 2π n δ T, so a minimum is about 1/(nT) wide.
A step δ = 1/(oversample · n · T) with oversample 5 puts at least five samples in every minimum
(the same argument as VanderPlas 2018, ApJS 236, 16, §7.1 for one harmonic, n₀ = 5). Photometric
frequencies run from 24/P_max to 48/P_min, so a double-peaked rotation at P_min is seen at its half.

Minima. Every grid point lower than its neighbours is refined by successive zooms (21
frequencies across the bracket, then eleven across the two steps around the best of those, …, to
~1e-3 of a grid step), then by the vertex of the parabola through f − σ, f, f + σ. The 1σ width
is where χ² rises by 1 (times the χ² scale): from the curvature of χ² over ±σ, iterated so the
curvature is measured on that scale.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from planner.lightcurve.model import FixedDesign, chi2_at

#: Grid oversampling of the narrowest χ² minimum.
OVERSAMPLE = 5.0
#: Zoom levels and points per level when refining minima.
_ZOOM_LEVELS = 4
_ZOOM_POINTS = 11


def frequency_grid_per_day(
    min_period_h: float, max_period_h: float, span_d: float, nterms: int, oversample: float = OVERSAMPLE
) -> np.ndarray:
    """Uniform photometric frequencies (c/d, ascending) from 24/``max_period_h`` to 48/``min_period_h``
    with step 1/(oversample · nterms · T); T is the span, at least one ``max_period_h``."""
    if not (0 < min_period_h <= max_period_h):
        raise ValueError("need 0 < min_period_h <= max_period_h")
    span = max(float(span_d), max_period_h / 24.0)
    f_lo, f_hi = 24.0 / max_period_h, 48.0 / min_period_h
    step = 1.0 / (oversample * nterms * span)
    count = int(np.ceil((f_hi - f_lo) / step - 1e-9)) + 1
    return np.linspace(f_lo, f_hi, max(count, 2))


@dataclass(frozen=True)
class Scan:
    """χ² over the grid for a model of order ``nterms``; ``chi2_fixed`` is the model without rotation."""

    freq_per_day: np.ndarray
    chi2: np.ndarray
    chi2_fixed: float
    nterms: int


def chi2_scan(design: FixedDesign, freq_per_day: np.ndarray, nterms: int) -> Scan:
    res = chi2_at(design, freq_per_day, nterms)
    return Scan(np.asarray(freq_per_day, dtype=float), res.chi2, float(res.chi2_fixed), nterms)


def grid_minima(chi2: np.ndarray) -> np.ndarray:
    """Indices of local minima of a sampled curve (ends count when below their one neighbour)."""
    c = np.asarray(chi2, dtype=float)
    if c.size < 2:
        return np.arange(c.size)
    left = np.r_[np.inf, c[:-1]]
    right = np.r_[c[1:], np.inf]
    return np.flatnonzero((c < left) & (c <= right))


def refine_minima(
    design: FixedDesign, nterms: int, freq_per_day: np.ndarray, index: np.ndarray, t_days: np.ndarray | None = None
) -> tuple[np.ndarray, np.ndarray]:
    """Refined (frequency, χ²) of the grid minima ``index``, all minima zoomed together."""
    f = np.asarray(freq_per_day, dtype=float)
    idx = np.asarray(index, dtype=np.int64)
    if idx.size == 0:
        return np.zeros(0), np.zeros(0)
    lo = f[np.maximum(idx - 1, 0)]
    hi = f[np.minimum(idx + 1, f.size - 1)]
    centre = f[idx]
    half_lo, half_hi = centre - lo, hi - centre
    best_f, best_c = centre.copy(), np.full(idx.size, np.inf)
    for level in range(_ZOOM_LEVELS):
        offsets = np.linspace(-1.0, 1.0, 2 * _ZOOM_POINTS - 1 if level == 0 else _ZOOM_POINTS)
        trial = centre[:, None] + np.where(offsets < 0, offsets * half_lo[:, None], offsets * half_hi[:, None])
        c = chi2_at(design, trial.ravel(), nterms, t_days).chi2.reshape(trial.shape)
        j = np.argmin(c, axis=1)
        rows = np.arange(idx.size)
        better = c[rows, j] < best_c
        best_f = np.where(better, trial[rows, j], best_f)
        best_c = np.where(better, c[rows, j], best_c)
        step_lo = np.where(j > 0, trial[rows, j] - trial[rows, np.maximum(j - 1, 0)], 0.0)
        last = offsets.size - 1
        step_hi = np.where(j < last, trial[rows, np.minimum(j + 1, last)] - trial[rows, j], 0.0)
        centre, half_lo, half_hi = best_f, step_lo, step_hi
    return best_f, best_c


def curvature_sigma(
    design: FixedDesign,
    nterms: int,
    freq_per_day: np.ndarray,
    chi2_min: np.ndarray,
    scale: float,
    first_step: np.ndarray,
    t_days: np.ndarray | None = None,
    passes: int = 3,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """σ_f where χ² rises by ``scale`` (Δχ² = 1 after scaling): curvature c from χ² at f ± h,
    σ = √(2·scale/c), then again with h = σ. Returns (σ_f, vertex frequency, vertex χ²); σ is
    ∞ where χ² does not curve upwards."""
    f0 = np.asarray(freq_per_day, dtype=float).copy()
    c0 = np.asarray(chi2_min, dtype=float).copy()
    h = np.asarray(first_step, dtype=float).copy()
    sigma = np.full(f0.size, np.inf)
    for _ in range(passes):
        trial = np.stack([f0 - h, f0, f0 + h], axis=1)
        c = chi2_at(design, trial.ravel(), nterms, t_days).chi2.reshape(trial.shape)
        curv = (c[:, 0] - 2 * c[:, 1] + c[:, 2]) / h**2
        ok = curv > 0
        sigma = np.where(ok, np.sqrt(2.0 * scale / np.where(ok, curv, 1.0)), np.inf)
        shift = np.where(ok, -(c[:, 2] - c[:, 0]) / (2 * h * np.where(ok, curv, 1.0)), 0.0)
        shift = np.clip(shift, -h, h)
        f0 = f0 + shift
        c0 = np.minimum(c[:, 1] - 0.5 * curv * shift**2 * ok, c0)
        h = np.where(np.isfinite(sigma), np.minimum(sigma, 4 * h), h)
    return sigma, f0, c0
