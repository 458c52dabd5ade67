"""The `phasewise ephem` command: formats, atomic output, the Sun caution, one-line errors (exit 2)."""

from __future__ import annotations

import json

import pandas as pd
import pytest

from planner.cli import main
from planner.core.textfmt import dec_dms, ra_hms

DEMO = "planner/data/demo/c2034-b3-quillfeather.toml"


def call(capsys, *args) -> tuple[int, str, str]:
    try:
        main(["ephem", *args])
        code = 0
    except SystemExit as exc:
        code = exc.code or 0
    out = capsys.readouterr()
    return code, out.out, out.err


def test_sexagesimal_formatting():
    # 162.7262° = 10h 50m 54.29s; -25.3856° = -25° 23' 08.2" (hand computation).
    assert ra_hms(162.72619, 2, letters=False) == "10 50 54.29"
    assert dec_dms(-25.38562, 1, letters=False) == "-25 23 08.2"
    assert ra_hms(359.99999999, 2, letters=False) == "00 00 00.00"
    assert dec_dms(0.0, 1, letters=False) == "+00 00 00.0"


def test_table_for_people(root, capsys, monkeypatch):
    monkeypatch.chdir(root)
    code, out, _ = call(
        capsys,
        "--target",
        DEMO,
        "--site",
        "planner/data/demo/sites/quebrada-alta.toml",
        "--start",
        "2034-03-19T00:00",
        "--stop",
        "2034-03-19T06:00",
        "--step",
        "2h",
    )
    assert code == 0
    lines = out.splitlines()
    assert "Quebrada Alta" in lines[0] and "alt apparent (refraction at" in lines[0]
    assert "RA (h m s)" in lines[1] and "airm" in lines[1]
    assert "au" in lines[2] and "deg" in lines[2]
    assert len(lines) == 3 + 4
    assert lines[3].startswith("2034-03-19T00:00Z  10 50")


def test_csv_and_json_use_column_names(root, tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(root)
    out_csv = tmp_path / "g.csv"
    code, _, _ = call(
        capsys,
        "--target",
        DEMO,
        "--site",
        "planner/data/demo/sites/karoo-ridge.toml",
        "--site",
        "planner/data/demo/sites/salmon-gum.toml",
        "--start",
        "2034-03-19",
        "--stop",
        "2034-03-20",
        "--format",
        "csv",
        "--out",
        str(out_csv),
    )
    assert code == 0
    df = pd.read_csv(out_csv)
    for col in (
        "site",
        "time_utc",
        "ra_deg",
        "dec_deg",
        "helio_dist_au",
        "obs_dist_au",
        "phase_angle_deg",
        "solar_elong_deg",
        "motion_arcsec_per_min",
        "motion_pa_deg",
        "sunward_pa_deg",
        "mag_pred",
        "km_per_arcsec",
        "pab_lon_deg",
        "pab_lat_deg",
        "alt_deg",
        "az_deg",
        "airmass",
        "hour_angle_h",
        "sun_alt_deg",
        "moon_alt_deg",
        "moon_sep_deg",
        "moon_illum",
    ):
        assert col in df.columns
    assert len(df) == 2 * 25 and set(df["site"]) == {"Karoo Ridge", "Salmon Gum"}
    code, out, _ = call(
        capsys, "--target", DEMO, "--start", "2034-03-19", "--stop", "2034-03-19T03:00", "--format", "json"
    )
    doc = json.loads(out)
    assert doc["mag_law"] == "comet_total" and doc["caution"] is None and len(doc["rows"]) == 4
    assert doc["rows"][0]["site"] == "geocentre" and doc["rows"][0]["time_utc"] == "2034-03-19T00:00:00Z"


def test_low_elongation_prints_the_caution(root, capsys, monkeypatch):
    monkeypatch.chdir(root)
    code, out, err = call(
        capsys, "--target", DEMO, "--start", "2034-03-19", "--stop", "2034-03-19T01:00", "--min-elong", "170"
    )
    assert code == 0
    assert "blind" in err and "observatory" in err
    assert out.startswith("# CAUTION") and out.splitlines()[-1].endswith("SUN")


def test_failed_run_keeps_the_existing_output(root, tmp_path, capsys, monkeypatch):
    monkeypatch.chdir(root)
    target = tmp_path / "keep.csv"
    target.write_text("precious\n")
    code, _, err = call(
        capsys,
        "--target",
        "missing.toml",
        "--start",
        "2034-03-19",
        "--stop",
        "2034-03-20",
        "--format",
        "csv",
        "--out",
        str(target),
    )
    assert code == 2 and target.read_text() == "precious\n"


@pytest.mark.parametrize(
    "args, expected",
    [
        (
            ["--target", "nope.toml", "--start", "2034-03-19", "--stop", "2034-03-20"],
            "error: nope.toml: -: file not found",
        ),
        (
            ["--target", DEMO, "--start", "2034-13-19", "--stop", "2034-03-20"],
            "error: command line: start: '2034-13-19' is not an ISO 8601",
        ),
        (["--target", DEMO, "--start", "2034-03-19", "--stop", "2034-03-18"], "error: command line: stop:"),
        (
            ["--target", DEMO, "--start", "2034-03-19", "--stop", "2034-03-20", "--step", "fast"],
            "error: command line: step:",
        ),
        (
            ["--target", DEMO, "--start", "2060-03-19", "--stop", "2060-03-20"],
            "error: command line: start: '2060-03-19' is outside the bundled DE421 ephemeris",
        ),
        (
            ["--target", DEMO, "--start", "2034-03-19", "--stop", "2034-03-20", "--format", "xml"],
            "error: command line: --format: 'xml' is not one of 'table', 'csv', 'json', 'ecsv'",
        ),
        (
            ["--target", DEMO, "--object", "X", "--start", "2034-03-19", "--stop", "2034-03-20"],
            "error: planner/data/demo/c2034-b3-quillfeather.toml: object:",
        ),
        (
            [
                "--target",
                DEMO,
                "--site",
                "planner/data/demo/sites/karoo-ridge.toml",
                "--site",
                "planner/data/demo/sites/karoo-ridge.toml",
                "--start",
                "2034-03-19",
                "--stop",
                "2034-03-20",
            ],
            "error: planner/data/demo/sites/karoo-ridge.toml: name: two sites are both called 'Karoo Ridge'",
        ),
        (
            ["--target", "tests/data/mpc_comets.txt", "--start", "2034-03-19", "--stop", "2034-03-20"],
            "error: tests/data/mpc_comets.txt: object: the file holds 3 orbit lines",
        ),
    ],
)
def test_bad_input_exits_2_with_one_line(root, capsys, monkeypatch, args, expected):
    # House rule: bad input -> one line `error: FILE: FIELD: message`, exit status 2, no traceback.
    monkeypatch.chdir(root)
    code, out, err = call(capsys, *args)
    assert code == 2 and out == ""
    assert err.count("\n") == 1 and err.startswith(expected), err


def test_mpc_line_through_the_command(root, capsys, monkeypatch):
    monkeypatch.chdir(root)
    code, out, _ = call(
        capsys,
        "--target",
        "tests/data/mpc_comets.txt",
        "--object",
        "Halvard",
        "--start",
        "2033-02-01",
        "--stop",
        "2033-02-01T02:00",
        "--format",
        "csv",
    )
    assert code == 0 and out.count("\n") == 1 + 3
