"""`propulsion sweep`: a grid over mission fields, each point budgeted and flown."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

import typer

from propulsion.cli.common import (
    JSON_OPTION,
    UNITS_OPTION,
    UnitSystem,
    emit_json,
    guard,
    hide_progress,
    stderr,
    stdout,
)
from propulsion.text import plural

if TYPE_CHECKING:
    from rich.console import RenderableType

    from propulsion.fields import FieldRef
    from propulsion.studies.sweep import SweepResult
    from propulsion.units import DisplayUnits

_OUTPUTS = (
    "apogee_m",
    "perigee_m",
    "margin",
    "max_mach",
    "max_dynamic_pressure_pa",
    "rail_exit_speed_m_s",
    "liftoff_mass_kg",
    "drag_loss_m_s",
    "meets_targets",
)


def sweep_view(
    result: SweepResult, units: DisplayUnits, sort: str | None, width: int = 80
) -> RenderableType:
    """The grid as a spreadsheet-like table, best values marked, then notes and caution."""
    from rich.console import Group
    from rich.text import Text

    from propulsion.report.sheet import fit_columns, sheet_view
    from propulsion.report.tables import caution_panel, mission_summary
    from propulsion.studies.compare import COLUMNS

    frame = result.to_frame()
    specs: dict[str, tuple[str, str | None, str | None]] = {}
    for axis in result.axes:
        dimension = None if axis.ref.is_count else axis.ref.dimension
        specs[axis.column] = (axis.ref.name, dimension, None)
    for name in _OUTPUTS:
        if name in frame.columns and not frame[name].isna().all():
            specs[name] = tuple(COLUMNS[name])  # type: ignore[assignment]
    parts: list[RenderableType] = [mission_summary(result.mission)]
    legs = result.mission.legs
    if legs and legs[0].target == "circular_orbit":
        from propulsion.units import orbit_units

        units = orbit_units(units)  # an orbit's perigee and margin in km (nmi)
    if len(frame):
        # the verdict column is the last to go when the terminal is narrow
        shown = fit_columns(
            frame, specs, units, width, keep=len(result.axes), last=("meets_targets",)
        )
        title = (
            f"Sweep of {', '.join(a.ref.name for a in result.axes)}: {plural(len(frame), 'point')}"
        )
        if sort:
            title += f", sorted by {sort}"
        parts.append(sheet_view(frame, {name: specs[name] for name in shown}, title, units))
        hidden = [specs[name][0] for name in specs if name not in shown]
        if hidden:
            parts.append(
                Text(
                    f"Not shown at this width: {', '.join(hidden)} (--json or --export).",
                    style="dim",
                )
            )
    for point, reason in result.skipped:
        where = ", ".join(
            f"{axis.ref.name} = {_point_value(value, axis.ref, units)}"
            for axis, value in zip(result.axes, point, strict=True)
        )
        parts.append(Text(f"Skipped {where}: {reason}", style="yellow"))
    parts.append(
        Text(
            "Each point is budgeted and flown as `propulsion fly --no-margin` does; the "
            "margin is in the target's own unit.",
            style="dim",
        )
    )
    parts.append(caution_panel())
    return Group(*parts)


def _point_value(value: float, ref: FieldRef, units: DisplayUnits) -> str:
    """A swept field's value at a grid point, in display units."""
    from propulsion.units import format_plain, to_display

    if ref.is_count:
        return f"{value:,.0f}"
    shown = to_display(value, ref.dimension, units)
    return f"{format_plain(shown, 6)} {units.label(ref.dimension)}".strip()


def sweep_command(
    mission_file: Path = typer.Argument(
        ..., help="Mission file (TOML).", show_default=False, metavar="MISSION.toml"
    ),
    settings: list[str] = typer.Option(
        ...,
        "--set",
        help="FIELD=START..STOP:N, e.g. 'stage.booster.inert_mass=0.5 kg..1 kg:6'; repeat "
        "for a grid.",
        show_default=False,
    ),
    sort: str | None = typer.Option(None, "--sort", "-s", help="Sort by this column."),
    export: Path | None = typer.Option(
        None, "--export", help="Also write the table to a .csv, .xlsx or .md file."
    ),
    plot: Path | None = typer.Option(
        None,
        "--plot",
        help="Draw the apogee (or, without an apogee, the margin) against one swept field, "
        "or as a contour map over two, to this .png or .svg file.",
    ),
    force: bool = typer.Option(
        False, "--force", help="Overwrite the --export or --plot file if it exists."
    ),
    units: UnitSystem = UNITS_OPTION,
    json_output: bool = JSON_OPTION,
) -> None:
    """Sweep one or more fields over a grid: every point budgeted and flown.

    Example: propulsion sweep missions/two_stage_competition.toml --set "vehicle.payload=0.1 kg..0.5 kg:5"

    Exit code 0 when the sweep ran, 2 on bad input (a field that does not exist gets a
    suggestion).
    """  # noqa: E501 (the example is one command line)
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn

    from propulsion.mission import load_mission
    from propulsion.report.export_tables import check_export_path, export_table
    from propulsion.report.files import all_or_nothing
    from propulsion.studies.compare import resolve_column
    from propulsion.studies.sweep import parse_axis, sweep

    # the outputs are written together when every one of them is ready, or not at all
    with guard(), all_or_nothing(mission_file) as outputs:
        mission = load_mission(mission_file)
        outputs.protect(mission)
        axes = [parse_axis(mission.document, text) for text in settings]
        sort_column = resolve_column(sort) if sort is not None else None
        if export is not None:
            check_export_path(export, force)
        if plot is not None:
            from propulsion.report.plots import PlotError, check_plot_path

            check_plot_path(plot, force)
            if len(axes) > 2:
                raise PlotError(
                    f"a sweep picture shows one or two swept fields; --set gives {len(axes)}",
                    "one or two --set options with --plot",
                )
        with Progress(
            TextColumn("Sweeping"),
            BarColumn(),
            MofNCompleteColumn(),
            console=stderr(),
            transient=True,
            disable=hide_progress(json_output),
        ) as bar:
            task = bar.add_task("", total=1)
            result = sweep(
                mission,
                axes,
                progress=lambda done, total: bar.update(task, completed=done, total=total),
            )
        if sort_column is not None and sort_column in result.frame.columns:
            from propulsion.studies.compare import COLUMNS

            better = COLUMNS[sort_column].better
            result.frame = result.frame.sort_values(
                sort_column, ascending=better != "max", kind="stable", na_position="last"
            ).reset_index(drop=True)
        if export is not None:
            export_table(result.frame, export, force=force, units=units.display())
        if plot is not None:
            from propulsion.report.plots import save_figure, sweep_figure

            figure = sweep_figure(result, units.display(), _plot_output(result))
            save_figure(figure, plot, force)
    if json_output:
        emit_json(result.to_dict())
        return
    stdout().print(sweep_view(result, units.display(), sort_column, width=stdout().width))


def _plot_output(result: SweepResult) -> str:
    """The column --plot draws: the apogee when there is one, else the target margin."""
    frame = result.frame
    legs = result.mission.legs
    apogee = "apogee_m" in frame.columns and bool(frame["apogee_m"].notna().any())
    if apogee and (not legs or legs[0].target == "apogee"):
        return "apogee_m"
    if "margin" in frame.columns and frame["margin"].notna().any():
        return "margin"
    return "apogee_m"
