"""Running the ``phasewise`` command in the test process (fast): exit status, stdout and stderr.

One test (tests/test_cli_process.py) runs the real command in a subprocess; every other command test
calls :func:`planner.cli.main` here, which is the same code without the interpreter start-up.
"""

from __future__ import annotations

from dataclasses import dataclass

from planner.cli import main


@dataclass
class CliResult:
    returncode: int
    stdout: str
    stderr: str


def run_cli(capsys, *args) -> CliResult:
    """``phasewise ARGS...`` in-process; ``capsys`` is pytest's capture fixture."""
    capsys.readouterr()
    try:
        main([str(a) for a in args])
        code = 0
    except SystemExit as exc:
        code = exc.code if isinstance(exc.code, int) else (0 if exc.code is None else 1)
    out = capsys.readouterr()
    return CliResult(code, out.out, out.err)
