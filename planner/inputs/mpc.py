"""IAU Minor Planet Center one-line orbits: recognise each line's layout, then read its columns.

Two layouts are read (MPC format descriptions of CometEls.txt and MPCORB.DAT): the comet line, whose
columns 15–29 hold the perihelion date, and the minor-planet line, whose columns 21–25 hold a packed
epoch such as ``K341R``. Every line is classified before any column is read, so a truncated
minor-planet line is reported as one (not read as a comet line), and a file of binary or other text
is refused in one line instead of being listed as orbit lines.

The result is a plain record of the elements as the line gives them; :mod:`planner.inputs.targets`
turns it into a :class:`~planner.inputs.targets.Target`. Bad input raises :class:`InputError`
naming the file, the line and the field.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass

from planner.core.errors import InputError
from planner.core.textfmt import control_char
from planner.core.timegrid import check_orbit_jd

COMET = "comet"
MINOR_PLANET = "minor planet"

_PACKED_EPOCH = re.compile(r"^[IJK]\d\d[1-9A-C][1-9A-V]$")
_CENTURY = {"I": 1800, "J": 1900, "K": 2000}
#: Comet line, columns 15-21: perihelion year, a blank, the month (MPC CometEls.txt layout).
_COMET_DATE = re.compile(r"^\d{4} [ \d]\d$")
#: Last column each layout needs for its orbital elements (comet: i in 72-79; minor planet: a in 93-103).
_COMET_MIN_LENGTH = 79
_MINOR_PLANET_MIN_LENGTH = 103


@dataclass(frozen=True)
class MpcOrbit:
    """One MPC line's elements as given. Angles in degrees (J2000 ecliptic), times TDB Julian dates.

    A comet line gives ``perihelion_tdb_jd`` and ``perihelion_dist_au`` (and the MPC's G, k as
    ``mag_g``, ``slope_k``); a minor-planet line gives ``mean_anomaly_deg`` at ``epoch_tdb_jd`` and
    ``semimajor_axis_au`` (and H, G as ``mag_h``, ``mag_g``).
    """

    layout: str
    line_no: int
    name: str
    epoch_tdb_jd: float
    eccentricity: float
    inclination_deg: float
    ascending_node_deg: float
    arg_perihelion_deg: float
    perihelion_tdb_jd: float | None = None
    perihelion_dist_au: float | None = None
    mean_anomaly_deg: float | None = None
    semimajor_axis_au: float | None = None
    mag_h: float | None = None
    mag_g: float | None = None
    slope_k: float | None = None


def _unpack_day(ch: str) -> int:
    return int(ch) if ch.isdigit() else ord(ch) - ord("A") + 10


def jd_from_calendar(year: int, month: int, day: float) -> float:
    """Julian date of a Gregorian calendar date with fractional day (Meeus 1998, ch. 7)."""
    if month <= 2:
        year -= 1
        month += 12
    a = year // 100
    b = 2 - a + a // 4
    return math.floor(365.25 * (year + 4716)) + math.floor(30.6001 * (month + 1)) + day + b - 1524.5


def _col(line: str, first: int, last: int) -> str:
    """Columns ``first``–``last`` (1-based, inclusive) as in the MPC format descriptions."""
    return line[first - 1 : last].strip()


def line_layout(line: str) -> str | None:
    """``COMET``, ``MINOR_PLANET`` or None, from the columns that identify each layout (not its length)."""
    if _PACKED_EPOCH.match(line[20:25]) and line[:7].strip() and line[7:8] in (" ", ""):
        return MINOR_PLANET
    if _COMET_DATE.match(line[14:21]):
        return COMET
    return None


def line_name(line: str) -> str:
    """The readable name of a line (for picking with ``--object`` and for messages)."""
    if line_layout(line) == MINOR_PLANET:
        return _col(line, 167, 194) or _col(line, 1, 7)
    return _col(line, 103, 158) or _col(line, 1, 12)


def check_line(file: str, line_no: int, line: str) -> str:
    """The line's layout; a line of neither layout, cut short, or holding control characters is an
    InputError saying which."""
    where = f"line {line_no}"
    bad = control_char(line.replace("\t", " "))
    if bad is not None or "\ufffd" in line:
        raise InputError(file, where, f"holds a control character ({bad or 'U+FFFD'}): not an MPC orbit line")
    layout = line_layout(line)
    if layout is None:
        short = f"too short ({len(line)} characters) and " if len(line) < _COMET_MIN_LENGTH else ""
        raise InputError(
            file,
            where,
            f"{short}not an MPC one-line orbit: neither a comet line (perihelion date in columns 15-29) "
            "nor a minor-planet line (packed epoch such as K341R in columns 21-25)",
        )
    need = _COMET_MIN_LENGTH if layout == COMET else _MINOR_PLANET_MIN_LENGTH
    if len(line) < need:
        what = "q, e, ω, Ω and i" if layout == COMET else "M, ω, Ω, i, e and a"
        raise InputError(
            file,
            where,
            f"a {layout} line cut short: it ends at column {len(line)}, and {what} need columns up to {need}",
        )
    return layout


def orbit_lines(text: str, file: str) -> list[tuple[int, str]]:
    """The orbit lines of a file (blank lines and ``#`` comments skipped), each checked by :func:`check_line`."""
    lines = [
        (i + 1, ln.rstrip("\r\n"))
        for i, ln in enumerate(text.splitlines())
        if ln.strip() and not ln.lstrip().startswith("#")
    ]
    if not lines:
        raise InputError(file, "-", "no orbit lines (expected MPC one-line comet or minor-planet orbits)")
    for n, ln in lines:
        check_line(file, n, ln)
    return lines


def pick_line(lines: list[tuple[int, str]], object_name: str | None, file: str) -> tuple[int, str]:
    """The one line to use: the only one, or the one whose name contains ``object_name`` (an exact name wins)."""
    if object_name is not None:
        wanted = object_name.strip().lower()
        picked = [(n, ln) for n, ln in lines if wanted in ln.lower()]
        exact = [(n, ln) for n, ln in picked if line_name(ln).lower() == wanted]
        picked = exact or picked
        if not picked:
            raise InputError(file, "object", f"no line mentions {object_name!r}")
        if len(picked) > 1:
            names = ", ".join(line_name(ln) for _, ln in picked[:5])
            raise InputError(file, "object", f"{object_name!r} matches {len(picked)} lines ({names}); be more specific")
        return picked[0]
    if len(lines) > 1:
        names = ", ".join(line_name(ln) for _, ln in lines[:5]) + (", ..." if len(lines) > 5 else "")
        raise InputError(
            file, "object", f"the file holds {len(lines)} orbit lines ({names}); pick one with --object NAME"
        )
    return lines[0]


def _num(file: str, line_no: int, line: str, first: int, last: int, what: str, required: bool = True) -> float | None:
    text = _col(line, first, last)
    if not text:
        if required:
            raise InputError(file, f"line {line_no}: {what}", f"columns {first}-{last} are blank")
        return None
    try:
        value = float(text)
    except ValueError:
        raise InputError(
            file, f"line {line_no}: {what}", f"{text!r} in columns {first}-{last} is not a number"
        ) from None
    if not math.isfinite(value):
        raise InputError(file, f"line {line_no}: {what}", f"{text!r} is not finite")
    return value


def read_line(file: str, line_no: int, line: str) -> MpcOrbit:
    """The elements of one checked line, in the layout :func:`check_line` recognised."""
    if check_line(file, line_no, line) == MINOR_PLANET:
        return _minor_planet_line(file, line_no, line)
    return _comet_line(file, line_no, line)


def _comet_line(file: str, line_no: int, line: str) -> MpcOrbit:
    """MPC one-line comet orbit (the CometEls.txt layout).

    Columns: 15–18 year, 20–21 month, 23–29 day (TT) of perihelion; 31–39 q (au); 42–49 e;
    52–59 ω, 62–69 Ω, 72–79 i (deg, J2000 ecliptic); 82–89 epoch YYYYMMDD; 92–95 G and 97–100 k
    with m = G + 5 log Δ + 2.5 k log r; 103–158 designation and name.
    """

    def num(a: int, b: int, what: str, required: bool = True) -> float | None:
        return _num(file, line_no, line, a, b, what, required)

    year = num(15, 18, "perihelion year")
    month = num(20, 21, "perihelion month")
    day = num(23, 29, "perihelion day")
    shown = f"{year:.0f}-{month:02.0f}-{day}"
    if not (1 <= month <= 12 and 0.0 <= day < 32.0):
        raise InputError(file, f"line {line_no}: perihelion date", f"{shown} is not a date")
    tp = check_orbit_jd(jd_from_calendar(int(year), int(month), day), file, f"line {line_no}: perihelion date", shown)
    epoch_text = _col(line, 82, 89)
    if epoch_text:
        if not re.fullmatch(r"\d{8}", epoch_text):
            raise InputError(file, f"line {line_no}: epoch", f"{epoch_text!r} is not YYYYMMDD")
        epoch = jd_from_calendar(int(epoch_text[:4]), int(epoch_text[4:6]), float(epoch_text[6:8]))
        check_orbit_jd(epoch, file, f"line {line_no}: epoch", epoch_text)
    else:
        epoch = tp
    return MpcOrbit(
        layout=COMET,
        line_no=line_no,
        name=line_name(line),
        epoch_tdb_jd=epoch,
        perihelion_tdb_jd=tp,
        perihelion_dist_au=num(31, 39, "perihelion distance"),
        eccentricity=num(42, 49, "eccentricity"),
        arg_perihelion_deg=num(52, 59, "argument of perihelion"),
        ascending_node_deg=num(62, 69, "ascending node"),
        inclination_deg=num(72, 79, "inclination"),
        mag_g=num(92, 95, "magnitude G", required=False),
        slope_k=num(97, 100, "slope k", required=False),
    )


def _minor_planet_line(file: str, line_no: int, line: str) -> MpcOrbit:
    """MPC one-line minor-planet orbit (the MPCORB.DAT layout).

    Columns: 1–7 packed designation; 9–13 H; 15–19 G; 21–25 packed epoch (0h TT); 27–35 mean
    anomaly M; 38–46 ω; 49–57 Ω; 60–68 i (deg, J2000 ecliptic); 71–79 e; 93–103 a (au);
    167–194 readable designation.
    """

    def num(a: int, b: int, what: str, required: bool = True) -> float | None:
        return _num(file, line_no, line, a, b, what, required)

    packed = line[20:25]
    year = _CENTURY[packed[0]] + int(packed[1:3])
    epoch = jd_from_calendar(year, _unpack_day(packed[3]), float(_unpack_day(packed[4])))
    check_orbit_jd(epoch, file, f"line {line_no}: epoch", packed)
    return MpcOrbit(
        layout=MINOR_PLANET,
        line_no=line_no,
        name=line_name(line),
        epoch_tdb_jd=epoch,
        mag_h=num(9, 13, "H", required=False),
        mag_g=num(15, 19, "G", required=False),
        mean_anomaly_deg=num(27, 35, "mean anomaly"),
        arg_perihelion_deg=num(38, 46, "argument of perihelion"),
        ascending_node_deg=num(49, 57, "ascending node"),
        inclination_deg=num(60, 68, "inclination"),
        eccentricity=num(71, 79, "eccentricity"),
        semimajor_axis_au=num(93, 103, "semimajor axis"),
    )
