"""The worksheet's screen: a textual application over :mod:`propulsion.worksheet.sheet`.

Layout (80 x 24 and larger): a title line; the vehicle grid (stages as columns, inputs then
derived quantities as rows) beside the budget and the flight; the options compared; the
line where a cell is edited and its error shown; a one-line warning and caution; the keys.
The budget follows every accepted edit at once; the flight runs in a worker thread and its
panel says "updating" until it is back, so typing never waits.
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import TYPE_CHECKING, Any, ClassVar

from rich.text import Text
from textual import on, work
from textual.app import App, ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.coordinate import Coordinate
from textual.screen import ModalScreen
from textual.widgets import DataTable, Footer, Input, Label, Static

from propulsion.report.cautions import SAFETY_CAUTION
from propulsion.units import DisplayUnits, display_units, to_display
from propulsion.worksheet.sheet import (
    DERIVED_ROWS,
    INPUT_ROWS,
    VEHICLE_ROWS,
    InputRow,
    Option,
    Worksheet,
    best_option,
)

if TYPE_CHECKING:
    from propulsion.ascent import FlightResult
    from propulsion.ledger import BudgetResult

__all__ = ["WorksheetApp"]

SHORT_CAUTION = (
    "Planning estimates, not a safety analysis. Follow aviation, fire, explosives and "
    "flyer codes; certified motor handlers only; licensed engineering review."
)
"""The caution in the one line the worksheet has for it (the full text: SAFETY_CAUTION)."""
assert "not a safety analysis" in SAFETY_CAUTION


_DEFAULTS = {"count": "1", "separation_delay": "0 s", "ignition_delay": "0 s", "drag_scale": "1"}
"""What a cell the file leaves out stands for (shown dim): the loader's defaults."""


def _number(value: float, digits: int = 4) -> str:
    """A value with ``digits`` significant digits and thousands separators."""
    if not math.isfinite(value):
        return "—"
    if value == 0:
        return "0"
    magnitude = math.floor(math.log10(abs(value)))
    decimals = max(digits - 1 - magnitude, 0)
    return f"{value:,.{decimals}f}"


class Confirm(ModalScreen[bool]):
    """A yes/no question."""

    BINDINGS: ClassVar = [("y", "answer(True)", "Yes"), ("n,escape", "answer(False)", "No")]

    def __init__(self, question: str) -> None:
        super().__init__()
        self.question = question

    def compose(self) -> ComposeResult:
        with Vertical(id="dialog"):
            yield Label(self.question)
            yield Label("y: yes    n: no", classes="dim")

    def action_answer(self, answer: bool) -> None:
        self.dismiss(answer)


class WorksheetApp(App[None]):
    """The worksheet over one mission file."""

    TITLE = "propulsion worksheet"
    ENABLE_COMMAND_PALETTE = False  # its key would push q Quit off an 80-column footer
    CSS = """
    Screen { layout: vertical; }
    #title { height: 1; background: $boost; text-style: bold; }
    #main { height: 1fr; }
    #grid { width: 1fr; min-width: 44; }
    #side { width: 32; border-left: solid $primary-darken-2; padding: 0 0 0 1; }
    #options { height: auto; max-height: 5; }
    #editor { height: 1; border: none; padding: 0; display: none; }
    #editor.editing { display: block; }
    #message { height: auto; max-height: 2; }
    #message.error { color: $error; text-style: bold; }
    #warnings { height: 1; color: $warning; }
    #caution { height: 2; color: $warning; }
    Confirm { align: center middle; }
    #dialog { width: 60; height: auto; border: thick $warning; padding: 1 2; background: $surface; }
    .dim { color: $text-muted; }
    """
    BINDINGS: ClassVar = [
        Binding("enter", "edit", "Edit", show=True, priority=False),
        Binding("ctrl+z", "undo", "Undo"),
        Binding("ctrl+y", "redo", "Redo"),
        Binding("o", "new_option", "New option"),
        Binding("right_square_bracket", "next_option", "Next option"),
        Binding("left_square_bracket", "previous_option", "Prev option", show=False),
        Binding("ctrl+s", "save", "Save"),
        Binding("w", "save_as", "Save as"),
        Binding("q", "quit_sheet", "Quit"),
    ]

    def __init__(self, path: str | Path, units: str = "si") -> None:
        super().__init__()
        self.sheet = Worksheet(path)
        self.units: DisplayUnits = display_units(units)
        self.editing: tuple[tuple[str | int, ...], str] | None = None
        self.saving_as = False
        self.flight_state: dict[str, str] = {}  # option name -> "updating" or ""

    # --- layout ---------------------------------------------------------------------------
    def compose(self) -> ComposeResult:
        yield Static(id="title")
        with Horizontal(id="main"):
            yield DataTable(id="grid", cursor_type="cell", zebra_stripes=False)
            with VerticalScroll(id="side"):
                yield Static(id="budget")
                yield Static(id="flight")
        yield Static(id="options")
        yield Input(id="editor")
        yield Static(id="message")
        yield Static(id="warnings")
        yield Static(id="caution")
        yield Footer()

    def on_mount(self) -> None:
        self.refresh_all()
        grid = self.query_one("#grid", DataTable)
        grid.cursor_coordinate = Coordinate(0, 1)  # the first stage's inert mass
        grid.focus()
        self._say("Arrows move; Enter edits a cell (type a value with its unit).")

    # --- drawing --------------------------------------------------------------------------
    def refresh_all(self) -> None:
        """Redraw everything from the sheet, and start the flight if it is not known."""
        self._draw_title()
        self._draw_grid()
        self._draw_budget()
        self._draw_flight()
        self._draw_options()
        self._draw_caution()
        self.schedule_flights()

    def _draw_title(self) -> None:
        sheet = self.sheet
        names = "  ".join(
            f"[reverse]{o.name}{'*' if o.modified else ''}[/reverse]"
            if i == sheet.active
            else f"{o.name}{'*' if o.modified else ''}"
            for i, o in enumerate(sheet.options)
        )
        mission = sheet.option.mission()
        self.query_one("#title", Static).update(
            Text.from_markup(f" {mission.name} · {sheet.path.name} · option {names}")
        )

    def _draw_grid(self) -> None:
        grid = self.query_one("#grid", DataTable)
        cursor = grid.cursor_coordinate
        grid.clear(columns=True)
        option = self.sheet.option
        stages = self.sheet.stages()
        grid.add_column("", key="label")
        for index, stage in enumerate(stages):
            grid.add_column(str(stage.get("name", f"stage {index + 1}")), key=f"s{index}")
        grid.add_column("vehicle", key="vehicle")
        for row in INPUT_ROWS:
            cells: list[Any] = [Text(row.label)]
            for index in range(len(stages)):
                path = self.sheet.path_of(row, index)
                if path is None:
                    cells.append(Text("·", style="dim"))
                    continue
                written = self.sheet.text_of(path)
                default = _DEFAULTS.get(row.key, "")
                cells.append(Text(written) if written else Text(default, style="dim"))
            cells.append(Text(""))
            grid.add_row(*cells, key=f"in:{row.key}")
        for key, label, _, path in VEHICLE_ROWS:
            written = self.sheet.text_of(path)
            shown = Text(written) if written else Text(_DEFAULTS.get(key, ""), style="dim")
            cells = [Text(label), *[Text("") for _ in stages], shown]
            grid.add_row(*cells, key=f"veh:{key}")
        budget = option.budget()
        by_name = {row.name: row for row in budget.stages}
        for key, label, dimension in DERIVED_ROWS:
            cells = [Text(label, style="italic")]
            for stage in stages:
                found = by_name.get(str(stage.get("name", "")))
                value = float(getattr(found, key)) if found is not None else math.nan
                number = to_display(value, dimension, self.units) if dimension else value
                cells.append(Text(_number(number, 4), style="italic"))
            cells.append(Text(""))
            label_unit = self.units.label(dimension) if dimension else ""
            cells[0] = Text(f"{label} ({label_unit})" if label_unit else label, style="italic")
            grid.add_row(*cells, key=f"out:{key}")
        if cursor.row < grid.row_count and cursor.column < len(grid.columns):
            grid.cursor_coordinate = cursor

    def _draw_budget(self) -> None:
        budget: BudgetResult = self.sheet.option.budget()
        units = self.units
        speed = units.label("speed")
        text = Text()
        text.append("Ideal budget\n", style="bold")
        for leg in budget.legs:
            text.append(f"{leg.name[:29]}\n", style="dim")
            text.append(
                f"  needs {_number(to_display(leg.required_delta_v, 'speed', units))} {speed}"
                f", has {_number(to_display(leg.available_delta_v, 'speed', units))}\n"
            )
        verdict = budget.verdict
        mark = "PASS" if verdict.meets_targets else "SHORT"
        style = "bold green" if verdict.meets_targets else "bold red"
        text.append(f"{mark} ", style=style)
        text.append(
            f"margin {_number(to_display(verdict.margin, 'speed', units))} {speed} "
            f"({verdict.margin_fraction:.1%})\n"
        )
        self.query_one("#budget", Static).update(text)

    def _draw_flight(self) -> None:
        option = self.sheet.option
        flown = self.sheet.cached_flight(option)
        text = Text()
        text.append("\nFlight", style="bold")
        if flown is None:
            text.append("  updating…\n", style="yellow")
            self.query_one("#flight", Static).update(text)
            return
        units = self.units
        speed, length = units.label("speed"), units.label("length")
        total = flown.total.cleaned(flown.resolution)
        text.append(f"  losses ({speed})\n")
        text.append(
            f" gravity {_number(to_display(total.gravity_loss, 'speed', units), 3)}"
            f" · drag {_number(to_display(total.drag_loss, 'speed', units), 3)}"
            f" · steer {_number(to_display(total.steering_loss, 'speed', units), 3)}\n"
        )
        names = {
            "rail exit": "Rail exit",
            "max dynamic pressure": "Max-Q",
            "apogee": "Apogee",
        }
        for event in flown.events:
            name = names.get(event.name) or (
                "Cutoff" if event.name.startswith("engine cutoff") else None
            )
            if name is None:
                continue
            if name == "Rail exit":
                detail = f"{_number(to_display(event.speed, 'speed', units), 3)} {speed}"
            else:
                detail = f"{_number(to_display(event.altitude, 'length', units), 4)} {length}"
            text.append(f" {name} {detail} at {_number(event.time, 3)} s\n")
        if flown.orbit is not None:
            scale, label = (1852.0, "nmi") if units.system == "us" else (1000.0, "km")
            text.append(
                f" Orbit {_number(flown.orbit.perigee_altitude / scale, 4)} × "
                f"{_number(flown.orbit.apogee_altitude / scale, 4)} {label}\n"
            )
        verdict = flown.verdict
        if verdict.meets_targets is not None:
            text.append(" Margins", style="bold")
            text.append(
                f" target {_signed(verdict.target_margin, verdict.dimension, units)},"
                f" propulsion {verdict.propulsion_margin:.1%},"
                f" payload {_signed(verdict.payload_margin, 'mass', units)}\n"
            )
            mark = "PASS" if verdict.meets_targets else "SHORT"
            style = "bold green" if verdict.meets_targets else "bold red"
            text.append(f" {mark}", style=style)
            text.append(f" on the {verdict.judge} margin\n", style="dim")
        self.query_one("#flight", Static).update(text)

    def _draw_options(self) -> None:
        options = self.sheet.options
        if len(options) < 2:
            self.query_one("#options", Static).update(
                Text("One option. Press o to copy it into option B and compare.", style="dim")
            )
            return
        flights = [self.sheet.cached_flight(option) for option in options]
        judged = [f.verdict.judged if f is not None else math.nan for f in flights]
        best = best_option(judged)
        text = Text()
        text.append("Options  ", style="bold")
        text.append(
            "ideal Δv, budget margin, flight margin judged, verdict (★ best)\n", style="dim"
        )
        speed = self.units.label("speed")
        for index, (option, flown) in enumerate(zip(options, flights, strict=True)):
            budget = option.budget()
            star = "★" if index == best else " "
            line = (
                f"{star} {option.name}: "
                f"{_number(to_display(budget.total_ideal_delta_v, 'speed', self.units))} {speed}, "
                f"{budget.verdict.margin_fraction:+.1%}, "
            )
            if flown is None:
                line += "updating…"
            else:
                verdict = flown.verdict
                line += f"{_judged(verdict, self.units)} ({verdict.judge}), " + (
                    "PASS" if verdict.meets_targets else "SHORT"
                )
            if index:
                text.append("\n")
            text.append(line, style="bold" if index == self.sheet.active else "")
        self.query_one("#options", Static).update(text)

    def _draw_caution(self) -> None:
        flown = self.sheet.cached_flight()
        findings = flown.findings if flown is not None else self.sheet.option.budget().findings
        line = Text(no_wrap=True, overflow="ellipsis")
        if findings:
            count = len(findings)
            line.append(f"! {count} warning{'s' if count != 1 else ''}: ")
            line.append(f"{findings[0].subject}: {findings[0].message}")
        else:
            line.append("No plausibility warnings.", style="dim")
        self.query_one("#warnings", Static).update(line)
        self.query_one("#caution", Static).update(Text(SHORT_CAUTION))

    def _say(self, message: str, error: bool = False) -> None:
        widget = self.query_one("#message", Static)
        widget.set_class(error, "error")
        widget.update(Text(message))

    # --- the flight in the background -----------------------------------------------------
    def schedule_flights(self) -> None:
        """Fly every option whose current text has no flight yet."""
        for option in self.sheet.options:
            if self.sheet.cached_flight(option) is None:
                self.fly_option(option, option.text)

    @work(thread=True, group="flight")
    def fly_option(self, option: Option, text: str) -> None:
        try:
            result: FlightResult | None = self.sheet.fly(option)
            problem = ""
        except Exception as exc:  # a flight that cannot be flown is shown, not raised
            result, problem = None, str(exc)
        self.call_from_thread(self._flight_done, option, text, result, problem)

    def _flight_done(
        self, option: Option, text: str, result: FlightResult | None, problem: str
    ) -> None:
        if problem:
            self._say(f"flight of option {option.name}: {problem}", error=True)
        if option.text != text:
            return  # edited meanwhile: a newer flight is on its way
        self._draw_flight()
        self._draw_options()
        self._draw_caution()

    # --- editing --------------------------------------------------------------------------
    def _cell(self) -> tuple[tuple[str | int, ...], str] | None:
        """The field under the cursor and its dimension, or None for a derived cell."""
        grid = self.query_one("#grid", DataTable)
        row_key, column_key = grid.coordinate_to_cell_key(grid.cursor_coordinate)
        row = str(row_key.value)
        column = str(column_key.value)
        if row.startswith("in:") and column.startswith("s"):
            spec: InputRow = next(r for r in INPUT_ROWS if f"in:{r.key}" == row)
            path = self.sheet.path_of(spec, int(column[1:]))
            if path is None:
                return None
            dimension = spec.dimension
            if spec.key == "thrust":
                dimension = "force"
            return path, dimension
        if row.startswith("veh:") and column == "vehicle":
            key = row[4:]
            _, _, dimension, path = next(v for v in VEHICLE_ROWS if v[0] == key)
            return path, dimension
        return None

    def action_edit(self) -> None:
        if self.editing is not None:
            return
        cell = self._cell()
        if cell is None:
            self._say("Not an input: move to a white cell of the grid and press Enter.")
            return
        self.editing = cell
        self.saving_as = False
        editor = self.query_one("#editor", Input)
        editor.value = self.sheet.text_of(cell[0])
        editor.placeholder = "a value with its unit, e.g. 1.2 kg or 2.6 lb (Esc: cancel)"
        editor.add_class("editing")
        editor.focus()
        self._say(f"Editing {_dotted(cell[0])}: Enter to accept, Esc to cancel.")

    @on(DataTable.CellSelected)
    def _selected(self, _: DataTable.CellSelected) -> None:
        self.action_edit()

    @on(Input.Submitted, "#editor")
    def _submitted(self, event: Input.Submitted) -> None:
        if self.saving_as:
            self._save_as(event.value)
            return
        if self.editing is None:
            return
        path, dimension = self.editing
        result = self.sheet.edit(path, dimension, event.value)
        if not result.ok:
            # the value before stays in force; the entry stays open to be corrected
            self._say(result.message, error=True)
            return
        self._close_editor()
        self._say(f"{_dotted(path)} = {event.value.strip() or '(default)'}")
        self.refresh_all()

    def on_key(self, event: Any) -> None:
        if event.key == "escape" and (self.editing is not None or self.saving_as):
            self._close_editor()
            self._say("Cancelled.")
            event.stop()

    def _close_editor(self) -> None:
        self.editing = None
        self.saving_as = False
        editor = self.query_one("#editor", Input)
        editor.remove_class("editing")
        self.query_one("#grid", DataTable).focus()

    # --- undo, options, saving, quitting --------------------------------------------------
    def action_undo(self) -> None:
        self._say("Undone." if self.sheet.undo() else "Nothing to undo.")
        self.refresh_all()

    def action_redo(self) -> None:
        self._say("Redone." if self.sheet.redo() else "Nothing to redo.")
        self.refresh_all()

    def action_new_option(self) -> None:
        copy = self.sheet.copy_option()
        self._say(f"Option {copy.name}: a copy to change. ] and [ switch options.")
        self.refresh_all()

    def action_next_option(self) -> None:
        self.sheet.select(self.sheet.active + 1)
        self.refresh_all()

    def action_previous_option(self) -> None:
        self.sheet.select(self.sheet.active - 1)
        self.refresh_all()

    def action_save(self) -> None:
        option = self.sheet.option

        def done(answer: bool | None) -> None:
            if answer:
                try:
                    self.sheet.save(force=True)
                except Exception as exc:  # the file system's refusal, shown in place
                    self._say(f"Not saved: {exc}", error=True)
                    return
                self._say(f"Saved option {option.name} to {self.sheet.path}.")
                self.refresh_all()

        self.push_screen(Confirm(f"Write option {option.name} over {self.sheet.path}?"), done)

    def action_save_as(self) -> None:
        self.saving_as = True
        self.editing = None
        editor = self.query_one("#editor", Input)
        editor.value = str(
            self.sheet.path.with_name(
                f"{self.sheet.path.stem}_{self.sheet.option.name.lower()}.toml"
            )
        )
        editor.placeholder = "a new .toml file for this option (Esc: cancel)"
        editor.add_class("editing")
        editor.focus()
        self._say(f"Save option {self.sheet.option.name} as a new file: Enter to write.")

    def _save_as(self, text: str) -> None:
        path = Path(text.strip())
        if path.suffix.lower() != ".toml":
            self._say(f"{path}: expected a file name ending in .toml", error=True)
            return
        try:
            self.sheet.save(path, force=False)
        except Exception as exc:  # exists, or cannot be written: say so, keep the entry
            self._say(f"Not saved: {exc}", error=True)
            return
        self._close_editor()
        self._say(f"Saved option {self.sheet.option.name} to {path}.")
        self.refresh_all()

    def action_quit_sheet(self) -> None:
        if not self.sheet.modified:
            self.exit()
            return

        def done(answer: bool | None) -> None:
            if answer:
                self.exit()

        self.push_screen(Confirm("Quit without saving the changes?"), done)

    async def action_quit(self) -> None:
        """Ctrl+Q, every textual app's quit key, asks first too (as q does)."""
        self.action_quit_sheet()


def _signed(value: float, dimension: str, units: DisplayUnits) -> str:
    """A margin with its sign and display unit."""
    if not math.isfinite(value):
        return "—"
    shown = to_display(value, dimension, units)
    label = units.label(dimension)
    sign = "+" if shown > 0 else ""
    return f"{sign}{_number(shown, 4)} {label}".strip()


def _judged(verdict: Any, units: DisplayUnits) -> str:
    """The judged margin in its own terms: a share of impulse, a mass, or the target's."""
    if verdict.judge == "propulsion":
        return f"{verdict.judged:.1%}" if math.isfinite(verdict.judged) else "—"
    if verdict.judge == "payload":
        return _signed(verdict.judged, "mass", units)
    return _signed(verdict.judged, verdict.dimension, units)


def _dotted(path: tuple[str | int, ...]) -> str:
    """A field's path as the messages name it: positions count from 1 (sheet._dotted)."""
    out = ""
    for part in path:
        out += f"[{part + 1}]" if isinstance(part, int) else (f".{part}" if out else part)
    return out
