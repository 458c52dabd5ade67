"""When is two-body propagation not good enough? Close approaches to the Earth and Jupiter, and distance
from the osculation epoch, with the error two-body would make over the span.

The error is measured, not estimated: the largest angle, as seen from the geocentre, between the
two-body position (:func:`planner.sky.kepler.propagate`) and the perturbed one
(:func:`planner.sky.nbody.propagate_perturbed`) over the span. Light time is left out of both directions
(it shifts them alike, to second order in the difference).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.optimize import minimize_scalar

from planner.inputs.targets import Orbit
from planner.sky.kepler import propagate
from planner.sky.nbody import body_states_au, perturbed_path
from planner.sky.nongrav import NonGrav

#: Warn when the target comes closer than this to the Earth (au).
EARTH_WARN_AU = 0.1
#: Warn when the target comes closer than this to Jupiter (au).
JUPITER_WARN_AU = 0.5
#: Warn when the span reaches further than this from the osculation epoch (days).
EPOCH_WARN_D = 100.0
#: Epochs sampled across the span for the distances and the two-body error (plus the integrator's knots).
SAMPLES = 2001


@dataclass(frozen=True)
class ApproachReport:
    """Close approaches over a span and what two-body propagation would get wrong there."""

    t_start_tdb: float
    t_stop_tdb: float
    min_earth_dist_au: float
    min_earth_tdb_jd: float
    min_jupiter_dist_au: float
    min_jupiter_tdb_jd: float
    max_days_from_epoch: float
    twobody_error_arcsec: float
    twobody_error_tdb_jd: float
    warnings: tuple[str, ...]


def format_angle(arcsec: float) -> str:
    """An angle in the unit that reads best: 0.4″, 12″, 3.2′, 1.5°."""
    if arcsec < 60.0:
        return f"{arcsec:.2g} arcsec" if arcsec < 10 else f"{arcsec:.0f} arcsec"
    if arcsec < 3600.0:
        return f"{arcsec / 60.0:.1f} arcmin"
    return f"{arcsec / 3600.0:.2f} deg"


def _closest(dist_au, t_grid: np.ndarray, d_grid: np.ndarray) -> tuple[float, float]:
    """Minimum of a distance function: the grid's best sample, refined by a bounded scalar search."""
    k = int(np.argmin(d_grid))
    lo = t_grid[max(k - 1, 0)]
    hi = t_grid[min(k + 1, t_grid.size - 1)]
    if hi > lo:
        res = minimize_scalar(
            lambda t: float(dist_au(np.array([t]))[0]), bounds=(lo, hi), method="bounded", options={"xatol": 1e-7}
        )
        if res.fun < d_grid[k]:
            return float(res.fun), float(res.x)
    return float(d_grid[k]), float(t_grid[k])


def close_approach_report(
    orbit: Orbit,
    t_start_tdb: float,
    t_stop_tdb: float,
    nongrav: NonGrav | None = None,
    earth_warn_au: float = EARTH_WARN_AU,
    jupiter_warn_au: float = JUPITER_WARN_AU,
    epoch_warn_d: float = EPOCH_WARN_D,
) -> ApproachReport:
    """Minimum distances to the Earth and Jupiter over [t_start, t_stop] (TDB JD), the span's distance
    from the osculation epoch, and the largest two-body error seen from the geocentre; warnings as
    one-line plain-text strings."""
    path = perturbed_path(orbit, t_start_tdb, t_stop_tdb, nongrav)
    knots = path.knots_tdb_jd[(path.knots_tdb_jd >= t_start_tdb) & (path.knots_tdb_jd <= t_stop_tdb)]
    t = np.unique(np.concatenate([np.linspace(t_start_tdb, t_stop_tdb, SAMPLES), knots]))

    def rel_au(body: str, tt: np.ndarray) -> np.ndarray:
        pos, _ = body_states_au(("sun", body), tt)
        helio, _ = path.state(tt)
        return helio + pos[:, 0] - pos[:, 1]

    def dist(body: str):
        return lambda tt: np.linalg.norm(rel_au(body, tt), axis=1)

    d_earth, t_earth = _closest(dist("earth"), t, dist("earth")(t))
    d_jup, t_jup = _closest(dist("jupiter"), t, dist("jupiter")(t))

    geo_perturbed = rel_au("earth", t)
    two_helio, _ = propagate(orbit, t)
    pos, _ = body_states_au(("sun", "earth"), t)
    geo_twobody = two_helio + pos[:, 0] - pos[:, 1]
    sep = (
        np.degrees(
            np.arctan2(
                np.linalg.norm(np.cross(geo_perturbed, geo_twobody), axis=1),
                np.einsum("ij,ij->i", geo_perturbed, geo_twobody),
            )
        )
        * 3600.0
    )
    k = int(np.argmax(sep))
    err_arcsec, err_t = float(sep[k]), float(t[k])
    days_out = float(max(abs(t_start_tdb - orbit.epoch_tdb_jd), abs(t_stop_tdb - orbit.epoch_tdb_jd)))

    offset = f"two-body positions would be off by up to {format_angle(err_arcsec)} (JD {err_t:.2f} TDB)"
    warnings = []
    if d_earth < earth_warn_au:
        warnings.append(f"passes {d_earth:.4f} au from the Earth (JD {t_earth:.3f} TDB); {offset}")
    if d_jup < jupiter_warn_au:
        warnings.append(f"passes {d_jup:.2g} au from Jupiter (JD {t_jup:.2f} TDB); {offset}")
    if days_out > epoch_warn_d:
        warnings.append(f"reaches {days_out:.0f} days from the elements' epoch; {offset}")
    return ApproachReport(
        float(t_start_tdb),
        float(t_stop_tdb),
        d_earth,
        t_earth,
        d_jup,
        t_jup,
        days_out,
        err_arcsec,
        err_t,
        tuple(warnings),
    )
