"""Benchmark: phasewise geometry() vs astropy's coordinate frames, 4 demo sites × 7 days × 5 minutes.

Both routes start from the same two-body target (planner.sky.kepler.propagate) and the same DE421 file:

- phasewise: ``geometry(target, times, sites)`` — every column (RA/Dec, r, Δ, angles, motion,
  magnitude, alt/az, airmass, hour angle, Sun and Moon columns) for all four sites.
- astropy (the route a user of the general library would take): astropy Time; Earth and Sun from
  DE421 through astropy (``get_body_barycentric``); the site from ``EarthLocation.get_gcrs_posvel``;
  the same light-time iteration; astrometric RA/Dec from the barycentric difference; alt/az from
  ``SkyCoord(ICRS cartesian).transform_to(AltAz(pressure=0))`` (airless, like our ``alt_true_deg``). Only RA/Dec
  and alt/az are computed on this side.

To compare like with like, astropy is given skyfield's UT1−UTC for these future dates (IERS tables
do not reach 2034). BLAS threads are pinned (set before numpy loads; the ratio swung from 6× to 39×
with OpenBLAS threading unpinned) and both routes run in interleaved repetitions after a warm-up;
medians and spread are printed. Run: ``python benchmarks/bench_geometry.py [--reps 5]``.
"""

from __future__ import annotations

import os

for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS", "VECLIB_MAXIMUM_THREADS"):
    os.environ.setdefault(_var, "1")

import sys  # noqa: E402
import time  # noqa: E402
import warnings  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
#: The bundled demo inputs (package data).
DEMO = ROOT / "planner" / "data" / "demo"

from benchutil import repetitions, spread  # noqa: E402

from planner.core.constants import C_AU_PER_DAY  # noqa: E402
from planner.core.timegrid import parse_utc, time_grid  # noqa: E402
from planner.inputs.sites import load_site  # noqa: E402
from planner.inputs.targets import load_target  # noqa: E402
from planner.sky.geometry import geometry  # noqa: E402
from planner.sky.kepler import propagate  # noqa: E402
from planner.sky.skydata import no_iers_download, planets, utc_times  # noqa: E402

SITE_FILES = ["quebrada-alta", "karoo-ridge", "salmon-gum", "kahili-summit"]


def astropy_route(target, times_utc, sites, dut1_s):
    from astropy import units as u
    from astropy.coordinates import (
        ICRS,
        AltAz,
        CartesianRepresentation,
        EarthLocation,
        SkyCoord,
        get_body_barycentric,
        solar_system_ephemeris,
    )
    from astropy.time import Time
    from astropy.utils import iers
    from skyfield_data import get_skyfield_data_path

    de421 = str(Path(get_skyfield_data_path()) / "de421.bsp")
    out = {}
    with (
        warnings.catch_warnings(),
        iers.conf.set_temp("iers_degraded_accuracy", "ignore"),
        solar_system_ephemeris.set(de421),
    ):
        warnings.simplefilter("ignore")
        t = Time(times_utc, format="datetime64", scale="utc")
        t.delta_ut1_utc = dut1_s
        earth = get_body_barycentric("earth", t).xyz.to_value(u.au).T
        sun = get_body_barycentric("sun", t).xyz.to_value(u.au).T
        tdb = t.tdb.jd1 + t.tdb.jd2
        for site in sites:
            loc = EarthLocation.from_geodetic(
                site.longitude_deg * u.deg, site.latitude_deg * u.deg, site.height_m * u.m
            )
            obs = earth + loc.get_gcrs_posvel(t)[0].xyz.to_value(u.au).T
            tau = np.zeros(len(t))
            for k in range(3):
                helio, _ = propagate(target.orbit, tdb - tau)
                sun_then = get_body_barycentric("sun", t - tau * u.day).xyz.to_value(u.au).T if k else sun
                bary = helio + sun_then
                tau = np.linalg.norm(bary - obs, axis=1) / C_AU_PER_DAY
            p = bary - obs
            ra = np.degrees(np.arctan2(p[:, 1], p[:, 0])) % 360
            dec = np.degrees(np.arcsin(p[:, 2] / np.linalg.norm(p, axis=1)))
            coord = SkyCoord(ICRS(CartesianRepresentation(bary.T * u.au)))
            altaz = coord.transform_to(AltAz(obstime=t, location=loc, pressure=0 * u.hPa))
            out[site.name] = (ra, dec, altaz.alt.deg, altaz.az.deg)
    return out


def main() -> None:
    reps = repetitions(__doc__.splitlines()[0])
    warnings.filterwarnings("ignore", message="The file finals2000A.all has expired")
    no_iers_download()
    target = load_target(DEMO / "c2034-b3-quillfeather.toml")
    sites = [load_site(DEMO / "sites" / f"{n}.toml") for n in SITE_FILES]
    times = time_grid(parse_utc("2034-03-16T00:00"), parse_utc("2034-03-23T00:00"), 300.0)
    planets()  # load DE421 once, outside both timings
    geometry(target, times[:2], sites)  # warm imports
    dut1 = np.atleast_1d(utc_times(times).dut1)

    astropy_route(target, times[:2], sites, dut1[:2])  # warm astropy imports
    t_ours, t_astropy = [], []
    for _ in range(reps):
        t0 = time.perf_counter()
        ours = geometry(target, times, sites)
        t_ours.append(time.perf_counter() - t0)
        t0 = time.perf_counter()
        theirs = astropy_route(target, times, sites, dut1)
        t_astropy.append(time.perf_counter() - t0)

    worst = {"radec": 0.0, "alt": 0.0, "az": 0.0}
    for name, (ra, dec, alt, az) in theirs.items():
        f = ours[name]
        d_ra = ((f["ra_deg"].to_numpy() - ra + 180) % 360 - 180) * np.cos(np.radians(dec))
        worst["radec"] = max(worst["radec"], np.hypot(d_ra, f["dec_deg"].to_numpy() - dec).max() * 3600)
        worst["alt"] = max(worst["alt"], np.abs(f["alt_true_deg"].to_numpy() - alt).max() * 3600)
        d_az = ((f["az_deg"].to_numpy() - az + 180) % 360 - 180) * np.cos(np.radians(alt))
        worst["az"] = max(worst["az"], np.abs(d_az).max() * 3600)

    n = len(times)
    print(
        f"geometry, {len(sites)} sites x {n} epochs (7 days at 5 min), demo comet; BLAS threads "
        f"{os.environ['OPENBLAS_NUM_THREADS']}; {reps} interleaved repetitions"
    )
    print(f"  phasewise geometry() (all columns):      {spread(t_ours)}")
    print(f"  astropy frames (RA/Dec + alt/az only):   {spread(t_astropy)}")
    print(f"  ratio of medians astropy / phasewise:    {np.median(t_astropy) / np.median(t_ours):8.1f} x")
    print(
        f'  largest disagreement: RA/Dec {worst["radec"]:.3f}", alt {worst["alt"]:.3f}", '
        f'az*cos(alt) {worst["az"]:.3f}"   (target <= 0.5")'
    )


if __name__ == "__main__":
    main()
