"""Observing sites: location, pointing limits, darkness, avoidance, instrument, weather, allocation.

One TOML file per site (schema in docs/formats.md). Loading validates every field and raises
:class:`InputError` naming the file and field; a :class:`Site` or :class:`Instrument` built in Python
checks itself against the same limits (``SITE_LIMITS``, ``INSTRUMENT_LIMITS``) with the same words.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, field
from datetime import datetime
from pathlib import Path
from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

import numpy as np

from planner.core.bands import FILTER_BANDS
from planner.core.errors import InputError
from planner.core.limits import Limit, check_choice, check_instance, check_limits, field_names, source_of
from planner.core.timegrid import parse_utc
from planner.core.tomlfile import Fields, read_toml
from planner.core.units import to_unit, utc_time

#: Sun-centre altitude that ends the night for each darkness choice (Explanatory Supplement).
TWILIGHT_SUN_ALT_DEG = {"civil": -6.0, "nautical": -12.0, "astronomical": -18.0}

INSTRUMENT_LIMITS = {
    "aperture_m": Limit(0.0, 40.0, lo_open=True),
    "pixel_scale_arcsec": Limit(0.0, 60.0, lo_open=True),
    "read_noise_e": Limit(0.0, 1000.0),
    "gain_e_per_adu": Limit(0.0, lo_open=True),
    "zero_point_mag": Limit(10.0, 35.0),
    "dark_e_per_s": Limit(0.0),
    "seeing_arcsec": Limit(0.0, 20.0, lo_open=True),
    "sky_mag_per_arcsec2": Limit(10.0, 25.0),
    "extinction_mag_per_airmass": Limit(0.0, 2.0),
    "readout_s": Limit(0.0),
    "overhead_s": Limit(0.0),
}
SITE_LIMITS = {
    "latitude_deg": Limit(-90.0, 90.0),
    # East positive; [180, 360] is accepted and stored in [-180, 180): 200 and -160 name the same meridian.
    "longitude_deg": Limit(-180.0, 360.0),
    "height_m": Limit(-500.0, 9000.0),
    "min_alt_deg": Limit(-5.0, 89.0),
    "max_hour_angle_h": Limit(0.0, 12.0, lo_open=True, optional=True),
    "moon_min_sep_deg": Limit(0.0, 180.0),
    "moon_sep_per_illum_deg": Limit(0.0, 180.0),
    "min_solar_elong_deg": Limit(0.0, 180.0),
    "clear_fraction": Limit(0.0, 1.0),
    "pressure_hpa": Limit(300.0, 1100.0, optional=True),
    "temperature_c": Limit(-60.0, 50.0, optional=True),
}
ALLOCATION_LIMITS = {"hours_per_night": Limit(0.0, 24.0, lo_open=True, optional=True)}


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

    def __post_init__(self) -> None:
        check_limits(self, INSTRUMENT_LIMITS)
        check_choice(self, "filter", FILTER_BANDS)
        if not isinstance(self.nonsidereal_tracking, bool):
            raise InputError(
                source_of(self), "nonsidereal_tracking", f"{self.nonsidereal_tracking!r} is not true or false"
            )


@dataclass(frozen=True)
class Allocation:
    """Time granted to the campaign: all dark time, a number of hours per night, or fixed UTC blocks."""

    hours_per_night: float | None = None
    granted_utc: tuple[tuple[np.datetime64, np.datetime64], ...] = ()

    def __post_init__(self) -> None:
        check_limits(self, ALLOCATION_LIMITS)
        if self.hours_per_night is not None and self.granted_utc:
            raise InputError(source_of(self), "granted_utc", "give hours_per_night or granted_utc, not both")
        granted = []
        for i, pair in enumerate(self.granted_utc):
            if len(pair) != 2:
                raise InputError(source_of(self), "granted_utc", f"interval {i} must be a (start, end) pair")
            start, stop = (utc_time(t, f"granted_utc[{i}][{k}]") for k, t in enumerate(pair))
            if stop <= start:
                raise InputError(source_of(self), "granted_utc", f"interval {i} ends before it starts")
            granted.append((start, stop))
        object.__setattr__(self, "granted_utc", tuple(sorted(granted)))

    @property
    def unlimited(self) -> bool:
        return self.hours_per_night is None and not self.granted_utc


@dataclass(frozen=True)
class Site:
    """An observing site: where it is, what it may point at, when its night is dark, what it observes with.

    Built from a site file by :func:`load_site`, from an astropy ``EarthLocation`` by
    :meth:`from_earth_location`, or directly; every field is checked when built (``SITE_LIMITS``).
    Angles may be given as astropy Quantities.
    """

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

    def __post_init__(self) -> None:
        file = source_of(self)
        if not isinstance(self.name, str) or not self.name.strip():
            raise InputError(file, "name", f"{self.name!r} must be a non-empty string")
        check_limits(self, SITE_LIMITS)
        if self.longitude_deg >= 180.0:
            object.__setattr__(self, "longitude_deg", self.longitude_deg - 360.0)
        check_choice(self, "twilight", TWILIGHT_SUN_ALT_DEG)
        check_timezone(file, self.timezone, self.longitude_deg)
        object.__setattr__(self, "horizon", horizon_points(self.horizon, file))
        if self.dec_range_deg is not None:
            object.__setattr__(self, "dec_range_deg", _dec_range(self.dec_range_deg, file))
        if self.instrument is not None:
            check_instance(self, "instrument", Instrument, "an Instrument")
        check_instance(self, "allocation", Allocation, "an Allocation")

    @classmethod
    def from_earth_location(cls, name: str, location, timezone: str = "UTC", **settings) -> Site:
        """A site at an astropy ``EarthLocation`` (its WGS84 geodetic longitude, latitude and height).

        ``timezone`` is the site's IANA zone (nights run from local noon to local noon); ``settings`` are
        any other fields (``min_alt_deg``, ``instrument``, ...).
        """
        lon, lat, height = location.to_geodetic("WGS84")
        return cls(
            name=name,
            latitude_deg=to_unit(lat, "deg", "latitude_deg"),
            longitude_deg=to_unit(lon, "deg", "longitude_deg"),
            height_m=to_unit(height, "m", "height_m"),
            timezone=timezone,
            **settings,
        )

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
_INSTRUMENT_KEYS = field_names(Instrument)


def _instrument(f: Fields) -> Instrument:
    f.check_known(_INSTRUMENT_KEYS)
    values = f.values(INSTRUMENT_LIMITS, required=("aperture_m", "pixel_scale_arcsec"))
    if f.has("filter"):
        values["filter"] = f.str("filter", choices=FILTER_BANDS)
    if f.has("nonsidereal_tracking"):
        values["nonsidereal_tracking"] = f.bool("nonsidereal_tracking")
    return f.build(Instrument, **values)


#: Allocation keys of earlier versions and their names now.
RENAMED_ALLOCATION_KEYS = {"blocks": "granted_utc"}


def allocation_from(f: Fields, extra_keys: Iterable[str] = ()) -> Allocation | None:
    """The allocation a table grants: ``hours_per_night`` or ``granted_utc`` intervals (or None for neither).

    Shared by a site file's ``[allocation]`` and a campaign's ``[site."NAME"]`` override.
    """
    f.check_known({"hours_per_night", "granted_utc", *extra_keys}, renamed=RENAMED_ALLOCATION_KEYS)
    hours = f.limited("hours_per_night", ALLOCATION_LIMITS["hours_per_night"])
    pairs = f.pairs("granted_utc")
    if hours is not None and pairs is not None:
        raise f.error("granted_utc", "give hours_per_night or granted_utc, not both")
    if pairs is None:
        return None if hours is None else Allocation(hours_per_night=hours)
    granted = []
    for i, (a, b) in enumerate(pairs):
        start = parse_utc(a, f.file, f"{f.name('granted_utc')}[{i}][0]")
        stop = parse_utc(b, f.file, f"{f.name('granted_utc')}[{i}][1]")
        granted.append((start, stop))
    return f.build(Allocation, granted_utc=tuple(granted))


def horizon_points(points, file: str, field_name: str = "horizon") -> tuple[tuple[float, float], ...]:
    """The horizon mask as (az_deg, min_alt_deg) sorted by azimuth; 360 and 0 are the same azimuth."""
    out: dict[float, float] = {}
    for i, point in enumerate(points or ()):
        pair = tuple(point) if isinstance(point, (list, tuple)) else ()
        if len(pair) != 2 or not all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in pair):
            raise InputError(file, field_name, f"point {i} must be [az_deg, min_alt_deg] numbers")
        az, alt = pair
        if not (0.0 <= az <= 360.0) or not (-5.0 <= alt <= 90.0):
            raise InputError(file, field_name, f"point {i} [{az}, {alt}] is outside az [0, 360], alt [-5, 90]")
        key = float(az) % 360.0
        if key in out and out[key] != float(alt):
            raise InputError(
                file,
                field_name,
                f"point {i}: azimuth {az} is given twice with different altitudes (0 and 360 are the same azimuth)",
            )
        out[key] = float(alt)
    return tuple(sorted(out.items()))


def _dec_range(value, file: str) -> tuple[float, float]:
    pair = [to_unit(v, "deg", "dec_range_deg", file) for v in value] if isinstance(value, (list, tuple)) else []
    if len(pair) != 2 or not all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in pair):
        raise InputError(file, "dec_range_deg", f"{value!r} must be [low, high] numbers")
    if not (-90.0 <= pair[0] < pair[1] <= 90.0):
        raise InputError(file, "dec_range_deg", f"{[float(v) for v in pair]} must be [low, high] within [-90, 90]")
    return (float(pair[0]), float(pair[1]))


#: Largest allowed gap between the time zone's UTC offset and the site's mean solar time, in hours.
#: Nights run from local noon to local noon; a zone far from the sun's clock would cut nights in two.
MAX_ZONE_SOLAR_GAP_H = 5.0


def check_timezone(file: str, tz: object, longitude_deg: float) -> None:
    """An IANA zone whose local noon falls near the Sun's noon at the site (not e.g. UTC left at the default)."""
    try:
        zone = ZoneInfo(tz) if isinstance(tz, str) else None
    except (ZoneInfoNotFoundError, ValueError):
        zone = None
    if zone is None:
        raise InputError(file, "timezone", f"{tz!r} is not an IANA time zone name such as America/Santiago")
    solar_h = longitude_deg / 15.0
    for month in (1, 7):  # standard and daylight-saving offsets
        offset_h = datetime(2030, month, 15, 12, tzinfo=zone).utcoffset().total_seconds() / 3600.0
        gap_h = (offset_h - solar_h + 12.0) % 24.0 - 12.0  # the date line: +14 h and -10 h are close
        if abs(gap_h) > MAX_ZONE_SOLAR_GAP_H:
            raise InputError(
                file,
                "timezone",
                f"{tz} (UTC{offset_h:+g} h) is {abs(gap_h):.1f} h from the Sun's local time at longitude "
                f"{longitude_deg:g}; give the site's IANA zone (nights run from local noon to local noon)",
            )


def load_site(path: str | Path) -> Site:
    """Read and validate one site file."""
    path = Path(path)
    f = Fields(path, read_toml(path))
    f.check_known(_SITE_KEYS)
    values: dict[str, object] = {"name": f.str("name", required=True)}
    for key in ("timezone", "twilight"):
        if f.has(key):
            values[key] = f.str(key)
    if f.has("horizon"):
        values["horizon"] = f.pairs("horizon")
    if f.has("dec_range_deg"):
        values["dec_range_deg"] = tuple(f.float_list("dec_range_deg", length=2))
    values.update(f.values(SITE_LIMITS, required=("latitude_deg", "longitude_deg")))
    inst = f.sub("instrument")
    if inst:
        values["instrument"] = _instrument(inst)
    alloc = f.sub("allocation")
    allocation = allocation_from(alloc) if alloc else None
    if allocation is not None:
        values["allocation"] = allocation
    if f.has("refraction"):
        values["refraction"] = f.bool("refraction")
    return Site(**values, source=str(path))
