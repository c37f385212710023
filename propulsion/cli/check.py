"""`propulsion check`: validate a mission file and show plausibility warnings."""

from __future__ import annotations

from pathlib import Path

import typer

from propulsion.cli.common import JSON_OPTION, UNITS_OPTION, UnitSystem, emit_json, guard, stdout
from propulsion.errors import PropulsionError


def check_command(
    mission_file: Path = typer.Argument(
        ..., help="Mission file (TOML).", show_default=False, metavar="MISSION.toml"
    ),
    units: UnitSystem = UNITS_OPTION,
    json_output: bool = JSON_OPTION,
) -> None:
    """Check a mission file: every field, its units, and plausibility warnings.

    Example: propulsion check missions/hobby_single_stage.toml

    Exit code 0 when the file is valid (warnings or not), 2 when it is not. With --json
    an invalid file also prints {"valid": false, "error": ...} on stdout.
    """
    from propulsion.ledger import budget
    from propulsion.mission import load_mission

    with guard():
        try:
            result = budget(load_mission(mission_file))
        except PropulsionError as exc:
            if json_output:
                emit_json({"valid": False, "error": str(exc)}, caution=False)
            raise
    mission = result.mission
    if json_output:
        emit_json(
            {
                "valid": True,
                "mission": mission.name,
                "source": mission.source,
                "stages": [stage.name for stage in mission.vehicle.stages],
                "legs": [leg.name for leg in mission.legs],
                "liftoff_mass_kg": mission.vehicle.liftoff_mass,
                "warnings": [finding.__dict__ for finding in result.findings],
            }
        )
        return
    from propulsion.report.tables import check_view

    stdout().print(check_view(result, units.display()))
