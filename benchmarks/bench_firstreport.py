"""The report's first render at 16 sites × 30 nights, this tree beside the report as of a named commit.

Plans the scale benchmark's invented 16-site, 30-night campaign once (benchmarks/bench_scale.py's sites
and target), timing the plan; or reuses ``--folder DIR`` (with ``--plan-s`` the plan's seconds from the
same machine, e.g. the ``plan_s`` of ``bench_scale.py --child``). Then renders the report's first
render (the folder's ``.figures`` cache removed, every figure drawn), interleaved, by:

* ours: this tree's ``planner.outputs.report.render_report``;
* the peer: the same function as of PEER_COMMIT (``git archive`` of that commit into a temporary
  folder; skipped without git history): matplotlib timeline, constrained layout, glyphs as paths.

Each render is a fresh process (BLAS threads pinned; imports before the timer), on its own copy of the
folder; each prints its total and the seconds each figure took to draw (through the figure cache's
``figure``, which both versions have). Medians of the interleaved repetitions; the goal is the first
render ≤ 10 % of the plan.

Run: python benchmarks/bench_firstreport.py [--reps N] [--folder DIR --plan-s S]
"""

from __future__ import annotations

import os

for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS", "VECLIB_MAXIMUM_THREADS"):
    os.environ.setdefault(_var, "1")

import argparse  # noqa: E402
import json  # noqa: E402
import shutil  # noqa: E402
import subprocess  # noqa: E402
import sys  # noqa: E402
import tarfile  # noqa: E402
import tempfile  # noqa: E402
import time  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(Path(__file__).resolve().parent))

#: The merge before the timeline went to SVG and the figures to fixed margins and text as <text>.
PEER_COMMIT = "66fb474"


def child(folder: str) -> None:
    """One first render of ``folder`` by the ``planner`` on sys.path; print JSON timings."""
    from planner.outputs import figcache
    from planner.outputs.report import render_report

    drawn_s: dict[str, float] = {}
    plain = figcache.FigureCache.figure

    def timed(self, name, parts, draw):
        def clocked():
            t = time.perf_counter()
            out = draw()
            key = name.rsplit("-", 1)[0] if name.startswith("fig-site-") else name
            drawn_s[key] = drawn_s.get(key, 0.0) + time.perf_counter() - t
            return out

        return plain(self, name, parts, clocked)

    figcache.FigureCache.figure = timed
    shutil.rmtree(Path(folder) / ".figures", ignore_errors=True)
    t0 = time.perf_counter()
    size = len(render_report(folder))
    print(json.dumps({"total_s": time.perf_counter() - t0, "figures_s": drawn_s, "bytes": size}))


def peer_tree(work: Path) -> Path | None:
    """The package as of PEER_COMMIT, unpacked under ``work`` (None without the git history)."""
    tar = work / "peer.tar"
    proc = subprocess.run(
        ["git", "-C", str(ROOT), "archive", "-o", str(tar), PEER_COMMIT, "planner"], capture_output=True, check=False
    )
    if proc.returncode != 0:
        return None
    with tarfile.open(tar) as t:
        t.extractall(work / "peer", filter="data")
    return work / "peer"


def run(code_root: Path, folder: Path) -> dict:
    proc = subprocess.run(
        [sys.executable, __file__, "--child", str(folder)],
        capture_output=True,
        text=True,
        env={**os.environ, "PYTHONPATH": str(code_root)},
        check=False,
    )
    if proc.returncode != 0:
        raise RuntimeError(proc.stderr[-3000:])
    return json.loads(proc.stdout.strip().splitlines()[-1])


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--reps", type=int, default=5)
    ap.add_argument("--folder", help="a 16 × 30 plan folder from an earlier run (skips planning)")
    ap.add_argument("--plan-s", type=float, help="the plan's seconds for --folder, from this machine")
    ap.add_argument("--child", help=argparse.SUPPRESS)
    args = ap.parse_args()
    if args.child:
        child(args.child)
        return
    work = Path(tempfile.mkdtemp(prefix="bench-firstreport-"))
    try:
        if args.folder:
            folder, plan_s = Path(args.folder), args.plan_s
        else:
            sys.path.insert(0, str(ROOT))
            from bench_nightcharts import plan_folder

            folder = work / "plan"
            plan_s = plan_folder(folder)
        routes = {"this tree": ROOT}
        peer = peer_tree(work)
        if peer is not None:
            routes[f"as of {PEER_COMMIT}"] = peer
        copies = {}
        for k, name in enumerate(routes):  # each its own copy: neither sees the other's figure cache
            copies[name] = work / f"copy{k}"
            shutil.copytree(folder, copies[name], ignore=shutil.ignore_patterns(".figures", "report.html"))
        runs: dict[str, list[dict]] = {k: [] for k in routes}
        for _ in range(args.reps):
            for name, code in routes.items():
                runs[name].append(run(code, copies[name]))
        print(f"report first render at 16 sites x 30 nights; {args.reps} interleaved repetitions, fresh processes")
        names = sorted({f for r in runs.values() for x in r for f in x["figures_s"]})
        print(f"{'':>16} {'total s':>14} " + " ".join(f"{n.removeprefix('fig-'):>11}" for n in names))
        totals = {}
        for name, r in runs.items():
            t = [x["total_s"] for x in r]
            totals[name] = float(np.median(t))
            figs = [np.median([x["figures_s"].get(n, np.nan) for x in r]) for n in names]
            print(
                f"{name:>16} {totals[name]:6.2f} ({min(t):.2f}-{max(t):.2f}) "
                + " ".join(f"{v:11.3f}" for v in figs)
                + f"   drawing {np.nansum(figs):.2f} s, {r[0]['bytes'] / 1e6:.1f} MB"
            )
        if len(totals) == 2:
            ours, theirs = totals.values()
            print(f"  peer / ours: {theirs / ours:.2f} x")
        if plan_s:
            for name, v in totals.items():
                print(f"  {name}: first render / plan ({plan_s:.1f} s) = {100 * v / plan_s:.1f} % (goal <= 10 %)")
    finally:
        shutil.rmtree(work, ignore_errors=True)


if __name__ == "__main__":
    main()
