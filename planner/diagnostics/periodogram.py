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

Speed: every trial shares the same times and weights, so per trial frequency the harmonic design
matrix is built once, made orthogonal to the trend (QR), and all trials are projected together
by one matrix product. :func:`multiharmonic_power_slow` fits one trial at one frequency at a time
with ``numpy.linalg.lstsq``, the obvious way; the tests hold the two to 1e-10.
"""

from __future__ import annotations

import numpy as np

#: Frequencies handled per block: bounds the (block, N, 2K) design stack in memory.
_BLOCK_ELEMENTS = 2_000_000


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


def trend_projector(weighted_basis: np.ndarray) -> np.ndarray:
    """Orthonormal columns spanning the weighted trend basis; dependent columns dropped (SVD)."""
    if weighted_basis.shape[1] == 0:
        return np.zeros((weighted_basis.shape[0], 0))
    u, sv, _ = np.linalg.svd(weighted_basis, full_matrices=False)
    return u[:, sv > 1e-10 * sv[0]] if sv[0] > 0 else u[:, :0]


def harmonic_design(t_days: np.ndarray, freq_per_day: np.ndarray, nterms: int) -> np.ndarray:
    """(F, N, 2K) stack: cos(2πkft), sin(2πkft) for k = 1..K, harmonics by angle addition."""
    arg = (2.0 * np.pi) * np.outer(freq_per_day, t_days)
    c1, s1 = np.cos(arg), np.sin(arg)
    out = np.empty(arg.shape + (2 * nterms,))
    out[..., 0], out[..., 1] = c1, s1
    ck, sk = c1, s1
    for k in range(1, nterms):
        ck, sk = ck * c1 - sk * s1, sk * c1 + ck * s1
        out[..., 2 * k], out[..., 2 * k + 1] = ck, sk
    return out


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
    q_b = trend_projector(s[:, None] * basis)
    y_w = s[:, None] * yy
    y_r = y_w - q_b @ (q_b.T @ y_w)
    chi0 = np.einsum("nm,nm->m", y_r, y_r)
    scale = np.where(chi0 > 0, 1.0 / np.where(chi0 > 0, chi0, 1.0), 0.0)
    k2 = 2 * nterms
    block = max(1, _BLOCK_ELEMENTS // (n * k2))
    for start in range(0, f.size, block):
        fb = f[start : start + block]
        h = harmonic_design(t, fb, nterms) * s[None, :, None]
        h -= np.einsum("nq,fqj->fnj", q_b, np.einsum("nq,fnj->fqj", q_b, h))
        q_h, r_h = np.linalg.qr(h)
        # columns that the trend (or earlier harmonics) already explain carry no information
        diag = np.abs(np.diagonal(r_h, axis1=1, axis2=2))
        colnorm = np.sqrt(np.einsum("fnj,fnj->fj", h, h)) + np.finfo(float).tiny
        keep = diag > 1e-9 * np.maximum(colnorm, diag.max(axis=1, keepdims=True))
        z = (np.swapaxes(q_h, 1, 2).reshape(-1, n) @ y_r).reshape(fb.size, k2, m)
        z *= keep[:, :, None]
        power[start : start + block] = np.einsum("fjm,fjm->fm", z, z) * scale
        if progress is not None:
            progress(min(1.0, (start + fb.size) / f.size))
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
