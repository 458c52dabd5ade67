"""Per-point geometry from the project's own ephemeris: the one part of the fit that is not pure.

It reads the bundled DE421 (through :func:`planner.sky.geometry.geometry`) and returns plain arrays
for :func:`planner.lightcurve.points.light_curve_points`.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from planner.inputs.sites import Site
from planner.inputs.targets import Target
from planner.sky.geometry import GEOCENTRE, geometry

#: Columns of ``ephemeris.geometry`` the fit uses (docs/formats.md, "Geometry columns").
POINT_COLUMNS = ("obs_dist_au", "helio_dist_au", "phase_angle_deg", "light_time_minutes", "pab_lon_deg", "pab_lat_deg")


def point_geometry(
    target: Target, times_utc: np.ndarray, site: np.ndarray | None = None, sites: Sequence[Site] = ()
) -> dict[str, np.ndarray]:
    """Geometry at every point's time: from the point's site when ``sites`` holds a site of that
    name, else from the geocentre. Returns arrays keyed by :data:`POINT_COLUMNS`."""
    t = np.atleast_1d(np.asarray(times_utc, dtype="datetime64[ns]"))
    labels = np.full(t.size, "", dtype=object) if site is None else np.asarray(site, dtype=object)
    by_name = {s.name: s for s in sites}
    out = {name: np.empty(t.size) for name in POINT_COLUMNS}
    for label in dict.fromkeys(labels):
        idx = np.flatnonzero(labels == label)
        known = by_name.get(str(label))
        frames = geometry(target, t[idx], [known] if known is not None else ())
        frame = frames[known.name if known is not None else GEOCENTRE]
        for name in POINT_COLUMNS:
            out[name][idx] = frame[name].to_numpy(dtype=float)
    return out
