"""Which motion a target follows: its heliocentric state at any epochs, and the warnings its span earns.

Targets are integrated under the Sun, the eight planets and the Moon by default
(:mod:`planner.sky.nbody`): one integration per span serves every call (about 0.01–0.05 s for a week to
three months, measured in benchmarks/bench_propagation.py), and it is what near-Earth asteroids during a
close approach and bodies near Jupiter need. ``propagation = "two-body"`` in the target file keeps
Keplerian motion (:mod:`planner.sky.kepler`), the slow/fast twin and the fallback when the elements'
epoch lies outside the bundled DE421. :func:`approach_warnings` says when the choice matters: within
0.1 au of the Earth or 0.5 au of Jupiter, or far from the osculation epoch, with what two-body would be
off by.
"""

from __future__ import annotations

import numpy as np

from planner.inputs.targets import Target
from planner.sky.approach import close_approach_report
from planner.sky.kepler import propagate
from planner.sky.nbody import propagate_perturbed
from planner.sky.skydata import DE421_FIRST_JD, DE421_LAST_JD, utc_times


def uses_perturbed(target: Target) -> bool:
    """True when the target is integrated (its choice, and an epoch inside DE421)."""
    return target.propagation == "perturbed" and DE421_FIRST_JD <= target.orbit.epoch_tdb_jd <= DE421_LAST_JD


def target_state(target: Target, tdb_jd: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Heliocentric equatorial-J2000 position (N, 3) au and velocity (N, 3) au/day at TDB epochs."""
    if uses_perturbed(target):
        return propagate_perturbed(target.orbit, tdb_jd, target.nongrav)
    return propagate(target.orbit, tdb_jd)


def approach_warnings(target: Target, t_start_tdb: float, t_stop_tdb: float) -> list[str]:
    """One-line notes for the span: close approaches, distance from the epoch, and the propagation used."""
    notes = []
    if target.propagation == "perturbed" and not uses_perturbed(target):
        notes.append("the elements' epoch lies outside the bundled DE421 (1900-2053): two-body motion is used")
    if not (DE421_FIRST_JD <= t_start_tdb and t_stop_tdb <= DE421_LAST_JD):
        return notes
    report = close_approach_report(target.orbit, t_start_tdb, t_stop_tdb, target.nongrav)
    used = "integrated under the planets and the Moon" if uses_perturbed(target) else "two-body, as the target asks"
    for w in report.warnings:
        notes.append(f"{target.name} {w}; positions here are {used}")
    return notes


def approach_warnings_utc(target: Target, start_utc: np.datetime64, stop_utc: np.datetime64) -> list[str]:
    """:func:`approach_warnings` for a span given in UTC."""
    tdb = np.atleast_1d(utc_times(np.array([start_utc, stop_utc], dtype="datetime64[ns]")).tdb)
    return approach_warnings(target, float(tdb[0]), float(tdb[-1]))
