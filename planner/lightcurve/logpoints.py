"""A light curve from an observation log: the rows with a magnitude, their σ, labels and geometry.

Used by ``phasewise fit`` and by a re-plan from a log with magnitudes (planner.pipeline); both then
call :func:`planner.lightcurve.fit.fit_light_curve` on the points. Reads the bundled DE421 through
the ephemeris (like :mod:`planner.lightcurve.geometry`), no other file.

* σ per point: the log's ``mag_err``, else the instrument model of the point's site, else a
  fallback (:func:`planner.photometry.frames.log_mag_err`, the rule ``check`` follows).
* Zero-point groups: the site, or ``site [band]`` when one site logs several bands (a colour
  difference is then one more zero point; no colour term is fitted).
* Nights: the log's ``night`` column; else the local evening date at a site with a known time zone
  (local time minus 12 h: nights run from local noon to local noon); else a new night after a gap
  longer than 6 h (:func:`planner.lightcurve.points.nights_from_gaps`).
* Geometry: topocentric for sites with a site file, geocentric otherwise (light time differs by at
  most 21 ms, Δ by one Earth radius).
* Phase law: when the target's law has a phase term (the nuclear magnitude's β α, or the H,G phase
  function of Bowell et al. 1989), it is subtracted so the fit sees the rotation and the distance law.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from planner.core.errors import InputError
from planner.core.timegrid import iso_utc, to_jd_utc
from planner.inputs.obslog import ObservationLog
from planner.inputs.sites import Site
from planner.inputs.targets import Target
from planner.lightcurve.fading import EXPECTED_K1
from planner.lightcurve.geometry import point_geometry
from planner.lightcurve.points import LightCurvePoints, light_curve_points, nights_from_gaps
from planner.photometry.frames import log_mag_err
from planner.sky.brightness import LAW_HG, LAW_NUCLEAR, LAW_TOTAL, law_name, predicted_mag

#: Where the expected K1 came from (``input.expected_k1_source``).
K1_FROM_TARGET, K1_FROM_OPTION, K1_DEFAULT = "target", "option", "default"
#: Label of points whose log gives no site.
NO_SITE = "(no site)"
#: σ (mag) of a point when neither the log nor an instrument model gives one (as ``check``'s --mag-err).
FALLBACK_MAG_ERR = 0.02


@dataclass(frozen=True)
class LogLightCurve:
    """The points of a log's magnitudes and what was assumed in making them."""

    points: LightCurvePoints
    times_utc: np.ndarray  #: observed (not light-time corrected), same order as the points
    rows: np.ndarray  #: data-row number of each point in the log
    geometry_from: dict[str, str]  #: zero-point group → "topocentric" or "geocentre"
    mag_err_sources: dict[str, int]
    bands: list[str]
    phase_law: str | None  #: the law whose phase term was removed, or None
    rows_without_mag: int
    lost_rows: int
    log_path: str
    target_name: str
    notes: list[str] = field(default_factory=list)

    def input_dict(self) -> dict:
        """The ``input`` object of the fit's JSON (the keys of ``phasewise check``'s, plus the fit's own)."""
        pts = self.points
        order = np.argsort(self.times_utc, kind="stable")
        t = self.times_utc[order]
        names, counts = np.unique(pts.site.astype(str), return_counts=True)
        return {
            "log": self.log_path,
            "target": self.target_name,
            "n_times": int(pts.size),
            "first_utc": iso_utc(t[:1], seconds=True)[0],
            "last_utc": iso_utc(t[-1:], seconds=True)[0],
            "span_h": float(np.ptp(pts.times_jd) * 24.0),
            "sites": {str(n): int(c) for n, c in zip(names, counts, strict=True)},
            "median_mag_err": float(np.median(pts.mag_err)),
            "mag_err_sources": dict(self.mag_err_sources),
            "bands": list(self.bands),
            "geometry": dict(self.geometry_from),
            "phase_law_removed": self.phase_law,
            "rows_without_mag": self.rows_without_mag,
            "lost_rows": self.lost_rows,
            "notes": list(self.notes),
        }


def expected_k1(target: Target | None, option: float | None) -> tuple[float, str]:
    """The K1 the fading is measured against: the target's own when its law is the comet total
    magnitude (M1, K1), else ``option``, else 10 (brightness ∝ r⁻⁴, common practice)."""
    if target is not None and law_name(target.kind, target.brightness) == LAW_TOTAL:
        return float(target.brightness.K1), K1_FROM_TARGET
    if option is not None:
        return float(option), K1_FROM_OPTION
    return EXPECTED_K1, K1_DEFAULT


def phase_term_mag(target: Target, phase_angle_deg: np.ndarray) -> tuple[np.ndarray | None, str | None]:
    """The target law's phase term at each phase angle (0 at α = 0), and the law's name; (None, None)
    for laws without one (the comet total magnitude)."""
    law = law_name(target.kind, target.brightness)
    if law not in (LAW_NUCLEAR, LAW_HG):
        return None, None
    alpha = np.asarray(phase_angle_deg, dtype=float)
    at, _ = predicted_mag(target.kind, target.brightness, 1.0, 1.0, alpha)
    zero, _ = predicted_mag(target.kind, target.brightness, 1.0, 1.0, np.zeros_like(alpha))
    return at - zero, law


def _evening_dates(times_utc: np.ndarray, tz_name: str) -> np.ndarray:
    """Local date of the evening each time belongs to (local time minus 12 h), as ISO strings."""
    local = pd.DatetimeIndex(times_utc).tz_localize("UTC").tz_convert(tz_name) - pd.Timedelta(hours=12)
    return np.array(local.strftime("%Y-%m-%d"), dtype=object)


def _groups(site: np.ndarray, band: np.ndarray) -> np.ndarray:
    """Zero-point group of each point: the site, or ``site [band]`` where one site logs several bands."""
    out = site.copy()
    for name in dict.fromkeys(site):
        sel = site == name
        if len(set(band[sel])) > 1:
            out[sel] = [f"{name} [{b or '?'}]" for b in band[sel]]
    return out


def log_light_curve(
    log: ObservationLog,
    target: Target,
    sites: Sequence[Site] = (),
    *,
    site_names: np.ndarray | None = None,
    fallback_mag_err: float = FALLBACK_MAG_ERR,
    phase_law: bool = True,
) -> LogLightCurve:
    """The light curve of ``log``'s rows with a magnitude (module docstring for every rule).

    ``site_names`` replaces the log's site column (e.g. the one ``--site`` of a log without one);
    sites the log names but ``sites`` does not describe are observed from the geocentre.
    """
    have = log.has_mag
    if not have.any():
        raise InputError(
            log.path, "mag", "no observed row has a magnitude (add a mag column: the measured magnitude of each point)"
        )
    idx = np.flatnonzero(have)
    times = log.times_utc[idx]
    names = log.site_or(NO_SITE) if site_names is None else np.asarray(site_names, dtype=object)
    site = np.array([str(s) or NO_SITE for s in names[idx]], dtype=object)
    band = np.full(idx.size, "", dtype=object) if log.band is None else log.band[idx].astype(object)
    by_name = {s.name: s for s in sites}
    err, sources = log_mag_err(
        target,
        times,
        site,
        [s for s in sites if s.name in set(site)],
        logged_mag_err=None if log.mag_err is None else log.mag_err[idx],
        exposure_s=None if log.exposure_s is None else log.exposure_s[idx],
        fallback_mag_err=fallback_mag_err,
    )
    night = np.array([None if n is None else n.isoformat() for n in (log.night or [None] * have.size)], dtype=object)
    night = night[idx]
    for name in dict.fromkeys(site):
        sel = (site == name) & np.array([n is None for n in night])
        if sel.any() and name in by_name:
            night[sel] = _evening_dates(times[sel], by_name[name].timezone)
    gaps = np.array([n is None for n in night])
    if gaps.any():
        night[gaps] = nights_from_gaps(to_jd_utc(times[gaps]), site[gaps])
    geo = point_geometry(target, times, site, [by_name[s] for s in dict.fromkeys(site) if s in by_name])
    term, law = phase_term_mag(target, geo["phase_angle_deg"]) if phase_law else (None, None)
    groups = _groups(site, band)
    points = light_curve_points(
        times,
        log.mag[idx],
        err,
        groups,
        night,
        geo["obs_dist_au"],
        geo["helio_dist_au"],
        phase_angle_deg=geo["phase_angle_deg"],
        light_time_minutes=geo["light_time_minutes"],
        pab_lon_deg=geo["pab_lon_deg"],
        pab_lat_deg=geo["pab_lat_deg"],
        phase_term_mag=term,
        source=log.path,
    )
    geometry_from = {
        str(g): ("topocentric" if s in by_name else "geocentre")
        for g, s in dict(zip(groups, site, strict=True)).items()
    }
    notes = []
    if any(v == "geocentre" for v in geometry_from.values()):
        away = sorted(g for g, v in geometry_from.items() if v == "geocentre")
        notes.append(
            f"geometry from the geocentre for {', '.join(away)} (no site file): light time within 21 ms, "
            "Δ within one Earth radius"
        )
    return LogLightCurve(
        points=points,
        times_utc=times,
        rows=log.rows[idx],
        geometry_from=geometry_from,
        mag_err_sources=sources,
        bands=sorted({str(b) for b in band if b}),
        phase_law=law,
        rows_without_mag=int((~have).sum()),
        lost_rows=len(log.lost),
        log_path=log.path,
        target_name=target.name,
        notes=notes,
    )
