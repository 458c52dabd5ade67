"""Inputs that must be refused: dates beyond the bundled ephemeris (and beyond numpy's nanosecond
times, which would wrap silently), control characters in names, and MPC orbit files whose lines are
cut short, of the other layout, or not text at all. Each is one line naming the file and the field.
"""

from __future__ import annotations

from datetime import date
from pathlib import Path

import numpy as np
import pytest
from clirun import run_cli

from planner.core.errors import InputError
from planner.core.timegrid import FIRST_DATE, FIRST_JD, LAST_DATE, LAST_JD, parse_date, parse_utc, to_jd_utc
from planner.inputs.campaign import load_campaign
from planner.inputs.mpc import COMET, MINOR_PLANET, line_layout
from planner.inputs.obslog import read_observation_log
from planner.inputs.sites import load_site
from planner.inputs.targets import load_target

ROOT = Path(__file__).resolve().parent.parent
DATA = Path(__file__).parent / "data"
TARGET = ROOT / "planner" / "data" / "demo" / "c2034-b3-quillfeather.toml"
CAMPAIGN = ROOT / "planner" / "data" / "demo" / "demo-campaign.toml"
SITE = ROOT / "planner" / "data" / "demo" / "sites" / "karoo-ridge.toml"
COMET_LINE = (DATA / "mpc_comets.txt").read_text().splitlines()[0]
MINOR_LINE = (DATA / "mpc_minor_planets.txt").read_text().splitlines()[0]


# --- dates ------------------------------------------------------------------------------------------


def test_the_span_lies_inside_de421():
    # The bundled de421.bsp read directly with jplephem (its segments' own start and end), not through
    # skyfield: the accepted span must sit inside it with a margin for light time.
    import os
    import warnings

    from jplephem.spk import SPK

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        from skyfield_data import get_skyfield_data_path

    kernel = SPK.open(os.path.join(get_skyfield_data_path(), "de421.bsp"))
    first = max(s.start_jd for s in kernel.segments)
    last = min(s.end_jd for s in kernel.segments)
    kernel.close()
    assert first + 1.0 <= FIRST_JD and LAST_JD <= last - 1.0
    assert to_jd_utc(np.array([np.datetime64(FIRST_DATE)]))[0] == FIRST_JD
    assert to_jd_utc(np.array([np.datetime64(LAST_DATE) + np.timedelta64(1, "D")]))[0] == LAST_JD


@pytest.mark.parametrize("text", ["2500-03-16", "1500-01-01T00:00", "2262-04-12T00:00Z", "1899-12-31", "2053-10-08"])
def test_times_outside_the_span_are_refused_not_wrapped(text):
    # numpy's datetime64[ns] holds 1677-09-21 to 2262-04-11 (numpy documentation, "Datetime units");
    # beyond, a conversion wraps by 2^64 ns (about 584 years) without a word.
    with pytest.raises(InputError, match=r"is outside the bundled DE421 ephemeris \(1900-01-01 to 2053-10-07\)") as e:
        parse_utc(text, "log.csv", "time_utc (row 3)")
    assert (e.value.file, e.value.field) == ("log.csv", "time_utc (row 3)")
    with pytest.raises(InputError, match="outside"):
        parse_date(text[:10], "c.toml", "first_night")


def test_the_edges_of_the_span_are_accepted():
    assert parse_utc("2053-10-07T23:59:59Z") == np.datetime64("2053-10-07T23:59:59", "ns")
    assert parse_date("1900-01-01") == date(1900, 1, 1)


def _edit(tmp_path: Path, src: Path, old: str, new: str, name: str | None = None) -> Path:
    text = src.read_text()
    assert old in text
    out = tmp_path / (name or src.name)
    out.write_text(text.replace(old, new))
    return out


@pytest.mark.parametrize(
    "old, new, field",
    [
        ('perihelion_time = "2034-02-20T12:00:00"', 'perihelion_time = "2600-02-20T12:00:00"', "orbit.perihelion_time"),
        ('epoch = "2034-03-19T00:00:00"', 'epoch = "1677-01-01T00:00:00"', "orbit.epoch"),
        ('epoch = "2034-03-19T00:00:00"', "epoch = 2634810.5", "orbit.epoch"),  # JD of 2501-01-01
        ('epoch = "2034-03-19T00:00:00"', "epoch = 2500-01-01T00:00:00", "orbit.epoch"),  # a TOML datetime
    ],
)
def test_target_dates_outside_the_span_name_the_key(tmp_path, old, new, field):
    # Element instants need not lie inside DE421 (a perihelion in 2060 is fine), only inside the years
    # numpy holds without wrapping (1678-2262), with a margin: 1700-2250.
    with pytest.raises(InputError, match="outside the years 1700-2250") as e:
        load_target(_edit(tmp_path, TARGET, old, new))
    assert e.value.field == field and e.value.file.endswith("c2034-b3-quillfeather.toml")


def test_a_perihelion_beyond_the_ephemeris_is_fine_when_the_nights_are_inside(tmp_path):
    # A long-period comet still inbound: perihelion in 2060, observed in 2034 (inside DE421).
    from planner.sky.geometry import geometry

    target = load_target(
        _edit(tmp_path, TARGET, 'perihelion_time = "2034-02-20T12:00:00"', 'perihelion_time = "2060-02-20T12:00:00"')
    )
    frame = geometry(target, np.array(["2034-03-19T00:00"], dtype="datetime64[ns]"))["geocentre"]
    assert np.isfinite(frame["helio_dist_au"]).all()


def _campaign(tmp_path: Path, old: str, new: str) -> Path:
    """The demo campaign with one edit, written elsewhere (its paths made absolute)."""
    demo = ROOT / "planner" / "data" / "demo"
    text = CAMPAIGN.read_text().replace('"sites/', f'"{demo}/sites/').replace('"c2034', f'"{demo}/c2034')
    src = tmp_path / "src.toml"
    src.write_text(text)
    return _edit(tmp_path, src, old, new, "campaign.toml")


@pytest.mark.parametrize(
    "old, new",
    [
        ("first_night = 2034-03-16", "first_night = 2500-03-16"),
        ("first_night = 2034-03-16", "first_night = 2053-10-03"),
    ],
)
def test_campaign_nights_outside_the_span_name_the_campaign_file(tmp_path, old, new):
    camp = _campaign(tmp_path, old, new)
    with pytest.raises(InputError, match="outside the bundled DE421") as e:
        load_campaign(camp)
    assert e.value.file == str(camp) and e.value.field == "first_night"


def test_granted_time_and_log_times_outside_the_span(tmp_path):
    site = tmp_path / "site.toml"
    text = SITE.read_text().replace("hours_per_night = 4", 'granted_utc = [["2034-03-16T20:00", "2300-01-01T00:00"]]')
    site.write_text(text)
    with pytest.raises(InputError, match="outside") as e:
        load_site(site)
    assert e.value.field == "allocation.granted_utc[0][1]"
    log = tmp_path / "log.csv"
    log.write_text("time_utc,site\n2034-03-19T01:00:00Z,A\n2500-03-19T01:00:00Z,A\n")
    with pytest.raises(InputError, match="outside") as e:
        read_observation_log(log)
    assert e.value.field == "time_utc (row 2)"


@pytest.mark.parametrize(
    "args, field",
    [
        (["ephem", "--target", TARGET, "--start", "2500-03-16", "--stop", "2500-03-17"], "start"),
        (["ephem", "--target", TARGET, "--start", "2034-03-16", "--stop", "2262-06-01"], "stop"),
        (["windows", "--target", TARGET, "--site", SITE, "--start", "2500-03-16"], "start"),
        (["windows", "--target", TARGET, "--site", SITE, "--start", "2053-10-01", "--nights", "10"], "start"),
    ],
)
def test_command_options_outside_the_span(capsys, args, field):
    r = run_cli(capsys, *args)
    assert r.returncode == 2 and r.stdout == "" and r.stderr.count("\n") == 1
    assert r.stderr.startswith(f"error: command line: {field}: ") and "DE421" in r.stderr


def test_mpc_dates_outside_the_span_name_the_line(tmp_path):
    p = tmp_path / "c.txt"
    p.write_text(COMET_LINE[:14] + "2600" + COMET_LINE[18:] + "\n")
    with pytest.raises(InputError, match="outside the years 1700-2250") as e:
        load_target(p)
    assert e.value.field == "line 1: perihelion date"


# --- control characters in names ---------------------------------------------------------------------


@pytest.mark.parametrize("char, shown", [("\\u001b", "ESC (U+001B)"), ("\\u0007", "BEL (U+0007)"), ("\\n", "newline")])
def test_control_characters_in_toml_names_are_refused(tmp_path, char, shown):
    site = _edit(tmp_path, SITE, 'name = "Karoo Ridge"', f'name = "Karoo{char}[31mRidge"')
    with pytest.raises(InputError, match="control character") as e:
        load_site(site)
    assert e.value.field == "name" and shown in e.value.message
    target = _edit(tmp_path, TARGET, 'name = "C/2034 B3 (Quillfeather)"', f'name = "C/2034 B3{char}"')
    with pytest.raises(InputError, match="control character") as e:
        load_target(target)
    assert e.value.field == "name"


def test_control_characters_in_a_campaign_name_and_a_log_site(tmp_path):
    camp = _campaign(tmp_path, 'name = "Demo week', 'name = "\\u001b[2JDemo week')
    with pytest.raises(InputError, match="ESC") as e:
        load_campaign(camp)
    assert e.value.field == "name"
    log = tmp_path / "log.csv"
    log.write_text("time_utc,site\n2034-03-19T01:00:00Z,Karoo\x1b[31m\n")
    with pytest.raises(InputError, match="control character") as e:
        read_observation_log(log)
    assert e.value.field == "site (row 1)"
    log.write_text('time_utc,site,status,night\n,"Karoo\x07",lost,2034-03-19\n')
    with pytest.raises(InputError, match="BEL") as e:
        read_observation_log(log)


def test_a_control_character_in_an_mpc_line_is_refused(tmp_path):
    p = tmp_path / "c.txt"
    p.write_text(COMET_LINE[:110] + "\x1b[5m" + COMET_LINE[114:] + "\n")
    with pytest.raises(InputError, match="control character") as e:
        load_target(p)
    assert e.value.field == "line 1"


# --- MPC lines: the layout first, then the columns ---------------------------------------------------


def test_each_layout_is_recognised_by_its_own_columns():
    # MPC format descriptions: comet lines carry the perihelion date in columns 15-29, minor-planet
    # lines a packed epoch (K341R = 2034 Jan 27) in columns 21-25, whatever their length.
    assert line_layout(COMET_LINE) == COMET and line_layout(COMET_LINE[:40]) == COMET
    assert line_layout(MINOR_LINE) == MINOR_PLANET and line_layout(MINOR_LINE[:30]) == MINOR_PLANET
    assert line_layout("hello world, this is not an orbit") is None


@pytest.mark.parametrize(
    "line, words",
    [
        (MINOR_LINE[:90], "a minor planet line cut short: it ends at column 90, and M, ω, Ω, i, e and a need columns"),
        (MINOR_LINE[:40], "a minor planet line cut short: it ends at column 40"),
        (COMET_LINE[:60], "a comet line cut short: it ends at column 60, and q, e, ω, Ω and i need columns up to 79"),
        ("Designation  Peri. date  q  e  Node  i" + " " * 50, "not an MPC one-line orbit: neither a comet line"),
        ("hello", "too short (5 characters) and not an MPC one-line orbit"),
    ],
)
def test_lines_that_are_cut_short_or_of_no_layout_say_so(tmp_path, line, words):
    p = tmp_path / "orbits.txt"
    p.write_text(COMET_LINE + "\n" + line + "\n")
    with pytest.raises(InputError) as e:
        load_target(p, object_name="Larkspur")  # the bad line is found even when another one is picked
    assert e.value.field == "line 2" and words in e.value.message


def test_binary_or_latin1_orbit_files_are_not_listed_as_orbit_lines(tmp_path):
    p = tmp_path / "orbits.txt"
    p.write_bytes(b"\x7fELF\x02\x01\x01\x00" + bytes(range(256)) * 4)
    with pytest.raises(InputError, match="is a binary file, not a text file of MPC orbit lines"):
        load_target(p)
    p.write_bytes(COMET_LINE.replace("Larkspur", "Lark\xe9pur").encode("latin-1") + b"\n")
    with pytest.raises(InputError, match=r"not UTF-8 text \(byte 0xE9 at line 1, column 1[0-9]{2}\)"):
        load_target(p)
