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
from dataclasses import dataclass, field
from datetime import datetime
from pathlib import Path

from planner.core.bands import ASTEROID_MEAN_COLOURS, COLOUR_KEYS, SOLAR_COLOURS, SUN_MAG_BY_BAND
from planner.core.constants import GM_SUN_AU3_D2
from planner.core.errors import InputError
from planner.core.fileio import read_text
from planner.core.limits import PYTHON, Limit, check_choice, check_instance, check_limits, source_of
from planner.core.timegrid import check_orbit_jd
from planner.core.tomlfile import Fields, read_toml
from planner.core.units import tdb_jd
from planner.inputs import mpc

KINDS = ("comet", "asteroid")
#: Nucleus phase coefficient when a comet file gives M2 but none (common practice: 0.035 mag/deg).
DEFAULT_PHASE_COEFF_MAG_PER_DEG = 0.035
#: Asteroid slope parameter when none is given (Bowell et al. 1989 adopt G = 0.15 by default).
DEFAULT_G = 0.15
#: Colours of a comet without a ``[colour]`` table: the Sun's (its dust scatters sunlight; common practice).
DEFAULT_COMET_COLOURS = dict(SOLAR_COLOURS)
#: Colours of an asteroid without a ``[colour]`` table (planner.core.bands, with its source).
DEFAULT_ASTEROID_COLOURS = dict(ASTEROID_MEAN_COLOURS)
#: Bands a brightness law may be stated in (the Sun's table, planner.core.bands).
LAW_BANDS = tuple(SUN_MAG_BY_BAND)
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
    #: The band the law's magnitudes are in: V for H,G (Bowell et al. 1989); a comet file may say otherwise.
    law_band: str = "V"

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
class NonGrav:
    """Comet non-gravitational parameters (Marsden, Sekanina & Yeomans 1973): radial A1, transverse A2,
    normal A3, each in au/day² (the Minor Planet Center quotes them in units of 1e-8 au/day²)."""

    a1_au_per_day2: float = 0.0
    a2_au_per_day2: float = 0.0
    a3_au_per_day2: float = 0.0

    @property
    def is_active(self) -> bool:
        return bool(self.a1_au_per_day2 or self.a2_au_per_day2 or self.a3_au_per_day2)


#: How a target's orbit is carried over the span: integrated under the planets and the Moon (default),
#: or two-body motion about the Sun (fast, and exact enough far from planets and from the epoch).
PROPAGATIONS = ("perturbed", "two-body")


@dataclass(frozen=True)
class Target:
    name: str
    kind: str  # 'comet' | 'asteroid'
    orbit: Orbit
    brightness: Brightness = field(default_factory=Brightness)
    source: str = ""
    nongrav: NonGrav | None = None
    propagation: str = "perturbed"
    #: Colour indices ``{"B-V", "V-R", "R-I"}`` given in the target file (Johnson–Cousins, Vega); None for
    #: none given. :meth:`colours` fills the rest from the kind's defaults.
    colour: dict[str, float] | None = None

    def colours(self) -> tuple[dict[str, float], str]:
        """The colour indices used and where they come from: the file's, else the kind's defaults
        (:data:`DEFAULT_COMET_COLOURS`, :data:`DEFAULT_ASTEROID_COLOURS`), key by key."""
        default = DEFAULT_COMET_COLOURS if self.kind == "comet" else DEFAULT_ASTEROID_COLOURS
        given = self.colour or {}
        source = "solar (comet default)" if self.kind == "comet" else "C/S-type mean (asteroid default)"
        if given:
            source = "target file" if set(given) == set(COLOUR_KEYS) else f"target file, the rest {source}"
        return {k: float(given.get(k, default[k])) for k in COLOUR_KEYS}, source

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
        check_choice(self, "propagation", PROPAGATIONS)


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

_TOP_KEYS = {"name", "kind", "orbit", "brightness", "colour", "designation", "notes", "nongrav", "propagation"}
_NONGRAV_KEYS = {"A1_au_per_day2", "A2_au_per_day2", "A3_au_per_day2"}
_ORBIT_COMMON = {"epoch", "eccentricity", "inclination_deg", "ascending_node_deg", "arg_perihelion_deg"}
_ORBIT_COMET = _ORBIT_COMMON | {"perihelion_time", "perihelion_dist_au"}
_ORBIT_ASTEROID = _ORBIT_COMMON | {"semimajor_axis_au", "mean_anomaly_deg"}
_BRIGHT_COMET = {"M1", "K1", "M2", "K2", "phase_coeff_mag_per_deg", "law_band"}
#: Plausible ranges of the colour indices (Solar System bodies lie well inside them).
_COLOUR_RANGE = {"B-V": (-0.5, 2.0), "V-R": (-0.5, 1.5), "R-I": (-0.5, 1.5)}
_BRIGHT_ASTEROID = {"H", "G"}


def _tdb_jd(f: Fields, key: str) -> float:
    """A TDB instant: ISO 8601 text (read on the TDB scale) or a Julian date number."""
    value = f._get(key, True, None)
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        return check_orbit_jd(f.float(key, required=True), f.file, f.name(key))
    if not isinstance(value, str):
        value = str(value)  # TOML datetimes arrive as datetime objects
    text = value.strip().rstrip("Zz").replace(" ", "T", 1)
    try:
        dt = datetime.fromisoformat(text)
    except ValueError:
        raise f.error(key, f"{value!r} is not an ISO 8601 time such as 2034-03-10T22:15 or a Julian date") from None
    if dt.tzinfo is not None:  # a TOML offset datetime: its clock reading, on the TDB scale
        if dt.utcoffset():
            raise f.error(key, f"{value!r}: give the instant on the TDB scale, without an offset")
        dt = dt.replace(tzinfo=None)
    jd = 2440587.5 + (dt - datetime(1970, 1, 1)).total_seconds() / 86400.0
    return check_orbit_jd(jd, f.file, f.name(key), value)


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
    nongrav = None
    nf = f.sub("nongrav")
    if nf is not None:
        nf.check_known(_NONGRAV_KEYS)
        nongrav = NonGrav(*(nf.float(k, 0.0, lo=-1e-5, hi=1e-5) for k in sorted(_NONGRAV_KEYS)))
    propagation = f.str("propagation", "perturbed", choices=PROPAGATIONS)
    cf = f.sub("colour")
    colour = _colour_toml(cf) if cf is not None else None
    return Target(
        name=name,
        kind=kind,
        orbit=orbit,
        brightness=brightness,
        source=str(path),
        nongrav=nongrav,
        propagation=propagation,
        colour=colour,
    )


def _colour_toml(f: Fields) -> dict[str, float] | None:
    """``[colour]``: any of B-V, V-R, R-I (Johnson–Cousins, Vega magnitudes)."""
    f.check_known(COLOUR_KEYS)
    out = {k: f.float(k, lo=lo, hi=hi) for k, (lo, hi) in _COLOUR_RANGE.items()}
    return {k: v for k, v in out.items() if v is not None} or None


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
    if kind == "comet":
        f.check_known(_BRIGHT_COMET)
        m1 = f.float("M1", lo=-10.0, hi=35.0)
        k1 = f.float("K1", lo=0.0, hi=60.0)
        if (m1 is None) != (k1 is None):
            raise f.error("K1" if k1 is None else "M1", "M1 and K1 go together (total magnitude law)")
        m2 = f.float("M2", lo=-10.0, hi=35.0)
        k2 = f.float("K2", lo=0.0, hi=60.0)
        beta = f.float("phase_coeff_mag_per_deg", lo=0.0, hi=0.2)
        if m2 is None and (k2 is not None or beta is not None):
            raise f.error("M2", "missing: K2 and phase_coeff_mag_per_deg need M2 (nuclear magnitude law)")
        if m2 is not None:
            k2 = DEFAULT_K2 if k2 is None else k2
            beta = DEFAULT_PHASE_COEFF_MAG_PER_DEG if beta is None else beta
        band = f.str("law_band", "V", choices=LAW_BANDS)
        return Brightness(M1=m1, K1=k1, M2=m2, K2=k2, phase_coeff_mag_per_deg=beta, law_band=band)
    f.check_known(_BRIGHT_ASTEROID)
    h = f.float("H", lo=-5.0, hi=35.0)
    g = f.float("G", lo=-0.5, hi=1.0)
    if h is None and g is not None:
        raise f.error("H", "missing: G needs H")
    if h is not None and g is None:
        g = DEFAULT_G
    return Brightness(H=h, G=g)


# ------------------------------------------------------------------------------------- MPC lines


def _load_mpc(path: Path, object_name: str | None) -> Target:
    """The target of one MPC one-line orbit (layouts and columns in :mod:`planner.inputs.mpc`)."""
    file = str(path)
    lines = mpc.orbit_lines(read_text(path, "text file of MPC orbit lines"), file)
    rec = mpc.read_line(file, *mpc.pick_line(lines, object_name, file))
    prefix = f"line {rec.line_no}"
    if rec.layout == mpc.MINOR_PLANET:
        ecc, a = rec.eccentricity, rec.semimajor_axis_au
        if ecc < 0 or ecc >= 1.0:
            raise InputError(
                file, f"{prefix}: eccentricity", f"{ecc:g} must be in [0, 1) for a minor-planet orbit line"
            )
        if a <= 0:
            raise InputError(file, f"{prefix}: semimajor axis", f"{a:g} must be > 0")
        q, tp = _from_mean_anomaly(Fields(path, {}, prefix), a, ecc, rec.mean_anomaly_deg, rec.epoch_tdb_jd)
        kind = "asteroid"
        h, g = rec.mag_h, rec.mag_g
        brightness = Brightness(H=h, G=DEFAULT_G if g is None else g) if h is not None else Brightness()
    else:
        q, tp = rec.perihelion_dist_au, rec.perihelion_tdb_jd
        kind = "comet"
        brightness = Brightness()
        if rec.mag_g is not None and rec.slope_k is not None:
            brightness = Brightness(M1=rec.mag_g, K1=2.5 * rec.slope_k)  # m = G + 5 log Δ + 2.5 k log r
    incl, node, peri = rec.inclination_deg, rec.ascending_node_deg, rec.arg_perihelion_deg
    _check_elements(path, prefix, q, rec.eccentricity, incl, node, peri)
    orbit = Orbit(rec.epoch_tdb_jd, q, rec.eccentricity, incl, node % 360.0, peri % 360.0, tp)
    return Target(name=rec.name, kind=kind, orbit=orbit, brightness=brightness, source=file)


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
