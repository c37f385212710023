"""Reading the shipped data tables (and the user's own curves) into SI model objects.

Table format (all files under ``data/``): ``#`` lines are comments, and ``# key = value``
lines are metadata whose values may be quantities (``# diameter = 29 mm``). The first
other line is the header; a column name carries its unit in brackets (``time [s]``),
and a column without brackets is a plain number or text. Values are converted to SI
here, once, so that nothing downstream sees a unit.
"""

from __future__ import annotations

import csv
import math
import re
from dataclasses import dataclass
from functools import cache
from pathlib import Path

import numpy as np

from propulsion import thrust_curve as tc
from propulsion.errors import DataFileError, MissionFileNotFoundError
from propulsion.units import MAX_MAGNITUDE, UnitParseError, parse_quantity
from propulsion.vehicle import DragCurve, Motor

__all__ = [
    "PropellantFamily",
    "Table",
    "data_dir",
    "drag_curve_names",
    "load_drag_curve",
    "load_motor",
    "motor_names",
    "propellant_families",
    "read_table",
    "read_thrust_curve",
]

_HEADER_RE = re.compile(r"^\s*(?P<name>[^\[]+?)\s*(?:\[(?P<unit>[^\]]*)\])?\s*$")
_META_RE = re.compile(r"^#\s*(?P<key>[A-Za-z_][A-Za-z0-9_]*)\s*=\s*(?P<value>.*?)\s*$")


def is_file(path: Path) -> bool:
    """True for an existing file; False also for names the file system refuses (too long)."""
    try:
        return path.is_file()
    except (OSError, ValueError):
        return False


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
        factor = 1.0
        if unit:
            try:
                factor = parse_quantity(f"1 {unit}", dimension)
            except UnitParseError as exc:
                raise DataFileError(
                    self.path, name, f"header unit: {exc.reason}", dimension, self.header_line
                ) from exc
        values = []
        for row, text in enumerate(self.columns[name]):
            try:
                value = float(text)
            except ValueError:
                raise DataFileError(
                    self.path,
                    name,
                    f"{text!r} is not a number",
                    "a number",
                    self.line(row),
                ) from None
            if not math.isfinite(value) or abs(value * factor) > MAX_MAGNITUDE:
                raise DataFileError(
                    self.path,
                    name,
                    "value is not finite",
                    "a finite number",
                    self.line(row),
                )
            values.append(value * factor)
        return np.asarray(values, dtype=float)

    def meta_quantity(self, key: str, dimension: str) -> float | None:
        """Return a metadata quantity in SI, or None where the key is absent."""
        text = self.metadata.get(key)
        if text is None:
            return None
        try:
            return parse_quantity(text, dimension)
        except UnitParseError as exc:
            raise DataFileError(self.path, key, exc.reason, dimension) from exc


def read_table(path: Path) -> Table:
    """Read a data table in the project's CSV layout (see the module docstring)."""
    if not is_file(path):
        raise MissionFileNotFoundError(path, "data file")
    metadata: dict[str, str] = {}
    header: list[str] | None = None
    header_line = 0
    rows: list[list[str]] = []
    row_lines: list[int] = []
    try:
        # utf-8-sig: spreadsheet programs start their CSV files with a byte-order mark
        text = path.read_text(encoding="utf-8-sig")
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
            continue
        cells = next(csv.reader([stripped]))
        if header is None:
            header, header_line = cells, number
            continue
        if len(cells) != len(header):
            raise DataFileError(
                path,
                "",
                f"the row has {len(cells)} value(s)",
                f"{len(header)} value(s), one per column of the header",
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
            raise DataFileError(path, cell, "header cell unreadable", "'name [unit]'", header_line)
        name = match["name"].strip()
        if name in seen:
            raise DataFileError(
                path, name, "the column appears twice", "distinct column names", header_line
            )
        seen.add(name)
        names.append(name)
        units[name] = match["unit"]
    columns = {name: [row[i] for row in rows] for i, name in enumerate(names)}
    return Table(path, metadata, columns, units, header_line, row_lines)


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


@cache
def load_motor(name: str) -> Motor:
    """Load a shipped motor by name (``data/motors/NAME.csv``)."""
    path = data_dir() / "motors" / f"{name}.csv"
    if not path.is_file():
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
    propellant mass needs one given here.
    """
    table = read_table(path)
    time_column, thrust_column = _curve_columns(table)
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
    return Motor(
        name=table.metadata.get("name", path.stem),
        time=time - time[0],
        thrust=thrust,
        propellant_mass=propellant_mass,
        case_mass=case_mass,
        propellant_family=family,
        diameter=table.meta_quantity("diameter", "length"),
        source=str(path),
    )


def _curve_columns(table: Table) -> tuple[str, str]:
    names = list(table.columns)
    if len(names) != 2:
        raise DataFileError(
            table.path,
            "",
            f"{len(names)} columns",
            "two columns: time and thrust",
            table.header_line,
        )
    return names[0], names[1]


@cache
def load_drag_curve(name_or_path: str, relative_to: Path | None = None) -> DragCurve:
    """Load a drag curve by shipped name (``data/drag/NAME.csv``) or by file path."""
    shipped = data_dir() / "drag" / f"{name_or_path}.csv"
    path = shipped
    if not is_file(shipped):
        path = Path(name_or_path)
        if relative_to is not None and not path.is_absolute():
            path = relative_to / path
        if not is_file(path):
            known = ", ".join(drag_curve_names())
            raise MissionFileNotFoundError(path, f"drag curve (shipped ones: {known})")
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
