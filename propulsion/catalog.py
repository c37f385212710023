"""Reading the shipped data tables (and the user's own curves) into SI model objects.

Table format (all files under ``data/``): ``#`` lines are comments, and ``# key = value``
lines are metadata whose values may be quantities (``# diameter = 29 mm``). The first
other line is the header; a column name carries its unit in brackets (``time [s]``),
and a column without brackets is a plain number or text. Values are converted to SI
here, once, so that nothing downstream sees a unit.

A file a mission names (``[stage.motor] file``, a ``drag_curve`` path) is untrusted input:
:func:`user_data_file` finds it relative to the mission file's folder and refuses a path
that leads out of that folder, and :func:`read_table` reads only regular files of at most
:data:`MAX_TABLE_BYTES`. Error messages quote at most :data:`EXCERPT_LENGTH` characters of
a file's content, since the file may not be a data table at all.
"""

from __future__ import annotations

import contextvars
import csv
import math
import os
import re
import stat
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass, field
from functools import cache
from pathlib import Path
from typing import Any

import numpy as np

from propulsion import thrust_curve as tc
from propulsion.constants import USSA76_SEA_LEVEL_PRESSURE
from propulsion.errors import DataFileError, MissionFileNotFoundError, PropulsionError
from propulsion.text import plural
from propulsion.units import MAX_MAGNITUDE, UnitParseError, parse_quantity
from propulsion.vehicle import DragCurve, Motor

__all__ = [
    "EXCERPT_LENGTH",
    "MAX_TABLE_BYTES",
    "DataPathError",
    "PropellantFamily",
    "Table",
    "data_dir",
    "drag_curve_names",
    "excerpt",
    "load_drag_curve",
    "load_motor",
    "motor_files",
    "motor_names",
    "propellant_families",
    "read_table",
    "read_thrust_curve",
    "trusted_folders",
    "user_data_file",
]

# a column name and its unit in square or round brackets: "time [s]", "thrust (lbf)"
_HEADER_RE = re.compile(
    r"^\s*(?P<name>[^\[(]+?)\s*(?:\[(?P<unit>[^\]]*)\]|\((?P<round>[^)]*)\))?\s*$"
)
# a number as the data files write it: ASCII digits only (float() also takes "1_000" and
# Arabic-Indic or full-width digits, which a reader of the file may not see as numbers)
_NUMBER_RE = re.compile(r"^[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?$")
_META_RE = re.compile(r"^#\s*(?P<key>[A-Za-z_][A-Za-z0-9_]*)\s*=\s*(?P<value>.*?)\s*$")
# C0 controls and DEL (ECMA-48, 5th ed., 1991, section 5.2): never part of a file name
# a mission may give
_CONTROL_RE = re.compile("[\x00-\x1f\x7f]")

EXCERPT_LENGTH = 20
"""The most characters of a file's content an error message quotes [characters]."""

MAX_TABLE_BYTES = 16 * 1024 * 1024
"""The largest data table read [bytes]. A static-test thrust curve sampled at 10 kHz for
30 s is about 6 MB; anything larger is not a curve this tool can use."""

# folders whose files a mission may name besides its own folder (see trusted_folders)
_TRUSTED: contextvars.ContextVar[tuple[Path, ...]] = contextvars.ContextVar(
    "propulsion_trusted_folders", default=()
)


def excerpt(text: str, length: int = EXCERPT_LENGTH) -> str:
    """A value from a file as an error message may quote it: quoted, at most ``length`` long.

    Parameters
    ----------
    text : str
        The offending value (a cell, a unit, a metadata value).
    length : int
        The most characters shown [count]; longer values end in ``…``.

    Returns
    -------
    str
        The start of the value in Python's quoted form (control characters escaped, so
        the message never carries one), with an ellipsis when it was cut.
    """
    if len(text) <= length:
        return repr(text)
    return repr(text[:length] + "…")


def _clip(text: str, length: int = EXCERPT_LENGTH) -> str:
    """A column name or key from a file, cut like :func:`excerpt`, without quotes."""
    return text if len(text) <= length else text[:length] + "…"


class DataPathError(PropulsionError, ValueError):
    """A data file named by a mission that is not read: outside the mission's folder, not
    a regular file, missing or unreadable.

    Parameters
    ----------
    path : str or Path
        The path as the mission gave it, joined to the mission's folder.
    problem : str
        What is wrong, in plain words (it names the path).
    expected : str
        What would have been accepted.
    """

    def __init__(self, path: str | Path, problem: str, expected: str = "") -> None:
        self.path = str(path)
        self.problem = problem
        self.expected = expected
        super().__init__(self.path, problem, expected)

    def __reduce__(self) -> tuple[Any, ...]:
        return (type(self), (self.path, self.problem, self.expected))

    def __str__(self) -> str:
        message = self.problem.rstrip(".") + "."
        if self.expected:
            message += f" Expected {self.expected.rstrip('.')}."
        return message


@contextmanager
def trusted_folders(*folders: str | Path) -> Iterator[None]:
    """Let missions checked inside the block also name files in these folders.

    A caller that was given a folder by the user (``pick --motors FOLDER``) builds mission
    documents naming that folder's files; the user chose the folder, so it is as trusted
    as the mission's own. The trust ends with the block (a context variable: it holds for
    this thread and this task only).

    Parameters
    ----------
    *folders : str or Path
        The folders; their files and sub-folders may be named. A file stands for itself
        alone (``pick`` passes the very curve files the user gave).
    """
    resolved = tuple(Path(folder).resolve() for folder in folders)
    token = _TRUSTED.set(_TRUSTED.get() + resolved)
    try:
        yield
    finally:
        _TRUSTED.reset(token)


def file_kind(mode: int) -> str:
    """What a path is when it is not a regular file, from its ``st_mode`` ("" when it is
    one): "a folder", "a named pipe", "a device", "a socket" or "not a regular file"."""
    if stat.S_ISREG(mode):
        return ""
    if stat.S_ISDIR(mode):
        return "a folder"
    if stat.S_ISFIFO(mode):
        return "a named pipe"
    if stat.S_ISCHR(mode) or stat.S_ISBLK(mode):
        return "a device"
    if stat.S_ISSOCK(mode):
        return "a socket"
    return "not a regular file"


def user_data_file(text: str, base_dir: str | Path, what: str = "data file") -> Path:
    """Find a data file a mission names, and refuse one it may not read.

    The mission file is untrusted input: one from someone else may name any file of the
    machine it runs on (``/etc/shadow`` as a thrust curve, ``/proc/self/environ`` as a drag
    curve) and the error messages would show parts of it. So a mission may name only files
    in its own folder or below it:

    * a relative path is joined to the mission's folder; an absolute path is taken as it
      is; either way the file, **with its symbolic links followed**, must lie in that
      folder (or in a folder of :func:`trusted_folders`). A ``..`` that leaves the folder
      is refused, and so is a link that points out of it: a shared repository or archive
      can carry a link to any file of the reader's machine. A link within the folder, or a
      ``..`` that comes back into it, is fine: it reads nothing the folder does not hold.
    * the file must be a regular file: a folder, a named pipe (reading one waits for a
      writer), a device or a socket is refused.

    Parameters
    ----------
    text : str
        The path as written in the mission.
    base_dir : str or Path
        The mission file's folder (relative to the working folder, or absolute).
    what : str
        What the file is, for the messages (``"thrust curve"``).

    Returns
    -------
    Path
        The path as given, joined to ``base_dir`` (the path the messages name).

    Raises
    ------
    DataPathError
        The path leaves the folder, the file does not exist, is not a regular file or
        cannot be examined.
    """
    if _CONTROL_RE.search(text):
        raise DataPathError(
            text, f"the file name {excerpt(text)} holds control characters", "a plain file name"
        )
    given = Path(text)
    path = given if given.is_absolute() else Path(base_dir) / given
    inside = "a file in the mission file's folder or below it, named relative to that folder"
    try:
        folder = Path(base_dir).resolve()
        resolved = path.resolve()
    except (OSError, RuntimeError, ValueError) as exc:  # a loop of links, a name too long
        raise DataPathError(path, f"the path {path} cannot be followed ({exc})", inside) from None
    roots = (folder, *_TRUSTED.get())
    if not any(resolved.is_relative_to(root) for root in roots):
        lexical = Path(os.path.normpath(os.path.abspath(path)))
        if given.is_absolute():
            how = "is outside"
        elif lexical.is_relative_to(os.path.abspath(base_dir)):
            how = "is a symbolic link (or goes through one) to a file outside"
        else:
            how = "leads outside"
        raise DataPathError(path, f"{text} {how} the mission file's folder {folder}", inside)
    try:
        info = resolved.stat()
    except FileNotFoundError:
        raise DataPathError(path, f"{what} not found: {path}", "an existing CSV file") from None
    except OSError as exc:
        reason = exc.strerror or type(exc).__name__
        raise DataPathError(path, f"{path} cannot be read ({reason})", "a readable file") from None
    if not stat.S_ISREG(info.st_mode):
        raise DataPathError(
            path,
            f"{path} is not a regular file: it is {file_kind(info.st_mode)}",
            "a CSV file",
        )
    return path


def is_file(path: Path) -> bool:
    """True for an existing file; False also for names the file system refuses (too long)."""
    try:
        return path.is_file()
    except (OSError, ValueError):
        return False


def motor_files(path: str | Path) -> list[Path]:
    """The thrust-curve files a path given on the command line stands for.

    A path the user types (``pick --motors``, ``data --motors``) is trusted for that run,
    unlike a file a mission names (:func:`user_data_file`): it may lie anywhere. A folder
    stands for its ``*.csv`` files (not its sub-folders), in name order; anything else for
    itself, and :func:`read_table` refuses it if it is not a regular file.

    Parameters
    ----------
    path : str or Path
        A curve file or a folder of them.

    Returns
    -------
    list of Path
        The files, joined to the folder as given (the paths messages name); empty for a
        folder without ``*.csv`` files.

    Raises
    ------
    MissionFileNotFoundError
        Nothing exists at the path.
    """
    path = Path(path)
    try:
        if path.is_dir():
            return sorted(file for file in path.glob("*.csv") if is_file(file))
        exists = path.exists() or path.is_symlink()
    except (OSError, ValueError):
        exists = False
    if not exists:
        raise MissionFileNotFoundError(path, "motor file or folder")
    return [path]


def data_dir() -> Path:
    """Return the folder holding the shipped tables.

    An installed wheel carries them inside the package (``propulsion/_data``); a source
    checkout keeps them in ``data/`` at the top of the repository.
    """
    packaged = Path(__file__).resolve().parent / "_data"
    if packaged.is_dir():
        return packaged
    return Path(__file__).resolve().parent.parent / "data"


@dataclass(frozen=True)
class Table:
    """A parsed table: metadata, column names, column units and SI columns."""

    path: Path
    metadata: dict[str, str]
    columns: dict[str, list[str]]
    units: dict[str, str | None]
    header_line: int
    row_lines: list[int]
    metadata_lines: dict[str, int] = field(default_factory=dict)

    def line(self, row: int) -> int:
        """The file line of data row ``row`` (0-based)."""
        return self.row_lines[row]

    def numeric(self, name: str, dimension: str = "dimensionless") -> np.ndarray:
        """Return a column as SI floats, converting from the header's unit."""
        if name not in self.columns:
            raise DataFileError(
                self.path, name, "column is missing", f"a column named '{name}'", self.header_line
            )
        unit = self.units[name]
        factor, offset = 1.0, 0.0
        if unit:
            try:
                # affine: a unit with an offset (degC, degF) is not a plain factor
                offset = parse_quantity(f"0 {unit}", dimension)
                factor = parse_quantity(f"1 {unit}", dimension) - offset
            except UnitParseError as exc:
                raise DataFileError(
                    self.path,
                    _clip(name),
                    f"header unit {_unit_problem(unit, exc)}",
                    f"a unit of {dimension}",
                    self.header_line,
                ) from None
        values = []
        for row, text in enumerate(self.columns[name]):
            try:
                if not _NUMBER_RE.match(text):
                    raise ValueError(text)
                value = float(text)
            except ValueError:
                raise DataFileError(
                    self.path,
                    _clip(name),
                    f"{excerpt(text)} is not a number",
                    "a number",
                    self.line(row),
                ) from None
            if not math.isfinite(value) or abs(value * factor + offset) > MAX_MAGNITUDE:
                raise DataFileError(
                    self.path,
                    _clip(name),
                    "value is not finite",
                    "a finite number",
                    self.line(row),
                )
            values.append(value * factor + offset)
        return np.asarray(values, dtype=float)

    def meta_quantity(self, key: str, dimension: str) -> float | None:
        """Return a metadata quantity in SI, or None where the key is absent."""
        text = self.metadata.get(key)
        if text is None:
            return None
        try:
            return parse_quantity(text, dimension)
        except UnitParseError as exc:
            raise DataFileError(
                self.path,
                key,
                _unit_problem(text, exc),
                f"a quantity of {dimension} with its unit",
                self.metadata_lines.get(key),
            ) from None


def _unit_problem(text: str, exc: UnitParseError) -> str:
    """Why a unit or quantity text from a file was refused, quoting at most an excerpt.

    The parser's reason is kept unless it quotes more than an excerpt of the text.
    """
    width = EXCERPT_LENGTH + 1
    echoes = any(text[i : i + width] in exc.reason for i in range(len(text) - width + 1))
    if echoes:
        return f"{excerpt(text)} cannot be read"
    return f"{excerpt(text)}: {exc.reason}"


def _read_bytes(path: Path) -> bytes:
    """The content of a regular file of at most MAX_TABLE_BYTES, or a located refusal.

    The file is opened without waiting (``O_NONBLOCK``: opening a named pipe for reading
    would wait for a writer) and examined through the open descriptor, so what is checked
    is what is read.
    """
    flags = os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_BINARY", 0)
    try:
        descriptor = os.open(path, flags)
    except FileNotFoundError:
        raise MissionFileNotFoundError(path, "data file") from None
    except OSError as exc:
        reason = exc.strerror or type(exc).__name__
        raise DataFileError(
            path, "", f"the file cannot be read ({reason})", "a file you may read"
        ) from None
    with open(descriptor, "rb") as handle:
        info = os.fstat(handle.fileno())
        if not stat.S_ISREG(info.st_mode):
            raise DataFileError(
                path, "", f"not a regular file: it is {file_kind(info.st_mode)}", "a CSV file"
            )
        too_big = DataFileError(
            path,
            "",
            f"the file is larger than {MAX_TABLE_BYTES // (1024 * 1024)} MiB",
            "a data table (a thrust curve or a drag curve is a few kB)",
        )
        if info.st_size > MAX_TABLE_BYTES:
            raise too_big
        try:
            content = handle.read(MAX_TABLE_BYTES + 1)
        except OSError as exc:
            reason = exc.strerror or type(exc).__name__
            raise DataFileError(
                path, "", f"the file cannot be read ({reason})", "a file you may read"
            ) from None
    if len(content) > MAX_TABLE_BYTES:
        raise too_big
    return content


def read_table(path: Path) -> Table:
    """Read a data table in the project's CSV layout (see the module docstring).

    Only a regular file of at most :data:`MAX_TABLE_BYTES` is read; a missing file raises
    :class:`MissionFileNotFoundError`, anything else that cannot be used a located
    :class:`DataFileError`, whose message quotes at most an excerpt of the file.
    """
    metadata: dict[str, str] = {}
    metadata_lines: dict[str, int] = {}
    header: list[str] | None = None
    header_line = 0
    rows: list[list[str]] = []
    row_lines: list[int] = []
    try:
        # utf-8-sig: spreadsheet programs start their CSV files with a byte-order mark
        text = _read_bytes(path).decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise DataFileError(path, "", "the file is not UTF-8 text", "a UTF-8 CSV file") from exc
    for number, line in enumerate(text.splitlines(), start=1):
        stripped = line.strip()
        if not stripped:
            continue
        if stripped.startswith("#"):
            match = _META_RE.match(stripped)
            if match:
                metadata[match["key"]] = match["value"]
                metadata_lines[match["key"]] = number
            continue
        cells = next(csv.reader([stripped]))
        if header is None:
            header, header_line = cells, number
            continue
        if len(cells) != len(header):
            raise DataFileError(
                path,
                "",
                f"the row has {plural(len(cells), 'value')}",
                f"{plural(len(header), 'value')}, one per column of the header",
                number,
            )
        rows.append([cell.strip() for cell in cells])
        row_lines.append(number)
    if header is None:
        raise DataFileError(path, "", "no header line", "a header such as 'time [s],thrust [N]'")
    names: list[str] = []
    units: dict[str, str | None] = {}
    seen: set[str] = set()
    for cell in header:
        match = _HEADER_RE.match(cell)
        if match is None:
            raise DataFileError(
                path,
                "",
                f"header cell {excerpt(cell.strip())} unreadable",
                "'name [unit]'",
                header_line,
            )
        name = match["name"].strip()
        if name in seen:
            raise DataFileError(
                path, _clip(name), "the column appears twice", "distinct column names", header_line
            )
        seen.add(name)
        names.append(name)
        units[name] = match["unit"] if match["unit"] is not None else match["round"]
    columns = {name: [row[i] for row in rows] for i, name in enumerate(names)}
    return Table(path, metadata, columns, units, header_line, row_lines, metadata_lines)


@dataclass(frozen=True)
class PropellantFamily:
    """A propellant family with its usual delivered performance (SI)."""

    key: str
    name: str
    category: str
    isp_min: float
    isp_max: float
    density: float
    stage_mass_fraction_min: float
    stage_mass_fraction_max: float
    liftoff_thrust_to_weight_min: float
    source: str


@cache
def propellant_families() -> dict[str, PropellantFamily]:
    """Return the propellant families shipped in ``data/propellants.csv``, by key."""
    table = read_table(data_dir() / "propellants.csv")
    isp_min = table.numeric("isp_min", "time")
    isp_max = table.numeric("isp_max", "time")
    density = table.numeric("density", "density")
    fraction_min = table.numeric("stage_mass_fraction_min")
    fraction_max = table.numeric("stage_mass_fraction_max")
    thrust_to_weight = table.numeric("liftoff_thrust_to_weight_min")
    families = {}
    for i, key in enumerate(table.columns["key"]):
        families[key] = PropellantFamily(
            key=key,
            name=table.columns["name"][i],
            category=table.columns["category"][i],
            isp_min=float(isp_min[i]),
            isp_max=float(isp_max[i]),
            density=float(density[i]),
            stage_mass_fraction_min=float(fraction_min[i]),
            stage_mass_fraction_max=float(fraction_max[i]),
            liftoff_thrust_to_weight_min=float(thrust_to_weight[i]),
            source=table.columns["source"][i],
        )
    return families


def motor_names() -> list[str]:
    """Names of the motors shipped in ``data/motors/``, in impulse order."""
    names = [path.stem for path in (data_dir() / "motors").glob("*.csv")]
    return sorted(names, key=lambda name: load_motor(name).total_impulse)


def drag_curve_names() -> list[str]:
    """Names of the drag curves shipped in ``data/drag/``."""
    return sorted(path.stem for path in (data_dir() / "drag").glob("*.csv"))


def _shipped(kind: str) -> set[str]:
    """The names of the shipped tables of one kind (``motors``, ``drag``): file stems."""
    return {path.stem for path in (data_dir() / kind).glob("*.csv")}


@cache
def load_motor(name: str) -> Motor:
    """Load a shipped motor by name (``data/motors/NAME.csv``).

    Only the names of the shipped files are looked up, so a name cannot lead out of the
    folder (``../drag/slender_finned``).
    """
    path = data_dir() / "motors" / f"{name}.csv"
    if name not in _shipped("motors"):
        raise MissionFileNotFoundError(path, f"motor '{name}'")
    return read_thrust_curve(path)


def read_thrust_curve(
    path: Path,
    propellant_mass: float | None = None,
    case_mass: float | None = None,
    propellant_family: str | None = None,
) -> Motor:
    """Read a thrust curve (``time [s], thrust [N]``) with optional metadata into a Motor.

    Values given as arguments override the file's metadata. A curve whose file states no
    propellant mass needs one given here. Both columns must state their unit: a column
    without one is a plain number (data/README.md), not seconds or newtons.
    """
    table = read_table(path)
    time_column, thrust_column = _curve_columns(table)
    for column, quantity in ((time_column, "time"), (thrust_column, "thrust")):
        if not (table.units[column] or "").strip():
            raise DataFileError(
                path,
                _clip(column),
                f"the {quantity} column states no unit (a column without one is a plain number)",
                "a header with units, such as 'time [s],thrust [N]'",
                table.header_line,
            )
    time = table.numeric(time_column, "time")
    thrust = table.numeric(thrust_column, "force")
    try:
        tc.validate_thrust_curve(time, thrust)
    except ValueError as exc:
        row = re.search(r"row (\d+)", str(exc))
        line = table.line(int(row.group(1)) - 1) if row else None
        raise DataFileError(
            path,
            "thrust curve",
            str(exc),
            "times that increase and thrust that is not negative",
            line,
        ) from exc
    if propellant_mass is None:
        propellant_mass = table.meta_quantity("propellant_mass", "mass")
    if propellant_mass is None:
        raise DataFileError(
            path,
            "propellant_mass",
            "the curve does not state its propellant mass",
            "a '# propellant_mass = 0.06 kg' line, or motor.propellant_mass in the mission",
        )
    if propellant_mass <= 0:
        raise DataFileError(path, "propellant_mass", "must be positive", "a mass above zero")
    if case_mass is None:
        loaded = table.meta_quantity("loaded_mass", "mass")
        case_mass = 0.0 if loaded is None else loaded - propellant_mass
    if case_mass < 0:
        raise DataFileError(
            path, "loaded_mass", "is less than the propellant mass", "loaded mass ≥ propellant"
        )
    family = propellant_family or table.metadata.get("propellant_family")
    if propellant_family is None and family is not None and family not in propellant_families():
        raise DataFileError(
            path,
            "propellant_family",
            f"unknown propellant family {excerpt(family)}",
            "a key from data/propellants.csv (see `propulsion data`)",
            table.metadata_lines.get("propellant_family"),
        )
    # a nozzle exit diameter lets the flight move the curve from its test pressure to the
    # ambient one (the thrust equation); without it the curve is flown as measured
    exit_diameter = table.meta_quantity("nozzle_exit_diameter", "length")
    test_pressure = table.meta_quantity("test_pressure", "pressure")
    for key, value in (("nozzle_exit_diameter", exit_diameter), ("test_pressure", test_pressure)):
        if value is not None and value <= 0:
            raise DataFileError(
                path,
                key,
                "must be above zero",
                "a positive quantity",
                table.metadata_lines.get(key),
            )
    return Motor(
        name=table.metadata.get("name", path.stem),
        time=time - time[0],
        thrust=thrust,
        propellant_mass=propellant_mass,
        case_mass=case_mass,
        propellant_family=family,
        diameter=table.meta_quantity("diameter", "length"),
        source=str(path),
        exit_area=0.0 if exit_diameter is None else math.pi * exit_diameter**2 / 4.0,
        test_pressure=USSA76_SEA_LEVEL_PRESSURE if test_pressure is None else test_pressure,
    )


def _curve_columns(table: Table) -> tuple[str, str]:
    names = list(table.columns)
    if len(names) != 2:
        raise DataFileError(
            table.path,
            "",
            f"{len(names)} columns",
            "two columns: 'time [s],thrust [N]'",
            table.header_line,
        )
    return names[0], names[1]


@cache
def load_drag_curve(name_or_path: str, relative_to: Path | None = None) -> DragCurve:
    """Load a drag curve by shipped name (``data/drag/NAME.csv``) or by file path.

    Parameters
    ----------
    name_or_path : str
        The name of a shipped curve, or the path of a CSV file.
    relative_to : Path or None
        The mission file's folder: a path is found relative to it and must stay in it
        (:func:`user_data_file`). None: a path the caller gives, read as it is.

    Raises
    ------
    DataPathError
        With ``relative_to``: the file is outside that folder, missing, or not a file.
    MissionFileNotFoundError
        Without ``relative_to``: the file does not exist.
    DataFileError
        The file is not a drag curve.
    """
    if name_or_path in _shipped("drag"):
        path = data_dir() / "drag" / f"{name_or_path}.csv"
    elif relative_to is not None:
        known = ", ".join(drag_curve_names())
        path = user_data_file(name_or_path, relative_to, f"drag curve (shipped ones: {known})")
    else:
        path = Path(name_or_path)
    table = read_table(path)
    names = list(table.columns)
    if len(names) != 2:
        raise DataFileError(path, "", f"{len(names)} columns", "two columns: mach and Cd")
    mach = table.numeric(names[0])
    drag_coefficient = table.numeric(names[1])
    for row in range(len(mach)):
        line = table.line(row)
        if row and mach[row] <= mach[row - 1]:
            raise DataFileError(path, names[0], "Mach does not increase", "increasing Mach", line)
        if drag_coefficient[row] < 0:
            raise DataFileError(path, names[1], "negative drag coefficient", "Cd ≥ 0", line)
    if len(mach) < 1:
        raise DataFileError(path, "", "no rows", "at least one row of Mach and Cd")
    return DragCurve(table.metadata.get("name", path.stem), mach, drag_coefficient, str(path))
