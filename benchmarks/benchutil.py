"""Shared helpers of the benchmarks: medians with their spread, and the machine's matrix-multiply rate.

Every benchmark pins BLAS threads before numpy is imported (its own first lines) and runs several
interleaved repetitions (ours, the peer's, ours, …) so a busy moment on a shared machine lands on
both sides; it prints the median of each side with the smallest and largest time.
"""

from __future__ import annotations

import argparse
import time

import numpy as np

from planner.diagnostics.harmonic_lsq import harmonic_columns
from planner.diagnostics.periodogram import _prepare


def repetitions(description: str, default: int = 5) -> int:
    """Interleaved repetitions from the command line: ``--reps N``, or ``--quick`` (3) / ``--full`` (9)."""
    ap = argparse.ArgumentParser(description=description)
    ap.add_argument("--reps", type=int, default=default, help="interleaved repetitions of each route")
    ap.add_argument("--quick", action="store_true", help="3 repetitions")
    ap.add_argument("--full", action="store_true", help="9 repetitions")
    args = ap.parse_args()
    return 3 if args.quick else 9 if args.full else args.reps


def spread(values, unit: str = "s") -> str:
    """``median (min–max)`` of repeated timings."""
    v = np.asarray(values, dtype=float)
    return f"median {np.median(v):8.3f} {unit} (min {v.min():.3f}, max {v.max():.3f})"


def matmul_gflops(size: int = 2000, reps: int = 5) -> float:
    """The machine's double-precision matrix-multiply rate (GFLOP/s, median of ``reps``) at the BLAS
    thread count in force: the ceiling a dense kernel is measured against."""
    a = np.random.default_rng(1).normal(size=(size, size))
    a @ a
    times = []
    for _ in range(reps):
        t0 = time.perf_counter()
        a @ a
        times.append(time.perf_counter() - t0)
    return 2 * size**3 / np.median(times) / 1e9


def kernel_flops(n: int, n_freq: int, nterms: int, left_cols: int) -> float:
    """Floating-point operations the kernel does per call (small per-frequency systems left out):
    the block product 2·N·2K·R, the trig recurrence and harmonics (one complex product, 6 flops,
    per harmonic and point), the high trig sums (a complex product and a real-by-complex
    matrix-vector step, 6 + 4 flops, per harmonic and point); R = fixed basis + trials + 1."""
    per_point = 2 * 2 * nterms * left_cols + 6 * nterms + 10 * nterms
    return float(n) * n_freq * per_point


def qr_projection_power(times_jd, y, freq, *, nterms, sigma, trend_degree, trend_columns, block=2_000_000):
    """The previous multiharmonic_power route: per frequency block, harmonic columns projected off
    the trend (SVD basis) and QR-factorised; every trial projected by one matrix product."""
    t, yy, _, s, basis = _prepare(times_jd, y, sigma, trend_degree, trend_columns)
    n, m = yy.shape
    u, sv, _ = np.linalg.svd(s[:, None] * basis, full_matrices=False)
    q_b = u[:, sv > 1e-10 * sv[0]]
    y_w = s[:, None] * yy
    y_r = y_w - q_b @ (q_b.T @ y_w)
    chi0 = np.einsum("nm,nm->m", y_r, y_r)
    power = np.zeros((freq.size, m))
    step = max(1, block // (n * 2 * nterms))
    for start in range(0, freq.size, step):
        fb = freq[start : start + step]
        h = harmonic_columns(t, fb, nterms) * s[None, :, None]
        h -= np.einsum("nq,fqj->fnj", q_b, np.einsum("nq,fnj->fqj", q_b, h))
        q_h, r_h = np.linalg.qr(h)
        diag = np.abs(np.diagonal(r_h, axis1=1, axis2=2))
        colnorm = np.sqrt(np.einsum("fnj,fnj->fj", h, h)) + np.finfo(float).tiny
        keep = diag > 1e-9 * np.maximum(colnorm, diag.max(axis=1, keepdims=True))
        z = (np.swapaxes(q_h, 1, 2).reshape(-1, n) @ y_r).reshape(fb.size, 2 * nterms, m) * keep[:, :, None]
        power[start : start + fb.size] = np.einsum("fjm,fjm->fm", z, z) / chi0
    return power
