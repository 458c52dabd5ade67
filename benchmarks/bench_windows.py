"""Observable windows for the 4 demo sites × 7 nights: phasewise beside astroplan's constraints.

phasewise: ``observable_windows`` (5-minute grid over dark time, edges refined by bisection to 10 s).
astroplan (Morris et al. 2018, AJ 155, 128): the same limits on a 5-minute grid over each whole night:
AtNightConstraint (site twilight, the Sun's airless altitude), apparent altitude (the Observer given the
site's air) against the site's horizon mask from Observer.altaz, SunSeparationConstraint,
MoonSeparationConstraint-style separation from astroplan's Moon with the site's illumination rule and
Moon-below-horizon rule, hour angle from Observer.target_hour_angle, declination range. astroplan has no
small-body ephemeris, so the comet's RA/Dec on its grid come from phasewise's geometry (geocentric; the
parallax of a comet at 0.6 au, ≤ 15″, moves no edge by a second); that step is timed on astroplan's
side.

Prints both timings, the ratio (target ≥ 20×) and the largest edge difference (target: within one
5-minute step of astroplan's grid). Run: ``python benchmarks/bench_windows.py``.
"""

from __future__ import annotations

import sys
import time
import warnings
from datetime import date
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
#: The bundled demo inputs (package data).
DEMO = ROOT / "planner" / "data" / "demo"

from planner.core.timegrid import time_grid  # noqa: E402
from planner.inputs.sites import load_site  # noqa: E402
from planner.inputs.targets import load_target  # noqa: E402
from planner.sky.geometry import geometry  # noqa: E402
from planner.sky.refraction import site_air  # noqa: E402
from planner.sky.skydata import no_iers_download  # noqa: E402
from planner.visibility.intervals import true_runs  # noqa: E402
from planner.visibility.limits import in_granted  # noqa: E402
from planner.visibility.nights import night_bounds_utc  # noqa: E402
from planner.visibility.windows import observable_windows  # noqa: E402

FIRST, NIGHTS, STEP_S = date(2034, 3, 16), 7, 300.0


def astroplan_windows(target, sites):
    """Intervals (site, night index, start, end) from astroplan on a 5-minute grid."""
    import astropy.units as u
    from astroplan import AtNightConstraint, Observer, SunSeparationConstraint
    from astropy.coordinates import EarthLocation, SkyCoord, get_body
    from astropy.time import Time

    out = []
    for s in sites:
        bounds = night_bounds_utc(s, FIRST, NIGHTS)
        grid = time_grid(bounds[0], bounds[-1], STEP_S)
        geo = geometry(target, grid)["geocentre"]
        coords = SkyCoord(geo["ra_deg"].to_numpy() * u.deg, geo["dec_deg"].to_numpy() * u.deg)
        pressure_hpa, temperature_c = site_air(s)  # apparent altitudes on both sides (ERFA refraction there)
        obs = Observer(
            location=EarthLocation(lat=s.latitude_deg * u.deg, lon=s.longitude_deg * u.deg, height=s.height_m * u.m),
            pressure=pressure_hpa * u.hPa,
            temperature=temperature_c * u.deg_C,
            relative_humidity=0.0,
        )
        times = Time(grid, scale="utc")
        ok = np.ravel(AtNightConstraint(max_solar_altitude=s.night_sun_alt_deg * u.deg)(obs, coords, times=times))
        altaz = obs.altaz(times, coords)
        ok &= altaz.alt.deg >= s.horizon_alt_deg(altaz.az.deg)
        ok &= np.ravel(SunSeparationConstraint(min=s.min_solar_elong_deg * u.deg)(obs, coords, times=times))
        moon = get_body("moon", times, location=obs.location)
        limit = s.moon_min_sep_deg + s.moon_sep_per_illum_deg * obs.moon_illumination(times)
        ok &= (moon.separation(coords).deg >= limit) | (obs.moon_altaz(times).alt.deg <= 0.0)
        if s.max_hour_angle_h is not None:
            ha = obs.target_hour_angle(times, coords).wrap_at(12 * u.hourangle).hour
            ok &= np.abs(ha) <= s.max_hour_angle_h
        if s.dec_range_deg is not None:
            ok &= (coords.dec.deg >= s.dec_range_deg[0]) & (coords.dec.deg <= s.dec_range_deg[1])
        ok &= in_granted(grid, s.allocation.granted_utc)
        night = np.minimum(np.searchsorted(bounds, grid, side="right") - 1, NIGHTS - 1)
        first, last = true_runs(ok, night)
        out += [(s.name, int(night[a]), grid[a], grid[b]) for a, b in zip(first, last, strict=True)]
    return out


def main() -> None:
    no_iers_download()
    from astropy.utils import iers

    iers.conf.iers_degraded_accuracy = "warn"  # 2034 lies past the bundled IERS table: UT1 ≈ UTC
    warnings.simplefilter("ignore")
    sites = [load_site(p) for p in sorted((DEMO / "sites").glob("*.toml"))]
    target = load_target(next(iter(sorted(DEMO.glob("c*.toml")))))

    observable_windows(target, sites, FIRST, 1)  # warm-up both routes (ephemeris files, caches)
    astroplan_windows(target, sites[:1])

    t0 = time.perf_counter()
    ours = observable_windows(target, sites, FIRST, NIGHTS, step_s=STEP_S)
    t_ours = time.perf_counter() - t0
    t0 = time.perf_counter()
    theirs = astroplan_windows(target, sites)
    t_theirs = time.perf_counter() - t0

    ours = ours[ours["hours"] > 0]
    labels = [(FIRST.toordinal() + k) for k in range(NIGHTS)]
    worst_s, unmatched = 0.0, 0
    for name, k, a, b in theirs:
        night = date.fromordinal(labels[k]).isoformat()
        mine = ours[(ours["site"] == name) & (ours["night"] == night)]
        mine = mine[(mine["start_utc"] <= b) & (mine["end_utc"] >= a)]
        if len(mine) != 1:
            unmatched += 1
            continue
        for x, y in ((mine["start_utc"].iloc[0], a), (mine["end_utc"].iloc[0], b)):
            worst_s = max(worst_s, abs((x.to_datetime64() - y) / np.timedelta64(1, "s")))
    print(f"windows, {len(sites)} sites x {NIGHTS} nights ({len(ours)} intervals; astroplan {len(theirs)})")
    print(f"  phasewise observable_windows : {t_ours:8.3f} s  (5-min grid, edges refined to 10 s)")
    print(f"  astroplan constraints        : {t_theirs:8.3f} s  (5-min grid)")
    print(f"  ratio                        : {t_theirs / t_ours:8.1f}x  (target >= 20x)")
    print(f"  largest edge difference      : {worst_s / 60:8.2f} min (target <= 5 min); unmatched: {unmatched}")


if __name__ == "__main__":
    main()
