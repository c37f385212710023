"""The package's errors.

Every error the user can cause derives from :class:`PropulsionError`. Each subclass also
derives from the matching built-in (``ValueError``, ``FileNotFoundError``), carries its
facts as fields, builds its message from them, and pickles, so that a worker process can
send it back unchanged.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

__all__ = [
    "DataFileError",
    "MissionError",
    "MissionFileNotFoundError",
    "OutputExistsError",
    "PropulsionError",
    "RequestError",
]


class PropulsionError(Exception):
    """Base class for errors caused by the user's input."""

    exit_code = 2


class MissionError(PropulsionError, ValueError):
    """A mission file, or a mission given from Python, that cannot be used.

    Parameters
    ----------
    source : str
        The file (or ``"<mission>"`` for a mission built in Python).
    field : str
        The dotted path of the field, for example ``stage[2].inert_mass``; empty for
        problems with the whole file.
    problem : str
        What is wrong, in plain words.
    expected : str
        What would have been accepted.
    line : int or None
        The line in the file, where it is known.
    """

    field_word = "field"
    """What ``field`` names in the message: a field of a file, or a column of a table."""

    def __init__(
        self,
        source: str | Path,
        field: str,
        problem: str,
        expected: str = "",
        line: int | None = None,
    ) -> None:
        self.source = str(source)
        self.field = field
        self.problem = problem
        self.expected = expected
        self.line = line
        super().__init__(self.source, field, problem, expected, line)

    def __reduce__(self) -> tuple[Any, ...]:
        return (type(self), (self.source, self.field, self.problem, self.expected, self.line))

    def __str__(self) -> str:
        where = self.source
        if self.line is not None:
            where += f", line {self.line}"
        parts = [f"{where}:"]
        if self.field:
            parts.append(f"{self.field_word} '{self.field}':")
        problem = self.problem.rstrip(".")
        parts.append(problem)
        message = " ".join(parts) + ("" if problem.endswith("?") else ".")
        if self.expected:
            message += f" Expected {self.expected.rstrip('.')}."
        return message


class DataFileError(MissionError):
    """A data table (motor thrust curve, drag curve, propellant list) that cannot be used."""


class MissionFileNotFoundError(PropulsionError, FileNotFoundError):
    """A mission, motor or curve file that does not exist."""

    def __init__(self, path: str | Path, what: str = "mission file", referrer: str = "") -> None:
        self.path = str(path)
        self.what = what
        self.referrer = referrer
        super().__init__(self.path, what, referrer)

    def __reduce__(self) -> tuple[Any, ...]:
        return (type(self), (self.path, self.what, self.referrer))

    def __str__(self) -> str:
        message = f"{self.what} not found: {self.path}"
        if self.referrer:
            message = f"{self.referrer}: {message}"
        return message + "."


class OutputExistsError(PropulsionError, FileExistsError):
    """An output file that exists already and would be overwritten without ``--force``."""

    def __init__(self, path: str | Path) -> None:
        self.path = str(path)
        super().__init__(self.path)

    def __reduce__(self) -> tuple[Any, ...]:
        return (type(self), (self.path,))

    def __str__(self) -> str:
        return f"{self.path} exists already; give --force to overwrite it."


class RequestError(PropulsionError, ValueError):
    """A command's request that cannot be carried out (a sizing, split, pick or comparison).

    Parameters
    ----------
    problem : str
        What is wrong, in plain words.
    expected : str
        What would have been accepted.
    """

    def __init__(self, problem: str, expected: str = "") -> None:
        self.problem = problem
        self.expected = expected
        super().__init__(problem, expected)

    def __reduce__(self) -> tuple[Any, ...]:
        return (type(self), (self.problem, self.expected))

    def __str__(self) -> str:
        problem = self.problem.rstrip(".")
        message = problem + ("" if problem.endswith("?") else ".")
        if self.expected:
            message += f" Expected {self.expected.rstrip('.')}."
        return message
