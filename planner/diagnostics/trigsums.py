"""Trigonometric sums Σₙ cₙ e^{2πi f tₙ} over a uniform grid of frequencies, for many columns at once.

Periodograms, spectral windows and the normal equations of harmonic fits all reduce to these sums
(Palmer 2009, ApJ 695, 496). Summed directly they cost N·F per column: at a month of five-minute
points (N ≈ 2·10⁴) on the frequency grid that month needs (F ≈ 7·10³), hundreds of millions of
complex products per column, growing as the square of the campaign's length. On a uniform grid
f_j = f₀ + j·δ they are the type-1 non-uniform discrete Fourier transform of the points xₙ = δ·tₙ
(in cycles): each point is spread onto a regular grid with a Gaussian, the grid is Fourier
transformed, and the Gaussian's transform is divided out (Dutt & Rokhlin 1993, SIAM J. Sci. Comput.
14, 1368; Greengard & Lee 2004, SIAM Review 46, 443, whose oversampling R = 2 and kernel width are
used here). The cost is N·2w + M log M per column (w = 14 grid points each side, M ≈ 2F), and the
error stays below ~1e-13 of Σ|cₙ| (tests: against the direct sum).

:func:`trig_sums_slow` adds the terms one frequency at a time: the twin the tests compare with.
"""

from __future__ import annotations

import numpy as np
from scipy import fft as sfft
from scipy import sparse

#: Grid points spread to on each side of a point (error ~1e-14 of Σ|c| at oversampling 2).
_SPREAD = 14
_OVERSAMPLE = 2.0
#: Below this many (points × frequencies) the direct sum is as fast: no grid is built.
_DIRECT_BELOW = 50_000
#: Bytes of (frequencies × points) phases held at once by the direct sum.
_CHUNK_BYTES = 16_000_000


def uniform_grid(freq_per_day: np.ndarray, tol: float = 1e-9) -> tuple[float, float] | None:
    """``(f0, step)`` when the frequencies are f0 + j·step to ``tol`` of a step (at least 3 of them), else None."""
    f = np.asarray(freq_per_day, dtype=float).ravel()
    if f.size < 3:
        return None
    step = (f[-1] - f[0]) / (f.size - 1)
    if step == 0 or np.max(np.abs(f - (f[0] + step * np.arange(f.size)))) > tol * abs(step):
        return None
    return float(f[0]), float(step)


def _direct(t: np.ndarray, c: np.ndarray, f0: float, step: float, n_freq: int) -> np.ndarray:
    out = np.empty((n_freq, c.shape[1]), dtype=complex)
    rows = max(1, _CHUNK_BYTES // max(16 * t.size, 1))
    for a in range(0, n_freq, rows):
        f = f0 + step * np.arange(a, min(a + rows, n_freq))
        out[a : a + f.size] = np.exp((2j * np.pi) * np.multiply.outer(f, t)) @ c
    return out


class TrigSums:
    """Σₙ c[n, r] · exp(2πi (f0 + j·step) tₙ), j = 0 … n_freq−1, for fixed times, step and count.

    The spreading matrix depends on the times and the step only, so one plan serves any ``f0`` and
    any columns (consecutive blocks of one frequency grid, or its harmonics one plan each). Small
    problems use the direct sum. ``t`` in days, centred (the phase factor e^{2πi f0 t} is exact, the
    grid carries only step·t).
    """

    def __init__(self, t: np.ndarray, step: float, n_freq: int) -> None:
        self.t = np.asarray(t, dtype=float).ravel()
        self.step, self.n_freq = float(step), int(n_freq)
        self.direct = self.t.size * self.n_freq < _DIRECT_BELOW or self.n_freq < 4 * _SPREAD
        if self.direct:
            return
        self.half = self.n_freq // 2
        m = sfft.next_fast_len(int(np.ceil(_OVERSAMPLE * self.n_freq)))
        tau = _SPREAD / (4.0 * np.pi * self.n_freq**2 * _OVERSAMPLE * (_OVERSAMPLE - 0.5))
        u = np.mod(self.step * self.t, 1.0) * m
        first = np.floor(u).astype(np.int64)
        offsets = np.arange(-_SPREAD + 1, _SPREAD + 1)
        grid = first[:, None] + offsets[None, :]
        d = (grid - u[:, None]) / m
        self.spread = sparse.csr_matrix(
            (
                np.exp(-(d * d) / (4.0 * tau)).ravel(),
                (np.mod(grid, m).ravel(), np.repeat(np.arange(self.t.size), offsets.size)),
            ),
            shape=(m, self.t.size),
        )
        # Modes k = j − half, centred on zero where the Gaussian's transform is largest.
        k = np.arange(self.n_freq) - self.half
        self.rows = np.mod(k, m)
        self.scale = 1.0 / (np.sqrt(4.0 * np.pi * tau) * np.exp(-4.0 * np.pi**2 * tau * k.astype(float) ** 2))

    def __call__(self, c: np.ndarray, f0: float) -> np.ndarray:
        cc = np.asarray(c).reshape(self.t.size, -1)
        if self.direct:
            return _direct(self.t, cc, f0, self.step, self.n_freq)
        shifted = cc * np.exp((2j * np.pi * (f0 + self.half * self.step)) * self.t)[:, None]
        g = self.spread @ shifted.real + 1j * (self.spread @ shifted.imag)
        big = sfft.ifft(g, axis=0, overwrite_x=True)
        return big[self.rows] * self.scale[:, None]


def trig_sums(t: np.ndarray, c: np.ndarray, f0: float, step: float, n_freq: int) -> np.ndarray:
    """Σₙ c[n, r] · exp(2πi (f0 + j·step) tₙ) for j = 0 … n_freq−1: complex (n_freq, R).

    ``t`` (N,) in days, centred; ``c`` (N,) or (N, R), real or complex. Gaussian gridding for large
    problems, the direct sum for small ones; both agree to ~1e-13 of Σ|c| (see :class:`TrigSums`).
    """
    return TrigSums(t, step, n_freq)(c, f0)


def trig_sums_slow(t: np.ndarray, c: np.ndarray, f0: float, step: float, n_freq: int) -> np.ndarray:
    """Slow twin of :func:`trig_sums`: one frequency at a time, every term added."""
    t = np.asarray(t, dtype=float).ravel()
    cc = np.asarray(c).reshape(t.size, -1)
    out = np.empty((n_freq, cc.shape[1]), dtype=complex)
    for j in range(n_freq):
        out[j] = np.exp(2j * np.pi * (f0 + j * step) * t) @ cc
    return out


class HarmonicSums:
    """The trig sums of a harmonic fit on a uniform grid, block of frequencies by block: for
    frequencies f0 + j·step (j < n_freq), Σₙ e^{ik·2πftₙ}·left[n, :] for k = 1..K as the (cos, sin)
    rows of Hᵀ·left, and Σₙ wₙ e^{im·2πftₙ} for m = K+1..2K (planner.diagnostics.harmonic_lsq's
    ``_block_products`` computes the same by explicit harmonics and one matrix product)."""

    def __init__(self, t: np.ndarray, step: float, n_freq: int, nterms: int) -> None:
        self.nterms, self.n_freq = nterms, n_freq
        self.plans = {k: TrigSums(t, k * step, n_freq) for k in range(1, 2 * nterms + 1)}

    def __call__(self, left: np.ndarray, w: np.ndarray, f0: float, count: int) -> tuple[np.ndarray, np.ndarray]:
        """``(prod, high)``: (count, 2K, R) real and (count, K) complex, for frequencies f0 + j·step, j < count."""
        k2 = 2 * self.nterms
        prod = np.empty((count, k2, left.shape[1]))
        for k in range(1, self.nterms + 1):
            s = self.plans[k](left, k * f0)[:count]
            prod[:, 2 * k - 2, :], prod[:, 2 * k - 1, :] = s.real, s.imag
        high = np.column_stack([self.plans[m](w, m * f0)[:count, 0] for m in range(self.nterms + 1, k2 + 1)]).reshape(
            count, self.nterms
        )
        return prod, high
