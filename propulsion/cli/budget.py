"""`propulsion budget`: the ideal delta-v ledger of a mission file."""

from __future__ import annotations

from pathlib import Path

import typer

from propulsion.cli.common import JSON_OPTION, UNITS_OPTION, UnitSystem, emit_json, guard, stdout


def budget_command(
    mission_file: Path = typer.Argument(
        ..., help="Mission file (TOML).", show_default=False, metavar="MISSION.toml"
    ),
    units: UnitSystem = UNITS_OPTION,
    json_output: bool = JSON_OPTION,
    plot: Path | None = typer.Option(
        None,
        "--plot",
        help="Draw the budget as a waterfall (ideal Δv, loss allowances, requirement, "
        "margin) to this .png or .svg file.",
    ),
    force: bool = typer.Option(False, "--force", help="Overwrite the --plot file if it exists."),
) -> None:
    """Ideal delta-v budget: per stage and per leg, with margins and a verdict.

    Example: propulsion budget missions/two_stage_competition.toml --units us

    Exit code 0 when the mission meets its targets, 1 when it falls short, 2 on bad input.
    """
    from propulsion.ledger import budget
    from propulsion.mission import load_mission
    from propulsion.report.files import all_or_nothing

    # the picture is moved into place when the block ends without an error
    with guard(), all_or_nothing(mission_file) as outputs:
        mission = load_mission(mission_file)
        outputs.protect(mission)
        if plot is not None:
            from propulsion.report.plots import check_plot_path

            check_plot_path(plot, force)
        result = budget(mission)
        if plot is not None:
            from propulsion.report.plots import budget_ledger_figure, save_figure

            save_figure(budget_ledger_figure(result, units.display()), plot, force)
    if json_output:
        emit_json(result.to_dict())
    else:
        from propulsion.report.tables import budget_view

        stdout().print(budget_view(result, units.display()))
    if result.verdict.meets_targets is False:
        raise typer.Exit(1)
