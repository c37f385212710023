"""`propulsion compare`: budget and fly several mission files and show them side by side."""

from __future__ import annotations

import math
from dataclasses import replace
from pathlib import Path
from typing import TYPE_CHECKING, Any

import typer

from propulsion.cli.common import (
    JSON_OPTION,
    UNITS_OPTION,
    UnitSystem,
    emit_json,
    guard,
    stderr,
    stdout,
)

if TYPE_CHECKING:
    import pandas as pd
    from rich.console import RenderableType

    from propulsion.studies.compare import CompareResult
    from propulsion.units import DisplayUnits

__all__ = ["compare_command", "compare_view"]

ROUND_OFF = 1e-6
"""Values closer to zero than this [SI unit of the column] count as zero when the best of
a column is chosen: the flight's own resolution is rtol × max(ideal Δv, 100 m/s) =
1e-6 m/s at the default rtol of 1e-8 (``ascent.FlightResult.resolution``)."""


def _plural(count: int, word: str) -> str:
    """``"1 option"``, ``"3 options"``."""
    return f"{count} {word}" if count == 1 else f"{count} {word}s"


def _settled(frame: pd.DataFrame, units: DisplayUnits, digits: int = 4) -> pd.DataFrame:
    """The frame with round-off set to zero and near-ties made exact, for the best mark.

    In each column that has a better direction, a value within :data:`ROUND_OFF` of zero
    becomes 0, and a value that shows as the same text as the column's best (``digits``
    significant figures in display units) takes the best's value: the best mark
    (:func:`propulsion.report.sheet.best_rows`) then goes to all of them or, when every
    value ties, to none, never to one of two numbers that read alike.
    """
    from propulsion.report.export_tables import unit_dimension
    from propulsion.studies.compare import COLUMNS
    from propulsion.units import format_number, to_display

    frame = frame.copy()
    for name in frame.columns:
        spec = COLUMNS.get(name)
        if spec is None or spec.better not in ("min", "max"):
            continue
        unit_column = f"{name}_unit"
        dimensions: list[str | None] = [spec.dimension] * len(frame)
        if spec.dimension is None and unit_column in frame.columns:
            dimensions = [unit_dimension(unit) for unit in frame[unit_column]]
        values: list[Any] = list(frame[name])
        numbers = {
            i: 0.0 if abs(float(v)) <= ROUND_OFF else float(v)
            for i, v in enumerate(values)
            if isinstance(v, int | float) and not isinstance(v, bool) and math.isfinite(v)
        }
        if len(numbers) < 2:
            continue
        best = min(numbers.values()) if spec.better == "min" else max(numbers.values())

        def shown(value: float, dimension: str | None) -> str:
            number = to_display(value, dimension, units) if dimension else value
            return format_number(number, digits)

        for i, value in numbers.items():
            if shown(value, dimensions[i]) == shown(best, dimensions[i]):
                value = best
            values[i] = value
        frame[name] = values
    return frame


def compare_view(
    result: CompareResult,
    units: DisplayUnits,
    columns: list[str] | None = None,
    width: int = 80,
) -> RenderableType:
    """What `compare` shows: the options table, notes, the overall verdict and the caution.

    Parameters
    ----------
    result : CompareResult
        What :func:`propulsion.studies.compare.compare` returned (SI units).
    units : DisplayUnits
        Display units of the table.
    columns : list of str or None
        Full column names to show; None shows the default columns that hold a value,
        as many as fit ``width``.
    width : int
        Terminal width [characters].

    Returns
    -------
    RenderableType
        A rich renderable.

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2013,
       sections 11.2 to 11.5 (the quantities compared: ideal delta-v and its losses).
    """
    from rich.console import Group
    from rich.text import Text

    from propulsion.report.sheet import fit_columns, sheet_view, split_columns
    from propulsion.report.tables import caution_panel, verdict_text
    from propulsion.studies.compare import COLUMNS, NAME_WIDTH, option_names, resolve_columns

    frame = _settled(result.to_frame(), units)
    # long names give way to the file stem or are cut and numbered: rows never read alike
    names = option_names(list(frame["name"]), list(frame["source"]), NAME_WIDTH)
    frame["name"] = names
    hidden: list[str] = []
    if columns is None:
        wanted = [
            name
            for name in resolve_columns(None, list(frame.columns))
            if name == "name" or not frame[name].isna().all()
        ]
        fitted = fit_columns(frame, {name: COLUMNS[name] for name in wanted}, units, width)
        hidden = [COLUMNS[name].title for name in wanted if name not in fitted]
        blocks = [[name for name in COLUMNS if name in fitted]]  # in the table's order
    else:
        # chosen columns are all shown: in blocks that fit, each starting with the name
        blocks = split_columns(frame, {name: COLUMNS[name] for name in columns}, units, width)
    count = len(result.rows)
    title = f"{count} option{'s' if count != 1 else ''} compared"
    if result.sort is not None:
        name, descending = result.sort
        order = "highest first" if descending else "lowest first"
        title += f", sorted by {COLUMNS[name].title} ({order})"
    parts: list[RenderableType] = []
    for index, block in enumerate(blocks):
        heading = title if index == 0 else f"{title} (continued, {index + 1}/{len(blocks)})"
        parts.append(sheet_view(frame, {name: COLUMNS[name] for name in block}, heading, units))
    shown = {name for block in blocks for name in block}
    notes = Text(style="dim")
    if result.changes:
        notes.append("Changed in every file before it flew: " + "; ".join(result.changes) + ".\n")
    files = zip(names, result.rows, strict=True)
    notes.append("Files: " + "; ".join(f"{name} = {row.source}" for name, row in files))
    notes.append(
        "\nIdeal Δv is the budget's (every stage burnt completely); the losses, apogee, "
        "orbit, margins and 'Flight meets' come from the flown ascent of the first leg, as "
        "`propulsion fly` computes them."
    )
    if "margin" in shown:
        notes.append(
            " Target margin: in the target's own unit (for an orbit, how far perigee and "
            "apogee lie inside the tolerance band)."
        )
    if not result.margin_computed:
        notes.append(
            "\n--no-margin: the propulsion and payload margins were not computed; the verdicts "
            "judge the targets alone."
        )
    if hidden:
        notes.append(
            f"\nNot shown at this width: {', '.join(hidden)} (use --columns, a wider "
            "terminal, --json or --export)."
        )
    parts.append(notes)
    rows = zip(names, result.rows, strict=True)
    short = [name for name, row in rows if row.meets_targets is False]
    if short:
        falls = "falls" if len(short) == 1 else "fall"
        line = verdict_text(
            False,
            f"{len(short)} of {_plural(count, 'option')} {falls} short of "
            f"{'its' if len(short) == 1 else 'their'} flight target: " + ", ".join(short) + ".",
        )
    else:
        line = verdict_text(True, f"Every option ({count}) meets its flight target.")
    parts += [Text(), line, caution_panel()]
    return Group(*parts)


def compare_command(
    mission_files: list[Path] = typer.Argument(
        ...,
        help="Mission files (TOML), one per option.",
        show_default=False,
        metavar="MISSION.toml",
    ),
    sort: str | None = typer.Option(
        None,
        "--sort",
        "-s",
        help="Sort by this column (apogee, liftoff_mass, drag_loss, propulsion_margin, ...); "
        "best first by default.",
        show_default=False,
    ),
    descending: bool | None = typer.Option(
        None,
        "--descending/--ascending",
        help="Override the sort direction (default: best first for the column).",
        show_default=False,
    ),
    columns: str | None = typer.Option(
        None,
        "--columns",
        "-c",
        help="Columns to show, separated by commas, or 'all' (default: the main ones that fit).",
        show_default=False,
    ),
    export: Path | None = typer.Option(
        None,
        "--export",
        help="Also write the table to a .csv, .xlsx or .md file (in --units, every column).",
        show_default=False,
    ),
    force: bool = typer.Option(False, "--force", help="Overwrite the --export file if it exists."),
    margin: bool = typer.Option(
        True,
        "--margin/--no-margin",
        help="Find each delta-v margin by root finding (more flights).",
    ),
    settings: list[str] | None = typer.Option(
        None,
        "--set",
        help="Change a field in every file before it flies: FIELD=VALUE with the unit, e.g. "
        'vehicle.payload="0.3 kg" (repeat for more fields).',
        show_default=False,
        metavar="FIELD=VALUE",
    ),
    target: str | None = typer.Option(
        None,
        "--target",
        help='A new value for every first leg\'s target: an apogee or orbit altitude ("3 km") '
        'or a burnout speed ("300 m/s").',
        show_default=False,
        metavar="VALUE",
    ),
    units: UnitSystem = UNITS_OPTION,
    json_output: bool = JSON_OPTION,
) -> None:
    """Compare options: budget and fly each mission file, and show them side by side.

    One row per file: liftoff mass, motor impulse, ideal delta-v, the losses of the flight,
    apogee or orbit, margins and verdicts. The best value in each column is marked with ★.
    --set and --target change every file the same way before it flies (the files on disk
    stay as they are).

    Example: propulsion compare missions/hobby_single_stage.toml missions/two_stage_competition.toml --sort apogee

    Example: propulsion compare missions/*.toml --set vehicle.payload="0.3 kg" --target "3 km"

    Exit code 0 when every option meets its flight target, 1 when one falls short, 2 on bad
    input (the message names the file).
    """  # noqa: E501 (the example is one command line)
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn

    from propulsion.mission import load_mission
    from propulsion.report.export_tables import check_export_path, export_table
    from propulsion.report.files import all_or_nothing
    from propulsion.studies.compare import (
        COLUMNS,
        apply_changes,
        compare,
        describe_changes,
        resolve_column,
        resolve_columns,
    )

    # the export is moved into place when the block ends without an error
    with guard(), all_or_nothing(*mission_files) as outputs:
        # everything that can be wrong with the input is found before anything flies
        sort_column = resolve_column(sort) if sort is not None else None
        shown = resolve_columns(columns) if columns is not None else None
        missions = [load_mission(path) for path in mission_files]
        outputs.protect(*missions)
        if export is not None:
            check_export_path(export, force)
        changed = apply_changes(missions, settings or (), target)
        status = stderr()
        with Progress(
            TextColumn("Flying {task.description}"),
            BarColumn(),
            MofNCompleteColumn(),
            console=status,
            transient=True,
            # on a pipe or a file the bar would leave an empty line behind
            disable=json_output or not status.is_terminal,
        ) as bar:
            task = bar.add_task("", total=len(missions))

            def advance(done: int, total: int, current: str) -> None:
                bar.update(task, completed=done, total=total, description=current)

            result = compare(changed, margin=margin, progress=advance)
        result = replace(result, changes=describe_changes(settings or (), target))
        if sort_column is not None:
            result = result.sorted_by(sort_column, descending)
        if export is not None:
            dimensions = {name: spec.dimension for name, spec in COLUMNS.items()}
            export_table(
                result.to_frame(),
                export,
                force=force,
                units=units.display(),
                dimensions=dimensions,
                sheet_name="compare",
            )
    if json_output:
        emit_json(result.to_dict())
    else:
        console = stdout()
        console.print(compare_view(result, units.display(), shown, console.width))
    if not result.all_meet_targets:
        raise typer.Exit(1)
