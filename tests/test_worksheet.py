"""The worksheet (`propulsion worksheet`): its model and its screen, driven headless.

The screen is driven with textual's ``App.run_test()`` pilot, pressing the keys a user
presses (no pytest-asyncio here: each test runs its coroutine with ``asyncio.run``). Every
mission is copied into ``tmp_path`` first, so the shipped examples are never written. The
numbers on the screen are checked against the rocket equation worked out here, against
``budget()`` of an independently edited text, or against a reloaded file; the first screen
is also kept as SVG snapshots (pytest-textual-snapshot; refresh them with
``--snapshot-update`` after a deliberate change of the screen).
"""

from __future__ import annotations

import asyncio
import math
import re
import shutil
import tomllib
from collections.abc import Awaitable, Callable
from pathlib import Path
from typing import Any

import pytest
from textual.binding import Binding
from textual.coordinate import Coordinate
from textual.pilot import Pilot
from textual.widgets import DataTable, Input
from typer.testing import CliRunner

from propulsion.constants import STANDARD_GRAVITY
from propulsion.fields import resolve
from propulsion.ledger import budget
from propulsion.mission import load_mission, parse_mission
from propulsion.worksheet.app import SHORT_CAUTION, Confirm, WorksheetApp
from propulsion.worksheet.sheet import Worksheet

MISSIONS = Path(__file__).resolve().parent.parent / "missions"
EXAMPLES = sorted(MISSIONS.glob("*.toml"))
TWO_STAGE = "two_stage_competition.toml"
ORBITAL = "orbital_launcher.toml"
FLIGHT_TIMEOUT = 30.0  # s: a flight of the examples takes well under 2 s

Script = Callable[[WorksheetApp, Pilot[None]], Awaitable[None]]


# --- helpers ------------------------------------------------------------------------------
def copy_missions(tmp_path: Path) -> Path:
    """The example folder (missions and the data files they name) copied into tmp_path."""
    folder = tmp_path / "missions"
    shutil.copytree(MISSIONS, folder)
    return folder


def drive(app: WorksheetApp, script: Script, size: tuple[int, int] = (80, 24)) -> None:
    """Run ``script`` against the app, headless, then wait for its flights to finish."""

    async def main() -> None:
        async with app.run_test(size=size) as pilot:
            await pilot.pause()
            await script(app, pilot)
            if app.is_running:
                await settle(app, pilot)

    asyncio.run(main())


async def settle(app: WorksheetApp, pilot: Pilot[None]) -> None:
    """Wait until every option's current text has been flown and the screen redrawn."""
    waited = 0.0
    while any(app.sheet.cached_flight(option) is None for option in app.sheet.options):
        assert waited < FLIGHT_TIMEOUT, "the flight did not come back"
        await asyncio.sleep(0.02)
        waited += 0.02
    await pilot.pause()
    await pilot.pause()


def grid(app: WorksheetApp) -> DataTable[Any]:
    return app.query_one("#grid", DataTable)


def cell(app: WorksheetApp, row: str, column: str) -> str:
    """The plain text of a grid cell (row key ``in:…``/``out:…``, column key ``s0``…)."""
    return str(grid(app).get_cell(row, column))


def shown(app: WorksheetApp, widget: str) -> str:
    """The text a Static shows."""
    return str(app.query_one(widget).render())


def screen_lines(app: WorksheetApp) -> list[str]:
    """The screen as lines of text, as the terminal shows them."""
    return [strip.text for strip in app.screen._compositor.render_strips()]


async def move_to(app: WorksheetApp, pilot: Pilot[None], row: str, column: int) -> None:
    """Move the grid's cursor to ``row`` (a row key) and ``column`` with the arrow keys."""
    table = grid(app)
    target = Coordinate(table.get_row_index(row), column)
    here = table.cursor_coordinate
    vertical = target.row - here.row
    horizontal = target.column - here.column
    keys = ["down"] * vertical + ["up"] * -vertical
    keys += ["right"] * horizontal + ["left"] * -horizontal
    if keys:
        await pilot.press(*keys)
    assert table.cursor_coordinate == target


async def type_into_editor(app: WorksheetApp, pilot: Pilot[None], text: str) -> None:
    """Clear the open editor with the keyboard, type ``text`` and press Enter."""
    editor = app.query_one("#editor", Input)
    assert editor.has_class("editing") and editor.has_focus
    await pilot.press("end", "ctrl+u", *text, "enter")
    await pilot.pause()


async def edit_cell(
    app: WorksheetApp, pilot: Pilot[None], row: str, column: int, text: str
) -> None:
    """What a user does: move to the cell, Enter, retype it, Enter."""
    await move_to(app, pilot, row, column)
    await pilot.press("enter")
    await pilot.pause()
    await type_into_editor(app, pilot, text)


def display_tolerance(value: float, digits: int = 4) -> float:
    """Half a unit of the last digit the grid shows (4 significant digits)."""
    return 0.5 * 10.0 ** (math.floor(math.log10(abs(value))) - digits + 1)


def shown_number(text: str) -> float:
    return float(text.replace(",", ""))


# --- 1. an edit reaches the budget --------------------------------------------------------
def test_booster_propellant_edit_gives_the_rocket_equation(tmp_path: Path) -> None:
    # Tsiolkovsky: dv = Isp g0 ln(m0/mf) (H. D. Curtis, Orbital Mechanics for Engineering
    # Students, 3rd ed., 2013, eq. 11.30). As ledger.budget defines it for a stage in a
    # stack, m0 is everything on the pad and mf = m0 - mp (1 - residual): the unusable
    # residual stays on board. The masses are those of missions/orbital_launcher.toml.
    folder = copy_missions(tmp_path)
    path = folder / ORBITAL
    original = path.read_text(encoding="utf-8")
    for line in (
        'payload = "340 kg"',
        'inert_mass = "1600 kg"',
        'residual_fraction = "1 %"',
        'isp_vacuum = "312 s"',
        'inert_mass = "300 kg"',
        'propellant_mass = "2200 kg"',
    ):
        assert line in original, f"the example changed: {line}"
    payload, core_inert, core_propellant, residual = 340.0, 1600.0, 20_000.0, 0.01
    upper = 300.0 + 2200.0
    m0 = payload + core_inert + core_propellant + upper
    mf = m0 - core_propellant * (1.0 - residual)
    expected = 312.0 * STANDARD_GRAVITY * math.log(m0 / mf)
    assert 1000.0 <= expected < 10_000.0  # shown with 4 significant digits: no decimals

    app = WorksheetApp(path)

    async def script(app: WorksheetApp, pilot: Pilot[None]) -> None:
        before = cell(app, "out:ideal_delta_v", "s0")
        await edit_cell(app, pilot, "in:propellant", 1, "20 t")
        assert cell(app, "in:propellant", "s0") == "20 t"
        assert cell(app, "out:ideal_delta_v", "s0") == f"{expected:,.0f}" != before
        assert cell(app, "out:ideal_delta_v", "label") == "Ideal Δv (m/s)"

    drive(app, script)
    core = app.sheet.option.budget().stages[0]
    assert core.ideal_delta_v == pytest.approx(expected, rel=1e-12)
    assert path.read_text(encoding="utf-8") == original  # edited, not saved


def test_motor_inert_mass_edit_matches_the_budget_of_the_edited_file(tmp_path: Path) -> None:
    # the same change made by hand in the text, then loaded and budgeted as a file is
    folder = copy_missions(tmp_path)
    path = folder / TWO_STAGE
    original = path.read_text(encoding="utf-8")
    assert original.count('inert_mass = "0.70 kg"') == 1
    by_hand = original.replace('inert_mass = "0.70 kg"', 'inert_mass = "0.85 kg"')
    reference = budget(parse_mission(by_hand, source=str(path), base_dir=folder))
    app = WorksheetApp(path)

    async def script(app: WorksheetApp, pilot: Pilot[None]) -> None:
        await edit_cell(app, pilot, "in:inert_mass", 1, "0.85 kg")
        for index, stage in enumerate(reference.stages):
            value = stage.ideal_delta_v
            on_screen = shown_number(cell(app, "out:ideal_delta_v", f"s{index}"))
            assert abs(on_screen - value) <= display_tolerance(value), stage.name
            ratio = shown_number(cell(app, "out:mass_ratio", f"s{index}"))
            assert abs(ratio - stage.mass_ratio) <= display_tolerance(stage.mass_ratio)

    drive(app, script)
    assert app.sheet.option.text == by_hand  # the comment and the alignment survive
    edited = app.sheet.option.budget()
    assert [s.ideal_delta_v for s in edited.stages] == [s.ideal_delta_v for s in reference.stages]
    assert edited.total_ideal_delta_v == reference.total_ideal_delta_v


# --- 2. refused edits ---------------------------------------------------------------------
@pytest.mark.parametrize(
    ("typed", "reason"),
    [("2 bananas", "unknown unit 'bananas'"), ("0.8", "bare number")],
    ids=["unknown-unit", "bare-number"],
)
def test_a_refused_edit_names_the_field_and_changes_nothing(
    tmp_path: Path, typed: str, reason: str
) -> None:
    # project rule: a bare number where a mass belongs is an error, so is an unreadable
    # unit; the message names the field so that the rest of the tool reads it back as
    # the same field (fields.resolve, stages counted from 1 as the loader counts them)
    folder = copy_missions(tmp_path)
    path = folder / TWO_STAGE
    on_disk = path.read_bytes()
    app = WorksheetApp(path)
    text_before = app.sheet.option.text

    async def script(app: WorksheetApp, pilot: Pilot[None]) -> None:
        await edit_cell(app, pilot, "in:inert_mass", 2, typed)  # the sustainer
        message = app.query_one("#message")
        assert message.has_class("error")
        said = shown(app, "#message")
        assert reason in said and repr(typed) in said
        named = said.split(":", 1)[0]
        document = tomllib.loads(text_before)
        assert resolve(document, named).path == ("stage", 1, "inert_mass"), said
        assert app.query_one("#editor", Input).has_class("editing")  # left open to fix
        assert cell(app, "in:inert_mass", "s1") == "0.90 kg"  # the old value in force
        await pilot.press("escape")
        await pilot.pause()
        assert not app.query_one("#editor", Input).has_class("editing")
        assert grid(app).has_focus

    drive(app, script)
    assert app.sheet.option.text == text_before
    assert app.sheet.option.undo == []
    assert not app.sheet.modified
    assert path.read_bytes() == on_disk


# --- 3. undo and redo ---------------------------------------------------------------------
def test_undo_restores_the_value_and_redo_reapplies_it(tmp_path: Path) -> None:
    folder = copy_missions(tmp_path)
    path = folder / TWO_STAGE
    original = path.read_text(encoding="utf-8")
    app = WorksheetApp(path)
    field = ("stage", 0, "inert_mass")

    async def script(app: WorksheetApp, pilot: Pilot[None]) -> None:
        start_dv = cell(app, "out:ideal_delta_v", "s0")
        await edit_cell(app, pilot, "in:inert_mass", 1, "0.8 kg")
        assert app.sheet.text_of(field) == "0.8 kg"
        changed_dv = cell(app, "out:ideal_delta_v", "s0")
        assert changed_dv != start_dv
        await pilot.press("ctrl+z")
        await pilot.pause()
        assert app.sheet.text_of(field) == "0.70 kg"
        assert cell(app, "in:inert_mass", "s0") == "0.70 kg"
        assert cell(app, "out:ideal_delta_v", "s0") == start_dv
        assert app.sheet.option.text == original and not app.sheet.modified
        await pilot.press("ctrl+y")
        await pilot.pause()
        assert app.sheet.text_of(field) == "0.8 kg"
        assert cell(app, "out:ideal_delta_v", "s0") == changed_dv
        await pilot.press("ctrl+y")  # nothing left to redo
        await pilot.pause()
        assert "Nothing to redo" in shown(app, "#message")
        assert app.sheet.text_of(field) == "0.8 kg"

    drive(app, script)


# --- 4. saving ----------------------------------------------------------------------------
def test_save_asks_first_and_the_saved_file_loads_as_the_same_mission(tmp_path: Path) -> None:
    folder = copy_missions(tmp_path)
    path = folder / TWO_STAGE
    on_disk = path.read_bytes()
    app = WorksheetApp(path)
    field = ("stage", 1, "inert_mass")

    async def script(app: WorksheetApp, pilot: Pilot[None]) -> None:
        await edit_cell(app, pilot, "in:inert_mass", 2, "1.1 kg")
        await pilot.press("ctrl+s")
        await pilot.pause()
        assert isinstance(app.screen, Confirm)
        assert path.read_bytes() == on_disk  # nothing before the answer
        await pilot.press("n")
        await pilot.pause()
        assert not isinstance(app.screen, Confirm)
        assert path.read_bytes() == on_disk and app.sheet.modified
        await pilot.press("ctrl+s")
        await pilot.pause()
        await pilot.press("y")
        await pilot.pause()
        assert not app.sheet.modified

    drive(app, script)
    saved = path.read_text(encoding="utf-8")
    assert saved == app.sheet.option.text
    again = Worksheet(path)
    assert again.text_of(field) == "1.1 kg"
    assert not again.modified
    reloaded = budget(load_mission(path))
    assert reloaded.total_ideal_delta_v == app.sheet.option.budget().total_ideal_delta_v
    shipped = budget(load_mission(MISSIONS / TWO_STAGE))
    added = reloaded.stages[1].inert_mass - shipped.stages[1].inert_mass
    assert added == pytest.approx(1.1 - 0.90, rel=1e-12)  # was "0.90 kg"
    assert reloaded.total_ideal_delta_v < shipped.total_ideal_delta_v  # heavier sustainer


def test_save_as_writes_a_new_file_and_refuses_an_existing_one(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    # project rule: never overwrite a user's file without asking (--force on the command line)
    folder = copy_missions(tmp_path)
    monkeypatch.chdir(folder)  # a name typed alone is a file of the working folder
    path = folder / TWO_STAGE
    on_disk = path.read_bytes()
    taken = folder / "taken.toml"
    taken.write_bytes(b"# someone's own file\n")
    new = folder / "variant.toml"
    app = WorksheetApp(path)

    async def script(app: WorksheetApp, pilot: Pilot[None]) -> None:
        await edit_cell(app, pilot, "in:inert_mass", 1, "0.75 kg")
        await pilot.press("w")
        await pilot.pause()
        editor = app.query_one("#editor", Input)
        assert editor.value.endswith("two_stage_competition_a.toml")  # a proposal
        await type_into_editor(app, pilot, taken.name)
        assert app.query_one("#message").has_class("error")
        assert "exists" in shown(app, "#message")
        assert editor.has_class("editing")
        await type_into_editor(app, pilot, new.name)
        assert not editor.has_class("editing")
        assert not app.query_one("#message").has_class("error")

    drive(app, script)
    assert taken.read_bytes() == b"# someone's own file\n"
    assert path.read_bytes() == on_disk
    assert new.read_text(encoding="utf-8") == app.sheet.option.text
    assert Worksheet(new).text_of(("stage", 0, "inert_mass")) == "0.75 kg"


# --- 5. quitting --------------------------------------------------------------------------
@pytest.mark.parametrize("key", ["q", "ctrl+q"])
def test_quitting_with_changes_asks_first(tmp_path: Path, key: str) -> None:
    # ctrl+q is every textual app's quit key: it must not drop the changes either
    folder = copy_missions(tmp_path)
    app = WorksheetApp(folder / TWO_STAGE)

    async def script(app: WorksheetApp, pilot: Pilot[None]) -> None:
        await edit_cell(app, pilot, "in:inert_mass", 1, "0.75 kg")
        await pilot.press(key)
        await pilot.pause()
        assert isinstance(app.screen, Confirm)
        await pilot.press("n")
        await pilot.pause()
        assert app.is_running and not isinstance(app.screen, Confirm)
        await settle(app, pilot)  # let the flight finish before leaving
        await pilot.press(key)
        await pilot.pause()
        await pilot.press("y")
        await pilot.pause()
        assert not app.is_running

    drive(app, script)
    assert app.sheet.modified  # quit on purpose, changes not written


def test_quitting_without_changes_exits_at_once(tmp_path: Path) -> None:
    folder = copy_missions(tmp_path)
    app = WorksheetApp(folder / TWO_STAGE)

    async def script(app: WorksheetApp, pilot: Pilot[None]) -> None:
        await settle(app, pilot)
        await pilot.press("q")
        await pilot.pause()
        assert not app.is_running

    drive(app, script)


# --- 6. options ---------------------------------------------------------------------------
def test_a_copied_option_is_compared_with_one_star(tmp_path: Path) -> None:
    # a heavier booster leaves less impulse to spare: option A keeps the better margin
    folder = copy_missions(tmp_path)
    app = WorksheetApp(folder / TWO_STAGE)
    original = app.sheet.option.text

    async def script(app: WorksheetApp, pilot: Pilot[None]) -> None:
        await pilot.press("o")
        await pilot.pause()
        assert [o.name for o in app.sheet.options] == ["A", "B"]
        assert app.sheet.option.name == "B"
        await edit_cell(app, pilot, "in:inert_mass", 1, "1.2 kg")
        await settle(app, pilot)
        seen.append(shown(app, "#options"))

    seen: list[str] = []
    drive(app, script)
    options = seen[0]
    lines = [line for line in options.splitlines() if re.match(r"^[★ ] [AB]:", line)]
    assert [line[2] for line in lines] == ["A", "B"], options
    assert options.count("★") == 2  # one in the legend, one on a row
    assert lines[0].startswith("★ A:") and lines[1].startswith("  B:"), options
    first, second = (app.sheet.cached_flight(option) for option in app.sheet.options)
    assert first is not None and second is not None
    assert first.verdict.judged > second.verdict.judged
    assert app.sheet.options[0].text == original
    expected = tomllib.loads(original)
    expected["stage"][0]["inert_mass"] = "1.2 kg"
    assert tomllib.loads(app.sheet.options[1].text) == expected


# --- 7. units -----------------------------------------------------------------------------
def test_us_units_show_the_derived_delta_v_in_feet_per_second(tmp_path: Path) -> None:
    # the foot is 0.3048 m exactly (international yard and pound agreement, 1959)
    folder = copy_missions(tmp_path)
    app = WorksheetApp(folder / TWO_STAGE, units="us")

    async def script(app: WorksheetApp, pilot: Pilot[None]) -> None:
        assert cell(app, "out:ideal_delta_v", "label") == "Ideal Δv (ft/s)"
        for index, stage in enumerate(app.sheet.option.budget().stages):
            feet = stage.ideal_delta_v / 0.3048
            on_screen = shown_number(cell(app, "out:ideal_delta_v", f"s{index}"))
            assert abs(on_screen - feet) <= display_tolerance(feet)
        assert "ft/s" in shown(app, "#budget")

    drive(app, script)


def test_the_command_passes_its_units_to_the_screen(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    from propulsion.cli import app as cli

    ran: list[str] = []
    monkeypatch.setattr(WorksheetApp, "run", lambda self: ran.append(self.units.system))
    folder = copy_missions(tmp_path)
    result = CliRunner().invoke(cli, ["worksheet", str(folder / TWO_STAGE), "--units", "us"])
    assert result.exit_code == 0, result.output
    assert ran == ["us"]
    missing = CliRunner().invoke(cli, ["worksheet", str(folder / "nowhere.toml")])
    assert missing.exit_code == 2 and "nowhere.toml" in missing.output
    assert ran == ["us"]


# --- 8. byte-for-byte round trips ---------------------------------------------------------
@pytest.mark.parametrize("example", EXAMPLES, ids=lambda p: p.stem)
def test_every_example_saves_byte_for_byte(tmp_path: Path, example: Path) -> None:
    # the file is the user's: a worksheet that changed nothing writes back what it read
    folder = copy_missions(tmp_path)
    path = folder / example.name
    original = path.read_bytes()
    sheet = Worksheet(path)
    sheet.save(folder / "untouched.toml")
    assert (folder / "untouched.toml").read_bytes() == original
    # an edit and its undo leave no trace either
    field = ("vehicle", "payload")
    written = sheet.text_of(field)
    number, unit = written.split(" ", 1)
    assert sheet.edit(field, "mass", f"{float(number) * 1.5:g} {unit}").ok
    assert sheet.option.text.encode() != original
    assert sheet.undo()
    sheet.save(folder / "undone.toml")
    assert (folder / "undone.toml").read_bytes() == original
    sheet.save(force=True)  # over the file itself
    assert path.read_bytes() == original


# --- 9. snapshots of the first screen -----------------------------------------------------
async def wait_for_flight(pilot: Pilot[None]) -> None:
    app = pilot.app
    assert isinstance(app, WorksheetApp)
    await settle(app, pilot)


@pytest.mark.parametrize("size", [(80, 24), (120, 40)], ids=["80x24", "120x40"])
def test_first_screen_snapshot(
    tmp_path: Path, snap_compare: Callable[..., bool], size: tuple[int, int]
) -> None:
    """The two-stage example as it opens, once its flight is back."""
    folder = copy_missions(tmp_path)
    app = WorksheetApp(folder / TWO_STAGE)
    assert snap_compare(app, terminal_size=size, run_before=wait_for_flight)


# --- 10. the 80-column screen -------------------------------------------------------------
@pytest.mark.parametrize("example", [TWO_STAGE, ORBITAL])
def test_the_80_column_screen_fits_and_shows_the_caution(tmp_path: Path, example: str) -> None:
    # project rule: screens fit 80 columns; every output carries the caution
    folder = copy_missions(tmp_path)
    app = WorksheetApp(folder / example)
    seen: list[str] = []

    async def script(app: WorksheetApp, pilot: Pilot[None]) -> None:
        await settle(app, pilot)
        seen.extend(screen_lines(app))
        table = grid(app)
        assert table.virtual_size.width <= table.content_region.width  # no column cut off

    drive(app, script, size=(80, 24))
    assert len(seen) == 24
    assert all(len(line) <= 80 for line in seen)
    flowing = " ".join(" ".join(seen).split())
    assert SHORT_CAUTION in flowing
    footer = seen[-1]
    for binding in Binding.make_bindings(WorksheetApp.BINDINGS):
        if binding.show and binding.key != "enter":  # the grid's own Enter shadows it
            assert binding.description in footer, (binding.description, footer)
