"""Compare options: the budget and the flown ascent of several missions, one row each.

Each option is a mission file (a staging option, a motor choice, another payload). For
each, :func:`compare` computes the ideal budget (:func:`propulsion.ledger.budget`) and flies
the ascent (:func:`propulsion.ascent.fly`), and keeps the figures a team compares: liftoff
mass, ideal delta-v, the losses the flight took, apogee or orbit, the margin and the
verdicts. Everything stays in SI; the column names carry their unit.

:data:`COLUMNS` describes every column (display title, dimension, which way is better) for
the tables and exports of this and other studies.
"""

from __future__ import annotations

import difflib
import math
from collections import Counter
from collections.abc import Callable, Sequence
from dataclasses import asdict, dataclass, fields, replace
from pathlib import Path
from typing import TYPE_CHECKING, Any, NamedTuple

from propulsion.errors import RequestError

if TYPE_CHECKING:
    import pandas as pd

    from propulsion.mission import Mission

__all__ = [
    "COLUMNS",
    "DEFAULT_COLUMNS",
    "Column",
    "CompareError",
    "CompareResult",
    "CompareRow",
    "compare",
    "resolve_column",
    "resolve_columns",
]

Progress = Callable[[int, int, str], None]
"""``progress(done, total, current)``: options finished so far, options in all, and the
name of the option about to be flown (``""`` once all are done)."""


class Column(NamedTuple):
    """How to show one result column.

    ``dimension`` is a dimension name of :mod:`propulsion.units` (the column holds SI
    values of it), or None for numbers without a unit, text and flags. ``better`` is
    ``"min"`` or ``"max"`` when a smaller or larger value is the better option, else None.
    """

    title: str
    dimension: str | None
    better: str | None


COLUMNS: dict[str, Column] = {
    "name": Column("Option", None, None),
    "source": Column("File", None, None),
    "liftoff_mass_kg": Column("Liftoff mass", "mass", "min"),
    "ideal_delta_v_m_s": Column("Ideal Δv", "speed", "max"),
    "gravity_loss_m_s": Column("Gravity loss", "speed", "min"),
    "drag_loss_m_s": Column("Drag loss", "speed", "min"),
    "steering_loss_m_s": Column("Steering loss", "speed", "min"),
    "pressure_loss_m_s": Column("Back-pressure loss", "speed", "min"),
    "achieved_m_s": Column("Achieved Δv", "speed", None),
    "apogee_m": Column("Apogee", "length", "max"),
    "perigee_m": Column("Orbit perigee", "length", "max"),
    "orbit_apogee_m": Column("Orbit apogee", "length", None),
    "margin": Column("Target margin", None, "max"),
    "margin_unit": Column("Margin unit", None, None),
    "margin_target": Column("Margin's target", None, None),
    "propulsion_margin_m_s": Column("Propulsion margin", "speed", "max"),
    "payload_margin_kg": Column("Payload margin", "mass", "max"),
    "liftoff_thrust_to_weight": Column("Liftoff T/W", None, "max"),
    "rail_exit_speed_m_s": Column("Rail exit", "speed", "max"),
    "max_mach": Column("Max Mach", None, None),
    "max_dynamic_pressure_pa": Column("Max q", "pressure", "min"),
    "meets_targets": Column("Flight meets", None, None),
    "budget_meets_targets": Column("Budget meets", None, None),
}
"""Every column of :meth:`CompareResult.to_frame`, in order, with its display title,
dimension and better direction. ``margin`` is the target margin, in the target's own
terms (for an orbit, how far perigee and apogee lie inside the tolerance band); its unit
(``m`` or ``m/s``) is in ``margin_unit`` and its target kind in ``margin_target`` on the
same row: margins of different kinds of target are not ranked against each other.
``propulsion_margin_m_s`` is the propulsion margin as ideal delta-v, ``payload_margin_kg``
the payload margin (:mod:`propulsion.margins`).

Which way is better: less liftoff mass, fewer losses and a lower maximum dynamic pressure
(lighter structure); more ideal delta-v, apogee, perigee, margin, liftoff thrust-to-weight
and rail exit speed (common practice, no source)."""

DEFAULT_COLUMNS: tuple[str, ...] = (
    "name",
    "meets_targets",
    "apogee_m",
    "perigee_m",
    "propulsion_margin_m_s",
    "liftoff_mass_kg",
    "ideal_delta_v_m_s",
    "gravity_loss_m_s",
    "drag_loss_m_s",
    "margin",
    "liftoff_thrust_to_weight",
    "max_mach",
)
"""The columns a terminal table shows by default, most important first: a narrow terminal
drops them from the end. The table shows them in the order of :data:`COLUMNS`."""

# SI suffix of each dimension in the column names, so "--sort apogee" finds "apogee_m"
_SUFFIX = {"mass": "_kg", "length": "_m", "speed": "_m_s", "pressure": "_pa"}


class CompareError(RequestError):
    """A comparison request that cannot be run (no options, an unknown column)."""


@dataclass(frozen=True)
class CompareRow:
    """One option: its budget and its flown ascent, in SI (the unit is in each name)."""

    name: str
    source: str
    liftoff_mass_kg: float
    ideal_delta_v_m_s: float
    gravity_loss_m_s: float
    drag_loss_m_s: float
    steering_loss_m_s: float
    pressure_loss_m_s: float
    achieved_m_s: float
    apogee_m: float
    perigee_m: float
    orbit_apogee_m: float
    margin: float
    margin_unit: str
    margin_target: str
    propulsion_margin_m_s: float
    payload_margin_kg: float
    liftoff_thrust_to_weight: float
    rail_exit_speed_m_s: float
    max_mach: float
    max_dynamic_pressure_pa: float
    meets_targets: bool | None
    budget_meets_targets: bool | None

    def to_dict(self) -> dict[str, Any]:
        """The row as a dict keyed by column name (SI values)."""
        return asdict(self)


def _short(column: str) -> str:
    """The column name without its SI suffix (``apogee_m`` -> ``apogee``)."""
    spec = COLUMNS.get(column)
    suffix = _SUFFIX.get(spec.dimension or "", "") if spec is not None else ""
    return column[: -len(suffix)] if suffix and column.endswith(suffix) else column


def resolve_column(text: str, available: Sequence[str] | None = None) -> str:
    """Find the column a user means: its full name or its name without the unit suffix.

    Parameters
    ----------
    text : str
        What the user wrote (``"apogee"``, ``"apogee_m"``, ``"drag-loss"``); case and
        ``-``/``_`` do not matter.
    available : sequence of str or None
        The column names to choose from; all of :data:`COLUMNS` when None.

    Returns
    -------
    str
        The full column name [text].

    Raises
    ------
    CompareError
        No column matches; the message suggests the closest name.

    References
    ----------
    .. [1] Python Software Foundation, The Python Standard Library, ``difflib``
       (Ratcliff/Obershelp "gestalt pattern matching" for the suggestion).
    """
    names = list(available) if available is not None else list(COLUMNS)
    key = text.strip().lower().replace("-", "_").replace(" ", "_")
    aliases: dict[str, str] = {}
    for name in names:
        aliases.setdefault(name, name)
    for name in names:
        aliases.setdefault(_short(name), name)
    if key in aliases:
        return aliases[key]
    close = difflib.get_close_matches(key, list(aliases), n=1, cutoff=0.6)
    hint = f"; did you mean '{close[0]}'?" if close else ""
    shown = ", ".join(_short(name) for name in names)
    raise CompareError(f"unknown column '{text}'{hint}", f"one of {shown}")


def resolve_columns(text: str | None, frame_columns: Sequence[str] | None = None) -> list[str]:
    """Read a comma-separated column list (``"name,apogee,drag_loss"``) or ``"all"``.

    Parameters
    ----------
    text : str or None
        The list; None for :data:`DEFAULT_COLUMNS`.
    frame_columns : sequence of str or None
        The columns that exist; all of :data:`COLUMNS` when None.

    Returns
    -------
    list of str
        Full column names, ``name`` first [text]; the default list is in order of
        importance (see :data:`DEFAULT_COLUMNS`).

    Raises
    ------
    CompareError
        An unknown column name, with a suggestion.

    References
    ----------
    .. [1] Python Software Foundation, The Python Standard Library, ``difflib``.
    """
    names = list(frame_columns) if frame_columns is not None else list(COLUMNS)
    if text is None:
        chosen = [name for name in DEFAULT_COLUMNS if name in names]
    elif text.strip().lower() == "all":
        chosen = [name for name in names if name not in ("source", "margin_unit", "margin_target")]
    else:
        chosen = [resolve_column(part, names) for part in text.split(",") if part.strip()]
    if "name" in names and "name" not in chosen:
        chosen.insert(0, "name")
    return list(dict.fromkeys(chosen))


def _missing(value: Any) -> bool:
    return value is None or (isinstance(value, float) and math.isnan(value))


@dataclass(frozen=True)
class CompareResult:
    """The options side by side: one :class:`CompareRow` per mission (SI).

    ``sort`` is the column the rows are ordered by and whether the order is descending,
    or None for the order the missions were given in.
    """

    rows: tuple[CompareRow, ...]
    margin_computed: bool = True
    sort: tuple[str, bool] | None = None

    @property
    def all_meet_targets(self) -> bool:
        """True when no option's flight falls short (an option without a target counts)."""
        return all(row.meets_targets is not False for row in self.rows)

    def to_frame(self) -> pd.DataFrame:
        """The rows as a DataFrame, one row per option; column names carry the SI unit."""
        import pandas as pd

        return pd.DataFrame(
            [row.to_dict() for row in self.rows], columns=[f.name for f in fields(CompareRow)]
        )

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready values: the options (SI, unit in each key) and the sort order."""
        return {
            "options": [row.to_dict() for row in self.rows],
            "sorted_by": self.sort[0] if self.sort else None,
            "descending": self.sort[1] if self.sort else None,
            "margin_computed": self.margin_computed,
            "all_meet_targets": self.all_meet_targets,
        }

    def sorted_by(self, column: str, descending: bool | None = None) -> CompareResult:
        """The same rows ordered by a column; missing values (NaN, None) go last.

        Parameters
        ----------
        column : str
            A column name, with or without its unit suffix (``"apogee"``).
        descending : bool or None
            Largest first when True. None takes the column's better direction: most
            delta-v, apogee, margin first; least mass and losses first (see
            :data:`COLUMNS`); flags True first; other columns ascending.

        Returns
        -------
        CompareResult
            A new result; ``sort`` records the column and the direction.

        Raises
        ------
        CompareError
            An unknown column, with a suggestion.

        References
        ----------
        .. [1] Python Software Foundation, The Python Standard Library, ``sorted``
           (a stable sort: ties keep the given order).
        """
        name = resolve_column(column)
        if descending is None:
            flags = name in ("meets_targets", "budget_meets_targets")
            descending = COLUMNS[name].better == "max" or flags
        down = bool(descending)
        present = [row for row in self.rows if not _missing(getattr(row, name))]
        missing = [row for row in self.rows if _missing(getattr(row, name))]
        ordered = sorted(present, key=lambda row: getattr(row, name), reverse=down)
        return replace(self, rows=(*ordered, *missing), sort=(name, down))


def _names(missions: Sequence[Mission]) -> list[str]:
    """Mission names, or file stems (then paths, then a count) where names repeat."""
    names = [mission.name for mission in missions]
    counts = Counter(names)
    names = [
        Path(m.source).stem if counts[n] > 1 else n for m, n in zip(missions, names, strict=True)
    ]
    counts = Counter(names)
    names = [m.source if counts[n] > 1 else n for m, n in zip(missions, names, strict=True)]
    counts = Counter(names)
    seen: Counter[str] = Counter()
    out = []
    for name in names:
        seen[name] += 1
        out.append(f"{name} #{seen[name]}" if counts[name] > 1 else name)
    return out


def _margin_unit(target: str, dimension: str) -> str:
    return {"length": "m", "speed": "m/s"}.get(dimension, "")


def compare(
    missions: Sequence[Mission], margin: bool = True, progress: Progress | None = None
) -> CompareResult:
    """Budget and fly each mission and put the figures side by side, one row per option.

    Parameters
    ----------
    missions : sequence of Mission
        The options, each a checked mission (see :func:`propulsion.load_mission`).
    margin : bool
        Find each flight's propulsion and payload margins by root finding on the flight
        (about 120 more flights per option, batched). False judges each target alone, and
        the ``propulsion_margin_m_s`` and ``payload_margin_kg`` columns are NaN.
    progress : callable or None
        Called as ``progress(done, total, current)`` before each option is flown and once
        at the end (``current == ""``).

    Returns
    -------
    CompareResult
        One :class:`CompareRow` per mission, in the order given: liftoff mass [kg]; the
        budget's total ideal delta-v [m/s] and stage-1 thrust-to-weight [-]; the flight's
        whole-ledger losses and achieved delta-v [m/s]; apogee above the site [m] (NaN
        without an apogee, as in orbit); osculating perigee and apogee altitude above the
        equatorial radius [m] (NaN without an orbit); the target margin [``margin_unit``],
        the propulsion margin as ideal delta-v [m/s] and the payload margin [kg]; rail
        exit speed [m/s]; max Mach [-]; max dynamic
        pressure [Pa]; and both verdicts.

    Raises
    ------
    CompareError
        No missions.

    Notes
    -----
    The ideal delta-v is the budget's (every stage burnt completely, with everything above
    riding along), while the losses and the achieved delta-v come from the flown ascent of
    the first leg, so ideal − losses equals achieved only when the flight burns what the
    budget burns.

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2013,
       sections 11.3 and 11.5 (rocket equation, multistage rockets) and section 11.2
       (the delta-v losses of a launch).
    """
    from propulsion.ascent import fly
    from propulsion.ledger import budget

    if not missions:
        raise CompareError("no options to compare", "at least one mission")
    names = _names(missions)
    total = len(missions)
    rows = []
    for done, (name, mission) in enumerate(zip(names, missions, strict=True)):
        if progress is not None:
            progress(done, total, name)
        plan = budget(mission)
        flown = fly(mission, margin=margin)
        ledger = flown.clean_ledger()[-1]  # round-off shown as 0, never a winner
        verdict = flown.verdict
        orbit = flown.orbit
        rows.append(
            CompareRow(
                name=name,
                source=mission.source,
                liftoff_mass_kg=float(mission.vehicle.liftoff_mass),
                ideal_delta_v_m_s=float(plan.total_ideal_delta_v),
                gravity_loss_m_s=float(ledger.gravity_loss),
                drag_loss_m_s=float(ledger.drag_loss),
                steering_loss_m_s=float(ledger.steering_loss),
                pressure_loss_m_s=float(ledger.pressure_loss),
                achieved_m_s=float(ledger.achieved),
                apogee_m=float(flown.apogee),
                perigee_m=float(orbit.perigee_altitude) if orbit is not None else math.nan,
                orbit_apogee_m=float(orbit.apogee_altitude) if orbit is not None else math.nan,
                margin=float(verdict.target_margin),
                margin_unit=_margin_unit(verdict.target, verdict.dimension),
                margin_target=verdict.target,
                propulsion_margin_m_s=float(verdict.propulsion_margin_delta_v),
                payload_margin_kg=float(verdict.payload_margin),
                liftoff_thrust_to_weight=float(plan.stages[0].thrust_to_weight),
                rail_exit_speed_m_s=float(flown.rail_exit_speed),
                max_mach=float(flown.max_mach),
                max_dynamic_pressure_pa=float(flown.max_dynamic_pressure),
                meets_targets=verdict.meets_targets,
                budget_meets_targets=plan.verdict.meets_targets,
            )
        )
    if progress is not None:
        progress(total, total, "")
    return CompareResult(rows=tuple(rows), margin_computed=margin)
