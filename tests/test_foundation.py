"""Checks of the shared foundation: time parsing, the offline time scale, TOML validation, atomic writes."""

from __future__ import annotations

import numpy as np
import pytest

from planner.core.errors import InputError
from planner.core.fileio import write_text_atomic
from planner.core.timegrid import from_jd_utc, parse_duration_s, parse_utc, time_grid, to_jd_utc
from planner.core.tomlfile import Fields, read_toml
from planner.sky.skydata import utc_times


@pytest.mark.parametrize("text, seconds", [("30s", 30), ("5m", 300), ("1h", 3600), ("1.5h", 5400), ("1d", 86400)])
def test_durations(text, seconds):
    assert parse_duration_s(text) == seconds


@pytest.mark.parametrize("text", ["", "5", "h", "-1h", "0m", "5 parsecs"])
def test_bad_durations_name_the_field(text):
    with pytest.raises(InputError, match="step"):
        parse_duration_s(text, field="step")


def test_utc_parsing_forms_agree():
    want = np.datetime64("2034-03-16T22:15:00", "ns")
    for text in ("2034-03-16T22:15", "2034-03-16 22:15:00", "2034-03-16T22:15:00Z"):
        assert parse_utc(text) == want


def test_utc_rejects_offsets_and_nonsense():
    with pytest.raises(InputError, match="UTC"):
        parse_utc("2034-03-16T22:15+02:00")
    with pytest.raises(InputError, match="ISO 8601"):
        parse_utc("16/03/2034")


def test_grid_is_inclusive_and_regular():
    t = time_grid(parse_utc("2034-03-16"), parse_utc("2034-03-17"), 300.0)
    assert len(t) == 289
    assert np.all(np.diff(t) == np.timedelta64(300, "s"))


def test_julian_date_of_j2000():
    # J2000.0 is JD 2451545.0 = 2000-01-01T12:00 (IAU 1976 / Explanatory Supplement); here on the UTC scale.
    assert to_jd_utc(np.array(["2000-01-01T12:00"], dtype="datetime64[ns]"))[0] == 2451545.0
    t = np.array(["2034-03-16T22:15:07"], dtype="datetime64[ns]")
    assert abs((from_jd_utc(to_jd_utc(t)) - t)[0]) < np.timedelta64(50, "us")


@pytest.mark.filterwarnings("ignore::erfa.ErfaWarning")
def test_time_scale_counts_leap_seconds_like_erfa():
    # Independent route: erfa.dat (SOFA's leap-second table). TAI−UTC = 37 s from 2017-01-01 (IERS Bulletin C 52).
    erfa = pytest.importorskip("erfa", reason="pyerfa (the IAU SOFA routines) is not installed")

    # erfa warns that 2034 is past its table ("dubious year"); no leap second is announced after 2017.
    t = np.array(["2016-12-31T12:00", "2017-01-01T12:00", "2034-03-16T00:00"], dtype="datetime64[ns]")
    st = utc_times(t)
    tai_minus_utc_s = (st.tai - to_jd_utc(t)) * 86400.0
    want = [erfa.dat(y, m, d, 0.5) for y, m, d in ((2016, 12, 31), (2017, 1, 1), (2034, 3, 16))]
    assert tai_minus_utc_s == pytest.approx(want, abs=1e-3)
    assert want[1] - want[0] == 1.0


def test_time_outside_de421_is_refused():
    with pytest.raises(InputError, match="DE421"):
        utc_times(np.array(["2060-01-01"], dtype="datetime64[ns]"), file="x.toml", field="start")


def test_toml_fields_check_ranges_and_unknown_keys(tmp_path):
    p = tmp_path / "s.toml"
    p.write_text('name = "x"\nlatitude_deg = 95.0\nlattitude = 3\n')
    f = Fields(p, read_toml(p))
    with pytest.raises(InputError, match=r"latitude_deg: 95 is outside \[-90, 90\]"):
        f.float("latitude_deg", lo=-90, hi=90)
    with pytest.raises(InputError, match="lattitude: unknown field"):
        f.check_known({"name", "latitude_deg"})
    with pytest.raises(InputError, match="missing"):
        f.str("timezone", required=True)


def test_toml_syntax_error_names_the_file(tmp_path):
    p = tmp_path / "broken.toml"
    p.write_text("name = \n")
    with pytest.raises(InputError, match="broken.toml: -: not valid TOML"):
        read_toml(p)


def test_atomic_write_keeps_the_old_file_on_failure(tmp_path, monkeypatch):
    p = tmp_path / "plan.csv"
    write_text_atomic(p, "good\n")

    def boom(*a, **k):
        raise OSError("disk full")

    monkeypatch.setattr("planner.core.fileio.os.replace", boom)
    with pytest.raises(InputError, match=r"plan.csv: out: cannot write \(disk full\)"):
        write_text_atomic(p, "half")
    assert p.read_text() == "good\n"
    assert [x.name for x in tmp_path.iterdir()] == ["plan.csv"]


@pytest.mark.parametrize(
    "args, field",
    [
        (["windows", "--target", "x.toml", "--start", "2034-03-16"], "--site"),
        (["windows", "--target", "x.toml", "--site", "s.toml", "--start", "2034-03-16", "--nights", "0"], "--nights"),
        (["ephem", "--no-such-option"], "--no-such-option"),
        (["frobnicate"], "usage"),
    ],
)
def test_usage_errors_are_one_line_with_exit_2(capsys, args, field):
    from planner.cli import main

    with pytest.raises(SystemExit) as exc:
        main(args)
    err = capsys.readouterr().err.strip().splitlines()
    assert exc.value.code == 2
    assert len(err) == 1 and err[0].startswith(f"error: command line: {field}: ")
