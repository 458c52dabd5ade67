"""``phasewise check``: runs on hand-made logs, bad input gives one line and exit status 2."""

from __future__ import annotations

import json

import numpy as np
import pytest
from clirun import run_cli

from planner.cli import main
from planner.core.errors import InputError
from planner.inputs.obslog import read_observation_log
from tests.conftest import DEMO_DIR


def _write_log(path, hours, sites=None, extra=""):
    base = np.datetime64("2034-03-10T00:00", "s")
    t = base + np.round(np.asarray(hours) * 3600).astype("int64").astype("timedelta64[s]")
    lines = ["time_utc,site,mag_err" + extra]
    for i, ti in enumerate(t):
        site = sites[i] if sites is not None else "hilltop"
        lines.append(f"{ti}Z,{site},{'' if i % 4 == 0 else 0.015}")
    path.write_text("\n".join(lines) + "\n")
    return path


def _call(capsys, *args) -> tuple[int, str, str]:
    """In-process run (fast): exit status, stdout, stderr."""
    try:
        main(["check", *map(str, args)])
        code = 0
    except SystemExit as exc:
        code = exc.code or 0
    out = capsys.readouterr()
    return code, out.out, out.err


@pytest.fixture
def single_log(tmp_path):
    hours = np.concatenate([n * 24 + 20 + np.arange(30) / 6 for n in range(8)])
    return _write_log(tmp_path / "single.csv", hours)


def test_table_json_out_and_plots(single_log, tmp_path, capsys):
    r = run_cli(
        capsys, "check", single_log, "--min-period", "2h", "--max-period", "30h", "--trials", "60", "--seed", "4"
    )
    assert r.returncode == 0, r.stderr
    assert "Verdict by period band" in r.stdout and "under-covered" in r.stdout
    assert "24 h" in r.stdout and "12.00 h ↔" in r.stdout
    out = tmp_path / "check.json"
    plots = tmp_path / "plots"
    r = run_cli(
        capsys,
        "check",
        single_log,
        "--min-period",
        "120m",
        "--max-period",
        "1.25d",
        "--trials",
        "60",
        "--format",
        "json",
        "--out",
        out,
        "--plot",
        plots,
    )
    assert r.returncode == 0, r.stderr
    d = json.loads(out.read_text())
    assert d["settings"]["max_period_h"] == pytest.approx(30.0)
    assert d["input"]["n_times"] == 240 and d["input"]["sites"] == {"hilltop": 240}
    assert sorted(p.name for p in plots.iterdir()) == [
        "check_coverage_map.png",
        "check_recovery.png",
        "check_sensitivity.png",
        "check_spectral_window.png",
    ]
    assert all(p.read_bytes()[:4] == b"\x89PNG" for p in plots.iterdir())


@pytest.mark.parametrize(
    "content, message",
    [
        ("time_utc\n2034-03-10T20:00Z\nyesterday\n", "time_utc (row 2): 'yesterday' is not an ISO 8601"),
        ("time_utc,mag_err\n2034-03-10T20:00Z,-0.1\n", "mag_err (row 1): '-0.1' must be a positive number"),
        ("time_utc,colour\n2034-03-10T20:00Z,red\n", "colour: unknown column"),
        ("site\nhilltop\n", "time_utc: missing column"),
        ("time_utc\n", "time_utc: no observation times"),
        ("time_utc,exposure_s\n2034-03-10T20:00Z,abc\n", "exposure_s (row 1): 'abc' is not a number"),
    ],
)
def test_bad_log_is_one_line_exit_2(capsys, tmp_path, content, message):
    f = tmp_path / "bad.csv"
    f.write_text(content)
    code, _, err = _call(capsys, f, "--trials", "0")
    assert code == 2
    assert err.count("\n") == 1 and "Traceback" not in err
    assert err.startswith(f"error: {f}: ") and message in err


def test_bad_options_exit_2(capsys, single_log, tmp_path):
    for args, field in (
        (["--min-period", "soon"], "--min-period"),
        (["--min-period", "30h", "--max-period", "2h"], "--max-period"),
        (["--format", "xml"], "--format"),
        (["--amplitude", "big"], "--amplitude"),
    ):
        code, _, err = _call(capsys, single_log, *args)
        assert code == 2 and err.startswith("error: command line: " + field), err
    code, _, err = _call(capsys, tmp_path / "missing.csv")
    assert code == 2 and "file not found" in err


def test_read_log_defaults_and_order(tmp_path):
    f = _write_log(tmp_path / "log.csv", [5.0, 1.0, 3.0])
    log = read_observation_log(f)
    assert log.times_utc.size == 3 and list(log.site) == ["hilltop"] * 3
    assert np.isnan(log.mag_err[0]) and log.mag_err_or(0.05)[0] == 0.05 and log.mag_err_or(0.05)[1] == 0.015
    with pytest.raises(InputError):
        read_observation_log(tmp_path)


def test_target_adds_geometric_trend_and_synodic_drift(root, tmp_path, capsys):
    # The demo target through planner.sky.geometry.geometry; the command reports the bisector motion.
    hours = np.concatenate([n * 24 + start + np.arange(20) / 4 for n in range(4) for start in (20, 4, 12)])
    log = tmp_path / "demo.csv"
    base = np.datetime64("2034-03-16T00:00", "s")
    times = base + np.round(hours * 3600).astype("int64").astype("timedelta64[s]")
    log.write_text("time_utc\n" + "".join(f"{t}Z\n" for t in times))
    out = tmp_path / "c.json"
    r = run_cli(
        capsys,
        "check",
        log,
        "--target",
        DEMO_DIR / "c2034-b3-quillfeather.toml",
        "--trials",
        "20",
        "--format",
        "json",
        "--out",
        out,
    )
    assert r.returncode == 0, r.stderr
    d = json.loads(out.read_text())
    assert d["trend"]["geometric_trend_used"] and d["synodic"]["pab_lon_rate_deg_per_day"] is not None


def test_missing_target_file_exit_2(capsys, single_log, tmp_path):
    code, _, err = _call(capsys, single_log, "--target", tmp_path / "nope.toml", "--trials", "0")
    assert code == 2 and err.startswith("error: ") and err.count("\n") == 1


def test_site_instruments_set_the_noise_where_the_log_is_silent(capsys, tmp_path, root):
    # The log's own σ wins; elsewhere the site's CCD model (planner.photometry.tables, Howell 2006 CCD equation)
    # gives it; only points without a prediction (target down, Sun up) fall back to --mag-err.
    from planner.inputs.sites import load_site
    from planner.inputs.targets import load_target
    from planner.photometry.frames import mag_err_for_times

    target = DEMO_DIR / "c2034-b3-quillfeather.toml"
    site_file = DEMO_DIR / "sites/karoo-ridge.toml"
    log = tmp_path / "karoo.csv"
    times = [f"2034-03-17T{h:02d}:{m:02d}:00Z" for h in (19, 20, 21, 22) for m in (0, 20, 40)]
    rows = [f"{t},Karoo Ridge,{'0.005' if i < 3 else ''}" for i, t in enumerate(times)]
    rows.append("2034-03-17T12:00:00Z,Karoo Ridge,")  # local 14:00: Sun up, no prediction
    log.write_text("time_utc,site,mag_err\n" + "\n".join(rows) + "\n")
    # Points 20 min apart stay single frames; --sys-err 0 leaves the frames' own σ (no extinction term).
    code, out, err = _call(
        capsys,
        log,
        "--target",
        target,
        "--site",
        site_file,
        "--trials",
        "0",
        "--mag-err",
        "0.3",
        "--format",
        "json",
        "--sys-err",
        "0",
    )
    assert code == 0, err
    d = json.loads(out)
    assert d["input"]["mag_err_sources"] == {"log": 3, "model": 9, "fallback": 1}
    model = mag_err_for_times(
        load_target(target),
        np.array([t[:-1] for t in times[3:]], dtype="datetime64[ns]"),
        ["Karoo Ridge"] * 9,
        [load_site(site_file)],
    )
    want = np.median(np.concatenate([[0.005] * 3, model, [0.3]]))
    assert d["input"]["median_mag_err"] == pytest.approx(want, rel=1e-9)
    assert 0.001 < model.max() < 0.1  # a 12th-magnitude comet on a 0.6 m telescope: millimag to centimag
    code, _, err = _call(capsys, log, "--site", site_file)
    assert code == 2
    assert err.strip() == "error: command line: --site: needs --target: the noise model needs its brightness"
