"""`propulsion fly`: integrate the ascent and print the delta-v ledger with losses."""

from __future__ import annotations

from pathlib import Path

import typer

from propulsion.cli.common import JSON_OPTION, UNITS_OPTION, UnitSystem, emit_json, guard, stdout


def fly_command(
    mission_file: Path = typer.Argument(
        ..., help="Mission file (TOML).", show_default=False, metavar="MISSION.toml"
    ),
    units: UnitSystem = UNITS_OPTION,
    json_output: bool = JSON_OPTION,
    trajectory: Path | None = typer.Option(
        None, "--trajectory", help="Write the time series to this CSV file (in --units)."
    ),
    plot: Path | None = typer.Option(
        None,
        "--plot",
        help="Draw altitude, speed, acceleration, Mach and dynamic pressure against time "
        "to this .png or .svg file (in --units).",
    ),
    ledger_plot: Path | None = typer.Option(
        None,
        "--ledger-plot",
        help="Draw the delta-v ledger as a waterfall (ideal, each loss, achieved, required, "
        "margin) to this .png or .svg file.",
    ),
    force: bool = typer.Option(False, "--force", help="Overwrite output files that exist."),
    margin: bool = typer.Option(
        True, "--margin/--no-margin", help="Find the delta-v margin by root finding (more flights)."
    ),
) -> None:
    """Fly the ascent: events, the delta-v ledger with its losses, and the verdict.

    Example: propulsion fly missions/two_stage_competition.toml --trajectory flight.csv

    With --plot, the flight is drawn to a picture (PNG or SVG, by the file's extension)
    instead of the altitude sparkline under the events; --ledger-plot draws the ledger.

    Exit code 0 when the flight meets its target, 1 when it falls short, 2 on bad input.
    """
    from propulsion.ascent import fly
    from propulsion.mission import load_mission
    from propulsion.report.files import all_or_nothing, check_output

    # the outputs are written together when every one of them is ready, or not at all
    with guard(), all_or_nothing(mission_file) as outputs:
        mission = load_mission(mission_file)
        outputs.protect(mission)
        if trajectory is not None:
            check_output(trajectory, force, suffixes=(".csv",))
        for picture in (plot, ledger_plot):
            if picture is not None:
                from propulsion.report.plots import check_plot_path

                check_plot_path(picture, force)
        if json_output:
            result = fly(mission, margin=margin)
        else:
            with stdout().status("Flying the ascent…"):
                result = fly(mission, margin=margin)
        if trajectory is not None:
            from propulsion.report.export import trajectory_csv
            from propulsion.report.files import write_atomic

            write_atomic(trajectory, trajectory_csv(result.trajectory, units.display()), force)
        if plot is not None:
            from propulsion.report.plots import flight_figure, save_figure

            save_figure(flight_figure(result, units.display()), plot, force)
        if ledger_plot is not None:
            from propulsion.report.plots import flight_ledger_figure, save_figure

            save_figure(flight_ledger_figure(result, units.display()), ledger_plot, force)
    if json_output:
        emit_json(result.to_dict())
    else:
        from propulsion.report.tables import flight_view

        stdout().print(flight_view(result, units.display(), altitude_sparkline=plot is None))
    if result.verdict.meets_targets is False:
        raise typer.Exit(1)
