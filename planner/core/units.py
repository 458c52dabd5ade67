"""Values at the API boundary, and the unit of every name.

Inside the pipeline times are ``numpy.datetime64[ns]`` in UTC and every other value is a plain number
in the unit its name carries (``helio_dist_au``, ``exposure_s``, ``period_h``). A caller may hand the
public functions astropy ``Time`` and ``Quantity`` objects, ``datetime``, numpy datetime64 or ISO 8601
text; the converters here turn them into the pipeline's forms, or raise :class:`InputError`. The unit
of a column or field comes from its name (:func:`unit_of`), so the same table gives ``QTable`` and
ECSV columns their units. astropy is imported only when a value is astropy's: core stays light.
"""

from __future__ import annotations

import warnings
from contextlib import contextmanager
from datetime import date, datetime, timedelta
from numbers import Real

import numpy as np

from planner.core.errors import InputError
from planner.core.timegrid import parse_date, parse_duration_s, parse_utc, to_jd_utc

#: Units of names that carry no unit suffix (astropy unit strings; "" is dimensionless).
NAME_UNITS = {
    "hours": "h",
    "mag_pred": "mag",
    "mag_band_pred": "mag",
    "mag_err": "mag",
    "mag_err_pred": "mag",
    "km_per_arcsec": "km / arcsec",
    "sky_mag_arcsec2": "mag / arcsec2",
    "airmass": "",
    "min_airmass": "",
    "max_airmass": "",
    "moon_illum": "",
    "snr_pred": "",
    "snr_target": "",
    "eccentricity": "",
    "clear_fraction": "",
    "M1": "mag",
    "M2": "mag",
    "H": "mag",
    "K1": "",
    "K2": "",
    "G": "",
}
#: Unit suffixes of our names, longest first: a name ending in one of them is in that unit.
SUFFIX_UNITS = (
    ("_arcsec_per_min", "arcsec / min"),
    ("_mag_per_arcsec2", "mag / arcsec2"),
    ("_mag_per_airmass", "mag"),
    ("_mag_per_day", "mag / d"),
    ("_mag_per_deg", "mag / deg"),
    ("_deg_per_day", "deg / d"),
    ("_e_per_adu", "electron / adu"),
    ("_e_per_s", "electron / s"),
    ("_per_day", "1 / d"),
    ("_minutes", "min"),
    ("_arcsec", "arcsec"),
    ("_deg", "deg"),
    ("_mag", "mag"),
    ("_au", "AU"),
    ("_km", "km"),
    ("_cm", "cm"),
    ("_h", "h"),
    ("_s", "s"),
    ("_m", "m"),
    ("_e", "electron"),
)


def unit_of(name: str) -> str | None:
    """The unit a column or field name carries (``"deg"`` for ``alt_deg``), ``""`` for a dimensionless
    quantity, None for a name with no unit (text, counts, flags, times)."""
    if name in NAME_UNITS:
        return NAME_UNITS[name]
    for suffix, unit in SUFFIX_UNITS:
        if name.endswith(suffix):
            return unit
    return None


def _is_quantity(value: object) -> bool:
    return hasattr(value, "unit") and hasattr(value, "to_value")


def _is_astropy_time(value: object) -> bool:
    return type(value).__module__.startswith("astropy.time") and hasattr(value, "jd1")


def to_unit(value, unit: str, field: str, file: str = "python"):
    """A Quantity in ``unit`` as a number (or array); a plain number or array is taken as already in it."""
    if _is_quantity(value):
        from astropy import units as u

        try:
            out = value.to_value(unit)
        except u.UnitConversionError:
            raise InputError(file, field, f"{value} is not in units convertible to {unit}") from None
        return float(out) if np.ndim(out) == 0 else np.asarray(out, dtype=float)
    if isinstance(value, np.generic) and isinstance(value.item(), Real):
        return value.item()
    return value


def field_value(value, name: str, file: str = "python"):
    """A dataclass field's value in the unit of its name: Quantities converted, numpy scalars made plain."""
    unit = unit_of(name)
    if _is_quantity(value):
        if unit is None:
            raise InputError(file, name, f"{value} has a unit but {name} is a plain number")
        return to_unit(value, unit, name, file)
    if isinstance(value, np.generic):
        return value.item()
    return value


def seconds(value, field: str, file: str = "python") -> float:
    """A duration in seconds from a number of seconds, text (``"5m"``), a time Quantity or a timedelta."""
    if isinstance(value, str):
        return parse_duration_s(value, file, field)
    if isinstance(value, timedelta):
        value = value.total_seconds()
    elif isinstance(value, np.timedelta64):
        value = value / np.timedelta64(1, "s")
    else:
        value = to_unit(value, "s", field, file)
    if isinstance(value, bool) or not isinstance(value, Real) or not value > 0:
        raise InputError(file, field, f"{value!r} is not a duration longer than zero")
    return float(value)


def hours(value, field: str, file: str = "python") -> float:
    """A period in hours from a number of hours, a time Quantity or text (``"2h"``, ``"90m"``)."""
    if isinstance(value, str):
        try:
            return float(value)
        except ValueError:
            return seconds(value, field, file) / 3600.0
    if isinstance(value, (timedelta, np.timedelta64)):
        return seconds(value, field, file) / 3600.0
    value = to_unit(value, "h", field, file)
    if isinstance(value, bool) or not isinstance(value, Real):
        raise InputError(file, field, f"{value!r} is not a number of hours")
    return float(value)


@contextmanager
def quiet_leap_seconds():
    """Silence astropy's "dubious year" warning: UTC beyond the announced leap seconds is as good as it gets
    for planning (it differs from the final UTC by at most a second or two)."""
    from erfa import ErfaWarning

    with warnings.catch_warnings():
        warnings.filterwarnings("ignore", message=".*dubious year", category=ErfaWarning)
        yield


def _one_time(value, field: str, file: str) -> np.datetime64:
    if isinstance(value, (np.datetime64, datetime, date, str)):
        return parse_utc(value, file, field)
    raise InputError(file, field, f"{value!r} is not a time (give astropy Time, datetime, datetime64 or ISO text)")


def utc_times(values, field: str = "times_utc", file: str = "python") -> np.ndarray:
    """Times as a 1-D ``datetime64[ns]`` UTC array, from astropy ``Time`` (any scale), numpy datetime64,
    ``datetime`` (a naive one is read as UTC) or ISO 8601 text, one value or a sequence of them."""
    if _is_astropy_time(values):
        with quiet_leap_seconds():
            out = np.atleast_1d(values.utc.datetime64)
        return out.astype("datetime64[ns]")
    arr = np.asarray(values)
    if arr.dtype.kind == "M":
        return np.atleast_1d(arr.astype("datetime64[ns]"))
    flat = [_one_time(v, field, file) for v in np.atleast_1d(np.asarray(values, dtype=object)).ravel()]
    return np.array(flat, dtype="datetime64[ns]")


def utc_time(value, field: str = "time", file: str = "python") -> np.datetime64:
    """One time as ``datetime64[ns]`` UTC (the forms of :func:`utc_times`)."""
    out = utc_times(value, field, file)
    if out.size != 1:
        raise InputError(file, field, f"expected one time, got {out.size}")
    return out[0]


def calendar_date(value, field: str = "date", file: str = "python") -> date:
    """A calendar date from a ``date``, ISO text (``2034-03-16``), a datetime or datetime64, or a Time
    (its UTC date)."""
    if isinstance(value, datetime):
        return value.date()  # the date on the datetime's own clock (a night is named by its local date)
    if isinstance(value, date):
        return value
    if isinstance(value, str):
        return parse_date(value, file, field)
    if isinstance(value, np.datetime64) or _is_astropy_time(value):
        day = str(utc_time(value, field, file).astype("datetime64[D]"))
        return date.fromisoformat(day)
    raise InputError(file, field, f"{value!r} is not a date such as 2034-03-16")


def tdb_jd(value, field: str, file: str = "python") -> float:
    """A TDB instant as a Julian date: a number (already a JD), an astropy ``Time`` (converted to TDB), or a
    datetime, datetime64 or ISO 8601 text read on the TDB scale."""
    if _is_astropy_time(value):
        return float(value.tdb.jd)
    if isinstance(value, (str, datetime, date, np.datetime64)):
        return float(to_jd_utc(np.array([parse_utc(value, file, field)]))[0])
    if isinstance(value, np.generic):
        return value.item()
    return value
