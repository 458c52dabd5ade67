"""Weighted least squares of a harmonic series plus fixed columns, batched over trial frequencies.

Model at trial frequency f (days, cycles per day), for every column of ``y``:

    y = X β + Σ_{k=1..K} [a_k cos(2πkft) + b_k sin(2πkft)]

with weights w (= 1/σ²) and an optional Gaussian prior N(0, 1/λ_j) on fixed coefficient β_j (a
diagonal prior precision λ, 0 = free). The prior acts as a pseudo-observation row √λ_j β_j = 0, so
χ² counts its penalty too.

Method (Schwarzenberg-Czerny 1996, ApJ 460, L107, for the multi-harmonic χ²; Palmer 2009, ApJ
695, 496, for trig sums shared by all frequencies): normal equations partitioned into the
frequency-independent block G = XᵀWX + Λ and the harmonic block. The fixed fit is solved once
(SVD of the augmented, column-scaled system, so rank-deficient columns are harmless); per block of
frequencies

* one matrix product gives C = XᵀWH (through G's orthonormal basis), the harmonic projections
  r = HᵀW(y − Xβ̂) of every trial and the weighted sums Σw cos kθ, Σw sin kθ for k = 1..K;
* Σw cos mθ, Σw sin mθ for m = K+1..2K complete D = HᵀWH by the product-to-sum identities
  (cos jθ cos kθ = ½[cos (j−k)θ + cos (j+k)θ], ...);
* the Schur complement S = D − CᵀG⁺C (2K × 2K) and χ²(f) = χ²_fixed − rᵀS⁻¹r.

S is reduced column by column (Gram–Schmidt order): a harmonic column whose Schur pivot is a
negligible part of its own norm is already explained and carries no information. Frequencies where
a pivot falls below ``_STABLE_PIVOT`` of its column norm lose digits in the normal equations; they
are recomputed by orthogonal projection and QR (the route of the slow twin). Harmonics e^{ikθ} come
from powers of e^{iθ}; on a uniform frequency grid e^{iθ} itself steps from one frequency to the
next by one complex product (trig recurrence), with exact sines and cosines at every block start.

Times are centred on their mid-span inside :func:`harmonic_chi2` (χ² does not depend on the time
origin); :func:`harmonic_solve` uses times as given, so its coefficients refer to t = 0.
:func:`harmonic_chi2_slow` and :func:`harmonic_solve_slow` solve the augmented system with
``numpy.linalg.lstsq`` one frequency and one trial at a time; the tests compare them.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import NamedTuple

import numpy as np

from planner.diagnostics.trigsums import HarmonicSums

#: Bytes of harmonics (complex and real copies) per block of frequencies: stays in the cache.
_BLOCK_BYTES = 1_000_000
#: Frequencies whose small (2K × 2K) systems are reduced together.
_OUTER_FREQS = 1024
#: (points × frequencies) from which a uniform grid's sums come from planner.diagnostics.trigsums,
#: and the frequencies per block there.
_SUMS_FROM = 500_000
_SUMS_OUTER = 4096
#: A Schur pivot below this fraction of its column's weighted norm² is recomputed by QR.
_STABLE_PIVOT = 1e-4
#: QR diagonal below this fraction of the column norm: the column is already explained (dropped).
_KEEP_TOL = 1e-9
#: Singular values of the scaled fixed system below this fraction of the largest are dropped.
_FIXED_RCOND = 1e-11


class HarmonicChi2(NamedTuple):
    """χ² at every trial frequency, χ² of the fixed columns alone, and their difference."""

    chi2: np.ndarray  #: (F,) or (F, M)
    chi2_fixed: np.ndarray  #: () or (M,)
    reduction: np.ndarray  #: (F,) or (F, M): chi2_fixed − chi2, computed without cancellation


@dataclass(frozen=True)
class HarmonicFit:
    """One frequency's fit: coefficients (fixed columns, then a_1, b_1, …, a_K, b_K), their
    covariance (pseudo-inverse of the augmented normal matrix, not scaled by χ²/dof), χ²
    (with the prior penalty), and the numerical rank of the design."""

    coef: np.ndarray
    cov: np.ndarray
    chi2: float
    rank: int


# ----------------------------------------------------------------------------------- inputs


def _inputs(t_days, y, weights, nterms, fixed, prior_precision):
    t = np.asarray(t_days, dtype=float).ravel()
    n = t.size
    yy = np.asarray(y, dtype=float)
    if yy.shape[0] != n or yy.ndim > 2:
        raise ValueError(f"y must be (N,) or (N, M) with N = {n}")
    single = yy.ndim == 1
    yy = yy.reshape(n, -1)
    w = np.broadcast_to(np.asarray(weights, dtype=float), (n,)).copy()
    if np.any(~np.isfinite(w)) or np.any(w < 0):
        raise ValueError("weights must be finite and non-negative")
    if nterms < 1:
        raise ValueError("nterms must be at least 1")
    x = np.zeros((n, 0)) if fixed is None else np.asarray(fixed, dtype=float).reshape(n, -1)
    lam = np.zeros(x.shape[1]) if prior_precision is None else np.asarray(prior_precision, dtype=float).ravel()
    if lam.size != x.shape[1] or np.any(~np.isfinite(lam)) or np.any(lam < 0):
        raise ValueError("prior_precision needs one finite, non-negative value per fixed column")
    if not (np.all(np.isfinite(t)) and np.all(np.isfinite(yy)) and np.all(np.isfinite(x))):
        raise ValueError("times, values and fixed columns must be finite")
    return t, yy, single, w, x, lam


def harmonic_columns(t_days: np.ndarray, freq_per_day: np.ndarray | float, nterms: int) -> np.ndarray:
    """Harmonic design cos(2πkft), sin(2πkft), k = 1..K (columns in that order), shape (N, 2K)
    for a scalar frequency or (F, N, 2K) for an array; harmonics by angle addition."""
    t = np.asarray(t_days, dtype=float).ravel()
    f = np.asarray(freq_per_day, dtype=float)
    arg = (2.0 * np.pi) * np.multiply.outer(f, t)
    c1, s1 = np.cos(arg), np.sin(arg)
    out = np.empty(arg.shape + (2 * nterms,))
    out[..., 0], out[..., 1] = c1, s1
    ck, sk = c1, s1
    for k in range(1, nterms):
        ck, sk = ck * c1 - sk * s1, sk * c1 + ck * s1
        out[..., 2 * k], out[..., 2 * k + 1] = ck, sk
    return out


# --------------------------------------------------------------------------- the fixed part


@dataclass(frozen=True)
class _FixedFit:
    basis: np.ndarray  # (N + q, r) orthonormal basis of the augmented fixed columns (q prior rows)
    resid: np.ndarray  # (N + q, M) augmented residual [√w (y − Xβ̂); −√λ β̂]
    chi2: np.ndarray  # (M,)


def _fixed_fit(sw: np.ndarray, yy: np.ndarray, x: np.ndarray, lam: np.ndarray) -> _FixedFit:
    """Least squares of the fixed columns alone on the augmented system [√W X; √Λ] β = [√W y; 0]
    (one prior row per column with λ > 0)."""
    n, p = x.shape
    prior_rows = np.diag(np.sqrt(lam))[lam > 0]
    rhs = np.vstack([sw[:, None] * yy, np.zeros((prior_rows.shape[0], yy.shape[1]))])
    if p == 0:
        return _FixedFit(np.zeros((n, 0)), rhs, np.einsum("nm,nm->m", rhs, rhs))
    a = np.vstack([sw[:, None] * x, prior_rows])
    norm = np.sqrt(np.einsum("ij,ij->j", a, a))
    a = a[:, norm > 0] / norm[norm > 0]
    if a.shape[1] == 0:
        return _FixedFit(np.zeros((rhs.shape[0], 0)), rhs, np.einsum("nm,nm->m", rhs, rhs))
    u, sv, _ = np.linalg.svd(a, full_matrices=False)
    basis = u[:, sv > _FIXED_RCOND * sv[0]]
    resid = rhs - basis @ (basis.T @ rhs)
    return _FixedFit(basis, resid, np.einsum("nm,nm->m", resid, resid))


# ---------------------------------------------------------------------------- harmonic blocks


class _Phasors:
    """BlockRules of (Fb, K, N) complex harmonics e^{ik·2πft}, frequency block after block.

    On a uniform grid e^{iθ} steps from one frequency to the next by a complex product with
    e^{i2πδt} (δ the grid step): within a block by doubling (the first s frequencies times e^{isδ}
    give the next s), across blocks from the previous block's last row. Exact sines and cosines
    reseed the recurrence every ``reseed`` frequencies, so rounding stays at ~1e-14 rad. Other grids
    get exact sines and cosines throughout."""

    def __init__(self, tc: np.ndarray, f: np.ndarray, nterms: int, block: int, reseed: int = 256) -> None:
        self.arg = (2.0 * np.pi) * tc
        self.f, self.nterms, self.reseed = f, nterms, reseed
        nf = f.size
        step = (f[-1] - f[0]) / (nf - 1) if nf > 1 else 0.0
        drift = np.max(np.abs(f - (f[0] + step * np.arange(nf)))) if nf > 1 else 0.0
        # phase error of the recurrence at the largest |t| and harmonic: must stay below 1e-11 rad
        self.uniform = nf > 2 and drift * np.max(np.abs(self.arg), initial=0.0) * nterms < 1e-11
        self.powers: dict[int, np.ndarray] = {}
        if self.uniform:
            s = 1
            while s < max(block, 2):
                self.powers[s] = np.exp(1j * (s * step) * self.arg)
                s *= 2
        self._last: np.ndarray | None = None
        self._seeded_at = -reseed

    def block(self, start: int, stop: int) -> np.ndarray:
        fb = self.f[start:stop]
        nf = fb.size
        z = np.empty((nf, self.nterms, self.arg.size), dtype=complex)
        e1 = z[:, 0, :]
        if not self.uniform:
            e1[...] = np.exp(1j * np.multiply.outer(fb, self.arg))
        else:
            if self._last is None or start - self._seeded_at >= self.reseed:
                e1[0] = np.exp(1j * fb[0] * self.arg)
                self._seeded_at = start
            else:
                np.multiply(self._last, self.powers[1], out=e1[0])
            s = 1
            while s < nf:
                m = min(s, nf - s)
                np.multiply(e1[:m], self.powers[s][None, :], out=e1[s : s + m])
                s += m
            self._last = e1[-1].copy()
        for k in range(1, self.nterms):
            np.multiply(z[:, k - 1, :], e1, out=z[:, k, :])
        return z


def _schur_reduction(d: np.ndarray, s: np.ndarray, r: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """rᵀS⁻¹r per frequency by column-wise elimination, and the smallest relative pivot.

    d: (Fb, 2K) column norms² (diag of HᵀWH); s: (Fb, 2K, 2K); r: (Fb, 2K, M). A relative pivot
    below ``_STABLE_PIVOT`` (or a zero column) marks a frequency for the QR route; its value here
    is then meaningless and replaced by the caller."""
    s = s.copy()
    r = r.copy()
    nf, k2, m = r.shape
    red = np.zeros((nf, m))
    worst = np.full(nf, np.inf)
    for j in range(k2):
        piv = s[:, j, j]
        ok = d[:, j] > 0
        rel = np.where(ok, piv / np.where(ok, d[:, j], 1.0), 0.0)
        worst = np.minimum(worst, rel)
        good = rel >= _STABLE_PIVOT
        inv = np.where(good, 1.0 / np.where(good, piv, 1.0), 0.0)
        red += r[:, j, :] ** 2 * inv[:, None]
        if j + 1 < k2:
            lead = s[:, j + 1 :, j] * inv[:, None]
            s[:, j + 1 :, j + 1 :] -= lead[:, :, None] * s[:, None, j, j + 1 :]
            r[:, j + 1 :, :] -= lead[:, :, None] * r[:, None, j, :]
    return red, worst


def _trig_sums_high(z: np.ndarray, w: np.ndarray) -> np.ndarray:
    """Σ w e^{imθ} for m = K+1..2K, (Fb, K) complex: e^{iKθ}·e^{ijθ}, j = 1..K, then one weighted
    sum over points (numpy's own loop over the real view: no threaded BLAS call on small blocks)."""
    nf, nterms, n = z.shape
    high = z[:, nterms - 1 : nterms, :] * z
    return (w @ high.view(float).reshape(nf, nterms, n, 2)).view(complex)[..., 0]


def _block_products(
    phasors: _Phasors, left: np.ndarray, w: np.ndarray, start: int, stop: int, block: int
) -> tuple[np.ndarray, np.ndarray]:
    """For frequencies start..stop, in cache-sized blocks: Hᵀ·left (Fb, 2K, R), one matrix
    product per block, and Σw e^{imθ} for m = K+1..2K (Fb, K)."""
    nterms, n = phasors.nterms, left.shape[0]
    k2 = 2 * nterms
    prod = np.empty((stop - start, k2, left.shape[1]))
    high = np.empty((stop - start, nterms), dtype=complex)
    for b0 in range(start, stop, block):
        b1 = min(b0 + block, stop)
        z = phasors.block(b0, b1)
        h = np.empty((b1 - b0, nterms, 2, n))  # rows cos kθ, sin kθ for the matrix product
        h[:, :, 0, :], h[:, :, 1, :] = z.real, z.imag
        prod[b0 - start : b1 - start] = (h.reshape((b1 - b0) * k2, n) @ left).reshape(b1 - b0, k2, -1)
        high[b0 - start : b1 - start] = _trig_sums_high(z, w)
    return prod, high


def harmonic_gram(sums: np.ndarray, nterms: int) -> np.ndarray:
    """D = HᵀWH (Fb, 2K, 2K) from Σw e^{imθ}, m = 0..2K (``sums`` (Fb, 2K+1) complex)."""
    c, s = sums.real, sums.imag
    nf = sums.shape[0]
    d = np.empty((nf, 2 * nterms, 2 * nterms))
    for j in range(1, nterms + 1):
        for k in range(1, nterms + 1):
            lo, hi = abs(j - k), j + k
            s_kj = s[:, k - j] if k >= j else -s[:, j - k]
            d[:, 2 * j - 2, 2 * k - 2] = 0.5 * (c[:, lo] + c[:, hi])
            d[:, 2 * j - 1, 2 * k - 1] = 0.5 * (c[:, lo] - c[:, hi])
            d[:, 2 * j - 2, 2 * k - 1] = 0.5 * (s[:, hi] + s_kj)
            d[:, 2 * k - 1, 2 * j - 2] = d[:, 2 * j - 2, 2 * k - 1]
    return d


def _qr_reduction(tc, fb, nterms, sw, fixed: _FixedFit) -> np.ndarray:
    """Stable route for a few frequencies: harmonic columns projected off the fixed basis, QR,
    and a column dropped when its R diagonal is a negligible part (``_KEEP_TOL``) of its own
    weighted norm: the fixed columns and earlier harmonics already explain it."""
    n = tc.size
    extra = fixed.basis.shape[0] - n
    out = np.zeros((fb.size, fixed.resid.shape[1]))
    for i, h in enumerate(harmonic_columns(tc, fb, nterms)):
        ha = np.vstack([sw[:, None] * h, np.zeros((extra, h.shape[1]))])
        colnorm = np.sqrt(np.einsum("nj,nj->j", ha, ha))
        ha -= fixed.basis @ (fixed.basis.T @ ha)
        q, rr = np.linalg.qr(ha)
        keep = np.abs(np.diagonal(rr)) > _KEEP_TOL * colnorm
        z = (q.T @ fixed.resid) * keep[:, None]
        out[i] = np.einsum("jm,jm->m", z, z)
    return out


def harmonic_chi2(
    t_days: np.ndarray,
    y: np.ndarray,
    weights: np.ndarray | float,
    freq_per_day: np.ndarray,
    nterms: int = 2,
    fixed: np.ndarray | None = None,
    prior_precision: np.ndarray | None = None,
    progress=None,
) -> HarmonicChi2:
    """χ² of the harmonic model at every trial frequency, for one or many light curves.

    ``t_days`` (N,), ``y`` (N,) or (N, M) trials sharing times and weights, ``weights`` (N,) =
    1/σ², ``freq_per_day`` (F,), ``fixed`` (N, p) frequency-independent columns with optional
    ``prior_precision`` (p,) (1/σ_prior², 0 = free). Returns :class:`HarmonicChi2`; χ² includes
    the prior penalty. ``progress``, if given, is called with the fraction done per block.
    """
    t, yy, single, w, x, lam = _inputs(t_days, y, weights, nterms, fixed, prior_precision)
    f = np.atleast_1d(np.asarray(freq_per_day, dtype=float)).ravel()
    n, m = yy.shape
    tc = t - 0.5 * (t.min() + t.max()) if n else t
    sw = np.sqrt(w)
    fit = _fixed_fit(sw, yy, x, lam)
    red = np.zeros((f.size, m))
    if n:
        basis_top = fit.basis[:n]
        # one left matrix for the block products: rows give C (through G's basis), r, and Σw e^{ikθ}
        left = np.hstack([sw[:, None] * basis_top, sw[:, None] * fit.resid[:n], w[:, None]])
        nb = basis_top.shape[1]
        block = max(2, _BLOCK_BYTES // (32 * n * nterms))
        phasors = _Phasors(tc, f, nterms, block)
        # A uniform grid with many frequencies takes its sums from Gaussian gridding (trigsums).
        gridded = phasors.uniform and f.size * n >= _SUMS_FROM
        outer = min(f.size, _SUMS_OUTER) if gridded else max(block, _OUTER_FREQS)
        plan = HarmonicSums(tc, (f[-1] - f[0]) / (f.size - 1), outer, nterms) if gridded else None
        for start in range(0, f.size, outer):
            stop = min(start + outer, f.size)
            if plan is not None:
                prod, high = plan(left, w, f[start], stop - start)
            else:
                prod, high = _block_products(phasors, left, w, start, stop, block)
            c = prod[:, :, :nb]  # (Fb, 2K, r): basisᵀ √W H
            r = prod[:, :, nb : nb + m]  # (Fb, 2K, M): HᵀW(y − Xβ̂)
            low = prod[:, 0::2, -1] + 1j * prod[:, 1::2, -1]  # Σw e^{ikθ}, k = 1..K
            sums = np.concatenate([np.full((stop - start, 1), w.sum(), dtype=complex), low, high], axis=1)
            d = harmonic_gram(sums, nterms)
            s = d - c @ np.swapaxes(c, 1, 2)
            rb, worst = _schur_reduction(np.diagonal(d, axis1=1, axis2=2), s, r)
            weak = worst < _STABLE_PIVOT
            if np.any(weak):
                rb[weak] = _qr_reduction(tc, f[start:stop][weak], nterms, sw, fit)
            red[start:stop] = rb
            if progress is not None:
                progress(stop / f.size)
    red = np.clip(red, 0.0, fit.chi2[None, :])
    chi2 = fit.chi2[None, :] - red
    if single:
        return HarmonicChi2(chi2[:, 0], fit.chi2[0], red[:, 0])
    return HarmonicChi2(chi2, fit.chi2, red)


# ----------------------------------------------------------------------------- one frequency


def _augmented(t, yy, w, x, lam, freq_per_day, nterms):
    h = harmonic_columns(t, float(freq_per_day), nterms)
    full = np.hstack([x, h])
    sw = np.sqrt(w)
    lam_full = np.concatenate([lam, np.zeros(h.shape[1])])
    prior_rows = np.diag(np.sqrt(lam_full))[lam_full > 0]
    a = np.vstack([sw[:, None] * full, prior_rows])
    b = np.vstack([sw[:, None] * yy, np.zeros((prior_rows.shape[0], yy.shape[1]))])
    return a, b


def harmonic_solve(
    t_days: np.ndarray,
    y: np.ndarray,
    weights: np.ndarray | float,
    freq_per_day: float,
    nterms: int = 2,
    fixed: np.ndarray | None = None,
    prior_precision: np.ndarray | None = None,
) -> HarmonicFit:
    """The full fit at one frequency (times as given: coefficients refer to t = 0).

    Solved by SVD of the column-scaled augmented system (prior rows appended); directions with
    singular values below ``_FIXED_RCOND`` of the largest are left out of the solution and get
    zero variance in the pseudo-inverse covariance (check ``rank``)."""
    t, yy, _, w, x, lam = _inputs(t_days, y, weights, nterms, fixed, prior_precision)
    if yy.shape[1] != 1:
        raise ValueError("harmonic_solve fits one light curve")
    a, b = _augmented(t, yy, w, x, lam, freq_per_day, nterms)
    norm = np.sqrt(np.einsum("ij,ij->j", a, a))
    scale = np.where(norm > 0, norm, 1.0)
    u, sv, vt = np.linalg.svd(a / scale, full_matrices=False)
    keep = sv > _FIXED_RCOND * sv[0] if sv.size and sv[0] > 0 else np.zeros(sv.size, bool)
    inv = np.where(keep, 1.0 / np.where(keep, sv, 1.0), 0.0)
    v_s = vt.T * inv[None, :]
    coef = (v_s @ (u.T @ b[:, 0])) / scale
    cov = (v_s @ v_s.T) / np.outer(scale, scale)
    resid = b[:, 0] - a @ coef
    return HarmonicFit(coef=coef, cov=cov, chi2=float(resid @ resid), rank=int(keep.sum()))


def harmonic_solve_slow(
    t_days: np.ndarray,
    y: np.ndarray,
    weights: np.ndarray | float,
    freq_per_day: float,
    nterms: int = 2,
    fixed: np.ndarray | None = None,
    prior_precision: np.ndarray | None = None,
) -> HarmonicFit:
    """Slow twin of :func:`harmonic_solve`: ``lstsq`` on the augmented system and the covariance
    as ``pinv`` of its normal matrix (full-rank designs only compare)."""
    t, yy, _, w, x, lam = _inputs(t_days, y, weights, nterms, fixed, prior_precision)
    a, b = _augmented(t, yy, w, x, lam, freq_per_day, nterms)
    coef, _, rank, _ = np.linalg.lstsq(a, b[:, 0], rcond=None)
    resid = b[:, 0] - a @ coef
    return HarmonicFit(coef=coef, cov=np.linalg.pinv(a.T @ a), chi2=float(resid @ resid), rank=int(rank))


def harmonic_chi2_slow(
    t_days: np.ndarray,
    y: np.ndarray,
    weights: np.ndarray | float,
    freq_per_day: np.ndarray,
    nterms: int = 2,
    fixed: np.ndarray | None = None,
    prior_precision: np.ndarray | None = None,
    progress=None,
) -> HarmonicChi2:
    """Slow twin of :func:`harmonic_chi2`: per frequency and per trial, ``numpy.linalg.lstsq``
    on the augmented system (prior as pseudo-observation rows), the obvious way."""
    t, yy, single, w, x, lam = _inputs(t_days, y, weights, nterms, fixed, prior_precision)
    f = np.atleast_1d(np.asarray(freq_per_day, dtype=float)).ravel()
    n, m = yy.shape
    tc = t - 0.5 * (t.min() + t.max()) if n else t
    sw = np.sqrt(w)
    prior_rows = np.diag(np.sqrt(lam))[lam > 0]
    a0 = np.vstack([sw[:, None] * x, prior_rows])
    chi2_fixed = np.empty(m)
    chi2 = np.empty((f.size, m))
    for j in range(m):
        b = np.concatenate([sw * yy[:, j], np.zeros(prior_rows.shape[0])])
        if a0.shape[1]:
            chi2_fixed[j] = np.sum((b - a0 @ np.linalg.lstsq(a0, b, rcond=None)[0]) ** 2)
        else:
            chi2_fixed[j] = b @ b
        for i, fi in enumerate(f):
            a, bb = _augmented(tc, yy[:, j : j + 1], w, x, lam, fi, nterms)
            coef = np.linalg.lstsq(a, bb[:, 0], rcond=None)[0]
            chi2[i, j] = np.sum((bb[:, 0] - a @ coef) ** 2)
        if progress is not None:
            progress((j + 1) / m)
    red = chi2_fixed[None, :] - chi2
    if single:
        return HarmonicChi2(chi2[:, 0], chi2_fixed[0], red[:, 0])
    return HarmonicChi2(chi2, chi2_fixed, red)
