"""Refraction and apparent altitudes, against routes independent of the code's (Sæmundsson 1986).

Sources:
- Meeus, J. (1998) Astronomical Algorithms, 2nd ed., ch. 16: Bennett's (1982) formula from the apparent
  altitude is accurate to 0.07′ over 0–90°, Sæmundsson's (1986) from the true altitude agrees with it to
  0.1′; both for 1010 hPa, 10 °C, scaled by (P/1010)(283/(273 + T)).
- skyfield.earthlib.refraction (Rhodes, skyfield 1.x): Bennett's formula with that scaling — the
  independent formula for the check.
- astropy AltAz with pressure/temperature (ERFA's refraction constants, eraRefco, and eraAtioq; Wallace's
  SOFA/ERFA model): an independent model. Agreement expected within the 0.07′ + 0.1′ ≈ 10″ the formulas
  claim, above 10° altitude (ERFA's model is not meant for the horizon: there it saturates near 9′).
- U.S. Standard Atmosphere (1976): 1013.25 hPa and 15 °C at sea level, −6.5 K/km; checked here by
  integrating the hydrostatic equation dP/dz = −P g M / (R T(z)) with scipy (g = 9.80665 m/s²,
  M = 0.0289644 kg/mol, R = 8.31446 J/(mol K)), and against the table's 795.0 hPa at 2000 m (memory).
- Kasten & Young (1989), Applied Optics 28, 4735: airmass of the apparent altitude.
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest

from planner.core.errors import InputError
from planner.inputs.sites import Site, load_site
from planner.sky.geometry import airmass, geometry
from planner.sky.refraction import (
    apparent_alt_deg,
    refraction_deg,
    site_air,
    site_apparent_alt_deg,
    standard_air,
)


@pytest.mark.parametrize("pressure_hpa, temperature_c", [(1010.0, 10.0), (1013.25, 15.0), (775.0, 0.7)])
def test_refraction_matches_bennett_from_the_apparent_altitude(pressure_hpa, temperature_c):
    # Meeus (1998) ch. 16: the two formulas agree to 0.1′ (6″) over 0–90° at 1010 hPa, 10 °C; with other
    # air, where both are scaled by the same factor, above 5°. skyfield's Bennett takes the apparent altitude.
    from skyfield.earthlib import refraction as bennett

    lowest = 0.0 if pressure_hpa > 1000 else 5.0
    true_alt = np.linspace(lowest, 89.8, 600)
    ours = refraction_deg(true_alt, pressure_hpa, temperature_c)
    theirs = bennett(true_alt + ours, temperature_c, pressure_hpa)
    assert np.abs(ours - theirs).max() * 3600 < 6.0


def test_refraction_hand_values():
    # Sæmundsson (1986) at 1010 hPa, 10 °C by hand: h = 0: 1.02′/tan(10.3/5.11 °) = 28.98′;
    # h = 45°: 1.02′/tan(45.2058°) = 1.0128′ (≈ 1′ at 45°, the textbook figure); zero at the zenith.
    assert refraction_deg(0.0) * 60 == pytest.approx(28.98, abs=0.01)
    assert refraction_deg(45.0) * 60 == pytest.approx(1.0128, abs=1e-3)
    assert refraction_deg(90.0) == 0.0
    # The air factor (P/1010)(283/(273+T)): half the pressure, half the refraction.
    assert refraction_deg(30.0, 505.0, 10.0) == pytest.approx(refraction_deg(30.0) / 2, rel=1e-12)
    # The horizon: 34′ of refraction lifts a true altitude of −0.57° to 0° (Explanatory Supplement, 2013:
    # sunrise when the centre is at −0.833° = −34′ − 16′ semi-diameter), within 0.5′.
    assert apparent_alt_deg(-34.0 / 60.0) == pytest.approx(0.0, abs=0.5 / 60.0)
    # Monotone: a higher true altitude stays higher once refracted (no crossing of rays).
    h = np.linspace(-3.0, 90.0, 2000)
    assert np.all(np.diff(apparent_alt_deg(h)) > 0)


def test_standard_atmosphere_by_the_hydrostatic_equation():
    from scipy.integrate import solve_ivp

    g, molar, gas = 9.80665, 0.0289644, 8.31446

    def dp_dz(z, p):
        return -p * g * molar / (gas * (288.15 - 0.0065 * z))

    for height in (0.0, 1760.0, 2200.0, 4200.0):
        p_hpa, t_c = standard_air(height)
        sol = solve_ivp(dp_dz, (0.0, height), [1013.25], rtol=1e-10, atol=1e-8) if height else None
        expect = sol.y[0, -1] if sol is not None else 1013.25
        assert p_hpa == pytest.approx(expect, rel=1e-5)
        assert t_c == pytest.approx(15.0 - 6.5 * height / 1000.0, abs=1e-9)
    assert standard_air(2000.0)[0] == pytest.approx(795.0, abs=0.1)  # the 1976 table at 2 km (memory)


ROUTE_SITE = Site(name="Test ridge", latitude_deg=-30.2, longitude_deg=-70.7, height_m=2200.0)


def test_apparent_altitudes_match_astropy_altaz_with_air():
    # astropy AltAz with the site's standard air (ERFA refraction, dry air, 0.55 µm): the lift from the
    # airless to the apparent altitude agrees with ours within 10″ from 10° to the zenith.
    from astropy import units as u
    from astropy.coordinates import AltAz, EarthLocation, SkyCoord
    from astropy.time import Time

    true_alt = np.concatenate([np.linspace(10.0, 30.0, 41), np.linspace(31.0, 89.0, 30)])
    pressure, temperature = site_air(ROUTE_SITE)
    loc = EarthLocation.from_geodetic(-70.7 * u.deg, -30.2 * u.deg, 2200.0 * u.m)
    t = Time("2024-04-20T00:00", scale="utc")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        airless = SkyCoord(
            alt=true_alt * u.deg,
            az=np.linspace(0.0, 350.0, true_alt.size) * u.deg,
            frame=AltAz(obstime=t, location=loc, pressure=0 * u.hPa),
        )
        air = AltAz(
            obstime=t,
            location=loc,
            pressure=pressure * u.hPa,
            temperature=temperature * u.deg_C,
            relative_humidity=0.0,
            obswl=0.55 * u.um,
        )
        lift_erfa = airless.transform_to(air).alt.deg - true_alt
    lift_ours = site_apparent_alt_deg(ROUTE_SITE, true_alt) - true_alt
    assert np.abs(lift_ours - lift_erfa).max() * 3600 < 10.0


def test_geometry_columns_apparent_and_true():
    # alt_deg is alt_true_deg refracted with the site's air; Kasten & Young (1989) takes alt_deg.
    from test_ephemeris import _target

    north = Site(name="North ridge", latitude_deg=30.2, longitude_deg=-70.7, height_m=2200.0)  # the target is at +50°
    times = np.datetime64("2024-04-20T00:00", "ns") + np.arange(0, 48, 1).astype("timedelta64[h]")
    frame = geometry(_target(1.8, 1.0, 2460420.5), times, [north])[north.name]
    true_alt = frame["alt_true_deg"].to_numpy()
    assert np.allclose(frame["alt_deg"], apparent_alt_deg(true_alt, *site_air(north)), atol=1e-12)
    assert np.allclose(frame["airmass"], airmass(frame["alt_deg"]), equal_nan=True)
    up = true_alt > 20.0
    assert up.any() and np.all(frame["alt_deg"].to_numpy()[up] > true_alt[up])


def test_airless_site_keeps_the_true_altitude():
    times = np.datetime64("2024-04-20T00:00", "ns") + np.arange(0, 24, 2).astype("timedelta64[h]")
    from test_ephemeris import _target

    airless = Site(name="Test ridge", latitude_deg=-30.2, longitude_deg=-70.7, height_m=2200.0, refraction=False)
    frame = geometry(_target(1.8, 1.0, 2460420.5), times, [airless])[airless.name]
    assert np.array_equal(frame["alt_deg"].to_numpy(), frame["alt_true_deg"].to_numpy())
    assert np.array_equal(site_apparent_alt_deg(airless, [10.0, 20.0]), [10.0, 20.0])


def test_site_keys(tmp_path):
    base = 'name = "s"\nlatitude_deg = 10\nlongitude_deg = 0\nheight_m = 2000\n'
    p = tmp_path / "s.toml"
    p.write_text(base, encoding="utf-8")
    site = load_site(p)
    assert site.refraction is True and site_air(site) == pytest.approx(standard_air(2000.0))
    p.write_text(base + "refraction = false\npressure_hpa = 780\ntemperature_c = -2\n", encoding="utf-8")
    site = load_site(p)
    assert site.refraction is False and site_air(site) == (780.0, -2.0)
    for extra, field in (
        ("refraction = 1\n", "refraction"),
        ("pressure_hpa = 50\n", "pressure_hpa"),
        ("temperature_c = 80\n", "temperature_c"),
    ):
        p.write_text(base + extra, encoding="utf-8")
        with pytest.raises(InputError) as exc:
            load_site(p)
        assert exc.value.field == field
