"""Formatting numbers, angles and times for people: one set of formatters for tables, sheets and report.

Rounding happens once, on the smallest unit shown, and carries upward, so 59.97 s of right ascension
prints as the next minute (``10h05m00.0s``), never as ``60.0s``, and declinations round instead of
truncating.
"""

from __future__ import annotations

import math
import re


def _sexagesimal(value: float, decimals: int) -> tuple[int, int, float]:
    """(whole units, minutes, seconds) of a non-negative value, rounded on the seconds with carry."""
    scale = 10**decimals
    total = round(value * 3600.0 * scale)  # in units of the last digit shown
    whole, rest = divmod(total, 3600 * scale)
    minutes, sec = divmod(rest, 60 * scale)
    return int(whole), int(minutes), sec / scale


def ra_hms(ra_deg: float, decimals: int = 1, letters: bool = True) -> str:
    """Right ascension as ``HHhMMmSS.Ss`` (or ``HH MM SS.S`` with ``letters=False``); 24h wraps to 00h;
    ``-`` when not finite."""
    if not math.isfinite(ra_deg):
        return "-"
    h, m, s = _sexagesimal((ra_deg % 360.0) / 15.0, decimals)
    width = 3 + decimals if decimals else 2
    a, b, c = ("h", "m", "s") if letters else (" ", " ", "")
    return f"{h % 24:02d}{a}{m:02d}{b}{s:0{width}.{decimals}f}{c}"


def dec_dms(dec_deg: float, decimals: int = 0, letters: bool = True) -> str:
    """Declination as ``+DDdMMmSSs`` (or ``+DD MM SS`` with ``letters=False``), rounded with carry; ``-``
    when not finite."""
    if not math.isfinite(dec_deg):
        return "-"
    d, m, s = _sexagesimal(abs(dec_deg), decimals)
    sign = "-" if dec_deg < 0 and (d or m or s) else "+"
    width = 3 + decimals if decimals else 2
    a, b, c = ("d", "m", "s") if letters else (" ", " ", "")
    return f"{sign}{d:02d}{a}{m:02d}{b}{s:0{width}.{decimals}f}{c}"


def clock_hm(iso_text: str) -> str:
    """``hh:mm`` of an ISO 8601 time text (``2034-03-16T20:15:00Z`` → ``20:15``); the text itself if short."""
    s = str(iso_text)
    return s[11:16] if len(s) >= 16 else s


def fixed(value, spec: str, width: int = 0) -> str:
    """``format(value, spec)`` right-aligned to ``width``; ``-`` for a missing or non-finite number."""
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "-".rjust(width)
    return format(value, spec).rjust(width)


def readable(value: float, digits: int = 3) -> str:
    """A number rounded for reading: ``digits`` decimals, trailing zeros dropped; very small or large
    values keep significant figures (so 2.6e-4 and 2.7e-4 stay apart)."""
    v = float(value)
    if not math.isfinite(v):
        return "—"
    if v != 0 and (abs(v) >= 1e5 or abs(v) < 0.01):
        return f"{v:.{max(digits - 1, 2)}g}"
    text = f"{v:.{digits}f}"
    return text.rstrip("0").rstrip(".") if "." in text else text


#: C0 and C1 control characters and DEL: they move the cursor, ring bells or end lines on a terminal.
_CONTROL_CHARS = re.compile("[\x00-\x1f\x7f-\x9f]")
_CONTROL_NAMES = {"\x07": "BEL", "\x08": "BS", "\t": "TAB", "\n": "newline", "\r": "CR", "\x1b": "ESC", "\x7f": "DEL"}


def control_char(text: str) -> str | None:
    """The first control character in ``text``, named for a message (``'ESC (U+001B)'``), or None."""
    m = _CONTROL_CHARS.search(text)
    if m is None:
        return None
    ch = m.group()
    name = _CONTROL_NAMES.get(ch)
    return f"{name} (U+{ord(ch):04X})" if name else f"U+{ord(ch):04X}"
