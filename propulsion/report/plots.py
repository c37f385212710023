"""Pictures of the results: the flown ascent, the delta-v ledgers, dispersions, sweeps, splits.

Every figure is a :class:`matplotlib.figure.Figure` drawn on the non-interactive Agg canvas
without pyplot, so no global state changes and no window opens. matplotlib is imported
inside the functions, never when this module is imported: the command line stays fast.
Values arrive in SI and are converted to the display units (``--units``) here, with the
same factors as the terminal tables.

The style is our own and plain: white background, a thin grey grid, one dark ink colour,
and distinct line styles, hatches and markers instead of colours, so that a picture reads
the same printed in greyscale. Each figure carries a caption line with the mission's name,
the tool's version and the reminder that these are planning estimates.

Series carry a ``gid`` (``"altitude"``, ``"ideal"``, ``"target_contour"``, ...) so that a
report or a test can find what was drawn without relying on drawing order.
"""

from __future__ import annotations

import io
import math
from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np
import numpy.typing as npt

from propulsion import __version__
from propulsion.atmosphere import TOP_ALTITUDE
from propulsion.errors import RequestError
from propulsion.text import plural
from propulsion.units import DisplayUnits, format_number, to_display

if TYPE_CHECKING:
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

    from propulsion.ascent import FlightResult
    from propulsion.ledger import BudgetResult
    from propulsion.mission import Mission
    from propulsion.stage_split import SplitResult
    from propulsion.studies.capacity import CapacityResult
    from propulsion.studies.scatter import ScatterResult
    from propulsion.studies.sweep import SweepResult
    from propulsion.vehicle import DragCurve, Stage

__all__ = [
    "FIGURE_SIZE",
    "FLIGHT_FIGURE_SIZE",
    "PLOT_FORMATS",
    "PlotError",
    "budget_ledger_figure",
    "check_plot_path",
    "drag_curve_figure",
    "figure_bytes",
    "flight_figure",
    "flight_ledger_figure",
    "plot_format",
    "save_figure",
    "scatter_figure",
    "split_curve",
    "split_figure",
    "sweep_figure",
    "thrust_curve_figure",
]

FloatArray = npt.NDArray[np.float64]

PLOT_FORMATS = {".png": "png", ".svg": "svg"}
"""File extension -> format of the pictures that can be written."""
DPI = 100
"""Resolution of the pictures [dots per inch]: an 8 x 5 in figure is 800 x 500 pixels."""
FLIGHT_FIGURE_SIZE = (8.0, 9.0)
"""Size of the flight figure [in]."""
FIGURE_SIZE = (8.0, 5.0)
"""Size of the other figures [in]."""

INK = "#1d2b3a"
"""The one dark colour of every series."""
GREY = "#6f6f6f"
"""Secondary lines: event marks, targets, labels."""
PALE = "#c9ced4"
"""Fill of reference bars (requirements)."""
GRID = "#dedede"
"""The thin grid."""
_G0 = 9.80665  # standard gravity [m/s²] (CGPM 1901), for accelerations shown in g

# Short labels of the events marked on the flight figure's event strip (a leading space:
# the end of a stage's event name, "booster burnout" -> "booster b/o").
_EVENT_LABELS: tuple[tuple[str, str], ...] = (
    ("rail exit", "rail exit"),
    (" burnout", "b/o"),
    (" separation", "sep."),
    (" ignition", "ign."),
    ("max dynamic pressure", "max q"),
    ("engine cutoff (orbit)", "cutoff"),
    ("apogee", "apogee"),
    ("ground impact", "impact"),
)
EVENT_STRIP_RATIO = 0.42
"""Height of the flight figure's event strip, as a share of one time panel's [-]."""
EVENT_FONT_SIZE = 6.5
"""Size of the event labels [pt]."""
_EVENT_LANES = (0.6, 0.33, 0.06)  # heights of the label lanes in the strip [axes fraction]

# Dispersed fields that move the apogee sideways: the wind and the launch angles.
_SIDEWAYS_FIELDS = ("wind_speed", "elevation", "azimuth")


class PlotError(RequestError):
    """A picture that cannot be drawn or written (unknown file type, unsuitable result)."""


# --- files -------------------------------------------------------------------------------


def plot_format(path: str | Path) -> str:
    """The picture format a file name asks for, from its extension.

    Parameters
    ----------
    path : str or Path
        The file to write.

    Returns
    -------
    str
        ``"png"`` or ``"svg"``.

    Raises
    ------
    PlotError
        The extension is neither ``.png`` nor ``.svg`` (in any letter case).

    References
    ----------
    .. [1] ISO/IEC 15948:2004, Portable Network Graphics (PNG) specification; W3C, Scalable
       Vector Graphics (SVG) 1.1, 2nd ed., 2011: the two formats behind the extensions.
    """
    suffix = Path(path).suffix.lower()
    if suffix not in PLOT_FORMATS:
        shown = f"'{Path(path).suffix}'" if Path(path).suffix else "no extension"
        raise PlotError(
            f"cannot write the picture {path}: the file name has {shown}",
            "a file name ending in .png or .svg",
        )
    return PLOT_FORMATS[suffix]


def check_plot_path(path: str | Path, force: bool = False) -> Path:
    """Check a picture's file name before any work is done (no matplotlib needed).

    Parameters
    ----------
    path : str or Path
        The file to write.
    force : bool
        Whether an existing file may be replaced.

    Returns
    -------
    Path
        The path, checked.

    Raises
    ------
    PlotError
        The extension is neither ``.png`` nor ``.svg``.
    OutputExistsError
        The file exists and ``force`` is False.
    OutputError
        An input of the command, not a regular file, or a folder that takes no file
        (:func:`propulsion.report.files.check_output`).

    References
    ----------
    .. [1] ISO/IEC 15948:2004 (PNG) and W3C SVG 1.1, 2nd ed., 2011.
    """
    from propulsion.report.files import check_output

    return check_output(path, force, check_name=plot_format)


def figure_bytes(figure: Figure, fmt: str = "png") -> bytes:
    """Render a figure to the bytes of a PNG or SVG file.

    Parameters
    ----------
    figure : matplotlib.figure.Figure
        A figure from this module (any figure works).
    fmt : str
        ``"png"`` (raster, at :data:`DPI`) or ``"svg"`` (vector, sizes in points).

    Returns
    -------
    bytes
        The file's content. The SVG carries no date, so the same figure gives the same bytes.

    Raises
    ------
    PlotError
        ``fmt`` is neither ``"png"`` nor ``"svg"``.

    References
    ----------
    .. [1] ISO/IEC 15948:2004 (PNG) and W3C SVG 1.1, 2nd ed., 2011.
    """
    fmt = fmt.lower().lstrip(".")
    if fmt not in PLOT_FORMATS.values():
        raise PlotError(f"cannot render a picture as {fmt!r}", "'png' or 'svg'")
    _attach_canvas(figure)
    buffer = io.BytesIO()
    metadata: dict[str, Any] = {"Date": None} if fmt == "svg" else {}
    import matplotlib

    # a fixed salt: the SVG's clip-path and marker ids are then the same on every run
    with matplotlib.rc_context({"svg.hashsalt": "propulsion"}):
        figure.savefig(buffer, format=fmt, dpi=DPI, metadata=metadata)
    return buffer.getvalue()


def save_figure(figure: Figure, path: str | Path, force: bool = False) -> Path:
    """Write a figure to a PNG or SVG file (by its extension), whole or not at all.

    Parameters
    ----------
    figure : matplotlib.figure.Figure
        The figure.
    path : str or Path
        The file; its extension (``.png`` or ``.svg``) chooses the format.
    force : bool
        Replace the file if it exists.

    Returns
    -------
    Path
        The file written.

    Raises
    ------
    PlotError
        Another extension.
    OutputExistsError
        The file exists and ``force`` is False (the file is left as it was).

    References
    ----------
    .. [1] ISO/IEC 15948:2004 (PNG) and W3C SVG 1.1, 2nd ed., 2011.
    """
    from propulsion.report.files import write_atomic

    # the name only: write_atomic checks the rest (check_plot_path claimed the file)
    target = Path(path)
    return write_atomic(target, figure_bytes(figure, plot_format(target)), force)


# --- style -------------------------------------------------------------------------------


def _attach_canvas(figure: Figure) -> None:
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    if not isinstance(figure.canvas, FigureCanvasAgg):
        FigureCanvasAgg(figure)


def _new_figure(size: tuple[float, float], mission: Mission, title: str) -> Figure:
    """An empty figure in our style with its title and caption."""
    from matplotlib.figure import Figure

    figure = Figure(figsize=size, dpi=DPI, facecolor="white", layout="constrained")
    _attach_canvas(figure)
    engine = figure.get_layout_engine()
    if engine is not None:
        engine.set(rect=(0.0, 0.03, 1.0, 0.97))  # type: ignore[call-arg]
    figure.suptitle(title, fontsize=11, color=INK, fontweight="bold")
    figure.text(
        0.01,
        0.006,
        f"{mission.name} · propulsion {__version__} · planning estimates, not a safety analysis",
        fontsize=7,
        color=GREY,
        ha="left",
        va="bottom",
    )
    return figure


def _tick(value: float, _: Any = None) -> str:
    if value == 0:
        return "0"
    if abs(value) >= 1e4:
        return f"{value:,.0f}"
    return f"{value:,.6g}"


def _style(ax: Axes) -> None:
    """Our plain look: white, thin grey grid below the data, light spines, readable ticks."""
    from matplotlib.ticker import FuncFormatter

    ax.set_facecolor("white")
    ax.grid(True, color=GRID, linewidth=0.5)
    ax.set_axisbelow(True)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    for side in ("left", "bottom"):
        ax.spines[side].set_color(GREY)
        ax.spines[side].set_linewidth(0.8)
    ax.tick_params(colors="#333333", labelsize=8, width=0.6, length=3)
    ax.xaxis.set_major_formatter(FuncFormatter(_tick))
    ax.yaxis.set_major_formatter(FuncFormatter(_tick))
    ax.xaxis.label.set_fontsize(9)
    ax.yaxis.label.set_fontsize(9)
    ax.xaxis.label.set_color(INK)
    ax.yaxis.label.set_color(INK)


def _legend(ax: Axes, **kwargs: Any) -> None:
    legend = ax.legend(fontsize=7, frameon=True, **kwargs)
    legend.get_frame().set_edgecolor(GRID)
    legend.get_frame().set_linewidth(0.5)


def _factor(dimension: str | None, units: DisplayUnits) -> float:
    """Display value per SI value (1 for numbers without a unit)."""
    if dimension is None:
        return 1.0
    return to_display(1.0, dimension, units)


def _unit(dimension: str | None, units: DisplayUnits) -> str:
    return units.label(dimension) if dimension is not None else ""


def _label(title: str, dimension: str | None, units: DisplayUnits) -> str:
    unit = _unit(dimension, units)
    return f"{title} ({unit})" if unit else title


def _shown(value: float, dimension: str | None, units: DisplayUnits, digits: int = 4) -> str:
    """A value with its display unit, for titles and notes."""
    if not math.isfinite(value):
        return "—"
    number = format_number(value * _factor(dimension, units), digits)
    unit = _unit(dimension, units)
    return f"{number} {unit}".strip()


def _column(frame: Any, name: str) -> FloatArray:
    return np.asarray(frame[name].to_numpy(dtype=float), dtype=np.float64)


# --- flight ------------------------------------------------------------------------------


def _is_orbital(result: FlightResult) -> bool:
    legs = result.mission.legs
    return result.orbit is not None or bool(legs and legs[0].target == "circular_orbit")


def _event_label(name: str) -> str | None:
    """Short label of an event, or None for events not marked."""
    for key, short in _EVENT_LABELS:
        if key.startswith(" ") and name.endswith(key):
            return f"{name[: -len(key)]} {short}"
        if name == key:
            return short
    return None


def _apart(inertial: FloatArray, ground: FloatArray) -> bool:
    """Whether the inertial speed line would show apart from the ground speed line: they
    differ somewhere by at least 1 % of the ground speed's largest value."""
    if not inertial.size:
        return False
    scale = float(np.nanmax(np.abs(ground))) if ground.size else 0.0
    gap = np.abs(inertial - ground)
    return bool(np.nanmax(gap) >= 0.01 * scale) if scale > 0 else bool(np.nanmax(gap) > 0)


def flight_figure(result: FlightResult, units: DisplayUnits) -> Figure:
    """The flown ascent against time: altitude, speed, acceleration, Mach, dynamic pressure.

    Events (rail exit, burnouts, separations, ignitions, maximum dynamic pressure, engine
    cutoff, apogee) sit on a thin strip of their own under the time axis: a short tick at
    each event's time and a horizontal label, labels that would touch moved to a lower
    lane or joined (see :func:`_event_strip`). The inertial speed is drawn only where it
    stands apart from the ground speed (by 1 % of the panel's top speed or more; without
    Earth's rotation the two are the same line). Orbital missions (an osculating orbit at
    the end, or a first leg aiming at a circular orbit) get a last panel: altitude
    against downrange.

    Parameters
    ----------
    result : FlightResult
        A flown ascent (:func:`propulsion.ascent.fly`), SI.
    units : DisplayUnits
        Display units: altitude and downrange in [m] or [ft], speed in [m/s] or [ft/s],
        dynamic pressure in [kPa] or [psi]; acceleration in [g] (multiples of standard
        gravity, 9.80665 m/s²) and Mach [dimensionless] in both.

    Returns
    -------
    matplotlib.figure.Figure
        8 x 9 in at 100 dpi. Lines carry the gids ``altitude``, ``speed`` (relative to the
        ground), ``inertial_speed`` (when drawn), ``acceleration``, ``mach``,
        ``dynamic_pressure``, ``altitude_downrange`` and ``event:<name>`` (the ticks, on
        the axes whose gid is ``event_strip``).

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2013,
       section 11.2 (the ascent and its losses).
    .. [2] NOAA/NASA/USAF, U.S. Standard Atmosphere, 1976 (speed of sound and density
       behind the Mach number and dynamic pressure).
    """
    frame = result.trajectory
    orbital = _is_orbital(result)
    mission = result.mission
    figure = _new_figure(FLIGHT_FIGURE_SIZE, mission, f"{mission.name}: the flown ascent")
    time = _column(frame, "time_s")
    length = _factor("length", units)
    speed = _factor("speed", units)
    pressure = _factor("pressure", units)
    # five time panels, the event strip under the last one's time axis, and for an orbit
    # the altitude against downrange
    ratios = [1.0] * 5 + [EVENT_STRIP_RATIO] + ([1.15] if orbital else [])
    grid = figure.add_gridspec(len(ratios), 1, height_ratios=ratios)
    top = figure.add_subplot(grid[0])
    panels = [top] + [figure.add_subplot(grid[k], sharex=top) for k in range(1, 5)]
    strip = figure.add_subplot(grid[5], sharex=top)
    for ax in panels:
        _style(ax)
    for ax in panels[:-1]:
        ax.tick_params(labelbottom=False)
    series = (
        (0, "altitude", "altitude_m", length, _label("Altitude", "length", units)),
        (1, "speed", "speed_m_s", speed, _label("Speed", "speed", units)),
        (2, "acceleration", "acceleration_g", 1.0, "Acceleration (g)"),
        (3, "mach", "mach", 1.0, "Mach"),
        (4, "dynamic_pressure", "dynamic_pressure_pa", pressure, ""),
    )
    # the standard atmosphere ends at 86 km: above it there is no Mach number to show
    above = _column(frame, "altitude_m") + mission.launch.altitude > TOP_ALTITUDE
    for index, gid, column, factor, ylabel in series:
        ax = panels[index]
        label = "relative to the ground" if gid == "speed" else None
        data = _column(frame, column) * factor
        if gid == "mach" and above.any():
            data = np.where(above, np.nan, data)
            ax.text(
                0.99,
                0.9,
                f"not defined above {_shown(TOP_ALTITUDE, 'length', units)} (top of the "
                "standard atmosphere)",
                transform=ax.transAxes,
                ha="right",
                va="top",
                fontsize=7,
                color=GREY,
            )
        ax.plot(time, data, color=INK, lw=1.3, gid=gid, label=label)
        ax.set_ylabel(ylabel or _label("Dyn. pressure", "pressure", units))
    ground = _column(frame, "speed_m_s")
    inertial = _column(frame, "inertial_speed_m_s")
    if _apart(inertial, ground):
        panels[1].plot(
            time,
            inertial * speed,
            color=INK,
            lw=1.0,
            ls="--",
            gid="inertial_speed",
            label="inertial",
        )
        _legend(panels[1], loc="best")
    else:
        panels[1].text(
            0.99,
            0.9,
            "relative to the ground; the inertial speed lies on this line (within 1 %)",
            transform=panels[1].transAxes,
            ha="right",
            va="top",
            fontsize=7,
            color=GREY,
        )
    panels[-1].set_xlabel("Time (s)")
    if time.size:
        top.set_xlim(float(time[0]), float(time[-1]))
    _event_strip(result, strip)
    facts = []
    if math.isfinite(result.apogee):
        when = format_number(result.apogee_time)
        facts.append(f"apogee {_shown(result.apogee, 'length', units)} at {when} s")
    facts.append(f"max Mach {format_number(result.max_mach, 3)}")
    facts.append(f"max q {_shown(result.max_dynamic_pressure, 'pressure', units, 3)}")
    if result.orbit is not None:
        facts.append(
            f"orbit {_shown(result.orbit.perigee_altitude, 'length', units)} × "
            f"{_shown(result.orbit.apogee_altitude, 'length', units)}"
        )
    top.set_title("; ".join(facts), fontsize=8, color=GREY, loc="left")
    if orbital:
        ax = figure.add_subplot(grid[6])
        _style(ax)
        ax.plot(
            _column(frame, "downrange_m") * length,
            _column(frame, "altitude_m") * length,
            color=INK,
            lw=1.3,
            gid="altitude_downrange",
        )
        ax.set_xlabel(_label("Downrange", "length", units))
        ax.set_ylabel(_label("Altitude", "length", units))
        ax.set_title("Altitude against downrange", fontsize=8, color=GREY, loc="left")
    return figure


def _text_width(text: str, size: float) -> float:
    """Width of a text in the figures' font [pt], from its glyph outlines (no renderer)."""
    from matplotlib.textpath import TextPath

    return float(TextPath((0.0, 0.0), text, size=size).get_extents().width)


@dataclass
class _Label:
    """An event label on the strip: its text, lane and extent [axes fraction]."""

    text: str
    lane: int
    left: float
    right: float
    anchor: float
    align: str


def _event_strip(result: FlightResult, strip: Axes) -> None:
    """The events along a strip of their own under the time axis: a short tick at each
    event's time and a horizontal label beside it.

    A label that would touch the one before it in its lane goes to the next lane down;
    when every lane is taken it joins the label nearest before it (``"max q, sustainer
    b/o"``). Label widths come from the glyph outlines and the strip's width is taken a
    little narrower than it will be, so labels never touch once drawn.
    """
    strip.set_gid("event_strip")
    strip.set_ylim(0.0, 1.0)
    strip.set_yticks([])
    strip.set_facecolor("none")
    strip.tick_params(axis="x", bottom=False, labelbottom=False)
    for side in ("left", "right", "bottom"):
        strip.spines[side].set_visible(False)
    strip.spines["top"].set_color(GREY)
    strip.spines["top"].set_linewidth(0.6)
    strip.set_ylabel("Events", fontsize=8, color=INK, rotation=0, ha="right", va="center")
    marks = []
    for event in result.events:
        short = _event_label(event.name)
        if short is None or not math.isfinite(event.time):
            continue
        strip.plot(
            [event.time, event.time],
            [1.0, 0.8],
            color=INK if event.name == "apogee" else GREY,
            lw=0.9,
            gid=f"event:{event.name}",
            clip_on=False,
        )
        marks.append((event.time, short))
    low, high = strip.get_xlim()
    span = high - low if high > low else 1.0
    # the strip's width [pt], taken narrower than the layout makes it (the y labels and
    # ticks on the left take about 0.8 in of the 8 in)
    width = FLIGHT_FIGURE_SIZE[0] * 72.0 * 0.84
    pad, gap = 3.0 / width, 6.0 / width  # from the tick, and between labels [fraction]
    ends = [-math.inf] * len(_EVENT_LANES)
    placed: list[_Label] = []
    for time, text in sorted(marks):
        where = (time - low) / span
        size = _text_width(text, EVENT_FONT_SIZE) / width
        label = _Label(text, 0, where + pad, where + pad + size, where + pad, "left")
        if label.right > 1.0:  # at the right end the label goes left of its tick
            label = _Label(text, 0, where - pad - size, where - pad, where - pad, "right")
        lane = next((k for k, end in enumerate(ends) if end + gap <= label.left), None)
        if lane is None and placed:
            # every lane is taken: join the label nearest before it
            last = max(placed, key=lambda item: item.right)
            last.text += f", {text}"
            grown = _text_width(last.text, EVENT_FONT_SIZE) / width
            if last.align == "left":
                last.right = last.left + grown
            else:
                last.left = last.right - grown
            ends[last.lane] = max(ends[last.lane], last.right)
            continue
        label.lane = lane or 0
        ends[label.lane] = label.right
        placed.append(label)
    for label in placed:
        strip.text(
            label.anchor,
            _EVENT_LANES[label.lane],
            label.text,
            transform=strip.transAxes,
            fontsize=EVENT_FONT_SIZE,
            color=GREY,
            ha=label.align,
            va="bottom",
            clip_on=False,
        )


# --- inputs ------------------------------------------------------------------------------

INPUT_FIGURE_SIZE = (8.0, 3.2)
"""Size of the pictures of the inputs (a thrust curve, the drag curves) [in]."""


def thrust_curve_figure(stage: Stage, mission: Mission, units: DisplayUnits) -> Figure:
    """A motor stage's thrust curve as the flight uses it (after any impulse or burn-time
    scale of the mission file), with the cluster's total when the stage flies several.

    Parameters
    ----------
    stage : Stage
        A motor stage of ``mission`` (SI: the motor's time [s] and thrust [N]).
    mission : Mission
        The mission (its name goes into the caption).
    units : DisplayUnits
        Display units: thrust in [N] or [lbf], impulse in [N·s] or [lbf·s].

    Returns
    -------
    matplotlib.figure.Figure
        8 x 3.2 in. Lines carry the gids ``thrust_curve`` (one motor) and
        ``cluster_thrust`` (every motor of the stage, when more than one).

    Raises
    ------
    ValueError
        An engine stage (it has no thrust curve).

    References
    ----------
    .. [1] G. P. Sutton and O. Biblarz, Rocket Propulsion Elements, 9th ed., 2017,
       chapter 2 (total impulse, the integral of thrust over time).
    """
    from propulsion.vehicle import Motor

    motor = stage.propulsion
    if not isinstance(motor, Motor):
        raise ValueError(f"stage '{stage.name}' flies engines, not a motor with a thrust curve")
    force = _factor("force", units)
    title = f"Thrust curve of stage {stage.name}: {motor.name}"
    figure = _new_figure(INPUT_FIGURE_SIZE, mission, title)
    ax = figure.add_subplot(1, 1, 1)
    _style(ax)
    thrust = motor.thrust * force
    ax.plot(motor.time, thrust, color=INK, lw=1.3, gid="thrust_curve", label="one motor")
    if stage.count > 1:
        ax.plot(
            motor.time,
            thrust * stage.count,
            color=INK,
            lw=1.0,
            ls="--",
            gid="cluster_thrust",
            label=f"{stage.count} motors",
        )
        _legend(ax, loc="best")
    ax.set_xlabel("Time from ignition (s)")
    ax.set_ylabel(_label("Thrust", "force", units))
    ax.set_xlim(left=0.0)
    ax.set_ylim(bottom=0.0)
    facts = [
        f"total impulse {_shown(motor.total_impulse, 'impulse', units)} ({motor.impulse_class})",
        f"burn time {format_number(motor.burn_time, 3)} s",
        f"average thrust {_shown(motor.average_thrust, 'force', units)}",
        f"propellant {_shown(motor.propellant_mass, 'mass', units)}",
    ]
    ax.set_title("; ".join(facts), fontsize=8, color=GREY, loc="left")
    return figure


def drag_curve_figure(mission: Mission, units: DisplayUnits) -> Figure:
    """The drag coefficient against Mach number of every drag curve the stages use, as
    given and, when the vehicle's drag scale is not 1, as flown (scaled).

    Parameters
    ----------
    mission : Mission
        The mission (SI; its vehicle's stages hold the drag curves).
    units : DisplayUnits
        Display units (the axes are dimensionless; kept for a uniform signature).

    Returns
    -------
    matplotlib.figure.Figure
        8 x 3.2 in. Lines carry the gids ``drag_curve:<name>`` and, with a drag scale,
        ``drag_curve_scaled:<name>``.
    """
    figure = _new_figure(INPUT_FIGURE_SIZE, mission, "Drag coefficient against Mach number")
    ax = figure.add_subplot(1, 1, 1)
    _style(ax)
    scale = mission.vehicle.drag_scale
    curves: dict[str, DragCurve] = {}
    for stage in mission.vehicle.stages:
        if stage.drag_curve is not None:
            curves.setdefault(stage.drag_curve.name, stage.drag_curve)
    styles = ("-", "-.", ":")
    for index, (name, curve) in enumerate(curves.items()):
        style = styles[index % len(styles)]
        ax.plot(
            curve.mach,
            curve.drag_coefficient,
            color=INK,
            lw=1.3,
            ls=style,
            gid=f"drag_curve:{name}",
            label=f"{name} (as given)" if scale != 1.0 else name,
        )
        if scale != 1.0:
            ax.plot(
                curve.mach,
                curve.drag_coefficient * scale,
                color=GREY,
                lw=1.0,
                ls=style,
                gid=f"drag_curve_scaled:{name}",
                label=f"{name} × {format_number(scale, 3)} (flown)",
            )
    if curves:
        _legend(ax, loc="best")
    ax.set_xlabel("Mach number")
    ax.set_ylabel("Drag coefficient")
    ax.set_xlim(left=0.0)
    ax.set_ylim(bottom=0.0)
    ax.set_title(f"drag scale {format_number(scale, 3)}", fontsize=8, color=GREY, loc="left")
    return figure


# --- ledgers -----------------------------------------------------------------------------


@dataclass(frozen=True)
class _Bar:
    """One bar of a waterfall: its gid, label, bottom and height (display units), kind."""

    gid: str
    label: str
    bottom: float
    height: float
    kind: str


def _draw_bars(ax: Axes, bars: Sequence[_Bar], unit: str) -> None:
    """Draw waterfall bars by kind: totals solid, losses hatched, references pale."""
    looks: dict[str, dict[str, Any]] = {
        "total": {"color": INK, "edgecolor": INK},
        "loss": {"color": "white", "edgecolor": INK, "hatch": "///"},
        "required": {"color": PALE, "edgecolor": INK},
        "allowance": {"color": "none", "edgecolor": INK, "hatch": ".."},
        "margin": {"color": "white", "edgecolor": INK, "hatch": "xx"},
    }
    positions: dict[str, int] = {}
    scale = max((abs(bar.height) for bar in bars), default=1.0) or 1.0
    for bar in bars:
        if bar.kind == "allowance" and bar.gid.startswith("required"):
            x = positions["required"]
        else:
            x = len(positions)
            positions[bar.gid] = x
        container = ax.bar(
            x, bar.height, bottom=bar.bottom, width=0.62, linewidth=0.8, **looks[bar.kind]
        )
        container.patches[0].set_gid(bar.gid)
        if bar.gid == "required_allowance":
            continue
        top = bar.bottom + max(bar.height, 0.0)
        sign = "−" if bar.kind == "loss" else ""
        # round-off (a steering loss of 1e-15 m/s) is shown as the zero it is
        value = 0.0 if abs(bar.height) < 1e-9 * scale else bar.height
        ax.text(
            x,
            top,
            f"{sign if value else ''}{format_number(abs(value) if sign else value)}",
            ha="center",
            va="bottom",
            fontsize=7,
            color=INK,
        )
    labels = {bar.gid: bar.label for bar in bars}
    ax.set_xticks(list(positions.values()))
    ax.set_xticklabels([labels[gid] for gid in positions], fontsize=7)
    ax.axhline(0.0, color=GREY, lw=0.8)
    ax.set_ylabel(f"Δv ({unit})")


def budget_ledger_figure(result: BudgetResult, units: DisplayUnits) -> Figure:
    """The ideal budget as a waterfall: ideal Δv, loss allowances, requirement, margin.

    Bars: the stack's ideal delta-v; each leg's loss allowance (the estimate stated in the
    mission file) taken away; what is left after them; the mission's total requirement
    (``verdict.total_required``: legs, leg reserves and the mission reserve), drawn with
    its loss allowances hatched on top; and the margin (``verdict.margin``) standing on the
    requirement, with the required margin marked. Without losses counted twice, the
    requirement's plain part and the margin add up to what is left after the allowances.

    Parameters
    ----------
    result : BudgetResult
        The ideal budget (:func:`propulsion.ledger.budget`), SI.
    units : DisplayUnits
        Display units: delta-v in [m/s] or [ft/s].

    Returns
    -------
    matplotlib.figure.Figure
        8 x 5 in at 100 dpi. Bars (rectangles) carry the gids ``ideal``,
        ``allowance:<leg index>``, ``achieved``, ``required``, ``required_allowance`` and
        ``margin``; the required margin is the line ``required_margin``.

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2013,
       sections 11.3 and 11.5 (the rocket equation, multistage rockets).
    """
    mission = result.mission
    s = _factor("speed", units)
    unit = units.label("speed")
    ideal = result.total_ideal_delta_v * s
    bars = [_Bar("ideal", "ideal Δv", 0.0, ideal, "total")]
    level = ideal
    allowances = 0.0
    for index, leg in enumerate(mission.legs):
        allowance = sum(v for label, v in leg.requirement.terms if label == "loss allowance") * s
        if allowance:
            bars.append(
                _Bar(
                    f"allowance:{index}",
                    f"loss allowance\n{_wrap(leg.name)}",
                    level - allowance,
                    allowance,
                    "loss",
                )
            )
            level -= allowance
            allowances += allowance
    bars.append(_Bar("achieved", "= after loss\nallowances", 0.0, ideal - allowances, "total"))
    figure = _new_figure(FIGURE_SIZE, mission, f"{mission.name}: ideal delta-v budget")
    ax = figure.add_subplot(1, 1, 1)
    _style(ax)
    verdict = result.verdict
    if mission.legs:
        required = verdict.total_required * s
        margin = verdict.margin * s
        bars.append(_Bar("required", "required\n(legs, reserves)", 0.0, required, "required"))
        if allowances:
            bars.append(
                _Bar("required_allowance", "", required - allowances, allowances, "allowance")
            )
        bars.append(_Bar("margin", "margin", required, margin, "margin"))
        _draw_bars(ax, bars, unit)
        x = [b.gid for b in bars if b.gid != "required_allowance"].index("margin")
        needed = required + verdict.required_margin * s
        ax.hlines(
            needed, x - 0.4, x + 0.4, colors=INK, linestyles="--", lw=1.2, gid="required_margin"
        )
        ax.text(x + 0.42, needed, "required\nmargin", fontsize=6.5, color=GREY, va="center")
        outcome = {True: "meets its targets", False: "falls short", None: "no target"}
        ax.set_title(
            f"Margin {_shown(verdict.margin, 'speed', units)} "
            f"({verdict.margin_fraction:+.1%} of the requirement); required margin "
            f"{_shown(verdict.required_margin, 'speed', units)}: "
            f"{outcome[verdict.meets_targets]}. Hatched dots: the loss allowances "
            "inside the requirement.",
            fontsize=7.5,
            color=GREY,
            loc="left",
            wrap=True,
        )
    else:
        _draw_bars(ax, bars, unit)
        ax.set_title("No legs stated: nothing to compare.", fontsize=8, color=GREY, loc="left")
    return figure


def _wrap(text: str, width: int = 16) -> str:
    """Break a label into lines of about ``width`` characters."""
    import textwrap

    lines = textwrap.wrap(text, width) or [""]
    return "\n".join(lines[:2]) + ("…" if len(lines) > 2 else "")


def flight_ledger_figure(result: FlightResult, units: DisplayUnits) -> Figure:
    """The flight's delta-v ledger as a waterfall, with the budget's requirement and margin.

    Bars: the ideal delta-v flown (integral of vacuum thrust over mass); the gravity,
    drag, steering and back-pressure losses taken away; the achieved change of inertial
    speed (ideal minus losses, up to the ledger's closure); then, for comparison, the first
    leg's required delta-v from the ideal budget (its loss allowance hatched: the flight
    computes the losses instead) and the flight's margin in ideal delta-v (found by
    root finding on payload; absent when the flight was flown without the margin search).

    Parameters
    ----------
    result : FlightResult
        A flown ascent (:func:`propulsion.ascent.fly`), SI.
    units : DisplayUnits
        Display units: delta-v in [m/s] or [ft/s].

    Returns
    -------
    matplotlib.figure.Figure
        8 x 5 in at 100 dpi. Bars carry the gids ``ideal``, ``rotation_credit`` (when
        Earth's rotation gives something), ``gravity_loss``, ``drag_loss``,
        ``steering_loss``, ``pressure_loss``, ``pad_loss`` (when thrust is spent on the
        pad), ``achieved``, ``required``, ``required_allowance`` and ``margin``.

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2013,
       section 11.2, eq. 11.8 and following (the delta-v losses of a launch).
    """
    from propulsion.ledger import budget

    mission = result.mission
    s = _factor("speed", units)
    total = result.clean_ledger()[-1]  # round-off shown as 0
    ideal = total.ideal * s
    bars = [_Bar("ideal", "ideal Δv", 0.0, ideal, "total")]
    level = ideal
    credit = total.rotation_credit * s
    if credit != 0.0:
        bars.append(_Bar("rotation_credit", "Earth-rotation\ncredit", level, credit, "total"))
        level += credit
    losses = [
        ("gravity_loss", "gravity\nloss"),
        ("drag_loss", "drag\nloss"),
        ("steering_loss", "steering\nloss"),
        ("pressure_loss", "back-pressure\nloss"),
    ]
    if total.pad_loss != 0.0:
        losses.append(("pad_loss", "held by\nthe pad"))
    for gid, label in losses:
        loss = float(getattr(total, gid)) * s
        bars.append(_Bar(gid, label, level - loss, loss, "loss"))
        level -= loss
    bars.append(_Bar("achieved", "= achieved\n(Δ speed)", 0.0, total.achieved * s, "total"))
    title = f"{mission.name}: delta-v ledger of the flight"
    figure = _new_figure(FIGURE_SIZE, mission, title)
    ax = figure.add_subplot(1, 1, 1)
    _style(ax)
    from propulsion.report.tables import closure_text

    closure = closure_text(result.total.closure, result.resolution, units)
    notes = [f"closure {closure} {units.label('speed')}"]
    if mission.legs:
        leg = mission.legs[0]
        required = budget(mission).legs[0].required_delta_v * s
        allowance = sum(v for label, v in leg.requirement.terms if label == "loss allowance") * s
        bars.append(_Bar("required", "required\n(budget, 1st leg)", 0.0, required, "required"))
        if allowance:
            bars.append(
                _Bar("required_allowance", "", required - allowance, allowance, "allowance")
            )
            notes.append(
                f"hatched dots: the budget's loss allowance {_shown(allowance / s, 'speed', units)}"
            )
        margin = result.verdict.propulsion_margin_delta_v
        if math.isfinite(margin):
            bars.append(_Bar("margin", "propulsion\nmargin", 0.0, margin * s, "margin"))
            notes.append(
                "propulsion margin: the ideal Δv of the impulse that may be lost and still "
                "meet the target"
            )
        else:
            notes.append(f"propulsion margin: {result.verdict.method}")
    _draw_bars(ax, bars, units.label("speed"))
    ax.set_title("; ".join(notes) + ".", fontsize=7.5, color=GREY, loc="left", wrap=True)
    return figure


# --- dispersion --------------------------------------------------------------------------


def _histogram(
    ax: Axes, values: FloatArray, gid: str, xlabel: str, mark: float | None, mark_label: str
) -> int:
    """A histogram of the finite values with an optional marked value; returns the count."""
    finite = values[np.isfinite(values)]
    ax.set_xlabel(xlabel)
    ax.set_ylabel("Samples")
    if not finite.size:
        ax.text(0.5, 0.5, "no finite values", transform=ax.transAxes, ha="center", color=GREY)
        return 0
    edges = np.histogram_bin_edges(finite, bins="auto")
    if edges.size > 41:
        edges = np.histogram_bin_edges(finite, bins=40)
    counts, edges = np.histogram(finite, bins=edges)
    bars = ax.bar(
        edges[:-1],
        counts,
        width=np.diff(edges),
        align="edge",
        color=INK,
        edgecolor="white",
        linewidth=0.5,
    )
    for patch in bars.patches:
        patch.set_gid(gid)
    if mark is not None and math.isfinite(mark):
        ax.axvline(mark, color=GREY, lw=1.4, ls="--", gid=f"{gid}_mark", label=mark_label)
        _legend(ax, loc="upper left")
    return int(finite.size)


def scatter_figure(result: ScatterResult, units: DisplayUnits) -> Figure:
    """A dispersion study: histograms of apogee and margin, and where the apogees lie.

    The apogee histogram marks the target altitude (apogee targets); the margin histogram
    (in the target's own terms: a length for apogee, a speed for burnout speed and orbit)
    marks zero margin. The title gives the probability of meeting the target with its 95 %
    Wilson interval. When a wind or launch-angle field is dispersed, a third panel shows
    each sample's apogee against its downrange distance at apogee.

    Parameters
    ----------
    result : ScatterResult
        A dispersion study (:func:`propulsion.studies.scatter.scatter`), SI.
    units : DisplayUnits
        Display units: lengths in [m] or [ft], speeds in [m/s] or [ft/s].

    Returns
    -------
    matplotlib.figure.Figure
        8 x 5 in at 100 dpi. Histogram bars carry the gids ``apogee_hist`` and
        ``margin_hist``, the marks ``apogee_hist_mark`` and ``margin_hist_mark``, the
        sample points ``downrange_apogee``.

    References
    ----------
    .. [1] E. B. Wilson, "Probable inference, the law of succession, and statistical
       inference", Journal of the American Statistical Association 22(158), 209-212, 1927.
    """
    mission = result.mission
    sideways = any(d.field.strip().split(".")[-1] in _SIDEWAYS_FIELDS for d in mission.dispersions)
    figure = _new_figure(
        FLIGHT_FIGURE_SIZE if result.footprints else FIGURE_SIZE,
        mission,
        f"{mission.name}: {result.valid:,} dispersed flights (seed {result.seed})",
    )
    count = 3 if sideways else 2
    # with a footprint, the map takes a second row of its own, as wide as the figure
    grid = figure.add_gridspec(2 if result.footprints else 1, count, height_ratios=(
        (1.0, 1.4) if result.footprints else (1.0,)
    ))  # fmt: skip
    length = _factor("length", units)
    ax = figure.add_subplot(grid[0, 0])
    _style(ax)
    apogee = result.values.get("apogee_m", np.zeros(0)) * length
    target = result.required * length if result.target == "apogee" else None
    _histogram(
        ax,
        apogee,
        "apogee_hist",
        _label("Apogee", "length", units),
        target,
        f"target {_shown(result.required, 'length', units)}",
    )
    ax.set_title("Apogee", fontsize=9, color=INK, loc="left")
    ax = figure.add_subplot(grid[0, 1])
    _style(ax)
    dimension = "speed" if result.target == "burnout_speed" else "length"
    margin = result.values.get("margin", np.zeros(0)) * _factor(dimension, units)
    margin = margin[np.isfinite(margin)]  # a miss without a margin (no orbit) is no number
    _histogram(
        ax,
        margin if result.target else np.zeros(0),
        "margin_hist",
        _label("Target margin", dimension, units),
        0.0 if result.target else None,
        "zero margin",
    )
    title = (
        "Target margin (in the orbit band)"
        if result.target == "circular_orbit"
        else ("Target margin")
    )
    ax.set_title(title, fontsize=9, color=INK, loc="left")
    if math.isfinite(result.probability):
        low, high = result.interval
        figure.suptitle(
            f"{mission.name}: {result.valid:,} dispersed flights (seed {result.seed})\n"
            f"probability of meeting the {result.target} target {result.probability:.1%} "
            f"(95 % Wilson interval {low:.1%} to {high:.1%})",
            fontsize=10,
            color=INK,
            fontweight="bold",
        )
    if sideways:
        ax = figure.add_subplot(grid[0, 2])
        _style(ax)
        downrange = result.values.get("downrange_m", np.zeros(0)) * length
        ax.scatter(
            downrange,
            apogee,
            s=7,
            marker="o",
            facecolors="none",
            edgecolors=INK,
            linewidths=0.6,
            gid="downrange_apogee",
        )
        if target is not None:
            ax.axhline(target, color=GREY, lw=1.2, ls="--")
        ax.set_xlabel(_label("Downrange at apogee", "length", units))
        ax.set_ylabel(_label("Apogee", "length", units))
        ax.set_title("Where the apogees lie", fontsize=9, color=INK, loc="left")
    if result.footprints:
        ax = figure.add_subplot(grid[1, :])
        _style(ax)
        _footprint_panel(ax, result, units)
    return figure


_FOOTPRINT_MARKERS = ("^", "s", "D", "v", "o")


def _footprint_panel(ax: Axes, result: ScatterResult, units: DisplayUnits) -> None:
    """Where things come down: the impact points of each body (east and north of the pad),
    their 1σ (dashed) and 3σ (solid) ellipses, the pad (a cross) and the farthest point's
    distance as a dotted circle. gids: ``impacts:<body>``, ``ellipse1:<body>``,
    ``ellipse3:<body>``, ``pad``, ``farthest``."""
    from matplotlib.patches import Circle
    from matplotlib.patches import Ellipse as EllipsePatch

    length = _factor("length", units)
    farthest = 0.0
    for index, item in enumerate(result.footprints):
        marker = _FOOTPRINT_MARKERS[index % len(_FOOTPRINT_MARKERS)]
        ax.scatter(
            item.east * length,
            item.north * length,
            s=6,
            marker=marker,
            facecolors="none",
            edgecolors=GREY if index == len(result.footprints) - 1 else PALE,
            linewidths=0.5,
            gid=f"impacts:{item.body}",
            label=item.body,
        )
        if math.isfinite(item.farthest):
            farthest = max(farthest, item.farthest)
        for ellipse, style in zip(item.ellipses, ("--", "-"), strict=False):
            # matplotlib's angle runs anticlockwise from the x axis (east); the bearing runs
            # clockwise from north
            patch = EllipsePatch(
                (item.mean[0] * length, item.mean[1] * length),
                2 * ellipse.major * length,
                2 * ellipse.minor * length,
                angle=90.0 - math.degrees(ellipse.bearing),
                fill=False,
                ls=style,
                lw=1.4,
                edgecolor=INK,
                zorder=4,  # over the points, which hide a 1σ ellipse's outline
                gid=f"ellipse{ellipse.sigmas:.0f}:{item.body}",
            )
            ax.add_patch(patch)
    ax.plot([0.0], [0.0], marker="+", ms=10, color=INK, ls="none", gid="pad")
    if farthest > 0:
        ax.add_patch(
            Circle((0.0, 0.0), farthest * length, fill=False, ls=":", lw=0.8,
                   edgecolor=GREY, gid="farthest")
        )  # fmt: skip
    ax.set_aspect("equal", adjustable="datalim")
    ax.set_xlabel(_label("East of the pad", "length", units))
    ax.set_ylabel(_label("North", "length", units))
    ax.legend(fontsize=7, frameon=False, loc="best")
    ax.set_title("Where things come down", fontsize=9, color=INK, loc="left")


# --- sweep -------------------------------------------------------------------------------


def _output_dimension(result: SweepResult, output: str) -> tuple[str, str | None]:
    """Title and dimension of a sweep output column."""
    from propulsion.studies.compare import COLUMNS

    spec = COLUMNS.get(output)
    title = spec.title if spec is not None else output
    dimension = spec.dimension if spec is not None else None
    if output == "margin" and "margin_unit" in result.frame.columns:
        unit = next((u for u in result.frame["margin_unit"] if isinstance(u, str) and u), "")
        dimension = {"m": "length", "m/s": "speed"}.get(unit)
    return title, dimension


def _sweep_target(result: SweepResult, output: str) -> tuple[float | None, str]:
    """The target level of an output [SI] and its description, or None."""
    legs = result.mission.legs
    if output in ("margin", "propulsion_margin_m_s"):
        return 0.0, "zero margin"
    if output == "apogee_m" and legs and legs[0].target == "apogee":
        return legs[0].fields["altitude"], "target apogee"
    return None, ""


def _axis_values(frame: Any, column: str, dimension: str | None, units: DisplayUnits) -> FloatArray:
    return _column(frame, column) * _factor(dimension, units)


def sweep_figure(result: SweepResult, units: DisplayUnits, output: str = "apogee_m") -> Figure:
    """A sweep's output against its swept field(s).

    One swept field: the output against the field, with the target level drawn (the target
    apogee for ``apogee_m`` when the first leg aims at an apogee; zero for the margins).
    Two fields: a filled contour map of the output over the grid (a heat map when an axis
    has fewer than three points), the grid points dotted, and the target contour drawn.

    Parameters
    ----------
    result : SweepResult
        A sweep (:func:`propulsion.studies.sweep.sweep`), SI.
    units : DisplayUnits
        Display units of the swept fields and the output (lengths [m] or [ft], masses [kg]
        or [lb], speeds [m/s] or [ft/s], angles [deg], ...).
    output : str
        A column of ``result.frame``: ``apogee_m``, ``margin``, ``max_mach``, ...

    Returns
    -------
    matplotlib.figure.Figure
        8 x 5 in at 100 dpi. The output line has the gid ``output``, the target line
        ``target``; the map ``output_map``, the target contour ``target_contour``.

    Raises
    ------
    PlotError
        The sweep has no such column, no rows, or more than two swept fields.

    References
    ----------
    .. [1] W. E. Lorensen and H. E. Cline, "Marching cubes: a high resolution 3D surface
       construction algorithm", SIGGRAPH 1987 (the contour-tracing family behind the target
       contour).
    """
    frame = result.frame
    axes = result.axes
    if len(axes) not in (1, 2):
        raise PlotError(
            f"a sweep picture shows one or two swept fields; this sweep has {len(axes)}",
            "one or two --set options with --plot",
        )
    if not len(frame):
        raise PlotError("none of the sweep's points could be flown, so there is nothing to draw")
    if output not in frame.columns:
        raise PlotError(
            f"the sweep has no column {output!r}",
            "one of " + ", ".join(str(c) for c in frame.columns if c not in ("name", "source")),
        )
    title, dimension = _output_dimension(result, output)
    target, target_text = _sweep_target(result, output)
    mission = result.mission
    names = " and ".join(axis.ref.name for axis in axes)
    figure = _new_figure(FIGURE_SIZE, mission, f"{mission.name}: {title} over {names}")
    ax = figure.add_subplot(1, 1, 1)
    _style(ax)
    factor = _factor(dimension, units)
    values = _column(frame, output) * factor
    shown_target = target * factor if target is not None else None
    dims = [None if axis.ref.is_count else axis.ref.dimension for axis in axes]
    keep = [i for i, axis in enumerate(axes) if len(axis.values) > 1] or [0]
    if len(axes) == 2 and len(keep) == 2:
        _sweep_map(figure, ax, result, values, dims, units, shown_target, title, dimension)
    else:
        i = keep[0]
        axis = axes[i]
        x = _axis_values(frame, axis.column, dims[i], units)
        order = np.argsort(x, kind="stable")
        ax.plot(x[order], values[order], color=INK, lw=1.3, marker="o", ms=4, gid="output")
        ax.set_xlabel(_label(axis.ref.name, dims[i], units))
        ax.set_ylabel(_label(title, dimension, units))
        if shown_target is not None:
            ax.axhline(shown_target, color=GREY, lw=1.2, ls="--", gid="target", label=target_text)
            crossing = _crossing(x[order], values[order], shown_target)
            if crossing is not None:
                ax.axvline(crossing, color=GREY, lw=0.8, ls=":")
                ax.annotate(
                    f"{format_number(crossing)}",
                    (crossing, shown_target),
                    xytext=(4, 4),
                    textcoords="offset points",
                    fontsize=7,
                    color=GREY,
                )
            _legend(ax, loc="best")
    if result.skipped:
        ax.set_title(
            f"{plural(len(result.skipped), 'grid point')} skipped: impossible vehicles",
            fontsize=7.5,
            color=GREY,
            loc="left",
        )
    return figure


def _crossing(x: FloatArray, y: FloatArray, level: float) -> float | None:
    """The first x where the piecewise-linear y crosses the level, or None."""
    finite = np.isfinite(x) & np.isfinite(y)
    x, y = x[finite], y[finite] - level
    for k in range(x.size - 1):
        if y[k] == 0:
            return float(x[k])
        if y[k] * y[k + 1] < 0:
            return float(x[k] - y[k] * (x[k + 1] - x[k]) / (y[k + 1] - y[k]))
    return float(x[-1]) if x.size and y[-1] == 0 else None


def _sweep_map(
    figure: Figure,
    ax: Axes,
    result: SweepResult,
    values: FloatArray,
    dims: Sequence[str | None],
    units: DisplayUnits,
    target: float | None,
    title: str,
    dimension: str | None,
) -> None:
    """The output over a two-field grid, with the target contour."""
    from matplotlib import patheffects
    from matplotlib.colors import LinearSegmentedColormap

    frame = result.frame
    first, second = result.axes
    xs = np.asarray(first.values, dtype=float)
    ys = np.asarray(second.values, dtype=float)
    at = {
        (float(a), float(b)): float(v)
        for a, b, v in zip(
            _column(frame, first.column), _column(frame, second.column), values, strict=True
        )
    }
    grid = np.full((ys.size, xs.size), np.nan)
    for i, x in enumerate(xs):
        for j, y in enumerate(ys):
            grid[j, i] = at.get((float(x), float(y)), np.nan)
    gx = xs * _factor(dims[0], units)
    gy = ys * _factor(dims[1], units)
    surface = np.ma.masked_invalid(grid)
    cmap = LinearSegmentedColormap.from_list("propulsion_ink", ["#f3f5f7", INK])
    finite = grid[np.isfinite(grid)]
    if finite.size and (xs.size < 3 or ys.size < 3 or np.ptp(finite) == 0):
        shading = ax.pcolormesh(gx, gy, surface, cmap=cmap, shading="nearest")
        shading.set_gid("output_map")
        colorbar = figure.colorbar(shading, ax=ax)
    elif finite.size:
        filled = ax.contourf(gx, gy, surface, levels=12, cmap=cmap)
        filled.set_gid("output_map")
        colorbar = figure.colorbar(filled, ax=ax)
    else:
        colorbar = None
    if colorbar is not None:
        colorbar.set_label(_label(title, dimension, units), fontsize=8)
        colorbar.ax.tick_params(labelsize=7)
    mesh_x, mesh_y = np.meshgrid(gx, gy)
    ax.plot(
        mesh_x.ravel(),
        mesh_y.ravel(),
        ls="none",
        marker="o",
        ms=3,
        markerfacecolor="white",
        markeredgecolor=INK,
        markeredgewidth=0.6,
        gid="grid",
    )
    ax.set_xlabel(_label(first.ref.name, dims[0], units))
    ax.set_ylabel(_label(second.ref.name, dims[1], units))
    if target is None:
        return
    if finite.size and finite.min() <= target <= finite.max() and xs.size > 1 and ys.size > 1:
        contour = ax.contour(
            gx, gy, surface, levels=[target], colors=INK, linewidths=2.0, linestyles="--"
        )
        contour.set_gid("target_contour")
        contour.set(path_effects=[patheffects.withStroke(linewidth=4, foreground="white")])
        # labels over the line (not cut into it), so the contour keeps its traced vertices
        for text in ax.clabel(
            contour, inline=False, fmt=lambda v: f"target {format_number(v)}", fontsize=7
        ):
            text.set_bbox({"facecolor": "white", "edgecolor": "none", "pad": 1.0})
    else:
        ax.text(
            0.01,
            1.01,
            f"the target level {format_number(target)} is not reached in the swept range",
            transform=ax.transAxes,
            fontsize=7.5,
            color=GREY,
        )


# --- split -------------------------------------------------------------------------------


def split_curve(result: SplitResult, shares: FloatArray) -> FloatArray:
    """Liftoff mass of a two-stage stack against the first stage's share of the delta-v.

    Parameters
    ----------
    result : SplitResult
        A split (:func:`propulsion.stage_split.split`) of a two-stage mission, SI.
    shares : numpy.ndarray
        First stage's share of the required delta-v [dimensionless, 0 to 1].

    Returns
    -------
    numpy.ndarray
        Liftoff mass [kg] (payload included) of the stack that gives each share and the rest
        to the second stage; NaN where a stage cannot give its share.

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2013,
       section 11.6 (stages sized from the top down at constant structural coefficient).
    """
    from propulsion.stage_split import stack_for_split

    exhaust = np.asarray(result.specific_impulse, dtype=float) * _G0
    epsilon = np.asarray(result.structural_coefficient, dtype=float)
    payload = result.mission.vehicle.payload_mass
    out = np.full(shares.size, np.nan)
    for k, share in enumerate(shares):
        split = np.array([share, 1.0 - share]) * result.required_delta_v
        stack = stack_for_split(split, exhaust, epsilon, payload)
        if stack is not None:
            out[k] = payload + float(stack.sum())
    return out


def split_figure(result: SplitResult, units: DisplayUnits) -> Figure:
    """Liftoff mass against the split of the delta-v, or against the stage count.

    For a two-stage mission: the liftoff mass of the stack (rocket equation, constant
    structural coefficient) against the first stage's share of the required delta-v from
    5 % to 95 %, with the Lagrange optimum, the loss-aware optimum (when found; its own
    total delta-v differs, so it lies off the curve) and the current design marked. For one
    or three and more stages: the optimal liftoff mass against the stage count.

    Parameters
    ----------
    result : SplitResult
        A split (:func:`propulsion.stage_split.split`), SI.
    units : DisplayUnits
        Display units: masses in [kg] or [lb], delta-v in [m/s] or [ft/s].

    Returns
    -------
    matplotlib.figure.Figure
        8 x 5 in at 100 dpi. The curve has the gid ``liftoff_curve`` (x: share in %), the
        marks ``lagrange``, ``loss_aware`` and ``current``; the stage-count line
        ``count_curve`` and the mission's own count ``mission_count``.

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2013,
       section 11.6 (optimal staging).
    """
    mission = result.mission
    mass = _factor("mass", units)
    required = _shown(result.required_delta_v, "speed", units)
    stages = int(np.asarray(result.specific_impulse).size)
    if stages == 2:
        title = f"{mission.name}: liftoff mass against the split of {required}"
    else:
        title = f"{mission.name}: liftoff mass against the stage count ({required})"
    figure = _new_figure(FIGURE_SIZE, mission, title)
    ax = figure.add_subplot(1, 1, 1)
    _style(ax)
    if stages == 2:
        _split_curve_axes(ax, result, mass, units)
    else:
        _count_axes(ax, result, mass, units, stages)
    return figure


def _split_curve_axes(ax: Axes, result: SplitResult, mass: float, units: DisplayUnits) -> None:
    shares = np.linspace(0.05, 0.95, 181)
    liftoff = split_curve(result, shares) * mass
    ax.plot(shares * 100, liftoff, color=INK, lw=1.4, gid="liftoff_curve", label="ideal stack")
    finite = liftoff[np.isfinite(liftoff)]
    lagrange = result.lagrange
    if lagrange.feasible:
        share = float(lagrange.delta_v[0] / lagrange.delta_v.sum())
        ax.plot(
            [share * 100],
            [lagrange.liftoff_mass * mass],
            ls="none",
            marker="o",
            ms=7,
            color=INK,
            gid="lagrange",
            label=f"Lagrange optimum ({share:.1%}, {_shown(lagrange.liftoff_mass, 'mass', units)})",
        )
    loss = result.loss_aware
    if loss is not None and loss.found:
        share = float(loss.delta_v[0] / loss.delta_v.sum())
        ax.plot(
            [share * 100],
            [loss.liftoff_mass * mass],
            ls="none",
            marker="s",
            ms=7,
            markerfacecolor="white",
            markeredgecolor=INK,
            gid="loss_aware",
            label=f"loss-aware optimum, flown ({share:.1%}, "
            f"{_shown(loss.liftoff_mass, 'mass', units)}; "
            f"Δv {_shown(float(loss.delta_v.sum()), 'speed', units)})",
        )
    current = np.asarray(result.current_delta_v, dtype=float)
    if current.size == 2 and current.sum() > 0:
        share = float(current[0] / current.sum())
        total = _shown(float(current.sum()), "speed", units)
        ax.plot(
            [share * 100],
            [result.current_liftoff_mass * mass],
            ls="none",
            marker="^",
            ms=7,
            markerfacecolor="white",
            markeredgecolor=GREY,
            gid="current",
            label=f"current design ({share:.1%}; Δv {total})",
        )
    if finite.size:
        low = float(finite.min())
        marks = [low]
        if loss is not None and loss.found:
            marks.append(loss.liftoff_mass * mass)
        marks.append(result.current_liftoff_mass * mass)
        high = min(float(finite.max()), 3.0 * low)
        ax.set_ylim(0.92 * min(marks), max(high, 1.08 * max(marks)))
    else:
        ax.text(
            0.5,
            0.5,
            "no split of the delta-v can be reached by these stages",
            transform=ax.transAxes,
            ha="center",
            color=GREY,
        )
    ax.set_xlim(0, 100)
    ax.set_xlabel("First stage's share of the delta-v (%)")
    ax.set_ylabel(_label("Liftoff mass", "mass", units))
    _legend(ax, loc="upper center")


def _count_axes(
    ax: Axes, result: SplitResult, mass: float, units: DisplayUnits, stages: int
) -> None:
    counts = [s.stage_count for s in result.counts]
    masses = np.array([s.liftoff_mass if s.feasible else np.nan for s in result.counts]) * mass
    ax.plot(counts, masses, color=INK, lw=1.2, marker="o", ms=5, gid="count_curve")
    for count, solution in zip(counts, result.counts, strict=True):
        if not solution.feasible:
            ax.annotate(
                "cannot reach\nthe requirement",
                (count, 0.0),
                xycoords=("data", "axes fraction"),
                xytext=(0, 8),
                textcoords="offset points",
                ha="center",
                fontsize=7,
                color=GREY,
            )
    if stages in counts:
        k = counts.index(stages)
        if math.isfinite(masses[k]):
            ax.plot(
                [stages],
                [masses[k]],
                ls="none",
                marker="s",
                ms=10,
                markerfacecolor="none",
                markeredgecolor=INK,
                gid="mission_count",
                label=f"the mission's {plural(stages, 'stage')}",
            )
            _legend(ax, loc="upper right")
    ax.set_xticks(counts)
    ax.set_xlabel("Stages (each like the mission's, the last repeated)")
    ax.set_ylabel(_label("Optimal liftoff mass", "mass", units))


def capacity_figure(result: CapacityResult, units: DisplayUnits) -> Figure:
    """Payload to orbit against circular altitude, one line per inclination.

    Altitudes in km (nautical miles in US units), payloads in the display mass unit.
    Points out of reach are left out. gids: ``capacity:<inclination in deg or "file">``.
    """
    us = units.system == "us"
    scale, label = (1852.0, "nmi") if us else (1000.0, "km")
    mass = to_display(1.0, "mass", units)
    figure = _new_figure(FIGURE_SIZE, result.mission, f"{result.mission.name}: payload to orbit")
    ax = figure.add_subplot(1, 1, 1)
    _style(ax)
    planes: dict[float, list[tuple[float, float]]] = {}
    for point in result.points:
        key = point.inclination
        planes.setdefault(key if not math.isnan(key) else -1.0, []).append(
            (point.altitude, point.payload)
        )
    styles = ("-", "--", ":", "-.")
    for index, (plane, rows) in enumerate(planes.items()):
        rows = [(a, p) for a, p in rows if math.isfinite(p)]
        name = "file" if plane < 0 else f"{math.degrees(plane):g}"
        text = "the file's plane" if plane < 0 else f"inclination {math.degrees(plane):g}°"
        ax.plot(
            [a / scale for a, _ in rows],
            [p * mass for _, p in rows],
            ls=styles[index % len(styles)],
            marker="o",
            ms=4,
            color=INK,
            lw=1.4,
            label=text,
            gid=f"capacity:{name}",
        )
    ax.set_xlabel(f"Circular orbit altitude ({label})")
    ax.set_ylabel(_label("Largest payload", "mass", units))
    ax.set_ylim(bottom=0.0)
    if len(planes) > 1:
        ax.legend(frameon=False, fontsize=8)
    return figure
