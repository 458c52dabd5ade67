"""The light-curve points a fit takes: times, magnitudes, σ, site and night labels, geometry.

Arrays only (no file access). Bad values raise :class:`planner.core.errors.InputError` naming the
``source`` (the log the points came from), the field and what to fix.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from planner.core.errors import InputError
from planner.core.timegrid import to_jd_utc


@dataclass(frozen=True)
class LightCurvePoints:
    """One row per measurement. ``times_jd`` is the UTC Julian date of mid-exposure as observed
    (light time not removed); geometry is per point: ``obs_dist_au`` Δ, ``helio_dist_au`` r,
    optional ``phase_angle_deg`` α, ``light_time_minutes`` (default Δ/c; 0 for times already at the
    body), phase-angle-bisector
    ecliptic ``pab_lon_deg``/``pab_lat_deg`` (for the synodic drift) and ``phase_term_mag``, a
    phase-law term already evaluated per point (subtracted from the reduced magnitudes)."""

    times_jd: np.ndarray
    mag: np.ndarray
    mag_err: np.ndarray
    site: np.ndarray
    night: np.ndarray
    obs_dist_au: np.ndarray
    helio_dist_au: np.ndarray
    phase_angle_deg: np.ndarray | None = None
    light_time_minutes: np.ndarray | None = None
    pab_lon_deg: np.ndarray | None = None
    pab_lat_deg: np.ndarray | None = None
    phase_term_mag: np.ndarray | None = None
    source: str = "light curve"

    @property
    def size(self) -> int:
        return int(self.times_jd.size)


def _float(values, n: int, name: str, source: str, lowest: str = "") -> np.ndarray:
    """Finite floats, one per point; ``lowest`` "positive" or "non-negative" adds that bound."""
    arr = np.asarray(values, dtype=float)
    arr = np.broadcast_to(arr, (n,)).astype(float) if arr.ndim == 0 else arr.ravel()
    if arr.size != n:
        raise InputError(source, name, f"has {arr.size} values for {n} points")
    bad = ~np.isfinite(arr)
    if lowest == "positive":
        bad |= arr <= 0
    elif lowest == "non-negative":
        bad |= arr < 0
    if np.any(bad):
        i = int(np.flatnonzero(bad)[0])
        raise InputError(source, f"{name} (point {i + 1})", f"{arr[i]!r} must be a {lowest or 'finite'} number")
    return arr


def _labels(values, n: int, name: str, source: str) -> np.ndarray:
    arr = np.array([str(v) for v in np.asarray(values, dtype=object).ravel()], dtype=object)
    if arr.size == 1 and n > 1:
        arr = np.full(n, arr[0], dtype=object)
    if arr.size != n:
        raise InputError(source, name, f"has {arr.size} labels for {n} points")
    return arr


def light_curve_points(
    times,
    mag,
    mag_err,
    site,
    night,
    obs_dist_au,
    helio_dist_au,
    *,
    phase_angle_deg=None,
    light_time_minutes=None,
    pab_lon_deg=None,
    pab_lat_deg=None,
    phase_term_mag=None,
    source: str = "light curve",
) -> LightCurvePoints:
    """Checked :class:`LightCurvePoints`. ``times`` are UTC ``datetime64`` or Julian dates (UTC);
    ``site`` and ``night`` are labels (a single label applies to every point); ``night=None``
    splits each site's series into nights at gaps longer than 6 h (:func:`nights_from_gaps`)."""
    t = np.asarray(times)
    times_jd = to_jd_utc(t) if np.issubdtype(t.dtype, np.datetime64) else t
    times_jd = np.asarray(times_jd, dtype=float).ravel()
    n = times_jd.size
    if n == 0:
        raise InputError(source, "time_utc", "no points to fit")
    times_jd = _float(times_jd, n, "time_utc", source)
    site_l = _labels(site, n, "site", source)
    night_l = nights_from_gaps(times_jd, site_l) if night is None else _labels(night, n, "night", source)
    opt = {}
    for name, values in (
        ("phase_angle_deg", phase_angle_deg),
        ("light_time_minutes", light_time_minutes),
        ("pab_lon_deg", pab_lon_deg),
        ("pab_lat_deg", pab_lat_deg),
        ("phase_term_mag", phase_term_mag),
    ):
        opt[name] = (
            None
            if values is None
            else _float(values, n, name, source, "non-negative" if name == "light_time_minutes" else "")
        )
    if (opt["pab_lon_deg"] is None) != (opt["pab_lat_deg"] is None):
        raise InputError(source, "pab_lon_deg", "give the bisector's longitude and latitude together")
    return LightCurvePoints(
        times_jd=times_jd,
        mag=_float(mag, n, "mag", source),
        mag_err=_float(mag_err, n, "mag_err", source, "positive"),
        site=site_l,
        night=night_l,
        obs_dist_au=_float(obs_dist_au, n, "obs_dist_au", source, "positive"),
        helio_dist_au=_float(helio_dist_au, n, "helio_dist_au", source, "positive"),
        source=source,
        **opt,
    )


def nights_from_gaps(times_jd: np.ndarray, site: np.ndarray, gap_h: float = 6.0) -> np.ndarray:
    """Night labels ``SITE#k`` (k = 1, 2, … per site in time order): a new night starts after
    a gap longer than ``gap_h`` between consecutive points of the same site."""
    t = np.asarray(times_jd, dtype=float).ravel()
    s = np.asarray(site, dtype=object).ravel()
    out = np.empty(t.size, dtype=object)
    for name in dict.fromkeys(s):
        idx = np.flatnonzero(s == name)
        idx = idx[np.argsort(t[idx], kind="stable")]
        k = 1 + np.concatenate([[0], np.cumsum(np.diff(t[idx]) * 24.0 > gap_h)])
        out[idx] = [f"{name}#{j}" for j in k]
    return out


def groups_in_order(*labels: np.ndarray) -> tuple[list[tuple], np.ndarray]:
    """Distinct label tuples in order of first appearance, and each point's group index."""
    keys = list(zip(*(np.asarray(lab, dtype=object).ravel() for lab in labels), strict=True))
    first: dict[tuple, int] = {}
    index = np.empty(len(keys), dtype=np.int64)
    for i, k in enumerate(keys):
        index[i] = first.setdefault(k, len(first))
    return list(first), index
