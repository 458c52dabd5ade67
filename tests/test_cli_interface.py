"""What an observer meets at the prompt: a quick --help listing the choices, --version, shell completion,
ECSV and stamped JSON from ephem and windows, progress by stage."""

from __future__ import annotations

import json
import subprocess
import sys

import pytest

import planner
from planner.commands.common import StageProgress
from planner.outputs.layout import SCHEMA_VERSION
from tests.clirun import run_cli
from tests.conftest import DEMO_DIR, ROOT

TARGET = DEMO_DIR / "c2034-b3-quillfeather.toml"
KAROO = DEMO_DIR / "sites" / "karoo-ridge.toml"
HEAVY = ("numpy", "pandas", "matplotlib", "scipy", "skyfield", "astropy", "rich")


def test_help_loads_no_numerical_library():
    # --help of every command must answer without numpy, pandas, matplotlib, scipy, skyfield or astropy.
    code = (
        "import sys\n"
        "from planner.cli import app, _register_commands\n"
        "_register_commands()\n"
        "from typer.main import get_command\n"
        "cli = get_command(app)\n"
        "for name in cli.commands:\n"
        "    try:\n"
        "        cli.main([name, '--help'], prog_name='phasewise', standalone_mode=False)\n"
        "    except SystemExit:\n"
        "        pass\n"
        f"print(sorted(m for m in {HEAVY!r} if m in sys.modules))\n"
    )
    run = subprocess.run([sys.executable, "-c", code], cwd=ROOT, capture_output=True, text=True, timeout=60)
    assert run.returncode == 0, run.stderr
    assert run.stdout.strip().splitlines()[-1] == "[]"


def test_help_lists_choices_and_plain_metavars(capsys):
    out = run_cli(capsys, "ephem", "--help").stdout
    assert "--format <table|csv|json|ecsv>" in out and "--site FILE" in out and "--step DURATION" in out
    assert "<bool>" not in out and "list[" not in out
    assert "--format <table|csv|json>" in run_cli(capsys, "plan", "--help").stdout
    assert "--format <table|json>" in run_cli(capsys, "check", "--help").stdout
    root = run_cli(capsys, "--help").stdout
    assert "--install-completion" in root and "--version" in root


def test_version(capsys):
    r = run_cli(capsys, "--version")
    assert r.returncode == 0 and r.stdout == f"phasewise {planner.__version__}\n"


def test_ephem_writes_ecsv_by_extension_and_stamps_json(tmp_path, capsys):
    QTable = pytest.importorskip("astropy.table").QTable
    u = pytest.importorskip("astropy.units")
    args = ["ephem", "--target", TARGET, "--site", KAROO, "--start", "2034-03-19T18:00", "--stop", "2034-03-19T22:00"]
    assert run_cli(capsys, *args, "--out", tmp_path / "g.ecsv").returncode == 0
    qt = QTable.read(tmp_path / "g.ecsv", format="ascii.ecsv")
    assert len(qt) == 5 and qt["alt_deg"].unit == u.deg and qt["exposure_s"].unit == u.s
    assert qt.meta["schema_version"] == SCHEMA_VERSION and qt.meta["target"] == "C/2034 B3 (Quillfeather)"
    doc = json.loads(run_cli(capsys, *args, "--format", "json").stdout)
    assert doc["schema_version"] == SCHEMA_VERSION and doc["phasewise_version"] == planner.__version__
    # The ECSV rows are the CSV's: one more route to the same numbers.
    csv = run_cli(capsys, *args, "--format", "csv").stdout.splitlines()
    header = csv[0].split(",")
    first = dict(zip(header, csv[1].split(","), strict=True))
    assert float(first["alt_deg"]) == pytest.approx(qt["alt_deg"][0].value, rel=1e-9)


def test_windows_json_is_stamped_and_ecsv_has_times(tmp_path, capsys):
    QTable = pytest.importorskip("astropy.table").QTable
    args = ["windows", "--target", TARGET, "--site", KAROO, "--start", "2034-03-17", "--nights", "2"]
    doc = json.loads(run_cli(capsys, *args, "--format", "json").stdout)
    assert doc["schema_version"] == SCHEMA_VERSION and len(doc["windows"]) >= 2
    assert run_cli(capsys, *args, "--format", "ecsv", "--out", tmp_path / "w.txt").returncode == 0
    qt = QTable.read(tmp_path / "w.txt", format="ascii.ecsv")
    assert [t[:16] for t in qt["start_utc"].isot] == [w["start_utc"][:16] for w in doc["windows"]]


def test_forced_progress_off_a_terminal_prints_one_line_per_stage(capsys):
    stages = {"windows": 1.0, "slots": 1.0, "optimiser": 2.0}
    with StageProgress(stages, enabled=True, label="phasewise plan") as bar:
        for name in stages:
            bar(name)
    err = capsys.readouterr().err.splitlines()
    assert err[0].startswith("phasewise plan: [1/3] windows")
    assert err[2].startswith("phasewise plan: [3/3] optimiser") and "s left" in err[2]
    assert err[-1].startswith("phasewise plan: done in")
    with StageProgress(stages, enabled=False) as quiet:
        quiet("windows")
    assert capsys.readouterr().err == ""


def test_check_progress_is_off_when_not_a_terminal_and_on_when_asked(tmp_path, capsys):
    log = tmp_path / "log.csv"
    log.write_text("time_utc\n" + "".join(f"2034-03-{16 + i // 4:02d}T{(i % 4) * 5:02d}:00:00Z\n" for i in range(16)))
    quiet = run_cli(capsys, "check", log, "--trials", "4", "--min-period", "3h", "--max-period", "10h")
    assert quiet.returncode == 0 and quiet.stderr == ""
    loud = run_cli(capsys, "check", log, "--trials", "4", "--min-period", "3h", "--max-period", "10h", "--progress")
    assert "phasewise check: [1/1] injection–recovery" in loud.stderr and "done in" in loud.stderr
    doc = json.loads(run_cli(capsys, "check", log, "--trials", "0", "--format", "json").stdout)
    assert doc["schema_version"] == SCHEMA_VERSION


def test_plan_reports_every_stage_in_order():
    from planner.pipeline import PLAN_STAGES, plan_campaign
    from tests.test_validation import _memory_campaign

    seen: list[str] = []
    plan_campaign(_memory_campaign(nights=1), progress=seen.append)
    assert seen == list(PLAN_STAGES)


def test_the_report_names_the_version_that_wrote_the_plan(demo_folder):
    html = (demo_folder / "report.html").read_text()
    assert f"Written by phasewise {planner.__version__}; rendered from the files in this folder" in html
