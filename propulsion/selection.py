"""Motor and stack selection: which library motors, in which clusters, reach the target.

:func:`pick` treats a mission's ``[[stage]]`` tables as airframe sections (inert mass
without motors, diameter, drag curve, delays) and tries every motor of a library in every
section, alone or clustered, for stacks of one or more sections. A candidate with k stages
flies the top k sections, so the one-stage candidate of a two-stage mission is the
sustainer section alone, carrying the payload.

Candidates are enumerated (the motors must fit the section), pruned with the ideal budget
(a candidate that cannot reach the target even without losses, or that cannot lift off,
is not flown), flown with :func:`propulsion.ascent.fly`, and ranked by a criterion: least
total impulse (what flying fields limit), least liftoff mass, apogee nearest the target
(what competitions score) or largest margin.
"""

from __future__ import annotations

import copy
import dataclasses
import difflib
import itertools
import math
import time as _time
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

from propulsion.errors import RequestError
from propulsion.ledger import Rows
from propulsion.vehicle import Motor

if TYPE_CHECKING:
    import pandas as pd

    from propulsion.mission import Mission

__all__ = [
    "CLUSTER_SPAN",
    "CRITERIA",
    "Candidate",
    "MotorOption",
    "PickError",
    "PickResult",
    "PrunedCandidate",
    "ShortStack",
    "cluster_fits",
    "motor_item",
    "motor_options",
    "pick",
]

CRITERIA: tuple[str, ...] = ("least_impulse", "least_mass", "nearest_apogee", "largest_margin")
"""Ranking criteria of :func:`pick`."""

CRITERION_TEXT = {
    "least_impulse": "least total impulse",
    "least_mass": "least liftoff mass",
    "nearest_apogee": "apogee nearest the target",
    "largest_margin": "largest apogee margin",
}
"""Each criterion in words, for reports."""

# Diameter of the smallest circle holding n equal circles of diameter 1 (common geometry of
# equal circles in a circle). Closed forms: two circles side by side span 2; three touching
# circles have their centres on an equilateral triangle of side 1, circumradius 1/sqrt(3),
# so they span 1 + 2/sqrt(3) = 2.1547; four sit on a square of side 1, half-diagonal
# 1/sqrt(2), so they span 1 + sqrt(2) = 2.4142.
CLUSTER_SPAN: dict[int, float] = {
    1: 1.0,
    2: 2.0,
    3: 1.0 + 2.0 / math.sqrt(3.0),
    4: 1.0 + math.sqrt(2.0),
}
"""Section diameter needed per motor diameter for a cluster of 1 to 4 motors [-]."""

MAX_CLUSTER = max(CLUSTER_SPAN)
"""Largest cluster :func:`pick` tries."""

CLOSEST = 3
"""Stacks a pick that reaches nothing lists as the closest (:meth:`PickResult.closest`)."""

PRUNE_REASONS = ("delta_v", "thrust_to_weight")
"""Why a candidate was not flown: ideal delta-v below the drag-free requirement, or
liftoff thrust-to-weight below 1."""

_FIT_TOLERANCE = 1e-9  # relative: "54 mm" in "54 mm" fits despite rounding of the SI floats


class PickError(RequestError):
    """A selection request that cannot be run (unknown motor, bad stage count, ...)."""


@dataclass(frozen=True, eq=False)
class MotorOption:
    """A motor the selection may use: a shipped one (by name) or a curve file (SI inside).

    ``file`` is the resolved path of a curve file the user gave, None for a shipped motor.
    """

    name: str
    motor: Motor
    file: Path | None = None

    @property
    def origin(self) -> str:
        """``"shipped"`` for a motor of data/motors/, ``"user"`` for one from a file."""
        return "shipped" if self.file is None else "user"

    def table(self, count: int) -> dict[str, Any]:
        """The ``[stage.motor]`` table that flies ``count`` of this motor."""
        if self.file is None:
            return {"name": self.name, "count": count}
        return {"file": str(self.file), "count": count}


def cluster_fits(motor_diameter: float | None, count: int, section_diameter: float | None) -> bool:
    """Whether ``count`` equal motors fit side by side inside a section.

    Parameters
    ----------
    motor_diameter : float or None
        Diameter of one motor [m]; None (not stated) always fits.
    count : int
        Motors in the cluster, 1 to 4.
    section_diameter : float or None
        Inner diameter available in the section [m]; None (not stated) fits anything.

    Returns
    -------
    bool
        True when ``CLUSTER_SPAN[count] * motor_diameter <= section_diameter``.

    Raises
    ------
    ValueError
        If ``count`` is not 1 to 4.

    Notes
    -----
    The span of n equal circles of diameter d packed in the smallest circle is d (n = 1),
    2 d (n = 2), (1 + 2/sqrt(3)) d (n = 3) and (1 + sqrt(2)) d (n = 4). The section
    diameter is taken as the room for motors: walls, centring rings and a central motor
    tube are the user's allowance.

    References
    ----------
    .. [1] Common geometry of equal circles in a circle (closed forms from the triangle
       and the square of touching circles).
    """
    if count not in CLUSTER_SPAN:
        raise ValueError(f"cluster of {count} motors: expected 1 to {MAX_CLUSTER}")
    if motor_diameter is None or section_diameter is None:
        return True
    return CLUSTER_SPAN[count] * motor_diameter <= section_diameter * (1.0 + _FIT_TOLERANCE)


def motor_item(text: str) -> str | Path:
    """Read one entry of a motor list: a shipped motor's name, or a file or folder.

    A shipped motor's name stays a name (write ``./pd-H113`` for a file or folder of that
    name). Other text is a path when it holds a path separator, ends in ``.csv`` or names
    something that exists; anything else stays a name, which :func:`motor_options` refuses
    with the closest shipped name.

    Parameters
    ----------
    text : str
        The entry as the user wrote it.

    Returns
    -------
    str or Path
        The shipped name (str) or the path (Path).
    """
    from propulsion import catalog

    text = text.strip()
    if text in catalog.motor_names():
        return text
    path = Path(text)
    try:
        exists = path.exists()
    except (OSError, ValueError):  # a name the file system refuses (too long)
        exists = False
    if exists or "/" in text or "\\" in text or text.lower().endswith(".csv"):
        return path
    return text


def _file_options(path: Path) -> list[MotorOption]:
    """The motors of a curve file or of a folder's ``*.csv`` files, in name order."""
    from propulsion import catalog

    files = catalog.motor_files(path)
    if not files:
        raise PickError(
            f"the folder {path} holds no thrust curves",
            "CSV files in the format of data/README.md ('time [s],thrust [N]')",
        )
    options = []
    for file in files:
        curve = catalog.read_thrust_curve(file)  # a located DataFileError for a bad file
        options.append(MotorOption(curve.name, curve, file.resolve()))
    return options


def _same_motor(a: Motor, b: Motor) -> bool:
    """Whether two motors fly alike: same name, curve, masses, family and diameter."""
    import numpy as np

    return (
        a.name == b.name
        and np.array_equal(a.time, b.time)
        and np.array_equal(a.thrust, b.thrust)
        and (a.propellant_mass, a.case_mass) == (b.propellant_mass, b.case_mass)
        and (a.propellant_family, a.diameter) == (b.propellant_family, b.diameter)
    )


def _where(option: MotorOption) -> str:
    return "the shipped motor" if option.file is None else str(option.file)


def _distinct(options: Iterable[MotorOption]) -> tuple[MotorOption, ...]:
    """The options with one motor per name: the same motor twice is kept once, two
    different motors of one name are refused (tables and JSON name motors by name)."""
    kept: dict[str, MotorOption] = {}
    for option in options:
        seen = kept.get(option.name)
        if seen is None:
            kept[option.name] = option
            continue
        if _same_motor(seen.motor, option.motor):
            continue
        fix = "one name per motor: change the '# name = ...' line of your curve file"
        if seen.file is None or option.file is None:
            fix += ", or leave the shipped motors out with --no-library (library=False)"
        raise PickError(
            f"two different motors are called '{option.name}': {_where(seen)} and {_where(option)}",
            fix,
        )
    return tuple(kept.values())


def motor_options(
    motors: Sequence[str | Path] | str | Path | None = None, library: bool = False
) -> tuple[MotorOption, ...]:
    """Resolve a motor list: shipped motors by name, curve files and folders of them.

    Parameters
    ----------
    motors : sequence of str or Path, str, Path or None
        Shipped motor names (``"pd-H113"``), curve files and folders of curve files in the
        project's format, in any mix (a ``str`` entry is read with :func:`motor_item`, a
        ``Path`` is a file or folder); a lone str or Path is a file or folder. None: every
        shipped motor.
    library : bool
        Also every shipped motor, when ``motors`` names no shipped motor (files and
        folders only). Shipped names choose from the library, so with names given only
        those are tried. The command line sets this unless ``--no-library``.

    Returns
    -------
    tuple of MotorOption
        The motors in the order given (a folder's files in name order, the library in
        impulse order, after the rest). The same motor given twice (the same file, or an
        unchanged copy of a shipped curve) is kept once.

    Raises
    ------
    PickError
        An unknown motor name (with the closest name), an empty list, a folder without
        curves, or two different motors of one name (a team's curve that calls itself
        ``pd-H113``, say).
    MissionFileNotFoundError
        A file or folder that does not exist.
    DataFileError
        A curve file that is not a motor (with its file and line).

    References
    ----------
    .. [1] data/README.md of this project ("Adding a motor"): the thrust-curve format.
    """
    from propulsion import catalog

    if motors is None:
        return tuple(MotorOption(name, catalog.load_motor(name)) for name in catalog.motor_names())
    items: list[str | Path]
    if isinstance(motors, str | Path):
        items = [Path(motors)]
    else:
        items = [
            item if isinstance(item, Path) else motor_item(item)
            for item in motors
            if isinstance(item, Path) or item.strip()
        ]
    if not items:
        raise PickError(
            "no motors given", "one or more motor names, curve files or folders of curves"
        )
    known = catalog.motor_names()
    options: list[MotorOption] = []
    named = False
    for item in items:
        if isinstance(item, Path):
            options.extend(_file_options(item))
            continue
        if item not in known:
            close = difflib.get_close_matches(item, known, n=1)
            hint = f"; did you mean '{close[0]}'?" if close else ""
            raise PickError(
                f"no shipped motor is called '{item}'{hint}",
                "names listed by `propulsion data`: "
                + ", ".join(known)
                + "; or the path of a curve file or folder",
            )
        named = True
        options.append(MotorOption(item, catalog.load_motor(item)))
    if library and not named:
        options.extend(MotorOption(name, catalog.load_motor(name)) for name in known)
    return _distinct(options)


@dataclass(frozen=True)
class Candidate:
    """One flown candidate stack: its motors and how it flew (SI units).

    ``margin`` is apogee minus target [m] (minus the target when the flight never reached
    an apogee); ``margin_fraction`` divides it by the target. ``rank`` is the place by the
    criterion (None for a candidate that falls short, except when ranking by nearest
    apogee, which ranks every candidate). ``warnings`` are the plausibility findings of
    the budget and of the flight.
    """

    rank: int | None
    motors: str
    stages: tuple[str, ...]
    choice: tuple[tuple[str, int, str | None], ...]
    """Per stage: the motor's name, how many, and the curve file of a user's motor (None
    for a shipped one)."""
    total_impulse: float
    impulse_class: str
    liftoff_mass: float
    liftoff_thrust_to_weight: float
    ideal_delta_v: float
    rail_exit_speed: float
    max_mach: float
    apogee: float
    margin: float
    margin_fraction: float
    meets_target: bool
    warnings: tuple[str, ...]
    mission: Mission = field(repr=False, compare=False)
    unsafe_ignition: bool = False
    """An unguided upper stage lit descending, too slow to steer, or tilted beyond the
    flight warnings' limit: such a stack ranks after every other that meets the target."""
    propulsion_margin: float = math.nan
    """Fraction of total impulse the stack may lose and still meet the target [-] (NaN:
    not computed, for a stack that falls short)."""
    propulsion_margin_delta_v: float = math.nan
    """The propulsion margin as ideal delta-v [m/s]."""
    payload_margin: float = math.nan
    """Payload that could be added and still meet the target [kg]."""
    passes: bool | None = None
    """The verdict `fly` gives the stack, judging the margin ``[margins.flight]`` names
    (None: not computed)."""
    flags: tuple[str, ...] = ()
    """What the plausibility rules warn about: ``"thrust_to_weight"``, ``"rail_exit"``,
    ``"ignition"`` (see :func:`pick`)."""
    thrust_to_weight_minimum: float = math.nan
    """The propellant family's usual minimum liftoff thrust-to-weight [-] (NaN: no family)."""

    def to_dict(self) -> dict[str, Any]:
        """Fields keyed with SI unit suffixes, for JSON and DataFrames."""
        return {
            "rank": self.rank,
            "motors": self.motors,
            "stages": list(self.stages),
            "stage_motors": [
                {
                    "stage": stage,
                    "motor": motor,
                    "count": count,
                    "origin": "shipped" if file is None else "user",
                    "file": file,
                }
                for stage, (motor, count, file) in zip(self.stages, self.choice, strict=True)
            ],
            "total_impulse_n_s": self.total_impulse,
            "impulse_class": self.impulse_class,
            "liftoff_mass_kg": self.liftoff_mass,
            "liftoff_thrust_to_weight": self.liftoff_thrust_to_weight,
            "ideal_delta_v_m_s": self.ideal_delta_v,
            "rail_exit_speed_m_s": self.rail_exit_speed,
            "max_mach": self.max_mach,
            "apogee_m": self.apogee,
            "margin_m": self.margin,
            "margin_fraction": self.margin_fraction,
            "meets_target": self.meets_target,
            "warning_count": len(self.warnings),
            "warnings": list(self.warnings),
            "unsafe_ignition": self.unsafe_ignition,
            "propulsion_margin_fraction": self.propulsion_margin,
            "propulsion_margin_m_s": self.propulsion_margin_delta_v,
            "payload_margin_kg": self.payload_margin,
            "passes_flight_verdict": self.passes,
            "flags": list(self.flags),
            "thrust_to_weight_minimum": self.thrust_to_weight_minimum,
        }


@dataclass(frozen=True)
class PrunedCandidate:
    """A candidate the ideal budget ruled out before flying (SI units).

    ``reason`` is ``"delta_v"`` (ideal delta-v below the drag-free requirement) or
    ``"thrust_to_weight"`` (liftoff thrust-to-weight below 1). ``apogee_bound`` is the
    apogee above the site of a drag-free vertical climb on the ideal delta-v (over the
    turning Earth where the flight has it, by the same energy law as the pruning) [m]: no
    flight of the stack goes higher (see :func:`pick`).
    """

    motors: str
    stages: tuple[str, ...]
    reason: str
    total_impulse: float
    liftoff_mass: float
    liftoff_thrust_to_weight: float
    ideal_delta_v: float
    mission: Mission = field(repr=False, compare=False)
    apogee_bound: float = math.nan
    choice: tuple[tuple[str, int, str | None], ...] = ()
    """Per stage: motor name, count and the user's curve file (as in :class:`Candidate`)."""

    def to_dict(self) -> dict[str, Any]:
        """Fields keyed with SI unit suffixes, for JSON and DataFrames."""
        return {
            "motors": self.motors,
            "stages": list(self.stages),
            "reason": self.reason,
            "total_impulse_n_s": self.total_impulse,
            "liftoff_mass_kg": self.liftoff_mass,
            "liftoff_thrust_to_weight": self.liftoff_thrust_to_weight,
            "ideal_delta_v_m_s": self.ideal_delta_v,
            "apogee_bound_m": self.apogee_bound,
        }


@dataclass(frozen=True)
class ShortStack:
    """A stack that falls short and by how much, for a pick where none reaches the target.

    ``how`` says where the numbers come from: ``"flown"`` (``apogee`` is the flight's, and
    ``shortfall`` = needed apogee - apogee exactly), ``"delta_v"`` (pruned, not flown:
    ``apogee`` is its drag-free bound, so the real shortfall is **at least**
    ``shortfall``) or ``"thrust_to_weight"`` (pruned: it cannot lift off; ``apogee`` and
    ``shortfall`` are NaN). ``target_margin`` is apogee - target [m], the target margin
    (for ``"delta_v"`` a bound too). Lengths in m, impulse in N·s.
    """

    motors: str
    stages: tuple[str, ...]
    how: str
    apogee: float
    shortfall: float
    target_margin: float
    total_impulse: float
    liftoff_thrust_to_weight: float
    choice: tuple[tuple[str, int, str | None], ...] = ()
    """Per stage: motor name, count and the user's curve file (as in :class:`Candidate`)."""

    @property
    def flown(self) -> bool:
        """Whether the numbers come from a flight (else from the ideal budget)."""
        return self.how == "flown"

    def to_dict(self) -> dict[str, Any]:
        """Fields keyed with SI unit suffixes, for JSON."""
        return {
            "motors": self.motors,
            "stages": list(self.stages),
            "how": self.how,
            "flown": self.flown,
            "apogee_m": self.apogee,
            "apogee_is_bound": self.how == "delta_v",
            "shortfall_m": self.shortfall,
            "target_margin_m": self.target_margin,
            "total_impulse_n_s": self.total_impulse,
            "liftoff_thrust_to_weight": self.liftoff_thrust_to_weight,
        }


@dataclass(frozen=True)
class PickResult:
    """The selection: flown candidates best first, the pruned ones, and the counts (SI).

    ``rows`` holds every flown candidate: those that meet the target first, in the order
    of the criterion, then those that fall short, closest first (by nearest apogee: all
    of them by their distance to the target). ``drag_free_delta_v`` [m/s] is the ideal
    delta-v below which a candidate was pruned. ``needed_apogee`` [m] is the apogee a
    stack must reach to meet the target: the target, plus the target margin
    ``[margins.flight]`` asks for when it judges the target (as ``fly --no-margin``
    judges; the propulsion and payload margins are not computed).
    """

    mission: Mission
    criterion: str
    target_apogee: float
    drag_free_delta_v: float
    stage_counts: tuple[int, ...]
    max_cluster: int
    enumerated: int
    rows: Rows[Candidate]
    pruned_rows: Rows[PrunedCandidate]
    compute_time: float
    needed_apogee: float = math.nan

    @property
    def flown(self) -> int:
        """Candidates flown."""
        return len(self.rows)

    @property
    def meeting(self) -> int:
        """Flown candidates whose apogee reaches the target."""
        return sum(row.meets_target for row in self.rows)

    @property
    def pruned(self) -> dict[str, int]:
        """Candidates pruned by the ideal budget, per reason (see ``PRUNE_REASONS``)."""
        return {
            reason: sum(row.reason == reason for row in self.pruned_rows)
            for reason in PRUNE_REASONS
        }

    @property
    def best(self) -> Candidate | None:
        """The first candidate by the criterion that meets the target, if any."""
        return next((row for row in self.rows if row.meets_target), None)

    def closest(self, count: int = CLOSEST) -> tuple[ShortStack, ...]:
        """When no stack meets the target, the ``count`` that come closest, best first.

        Flown stacks come first, by their shortfall from :attr:`needed_apogee`; then the
        stacks pruned for their ideal delta-v, by the shortfall of their drag-free
        apogee bound (a least shortfall: pruned stacks are not flown); then those that
        cannot lift off, by liftoff thrust-to-weight. Empty when a stack meets the target.
        """
        if self.meeting:
            return ()
        target, needed = self.target_apogee, self.needed_apogee
        entries = [
            ShortStack(
                motors=row.motors,
                stages=row.stages,
                how="flown",
                apogee=row.apogee,
                # the margin is apogee - target, or -target when no apogee was reached
                shortfall=(needed - target) - row.margin,
                target_margin=row.margin,
                total_impulse=row.total_impulse,
                liftoff_thrust_to_weight=row.liftoff_thrust_to_weight,
                choice=row.choice,
            )
            for row in self.rows
        ]
        entries.sort(key=lambda e: (_finite(e.shortfall), e.total_impulse, e.motors))
        bounded = []
        for pruned in self.pruned_rows:
            lifts = pruned.reason == "delta_v"
            bound = pruned.apogee_bound if lifts else math.nan
            bounded.append(
                ShortStack(
                    motors=pruned.motors,
                    stages=pruned.stages,
                    how=pruned.reason,
                    apogee=bound,
                    shortfall=needed - bound,
                    target_margin=bound - target,
                    total_impulse=pruned.total_impulse,
                    liftoff_thrust_to_weight=pruned.liftoff_thrust_to_weight,
                    choice=pruned.choice,
                )
            )
        bounded.sort(
            key=lambda e: (
                e.how != "delta_v",
                _finite(e.shortfall),
                -e.liftoff_thrust_to_weight,
                e.total_impulse,
                e.motors,
            )
        )
        return tuple((entries + bounded)[: max(count, 0)])

    def ranked_by(self, criterion: str) -> PickResult:
        """The same flights ranked by another criterion (no flight is repeated)."""
        criterion = _criterion(criterion)
        return dataclasses.replace(
            self,
            criterion=criterion,
            rows=Rows(_rank(self.rows, criterion, self.target_apogee)),
        )

    def to_frame(self) -> pd.DataFrame:
        """The flown candidates as a DataFrame; column names carry their SI unit."""
        return self.rows.to_frame()

    def to_dict(self) -> dict[str, Any]:
        """Everything as plain JSON-ready values with SI unit suffixes in the keys."""
        best = self.best
        return {
            "mission": self.mission.name,
            "source": self.mission.source,
            "criterion": self.criterion,
            "target": "apogee",
            "target_apogee_m": self.target_apogee,
            "needed_apogee_m": self.needed_apogee,
            "drag_free_delta_v_m_s": self.drag_free_delta_v,
            "stage_counts": list(self.stage_counts),
            "max_cluster": self.max_cluster,
            "enumerated": self.enumerated,
            "pruned": len(self.pruned_rows),
            "pruned_by_delta_v": self.pruned["delta_v"],
            "pruned_by_thrust_to_weight": self.pruned["thrust_to_weight"],
            "flown": self.flown,
            "meeting": self.meeting,
            "best": None if best is None else best.to_dict(),
            "candidates": [row.to_dict() for row in self.rows],
            "pruned_candidates": [row.to_dict() for row in self.pruned_rows],
            "closest": [entry.to_dict() for entry in self.closest()],
            "compute_time_s": self.compute_time,
        }


@dataclass(frozen=True)
class _Section:
    index: int
    name: str
    diameter: float | None
    table: dict[str, Any]


def _criterion(criterion: str) -> str:
    key = str(criterion).strip().lower().replace("-", "_")
    if key not in CRITERIA:
        close = difflib.get_close_matches(key, CRITERIA, n=1)
        hint = f"; did you mean '{close[0]}'?" if close else ""
        raise PickError(
            f"unknown ranking criterion '{criterion}'{hint}", "one of " + ", ".join(CRITERIA)
        )
    return key


def _sections(mission: Mission) -> list[_Section]:
    document = mission.document
    tables = document.get("stage") if isinstance(document, dict) else None
    if not isinstance(tables, list) or len(tables) != len(mission.vehicle.stages):
        raise PickError(
            f"the mission '{mission.name}' carries no mission document to build candidates from",
            "a mission read with load_mission or parse_mission",
        )
    sections = []
    for index, (stage, table) in enumerate(zip(mission.vehicle.stages, tables, strict=True)):
        if not stage.is_motor:
            raise PickError(
                f"stage '{stage.name}' is an engine stage; pick chooses motors for motor stages",
                "a mission whose [[stage]] tables each have a [stage.motor]",
            )
        sections.append(_Section(index, stage.name, stage.diameter, table))
    return sections


def _stage_counts(stage_counts: Iterable[int] | None, sections: int) -> tuple[int, ...]:
    if stage_counts is None:
        return tuple(range(1, sections + 1))
    counts = tuple(sorted(set(stage_counts)))
    stages = "1 stage" if sections == 1 else f"{sections} stages"
    valid = f"stage counts from 1 to {sections} (the mission has {stages})"
    if not counts:
        raise PickError("no stage count given", valid)
    for count in counts:
        if isinstance(count, bool) or not isinstance(count, int) or not 1 <= count <= sections:
            raise PickError(f"a stack of {count!r} stages cannot be built", valid)
    return counts


def _leg_template(mission: Mission, target_apogee: float | None) -> dict[str, Any]:
    """The first leg (stages filled in per candidate), as a mission-document table."""
    legs = mission.document.get("leg")
    first: dict[str, Any] = copy.deepcopy(legs[0]) if isinstance(legs, list) and legs else {}
    if target_apogee is not None:
        if not (math.isfinite(target_apogee) and target_apogee > 0):
            raise PickError(
                f"the target apogee {target_apogee!r} m is not a height",
                "a finite apogee above 0 m",
            )
        allowance = first.get("loss_allowance", "0 m/s")
        leg = {"name": first.get("name", "boost and coast to apogee"), "target": "apogee"}
        leg["altitude"] = f"{target_apogee!r} m"
        leg["loss_allowance"] = allowance
        if "reserve" in first:
            leg["reserve"] = first["reserve"]
        return leg
    if not first:
        raise PickError(
            f"the mission '{mission.name}' states no [[leg]], so there is no target to reach",
            'a [[leg]] with target = "apogee", or a target apogee',
        )
    if first.get("target") != "apogee":
        raise PickError(
            f"the first leg's target is '{first.get('target', 'delta_v')}'; "
            "pick ranks stacks by the apogee they reach",
            'a first [[leg]] with target = "apogee", or a target apogee',
        )
    return first


def _label(names: Sequence[str], combo: Sequence[tuple[MotorOption, int]]) -> str:
    parts = []
    for name, (option, count) in zip(names, combo, strict=True):
        parts.append(f"{name}: {count} × {option.name}" if count > 1 else f"{name}: {option.name}")
    return "; ".join(parts)


def _choice(
    combo: Sequence[tuple[MotorOption, int]],
) -> tuple[tuple[str, int, str | None], ...]:
    """Per stage: the motor's name, the count and the user's curve file (None if shipped)."""
    return tuple(
        (option.name, count, None if option.file is None else str(option.file))
        for option, count in combo
    )


def _spin(mission: Mission) -> float:
    """(ω cos φ)² of the site [1/s²]: the centrifugal term of a climb over the turning
    Earth (0 when the flight leaves Earth's rotation out: no latitude and azimuth, or a
    flat Earth)."""
    launch = mission.launch
    if not launch.rotation or mission.flight.earth == "flat":
        return 0.0
    from propulsion.constants import EARTH_ROTATION_RATE

    assert launch.latitude is not None
    return (EARTH_ROTATION_RATE * math.cos(launch.latitude)) ** 2


def _climb_speed(site_altitude: float, apogee: float, spin: float = 0.0) -> float:
    """The drag-free vertical burnout speed at the site that coasts to ``apogee`` [m/s].

    Energy law in the frame turning with the Earth, where Coriolis force does no work and
    the centrifugal force has the potential -½ (ω cos φ)² r²:
    v² = 2μ (1/r_site - 1/r_apogee) - (ω cos φ)² (r_apogee² - r_site²) (Curtis, Orbital
    Mechanics for Engineering Students, 3rd ed., 2013, eq. 2.80 with the centrifugal
    potential), from the same radius as the apogee target's requirement (``targets``).
    ``spin`` = (ω cos φ)² [1/s²] (see :func:`_spin`); 0 gives the requirement exactly.
    """
    from propulsion.constants import EARTH_EQUATORIAL_RADIUS, EARTH_MU

    r_site = EARTH_EQUATORIAL_RADIUS + site_altitude
    r_top = r_site + apogee
    square = 2.0 * EARTH_MU * (1.0 / r_site - 1.0 / r_top) - spin * (r_top**2 - r_site**2)
    return math.sqrt(max(square, 0.0))


def _drag_free_apogee(site_altitude: float, speed: float, spin: float = 0.0) -> float:
    """Apogee above the site of a drag-free vertical climb from the site at ``speed`` [m].

    The inverse of :func:`_climb_speed`: the energy law solved for the apogee radius,
    in closed form without ``spin`` (infinite at escape speed) and by Newton's method
    from that radius with it (the energy is concave and rising in r below the synchronous
    radius, so the iterates rise to the root from below).
    """
    from propulsion.constants import EARTH_EQUATORIAL_RADIUS, EARTH_MU

    r_site = EARTH_EQUATORIAL_RADIUS + site_altitude
    inverse = 1.0 / r_site - speed**2 / (2.0 * EARTH_MU)
    if inverse <= 0:
        return math.inf
    radius = 1.0 / inverse
    if spin <= 0:
        return radius - r_site
    synchronous = (EARTH_MU / spin) ** (1.0 / 3.0)
    for _ in range(50):
        excess = (
            2.0 * EARTH_MU * (1.0 / r_site - 1.0 / radius)
            - spin * (radius**2 - r_site**2)
            - speed**2
        )
        step = -excess / (2.0 * EARTH_MU / radius**2 - 2.0 * spin * radius)
        radius += step
        if radius >= synchronous:
            return math.inf
        if abs(step) <= 1e-9 * radius:
            break
    return radius - r_site


def _needed_apogee(mission: Mission, target: float) -> float:
    """The apogee a flight without margins must reach to pass [m]: the target plus the
    target margin ``[margins.flight]`` asks for when it judges the target; as
    ``margins.asked_amount`` and ``margins.judge_flight`` (other margins are not
    computed without ``margin=True``, so they ask nothing)."""
    setting = mission.margins.flight
    if setting.judge != "target":
        return target
    return target + (setting.required * target if setting.is_fraction else setting.required)


def _finite(value: float, fallback: float = math.inf) -> float:
    return value if math.isfinite(value) else fallback


def _rank(rows: Iterable[Candidate], criterion: str, target: float) -> list[Candidate]:
    """Order candidates by a criterion and number them (see :class:`PickResult`)."""
    rows = list(rows)
    if criterion == "nearest_apogee":
        ordered = sorted(
            rows,
            key=lambda r: (_finite(abs(r.apogee - target)), r.total_impulse, r.motors),
        )
        return [dataclasses.replace(row, rank=i) for i, row in enumerate(ordered, start=1)]
    keys: dict[str, Callable[[Candidate], tuple[float | str, ...]]] = {
        "least_impulse": lambda r: (r.total_impulse, r.liftoff_mass, r.motors),
        "least_mass": lambda r: (r.liftoff_mass, r.total_impulse, r.motors),
        "largest_margin": lambda r: (-_finite(r.margin, -math.inf), r.total_impulse, r.motors),
    }
    meeting = sorted(
        (row for row in rows if row.meets_target),
        key=lambda r: (r.unsafe_ignition, *keys[criterion](r)),
    )
    short = sorted(
        (row for row in rows if not row.meets_target),
        key=lambda r: (-_finite(r.margin, -math.inf), r.total_impulse, r.motors),
    )
    ranked = [dataclasses.replace(row, rank=i) for i, row in enumerate(meeting, start=1)]
    return ranked + [dataclasses.replace(row, rank=None) for row in short]


def pick(
    mission: Mission,
    motors: Sequence[str | Path] | str | Path | None = None,
    stage_counts: Iterable[int] | None = None,
    max_cluster: int = 1,
    criterion: str = "least_impulse",
    target_apogee: float | None = None,
    progress: Callable[[int, int], None] | None = None,
    library: bool = False,
) -> PickResult:
    """Choose motors and stack size for a mission's airframe sections to reach an apogee.

    Parameters
    ----------
    mission : Mission
        A mission read with :func:`propulsion.load_mission` or
        :func:`propulsion.parse_mission`; its ``[[stage]]`` tables are the airframe
        sections (inert mass without motors, diameter, drag curve, delays), in firing order,
        and every one must be a motor stage. Its first leg gives the target (an apogee).
    motors : sequence of str or Path, str, Path or None
        Shipped motor names, thrust-curve CSV files and folders of them, in any mix; a
        lone str or Path is a file or folder; None for every shipped motor (see
        :func:`motor_options`).
    stage_counts : iterable of int or None
        Stack sizes to try, each from 1 to the number of sections. A k-stage candidate
        flies the top k sections. None tries every size.
    max_cluster : int
        Most motors per section, 1 to 4 (they must fit side by side, see
        :func:`cluster_fits`).
    criterion : str
        ``"least_impulse"``, ``"least_mass"``, ``"nearest_apogee"`` or
        ``"largest_margin"`` (hyphens are accepted too).
    target_apogee : float or None
        Apogee above the launch site [m] to aim at instead of the first leg's altitude
        (needed when the mission states no leg). The leg's loss allowance and reserve stay.
    progress : callable or None
        Called as ``progress(done, total)`` after each flight [count, count].
    library : bool
        Also try every shipped motor when ``motors`` names files and folders only (see
        :func:`motor_options`; the command line's default, unless ``--no-library``).

    Returns
    -------
    PickResult
        Flown candidates best first, pruned candidates, the counts, the target apogee [m],
        the apogee needed to pass [m], the drag-free ideal delta-v used for pruning [m/s],
        and, when nothing meets the target, the closest stacks
        (:meth:`PickResult.closest`).

    Raises
    ------
    PickError
        Unknown motor or criterion, stage counts out of range, a cluster size out of range,
        an engine stage, no apogee target, or two different motors of one name.
    DataFileError
        A motor file that is not a thrust curve (with its file and line).

    Notes
    -----
    Each candidate is a copy of the mission document with the top k stage tables, their
    ``[stage.motor]`` replaced by the chosen motor and count, and the first leg flown by
    those k stages (later legs are dropped). Its total ideal delta-v (Tsiolkovsky, with
    everything above each stage riding along) is compared with the drag-free requirement,
    the leg's required delta-v minus its loss allowance: the vertical burnout speed
    :math:`v = \\sqrt{2\\mu(1/r_0 - 1/r_a)}` that coasts to the target. While a rocket climbs,
    gravity and drag only slow it, so its speed never exceeds the delta-v burnt so far and
    its energy gain never exceeds :math:`\\Delta v^2/2`; a stack whose ideal delta-v is
    below :math:`v` cannot reach the target in any flight. With Earth's rotation the
    energy law is taken in the frame turning with the Earth: the ground's speed is no
    credit for an apogee (a vertical climb keeps it as sideways speed, which lifts
    nothing), and all the climb gains is the centrifugal potential,
    :math:`v^2 = 2\\mu(1/r_0 - 1/r_a) - \\omega^2\\cos^2\\varphi\\,(r_a^2 - r_0^2)`, about 0.2 %
    of :math:`v` at the equator; the few metres per second a slanted flight could gain as
    its latitude changes, and a wind's push on a slow rocket, are neglected. Stacks whose
    liftoff thrust-to-weight (average thrust of the first stage over liftoff weight, as in
    the budget) is below 1 are pruned too. Survivors are flown with ``fly(margin=False)``:
    a candidate meets the target when its apogee reaches the target altitude plus the
    target margin ``[margins.flight]`` asks for when it judges the target (the needed
    apogee; the budget's delta-v margin is not checked). The stacks that meet it are
    flown again with ``fly(margin=True)`` for their propulsion and payload margins and
    the verdict ``fly`` gives them (``passes``); ranking never uses those. Ties are broken
    by total impulse. A pruned stack's apogee bound is the drag-free apogee of its ideal
    delta-v by the same energy law, so its shortfall in :meth:`PickResult.closest` is a
    least one.

    ``flags`` name what the plausibility rules warn about, compactly:
    ``"thrust_to_weight"`` (liftoff thrust-to-weight below the propellant family's usual
    minimum, ``data/propellants.csv``), ``"rail_exit"`` (rail exit speed below
    ``ascent.RAIL_EXIT_SPEED_MIN``) and ``"ignition"`` (an upper stage lights descending,
    too slow or tilted; such a stack ranks last).

    The curve files the user gives are trusted for the run: the candidate documents name
    them by absolute path, and :func:`propulsion.catalog.trusted_folders` lets exactly
    those files through the mission-folder rule of
    :func:`propulsion.catalog.user_data_file`.

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2013,
       eq. 2.80 (energy law) and sections 11.3 and 11.5 (rocket equation, staging).
    .. [2] Common geometry of equal circles in a circle (the cluster fit).
    """
    from propulsion import catalog
    from propulsion.ascent import RAIL_EXIT_SPEED_MIN, fly
    from propulsion.ledger import budget
    from propulsion.mission import parse_mission
    from propulsion.thrust_curve import impulse_class

    started = _time.perf_counter()
    criterion = _criterion(criterion)
    if (
        isinstance(max_cluster, bool)
        or not isinstance(max_cluster, int)
        or not (1 <= max_cluster <= MAX_CLUSTER)
    ):
        raise PickError(
            f"a cluster of up to {max_cluster!r} motors is not supported",
            f"a whole number from 1 to {MAX_CLUSTER}",
        )
    sections = _sections(mission)
    counts = _stage_counts(stage_counts, len(sections))
    leg = _leg_template(mission, target_apogee)
    options = motor_options(motors, library)
    base_dir = Path(mission.source).parent
    # the user's own curve files may lie outside the mission's folder: trust exactly those
    # (catalog.user_data_file), not the folders around them
    files = [option.file for option in options if option.file is not None]

    per_section = [
        [
            (option, count)
            for option in options
            for count in range(1, max_cluster + 1)
            if cluster_fits(option.motor.diameter, count, section.diameter)
        ]
        for section in sections
    ]
    base = {key: value for key, value in mission.document.items() if key not in ("stage", "leg")}
    spin = _spin(mission)

    enumerated = 0
    survivors: list[tuple[str, tuple[str, ...], Any, Mission, Any]] = []
    pruned: list[PrunedCandidate] = []
    target = math.nan
    drag_free = math.nan
    for k in counts:
        chosen = sections[-k:]
        names = tuple(section.name for section in chosen)
        for combo in itertools.product(*per_section[-k:]):
            enumerated += 1
            document = copy.deepcopy(base)
            stages = []
            for section, (option, count) in zip(chosen, combo, strict=True):
                table = copy.deepcopy(section.table)
                table["motor"] = option.table(count)
                stages.append(table)
            document["stage"] = stages
            document["leg"] = [{**copy.deepcopy(leg), "stages": list(names)}]
            document.pop("dispersion", None)  # uncertainties name the mission's own stages
            with catalog.trusted_folders(*files):
                candidate = parse_mission(document, source=mission.source, base_dir=base_dir)
            first = candidate.legs[0]
            target = first.fields["altitude"]
            drag_free = _climb_speed(candidate.launch.altitude, target, spin)
            plan = budget(candidate)
            ideal = plan.total_ideal_delta_v
            thrust_to_weight = plan.stages[0].thrust_to_weight
            label = _label(names, combo)
            impulse = sum(stage.total_impulse for stage in candidate.vehicle.stages)
            reason = ""
            if ideal < drag_free:
                reason = "delta_v"
            elif thrust_to_weight < 1.0:
                reason = "thrust_to_weight"
            if reason:
                pruned.append(
                    PrunedCandidate(
                        motors=label,
                        stages=names,
                        reason=reason,
                        total_impulse=impulse,
                        liftoff_mass=candidate.vehicle.liftoff_mass,
                        liftoff_thrust_to_weight=thrust_to_weight,
                        ideal_delta_v=ideal,
                        mission=candidate,
                        apogee_bound=_drag_free_apogee(candidate.launch.altitude, ideal, spin),
                        choice=_choice(combo),
                    )
                )
            else:
                survivors.append((label, names, combo, candidate, plan))
    if not enumerated:
        raise PickError(
            "no motor of the list fits the airframe sections",
            "motors no wider than the sections (clusters need 2, 2.155 or 2.414 motor diameters)",
        )

    flown: list[Candidate] = []
    families = catalog.propellant_families()
    for done, (label, names, combo, candidate, plan) in enumerate(survivors, start=1):
        result = fly(candidate, margin=False)
        impulse = sum(stage.total_impulse for stage in candidate.vehicle.stages)
        verdict = result.verdict
        findings = (*plan.findings, *result.findings)
        meets = bool(verdict.meets_targets)
        # the margins cost about ten batched flights: only for the stacks that meet the target
        full = fly(candidate, margin=True).verdict if meets else None
        family = families.get(candidate.vehicle.stages[0].propellant_family or "")
        minimum = family.liftoff_thrust_to_weight_min if family is not None else math.nan
        thrust_to_weight = plan.stages[0].thrust_to_weight
        flags = []
        if 1.0 <= thrust_to_weight < minimum:  # the rule of plausibility.budget_findings
            flags.append("thrust_to_weight")
        if result.rail_exit_speed < RAIL_EXIT_SPEED_MIN:  # the rule of the flight warnings
            flags.append("rail_exit")
        if any(f.subject == "ignition" for f in result.findings):
            flags.append("ignition")
        flown.append(
            Candidate(
                rank=None,
                motors=label,
                stages=names,
                choice=_choice(combo),
                total_impulse=impulse,
                impulse_class=impulse_class(impulse),
                liftoff_mass=candidate.vehicle.liftoff_mass,
                liftoff_thrust_to_weight=plan.stages[0].thrust_to_weight,
                ideal_delta_v=plan.total_ideal_delta_v,
                rail_exit_speed=result.rail_exit_speed,
                max_mach=result.max_mach,
                apogee=result.apogee,
                margin=verdict.target_margin,
                margin_fraction=verdict.target_margin_fraction,
                meets_target=meets,
                warnings=tuple(f"{f.subject}: {f.message}" for f in findings),
                mission=candidate,
                unsafe_ignition="ignition" in flags,
                propulsion_margin=math.nan if full is None else full.propulsion_margin,
                propulsion_margin_delta_v=(
                    math.nan if full is None else full.propulsion_margin_delta_v
                ),
                payload_margin=math.nan if full is None else full.payload_margin,
                passes=None if full is None else full.meets_targets,
                flags=tuple(flags),
                thrust_to_weight_minimum=minimum,
            )
        )
        if progress is not None:
            progress(done, len(survivors))
    return PickResult(
        mission=mission,
        criterion=criterion,
        target_apogee=target,
        drag_free_delta_v=drag_free,
        stage_counts=counts,
        max_cluster=max_cluster,
        enumerated=enumerated,
        rows=Rows(_rank(flown, criterion, target)),
        pruned_rows=Rows(pruned),
        compute_time=_time.perf_counter() - started,
        needed_apogee=_needed_apogee(mission, target),
    )
