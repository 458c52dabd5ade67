"""One observation-log format for ``check`` and ``plan --done``: observed rows, lost site-nights, errors."""

from __future__ import annotations

from datetime import date

import numpy as np
import pytest

from planner.cli import main
from planner.core.errors import InputError
from planner.inputs.donelog import read_done_log
from planner.inputs.obslog import read_observation_log
from planner.inputs.sites import Site

HEADER = "time_utc,site,exposure_s,mag_err,status,night"


def _done_log(path, n=40):
    base = np.datetime64("2034-03-10T20:00", "s")
    lines = ["# written by the night assistant", HEADER]
    for night in range(3):
        for k in range(n):
            t = base + np.timedelta64(night * 86400 + k * 600, "s")
            lines.append(f"{t}Z,hilltop,60,{'' if k % 5 == 0 else 0.02},observed,")
    lines.append(",hilltop,,,lost,2034-03-13")
    lines.append(",,,,lost,2034-03-14")
    path.write_text("\n".join(lines) + "\n")
    return path


def test_full_format_read_once(tmp_path):
    log = read_observation_log(_done_log(tmp_path / "done.csv"))
    assert log.times_utc.size == 120 and log.rows[0] == 1 and log.rows[-1] == 120
    assert [(x.site, x.night, x.row) for x in log.lost] == [
        ("hilltop", date(2034, 3, 13), 121),
        ("", date(2034, 3, 14), 122),
    ]
    assert np.isnan(log.mag_err[0]) and log.mag_err_or(0.05)[0] == 0.05 and log.exposure_or(30.0)[1] == 60.0
    # A plain log (time_utc only) still reads: every row observed, nothing lost.
    plain = tmp_path / "plain.csv"
    plain.write_text("time_utc\n2034-03-10T20:00:00Z\n2034-03-10T21:00:00Z\n")
    p = read_observation_log(plain)
    assert p.times_utc.size == 2 and p.site is None and p.lost == []


@pytest.mark.parametrize(
    "row, column, message",
    [
        ("2034-03-10T20:00:00Z,hilltop,60,0.02,seen,", "status (row 1)", "not observed or lost"),
        (",hilltop,,,lost,", "night (row 1)", "needs the local date"),
        (",hilltop,,,lost,17/03/2034", "night (row 1)", "not a local evening date"),
        (",hilltop,60,0.02,observed,", "time_utc (row 1)", "every observed row needs a time"),
        ("2034-03-10T20:00:00Z,hilltop,90000,0.02,,", "exposure_s (row 1)", "must be below 86400"),
        ("2034-03-10T20:00:00Z,hilltop,60,-1,,", "mag_err (row 1)", "positive"),
    ],
)
def test_bad_cells_name_column_and_row(tmp_path, row, column, message):
    f = tmp_path / "bad.csv"
    f.write_text(f"{HEADER}\n{row}\n")
    with pytest.raises(InputError) as exc:
        read_observation_log(f)
    assert str(exc.value).startswith(f"{f}: {column}: ") and message in str(exc.value)


MAG_HEADER = "time_utc,site,mag,mag_err,band"


def test_magnitudes_and_bands_are_read_and_rows_without_them_stay_times(tmp_path):
    f = tmp_path / "lc.csv"
    f.write_text(
        f"{MAG_HEADER},status,night\n"
        "2034-03-10T20:00:00Z,hilltop,14.213,0.012,R,,\n"
        "2034-03-10T20:10:00Z,hilltop,,,,,\n"
        "2034-03-10T20:20:00Z,hilltop,-1.5,,sdss_r,,\n"
        ",hilltop,,,,lost,2034-03-11\n"
    )
    log = read_observation_log(f)
    assert log.times_utc.size == 3 and len(log.lost) == 1
    np.testing.assert_array_equal(log.has_mag, [True, False, True])
    assert log.mag[0] == 14.213 and log.mag[2] == -1.5 and np.isnan(log.mag[1])
    assert list(log.band) == ["R", "", "sdss_r"]
    # A log without the columns has no magnitudes at all.
    plain = read_observation_log(_done_log(tmp_path / "done.csv"))
    assert plain.mag is None and plain.band is None and not plain.has_mag.any()


@pytest.mark.parametrize(
    "row, column, message",
    [
        ("2034-03-10T20:00:00Z,hilltop,bright,0.02,R", "mag (row 2)", "'bright' is not a number"),
        ("2034-03-10T20:00:00Z,hilltop,99.9,0.02,R", "mag (row 2)", "outside [-30, 40]"),
        ("2034-03-10T20:00:00Z,hilltop,nan,0.02,R", "mag (row 2)", "outside [-30, 40]"),
        ("2034-03-10T20:00:00Z,hilltop,14.1,0.02,R band", "band (row 2)", "not a band name"),
    ],
)
def test_bad_magnitude_cells_name_column_and_row(tmp_path, row, column, message):
    f = tmp_path / "bad.csv"
    f.write_text(f"{MAG_HEADER}\n2034-03-10T19:00:00Z,hilltop,14.0,0.02,R\n{row}\n")
    with pytest.raises(InputError) as exc:
        read_observation_log(f)
    assert str(exc.value).startswith(f"{f}: {column}: ") and message in str(exc.value)


def test_replan_reader_is_the_same_reader(tmp_path):
    f = _done_log(tmp_path / "done.csv")
    sites = [
        Site(name="hilltop", latitude_deg=30.0, longitude_deg=0.0, height_m=0.0, timezone="UTC"),
        Site(name="valley", latitude_deg=-30.0, longitude_deg=20.0, height_m=0.0, timezone="UTC"),
    ]
    done = read_done_log(f, sites)
    log = read_observation_log(f)
    assert np.array_equal(done.times_utc, log.times_utc)
    # The row with no site loses that night at every campaign site.
    assert done.lost == {("hilltop", date(2034, 3, 13)), ("hilltop", date(2034, 3, 14)), ("valley", date(2034, 3, 14))}
    with pytest.raises(InputError) as exc:
        read_done_log(f, sites[1:])
    assert str(exc.value).startswith(f"{f}: site (row 1): 'hilltop' is not a campaign site")


def test_check_uses_observed_rows_and_says_what_it_skipped(tmp_path, capsys):
    f = _done_log(tmp_path / "done.csv")
    with pytest.raises(SystemExit) as done:
        main(["check", str(f), "--trials", "0", "--min-period", "3h", "--max-period", "12h"])
    assert not done.value.code
    out = capsys.readouterr().out
    assert "2 lost site-night row(s) were skipped" in out
    only_lost = tmp_path / "lost.csv"
    only_lost.write_text(f"{HEADER}\n,hilltop,,,lost,2034-03-13\n")
    with pytest.raises(SystemExit) as exc:
        main(["check", str(only_lost)])
    assert exc.value.code == 2
    assert capsys.readouterr().err.startswith(f"error: {only_lost}: status: no observed rows")


def test_check_and_replan_read_a_log_with_magnitudes(tmp_path, capsys):
    f = tmp_path / "lc.csv"
    rows = [f"{MAG_HEADER}"]
    base = np.datetime64("2034-03-10T20:00", "s")
    for k in range(30):
        mag = "" if k % 7 == 0 else f"{14 + 0.1 * np.sin(k):.3f}"
        rows.append(f"{base + np.timedelta64(k * 900, 's')}Z,hilltop,{mag},0.02,R")
    f.write_text("\n".join(rows) + "\n")
    with pytest.raises(SystemExit) as done:
        main(["check", str(f), "--trials", "0", "--min-period", "3h", "--max-period", "12h"])
    assert not done.value.code and "30 frames stacked into 30 points" in capsys.readouterr().out
    site = Site(name="hilltop", latitude_deg=30.0, longitude_deg=0.0, height_m=0.0, timezone="UTC")
    log = read_done_log(f, [site])
    assert log.times_utc.size == 30 and log.has_magnitudes
    assert not read_done_log(_done_log(tmp_path / "done.csv"), [site]).has_magnitudes
