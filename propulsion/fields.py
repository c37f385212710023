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
from dataclasses import dataclass
from typing import Any

from propulsion.errors import PropulsionError
from propulsion.targets import TARGET_KINDS
from propulsion.units import DIMENSIONS, UnitParseError, parse_quantity

__all__ = [
    "LIMITS",
    "FieldError",
    "FieldRef",
    "get_value",
    "numeric_fields",
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

# values a field takes when the file does not give it (a cluster of one, no scaling...)
_DEFAULTS: dict[str | int, float | None] = {
    "count": 1.0,
    "impulse_scale": 1.0,
    "burn_time_scale": 1.0,
    "drag_scale": 1.0,
    "wind_speed": 0.0,
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
