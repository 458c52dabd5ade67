"""Observable windows: against astroplan's constraints on a fine grid, and hand-checkable cases.

The sky here is a fixed star computed with skyfield directly (tests/fixed_sky.py), so the window
core is checked on its own and astroplan's FixedTarget sees exactly the same RA/Dec.

Sources:
- astroplan (Morris et al. 2018, AJ 155, 128): AltitudeConstraint, AtNightConstraint,
  MoonSeparationConstraint, Observer.moon_altaz, evaluated on a 1-minute grid.
- Spherical astronomy (e.g. Smart 1977, Textbook on Spherical Astronomy, ch. 2):
  sin h = sin φ sin δ + cos φ cos δ cos H, so at φ = 0 a star on the equator has h = 90° − |H|;
  it culminates at h = 90° − |φ − δ|; a sidereal hour is 0.99727 solar hours.
- Twilight at −12° (nautical), Explanatory Supplement to the Astronomical Almanac (2013).
"""

from __future__ import annotations

import warnings
from datetime import date

import numpy as np
import pytest
from fixed_sky import fixed_star_sky
from hypothesis import given, settings
from hypothesis import strategies as st

from planner.core.timegrid import time_grid
from planner.inputs.sites import Allocation, Site
from planner.visibility.intervals import true_runs
from planner.visibility.limits import limit_masks, moon_limit_deg
from planner.visibility.nights import dark_intervals, night_bounds_utc
from planner.visibility.windows import find_windows
from tests.conftest import DEMO_DIR

SIDEREAL_H_PER_SOLAR_H = 0.99727  # (common practice; 86164.1 s sidereal day / 86400 s)


def _site(**kw) -> Site:
    base = dict(
        name="test",
        latitude_deg=0.0,
        longitude_deg=0.0,
        timezone="UTC",
        min_alt_deg=20.0,
        twilight="nautical",
        moon_min_sep_deg=0.0,
        min_solar_elong_deg=30.0,
    )
    base.update(kw)
    return Site(**base)


def _windows(site, ra_deg, dec_deg, first, nights, **kw):
    return find_windows(fixed_star_sky(ra_deg, dec_deg, [site]), [site], first, nights, **kw)


def _sky_at(site, ra_deg, dec_deg, times):
    return fixed_star_sky(ra_deg, dec_deg, [site])({site.name: np.asarray(times, "datetime64[ns]")})[site.name]


RIDGE = _site(
    name="ridge",
    latitude_deg=-30.2,
    longitude_deg=-70.7,
    height_m=2200.0,
    timezone="America/Santiago",
    min_alt_deg=25.0,
    moon_min_sep_deg=40.0,
)


@pytest.mark.parametrize("ra_deg, dec_deg", [(240.0, -40.0), (150.0, -40.0), (240.0, -25.0)])
def test_windows_match_astroplan_constraints_on_a_fine_grid(ra_deg, dec_deg):
    # astroplan AltitudeConstraint(25°) & AtNightConstraint(−12°) & (MoonSeparationConstraint(40°) or Moon
    # below the horizon) on a 60 s grid: same intervals, each edge within one grid step + our 10 s tolerance.
    import astropy.units as u

    ap = pytest.importorskip("astroplan", reason="astroplan (optional reference library) is not installed")
    AltitudeConstraint, AtNightConstraint, FixedTarget = ap.AltitudeConstraint, ap.AtNightConstraint, ap.FixedTarget
    MoonSeparationConstraint, Observer = ap.MoonSeparationConstraint, ap.Observer
    from astropy.coordinates import EarthLocation, SkyCoord
    from astropy.time import Time

    first, nights, fine_s = date(2034, 3, 7), 1, 60.0
    ours = _windows(RIDGE, ra_deg, dec_deg, first, nights)
    bounds = night_bounds_utc(RIDGE, first, nights)
    grid = time_grid(bounds[0], bounds[-1], fine_s)
    obs = Observer(
        location=EarthLocation(
            lat=RIDGE.latitude_deg * u.deg, lon=RIDGE.longitude_deg * u.deg, height=RIDGE.height_m * u.m
        )
    )
    star = FixedTarget(SkyCoord(ra_deg * u.deg, dec_deg * u.deg))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # ERFA's "dubious year": 2034 lies beyond the bundled IERS table
        times = Time(grid, scale="utc")
        ok = np.ravel(AltitudeConstraint(min=25 * u.deg)(obs, star, times=times))
        ok &= np.ravel(AtNightConstraint.twilight_nautical()(obs, star, times=times))
        moon_ok = np.ravel(MoonSeparationConstraint(min=40 * u.deg)(obs, star, times=times))
        ok &= moon_ok | (obs.moon_altaz(times).alt.deg <= 0.0)
    night = np.searchsorted(bounds, grid, side="right") - 1
    first_i, last_i = true_runs(ok, night)
    theirs_start, theirs_end = grid[first_i], grid[last_i]
    got = ours[ours["hours"] > 0]
    assert len(got) == len(first_i)
    step = np.timedelta64(int(fine_s + 10), "s")
    assert np.all(np.abs(got["start_utc"].to_numpy() - theirs_start) <= step)
    assert np.all(np.abs(got["end_utc"].to_numpy() - theirs_end) <= step)


def test_astroplan_scenarios_exercise_every_edge_kind():
    # The comparison above is only worth something if its edges are set by twilight, horizon and Moon.
    kinds = set()
    for ra, dec in [(240.0, -40.0), (150.0, -40.0), (240.0, -25.0)]:
        w = _windows(RIDGE, ra, dec, date(2034, 3, 7), 1)
        kinds |= set(w["start_limit"]) | set(w["end_limit"])
    assert {"twilight", "horizon", "moon"} <= kinds


def test_moon_limit_grows_with_illumination():
    s = _site(moon_min_sep_deg=25.0, moon_sep_per_illum_deg=20.0)
    assert np.allclose(moon_limit_deg(s, np.array([0.0, 0.5, 1.0])), [25.0, 35.0, 45.0])


def test_moon_edges_sit_on_the_moon_limit():
    w = _windows(RIDGE, 240.0, -25.0, date(2034, 3, 7), 2)
    t = np.concatenate(
        [
            w.loc[w["start_limit"] == "moon", "start_utc"].to_numpy(),
            w.loc[w["end_limit"] == "moon", "end_utc"].to_numpy(),
        ]
    )
    assert t.size >= 1
    sep = _sky_at(RIDGE, 240.0, -25.0, t)["moon_sep_deg"].to_numpy()
    assert np.allclose(sep, 40.0, atol=0.1)  # the Moon moves ~0.5°/h: 10 s is ~0.002°


def test_horizon_mask_sets_the_start_on_the_equator():
    # φ = 0, δ ≈ 0: the star climbs due east with h = 90° − 15°|H|. A wall at az 80–100° up to 60° hides it
    # until h = 60° (H = −2 h); it sets through the flat 20° limit in the west at H = +70°/15 = +4.667 h.
    wall = ((0.0, 20.0), (79.0, 20.0), (80.0, 60.0), (100.0, 60.0), (101.0, 20.0), (360.0, 20.0))
    s = _site(horizon=wall)
    w = _windows(s, 165.0, 0.0, date(2034, 3, 20), 1)
    assert len(w) == 1 and w["start_limit"].iloc[0] == "horizon" and w["end_limit"].iloc[0] == "horizon"
    at = _sky_at(s, 165.0, 0.0, w[["start_utc", "end_utc"]].to_numpy().ravel())
    assert at["hour_angle_h"].iloc[0] == pytest.approx(-2.0, abs=0.01)
    assert at["hour_angle_h"].iloc[1] == pytest.approx(70.0 / 15.0, abs=0.01)
    assert at["alt_deg"].iloc[0] == pytest.approx(60.0, abs=0.1)


def test_horizon_mask_can_split_a_night_in_two():
    # φ = +30°, δ = −10°: culminates due south at 90 − 40 = 50°, behind a 55° pillar at az 170–190°.
    # Two windows, with the gap centred on the meridian (H = 0) and its edges on the pillar's sides.
    pillar = ((0.0, 20.0), (169.0, 20.0), (170.0, 55.0), (190.0, 55.0), (191.0, 20.0), (360.0, 20.0))
    s = _site(latitude_deg=30.0, horizon=pillar)
    w = _windows(s, 165.0, -10.0, date(2034, 3, 20), 1)
    assert len(w) == 2 and list(w["end_limit"])[0] == "horizon" and list(w["start_limit"])[1] == "horizon"
    gap = _sky_at(s, 165.0, -10.0, [w["end_utc"].iloc[0], w["start_utc"].iloc[1]])
    assert gap["hour_angle_h"].sum() == pytest.approx(0.0, abs=0.01)
    assert gap["az_deg"].iloc[0] == pytest.approx(169.5, abs=0.6)
    assert gap["az_deg"].iloc[1] == pytest.approx(190.5, abs=0.6)


def test_hour_angle_limit_gives_four_sidereal_hours():
    # Zenith transit at φ = δ = −30°, limit ±2 h: the window is 4 sidereal hours = 3.989 solar hours.
    s = _site(latitude_deg=-30.0, max_hour_angle_h=2.0)
    w = _windows(s, 165.0, -30.0, date(2034, 3, 20), 1).iloc[0]
    assert w["start_limit"] == "hour_angle" and w["end_limit"] == "hour_angle"
    assert w["hours"] == pytest.approx(4.0 * SIDEREAL_H_PER_SOLAR_H, abs=0.01)
    assert w["max_alt_deg"] == pytest.approx(90.0, abs=0.3)  # culminates at 90° − |φ − δ|
    assert w["min_airmass"] == pytest.approx(1.0, abs=1e-3)


def test_polar_night_never_rising_and_midnight_sun():
    first = date(2034, 6, 20)
    # 78° S in June: the Sun stays below the horizon; δ = −60° circles at h ≥ 60 − 12 = 48°: every dark minute counts.
    south = _site(latitude_deg=-78.0)
    w = _windows(south, 100.0, -60.0, first, 2)
    d = dark_intervals(south, first, 2)
    assert w["hours"].sum() == pytest.approx(d["hours"].sum(), abs=1e-6) and w["hours"].sum() > 30
    assert set(w["start_limit"]) | set(w["end_limit"]) <= {"twilight", "noon"}
    # 50° N: δ = −60° culminates at 90 − 110 = −20°.
    north = _windows(_site(latitude_deg=50.0), 100.0, -60.0, first, 1).iloc[0]
    assert north["hours"] == 0 and north["reason"].startswith("never rises at this latitude")
    assert "-20.0°" in north["reason"]
    # 78° N in June: the Sun never sets.
    arctic = _windows(_site(latitude_deg=78.0), 100.0, 30.0, first, 1).iloc[0]
    assert arctic["hours"] == 0 and arctic["reason"].startswith("midnight Sun")


def test_sun_too_close_says_so_with_the_caution():
    # Equinox: the Sun is near RA 0h, δ 0°. A star at RA 2h is ~30° from it: refused below 40°.
    s = _site(min_solar_elong_deg=40.0)
    row = _windows(s, 30.0, 0.0, date(2034, 3, 20), 1).iloc[0]
    assert row["hours"] == 0 and "too close to the Sun" in row["reason"]
    assert "blind" in row["caution"] and "observatory" in row["caution"]
    # At ~52° (RA 3.5h) it is observable after dusk, but within 10° of a 45° limit: the caution stays.
    w = _windows(_site(min_solar_elong_deg=45.0), 52.5, 0.0, date(2034, 3, 20), 1).iloc[0]
    assert w["hours"] > 0 and w["solar_elong_deg"] < 55.0 and "blind" in w["caution"]


def test_declination_outside_the_mount_range():
    row = _windows(_site(latitude_deg=-30.0, dec_range_deg=(-60.0, 85.0)), 165.0, -65.0, date(2034, 3, 20), 1).iloc[0]
    assert row["hours"] == 0 and "declination -65.0° outside the mount's range [-60, 85]" in row["reason"]


def test_allocation_blocks_and_hours_per_night():
    block = (np.datetime64("2034-03-20T01:00", "ns"), np.datetime64("2034-03-20T03:00", "ns"))
    s = _site(latitude_deg=-30.0, allocation=Allocation(granted_utc=(block,)))
    w = _windows(s, 165.0, -30.0, date(2034, 3, 19), 2)
    first, second = w.iloc[0], w.iloc[1]
    assert first["start_limit"] == first["end_limit"] == "allocation"
    assert abs(first["start_utc"] - block[0]) <= np.timedelta64(10, "s")
    assert abs(first["end_utc"] - block[1]) <= np.timedelta64(10, "s")
    assert second["hours"] == 0 and second["reason"] == "outside the allocated time blocks"
    # hours_per_night caps the night's budget, not the window (the scheduler chooses where to spend it).
    capped = _windows(
        _site(latitude_deg=-30.0, allocation=Allocation(hours_per_night=1.5)), 165.0, -30.0, date(2034, 3, 19), 1
    ).iloc[0]
    assert capped["hours"] > 5 and capped["night_budget_h"] == 1.5


def test_edges_are_refined_below_the_grid_step():
    # A coarse 30-minute grid still gives edges within 10 s of a 1-minute one: bisection, not the grid, sets them.
    fine = _windows(RIDGE, 150.0, -40.0, date(2034, 3, 7), 1, step_s=60.0)
    coarse = _windows(RIDGE, 150.0, -40.0, date(2034, 3, 7), 1, step_s=1800.0)
    for col in ("start_utc", "end_utc"):
        assert np.all(np.abs(fine[col].to_numpy() - coarse[col].to_numpy()) <= np.timedelta64(20, "s"))


def test_demo_comet_windows_match_astroplan_with_its_ephemeris(root):
    # The library call on the moving demo comet: astroplan's constraints evaluated on a 60 s grid at the
    # comet's per-epoch RA/Dec (from geometry; astroplan has no small-body ephemeris). Same intervals,
    # edges within one grid step + our 10 s tolerance. Moon rule as above. Altitudes are apparent: the
    # Observer gets the site's air (standard atmosphere at its height), so astropy refracts them (ERFA's
    # model) while the night constraint stays on the Sun's airless altitude (force_pressure_zero).
    import astropy.units as u

    ap = pytest.importorskip("astroplan", reason="astroplan (optional reference library) is not installed")
    AltitudeConstraint, AtNightConstraint, Observer = ap.AltitudeConstraint, ap.AtNightConstraint, ap.Observer
    from astropy.coordinates import EarthLocation, SkyCoord, get_body
    from astropy.time import Time

    from planner.inputs.sites import load_site
    from planner.inputs.targets import load_target
    from planner.sky.geometry import geometry
    from planner.visibility.windows import observable_windows

    site = load_site(DEMO_DIR / "sites" / "karoo-ridge.toml")
    target = load_target(DEMO_DIR / "c2034-b3-quillfeather.toml")
    first = date(2034, 3, 17)
    ours = observable_windows(target, [site], first, 1)
    bounds = night_bounds_utc(site, first, 1)
    grid = time_grid(bounds[0], bounds[-1], 60.0)
    geo = geometry(target, grid, [site])[site.name]
    coords = SkyCoord(geo["ra_deg"].to_numpy() * u.deg, geo["dec_deg"].to_numpy() * u.deg)
    from planner.sky.refraction import site_air

    pressure_hpa, temperature_c = site_air(site)
    obs = Observer(
        location=EarthLocation(
            lat=site.latitude_deg * u.deg, lon=site.longitude_deg * u.deg, height=site.height_m * u.m
        ),
        pressure=pressure_hpa * u.hPa,
        temperature=temperature_c * u.deg_C,
        relative_humidity=0.0,
    )
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        times = Time(grid, scale="utc")
        ok = np.ravel(AltitudeConstraint(min=site.min_alt_deg * u.deg)(obs, coords, times=times))
        ok &= np.ravel(AtNightConstraint(max_solar_altitude=site.night_sun_alt_deg * u.deg)(obs, coords, times=times))
        sep = get_body("moon", times, location=obs.location).separation(coords).deg
        ok &= (sep >= site.moon_min_sep_deg) | (obs.moon_altaz(times).alt.deg <= 0.0)
    first_i, last_i = true_runs(ok)
    assert len(ours) == len(first_i) == 1
    step = np.timedelta64(70, "s")
    assert abs(ours["start_utc"].iloc[0].to_datetime64() - grid[first_i[0]]) <= step
    assert abs(ours["end_utc"].iloc[0].to_datetime64() - grid[last_i[0]]) <= step
    row = ours.iloc[0]
    assert row["start_limit"] == "twilight" and row["end_limit"] == "horizon"
    assert np.isfinite(row["mag_pred"]) and row["motion_arcsec_per_min"] > 0


def _cli(capsys, *args):
    from clirun import run_cli

    return run_cli(capsys, "windows", *args)


def test_command_table_csv_json_and_atomic_out(root, tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(root)
    import json

    import pandas as pd

    base = [
        "--target",
        "planner/data/demo/c2034-b3-quillfeather.toml",
        "--site",
        "planner/data/demo/sites/kahili-summit.toml",
        "--site",
        "planner/data/demo/sites/salmon-gum.toml",
        "--start",
        "2034-03-16",
        "--nights",
        "2",
    ]
    r = _cli(capsys, *base)
    assert r.returncode == 0, r.stderr
    assert "Kahili Summit" in r.stdout and "Salmon Gum" in r.stdout and "HA limit" in r.stdout
    out = tmp_path / "w.csv"
    assert _cli(capsys, *base, "--format", "csv", "--out", str(out)).returncode == 0
    df = pd.read_csv(out)
    assert list(df.columns)[:7] == ["site", "night", "start_utc", "end_utc", "start_local", "end_local", "hours"]
    assert len(df) == 4 and df["start_utc"].str.endswith("Z").all()
    # Both sites have an instrument, so each window carries its exposure plan: whole exposures of exposure_s
    # plus readout that fit the night's budget after one block overhead (planner/sites.py Instrument).
    from planner.inputs.sites import load_site

    for _, w in df.iterrows():
        inst = load_site(
            DEMO_DIR / "sites" / ("kahili-summit.toml" if w["site"] == "Kahili Summit" else "salmon-gum.toml")
        ).instrument
        usable_s = min(w["hours"], w["night_budget_h"]) * 3600.0 - inst.overhead_s
        assert w["n_exposures_window"] == int(usable_s // (w["exposure_s"] + inst.readout_s))
        assert w["exposure_s"] <= w["trail_limit_s"] + 1e-6 and w["snr_pred"] > 0
    doc = json.loads(_cli(capsys, *base, "--format", "json").stdout)
    assert "blind" in doc["caution"] and len(doc["windows"]) == 4
    # A bad option leaves the earlier file untouched and says one line.
    bad = _cli(capsys, *base[:-4], "--start", "2034-13-01", "--nights", "1", "--format", "csv", "--out", str(out))
    assert bad.returncode == 2 and bad.stderr.strip().splitlines() == [
        "error: command line: start: '2034-13-01' is not a date such as 2034-03-16"
    ]
    assert pd.read_csv(out).equals(df)


@given(
    ra_deg=st.floats(0.0, 359.0),
    dec_deg=st.floats(-80.0, 80.0),
    lat=st.floats(-70.0, 70.0),
    max_ha=st.one_of(st.none(), st.floats(1.0, 6.0)),
)
@settings(max_examples=6, deadline=None)
def test_windows_are_dark_disjoint_and_meet_every_limit(ra_deg, dec_deg, lat, max_ha):
    # Properties of any answer: windows lie inside dark time, do not overlap, and every limit holds at their
    # edges and best time; a night without a window says why.
    s = _site(latitude_deg=lat, longitude_deg=0.0, max_hour_angle_h=max_ha, moon_min_sep_deg=30.0)
    first = date(2034, 3, 8)
    w = _windows(s, ra_deg, dec_deg, first, 2, step_s=900.0)
    dark = dark_intervals(s, first, 2)
    ok = w[w["hours"] > 0]
    for night, rows in ok.groupby("night"):
        d = dark[(dark["night"] == night) & (dark["hours"] > 0)]
        for _, r in rows.iterrows():
            assert ((d["start_utc"] <= r["start_utc"]) & (r["end_utc"] <= d["end_utc"])).any()
        assert (rows["start_utc"].to_numpy()[1:] > rows["end_utc"].to_numpy()[:-1]).all()
    if len(ok):
        times = np.concatenate([ok[c].to_numpy() for c in ("start_utc", "end_utc", "best_utc")])
        masks = limit_masks(s, _sky_at(s, ra_deg, dec_deg, times))
        assert np.logical_and.reduce(list(masks.values())).all()
    assert (w.loc[w["hours"] == 0, "reason"] != "").all()
