"""The API boundary: astropy Time and Quantity, datetime, datetime64 and ISO text become the pipeline's
plain numbers and UTC datetime64; every column name carries its unit."""

from __future__ import annotations

from datetime import date, datetime, timedelta, timezone

import numpy as np
import pytest

from planner.core.errors import InputError
from planner.core.units import calendar_date, hours, seconds, tdb_jd, to_unit, unit_of, utc_time, utc_times

u = pytest.importorskip("astropy.units", reason="astropy converts Time and Quantity inputs")
Time = pytest.importorskip("astropy.time", reason="astropy converts Time and Quantity inputs").Time

T0 = np.datetime64("2034-03-16T21:05:00", "ns")


def test_every_time_form_gives_the_same_utc_instant():
    forms = [
        T0,
        "2034-03-16T21:05:00Z",
        "2034-03-16 21:05",
        datetime(2034, 3, 16, 21, 5),  # naive: read as UTC
        datetime(2034, 3, 16, 23, 5, tzinfo=timezone(timedelta(hours=2))),  # aware: converted
        Time("2034-03-16T21:05:00", scale="utc"),
    ]
    for form in forms:
        assert utc_time(form) == T0, form


def test_a_time_on_another_scale_is_converted_to_utc():
    # TT − UTC = 32.184 s + ΔAT, ΔAT = 37 s since 2017-01-01 (IERS Bulletin C 64, 2022); TDB − TT < 2 ms.
    t = utc_time(Time("2024-01-01T00:00:00", scale="tt"))
    assert abs((t - np.datetime64("2023-12-31T23:58:50.816", "ns")) / np.timedelta64(1, "ms")) < 1
    t = utc_time(Time("2024-01-01T00:00:00", scale="tdb"))
    assert abs((t - np.datetime64("2023-12-31T23:58:50.816", "ns")) / np.timedelta64(1, "ms")) < 3


def test_arrays_of_times_keep_their_order():
    times = Time(["2034-03-16T21:00", "2034-03-17T03:00"], scale="utc")
    assert list(utc_times(times)) == [np.datetime64("2034-03-16T21:00", "ns"), np.datetime64("2034-03-17T03:00", "ns")]
    assert utc_times(["2034-03-16T21:00Z", datetime(2034, 3, 17, 3)]).dtype == np.dtype("datetime64[ns]")


def test_a_number_is_not_a_time():
    with pytest.raises(InputError, match="times_utc: 2461000.5 is not a time"):
        utc_times([2461000.5])


def test_quantities_become_numbers_in_the_unit_of_the_name():
    assert to_unit(1 * u.arcmin, "deg", "min_alt_deg") == pytest.approx(1 / 60)
    assert seconds(5 * u.min, "step_s") == 300.0
    assert seconds("5m", "step_s") == 300.0
    assert seconds(timedelta(hours=1), "step_s") == 3600.0
    assert hours(90 * u.min, "min_period_h") == 1.5
    assert hours("90m", "min_period_h") == 1.5
    assert hours(2, "min_period_h") == 2.0
    with pytest.raises(InputError, match="min_period_h: 3.0 m is not in units convertible to h"):
        hours(3 * u.m, "min_period_h")


def test_calendar_dates():
    assert calendar_date("2034-03-16") == date(2034, 3, 16)
    assert calendar_date(Time("2034-03-16T22:00", scale="utc")) == date(2034, 3, 16)
    assert calendar_date(datetime(2034, 3, 16, 22)) == date(2034, 3, 16)


def test_tdb_julian_dates():
    # J2000.0 = JD 2451545.0 TT, 2000-01-01 12:00 TT (Explanatory Supplement, 3rd ed., §3); TDB − TT < 2 ms.
    assert tdb_jd("2000-01-01T12:00:00", "epoch") == 2451545.0
    assert tdb_jd(Time("2000-01-01T12:00:00", scale="tt"), "epoch") == pytest.approx(2451545.0, abs=1e-7)
    assert tdb_jd(2451545.0, "epoch") == 2451545.0


@pytest.mark.parametrize(
    ("name", "unit"),
    [
        ("helio_dist_au", "AU"),
        ("alt_deg", "deg"),
        ("exposure_s", "s"),
        ("hours", "h"),
        ("night_budget_h", "h"),
        ("setup_minutes", "min"),
        ("light_time_minutes", "min"),
        ("motion_arcsec_per_min", "arcsec / min"),
        ("sky_mag_arcsec2", "mag / arcsec2"),
        ("afrho_cm", "cm"),
        ("km_per_arcsec", "km / arcsec"),
        ("freq_per_day", "1 / d"),
        ("rate_sigma_mag_per_day", "mag / d"),
        ("height_m", "m"),
        ("airmass", ""),
        ("site", None),
        ("n_exposures", None),
    ],
)
def test_names_carry_their_units(name, unit):
    assert unit_of(name) == unit
    if unit:
        u.Unit(unit)  # astropy reads every unit string of the table
