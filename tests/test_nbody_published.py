"""Perturbed propagation against published astrometry and close-approach statements.

Observations and orbits are transcribed in tests/data/published_astrometry.toml and
tests/data/2011md-gray.toml, with the circular beside each. The observer's place comes from the MPC's
parallax constants through astropy/erfa (an independent route from the project's skyfield geometry);
the light-time solution is written out here. Astrometric RA/Dec: the ICRF direction from the observer
at the observation time to the target at t − τ, as the Minor Planet Center publishes it.
"""

from __future__ import annotations

import math
import warnings
from pathlib import Path

import numpy as np
import pytest

from planner.core.constants import C_AU_PER_DAY, GM_SUN_AU3_D2
from planner.core.tomlfile import read_toml
from planner.inputs.targets import Orbit, load_target
from planner.sky.approach import close_approach_report
from planner.sky.kepler import propagate
from planner.sky.nbody import AU_KM, body_states_au, propagate_perturbed
from planner.sky.skydata import no_iers_download

DATA = Path(__file__).parent / "data"
#: Earth's equatorial radius (IERS/WGS84), the unit of the MPC's parallax constants.
EARTH_RADIUS_KM = 6378.137


def _published() -> tuple[dict, list[dict]]:
    data = read_toml(DATA / "published_astrometry.toml")
    return data["stations"], data["objects"]


def _orbit(obj: dict) -> Orbit:
    """Asteroid elements (a, e, M at the epoch) → Orbit, perihelion time from n = k a^-3/2 (the MPC's n)."""
    a, e = obj["semimajor_axis_au"], obj["eccentricity"]
    n = math.sqrt(GM_SUN_AU3_D2 / a**3)
    m = math.remainder(math.radians(obj["mean_anomaly_deg"]), 2 * math.pi)
    return Orbit(
        obj["epoch_tdb_jd"],
        a * (1 - e),
        e,
        obj["inclination_deg"],
        obj["ascending_node_deg"],
        obj["arg_perihelion_deg"],
        obj["epoch_tdb_jd"] - m / n,
    )


def _sexagesimal(text: str, scale: float) -> float:
    sign = -1.0 if text.strip().startswith("-") else 1.0
    d, m, s = (abs(float(x)) for x in text.split())
    return sign * scale * (d + m / 60 + s / 3600)


def _topocentric_radec(orbit: Orbit, utc_iso_day: list[tuple[str, float]], station: dict, prop):
    """Astrometric RA/Dec (deg) seen from an MPC station, with the light time solved by iteration."""
    from astropy import units as u
    from astropy.coordinates import EarthLocation
    from astropy.time import Time

    no_iers_download()
    t = Time([d for d, _ in utc_iso_day], scale="utc") + np.array([f for _, f in utc_iso_day]) * u.day
    lon = math.radians(station["longitude_deg"])
    loc = EarthLocation.from_geocentric(
        EARTH_RADIUS_KM * station["rho_cos_phi"] * math.cos(lon),
        EARTH_RADIUS_KM * station["rho_cos_phi"] * math.sin(lon),
        EARTH_RADIUS_KM * station["rho_sin_phi"],
        unit=u.km,
    )
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        site_au = loc.get_gcrs_posvel(t)[0].xyz.to_value(u.km).T / AU_KM
        tdb = t.tdb.jd1 + t.tdb.jd2
    earth = body_states_au(("earth",), tdb)[0][:, 0]
    obs = earth + site_au
    tau = np.zeros_like(tdb)
    for _ in range(4):
        helio, _ = prop(orbit, tdb - tau)
        sun = body_states_au(("sun",), tdb - tau)[0][:, 0]
        vec = helio + sun - obs
        tau = np.linalg.norm(vec, axis=1) / C_AU_PER_DAY
    ra = np.degrees(np.arctan2(vec[:, 1], vec[:, 0])) % 360.0
    dec = np.degrees(np.arcsin(vec[:, 2] / np.linalg.norm(vec, axis=1)))
    return ra, dec


def _residuals_arcsec(obj: dict, station: dict, prop) -> np.ndarray:
    obs = obj["observations"]
    ra, dec = _topocentric_radec(_orbit(obj), [(o[0], o[1]) for o in obs], station, prop)
    ra0 = np.array([_sexagesimal(o[2], 15.0) for o in obs])
    dec0 = np.array([_sexagesimal(o[3], 1.0) for o in obs])
    d_ra = ((ra - ra0 + 180.0) % 360.0 - 180.0) * np.cos(np.radians(dec0))
    return np.hypot(d_ra, dec - dec0) * 3600.0


@pytest.mark.parametrize("name, limit_arcsec", [("2003 AA", 0.5), ("2002 OD20", 0.5), ("2002 AO7", 0.5)])
def test_mpec_observations_reproduced(name, limit_arcsec):
    # MPECs 2004-P40, 2004-P03, 2003-U01: the MPC's own residuals for the UH 2.2-m are a few tenths of an
    # arcsecond; the published perturbed elements propagated with our force model must land as close.
    stations, objects = _published()
    obj = next(o for o in objects if o["name"] == name)
    res = _residuals_arcsec(obj, stations[obj["station"]], propagate_perturbed)
    assert res.max() < limit_arcsec


def _perturbed_and_two_body(name: str) -> tuple[np.ndarray, np.ndarray]:
    stations, objects = _published()
    obj = next(o for o in objects if o["name"] == name)
    station = stations[obj["station"]]
    return _residuals_arcsec(obj, station, propagate_perturbed), _residuals_arcsec(obj, station, propagate)


def test_far_from_epoch_perturbed_beats_two_body():
    # MPEC 2003-U01, 2002 AO7: observed 150 days before the elements' epoch. Perturbed: within 0.5";
    # the same elements taken as a fixed ellipse miss by ~2" (measured here, not published).
    perturbed, two_body = _perturbed_and_two_body("2002 AO7")
    assert perturbed.max() < 0.5
    assert two_body.min() > 1.5
    assert two_body.min() > 5 * perturbed.max()


def test_2004_fu162_through_a_13000_km_passage():
    # MPEC 2004-Q22 (via The Astronomer e-circ. 2026): elements at 2004 July 14.0, LINEAR positions
    # 105 days earlier, 0.35 d before the passage at 0.000086 au on 2004 Mar. 31.65. Integrating back
    # through the passage, the last published digit of the elements alone (±0.000005° in M) moves the
    # prediction by ~45"; the Earth's oblateness (not modelled) acts at 2 Earth radii. So: minutes of
    # arc perturbed, where two-body misses by tens of degrees.
    perturbed, two_body = _perturbed_and_two_body("2004 FU162")
    assert perturbed.max() < 300.0
    assert two_body.min() > 10 * 3600.0
    _, objects = _published()
    orbit = _orbit(next(o for o in objects if o["name"] == "2004 FU162"))
    report = close_approach_report(orbit, 2453095.5, 2453097.0)
    # "passed some 0.000086 AU ... from the centre of the earth on 2004 Mar. 31.65" (JD 2453096.15)
    assert report.min_earth_dist_au == pytest.approx(0.000086, abs=0.0000005)
    assert report.min_earth_tdb_jd == pytest.approx(2453096.15, abs=0.005)


def test_2011_md_flyby_distance_and_two_body_error():
    # Gray's elements (MPML 25553, epoch 2011 Jun 26.0, observations June 22-25). The NASA/JPL NEO
    # Program Office announced the pass at ~12 300 km above the surface at ~17:00 UT on June 27
    # (Yeomans & Chodas 2011, "Bend it Like Beckham! Small Asteroid to Whip Past Earth on June 27, 2011";
    # the figures as quoted by the Remanzacco Observatory blog, 2011 June 27): geocentre distance
    # ≈ 12 300 + 6378 km, at JD 2455740.208 UT.
    orbit = load_target(DATA / "2011md-gray.toml").orbit
    report = close_approach_report(orbit, 2455738.5, 2455741.0)
    assert report.min_earth_dist_au * AU_KM - EARTH_RADIUS_KM == pytest.approx(12_300, abs=300)
    assert report.min_earth_tdb_jd == pytest.approx(2455740.208, abs=0.02)
    assert report.warnings and "from the Earth" in report.warnings[0]
    # "If you use the first set of elements (epoch 26 June) to compute positions for 27 June, you'll be
    # off by about a quarter of a degree" (Gray, MPML 25553): for the night of June 26/27 (UT 21h-24h).
    evening = close_approach_report(orbit, 2455739.375, 2455739.5)
    assert 0.15 * 3600 < evening.twobody_error_arcsec < 0.5 * 3600
