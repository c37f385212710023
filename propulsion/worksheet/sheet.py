"""The worksheet's model: a mission file held as an editable document, with options.

No screen here: :mod:`propulsion.worksheet.app` draws it. A :class:`Worksheet` holds one or
more :class:`Option` s (A, B, ...), each a TOML document kept by ``tomlkit`` so that its
comments and layout survive a save (an untouched file saves byte for byte the same). An
edit (:meth:`Worksheet.edit`) writes the text as typed into the active option's document,
checks it the way the loader checks a file (units required, ranges, names), and keeps it
only when the whole mission still loads; otherwise the option stays as it was and the
edit's error names the field and what was expected. Every kept edit can be undone and
redone. The budget (:func:`propulsion.ledger.budget`) follows each edit at once; the
flight (:func:`propulsion.ascent.fly`) is the caller's to run in the background
(:meth:`Option.mission` is what it flies), and results are cached by the document's text.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

import tomlkit

from propulsion.errors import PropulsionError
from propulsion.mission import Mission, parse_mission
from propulsion.units import UnitParseError, parse_quantity

if TYPE_CHECKING:
    from propulsion.ascent import FlightResult
    from propulsion.ledger import BudgetResult

__all__ = [
    "DERIVED_ROWS",
    "INPUT_ROWS",
    "MAX_UNDO",
    "EditResult",
    "InputRow",
    "Option",
    "Worksheet",
    "option_name",
]

MAX_UNDO = 200
"""Edits kept for undo, per option."""


@dataclass(frozen=True)
class InputRow:
    """An input row of the vehicle grid: ``key``, ``label``, the ``dimension`` of its
    value (``"text"`` for a name, ``"count"`` for a whole number) and where it lives in a
    stage's table for a motor stage and for an engine stage (None: not for that kind)."""

    key: str
    label: str
    dimension: str
    motor: tuple[str, ...] | None
    engine: tuple[str, ...] | None


INPUT_ROWS: tuple[InputRow, ...] = (
    InputRow("inert_mass", "Inert mass", "mass", ("inert_mass",), ("inert_mass",)),
    InputRow("propellant", "Propellant", "mass", None, ("propellant_mass",)),
    InputRow("motor", "Motor", "text", ("motor", "name"), None),
    InputRow("count", "Count", "count", ("motor", "count"), ("engine", "count")),
    InputRow("isp", "Isp (vacuum)", "time", None, ("engine", "isp_vacuum")),
    InputRow("thrust", "Thrust", "force", None, ("engine", "thrust_vacuum")),
    InputRow(
        "separation_delay", "Sep. delay", "time", ("separation_delay",), ("separation_delay",)
    ),
    InputRow("ignition_delay", "Ign. delay", "time", ("ignition_delay",), ("ignition_delay",)),
)
"""The editable rows, top to bottom. An engine given by its sea-level thrust shows and
edits ``thrust_sea_level`` in the thrust row."""

DERIVED_ROWS: tuple[tuple[str, str, str], ...] = (
    ("mass_ratio", "Mass ratio", ""),
    ("propellant_mass_fraction", "Prop. fraction", ""),
    ("structural_coefficient", "Struct. coeff.", ""),
    ("payload_ratio", "Payload ratio", ""),
    ("ideal_delta_v", "Ideal Δv", "speed"),
    ("thrust_to_weight", "Thrust/weight", ""),
)
"""Rows the budget computes: (StageLedger attribute, label, dimension)."""

VEHICLE_ROWS: tuple[tuple[str, str, str, tuple[str, ...]], ...] = (
    ("payload", "Payload", "mass", ("vehicle", "payload")),
    ("drag_scale", "Drag scale", "dimensionless", ("vehicle", "drag_scale")),
)
"""Rows of the vehicle as a whole: (key, label, dimension, path in the document)."""


def option_name(index: int) -> str:
    """A, B, ..., Z, then AA, AB, ..."""
    name = ""
    index += 1
    while index:
        index, rest = divmod(index - 1, 26)
        name = chr(ord("A") + rest) + name
    return name


@dataclass(frozen=True)
class EditResult:
    """What an edit did: ``ok``, and when not, ``message`` (the located error)."""

    ok: bool
    message: str = ""


@dataclass
class Option:
    """One version of the vehicle: its document (tomlkit), the text it was loaded from
    (None: made in the worksheet), and its undo and redo stacks of document texts."""

    name: str
    document: tomlkit.TOMLDocument
    source: str
    base_dir: Path
    original: str | None = None
    undo: list[str] = field(default_factory=list)
    redo: list[str] = field(default_factory=list)
    _mission: Mission | None = None
    _budget: BudgetResult | None = None

    @property
    def text(self) -> str:
        """The document as it would be saved."""
        return tomlkit.dumps(self.document)

    @property
    def modified(self) -> bool:
        """True when the text differs from what was loaded (always for a new option)."""
        return self.original is None or self.text != self.original

    def mission(self) -> Mission:
        """The option's mission (parsed once per text)."""
        if self._mission is None:
            self._mission = parse_mission(self.text, source=self.source, base_dir=self.base_dir)
        return self._mission

    def budget(self) -> BudgetResult:
        """The ideal budget of the option (computed once per text)."""
        if self._budget is None:
            from propulsion.ledger import budget

            self._budget = budget(self.mission())
        return self._budget

    def _set_text(self, text: str, mission: Mission) -> None:
        self.document = tomlkit.parse(text)
        self._mission = mission
        self._budget = None


class Worksheet:
    """A mission file open for editing, with options.

    Parameters
    ----------
    path : str or Path
        The mission file (TOML).

    Raises
    ------
    PropulsionError
        The file does not load (the loader's located error).
    """

    def __init__(self, path: str | Path) -> None:
        from propulsion.mission import read_mission_text

        self.path = Path(path)
        text = read_mission_text(self.path)
        first = Option(
            name="A",
            document=tomlkit.parse(text),
            source=str(self.path),
            base_dir=self.path.parent,
            original=text,
        )
        first.mission()  # a file that does not load is refused at once
        self.options: list[Option] = [first]
        self.active = 0
        self._flights: dict[str, FlightResult] = {}

    # --- the options --------------------------------------------------------------------
    @property
    def option(self) -> Option:
        """The option being edited."""
        return self.options[self.active]

    def copy_option(self) -> Option:
        """Copy the active option into a new one (B, C, ...) and make it active."""
        current = self.option
        copy = Option(
            name=option_name(len(self.options)),
            document=tomlkit.parse(current.text),
            source=current.source,
            base_dir=current.base_dir,
            original=None,
        )
        copy._mission = current._mission
        self.options.append(copy)
        self.active = len(self.options) - 1
        return copy

    def select(self, index: int) -> None:
        """Make option ``index`` the active one (wrapping around)."""
        self.active = index % len(self.options)

    # --- cells --------------------------------------------------------------------------
    def stages(self) -> list[dict[str, Any]]:
        """The stage tables of the active option's document."""
        return list(self.option.document.get("stage", []))

    def path_of(self, row: InputRow, stage: int) -> tuple[str | int, ...] | None:
        """Where an input row lives for a stage, or None when it does not apply."""
        table = self.stages()[stage]
        kind = row.motor if "motor" in table else row.engine
        if kind is None:
            return None
        if row.key == "thrust" and "engine" in table and "thrust_vacuum" not in table["engine"]:
            kind = ("engine", "thrust_sea_level")
        if row.key == "motor" and "file" in table.get("motor", {}):
            kind = ("motor", "file")
        return ("stage", stage, *kind)

    def text_of(self, path: tuple[str | int, ...]) -> str:
        """The text of a field as the file holds it ("" when absent)."""
        node: Any = self.option.document
        for part in path:
            try:
                node = node[part]
            except (KeyError, IndexError, TypeError):
                return ""
        return str(node)

    # --- editing ------------------------------------------------------------------------
    def edit(self, path: tuple[str | int, ...], dimension: str, text: str) -> EditResult:
        """Set a field to ``text`` (with its unit), or refuse it with a located error.

        An empty text removes the field (its default applies). The option is unchanged
        when the edit is refused.
        """
        text = text.strip()
        label = _dotted(path)
        value: Any = text
        if text:
            if dimension == "count":
                if not text.isdigit() or int(text) < 1:
                    return EditResult(
                        False,
                        f"{label}: {text!r} is not a count. Expected a whole number of 1 or more.",
                    )
                value = int(text)
            elif dimension == "dimensionless":
                try:
                    value = float(text)
                except ValueError:
                    return EditResult(
                        False,
                        f"{label}: {text!r} is not a number. Expected a plain number, e.g. 1.1.",
                    )
            elif dimension != "text":
                try:
                    parse_quantity(text, dimension)
                except UnitParseError as exc:
                    return EditResult(False, f"{label}: {exc}")
        option = self.option
        before = option.text
        document = tomlkit.parse(before)
        node: Any = document
        for part in path[:-1]:
            node = node[part]
        if text:
            node[path[-1]] = value
        elif path[-1] in node:
            del node[path[-1]]
        after = tomlkit.dumps(document)
        if after == before:
            return EditResult(True)
        try:
            mission = parse_mission(after, source=option.source, base_dir=option.base_dir)
        except PropulsionError as exc:
            return EditResult(False, str(exc))
        option.undo.append(before)
        del option.undo[:-MAX_UNDO]
        option.redo.clear()
        option._set_text(after, mission)
        return EditResult(True)

    def undo(self) -> bool:
        """Undo the active option's last edit; False when there is none."""
        return self._step(self.option.undo, self.option.redo)

    def redo(self) -> bool:
        """Redo the last undone edit; False when there is none."""
        return self._step(self.option.redo, self.option.undo)

    def _step(self, source: list[str], target: list[str]) -> bool:
        option = self.option
        if not source:
            return False
        text = source.pop()
        target.append(option.text)
        option._set_text(text, parse_mission(text, source=option.source, base_dir=option.base_dir))
        return True

    @property
    def modified(self) -> bool:
        """True when any option has changes not saved."""
        return any(option.modified for option in self.options)

    # --- results ------------------------------------------------------------------------
    def cached_flight(self, option: Option | None = None) -> FlightResult | None:
        """The flight of an option's current text, if it was flown already."""
        return self._flights.get((option or self.option).text)

    def fly(self, option: Option | None = None) -> FlightResult:
        """Fly an option (with its margins), cached by its text. Safe in a thread: it
        reads the option's text and mission once."""
        from propulsion.ascent import fly

        option = option or self.option
        text = option.text
        found = self._flights.get(text)
        if found is None:
            mission = parse_mission(text, source=option.source, base_dir=option.base_dir)
            found = fly(mission)
            self._flights[text] = found
        return found

    # --- saving -------------------------------------------------------------------------
    def save(self, path: str | Path | None = None, force: bool = False) -> Path:
        """Write the active option to ``path`` (default: the file it came from) whole or
        not at all; the option counts as saved afterwards. A new file needs no ``force``;
        replacing one does (the caller asks first)."""
        from propulsion.report.files import write_atomic

        option = self.option
        target = Path(path) if path is not None else self.path
        text = option.text
        write_atomic(target, text, force=force)
        option.original = text
        return target


def _dotted(path: tuple[str | int, ...]) -> str:
    """``("stage", 0, "inert_mass")`` as ``stage[1].inert_mass``: positions count from 1,
    as the loader's messages and :func:`propulsion.fields.resolve` count them."""
    out = ""
    for part in path:
        out += f"[{part + 1}]" if isinstance(part, int) else (f".{part}" if out else part)
    return out


def best_option(values: list[float], larger_is_better: bool = True) -> int | None:
    """Index of the best finite value (None when there is none)."""
    finite = [(v, i) for i, v in enumerate(values) if math.isfinite(v)]
    if not finite:
        return None
    return (max if larger_is_better else min)(finite)[1]


# a callable a caller may pass to be told about progress (kept for the app's worker)
Progress = Callable[[str], None]
