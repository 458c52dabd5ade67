"""Reduction of light-curve points: light time, unit distance, input checks, per-point geometry."""

from __future__ import annotations

import io

import numpy as np
import pytest

from planner.core.constants import GM_SUN_AU3_D2
from planner.core.errors import InputError
from planner.core.timegrid import to_jd_utc
from planner.inputs.sites import Site
from planner.inputs.targets import load_target
from planner.lightcurve import emission_time_jd, light_curve_points, light_time_minutes, nights_from_gaps, reduce_points
from planner.lightcurve.geometry import point_geometry
from planner.lightcurve.reduce import unit_distance_mag
from tests.conftest import ROOT

COMET_LINE_NAME = "C/2032 X1 (Halvard)"


def test_light_time_is_distance_over_c_by_astropy_constants():
    # Second route: astropy's CODATA c and IAU 2012 au, converted with astropy units.
    from astropy import constants, units

    delta = np.array([0.05, 1.0, 3.7])
    ref = (delta * units.au / constants.c).to_value(units.min)
    assert np.allclose(light_time_minutes(delta), ref, rtol=1e-12)
    assert light_time_minutes(1.0) == pytest.approx(8.316746, abs=1e-6)  # 499.004784 s (IAU 2012 B2 + SI c)


def test_emission_time_and_unit_distance_by_hand():
    # 10 minutes of light time move the epoch 10/1440 day earlier; 5 log10 2 = 1.50515 mag.
    assert emission_time_jd(2460000.5, 10.0) == pytest.approx(2460000.5 - 10 / 1440, abs=1e-12)
    assert unit_distance_mag(15.0, 2.0) == pytest.approx(15.0 - 1.505150, abs=1e-6)
    assert unit_distance_mag(15.0, 2.0, phase_term_mag=0.3) == pytest.approx(15.0 - 1.805150, abs=1e-6)


def _skyfield_light_time_min(target_line: str, times_utc: np.ndarray, site: Site | None) -> np.ndarray:
    """Light time by skyfield: its own MPC parser and Kepler orbit, its own observe() iteration."""
    from skyfield.api import wgs84
    from skyfield.constants import AU_KM, DAY_S
    from skyfield.data import mpc

    from planner.sky.skydata import planets, utc_times

    eph = planets()
    df = mpc.load_comets_dataframe(io.BytesIO((target_line + "\n").encode()))
    comet = eph["sun"] + mpc.comet_orbit(df.iloc[0], utc_times(times_utc).ts, GM_SUN_AU3_D2 * AU_KM**3 / DAY_S**2)
    observer = (
        eph["earth"]
        if site is None
        else eph["earth"] + wgs84.latlon(site.latitude_deg, site.longitude_deg, elevation_m=site.height_m)
    )
    return observer.at(utc_times(times_utc)).observe(comet).light_time * 1440.0


def test_point_light_time_matches_skyfield_observe_for_geocentre_and_site():
    # Reference library: skyfield's Barycentric.observe() iterates light time to convergence
    # (Rhodes, skyfield documentation "Positions"); our ephemeris uses its own Taylor retardation.
    path = ROOT / "tests" / "data" / "mpc_comets.txt"
    line = next(s for s in path.read_text().splitlines() if COMET_LINE_NAME in s)
    target = load_target(path, object_name=COMET_LINE_NAME)
    times = np.datetime64("2033-01-02T21:00", "ns") + np.arange(0, 6 * 86400, 7 * 3600).astype("timedelta64[s]")
    site = Site(name="Ridge", latitude_deg=-30.2, longitude_deg=-70.7, height_m=2200.0)
    labels = np.array(["Ridge", "elsewhere"] * (times.size // 2) + ["Ridge"] * (times.size % 2), dtype=object)
    geo = point_geometry(target, times, labels, sites=[site])
    ridge = labels == "Ridge"
    assert np.allclose(geo["light_time_minutes"][ridge], _skyfield_light_time_min(line, times[ridge], site), atol=1e-6)
    assert np.allclose(
        geo["light_time_minutes"][~ridge], _skyfield_light_time_min(line, times[~ridge], None), atol=1e-6
    )
    # and the reduction's own Δ/c agrees with the ephemeris's light time to the Δ it reports
    assert np.allclose(light_time_minutes(geo["obs_dist_au"]), geo["light_time_minutes"], atol=1e-9)
    pts = light_curve_points(
        times,
        np.full(times.size, 14.0),
        0.02,
        labels,
        "n1",
        geo["obs_dist_au"],
        geo["helio_dist_au"],
        light_time_minutes=geo["light_time_minutes"],
    )
    red = reduce_points(pts)
    assert np.allclose(red.emission_jd, to_jd_utc(times) - geo["light_time_minutes"] / 1440.0, atol=1e-12)


def test_points_refuse_bad_values_with_the_field_named():
    t = 2460000.5 + np.arange(5) / 24
    ok = dict(times=t, mag=np.full(5, 14.0), mag_err=0.02, site="A", night="n1", obs_dist_au=1.0, helio_dist_au=1.5)
    light_curve_points(**ok)
    with pytest.raises(InputError, match=r"mag_err \(point 3\).*positive"):
        light_curve_points(**{**ok, "mag_err": [0.02, 0.02, 0.0, 0.02, 0.02]})
    with pytest.raises(InputError, match="mag: has 4 values for 5 points"):
        light_curve_points(**{**ok, "mag": np.full(4, 14.0)})
    with pytest.raises(InputError, match=r"obs_dist_au \(point 1\)"):
        light_curve_points(**{**ok, "obs_dist_au": [-1.0, 1, 1, 1, 1]})
    with pytest.raises(InputError, match="no points"):
        light_curve_points(**{**ok, "times": np.zeros(0), "mag": np.zeros(0)})
    with pytest.raises(InputError, match="together"):
        light_curve_points(**ok, pab_lon_deg=np.zeros(5))


def test_nights_split_at_gaps_per_site():
    t = 2460000.5 + np.array([0.0, 0.1, 0.2, 1.0, 1.1, 0.05, 0.15])
    site = np.array(["A"] * 5 + ["B"] * 2, dtype=object)
    assert list(nights_from_gaps(t, site)) == ["A#1", "A#1", "A#1", "A#2", "A#2", "B#1", "B#1"]
