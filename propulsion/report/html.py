"""The reviewer's report: one self-contained HTML file with everything a review needs.

The report holds the safety caution, the mission and vehicle, the ideal budget, the flown
delta-v ledger and events, both verdicts with their margins, the plausibility warnings,
the dispersion study (when the mission states uncertainties), the figures, the model's
assumptions and limits, and the published sources of its methods.

The file needs nothing else to be read: the style sheet is inline, the figures are PNG
images embedded as base64 ``data:`` URIs, and there are no scripts, web fonts or links to
other sites. Every text that comes from the mission file is HTML-escaped.

Each key number sits in an element that carries the JSON document it comes from
(``data-doc``: ``fly``, ``budget`` or ``scatter``, the ``--json`` output of those
commands), its path in that document (``data-key``, dot-separated, list positions as
numbers: ``ledger.segments.0.drag_loss_m_s``) and its SI value at full precision
(``data-si``, Python's ``repr`` of the float), so that a program can check the report
against the JSON output of the same run.
"""

from __future__ import annotations

import base64
import math
import sys
from collections.abc import Callable, Sequence
from html import escape
from typing import TYPE_CHECKING, Any

from propulsion import __version__
from propulsion.constants import STANDARD_GRAVITY
from propulsion.report.cautions import SAFETY_CAUTION, SAFETY_TITLE
from propulsion.units import DisplayUnits, format_number, to_display

if TYPE_CHECKING:
    from propulsion.ascent import FlightResult
    from propulsion.ledger import BudgetResult
    from propulsion.margins import FlightVerdict
    from propulsion.mission import Mission
    from propulsion.plausibility import Finding
    from propulsion.studies.scatter import ScatterResult
    from propulsion.vehicle import Stage

__all__ = ["DEFAULT_DISPERSION_SAMPLES", "build_report"]

DEFAULT_DISPERSION_SAMPLES = 1000
"""Samples of the dispersion study when the caller does not say [count]."""

_PERCENTILES = (1.0, 5.0, 50.0, 95.0, 99.0)

_STYLE = """
:root { color-scheme: light; }
* { box-sizing: border-box; }
body {
  font-family: "Helvetica Neue", Arial, "Liberation Sans", "DejaVu Sans", sans-serif;
  color: #161616; background: #fff; line-height: 1.45; font-size: 15px;
  max-width: 72rem; margin: 1.5rem auto 3rem; padding: 0 1.25rem;
}
h1 { font-size: 1.7rem; margin: 0 0 .2rem; }
h2 { font-size: 1.3rem; margin: 2.2rem 0 .6rem; padding-bottom: .2rem;
     border-bottom: 2px solid #333; }
h3 { font-size: 1.05rem; margin: 1.4rem 0 .4rem; }
p, li { max-width: 52rem; }
.subtitle { color: #555; margin: 0 0 1rem; }
.caution { border: 3px solid #a4001d; background: #fff3f3; padding: .8rem 1.1rem;
           margin: 1rem 0 1.5rem; border-radius: 4px; }
.caution h2 { border: 0; margin: 0 0 .3rem; padding: 0; color: #a4001d; font-size: 1.2rem; }
.caution p { margin: 0; font-weight: 600; }
nav ol { columns: 2; margin: .3rem 0; }
dl.facts { display: grid; grid-template-columns: max-content 1fr; gap: .2rem 1rem; }
dl.facts dt { font-weight: 600; }
dl.facts dd { margin: 0; }
.scroll { overflow-x: auto; }
table { border-collapse: collapse; margin: .4rem 0 1rem; font-variant-numeric: tabular-nums; }
caption { text-align: left; font-weight: 600; padding: .2rem 0; caption-side: top; }
th, td { border-bottom: 1px solid #d0d0d0; padding: .22rem .6rem; text-align: left;
         vertical-align: top; }
thead th { border-bottom: 2px solid #555; }
td.num, th.num { text-align: right; white-space: nowrap; }
td.unit { color: #555; white-space: nowrap; }
tr.total td, tr.total th { font-weight: 700; border-top: 2px solid #555; }
tr.strong td, tr.strong th { font-weight: 700; }
.verdict { font-weight: 700; padding: .4rem .7rem; border-left: 6px solid; margin: .5rem 0; }
.verdict.pass { color: #0b5d1e; border-color: #0b5d1e; background: #f0f8f1; }
.verdict.short { color: #a4001d; border-color: #a4001d; background: #fff3f3; }
.verdict.none { color: #6b5200; border-color: #a07c00; background: #fffbea; }
.mark { letter-spacing: .05em; margin-right: .5rem; }
ul.findings li { margin-bottom: .5rem; }
.rule { color: #444; font-size: .92em; }
.note { color: #444; font-size: .92em; }
figure { margin: 1rem 0 1.6rem; }
figure img { max-width: 100%; height: auto; border: 1px solid #ddd; }
figcaption { color: #444; font-size: .92em; margin-top: .3rem; }
footer { margin-top: 3rem; color: #555; font-size: .9em; border-top: 1px solid #ccc;
         padding-top: .6rem; }
@media print {
  body { max-width: none; margin: 0; padding: 0; font-size: 10pt; }
  nav { display: none; }
  .scroll { overflow: visible; }
  h2 { break-after: avoid; }
  table, figure, .caution, .verdict { break-inside: avoid; }
  .caution, .verdict { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
  a { color: inherit; text-decoration: none; }
}
"""

_SECTIONS = (
    ("summary", "Mission"),
    ("inputs", "Inputs"),
    ("verdict", "Verdict and margins"),
    ("vehicle", "Vehicle"),
    ("budget", "Ideal delta-v budget"),
    ("flight", "Flight: delta-v ledger and events"),
    ("warnings", "Warnings"),
    ("dispersion", "Dispersion study"),
    ("figures", "Figures"),
    ("assumptions", "Assumptions and limits of the model"),
    ("sources", "Sources of the methods"),
)

_METRICS = {
    "apogee_m": ("Apogee", "length"),
    "max_mach": ("Max Mach", None),
    "max_dynamic_pressure_pa": ("Max dynamic pressure", "pressure"),
    "rail_exit_speed_m_s": ("Rail exit speed", "speed"),
    "margin": ("Target margin", "target"),
    "downrange_m": ("Downrange at apogee", "length"),
    "perigee_error_m": ("Perigee error (guided)", "length"),
    "apogee_error_m": ("Apogee error (guided)", "length"),
    "inclination_error_deg": ("Inclination error (guided, deg)", None),
    "propellant_left_kg": ("Propellant left at cutoff", "mass"),
}

_ASSUMPTIONS = (
    "The vehicle is a point mass flying in three dimensions over a rotating Earth: no "
    "attitude motion of its own.",
    "Zero angle of attack: drag acts along the air-relative velocity and there is no lift; "
    "the thrust follows the air-relative velocity (so a crosswind turns the rocket into "
    "it), except on the rail, during the pitch programme, under upper-stage guidance, and "
    "below the hold speed, where the last direction is held.",
    "Drag comes from a drag coefficient curve against Mach number, scaled by the vehicle's "
    "drag scale. The shipped curves are rough defaults, valid only for vehicles of the "
    "shape they describe; near Mach 1 (the transonic range, about Mach 0.8 to 1.2) the "
    "drag coefficient changes fast and is least certain.",
    "The atmosphere is the U.S. Standard Atmosphere 1976, shifted to the day's site "
    "temperature, pressure and humidity, or replaced by a sounding up to its top, when "
    "the mission file gives them (see Inputs). Wind is only the steady profile the "
    "mission file or its sounding states, if any: no gusts, no turbulence.",
    "Earth is a rotating sphere with inverse-square gravity (WGS 84 equatorial radius and "
    "GM), or the WGS 84 ellipsoid with J2, or flat with standard gravity, as the mission "
    "asks.",
    "No structural, thermal, aeroelastic or stability analysis: loads, heating, fin "
    "flutter, static margin and recovery are not checked.",
    "The pitch programme is open loop (a pitch kick, then a gravity turn or a linear "
    "tangent law for the upper stages): nothing corrects for wind or dispersions.",
    "The ideal budget uses the Tsiolkovsky rocket equation with the loss allowances the "
    "mission file states; only the flight computes the losses.",
    "A dispersion study draws every uncertain field independently from the distribution "
    "the mission file gives it; its percentiles and probability carry sampling error "
    "(the probability is given with its 95 % Wilson score interval, the margin "
    "percentiles with their 95 % order-statistic intervals).",
    "The flight's verdict judges the margin the mission's [margins.flight] names (target, "
    "propulsion or payload); the budget's loss allowances and required margin never enter "
    "it. The propulsion margin scales every motor's impulse (or every engine stage's "
    "propellant) by the same factor.",
)

_SOURCES = (
    "Rocket equation: K. E. Tsiolkovsky's rocket equation, Δv = Isp g0 ln(m0/mf), with "
    "g0 = 9.80665 m/s² (3rd General Conference on Weights and Measures, 1901).",
    "Atmosphere: U.S. Standard Atmosphere, 1976, NOAA-S/T 76-1562, U.S. Government "
    "Printing Office, Washington D.C., 1976.",
    "Earth model: Department of Defense World Geodetic System 1984, NIMA TR8350.2, 3rd ed., 2000.",
    "Orbits, launch losses and staging: H. D. Curtis, Orbital Mechanics for Engineering "
    "Students, 3rd ed., Butterworth-Heinemann, 2013, chapters 2 (the two-body problem), "
    "6 (orbital manoeuvres) and 11 (rocket vehicle dynamics).",
    "Integrator: J. R. Dormand and P. J. Prince, “A family of embedded Runge-Kutta "
    "formulae”, Journal of Computational and Applied Mathematics 6(1), 19–26, 1980.",
    "Step size control and dense output: E. Hairer, S. P. Nørsett and G. Wanner, Solving "
    "Ordinary Differential Equations I, 2nd ed., Springer, 1993, sections II.4 and II.6.",
    "Interval for the probability of success: E. B. Wilson, “Probable inference, the law "
    "of succession, and statistical inference”, Journal of the American Statistical "
    "Association 22(158), 209–212, 1927.",
    "Drivers of the spread: C. Spearman, “The proof and measurement of association "
    "between two things”, American Journal of Psychology 15(1), 72–101, 1904.",
    "Intervals of the percentiles: W. J. Conover, Practical Nonparametric Statistics, "
    "3rd ed., Wiley, 1999, section 3.2 (order statistics).",
    "Flight-performance reserve: J. M. Hanson and B. B. Beard, “Applying Monte Carlo "
    "Simulation to Launch Vehicle Design and Requirements Analysis”, NASA/TP-2010-216447, "
    "2010 (from memory).",
    "Root finding of the margins: R. P. Brent, Algorithms for Minimization without "
    "Derivatives, Prentice-Hall, 1973; M. Dowell and P. Jarratt, “A modified regula falsi "
    "method”, BIT 11, 168–174, 1971.",
)


def _e(text: object) -> str:
    """HTML-escape any text (quotes included, so it is safe in attributes too)."""
    return escape(str(text), quote=True)


def _si(value: float | int) -> str:
    """The SI value at full precision, as Python writes it (``repr``)."""
    if isinstance(value, int):  # counts stay integers
        return repr(value)
    return float.__repr__(float(value))  # numpy floats too, without their type name


def _text(value: float, digits: int = 4) -> str:
    return format_number(value, digits) if math.isfinite(value) else "—"


def _shown(value: float, dimension: str | None, units: DisplayUnits, digits: int = 4) -> str:
    if dimension is None:
        return _text(value, digits)
    return _text(to_display(value, dimension, units), digits)


def _percent(value: float) -> str:
    return f"{format_number(value * 100, 3)} %" if math.isfinite(value) else "—"


def _keyed(
    tag: str,
    value: float,
    doc: str,
    key: str,
    text: str,
    css: str = "num",
) -> str:
    """An element showing ``text`` that carries the JSON path and the SI value of a number."""
    return (
        f'<{tag} class="{css}" data-doc="{_e(doc)}" data-key="{_e(key)}" '
        f'data-si="{_e(_si(value))}">{_e(text)}</{tag}>'
    )


class _Page:
    """Collects the HTML of the report, section by section."""

    def __init__(self, units: DisplayUnits) -> None:
        self.units = units
        self.parts: list[str] = []

    def add(self, html: str) -> None:
        self.parts.append(html)

    def label(self, dimension: str | None) -> str:
        return self.units.label(dimension) if dimension else ""

    def cell(
        self,
        value: float,
        doc: str,
        key: str,
        dimension: str | None = None,
        digits: int = 4,
    ) -> str:
        """A table cell with a number in display units and its SI value and JSON path."""
        return _keyed("td", value, doc, key, _shown(value, dimension, self.units, digits))

    def percent(self, value: float, doc: str, key: str) -> str:
        """A table cell showing a fraction in percent (``data-si`` keeps the fraction)."""
        text = format_number(value * 100, 3) if math.isfinite(value) else "—"
        return _keyed("td", value, doc, key, text)

    def quantity(
        self, value: float, doc: str, key: str, dimension: str | None = None, digits: int = 4
    ) -> str:
        """A number with its unit in running text (the number keyed like a cell)."""
        number = _keyed("span", value, doc, key, _shown(value, dimension, self.units, digits))
        unit = self.label(dimension)
        return f"{number} {_e(unit)}" if unit else number


def _head(title: str, unit: str) -> str:
    return f"{title} ({unit})" if unit else title


def _table(caption: str, header: Sequence[str], rows: Sequence[str], numeric_from: int = 1) -> str:
    """A table with a caption, a header row and body rows; columns from ``numeric_from``
    on are right-aligned numbers."""
    cells = "".join(
        f'<th scope="col" class="num">{_e(name)}</th>'
        if i >= numeric_from
        else f'<th scope="col">{_e(name)}</th>'
        for i, name in enumerate(header)
    )
    body = "\n".join(rows)
    return (
        f'<div class="scroll"><table>\n<caption>{_e(caption)}</caption>\n'
        f"<thead><tr>{cells}</tr></thead>\n<tbody>\n{body}\n</tbody>\n</table></div>"
    )


def _row(label: str, cells: Sequence[str], unit: str | None = None, css: str = "") -> str:
    klass = f' class="{css}"' if css else ""
    unit_cell = f'<td class="unit">{_e(unit)}</td>' if unit is not None else ""
    return f'<tr{klass}><th scope="row">{_e(label)}</th>{unit_cell}{"".join(cells)}</tr>'


def _asked_text(verdict: FlightVerdict, units: DisplayUnits) -> str:
    """The amount the verdict asks for, in the judged margin's terms."""
    if verdict.judge == "propulsion" and verdict.asked_is_fraction:
        return f"{verdict.asked:.1%} of impulse"
    dimension = {"target": verdict.dimension, "payload": "mass"}.get(verdict.judge, "speed")
    return f"{_shown(verdict.asked, dimension or None, units)} {units.label(dimension)}".strip()


def _verdict_box(meets: bool | None, heading: str, text: str, fail_mark: str = "SHORT") -> str:
    if meets is None:
        css, mark = "none", "NO TARGET"
    else:
        css, mark = ("pass", "PASS") if meets else ("short", fail_mark)
    return f'<p class="verdict {css}"><span class="mark">{mark}</span>{_e(heading)}: {_e(text)}</p>'


# --- sections ---------------------------------------------------------------------------------


def _summary(page: _Page, mission: Mission, spread_samples: int | None, seed: int) -> None:
    units = page.units
    launch = mission.launch
    length = units.label("length")
    site = [f"altitude {_e(_shown(launch.altitude, 'length', units))} {_e(length)} above sea level"]
    if launch.latitude is not None:
        site.append(f"latitude {_e(_shown(launch.latitude, 'angle', units))}°")
    if launch.azimuth is not None:
        site.append(f"launch azimuth {_e(_shown(launch.azimuth, 'angle', units))}°")
    site.append(f"elevation {_e(_shown(launch.elevation, 'angle', units))}°")
    if launch.rail_length is not None:
        site.append(f"rail length {_e(_shown(launch.rail_length, 'length', units))} {_e(length)}")
    site.append("Earth's rotation included" if launch.rotation else "Earth's rotation not included")
    if len(launch.wind_speed) or launch.wind_offset:
        site.append('wind as given (see <a href="#inputs">Inputs</a>)')
    if not launch.air.is_standard:
        site.append('the day\'s air (see <a href="#inputs">Inputs</a>)')
    study = (
        _keyed("span", spread_samples, "scatter", "samples", f"{spread_samples:,}", "count")
        + f" samples, seed {_e(seed)}"
        if spread_samples is not None
        else _e("none (the mission file states no [[dispersion]] tables)")
    )
    facts = [
        ("Mission", _e(mission.name)),
        ("Mission file", f"<code>{_e(mission.source)}</code>"),
        ("Description", _e(mission.description) if mission.description else "—"),
        ("Launch site", "; ".join(site)),
        (
            "Legs",
            _e("; ".join(f"{leg.name} ({leg.target})" for leg in mission.legs))
            if mission.legs
            else "none stated",
        ),
        ("Dispersion study", study),
        ("Display units", _e("SI" if units.system == "si" else "US customary")),
        ("Made with", _e(f"propulsion {__version__}")),
    ]
    rows = "\n".join(f"<dt>{name}</dt><dd>{value}</dd>" for name, value in facts)
    page.add(f'<section id="summary">\n<h2>Mission</h2>\n<dl class="facts">\n{rows}\n</dl>')
    page.add("</section>")


_WIND_ROWS = 12
"""Wind rows the inputs table shows; a longer profile (a sounding's) is summarised."""


def _motor_source(mission: Mission, index: int) -> str:
    """Where a stage's thrust curve comes from: a shipped motor or the user's file."""
    stage = mission.vehicle.stages[index]
    tables = mission.document.get("stage")
    table = tables[index] if isinstance(tables, list) and index < len(tables) else {}
    motor = table.get("motor", {}) if isinstance(table, dict) else {}
    scales = ""
    if isinstance(motor, dict):
        asked = [
            f"{key} = {motor[key]}" for key in ("impulse_scale", "burn_time_scale") if key in motor
        ]
        scales = f", with {' and '.join(asked)}" if asked else ""
    if isinstance(motor, dict) and "file" in motor:
        return f"the file {motor['file']}{scales}"
    name = _motor_name(stage)
    return f"the shipped motor {name} (data/motors/{name}.csv){scales}"


def _motor_name(stage: Stage) -> str:
    """The name of a stage's motor ("engine" for an engine stage)."""
    from propulsion.vehicle import Motor

    return stage.propulsion.name if isinstance(stage.propulsion, Motor) else "engine"


def _air_text(mission: Mission, units: DisplayUnits) -> str:
    """The atmosphere the flight used, in words."""
    air = mission.launch.air
    if air.is_standard:
        return (
            "the U.S. Standard Atmosphere 1976, the standard day (the file gives no "
            "temperature, pressure, humidity or sounding; dry air)"
        )
    parts = []
    if air.sounding is not None:
        launch = mission.document.get("launch", {})
        name = launch.get("sounding", "") if isinstance(launch, dict) else ""
        top = _shown(air.sounding.altitude[-1], "length", units)
        parts.append(
            f"the sounding {name} ({len(air.sounding.altitude)} rows up to {top} "
            f"{units.label('length')} above sea level, the standard atmosphere above it)"
        )
    if air.temperature is not None:
        parts.append(
            f"site temperature {format_number(air.temperature, 4)} K "
            f"({format_number(air.temperature - 273.15, 3)} °C)"
        )
    if air.temperature_offset is not None:
        parts.append(f"temperatures {format_number(air.temperature_offset, 3)} K from the standard")
    if air.pressure is not None:
        parts.append(
            f"site pressure {_shown(air.pressure, 'pressure', units)} {units.label('pressure')}"
        )
    if air.humidity is not None:
        parts.append(f"relative humidity {format_number(air.humidity * 100.0, 3)} %")
    return "; ".join(parts)


def _wind_rows(mission: Mission, units: DisplayUnits) -> tuple[list[str], str]:
    """The wind profile as table rows, and a sentence on what else shapes it."""
    launch = mission.launch
    speed = units.label("speed")
    rows = []
    directions = launch.wind_from or (math.nan,) * len(launch.wind_speed)
    for height, value, source in list(
        zip(launch.wind_altitude, launch.wind_speed, directions, strict=True)
    )[:_WIND_ROWS]:
        towards = (
            "along the launch azimuth"
            if math.isnan(source)
            else f"from {format_number(math.degrees(source) % 360.0, 3)} deg"
        )
        rows.append(
            f'<tr><td class="num">{_e(_shown(height, "length", units))}</td>'
            f'<td class="num">{_e(_shown(value, "speed", units))}</td><td>{_e(towards)}</td></tr>'
        )
    notes = []
    if len(launch.wind_speed) > _WIND_ROWS:
        notes.append(f"the first {_WIND_ROWS} of {len(launch.wind_speed)} rows are shown")
    if launch.wind_offset:
        notes.append(
            f"a steady {_shown(launch.wind_offset, 'speed', units)} {speed} along the launch "
            "azimuth is added at every height"
        )
    if launch.wind_scale != 1.0:
        notes.append(f"the rows are scaled by {format_number(launch.wind_scale, 3)}")
    if launch.wind_turn:
        notes.append(
            f"their directions turned by {format_number(math.degrees(launch.wind_turn), 3)} deg"
        )
    if not rows and not launch.wind_offset:
        notes.append("no wind")
    return rows, "; ".join(notes)


def _inputs(page: _Page, mission: Mission, figures: Sequence[str]) -> None:
    """What went in: masses, sizes, drag, thrust curves with their sources, air and wind."""
    units = page.units
    vehicle = mission.vehicle
    mass, length = units.label("mass"), units.label("length")
    page.add('<section id="inputs">\n<h2>Inputs</h2>')
    page.add(
        "<p>What the mission file gives, as the budget and the flight above used it "
        f"(from <code>{_e(mission.source)}</code>).</p>"
    )

    def cells(values: Sequence[str], numeric: bool = True) -> list[str]:
        css = ' class="num"' if numeric else ""
        return [f"<td{css}>{_e(value)}</td>" for value in values]

    def shown(values: Sequence[float | None], dimension: str) -> list[str]:
        return cells(["—" if v is None else _shown(v, dimension, units) for v in values])

    rows = [
        _row("Payload", shown([vehicle.payload_mass], "mass"), mass),
        _row("Liftoff mass", shown([vehicle.liftoff_mass], "mass"), mass),
        _row("Drag scale (on every drag curve)", cells([format_number(vehicle.drag_scale, 3)]), ""),
    ]
    page.add(_table("Vehicle", ["", "Unit", "Value"], rows, 2))

    stages = vehicle.stages
    propulsion = []
    sources = []
    for index, stage in enumerate(stages):
        what = "motor" if stage.is_motor else "engine"
        count = f"{stage.count} × " if stage.count > 1 else ""
        propulsion.append(f"{count}{_motor_name(stage) if stage.is_motor else what}")
        sources.append(
            _motor_source(mission, index)
            if stage.is_motor
            else "thrust and specific impulse given in the mission file"
        )
    drag = [s.drag_curve.name if s.drag_curve is not None else "—" for s in stages]
    # diameters in mm or in (1 in = 25.4 mm exactly, international yard and pound, 1959)
    small, per_metre = ("mm", 1000.0) if units.system == "si" else ("in", 1.0 / 0.0254)
    diameters = [
        "—" if s.diameter is None else format_number(s.diameter * per_metre, 3) for s in stages
    ]
    inert = shown([s.inert_mass for s in stages], "mass")
    rows = [
        _row(
            "Inert mass (motor cases included)"
            if any(s.is_motor for s in stages)
            else "Inert mass",
            inert,
            mass,
        ),
        _row("Propellant", shown([s.propellant_mass for s in stages], "mass"), mass),
        _row("Diameter", cells(diameters), small),
        _row("Drag curve", cells(drag, False), ""),
        _row("Propulsion", cells(propulsion, False), ""),
        _row("Thrust data from", cells(sources, False), ""),
        _row("Separation delay", shown([s.separation_delay for s in stages], "time"), "s"),
        _row("Ignition delay", shown([s.ignition_delay for s in stages], "time"), "s"),
    ]
    header = ["", "Unit", *(stage.name for stage in stages)]
    page.add(_table("Stages as given (in firing order)", header, rows, 2))
    page.add(
        f"<p>Air: {_e(_air_text(mission, units))}.</p>",
    )
    wind, wind_note = _wind_rows(mission, units)
    if wind:
        page.add(
            _table(
                "Wind (heights above the site; directions it blows from, clockwise from north)",
                [_head("Height", length), _head("Wind speed", units.label("speed")), "Direction"],
                wind,
                0,
            )
        )
    if wind_note:
        page.add(f"<p>Wind: {_e(wind_note)}.</p>")
    for figure in figures:
        page.add(figure)
    page.add("</section>")


def _verdicts(page: _Page, plan: BudgetResult, flown: FlightResult) -> None:
    units = page.units
    verdict = flown.verdict

    def fmt(value: float, dimension: str) -> str:
        unit = units.label(dimension) if dimension else ""
        return f"{_shown(value, dimension or None, units)} {unit}".strip()

    page.add('<section id="verdict">\n<h2>Verdict and margins</h2>')
    from propulsion.report.tables import FAIL_MARKS

    page.add(
        _verdict_box(
            verdict.meets_targets,
            "Flight",
            verdict.describe(fmt),
            FAIL_MARKS.get(verdict.miss, "SHORT"),
        )
    )
    page.add(_verdict_box(plan.verdict.meets_targets, "Ideal budget", plan.verdict.describe(units)))

    dimension = verdict.dimension or None
    achieved, required = {
        "apogee": ("Achieved apogee", "Required apogee"),
        "burnout_speed": ("Achieved burnout speed", "Required burnout speed"),
        "circular_orbit": ("Altitude at engine cutoff", "Altitude of the target orbit"),
    }.get(verdict.target, ("Achieved", "Required"))
    judged = {verdict.judge: "strong"}
    rows = [
        _row("Target", [f"<td>{_e(verdict.target or '—')}</td>"], ""),
        _row(
            achieved,
            [page.cell(verdict.achieved, "fly", "achieved", dimension)],
            page.label(dimension),
        ),
        _row(
            required,
            [page.cell(verdict.required, "fly", "required", dimension)],
            page.label(dimension),
        ),
    ]
    if verdict.target == "circular_orbit":
        rows += [
            _row(
                "Tolerance band, either side",
                [page.cell(verdict.tolerance, "fly", "orbit_tolerance_m", "length")],
                page.label("length"),
            ),
            _row(
                "Δv left after the later legs",
                [
                    page.cell(
                        verdict.delta_v_left, "fly", "delta_v_left_after_later_legs_m_s", "speed"
                    )
                ],
                page.label("speed"),
            ),
        ]
    target_label = (
        "Target margin (inside the orbit band)"
        if verdict.target == "circular_orbit"
        else "Target margin"
    )
    rows += [
        _row(
            target_label,
            [page.cell(verdict.target_margin, "fly", "margins.target.value", dimension)],
            page.label(dimension),
            judged.get("target", ""),
        ),
        _row(
            "Target margin, share of the target",
            [
                page.percent(
                    verdict.target_margin_fraction, "fly", "margins.target.fraction_of_target"
                )
            ],
            "%",
        ),
        _row(
            "Propulsion margin: impulse that may be lost",
            [
                page.percent(
                    verdict.propulsion_margin, "fly", "margins.propulsion.fraction_of_impulse"
                )
            ],
            "%",
            judged.get("propulsion", ""),
        ),
        _row(
            "Propulsion margin as ideal Δv",
            [
                page.cell(
                    verdict.propulsion_margin_delta_v,
                    "fly",
                    "margins.propulsion.ideal_delta_v_m_s",
                    "speed",
                )
            ],
            units.label("speed"),
        ),
        _row(
            "Payload margin: mass that could be added",
            [page.cell(verdict.payload_margin, "fly", "margins.payload.mass_kg", "mass")],
            units.label("mass"),
            judged.get("payload", ""),
        ),
        _row(
            "The verdict judges",
            [
                f"<td>{_e(verdict.judge)} margin, asking for at least "
                f"{_e(_asked_text(verdict, units))}</td>"
            ],
            "",
        ),
        _row("How the margins were found", [f"<td>{_e(verdict.method)}</td>"], ""),
    ]
    page.add(_table("Flight (first leg's target, simulated)", ["", "Unit", "Value"], rows, 2))
    bv = plan.verdict
    rows = [
        _row(
            "Total required Δv (legs, reserves)",
            [page.cell(bv.total_required, "budget", "total_required_delta_v_m_s", "speed")],
            units.label("speed"),
        ),
        _row(
            "Stack ideal Δv",
            [page.cell(plan.total_ideal_delta_v, "budget", "total_ideal_delta_v_m_s", "speed")],
            units.label("speed"),
        ),
        _row(
            "Margin",
            [page.cell(bv.margin, "budget", "margin_m_s", "speed")],
            units.label("speed"),
            "strong",
        ),
        _row(
            "Margin, share of the requirement",
            [page.percent(bv.margin_fraction, "budget", "margin_fraction")],
            "%",
        ),
        _row(
            "Required margin",
            [page.cell(bv.required_margin, "budget", "required_margin_m_s", "speed")],
            units.label("speed"),
        ),
    ]
    page.add(_table("Ideal budget (loss allowances)", ["", "Unit", "Value"], rows, 2))

    key = [
        ("Apogee above the site", flown.apogee, "apogee_m", "length", 4, None),
        ("Time to apogee", flown.apogee_time, "apogee_time_s", "time", 4, None),
        (
            "Max dynamic pressure",
            flown.max_dynamic_pressure,
            "max_dynamic_pressure_pa",
            "pressure",
            4,
            None,
        ),
        ("Max Mach", flown.max_mach, "max_mach", None, 3, None),
        # in multiples of standard gravity, in both unit systems
        (
            "Max acceleration",
            flown.max_acceleration / STANDARD_GRAVITY,
            "max_acceleration_g",
            None,
            3,
            "g",
        ),
        ("Rail exit speed", flown.rail_exit_speed, "rail_exit_speed_m_s", "speed", 4, None),
    ]
    rows = [
        _row(
            label,
            [page.cell(value, "fly", json_key, dimension, digits)],
            unit if unit is not None else page.label(dimension),
        )
        for label, value, json_key, dimension, digits, unit in key
    ]
    rows.append(_row("How the flight ended", [f"<td>{_e(flown.status)}</td>"], ""))
    if flown.orbit is not None:
        orbit = flown.orbit
        for label, value, json_key, dimension in (
            ("Perigee altitude", orbit.perigee_altitude, "orbit.perigee_altitude_m", "length"),
            ("Apogee altitude", orbit.apogee_altitude, "orbit.apogee_altitude_m", "length"),
            ("Eccentricity", orbit.eccentricity, "orbit.eccentricity", None),
            ("Semi-major axis", orbit.semi_major_axis, "orbit.semi_major_axis_m", "length"),
        ):
            rows.append(
                _row(
                    f"Osculating orbit: {label.lower()}",
                    [page.cell(value, "fly", json_key, dimension)],
                    page.label(dimension),
                )
            )
    page.add(_table("Key figures of the flight", ["", "Unit", "Value"], rows, 2))
    page.add("</section>")


def _vehicle(page: _Page, plan: BudgetResult) -> None:
    units = page.units
    mission = plan.mission
    vehicle = mission.vehicle
    mass = units.label("mass")
    page.add('<section id="vehicle">\n<h2>Vehicle</h2>')
    count = len(vehicle.stages)
    page.add(
        f"<p>{count} stage{'' if count == 1 else 's'} in firing order; payload "
        f"{_e(_shown(vehicle.payload_mass, 'mass', units))} {_e(mass)}, liftoff mass "
        f"{_e(_shown(vehicle.liftoff_mass, 'mass', units))} {_e(mass)}.</p>"
    )
    header = [
        "Stage",
        "Propulsion",
        "Propellant family",
        _head("Inert mass", mass),
        _head("Propellant", mass),
        _head("Initial mass", mass),
        "Isp (s)",
        "T/W at ignition",
        "Impulse class",
    ]
    rows = []
    for i, row in enumerate(plan.stages):
        rows.append(
            f'<tr><th scope="row">{_e(row.name)}</th><td>{_e(row.propulsion)}</td>'
            f"<td>{_e(row.propellant_family or '—')}</td>"
            + page.cell(row.inert_mass, "budget", f"stages.{i}.inert_mass_kg", "mass")
            + page.cell(row.propellant_mass, "budget", f"stages.{i}.propellant_mass_kg", "mass")
            + page.cell(row.initial_mass, "budget", f"stages.{i}.initial_mass_kg", "mass")
            + page.cell(row.isp, "budget", f"stages.{i}.isp_s")
            + page.cell(row.thrust_to_weight, "budget", f"stages.{i}.thrust_to_weight", None, 3)
            + f'<td class="num">{_e(row.impulse_class or "—")}</td></tr>'
        )
    page.add(_table("Stages (initial mass includes everything above)", header, rows, 3))
    page.add("</section>")


def _budget(page: _Page, plan: BudgetResult) -> None:
    from propulsion.report.tables import thrust_label

    units = page.units
    mass, speed, force = units.label("mass"), units.label("speed"), units.label("force")
    stages = plan.stages
    page.add('<section id="budget">\n<h2>Ideal delta-v budget</h2>')

    def line(
        label: str, attribute: str, key: str, dimension: str | None, unit: str, digits: int = 4
    ) -> str:
        cells = [
            page.cell(getattr(row, attribute), "budget", f"stages.{i}.{key}", dimension, digits)
            for i, row in enumerate(stages)
        ]
        return _row(label, cells, unit, "strong" if attribute == "ideal_delta_v" else "")

    rows = [
        _row("Propulsion", [f"<td>{_e(row.propulsion)}</td>" for row in stages], ""),
        line("Initial mass", "initial_mass", "initial_mass_kg", "mass", mass),
        line("Final mass", "final_mass", "final_mass_kg", "mass", mass),
        line("Usable propellant", "usable_propellant", "usable_propellant_kg", "mass", mass),
        line("Inert mass", "inert_mass", "inert_mass_kg", "mass", mass),
        line("Mass ratio", "mass_ratio", "mass_ratio", None, ""),
        line(
            "Propellant mass fraction",
            "propellant_mass_fraction",
            "propellant_mass_fraction",
            None,
            "",
            3,
        ),
        line(
            "Structural coefficient",
            "structural_coefficient",
            "structural_coefficient",
            None,
            "",
            3,
        ),
        line("Payload ratio", "payload_ratio", "payload_ratio", None, "", 3),
        line("Specific impulse", "isp", "isp_s", None, "s"),
        line("Burn time", "burn_time", "burn_time_s", None, "s", 3),
        line(thrust_label(stages), "thrust", "thrust_n", "force", force),
        line("Thrust-to-weight", "thrust_to_weight", "thrust_to_weight", None, "", 3),
        line(
            "Total impulse", "total_impulse", "total_impulse_n_s", "impulse", units.label("impulse")
        ),
        line("Ideal Δv", "ideal_delta_v", "ideal_delta_v_m_s", "speed", speed),
    ]
    header = ["", "Unit", *(row.name for row in stages)]
    page.add(_table("Stages (in firing order; masses include everything above)", header, rows, 2))
    page.add(
        "<p>Stack ideal Δv: <strong>"
        + page.quantity(plan.total_ideal_delta_v, "budget", "total_ideal_delta_v_m_s", "speed")
        + "</strong>; Δv of the propellant left after the last leg: "
        + page.quantity(plan.leftover_delta_v, "budget", "leftover_delta_v_m_s", "speed")
        + ".</p>"
    )
    if plan.legs:
        legs = plan.legs

        def leg_line(
            label: str, attribute: str, key: str, dimension: str | None, unit: str, css: str = ""
        ) -> str:
            cells = [
                page.cell(getattr(leg, attribute), "budget", f"legs.{j}.{key}", dimension)
                for j, leg in enumerate(legs)
            ]
            return _row(label, cells, unit, css)

        rows = [
            _row("Target", [f"<td>{_e(leg.target)}</td>" for leg in legs], ""),
            _row("Stages", [f"<td>{_e(', '.join(leg.stages))}</td>" for leg in legs], ""),
            leg_line("Required Δv", "required_delta_v", "required_delta_v_m_s", "speed", speed),
            leg_line("Reserve", "reserve", "reserve_m_s", "speed", speed),
            leg_line(
                "Available at start", "available_delta_v", "available_delta_v_m_s", "speed", speed
            ),
            leg_line("Delivered", "delivered_delta_v", "delivered_delta_v_m_s", "speed", speed),
        ]
        # each leg's margin is what is left beyond its own need and the later legs'; when
        # every leg burns just what it needs, it is one number, said once under the table
        first = legs[0].margin
        same = len(legs) > 1 and all(
            abs(leg.margin - first) <= 1e-9 * max(abs(first), 1.0) for leg in legs
        )
        if not same:
            rows += [
                leg_line(
                    "Margin beyond this and the later legs",
                    "margin",
                    "margin_m_s",
                    "speed",
                    speed,
                    "strong",
                ),
                _row(
                    "Margin, share of this leg's need",
                    [
                        page.percent(leg.margin_fraction, "budget", f"legs.{j}.margin_fraction")
                        for j, leg in enumerate(legs)
                    ],
                    "%",
                ),
            ]
        rows += [
            leg_line("Propellant used", "propellant_used", "propellant_used_kg", "mass", mass),
            leg_line(
                "Propellant left in its stages",
                "propellant_remaining",
                "propellant_remaining_kg",
                "mass",
                mass,
            ),
            _row("Met", [f"<td>{'yes' if leg.met else 'NO'}</td>" for leg in legs], ""),
        ]
        header = ["", "Unit", *(leg.name for leg in legs)]
        page.add(_table("Mission legs (flown in order)", header, rows, 2))
        if same:
            page.add(
                "<p>Margin beyond every leg's need, the same at each leg (each burns just "
                "what it needs): <strong>"
                + page.quantity(first, "budget", "legs.0.margin_m_s", "speed")
                + "</strong>, before the mission reserve.</p>"
            )
        items = []
        for leg in plan.mission.legs:
            terms = " ".join(
                f"{'+' if value >= 0 else '−'} {_shown(abs(value), 'speed', units)} {speed} "
                f"({label})"
                for label, value in leg.requirement.terms
            ).lstrip("+ ")
            items.append(f"<li>{_e(leg.name)}: required = {_e(terms)}</li>")
        page.add('<p class="note">How each leg\'s requirement is made up:</p>')
        page.add(f'<ul class="note">{"".join(items)}</ul>')
    margins = plan.mission.margins
    residuals = ", ".join(
        f"{stage.name} {format_number(stage.residual_fraction * 100, 3)} %"
        for stage in plan.mission.vehicle.stages
    )
    page.add(
        f'<p class="note">Mission reserve {_e(_shown(margins.reserve, "speed", units))} '
        f"{_e(speed)}; unusable residual propellant: {_e(residuals)}. Ideal Δv from the "
        "Tsiolkovsky rocket equation with g0 = 9.80665 m/s² (vacuum Isp for engines, "
        "delivered Isp for motors); the losses are in the loss allowances of the mission "
        "file.</p>"
    )
    page.add(_verdict_box(plan.verdict.meets_targets, "Ideal budget", plan.verdict.describe(units)))
    page.add("</section>")


def _flight(page: _Page, flown: FlightResult) -> None:
    units = page.units
    speed, length = units.label("speed"), units.label("length")
    page.add('<section id="flight">\n<h2>Flight: delta-v ledger and events</h2>')
    from propulsion.report.tables import closure_text

    cleaned = flown.clean_ledger()  # round-off shown as 0 (as in the JSON)
    segments = cleaned[:-1]
    total = cleaned[-1]
    resolution = flown.resolution

    def line(label: str, attribute: str, key: str, css: str = "") -> str:
        cells = [
            page.cell(getattr(row, attribute), "fly", f"ledger.segments.{i}.{key}", "speed")
            for i, row in enumerate(segments)
        ]
        cells.append(page.cell(getattr(total, attribute), "fly", f"ledger.{key}", "speed"))
        return _row(label, cells, speed, css)

    raw = list(flown.ledger)
    closure = [
        _keyed(
            "td",
            row.closure,
            "fly",
            f"ledger.segments.{i}.closure_m_s" if i < len(raw) - 1 else "ledger.closure_m_s",
            closure_text(row.closure, resolution, units),
        )
        for i, row in enumerate(raw)
    ]
    rows = [line("Ideal Δv (∫ F_vac / m dt)", "ideal", "ideal_m_s")]
    if total.rotation_credit != 0.0:
        rows.append(line("+ Earth-rotation credit", "rotation_credit", "rotation_credit_m_s"))
    rows += [
        line("− gravity loss", "gravity_loss", "gravity_loss_m_s"),
        line("− drag loss", "drag_loss", "drag_loss_m_s"),
        line("− steering loss", "steering_loss", "steering_loss_m_s"),
        line("− back-pressure loss", "pressure_loss", "pressure_loss_m_s"),
    ]
    if total.pad_loss != 0.0:
        rows.append(line("− held by the pad", "pad_loss", "pad_loss_m_s"))
    rows += [
        line("= achieved (Δ speed)", "achieved", "achieved_m_s", "strong"),
        _row("Closure (ideal + credit − losses − achieved)", closure, speed),
    ]
    header = ["", "Unit", *(row.segment for row in segments), "Whole flight"]
    page.add(
        _table(
            "Delta-v ledger of the flight (each stage from its ignition to the next)",
            header,
            rows,
            2,
        )
    )
    page.add(
        '<p class="note">The closure is the integration error: '
        f"{_e(closure_text(flown.total.closure, resolution, units))} {_e(speed)} over the "
        f"whole flight (terms within {_e(format_number(resolution, 1))} m/s of zero, the "
        "integrator's resolution, are shown as 0). Integrated with a compiled "
        f"Dormand–Prince 5(4) method in {int(flown.outcome.steps[0])} steps. Gravity and "
        "steering losses are taken against the Earth-relative velocity in the atmosphere "
        "(H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2013, §11.2); "
        "the Earth-rotation credit is the inertial speed the turning Earth gives.</p>"
    )
    header = [
        "Stage",
        "Ignition (s)",
        "Burnout (s)",
        _head("Burnout altitude", length),
        _head("Burnout speed", speed),
        "Burnout Mach",
    ]
    rows = [
        f'<tr><th scope="row">{_e(row.name)}</th>'
        + page.cell(row.ignition_time, "fly", f"stages.{i}.ignition_time_s")
        + page.cell(row.burnout_time, "fly", f"stages.{i}.burnout_time_s")
        + page.cell(row.burnout_altitude, "fly", f"stages.{i}.burnout_altitude_m", "length")
        + page.cell(row.burnout_speed, "fly", f"stages.{i}.burnout_speed_m_s", "speed")
        + page.cell(row.burnout_mach, "fly", f"stages.{i}.burnout_mach", None, 3)
        + "</tr>"
        for i, row in enumerate(flown.stages)
    ]
    page.add(_table("Stages as flown", header, rows))
    header = [
        "Event",
        "Time (s)",
        _head("Altitude", length),
        _head("Ground speed", speed),
        _head("Inertial speed", speed),
        "Mach",
        "Acceleration (g)",
        _head("Dynamic pressure", units.label("pressure")),
    ]
    rows = [
        f'<tr><th scope="row">{_e(event.name)}</th>'
        + page.cell(event.time, "fly", f"events.{i}.time_s")
        + page.cell(event.altitude, "fly", f"events.{i}.altitude_m", "length")
        + page.cell(event.speed, "fly", f"events.{i}.speed_m_s", "speed")
        + page.cell(event.inertial_speed, "fly", f"events.{i}.inertial_speed_m_s", "speed")
        + page.cell(event.mach, "fly", f"events.{i}.mach", None, 3)
        + page.cell(
            event.acceleration / STANDARD_GRAVITY, "fly", f"events.{i}.acceleration_g", None, 3
        )
        + page.cell(event.dynamic_pressure, "fly", f"events.{i}.dynamic_pressure_pa", "pressure", 3)
        + "</tr>"
        for i, event in enumerate(flown.events)
    ]
    page.add(_table("Events (ground speed: relative to the rotating Earth, no wind)", header, rows))
    page.add("</section>")


def _findings(title: str, findings: Sequence[Finding]) -> str:
    if not findings:
        return f"<h3>{_e(title)}</h3>\n<p>None.</p>"
    items = "\n".join(
        f"<li><strong>{_e(f.subject)}</strong>: {_e(f.message)}.<br>"
        f'<span class="rule">Rule: {_e(f.rule)}. Source: {_e(f.source)}.</span></li>'
        for f in findings
    )
    return f'<h3>{_e(title)} ({len(findings)})</h3>\n<ul class="findings">\n{items}\n</ul>'


def _warnings(page: _Page, plan: BudgetResult, flown: FlightResult) -> None:
    page.add('<section id="warnings">\n<h2>Warnings</h2>')
    page.add(
        "<p>Plausibility warnings are not errors: each says what was seen, the rule it "
        "breaks and where the rule comes from, so that the number is looked at again.</p>"
    )
    page.add(_findings("From the ideal budget", plan.findings))
    page.add(_findings("From the flight", flown.findings))
    page.add("</section>")


def _dispersion(page: _Page, mission: Mission, spread: ScatterResult | None, figure: str) -> None:
    units = page.units
    page.add('<section id="dispersion">\n<h2>Dispersion study</h2>')
    if spread is None:
        page.add(
            "<p>The mission file states no uncertainties ([[dispersion]] tables), so no "
            "dispersion study was run.</p>\n</section>"
        )
        return
    rows = []
    for d in mission.dispersions:
        dimension = None if d.dimension == "dimensionless" else d.dimension
        unit = page.label(dimension)

        def value(number: float, dimension: str | None = dimension) -> str:
            return _shown(number, dimension, units)

        if d.distribution == "normal":
            centre = "the nominal value" if d.mean is None else value(d.mean)
            what = f"mean {centre}, σ {value(d.sigma)}"
        elif d.distribution == "uniform":
            what = f"from {value(d.low)} to {value(d.high)}"
        elif d.distribution == "triangular":
            what = f"from {value(d.low)} to {value(d.high)}, mode {value(d.mode)}"
        else:
            what = ""
        rows.append(
            f'<tr><th scope="row"><code>{_e(d.field)}</code></th><td>{_e(d.distribution)}</td>'
            f"<td>{_e(what)}</td><td>{_e(unit)}</td></tr>"
        )
    page.add(_table("Uncertain inputs", ["Field", "Distribution", "Parameters", "Unit"], rows, 9))
    target_dimension = "speed" if spread.target == "burnout_speed" else "length"
    rows = []
    for metric, (title, dimension) in _METRICS.items():
        if metric not in spread.percentiles:
            continue  # the guided rows, for missions guided to an orbit
        if dimension == "target":
            dimension = target_dimension if spread.target else None
        values = spread.percentiles[metric]
        cells = [
            page.cell(values[p], "scatter", f"percentiles.{metric}.p{p:g}", dimension)
            for p in _PERCENTILES
        ]
        rows.append(_row(title, cells, page.label(dimension)))
    header = ["Output", "Unit", *(f"p{p:g}" for p in _PERCENTILES)]
    caption = (
        f"Percentiles of {spread.valid:,} flown samples ({spread.samples:,} drawn, "
        f"seed {spread.seed})"
    )
    page.add(_table(caption, header, rows, 2))
    low, high = spread.interval
    if math.isfinite(spread.probability):
        page.add(
            f"<p><strong>Probability of meeting the {_e(spread.target)} target: "
            + _keyed(
                "span",
                spread.probability,
                "scatter",
                "probability_of_meeting_target",
                _percent(spread.probability),
                "num",
            )
            + "</strong> ("
            + _keyed("span", spread.meets, "scatter", "meets_target", f"{spread.meets:,}")
            + " of "
            + _keyed("span", spread.valid, "scatter", "valid_samples", f"{spread.valid:,}")
            + "; 95 % Wilson score interval "
            + _keyed("span", low, "scatter", "probability_interval_95.0", _percent(low))
            + " to "
            + _keyed("span", high, "scatter", "probability_interval_95.1", _percent(high))
            + ").</p>"
        )
    else:
        page.add("<p>The mission's first leg has no target the flight judges: no probability.</p>")
    invalid = spread.samples - spread.valid
    if invalid:
        reasons = ", ".join(f"{name} {count}" for name, count in spread.invalid_reasons.items())
        page.add(
            f"<p>{invalid:,} {'sample gave' if invalid == 1 else 'samples gave'} an "
            f"impossible vehicle and {'was' if invalid == 1 else 'were'} not flown "
            f"({_e(reasons)}).</p>"
        )
    source = (
        "all samples"
        if spread.exact
        else f"a uniform reservoir of {spread.reservoir:,} samples (counts are exact)"
    )
    page.add(f'<p class="note">Statistics from {_e(source)}.</p>')
    if spread.drivers:
        rows = [
            f'<tr><th scope="row"><code>{_e(name)}</code></th><td>{_e(output)}</td>'
            + _keyed("td", rho, "scatter", f"drivers.{i}.spearman_rho", f"{rho:+.3f}")
            + "</tr>"
            for i, (name, output, rho) in enumerate(spread.drivers)
        ]
        page.add(
            _table(
                "What drives the spread (Spearman rank correlation with the output)",
                ["Uncertain input", "Output", "ρ"],
                rows,
                2,
            )
        )
    page.add(figure)
    page.add("</section>")


def _figure(png: bytes, alt: str, caption: str) -> str:
    """A figure with the PNG embedded as a base64 data URI (no file beside the report)."""
    width = int.from_bytes(png[16:20], "big")
    height = int.from_bytes(png[20:24], "big")
    data = base64.b64encode(png).decode("ascii")
    return (
        f'<figure><img src="data:image/png;base64,{data}" alt="{_e(alt)}" '
        f'width="{width}" height="{height}">'
        f"<figcaption>{_e(caption)}</figcaption></figure>"
    )


def _png(plots: Any, figure: Any) -> bytes:
    """The figure as PNG bytes; the figure is closed afterwards if pyplot holds it."""
    try:
        data: bytes = plots.figure_bytes(figure, fmt="png")
    finally:
        pyplot = sys.modules.get("matplotlib.pyplot")
        if pyplot is not None:
            pyplot.close(figure)
    if not data.startswith(b"\x89PNG\r\n\x1a\n"):
        raise ValueError("the figure did not render as PNG")
    return data


def _list_section(anchor: str, title: str, intro: str, items: Sequence[str]) -> str:
    body = "\n".join(f"<li>{_e(item)}</li>" for item in items)
    return (
        f'<section id="{anchor}">\n<h2>{_e(title)}</h2>\n<p>{_e(intro)}</p>\n'
        f"<ul>\n{body}\n</ul>\n</section>"
    )


def _document(title: str, body: str) -> str:
    return (
        "<!DOCTYPE html>\n"
        '<html lang="en">\n<head>\n<meta charset="utf-8">\n'
        '<meta name="viewport" content="width=device-width, initial-scale=1">\n'
        f'<meta name="generator" content="propulsion {_e(__version__)}">\n'
        '<link rel="icon" href="data:,">\n'
        f"<title>{_e(title)}</title>\n<style>{_STYLE}</style>\n</head>\n"
        f"<body>\n{body}\n</body>\n</html>\n"
    )


def build_report(
    mission: Mission,
    units: DisplayUnits,
    dispersion_samples: int | None = None,
    seed: int = 1,
    progress: Callable[[str], None] | None = None,
) -> str:
    """Build the reviewer's report of a mission: one self-contained HTML document.

    Runs the ideal budget, the flight (with its delta-v margin) and, when the mission
    states ``[[dispersion]]`` tables, a dispersion study in this process; draws the
    figures; and lays everything out with the safety caution first.

    Parameters
    ----------
    mission : Mission
        A checked mission (see :func:`propulsion.load_mission`).
    units : DisplayUnits
        Units the numbers are shown in (the ``data-si`` attributes stay SI).
    dispersion_samples : int or None
        Samples of the dispersion study [count]; None: 1,000. Ignored without
        ``[[dispersion]]`` tables.
    seed : int
        Seed of the dispersion study [dimensionless]; the same seed gives the same numbers.
    progress : callable or None
        Called with a short status text as each step starts (for a status line).

    Returns
    -------
    str
        The HTML document (UTF-8 text). Key numbers carry ``data-doc``, ``data-key`` and
        ``data-si`` [SI units] attributes that match the ``--json`` output of ``fly``,
        ``budget`` and ``scatter``.

    Raises
    ------
    RequestError
        ``dispersion_samples`` below 1.

    References
    ----------
    .. [1] K. E. Tsiolkovsky's rocket equation, as in H. D. Curtis, Orbital Mechanics for
       Engineering Students, 3rd ed., 2013, sections 11.3 and 11.5 (the ideal budget).
    .. [2] H. D. Curtis, ibid., section 11.2 (the delta-v losses of a launch).
    .. [3] U.S. Standard Atmosphere, 1976, NOAA-S/T 76-1562 (the flight's atmosphere).
    .. [4] E. B. Wilson, Journal of the American Statistical Association 22(158),
       209-212, 1927 (the interval of the probability of success).
    .. [5] C. Spearman, American Journal of Psychology 15(1), 72-101, 1904 (the drivers).
    """
    from propulsion.ascent import fly
    from propulsion.ledger import budget
    from propulsion.report import plots

    def say(text: str) -> None:
        if progress is not None:
            progress(text)

    samples = DEFAULT_DISPERSION_SAMPLES if dispersion_samples is None else dispersion_samples
    if samples < 1:
        from propulsion.errors import RequestError

        raise RequestError(
            f"a dispersion study of {samples} samples", "at least 1 sample for the study"
        )
    say("Computing the ideal budget…")
    plan = budget(mission)
    say("Flying the ascent…")
    flown = fly(mission)
    spread: ScatterResult | None = None
    if mission.dispersions:
        from propulsion.studies.scatter import scatter

        say(f"Flying {samples:,} dispersed samples…")
        spread = scatter(
            mission,
            samples,
            seed=seed,
            workers=1,
            progress=lambda done, total: say(f"Flying dispersed samples: {done:,}/{total:,}…"),
        )
    say("Drawing the figures…")
    scale = mission.vehicle.drag_scale
    scaled = f", as given and times the drag scale {format_number(scale, 3)}" if scale != 1 else ""
    inputs = [
        _figure(
            _png(plots, plots.drag_curve_figure(mission, units)),
            "Drag coefficient against Mach number",
            f"The drag curves of the stages{scaled}.",
        )
    ]
    for index, stage in enumerate(mission.vehicle.stages):
        if stage.is_motor:
            inputs.append(
                _figure(
                    _png(plots, plots.thrust_curve_figure(stage, mission, units)),
                    f"Thrust curve of stage {stage.name}",
                    f"Thrust curve of stage {stage.name}: {_motor_name(stage)}, from "
                    f"{_motor_source(mission, index)}, as flown"
                    + (f" ({stage.count} motors)" if stage.count > 1 else "")
                    + ".",
                )
            )
    flight_png = _png(plots, plots.flight_figure(flown, units))
    flight_ledger_png = _png(plots, plots.flight_ledger_figure(flown, units))
    budget_ledger_png = _png(plots, plots.budget_ledger_figure(plan, units))
    scatter_html = ""
    if spread is not None:
        scatter_html = _figure(
            _png(plots, plots.scatter_figure(spread, units)),
            "Figure of the dispersion study",
            "The dispersion study: how the flown samples spread.",
        )
    say("Writing the report…")

    title = f"{mission.name} — reviewer's report (propulsion {__version__})"
    page = _Page(units)
    page.add(
        f"<header>\n<h1>{_e(mission.name)}: reviewer's report</h1>\n"
        f'<p class="subtitle">Delta-v budget and flight simulation by propulsion '
        f"{_e(__version__)}</p>\n</header>"
    )
    page.add(
        f'<section class="caution" id="safety-caution" role="note" aria-label="{_e(SAFETY_TITLE)}">'
        f"\n<h2>{_e(SAFETY_TITLE)}</h2>\n<p>{_e(SAFETY_CAUTION)}</p>\n</section>"
    )
    contents = "".join(
        f'<li><a href="#{anchor}">{_e(name)}</a></li>'
        for anchor, name in _SECTIONS
        if anchor != "dispersion" or spread is not None
    )
    page.add(f'<nav aria-label="Contents"><strong>Contents</strong><ol>{contents}</ol></nav>')
    _summary(page, mission, spread.samples if spread is not None else None, seed)
    _inputs(page, mission, inputs)
    _verdicts(page, plan, flown)
    _vehicle(page, plan)
    _budget(page, plan)
    _flight(page, flown)
    _warnings(page, plan, flown)
    if spread is not None:
        _dispersion(page, mission, spread, scatter_html)
    page.add('<section id="figures">\n<h2>Figures</h2>')
    page.add(
        _figure(
            flight_png,
            "Figure of the flight",
            "The flight as simulated.",
        )
    )
    page.add(
        _figure(
            flight_ledger_png,
            "Delta-v ledger of the flight as a waterfall",
            "The flight's delta-v ledger: ideal Δv, the losses taken from it, and what was "
            "achieved.",
        )
    )
    page.add(
        _figure(
            budget_ledger_png,
            "Ideal delta-v budget as a waterfall",
            "The ideal delta-v budget as a waterfall.",
        )
    )
    page.add("</section>")
    page.add(
        _list_section(
            "assumptions",
            "Assumptions and limits of the model",
            "The numbers above hold only as far as these assumptions do.",
            _ASSUMPTIONS,
        )
    )
    page.add(
        _list_section(
            "sources",
            "Sources of the methods",
            "Published sources of the equations and statistics this report uses.",
            _SOURCES,
        )
    )
    page.add(
        f"<footer><p>Made by propulsion {_e(__version__)} from "
        f"<code>{_e(mission.source)}</code>. {_e(SAFETY_CAUTION)}</p></footer>"
    )
    return _document(title, "\n".join(page.parts))
