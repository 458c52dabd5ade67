"""The ``phasewise`` command: a thin typer shell over the library.

Each command lives in ``planner/commands/<name>.py`` and exposes ``register(app)``; it parses
options, makes one library call and renders the result. Bad input anywhere becomes one line,
``error: FILE: FIELD: message``, and exit status 2. Command modules import numpy, pandas, astropy and
the pipeline inside the command functions, so ``--help`` answers at once.
"""

from __future__ import annotations

import sys
from typing import Annotated


def _quiet_interrupt(exc_type, exc, tb, _previous=sys.excepthook) -> None:
    """Ctrl-C that escapes everything (e.g. while Python is still importing) ends without a traceback;
    Python then exits with the status of SIGINT (130)."""
    if not issubclass(exc_type, KeyboardInterrupt):
        _previous(exc_type, exc, tb)


sys.excepthook = _quiet_interrupt  # first, before the imports below take their time

import signal  # noqa: E402

import typer  # noqa: E402

from planner.core.errors import InputError  # noqa: E402
from planner.core.fileio import Terminated  # noqa: E402
from planner.core.version import __version__  # noqa: E402

#: Exit statuses after a signal, as shells report them (128 + signal number).
EXIT_SIGINT = 130
EXIT_SIGTERM = 143

app = typer.Typer(
    name="phasewise",
    help="Plan photometric campaigns on comets and asteroids from several telescopes.",
    no_args_is_help=True,
    # `phasewise --install-completion` installs tab completion for the user's shell (bash, zsh, fish, ...).
    add_completion=True,
    pretty_exceptions_enable=False,
    # Plain help (click's layout): quick to print, and the option types are the metavars each option names.
    rich_markup_mode=None,
)


def _print_version(value: bool) -> None:
    if value:
        typer.echo(f"phasewise {__version__}")
        raise typer.Exit()


@app.callback()
def _root(
    version: Annotated[
        bool,
        typer.Option("--version", help="Print the version and exit.", callback=_print_version, is_eager=True),
    ] = False,
) -> None:
    """Plan photometric campaigns on comets and asteroids from several telescopes.

    Times are UTC (ISO 8601) unless a column says _local. Pointing near the Sun can destroy
    equipment and blind people: the observatory's own rules always prevail over this tool.
    """


def _register_commands() -> None:
    from planner.commands import COMMAND_MODULES

    for module in COMMAND_MODULES:
        module.register(app)


def _click_exceptions():
    """The click exception module typer uses (vendored in recent typer, the click package before)."""
    try:
        from typer._click import exceptions
    except ImportError:  # typer < 0.25 depends on click itself
        from click import exceptions
    return exceptions


def _usage_line(exc) -> str:
    """One line for a usage error: ``error: command line: --option: message``."""
    ce = _click_exceptions()
    field = "usage"
    param = getattr(exc, "param", None)
    if isinstance(exc, ce.BadParameter) and param is not None:
        opts = getattr(param, "opts", None) or [getattr(param, "name", "") or ""]
        field = opts[0] if opts[0].startswith("-") else opts[0].upper()
    elif isinstance(exc, ce.NoSuchOption):
        field = exc.option_name
    message = exc.message if isinstance(exc, ce.BadParameter) and exc.message else exc.format_message()
    message = " ".join(str(message).split()).removeprefix("Value error, ")  # typer's validator prefix
    hint = "" if exc.ctx is None else f" (see '{exc.ctx.command_path} --help')"
    return f"error: command line: {field}: {message}{hint}"


def _on_signal(signum, frame) -> None:
    """SIGINT and SIGTERM become exceptions, so every clean-up (temporary ``.part`` files and folders) runs;
    later signals are ignored until the process has exited."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    signal.signal(signal.SIGTERM, signal.SIG_IGN)
    raise KeyboardInterrupt if signum == signal.SIGINT else Terminated()


def main(argv: list[str] | None = None) -> None:
    """Console entry point: every bad input, on the command line or in a file, is one line and exit 2;
    Ctrl-C ends quietly with status 130 and SIGTERM with 143, leaving no temporary file behind."""
    previous = {}
    try:
        for sig in (signal.SIGINT, signal.SIGTERM):
            previous[sig] = signal.signal(sig, _on_signal)
    except ValueError:  # not the main thread: signals stay as they are
        pass
    try:
        _run(argv)
    except KeyboardInterrupt:
        sys.exit(EXIT_SIGINT)
    except Terminated:
        sys.exit(EXIT_SIGTERM)
    finally:
        for sig, handler in previous.items():
            signal.signal(sig, handler)


def _run(argv: list[str] | None) -> None:
    _register_commands()
    ce = _click_exceptions()
    try:
        rc = app(args=argv, prog_name="phasewise", standalone_mode=False)
    except InputError as exc:
        print(f"error: {exc}", file=sys.stderr)
        sys.exit(2)
    except ce.UsageError as exc:
        if type(exc).__name__ != "NoArgsIsHelpError":  # bare `phasewise`: the help is already shown
            print(_usage_line(exc), file=sys.stderr)
        sys.exit(2)
    except ce.ClickException as exc:
        print(f"error: {' '.join(exc.format_message().split())}", file=sys.stderr)
        sys.exit(exc.exit_code)
    except typer.Abort:  # typer's own (its vendored click module has no Abort)
        print("aborted", file=sys.stderr)
        sys.exit(1)
    except BrokenPipeError:
        # The reader went away (e.g. `| head`): stop quietly, without a second error at exit.
        import os

        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        sys.exit(0)
    sys.exit(rc if isinstance(rc, int) else 0)
