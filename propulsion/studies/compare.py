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
    "total_impulse_n_s": Column("Total impulse", "impulse", None),
    "impulse_class": Column("Impulse class", None, None),
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
``total_impulse_n_s`` is the total impulse of every motor of the vehicle (clusters
counted), ``impulse_class`` its class letter (NaN and None when no stage flies a motor).
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
    "impulse_class",
    "total_impulse_n_s",
    "margin",
    "liftoff_thrust_to_weight",
    "max_mach",
)
"""The columns a terminal table shows by default, most important first: a narrow terminal
drops them from the end. The table shows them in the order of :data:`COLUMNS`."""

# SI suffix of each dimension in the column names, so "--sort apogee" finds "apogee_m"
_SUFFIX = {
    "mass": "_kg",
    "length": "_m",
    "speed": "_m_s",
    "pressure": "_pa",
    "impulse": "_n_s",
}


class CompareError(RequestError):
    """A comparison request that cannot be run (no options, an unknown column)."""


@dataclass(frozen=True)
class CompareRow:
    """One option: its budget and its flown ascent, in SI (the unit is in each name)."""

    name: str
    source: str
    liftoff_mass_kg: float
    total_impulse_n_s: float
    impulse_class: str | None
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
    or None for the order the missions were given in. ``changes`` says what was changed
    in every file before it flew (``"vehicle.payload = 0.3 kg"``, ``"first leg's target =
    3 km"``; see :func:`apply_changes`).
    """

    rows: tuple[CompareRow, ...]
    margin_computed: bool = True
    sort: tuple[str, bool] | None = None
    changes: tuple[str, ...] = ()

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
            "changes": list(self.changes),
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


NAME_WIDTH = 22
"""Longest option name a terminal table shows whole [characters]: a longer name gives way
to its file's stem, or is cut and numbered (see :func:`option_names`)."""


def _cut(name: str, width: int) -> str:
    return name if len(name) <= width else name[: width - 1].rstrip() + "…"


def option_names(
    names: Sequence[str], sources: Sequence[str], width: int | None = None
) -> list[str]:
    """A distinct name for each option: for the rows of the result, or of a table.

    The given name (the mission's) when it is unique and, with ``width``, at most that
    long; else the file's stem (``light`` for ``light.toml``) when that is unique and
    short enough; else the name (cut to fit with ``width``) with a number added
    (``Thistle #2``, ``Thistle with the lo… #2``), so that no two rows read alike.

    Parameters
    ----------
    names : sequence of str
        The options' names (the missions' names), in order.
    sources : sequence of str
        The options' files, in the same order.
    width : int or None
        Longest name kept whole [characters]; None keeps every unique name whole (the
        result's names, for JSON and exports).

    Returns
    -------
    list of str
        One name per option, all different; with ``width``, each at most ``width``
        characters (plus `` #n`` where names still repeat).
    """
    longest = math.inf if width is None else width
    counts = Counter(names)
    stems = [Path(source).stem for source in sources]
    stem_counts = Counter(stems)
    chosen = []
    for name, stem in zip(names, stems, strict=True):
        if counts[name] == 1 and len(name) <= longest:
            chosen.append(name)
        elif stem_counts[stem] == 1 and len(stem) <= longest:
            chosen.append(stem)
        else:
            chosen.append(name if width is None else _cut(name, width - 3))
    counts = Counter(chosen)
    seen: Counter[str] = Counter()
    out = []
    for name in chosen:
        seen[name] += 1
        out.append(f"{name} #{seen[name]}" if counts[name] > 1 else name)
    return out


def _margin_unit(target: str, dimension: str) -> str:
    return {"length": "m", "speed": "m/s"}.get(dimension, "")


TARGET_FIELDS = {"apogee": "altitude", "circular_orbit": "altitude", "burnout_speed": "speed"}
"""The field of a first leg that a new target value replaces, per target kind: the apogee,
the circular orbit's altitude (its perigee, for an ellipse) or the burnout speed."""

_SETTING_EXAMPLE = 'FIELD=VALUE with the value\'s unit, such as vehicle.payload="0.3 kg"'
_TARGET_EXAMPLE = 'a height such as "3 km" (apogee, orbit altitude) or a speed such as "300 m/s"'


def _split_setting(text: str) -> tuple[str, str]:
    """``"vehicle.payload=0.3 kg"`` -> (``"vehicle.payload"``, ``"0.3 kg"``)."""
    name, sign, value = text.partition("=")
    if not sign or not name.strip() or not value.strip():
        raise CompareError(f"--set {text!r} is not FIELD=VALUE", _SETTING_EXAMPLE)
    return name.strip(), value.strip()


def parse_target(text: str) -> tuple[float, str]:
    """Read a new target value: a height (apogee, orbit altitude) or a speed.

    Parameters
    ----------
    text : str
        The value with its unit (``"3 km"``, ``"300 m/s"``, ``"9800 ft"``).

    Returns
    -------
    tuple of (float, str)
        The value in SI [m or m/s] and its dimension (``"length"`` or ``"speed"``).

    Raises
    ------
    CompareError
        A bare number, or text that is neither a length nor a speed.
    """
    from propulsion.units import UnitParseError, parse_quantity

    reasons = []
    for dimension in ("length", "speed"):
        try:
            return parse_quantity(text, dimension), dimension
        except UnitParseError as exc:
            reasons.append(exc.reason)
    try:
        float(text)
    except ValueError:
        problem = f"--target {text!r} is neither a length nor a speed ({reasons[0]})"
    else:
        problem = f"--target {text!r} is a bare number: a height or a speed needs its unit"
    raise CompareError(problem, _TARGET_EXAMPLE)


def _setting_value(source: str, text: str, ref: Any, value: str) -> float:
    """The SI value of one ``--set`` for one file's field."""
    from propulsion.units import DIMENSIONS, UnitParseError, parse_quantity

    dimension = "dimensionless" if ref.is_count else ref.dimension
    try:
        number = parse_quantity(value, dimension)
    except UnitParseError as exc:
        unit = DIMENSIONS.get(dimension, "")
        raise CompareError(
            f"{source}: --set {text!r}: {exc.reason}",
            f"a value of {ref.name} in {dimension}" + (f" ({unit})" if unit else ""),
        ) from exc
    if ref.is_count and not float(number).is_integer():
        raise CompareError(
            f"{source}: --set {text!r}: {ref.name} is a count", "a whole number, such as 2"
        )
    return number


def apply_changes(
    missions: Sequence[Mission], settings: Sequence[str] = (), target: str | None = None
) -> list[Mission]:
    """The missions with the same fields changed in each, checked again as files are.

    Parameters
    ----------
    missions : sequence of Mission
        Checked missions (each keeps its document, ``Mission.document``).
    settings : sequence of str
        ``FIELD=VALUE`` texts: a field path of :mod:`propulsion.fields`
        (``vehicle.payload``, ``stage.sustainer.inert_mass``, ``launch.elevation``) and a
        value with its unit (``"0.3 kg"``; a bare number only where the field has no unit).
    target : str or None
        A new value of each first leg's target: a height for an apogee or a circular
        orbit's altitude, a speed for a burnout speed (``"3 km"``, ``"300 m/s"``; see
        :data:`TARGET_FIELDS`). The value's dimension must suit every file's target.

    Returns
    -------
    list of Mission
        New missions, in order (the same objects when nothing is changed).

    Raises
    ------
    CompareError
        A setting that is not FIELD=VALUE, a field a file does not have, a value without
        its unit or of the wrong dimension, a field set twice, or a target that does not
        suit a file's first leg; the message names the file.
    MissionError
        A changed mission the loader refuses (an out-of-range value), naming the file.

    Notes
    -----
    Each value is written into a copy of the file's document with
    :func:`propulsion.fields.set_value` and the document is read again with
    :func:`propulsion.mission.parse_mission`, as ``sweep`` does with its grid points.
    """
    from propulsion import fields
    from propulsion.mission import parse_mission

    if not settings and target is None:
        return list(missions)
    pairs = [(text, *_split_setting(text)) for text in settings]
    goal = parse_target(target) if target is not None else None
    changed = []
    for mission in missions:
        source = mission.source
        document = mission.document
        seen: dict[tuple[str | int, ...], str] = {}
        for text, name, value in pairs:
            try:
                ref = fields.resolve(document, name)
            except fields.FieldError as exc:
                raise CompareError(f"{source}: --set {text!r}: {exc}", _SETTING_EXAMPLE) from exc
            if ref.path in seen:
                raise CompareError(
                    f"--set gives {ref.name} twice ({seen[ref.path]!r} and {text!r})",
                    "each field in one --set only",
                )
            seen[ref.path] = text
            document = fields.set_value(document, ref, _setting_value(source, text, ref, value))
        if goal is not None:
            document = _with_target(mission, document, target or "", *goal)
        base = Path(source).parent if source != "<mission>" else None
        changed.append(parse_mission(document, source=source, base_dir=base))
    return changed


def _with_target(
    mission: Mission, document: dict[str, Any], text: str, value: float, dimension: str
) -> dict[str, Any]:
    """The document with its first leg's target field set to ``value`` [m or m/s]."""
    from propulsion import fields
    from propulsion.targets import TARGET_KINDS

    if not mission.legs:
        raise CompareError(
            f"{mission.source}: --target {text!r}: the mission states no [[leg]]",
            "missions whose first leg aims at an apogee, a burnout speed or a circular orbit",
        )
    leg = mission.legs[0]
    name = TARGET_FIELDS.get(leg.target)
    if name is None:
        raise CompareError(
            f"{mission.source}: --target {text!r}: the first leg '{leg.name}' has a "
            f"'{leg.target}' target",
            "first legs that aim at an apogee, a burnout speed or a circular orbit",
        )
    needed = TARGET_KINDS[leg.target].required[name]
    if needed != dimension:
        raise CompareError(
            f"{mission.source}: --target {text!r} is a {dimension}, but the first leg "
            f"'{leg.name}' aims at {leg.target.replace('_', ' ')}, which takes a {needed}",
            _TARGET_EXAMPLE,
        )
    return fields.set_value(document, fields.resolve(document, f"leg[1].{name}"), value)


def describe_changes(settings: Sequence[str] = (), target: str | None = None) -> tuple[str, ...]:
    """The changes in words, one per setting: ``"vehicle.payload = 0.3 kg"``."""
    texts = [" = ".join(_split_setting(text)) for text in settings]
    if target is not None:
        texts.append(f"first leg's target = {target.strip()}")
    return tuple(texts)


def compare(
    missions: Sequence[Mission],
    margin: bool = True,
    progress: Progress | None = None,
    settings: Sequence[str] = (),
    target: str | None = None,
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
    settings : sequence of str
        ``FIELD=VALUE`` changes made in every mission before it flies (see
        :func:`apply_changes`); all are checked before the first flight.
    target : str or None
        A new value of every first leg's target, with its unit (see :func:`apply_changes`).

    Returns
    -------
    CompareResult
        One :class:`CompareRow` per mission, in the order given: liftoff mass [kg]; the
        total impulse of the motors [N·s] and its class letter; the
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
        No missions, or a setting or target that cannot be applied to one of them (the
        message names the file).
    MissionError
        A changed mission the loader refuses (the message names the file and field).

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
    from propulsion.thrust_curve import impulse_class

    if not missions:
        raise CompareError("no options to compare", "at least one mission")
    # the files' own names, before any change
    names = option_names([m.name for m in missions], [m.source for m in missions])
    missions = apply_changes(missions, settings, target)
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
        motors = [stage for stage in mission.vehicle.stages if stage.is_motor]
        impulse = float(sum(stage.total_impulse for stage in motors)) if motors else math.nan
        rows.append(
            CompareRow(
                name=name,
                source=mission.source,
                liftoff_mass_kg=float(mission.vehicle.liftoff_mass),
                total_impulse_n_s=impulse,
                impulse_class=impulse_class(impulse) if impulse > 0 else None,
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
    return CompareResult(
        rows=tuple(rows), margin_computed=margin, changes=describe_changes(settings, target)
    )
