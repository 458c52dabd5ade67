"""The scheduler at the demo's real size: plan time, and the greedy beside the exact optimum or its bound (HiGHS).

1. ``plan_campaign`` on the demo campaign (4 sites × 7 nights, 5-minute slots, periods 2–30 h), in
   repetitions; medians and spread; the stages' times and the local search's budget and stop.
2. The greedy's coverage against the exact coverage optimum (``planner.schedule.exact``, HiGHS via
   ``scipy.optimize.milp``) on the demo's own slot grid and period grid — every element, every cell,
   no reduced instance: (a) the demo as planned; (b) the demo with one 1-hour block a night per site,
   the hardest allocation the demo's rules allow. When HiGHS stops at its time limit its bound (and
   the trivial bound, every cell) is what the greedy is measured against; the proven worst case is ½.
3. Lazy against plain greedy (same picks, fewer gains evaluated): ``--full`` only (the plain greedy
   rescans every element at every step).

BLAS threads pinned. Run: ``python benchmarks/bench_schedule.py [--quick | --full]``.
"""

from __future__ import annotations

import os

for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS", "VECLIB_MAXIMUM_THREADS"):
    os.environ.setdefault(_var, "1")

import argparse  # noqa: E402
import dataclasses  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
#: The bundled demo inputs (package data).
DEMO = ROOT / "planner" / "data" / "demo"

from benchutil import spread  # noqa: E402

from planner.inputs.campaign import load_campaign  # noqa: E402
from planner.inputs.sites import Allocation  # noqa: E402
from planner.pipeline import plan_campaign  # noqa: E402
from planner.schedule import exact  # noqa: E402
from planner.schedule.greedy import greedy_lazy, greedy_plain  # noqa: E402
from planner.schedule.solve import schedule_core  # noqa: E402
from planner.sky.skydata import no_iers_download  # noqa: E402
from planner.visibility.windows import observable_windows  # noqa: E402


def plan_times(campaign, target, reps: int) -> None:
    runs, times = [], []
    for _ in range(reps):
        t = time.perf_counter()
        runs.append(plan_campaign(campaign, target))
        times.append(time.perf_counter() - t)
    r = runs[-1]
    ls = r.objective.search
    print(f"plan_campaign, demo (4 sites x 7 nights): {spread(times)}")
    print("  stages (last run): " + ", ".join(f"{k} {v:.2f} s" for k, v in r.timings_s.items()))
    print(
        f"  greedy {r.objective.seconds['greedy']:.2f} s ({r.objective.greedy_evaluations} gains for "
        f"{r.objective.n_elements} elements), local search {r.objective.seconds['local_search']:.2f} s "
        f"({ls.evaluations} of {ls.budget} moves, stopped by {ls.stopped_by})"
    )


def versus_exact(label: str, campaign, target, time_limit_s: float) -> None:
    windows = observable_windows(
        target, list(campaign.sites), campaign.first_night, campaign.nights, step_s=campaign.block_rules.slot_s
    )
    m = schedule_core(campaign, windows, max_evaluations=0).model
    cells = m.element_cells()
    t = time.perf_counter()
    g = greedy_lazy(m.grid, cells, m.done_cells)
    t_greedy = time.perf_counter() - t
    exact.MAX_INCIDENCE = 10**9  # the demo's real size, whatever it takes
    ex = exact.exact_coverage(m, time_limit_s=time_limit_s, greedy_cells=g.covered_cells)
    bound = min(ex.upper_bound_cells, m.n_cells)
    print(
        f"  {label}: {m.grid.n_elements} elements, {m.periods_h.size} periods x {m.n_bins} bins = {m.n_cells} "
        f"cells, {cells.incidence():,} element-cell pairs"
    )
    print(f"    greedy {g.covered_cells} cells in {t_greedy:.3f} s")
    kind = "optimum" if ex.optimal else f"best found {ex.covered_cells}, upper bound"
    print(f"    HiGHS: {kind} {bound:.0f} cells in {ex.seconds:.1f} s ({ex.status})")
    print(
        f"    greedy / {'optimum' if ex.optimal else 'bound'}: {g.covered_cells / bound:.4f}  (proven worst case 0.5)"
    )


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    size = ap.add_mutually_exclusive_group()
    size.add_argument("--quick", action="store_true", help="one plan run, HiGHS 20 s")
    size.add_argument("--full", action="store_true", help="5 plan runs, HiGHS 300 s, lazy vs plain greedy")
    args = ap.parse_args()
    no_iers_download()
    campaign = load_campaign(DEMO / "demo-campaign.toml")
    target = campaign.load_target()
    reps, limit = (1, 20.0) if args.quick else (5, 300.0) if args.full else (3, 60.0)
    print(f"BLAS threads {os.environ['OPENBLAS_NUM_THREADS']}\n")
    plan_times(campaign, target, reps)

    print(f"\ngreedy against the exact coverage optimum (HiGHS, time limit {limit:g} s), the demo's real grids")
    versus_exact("demo as planned", campaign, target, limit)
    tight = dataclasses.replace(
        campaign,
        sites=tuple(dataclasses.replace(s, allocation=Allocation(hours_per_night=1.0)) for s in campaign.sites),
        block_rules=dataclasses.replace(campaign.block_rules, max_per_night=1),
    )
    versus_exact("one 1-hour block a night per site", tight, target, limit)

    if args.full:
        windows = observable_windows(target, list(tight.sites), tight.first_night, tight.nights, step_s=300.0)
        m = schedule_core(tight, windows, max_evaluations=0).model
        cells = m.element_cells()
        t = time.perf_counter()
        lazy = greedy_lazy(m.grid, cells, m.done_cells, m.slot_credit())
        tl = time.perf_counter() - t
        t = time.perf_counter()
        plain = greedy_plain(m.grid, cells, m.done_cells, m.slot_credit())
        tp = time.perf_counter() - t
        print(
            f"\nlazy greedy {tl:.2f} s ({lazy.evaluations} gains), plain {tp:.2f} s ({plain.evaluations} gains); "
            f"same picks: {lazy.elements == plain.elements}; plain/lazy time {tp / max(tl, 1e-9):.1f}x"
        )
    _ = np  # numpy is imported first on purpose (threads pinned above)


if __name__ == "__main__":
    main()
