"""`propulsion split`: share the delta-v between stages for the lightest vehicle."""

from __future__ import annotations

from pathlib import Path

import typer

from propulsion.cli.common import JSON_OPTION, UNITS_OPTION, UnitSystem, emit_json, guard, stdout


def split_command(
    mission_file: Path = typer.Argument(
        ..., help="Mission file (TOML).", show_default=False, metavar="MISSION.toml"
    ),
    max_stages: int = typer.Option(
        3, "--max-stages", min=1, max=8, help="Compare stacks of 1 to this many stages."
    ),
    losses: bool = typer.Option(
        True, "--losses/--no-losses", help="Also fly candidate stacks for the loss-aware split."
    ),
    units: UnitSystem = UNITS_OPTION,
    json_output: bool = JSON_OPTION,
    plot: Path | None = typer.Option(
        None,
        "--plot",
        help="Draw liftoff mass against the split of the delta-v (two stages) or against "
        "the stage count to this .png or .svg file.",
    ),
    force: bool = typer.Option(False, "--force", help="Overwrite the --plot file if it exists."),
) -> None:
    """Optimal staging: the delta-v split that minimises liftoff mass for the payload.

    Example: propulsion split missions/orbital_launcher.toml --max-stages 4

    The ideal optimum (Lagrange multipliers, checked by a direct numerical optimisation),
    stacks of 1 to --max-stages stages compared, and the loss-aware optimum found by
    flying candidate stacks. Exit code 0 when the optima agree and were found, 1 when
    not, 2 on bad input.
    """
    from propulsion.mission import load_mission
    from propulsion.report.files import all_or_nothing
    from propulsion.stage_split import split

    # the picture is moved into place when the block ends without an error
    with guard(), all_or_nothing(mission_file) as outputs:
        mission = load_mission(mission_file)
        outputs.protect(mission)
        if plot is not None:
            from propulsion.report.plots import check_plot_path

            check_plot_path(plot, force)
        counts = tuple(range(1, max_stages + 1))
        if json_output:
            result = split(mission, counts, losses)
        else:
            with stdout().status("Splitting…") as status:
                result = split(
                    mission, counts, losses, progress=lambda text: status.update(f"Flying: {text}")
                )
        if plot is not None:
            from propulsion.report.plots import save_figure, split_figure

            save_figure(split_figure(result, units.display()), plot, force)
    if json_output:
        emit_json(result.to_dict())
    else:
        from propulsion.report.tables import split_view

        stdout().print(split_view(result, units.display()))
    agree = abs(result.lagrange.liftoff_mass / result.direct.liftoff_mass - 1.0) < 1e-6
    ok = result.lagrange.feasible and result.direct.converged and agree
    if result.loss_aware is not None:
        ok = ok and result.loss_aware.found
    if not ok:
        raise typer.Exit(1)
