"""Measure what thinning the optimiser's trial periods costs in plan quality, and what it saves in time.

    python scripts/measure_thinning.py [--quick]

Beyond ``rotation.max_plan_periods`` (default 4000) the scheduler counts phase coverage on an even
sub-grid of the trial periods (planner.diagnostics.coverage.thin_periods). Each invented scenario below
(benchmarks/bench_scale.py's sites and demo comet; some with one short block a night, where coverage is
hard to fill) is planned twice: with the default and with the limit raised above the grid (no
thinning). Both plans are then judged the same way, by the plan's own check on every period of the
whole grid: mean coverage, the share of periods under the 0.8 coverage threshold, the worst period's
coverage, the highest alias peak, the bands' verdicts; and the plan's wall time.
"""

from __future__ import annotations

import os

for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

import argparse  # noqa: E402
import dataclasses  # noqa: E402
import sys  # noqa: E402
import tempfile  # noqa: E402
import time  # noqa: E402
from pathlib import Path  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

import numpy as np  # noqa: E402
from bench_scale import make_campaign  # noqa: E402

#: (sites, nights, hours a night, blocks a night): easy and hard cases past the default limit.
SCENARIOS = ((2, 90, 1.0, 1), (4, 60, 1.0, 1), (4, 90, 4.0, 2), (1, 60, 2.0, 1))


def _campaign(folder: Path, n_sites: int, nights: int, hours: float, per_night: int) -> Path:
    path = make_campaign(folder, n_sites, nights)
    for site in folder.glob("site*.toml"):
        site.write_text(site.read_text().replace("hours_per_night = 4", f"hours_per_night = {hours:g}"))
    path.write_text(path.read_text().replace("max_per_night = 2", f"max_per_night = {per_night}"))
    return path


def _judge(result, seconds: float) -> dict:
    check = result.checks["plan"]
    cov = check.coverage
    return {
        "plan_s": seconds,
        "n_periods": result.objective.n_periods,
        "mean_cov": float(cov.mean()),
        "below_0.8": float((cov < 0.8).mean()),
        "worst_cov": float(cov.min()),
        "alias": None if check.highest_alias is None else float(check.highest_alias["height"]),
        "verdicts": "".join(b["verdict"][0] for b in check.bands),
    }


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="the first two scenarios only")
    args = ap.parse_args()
    from planner.inputs.campaign import load_campaign
    from planner.pipeline import plan_campaign
    from planner.sky.skydata import no_iers_download

    no_iers_download()
    print(
        "Each scenario planned with the optimiser's periods thinned (default) and whole; both judged by the "
        "check on every period.\nverdicts: one letter per period band (s secure, a alias-prone, u under-covered)."
    )
    print(
        f"{'scenario':>22} {'periods':>13} {'plan s':>7} {'mean cov':>9} {'<0.8':>7} {'worst':>6} {'alias':>6}"
        "  verdicts"
    )
    with tempfile.TemporaryDirectory(prefix="phasewise-thin-") as tmp:
        for n_sites, nights, hours, per_night in SCENARIOS[:2] if args.quick else SCENARIOS:
            path = _campaign(Path(tmp) / f"{n_sites}x{nights}x{hours:g}", n_sites, nights, hours, per_night)
            camp = load_campaign(path)
            target = camp.load_target()
            label = f"{n_sites} x {nights} n, {hours:g} h"
            for name, limit in (("thinned", camp.rotation.max_plan_periods), ("whole", 1_000_000)):
                c = dataclasses.replace(camp, rotation=dataclasses.replace(camp.rotation, max_plan_periods=limit))
                t0 = time.perf_counter()
                result = plan_campaign(c, target)
                r = _judge(result, time.perf_counter() - t0)
                grid = result.checks["plan"].periods_h.size
                print(
                    f"{label:>22} {r['n_periods']:>6}/{grid:<6} {r['plan_s']:7.1f} {r['mean_cov']:9.4f} "
                    f"{r['below_0.8']:7.4f} {r['worst_cov']:6.3f} {np.nan if r['alias'] is None else r['alias']:6.3f}"
                    f"  {r['verdicts']}  ({name})"
                )


if __name__ == "__main__":
    main()
