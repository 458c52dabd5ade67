"""The periodogram of injection–recovery in the configuration ``check`` and ``plan`` really use, beside its peers.

Configuration: the check's model (linear trend + the geometric magnitude column + 2 harmonics,
weights 1/σ²), its rotation-frequency grid for 1–30 h (double-peaked search), 100 injected light
curves, on two samples: the demo week (4 sites × 7 nights of 5-minute points, N ≈ 1 300, F ≈ 1 600)
and a month at 16 sites (N ≈ 23 000, F ≈ 7 000).

Routes timed, in interleaved repetitions (one of each, then again), medians and spread printed:

- phasewise ``multiharmonic_power`` as ``check`` calls it (on this uniform grid the trig sums come
  from Gaussian gridding, planner.diagnostics.trigsums);
- the same call with the dense block-product kernel forced (harmonic_lsq's other route): its
  achieved GFLOP/s beside the machine's matrix-multiply rate, at 1 and 2 BLAS threads (each in its
  own process, threads set before numpy loads);
- the fair kernel peer: a plain-numpy batched solve of the same model (harmonic columns projected off
  the trend, QR per frequency, every trial projected by one matrix product);
- astropy's ``LombScargle(nterms=2)`` one trial at a time (its model has no trend columns, so it
  runs the same data with a floating mean only; timed on a subset of trials and scaled).

Run: python benchmarks/bench_periodogram.py [--quick | --full] [--reps 3]
"""

from __future__ import annotations

import os

for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS", "VECLIB_MAXIMUM_THREADS"):
    os.environ.setdefault(_var, "1")

import argparse  # noqa: E402
import json  # noqa: E402
import subprocess  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from benchutil import kernel_flops, matmul_gflops, qr_projection_power, spread  # noqa: E402

from planner.diagnostics import harmonic_lsq  # noqa: E402
from planner.diagnostics.periodogram import multiharmonic_power  # noqa: E402
from planner.diagnostics.recovery import search_frequencies_per_day, synthetic_light_curves  # noqa: E402

TRIALS = 100


def sample(sites: int, nights: int, seed: int = 0):
    """Five-minute points, 4 h a night per site, sites a night apart in longitude; the check's grid."""
    rng = np.random.default_rng(seed)
    t = np.concatenate(
        [n + s / sites + rng.uniform(0, 0.1) + np.arange(48) * 300 / 86400 for s in range(sites) for n in range(nights)]
    )
    t = 2463000.5 + np.sort(t)
    sigma = rng.uniform(0.01, 0.03, t.size)
    geo = 5 * np.log10(0.6 + 0.01 * (t - t[0])) + 10 * np.log10(1.5 + 0.004 * (t - t[0]))
    periods = np.exp(rng.uniform(np.log(1.0), np.log(30.0), TRIALS))
    y = synthetic_light_curves(t, periods, rng.uniform(0.1, 0.5, TRIALS), rng, sigma_mag=sigma, trend_mag=geo)
    freq = search_frequencies_per_day(2.0, 30.0, np.ptp(t) * 24, True, 10.0)
    return t, y, sigma, geo, freq


def ours(t, y, sigma, geo, freq, dense: bool = False):
    old = harmonic_lsq._SUMS_FROM
    if dense:
        harmonic_lsq._SUMS_FROM = 10**18
    try:
        return multiharmonic_power(t, y, freq, nterms=2, sigma=sigma, trend_degree=1, trend_columns=geo)
    finally:
        harmonic_lsq._SUMS_FROM = old


def peer(t, y, sigma, geo, freq):
    return qr_projection_power(t, y, freq, nterms=2, sigma=sigma, trend_degree=1, trend_columns=geo)


def astropy_best(t, y, sigma, freq, n: int) -> tuple[float, np.ndarray]:
    from astropy.timeseries import LombScargle

    t0 = time.perf_counter()
    best = np.array([freq[np.argmax(LombScargle(t - t[0], y[:, j], sigma, nterms=2).power(freq))] for j in range(n)])
    return (time.perf_counter() - t0) * y.shape[1] / n, best


def gflops_child(sites: int, nights: int) -> None:
    """In a fresh process (BLAS threads from the environment): the dense kernel's rate and matmul's."""
    t, y, sigma, geo, freq = sample(sites, nights)
    ours(t, y, sigma, geo, freq, dense=True)
    times = []
    for _ in range(3):
        t0 = time.perf_counter()
        ours(t, y, sigma, geo, freq, dense=True)
        times.append(time.perf_counter() - t0)
    left = 3 + y.shape[1] + 1  # trend basis (3 columns) + trials + the weights column
    flops = kernel_flops(t.size, freq.size, 2, left)
    print(json.dumps({"gflops": flops / np.median(times) / 1e9, "matmul": matmul_gflops(), "seconds": times}))


def rates(threads: int, sites: int, nights: int) -> dict:
    env = {**os.environ, **{v: str(threads) for v in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS")}}
    out = subprocess.run(
        [sys.executable, __file__, "--gflops-child", str(sites), str(nights)],
        env=env,
        capture_output=True,
        text=True,
        check=True,
    )
    return json.loads(out.stdout.strip().splitlines()[-1])


def run(label: str, sites: int, nights: int, reps: int, astropy_trials: int) -> None:
    t, y, sigma, geo, freq = sample(sites, nights)
    print(
        f"\n{label}: {t.size} points, {freq.size} frequencies, {TRIALS} trials, trend + geometric column, 2 harmonics"
    )
    routes = {"phasewise (as check runs it)": lambda: ours(t, y, sigma, geo, freq)}
    routes["phasewise, dense kernel forced"] = lambda: ours(t, y, sigma, geo, freq, dense=True)
    routes["numpy batched QR (fair peer)"] = lambda: peer(t, y, sigma, geo, freq)
    for f in routes.values():  # warm-up
        f()
    times: dict[str, list[float]] = {k: [] for k in routes}
    results = {}
    for _ in range(reps):
        for k, f in routes.items():
            t0 = time.perf_counter()
            results[k] = f()
            times[k].append(time.perf_counter() - t0)
    base = np.median(times["phasewise (as check runs it)"])
    for k, v in times.items():
        print(f"  {k:34s} {spread(v)}   x{np.median(v) / base:6.1f}")
    a, b, c = results.values()
    print(
        f"  max |power difference|: gridded vs dense {np.max(np.abs(a - b)):.1e}, "
        f"vs the QR peer {np.max(np.abs(a - c)):.1e}"
    )
    n_ref = min(astropy_trials, TRIALS)
    ref_s, ref_best = astropy_best(t, y, sigma, freq, n_ref)
    flat = multiharmonic_power(t, y[:, :n_ref], freq, nterms=2, sigma=sigma, trend_degree=0)
    same = np.mean(freq[flat.argmax(axis=0)] == ref_best)
    print(
        f"  {'astropy LombScargle per trial':34s} {ref_s:8.3f} s (timed on {n_ref} trials, scaled)   "
        f"x{ref_s / base:6.1f}   (mean-only model; same best frequency as phasewise's mean-only fit in "
        f"{100 * same:.0f} % of trials)"
    )
    for threads in (1, 2):
        r = rates(threads, sites, nights)
        print(
            f"  dense kernel, {threads} BLAS thread{'s' if threads > 1 else ' '}: {r['gflops']:6.2f} GFLOP/s = "
            f"{100 * r['gflops'] / r['matmul']:4.0f} % of this machine's matmul ({r['matmul']:.1f} GFLOP/s)"
        )


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    size = ap.add_mutually_exclusive_group()
    size.add_argument("--quick", action="store_true", help="the demo week only, 2 repetitions")
    size.add_argument("--full", action="store_true", help="5 repetitions, astropy on every trial")
    ap.add_argument("--reps", type=int, default=None)
    ap.add_argument("--gflops-child", nargs=2, type=int, help=argparse.SUPPRESS)
    args = ap.parse_args()
    if args.gflops_child:
        gflops_child(*args.gflops_child)
        return
    reps = args.reps or (2 if args.quick else 5 if args.full else 3)
    print(
        f"BLAS threads {os.environ['OPENBLAS_NUM_THREADS']} (except the GFLOP/s lines); {reps} interleaved repetitions"
    )
    run("demo week (4 sites x 7 nights)", 4, 7, reps, TRIALS if args.full else 20)
    if not args.quick:
        run("a month at 16 sites (16 x 30 nights)", 16, 30, max(1, reps - 1), TRIALS if args.full else 3)


if __name__ == "__main__":
    main()
