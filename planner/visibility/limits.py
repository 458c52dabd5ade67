"""A site's pointing limits tested on the target's sky positions, and the plain words for a night without a window.

Each limit is a boolean mask over sample times (horizon mask at the target's azimuth, declination
range, hour-angle limit, solar elongation, Moon separation, granted time); a window is where every one
holds. When none holds long enough, :func:`no_window_reason` says which limits share the blame.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd

from planner.core.safety import SUN_SAFETY_TEXT
from planner.inputs.sites import Site
from planner.sky.refraction import site_apparent_alt_deg

#: The limits tested in darkness, in the order used to name the one that closes a window.
LIMITS = ("sun_elong", "dec_range", "horizon", "hour_angle", "moon", "allocation")


def moon_limit_deg(site: Site, moon_illum: np.ndarray) -> np.ndarray:
    """Least Moon separation allowed: ``moon_min_sep_deg + moon_sep_per_illum_deg × illuminated fraction``."""
    return site.moon_min_sep_deg + site.moon_sep_per_illum_deg * np.asarray(moon_illum, dtype=float)


def in_granted(times_utc: np.ndarray, granted_utc: Sequence[tuple[np.datetime64, np.datetime64]]) -> np.ndarray:
    """True where a time lies inside one of the sorted, half-open blocks [start, end)."""
    t = np.asarray(times_utc, dtype="datetime64[ns]")
    if not granted_utc:
        return np.ones(t.shape, dtype=bool)
    starts = np.array([a for a, _ in granted_utc], dtype="datetime64[ns]")
    ends = np.array([b for _, b in granted_utc], dtype="datetime64[ns]")
    i = np.searchsorted(starts, t, side="right") - 1
    return (i >= 0) & (t < ends[np.maximum(i, 0)])


def limit_masks(site: Site, sky: pd.DataFrame) -> dict[str, np.ndarray]:
    """Each pointing limit of the site tested on geometry rows: True where the limit is met.

    The Moon limit applies only while the Moon's centre is above the horizon (moon_alt_deg > 0).
    """
    n = len(sky)
    alt = sky["alt_deg"].to_numpy(float)
    masks = {
        "sun_elong": sky["solar_elong_deg"].to_numpy(float) >= site.min_solar_elong_deg,
        "horizon": alt >= site.horizon_alt_deg(sky["az_deg"].to_numpy(float)),
    }
    dec = sky["dec_deg"].to_numpy(float)
    masks["dec_range"] = (
        (dec >= site.dec_range_deg[0]) & (dec <= site.dec_range_deg[1])
        if site.dec_range_deg
        else np.ones(n, dtype=bool)
    )
    masks["hour_angle"] = (
        np.abs(sky["hour_angle_h"].to_numpy(float)) <= site.max_hour_angle_h
        if site.max_hour_angle_h is not None
        else np.ones(n, dtype=bool)
    )
    masks["moon"] = (sky["moon_alt_deg"].to_numpy(float) <= 0.0) | (
        sky["moon_sep_deg"].to_numpy(float) >= moon_limit_deg(site, sky["moon_illum"].to_numpy(float))
    )
    masks["allocation"] = in_granted(sky["time_utc"].to_numpy(), site.allocation.granted_utc)
    return {k: masks[k] for k in LIMITS}


def all_met(masks: dict[str, np.ndarray]) -> np.ndarray:
    return np.logical_and.reduce([masks[k] for k in LIMITS])


def first_failed(masks: dict[str, np.ndarray]) -> np.ndarray:
    """Name of the first limit (in LIMITS order) not met at each row; '' where all are met."""
    names = np.array(LIMITS + ("",), dtype=object)
    table = np.stack([~masks[k] for k in LIMITS] + [np.ones_like(masks[LIMITS[0]])])
    return names[np.argmax(table, axis=0)]


def no_window_reason(site: Site, sky: pd.DataFrame, masks: dict[str, np.ndarray]) -> str:
    """Plain words for a night whose dark time never meets every limit (``sky``: its dark samples)."""
    alone = [k for k in LIMITS if not masks[k].any()]
    dec = sky["dec_deg"].to_numpy(float)
    words = []
    for k in alone:
        if k == "horizon":
            # Highest apparent altitude: the true one at upper culmination, refracted as the site sees it.
            transit_deg = float(site_apparent_alt_deg(site, np.max(90.0 - np.abs(site.latitude_deg - dec))))
            dark_max = float(sky["alt_deg"].max())
            if transit_deg < 0.0:
                words.append(
                    f"never rises at this latitude (dec {np.median(dec):+.1f}°, highest {transit_deg:.1f}° at transit)"
                )
            elif transit_deg < float(np.min(site.horizon_alt_deg(np.array([0.0, 90.0, 180.0, 270.0])))):
                words.append(f"never climbs above the horizon limit (highest {transit_deg:.1f}° at transit)")
            else:
                words.append(f"below the horizon limit all dark time (highest {dark_max:.1f}° in darkness)")
        elif k == "sun_elong":
            words.append(
                f"too close to the Sun: elongation {sky['solar_elong_deg'].max():.1f}° < "
                f"{site.min_solar_elong_deg:g}° ({SUN_SAFETY_TEXT})"
            )
        elif k == "dec_range":
            words.append(
                f"declination {np.median(dec):+.1f}° outside the mount's range "
                f"[{site.dec_range_deg[0]:g}, {site.dec_range_deg[1]:g}]"
            )
        elif k == "hour_angle":
            words.append(f"beyond the hour-angle limit ±{site.max_hour_angle_h:g} h all dark time")
        elif k == "moon":
            words.append(
                f"Moon too close all dark time ({sky['moon_sep_deg'].min():.0f}° from a "
                f"{100 * sky['moon_illum'].mean():.0f}% lit Moon)"
            )
        elif k == "allocation":
            words.append("outside the allocated time blocks")
    if words:
        return "; ".join(words)
    partial = [k for k in LIMITS if not masks[k].all()]
    return f"no dark time meets all limits at once ({', '.join(_LIMIT_WORD[k] for k in partial)})"


_LIMIT_WORD = {
    "sun_elong": "solar elongation",
    "dec_range": "declination range",
    "horizon": "horizon limit",
    "hour_angle": "hour-angle limit",
    "moon": "Moon separation",
    "allocation": "allocation",
    "twilight": "twilight",
    "noon": "night's noon edge",
}
