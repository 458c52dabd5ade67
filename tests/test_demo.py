"""`phasewise demo`: the bundled campaign end to end, and the folder rules that keep other work safe."""

from __future__ import annotations

import pytest
from browser import Browser, find_chromium
from test_report import FIGURE_IDS, _assert_numbers_match, _parse

from planner.core.errors import InputError
from planner.demo import DEMO_MARKER, check_demo_folder


def test_demo_refuses_a_foreign_folder_and_accepts_its_own(tmp_path):
    check_demo_folder(tmp_path / "new")  # absent: fine
    (tmp_path / "empty").mkdir()
    check_demo_folder(tmp_path / "empty")  # empty: fine
    foreign = tmp_path / "foreign"
    foreign.mkdir()
    (foreign / "thesis.tex").write_text("years of work")
    with pytest.raises(InputError, match="not made by `phasewise demo`"):
        check_demo_folder(foreign)
    (tmp_path / "afile").write_text("x")
    with pytest.raises(InputError, match="not a folder"):
        check_demo_folder(tmp_path / "afile")
    own = tmp_path / "own"
    own.mkdir()
    (own / DEMO_MARKER).write_text("")
    (own / "plan.csv").write_text("old")
    check_demo_folder(own)


@pytest.fixture
def demo_dir(demo_folder):
    return demo_folder


def test_demo_writes_plan_folder_and_report(demo_dir):
    for name in (
        "plan.csv",
        "baseline.csv",
        "windows.csv",
        "geometry.csv",
        "diagnostics.json",
        "campaign.toml",
        "report.html",
        DEMO_MARKER,
    ):
        assert (demo_dir / name).is_file(), name
    parsed = _parse((demo_dir / "report.html").read_text())
    n_sites = len({line.split(",")[0] for line in (demo_dir / "windows.csv").read_text().splitlines()[1:]})
    assert n_sites == 4
    expected = [f for f in FIGURE_IDS if not f.startswith("fig-site")]
    assert [f for f in parsed.figures if not f.startswith("fig-site")] == expected
    assert [f for f in parsed.figures if f.startswith("fig-site")] == [f"fig-site-{i}" for i in range(n_sites)]


def test_demo_report_numbers_equal_its_files(demo_dir):
    _assert_numbers_match(demo_dir)


def test_demo_report_in_headless_chromium(demo_dir):
    exe = find_chromium()
    if exe is None:
        pytest.skip("headless Chromium not found: install the Debian packages chromium and chromium-driver")
    with Browser(exe) as b:
        b.open(demo_dir / "report.html")
        ok = b.evaluate("Array.from(document.images).every(i => i.complete && i.naturalWidth > 100)")
        problems = b.problems()
    assert ok and problems == []


def test_demo_command_refuses_a_foreign_folder_before_any_work(tmp_path, capsys):
    from planner.cli import main

    foreign = tmp_path / "notes"
    foreign.mkdir()
    (foreign / "log.txt").write_text("keep me")
    with pytest.raises(SystemExit) as done:
        main(["demo", "--out", str(foreign)])
    assert done.value.code == 2
    err = capsys.readouterr().err
    assert err.startswith(f"error: {foreign}: --out: ") and err.count("\n") == 1
    assert [p.name for p in foreign.iterdir()] == ["log.txt"]
