"""The one set of formatters: sexagesimal angles that round with carry, checked against astropy."""

from __future__ import annotations

import numpy as np
import pytest
from astropy import units as u
from astropy.coordinates import Angle

from planner.core.textfmt import dec_dms, fixed, ra_hms, readable


def test_seconds_that_round_to_sixty_carry_into_the_minute():
    # 10h05m59.97s shown to 0.1 s is 10h06m00.0s (hand computation), never "60.0s".
    assert ra_hms(15.0 * (10 + 5 / 60 + 59.97 / 3600)) == "10h06m00.0s"
    # 23h59m59.99s to 0.1 s wraps to 00h00m00.0s.
    assert ra_hms(15.0 * (23 + 59 / 60 + 59.99 / 3600)) == "00h00m00.0s"
    # −12.99999° = −12°59′59.964″: to the arcsecond that is −13°00′00″, rounded, not truncated.
    assert dec_dms(-12.99999) == "-13d00m00s"
    assert dec_dms(45.5) == "+45d30m00s"
    assert dec_dms(-0.0000001) == "+00d00m00s"  # no negative zero
    assert ra_hms(float("nan")) == "-" and dec_dms(float("inf")) == "-"


def test_sexagesimal_agrees_with_astropy_angle_formatting():
    # Independent route: astropy.coordinates.Angle.to_string (Astropy Collaboration 2022, ApJ 935, 167).
    rng = np.random.default_rng(20341)
    for v in rng.uniform(0.0, 360.0, 2000):
        ref = Angle(v * u.deg).to_string(unit=u.hourangle, sep=" ", precision=2, pad=True)
        ref = "00" + ref[2:] if ref.startswith("24") else ref
        assert ra_hms(v, 2, letters=False) == ref
    for v in rng.uniform(-90.0, 90.0, 2000):
        ref = Angle(v * u.deg).to_string(unit=u.deg, sep=" ", precision=1, pad=True, alwayssign=True)
        assert dec_dms(v, 1, letters=False) == ref


@pytest.mark.parametrize(
    "value, digits, text",
    [
        (0.25, 3, "0.25"),
        (2.0, 3, "2"),
        (0.000259, 4, "0.000259"),
        (0.000269, 4, "0.000269"),
        (0.000259, 3, "0.00026"),
        (123456.0, 4, "1.23e+05"),
    ],
)
def test_readable_numbers_keep_small_rates_apart(value, digits, text):
    assert readable(value, digits) == text


def test_fixed_width_with_missing_values():
    assert fixed(1.234, ".1f", 6) == "   1.2"
    assert fixed(float("nan"), ".1f", 4) == "   -" and fixed(None, "d", 2) == " -"
