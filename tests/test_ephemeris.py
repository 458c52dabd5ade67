"""Geometry checked through routes independent of the code's (skyfield time/frames + our Kepler):
astropy's time scales and its own reader of DE421, a separate element-to-vector conversion (Meeus's
Gauss-vector form) and a separate light-time loop; astropy AltAz/HADec frames for pointing."""

from __future__ import annotations

import math
import os
import warnings

import numpy as np
import pytest
from scipy.optimize import brentq

from planner.core.errors import InputError
from planner.inputs.sites import Site
from planner.inputs.targets import Brightness, Orbit, Target
from planner.sky.geometry import (
    KM_PER_ARCSEC_AT_1AU,
    airmass,
    geometry,
    moon_alt_deg,
    safety_warning,
    sun_alt_deg,
)

GM = 0.01720209895**2  # Gauss's constant squared (IAU 1976), au^3/day^2
C_AU_D = 299792.458 * 86400 / 149597870.700  # IAU 2009 c, IAU 2012 B2 au
EPS0 = math.radians(84381.448 / 3600.0)  # IAU 1976 obliquity of J2000


def _de421_path() -> str:
    from skyfield_data import get_skyfield_data_path

    return os.path.join(get_skyfield_data_path(), "de421.bsp")


def _meeus_helio(orbit: Orbit, tdb_jd: float) -> np.ndarray:
    """Heliocentric equatorial J2000 position by Meeus (1998) ch. 33: Gauss vectors (a, A), (b, B), (c, C)
    and x = r a sin(A + ω + ν) etc.; ν from the classical Kepler equation of each conic (brentq)."""
    e, q = orbit.eccentricity, orbit.perihelion_dist_au
    dt = tdb_jd - orbit.perihelion_tdb_jd
    if e < 1.0:
        a = q / (1 - e)
        m = math.remainder(math.sqrt(GM / a**3) * dt, 2 * math.pi)
        big_e = brentq(lambda x: x - e * math.sin(x) - m, m - 1.01, m + 1.01, xtol=1e-15)
        nu = 2 * math.atan(math.sqrt((1 + e) / (1 - e)) * math.tan(big_e / 2))
    else:
        a = q / (e - 1)
        m = math.sqrt(GM / a**3) * dt
        top = math.asinh(abs(m) / (e - 1)) + 1.0
        big_h = brentq(lambda x: e * math.sinh(x) - x - m, -top, top, xtol=1e-15)
        nu = 2 * math.atan(math.sqrt((e + 1) / (e - 1)) * math.tanh(big_h / 2))
    r = q * (1 + e) / (1 + e * math.cos(nu))
    node, incl, peri = (
        math.radians(x) for x in (orbit.ascending_node_deg, orbit.inclination_deg, orbit.arg_perihelion_deg)
    )
    f, g, h = math.cos(node), math.sin(node) * math.cos(EPS0), math.sin(node) * math.sin(EPS0)
    p = -math.sin(node) * math.cos(incl)
    qq = math.cos(node) * math.cos(incl) * math.cos(EPS0) - math.sin(incl) * math.sin(EPS0)
    rr = math.cos(node) * math.cos(incl) * math.sin(EPS0) + math.sin(incl) * math.cos(EPS0)
    out = []
    for u, v in ((f, p), (g, qq), (h, rr)):
        amp, phase = math.hypot(u, v), math.atan2(u, v)
        out.append(r * amp * math.sin(phase + peri + nu))
    return np.array(out)


def _astropy_route(target: Target, times_utc: np.ndarray, site: Site | None):
    """Astrometric RA/Dec (deg), Δ and r (au) by astropy Time + astropy's DE421 reader + our own loop."""
    from astropy import units as u
    from astropy.coordinates import EarthLocation, get_body_barycentric, get_body_barycentric_posvel
    from astropy.time import Time
    from astropy.utils import iers

    eph = _de421_path()
    with warnings.catch_warnings(), iers.conf.set_temp("iers_degraded_accuracy", "ignore"):
        warnings.simplefilter("ignore")  # ERFA's "dubious year" for dates past its leap-second table
        t = Time(times_utc.astype("datetime64[ns]").astype(str).tolist(), scale="utc")
        obs = get_body_barycentric_posvel("earth", t, ephemeris=eph)[0].xyz.to_value(u.au).T
        if site is not None:
            loc = EarthLocation.from_geodetic(
                site.longitude_deg * u.deg, site.latitude_deg * u.deg, site.height_m * u.m
            )
            obs = obs + loc.get_gcrs_posvel(t)[0].xyz.to_value(u.au).T
        tdb = t.tdb.jd1 + t.tdb.jd2
        tau = np.zeros(len(t))
        for _ in range(4):  # Explanatory Supplement (2013) light-time iteration
            sun = get_body_barycentric("sun", t - tau * u.day, ephemeris=eph).xyz.to_value(u.au).T
            helio = np.array([_meeus_helio(target.orbit, x) for x in tdb - tau])
            p = helio + sun - obs
            tau = np.linalg.norm(p, axis=1) / C_AU_D
    ra = np.degrees(np.arctan2(p[:, 1], p[:, 0])) % 360
    dec = np.degrees(np.arcsin(p[:, 2] / np.linalg.norm(p, axis=1)))
    return ra, dec, np.linalg.norm(p, axis=1), np.linalg.norm(helio, axis=1)


def _target(e: float, q: float, tp: float, name="check") -> Target:
    # Two-body motion: these checks compare the geometry pipeline (frames, light time, aberration) with
    # an independent two-body route; the perturbed propagator has its own checks (tests/test_nbody*.py).
    orbit = Orbit(tp, q, e, 33.0, 150.0, 75.0, tp)
    law = Brightness(M1=10.0, K1=10.0, M2=15.0, K2=5.0, phase_coeff_mag_per_deg=0.035)
    return Target(name, "comet", orbit, law, propagation="two-body")


SITE = Site(name="Test ridge", latitude_deg=-30.2, longitude_deg=-70.7, height_m=2200.0)
TIMES = np.datetime64("2034-03-16T00:00", "ns") + np.arange(0, 7 * 24, 7).astype("timedelta64[h]")


@pytest.mark.parametrize("e", [0.6, 1.0 - 5e-7, 1.0 + 5e-7, 6.0])
@pytest.mark.parametrize("site", [None, SITE])
def test_astrometric_position_matches_independent_astropy_route(e, site):
    # Elliptic, near-parabolic (|e - 1| < 1e-6) and hyperbolic (e = 6): <= 0.1" and <= 1e-8 au.
    target = _target(e, 1.1, 2464000.5)
    frame = geometry(target, TIMES, [site] if site else [])[site.name if site else "geocentre"]
    ra, dec, delta, r = _astropy_route(target, TIMES, site)
    d_ra = (frame["ra_deg"].to_numpy() - ra + 180) % 360 - 180
    sep_arcsec = np.hypot(d_ra * np.cos(np.radians(dec)), frame["dec_deg"].to_numpy() - dec) * 3600
    assert sep_arcsec.max() <= 0.1
    assert np.abs(frame["obs_dist_au"].to_numpy() - delta).max() <= 1e-8
    assert np.abs(frame["helio_dist_au"].to_numpy() - r).max() <= 1e-8


def test_meeus_comet_encke_example():
    # Meeus (1998), Astronomical Algorithms, Example 33.a: comet Encke, elements a = 2.2091404,
    # e = 0.8502196, i = 11.94524, Ω = 334.75006, ω = 186.23352 (J2000), T = 1990 Oct 28.54502 TT;
    # on 1990 Oct 6.0 TT: α = 10h34m14.2s, δ = +19°09'31", light time τ = 0.0047606 d (memory; FK5 J2000,
    # geometric light-time corrected, no aberration); confirmed by the independent astropy route above.
    a, e = 2.2091404, 0.8502196
    orbit = Orbit(2448170.5, a * (1 - e), e, 11.94524, 334.75006, 186.23352, 2448193.04502)
    target = Target("2P/Encke", "comet", orbit, propagation="two-body")  # Meeus computes two-body motion
    # 1990 Oct 6.0 TT = 1990 Oct 5 23:58:63.816 UTC (TT − UTC = 56.184 s in 1990).
    t = np.array(["1990-10-05T23:59:03.816"], dtype="datetime64[ns]")
    frame = geometry(target, t)["geocentre"]
    ra_h = frame["ra_deg"].iloc[0] / 15
    assert ra_h == pytest.approx(10 + 34 / 60 + 14.2 / 3600, abs=0.06 / 3600)  # printed to 0.1 s
    assert frame["dec_deg"].iloc[0] == pytest.approx(19 + 9 / 60 + 31 / 3600, abs=0.6 / 3600)  # to 1"
    assert frame["light_time_minutes"].iloc[0] / 1440 == pytest.approx(0.0047606, abs=1e-7)
    ra2, dec2, delta2, _ = _astropy_route(target, t, None)
    assert frame["ra_deg"].iloc[0] == pytest.approx(ra2[0], abs=0.1 / 3600)
    assert frame["obs_dist_au"].iloc[0] == pytest.approx(delta2[0], abs=1e-8)


def test_altaz_and_hour_angle_match_astropy_frames():
    # Independent route: astropy AltAz (pressure 0 = airless, like our alt_true_deg; the refracted alt_deg
    # is checked in test_refraction.py) and HADec frames, with IERS
    # tables from astropy-iers-data (a 2024 date they cover). Tolerance 1": we neglect polar motion
    # (<= 0.5"), solar light deflection (<= 0.02" here) and use IAU 2000B nutation (~1 mas).
    from astropy import units as u
    from astropy.coordinates import ICRS, AltAz, CartesianRepresentation, EarthLocation, HADec, SkyCoord
    from astropy.time import Time

    target = _target(1.8, 1.0, 2460420.5)
    times = np.datetime64("2024-04-20T00:00", "ns") + np.arange(0, 48, 3).astype("timedelta64[h]")
    frame = geometry(target, times, [SITE])[SITE.name]
    loc = EarthLocation.from_geodetic(SITE.longitude_deg * u.deg, SITE.latitude_deg * u.deg, SITE.height_m * u.m)
    t = Time(times.astype(str).tolist(), scale="utc")
    # Barycentric target at the retarded time from our geometry (Δ, RA/Dec) + astropy's observer position:
    # astropy applies its own parallax, aberration, precession-nutation and Earth rotation.
    from astropy.coordinates import get_body_barycentric

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        obs = get_body_barycentric("earth", t, ephemeris=_de421_path()).xyz.to_value(u.au).T
        obs = obs + loc.get_gcrs_posvel(t)[0].xyz.to_value(u.au).T
    ra, dec = np.radians(frame["ra_deg"]), np.radians(frame["dec_deg"])
    dist = frame["obs_dist_au"].to_numpy()
    p = np.stack([np.cos(dec) * np.cos(ra), np.cos(dec) * np.sin(ra), np.sin(dec)], axis=1) * dist[:, None]
    bary = (p + obs).T
    coord = SkyCoord(ICRS(CartesianRepresentation(bary * u.au)))
    altaz = coord.transform_to(AltAz(obstime=t, location=loc, pressure=0 * u.hPa))
    d_alt = (frame["alt_true_deg"].to_numpy() - altaz.alt.deg) * 3600
    d_az = ((frame["az_deg"].to_numpy() - altaz.az.deg + 180) % 360 - 180) * 3600 * np.cos(altaz.alt.rad)
    assert np.abs(d_alt).max() < 1.0 and np.abs(d_az).max() < 1.0
    hadec = coord.transform_to(HADec(obstime=t, location=loc, pressure=0 * u.hPa))
    d_ha_s = ((frame["hour_angle_h"].to_numpy() - hadec.ha.hour + 12) % 24 - 12) * 3600
    assert np.abs(d_ha_s * 15 * np.cos(hadec.dec.rad)).max() < 1.0


def test_sun_and_moon_columns_match_astropy_and_astroplan():
    # Sun altitude vs astropy get_body('sun') in AltAz (we ignore the Sun's aberration and light time,
    # ≈ 20"); Moon illumination vs astroplan.moon_illumination (Meeus 1998, ch. 48), which is geocentric
    # while ours is topocentric: the Moon's parallax (<= 1°) moves the fraction by <= 0.009.
    moon_illumination = pytest.importorskip(
        "astroplan", reason="astroplan (optional reference library) is not installed"
    ).moon_illumination
    from astropy import units as u
    from astropy.coordinates import AltAz, EarthLocation, get_body
    from astropy.time import Time

    times = np.datetime64("2024-04-20T00:00", "ns") + np.arange(0, 48, 2).astype("timedelta64[h]")
    frame = geometry(_target(1.8, 1.0, 2460420.5), times, [SITE])[SITE.name]
    t = Time(times.astype(str).tolist(), scale="utc")
    loc = EarthLocation.from_geodetic(SITE.longitude_deg * u.deg, SITE.latitude_deg * u.deg, SITE.height_m * u.m)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        frame_altaz = AltAz(obstime=t, location=loc, pressure=0 * u.hPa)
        sun = get_body("sun", t, loc).transform_to(frame_altaz)
        moon = get_body("moon", t, loc).transform_to(frame_altaz)
        illum = moon_illumination(t)
    assert np.abs(frame["sun_alt_deg"].to_numpy() - sun.alt.deg).max() < 40 / 3600
    assert np.abs(frame["moon_alt_deg"].to_numpy() - moon.alt.deg).max() < 60 / 3600
    assert np.abs(frame["moon_illum"].to_numpy() - illum).max() < 0.01
    # Moon–target separation by astropy's SkyCoord.separation (Vincenty formula); astropy's Moon is
    # apparent (aberration ≈ 20") and ours geometric, hence 0.01°.
    from astropy.coordinates import SkyCoord

    tgt = SkyCoord(frame["ra_deg"].to_numpy() * u.deg, frame["dec_deg"].to_numpy() * u.deg)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        moon_gcrs = get_body("moon", t, loc)
        sep = SkyCoord(moon_gcrs.ra, moon_gcrs.dec).separation(tgt).deg
    assert np.abs(frame["moon_sep_deg"].to_numpy() - sep).max() < 0.01
    assert np.allclose(sun_alt_deg(SITE, times), frame["sun_alt_deg"], atol=1e-9)
    assert np.allclose(moon_alt_deg(SITE, times), frame["moon_alt_deg"], atol=1e-9)


def test_phase_angle_elongation_and_sunward_pa_by_independent_formulas():
    # Law of cosines in the Sun–Earth–target triangle (r, Δ, R); position angle of the Sun by astropy's
    # SkyCoord.position_angle (spherical trigonometry).
    from astropy import units as u
    from astropy.coordinates import SkyCoord

    from planner.sky.skydata import planets, utc_times

    frame = geometry(_target(2.5, 1.2, 2464000.5), TIMES)["geocentre"]
    st = utc_times(TIMES)
    sun = planets()["earth"].at(st).observe(planets()["sun"])
    sra, sdec, big_r = sun.radec()
    r, delta = frame["helio_dist_au"].to_numpy(), frame["obs_dist_au"].to_numpy()
    phase = np.degrees(np.arccos((r**2 + delta**2 - big_r.au**2) / (2 * r * delta)))
    elong = np.degrees(np.arccos((big_r.au**2 + delta**2 - r**2) / (2 * big_r.au * delta)))
    assert np.abs(frame["phase_angle_deg"].to_numpy() - phase).max() < 1e-3
    assert np.abs(frame["solar_elong_deg"].to_numpy() - elong).max() < 1e-2
    tgt = SkyCoord(frame["ra_deg"].to_numpy() * u.deg, frame["dec_deg"].to_numpy() * u.deg)
    sun_c = SkyCoord(sra._degrees * u.deg, sdec.degrees * u.deg)
    pa = tgt.position_angle(sun_c).deg
    assert np.abs((frame["sunward_pa_deg"].to_numpy() - pa + 180) % 360 - 180).max() < 0.01


def test_sky_motion_matches_finite_differences():
    # Numerical derivative of the astrometric RA/Dec over ±30 s (an independent route to the rates).
    target = _target(2.5, 1.2, 2464000.5)
    t = np.array(["2034-03-19T05:00"], dtype="datetime64[ns]")
    step = np.timedelta64(30, "s")
    three = geometry(target, np.array([t[0] - step, t[0], t[0] + step]))["geocentre"]
    dra = ((three["ra_deg"].iloc[2] - three["ra_deg"].iloc[0] + 180) % 360 - 180) * 3600
    dra *= math.cos(math.radians(three["dec_deg"].iloc[1]))
    ddec = (three["dec_deg"].iloc[2] - three["dec_deg"].iloc[0]) * 3600
    assert three["ra_rate_arcsec_per_min"].iloc[1] == pytest.approx(dra, rel=1e-5)
    assert three["dec_rate_arcsec_per_min"].iloc[1] == pytest.approx(ddec, rel=1e-5)
    assert three["motion_arcsec_per_min"].iloc[1] == pytest.approx(math.hypot(dra, ddec), rel=1e-5)
    pa = math.degrees(math.atan2(dra, ddec)) % 360
    assert three["motion_pa_deg"].iloc[1] == pytest.approx(pa, abs=1e-3)


def test_phase_angle_bisector_halves_the_phase_angle():
    # Harris et al. (1984), Icarus 57, 251: the bisector makes α/2 with both the heliocentric and the
    # observer-centred directions of the target.
    from planner.sky.geometry import phase_angle_bisector_deg

    helio = np.array([[1.2, -0.4, 0.3]])
    obs_to_target = np.array([[0.3, 0.5, -0.2]])
    lon, lat = phase_angle_bisector_deg(helio, obs_to_target)
    la, lo = math.radians(lat[0]), math.radians(lon[0])
    b_ecl = np.array([math.cos(la) * math.cos(lo), math.cos(la) * math.sin(lo), math.sin(la)])
    rot = np.array([[1, 0, 0], [0, math.cos(EPS0), -math.sin(EPS0)], [0, math.sin(EPS0), math.cos(EPS0)]])
    b = rot @ b_ecl
    a1 = math.degrees(math.acos(b @ helio[0] / np.linalg.norm(helio[0])))
    a2 = math.degrees(math.acos(b @ obs_to_target[0] / np.linalg.norm(obs_to_target[0])))
    phase = math.degrees(
        math.acos(helio[0] @ obs_to_target[0] / np.linalg.norm(helio[0]) / np.linalg.norm(obs_to_target[0]))
    )
    assert a1 == pytest.approx(phase / 2, abs=1e-9) and a2 == pytest.approx(phase / 2, abs=1e-9)


def test_km_per_arcsec_iau_2012():
    # IAU 2012 Resolution B2: 1 au = 149 597 870 700 m, so 1" at 1 au is 725.27 km.
    assert KM_PER_ARCSEC_AT_1AU == pytest.approx(725.27, abs=0.005)
    frame = geometry(_target(2.5, 1.2, 2464000.5), TIMES[:3])["geocentre"]
    assert np.allclose(frame["km_per_arcsec"], 725.27 * frame["obs_dist_au"], rtol=1e-5)


def test_airmass_kasten_young():
    # Kasten & Young (1989), Applied Optics 28, 4735: X(90°) = 1.000, X(30°) ≈ 1.994, X(0°) ≈ 37.9
    # (values computed from their formula, see docs/references); below ~60° zenith angle the
    # plane-parallel sec z is within 0.3% (Young 1994, Applied Optics 33, 1108; common practice).
    assert airmass(90.0) == pytest.approx(1.000, abs=1e-3)
    assert airmass(30.0) == pytest.approx(1.994, abs=2e-3)
    assert airmass(0.0) == pytest.approx(37.9, abs=0.1)
    alt = np.linspace(30, 90, 61)
    assert np.allclose(airmass(alt), 1 / np.sin(np.radians(alt)), rtol=3e-3)
    assert np.isnan(airmass(-1.0))
    assert np.all(np.diff(airmass(np.linspace(0, 90, 91))) < 0)


def test_low_elongation_is_flagged_with_a_caution():
    # A target placed close to the Sun in the sky (elongation ~ 20°) on the demo dates.
    from planner.sky.kepler import orbit_from_state
    from planner.sky.skydata import planets, utc_times

    st = utc_times(TIMES[:1])
    earth = planets()["earth"].at(st).position.au[:, 0] - planets()["sun"].at(st).position.au[:, 0]
    pos = -earth * 0.3 + np.array([0.0, 0.0, 0.1])
    vel = np.array([0.0, 0.02, 0.0])
    orbit = orbit_from_state(pos, vel, float(np.atleast_1d(st.tdb)[0]))
    frames = geometry(Target("near sun", "comet", orbit), TIMES[:3], min_solar_elong_deg=40.0)
    frame = frames["geocentre"]
    assert frame["solar_elong_deg"].max() < 40.0 and frame["low_solar_elong"].all()
    msg = safety_warning(frames)
    assert msg and "blind" in msg and "40" in msg
    assert safety_warning(geometry(Target("far", "comet", orbit), TIMES[:3], min_solar_elong_deg=1.0)) is None


def test_several_sites_give_one_frame_each_and_times_outside_de421_fail():
    sites = [
        SITE,
        Site(name="North", latitude_deg=19.8, longitude_deg=-155.5, height_m=4200.0, timezone="Pacific/Honolulu"),
    ]
    frames = geometry(_target(2.5, 1.2, 2464000.5), TIMES, sites)
    assert list(frames) == ["Test ridge", "North"]
    assert all(len(f) == len(TIMES) for f in frames.values())
    with pytest.raises(InputError, match="DE421"):
        geometry(_target(2.5, 1.2, 2464000.5), np.array(["2060-01-01"], dtype="datetime64[ns]"))
