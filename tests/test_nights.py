"""Nights and darkness, checked against two independent search routes and hand-checkable cases.

Sources:
- Twilight: the Sun's centre at −6° (civil), −12° (nautical), −18° (astronomical); rise and set at
  −0.833° (34′ refraction + 16′ semi-diameter). Explanatory Supplement to the Astronomical Almanac,
  3rd ed. (Urban & Seidelmann 2013).
- skyfield's almanac (Rhodes, skyfield 1.x): ``dark_twilight_day`` / ``sunrise_sunset`` searched with
  ``find_discrete`` (its own step-and-refine search, not our bisection).
- astroplan's Observer (Morris et al. 2018, AJ 155, 128): ``twilight_evening_*``, ``sun_set_time``,
  computed through astropy/ERFA's Sun position and its own grid interpolation.
"""

from __future__ import annotations

import warnings
from datetime import UTC, date

import numpy as np
import pytest
from skyfield import almanac
from skyfield.api import wgs84

from planner.inputs.sites import TWILIGHT_SUN_ALT_DEG, Site
from planner.sky.skydata import planets, timescale
from planner.visibility.nights import (
    SUNRISE_SUN_ALT_DEG,
    dark_intervals,
    night_bounds_utc,
    spans_grid,
    sun_below_intervals,
)

LATITUDES = (0.0, 30.0, -30.0, 50.0, -50.0, 65.0, -65.0)
FIRST = date(2034, 3, 16)

# Almanac state at or above which the Sun is too high for each limit (skyfield dark_twilight_day codes).
_STATE_FOR_LIMIT = {-18.0: 1, -12.0: 2, -6.0: 3, SUNRISE_SUN_ALT_DEG: 4}


def _site(lat: float, lon: float = 15.0, tz: str = "Europe/Berlin") -> Site:
    return Site(name=f"lat{lat:+.0f}", latitude_deg=lat, longitude_deg=lon, timezone=tz)


def _to_dt64(t) -> np.ndarray:
    return np.array([np.datetime64(x.replace(tzinfo=None), "ns") for x in t.utc_datetime()])


def _almanac_edges(site: Site, limit_deg: float, t0: np.datetime64, t1: np.datetime64):
    """Times the Sun crosses ``limit_deg`` by skyfield's almanac search: (sets, rises)."""
    ts = timescale()
    topos = wgs84.latlon(site.latitude_deg, site.longitude_deg, elevation_m=site.height_m)
    f = almanac.dark_twilight_day(planets(), topos)
    a, b = (ts.from_datetime(t.astype("datetime64[us]").item().replace(tzinfo=UTC)) for t in (t0, t1))
    times, states = almanac.find_discrete(a, b, f)
    k = _STATE_FOR_LIMIT[limit_deg]
    prev = np.concatenate(([f(a)], states[:-1]))
    t = _to_dt64(times)
    sets = t[(prev >= k) & (states < k)]
    rises = t[(prev < k) & (states >= k)]
    return sets, rises


def _nearest_gap_s(ours: np.ndarray, theirs: np.ndarray) -> float:
    assert theirs.size, "the reference found no crossing"
    return float(np.abs((theirs - ours).astype(np.int64)).min() / 1e9)


@pytest.mark.parametrize("lat", LATITUDES)
@pytest.mark.parametrize("limit_deg", [-18.0, -12.0, -6.0, SUNRISE_SUN_ALT_DEG])
def test_crossings_match_skyfield_almanac(lat, limit_deg):
    # skyfield almanac.dark_twilight_day + find_discrete: every crossing within 1 minute.
    site = _site(lat)
    df = sun_below_intervals(site, FIRST, 3, limit_deg)
    bounds = night_bounds_utc(site, FIRST, 3)
    sets, rises = _almanac_edges(site, limit_deg, bounds[0], bounds[-1])
    starts = df.loc[df["start_is_twilight"], "start_utc"].to_numpy()
    ends = df.loc[df["end_is_twilight"], "end_utc"].to_numpy()
    assert starts.size == sets.size and ends.size == rises.size
    for t in starts:
        assert _nearest_gap_s(t, sets) < 60.0
    for t in ends:
        assert _nearest_gap_s(t, rises) < 60.0


@pytest.mark.parametrize("lat", LATITUDES)
def test_twilight_and_sunset_match_astroplan(lat):
    # astroplan Observer.twilight_evening_* / twilight_morning_* / sun_set_time / sun_rise_time: within 1 minute.
    import astropy.units as u

    Observer = pytest.importorskip(
        "astroplan", reason="astroplan (optional reference library) is not installed"
    ).Observer
    from astropy.coordinates import EarthLocation
    from astropy.time import Time

    site = _site(lat)
    obs = Observer(location=EarthLocation(lat=lat * u.deg, lon=site.longitude_deg * u.deg, height=0 * u.m))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # ERFA's "dubious year": 2034 lies beyond the bundled IERS table
        noon = Time(night_bounds_utc(site, FIRST, 1)[0].astype("datetime64[us]").item(), scale="utc")
    routes = {
        -18.0: (obs.twilight_evening_astronomical, obs.twilight_morning_astronomical, {}),
        -12.0: (obs.twilight_evening_nautical, obs.twilight_morning_nautical, {}),
        -6.0: (obs.twilight_evening_civil, obs.twilight_morning_civil, {}),
        SUNRISE_SUN_ALT_DEG: (obs.sun_set_time, obs.sun_rise_time, {"horizon": SUNRISE_SUN_ALT_DEG * u.deg}),
    }
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        for limit_deg, (evening, morning, kw) in routes.items():
            row = sun_below_intervals(site, FIRST, 1, limit_deg).iloc[0]
            t_set = evening(noon, which="next", n_grid_points=1000, **kw)
            t_rise = morning(t_set, which="next", n_grid_points=1000, **kw)
            for ours, theirs in ((row["start_utc"], t_set), (row["end_utc"], t_rise)):
                gap = np.datetime64(theirs.utc.datetime64, "ns") - ours.to_datetime64()
                gap_s = abs(gap / np.timedelta64(1, "s"))
                assert gap_s < 60.0, (limit_deg, ours, theirs.iso)


def test_standard_twilight_altitudes():
    # Explanatory Supplement (2013): civil −6°, nautical −12°, astronomical −18°; rise/set −0.833°.
    assert TWILIGHT_SUN_ALT_DEG == {"civil": -6.0, "nautical": -12.0, "astronomical": -18.0}
    assert SUNRISE_SUN_ALT_DEG == pytest.approx(-(34 + 16) / 60, abs=1e-3)


def test_longer_darkness_for_each_deeper_twilight():
    # Nested by definition: astronomical darkness lies inside nautical, nautical inside civil.
    site = _site(-30.0)
    hours = [sun_below_intervals(site, FIRST, 1, lim)["hours"].iloc[0] for lim in (-6.0, -12.0, -18.0)]
    assert hours[0] > hours[1] > hours[2] > 0
    # At the equator near the equinox the Sun drops 15°/h; 6° more depth costs 2 × 6/15 h = 48 min.
    eq = _site(0.0)
    h6, h12 = (sun_below_intervals(eq, date(2034, 3, 19), 1, lim)["hours"].iloc[0] for lim in (-6.0, -12.0))
    assert h6 - h12 == pytest.approx(0.8, abs=0.03)


def test_midnight_sun_and_polar_night_say_so():
    # Hand check: at 78° N near the June solstice the Sun's lowest altitude is 23.4 − 12 = +11.4° (never sets);
    # at 78° S it peaks at −(78 − 90 + 23.4) = −11.4° (never rises, but never nautically dark at noon).
    north = dark_intervals(_site(78.0, tz="Europe/Oslo"), date(2034, 6, 20), 2)
    assert (north["hours"] == 0).all() and north["reason"].str.startswith("midnight Sun").all()
    assert north["sun_min_alt_deg"].iloc[0] == pytest.approx(78.0 - 90.0 + 23.44, abs=0.3)
    south = dark_intervals(_site(-78.0, tz="Europe/Oslo"), date(2034, 6, 20), 2)
    assert (south["hours"] > 18).all() and south["note"].str.startswith("polar night").all()
    assert south["sun_max_alt_deg"].iloc[0] == pytest.approx(-11.44, abs=0.3)
    # At 65° S in June the Sun still rises but nautical darkness lasts most of the day; at 65° N
    # in June it never gets below −(90 − 65 − 23.4) = −1.6°: no nautical darkness, not midnight Sun.
    n65 = dark_intervals(_site(65.0), date(2034, 6, 20), 1).iloc[0]
    assert n65["hours"] == 0 and n65["reason"].startswith("no nautical darkness")
    assert n65["sun_min_alt_deg"] == pytest.approx(-1.6, abs=0.3)


def test_night_is_named_by_local_date_and_runs_noon_to_noon():
    # Date line: Kiritimati (UTC+14) and Pago Pago (UTC−11) share a meridian region but name nights a day apart.
    kiri = Site(name="k", latitude_deg=1.87, longitude_deg=-157.4, timezone="Pacific/Kiritimati")
    pago = Site(name="p", latitude_deg=-14.3, longitude_deg=-170.7, timezone="Pacific/Pago_Pago")
    assert night_bounds_utc(kiri, FIRST, 1)[0] == np.datetime64("2034-03-15T22:00")
    assert night_bounds_utc(pago, FIRST, 1)[0] == np.datetime64("2034-03-16T23:00")
    for s in (kiri, pago):
        d = dark_intervals(s, FIRST, 2)
        assert list(d["night"]) == ["2034-03-16", "2034-03-17"]
        assert d["start_local"].iloc[0].startswith("2034-03-16T19")  # dusk on the night's own date
        assert d["end_local"].iloc[0].startswith("2034-03-17T0")
    # Daylight saving in Chile ends on 2034-04-02 (first Sunday of April): that night lasts 25 h.
    chile = Site(name="c", latitude_deg=-30.2, longitude_deg=-70.7, timezone="America/Santiago")
    b = night_bounds_utc(chile, date(2034, 4, 1), 1)
    assert (b[1] - b[0]) == np.timedelta64(25, "h")


def test_spans_grid_covers_each_span_with_both_ends():
    starts = np.array(["2034-03-16T00:00", "2034-03-17T00:00"], dtype="datetime64[ns]")
    ends = starts + np.array([3600 * 10**9, 1000 * 10**9], dtype="timedelta64[ns]")
    t, span = spans_grid(starts, ends, 600.0)
    assert list(np.bincount(span)) == [7, 3]  # 0..3600 every 600 s; 0, 600, 1000
    assert t[6] == ends[0] and t[-1] == ends[1] and t[7] == starts[1]


@pytest.mark.parametrize("lat", [-65.0, 0.0, 50.0])
def test_spline_crossings_match_the_direct_slow_twin(lat):
    # Fast route (bisection on a cubic spline of 10-minute samples) vs slow twin (fresh Sun at every halving).
    site = _site(lat)
    fast = sun_below_intervals(site, FIRST, 2, -12.0)
    slow = sun_below_intervals(site, FIRST, 2, -12.0, interpolate=False, tol_s=1.0)
    for col in ("start_utc", "end_utc"):
        gap = np.abs(fast[col].to_numpy() - slow[col].to_numpy())
        assert np.all(gap <= np.timedelta64(3, "s"))
