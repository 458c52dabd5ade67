"""Cases an observer meets that the demo does not: MPC orbit files with several lines, a target
near the Sun, logs with repeated rows, output piped into `head`, long reasons in the night charts.

The orbits in tests/data/observer_orbits.txt are invented (elements chosen, not observed): two main-belt
asteroids in the MPCORB.DAT layout and one comet in the CometEls.txt layout.
"""

from __future__ import annotations

import errno
import json
import sys
import warnings
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from planner.cli import main
from planner.core.errors import InputError
from planner.diagnostics.verdicts import repeated_times
from planner.inputs.campaign import load_campaign
from planner.inputs.donelog import read_done_log
from planner.inputs.targets import load_target

ORBITS = Path(__file__).parent / "data" / "observer_orbits.txt"

NORTH = """name = "Birch Hill"
latitude_deg = 52.2
longitude_deg = 0.1
height_m = 30
timezone = "Europe/London"
[instrument]
aperture_m = 0.4
pixel_scale_arcsec = 0.8
zero_point_mag = 22.5
filter = "R"
"""
DESERT = """name = "Desert Mesa"
latitude_deg = 32.4
longitude_deg = -110.7
height_m = 2500
timezone = "America/Phoenix"
min_alt_deg = 10
[instrument]
aperture_m = 0.8
pixel_scale_arcsec = 0.6
zero_point_mag = 24.2
filter = "R"
"""
SOUTH = """name = "Sierra Sur"
latitude_deg = -30.2
longitude_deg = -70.7
timezone = "America/Santiago"
"""


def call(capsys, *args) -> tuple[int, str, str]:
    try:
        main(list(args))
        code = 0
    except SystemExit as exc:
        code = exc.code or 0
    out = capsys.readouterr()
    return code, out.out, out.err


def _campaign(tmp_path: Path, first_night: str, obj: str | None, *sites: tuple[str, str]) -> Path:
    names = []
    for fname, text in sites:
        (tmp_path / fname).write_text(text)
        names.append(fname)
    (tmp_path / "orbits.txt").write_text(ORBITS.read_text())
    lines = [
        'name = "Observer case"',
        'target = "orbits.txt"',
        f"sites = {json.dumps(names)}",
        f"first_night = {first_night}",
        "nights = 3",
        "seed = 3",
    ]
    if obj is not None:
        lines.append(f"object = {json.dumps(obj)}")
    lines += [
        "[rotation]",
        "min_period_h = 3",
        "max_period_h = 20",
        "[blocks]",
        "min_block_h = 0.5",
        "[weather]",
        "trials = 20",
        "[diagnostics]",
        "trials = 0",
    ]
    path = tmp_path / "campaign.toml"
    path.write_text("\n".join(lines) + "\n")
    return path


# --- MPC files with several lines ---------------------------------------------------------------


def test_several_lines_without_object_name_them():
    with pytest.raises(InputError) as err:
        load_target(ORBITS)
    assert err.value.field == "object"
    for name in ("2034 QA1", "2034 QA2", "C/2034 K2 (Wrenfield)"):
        assert name in err.value.message


def test_object_option_on_windows_and_check(tmp_path, capsys):
    site = tmp_path / "south.toml"
    site.write_text(SOUTH)
    code, out, err = call(
        capsys,
        "windows",
        "--target",
        str(ORBITS),
        "--object",
        "qa1",
        "--site",
        str(site),
        "--start",
        "2034-06-10",
        "--nights",
        "1",
        "--format",
        "json",
    )
    assert code == 0, err
    rows = json.loads(out)["windows"]
    assert rows and rows[0]["hours"] > 5  # near opposition from latitude -30 in June: most of the night
    log = tmp_path / "log.csv"
    log.write_text("time_utc\n2034-06-11T02:00:00Z\n2034-06-11T04:00:00Z\n2034-06-12T03:00:00Z\n")
    code, out, err = call(
        capsys, "check", str(log), "--target", str(ORBITS), "--object", "2034 QA2", "--trials", "0", "--format", "json"
    )
    assert code == 0, err
    assert json.loads(out)["trend"]["geometric_trend_used"] is True


def test_campaign_object_key_picks_the_line_and_errors_name_the_key(tmp_path):
    path = _campaign(tmp_path, "2034-06-10", "Wrenfield", ("south.toml", SOUTH))
    assert load_campaign(path).load_target().name == "C/2034 K2 (Wrenfield)"
    path = _campaign(tmp_path, "2034-06-10", None, ("south.toml", SOUTH))
    with pytest.raises(InputError) as err:
        load_campaign(path).load_target()
    assert err.value.file == str(path) and err.value.field == "object"
    assert 'object = "NAME"' in err.value.message and "--object" not in err.value.message


def test_ephem_header_shows_the_brightness_parameters(capsys):
    # MPCORB.DAT layout (Minor Planet Center, "Export Format for Minor-Planet Orbits"): H in
    # columns 9-13, G in 15-19. CometEls.txt layout: G in 92-95, k in 97-100 with
    # m = G + 5 log Δ + 2.5 k log r, so K1 = 2.5 k = 10 for k = 4.0.
    code, out, _ = call(
        capsys,
        "ephem",
        "--target",
        str(ORBITS),
        "--object",
        "2034 QA2",
        "--start",
        "2034-06-10",
        "--stop",
        "2034-06-10",
    )
    assert code == 0
    assert "asteroid_hg (H 16.8, G 0.25)" in out.splitlines()[0]
    code, out, _ = call(
        capsys,
        "ephem",
        "--target",
        str(ORBITS),
        "--object",
        "Wrenfield",
        "--start",
        "2034-07-14",
        "--stop",
        "2034-07-14",
        "--format",
        "json",
    )
    assert json.loads(out)["mag_params"] == {"M1": 10.0, "K1": 10.0}


# --- output files -------------------------------------------------------------------------------


def test_outputs_into_a_new_folder_parse_back(tmp_path, capsys):
    out_json = tmp_path / "new" / "deeper" / "e.json"
    out_csv = tmp_path / "other" / "e.csv"
    common = [
        "ephem",
        "--target",
        str(ORBITS),
        "--object",
        "qa1",
        "--start",
        "2034-06-10",
        "--stop",
        "2034-06-11",
        "--step",
        "6h",
    ]
    assert call(capsys, *common, "--format", "json", "--out", str(out_json))[0] == 0
    assert call(capsys, *common, "--format", "csv", "--out", str(out_csv))[0] == 0
    doc = json.loads(out_json.read_text())
    table = pd.read_csv(out_csv)
    assert len(doc["rows"]) == len(table) == 5
    assert np.allclose(table["mag_pred"], [r["mag_pred"] for r in doc["rows"]], atol=1e-8)


class _ClosedPipe:
    """stdout of `phasewise ... | head -1` once head has exited: every write fails with EPIPE."""

    def write(self, text: str) -> int:
        raise BrokenPipeError(errno.EPIPE, "Broken pipe")

    def flush(self) -> None:
        raise BrokenPipeError(errno.EPIPE, "Broken pipe")


def test_output_piped_into_head_is_quiet(monkeypatch):
    # The reader closed the pipe early: the command stops quietly (typer's exit status 1), no traceback.
    monkeypatch.setattr(sys, "stdout", _ClosedPipe())
    with pytest.raises(SystemExit) as stop:
        main(["ephem", "--target", str(ORBITS), "--object", "qa1", "--start", "2034-06-01", "--stop", "2034-06-02"])
    assert stop.value.code == 1


# --- a target near the Sun ----------------------------------------------------------------------


def test_plan_of_a_target_always_near_the_sun_says_why(tmp_path):
    from planner.pipeline import plan_campaign

    # In mid-June the invented comet is 12° from the Sun (geocentric), below the 30° default limit.
    path = _campaign(tmp_path, "2034-06-10", "Wrenfield", ("south.toml", SOUTH))
    with pytest.raises(InputError) as err:
        campaign = load_campaign(path)
        plan_campaign(campaign, campaign.load_target())
    assert "Sierra Sur: too close to the Sun" in err.value.message
    assert "(" not in err.value.message.split("Sierra Sur:")[1]  # the long caution is left to `windows`


@pytest.mark.slow
def test_plan_near_the_sun_keeps_the_limit_and_warns_everywhere(tmp_path, capsys):
    from astropy import units as u
    from astropy.coordinates import SkyCoord, get_body
    from astropy.time import Time

    # Mid-July 2034: elongation crosses 30° (the sites' limit); Birch Hill never gets it above 20° in
    # darkness, Desert Mesa (limit 10°) has a short evening window.
    path = _campaign(tmp_path, "2034-07-12", "Wrenfield", ("north.toml", NORTH), ("desert.toml", DESERT))
    out_dir = tmp_path / "plan"
    with warnings.catch_warnings():  # the report's figures must lay out cleanly (no empty legend, no collapse)
        warnings.simplefilter("error", UserWarning)
        code, out, err = call(capsys, "plan", str(path), "--out", str(out_dir))
    assert code == 0, err
    assert "SAFETY" in out and "deg from the Sun" in out
    plan = pd.read_csv(out_dir / "plan.csv")
    assert len(plan) > 0 and (plan["solar_elong_deg"] >= 30.0).all()
    # Independent route: the Sun from astropy's built-in ephemeris (Astropy Collaboration 2022),
    # its separation from the block's pointing at mid-block. Both are geocentric-to-topocentric
    # close (parallax of the Sun 9″), so 0.1° covers aberration and frame differences.
    mid = Time(
        list(
            pd.to_datetime(plan["start_utc"])
            + (pd.to_datetime(plan["end_utc"]) - pd.to_datetime(plan["start_utc"])) / 2
        )
    )
    with warnings.catch_warnings():  # 2034 is beyond the leap-second table: UTC ≈ UTC is fine for 0.1°
        warnings.simplefilter("ignore")
        sun = get_body("sun", mid)
    sep = (
        SkyCoord(plan["ra_deg"].to_numpy() * u.deg, plan["dec_deg"].to_numpy() * u.deg, frame="icrs")
        .separation(SkyCoord(sun.ra, sun.dec, frame="icrs"))
        .deg
    )
    assert (sep >= 30.0 - 0.1).all(), sep
    sheet = (out_dir / "sheets" / "desert-mesa.txt").read_text()
    assert "target: C/2034 K2 (Wrenfield) (file orbits.txt)" in sheet
    assert "CAUTION: target only" in sheet and "from the Sun" in sheet
    assert json.loads((out_dir / "plan.json").read_text())["target"]["name"] == "C/2034 K2 (Wrenfield)"
    assert "Campaign report: C/2034 K2 (Wrenfield)" in (out_dir / "report.html").read_text()
    # Birch Hill has no window at all: its night charts still span each local noon-to-noon night
    # (BST = UTC+1 in July: EU summer time, Directive 2000/84/EC), on its own clock.
    from planner.outputs.reader import load_plan_folder

    geo = pd.read_csv(out_dir / "geometry.csv")
    times = pd.to_datetime(geo.loc[geo["site"] == "Birch Hill", "time_utc"])
    assert times.min() <= pd.Timestamp("2034-07-12T11:00Z") and times.max() >= pd.Timestamp("2034-07-15T11:00Z")
    folder = load_plan_folder(out_dir)  # the manifest names each site's time zone
    assert folder.utc_offset_h("Birch Hill", "2034-07-12") == 1.0
    assert folder.utc_offset_h("Desert Mesa", "2034-07-12") == -7.0  # Arizona keeps MST all year
    # The windows table marks the Sun caution on the nights without a window as well.
    code, out, _ = call(
        capsys,
        "windows",
        "--target",
        str(tmp_path / "orbits.txt"),
        "--object",
        "Wrenfield",
        "--site",
        str(tmp_path / "north.toml"),
        "--start",
        "2034-07-12",
        "--nights",
        "1",
    )
    night_rows = [ln for ln in out.splitlines() if ln.startswith("  2034-07-12")]
    assert night_rows and all(ln.endswith("!") for ln in night_rows)


def test_night_chart_with_a_long_reason_keeps_its_layout():
    import xml.etree.ElementTree as ET

    from planner.outputs import figures_nights

    t = np.arange(np.datetime64("2034-07-12T12:00"), np.datetime64("2034-07-13T12:00"), np.timedelta64(10, "m"))
    hours = (t - t[0]) / np.timedelta64(1, "h")
    geo = pd.DataFrame(
        {
            "time_utc": t.astype(str),
            "alt_deg": 30 * np.sin(hours / 24 * 2 * np.pi),
            "sun_alt_deg": -30 * np.sin(hours / 24 * 2 * np.pi),
        }
    )
    reason = (
        "too close to the Sun: elongation 12.4° < 30° (pointing near the Sun can destroy equipment and "
        "blind people; the observatory's rules decide); below the horizon limit all dark time"
    )
    windows = pd.DataFrame(
        {"site": ["A"], "night": ["2034-07-12"], "start_utc": [""], "end_utc": [""], "reason": [reason]}
    )
    blocks = pd.DataFrame(columns=["site", "night", "start_utc", "end_utc"])
    chart = figures_nights.site_nights_svg("A", geo, windows, blocks, ["2034-07-12"], 0.0, 20.0)
    texts = [t.text for t in ET.fromstring(chart.text).iter("{http://www.w3.org/2000/svg}text")]
    assert texts.count("no window") == 1 and "Wed 12 Jul" in texts  # the reason itself goes to the table
    assert chart.width_px == 860


# --- logs with repeated rows --------------------------------------------------------------------


def test_repeated_times_counts_copies_not_simultaneous_sites():
    t = np.array(
        ["2034-06-10T01:00:00", "2034-06-10T01:00:00", "2034-06-10T01:00:00", "2034-06-10T02:00:00"],
        dtype="datetime64[ns]",
    )
    assert repeated_times(t) == 2
    assert repeated_times(t, np.array(["A", "A", "B", "A"])) == 1
    assert repeated_times(t[[0, 3]]) == 0


def test_check_notes_repeated_rows(tmp_path, capsys):
    log = tmp_path / "dup.csv"
    log.write_text(
        "time_utc,site\n2034-06-10T01:00:00Z,A\n2034-06-10T01:00:00Z,A\n2034-06-10T01:00:00Z,B\n"
        "2034-06-10T03:00:00Z,A\n2034-06-11T02:00:00Z,A\n"
    )
    code, out, _ = call(capsys, "check", str(log), "--trials", "0", "--format", "json")
    assert code == 0
    notes = json.loads(out)["notes"]
    assert any(n.startswith("1 time(s) repeat an earlier row") for n in notes)


# --- a site without an instrument in the plan's diagnostics ----------------------------------------


def test_stacked_points_without_sigma_stay_unknown_quietly():
    from planner.photometry.points import stack_frames

    t_ref = np.datetime64("2034-06-12T00:00:00", "ns")
    t = t_ref + (np.tile(np.arange(4), 2) * 60 + 30).astype("timedelta64[s]").astype("timedelta64[ns]")
    frames = pd.DataFrame({"time_utc": t, "site": ["A"] * 4 + ["B"] * 4, "mag_err": [0.02] * 4 + [np.nan] * 4})
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # no divide-by-zero warning on the terminal
        points = stack_frames(frames, 300.0, t_ref)
    by_site = points.set_index("site")
    # Four frames of σ 0.02 mag averaged: σ/√4 = 0.01 mag (standard error of a mean, common practice).
    assert by_site.loc["A", "mag_err"] == pytest.approx(0.01)
    assert np.isnan(by_site.loc["B", "mag_err"]) and by_site.loc["B", "n_frames"] == 4


# --- outputs that cannot be written, and logs that leave nothing (or little) to draw ---------------


def test_out_into_a_folder_or_under_a_file_is_one_line(tmp_path, capsys):
    (tmp_path / "afile").write_text("x")
    common = ["ephem", "--target", str(ORBITS), "--object", "qa1", "--start", "2034-06-10", "--stop", "2034-06-10"]
    code, _, err = call(capsys, *common, "--out", str(tmp_path))
    assert (
        code == 2 and err.strip() == f"error: {tmp_path}: --out: is a folder; give a file name (e.g. a name inside it)"
    )
    code, _, err = call(capsys, *common, "--out", str(tmp_path / "afile" / "e.txt"))
    assert code == 2 and "a file of that name is in the way" in err and "Traceback" not in err
    assert (tmp_path / "afile").read_text() == "x"


def test_check_report_of_three_points(tmp_path, capsys):
    # Three points leave the period change undefined (null) and no injections: the report still draws.
    log = tmp_path / "tiny.csv"
    log.write_text("time_utc\n2034-06-10T01:00:00Z\n2034-06-10T03:00:00Z\n2034-06-10T05:00:00Z\n")
    with warnings.catch_warnings():
        warnings.simplefilter("error", UserWarning)
        code, _, err = call(capsys, "check", str(log), "--trials", "0", "--report", str(tmp_path / "r.html"))
    assert code == 0, err
    assert (tmp_path / "r.html").read_text().count("data:image/svg+xml;base64") >= 3


def test_log_ending_after_the_campaign_says_so(tmp_path):
    from planner.pipeline import plan_campaign

    path = _campaign(tmp_path, "2034-06-10", "qa1", ("south.toml", SOUTH))
    log = tmp_path / "late.csv"
    log.write_text("time_utc,site\n2034-07-01T02:00:00Z,Sierra Sur\n")
    with pytest.raises(InputError) as err:
        campaign = load_campaign(path)
        plan_campaign(campaign, campaign.load_target(), read_done_log(log, campaign.sites))
    assert "the observation log runs to 2034-07-01T02:00Z, after the campaign's last window" in err.value.message


@pytest.mark.slow
def test_baseline_short_of_the_plan_hours_is_said(tmp_path, capsys):
    # No hour cap at a site with 10 h windows: the plan takes two 4 h blocks a night, the baseline one.
    path = _campaign(tmp_path, "2034-06-10", "qa1", ("south.toml", SOUTH))
    code, out, err = call(capsys, "plan", str(path), "--out", str(tmp_path / "p"))
    assert code == 0, err
    head = next(ln for ln in out.splitlines() if ln.startswith("plan vs baseline"))
    plan_h, base_h = (
        float(v) for v in next(ln for ln in out.splitlines() if ln.startswith("telescope hours")).split()[-2:]
    )
    assert base_h <= 3 * 4.0 < plan_h  # three nights, one block of at most max_block_h = 4 h each
    assert f"at most 4 h each, so {plan_h - base_h:.1f} h fewer than the plan" in head and "same hours" not in head


def test_plan_csv_on_stdout_is_the_file(tmp_path, capsys):
    path = _campaign(tmp_path, "2034-06-10", "qa1", ("south.toml", SOUTH))
    code, out, err = call(capsys, "plan", str(path), "--out", str(tmp_path / "p"), "--format", "csv")
    assert code == 0, err
    assert out == (tmp_path / "p" / "plan.csv").read_text()
    assert len(pd.read_csv(tmp_path / "p" / "plan.csv")) == len(pd.read_csv(__import__("io").StringIO(out))) > 0


def test_replanned_sheet_shows_the_time_already_observed(tmp_path, capsys):
    path = _campaign(tmp_path, "2034-06-10", "qa1", ("south.toml", SOUTH))
    log = tmp_path / "done.csv"
    rows = [f"{np.datetime64('2034-06-11T01:00:00') + np.timedelta64(80 * i, 's')}Z,Sierra Sur,60" for i in range(90)]
    log.write_text("time_utc,site,exposure_s\n" + "\n".join(rows) + "\n")
    before = log.read_bytes()
    code, out, err = call(capsys, "plan", str(path), "--out", str(tmp_path / "p"), "--done", str(log))
    assert code == 0, err
    assert log.read_bytes() == before  # the log is read only
    nights = pd.read_csv(tmp_path / "p" / "nights.csv")
    first = nights[nights["night"] == "2034-06-10"].iloc[0]
    # 90 exposures of 60 s every 80 s: 01:00 to 02:59 UTC, about 2 h at the telescope.
    assert first["observed_h"] == pytest.approx(2.0, abs=0.05)
    sheet = (tmp_path / "p" / "sheets" / "sierra-sur.txt").read_text()
    night_text = sheet.split("Night of 2034-06-10")[1].split("Night of 2034-06-11")[0]
    assert first["blocks"] > 0  # the rest of that night (after 03:00 UTC) is still planned
    assert f"already observed this night: {first['observed_h']:.2f} h (observation log)" in night_text
    assert sheet.count("Night of ") == 3  # every campaign night is listed
