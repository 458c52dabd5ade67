"""What a set of times can measure: fading rate, rotation period, and a change of period.

All three come from the least-squares covariance of the full light-curve model

    m(t) = c₀ + c₁ t + Σ_{k=1..K} [a_k cos(2π k f t) + b_k sin(2π k f t)]

with the harmonics of the rotation as nuisance parameters (weighted, weights 1/σ²). The
standard error of a parameter is the square root of its diagonal element of (Xᵀ W X)⁻¹; for the
frequency, the model is linearised about the assumed light curve (Fisher information; Montgomery
& O'Donoghue 1999, Delta Scuti Star Newsletter 13, 28, for the single-sinusoid case
σ_f = √(6/N) σ / (π a T)). Vectorised over trial periods; each kernel has a slow twin.

Times are in days, frequencies in cycles per day, periods in hours, magnitudes in mag.
"""

from __future__ import annotations

import math

import numpy as np

from planner.diagnostics.harmonic_lsq import harmonic_gram
from planner.diagnostics.periodogram import harmonic_design
from planner.diagnostics.trigsums import TrigSums, uniform_grid

_CHUNK_ELEMENTS = 3_000_000
#: (times × periods) from which a uniform frequency grid's Gram matrices come from trig sums.
_GRIDDED_FROM = 2_000_000


def _inputs(times_jd, periods_h, sigma_mag):
    t = np.asarray(times_jd, dtype=float).ravel()
    tc = t - 0.5 * (t.min() + t.max()) if t.size else t
    f = 24.0 / np.atleast_1d(np.asarray(periods_h, dtype=float))
    w = 1.0 / np.broadcast_to(np.asarray(sigma_mag, dtype=float), t.shape) ** 2
    return tc, f, w


def _nuisance(tc: np.ndarray, f: np.ndarray, nterms: int) -> np.ndarray:
    """(F, N, 2 + 2K) design: 1, t, harmonics of the rotation frequency."""
    h = harmonic_design(tc, f, nterms)
    base = np.broadcast_to(np.stack([np.ones_like(tc), tc], axis=-1), (f.size, tc.size, 2))
    return np.concatenate([base, h], axis=-1)


def _gram(x: np.ndarray, w: np.ndarray) -> np.ndarray:
    return np.einsum("fni,n,fnj->fij", x, w, x, optimize=True)


def _chunks(n_freq: int, per_freq: int):
    step = max(1, _CHUNK_ELEMENTS // max(per_freq, 1))
    for start in range(0, n_freq, step):
        yield slice(start, min(start + step, n_freq))


def _safe_inv(g: np.ndarray) -> np.ndarray:
    """Batched inverse; singular systems (too few points for the model) give inf variances."""
    out = np.full_like(g, np.inf)
    cond = np.linalg.cond(g)
    ok = np.isfinite(cond) & (cond < 1e12)
    if np.any(ok):
        out[ok] = np.linalg.inv(g[ok])
    return out


def fading_rate_sigma(
    times_jd: np.ndarray, periods_h: np.ndarray, sigma_mag: np.ndarray | float, nterms: int = 2
) -> np.ndarray:
    """Standard error (mag/day) of a linear fading rate fitted with rotation as nuisance.

    One value per trial period: the (t, t) element of the covariance (Xᵀ W X)⁻¹ of the model in
    the module docstring. Times or periods the model cannot be fitted on give ``inf``.
    """
    tc, f, w = _inputs(times_jd, periods_h, sigma_mag)
    out = np.full(f.size, np.inf)
    if tc.size < 2 + 2 * nterms:
        return out
    grid = uniform_grid(f)
    if grid is not None and f.size * tc.size >= _GRIDDED_FROM:
        # Every Gram element is a trig sum (Σw e^{imθ}, Σwt e^{ikθ}): by Gaussian gridding on a uniform grid.
        return np.sqrt(_safe_inv(_gram_from_sums(tc, w, grid, f.size, nterms))[:, 1, 1])
    for sl in _chunks(f.size, tc.size * (2 + 2 * nterms)):
        cov = _safe_inv(_gram(_nuisance(tc, f[sl], nterms), w))
        out[sl] = np.sqrt(cov[:, 1, 1])
    return out


def _gram_from_sums(tc: np.ndarray, w: np.ndarray, grid: tuple[float, float], n_freq: int, nterms: int) -> np.ndarray:
    """XᵀWX of the nuisance design [1, t, harmonics] at every frequency f0 + j·step from trig sums:
    (F, 2 + 2K, 2 + 2K), the same matrix :func:`_gram` builds from the explicit design."""
    f0, step = grid
    cols = np.column_stack([w, w * tc])
    sums = {m: TrigSums(tc, m * step, n_freq)(cols if m <= nterms else w, m * f0) for m in range(1, 2 * nterms + 1)}
    g = np.zeros((n_freq, 2 + 2 * nterms, 2 + 2 * nterms))
    g[:, 0, 0], g[:, 1, 1] = w.sum(), (w * tc * tc).sum()
    g[:, 0, 1] = g[:, 1, 0] = (w * tc).sum()
    low = np.concatenate(
        [np.full((n_freq, 1), w.sum(), dtype=complex), *[sums[m][:, :1] for m in range(1, 2 * nterms + 1)]], axis=1
    )
    g[:, 2:, 2:] = harmonic_gram(low, nterms)
    for k in range(1, nterms + 1):
        for row in (0, 1):
            s = sums[k][:, row]
            g[:, row, 2 * k], g[:, row, 2 * k + 1] = s.real, s.imag
            g[:, 2 * k, row], g[:, 2 * k + 1, row] = s.real, s.imag
    return g


def _design_slow(tc: np.ndarray, freq_per_day: float, nterms: int) -> np.ndarray:
    """The nuisance design of one period, column by column (for the slow twins)."""
    cols = [np.ones_like(tc), tc]
    for k in range(1, nterms + 1):
        cols += [np.cos(2 * math.pi * k * freq_per_day * tc), np.sin(2 * math.pi * k * freq_per_day * tc)]
    return np.column_stack(cols)


def fading_rate_sigma_slow(
    times_jd: np.ndarray, periods_h: np.ndarray, sigma_mag: np.ndarray | float, nterms: int = 2
) -> np.ndarray:
    """Slow twin of :func:`fading_rate_sigma`: one period, one explicit design, one inverse."""
    tc, f, w = _inputs(times_jd, periods_h, sigma_mag)
    out = []
    for fi in f:
        x = _design_slow(tc, fi, nterms)
        try:
            cov = np.linalg.inv(x.T @ (w[:, None] * x))
            out.append(math.sqrt(cov[1, 1]) if np.linalg.cond(x.T @ (w[:, None] * x)) < 1e12 else math.inf)
        except np.linalg.LinAlgError:
            out.append(math.inf)
    return np.array(out)


def frequency_sigma(
    times_jd: np.ndarray,
    periods_h: np.ndarray,
    sigma_mag: np.ndarray | float,
    amplitude_mag: float,
    harmonic: int = 2,
    nterms: int = 2,
) -> np.ndarray:
    """Standard error (c/d) of the rotation frequency, per trial period.

    The assumed light curve is a sinusoid of peak-to-peak ``amplitude_mag`` at harmonic
    ``harmonic`` of the rotation (2 for a double-peaked curve, common practice). Its derivative
    with respect to the rotation frequency, 2π h t · (semi-amplitude) · sin/cos, is added to the
    nuisance design (constant, slope, K = max(nterms, harmonic) harmonics); the Fisher
    information is the Schur complement, averaged over the unknown phase of the light curve.
    """
    tc, f, w = _inputs(times_jd, periods_h, sigma_mag)
    k = max(nterms, harmonic)
    out = np.full(f.size, np.inf)
    p = 2 + 2 * k
    if tc.size < p + 1 or amplitude_mag <= 0:
        return out
    semi = 0.5 * amplitude_mag
    for sl in _chunks(f.size, tc.size * (p + 2)):
        x = _nuisance(tc, f[sl], k)
        arg = 2 * np.pi * harmonic * np.outer(f[sl], tc)
        d = (2 * np.pi * harmonic * tc)[None, :, None] * np.stack([np.cos(arg), np.sin(arg)], axis=-1)
        full = np.concatenate([x, d], axis=-1)
        cov = _safe_inv(_gram(full, w))
        # Schur complement of the nuisance block = inverse of the (d, d) block of the covariance
        info = np.full(cov.shape[0], 0.0)
        dd = cov[:, p:, p:]
        ok = np.all(np.isfinite(dd), axis=(1, 2))
        if np.any(ok):
            s = np.linalg.inv(dd[ok])
            info[ok] = semi**2 * 0.5 * (s[:, 0, 0] + s[:, 1, 1])
        out[sl] = np.where(info > 0, 1.0 / np.sqrt(np.where(info > 0, info, 1.0)), np.inf)
    return out


def frequency_sigma_slow(
    times_jd: np.ndarray,
    periods_h: np.ndarray,
    sigma_mag: np.ndarray | float,
    amplitude_mag: float,
    harmonic: int = 2,
    nterms: int = 2,
) -> np.ndarray:
    """Slow twin of :func:`frequency_sigma`: explicit Schur complement, one period at a time,
    phase average as the mean over 16 light-curve phases of the scalar Fisher information."""
    tc, f, w = _inputs(times_jd, periods_h, sigma_mag)
    k = max(nterms, harmonic)
    semi = 0.5 * amplitude_mag
    out = []
    for fi in f:
        x = _design_slow(tc, fi, k)
        g = x.T @ (w[:, None] * x)
        if tc.size < x.shape[1] + 1 or np.linalg.cond(g) > 1e12:
            out.append(math.inf)
            continue
        infos = []
        for phi in np.linspace(0, 2 * math.pi, 16, endpoint=False):
            d = -semi * 2 * math.pi * harmonic * tc * np.sin(2 * math.pi * harmonic * fi * tc + phi)
            proj = d - x @ np.linalg.solve(g, x.T @ (w * d))
            infos.append(float(proj @ (w * proj)))
        info = float(np.mean(infos))
        out.append(1.0 / math.sqrt(info) if info > 0 else math.inf)
    return np.array(out)


def period_change_sensitivity_h(
    times_jd: np.ndarray,
    periods_h: np.ndarray,
    sigma_mag: np.ndarray | float,
    amplitude_mag: float,
    harmonic: int = 2,
    nterms: int = 2,
    n_sigma: float = 3.0,
) -> np.ndarray:
    """Smallest change of rotation period between the first and second half of the span that a
    fit of each half separately detects at ``n_sigma``: n σ(f₁ − f₂) converted to hours,
    ΔP = P² Δf / 24. ``inf`` where a half has too few points for the model."""
    t = np.asarray(times_jd, dtype=float).ravel()
    p = np.atleast_1d(np.asarray(periods_h, dtype=float))
    if t.size == 0:
        return np.full(p.size, np.inf)
    sig = np.broadcast_to(np.asarray(sigma_mag, dtype=float), t.shape)
    first = t < 0.5 * (t.min() + t.max())
    s1 = frequency_sigma(t[first], p, sig[first], amplitude_mag, harmonic, nterms)
    s2 = frequency_sigma(t[~first], p, sig[~first], amplitude_mag, harmonic, nterms)
    delta_f = n_sigma * np.hypot(s1, s2)
    return p**2 * delta_f / 24.0


def synodic_offset_h(periods_h: np.ndarray, pab_lon_rate_deg_per_day: float) -> np.ndarray:
    """|P_syn − P_sid| ≈ ω P² for a phase-angle-bisector longitude rate ω (Harris et al. 1984,
    Icarus 57, 251; form quoted from memory): ω in cycles/day = rate/360, so ΔP_h = P_h² · ω / 24."""
    p = np.asarray(periods_h, dtype=float)
    return p**2 * abs(pab_lon_rate_deg_per_day) / 360.0 / 24.0


def pab_motion(times_jd: np.ndarray, pab_lon_deg: np.ndarray, pab_lat_deg: np.ndarray) -> dict[str, float]:
    """Motion of the phase-angle bisector over the span: mean longitude rate (deg/day, least
    squares on the unwrapped longitude), total longitude change and great-circle arc (deg)."""
    t = np.asarray(times_jd, dtype=float).ravel()
    lon = np.rad2deg(np.unwrap(np.deg2rad(np.asarray(pab_lon_deg, dtype=float).ravel())))
    lat = np.deg2rad(np.asarray(pab_lat_deg, dtype=float).ravel())
    order = np.argsort(t)
    t, lon, lat = t[order], lon[order], lat[order]
    rate = float(np.polyfit(t - t.mean(), lon, 1)[0]) if t.size >= 2 and np.ptp(t) > 0 else 0.0
    lo = np.deg2rad(lon)
    v = np.stack([np.cos(lat) * np.cos(lo), np.cos(lat) * np.sin(lo), np.sin(lat)], axis=-1)
    arc = float(np.rad2deg(np.arccos(np.clip(v[0] @ v[-1], -1, 1)))) if t.size else 0.0
    return {
        "pab_lon_rate_deg_per_day": rate,
        "pab_lon_change_deg": float(lon[-1] - lon[0]) if t.size else 0.0,
        "pab_arc_deg": arc,
    }
