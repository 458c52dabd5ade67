"""The one test that runs ``phasewise`` as a real process: the installed entry point, exit statuses and
a one-line error with no traceback. Every other command test runs in-process (tests/clirun.py)."""

from __future__ import annotations

import subprocess
import sys

import pytest

DEMO = "planner/data/demo/c2034-b3-quillfeather.toml"


@pytest.mark.slow
def test_the_command_in_a_real_process(root):
    def run(*args):
        return subprocess.run(
            [sys.executable, "-m", "planner", *args], cwd=root, capture_output=True, text=True, timeout=120
        )

    ok = run("ephem", "--target", DEMO, "--start", "2034-03-19", "--stop", "2034-03-19T02:00", "--step", "1h")
    assert ok.returncode == 0 and "2034-03-19T02:00Z" in ok.stdout and ok.stderr == ""
    bad = run("ephem", "--target", DEMO, "--start", "2034-03-19", "--stop", "2034-03-20", "--step", "-5m")
    assert bad.returncode == 2 and "Traceback" not in bad.stderr
    assert bad.stderr == "error: command line: step: '-5m' is not a duration like 30s, 5m, 2h or 1d\n"
