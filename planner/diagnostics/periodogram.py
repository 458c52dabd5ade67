"""Multi-harmonic periodogram that fits a secular trend at the same time, batched over trials.

Model at trial frequency f, for each light curve (weighted least squares, weights 1/σ²):

    m(t) = trend(t) + Σ_{k=1..K} [a_k cos(2π k f t) + b_k sin(2π k f t)]

where ``trend`` is a polynomial in time of degree ``trend_degree`` plus any given columns
(e.g. the geometric magnitude 5 log Δ + K1 log r). The power is the fraction of the trend-only
χ² removed by the harmonics,

    θ(f) = (χ²_trend − χ²_f) / χ²_trend,

the multi-harmonic periodogram of Schwarzenberg-Czerny (1996), ApJ 460, L107, in its χ²-ratio
form. With ``trend_degree=0`` and no columns it equals astropy's LombScargle with
``nterms=K``, ``normalization='standard'`` (VanderPlas 2018, ApJS 236, 16, §6).

Speed: every trial shares the same times and weights, so the χ² of all trials at all frequencies
comes from the batched normal-equation kernel :func:`planner.diagnostics.harmonic_lsq.harmonic_chi2` (trend
fitted once, one matrix product per block of frequencies for every trial at once, Schur complement
of the trend). :func:`multiharmonic_power_slow` fits one trial at one frequency at a time with
``numpy.linalg.lstsq``, the obvious way; the tests hold the two to 1e-10.
"""

from __future__ import annotations

import numpy as np

from planner.diagnostics.harmonic_lsq import harmonic_chi2, harmonic_columns


def _prepare(times_jd, y, sigma, trend_degree, trend_columns):
    t = np.asarray(times_jd, dtype=float).ravel()
    n = t.size
    yy = np.asarray(y, dtype=float)
    single = yy.ndim == 1
    yy = yy.reshape(n, -1)
    if sigma is None:
        s = np.ones(n)
    else:
        sig = np.broadcast_to(np.asarray(sigma, dtype=float), (n,))
        if np.any(~np.isfinite(sig)) or np.any(sig <= 0):
            raise ValueError("sigma must be positive and finite")
        s = 1.0 / sig
    basis = trend_basis(t, trend_degree, trend_columns)
    t_mid = 0.5 * (t.min() + t.max()) if n else 0.0
    return t - t_mid, yy, single, s, basis


def trend_basis(times_jd: np.ndarray, trend_degree: int = 0, trend_columns: np.ndarray | None = None) -> np.ndarray:
    """Columns of the secular-trend model: 1, τ, τ², … (τ = time scaled to [−1, 1]) and extras.

    ``trend_degree`` −1 means no polynomial at all (not even a constant). ``trend_columns``
    (N,) or (N, c) are appended as free columns (their coefficients are fitted).
    """
    t = np.asarray(times_jd, dtype=float).ravel()
    cols = []
    if trend_degree >= 0:
        half = 0.5 * (t.max() - t.min()) if t.size else 0.0
        tau = (t - 0.5 * (t.max() + t.min())) / half if half > 0 else np.zeros_like(t)
        cols.extend(tau**d for d in range(trend_degree + 1))
    if trend_columns is not None:
        extra = np.asarray(trend_columns, dtype=float).reshape(t.size, -1)
        cols.extend(extra.T)
    return np.column_stack(cols) if cols else np.zeros((t.size, 0))


def harmonic_design(t_days: np.ndarray, freq_per_day: np.ndarray, nterms: int) -> np.ndarray:
    """(F, N, 2K) stack: cos(2πkft), sin(2πkft) for k = 1..K, harmonics by angle addition."""
    return harmonic_columns(t_days, np.atleast_1d(np.asarray(freq_per_day, dtype=float)), nterms)


def multiharmonic_power(
    times_jd: np.ndarray,
    y: np.ndarray,
    freq_per_day: np.ndarray,
    *,
    nterms: int = 2,
    sigma: np.ndarray | float | None = None,
    trend_degree: int = 0,
    trend_columns: np.ndarray | None = None,
    progress=None,
) -> np.ndarray:
    """Batched multi-harmonic periodogram (Schwarzenberg-Czerny 1996) with a fitted trend.

    ``y`` is (N,) for one light curve or (N, M) for M trials on the same times; the result is
    (F,) or (F, M), the fraction θ of the trend-only χ² removed by K = ``nterms`` harmonics at
    each frequency. ``sigma`` is the per-point (or common) uncertainty in the units of ``y``.
    A trial with zero trend-only χ² (nothing left to explain) gets power 0. ``progress``, if
    given, is called with the fraction done after each block of frequencies.
    """
    t, yy, single, s, basis = _prepare(times_jd, y, sigma, trend_degree, trend_columns)
    f = np.atleast_1d(np.asarray(freq_per_day, dtype=float))
    n, m = yy.shape
    power = np.zeros((f.size, m))
    if n == 0:
        return power[:, 0] if single else power
    fit = harmonic_chi2(t, yy, s * s, f, nterms, fixed=basis, progress=progress)
    chi0 = fit.chi2_fixed
    scale = np.where(chi0 > 0, 1.0 / np.where(chi0 > 0, chi0, 1.0), 0.0)
    power = fit.reduction * scale[None, :]
    return power[:, 0] if single else power


def multiharmonic_power_slow(
    times_jd: np.ndarray,
    y: np.ndarray,
    freq_per_day: np.ndarray,
    *,
    nterms: int = 2,
    sigma: np.ndarray | float | None = None,
    trend_degree: int = 0,
    trend_columns: np.ndarray | None = None,
    progress=None,
) -> np.ndarray:
    """Slow twin of :func:`multiharmonic_power`: one trial, one frequency, one lstsq at a time."""
    t, yy, single, s, basis = _prepare(times_jd, y, sigma, trend_degree, trend_columns)
    f = np.atleast_1d(np.asarray(freq_per_day, dtype=float))
    n, m = yy.shape
    power = np.zeros((f.size, m))
    for j in range(m):
        yw = s * yy[:, j]
        if basis.shape[1]:
            chi_trend = np.sum(
                (yw - (s[:, None] * basis) @ np.linalg.lstsq(s[:, None] * basis, yw, rcond=None)[0]) ** 2
            )
        else:
            chi_trend = float(yw @ yw)
        for i, fi in enumerate(f):
            cols = [basis]
            for k in range(1, nterms + 1):
                cols.append(np.cos(2 * np.pi * k * fi * t)[:, None])
                cols.append(np.sin(2 * np.pi * k * fi * t)[:, None])
            x = s[:, None] * np.hstack(cols)
            coef = np.linalg.lstsq(x, yw, rcond=None)[0]
            chi_f = np.sum((yw - x @ coef) ** 2)
            power[i, j] = (chi_trend - chi_f) / chi_trend if chi_trend > 0 else 0.0
        if progress is not None:
            progress((j + 1) / m)
    return power[:, 0] if single else power


def best_frequencies(
    times_jd: np.ndarray,
    y: np.ndarray,
    freq_per_day: np.ndarray,
    *,
    nterms: int = 2,
    sigma: np.ndarray | float | None = None,
    trend_degree: int = 0,
    trend_columns: np.ndarray | None = None,
    progress=None,
) -> tuple[np.ndarray, np.ndarray]:
    """Frequency of the highest peak and its power, per trial: ``(best_freq, best_power)``."""
    p = multiharmonic_power(
        times_jd,
        y,
        freq_per_day,
        nterms=nterms,
        sigma=sigma,
        trend_degree=trend_degree,
        trend_columns=trend_columns,
        progress=progress,
    )
    p = p.reshape(p.shape[0], -1)
    i = p.argmax(axis=0)
    f = np.atleast_1d(np.asarray(freq_per_day, dtype=float))
    return f[i], p[i, np.arange(p.shape[1])]
