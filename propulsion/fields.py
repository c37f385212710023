"""Naming a mission field from the command line, reading it and changing it.

Sizing, sweeps and dispersions change one number of a mission and build the mission
again. A field is named by a dotted path that reads like the file: ``vehicle.payload``,
``stage.booster.inert_mass`` (a stage by its name, or ``stage[2]`` by position),
``stage.core.engine.thrust_sea_level``, ``leg.ascent.loss_allowance``. The path is
checked against the mission's own fields, so a typo gets a suggestion.
"""

from __future__ import annotations

import copy
import difflib
import math
from dataclasses import dataclass
from typing import Any

import numpy as np
import numpy.typing as npt

from propulsion.errors import PropulsionError
from propulsion.targets import TARGET_KINDS
from propulsion.units import DIMENSIONS, MAX_MAGNITUDE, UnitParseError, parse_quantity

__all__ = [
    "LIMITS",
    "RANGES",
    "FieldError",
    "FieldRef",
    "Range",
    "get_value",
    "numeric_fields",
    "range_of",
    "resolve",
    "set_value",
]

# field name -> dimension, per table kind; "count" is a whole number
_TABLES: dict[str, dict[str, str]] = {
    "vehicle": {"payload": "mass", "diameter": "length", "drag_scale": "dimensionless"},
    "launch": {
        "site_altitude": "length",
        "latitude": "angle",
        "azimuth": "angle",
        "rail_length": "length",
        "elevation": "angle",
        "wind_speed": "speed",
        "wind_scale": "dimensionless",
        "wind_turn": "angle",
        "temperature": "temperature",
        "temperature_offset": "temperature_difference",
        "pressure": "pressure",
        "humidity": "dimensionless",
    },
    "margins": {"reserve": "speed", "residual_fraction": "dimensionless"},
    "flight": {
        "pitch_kick_angle": "angle",
        "pitch_kick_time": "time",
        "pitch_kick_speed": "speed",
        "pitch_kick_duration": "time",
        "max_time": "time",
    },
    "stage": {
        "inert_mass": "mass",
        "propellant_mass": "mass",
        "propellant_mass_fraction": "dimensionless",
        "diameter": "length",
        "residual_fraction": "dimensionless",
        "tank_fraction": "dimensionless",
        "separation_delay": "time",
        "ignition_delay": "time",
    },
    "motor": {
        "count": "count",
        "propellant_mass": "mass",
        "case_mass": "mass",
        "impulse_scale": "dimensionless",
        "burn_time_scale": "dimensionless",
    },
    "engine": {
        "count": "count",
        "thrust_vacuum": "force",
        "thrust_sea_level": "force",
        "isp_vacuum": "time",
        "isp_sea_level": "time",
        "exit_area": "area",
    },
    "leg": {
        "reserve": "speed",
        **{
            name: dimension
            for kind in TARGET_KINDS.values()
            for name, dimension in (*kind.required.items(), *kind.optional.items())
        },
    },
}


# the range the mission loader accepts for each dimensionless field (one source for the
# loader's checks and for the default search range of `size`)
LIMITS: dict[str, tuple[float, float]] = {
    "drag_scale": (0.0, 10.0),
    "impulse_scale": (0.0, 10.0),
    "burn_time_scale": (0.0, 10.0),
    "residual_fraction": (0.0, 0.5),
    "tank_fraction": (0.0, 1.0),
    "propellant_mass_fraction": (0.0, 1.0),
}


@dataclass(frozen=True)
class Range:
    """The values a field may take in a mission file [SI]: ``low`` to ``high`` (None: no
    bound but the magnitude limit of every quantity), ``low`` itself allowed when
    ``low_inclusive``."""

    low: float | None = None
    high: float | None = None
    low_inclusive: bool = True

    def bounds(self) -> dict[str, Any]:
        """The keyword arguments of the loader's quantity check."""
        return {"low": self.low, "high": self.high, "low_inclusive": self.low_inclusive}

    def refuses(self, values: npt.NDArray[np.float64]) -> npt.NDArray[np.bool_]:
        """Which values the loader would refuse (non-finite and too large included)."""
        bad = ~np.isfinite(values) | (np.abs(values) > MAX_MAGNITUDE)
        with np.errstate(invalid="ignore"):
            if self.low is not None:
                bad |= values < self.low if self.low_inclusive else values <= self.low
            if self.high is not None:
                bad |= values > self.high
        return bad

    def describe(self, unit: str, scale: float = 1.0) -> str:
        """The range in words, e.g. "from -500 to 10000 m"."""
        unit = f" {unit}" if unit and unit != "dimensionless" else ""
        if self.low is not None and self.high is not None:
            return f"from {self.low * scale:g} to {self.high * scale:g}{unit}"
        if self.low is not None:
            word = "at least" if self.low_inclusive else "above"
            return f"{word} {self.low * scale:g}{unit}"
        return f"at most {(self.high or 0.0) * scale:g}{unit}"


_DEGREE = math.pi / 180.0

# the ranges of the fields a dispersion study writes straight into the flight core: the
# loader checks a value in the file against the same entry, and a study checks every
# drawn value against it, so a sample is flown only if the file could hold it
RANGES: dict[str, Range] = {
    "vehicle.payload": Range(0.0, None),
    "vehicle.drag_scale": Range(*LIMITS["drag_scale"]),
    "launch.site_altitude": Range(-500.0, 1e4),
    "launch.rail_length": Range(0.0, 1e3),
    "launch.elevation": Range(0.0, 90.0 * _DEGREE, low_inclusive=False),
    "launch.wind_speed": Range(-200.0, 200.0),
    "launch.wind_scale": Range(0.0, 10.0),
    "launch.wind_turn": Range(-360.0 * _DEGREE, 360.0 * _DEGREE),
    # the day's air (propulsion/weather.py): -80 to 60 degC at the site, within 60 K of
    # the standard (weather.OFFSET_LIMIT), 200 to 1100 hPa, a relative humidity
    "launch.temperature": Range(193.15, 333.15),
    "launch.temperature_offset": Range(-60.0, 60.0),
    "launch.pressure": Range(2e4, 1.1e5),
    "launch.humidity": Range(0.0, 1.0),
    "flight.pitch_kick_angle": Range(0.0, 90.0 * _DEGREE),
    "flight.pitch_kick_speed": Range(0.0, 1e4),
    "stage.inert_mass": Range(0.0, None, low_inclusive=False),
    "stage.propellant_mass": Range(0.0, None, low_inclusive=False),
    "stage.separation_delay": Range(0.0, 3600.0),
    "stage.ignition_delay": Range(0.0, 1e5),
    "motor.impulse_scale": Range(LIMITS["impulse_scale"][0], LIMITS["impulse_scale"][1], False),
    "motor.burn_time_scale": Range(
        LIMITS["burn_time_scale"][0], LIMITS["burn_time_scale"][1], False
    ),
    "engine.isp_vacuum": Range(0.0, 1e4, low_inclusive=False),
    "engine.thrust_vacuum": Range(0.0, None, low_inclusive=False),
}


def range_of(ref: FieldRef) -> Range | None:
    """The range of a field in :data:`RANGES` (by its table kind and name), if listed."""
    path = ref.path
    if path and path[0] == "stage":
        kind = "stage" if len(path) == 3 else str(path[2])
        return RANGES.get(f"{kind}.{path[-1]}")
    return RANGES.get(f"{path[0]}.{path[-1]}") if path else None


# values a field takes when the file does not give it (a cluster of one, no scaling...)
_DEFAULTS: dict[str | int, float | None] = {
    "count": 1.0,
    "impulse_scale": 1.0,
    "burn_time_scale": 1.0,
    "drag_scale": 1.0,
    "wind_speed": 0.0,
    "wind_scale": 1.0,
    "wind_turn": 0.0,
    "temperature_offset": 0.0,
    "humidity": 0.0,
    "residual_fraction": 0.0,
    "separation_delay": 0.0,
    "ignition_delay": 0.0,
    "site_altitude": 0.0,
}


class FieldError(PropulsionError, KeyError):
    """A field path that names nothing in the mission, or a value it cannot take."""

    def __init__(self, path: str, problem: str, suggestion: str = "") -> None:
        self.path = path
        self.problem = problem
        self.suggestion = suggestion
        super().__init__(path, problem, suggestion)

    def __reduce__(self) -> tuple[Any, ...]:
        return (type(self), (self.path, self.problem, self.suggestion))

    def __str__(self) -> str:
        text = f"field '{self.path}': {self.problem}"
        if self.suggestion:
            return text + f"; did you mean '{self.suggestion}'?"
        return text + "."


@dataclass(frozen=True)
class FieldRef:
    """A resolved field: its path in the document, its dimension and a display name."""

    name: str
    path: tuple[str | int, ...]
    dimension: str

    @property
    def is_count(self) -> bool:
        """True for whole-number fields (motor or engine counts)."""
        return self.dimension == "count"

    @property
    def si_unit(self) -> str:
        """The SI unit values of this field are given in."""
        return "" if self.is_count else DIMENSIONS[self.dimension]


def _named(items: list[Any], key: str) -> dict[str, int]:
    return {str(item.get("name", f"{key} {i + 1}")): i for i, item in enumerate(items)}


def numeric_fields(document: dict[str, Any]) -> list[str]:
    """Every field path that could be named in this document (for suggestions)."""
    out: list[str] = []
    for table in ("vehicle", "launch", "margins", "flight"):
        out += [f"{table}.{name}" for name in _TABLES[table]]
    for kind in ("stage", "leg"):
        items = document.get(kind, [])
        if not isinstance(items, list):
            continue
        for name in _named(items, kind):
            out += [f"{kind}.{name}.{field}" for field in _TABLES[kind]]
            if kind == "stage":
                for sub in ("motor", "engine"):
                    item = items[_named(items, kind)[name]]
                    if isinstance(item, dict) and sub in item:
                        out += [f"stage.{name}.{sub}.{field}" for field in _TABLES[sub]]
    return out


def resolve(document: dict[str, Any], text: str) -> FieldRef:
    """Resolve a dotted field path against a mission document.

    Raises :class:`FieldError` with the closest valid path as a suggestion.
    """
    parts = [part for part in text.strip().split(".") if part]

    def fail(problem: str) -> FieldError:
        close = difflib.get_close_matches(text, numeric_fields(document), n=1, cutoff=0.5)
        return FieldError(text, problem, close[0] if close else "")

    if not parts:
        raise fail("empty field name")
    head = parts[0]
    if "[" in head and head.endswith("]"):
        head, index_text = head[:-1].split("[", 1)
        parts = [head, index_text, *parts[1:]]
        indexed = True
    else:
        indexed = False
    if head in ("vehicle", "launch", "margins", "flight"):
        if len(parts) != 2 or parts[1] not in _TABLES[head]:
            raise fail("no such field")
        return FieldRef(text, (head, parts[1]), _TABLES[head][parts[1]])
    if head not in ("stage", "leg") or len(parts) < 3:
        raise fail("no such field")
    items = document.get(head, [])
    if not isinstance(items, list):
        raise fail(f"the mission has no [[{head}]] tables")
    if indexed:
        try:
            index = int(parts[1]) - 1
        except ValueError:
            raise fail("the position in brackets must be a whole number") from None
        if not 0 <= index < len(items):
            raise fail(f"there are {len(items)} {head} tables")
    else:
        names = _named(items, head)
        if parts[1] not in names:
            raise fail(f"no {head} is called '{parts[1]}'")
        index = names[parts[1]]
    rest = parts[2:]
    if head == "stage" and rest[0] in ("motor", "engine"):
        if len(rest) != 2 or rest[1] not in _TABLES[rest[0]]:
            raise fail("no such field")
        if not isinstance(items[index], dict) or rest[0] not in items[index]:
            raise fail(f"that stage has no {rest[0]}")
        return FieldRef(text, (head, index, rest[0], rest[1]), _TABLES[rest[0]][rest[1]])
    if len(rest) != 1 or rest[0] not in _TABLES[head]:
        raise fail("no such field")
    return FieldRef(text, (head, index, rest[0]), _TABLES[head][rest[0]])


def _container(document: dict[str, Any], ref: FieldRef, create: bool) -> Any:
    node: Any = document
    for part in ref.path[:-1]:
        if isinstance(part, int):
            node = node[part]
        else:
            if part not in node and create:
                node[part] = {}
            node = node[part]
    return node


def get_value(document: dict[str, Any], ref: FieldRef) -> float | None:
    """The field's value in SI (None when the document does not give it)."""
    try:
        node = _container(document, ref, create=False)
    except (KeyError, IndexError, TypeError):
        return None
    value = node.get(ref.path[-1])
    if value is None:
        return _DEFAULTS.get(ref.path[-1], 1.0 if ref.is_count else None)
    if ref.is_count:
        return float(value)
    if isinstance(value, int | float) and not isinstance(value, bool):
        return float(value)
    try:
        return parse_quantity(str(value), ref.dimension)
    except UnitParseError as exc:
        raise FieldError(ref.name, exc.reason) from exc


def set_value(document: dict[str, Any], ref: FieldRef, value: float) -> dict[str, Any]:
    """A copy of the document with the field set to an SI value (written with its unit)."""
    changed = copy.deepcopy(document)
    node = _container(changed, ref, create=True)
    if ref.is_count:
        node[ref.path[-1]] = round(value)
    elif ref.dimension == "dimensionless":
        node[ref.path[-1]] = float(value)
    else:
        node[ref.path[-1]] = f"{float(value)!r} {ref.si_unit}"
    return changed
