"""The ``phasewise`` command: a thin typer shell over the library.

Each command lives in ``planner/commands/<name>.py`` and exposes ``register(app)``; it parses
options, makes one library call and renders the result. Bad input anywhere becomes one line,
``error: FILE: FIELD: message``, and exit status 2.
"""

from __future__ import annotations

import sys

import typer

from planner.errors import InputError

app = typer.Typer(
    name="phasewise",
    help="Plan photometric campaigns on comets and asteroids from several telescopes.",
    no_args_is_help=True,
    add_completion=False,
    pretty_exceptions_enable=False,
)


@app.callback()
def _root() -> None:
    """Plan photometric campaigns on comets and asteroids from several telescopes.

    Times are UTC (ISO 8601) unless a column says _local. Pointing near the Sun can destroy
    equipment and blind people: the observatory's own rules always prevail over this tool.
    """


def _register_commands() -> None:
    from planner.commands import COMMAND_MODULES

    for module in COMMAND_MODULES:
        module.register(app)


def main(argv: list[str] | None = None) -> None:
    """Console entry point. Usage errors are typer's (exit 2); bad input files are ours (exit 2)."""
    _register_commands()
    try:
        app(args=argv, prog_name="phasewise")
    except InputError as exc:
        print(f"error: {exc}", file=sys.stderr)
        sys.exit(2)
    except BrokenPipeError:
        sys.exit(0)
