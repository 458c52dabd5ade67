"""The multi-harmonic power at each trial's own frequencies, and the photometrist's P-versus-P/2 step.

Injection–recovery (planner.diagnostics.recovery) searches every synthetic light curve on one grid;
after that each trial needs the power at a few frequencies of its own (around its winner φ and φ/2).
The fit is the periodogram's (Schwarzenberg-Czerny 1996, ApJ 460, L107): weighted least squares with
the trend projected out, θ = (χ²_trend − χ²_f) / χ²_trend, the harmonics k f as powers of one phasor.
"""

from __future__ import annotations

import numpy as np

from planner.diagnostics.periodogram import trend_basis

#: Phasors (trials × frequencies × points) held per chunk: the harmonic columns built from them stay
#: near 64 MB whatever the number of points (a month at 16 sites has 23 040).
_CHUNK_PHASORS = 1_000_000


def _trials_per_chunk(chunk: int, n_freq: int, n_points: int) -> int:
    return max(1, min(int(chunk), _CHUNK_PHASORS // max(1, n_freq * n_points)))


def _trend_free(times_jd, mags, *, sigma, trend_degree=1, trend_columns=None):
    """Weighted data with the trend projected out: (t − t_mid, weights, trend basis Q, y_r, χ²_trend).

    ``sigma`` per point or common; the trend is that of
    :func:`planner.diagnostics.periodogram.trend_basis` (``trend_degree``, ``trend_columns``)."""
    t = np.asarray(times_jd, dtype=float).ravel()
    y = np.asarray(mags, dtype=float).reshape(t.size, -1)
    w = 1.0 / np.broadcast_to(np.asarray(sigma, dtype=float), t.shape)
    q, _ = np.linalg.qr(trend_basis(t, trend_degree, trend_columns) * w[:, None])
    yr = y * w[:, None]
    yr -= q @ (q.T @ yr)
    return t - 0.5 * (t.min() + t.max()), w, q, yr, np.einsum("nm,nm->m", yr, yr)


def _phasor_power(z: np.ndarray, w, q, yr, chi_trend, nterms: int) -> np.ndarray:
    """θ per (trial, frequency) from the phasors z = exp(2πi f t), (m, K, N), of trials' frequencies."""
    cols, zk = [], z
    for _ in range(nterms):  # harmonics k f as powers of the phasor
        cols += [zk.real * w, zk.imag * w]
        zk = zk * z
    h = np.stack(cols, axis=-1)  # (m, K, N, 2n)
    ht = np.swapaxes(h, -1, -2)
    qh = q.T @ h  # the trend part of each harmonic column
    gram = ht @ h - np.swapaxes(qh, -1, -2) @ qh
    rhs = (ht @ yr.T[:, None, :, None])[..., 0]  # yr is already free of the trend
    red = np.einsum("mki,mki->mk", rhs, np.linalg.solve(gram, rhs[..., None])[..., 0])
    safe = np.where(chi_trend > 0, chi_trend, 1.0)[:, None]
    return np.where(chi_trend[:, None] > 0, red / safe, 0.0)


def trial_power(
    times_jd: np.ndarray,
    mags: np.ndarray,
    freq_per_day: np.ndarray,
    *,
    nterms: int,
    chunk: int = 16,
    **trend,
) -> np.ndarray:
    """The multi-harmonic power θ of :func:`planner.diagnostics.periodogram.multiharmonic_power`, but at
    frequencies of each trial's own: ``mags`` (N, M), ``freq_per_day`` (M, K) → (M, K).

    Weighted least squares with the trend projected out (QR of the weighted trend columns), then the
    harmonic columns' normal equations per (trial, frequency): θ = (χ²_trend − χ²_f) / χ²_trend.
    ``trend``: ``sigma``, ``trend_degree`` (default 1), ``trend_columns``, as for the periodogram.
    """
    tc, w, q, yr, chi_trend = _trend_free(times_jd, mags, **trend)
    freqs = np.asarray(freq_per_day, dtype=float).reshape(yr.shape[1], -1)
    out = np.zeros(freqs.shape)
    chunk = _trials_per_chunk(chunk, freqs.shape[1], tc.size)
    for a in range(0, yr.shape[1], chunk):
        b = min(a + chunk, yr.shape[1])
        z = np.exp(2j * np.pi * freqs[a:b, :, None] * tc)
        out[a:b] = _phasor_power(z, w, q, yr[:, a:b], chi_trend[a:b], nterms)
    return out


def prefer_longer_period(
    times_jd: np.ndarray,
    mags: np.ndarray,
    best_freq_per_day: np.ndarray,
    grid_step_per_day: float,
    min_freq_per_day: float,
    *,
    nterms: int,
    chunk: int = 16,
    **trend,
) -> np.ndarray:
    """The photometrist's P-versus-P/2 step for a double-peaked search: each trial's winner φ against φ/2.

    On the search grid the peak at φ/2, carried by its second harmonic, is sampled twice as coarsely as
    the one at φ and loses power to the grid alone; so both are refined: five frequencies half a search
    step apart around each, and a parabola through the highest and its neighbours. φ/2 wins when its
    refined power is higher: its fit carries the harmonics φ/2 and φ, so it beats φ when the odd
    harmonics of a double-peaked curve stand above the noise. Returns the frequency kept per trial.
    The phasors come from one complex exponential per trial (exp(πiφt), and its square for φ) times
    powers of the step's phasor. ``trend`` as for :func:`trial_power`.
    """
    tc, w, q, yr, chi_trend = _trend_free(times_jd, mags, **trend)
    best = np.asarray(best_freq_per_day, dtype=float)
    half_step = 0.5 * grid_step_per_day
    shifts = np.arange(-2, 3)
    step_z = np.exp(2j * np.pi * half_step * shifts[:, None] * tc)  # (5, N)
    top, half = np.empty((best.size, 5)), np.empty((best.size, 5))
    chunk = _trials_per_chunk(chunk, 2 * shifts.size, tc.size)
    for a in range(0, best.size, chunk):
        b = min(a + chunk, best.size)
        u = np.exp(1j * np.pi * best[a:b, None] * tc)  # exp(2πi (φ/2) t), (m, N)
        z = np.concatenate([(u * u)[:, None, :] * step_z, u[:, None, :] * step_z], axis=1)  # (m, 10, N)
        p = _phasor_power(z, w, q, yr[:, a:b], chi_trend[a:b], nterms)
        top[a:b], half[a:b] = p[:, :5], p[:, 5:]
    top_h, _ = _parabola_peak(top)
    half_h, half_off = _parabola_peak(half)
    longer = (half_h > top_h) & (best / 2.0 >= min_freq_per_day)
    return np.where(longer, best / 2.0 + half_off * half_step, best)


def _parabola_peak(samples: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Height and position (in sample steps from the middle) of the peak of equally spaced samples (M, 5):
    the highest inner sample and the vertex of the parabola through it and its neighbours."""
    rows = np.arange(samples.shape[0])
    i = np.clip(samples.argmax(axis=1), 1, samples.shape[1] - 2)
    y0, y1, y2 = samples[rows, i - 1], samples[rows, i], samples[rows, i + 1]
    curve = y0 - 2.0 * y1 + y2
    shift = np.where(curve < 0, 0.5 * (y0 - y2) / np.where(curve < 0, curve, -1.0), 0.0)
    shift = np.clip(shift, -1.0, 1.0)
    height = np.where(curve < 0, y1 - 0.25 * (y0 - y2) * shift, y1)
    return np.maximum(height, samples.max(axis=1)), i - 2 + shift
