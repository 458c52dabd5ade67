"""Faults end cleanly: files that are not UTF-8 text, outputs that cannot be written, interrupts and
SIGTERM, and the permissions of what is written. Each ends in one line (exit 2), or quietly with the
shell's status for the signal (130 for SIGINT, 143 for SIGTERM: 128 + the signal number, POSIX
shell convention), and never leaves a temporary ``.part`` file or folder or a damaged earlier output.
"""

from __future__ import annotations

import os
import shutil
import signal
import stat
import subprocess
import sys
import time
from pathlib import Path

import pytest
from clirun import run_cli

from planner.core.errors import InputError
from planner.core.fileio import check_writable, write_bytes_atomic, write_text_atomic
from planner.core.tomlfile import read_toml
from planner.outputs.layout import MAX_SLUG_CHARS, sheet_name

ROOT = Path(__file__).resolve().parent.parent
TARGET = ROOT / "planner" / "data" / "demo" / "c2034-b3-quillfeather.toml"
CAMPAIGN = ROOT / "planner" / "data" / "demo" / "demo-campaign.toml"
SITE = ROOT / "planner" / "data" / "demo" / "sites" / "karoo-ridge.toml"
#: The first bytes of a PNG file (PNG specification, ISO/IEC 15948, section 5.2): binary, with a NUL.
PNG_BYTES = b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR"


def _ephem(target: Path, *extra) -> list:
    return ["ephem", "--target", target, "--start", "2034-03-19", "--stop", "2034-03-19T02:00", *extra]


def _no_parts(folder: Path) -> list[str]:
    return [p.name for p in folder.rglob("*") if ".part" in p.name]


# --- files that are not UTF-8 text ------------------------------------------------------------------


@pytest.mark.parametrize("content", [PNG_BYTES, 'name = "Caf\xe9"\n'.encode("latin-1")], ids=["binary", "latin-1"])
@pytest.mark.parametrize("role", ["target", "mpc", "site", "campaign", "log", "done"])
def test_a_file_that_is_not_utf8_text_is_one_line_naming_it(tmp_path, capsys, role, content):
    bad = tmp_path / ("bad.txt" if role == "mpc" else "bad.csv" if role in ("log", "done") else "bad.toml")
    bad.write_bytes(content)
    args = {
        "target": _ephem(bad),
        "mpc": _ephem(bad),
        "site": ["windows", "--target", TARGET, "--site", bad, "--start", "2034-03-19", "--nights", "1"],
        "campaign": ["plan", bad],
        "log": ["check", bad],
        "done": ["plan", CAMPAIGN, "--done", bad],
    }[role]
    r = run_cli(capsys, *args)
    assert r.returncode == 2 and "Traceback" not in r.stderr
    assert r.stderr.count("\n") == 1 and r.stderr.startswith(f"error: {bad}: -: ")
    assert ("binary file" if content is PNG_BYTES else "not UTF-8 text (byte 0xE9 at line 1, column 12)") in r.stderr


def test_a_toml_file_with_a_utf8_byte_order_mark_is_read(tmp_path):
    # Windows editors may start UTF-8 files with EF BB BF (Unicode Standard 15.0, section 23.8, "Byte
    # Order Mark"); TOML 1.0 itself asks for UTF-8 and the mark carries no content.
    with_bom = tmp_path / "target.toml"
    with_bom.write_bytes(b"\xef\xbb\xbf" + TARGET.read_bytes())
    assert read_toml(with_bom) == read_toml(TARGET)


def test_a_site_file_with_a_byte_order_mark_gives_the_same_windows(tmp_path, capsys):
    site = tmp_path / "site.toml"
    site.write_bytes(b"\xef\xbb\xbf" + SITE.read_bytes())
    common = ["windows", "--target", TARGET, "--start", "2034-03-19", "--nights", "1", "--format", "csv"]
    plain = run_cli(capsys, *common, "--site", SITE)
    marked = run_cli(capsys, *common, "--site", site)
    assert marked.returncode == plain.returncode == 0 and marked.stdout == plain.stdout


# --- outputs that cannot be written: refused before the work ---------------------------------------


def _forbid_planning(monkeypatch):
    import planner.pipeline

    def no_work(*args, **kwargs):
        raise AssertionError("planned although the output cannot be written")

    monkeypatch.setattr(planner.pipeline, "plan_campaign", no_work)


@pytest.mark.parametrize("case", ["under a file", "long name", "long folder name", "a file as folder"])
def test_plan_out_that_cannot_be_written_is_refused_before_planning(tmp_path, capsys, monkeypatch, case):
    _forbid_planning(monkeypatch)
    (tmp_path / "afile").write_text("keep\n")
    out = {
        "under a file": tmp_path / "afile" / "plan",
        "long name": tmp_path / ("p" * 300),
        "long folder name": tmp_path / ("d" * 300) / "plan",
        "a file as folder": tmp_path / "afile",
    }[case]
    r = run_cli(capsys, "plan", CAMPAIGN, "--out", out)
    assert r.returncode == 2 and r.stderr.count("\n") == 1 and "Traceback" not in r.stderr
    want = {
        "under a file": "a file of that name is in the way",
        "long name": "a name of 300 bytes is longer than the file system allows",
        "long folder name": "a name of 300 bytes is longer than the file system allows",
        "a file as folder": "exists and is not a folder",
    }[case]
    assert want in r.stderr
    assert (tmp_path / "afile").read_text() == "keep\n" and sorted(p.name for p in tmp_path.iterdir()) == ["afile"]


@pytest.mark.skipif(os.geteuid() == 0, reason="root may write into a read-only folder")
def test_a_read_only_folder_is_refused_before_planning(tmp_path, capsys, monkeypatch):
    _forbid_planning(monkeypatch)
    ro = tmp_path / "ro"
    ro.mkdir()
    ro.chmod(0o555)
    try:
        r = run_cli(capsys, "plan", CAMPAIGN, "--out", ro / "plan")
        assert r.returncode == 2 and "permission denied or read-only" in r.stderr
    finally:
        ro.chmod(0o755)


def test_check_writable_asks_the_system_about_permission(tmp_path, monkeypatch):
    # The permission test is the system's own (access(2), POSIX.1-2017) on the nearest existing folder.
    asked = []

    def access(path, mode):
        asked.append((Path(path), mode))
        return False

    monkeypatch.setattr("planner.core.fileio.os.access", access)
    with pytest.raises(InputError, match="permission denied or read-only") as err:
        check_writable(tmp_path / "new" / "deeper" / "x.csv", field="--report")
    assert err.value.field == "--report" and asked == [(tmp_path, os.W_OK | os.X_OK)]
    assert not (tmp_path / "new").exists()


@pytest.mark.parametrize("command", ["ephem", "windows", "check --out", "check --report", "check --plot"])
def test_every_writing_command_checks_its_output_first(tmp_path, capsys, command):
    (tmp_path / "afile").write_text("keep\n")
    blocked = tmp_path / "afile" / "out.txt"
    log = tmp_path / "log.csv"
    log.write_text("time_utc\n2034-03-19T01:00:00Z\n2034-03-19T02:00:00Z\n2034-03-20T01:00:00Z\n")
    args = {
        "ephem": [*_ephem(TARGET), "--out", blocked],
        "windows": ["windows", "--target", TARGET, "--site", SITE, "--start", "2034-03-19", "--out", blocked],
        "check --out": ["check", log, "--out", blocked],
        "check --report": ["check", log, "--report", blocked],
        "check --plot": ["check", log, "--plot", blocked],
    }[command]
    r = run_cli(capsys, *args)
    option = command.split()[-1] if command.startswith("check") else "--out"
    assert r.returncode == 2 and f": {option}: cannot make its folder" in r.stderr and r.stdout == ""


def test_sheet_names_stay_short_and_distinct():
    long_name = "Observatorio " + "Muy " * 90  # 373 characters, as a site name may be
    names = [long_name, "Karoo Ridge", "karoo-ridge", "Salmon Gum"]
    files = [sheet_name(n, names) for n in names]
    assert len(set(files)) == 4
    assert all(len(f.encode()) <= MAX_SLUG_CHARS + 13 for f in files)  # slug, "-", 8 hex digits, ".txt"
    assert files[3] == "salmon-gum.txt"  # a short name without a twin keeps its plain slug
    assert files[1] != files[2] and files[1].startswith("karoo-ridge-")
    assert sheet_name(long_name) == files[0]  # the hash is of the name alone: stable from run to run


# --- interrupts: quiet, and nothing half-written ----------------------------------------------------


def test_an_interrupted_atomic_write_leaves_the_old_file(tmp_path, monkeypatch):
    p = tmp_path / "table.csv"
    write_text_atomic(p, "old\n")

    def interrupted(*args):
        raise KeyboardInterrupt

    monkeypatch.setattr("planner.core.fileio.os.replace", interrupted)
    with pytest.raises(KeyboardInterrupt):
        write_text_atomic(p, "new\n")
    assert p.read_text() == "old\n" and sorted(x.name for x in tmp_path.iterdir()) == ["table.csv"]


@pytest.mark.slow
@pytest.mark.parametrize("signum, status", [(signal.SIGTERM, 143), (signal.SIGINT, 130)])
def test_a_signal_while_the_plan_folder_is_written_keeps_the_old_one(
    tmp_path, capsys, monkeypatch, demo_plan, demo_folder, signum, status
):
    import planner.outputs.planfolder
    import planner.pipeline

    out = tmp_path / "plan"
    shutil.copytree(demo_folder, out)
    before = {p.relative_to(out): p.read_bytes() for p in out.rglob("*") if p.is_file()}
    monkeypatch.setattr(planner.pipeline, "plan_campaign", lambda *a, **k: demo_plan[1])

    def report_then_signal(folder):
        assert any(".part" in p.name for p in tmp_path.iterdir())  # the new folder is being built beside
        os.kill(os.getpid(), signum)  # the handler raises at the next instruction, as on a real signal

    monkeypatch.setattr(planner.outputs.planfolder, "write_report", report_then_signal)
    r = run_cli(capsys, "plan", CAMPAIGN, "--out", out, "--force", "--format", "csv")
    assert r.returncode == status and r.stderr == ""
    assert {p.relative_to(out): p.read_bytes() for p in out.rglob("*") if p.is_file()} == before
    assert _no_parts(tmp_path) == []
    assert signal.getsignal(signal.SIGTERM) is not planner.cli._on_signal  # handlers are put back


@pytest.mark.slow
@pytest.mark.parametrize("signum, status", [(signal.SIGTERM, 143), (signal.SIGINT, 130)])
def test_a_signal_to_the_real_process_ends_it_quietly(tmp_path, signum, status):
    # A real process, stopped mid-computation (many injections on a short log, a second after the
    # command has started): no traceback, the exit status the shell expects, the earlier output untouched.
    log = tmp_path / "log.csv"
    log.write_text("time_utc\n" + "".join(f"2034-03-{d:02d}T{h:02d}:00:00Z\n" for d in (19, 20, 21) for h in range(8)))
    previous = tmp_path / "check.json"
    previous.write_text("earlier result\n")
    env = dict(os.environ, PYTHONPATH=str(ROOT), OPENBLAS_NUM_THREADS="1")
    args = ["check", str(log), "--trials", "20000", "--out", str(previous)]
    started = (
        "import sys; from planner.cli import main; print('started', file=sys.stderr, flush=True); main(sys.argv[1:])"
    )
    proc = subprocess.Popen(
        [sys.executable, "-c", started, *args], stdout=subprocess.PIPE, stderr=subprocess.PIPE, env=env, cwd=tmp_path
    )
    assert proc.stderr.readline() == b"started\n"
    time.sleep(1.0)
    proc.send_signal(signum)
    out, err = proc.communicate(timeout=60)
    assert proc.returncode == status and out == b"" and err == b""
    assert previous.read_text() == "earlier result\n" and _no_parts(tmp_path) == []


# --- permissions: as open() gives them under the user's umask ---------------------------------------


@pytest.mark.parametrize("umask", [0o022, 0o077, 0o002])
def test_written_files_honour_the_umask(tmp_path, umask):
    # POSIX open(2): a new file gets mode 0666 & ~umask; the atomic writer must match a plain open().
    old = os.umask(umask)
    try:
        plain = tmp_path / "plain.txt"
        plain.write_text("x")
        atomic = write_text_atomic(tmp_path / "atomic.txt", "x")
        binary = write_bytes_atomic(tmp_path / "sub" / "fig.png", b"x")
    finally:
        os.umask(old)
    mode = stat.S_IMODE(plain.stat().st_mode)
    assert mode == 0o666 & ~umask
    assert stat.S_IMODE(atomic.stat().st_mode) == mode and stat.S_IMODE(binary.stat().st_mode) == mode


def test_every_file_of_the_plan_folder_honours_the_umask(demo_folder):
    mask = os.umask(0o022)
    os.umask(mask)
    modes = {p.name: stat.S_IMODE(p.stat().st_mode) for p in demo_folder.rglob("*") if p.is_file()}
    assert set(modes.values()) == {0o666 & ~mask}, modes  # report.html and the demo marker included
