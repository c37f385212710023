"""Pieces shared by the commands: options, error handling, output."""

from __future__ import annotations

import json
import math
import sys
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from enum import StrEnum
from typing import Any

import typer
from rich.console import Console
from rich.text import Text

from propulsion.errors import PropulsionError
from propulsion.report.cautions import SAFETY_CAUTION
from propulsion.report.safe_text import SafeConsole, printable
from propulsion.units import DisplayUnits, display_units

__all__ = ["UnitSystem", "emit_json", "guard", "state", "stderr", "stdout"]


@dataclass
class _State:
    debug: bool = False


state = _State()


class UnitSystem(StrEnum):
    """Display unit systems."""

    si = "si"
    us = "us"

    def display(self) -> DisplayUnits:
        """The display units of this system."""
        return display_units(self.value)


def stdout() -> Console:
    """A console on standard output; it writes no control code from the text it shows."""
    return SafeConsole()


def stderr() -> Console:
    """A console on standard error; it writes no control code from the text it shows."""
    return SafeConsole(stderr=True)


def hide_progress(json_output: bool) -> bool:
    """Whether a progress bar on standard error stays hidden: under ``--json``, and when
    standard error is not a terminal (a pipe or a file keeps no live display: it would
    get the bar's last frame, or a blank line ahead of the results)."""
    return json_output or not stderr().is_terminal


@contextmanager
def guard() -> Iterator[None]:
    """Turn the project's own errors into a one-paragraph message and exit code 2.

    With ``--debug`` the traceback is shown instead.
    """
    try:
        yield
    except PropulsionError as exc:
        if state.debug:
            # the traceback for the developer, and still the exit code of bad input
            import traceback

            traceback.print_exc(file=sys.stderr)
            raise typer.Exit(exc.exit_code) from None
        # never read as markup; the message may quote a file's text: no control codes
        message = Text.assemble(("error: ", "bold red"), printable(str(exc)))
        stderr().print(message, highlight=False, soft_wrap=True)
        raise typer.Exit(exc.exit_code) from None


def jsonable(value: Any) -> Any:
    """Replace non-finite floats by None, recursively, so the output is strict JSON."""
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, dict):
        return {key: jsonable(item) for key, item in value.items()}
    if isinstance(value, list | tuple):
        return [jsonable(item) for item in value]
    return value


def emit_json(payload: dict[str, Any], caution: bool = True) -> None:
    """Print a JSON document to stdout, with the safety caution as a field."""
    if caution:
        payload = {"safety_caution": SAFETY_CAUTION, **payload}
    sys.stdout.write(json.dumps(jsonable(payload), indent=2) + "\n")


UNITS_OPTION = typer.Option(
    UnitSystem.si, "--units", "-u", help="Units for display: si, or us (ft, lb, lbf, ft/s)."
)
JSON_OPTION = typer.Option(
    False, "--json", help="Print machine-readable JSON (SI units, unit in each key) to stdout."
)
