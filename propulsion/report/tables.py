"""Terminal tables (rich) for the ledgers, findings and data listings.

Values arrive in SI and are converted to the chosen display units here.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence
from typing import TYPE_CHECKING, Any

from rich import box
from rich.console import Console, Group, RenderableType
from rich.panel import Panel
from rich.table import Table
from rich.text import Text

from propulsion.report.cautions import SAFETY_CAUTION, SAFETY_TITLE
from propulsion.units import DisplayUnits, format_number, to_display

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
) -> Table:
    """A table with one column per item (stage, leg) and one row per quantity."""
    shown = _elide(len(names))
    hidden = len(names) - sum(1 for i in shown if i is not None)
    if hidden:
        title += f" ({len(names):,} items; {hidden:,} not shown, --json lists all)"
    table = _table(title)
    table.add_column("")
    table.add_column("Unit", style="dim")
    for i in shown:
        if i is None:
            table.add_column(f"… {hidden:,} more", justify="center", style="dim")
        else:
            table.add_column(names[i], justify="right", overflow="fold")
    bold = set(emphasise)
    for label, unit, values in rows:
        cells = ["…" if i is None else values[i] for i in shown]
        table.add_row(label, unit, *cells, style="bold" if label in bold else None)
    return table


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
        values = [getattr(row, str(getter)) for row in st]
        if dimension is None:
            return [_num(value, digits) for value in values]
        return [_q(value, dimension, units, digits) for value in values]

    stage_rows: list[tuple[str, str, Sequence[str]]] = [
        ("Propulsion", "", [row.propulsion for row in st]),
        ("Propellant family", "", [row.propellant_family or "—" for row in st]),
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
            f"Stack ideal Δv: {_q(result.total_ideal_delta_v, 'speed', units)} {speed}",
            style="bold",
        )
    )

    if result.legs:
        legs = result.legs

        def leg_col(getter: str, dimension: str) -> list[str]:
            return [_q(getattr(leg, getter), dimension, units) for leg in legs]

        leg_rows: list[tuple[str, str, Sequence[str]]] = [
            ("Target", "", [leg.target for leg in legs]),
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
                f"{'+' if value >= 0 else '−'} {_q(abs(value), 'speed', units)} {speed} ({label})"
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
            f"Mission reserve {_q(margins.reserve, 'speed', units)} {speed}; Δv of the "
            f"propellant left after the last leg {_q(result.leftover_delta_v, 'speed', units)} "
            f"{speed}; unusable residual propellant: {residuals}.\n"
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
        f"\n{mission.name}: {len(vehicle.stages)} stage(s), {len(mission.legs)} leg(s), "
        f"liftoff mass {_q(vehicle.liftoff_mass, 'mass', units)} {units.label('mass')}, "
        f"payload {_q(vehicle.payload_mass, 'mass', units)} {units.label('mass')}"
    )
    table = _table("Vehicle")
    table.add_column("Stage")
    table.add_column("Propulsion")
    table.add_column("Propellant family")
    table.add_column(_head("Inert", "mass", units), justify="right")
    table.add_column(_head("Propellant", "mass", units), justify="right")
    table.add_column("Isp (s)", justify="right")
    table.add_column("T/W at ignition", justify="right")
    for row in result.stages:
        table.add_row(
            row.name,
            row.propulsion,
            row.propellant_family or "—",
            _q(row.inert_mass, "mass", units),
            _q(row.propellant_mass, "mass", units),
            _num(row.isp),
            _num(row.thrust_to_weight, 3),
        )
    return Group(header, table, findings_view(result.findings), caution_panel())


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
    fam.add_column("Key", no_wrap=True)
    fam.add_column("Isp (s)", no_wrap=True)
    fam.add_column(_head("Density", "density", units), justify="right")
    fam.add_column("Stage fraction", no_wrap=True)
    fam.add_column("Min T/W", justify="right")
    for f in families.values():
        fam.add_row(
            f.key,
            f"{f.isp_min:.0f}–{f.isp_max:.0f}",
            _q(f.density, "density", units),
            f"{f.stage_mass_fraction_min:.2f}–{f.stage_mass_fraction_max:.2f}",
            f"{f.liftoff_thrust_to_weight_min:g}",
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
    for i, m in enumerate(motors):
        mot.add_row(
            f"{m.name}*" if i in own else m.name,
            m.impulse_class,
            _q(m.total_impulse, "impulse", units),
            _q(m.average_thrust, "force", units),
            _num(m.burn_time, 3),
            _num(m.specific_impulse, 3),
            _q(m.propellant_mass, "mass", units, 2),
            _q(m.loaded_mass, "mass", units, 2),
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
        return Group(fam, mot, drag)
    listed = Text("* Your motors:", style="dim")
    for i, file in own.items():
        listed.append(f"\n  {motors[i].name} = {file}", style="dim")
    return Group(fam, mot, listed, Text(), drag)


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
    length, speed = units.label("length"), units.label("speed")
    events = _table("Events")
    events.add_column("Event", no_wrap=True)
    events.add_column("Time (s)", justify="right")
    events.add_column(_head("Altitude", "length", units), justify="right")
    events.add_column(_head("Speed", "speed", units), justify="right")
    events.add_column("Mach", justify="right")
    events.add_column("Accel. (g)", justify="right")
    events.add_column(_head("Dyn. pressure", "pressure", units), justify="right")
    for event in result.events:
        events.add_row(
            event.name,
            _num(event.time, 4),
            _q(event.altitude, "length", units),
            _q(event.speed, "speed", units),
            _num(event.mach, 3),
            _num(event.acceleration / 9.80665, 3),
            _q(event.dynamic_pressure, "pressure", units, 3),
        )
    parts.append(events)
    if altitude_sparkline:
        spark = _altitude_sparkline(result, units)
        if spark is not None:
            parts.append(spark)
            parts.append(Text())
    rows = result.clean_ledger()
    names = [f"{row.segment}" for row in rows[:-1]] + ["total"]
    resolution = result.resolution

    def line(label: str, attribute: str) -> tuple[str, str, list[str]]:
        return label, speed, [_q(getattr(row, attribute), "speed", units) for row in rows]

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
            f"Apogee {_q(result.apogee, 'length', units)} {length} above the site at "
            f"{_num(result.apogee_time, 4)} s. "
        )
    if math.isfinite(result.rail_exit_speed):
        summary.append(f"Rail exit at {_q(result.rail_exit_speed, 'speed', units)} {speed}. ")
    summary.append(
        f"Max dynamic pressure {_q(result.max_dynamic_pressure, 'pressure', units)} "
        f"{units.label('pressure')}, max Mach {_num(result.max_mach, 3)}, max acceleration "
        f"{_num(result.max_acceleration / 9.80665, 3)} g."
    )
    if result.orbit is not None:
        orbit = result.orbit
        summary.append(
            f"\nOsculating orbit at the end: perigee {_q(orbit.perigee_altitude, 'length', units)} "
            f"{length}, apogee {_q(orbit.apogee_altitude, 'length', units)} {length}, "
            f"eccentricity {_num(orbit.eccentricity, 3)}."
        )
    summary.append(
        f"\nIntegrated in {_num(result.compute_time * 1000, 2)} ms (compiled Dormand–Prince 5(4), "
        f"{int(result.outcome.steps[0])} steps); ending: {result.status}.",
        style="dim",
    )
    parts.append(summary)
    parts.append(Text())

    def fmt(value: float, dimension: str) -> str:
        shown = to_display(value, dimension, units)
        return f"{_num(shown, 4)} {units.label(dimension)}".strip()

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
    """A figure that is integration error: within ``resolution`` shown as a bound, "<1e-4"
    (the power of ten above the resolution, in display units), else to one significant
    figure."""
    if not math.isfinite(value):
        return "—"
    shown = abs(to_display(value, "speed", units))
    limit = abs(to_display(resolution, "speed", units))
    if shown <= limit:
        return f"< {10.0 ** math.ceil(math.log10(limit)):.0e}"
    return f"{to_display(value, 'speed', units):.0e}"


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
    for impact in result.impacts:
        table.add_row(
            impact.body,
            _q(impact.east, "length", units),
            _q(impact.north, "length", units),
            _q(impact.distance, "length", units),
            _num(impact.time, 4),
            _q(impact.speed, "speed", units),
        )
    return Group(table, Text(IMPACT_CAUTION, style="yellow"), Text())


def guidance_view(result: FlightResult, units: DisplayUnits) -> RenderableType:
    """Guidance to the orbit: the target against the insertion, the kick and azimuth
    flown, the steering law and the propellant left."""
    guided = result.guidance
    assert guided is not None
    # orbits in km (nautical miles in US units)
    scale, length = (1852.0, "nmi") if units.system == "us" else (1000.0, "km")
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
        f"(τ: burn time fraction), solved by shooting in {guided.iterations} iterations"
        + ("" if guided.converged else ", NOT converged")
        + ". "
    )
    lines.append(
        f"Propellant left at cutoff: {_q(guided.propellant_left, 'mass', units)} "
        f"{units.label('mass')}."
    )
    return Group(table, lines, Text())


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
    for item in result.footprints:
        if not item.ellipses:
            table.add_row(item.body, "0", "—", "—", "—", "—", "—", "—")
            continue
        one, three = item.ellipses
        table.add_row(
            item.body,
            f"{item.count:,}",
            _q(item.mean[0], "length", units),
            _q(item.mean[1], "length", units),
            f"{_q(one.major, 'length', units, 3)} × {_q(one.minor, 'length', units, 3)}",
            f"{_q(three.major, 'length', units, 3)} × {_q(three.minor, 'length', units, 3)}",
            f"{math.degrees(one.bearing):.0f}°",
            _q(item.farthest, "length", units),
        )
    note = Text(style="dim")
    note.append(
        "Ellipses: semi-axes of the points' covariance (1σ holds 39 % of a two-dimensional "
        "normal spread, 3σ 98.9 %); bearing of the major axis from north; east and north "
        "of the pad.\n"
    )
    return Group(table, note, Text(IMPACT_CAUTION, style="yellow"))


def margins_view(result: FlightResult, units: DisplayUnits) -> RenderableType:
    """The flight's three margins side by side, the judged one marked."""
    verdict = result.verdict
    table = _table("Margins: how much worse the flight may be and still meet its target")
    table.add_column("Margin", no_wrap=True)
    table.add_column("Amount", justify="right")
    table.add_column("Share", justify="right")
    table.add_column(_head("As ideal Δv", "speed", units), justify="right")
    table.add_column("Judged", justify="left", no_wrap=True)

    def signed(value: float, dimension: str) -> str:
        text = _q(value, dimension, units)
        return f"+{text}" if math.isfinite(value) and value > 0 else text

    def share(value: float, digits: int = 1) -> str:
        return f"{value:+.{digits}%}" if math.isfinite(value) else ""

    def judged(name: str) -> str:
        if verdict.judge != name:
            return ""
        return "◀ asks ≥ " + _asked(verdict, units) if verdict.asked else "◀ judged"

    what = {
        "apogee": "target: apogee",
        "burnout_speed": "target: burnout speed",
        "circular_orbit": "target: inside the band",
    }.get(verdict.target, "target")
    unit = units.label(verdict.dimension)
    table.add_row(
        what,
        f"{signed(verdict.target_margin, verdict.dimension)} {unit}",
        share(verdict.target_margin_fraction),
        "",
        judged("target"),
    )
    if math.isfinite(verdict.propulsion_margin) or math.isfinite(verdict.payload_margin):
        more = "" if verdict.propulsion_bounded else "> "
        table.add_row(
            "propulsion: impulse lost",
            f"{more}{verdict.propulsion_margin:.1%}",
            "",
            f"{more}{signed(verdict.propulsion_margin_delta_v, 'speed')}",
            judged("propulsion"),
        )
        more = "" if verdict.payload_bounded else "> "
        table.add_row(
            "payload: mass added",
            f"{more}{signed(verdict.payload_margin, 'mass')} {units.label('mass')}",
            share(verdict.payload_margin_fraction, 0),
            f"{more}{signed(verdict.payload_margin_delta_v, 'speed')}",
            judged("payload"),
        )
    else:
        table.add_row("propulsion, payload", "—", "", "", "not searched (--no-margin)")
    return table


def _asked(verdict: FlightVerdict, units: DisplayUnits) -> str:
    def fmt(value: float, dimension: str) -> str:
        return f"{_q(value, dimension, units, 3)} {units.label(dimension)}".strip()

    return verdict.asked_text(fmt)


def sizing_view(result: SizingResult, units: DisplayUnits) -> RenderableType:
    """What `size` shows: the two solutions side by side, assumptions, verdicts, caution."""
    parts: list[RenderableType] = [mission_summary(result.mission)]
    ref = result.field
    dimension = "dimensionless" if ref.is_count else ref.dimension
    unit = "" if ref.is_count else units.label(dimension)
    target_unit = units.label(result.target_dimension)

    def value(number: float) -> str:
        if not math.isfinite(number):
            return "—"
        if ref.is_count:
            return f"{number:.0f}"
        return _q(number, dimension, units, 5)

    solutions = (result.budget, result.flight)
    per = f"per {ref.si_unit or 'unit'}"
    target_unit_si = {"length": "m", "speed": "m/s"}.get(result.target_dimension, "")
    if result.target_kind == "circular_orbit":
        target_unit_si = "m/s"  # an orbit is sized on the delta-v left after the later legs
    if result.target_kind == "circular_orbit":
        flight_quantity = "m/s of delta-v margin"
    else:
        flight_quantity = f"{target_unit_si} of {result.target_kind}"
    budget_scale = (
        max(abs(result.budget_result.verdict.total_required), 1.0)
        if (result.budget_result is not None)
        else 1.0
    )
    flight_scale = max(abs(result.target_value), 1.0)

    def settled(number: float, scale: float) -> str:
        # at a root the margin is zero to the root finder's tolerance: show 0, not round-off
        if math.isfinite(number) and abs(number) <= 1e-6 * scale:
            number = 0.0
        return _num(number, 3)

    def either(number: float, text: str) -> str:
        return text if math.isfinite(number) else "—"

    def outcome(solution: SizingSolution) -> str:
        if solution.found:
            return "found"
        return "out of reach" if math.isfinite(solution.peak_value) else "not found"

    rows: list[tuple[str, str, Sequence[str]]] = [
        ("Solved value", unit, [value(s.value) for s in solutions]),
        ("Current value", unit, [value(result.initial_value)] * 2),
        (
            "Margin at the solution",
            "",
            [
                either(
                    result.budget.margin,
                    f"{settled(result.budget.margin, budget_scale)} m/s beyond the asked",
                ),
                either(
                    result.flight.margin,
                    f"{settled(result.flight.margin, flight_scale)} {target_unit_si} "
                    "beyond the asked",
                ),
            ],
        ),
        (
            "Sensitivity",
            "",
            [
                either(
                    result.budget.sensitivity,
                    f"{_num(result.budget.sensitivity, 3)} m/s of Δv margin {per}",
                ),
                either(
                    result.flight.sensitivity,
                    f"{_num(result.flight.sensitivity, 3)} {flight_quantity} {per}",
                ),
            ],
        ),
        ("Evaluations", "", [str(s.evaluations) for s in solutions]),
        ("Result", "", [outcome(s) for s in solutions]),
    ]
    if any(math.isfinite(s.peak_value) for s in solutions):
        rows += [
            ("Peak inside the range", unit, [value(s.peak_value) for s in solutions]),
            (
                "Best reachable there",
                "",
                [
                    f"{_num(result.budget.peak_achieved, 4)} m/s of ideal Δv"
                    if math.isfinite(result.budget.peak_achieved)
                    else "—",
                    f"{_num(result.flight.peak_achieved, 4)} {flight_quantity}"
                    if math.isfinite(result.flight.peak_achieved)
                    else "—",
                ],
            ),
        ]
    parts.append(
        _sheet(
            f"Sizing {ref.name} for the {result.target_kind} target "
            f"({_q(result.target_value, result.target_dimension, units)} {target_unit})",
            ["ideal budget (loss allowance)", "flight simulation"],
            rows,
            emphasise=["Solved value"],
        )
    )
    how = Text(style="dim")
    how.append(f"Budget: {result.budget.message}.\nFlight: {result.flight.message}.\n")
    parts.append(how)
    parts.append(Text(f"Assumption: {result.inert_rule}.", style="dim"))
    if result.budget_result is not None:
        budget = result.budget_result.verdict
        parts.append(verdict_text(budget.meets_targets, "Budget: " + budget.describe(units)))
    if result.flight_result is not None:
        flown = result.flight_result

        def fmt(number: float, dim: str) -> str:
            return f"{_num(to_display(number, dim, units), 4)} {units.label(dim)}".strip()

        parts.append(
            verdict_text(flown.verdict.meets_targets, "Flight: " + flown.verdict.describe(fmt))
        )
    parts.append(caution_panel())
    return Group(*parts)


def split_view(result: SplitResult, units: DisplayUnits) -> RenderableType:
    """What `split` shows: the optimal split, the stage counts, the loss-aware optimum."""
    parts: list[RenderableType] = [mission_summary(result.mission)]
    mass, speed = units.label("mass"), units.label("speed")
    names = [stage.name for stage in result.mission.vehicle.stages]

    def dv(values: Iterable[float]) -> list[str]:
        return [_q(float(v), "speed", units) for v in values]

    def kg(values: Iterable[float]) -> list[str]:
        return [_q(float(v), "mass", units) for v in values]

    lagrange, direct, loss = result.lagrange, result.direct, result.loss_aware
    rows: list[tuple[str, str, Sequence[str]]] = [
        ("Specific impulse (vacuum)", "s", [_num(float(v)) for v in result.specific_impulse]),
        ("Structural coefficient", "", [_num(float(v), 3) for v in result.structural_coefficient]),
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
            f"Splitting {_q(result.required_delta_v, 'speed', units)} {speed} between the stages",
            names,
            rows,
            emphasise=["Δv, Lagrange optimum"],
        )
    )
    summary = Text()
    summary.append(
        f"Liftoff mass: current {_q(result.current_liftoff_mass, 'mass', units)} {mass}; "
        f"Lagrange optimum {_q(lagrange.liftoff_mass, 'mass', units)} {mass}; direct "
        f"optimisation {_q(direct.liftoff_mass, 'mass', units)} {mass} "
        f"({'converged' if direct.converged else 'NOT converged: ' + direct.message}); "
        f"they differ by {abs(lagrange.liftoff_mass / direct.liftoff_mass - 1):.1e} relative."
    )
    if loss is not None:
        if loss.found:
            share = float(loss.delta_v[0] / loss.delta_v.sum())
            ideal_share = float(lagrange.delta_v[0] / lagrange.delta_v.sum())
            summary.append(
                "\nLoss-aware optimum (flown): liftoff mass "
                f"{_q(loss.liftoff_mass, 'mass', units)} {mass}, first stage's share "
                f"{share:.1%} of the delta-v against {ideal_share:.1%} "
                f"ideally ({loss.flights} flights; {loss.message})."
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
    for solution, margin in zip(result.counts, result.count_margins, strict=True):
        if solution.feasible:
            counts.add_row(
                str(solution.stage_count),
                _q(solution.liftoff_mass, "mass", units),
                _num(solution.payload_fraction, 3),
                ", ".join(dv(solution.delta_v)),
                _q(margin, "speed", units),
            )
        else:
            counts.add_row(
                str(solution.stage_count),
                "—",
                "—",
                "cannot reach the requirement",
                _q(margin, "speed", units),
            )
    parts.append(counts)
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

    def shown(value: float, dimension: str | None) -> str:
        if dimension == "degree":
            if not math.isfinite(value):
                return "—"
            return f"{value:+.4f}" if abs(value) >= 5e-5 else "0"  # no round-off shown
        if dimension == "percent":
            if not math.isfinite(value):
                return "—"
            return f"{value:.1%}" if round(value * 1000) != 0 else "0.0%"
        if dimension is None:
            return _num(value, 4)
        return _q(value, dimension, units)

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
        table.add_row(title, unit_of(dimension), *[shown(values[p], dimension) for p in PERCENTS])
        if metric in ("margin", "propulsion_margin") and metric in result.intervals:
            # the margins' percentiles carry their 95 % confidence intervals
            bounds = result.intervals[metric]
            for side, name in ((0, "  95 % interval, low"), (1, "  95 % interval, high")):
                table.add_row(
                    name,
                    "",
                    *[shown(bounds[p][side], dimension) for p in PERCENTS],
                    style="dim",
                )
    parts.append(table)
    low, high = result.interval
    text = Text()
    if math.isfinite(result.probability):
        text.append(
            f"Probability of meeting the {result.target} target: {result.probability:.1%} "
            f"({result.meets:,} of {result.valid:,}; 95 % Wilson interval {low:.1%} to "
            f"{high:.1%}).",
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
            f"95 % interval {r_low:.1%} to {r_high:.1%}"
            if math.isfinite(r_low) and math.isfinite(r_high)
            else "too few samples for its 95 % interval"
        )
        worth = f"{_q(abs(reserve.delta_v), 'speed', units)} {units.label('speed')} of ideal Δv"
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
        reasons = ", ".join(f"{name} {count}" for name, count in result.invalid_reasons.items())
        text.append(
            f"\n{invalid:,} sample(s) gave an impossible vehicle and were not flown ({reasons})."
        )
    if result.bad_ignitions:
        text.append(
            f"\n{result.bad_ignitions:,} flight(s) lit an upper stage while descending, too "
            "slow to steer, or tilted beyond 20 deg from vertical (see `propulsion fly`).",
            style="yellow",
        )
    source = (
        "all samples"
        if result.exact
        else f"a uniform reservoir of {result.reservoir:,} samples (counts exact)"
    )
    text.append(
        f"\nStatistics from {source}; "
        f"{result.chunks} chunk(s) on {result.workers}, {result.elapsed:.1f} s.",
        style="dim",
    )
    parts.append(text)
    if result.footprints:
        parts.append(footprint_view(result, units))
    if result.drivers:
        drivers = _table("What drives the spread (Spearman rank correlation)")
        drivers.add_column("Dispersed field", no_wrap=True)
        drivers.add_column("with", style="dim")
        drivers.add_column("rho", justify="right")
        for name, output, rho in result.drivers[:6]:
            drivers.add_row(name, output, f"{rho:+.3f}")
        parts.append(drivers)
    parts.append(caution_panel())
    return Group(*parts)
