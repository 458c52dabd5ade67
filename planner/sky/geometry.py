"""Geometry of a target seen from the geocentre or from sites: one array expression per quantity.

Route (Explanatory Supplement to the Astronomical Almanac, 3rd ed., ch. 7):

1. Sun, Earth and Moon barycentric positions and velocities from DE421 (``skydata.planets()``); site
   positions from skyfield's WGS84 model (ITRS → GCRS with skyfield's Earth-rotation model, no
   polar motion).
2. The target's heliocentric state (``planner.sky.propagation.target_state``: integrated under the
   planets and the Moon, or two-body on request), taken at the retarded time t − τ, with τ the light
   time solved by fixed-point iteration (one propagation, then a third-order Taylor step back by τ;
   each site then shifts by its own small τ difference using the target's velocity, exact to far
   below a milliarcsecond).
3. Astrometric RA/Dec: the ICRF direction from the observer at t to the target at t − τ (no
   aberration, no light deflection), like a star catalogue position. Apparent RA/Dec of date: that
   direction plus aberration (step 4), rotated by precession and nutation to the true equator and
   equinox of date (where a mount set to the date's coordinates points).
4. Altitude and azimuth: the astrometric vector plus aberration by the observer's barycentric
   velocity (skyfield's relativistic formula), rotated to the local horizon. Gravitational light
   deflection by the Sun (≤ 0.02″ beyond 30° elongation) is neglected; nutation uses IAU 2000B
   (≈ 1 mas from IAU 2000A). ``alt_true_deg`` is this airless altitude; ``alt_deg`` is the apparent one,
   lifted by refraction with the site's air (:mod:`planner.sky.refraction`, Sæmundsson 1986; about
   2.6′ at 20°), or equal to it where the site says ``refraction = false``. Sun and Moon altitudes
   stay geometric (twilight is defined on the Sun's true centre).

Everything is vectorised over epochs; the only Python loop is over sites.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd

from planner.core import units
from planner.core.constants import (
    ARCSEC_PER_RAD,
    C_AU_PER_DAY,
    GM_SUN_AU3_D2,
    KM_PER_ARCSEC_AT_1AU,
    OBLIQUITY_J2000_DEG,
)
from planner.core.errors import InputError
from planner.core.safety import DEFAULT_MIN_SOLAR_ELONG_DEG, low_elongation_note
from planner.inputs.sites import Site
from planner.inputs.targets import Target
from planner.sky.brightness import law_params, predicted_mag
from planner.sky.propagation import target_state
from planner.sky.refraction import site_air, site_apparent_alt_deg
from planner.sky.skydata import planets, utc_times

GEOCENTRE = "geocentre"
MIN_SOLAR_ELONG_DEG = DEFAULT_MIN_SOLAR_ELONG_DEG


# ------------------------------------------------------------------------------- small kernels


def airmass(alt_deg: np.ndarray) -> np.ndarray:
    """Relative optical air mass, Kasten & Young (1989), Applied Optics 28, 4735.

    X(h) = 1 / (sin h + 0.50572 (h + 6.07995°)^−1.6364), h the apparent (refracted) altitude in
    degrees, as phasewise passes it (``alt_deg``). NaN below the horizon (h < 0), where no air mass is
    meaningful for observing. Against the airless altitude, X differs by 0.2 % at 20° and 0.9 % at 10°.
    """
    h = np.asarray(alt_deg, dtype=float)
    with np.errstate(invalid="ignore"):
        x = 1.0 / (np.sin(np.radians(h)) + 0.50572 * (h + 6.07995) ** -1.6364)
    return np.where(h >= 0.0, x, np.nan)


def _norm(v: np.ndarray) -> np.ndarray:
    return np.sqrt(np.einsum("...i,...i->...", v, v))


def _angle_deg(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Angle between vectors (N, 3), robust at 0 and 180° (atan2 of |a×b| and a·b)."""
    return np.degrees(np.arctan2(_norm(np.cross(a, b)), np.einsum("...i,...i->...", a, b)))


def _radec_deg(v: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    ra = np.degrees(np.arctan2(v[:, 1], v[:, 0])) % 360.0
    dec = np.degrees(np.arctan2(v[:, 2], np.hypot(v[:, 0], v[:, 1])))
    return ra, dec


def _sky_basis(p: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Unit vectors toward increasing RA (east) and Dec (north) at the direction of ``p`` (N, 3)."""
    ra = np.arctan2(p[:, 1], p[:, 0])
    dec = np.arctan2(p[:, 2], np.hypot(p[:, 0], p[:, 1]))
    east = np.stack([-np.sin(ra), np.cos(ra), np.zeros_like(ra)], axis=-1)
    north = np.stack([-np.sin(dec) * np.cos(ra), -np.sin(dec) * np.sin(ra), np.cos(dec)], axis=-1)
    return east, north


def _position_angle_deg(v: np.ndarray, east: np.ndarray, north: np.ndarray) -> np.ndarray:
    """Position angle (from north through east, [0, 360)) of the sky-plane component of ``v``."""
    return np.degrees(np.arctan2(np.einsum("...i,...i->...", v, east), np.einsum("...i,...i->...", v, north))) % 360.0


def _to_ecliptic(v: np.ndarray) -> np.ndarray:
    """Equatorial J2000 → ecliptic J2000 (rotation by −ε₀ about x)."""
    eps = np.radians(OBLIQUITY_J2000_DEG)
    c, s = np.cos(eps), np.sin(eps)
    return np.stack([v[:, 0], c * v[:, 1] + s * v[:, 2], -s * v[:, 1] + c * v[:, 2]], axis=-1)


def phase_angle_bisector_deg(helio_au: np.ndarray, obs_to_target_au: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Ecliptic longitude and latitude of the phase-angle bisector (Harris et al. 1984, Icarus 57, 251).

    The bisector is the mean of the unit vectors Sun → target and observer → target.
    """
    b = helio_au / _norm(helio_au)[:, None] + obs_to_target_au / _norm(obs_to_target_au)[:, None]
    ecl = _to_ecliptic(b)
    lon = np.degrees(np.arctan2(ecl[:, 1], ecl[:, 0])) % 360.0
    lat = np.degrees(np.arctan2(ecl[:, 2], np.hypot(ecl[:, 0], ecl[:, 1])))
    return lon, lat


# ------------------------------------------------------------------------------------ the frame


class _SkyAtTimes:
    """Sun, Earth and Moon states for one time grid (read once, shared by every site)."""

    def __init__(self, times_utc: np.ndarray) -> None:
        from skyfield.nutationlib import iau2000b_radians

        self.times_utc = np.atleast_1d(np.asarray(times_utc, dtype="datetime64[ns]"))
        self.t = utc_times(self.times_utc)
        # IAU 2000B nutation (≈ 1 mas from 2000A) is plenty for pointing and costs far less.
        self.t._nutation_angles_radians = iau2000b_radians(self.t)
        self.tdb_jd = np.atleast_1d(self.t.tdb)
        eph = planets()
        earth = eph["earth"].at(self.t)
        sun = eph["sun"].at(self.t)
        self.earth_au = np.atleast_2d(earth.position.au.T)
        self.earth_au_d = np.atleast_2d(earth.velocity.au_per_d.T)
        self.sun_au = np.atleast_2d(sun.position.au.T)
        self.sun_au_d = np.atleast_2d(sun.velocity.au_per_d.T)
        self._eph = eph
        self._moon_au: np.ndarray | None = None

    @property
    def moon_au(self) -> np.ndarray:
        if self._moon_au is None:
            self._moon_au = np.atleast_2d(self._eph["moon"].at(self.t).position.au.T)
        return self._moon_au

    def site_state(self, site: Site) -> tuple[np.ndarray, np.ndarray, object]:
        """Barycentric position and velocity of the site (N, 3), and its skyfield position object."""
        from skyfield.api import wgs84

        topo = wgs84.latlon(site.latitude_deg, site.longitude_deg, elevation_m=site.height_m)
        gcrs = topo.at(self.t)
        pos = self.earth_au + np.atleast_2d(gcrs.position.au.T)
        vel = self.earth_au_d + np.atleast_2d(gcrs.velocity.au_per_d.T)
        return pos, vel, topo

    def local(self, topo, vectors_au: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """GCRS/ICRF direction vectors (N, 3) → (alt_deg, az_deg), azimuth from north through east."""
        from skyfield.functions import mxv

        rot = topo.rotation_at(self.t)
        if rot.ndim == 2:
            rot = rot[:, :, None]
        loc = mxv(rot, vectors_au.T)  # rows: north, east, up (skyfield convention)
        alt = np.degrees(np.arctan2(loc[2], np.hypot(loc[0], loc[1])))
        az = np.degrees(np.arctan2(loc[1], loc[0])) % 360.0
        return np.atleast_1d(alt), np.atleast_1d(az)


def _target_light_time(target: Target, sky: _SkyAtTimes, obs_au: np.ndarray):
    """Heliocentric state at t − τ and τ (days) for an observer at barycentric ``obs_au``.

    One propagation at t; the retarded state comes from the Taylor series of two-body motion to third
    order in τ (r − τv + τ²a/2 − τ³j/6 with a = −GM r/r³ and its derivative j), whose truncation error
    stays below 1e-10 au even for a sungrazer at r = 0.05 au seen from 1 au. The planets' pull left out
    of that step is below 1e-13 au even 0.001 au from the Earth (GM⊕/d² · τ²/2).
    """
    helio, helio_v = target_state(target, sky.tdb_jd)
    r = _norm(helio)[:, None]
    rv = np.einsum("ij,ij->i", helio, helio_v)[:, None]
    acc = -GM_SUN_AU3_D2 * helio / r**3
    jerk = -GM_SUN_AU3_D2 * (helio_v / r**3 - 3.0 * rv * helio / r**5)
    tau = _norm(helio + sky.sun_au - obs_au) / C_AU_PER_DAY
    for _ in range(3):  # fixed point; each pass gains a factor ~v/c
        tt = tau[:, None]
        helio_then = helio - tt * helio_v + 0.5 * tt * tt * acc - tt**3 / 6.0 * jerk
        sun_then = sky.sun_au - tt * sky.sun_au_d
        tau = _norm(helio_then + sun_then - obs_au) / C_AU_PER_DAY
    tt = tau[:, None]
    helio_then = helio - tt * helio_v + 0.5 * tt * tt * acc - tt**3 / 6.0 * jerk
    helio_v_then = helio_v - tt * acc + 0.5 * tt * tt * jerk
    return helio_then, helio_v_then, tau


def geometry(
    target: Target, times_utc: np.ndarray, sites: Sequence[Site] = (), min_solar_elong_deg: float = MIN_SOLAR_ELONG_DEG
) -> dict[str, pd.DataFrame]:
    """Target geometry per site (or at the geocentre when ``sites`` is empty), one row per epoch.

    Columns: see docs/formats.md "Geometry columns". ``low_solar_elong`` flags epochs closer to the
    Sun than ``min_solar_elong_deg`` (a safety caution, not a permission). Each frame's ``attrs`` hold
    ``mag_law``, ``mag_params`` (the law's parameters, planner.sky.brightness.law_params), ``law_band``
    (the band of ``mag_pred``), ``colour_indices`` and ``colour_source`` (``Target.colours()``, for the
    magnitude in an instrument's band), ``target``, ``observer`` and ``min_solar_elong_deg``; a site's
    frame also ``air`` (how its ``alt_deg`` was refracted, in words). ``times_utc`` may be datetime64, astropy ``Time``,
    datetime or ISO text; ``min_solar_elong_deg`` a number of degrees or an angle Quantity.
    """
    times_utc = units.utc_times(times_utc, "times_utc")
    min_solar_elong_deg = units.to_unit(min_solar_elong_deg, "deg", "min_solar_elong_deg")
    names = [s.name for s in sites]
    for site in sites:
        if names.count(site.name) > 1:
            raise InputError(site.source or "sites", "name", f"two sites are both called {site.name!r}")
    sky = _SkyAtTimes(times_utc)
    # One light-time solution for the geocentre; sites differ from it by ≤ 21 ms of light time.
    helio_g, helio_v, tau_g = _target_light_time(target, sky, sky.earth_au)
    target_v_bary = helio_v + sky.sun_au_d
    out: dict[str, pd.DataFrame] = {}
    observers: list[tuple[str, Site | None]] = [(s.name, s) for s in sites] or [(GEOCENTRE, None)]
    for name, site in observers:
        if site is None:
            obs_au, obs_v, topo = sky.earth_au, sky.earth_au_d, None
            helio, tau = helio_g, tau_g
        else:
            obs_au, obs_v, topo = sky.site_state(site)
            # τ_site − τ_geo to first order, then shift the retarded state along the target's velocity.
            p_geo = helio_g + sky.sun_au - tau_g[:, None] * sky.sun_au_d - obs_au
            d_tau = _norm(p_geo) / C_AU_PER_DAY - tau_g
            helio = helio_g - d_tau[:, None] * helio_v
            tau = tau_g + d_tau
        out[name] = _observer_frame(
            target, sky, helio, target_v_bary, tau, obs_au, obs_v, site, topo, min_solar_elong_deg
        )
        out[name].attrs.update(observer=name)
        if site is not None:
            out[name].attrs.update(air=_air_words(site))
    return out


def _air_words(site: Site) -> str:
    """How ``alt_deg`` was made at this site, for table headers."""
    if not site.refraction:
        return "alt airless (refraction = false)"
    pressure, temperature = site_air(site)
    return f"alt apparent (refraction at {pressure:.0f} hPa, {temperature:.0f} °C)"


def _observer_frame(
    target: Target,
    sky: _SkyAtTimes,
    helio: np.ndarray,
    target_v_bary: np.ndarray,
    tau: np.ndarray,
    obs_au: np.ndarray,
    obs_v: np.ndarray,
    site: Site | None,
    topo,
    min_solar_elong_deg: float,
) -> pd.DataFrame:
    sun_then = sky.sun_au - tau[:, None] * sky.sun_au_d
    p = helio + sun_then - obs_au  # astrometric: observer at t → target at t − τ
    delta = _norm(p)
    r = _norm(helio)
    to_sun = sky.sun_au - obs_au
    ra, dec = _radec_deg(p)
    phase = _angle_deg(helio, p)  # angle Sun–target–observer
    elong = _angle_deg(p, to_sun)
    east, north = _sky_basis(p)
    # d/dt of the astrometric vector; (1 − dτ/dt) scales the target's velocity.
    rel_v = target_v_bary - obs_v
    tau_dot = np.einsum("ij,ij->i", p, rel_v) / delta / C_AU_PER_DAY
    p_dot = target_v_bary * (1.0 - tau_dot)[:, None] - obs_v
    rate_east = np.einsum("ij,ij->i", p_dot, east) / delta * ARCSEC_PER_RAD / 1440.0
    rate_north = np.einsum("ij,ij->i", p_dot, north) / delta * ARCSEC_PER_RAD / 1440.0
    mag, law = predicted_mag(target.kind, target.brightness, r, delta, phase)
    pab_lon, pab_lat = phase_angle_bisector_deg(helio, p)
    apparent, of_date = _apparent(sky, p, obs_v, tau)
    ra_app, dec_app = _radec_deg(of_date)
    cols: dict[str, np.ndarray] = {
        "time_utc": sky.times_utc,
        "ra_deg": ra,
        "dec_deg": dec,
        "ra_app_deg": ra_app,
        "dec_app_deg": dec_app,
        "helio_dist_au": r,
        "obs_dist_au": delta,
        "light_time_minutes": tau * 1440.0,
        "phase_angle_deg": phase,
        "solar_elong_deg": elong,
        "low_solar_elong": elong < min_solar_elong_deg,
        "motion_arcsec_per_min": np.hypot(rate_east, rate_north),
        "motion_pa_deg": np.degrees(np.arctan2(rate_east, rate_north)) % 360.0,
        "ra_rate_arcsec_per_min": rate_east,
        "dec_rate_arcsec_per_min": rate_north,
        "sunward_pa_deg": _position_angle_deg(to_sun, east, north),
        "mag_pred": mag,
        "km_per_arcsec": KM_PER_ARCSEC_AT_1AU * delta,
        "pab_lon_deg": pab_lon,
        "pab_lat_deg": pab_lat,
    }
    if site is not None:
        cols.update(_site_columns(sky, site, topo, p, apparent, ra_app / 15.0, obs_au))
    frame = pd.DataFrame(cols)
    colours, colour_source = target.colours()
    frame.attrs.update(
        mag_law=law,
        mag_params=law_params(target.kind, target.brightness),
        law_band=target.brightness.law_band,
        colour_indices=colours,
        colour_source=colour_source,
        target=target.name,
        min_solar_elong_deg=min_solar_elong_deg,
    )
    return frame


def _apparent(sky: _SkyAtTimes, p: np.ndarray, obs_v: np.ndarray, tau: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The astrometric vectors ``p`` (N, 3) with aberration by the observer's velocity (skyfield's
    relativistic formula), in ICRF axes and rotated to the true equator and equinox of date (skyfield's
    precession-nutation matrix ``M``: IAU 2006 precession, IAU 2000B nutation here, frame bias)."""
    from skyfield.functions import mxv
    from skyfield.relativity import add_aberration

    apparent = p.T.copy()
    add_aberration(apparent, obs_v.T, tau)
    of_date = mxv(sky.t.M if sky.t.M.ndim == 3 else sky.t.M[:, :, None], apparent)
    return apparent.T, np.atleast_2d(of_date.T)


def _site_columns(
    sky: _SkyAtTimes, site: Site, topo, p: np.ndarray, apparent: np.ndarray, ra_date_h: np.ndarray, obs_au: np.ndarray
) -> dict[str, np.ndarray]:
    alt_true, az = sky.local(topo, apparent)
    alt = site_apparent_alt_deg(site, alt_true)
    # Hour angle: local apparent sidereal time minus the apparent right ascension of date.
    last_h = np.atleast_1d(topo.lst_hours_at(sky.t))
    hour_angle = (last_h - ra_date_h + 12.0) % 24.0 - 12.0
    to_sun = sky.sun_au - obs_au
    sun_alt, _ = sky.local(topo, to_sun)
    to_moon = sky.moon_au - obs_au
    moon_alt, _ = sky.local(topo, to_moon)
    # Moon's phase angle (Sun–Moon–observer) gives the illuminated fraction (1 + cos i)/2.
    moon_phase = _angle_deg(sky.sun_au - sky.moon_au, obs_au - sky.moon_au)
    return {
        "alt_deg": alt,
        "alt_true_deg": alt_true,
        "az_deg": az,
        "airmass": airmass(alt),
        "hour_angle_h": hour_angle,
        "sun_alt_deg": sun_alt,
        "moon_alt_deg": moon_alt,
        "moon_sep_deg": _angle_deg(p, to_moon),
        "moon_illum": (1.0 + np.cos(np.radians(moon_phase))) / 2.0,
    }


# ----------------------------------------------------------------------- helpers for other modules


def sun_alt_deg(site: Site, times_utc: np.ndarray) -> np.ndarray:
    """Geometric altitude of the Sun's centre at a site (degrees, no refraction), vectorised.

    For twilight searches: −6°, −12°, −18° (Explanatory Supplement). The Sun's light time and
    aberration (≈ 20″) are ignored.
    """
    sky = _SkyAtTimes(times_utc)
    obs_au, _, topo = sky.site_state(site)
    return sky.local(topo, sky.sun_au - obs_au)[0]


def moon_alt_deg(site: Site, times_utc: np.ndarray) -> np.ndarray:
    """Geometric (topocentric) altitude of the Moon's centre at a site, degrees, vectorised."""
    sky = _SkyAtTimes(times_utc)
    obs_au, _, topo = sky.site_state(site)
    return sky.local(topo, sky.moon_au - obs_au)[0]


def safety_warning(frames: dict[str, pd.DataFrame]) -> str | None:
    """The caution line to print when any epoch is closer to the Sun than the frame's limit."""
    for frame in frames.values():
        n = int(frame["low_solar_elong"].sum()) if "low_solar_elong" in frame else 0
        if n:
            limit = frame.attrs.get("min_solar_elong_deg", MIN_SOLAR_ELONG_DEG)
            total = sum(len(f) for f in frames.values())
            n_all = sum(int(f["low_solar_elong"].sum()) for f in frames.values())
            return low_elongation_note(n_all, total, limit)
    return None
