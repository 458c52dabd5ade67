"""Target files: our TOML schema, the MPC one-line formats (checked against skyfield's own MPC
parsers and Kepler orbits, an independent route), and one-line errors for bad input."""

from __future__ import annotations

import io
import math
from pathlib import Path

import numpy as np
import pytest

from planner.core.constants import GM_SUN_AU3_D2
from planner.core.errors import InputError
from planner.inputs.targets import load_target
from planner.sky.kepler import propagate
from tests.conftest import DEMO_DIR

DATA = Path(__file__).parent / "data"

GOOD = """
name = "Test comet"
kind = "comet"
[orbit]
epoch = "2034-03-01"
perihelion_time = "2034-02-20T12:00:00"
perihelion_dist_au = 1.2
eccentricity = 3.0
inclination_deg = 60
ascending_node_deg = 10
arg_perihelion_deg = 30
[brightness]
M1 = 11.5
K1 = 10
"""


def _write(tmp_path: Path, text: str, name: str = "t.toml") -> Path:
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def test_demo_target_loads(root):
    t = load_target(DEMO_DIR / "c2034-b3-quillfeather.toml")
    assert t.kind == "comet" and t.orbit.conic == "hyperbolic"
    assert 2.0 <= t.orbit.eccentricity <= 4.0 and 0.8 <= t.orbit.perihelion_dist_au <= 2.0
    # 2034-02-20T12:00 TDB = JD 2464014.0 (Meeus 1998, ch. 7 algorithm, checked by astropy below).
    assert t.orbit.perihelion_tdb_jd == pytest.approx(2464014.0, abs=1e-9)
    from astropy.time import Time

    assert Time("2034-02-20T12:00:00", scale="tdb").jd == pytest.approx(t.orbit.perihelion_tdb_jd, abs=1e-9)
    assert t.brightness.K1 == 10.0


def test_toml_comet_fields(tmp_path):
    t = load_target(_write(tmp_path, GOOD))
    assert t.orbit.perihelion_dist_au == 1.2 and t.orbit.eccentricity == 3.0
    assert t.brightness.M1 == 11.5 and t.brightness.M2 is None


def test_toml_native_datetimes_and_julian_dates_are_accepted(tmp_path):
    # TOML's own date-time values (RFC 3339) and plain Julian dates both name TDB instants.
    text = GOOD.replace('perihelion_time = "2034-02-20T12:00:00"', "perihelion_time = 2034-02-20T12:00:00Z")
    text = text.replace('epoch = "2034-03-01"', "epoch = 2464022.5")
    t = load_target(_write(tmp_path, text))
    assert t.orbit.perihelion_tdb_jd == pytest.approx(2464014.0, abs=1e-9)
    assert t.orbit.epoch_tdb_jd == 2464022.5


def test_toml_asteroid_mean_anomaly_gives_perihelion_time(tmp_path):
    # T = epoch - M/n with n = k / a^1.5 (Gauss); q = a (1 - e). Checked: propagating to the epoch gives
    # the mean anomaly back through Kepler's equation (Meeus 1998, ch. 30).
    text = """
name = "Test asteroid"
kind = "asteroid"
[orbit]
epoch = 2464000.5
semimajor_axis_au = 2.5
eccentricity = 0.2
inclination_deg = 5
ascending_node_deg = 80
arg_perihelion_deg = 150
mean_anomaly_deg = 40
[brightness]
H = 15.2
"""
    t = load_target(_write(tmp_path, text))
    assert t.orbit.perihelion_dist_au == pytest.approx(2.0)
    assert t.brightness.G == 0.15  # Bowell et al. (1989) default slope
    pos, _ = propagate(t.orbit, np.array([2464000.5]))
    r = np.linalg.norm(pos[0])
    ecc_anom = math.acos((1 - r / 2.5) / 0.2)  # r = a (1 - e cos E), E in (0, pi) since M = 40 deg
    assert math.degrees(ecc_anom - 0.2 * math.sin(ecc_anom)) == pytest.approx(40.0, abs=1e-7)


@pytest.mark.parametrize(
    "edit, field, words",
    [
        (("eccentricity = 3.0", "eccentricity = -0.1"), "orbit.eccentricity", "outside"),
        (("perihelion_dist_au = 1.2", "perihelion_dist_au = 0"), "orbit.perihelion_dist_au", "outside"),
        (("inclination_deg = 60", "inclination_deg = 181"), "orbit.inclination_deg", "outside"),
        (
            ('perihelion_time = "2034-02-20T12:00:00"', 'perihelion_time = "2034-02-30"'),
            "orbit.perihelion_time",
            "not an ISO 8601",
        ),
        (('kind = "comet"', 'kind = "planet"'), "kind", "not one of"),
        (("M1 = 11.5", "M1 = 11.5\ncolour = 3"), "brightness.colour", "unknown field"),
        (("perihelion_dist_au = 1.2\n", ""), "orbit.perihelion_dist_au", "missing"),
        (("K1 = 10\n", ""), "brightness.K1", "go together"),
        (('name = "Test comet"', "name = 5"), "name", "not a string"),
    ],
)
def test_bad_toml_fields_name_file_and_field(tmp_path, edit, field, words):
    path = _write(tmp_path, GOOD.replace(*edit))
    with pytest.raises(InputError) as err:
        load_target(path)
    assert err.value.field == field and words in err.value.message
    assert str(err.value).startswith(f"{path}: {field}: ")


def test_asteroid_with_nonpositive_a_and_e_below_one_is_rejected(tmp_path):
    text = """
name = "x"
kind = "asteroid"
[orbit]
epoch = "2034-01-01"
semimajor_axis_au = -2.0
eccentricity = 0.3
inclination_deg = 5
ascending_node_deg = 80
arg_perihelion_deg = 150
mean_anomaly_deg = 40
"""
    with pytest.raises(InputError, match="semimajor_axis_au: -2 must be > 0"):
        load_target(_write(tmp_path, text))


def test_missing_and_malformed_files(tmp_path):
    with pytest.raises(InputError, match="file not found"):
        load_target(tmp_path / "nope.toml")
    with pytest.raises(InputError, match="not valid TOML"):
        load_target(_write(tmp_path, "name = [", "bad.toml"))
    with pytest.raises(InputError, match="must be .toml"):
        load_target(_write(tmp_path, "x", "t.json"))


# --------------------------------------------------------------------------------- MPC lines


def _skyfield_comet(line: str):
    from skyfield.constants import AU_KM, DAY_S
    from skyfield.data import mpc

    from planner.sky.skydata import timescale

    df = mpc.load_comets_dataframe(io.BytesIO((line + "\n").encode()))
    return mpc.comet_orbit(df.iloc[0], timescale(), GM_SUN_AU3_D2 * AU_KM**3 / DAY_S**2), df.iloc[0]


def test_mpc_comet_lines_match_skyfield_parser_and_orbit():
    # Independent route: skyfield.data.mpc parses the same MPC comet layout and builds its own Kepler
    # orbit; heliocentric positions must agree (<= 1e-8 au).
    from planner.sky.skydata import timescale

    ts = timescale()
    lines = (DATA / "mpc_comets.txt").read_text().splitlines()
    for line in lines:
        name = line[102:158].strip()
        ours = load_target(DATA / "mpc_comets.txt", object_name=name)
        theirs, row = _skyfield_comet(line)
        assert ours.name == name and ours.kind == "comet"
        # MPC comet magnitudes: m = G + 5 log D + 2.5 k log r, so K1 = 2.5 k (MPC format description).
        assert ours.brightness.M1 == pytest.approx(row.magnitude_g)
        assert ours.brightness.K1 == pytest.approx(2.5 * row.magnitude_k)
        times = ours.orbit.perihelion_tdb_jd + np.array([-120.0, -3.0, 0.0, 45.0, 300.0])
        pos, _ = propagate(ours.orbit, times)
        ref = theirs.at(ts.tt_jd(times)).position.au.T  # TT vs TDB: < 2 ms, negligible here
        assert np.abs(pos - ref).max() < 1e-8


def test_mpc_minor_planet_lines_match_skyfield_parser_and_orbit():
    from skyfield.constants import AU_KM, DAY_S
    from skyfield.data import mpc

    from planner.sky.skydata import timescale

    ts = timescale()
    df = mpc.load_mpcorb_dataframe(io.BytesIO((DATA / "mpc_minor_planets.txt").read_bytes()))
    for _, row in df.iterrows():
        ours = load_target(DATA / "mpc_minor_planets.txt", object_name=row.designation)
        assert ours.kind == "asteroid" and ours.name == row.designation
        assert ours.brightness.H == pytest.approx(row.magnitude_H)
        assert ours.brightness.G == pytest.approx(row.magnitude_G)
        theirs = mpc.mpcorb_orbit(row, ts, GM_SUN_AU3_D2 * AU_KM**3 / DAY_S**2)
        times = ours.orbit.epoch_tdb_jd + np.array([-200.0, 0.0, 150.0])
        pos, _ = propagate(ours.orbit, times)
        ref = theirs.at(ts.tt_jd(times)).position.au.T
        assert np.abs(pos - ref).max() < 1e-8


def test_mpc_file_with_several_lines_needs_object(tmp_path):
    with pytest.raises(InputError, match="pick one with --object"):
        load_target(DATA / "mpc_comets.txt")
    with pytest.raises(InputError, match="no line mentions"):
        load_target(DATA / "mpc_comets.txt", object_name="Nonexistent")
    with pytest.raises(InputError, match="matches 3 lines"):
        load_target(DATA / "mpc_comets.txt", object_name="C/20")
    one = tmp_path / "one.txt"
    one.write_text((DATA / "mpc_comets.txt").read_text().splitlines()[2] + "\n")
    t = load_target(one)
    assert t.name == "C/2032 X1 (Halvard)" and t.orbit.eccentricity == 3.4


def test_mpc_bad_line_names_line_and_field(tmp_path):
    line = (DATA / "mpc_comets.txt").read_text().splitlines()[0]
    bad = line[:30] + " -0.5000 " + line[39:]
    p = tmp_path / "bad.txt"
    p.write_text(bad + "\n")
    with pytest.raises(InputError) as err:
        load_target(p)
    assert err.value.field == "line 1: perihelion distance"
    garbled = line[:41] + "abcdefgh" + line[49:]
    p.write_text(garbled + "\n")
    with pytest.raises(InputError, match="not a number"):
        load_target(p)
    p.write_text("hello\n")
    with pytest.raises(InputError, match="too short"):
        load_target(p)
