"""Reduction of observed magnitudes: emission times and unit geocentric distance.

Common practice in rotation-period work (Harris et al. 1989, Icarus 77, 171): times are corrected
for light travel, t_emit = t − Δ/c, so rotational phase is counted at the body, and magnitudes
are reduced to unit distance from the observer, m − 5 log10 Δ. What remains of the distance law,
K1 log10 r, is fitted; a phase-law term, if the caller has one, is subtracted as given.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from planner.core.constants import C_AU_PER_DAY
from planner.lightcurve.points import LightCurvePoints

MIN_PER_DAY = 1440.0


def light_time_minutes(obs_dist_au: np.ndarray) -> np.ndarray:
    """One-way light time Δ/c in minutes (c = 299 792 458 m/s, 1 au = 149 597 870 700 m, IAU 2012 B2)."""
    return np.asarray(obs_dist_au, dtype=float) / C_AU_PER_DAY * MIN_PER_DAY


def emission_time_jd(times_jd: np.ndarray, light_time_minutes: np.ndarray) -> np.ndarray:
    """Time the light left the body: t − τ (Julian dates, τ in minutes)."""
    return np.asarray(times_jd, dtype=float) - np.asarray(light_time_minutes, dtype=float) / MIN_PER_DAY


def unit_distance_mag(mag: np.ndarray, obs_dist_au: np.ndarray, phase_term_mag: np.ndarray | None = None) -> np.ndarray:
    """m − 5 log10 Δ (minus the phase-law term when given): the magnitude at Δ = 1 au."""
    out = np.asarray(mag, dtype=float) - 5.0 * np.log10(np.asarray(obs_dist_au, dtype=float))
    return out if phase_term_mag is None else out - np.asarray(phase_term_mag, dtype=float)


@dataclass(frozen=True)
class ReducedPoints:
    """What the model fits: emission times (JD), reduced magnitudes, σ, log10 r, labels."""

    emission_jd: np.ndarray
    reduced_mag: np.ndarray
    mag_err: np.ndarray
    log10_r: np.ndarray
    site: np.ndarray
    night: np.ndarray
    light_time_minutes: np.ndarray


def reduce_points(points: LightCurvePoints) -> ReducedPoints:
    """Light-time corrected times and unit-distance magnitudes of every point."""
    tau = points.light_time_minutes if points.light_time_minutes is not None else light_time_minutes(points.obs_dist_au)
    return ReducedPoints(
        emission_jd=emission_time_jd(points.times_jd, tau),
        reduced_mag=unit_distance_mag(points.mag, points.obs_dist_au, points.phase_term_mag),
        mag_err=points.mag_err,
        log10_r=np.log10(points.helio_dist_au),
        site=points.site,
        night=points.night,
        light_time_minutes=np.asarray(tau, dtype=float),
    )
