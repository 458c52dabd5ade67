"""Monte Carlo trials at scale: time and peak memory against the number of trials, in one process and over two.

Injection–recovery (``planner.diagnostics.recovery.injection_recovery``, the check's model: trend +
geometric column, 2 harmonics) on the demo week's light-curve points (4 sites × 7 nights of 5-minute
points), and the weather Monte Carlo (``planner.schedule.robustness.weather_monte_carlo``) of the
demo plan. Each run is a fresh process (BLAS threads pinned) that reports its wall time and peak
resident memory (VmHWM); trials run in blocks of 256 with their own random streams, so memory should
stay flat as trials grow, and 1 and 2 workers must give identical results (checked here by a digest
of the found periods). The peer is the same call in one process. Default: 10³ and 10⁴ injected light
curves, 10⁴ weather trials; ``--full`` adds 10⁵ of each (the goal: 10⁵ trials within 1 GB);
``--quick``: 10³ only. Run: python benchmarks/bench_trials.py [--quick | --full]
"""

from __future__ import annotations

import os

for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS", "VECLIB_MAXIMUM_THREADS"):
    os.environ.setdefault(_var, "1")

import argparse  # noqa: E402
import hashlib  # noqa: E402
import json  # noqa: E402
import subprocess  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))


def _hwm_mb() -> float:
    for line in Path("/proc/self/status").read_text().splitlines():
        if line.startswith("VmHWM:"):
            return int(line.split()[1]) / 1024.0
    return float("nan")


def child(kind: str, trials: int, workers: int) -> None:
    from bench_periodogram import sample

    from planner.diagnostics.recovery import injection_recovery

    t0 = time.perf_counter()
    if kind == "injection":
        t, _, sigma, geo, _ = sample(4, 7)
        r = injection_recovery(
            t, min_period_h=2, max_period_h=30, trials=trials, seed=1, sigma_mag=sigma, trend_mag=geo, workers=workers
        )
        digest = hashlib.sha1(np.ascontiguousarray(r.found_period_h).tobytes()).hexdigest()[:12]
    else:
        from planner.inputs.campaign import load_campaign
        from planner.schedule.robustness import weather_monte_carlo
        from planner.schedule.solve import schedule_core
        from planner.sky.skydata import no_iers_download
        from planner.visibility.windows import observable_windows

        no_iers_download()
        camp = load_campaign(ROOT / "planner" / "data" / "demo" / "demo-campaign.toml")
        target = camp.load_target()
        w = observable_windows(target, list(camp.sites), camp.first_night, camp.nights, step_s=300.0)
        core = schedule_core(camp, w)
        t0 = time.perf_counter()
        rob = weather_monte_carlo(core.model, core.visits, trials, seed=1, workers=workers)
        digest = hashlib.sha1(json.dumps(rob.to_dict(), sort_keys=True).encode()).hexdigest()[:12]
    import resource

    worker_mb = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024.0
    print(json.dumps({"seconds": time.perf_counter() - t0, "peak_mb": max(_hwm_mb(), worker_mb), "digest": digest}))


def run(kind: str, trials: int, workers: int) -> dict:
    out = subprocess.run(
        [sys.executable, __file__, "--child", kind, str(trials), str(workers)],
        env={**os.environ, "PYTHONPATH": str(ROOT)},
        capture_output=True,
        text=True,
        check=True,
    )
    return json.loads(out.stdout.strip().splitlines()[-1])


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    size = ap.add_mutually_exclusive_group()
    size.add_argument("--quick", action="store_true")
    size.add_argument("--full", action="store_true")
    ap.add_argument("--child", nargs=3, help=argparse.SUPPRESS)
    args = ap.parse_args()
    if args.child:
        child(args.child[0], int(args.child[1]), int(args.child[2]))
        return
    plan = {
        "injection": [1_000] if args.quick else [1_000, 10_000, 100_000] if args.full else [1_000, 10_000],
        "weather": [1_000] if args.quick else [10_000, 100_000] if args.full else [10_000],
    }
    print(f"trials in blocks of 256 with their own streams; BLAS threads {os.environ['OPENBLAS_NUM_THREADS']}")
    print(
        f"{'kind':10s} {'trials':>8s} {'1 worker s':>11s} {'2 workers s':>12s} {'ratio':>6s} {'peak MB 1/2':>13s}  same"
    )
    for kind, sizes in plan.items():
        for n in sizes:
            one, two = run(kind, n, 1), run(kind, n, 2)
            print(
                f"{kind:10s} {n:8d} {one['seconds']:11.2f} {two['seconds']:12.2f} "
                f"{one['seconds'] / two['seconds']:6.2f} {one['peak_mb']:6.0f}/{two['peak_mb']:<6.0f}  "
                f"{one['digest'] == two['digest']}"
            )
    print("(peak MB: the larger of the parent's and the largest worker's resident set)")


if __name__ == "__main__":
    main()
