"""Perturbed propagation through close encounters, against published trajectories.

JPL's Horizons trajectories and orbit solutions, and W. Gray's elements for 2011 MD, are transcribed in
tests/data/published_trajectories.toml with the publication beside each. Each check starts from the
published elements on one side of an encounter and compares with what was published on the other
side: 2024 YR4 across its 0.0055-au Earth passage, 2020 QG across its passage 2940 km above the
Earth's surface, 2011 MD on its way in to an 18 650-km passage, and comet Shoemaker-Levy 9 across its
1992 passage 1.4 Jupiter radii from Jupiter's centre. Sky angles are seen from the geocentre.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from planner.core.constants import ARCSEC_PER_RAD, C_AU_PER_DAY, GM_SUN_AU3_D2, OBLIQUITY_J2000_DEG
from planner.core.tomlfile import read_toml
from planner.inputs.targets import Brightness, Orbit, Target
from planner.sky.approach import close_approach_report
from planner.sky.geometry import geometry
from planner.sky.kepler import propagate
from planner.sky.nbody import AU_KM, body_states_au, propagate_perturbed

DATA = Path(__file__).parent / "data"
#: Earth's equatorial radius (IERS/WGS84), km.
EARTH_RADIUS_KM = 6378.137


def _published(name: str) -> dict:
    return read_toml(DATA / "published_trajectories.toml")[name]


def _orbit(d: dict) -> Orbit:
    return Orbit(
        d["epoch_tdb_jd"],
        d["perihelion_dist_au"],
        d["eccentricity"],
        d["inclination_deg"],
        d["ascending_node_deg"],
        d["arg_perihelion_deg"],
        d["perihelion_tdb_jd"],
    )


def _angle_arcsec(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Angle between direction vectors (N, 3), arcsec (atan2 of |a×b| and a·b)."""
    return np.arctan2(np.linalg.norm(np.cross(a, b), axis=1), np.einsum("ij,ij->i", a, b)) * ARCSEC_PER_RAD


def _geocentric_km(helio_km: np.ndarray, tdb_jd: np.ndarray) -> np.ndarray:
    """Geometric geocentric vectors from heliocentric ones at the same instants (DE421 Earth and Sun)."""
    pos, _ = body_states_au(("sun", "earth"), tdb_jd)
    return helio_km - (pos[:, 1] - pos[:, 0]) * AU_KM


def _osculating(r_au: np.ndarray, v_au_d: np.ndarray, t_tdb: float) -> dict[str, float]:
    """Heliocentric osculating elements, ecliptic and equinox J2000, of an elliptic equatorial state.

    Textbook two-body relations (e.g. Danby 1988, Fundamentals of Celestial Mechanics, §6.8): vis-viva
    for a, the Laplace vector for e and ω, the angular momentum for i and Ω, Kepler's equation for M;
    the perihelion time is the one following ``t_tdb`` when M > 180°, the one before it otherwise.
    """
    eps = math.radians(OBLIQUITY_J2000_DEG)
    rot = np.array([[1.0, 0.0, 0.0], [0.0, math.cos(eps), math.sin(eps)], [0.0, -math.sin(eps), math.cos(eps)]])
    r, v = rot @ r_au, rot @ v_au_d
    h = np.cross(r, v)
    node_vec = np.cross([0.0, 0.0, 1.0], h)
    e_vec = np.cross(v, h) / GM_SUN_AU3_D2 - r / np.linalg.norm(r)
    e = float(np.linalg.norm(e_vec))
    a = 1.0 / (2.0 / np.linalg.norm(r) - v @ v / GM_SUN_AU3_D2)
    h_hat = h / np.linalg.norm(h)
    nu = math.atan2(np.cross(e_vec, r) @ h_hat, e_vec @ r)
    ecc_anom = 2.0 * math.atan(math.sqrt((1 - e) / (1 + e)) * math.tan(nu / 2))
    mean_anom = (ecc_anom - e * math.sin(ecc_anom)) % (2 * math.pi)
    n = math.sqrt(GM_SUN_AU3_D2 / a**3)
    to_peri = (2 * math.pi - mean_anom if mean_anom > math.pi else -mean_anom) / n
    return {
        "semimajor_axis_au": a,
        "eccentricity": e,
        "perihelion_dist_au": a * (1 - e),
        "inclination_deg": math.degrees(math.acos(h_hat[2])),
        "ascending_node_deg": math.degrees(math.atan2(node_vec[1], node_vec[0])) % 360.0,
        "arg_perihelion_deg": math.degrees(math.atan2(np.cross(node_vec, e_vec) @ h_hat, node_vec @ e_vec)) % 360.0,
        "mean_anomaly_deg": math.degrees(mean_anom),
        "perihelion_tdb_jd": t_tdb + to_peri,
    }


@pytest.mark.parametrize("name", ["yr4", "qg"])
def test_horizons_elements_match_their_printed_icrf_state(name):
    # Horizons prints each solution twice: ecliptic elements (IAU 1976 obliquity, 84381.448") and the
    # "equivalent ICRF heliocentric cartesian coordinates". Read as our Orbit, the elements must give
    # that state, or every comparison below would start from the wrong place.
    d = _published(name)
    pos, vel = propagate(_orbit(d), np.array([d["epoch_tdb_jd"]]))
    state = np.array(d["icrf_state_au"])
    assert np.abs(pos[0] - state[:3]).max() * AU_KM < 0.01
    assert np.abs(vel[0] - state[3:]).max() * AU_KM / 86400.0 < 1e-8


def test_2024_yr4_across_its_earth_passage():
    # JPL#80 elements at 2025 Mar. 5.0 TDB, integrated back through the Earth passage of 2024 Dec. 25
    # (0.00554 au = 828 800 km from the geocentre at Dec. 25.20 TDB, measured here) to 2024 Aug. 23, and
    # forward eleven months. Measured against JPL's heliocentric states: 6 km at most before the passage,
    # 2.4 km four days before it (0.034 au from the Earth, 0.07"), 15 km eleven months after the epoch;
    # seen from the geocentre never more than 0.07". Two-body from the same elements: 4 100 km to
    # 1 540 000 km, 40" a few days after the epoch, 18' to 54' before the passage.
    d = _published("yr4")
    orbit = _orbit(d)
    states = np.array(d["states"])
    t, jpl_km = states[:, 0], states[:, 1:4]
    jpl_geo = _geocentric_km(jpl_km, t)
    perturbed = propagate_perturbed(orbit, t)[0] * AU_KM
    two_body = propagate(orbit, t)[0] * AU_KM
    assert np.linalg.norm(perturbed - jpl_km, axis=1).max() < 20.0
    assert _angle_arcsec(_geocentric_km(perturbed, t), jpl_geo).max() < 0.2
    before = t < 2460669.0
    assert _angle_arcsec(_geocentric_km(two_body, t), jpl_geo)[before].min() > 15 * 60
    report = close_approach_report(orbit, 2460660.5, 2460680.5)
    assert report.min_earth_dist_au < 0.006
    assert report.warnings and "from the Earth" in report.warnings[0]


def test_2024_yr4_astrometric_direction_through_the_geometry_route():
    # The project's own route (target → planner.sky.geometry, light time included) four and six days
    # either side of the passage, 0.034 and 0.046 au from the Earth. JPL's astrometric direction is
    # built here from its geometric state and velocity: position at t − τ ≈ r − τ v (the neglected
    # τ²a/2 is under 1 m), Sun at t − τ, geocentre at t, τ solved by iteration. Measured: 0.07" and 0.03".
    from astropy.time import Time

    from planner.sky.skydata import no_iers_download

    no_iers_download()
    d = _published("yr4")
    states = np.array(d["states"])
    rows = states[np.isin(states[:, 0], [2460665.5, 2460675.5])]
    t_tdb = rows[:, 0]
    target = Target("2024 YR4", "asteroid", _orbit(d), Brightness(H=23.93, G=0.15))
    times_utc = Time(t_tdb, format="jd", scale="tdb").utc.datetime64
    frame = geometry(target, times_utc)["geocentre"]
    ours = np.radians(np.column_stack([frame["ra_deg"], frame["dec_deg"]]))
    pos, vel = body_states_au(("sun", "earth"), t_tdb)
    helio_au, helio_v = rows[:, 1:4] / AU_KM, rows[:, 4:7] * 86400.0 / AU_KM
    tau = np.zeros_like(t_tdb)
    for _ in range(4):
        vec = helio_au - tau[:, None] * helio_v + pos[:, 0] - tau[:, None] * vel[:, 0] - pos[:, 1]
        tau = np.linalg.norm(vec, axis=1) / C_AU_PER_DAY
    ours_vec = np.column_stack(
        [np.cos(ours[:, 1]) * np.cos(ours[:, 0]), np.cos(ours[:, 1]) * np.sin(ours[:, 0]), np.sin(ours[:, 1])]
    )
    assert _angle_arcsec(ours_vec, vec).max() < 0.2


def test_2020_qg_elements_before_its_passage():
    # JPL#4's elements at 2020 Aug. 17.0 TDB, 0.8 day after the passage, integrated back to May 31.0.
    # JPL's published pre-passage elements are met within their quoted 1-sigma in a, e, i, Ω and M
    # (differences 0.0002 au, 0.00005, 0.0011°, 0.0003°, 0.0008°). ω (0.0122° = 4 sigma) and q
    # (0.000020 au) are not: the Earth's oblateness, which this model leaves out, acts at 1.46 Earth
    # radii. Measured by adding J2 = 1.08263e-3 (IERS Conventions 2010; memory) about the ICRF pole as an
    # extra force in a scratch rebound run of the same integration: it moves ω by −0.0105°, q by
    # −0.000018 au and i by −0.0012°, landing on JPL's 162.01°, 0.99628 au and 5.4727°.
    # Two-body keeps the post-passage orbit: a 1.929 au (26 sigma off), i 4.77°.
    d = _published("qg")
    before = d["before"]
    t0 = before["epoch_tdb_jd"]
    pos, vel = propagate_perturbed(_orbit(d), np.array([t0]))
    ours = _osculating(pos[0], vel[0], t0)
    for key in ("semimajor_axis_au", "eccentricity", "inclination_deg", "ascending_node_deg", "mean_anomaly_deg"):
        value, sigma = before[key]
        assert ours[key] == pytest.approx(value, abs=sigma), key
    assert ours["arg_perihelion_deg"] == pytest.approx(before["arg_perihelion_deg"][0], abs=0.015)
    assert ours["perihelion_dist_au"] == pytest.approx(before["perihelion_dist_au"][0], abs=0.00003)
    pos2, vel2 = propagate(_orbit(d), np.array([t0]))
    two_body = _osculating(pos2[0], vel2[0], t0)
    assert abs(two_body["semimajor_axis_au"] - before["semimajor_axis_au"][0]) > 20 * before["semimajor_axis_au"][1]


def test_2020_qg_passage_height_and_time():
    # "approximately 2950 km" above the surface "at 04:09 UT" (JPL via Wikipedia); "less than 3000 km"
    # (ESA NEOCC). Measured: 9318 km from the geocentre (2940 km above the equatorial radius) at
    # 04:07:36 UTC. The Earth's oblateness left out moves the perigee by well under the 60 km allowed.
    from astropy.time import Time

    d = _published("qg")
    report = close_approach_report(_orbit(d), 2459077.0, 2459078.5)
    assert report.min_earth_dist_au * AU_KM - EARTH_RADIUS_KM == pytest.approx(d["passage"]["altitude_km"], abs=60)
    published_tdb = Time(d["passage"]["utc"], scale="utc").tdb.jd
    assert report.min_earth_tdb_jd == pytest.approx(published_tdb, abs=3 / 1440)


def test_2011_md_second_set_of_elements_from_the_first():
    # Gray's two sets (MPML 25553) come from one Find_Orb fit, osculating at June 26.0 and 27.0 TT. On
    # June 27.0 2011 MD is 0.0013 au from the Earth and its heliocentric osculating perihelion time moves
    # by some 18 days per day; the first set integrated here lands 1.5 s (1.7e-5 d) from the second
    # set's "Aug 10.325120 TT". Two-body keeps the first set's Aug. 19.61585: 9.29 days off.
    second = _published("md_second_set")
    from planner.inputs.targets import load_target

    orbit = load_target(DATA / "2011md-gray.toml").orbit
    t = second["epoch_tdb_jd"]
    pos, vel = propagate_perturbed(orbit, np.array([t]))
    assert _osculating(pos[0], vel[0], t)["perihelion_tdb_jd"] == pytest.approx(second["perihelion_tdb_jd"], abs=1e-4)
    assert abs(orbit.perihelion_tdb_jd - second["perihelion_tdb_jd"]) > 9.0


def _jupiter_equator_to_icrf(tdb_jd: float) -> np.ndarray:
    """Rotation from Jupiter's mean equator and node of date to the ICRF (columns: x, y, z axes).

    Jupiter's pole α₀ = 268.056595 − 0.006499 T, δ₀ = 64.495303 + 0.002413 T (T in Julian centuries
    from J2000; IAU WGCCRE, Archinal et al. 2011, Celest. Mech. Dyn. Astron. 109, 101; memory, the
    same values in independent planetary libraries). x points to the ascending node of the equator on
    the ICRF equator (α₀ + 90°), as Horizons describes its "Body Mean Equator and Node of Date" frame.
    """
    t_cy = (tdb_jd - 2451545.0) / 36525.0
    ra = math.radians(268.056595 - 0.006499 * t_cy)
    dec = math.radians(64.495303 + 0.002413 * t_cy)
    z = np.array([math.cos(dec) * math.cos(ra), math.cos(dec) * math.sin(ra), math.sin(dec)])
    x = np.array([-math.sin(ra), math.cos(ra), 0.0])
    return np.column_stack([x, np.cross(z, x), z])


def test_shoemaker_levy_9_across_its_1992_jupiter_passage():
    # JPL#A38's heliocentric elements at 1994 May 8.0, integrated back 22 months to the hours around
    # the 1992 July 7 passage (JPL: 99 300 km from Jupiter's centre at 20h TDB, 1.4 Jupiter radii).
    # Distance from Jupiter, which needs no frame: within 3 000–6 000 km of JPL's (0.25 % at 1.3 million
    # km; our passage, 93 950 km at 19:41 TDB, comes some 4 minutes early). In 3-D, with Jupiter's pole:
    # 3 200–11 500 km, seen from the Earth (5.94 au away) 0.7"–2.7". Two-body from the same elements:
    # 136 million km from Jupiter, 7.5° away on the sky.
    # Limits of the model, measured in a scratch rebound run: Jupiter's oblateness (J2 = 0.014736 at
    # 71 492 km; memory), left out, moves these positions by 100–9 000 km (up to 1.4") but their
    # distance from Jupiter by under 200 km; the Galilean satellites (inside whose orbits the passage
    # happens) and Jupiter's centre versus the system barycentre used here (≈100–200 km) are left out too.
    d = _published("sl9")
    orbit = _orbit(d)
    rows = np.array(d["jovicentric_km"])
    t = rows[:, 0]
    jpl = rows[:, 1:] @ _jupiter_equator_to_icrf(float(t.mean())).T
    bodies, _ = body_states_au(("sun", "jupiter", "earth"), t)
    sun_to_jupiter = (bodies[:, 1] - bodies[:, 0]) * AU_KM
    earth_to_jupiter = (bodies[:, 1] - bodies[:, 2]) * AU_KM
    ours = propagate_perturbed(orbit, t)[0] * AU_KM - sun_to_jupiter
    two_body = propagate(orbit, t)[0] * AU_KM - sun_to_jupiter
    assert np.abs(np.linalg.norm(ours, axis=1) - np.linalg.norm(rows[:, 1:], axis=1)).max() < 7_000
    assert np.linalg.norm(ours - jpl, axis=1).max() < 15_000
    assert _angle_arcsec(earth_to_jupiter + ours, earth_to_jupiter + jpl).max() < 4.0
    assert _angle_arcsec(earth_to_jupiter + two_body, earth_to_jupiter + jpl).min() > 7 * 3600
