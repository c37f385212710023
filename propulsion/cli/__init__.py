"""The command line: a thin layer that parses arguments, calls a runner and shows the result.

Each command lives in its own module and is registered on the main app here.
Exit codes: 0 success, 1 the mission falls short of its targets, 2 bad input.
"""

from __future__ import annotations

import contextlib
import inspect
import os
import signal
import sys
import warnings
from typing import Any

import typer
from typer.core import TyperCommand, TyperGroup

from propulsion import __version__
from propulsion.cli import _threads  # noqa: F401 (sets the thread environment first)
from propulsion.cli import budget as _budget
from propulsion.cli import capacity as _capacity
from propulsion.cli import check as _check
from propulsion.cli import compare as _compare
from propulsion.cli import data as _data
from propulsion.cli import firing as _firing
from propulsion.cli import fly as _fly
from propulsion.cli import pick as _pick
from propulsion.cli import report as _report
from propulsion.cli import scatter as _scatter
from propulsion.cli import size as _size
from propulsion.cli import split as _split
from propulsion.cli import sweep as _sweep
from propulsion.cli import worksheet as _worksheet
from propulsion.cli.common import state

__all__ = ["app", "entry", "main"]


def plain_help(text: str | None) -> str | None:
    """A docstring as the help screen shows it: plain text, paragraphs rewrapped.

    typer's rich help keeps a docstring's line breaks inside a paragraph, so a paragraph
    written over several source lines shows ragged in a terminal of another width. Here
    each paragraph (separated by a blank line) becomes one line that the terminal wraps;
    a paragraph that starts with ``\\b`` on a line of its own keeps its line breaks (the
    click convention for lists and examples). The text is then escaped for rich markup,
    so a mission file's ``[[dispersion]]`` or ``[margins.flight]`` shows as written.
    """
    if text is None:
        return None
    from rich.markup import escape

    head, cut, tail = inspect.cleandoc(text).partition("\f")
    paragraphs = []
    for paragraph in head.split("\n\n"):
        if paragraph.startswith("\b\n"):
            paragraphs.append(paragraph[2:])
        else:
            paragraphs.append(" ".join(line.strip() for line in paragraph.splitlines()))
    return escape("\n\n".join(paragraphs)) + cut + tail


def _plain_flags(params: list[Any]) -> None:
    """Flags take no value: their help shows no type placeholder (typer's ``<bool>``);
    every help text is plain text (see :func:`plain_help`)."""
    for param in params:
        if getattr(param, "is_flag", False) and param.metavar is None:
            param.metavar = ""
        if getattr(param, "help", None):
            param.help = plain_help(param.help)


class _PlainHelp:
    """Plain, rewrapped help with no placeholder on flags, for a command or the group."""

    params: list[Any]

    def __init__(self, *args: Any, **kwargs: Any) -> None:
        kwargs["help"] = plain_help(kwargs.get("help"))
        super().__init__(*args, **kwargs)
        _plain_flags(self.params)

    def get_help_option(self, ctx: Any) -> Any:
        """``--help``, a flag like the others."""
        option = super().get_help_option(ctx)  # type: ignore[misc]
        if option is not None and option.metavar is None:
            option.metavar = ""
        return option


class _Command(_PlainHelp, TyperCommand):
    """A command whose help screen is plain text, rewrapped, with no placeholder on flags."""


class _Group(_PlainHelp, TyperGroup):
    """The main command, with the same plain help as :class:`_Command`."""


app = typer.Typer(
    cls=_Group,
    name="propulsion",
    help=(
        "Delta-v budgets with units, losses and margins for sounding rockets and small "
        "launchers.\n\nExample: propulsion budget missions/hobby_single_stage.toml"
    ),
    no_args_is_help=True,
    add_completion=False,
    pretty_exceptions_enable=False,
    rich_markup_mode="rich",
)


def _version(value: bool) -> None:
    if value:
        typer.echo(f"propulsion {__version__}")
        raise typer.Exit()


@app.callback()
def _root(
    debug: bool = typer.Option(
        False, "--debug", help="Show the full traceback when something goes wrong."
    ),
    version: bool = typer.Option(
        False, "--version", callback=_version, is_eager=True, help="Show the version and exit."
    ),
) -> None:
    state.debug = debug


for _name, _function in (
    ("budget", _budget.budget_command),
    ("fly", _fly.fly_command),
    ("size", _size.size_command),
    ("split", _split.split_command),
    ("pick", _pick.pick_command),
    ("scatter", _scatter.scatter_command),
    ("compare", _compare.compare_command),
    ("report", _report.report_command),
    ("sweep", _sweep.sweep_command),
    ("check", _check.check_command),
    ("data", _data.data_command),
    ("firing", _firing.firing_command),
    ("capacity", _capacity.capacity_command),
    ("worksheet", _worksheet.worksheet_command),
):
    app.command(_name, cls=_Command)(_function)


def entry() -> None:
    """The console script and ``python -m propulsion``: :func:`main`, then a quick exit.

    The compiled flight kernel takes about 0.3 s to tear down when the interpreter exits.
    When :func:`main` has finished, every output has been written and closed and every
    pool and client shut: what was printed is flushed and the process ends at once.
    """
    try:
        main()
    except SystemExit as exc:
        code = exc.code if isinstance(exc.code, int) else (0 if exc.code is None else 1)
        if "propulsion.flight.kernel" not in sys.modules:
            raise
        for stream in (sys.stdout, sys.stderr):
            with contextlib.suppress(OSError, ValueError):
                stream.flush()
        os._exit(code)


def main() -> None:
    """Run the command line; always ends with ``SystemExit`` and the exit code.

    Exit codes: 0 success, 1 the mission falls short, 2 bad input, 3 an internal error
    (a bug: the message asks for a report; ``--debug`` shows the traceback); 130 after
    Ctrl-C, 128 + N after the termination signal N (SIGTERM 143, SIGHUP 129).
    """
    previous = _stop_on_signals()
    if "--debug" not in sys.argv[1:]:
        # a user sees messages, never a library's raw warning with its source line (numpy
        # overflow on an absurd draw, say); --debug shows them
        warnings.simplefilter("ignore")
    try:
        code = app(standalone_mode=False)
    except typer.Exit as exc:
        raise SystemExit(exc.exit_code) from None
    except click_exceptions() as exc:
        exc.show()  # type: ignore[attr-defined]
        raise SystemExit(getattr(exc, "exit_code", 2)) from None
    except (KeyboardInterrupt, EOFError):
        raise SystemExit(130) from None
    except Exception as exc:
        if state.debug:
            raise
        from propulsion.report.safe_text import printable  # the message may quote input

        sys.stderr.write(
            f"internal error: {type(exc).__name__}: {printable(str(exc))}\n"
            "This is a bug in propulsion, not in your input. Run again with --debug before "
            "the command for the traceback, and report it.\n"
        )
        raise SystemExit(3) from None
    finally:
        for number, handler in previous.items():
            signal.signal(number, handler)
    raise SystemExit(code if isinstance(code, int) else 0)


def _stop_on_signals() -> dict[int, Any]:
    """Make SIGTERM and SIGHUP end a command the way Ctrl-C does: ``SystemExit`` is
    raised in the main thread, so every cleanup path runs (partial output files are
    removed, pools and clients shut). A second signal while cleaning up ends the process
    at once. A signal the caller ignores (``nohup``) stays ignored. Returns the handlers
    replaced, to put back."""
    import threading

    if threading.current_thread() is not threading.main_thread():
        return {}
    numbers = [getattr(signal, name) for name in ("SIGTERM", "SIGHUP") if hasattr(signal, name)]

    def stop(number: int, frame: object) -> None:
        for each in numbers:
            signal.signal(each, signal.SIG_DFL)
        raise SystemExit(128 + number)

    previous = {}
    for number in numbers:
        handler = signal.getsignal(number)
        if handler is not signal.SIG_IGN:
            previous[number] = handler
            signal.signal(number, stop)
    return previous


def click_exceptions() -> type[Exception]:
    """The exception class typer's bundled click raises for usage errors."""
    from typer._click.exceptions import ClickException

    return ClickException
