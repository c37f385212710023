"""`propulsion size`: the value of one field that just meets the target, two ways."""

from __future__ import annotations

from pathlib import Path

import typer

from propulsion.cli.common import JSON_OPTION, UNITS_OPTION, UnitSystem, emit_json, guard, stdout


def size_command(
    mission_file: Path = typer.Argument(
        ..., help="Mission file (TOML).", show_default=False, metavar="MISSION.toml"
    ),
    vary: str = typer.Option(
        ..., "--vary", help="The field to solve for, e.g. stage.core.propellant_mass."
    ),
    target: str | None = typer.Option(
        None, "--target", help="A new target for the first leg, with units, e.g. '3 km'."
    ),
    range_text: str | None = typer.Option(
        None, "--range", help="Search range with units, e.g. '0.5 kg..5 kg'."
    ),
    tank_fraction: str | None = typer.Option(
        None, "--tank-fraction", help="Inert mass added per added propellant, e.g. '8 %'."
    ),
    units: UnitSystem = UNITS_OPTION,
    json_output: bool = JSON_OPTION,
) -> None:
    """Solve for one field so the mission just meets its target with its margin.

    Example: propulsion size missions/two_stage_competition.toml --vary vehicle.payload

    Both ways are shown side by side: the ideal budget with the loss allowance, and the
    flight simulation. Exit code 0 when both find a value, 1 when one does not, 2 on bad
    input.
    """
    from propulsion.fields import resolve
    from propulsion.mission import load_mission
    from propulsion.sizing import SizingError, size
    from propulsion.units import UnitParseError, parse_quantity

    with guard():
        mission = load_mission(mission_file)
        ref = resolve(mission.document, vary)
        bounds = None
        if range_text is not None:
            low_text, _, high_text = range_text.partition("..")
            dimension = "dimensionless" if ref.is_count else ref.dimension
            try:
                bounds = (parse_quantity(low_text, dimension), parse_quantity(high_text, dimension))
            except UnitParseError as exc:
                raise SizingError(f"--range {range_text!r}: {exc}") from exc
        tank = None
        if tank_fraction is not None:
            try:
                tank = parse_quantity(tank_fraction, "dimensionless")
            except UnitParseError as exc:
                raise SizingError(f"--tank-fraction {tank_fraction!r}: {exc}") from exc
        if json_output:
            result = size(mission, vary, target, bounds, tank)
        else:
            with stdout().status("Sizing…") as status:

                def progress(text: str) -> None:
                    status.update(f"Sizing: {text}")

                result = size(mission, vary, target, bounds, tank, progress=progress)
    if json_output:
        emit_json(result.to_dict())
    else:
        from propulsion.report.tables import sizing_view

        stdout().print(sizing_view(result, units.display()))
    if not (result.budget.found and result.flight.found):
        raise typer.Exit(1)
