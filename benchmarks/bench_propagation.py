"""Benchmark: perturbed propagation with dense output vs IAS15 landing on every epoch; cost per span.

Part 1. Geocentric astrometric positions (light time solved by iteration, as geometry does) of one
target over 30 days at 5-minute steps (8641 epochs), two routes over the same force model:

- dense: ``planner.sky.nbody.propagate_perturbed`` — one integration over the span (cache cleared before
  each repetition), quintic Hermite interpolation at every (light-time-shifted) epoch;
- exact (the peer): ``planner.sky.nbody.propagate_perturbed_exact`` — rebound ``integrate(t,
  exact_finish_time=1)`` for each epoch in turn.

Printed: median and spread of interleaved repetitions, the ratio, and the largest difference in km and
in arcseconds seen from the geocentre. The target is 2011 MD (Gray's elements of 2011 June 26, tests/data)
over 2011 June 12 – July 12, through its 12 300-km passage.

Part 2. Cost of one perturbed path over 7 / 30 / 90 days for a main-belt asteroid, a long-period comet
and the NEA flyby, beside two-body ``kepler.propagate`` on the same 5-minute grid.

Run: ``python benchmarks/bench_propagation.py [--reps 3 | --quick | --full]`` (BLAS threads pinned to one).
"""

from __future__ import annotations

import os

for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_var] = "1"

import statistics  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from planner.core.constants import C_AU_PER_DAY  # noqa: E402
from planner.inputs.targets import load_target  # noqa: E402
from planner.sky import nbody  # noqa: E402
from planner.sky.approach import close_approach_report, format_angle  # noqa: E402
from planner.sky.kepler import propagate  # noqa: E402

REPEATS = 3
STEP_D = 5.0 / 1440.0


def geocentric(prop, orbit, tdb):
    """Geocentric astrometric vectors (au): target at t − τ, Earth at t, two light-time passes."""
    pos, _ = nbody.body_states_au(("sun", "earth"), tdb)
    earth = pos[:, 1]
    tau = np.zeros_like(tdb)
    for _ in range(2):
        helio, _ = prop(orbit, tdb - tau)
        sun = nbody.body_states_au(("sun",), tdb - tau)[0][:, 0]
        vec = helio + sun - earth
        tau = np.linalg.norm(vec, axis=1) / C_AU_PER_DAY
    return vec


def dense_route(orbit, tdb):
    nbody.clear_path_cache()
    return geocentric(nbody.propagate_perturbed, orbit, tdb)


def exact_route(orbit, tdb):
    return geocentric(nbody.propagate_perturbed_exact, orbit, tdb)


def timed(fn, *args):
    t0 = time.perf_counter()
    out = fn(*args)
    return time.perf_counter() - t0, out


def part1() -> None:
    orbit = load_target(ROOT / "tests" / "data" / "2011md-gray.toml").orbit
    tdb = 2455724.5 + np.arange(8641) * STEP_D  # 2011 June 12.0 – July 12.0 TDB
    nbody.planets()
    dense_route(orbit, tdb[:10])  # warm imports
    times = {"dense": [], "exact": []}
    for _ in range(REPEATS):  # interleaved
        dt, dense = timed(dense_route, orbit, tdb)
        times["dense"].append(dt)
        dt, exact = timed(exact_route, orbit, tdb)
        times["exact"].append(dt)
    diff_km = np.linalg.norm(dense - exact, axis=1) * nbody.AU_KM
    ang = (
        np.degrees(np.arctan2(np.linalg.norm(np.cross(dense, exact), axis=1), np.einsum("ij,ij->i", dense, exact)))
        * 3600
    )
    print(f"part 1: 2011 MD, geocentric positions at {tdb.size} epochs (30 days at 5 min), {REPEATS} interleaved runs")
    for name in ("dense", "exact"):
        ts = times[name]
        print(f"  {name:6s} median {statistics.median(ts):8.3f} s   (min {min(ts):.3f}, max {max(ts):.3f})")
    print(f"  ratio exact / dense: {statistics.median(times['exact']) / statistics.median(times['dense']):8.1f} x")
    print(
        f"  largest difference: {diff_km.max():.3g} km, {ang.max():.3g} arcsec from the geocentre "
        f"(at JD {tdb[int(np.argmax(ang))]:.4f}, geocentric distance "
        f"{np.linalg.norm(dense[int(np.argmax(ang))]) * nbody.AU_KM:.0f} km)"
    )


def part2() -> None:
    targets = {
        "main-belt (2033 AB12)": (load_target(ROOT / "tests/data/mpc_minor_planets.txt", "2033 AB12").orbit, 0.0),
        "long-period comet (C/2033 H2)": (load_target(ROOT / "tests/data/mpc_comets.txt", "Larkspur").orbit, 0.0),
        "NEA flyby (2011 MD)": (load_target(ROOT / "tests/data/2011md-gray.toml").orbit, -3.0),
    }
    print("\npart 2: one perturbed path (integration + knots), median of 5; two-body on the same 5-min grid")
    print(
        f"  {'target':32s} {'span':>5s} {'steps':>6s} {'path s':>8s} {'spread':>14s} {'2-body s':>9s} "
        f"{'2-body err':>10s}"
    )
    for name, (orbit, offset) in targets.items():
        for span in (7.0, 30.0, 90.0):
            t0 = orbit.epoch_tdb_jd + offset
            runs = []
            for _ in range(5):
                dt, path = timed(nbody.integrate_path, orbit, t0, t0 + span)
                runs.append(dt)
            grid = t0 + np.arange(0.0, span + 1e-9, STEP_D)
            kep = [timed(propagate, orbit, grid)[0] for _ in range(5)]
            err = close_approach_report(orbit, t0, t0 + span).twobody_error_arcsec
            print(
                f"  {name:32s} {span:5.0f} {path.steps:6d} {statistics.median(runs):8.3f} "
                f"{min(runs):6.3f}-{max(runs):6.3f} {statistics.median(kep):9.4f} {format_angle(err):>10s}"
            )


if __name__ == "__main__":
    from benchutil import repetitions

    REPEATS = repetitions(__doc__.splitlines()[0], default=REPEATS)  # --reps N, --quick (3), --full (9)
    part1()
    part2()
