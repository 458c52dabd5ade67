"""Targets: orbital elements and a brightness law, from a TOML target file or an MPC one-line orbit.

Target file (TOML, schema in docs/formats.md): top-level ``name``, ``kind`` (``comet`` or
``asteroid``), tables ``[orbit]`` and ``[brightness]``. A ``.txt`` file instead holds IAU Minor
Planet Center one-line orbits (the comet format of CometEls.txt or the minor-planet format of
MPCORB.DAT); with several lines, ``object_name`` picks one.

Everything is validated on load; bad input raises :class:`InputError` naming the file and field. A
:class:`Target`, :class:`Orbit` or :class:`Brightness` built in Python checks itself against the same
limits (``ORBIT_LIMITS``, ``BRIGHTNESS_LIMITS``) with the same words.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from planner.core.constants import GM_SUN_AU3_D2
from planner.core.errors import InputError
from planner.core.limits import PYTHON, Limit, check_choice, check_instance, check_limits, source_of
from planner.core.timegrid import parse_utc, to_jd_utc
from planner.core.tomlfile import Fields, read_toml
from planner.core.units import tdb_jd

KINDS = ("comet", "asteroid")
#: Nucleus phase coefficient when a comet file gives M2 but none (common practice: 0.035 mag/deg).
DEFAULT_PHASE_COEFF_MAG_PER_DEG = 0.035
#: Asteroid slope parameter when none is given (Bowell et al. 1989 adopt G = 0.15 by default).
DEFAULT_G = 0.15
#: Nucleus fading with heliocentric distance when a comet file gives M2 but no K2: a bare nucleus fades
#: as r^-2 (K2 = 5), common practice.
DEFAULT_K2 = 5.0

ORBIT_LIMITS = {
    "epoch_tdb_jd": Limit(2_000_000.0, 3_000_000.0),
    "perihelion_dist_au": Limit(0.0, 1000.0, lo_open=True),
    "eccentricity": Limit(0.0, 1000.0),
    "inclination_deg": Limit(0.0, 180.0),
    "ascending_node_deg": Limit(0.0, 360.0),
    "arg_perihelion_deg": Limit(0.0, 360.0),
    "perihelion_tdb_jd": Limit(2_000_000.0, 3_000_000.0),
}
BRIGHTNESS_LIMITS = {
    "M1": Limit(-10.0, 35.0, optional=True),
    "K1": Limit(0.0, 60.0, optional=True),
    "M2": Limit(-10.0, 35.0, optional=True),
    "K2": Limit(0.0, 60.0, optional=True),
    "phase_coeff_mag_per_deg": Limit(0.0, 0.2, optional=True),
    "H": Limit(-5.0, 35.0, optional=True),
    "G": Limit(-0.5, 1.0, optional=True),
}
_COMET_LAW_KEYS = ("M1", "K1", "M2", "K2", "phase_coeff_mag_per_deg")
_ASTEROID_LAW_KEYS = ("H", "G")


@dataclass(frozen=True)
class Orbit:
    """Heliocentric osculating elements, angles referred to the ecliptic and equinox of J2000.

    Times are TDB Julian dates. Every conic is described by q, e and the perihelion time, so
    elliptic, parabolic and hyperbolic orbits share one representation.
    """

    epoch_tdb_jd: float
    perihelion_dist_au: float
    eccentricity: float
    inclination_deg: float
    ascending_node_deg: float
    arg_perihelion_deg: float
    perihelion_tdb_jd: float

    def __post_init__(self) -> None:
        for name in ("epoch_tdb_jd", "perihelion_tdb_jd"):  # astropy Time, datetime or ISO text (TDB) too
            object.__setattr__(self, name, tdb_jd(getattr(self, name), name))
        check_limits(self, ORBIT_LIMITS, PYTHON)

    @property
    def semimajor_axis_au(self) -> float:
        """a = q / (1 − e); infinite for a parabola, negative for a hyperbola."""
        if self.eccentricity == 1.0:
            return math.inf
        return self.perihelion_dist_au / (1.0 - self.eccentricity)

    @property
    def conic(self) -> str:
        e = self.eccentricity
        return "elliptic" if e < 1.0 else ("parabolic" if e == 1.0 else "hyperbolic")


@dataclass(frozen=True)
class Brightness:
    """Brightness-law parameters (any may be missing; see planner.sky.brightness for the laws).

    Comet total: m = M1 + 5 log Δ + K1 log r. Comet nucleus: m = M2 + 5 log Δ + K2 log r + β α, with
    β = ``phase_coeff_mag_per_deg``. Asteroid: H, G (Bowell et al. 1989).
    """

    M1: float | None = None
    K1: float | None = None
    M2: float | None = None
    K2: float | None = None
    phase_coeff_mag_per_deg: float | None = None
    H: float | None = None
    G: float | None = None

    def __post_init__(self) -> None:
        check_limits(self, BRIGHTNESS_LIMITS, PYTHON)
        if (self.M1 is None) != (self.K1 is None):
            raise InputError(PYTHON, "K1" if self.K1 is None else "M1", "M1 and K1 go together (total magnitude law)")
        if self.M2 is None and (self.K2 is not None or self.phase_coeff_mag_per_deg is not None):
            raise InputError(PYTHON, "M2", "missing: K2 and phase_coeff_mag_per_deg need M2 (nuclear magnitude law)")
        if self.H is None and self.G is not None:
            raise InputError(PYTHON, "H", "missing: G needs H")
        if self.M2 is not None:
            if self.K2 is None:
                object.__setattr__(self, "K2", DEFAULT_K2)
            if self.phase_coeff_mag_per_deg is None:
                object.__setattr__(self, "phase_coeff_mag_per_deg", DEFAULT_PHASE_COEFF_MAG_PER_DEG)
        if self.H is not None and self.G is None:
            object.__setattr__(self, "G", DEFAULT_G)


@dataclass(frozen=True)
class Target:
    name: str
    kind: str  # 'comet' | 'asteroid'
    orbit: Orbit
    brightness: Brightness = field(default_factory=Brightness)
    source: str = ""

    def __post_init__(self) -> None:
        file = source_of(self)
        if not isinstance(self.name, str) or not self.name.strip():
            raise InputError(file, "name", "must not be empty")
        check_choice(self, "kind", KINDS)
        check_instance(self, "orbit", Orbit, "an Orbit")
        check_instance(self, "brightness", Brightness, "a Brightness")
        foreign = _ASTEROID_LAW_KEYS if self.kind == "comet" else _COMET_LAW_KEYS
        given = [k for k in foreign if getattr(self.brightness, k) is not None]
        if given:
            own = ", ".join(_COMET_LAW_KEYS if self.kind == "comet" else _ASTEROID_LAW_KEYS)
            raise InputError(file, "brightness", f"a {self.kind} takes {own}, not {', '.join(given)}")


def load_target(path: str | Path, object_name: str | None = None) -> Target:
    """Read a target: a TOML target file, or a ``.txt`` file of MPC one-line orbits."""
    path = Path(path)
    if path.suffix.lower() == ".toml":
        if object_name is not None:
            raise InputError(
                str(path), "object", "--object picks a line from an MPC .txt file; a TOML file holds one target"
            )
        return _load_toml(path)
    if path.suffix.lower() in (".txt", ".dat"):
        return _load_mpc(path, object_name)
    raise InputError(str(path), "-", "target file must be .toml (our schema) or .txt (MPC one-line orbits)")


# --------------------------------------------------------------------------------------------- TOML

_TOP_KEYS = {"name", "kind", "orbit", "brightness", "designation", "notes"}
_ORBIT_COMMON = {"epoch", "eccentricity", "inclination_deg", "ascending_node_deg", "arg_perihelion_deg"}
_ORBIT_COMET = _ORBIT_COMMON | {"perihelion_time", "perihelion_dist_au"}
_ORBIT_ASTEROID = _ORBIT_COMMON | {"semimajor_axis_au", "mean_anomaly_deg"}


def _tdb_jd(f: Fields, key: str) -> float:
    """A TDB instant: ISO 8601 text (read on the TDB scale) or a Julian date number."""
    value = f._get(key, True, None)
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        return f.limited(key, ORBIT_LIMITS["epoch_tdb_jd"], required=True)
    if not isinstance(value, str):
        value = str(value)  # TOML datetimes arrive as datetime objects
    t = parse_utc(value, f.file, f.name(key))
    return float(to_jd_utc(np.array([t]))[0])


def _load_toml(path: Path) -> Target:
    f = Fields(path, read_toml(path))
    f.check_known(_TOP_KEYS)
    name = f.str("name", required=True).strip()
    if not name:
        raise f.error("name", "must not be empty")
    kind = f.str("kind", required=True, choices=KINDS)
    of = f.sub("orbit", required=True)
    of.check_known(_ORBIT_COMET if kind == "comet" else _ORBIT_ASTEROID)
    angles = of.values(
        {k: ORBIT_LIMITS[k] for k in ("eccentricity", "inclination_deg", "ascending_node_deg", "arg_perihelion_deg")},
        required=("eccentricity", "inclination_deg", "ascending_node_deg", "arg_perihelion_deg"),
    )
    epoch = _tdb_jd(of, "epoch")
    if kind == "comet":
        q = of.limited("perihelion_dist_au", ORBIT_LIMITS["perihelion_dist_au"], required=True)
        tp = _tdb_jd(of, "perihelion_time")
    else:
        a = of.float("semimajor_axis_au", required=True)
        m = of.float("mean_anomaly_deg", required=True, lo=-360.0, hi=360.0)
        q, tp = _from_mean_anomaly(of, a, angles["eccentricity"], m, epoch)
    orbit = of.build(Orbit, epoch_tdb_jd=epoch, perihelion_dist_au=q, perihelion_tdb_jd=tp, **angles)
    bf = f.sub("brightness")
    brightness = _brightness_toml(bf, kind) if bf is not None else Brightness()
    return Target(name=name, kind=kind, orbit=orbit, brightness=brightness, source=str(path))


def _from_mean_anomaly(
    f: Fields, a_au: float, ecc: float, mean_anomaly_deg: float, epoch_tdb_jd: float
) -> tuple[float, float]:
    """q = a(1 − e) and perihelion time T = epoch − M / n, n = √(GM/|a|³) (asteroid elements)."""
    if ecc == 1.0:
        raise f.error("eccentricity", "1 (parabolic) cannot be given with semimajor_axis_au; use a comet-style orbit")
    if ecc < 1.0 and a_au <= 0.0:
        raise f.error("semimajor_axis_au", f"{a_au:g} must be > 0 for an elliptic orbit (e < 1)")
    if ecc > 1.0 and a_au >= 0.0:
        raise f.error("semimajor_axis_au", f"{a_au:g} must be < 0 for a hyperbolic orbit (e > 1)")
    q = a_au * (1.0 - ecc)
    n_rad_d = math.sqrt(GM_SUN_AU3_D2 / abs(a_au) ** 3)
    m_rad = math.radians(mean_anomaly_deg)
    if ecc < 1.0:
        m_rad = math.remainder(m_rad, 2.0 * math.pi)  # nearest perihelion to the epoch
    return q, epoch_tdb_jd - m_rad / n_rad_d


def _brightness_toml(f: Fields, kind: str) -> Brightness:
    """The ``[brightness]`` table: the keys of the target's kind, each checked against its limit."""
    keys = _COMET_LAW_KEYS if kind == "comet" else _ASTEROID_LAW_KEYS
    f.check_known(keys)
    return f.build(Brightness, **f.values({k: BRIGHTNESS_LIMITS[k] for k in keys}))


# ------------------------------------------------------------------------------------- MPC lines

_PACKED_EPOCH = re.compile(r"^[IJK]\d\d[1-9A-C][1-9A-V]$")
_CENTURY = {"I": 1800, "J": 1900, "K": 2000}


def _unpack_day(ch: str) -> int:
    return int(ch) if ch.isdigit() else ord(ch) - ord("A") + 10


def _jd_from_calendar(year: int, month: int, day: float) -> float:
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


def _num(path: Path, line_no: int, line: str, first: int, last: int, what: str, required: bool = True) -> float | None:
    text = _col(line, first, last)
    if not text:
        if required:
            raise InputError(str(path), f"line {line_no}: {what}", f"columns {first}-{last} are blank")
        return None
    try:
        value = float(text)
    except ValueError:
        raise InputError(
            str(path), f"line {line_no}: {what}", f"{text!r} in columns {first}-{last} is not a number"
        ) from None
    if not math.isfinite(value):
        raise InputError(str(path), f"line {line_no}: {what}", f"{text!r} is not finite")
    return value


def _is_minor_planet_line(line: str) -> bool:
    return len(line) >= 103 and bool(_PACKED_EPOCH.match(line[20:25]))


def _comet_line(path: Path, line_no: int, line: str) -> Target:
    """MPC one-line comet orbit (the CometEls.txt layout).

    Columns: 15–18 year, 20–21 month, 23–29 day (TT) of perihelion; 31–39 q (au); 42–49 e;
    52–59 ω, 62–69 Ω, 72–79 i (deg, J2000 ecliptic); 82–89 epoch YYYYMMDD; 92–95 G and 97–100 k
    with m = G + 5 log Δ + 2.5 k log r; 103–158 designation and name.
    """

    def num(a: int, b: int, what: str, required: bool = True) -> float | None:
        return _num(path, line_no, line, a, b, what, required)

    year = num(15, 18, "perihelion year")
    month = num(20, 21, "perihelion month")
    day = num(23, 29, "perihelion day")
    if not (1 <= month <= 12 and 0.0 <= day < 32.0):
        raise InputError(str(path), f"line {line_no}: perihelion date", f"{year:.0f}-{month:.0f}-{day} is not a date")
    tp = _jd_from_calendar(int(year), int(month), day)
    q = num(31, 39, "perihelion distance")
    ecc = num(42, 49, "eccentricity")
    peri = num(52, 59, "argument of perihelion")
    node = num(62, 69, "ascending node")
    incl = num(72, 79, "inclination")
    epoch_text = _col(line, 82, 89)
    if epoch_text:
        if not re.fullmatch(r"\d{8}", epoch_text):
            raise InputError(str(path), f"line {line_no}: epoch", f"{epoch_text!r} is not YYYYMMDD")
        epoch = _jd_from_calendar(int(epoch_text[:4]), int(epoch_text[4:6]), float(epoch_text[6:8]))
    else:
        epoch = tp
    g_mag = num(92, 95, "magnitude G", required=False)
    k_slope = num(97, 100, "slope k", required=False)
    name = _col(line, 103, 158) or _col(line, 1, 12)
    field_prefix = f"line {line_no}"
    _check_elements(path, field_prefix, q, ecc, incl, node, peri)
    brightness = Brightness()
    if g_mag is not None and k_slope is not None:
        brightness = _built(path, line_no, Brightness, M1=g_mag, K1=2.5 * k_slope)  # m = G + 5 log Δ + 2.5 k log r
    orbit = _built(path, line_no, Orbit, epoch, q, ecc, incl, node % 360.0, peri % 360.0, tp)
    return Target(name=name, kind="comet", orbit=orbit, brightness=brightness, source=str(path))


def _minor_planet_line(path: Path, line_no: int, line: str) -> Target:
    """MPC one-line minor-planet orbit (the MPCORB.DAT layout).

    Columns: 1–7 packed designation; 9–13 H; 15–19 G; 21–25 packed epoch (0h TT); 27–35 mean
    anomaly M; 38–46 ω; 49–57 Ω; 60–68 i (deg, J2000 ecliptic); 71–79 e; 93–103 a (au);
    167–194 readable designation.
    """

    def num(a: int, b: int, what: str, required: bool = True) -> float | None:
        return _num(path, line_no, line, a, b, what, required)

    h = num(9, 13, "H", required=False)
    g = num(15, 19, "G", required=False)
    packed = line[20:25]
    epoch = _jd_from_calendar(
        _CENTURY[packed[0]] + int(packed[1:3]), _unpack_day(packed[3]), float(_unpack_day(packed[4]))
    )
    m = num(27, 35, "mean anomaly")
    peri = num(38, 46, "argument of perihelion")
    node = num(49, 57, "ascending node")
    incl = num(60, 68, "inclination")
    ecc = num(71, 79, "eccentricity")
    a = num(93, 103, "semimajor axis")
    field_prefix = f"line {line_no}"
    if ecc < 0 or ecc >= 1.0:
        raise InputError(
            str(path), f"{field_prefix}: eccentricity", f"{ecc:g} must be in [0, 1) for a minor-planet orbit line"
        )
    if a <= 0:
        raise InputError(str(path), f"{field_prefix}: semimajor axis", f"{a:g} must be > 0")
    fields = Fields(path, {}, field_prefix)
    q, tp = _from_mean_anomaly(fields, a, ecc, m, epoch)
    _check_elements(path, field_prefix, q, ecc, incl, node, peri)
    name = _col(line, 167, 194) or _col(line, 1, 7)
    brightness = _built(path, line_no, Brightness, H=h, G=g) if h is not None else Brightness()
    orbit = _built(path, line_no, Orbit, epoch, q, ecc, incl, node % 360.0, peri % 360.0, tp)
    return Target(name=name, kind="asteroid", orbit=orbit, brightness=brightness, source=str(path))


def _built(path: Path, line_no: int, cls: type, *args, **kwargs):
    """``cls(...)`` for an orbit line; an error about one of its fields names the file and the line."""
    try:
        return cls(*args, **kwargs)
    except InputError as exc:
        if exc.file != PYTHON:
            raise
        raise InputError(str(path), f"line {line_no}: {exc.field}", exc.message) from None


def _check_elements(path: Path, prefix: str, q: float, ecc: float, incl: float, node: float, peri: float) -> None:
    checks = [
        ("perihelion distance", q > 0.0, f"{q:g} au must be > 0"),
        ("eccentricity", ecc >= 0.0, f"{ecc:g} must be ≥ 0"),
        ("inclination", 0.0 <= incl <= 180.0, f"{incl:g} is outside [0, 180]"),
        ("ascending node", 0.0 <= node <= 360.0, f"{node:g} is outside [0, 360]"),
        ("argument of perihelion", 0.0 <= peri <= 360.0, f"{peri:g} is outside [0, 360]"),
    ]
    for what, ok, message in checks:
        if not ok:
            raise InputError(str(path), f"{prefix}: {what}", message)


def _load_mpc(path: Path, object_name: str | None) -> Target:
    try:
        text = path.read_text(encoding="utf-8", errors="replace")
    except FileNotFoundError:
        raise InputError(str(path), "-", "file not found") from None
    except IsADirectoryError:
        raise InputError(str(path), "-", "is a folder, expected a text file of MPC orbit lines") from None
    lines = [
        (i + 1, ln.rstrip("\r\n"))
        for i, ln in enumerate(text.splitlines())
        if ln.strip() and not ln.lstrip().startswith("#")
    ]
    if not lines:
        raise InputError(str(path), "-", "no orbit lines (expected MPC one-line comet or minor-planet orbits)")
    if object_name is not None:
        wanted = object_name.strip().lower()
        picked = [(n, ln) for n, ln in lines if wanted in ln.lower()]
        exact = [(n, ln) for n, ln in picked if _line_name(ln).lower() == wanted]
        picked = exact or picked
        if not picked:
            raise InputError(str(path), "object", f"no line mentions {object_name!r}")
        if len(picked) > 1:
            names = ", ".join(_line_name(ln) for _, ln in picked[:5])
            raise InputError(
                str(path), "object", f"{object_name!r} matches {len(picked)} lines ({names}); be more specific"
            )
        lines = picked
    elif len(lines) > 1:
        names = ", ".join(_line_name(ln) for _, ln in lines[:5]) + (", ..." if len(lines) > 5 else "")
        raise InputError(
            str(path), "object", f"the file holds {len(lines)} orbit lines ({names}); pick one with --object NAME"
        )
    line_no, line = lines[0]
    if _is_minor_planet_line(line):
        return _minor_planet_line(path, line_no, line)
    if len(line) < 79:
        raise InputError(str(path), f"line {line_no}", "too short for an MPC one-line comet or minor-planet orbit")
    return _comet_line(path, line_no, line)


def _line_name(line: str) -> str:
    if _is_minor_planet_line(line):
        return _col(line, 167, 194) or _col(line, 1, 7)
    return _col(line, 103, 158) or _col(line, 1, 12)
