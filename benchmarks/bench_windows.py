"""Observable windows for the 4 demo sites × 7 nights: phasewise beside astroplan used as a careful user would.

phasewise: ``observable_windows`` (5-minute grid over dark time, edges refined by bisection to 10 s).

astroplan (Morris et al. 2018, AJ 155, 128), written the way a careful user would write it, not the
slowest way the library allows:

- dark time only: each night's dark interval from astroplan's own twilight times
  (``Observer.twilight_evening_*`` / ``twilight_morning_*`` at the site's twilight), then a 5-minute
  grid inside it only;
- the Sun and the Moon computed once per site for all that site's grid times (``get_body``), with the
  JPL DE421 ephemeris set through ``astropy.coordinates.solar_system_ephemeris`` to the same bundled
  file phasewise reads (skyfield-data; nothing is downloaded);
- the target's apparent alt/az from ``Observer.altaz`` once per site, the Observer given the site's air
  (ERFA refraction there, as phasewise's apparent altitudes); twilight from an airless Observer (the
  Sun's airless altitude, as phasewise's darkness limit); separations from the Sun and the Moon with
  numpy on the unit vectors (no SkyCoord per comparison);
- the site's horizon mask, Moon rule (separation limit growing with illumination while the Moon is
  up), hour-angle and declination limits applied as arrays.

astroplan has no small-body ephemeris, so the comet's RA/Dec on its grid come from phasewise's
geometry (geocentric; the parallax of a comet at 0.6 au, ≤ 15″, moves no edge by a second); that step
is timed on astroplan's side. Both routes run in interleaved repetitions (phasewise, astroplan,
phasewise, …) after one warm-up each; BLAS threads pinned. Prints medians and spread, the ratio and
the largest edge difference. Run: ``python benchmarks/bench_windows.py [--reps 5]``.
"""

from __future__ import annotations

import os

for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS", "VECLIB_MAXIMUM_THREADS"):
    os.environ.setdefault(_var, "1")

import sys  # noqa: E402
import time  # noqa: E402
import warnings  # noqa: E402
from datetime import date  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
#: The bundled demo inputs (package data).
DEMO = ROOT / "planner" / "data" / "demo"

from benchutil import repetitions, spread  # noqa: E402

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
_TWILIGHT = {-6.0: "civil", -12.0: "nautical", -18.0: "astronomical"}


def _unit(ra_deg: np.ndarray, dec_deg: np.ndarray) -> np.ndarray:
    ra, dec = np.radians(ra_deg), np.radians(dec_deg)
    return np.stack([np.cos(dec) * np.cos(ra), np.cos(dec) * np.sin(ra), np.sin(dec)], axis=-1)


def _sep_deg(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    return np.degrees(np.arctan2(np.linalg.norm(np.cross(a, b), axis=-1), np.sum(a * b, axis=-1)))


def astroplan_windows(target, sites, de421: str):
    """Intervals (site, night index, start, end) from astroplan, written as a careful user would."""
    import astropy.units as u
    from astroplan import Observer
    from astropy.coordinates import EarthLocation, SkyCoord, get_body, solar_system_ephemeris
    from astropy.time import Time

    out = []
    with solar_system_ephemeris.set(de421):
        for s in sites:
            location = EarthLocation(lat=s.latitude_deg * u.deg, lon=s.longitude_deg * u.deg, height=s.height_m * u.m)
            airless = Observer(location=location)  # twilight: the Sun's airless altitude
            pressure_hpa, temperature_c = site_air(s)  # apparent altitudes on both sides (ERFA refraction there)
            obs = Observer(
                location=location,
                pressure=pressure_hpa * u.hPa,
                temperature=temperature_c * u.deg_C,
                relative_humidity=0.0,
            )
            which = _TWILIGHT[s.night_sun_alt_deg]
            bounds = night_bounds_utc(s, FIRST, NIGHTS)
            noon = Time(bounds[:-1], scale="utc")
            dusk = getattr(airless, f"twilight_evening_{which}")(noon, which="next")
            dawn = getattr(airless, f"twilight_morning_{which}")(dusk, which="next")
            grids, night_of = [], []
            for k in range(NIGHTS):
                if dusk[k].masked or dawn[k].masked:
                    continue
                a = np.datetime64(dusk[k].utc.datetime64, "ns")
                b = np.datetime64(dawn[k].utc.datetime64, "ns")
                g = time_grid(a, b, STEP_S)
                grids.append(g)
                night_of.append(np.full(g.size, k))
            if not grids:
                continue
            grid, night = np.concatenate(grids), np.concatenate(night_of)
            geo = geometry(target, grid)["geocentre"]
            ra, dec = geo["ra_deg"].to_numpy(), geo["dec_deg"].to_numpy()
            coords = SkyCoord(ra * u.deg, dec * u.deg)
            times = Time(grid, scale="utc")
            altaz = obs.altaz(times, coords)  # the target, once per site
            sun = get_body("sun", times)  # once per site
            moon = get_body("moon", times, location=obs.location)
            moon_alt = obs.altaz(times, moon).alt.deg
            illum = obs.moon_illumination(times)
            target_u = _unit(ra, dec)
            ok = altaz.alt.deg >= s.horizon_alt_deg(altaz.az.deg)
            ok &= _sep_deg(target_u, _unit(sun.ra.deg, sun.dec.deg)) >= s.min_solar_elong_deg
            limit = s.moon_min_sep_deg + s.moon_sep_per_illum_deg * illum
            ok &= (_sep_deg(target_u, _unit(moon.ra.deg, moon.dec.deg)) >= limit) | (moon_alt <= 0.0)
            if s.max_hour_angle_h is not None:
                ha = obs.target_hour_angle(times, coords).wrap_at(12 * u.hourangle).hour
                ok &= np.abs(ha) <= s.max_hour_angle_h
            if s.dec_range_deg is not None:
                ok &= (dec >= s.dec_range_deg[0]) & (dec <= s.dec_range_deg[1])
            ok &= in_granted(grid, s.allocation.granted_utc)
            first, last = true_runs(ok, night)
            out += [(s.name, int(night[a]), grid[a], grid[b]) for a, b in zip(first, last, strict=True)]
    return out


def main() -> None:
    reps = repetitions(__doc__.splitlines()[0])
    no_iers_download()
    from astropy.utils import iers
    from skyfield_data import get_skyfield_data_path

    iers.conf.iers_degraded_accuracy = "warn"  # 2034 lies past the bundled IERS table: UT1 ≈ UTC
    warnings.simplefilter("ignore")
    de421 = str(Path(get_skyfield_data_path()) / "de421.bsp")
    sites = [load_site(p) for p in sorted((DEMO / "sites").glob("*.toml"))]
    target = load_target(next(iter(sorted(DEMO.glob("c*.toml")))))

    observable_windows(target, sites, FIRST, 1)  # warm-up both routes (ephemeris files, caches)
    astroplan_windows(target, sites[:1], de421)
    t_ours, t_theirs = [], []
    for _ in range(reps):
        t0 = time.perf_counter()
        ours = observable_windows(target, sites, FIRST, NIGHTS, step_s=STEP_S)
        t_ours.append(time.perf_counter() - t0)
        t0 = time.perf_counter()
        theirs = astroplan_windows(target, sites, de421)
        t_theirs.append(time.perf_counter() - t0)

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
    print(
        f"windows, {len(sites)} sites x {NIGHTS} nights ({len(ours)} intervals; astroplan {len(theirs)}); "
        f"BLAS threads {os.environ['OPENBLAS_NUM_THREADS']}; {reps} interleaved repetitions"
    )
    print(f"  phasewise observable_windows : {spread(t_ours)}  (5-min grid over dark time, edges to 10 s)")
    print(f"  astroplan, careful user      : {spread(t_theirs)}  (5-min grid over its own dark time)")
    print(f"  ratio of medians             : {np.median(t_theirs) / np.median(t_ours):8.1f}x")
    print(f"  largest edge difference      : {worst_s / 60:8.2f} min (one 5-min step allowed); unmatched: {unmatched}")


if __name__ == "__main__":
    main()
