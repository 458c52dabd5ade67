"""Observing sites: location, pointing limits, darkness, avoidance, instrument, weather, allocation.

One TOML file per site (schema in docs/formats.md). Loading validates every field and raises
:class:`InputError` naming the file and field.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, field
from datetime import datetime
from pathlib import Path
from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

import numpy as np

from planner.core.bands import FILTER_BANDS
from planner.core.timegrid import parse_utc
from planner.core.tomlfile import Fields, read_toml

#: Sun-centre altitude that ends the night for each darkness choice (Explanatory Supplement).
TWILIGHT_SUN_ALT_DEG = {"civil": -6.0, "nautical": -12.0, "astronomical": -18.0}


@dataclass(frozen=True)
class Instrument:
    """Camera and telescope, for signal-to-noise and exposure planning."""

    aperture_m: float
    pixel_scale_arcsec: float
    read_noise_e: float = 10.0
    gain_e_per_adu: float = 1.0
    #: Magnitude giving 1 detected electron per second above the atmosphere.
    zero_point_mag: float = 22.0
    dark_e_per_s: float = 0.01
    seeing_arcsec: float = 2.0
    sky_mag_per_arcsec2: float = 21.0
    extinction_mag_per_airmass: float = 0.15
    readout_s: float = 10.0
    overhead_s: float = 5.0
    filter: str = "R"
    nonsidereal_tracking: bool = False


@dataclass(frozen=True)
class Allocation:
    """Time granted to the campaign: all dark time, a number of hours per night, or fixed UTC blocks."""

    hours_per_night: float | None = None
    granted_utc: tuple[tuple[np.datetime64, np.datetime64], ...] = ()

    @property
    def unlimited(self) -> bool:
        return self.hours_per_night is None and not self.granted_utc


@dataclass(frozen=True)
class Site:
    name: str
    latitude_deg: float
    longitude_deg: float  # east positive, in [-180, 180)
    height_m: float = 0.0
    timezone: str = "UTC"
    min_alt_deg: float = 20.0
    #: Horizon mask as (az_deg, min_alt_deg) pairs sorted by azimuth; empty means flat ``min_alt_deg``.
    horizon: tuple[tuple[float, float], ...] = ()
    max_hour_angle_h: float | None = None
    dec_range_deg: tuple[float, float] | None = None
    twilight: str = "nautical"
    moon_min_sep_deg: float = 30.0
    #: Extra Moon separation at full Moon: the limit is moon_min_sep_deg + moon_sep_per_illum_deg * illum.
    moon_sep_per_illum_deg: float = 0.0
    min_solar_elong_deg: float = 30.0
    instrument: Instrument | None = None
    clear_fraction: float = 0.7
    allocation: Allocation = field(default_factory=Allocation)
    source: str = ""
    #: Apparent (refracted) altitudes for pointing limits and airmass; False: airless (true) altitudes.
    refraction: bool = True
    #: Air for the refraction; None: the standard atmosphere at ``height_m`` (planner.sky.refraction).
    pressure_hpa: float | None = None
    temperature_c: float | None = None

    @property
    def night_sun_alt_deg(self) -> float:
        return TWILIGHT_SUN_ALT_DEG[self.twilight]

    @property
    def tz(self) -> ZoneInfo:
        return ZoneInfo(self.timezone)

    def horizon_alt_deg(self, az_deg: np.ndarray) -> np.ndarray:
        """Lowest usable altitude at each azimuth: the mask interpolated (periodic in azimuth), never below
        min_alt_deg."""
        az = np.asarray(az_deg, dtype=float) % 360.0
        if not self.horizon:
            return np.full_like(az, self.min_alt_deg)
        mask_az = np.array([a for a, _ in self.horizon])
        mask_alt = np.array([h for _, h in self.horizon])
        mask = np.interp(az, mask_az, mask_alt, period=360.0)
        return np.maximum(mask, self.min_alt_deg)


_SITE_KEYS = {
    "name",
    "latitude_deg",
    "longitude_deg",
    "height_m",
    "timezone",
    "min_alt_deg",
    "horizon",
    "max_hour_angle_h",
    "dec_range_deg",
    "twilight",
    "moon_min_sep_deg",
    "moon_sep_per_illum_deg",
    "min_solar_elong_deg",
    "instrument",
    "clear_fraction",
    "allocation",
    "notes",
    "refraction",
    "pressure_hpa",
    "temperature_c",
}
_INSTRUMENT_KEYS = {f for f in Instrument.__dataclass_fields__}


def _instrument(f: Fields) -> Instrument:
    f.check_known(_INSTRUMENT_KEYS)
    return Instrument(
        aperture_m=f.float("aperture_m", required=True, lo=0.0, lo_open=True, hi=40.0),
        pixel_scale_arcsec=f.float("pixel_scale_arcsec", required=True, lo=0.0, lo_open=True, hi=60.0),
        read_noise_e=f.float("read_noise_e", 10.0, lo=0.0, hi=1000.0),
        gain_e_per_adu=f.float("gain_e_per_adu", 1.0, lo=0.0, lo_open=True),
        zero_point_mag=f.float("zero_point_mag", 22.0, lo=10.0, hi=35.0),
        dark_e_per_s=f.float("dark_e_per_s", 0.01, lo=0.0),
        seeing_arcsec=f.float("seeing_arcsec", 2.0, lo=0.0, lo_open=True, hi=20.0),
        sky_mag_per_arcsec2=f.float("sky_mag_per_arcsec2", 21.0, lo=10.0, hi=25.0),
        extinction_mag_per_airmass=f.float("extinction_mag_per_airmass", 0.15, lo=0.0, hi=2.0),
        readout_s=f.float("readout_s", 10.0, lo=0.0),
        overhead_s=f.float("overhead_s", 5.0, lo=0.0),
        filter=f.str("filter", "R", choices=FILTER_BANDS),
        nonsidereal_tracking=f.bool("nonsidereal_tracking", False),
    )


#: Allocation keys of earlier versions and their names now.
RENAMED_ALLOCATION_KEYS = {"blocks": "granted_utc"}


def allocation_from(f: Fields, extra_keys: Iterable[str] = ()) -> Allocation | None:
    """The allocation a table grants: ``hours_per_night`` or ``granted_utc`` intervals (or None for neither).

    Shared by a site file's ``[allocation]`` and a campaign's ``[site."NAME"]`` override.
    """
    f.check_known({"hours_per_night", "granted_utc", *extra_keys}, renamed=RENAMED_ALLOCATION_KEYS)
    hours = f.float("hours_per_night", None, lo=0.0, lo_open=True, hi=24.0)
    pairs = f.pairs("granted_utc")
    if hours is not None and pairs is not None:
        raise f.error("granted_utc", "give hours_per_night or granted_utc, not both")
    if pairs is None:
        return None if hours is None else Allocation(hours_per_night=hours)
    granted = []
    for i, (a, b) in enumerate(pairs):
        start = parse_utc(a, f.file, f"{f.name('granted_utc')}[{i}][0]")
        stop = parse_utc(b, f.file, f"{f.name('granted_utc')}[{i}][1]")
        if stop <= start:
            raise f.error("granted_utc", f"interval {i} ends before it starts")
        granted.append((start, stop))
    return Allocation(granted_utc=tuple(sorted(granted)))


def _horizon(f: Fields) -> tuple[tuple[float, float], ...]:
    """The horizon mask as (az_deg, min_alt_deg) sorted by azimuth; 360 and 0 are the same azimuth."""
    points: dict[float, float] = {}
    for i, (az, alt) in enumerate(f.pairs("horizon") or []):
        if not all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in (az, alt)):
            raise f.error("horizon", f"point {i} must be [az_deg, min_alt_deg] numbers")
        if not (0.0 <= az <= 360.0) or not (-5.0 <= alt <= 90.0):
            raise f.error("horizon", f"point {i} [{az}, {alt}] is outside az [0, 360], alt [-5, 90]")
        key = float(az) % 360.0
        if key in points and points[key] != float(alt):
            raise f.error(
                "horizon",
                f"point {i}: azimuth {az} is given twice with different altitudes (0 and 360 are the same azimuth)",
            )
        points[key] = float(alt)
    return tuple(sorted(points.items()))


#: Largest allowed gap between the time zone's UTC offset and the site's mean solar time, in hours.
#: Nights run from local noon to local noon; a zone far from the sun's clock would cut nights in two.
MAX_ZONE_SOLAR_GAP_H = 5.0


def _check_timezone_fits(f: Fields, tz: str, longitude_deg: float) -> None:
    """Reject a time zone whose local noon falls far from the Sun's noon (e.g. UTC left at the default)."""
    zone = ZoneInfo(tz)
    solar_h = longitude_deg / 15.0
    for month in (1, 7):  # standard and daylight-saving offsets
        offset_h = datetime(2030, month, 15, 12, tzinfo=zone).utcoffset().total_seconds() / 3600.0
        gap_h = (offset_h - solar_h + 12.0) % 24.0 - 12.0  # the date line: +14 h and -10 h are close
        if abs(gap_h) > MAX_ZONE_SOLAR_GAP_H:
            raise f.error(
                "timezone",
                f"{tz} (UTC{offset_h:+g} h) is {abs(gap_h):.1f} h from the Sun's local time at longitude "
                f"{longitude_deg:g}; give the site's IANA zone (nights run from local noon to local noon)",
            )


def load_site(path: str | Path) -> Site:
    """Read and validate one site file."""
    path = Path(path)
    f = Fields(path, read_toml(path))
    f.check_known(_SITE_KEYS)
    tz = f.str("timezone", "UTC")
    try:
        ZoneInfo(tz)
    except (ZoneInfoNotFoundError, ValueError):
        raise f.error("timezone", f"{tz!r} is not an IANA time zone name such as America/Santiago") from None
    horizon = _horizon(f)
    dec_range = f.float_list("dec_range_deg", length=2)
    if dec_range is not None and not (-90.0 <= dec_range[0] < dec_range[1] <= 90.0):
        raise f.error("dec_range_deg", f"{dec_range} must be [low, high] within [-90, 90]")
    inst = f.sub("instrument")
    alloc = f.sub("allocation")
    # East positive, normalised to [-180, 180): 200 and -160 name the same meridian.
    longitude_deg = f.float("longitude_deg", required=True, lo=-180.0, hi=360.0)
    if longitude_deg >= 180.0:
        longitude_deg -= 360.0
    _check_timezone_fits(f, tz, longitude_deg)
    return Site(
        name=f.str("name", required=True),
        latitude_deg=f.float("latitude_deg", required=True, lo=-90.0, hi=90.0),
        longitude_deg=longitude_deg,
        height_m=f.float("height_m", 0.0, lo=-500.0, hi=9000.0),
        timezone=tz,
        min_alt_deg=f.float("min_alt_deg", 20.0, lo=-5.0, hi=89.0),
        horizon=tuple(horizon),
        max_hour_angle_h=f.float("max_hour_angle_h", None, lo=0.0, lo_open=True, hi=12.0),
        dec_range_deg=tuple(dec_range) if dec_range else None,
        twilight=f.str("twilight", "nautical", choices=TWILIGHT_SUN_ALT_DEG),
        moon_min_sep_deg=f.float("moon_min_sep_deg", 30.0, lo=0.0, hi=180.0),
        moon_sep_per_illum_deg=f.float("moon_sep_per_illum_deg", 0.0, lo=0.0, hi=180.0),
        min_solar_elong_deg=f.float("min_solar_elong_deg", 30.0, lo=0.0, hi=180.0),
        instrument=_instrument(inst) if inst else None,
        clear_fraction=f.float("clear_fraction", 0.7, lo=0.0, hi=1.0),
        allocation=(allocation_from(alloc) if alloc else None) or Allocation(),
        source=str(path),
        refraction=f.bool("refraction", True),
        pressure_hpa=f.float("pressure_hpa", None, lo=300.0, hi=1100.0),
        temperature_c=f.float("temperature_c", None, lo=-60.0, hi=50.0),
    )
