"""Terminal tables (rich) for the ledgers, findings and data listings.

Values arrive in SI and are converted to the chosen display units here.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterable, Sequence
from typing import TYPE_CHECKING, Any

from rich import box
from rich.console import Console, Group, RenderableType
from rich.panel import Panel
from rich.table import Table
from rich.text import Text

from propulsion.atmosphere import TOP_ALTITUDE
from propulsion.report.cautions import SAFETY_CAUTION, SAFETY_TITLE
from propulsion.text import plural
from propulsion.units import (
    DisplayUnits,
    column_decimals,
    format_column,
    format_fixed,
    format_number,
    format_plain,
    to_display,
)

if TYPE_CHECKING:
    from propulsion.ascent import FlightResult
    from propulsion.catalog import PropellantFamily
    from propulsion.ledger import BudgetResult
    from propulsion.margins import FlightVerdict
    from propulsion.mission import Mission
    from propulsion.plausibility import Finding
    from propulsion.sizing import SizingResult, SizingSolution
    from propulsion.stage_split import SplitResult
    from propulsion.studies.scatter import ScatterResult
    from propulsion.vehicle import DragCurve, Motor

__all__ = [
    "budget_view",
    "caution_panel",
    "check_view",
    "closure_text",
    "data_view",
    "findings_view",
    "flight_view",
    "mission_summary",
    "print_view",
    "scatter_view",
    "sizing_view",
    "sparkline",
    "split_view",
    "verdict_text",
]

_BLOCKS = " ▁▂▃▄▅▆▇█"
"""Unicode lower blocks from empty to full, in eighths of a character cell."""
SPARKLINE_WIDTH = 48
"""Columns of the altitude sparkline under the flight's events [characters]."""


def _num(value: float, digits: int = 4) -> str:
    return format_number(value, digits) if math.isfinite(value) else "—"


def _q(value: float, dimension: str, units: DisplayUnits, digits: int = 4) -> str:
    return _num(to_display(value, dimension, units), digits)


def _plain(value: float, dimension: str | None, units: DisplayUnits, digits: int = 4) -> str:
    """A quantity in running text, in display units, without its unit: ``digits``
    significant figures without trailing zeros (``30 m/s`` from "30 m/s")."""
    shown = value if dimension is None else to_display(value, dimension, units)
    return format_plain(shown, digits)


def _with_unit(value: float, dimension: str, units: DisplayUnits, digits: int = 4) -> str:
    """A quantity in running text with its display unit: ``1,114 m``, ``0.15 kg``."""
    return f"{_plain(value, dimension, units, digits)} {units.label(dimension)}".strip()


def _column(
    values: Iterable[float],
    dimension: str | None,
    units: DisplayUnits,
    digits: int = 4,
    zero: float = 0.0,
) -> list[str]:
    """SI values of one quantity (a table column, or a row of a sheet) in display units,
    all with the decimals that give the largest ``digits`` significant figures; within
    ``zero`` [SI] of zero shown as 0."""
    values = [float(v) for v in values]
    if dimension is None:
        return format_column(values, digits, zero)
    shown = [to_display(v, dimension, units) for v in values]
    return format_column(shown, digits, abs(to_display(zero, dimension, units)))


ORBIT_UNITS = {"si": (1000.0, "km"), "us": (1852.0, "nmi")}
"""Orbit altitudes are shown in km (nautical miles in US units): (metres per unit, label)."""


def orbit_length(value: float, units: DisplayUnits) -> str:
    """An orbit's altitude (or a length along it) in km or nautical miles, to the metre
    (three decimals of km; of a nautical mile, 1.852 m), with its unit."""
    scale, label = ORBIT_UNITS.get(units.system, ORBIT_UNITS["si"])
    return f"{format_fixed(value / scale, 3)} {label}"


TARGET_NAMES = {
    "delta_v": "delta-v",
    "apogee": "apogee",
    "burnout_speed": "burnout-speed",
    "circular_orbit": "circular-orbit",
    "transfer_burn": "transfer-burn",
}
"""A leg target kind (:data:`propulsion.targets.TARGET_KINDS`) as words: "the
circular-orbit target"."""


def target_name(kind: str) -> str:
    """A leg target kind in words (``circular_orbit`` → ``circular-orbit``)."""
    return TARGET_NAMES.get(kind, kind.replace("_", " "))


def family_name(key: str | None) -> str:
    """A propellant family's short readable name: its name in data/propellants.csv up to
    the first parenthesis ("Potassium nitrate / sucrose"); "—" for none, and the key with
    spaces for a family the table does not list."""
    if not key:
        return "—"
    from propulsion.catalog import propellant_families
    from propulsion.errors import PropulsionError

    try:
        family = propellant_families().get(key)
    except (PropulsionError, OSError):  # a name is not worth failing a screen for
        family = None
    if family is None or not family.name:
        return key.replace("_", " ")
    return family.name.split(" (")[0].strip()


def _head(title: str, dimension: str, units: DisplayUnits) -> str:
    label = units.label(dimension)
    return f"{title} ({label})" if label else title


def _table(title: str) -> Table:
    return Table(
        title=title,
        title_justify="left",
        box=box.SIMPLE_HEAVY,
        title_style="bold",
        pad_edge=False,
        collapse_padding=True,
    )


def caution_panel() -> Panel:
    """The safety caution as a conspicuous panel."""
    return Panel(
        Text(SAFETY_CAUTION),
        title=f"[bold]{SAFETY_TITLE}[/bold]",
        border_style="red",
        expand=True,
    )


def mission_summary(mission: Mission) -> Text:
    """One or two lines naming the mission and its file."""
    text = Text()
    text.append(mission.name, style="bold")
    text.append(f"  ({mission.source})", style="dim")
    if mission.description:
        text.append(f"\n{mission.description}")
    return text


def verdict_text(meets: bool | None, text: str, fail_mark: str = "SHORT") -> Text:
    """The verdict line, coloured by outcome; ``fail_mark`` names a failure."""
    style = "bold green" if meets else ("bold red" if meets is False else "bold yellow")
    mark = "PASS" if meets else (fail_mark if meets is False else "NO TARGET")
    line = Text()
    line.append(f"{mark}  ", style=style)
    line.append(text, style=style)
    return line


def findings_view(findings: Sequence[Finding]) -> RenderableType:
    """Plausibility warnings, each with its rule and source."""
    if not findings:
        return Text("No plausibility warnings.", style="dim")
    text = Text()
    text.append(f"Plausibility warnings ({len(findings)})\n", style="bold yellow")
    most = 20
    for finding in findings[:most]:
        text.append("! ", style="bold yellow")
        text.append(f"{finding.subject}: ", style="yellow")
        text.append(f"{finding.message}.\n")
        text.append(f"  rule: {finding.rule}; source: {finding.source}\n", style="dim")
    if len(findings) > most:
        text.append(f"… and {len(findings) - most:,} more (--json lists all)\n", style="dim")
    return text


SHEET_COLUMNS = 5
"""A sheet of more items than this (stages, legs, segments) shows the first and last few,
with a column saying how many are left out (the JSON has them all): a terminal cannot show
a thousand columns, and rendering them would take longer than the computation."""


def _elide(count: int) -> list[int | None]:
    """Which items a sheet shows: all, or the first three and the last with a gap."""
    if count <= SHEET_COLUMNS:
        return list(range(count))
    return [0, 1, 2, None, count - 1]


def _sheet(
    title: str,
    names: Sequence[str],
    rows: Sequence[tuple[str, str, Sequence[str]]],
    emphasise: Iterable[str] = (),
) -> RenderableType:
    """A table with one column per item (stage, leg) and one row per quantity, fitted to
    the terminal without breaking a word (see :func:`fit`)."""
    shown = _elide(len(names))
    hidden = len(names) - sum(1 for i in shown if i is not None)
    if hidden:
        title += f" ({len(names):,} items; {hidden:,} not shown, --json lists all)"
    table = _table(title)
    table.add_column("")
    table.add_column("Unit", style="dim", no_wrap=True)
    for i in shown:
        if i is None:
            table.add_column(f"… {hidden:,} more", justify="center", style="dim")
        else:
            table.add_column(names[i], justify="right", overflow="fold")
    bold = set(emphasise)
    for label, unit, values in rows:
        cells = ["…" if i is None else values[i] for i in shown]
        table.add_row(label, unit, *cells, style="bold" if label in bold else None)
    return fit(table)


def fit(table: Table) -> RenderableType:
    """The table narrowed to the terminal's width the way a reader wants: every column
    keeps at least its longest word (a number or a name is never broken or cut), the
    rest of the room shared out (:class:`propulsion.report.sheet._Fitted`)."""
    from propulsion.report.sheet import _Fitted

    return _Fitted(table)


def _first_lines(lines: Sequence[str], most: int = 12) -> str:
    """Lines of notes, at most ``most`` of them with a count of the rest."""
    if len(lines) <= most:
        return "".join(lines)
    return "".join(lines[:most]) + f"… and {len(lines) - most:,} more (--json lists all)\n"


def thrust_label(stages: Sequence[Any]) -> str:
    """The stage table's thrust row: a motor's thrust is the average thrust of its curve
    (at ignition it is 0 N), an engine's the thrust it gives at ignition."""
    motors = {row.impulse_class is not None for row in stages}  # engines have no class
    if motors == {True}:
        return "Average thrust"
    if motors == {False}:
        return "Thrust at ignition"
    return "Thrust (motors: average)"


def budget_view(result: BudgetResult, units: DisplayUnits) -> RenderableType:
    """The ideal delta-v budget: stage sheet, leg sheet, verdict, warnings, caution."""
    parts: list[RenderableType] = [mission_summary(result.mission)]
    st = result.stages
    mass, speed = units.label("mass"), units.label("speed")

    def col(getter: object, dimension: str | None = None, digits: int = 4) -> list[str]:
        # one quantity of every stage: the same decimals along the row
        return _column([getattr(row, str(getter)) for row in st], dimension, units, digits)

    stage_rows: list[tuple[str, str, Sequence[str]]] = [
        ("Propulsion", "", [row.propulsion for row in st]),
        ("Propellant family", "", [family_name(row.propellant_family) for row in st]),
        ("Initial mass", mass, col("initial_mass", "mass")),
        ("Final mass", mass, col("final_mass", "mass")),
        ("Usable propellant", mass, col("usable_propellant", "mass")),
        ("Inert mass", mass, col("inert_mass", "mass")),
        ("Mass ratio", "", col("mass_ratio")),
        ("Propellant mass fraction", "", col("propellant_mass_fraction", digits=3)),
        ("Structural coefficient", "", col("structural_coefficient", digits=3)),
        ("Payload ratio", "", col("payload_ratio", digits=3)),
        ("Specific impulse", "s", col("isp")),
        ("Burn time", "s", col("burn_time", digits=3)),
        # a motor's thrust is its curve's average, an engine's is what it gives at ignition
        (thrust_label(st), units.label("force"), col("thrust", "force")),
        ("Thrust-to-weight", "", col("thrust_to_weight", digits=3)),
        ("Total impulse", units.label("impulse"), col("total_impulse", "impulse")),
        ("Impulse class", "", [row.impulse_class or "—" for row in st]),
        ("Ideal Δv", speed, col("ideal_delta_v", "speed")),
    ]
    parts.append(
        _sheet(
            "Stages (in firing order; masses include everything above)",
            [row.name for row in st],
            stage_rows,
            emphasise=["Ideal Δv"],
        )
    )
    parts.append(
        Text(
            f"Stack ideal Δv: {_with_unit(result.total_ideal_delta_v, 'speed', units)}",
            style="bold",
        )
    )

    if result.legs:
        legs = result.legs

        def leg_col(getter: str, dimension: str) -> list[str]:
            return _column([getattr(leg, getter) for leg in legs], dimension, units)

        leg_rows: list[tuple[str, str, Sequence[str]]] = [
            ("Target", "", [target_name(leg.target) for leg in legs]),
            ("Stages", "", [", ".join(leg.stages) for leg in legs]),
            ("Required Δv", speed, leg_col("required_delta_v", "speed")),
            ("Reserve", speed, leg_col("reserve", "speed")),
            ("Available at start", speed, leg_col("available_delta_v", "speed")),
            ("Delivered", speed, leg_col("delivered_delta_v", "speed")),
            ("Margin", speed, leg_col("margin", "speed")),
            (
                "Margin",
                "%",
                [
                    f"{leg.margin_fraction * 100:.1f}"
                    if math.isfinite(leg.margin_fraction)
                    else "—"
                    for leg in legs
                ],
            ),
            ("Propellant used", mass, leg_col("propellant_used", "mass")),
            ("Propellant left in its stages", mass, leg_col("propellant_remaining", "mass")),
            ("Met", "", ["yes" if leg.met else "NO" for leg in legs]),
        ]
        parts.append(
            _sheet(
                "Mission legs (flown in order)", [leg.name for leg in legs], leg_rows, ["Margin"]
            )
        )
        notes = Text(style="dim")
        lines = []
        for leg, mission_leg in zip(legs, result.mission.legs, strict=True):
            terms = " ".join(
                f"{'+' if value >= 0 else '−'} {_with_unit(abs(value), 'speed', units)} ({label})"
                for label, value in mission_leg.requirement.terms
            ).lstrip("+ ")
            lines.append(f"{leg.name}: required = {terms}\n")
        notes.append(_first_lines(lines))
        margins = result.mission.margins
        stages = result.mission.vehicle.stages
        residuals = ", ".join(
            f"{stage.name} {stage.residual_fraction:.1%}" for stage in stages[:SHEET_COLUMNS]
        ) + (f" and {len(stages) - SHEET_COLUMNS:,} more" if len(stages) > SHEET_COLUMNS else "")
        notes.append(
            f"Mission reserve {_with_unit(margins.reserve, 'speed', units)}; Δv of the "
            "propellant left after the last leg "
            f"{_with_unit(result.leftover_delta_v, 'speed', units)}; unusable residual "
            f"propellant: {residuals}.\n"
            "Ideal Δv: Tsiolkovsky rocket equation with g0 = 9.80665 m/s² (vacuum Isp for "
            "engines, delivered Isp for motors). Losses are in the loss allowances; "
            "`propulsion fly` computes them."
        )
        parts.append(notes)
    parts.append(Text())
    parts.append(verdict_text(result.verdict.meets_targets, result.verdict.describe(units)))
    parts.append(findings_view(result.findings))
    parts.append(caution_panel())
    return Group(*parts)


def print_view(renderables: Iterable[RenderableType], console: Console | None = None) -> None:
    """Print renderables to the console (stdout by default)."""
    console = console or Console()
    for renderable in renderables:
        console.print(renderable)


def check_view(result: BudgetResult, units: DisplayUnits) -> RenderableType:
    """What `check` shows: the file is valid, the vehicle in brief, warnings, caution."""
    mission = result.mission
    vehicle = mission.vehicle
    header = Text()
    header.append("Valid mission file: ", style="bold green")
    header.append(mission.source)
    header.append(
        f"\n{mission.name}: {plural(len(vehicle.stages), 'stage')}, "
        f"{plural(len(mission.legs), 'leg')}, liftoff mass "
        f"{_with_unit(vehicle.liftoff_mass, 'mass', units)}, payload "
        f"{_with_unit(vehicle.payload_mass, 'mass', units)}"
    )
    table = _table("Vehicle")
    table.add_column("Stage")
    table.add_column("Propulsion")
    table.add_column("Propellant family")
    table.add_column(_head("Inert", "mass", units), justify="right")
    table.add_column(_head("Propellant", "mass", units), justify="right")
    table.add_column("Isp (s)", justify="right")
    table.add_column("T/W at ignition", justify="right")
    stages = result.stages
    columns = (
        _column([row.inert_mass for row in stages], "mass", units),
        _column([row.propellant_mass for row in stages], "mass", units),
        _column([row.isp for row in stages], None, units),
        _column([row.thrust_to_weight for row in stages], None, units, 3),
    )
    for row, *numbers in zip(stages, *columns, strict=True):
        table.add_row(row.name, row.propulsion, family_name(row.propellant_family), *numbers)
    return Group(header, fit(table), findings_view(result.findings), caution_panel())


def data_view(
    families: dict[str, PropellantFamily],
    motors: Sequence[Motor],
    curves: Sequence[DragCurve],
    units: DisplayUnits,
    files: Sequence[str | None] = (),
) -> RenderableType:
    """What `data` shows: propellant families, motors and drag curves.

    ``files`` runs beside ``motors``: the curve file of each of the user's own motors
    (``data --motors``), None for a shipped one. The user's motors are marked ``*`` in the
    motor table and their files listed under it.
    """
    own = {i: file for i, file in enumerate(files) if file is not None}
    fam = _table("Propellant families (data/propellants.csv)")
    # the key is what a mission file names; headers wrap between their words
    fam.add_column("Key", no_wrap=True)
    fam.add_column("Isp (s)")
    fam.add_column(_head("Density", "density", units), justify="right")
    fam.add_column("Stage fraction")
    fam.add_column("Min T/W", justify="right")
    rows = list(families.values())
    density = _column([f.density for f in rows], "density", units)
    least = _column([f.liftoff_thrust_to_weight_min for f in rows], None, units, 2)
    for f, shown_density, shown_least in zip(rows, density, least, strict=True):
        fam.add_row(
            f.key,
            f"{f.isp_min:.0f}–{f.isp_max:.0f}",
            shown_density,
            f"{f.stage_mass_fraction_min:.2f}–{f.stage_mass_fraction_max:.2f}",
            shown_least,
        )
    fam.caption = "Full names and sources: `propulsion data --json` or data/propellants.csv."
    title = "Demo motors (data/motors/, invented for the examples)"
    if own:
        title = "Motors (data/motors/: invented for the examples; *: yours)"
    mot = _table(title)
    mot.add_column("Name", no_wrap=True)
    mot.add_column("Class", justify="center")
    mot.add_column(_head("Total impulse", "impulse", units), justify="right")
    mot.add_column(_head("Average thrust", "force", units), justify="right")
    mot.add_column("Burn (s)", justify="right")
    mot.add_column("Isp (s)", justify="right")
    mot.add_column(_head("Propellant", "mass", units), justify="right")
    mot.add_column(_head("Loaded", "mass", units), justify="right")
    mot.add_column("Diameter (mm)", justify="right")
    columns = (
        _column([m.total_impulse for m in motors], "impulse", units),
        _column([m.average_thrust for m in motors], "force", units),
        _column([m.burn_time for m in motors], None, units, 3),
        _column([m.specific_impulse for m in motors], None, units, 3),
        _column([m.propellant_mass for m in motors], "mass", units, 3),
        _column([m.loaded_mass for m in motors], "mass", units, 3),
    )
    for i, (m, *numbers) in enumerate(zip(motors, *columns, strict=True)):
        mot.add_row(
            f"{m.name}*" if i in own else m.name,
            m.impulse_class,
            *numbers,
            f"{m.diameter * 1000:.0f}" if m.diameter else "—",
        )
    drag = _table("Drag curves (data/drag/, rough defaults)")
    drag.add_column("Name", no_wrap=True)
    drag.add_column("Mach range")
    drag.add_column("Cd range")
    for c in curves:
        drag.add_row(
            c.name,
            f"{c.mach[0]:g}–{c.mach[-1]:g}",
            f"{c.drag_coefficient.min():.2f}–{c.drag_coefficient.max():.2f}",
        )
    if not own:
        return Group(fit(fam), fit(mot), fit(drag))
    listed = Text("* Your motors:", style="dim")
    for i, file in own.items():
        listed.append(f"\n  {motors[i].name} = {file}", style="dim")
    return Group(fit(fam), fit(mot), listed, Text(), fit(drag))


def sparkline(values: Sequence[float], rows: int = 1) -> list[str]:
    """A sparkline of values in Unicode block characters, one character per value.

    Each value is scaled between the smallest and the largest of the finite values to a
    height of 1 to ``8 * rows`` eighths of a character cell; the smallest shows as the
    lowest block, the largest fills every row. Non-finite values are left blank.

    Parameters
    ----------
    values : sequence of float
        The values, in order [any unit].
    rows : int
        Lines of text the sparkline spans [dimensionless, 1 or more].

    Returns
    -------
    list of str
        ``rows`` lines, the top line first, each as long as ``values``.

    References
    ----------
    .. [1] The Unicode Standard, Version 15.0, chart "Block Elements" (U+2580-U+259F):
       U+2581 to U+2588, the lower one to eight eighths blocks.
    """
    if rows < 1:
        raise ValueError(f"rows must be at least 1, got {rows}")
    finite = [v for v in values if math.isfinite(v)]
    low, high = (min(finite), max(finite)) if finite else (0.0, 0.0)
    steps = 8 * rows
    levels = []
    for value in values:
        if not math.isfinite(value):
            levels.append(0)
        elif high > low:
            levels.append(1 + round((value - low) / (high - low) * (steps - 1)))
        else:
            levels.append(1)
    return [
        "".join(_BLOCKS[min(max(level - 8 * row, 0), 8)] for level in levels)
        for row in range(rows - 1, -1, -1)
    ]


def _altitude_sparkline(result: FlightResult, units: DisplayUnits) -> Text | None:
    """Two lines of altitude against time, with the start and end times and the apogee."""
    import numpy as np

    path = result.outcome.trajectory
    if path is None:
        return None
    time = path.time
    altitude = path["altitude"]
    keep = np.isfinite(time) & np.isfinite(altitude)
    time, altitude = time[keep], altitude[keep]
    if time.size < 2 or not time[-1] > time[0]:
        return None
    grid = np.linspace(time[0], time[-1], SPARKLINE_WIDTH)
    top, bottom = sparkline([float(v) for v in np.interp(grid, time, altitude)], rows=2)
    length = units.label("length")
    if math.isfinite(result.apogee):
        peak = f"apogee {_q(result.apogee, 'length', units)} {length}"
    else:
        peak = f"highest {_q(float(altitude.max()), 'length', units)} {length}"
    start = f"{_num(float(time[0]))} s"
    text = Text()
    text.append("Altitude against time\n", style="bold")
    text.append(f"{' ' * len(start)} {top} {peak}\n")
    text.append(f"{start} {bottom} {_num(float(time[-1]))} s")
    return text


def flight_view(
    result: FlightResult, units: DisplayUnits, altitude_sparkline: bool = True
) -> RenderableType:
    """What `fly` shows: events, the loss ledger, orbit, verdict, warnings, caution.

    With ``altitude_sparkline``, a two-line sparkline of altitude against time follows the
    events (`fly` leaves it out when it draws the flight to a picture with --plot).
    """
    parts: list[RenderableType] = [mission_summary(result.mission)]
    speed = units.label("speed")
    events = _table("Events")
    events.add_column("Event", no_wrap=True)
    events.add_column("Time (s)", justify="right")
    events.add_column(_head("Altitude", "length", units), justify="right")
    events.add_column(_head("Speed", "speed", units), justify="right")
    events.add_column("Mach", justify="right")
    events.add_column("Accel. (g)", justify="right")
    events.add_column(_head("Dyn. pressure", "pressure", units), justify="right")
    rows_of_events = list(result.events)
    top = TOP_ALTITUDE - result.mission.launch.altitude  # above the site [m]
    # the integrator holds a state to about rtol of its scale: less is round-off, 0
    # (a liftoff 9e-7 m above the pad is on the pad)
    altitude_zero = result.rtol * max((abs(e.altitude) for e in rows_of_events), default=0.0)
    times = [e.time for e in rows_of_events]
    # times to the millisecond at least: a liftoff 0.65 ms after ignition shows as 0.001 s
    time_decimals = max(column_decimals(times, 4), 3)
    columns = (
        [format_fixed(t, time_decimals) for t in times],
        _column([e.altitude for e in rows_of_events], "length", units, zero=altitude_zero),
        _column([e.speed for e in rows_of_events], "speed", units, zero=result.resolution),
        # no Mach number where there is no air (above the 1976 standard's top, 86 km)
        _column(
            [
                e.mach if e.dynamic_pressure > 0.0 or e.altitude < top else math.nan
                for e in rows_of_events
            ],
            None,
            units,
            3,
        ),
        _column([e.acceleration / 9.80665 for e in rows_of_events], None, units, 3),
        _column([e.dynamic_pressure for e in rows_of_events], "pressure", units, 3),
    )
    for event, *numbers in zip(rows_of_events, *columns, strict=True):
        events.add_row(event.name, *numbers)
    parts.append(fit(events))
    if altitude_sparkline:
        spark = _altitude_sparkline(result, units)
        if spark is not None:
            parts.append(spark)
            parts.append(Text())
    rows = result.clean_ledger()
    names = [f"{row.segment}" for row in rows[:-1]] + ["total"]
    resolution = result.resolution

    def line(label: str, attribute: str) -> tuple[str, str, list[str]]:
        values = [getattr(row, attribute) for row in rows]
        return label, speed, _column(values, "speed", units, zero=resolution)

    total = rows[-1]
    sheet: list[tuple[str, str, Sequence[str]]] = [line("Ideal Δv (∫ F_vac / m dt)", "ideal")]
    if total.rotation_credit != 0.0:
        sheet.append(line("+ Earth-rotation credit", "rotation_credit"))
    sheet += [
        line("− gravity loss", "gravity_loss"),
        line("− drag loss", "drag_loss"),
        line("− steering loss", "steering_loss"),
        line("− back-pressure loss", "pressure_loss"),
    ]
    if total.pad_loss != 0.0:
        sheet.append(line("− held by the pad", "pad_loss"))
    sheet += [
        line("= achieved (Δ speed)", "achieved"),
        (
            "closure (ideal + credit − losses − achieved)",
            speed,
            [closure_text(row.closure, resolution, units) for row in result.ledger],
        ),
    ]
    parts.append(
        _sheet(
            "Delta-v ledger of the flight (each stage from its ignition to the next)",
            names,
            sheet,
            emphasise=["= achieved (Δ speed)"],
        )
    )
    summary = Text()
    if math.isfinite(result.apogee):
        summary.append(
            f"Apogee {_with_unit(result.apogee, 'length', units)} above the site at "
            f"{format_plain(result.apogee_time)} s. "
        )
    if math.isfinite(result.rail_exit_speed):
        summary.append(f"Rail exit at {_with_unit(result.rail_exit_speed, 'speed', units)}. ")
    summary.append(
        f"Max dynamic pressure {_with_unit(result.max_dynamic_pressure, 'pressure', units)}, "
        f"max Mach {_plain(result.max_mach, None, units, 3)}, max acceleration "
        f"{_plain(result.max_acceleration / 9.80665, None, units, 3)} g."
    )
    if result.orbit is not None:
        orbit = result.orbit
        summary.append(
            f"\nOsculating orbit at the end: perigee {orbit_length(orbit.perigee_altitude, units)}"
            f", apogee {orbit_length(orbit.apogee_altitude, units)}, eccentricity "
            f"{format_fixed(orbit.eccentricity, 4)}."
        )
    summary.append(
        f"\nIntegrated in {format_plain(result.compute_time * 1000, 2)} ms (compiled "
        f"Dormand–Prince 5(4), {plural(int(result.outcome.steps[0]), 'step')}); ending: "
        f"{result.status}.",
        style="dim",
    )
    parts.append(summary)
    parts.append(Text())
    orbit_verdict = result.verdict.target == "circular_orbit"

    def fmt(value: float, dimension: str) -> str:
        if orbit_verdict and dimension == "length":
            return orbit_length(value, units)  # an orbit's figures in km (nmi)
        return _with_unit(value, dimension, units)

    if result.guidance is not None:
        parts.append(guidance_view(result, units))
    if result.impacts:
        parts.append(impacts_view(result, units))
    if result.verdict.meets_targets is not None:
        parts.append(margins_view(result, units))
    parts.append(
        verdict_text(
            result.verdict.meets_targets,
            result.verdict.describe(fmt),
            FAIL_MARKS.get(result.verdict.miss, "SHORT"),
        )
    )
    parts.append(findings_view(result.findings))
    parts.append(caution_panel())
    return Group(*parts)


FAIL_MARKS = {
    "energy": "SHORT",
    "shape": "OFF TARGET",
    "margin": "LOW MARGIN",
    "no result": "FAILED",
}
"""The verdict's mark for each reason a flight fails (:mod:`propulsion.margins`)."""


def closure_text(value: float, resolution: float, units: DisplayUnits) -> str:
    """A figure that is integration error, in display units: within ``resolution`` it is
    round-off and shows as 0, else to one significant figure in plain decimals
    (``-0.00003``), never in scientific notation."""
    if not math.isfinite(value):
        return "—"
    shown = to_display(value, "speed", units)
    if abs(value) <= resolution:
        return "0"
    return format_fixed(shown, max(0, -math.floor(math.log10(abs(float(f"{shown:.0e}"))))))


IMPACT_CAUTION = (
    "Ballistic impacts without recovery: a planning figure for a range safety discussion, "
    "not the range safety analysis."
)


def impacts_view(result: FlightResult, units: DisplayUnits) -> RenderableType:
    """Where the dropped stages (and the vehicle, when it flies to the ground) come down."""
    table = _table("Where things come down (no recovery device)")
    table.add_column("Body", no_wrap=True)
    table.add_column(_head("East", "length", units), justify="right")
    table.add_column(_head("North", "length", units), justify="right")
    table.add_column(_head("From pad", "length", units), justify="right")
    table.add_column("Time (s)", justify="right")
    table.add_column(_head("Speed", "speed", units), justify="right")
    impacts = result.impacts
    columns = (
        _column([i.east for i in impacts], "length", units),
        _column([i.north for i in impacts], "length", units),
        _column([i.distance for i in impacts], "length", units),
        _column([i.time for i in impacts], None, units),
        _column([i.speed for i in impacts], "speed", units),
    )
    for impact, *numbers in zip(impacts, *columns, strict=True):
        table.add_row(impact.body, *numbers)
    return Group(fit(table), Text(IMPACT_CAUTION, style="yellow"), Text())


def guidance_view(result: FlightResult, units: DisplayUnits) -> RenderableType:
    """Guidance to the orbit: the target against the insertion, the kick and azimuth
    flown, the steering law and the propellant left."""
    guided = result.guidance
    assert guided is not None
    # orbits in km (nautical miles in US units)
    scale, length = ORBIT_UNITS.get(units.system, ORBIT_UNITS["si"])
    table = _table("Guided ascent to the target orbit")
    table.add_column("", no_wrap=True)
    table.add_column("Target", justify="right")
    table.add_column("Reached", justify="right")
    table.add_column("Error", justify="right")

    def km(value: float) -> str:
        shown = value / scale
        return f"{shown:,.3f}" if abs(shown) >= 5e-4 else "0"

    for name, want, got in (
        ("Perigee", guided.target_perigee, guided.perigee),
        ("Apogee", guided.target_apogee, guided.apogee),
    ):
        table.add_row(f"{name} ({length})", km(want), km(got), km(got - want))
    if math.isfinite(guided.target_inclination):
        error = math.degrees(guided.inclination - guided.target_inclination)
        table.add_row(
            "Inclination",
            f"{math.degrees(guided.target_inclination):.3f}°",
            f"{math.degrees(guided.inclination):.3f}°",
            f"{error:+.4f}°" if abs(error) >= 5e-5 else "0°",
        )
    lines = Text(style="dim")
    kick = f"{math.degrees(guided.kick_angle):.2f}°"
    lines.append(
        f"Pitch kick {kick} "
        + ("(chosen: the most propellant left). " if guided.kick_chosen else "(from the file). ")
    )
    azimuth = f"Azimuth flown {math.degrees(guided.azimuth):.2f}°"
    if math.isfinite(guided.inertial_azimuth):
        azimuth += f" (inertial {math.degrees(guided.inertial_azimuth):.2f}°)"
    lines.append(azimuth + ". ")
    lines.append(
        f"Upper stage steered by tan(pitch) = {guided.guide_a:.4f} "
        f"{'-' if guided.guide_b < 0 else '+'} {abs(guided.guide_b):.4f} τ "
        f"(τ: burn time fraction), solved by shooting in {plural(guided.iterations, 'iteration')}"
        + ("" if guided.converged else ", NOT converged")
        + ". "
    )
    lines.append(f"Propellant left at cutoff: {_with_unit(guided.propellant_left, 'mass', units)}.")
    return Group(fit(table), lines, Text())


def footprint_view(result: ScatterResult, units: DisplayUnits) -> RenderableType:
    """Where the dispersed flights come down: per body, its mean point, the 1σ and 3σ
    ellipses and the farthest point from the pad."""
    length = units.label("length")
    table = _table(f"Where things come down ({length}; no recovery device)")
    table.add_column("Body", no_wrap=True)
    table.add_column("Points", justify="right")
    table.add_column("Mean east", justify="right")
    table.add_column("Mean north", justify="right")
    table.add_column("1σ ellipse", justify="right", no_wrap=True)
    table.add_column("3σ ellipse", justify="right", no_wrap=True)
    table.add_column("Bearing", justify="right")
    table.add_column("Farthest", justify="right", min_width=8)
    items = result.footprints
    nan = math.nan

    def numbers(pick: Callable[[Any], float]) -> list[str]:
        return _column([pick(i) if i.ellipses else nan for i in items], "length", units)

    east = numbers(lambda i: i.mean[0])
    north = numbers(lambda i: i.mean[1])
    farthest = numbers(lambda i: i.farthest)
    for index, item in enumerate(items):
        if not item.ellipses:
            table.add_row(item.body, "0", "—", "—", "—", "—", "—", "—")
            continue
        one, three = item.ellipses
        table.add_row(
            item.body,
            f"{item.count:,}",
            east[index],
            north[index],
            f"{_plain(one.major, 'length', units, 3)} × {_plain(one.minor, 'length', units, 3)}",
            f"{_plain(three.major, 'length', units, 3)} × "
            f"{_plain(three.minor, 'length', units, 3)}",
            f"{math.degrees(one.bearing):.0f}°",
            farthest[index],
        )
    note = Text(style="dim")
    note.append(
        "Ellipses: semi-axes of the points' covariance (1σ holds 39% of a two-dimensional "
        "normal spread, 3σ 98.9%); bearing of the major axis from north; east and north "
        "of the pad.\n"
    )
    return Group(fit(table), note, Text(IMPACT_CAUTION, style="yellow"))


def margins_view(result: FlightResult, units: DisplayUnits) -> RenderableType:
    """The flight's three margins side by side, the judged one marked."""
    verdict = result.verdict
    table = _table("Margins: how much worse the flight may be and still meet its target")
    table.add_column("Margin", no_wrap=True)
    table.add_column("Amount", justify="right", no_wrap=True)  # a number with its unit
    table.add_column("Share", justify="right")
    table.add_column(_head("As ideal Δv", "speed", units), justify="right")
    table.add_column("Judged", justify="left", no_wrap=True)

    def plus(value: float, text: str) -> str:
        return f"+{text}" if math.isfinite(value) and value > 0 else text

    def amount(value: float, dimension: str) -> str:
        if verdict.target == "circular_orbit" and dimension == "length":
            return plus(value, orbit_length(value, units))
        return plus(value, _with_unit(value, dimension, units))

    def judged(name: str) -> str:
        if verdict.judge != name:
            return ""
        return "◀ asks ≥ " + _asked(verdict, units) if verdict.asked else "◀ judged"

    what = {
        "apogee": "target: apogee",
        "burnout_speed": "target: burnout speed",
        "circular_orbit": "target: inside the band",
    }.get(verdict.target, "target")
    searched = math.isfinite(verdict.propulsion_margin) or math.isfinite(verdict.payload_margin)
    # each column with one count of decimals: the shares in percent, the delta-v
    target_share, payload_share = (
        f"{v:+.1%}" if math.isfinite(v) else ""
        for v in (verdict.target_margin_fraction, verdict.payload_margin_fraction)
    )
    as_delta_v = [verdict.propulsion_margin_delta_v, verdict.payload_margin_delta_v]
    propulsion_dv, payload_dv = (
        plus(v, text)
        for v, text in zip(as_delta_v, _column(as_delta_v, "speed", units), strict=True)
    )
    table.add_row(
        what, amount(verdict.target_margin, verdict.dimension), target_share, "", judged("target")
    )
    if searched:
        more = "" if verdict.propulsion_bounded else "> "
        table.add_row(
            "propulsion: impulse lost",
            f"{more}{verdict.propulsion_margin:.1%}",
            "",
            f"{more}{propulsion_dv}",
            judged("propulsion"),
        )
        more = "" if verdict.payload_bounded else "> "
        table.add_row(
            "payload: mass added",
            f"{more}{amount(verdict.payload_margin, 'mass')}",
            payload_share,
            f"{more}{payload_dv}",
            judged("payload"),
        )
    else:
        table.add_row("propulsion, payload", "—", "", "", "not searched (--no-margin)")
    return fit(table)


def _asked(verdict: FlightVerdict, units: DisplayUnits) -> str:
    def fmt(value: float, dimension: str) -> str:
        if verdict.target == "circular_orbit" and dimension == "length":
            return orbit_length(value, units)
        return _with_unit(value, dimension, units, 3)

    return verdict.asked_text(fmt)


def sizing_view(result: SizingResult, units: DisplayUnits) -> RenderableType:
    """What `size` shows: the two solutions side by side, assumptions, verdicts, caution."""
    parts: list[RenderableType] = [mission_summary(result.mission)]
    ref = result.field
    dimension = "dimensionless" if ref.is_count else ref.dimension
    unit = "" if ref.is_count else units.label(dimension)

    def values(numbers: Sequence[float], digits: int = 5) -> list[str]:
        if ref.is_count:
            return [f"{n:,.0f}" if math.isfinite(n) else "—" for n in numbers]
        return _column(numbers, dimension, units, digits)

    solutions = (result.budget, result.flight)
    orbit = result.target_kind == "circular_orbit"
    # what the flight's root is found on: the target's quantity, or for an orbit the
    # delta-v left after the later legs
    flight_dimension = "speed" if orbit else result.target_dimension
    flight_quantity = {
        "apogee": "the apogee",
        "burnout_speed": "the burnout speed",
        "circular_orbit": "the delta-v left after the later legs",
    }.get(result.target_kind, "the target's quantity")
    budget_scale = (
        max(abs(result.budget_result.verdict.total_required), 1.0)
        if (result.budget_result is not None)
        else 1.0
    )
    flight_scale = max(abs(result.target_value), 1.0)

    def settled(number: float, scale: float, dim: str) -> str:
        # at a root the margin is zero to the root finder's tolerance: show 0, not round-off
        if not math.isfinite(number):
            return "—"
        return _with_unit(0.0 if abs(number) <= 1e-6 * scale else number, dim, units, 3)

    # per display unit of the field: (display unit of the quantity) / (display unit of the
    # field), so "-1,516 m per kg" and "-2,264 ft per lb" say the same
    per_unit = 1.0 if ref.is_count else to_display(1.0, dimension, units)
    per = "per unit" if ref.is_count or not unit else f"per {unit}"

    def quantity(number: float, dim: str, digits: int = 4) -> str:
        return _with_unit(number, dim, units, digits) if math.isfinite(number) else "—"

    def rate(number: float, dim: str) -> str:
        return quantity(number / per_unit, dim, 3)

    def outcome(solution: SizingSolution) -> str:
        if solution.found:
            return "found"
        return "out of reach" if math.isfinite(solution.peak_value) else "not found"

    rows: list[tuple[str, str, Sequence[str]]] = [
        ("Solved value", unit, values([s.value for s in solutions])),
        ("Current value", unit, [_plain(result.initial_value, dimension, units, 5)] * 2),
        (
            "Margin beyond the asked",
            "",
            [
                settled(result.budget.margin, budget_scale, "speed"),
                settled(result.flight.margin, flight_scale, flight_dimension),
            ],
        ),
        (
            f"Sensitivity ({per})",
            "",
            [
                rate(result.budget.sensitivity, "speed"),
                rate(result.flight.sensitivity, flight_dimension),
            ],
        ),
        ("Evaluations", "", [f"{s.evaluations:,}" for s in solutions]),
        ("Result", "", [outcome(s) for s in solutions]),
    ]
    if any(math.isfinite(s.peak_value) for s in solutions):
        rows += [
            ("Peak inside the range", unit, values([s.peak_value for s in solutions])),
            (
                "Best reachable there",
                "",
                [
                    quantity(result.budget.peak_achieved, "speed"),
                    quantity(result.flight.peak_achieved, flight_dimension),
                ],
            ),
        ]
    if orbit:
        wanted = orbit_length(result.target_value, units)
    else:
        wanted = _with_unit(result.target_value, result.target_dimension, units)
    parts.append(
        _sheet(
            f"Sizing {ref.name} for the {target_name(result.target_kind)} target ({wanted})",
            ["ideal budget", "flight simulation"],
            rows,
            emphasise=["Solved value"],
        )
    )
    how = Text(style="dim")
    how.append("The ideal budget counts the legs' loss allowances for the losses. ")
    reached = ""
    if any(math.isfinite(s.peak_value) for s in solutions):
        reached = (
            f"; best reachable: the budget's ideal delta-v, the flight's {flight_quantity[4:]}"
        )
    how.append(
        f"Sensitivity: the change of the budget's delta-v margin, and of {flight_quantity} "
        f"flown, {per} of {ref.name}{reached}.\n"
    )
    how.append(f"Budget: {result.budget.message}.\nFlight: {result.flight.message}.\n")
    parts.append(how)
    parts.append(Text(f"Assumption: {result.inert_rule}.", style="dim"))
    if result.budget_result is not None:
        budget = result.budget_result.verdict
        parts.append(verdict_text(budget.meets_targets, "Budget: " + budget.describe(units)))
    if result.flight_result is not None:
        flown = result.flight_result

        def fmt(number: float, dim: str) -> str:
            if orbit and dim == "length":
                return orbit_length(number, units)
            return _with_unit(number, dim, units)

        parts.append(
            verdict_text(
                flown.verdict.meets_targets,
                "Flight: " + flown.verdict.describe(fmt),
                FAIL_MARKS.get(flown.verdict.miss, "SHORT"),
            )
        )
        if flown.verdict.miss == "margin" and result.flight.found:
            # the solution is where the margin just equals the asked one: either side of
            # it by the root finders' tolerance
            parts.append(
                Text(
                    "At the solution the margin equals the one asked for, to the root "
                    "finders' tolerance: a hair either side of it reads as enough or too "
                    "little.",
                    style="dim",
                )
            )
    parts.append(caution_panel())
    return Group(*parts)


def split_view(result: SplitResult, units: DisplayUnits) -> RenderableType:
    """What `split` shows: the optimal split, the stage counts, the loss-aware optimum."""
    parts: list[RenderableType] = [mission_summary(result.mission)]
    mass, speed = units.label("mass"), units.label("speed")
    names = [stage.name for stage in result.mission.vehicle.stages]

    def dv(values: Iterable[float]) -> list[str]:
        return _column(values, "speed", units)

    def kg(values: Iterable[float]) -> list[str]:
        return _column(values, "mass", units)

    lagrange, direct, loss = result.lagrange, result.direct, result.loss_aware
    rows: list[tuple[str, str, Sequence[str]]] = [
        ("Specific impulse (vacuum)", "s", _column(result.specific_impulse, None, units)),
        ("Structural coefficient", "", _column(result.structural_coefficient, None, units, 3)),
        ("Δv, current design", speed, dv(result.current_delta_v)),
        ("Δv, Lagrange optimum", speed, dv(lagrange.delta_v)),
        ("Δv, direct optimisation", speed, dv(direct.delta_v)),
        ("Stage mass, Lagrange optimum", mass, kg(lagrange.stage_mass)),
    ]
    if loss is not None and loss.found:
        rows += [
            ("Δv, loss-aware optimum", speed, dv(loss.delta_v)),
            ("Stage mass, loss-aware optimum", mass, kg(loss.stage_mass)),
        ]
    parts.append(
        _sheet(
            f"Splitting {_with_unit(result.required_delta_v, 'speed', units)} between the stages",
            names,
            rows,
            emphasise=["Δv, Lagrange optimum"],
        )
    )
    summary = Text()
    apart = abs(lagrange.liftoff_mass / direct.liftoff_mass - 1)
    # the command calls the two optima the same within one part in a million
    agreement = (
        "they agree (within one part in a million)"
        if apart < 1e-6
        else f"they differ by {format_plain(100 * apart, 2)}%"
    )
    summary.append(
        f"Liftoff mass: current {_with_unit(result.current_liftoff_mass, 'mass', units)}; "
        f"Lagrange optimum {_with_unit(lagrange.liftoff_mass, 'mass', units)}; direct "
        f"optimisation {_with_unit(direct.liftoff_mass, 'mass', units)} "
        f"({'converged' if direct.converged else 'NOT converged: ' + direct.message}); "
        f"{agreement}."
    )
    if loss is not None:
        if loss.found:
            share = float(loss.delta_v[0] / loss.delta_v.sum())
            ideal_share = float(lagrange.delta_v[0] / lagrange.delta_v.sum())
            summary.append(
                "\nLoss-aware optimum (flown): liftoff mass "
                f"{_with_unit(loss.liftoff_mass, 'mass', units)}, first stage's share "
                f"{share:.1%} of the delta-v against {ideal_share:.1%} "
                f"ideally ({plural(loss.flights, 'flight')}; {loss.message})."
            )
        else:
            summary.append(f"\nLoss-aware optimum: not found ({loss.message}).")
    parts.append(summary)
    counts = _table("Stage counts compared (same payload and requirement)")
    counts.add_column("Stages", justify="right")
    counts.add_column(_head("Liftoff mass", "mass", units), justify="right")
    counts.add_column("Payload fraction", justify="right")
    counts.add_column(_head("Δv per stage", "speed", units))
    counts.add_column(_head("Margin at current liftoff mass", "speed", units), justify="right")
    liftoff = _column(
        [s.liftoff_mass if s.feasible else math.nan for s in result.counts], "mass", units
    )
    fraction = _column(
        [s.payload_fraction if s.feasible else math.nan for s in result.counts], None, units, 3
    )
    margin = _column(result.count_margins, "speed", units)
    for index, solution in enumerate(result.counts):
        counts.add_row(
            str(solution.stage_count),
            liftoff[index],
            fraction[index],
            # one stage's Δv from the next: " / " (the numbers carry thousands commas)
            " / ".join(dv(solution.delta_v))
            if solution.feasible
            else "cannot reach the requirement",
            margin[index],
        )
    parts.append(fit(counts))
    parts.append(Text("Assumptions: " + "; ".join(result.assumptions) + ".", style="dim"))
    parts.append(caution_panel())
    return Group(*parts)


_METRIC_DIMENSIONS = {
    "apogee_m": ("Apogee", "length"),
    "max_mach": ("Max Mach", None),
    "max_dynamic_pressure_pa": ("Max dynamic pressure", "pressure"),
    "rail_exit_speed_m_s": ("Rail exit speed", "speed"),
    "margin": ("Target margin", None),
    "downrange_m": ("Downrange at apogee", "length"),
    "propulsion_margin": ("Propulsion margin", "percent"),
    "perigee_error_m": ("Perigee error", "length"),
    "apogee_error_m": ("Apogee error", "length"),
    "inclination_error_deg": ("Inclination error", "degree"),
    "propellant_left_kg": ("Propellant left", "mass"),
}


PERCENTS = (1.0, 5.0, 50.0, 95.0, 99.0)


def scatter_view(result: ScatterResult, units: DisplayUnits) -> RenderableType:
    """What `scatter` shows: percentiles with their intervals, the probability of success
    and the misses by reason, the reserve when asked, drivers, caution."""
    parts: list[RenderableType] = [mission_summary(result.mission)]
    table = _table(
        f"Dispersion of {result.valid:,} flown samples "
        f"({result.samples:,} drawn, seed {result.seed})"
    )
    table.add_column("Output")
    table.add_column("Unit", style="dim")
    for p in (1, 5, 50, 95, 99):
        table.add_column(f"p{p}", justify="right")
    margin_dimension = {"apogee": "length", "circular_orbit": "length"}.get(result.target, "speed")

    def shown(values: Sequence[float], dimension: str | None) -> list[str]:
        """One output's figures, all with the same decimals (its percentiles and their
        intervals together)."""
        if dimension == "degree":
            # no round-off shown: within 0.00005 deg of zero is 0
            return [
                "—" if not math.isfinite(v) else (f"{v:+.4f}" if abs(v) >= 5e-5 else "0")
                for v in values
            ]
        if dimension == "percent":
            return ["—" if not math.isfinite(v) else f"{v:.1%}" for v in values]
        return _column(values, dimension, units)

    def unit_of(dimension: str | None) -> str:
        if dimension == "percent":
            return "%"
        if dimension == "degree":
            return "deg"
        return units.label(dimension) if dimension else ""

    for metric, (title, dimension) in _METRIC_DIMENSIONS.items():
        if metric not in result.percentiles:
            continue
        if metric == "margin":
            if not result.target:
                continue
            dimension = margin_dimension
            title = "Target margin (in the band)" if result.target == "circular_orbit" else title
        values = result.percentiles[metric]
        if not any(math.isfinite(values[p]) for p in PERCENTS):
            continue  # nothing to show (an apogee of an orbit, insertion of no guidance)
        figures = [values[p] for p in PERCENTS]
        intervals = metric in ("margin", "propulsion_margin") and metric in result.intervals
        if intervals:
            # the margins' percentiles carry their 95% confidence intervals
            bounds = result.intervals[metric]
            figures += [bounds[p][side] for side in (0, 1) for p in PERCENTS]
        cells = shown(figures, dimension)
        count = len(PERCENTS)
        table.add_row(title, unit_of(dimension), *cells[:count])
        if intervals:
            for side, name in ((1, "  95% interval, low"), (2, "  95% interval, high")):
                table.add_row(name, "", *cells[side * count : (side + 1) * count], style="dim")
    parts.append(fit(table))
    low, high = result.interval
    text = Text()
    if math.isfinite(result.probability):
        text.append(
            f"Probability of meeting the {target_name(result.target)} target: "
            f"{result.probability:.1%} ({result.meets:,} of {result.valid:,}; 95% Wilson "
            f"interval {low:.1%} to {high:.1%}).",
            style="bold",
        )
    if result.misses:
        why = {
            "energy": "for want of energy",
            "shape": "in shape (steering)",
            "no result": "without a result",
        }
        text.append(
            "\nMisses: "
            + "; ".join(
                f"{count:,} {why.get(reason, reason)}" for reason, count in result.misses.items()
            )
            + "."
        )
    if result.reserve is not None:
        reserve = result.reserve
        r_low, r_high = reserve.interval
        limits = (
            f"95% interval {r_low:.1%} to {r_high:.1%}"
            if math.isfinite(r_low) and math.isfinite(r_high)
            else "too few samples for its 95% interval"
        )
        worth = f"{_with_unit(abs(reserve.delta_v), 'speed', units)} of ideal Δv"
        if reserve.fraction >= 0:
            line = (
                f"\nFlight-performance reserve: {reserve.probability:.1%} of the flights "
                f"could still lose {reserve.fraction:.1%} of total impulse ({worth}) and "
                "meet the target"
            )
        else:
            line = (
                f"\nFlight-performance reserve short: for {reserve.probability:.1%} of the "
                f"flights to meet the target, the vehicle needs {-reserve.fraction:.1%} more "
                f"total impulse ({worth}): a propulsion margin of {reserve.fraction:.1%}"
            )
        text.append(
            line + f" ({limits}; the Monte Carlo quantile of NASA/TP-2010-216447).",
            style="bold",
        )
    invalid = result.samples - result.valid
    if invalid:
        reasons = ", ".join(f"{name} {count:,}" for name, count in result.invalid_reasons.items())
        were = "was" if invalid == 1 else "were"
        text.append(
            f"\n{plural(invalid, 'sample')} gave an impossible vehicle and {were} not flown "
            f"({reasons})."
        )
    if result.bad_ignitions:
        text.append(
            f"\n{plural(result.bad_ignitions, 'flight')} lit an upper stage while descending, "
            "too slow to steer, or tilted beyond 20 deg from vertical (see `propulsion fly`).",
            style="yellow",
        )
    source = (
        "all samples"
        if result.exact
        else f"a uniform reservoir of {result.reservoir:,} samples (counts exact)"
    )
    text.append(
        f"\nStatistics from {source}; "
        f"{plural(result.chunks, 'chunk')} on {result.workers}, {result.elapsed:.1f} s.",
        style="dim",
    )
    parts.append(text)
    if result.footprints:
        parts.append(footprint_view(result, units))
    if result.drivers:
        drivers = _table("What drives the spread (Spearman rank correlation)")
        # the field as a [[dispersion]] table names it
        drivers.add_column("Dispersed field", no_wrap=True)
        drivers.add_column("with", style="dim")
        drivers.add_column("rho", justify="right")
        for name, output, rho in result.drivers[:6]:
            drivers.add_row(name, output, f"{rho:+.3f}")
        parts.append(fit(drivers))
    parts.append(caution_panel())
    return Group(*parts)
