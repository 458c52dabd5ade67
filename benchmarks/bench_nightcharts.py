"""The report's night charts at 16 sites × 30 nights: SVG written directly, beside matplotlib drawing them.

Plans the scale benchmark's invented 16-site, 30-night campaign once (benchmarks/bench_scale.py's
sites and target; or reuses ``--folder DIR`` from an earlier run), then times, interleaved:

* ours: the 16 site charts and the sites × nights overview as the report draws them
  (planner.outputs.figures_nights, embedded by htmlparts.svg_figure_html);
* the peer: the same two charts drawn with matplotlib and saved as SVG, by the drawing code the report
  used before (planner/outputs/figures_sky.py at commit PEER_COMMIT, read with ``git show``; skipped
  without git history), one process, the same inputs.

The whole report's first render against the plan's time is benchmarks/bench_firstreport.py's.

Run: python benchmarks/bench_nightcharts.py [--reps N|--quick|--full] (BLAS threads pinned).
"""

from __future__ import annotations

import os

for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS", "VECLIB_MAXIMUM_THREADS"):
    os.environ.setdefault(_var, "1")

import argparse  # noqa: E402
import shutil  # noqa: E402
import subprocess  # noqa: E402
import sys  # noqa: E402
import tempfile  # noqa: E402
import time  # noqa: E402
import types  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(Path(__file__).resolve().parent))

from bench_scale import make_campaign  # noqa: E402
from benchutil import spread  # noqa: E402

from planner.outputs import figures_nights, report_nights  # noqa: E402
from planner.outputs.htmlparts import figure_html, svg_figure_html  # noqa: E402
from planner.outputs.reader import load_plan_folder  # noqa: E402

#: The last commit whose figures_sky.py drew the night charts with matplotlib.
PEER_COMMIT = "c29d689"


def peer_module() -> types.ModuleType | None:
    """figures_sky.py as of PEER_COMMIT, loaded as a module (None without the git history)."""
    proc = subprocess.run(
        ["git", "-C", str(ROOT), "show", f"{PEER_COMMIT}:planner/outputs/figures_sky.py"],
        capture_output=True,
        text=True,
        check=False,
    )
    if proc.returncode != 0:
        return None
    mod = types.ModuleType("figures_sky_matplotlib")
    exec(compile(proc.stdout, f"figures_sky.py@{PEER_COMMIT}", "exec"), mod.__dict__)
    return mod


def plan_folder(folder: Path) -> float:
    """Plan the 16 × 30 campaign into ``folder``; the plan's seconds."""
    from planner.inputs.campaign import load_campaign
    from planner.outputs.planfolder import write_plan_folder
    from planner.pipeline import plan_campaign
    from planner.sky.skydata import no_iers_download

    no_iers_download()
    camp = load_campaign(make_campaign(folder.parent / "inputs", 16, 30))
    t0 = time.perf_counter()
    result = plan_campaign(camp, camp.load_target())
    plan_s = time.perf_counter() - t0
    write_plan_folder(result, folder, force=True)
    return plan_s


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--reps", type=int, default=5)
    ap.add_argument("--quick", action="store_true")
    ap.add_argument("--full", action="store_true")
    ap.add_argument("--folder", help="a 16 × 30 plan folder from an earlier run (skips planning)")
    args = ap.parse_args()
    reps = 3 if args.quick else 9 if args.full else args.reps
    work = Path(tempfile.mkdtemp(prefix="bench-nightcharts-"))
    try:
        folder = Path(args.folder) if args.folder else work / "plan"
        if not args.folder:
            plan_folder(folder)
        pf = load_plan_folder(folder)
        jobs = [j for j in report_nights._chart_jobs(pf, pf.windows) if j is not None]
        window, planned, _ = report_nights._night_hours(pf)
        peer = peer_module()

        def ours() -> int:
            out = [svg_figure_html(figures_nights.site_nights_svg(*j[1:]), f"fig-site-{j[0]}", "", "") for j in jobs]
            out.append(
                svg_figure_html(figures_nights.network_nights_svg(pf.sites, pf.nights, planned, window), "n", "", "")
            )
            return sum(map(len, out))

        def theirs() -> int:
            out = [figure_html(peer.site_nights_figure(*j[1:], legend=False), f"fig-site-{j[0]}", "", "") for j in jobs]
            out.append(figure_html(peer.network_nights_figure(pf.sites, pf.nights, planned, window), "n", "", ""))
            return sum(map(len, out))

        routes = {"svg direct": ours}
        if peer is not None:
            routes["matplotlib"] = theirs
        times: dict[str, list[float]] = {k: [] for k in routes}
        sizes: dict[str, int] = {}
        for _ in range(reps):
            for name, fn in routes.items():
                t0 = time.perf_counter()
                sizes[name] = fn()
                times[name].append(time.perf_counter() - t0)
        print(f"{len(pf.sites)} sites x {len(pf.nights)} nights, {reps} interleaved repetitions")
        print(f"  17 charts, SVG direct : {spread(times['svg direct'])}, {sizes['svg direct'] / 1e6:.2f} MB of HTML")
        if peer is not None:
            print(
                f"  17 charts, matplotlib : {spread(times['matplotlib'])}, {sizes['matplotlib'] / 1e6:.2f} MB of HTML"
            )
            ratio = np.median(times["matplotlib"]) / np.median(times["svg direct"])
            print(f"  matplotlib / direct   : {ratio:.0f} x")
        else:
            print(f"  (peer skipped: no git history with commit {PEER_COMMIT})")
    finally:
        shutil.rmtree(work, ignore_errors=True)


if __name__ == "__main__":
    main()
