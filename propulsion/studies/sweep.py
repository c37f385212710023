"""Sweeps: a grid over one or more mission fields, each point budgeted and flown.

``--set FIELD=START..STOP:N`` names a field (see :mod:`propulsion.fields`), its range with
units and the number of points; several ``--set`` make a grid (their Cartesian product).
Each point is the mission with those values, checked like a mission file, then budgeted
and flown (without the margin search, which a sweep's grid replaces); the rows are those
of :mod:`propulsion.studies.compare` with the swept values in front.
"""

from __future__ import annotations

import itertools
import math
import re
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from propulsion import fields
from propulsion.errors import PropulsionError
from propulsion.mission import Mission, parse_mission
from propulsion.units import DIMENSIONS, UnitParseError, parse_quantity

if TYPE_CHECKING:
    import pandas as pd

__all__ = ["Axis", "SweepError", "SweepResult", "parse_axis", "sweep"]

_AXIS_RE = re.compile(
    r"^\s*(?P<field>[^=]+?)\s*=\s*(?P<start>.+?)\s*\.\.\s*(?P<stop>.+?)\s*(?::\s*(?P<count>\d+))?\s*$"
)
MAX_POINTS = 10_000


class SweepError(PropulsionError, ValueError):
    """A --set that cannot be read."""

    def __init__(self, text: str, problem: str, expected: str = "") -> None:
        self.text = text
        self.problem = problem
        self.expected = expected
        super().__init__(text, problem, expected)

    def __reduce__(self) -> tuple[Any, ...]:
        return (type(self), (self.text, self.problem, self.expected))

    def __str__(self) -> str:
        message = f"--set {self.text!r}: {self.problem.rstrip('.')}"
        if self.expected:
            message += f". Expected {self.expected.rstrip('.')}"
        return message + "."


@dataclass(frozen=True)
class Axis:
    """One swept field and its values [SI]."""

    ref: fields.FieldRef
    values: tuple[float, ...]

    @property
    def column(self) -> str:
        """The column name of the swept values, with the SI unit suffix."""
        unit = self.ref.si_unit.replace("/", "_").replace("**", "").replace("*", "_")
        return f"{self.ref.name}_{unit}" if unit and unit != "dimensionless" else self.ref.name


def parse_axis(document: dict[str, Any], text: str) -> Axis:
    """Read ``FIELD=START..STOP:N`` (N points, ends included; N defaults to 5)."""
    match = _AXIS_RE.match(text)
    if match is None:
        raise SweepError(
            text, "cannot read it", "FIELD=START..STOP:N, e.g. vehicle.payload=1 kg..3 kg:5"
        )
    ref = fields.resolve(document, match["field"])
    count = int(match["count"] or 5)
    if not 1 <= count <= 1000:
        raise SweepError(text, f"{count} points", "1 to 1000 points")
    dimension = "dimensionless" if ref.is_count else ref.dimension
    try:
        start = parse_quantity(match["start"], dimension)
        stop = parse_quantity(match["stop"], dimension)
    except UnitParseError as exc:
        hint = DIMENSIONS.get(dimension, "")
        raise SweepError(text, exc.reason, f"values in {dimension} ({hint})") from exc
    values = np.linspace(start, stop, count)
    if ref.is_count:
        values = np.unique(np.round(values))
    return Axis(ref, tuple(float(v) for v in values))


@dataclass
class SweepResult:
    """The grid's rows (the compare columns with the swept values in front)."""

    mission: Mission
    axes: list[Axis]
    frame: pd.DataFrame = field(repr=False)
    skipped: list[tuple[tuple[float, ...], str]]

    def to_frame(self) -> pd.DataFrame:
        """The rows as a DataFrame (SI, unit suffixes in the column names)."""
        return self.frame

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready results."""
        return {
            "mission": self.mission.name,
            "fields": [axis.ref.name for axis in self.axes],
            "rows": self.frame.to_dict(orient="records"),
            "skipped": [
                {"values": list(point), "reason": reason} for point, reason in self.skipped
            ],
        }


def sweep(
    mission: Mission,
    axes: Sequence[Axis],
    progress: Callable[[int, int], None] | None = None,
) -> SweepResult:
    """Budget and fly the mission at every point of the grid of ``axes``.

    Points that make an impossible vehicle are skipped and listed with the reason.
    """
    import pandas as pd

    from propulsion.studies.compare import compare

    names = " ".join(a.ref.name for a in axes)
    seen: dict[tuple[str | int, ...], str] = {}
    for axis in axes:
        if axis.ref.path in seen:
            raise SweepError(
                names,
                f"the field {axis.ref.name} is given twice",
                "each field in one --set only",
            )
        seen[axis.ref.path] = axis.ref.name
    # the size of the grid from its axes, before any point is made (a product of three
    # 1,000-point axes is 10^9 points: refused here, not after filling the memory)
    size = math.prod(len(axis.values) for axis in axes)
    if size > MAX_POINTS:
        raise SweepError(names, f"{size:,} points", f"at most {MAX_POINTS:,}")
    grid = itertools.product(*(axis.values for axis in axes))
    base = Path(mission.source).parent if mission.source != "<mission>" else None
    missions: list[Mission] = []
    kept: list[tuple[float, ...]] = []
    skipped: list[tuple[tuple[float, ...], str]] = []
    for point in grid:
        document = mission.document
        for axis, value in zip(axes, point, strict=True):
            document = fields.set_value(document, axis.ref, value)
        try:
            candidate = parse_mission(document, source=mission.source, base_dir=base)
        except PropulsionError as exc:
            skipped.append((point, str(exc)))
            continue
        missions.append(candidate)
        kept.append(point)
    if missions:
        result = compare(
            missions,
            margin=False,
            progress=None if progress is None else lambda done, total, _: progress(done, total),
        )
        frame = result.to_frame()
    else:
        frame = pd.DataFrame()
    for index, axis in reversed(list(enumerate(axes))):
        column = [point[index] for point in kept]
        frame.insert(0, axis.column, [int(v) for v in column] if axis.ref.is_count else column)
    return SweepResult(mission=mission, axes=list(axes), frame=frame, skipped=skipped)
