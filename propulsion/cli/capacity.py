"""`propulsion capacity`: the largest payload to orbit against altitude (and inclination)."""

from __future__ import annotations

import math
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

if TYPE_CHECKING:
    from rich.console import RenderableType

    from propulsion.studies.capacity import CapacityPoint, CapacityResult
    from propulsion.units import DisplayUnits


def parse_span(text: str, dimension: str, option: str) -> list[float]:
    """A list ("200 km, 300 km") or a span ("200 km..800 km:7") of quantities, SI."""
    from propulsion.errors import RequestError
    from propulsion.units import UnitParseError, parse_quantity

    def read(part: str) -> float:
        try:
            return parse_quantity(part, dimension)
        except UnitParseError as exc:
            raise RequestError(
                f"{option} {text!r}: cannot read {part.strip()!r}: {exc.reason}",
                f"{option} as a list ('200 km, 400 km') or a span ('200 km..800 km:7') of "
                f"values with units ({dimension})",
            ) from None

    text = text.strip()
    if ".." in text:
        span, _, count_text = text.partition(":")
        low_text, _, high_text = span.partition("..")
        try:
            count = int(count_text) if count_text.strip() else 5
        except ValueError:
            raise RequestError(
                f"{option} {text!r}: the count after ':' is not a whole number",
                f"{option} 'START..STOP:N', e.g. '200 km..800 km:7'",
            ) from None
        if not 2 <= count <= 200:
            raise RequestError(f"{option} {text!r}: {count} points", "from 2 to 200 points")
        low, high = read(low_text), read(high_text)
        return [low + (high - low) * i / (count - 1) for i in range(count)]
    return [read(part) for part in text.split(",") if part.strip()]


def capacity_view(result: CapacityResult, units: DisplayUnits) -> RenderableType:
    """The curve as a table (altitude rows, one payload column per inclination)."""
    from rich.console import Group
    from rich.text import Text

    from propulsion.report.tables import (
        ORBIT_UNITS,
        _column,
        _table,
        _with_unit,
        caution_panel,
        fit,
        mission_summary,
    )

    scale, label = ORBIT_UNITS.get(units.system, ORBIT_UNITS["si"])
    planes: list[float] = []
    for point in result.points:
        if not any(
            point.inclination == p or (math.isnan(p) and math.isnan(point.inclination))
            for p in planes
        ):
            planes.append(point.inclination)
    table = _table("Payload to orbit")
    table.add_column(f"Altitude ({label})", justify="right")
    mass = units.label("mass")
    for plane in planes:
        head = "Payload" if math.isnan(plane) else f"{math.degrees(plane):g}° incl."
        table.add_column(f"{head} ({mass})", justify="right")
        table.add_column("Kick", justify="right")
    altitudes = sorted({point.altitude for point in result.points})

    def point_at(altitude: float, plane: float) -> CapacityPoint:
        return next(
            p
            for p in result.points
            if p.altitude == altitude
            and (p.inclination == plane or (math.isnan(p.inclination) and math.isnan(plane)))
        )

    # each column with one count of decimals
    columns = [_column([a / scale for a in altitudes], None, units)]
    for plane in planes:
        points = [point_at(altitude, plane) for altitude in altitudes]
        payloads = _column([p.payload for p in points], "mass", units)
        columns.append([text if text != "—" else "out of reach" for text in payloads])
        columns.append(
            [f"{math.degrees(p.kick):.1f}°" if math.isfinite(p.payload) else "—" for p in points]
        )
    for row in zip(*columns, strict=True):
        table.add_row(*row)
    note = Text(style="dim")
    note.append(
        "Each point: the first leg moved to that circular orbit, the later legs dropped, the "
        f"mission's reserve of {_with_unit(result.reserve, 'speed', units)} kept; the payload "
        "found by root finding on the guided flight, the pitch kick chosen for it when the "
        "file leaves it open."
    )
    return Group(mission_summary(result.mission), fit(table), note, Text(), caution_panel())


def capacity_command(
    mission_file: Path = typer.Argument(
        ...,
        help="Mission file (TOML), guided to an orbit.",
        show_default=False,
        metavar="MISSION.toml",
    ),
    altitudes: str = typer.Option(
        "200 km..800 km:7",
        "--altitudes",
        help="Circular altitudes: a list ('200 km, 400 km') or a span ('200 km..800 km:7').",
    ),
    inclinations: str = typer.Option(
        "",
        "--inclinations",
        help="Also against inclination: a list ('40 deg, 50 deg') or a span; default the "
        "file's plane.",
        show_default=False,
    ),
    plot: Path | None = typer.Option(
        None,
        "--plot",
        help="Draw the curve (one per inclination) to this .png or .svg file.",
    ),
    force: bool = typer.Option(False, "--force", help="Overwrite the --plot file if it exists."),
    units: UnitSystem = UNITS_OPTION,
    json_output: bool = JSON_OPTION,
) -> None:
    """The largest payload to orbit against altitude (and inclination): each point a
    guided flight, sized by root finding.

    Example: propulsion capacity missions/orbital_launcher.toml --altitudes "200 km..800 km:7"

    Exit code 0 when the curve was found, 2 on bad input.
    """
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn

    from propulsion.mission import load_mission
    from propulsion.report.files import all_or_nothing
    from propulsion.studies.capacity import capacity

    with guard(), all_or_nothing(mission_file) as outputs:
        mission = load_mission(mission_file)
        outputs.protect(mission)
        heights = parse_span(altitudes, "length", "--altitudes")
        planes = parse_span(inclinations, "angle", "--inclinations") if inclinations else []
        if plot is not None:
            from propulsion.report.plots import check_plot_path

            check_plot_path(plot, force)
        with Progress(
            TextColumn("Flying guided ascents"),
            BarColumn(),
            MofNCompleteColumn(),
            console=stderr(),
            transient=True,
            disable=hide_progress(json_output),
        ) as bar:
            task = bar.add_task("", total=len(heights) * max(len(planes), 1))
            result = capacity(
                mission,
                heights,
                planes,
                progress=lambda done, total: bar.update(task, completed=done, total=total),
            )
        if plot is not None:
            from propulsion.report.plots import capacity_figure, save_figure

            save_figure(capacity_figure(result, units.display()), plot, force)
    if json_output:
        emit_json(result.to_dict())
        return
    stdout().print(capacity_view(result, units.display()))
