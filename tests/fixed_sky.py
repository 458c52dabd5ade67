"""A sky provider for a fixed star, computed with skyfield directly: a test route to windows that
shares nothing with planner.sky.geometry, so the windows core can be checked against astroplan's
FixedTarget at exactly the same RA/Dec."""

from __future__ import annotations

import numpy as np
import pandas as pd
from skyfield import almanac
from skyfield.api import Star, wgs84

from planner.sky.skydata import planets, utc_times


def fixed_star_sky(ra_deg: float, dec_deg: float, sites):
    """``sky_at`` for :func:`planner.visibility.windows.find_windows`: geometric alt/az of a fixed star."""
    eph = planets()
    star = Star(ra_hours=ra_deg / 15.0, dec_degrees=dec_deg)
    by_name = {s.name: s for s in sites}

    def sky_at(times_by_site):
        out = {}
        for name, times in times_by_site.items():
            s = by_name[name]
            times = np.asarray(times, dtype="datetime64[ns]")
            if times.size == 0:
                out[name] = pd.DataFrame(columns=COLUMNS)
                continue
            t = utc_times(times)
            topos = eph["earth"] + wgs84.latlon(s.latitude_deg, s.longitude_deg, elevation_m=s.height_m)
            obs = topos.at(t)
            tgt = obs.observe(star).apparent()
            sun = obs.observe(eph["sun"]).apparent()
            moon = obs.observe(eph["moon"]).apparent()
            alt, az, _ = tgt.altaz()
            ha, dec, _ = tgt.hadec()
            sun_alt = sun.altaz()[0].degrees
            moon_alt = moon.altaz()[0].degrees
            h = np.atleast_1d(alt.degrees)
            airmass = 1.0 / (np.sin(np.radians(h)) + 0.50572 * (np.maximum(h, -6.0) + 6.07995) ** -1.6364)
            out[name] = pd.DataFrame(
                {
                    "time_utc": times,
                    "ra_deg": ra_deg,
                    "dec_deg": dec_deg,
                    "solar_elong_deg": np.atleast_1d(tgt.separation_from(sun).degrees),
                    "mag_pred": np.nan,
                    "motion_arcsec_per_min": 0.0,
                    "alt_deg": h,
                    "az_deg": np.atleast_1d(az.degrees),
                    "airmass": airmass,
                    "hour_angle_h": (np.atleast_1d(ha.hours) + 12.0) % 24.0 - 12.0,
                    "sun_alt_deg": np.atleast_1d(sun_alt),
                    "moon_alt_deg": np.atleast_1d(moon_alt),
                    "moon_sep_deg": np.atleast_1d(tgt.separation_from(moon).degrees),
                    "moon_illum": np.atleast_1d(almanac.fraction_illuminated(eph, "moon", t)),
                }
            )
        return out

    return sky_at


COLUMNS = [
    "time_utc",
    "ra_deg",
    "dec_deg",
    "solar_elong_deg",
    "mag_pred",
    "motion_arcsec_per_min",
    "alt_deg",
    "az_deg",
    "airmass",
    "hour_angle_h",
    "sun_alt_deg",
    "moon_alt_deg",
    "moon_sep_deg",
    "moon_illum",
]
