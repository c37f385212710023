"""`propulsion worksheet`: the live terminal table of a mission."""

from __future__ import annotations

from pathlib import Path

import typer

from propulsion.cli.common import UNITS_OPTION, UnitSystem, guard


def worksheet_command(
    mission_file: Path = typer.Argument(
        ..., help="Mission file (TOML).", show_default=False, metavar="MISSION.toml"
    ),
    units: UnitSystem = UNITS_OPTION,
) -> None:
    """Open a mission in a live worksheet: change a rocket and watch the budget follow.

    Stages are columns, quantities rows. Enter edits a cell (any unit: "1.2 kg", "2.6 lb"),
    o copies the vehicle into a new option, ] and [ switch options, Ctrl+Z and Ctrl+Y undo
    and redo, Ctrl+S saves (after asking), w saves the option as a new file, q quits
    (asking first when something is not saved).

    Example: propulsion worksheet missions/two_stage_competition.toml

    Exit code 0 when closed, 2 on a mission file that cannot be opened.
    """
    from propulsion.worksheet.app import WorksheetApp

    with guard():
        app = WorksheetApp(mission_file, units=units.value)
    app.run()
