"""Mission files: reading, checking and converting them into SI model objects.

A mission file is TOML with quantities written as text with units (``"2.4 kg"``). This
module is the boundary: it reads the file, checks every field, converts quantities to SI
floats once, and builds :class:`Mission`. Every problem is a
:class:`~propulsion.errors.MissionError` that names the file, the field, the line where
it can be found, and what was expected.
"""

from __future__ import annotations

import copy
import difflib
import math
import re
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

from propulsion import catalog
from propulsion.errors import DataFileError, MissionError, MissionFileNotFoundError
from propulsion.fields import LIMITS, RANGES
from propulsion.targets import TARGET_KINDS, Requirement, required_delta_v
from propulsion.text import printable
from propulsion.units import UnitParseError, parse_quantity
from propulsion.vehicle import DragCurve, Engine, Motor, Stage, Vehicle
from propulsion.weather import Sounding, Weather, WeatherError, air_table

__all__ = [
    "FlightSettings",
    "LaunchSite",
    "Leg",
    "Margins",
    "Mission",
    "load_mission",
    "parse_mission",
    "read_mission_text",
]

UNIT_HINTS = {
    "mass": 'kg, g, lb or oz, for example "2.4 kg"',
    "length": 'm, mm, km, ft or in, for example "98 mm"',
    "area": 'm^2, cm^2 or in^2, for example "0.05 m^2"',
    "time": 's or ms, for example "230 s"',
    "speed": 'm/s, km/s or ft/s, for example "150 m/s"',
    "force": 'N, kN or lbf, for example "1200 lbf"',
    "angle": 'deg or rad, for example "85 deg"',
    "dimensionless": 'a plain number or a percentage, for example "2 %"',
    "pressure": 'hPa, kPa, Pa or psi, for example "950 hPa"',
    "temperature": 'degC, degF or K, for example "35 degC"',
    "temperature_difference": 'K, delta_degC or delta_degF, for example "+15 K"',
}

MAX_COUNT = 64
"""Most motors or engines in one stage's cluster."""


@dataclass(frozen=True)
class LaunchSite:
    """Where and how the vehicle leaves the ground (SI: m, rad)."""

    altitude: float = 0.0
    latitude: float | None = None
    azimuth: float | None = None
    rail_length: float | None = None
    elevation: float = math.pi / 2
    wind_altitude: tuple[float, ...] = ()
    wind_speed: tuple[float, ...] = ()
    wind_offset: float = 0.0
    wind_from: tuple[float, ...] = ()
    """Direction each wind row blows from, clockwise from north [rad]; NaN for a row
    without a direction, which blows along the launch azimuth (negative: against it)."""
    wind_scale: float = 1.0
    """A factor on the wind rows (not on ``wind_offset``)."""
    wind_turn: float = 0.0
    """An angle added to the direction every wind row blows from [rad] (clockwise)."""
    air: Weather = field(default_factory=Weather)
    """The day's air (:mod:`propulsion.weather`); the standard day by default."""

    @property
    def rotation(self) -> bool:
        """True when latitude and azimuth are given: the flight uses Earth's rotation."""
        return self.latitude is not None and self.azimuth is not None

    def wind_components(self) -> tuple[tuple[float, ...], tuple[float, ...], tuple[float, ...]]:
        """The wind profile as (height above the site [m], east [m/s], north [m/s])."""
        azimuth = self.azimuth if self.azimuth is not None else 0.0
        east: list[float] = []
        north: list[float] = []
        directions = self.wind_from or (math.nan,) * len(self.wind_speed)
        for speed, source in zip(self.wind_speed, directions, strict=True):
            if math.isnan(source):
                east.append(speed * math.sin(azimuth))
                north.append(speed * math.cos(azimuth))
            else:
                # blowing from ``source``: towards the opposite direction
                east.append(-speed * math.sin(source))
                north.append(-speed * math.cos(source))
        return self.wind_altitude, tuple(east), tuple(north)


@dataclass(frozen=True)
class FlightSettings:
    """How `fly` integrates the ascent (SI: s, m/s, rad).

    ``earth`` is ``"round"`` (inverse-square gravity, spherical Earth of the WGS 84
    equatorial radius), ``"ellipsoid"`` (the WGS 84 ellipsoid with J2 gravity) or
    ``"flat"`` (uniform standard gravity over a flat Earth, for small flights and checks
    against closed forms). Below ``hold_speed`` of air speed the thrust holds its
    direction instead of following the air-relative velocity.
    ``stop_at`` is ``"apogee"`` or ``"ground"``. The pitch kick tilts the thrust from the
    launch direction by ``pitch_kick_angle`` over ``pitch_kick_duration``, starting at
    ``pitch_kick_time`` (or when the speed reaches ``pitch_kick_speed``). ``guidance`` is
    the steering of the stages after the first: ``"gravity_turn"``, ``"linear_tangent"``
    (horizontal at burnout), or ``"orbit"`` (the linear-tangent law with its parameters
    solved for the first leg's orbit: :mod:`propulsion.flight.steering`). ``kick_chosen``:
    under ``"orbit"``, the file gives when the kick starts but not its angle, so `fly`
    chooses the angle that leaves the most propellant.
    """

    earth: str = "round"
    stop_at: str = "apogee"
    max_time: float = 7200.0
    pitch_kick_angle: float = 0.0
    pitch_kick_time: float | None = None
    pitch_kick_speed: float | None = None
    pitch_kick_duration: float = 1.0
    guidance: str = "gravity_turn"
    kick_chosen: bool = False
    hold_speed: float = 10.0


@dataclass(frozen=True)
class Leg:
    """One mission leg: the stages that fly it and the delta-v it needs.

    ``requirement.delta_v`` [m/s] excludes the leg's ``reserve`` [m/s].
    """

    name: str
    stages: tuple[str, ...]
    target: str
    fields: dict[str, float]
    requirement: Requirement
    reserve: float = 0.0

    @property
    def required_delta_v(self) -> float:
        """Delta-v the target needs, without the reserve [m/s]."""
        return self.requirement.delta_v


FLIGHT_JUDGES = ("target", "propulsion", "payload")
"""The margins the verdict of a flight can judge (:mod:`propulsion.margins`)."""


@dataclass(frozen=True)
class FlightMargin:
    """Which margin the verdict of a flight judges, and how much of it it asks for.

    ``judge`` is ``target`` (the target's own quantity: metres of apogee or perigee,
    m/s of burnout speed), ``propulsion`` (the uniform impulse shortfall that still meets
    the target) or ``payload`` (the mass that could be added). ``required`` is in SI
    units of that margin ([m] or [m/s] for target, [m/s] of ideal delta-v for
    propulsion, [kg] for payload) or, when ``is_fraction``, a fraction (of the target's
    value, of the total impulse, of the payload mass).
    """

    judge: str = "target"
    required: float = 0.0
    is_fraction: bool = False


@dataclass(frozen=True)
class Margins:
    """Reserves, the margin the budget's verdict asks for, and the flight's.

    ``required_margin`` is a delta-v [m/s] when ``required_margin_is_fraction`` is False,
    else a fraction of the total required delta-v; it is the ideal budget's (`budget`).
    ``flight`` is what the verdict of a flown ascent judges (`fly`): it never depends on
    the loss allowances.
    """

    reserve: float = 0.0
    residual_fraction: float = 0.0
    required_margin: float = 0.0
    required_margin_is_fraction: bool = False
    flight: FlightMargin = field(default_factory=FlightMargin)

    def required_margin_delta_v(self, total_required: float) -> float:
        """The required margin as a delta-v [m/s] for a given total requirement [m/s]."""
        if self.required_margin_is_fraction:
            return self.required_margin * total_required
        return self.required_margin


@dataclass(frozen=True)
class Dispersion:
    """An uncertain field: its distribution, in the field's SI unit.

    ``normal``: ``mean`` (the nominal value when None) and ``sigma``; ``uniform``:
    ``low`` and ``high``; ``triangular``: ``low``, ``mode`` and ``high``.
    """

    field: str
    distribution: str
    dimension: str
    mean: float | None = None
    sigma: float = 0.0
    low: float = 0.0
    high: float = 0.0
    mode: float = 0.0


@dataclass(frozen=True)
class Mission:
    """A checked mission: vehicle, legs, margins and launch site, all in SI."""

    name: str
    vehicle: Vehicle
    legs: tuple[Leg, ...]
    margins: Margins
    launch: LaunchSite
    flight: FlightSettings = field(default_factory=FlightSettings)
    dispersions: tuple[Dispersion, ...] = ()
    description: str = ""
    source: str = "<mission>"
    document: dict[str, Any] = field(default_factory=dict, repr=False, compare=False)

    @property
    def total_required_delta_v(self) -> float:
        """Sum of leg requirements, leg reserves and the mission reserve [m/s]."""
        legs = sum(leg.required_delta_v + leg.reserve for leg in self.legs)
        return legs + self.margins.reserve


def load_mission(path: str | Path) -> Mission:
    """Read and check a mission file (TOML) and return the mission in SI units.

    Parameters
    ----------
    path : str or Path
        The mission file. Motor and drag-curve files it names are found relative to it.

    Returns
    -------
    Mission

    Raises
    ------
    MissionFileNotFoundError
        The file, or a file it names, does not exist.
    MissionError
        Any problem with the content; the message names file, field, line and expectation.
    """
    path = Path(path)
    return parse_mission(read_mission_text(path), source=str(path), base_dir=path.parent)


def read_mission_text(path: str | Path) -> str:
    """A mission file's text, after the checks :func:`load_mission` makes (a regular file
    of at most ``MAX_MISSION_BYTES``, UTF-8, a byte-order mark dropped)."""
    path = Path(path)
    expected = "a TOML mission file"
    try:
        info = path.stat()
    except FileNotFoundError:
        raise MissionFileNotFoundError(path) from None
    except OSError as exc:  # a symbolic link loop, a name too long, no permission
        reason = exc.strerror or type(exc).__name__
        raise MissionError(path, "", f"cannot open it ({reason})", expected) from None
    kind = catalog.file_kind(info.st_mode)
    if kind:
        raise MissionError(path, "", f"is {kind}, not a file", expected)
    if info.st_size > MAX_MISSION_BYTES:
        raise MissionError(
            path,
            "",
            f"is {info.st_size / 1e6:,.0f} MB, too large for a mission file",
            f"at most {MAX_MISSION_BYTES / 1e6:.0f} MB",
        )
    try:
        raw = path.read_bytes()
    except OSError as exc:
        reason = exc.strerror or type(exc).__name__
        raise MissionError(path, "", f"cannot read it ({reason})", expected) from None
    try:
        # "utf-8-sig": a byte-order mark at the start, as some editors write, is accepted
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise MissionError(path, "", "the file is not UTF-8 text", "a TOML text file") from exc
    return text


MAX_MISSION_BYTES = 64_000_000
"""The largest mission file read: 64 MB (a mission of 100,000 legs is about 6 MB)."""


def parse_mission(
    document: str | Mapping[str, Any],
    source: str = "<mission>",
    base_dir: str | Path | None = None,
) -> Mission:
    """Check a mission given as TOML text or as a dictionary, and build the Mission.

    Parameters
    ----------
    document : str or Mapping
        TOML text, or the dictionary ``tomllib`` would produce from it.
    source : str
        Name used in error messages (usually the file path).
    base_dir : str or Path or None
        Folder that relative file names are read from; the working folder when None.
    """
    text = document if isinstance(document, str) else ""
    too_deep = MissionError(
        source,
        "",
        "tables or lists are nested too deeply",
        "a mission file as described in the README (a few levels of nesting)",
    )
    try:
        if isinstance(document, str):
            try:
                data = tomllib.loads(document)
            except tomllib.TOMLDecodeError as exc:
                line = _toml_error_line(str(exc))
                raise MissionError(
                    source, "", f"malformed TOML ({exc})", "valid TOML", line
                ) from exc
        elif isinstance(document, Mapping):
            data = copy.deepcopy(dict(document))
        else:
            raise MissionError(source, "", "not a mission document", "TOML text or a dict")
        base = Path(base_dir) if base_dir is not None else Path.cwd()
        return _Builder(source, text, base).build(data)
    except RecursionError:
        raise too_deep from None


def _toml_error_line(message: str) -> int | None:
    match = re.search(r"line (\d+)", message)
    return int(match.group(1)) if match else None


class _Table:
    """A view of one TOML table that reads fields, checks them and names them in errors."""

    def __init__(
        self,
        builder: _Builder,
        data: Any,
        path: tuple[str | int, ...],
        allowed: set[str],
    ) -> None:
        self.builder = builder
        self.path = path
        if not isinstance(data, Mapping):
            raise self.error("", f"is {_kind(data)}", "a table of fields")
        self.data = data
        for key in data:
            if key not in allowed:
                close = difflib.get_close_matches(str(key), sorted(allowed), n=1, cutoff=0.6)
                hint = f"did you mean '{close[0]}'?" if close else ""
                known = ", ".join(sorted(allowed))
                raise self.error(
                    str(key),
                    "unknown field" + (f"; {hint}" if hint else ""),
                    f"one of: {known}",
                )

    def name(self, key: str = "") -> str:
        parts: list[str] = []
        for part in self.path:
            if isinstance(part, int):
                parts[-1] += f"[{part + 1}]"
            else:
                parts.append(part)
        if key:
            parts.append(key)
        return ".".join(parts)

    def error(self, key: str, problem: str, expected: str = "") -> MissionError:
        line = self.builder.locate(self.path, key)
        return MissionError(self.builder.source, self.name(key), problem, expected, line)

    def has(self, key: str) -> bool:
        return key in self.data

    def string(
        self, key: str, default: str | None = None, required: bool = False, path: bool = False
    ) -> str:
        """A text field, stripped and cleaned of control codes (:func:`printable`), so none
        reaches a table, picture, report or export; a ``path`` is kept as written (the
        data-file reader refuses one that holds control codes)."""
        if key not in self.data:
            if required or default is None:
                raise self.error(key, "is missing", "text")
            return default
        value = self.data[key]
        if not isinstance(value, str) or not printable(value).strip():
            raise self.error(key, f"is {_kind(value)}", "non-empty text")
        return value.strip() if path else printable(value).strip()

    def strings(self, key: str) -> list[str]:
        if key not in self.data:
            raise self.error(key, "is missing", 'a list of names, for example ["booster"]')
        value = self.data[key]
        if isinstance(value, str):
            value = [value]
        if (
            not isinstance(value, list)
            or not value
            or not all(isinstance(item, str) and item for item in value)
        ):
            raise self.error(key, f"is {_kind(value)}", 'a list of names, for example ["booster"]')
        return [printable(item).strip() for item in value]  # as string() cleans the names

    def integer(self, key: str, default: int, low: int, high: int) -> int:
        if key not in self.data:
            return default
        value = self.data[key]
        if isinstance(value, bool) or not isinstance(value, int):
            raise self.error(key, f"is {_kind(value)}", f"a whole number from {low} to {high}")
        if not low <= value <= high:
            raise self.error(key, f"is {value}", f"a whole number from {low} to {high}")
        return value

    def quantity(
        self,
        key: str,
        dimension: str,
        *,
        required: bool = False,
        default: float | None = None,
        low: float | None = None,
        high: float | None = None,
        low_inclusive: bool = True,
        expected: str = "",
    ) -> float | None:
        """Read a quantity field, convert it to SI, and check its range."""
        if key not in self.data:
            if required:
                raise self.error(key, "is missing", f"a {dimension} in {UNIT_HINTS[dimension]}")
            return default
        value = self.data[key]
        if isinstance(value, bool):
            raise self.error(key, "is true/false", f"a {dimension}")
        if isinstance(value, int | float):
            if dimension != "dimensionless":
                raise self.error(
                    key,
                    f"the bare number {value} has no unit",
                    f"a {dimension} written with its unit in {UNIT_HINTS[dimension]}",
                )
            try:
                number = float(value)
            except OverflowError:
                raise self.error(key, "the number is too large", f"a {dimension}") from None
            if not math.isfinite(number):
                raise self.error(key, f"is {value}", "a finite number")
        elif isinstance(value, str):
            try:
                number = parse_quantity(value, dimension)
            except UnitParseError as exc:
                raise self.error(
                    key, exc.reason, f"a {dimension} in {UNIT_HINTS[dimension]}"
                ) from exc
        else:
            raise self.error(key, f"is {_kind(value)}", f"a {dimension} in {UNIT_HINTS[dimension]}")
        too_low = low is not None and (number < low if low_inclusive else number <= low)
        too_high = high is not None and number > high
        if too_low or too_high:
            expected = expected or _range_text(dimension, low, high, low_inclusive)
            problem = "too large" if too_high else "too small"
            raise self.error(key, f"{value!r} is {problem}", expected)
        return number

    def table(self, key: str, allowed: set[str]) -> _Table | None:
        if key not in self.data:
            return None
        return _Table(self.builder, self.data[key], (*self.path, key), allowed)


def _range_text(dimension: str, low: float | None, high: float | None, inclusive: bool) -> str:
    """Describe an allowed range in words, in SI units (degrees for angles)."""
    from propulsion.units import DIMENSIONS

    unit = DIMENSIONS[dimension]
    scale = 1.0
    if dimension == "angle":
        unit, scale = "deg", 180 / math.pi
    unit = "" if unit == "dimensionless" else f" {unit}"
    article = "an" if dimension[0] in "aeiou" else "a"
    if low is not None and high is not None:
        return f"{article} {dimension} from {low * scale:g} to {high * scale:g}{unit}"
    if low is not None:
        word = "at least" if inclusive else "above"
        return f"{article} {dimension} {word} {low * scale:g}{unit}"
    return f"{article} {dimension} of at most {(high or 0.0) * scale:g}{unit}"


def _suggest(word: str, choices: Any) -> str:
    """ "; did you mean 'X'?" for the closest of ``choices``, or nothing."""
    close = difflib.get_close_matches(word, sorted(choices), n=1)
    return f"; did you mean '{close[0]}'?" if close else ""


def _kind(value: Any) -> str:
    if isinstance(value, bool):
        return "true/false"
    if isinstance(value, int | float):
        return f"the number {value}"
    if isinstance(value, str):
        return f"the text {value!r}" if value.strip() else "empty text"
    if isinstance(value, list):
        return "a list" if value else "an empty list"
    if isinstance(value, Mapping):
        return "a table"
    return f"a {type(value).__name__}"


def _sounding_wind(
    height: Any, speed: Any, source: Any
) -> tuple[tuple[float, ...], tuple[float, ...], tuple[float, ...]]:
    """A sounding's wind as rows above the site: (height [m], speed [m/s], from [rad]).

    Rows at or below the site are replaced by one row at the site, the east and north
    components interpolated linearly there (the flight holds the lowest row below it).
    """
    import numpy as np

    east, north = -speed * np.sin(source), -speed * np.cos(source)
    above = height > 0
    if not above.all():
        at_site = [float(np.interp(0.0, height, column)) for column in (east, north)]
        height = np.r_[0.0, height[above]]
        east, north = np.r_[at_site[0], east[above]], np.r_[at_site[1], north[above]]
    speeds = np.hypot(east, north)
    directions = np.mod(np.arctan2(-east, -north), 2 * math.pi)
    return (
        tuple(float(v) for v in height),
        tuple(float(v) for v in speeds),
        tuple(float(v) for v in directions),
    )


_TOP = {"mission", "launch", "vehicle", "stage", "leg", "margins", "flight", "dispersion"}
_DISPERSION = {"field", "distribution", "mean", "sigma", "low", "high", "mode"}
DISTRIBUTIONS = {
    "normal": ("sigma",),
    "uniform": ("low", "high"),
    "triangular": ("low", "mode", "high"),
}
_FLIGHT = {
    "earth",
    "stop_at",
    "max_time",
    "pitch_kick_angle",
    "pitch_kick_time",
    "pitch_kick_speed",
    "pitch_kick_duration",
    "guidance",
    "hold_attitude_below",
}
_MISSION = {"name", "description"}
_LAUNCH = {
    "site_altitude",
    "latitude",
    "azimuth",
    "rail_length",
    "elevation",
    "wind",
    "wind_speed",
    "wind_scale",
    "wind_turn",
    "temperature",
    "temperature_offset",
    "pressure",
    "humidity",
    "sounding",
}
# the columns a sounding file may have: dimension, and an example header unit
_SOUNDING_COLUMNS = {
    "altitude": ("length", "m"),
    "temperature": ("temperature", "degC"),
    "pressure": ("pressure", "hPa"),
    "dew_point": ("temperature", "degC"),
    "humidity": ("dimensionless", "%"),
    "wind_speed": ("speed", "m/s"),
    "wind_direction": ("angle", "deg"),
}
_VEHICLE = {"payload", "diameter", "drag_curve", "drag_scale"}
_STAGE = {
    "name",
    "inert_mass",
    "propellant_mass_fraction",
    "propellant_mass",
    "diameter",
    "drag_curve",
    "residual_fraction",
    "tank_fraction",
    "separation_delay",
    "ignition_delay",
    "motor",
    "engine",
}
_MOTOR = {
    "name",
    "file",
    "propellant_mass",
    "case_mass",
    "propellant",
    "count",
    "impulse_scale",
    "burn_time_scale",
}
_ENGINE = {
    "thrust_vacuum",
    "thrust_sea_level",
    "isp_vacuum",
    "isp_sea_level",
    "exit_area",
    "propellant",
    "count",
}
_LEG_BASE = {"name", "stages", "target", "reserve"}
_LEG_FIELDS = {name for kind in TARGET_KINDS.values() for name in (*kind.required, *kind.optional)}
_MARGINS = {"reserve", "residual_fraction", "required_margin", "flight"}
_FLIGHT_MARGIN = {"judge", "required"}


class _Builder:
    def __init__(self, source: str, text: str, base_dir: Path) -> None:
        self.source = source
        self.lines = text.splitlines()
        self.base_dir = base_dir

    # -- locating fields in the text, for error messages ------------------------------
    def locate(self, path: tuple[str | int, ...], key: str) -> int | None:
        """Best-effort line number of a field (or of its table when the key is absent)."""
        if not self.lines:
            return None
        header: tuple[str | int, ...] = ()
        counts: dict[tuple[str | int, ...], int] = {}
        table_line: int | None = None
        key_re = re.compile(rf"^\s*{re.escape(key)}\s*=") if key else None
        for number, raw in enumerate(self.lines, start=1):
            line = raw.strip()
            array = re.match(r"^\[\[\s*([A-Za-z0-9_.]+)\s*\]\]", line)
            single = re.match(r"^\[\s*([A-Za-z0-9_.]+)\s*\]", line)
            if array:
                names = array.group(1).split(".")
                parent = self._resolve(names[:-1], counts)
                array_key = (*parent, names[-1])
                counts[array_key] = counts.get(array_key, -1) + 1
                header = (*array_key, counts[array_key])
            elif single:
                header = (
                    *self._resolve(single.group(1).split(".")[:-1], counts),
                    single.group(1).split(".")[-1],
                )
            else:
                if header == path and key_re is not None and key_re.match(raw):
                    return number
                continue
            if header == path:
                table_line = number
            if key and header == (*path, key):
                return number  # the field is itself a table: point at its header
        if not path and key_re is not None:
            for number, raw in enumerate(self.lines, start=1):
                if key_re.match(raw):
                    return number
        return table_line

    @staticmethod
    def _resolve(
        names: list[str], counts: dict[tuple[str | int, ...], int]
    ) -> tuple[str | int, ...]:
        resolved: tuple[str | int, ...] = ()
        for name in names:
            resolved = (*resolved, name)
            if resolved in counts:
                resolved = (*resolved, counts[resolved])
        return resolved

    # -- building -------------------------------------------------------------------
    def build(self, data: dict[str, Any]) -> Mission:
        top = _Table(self, data, (), _TOP)
        info = top.table("mission", _MISSION)
        name = info.string("name", default=Path(self.source).stem) if info else ""
        description = info.string("description", default="") if info else ""
        name = name or Path(self.source).stem
        launch = self._launch(top.table("launch", _LAUNCH))
        flight = self._flight(top.table("flight", _FLIGHT))
        margins = self._margins(top.table("margins", _MARGINS))
        vehicle_table = top.table("vehicle", _VEHICLE)
        if vehicle_table is None:
            raise top.error("vehicle", "is missing", "a [vehicle] table with the payload mass")
        payload = vehicle_table.quantity(
            "payload", "mass", required=True, **RANGES["vehicle.payload"].bounds()
        )
        diameter = vehicle_table.quantity("diameter", "length", low=0.0, low_inclusive=False)
        drag_name = vehicle_table.string("drag_curve", default="", path=True) or None
        drag = self._drag_curve(vehicle_table, "drag_curve", drag_name)
        stages = self._stages(top, margins, diameter, drag)
        drag_scale = vehicle_table.quantity(
            "drag_scale",
            "dimensionless",
            default=1.0,
            **RANGES["vehicle.drag_scale"].bounds(),
            expected="a factor from 0 to 10 on every drag coefficient",
        )
        vehicle = Vehicle(
            stages=tuple(stages),
            payload_mass=float(payload or 0.0),
            name=name,
            drag_scale=float(drag_scale if drag_scale is not None else 1.0),
        )
        legs = self._legs(top, vehicle, launch)
        if flight.guidance == "orbit":
            self._check_guidance(top, legs, flight, vehicle)
        margins_table = top.table("margins", _MARGINS)
        if margins_table is not None:
            flight_margin = self._flight_margin(
                margins_table.table("flight", _FLIGHT_MARGIN), legs, vehicle
            )
            margins = replace(margins, flight=flight_margin)
        return Mission(
            name=name,
            vehicle=vehicle,
            legs=tuple(legs),
            margins=margins,
            launch=launch,
            flight=flight,
            dispersions=self._dispersions(top, data),
            description=description,
            source=self.source,
            document=data,
        )

    def _launch(self, table: _Table | None) -> LaunchSite:
        if table is None:
            return LaunchSite()
        degree = math.pi / 180
        altitude = table.quantity(
            "site_altitude", "length", default=0.0, **RANGES["launch.site_altitude"].bounds()
        )
        latitude = table.quantity("latitude", "angle", low=-90 * degree, high=90 * degree)
        azimuth = table.quantity("azimuth", "angle", low=0.0, high=360 * degree)
        rail = table.quantity("rail_length", "length", **RANGES["launch.rail_length"].bounds())
        elevation = table.quantity(
            "elevation",
            "angle",
            default=math.pi / 2,
            **RANGES["launch.elevation"].bounds(),
            expected="an angle above the horizon, from 0 deg to 90 deg",
        )
        wind_altitude, wind_speed, wind_from = self._wind(table)
        wind_offset = table.quantity(
            "wind_speed", "speed", default=0.0, **RANGES["launch.wind_speed"].bounds()
        )
        wind_scale = table.quantity(
            "wind_scale",
            "dimensionless",
            default=1.0,
            **RANGES["launch.wind_scale"].bounds(),
            expected="a factor from 0 to 10 on the wind rows",
        )
        wind_turn = table.quantity(
            "wind_turn",
            "angle",
            default=0.0,
            **RANGES["launch.wind_turn"].bounds(),
            expected="an angle from -360 deg to 360 deg added to every wind direction",
        )
        air, sounding_wind = self._air(table, float(altitude or 0.0))
        if sounding_wind is not None:
            if table.has("wind"):
                raise table.error(
                    "wind",
                    "the sounding gives the wind already (its wind_speed and wind_direction "
                    "columns)",
                    "wind rows or a sounding with wind columns, not both",
                )
            wind_altitude, wind_speed, wind_from = sounding_wind
        return LaunchSite(
            wind_offset=float(wind_offset or 0.0),
            wind_altitude=wind_altitude,
            wind_speed=wind_speed,
            wind_from=wind_from,
            wind_scale=float(wind_scale if wind_scale is not None else 1.0),
            wind_turn=float(wind_turn or 0.0),
            air=air,
            altitude=float(altitude or 0.0),
            latitude=latitude,
            azimuth=azimuth,
            rail_length=rail,
            elevation=float(elevation or math.pi / 2),
        )

    def _air(
        self, table: _Table, site_altitude: float
    ) -> tuple[Weather, tuple[tuple[float, ...], tuple[float, ...], tuple[float, ...]] | None]:
        """The day's air (``propulsion.weather``) and a sounding's wind rows, if any.

        The air is checked whole by building its layer table once (kept in a cache for
        the flight).
        """
        for first, second in (
            ("temperature", "temperature_offset"),
            ("sounding", "temperature"),
            ("sounding", "temperature_offset"),
        ):
            if table.has(first) and table.has(second):
                raise table.error(
                    second,
                    f"give {first} or {second}, not both",
                    "the site temperature, an offset from the standard, or a sounding",
                )
        temperature = table.quantity(
            "temperature",
            "temperature",
            **RANGES["launch.temperature"].bounds(),
            expected='the air temperature at the site, from -80 degC to 60 degC, e.g. "35 degC"',
        )
        offset = table.quantity(
            "temperature_offset",
            "temperature_difference",
            **RANGES["launch.temperature_offset"].bounds(),
            expected='a temperature difference from -60 K to 60 K, e.g. "+15 K" or '
            '"-20 delta_degC" (a difference is written in K or delta_degC, not degC)',
        )
        pressure = table.quantity(
            "pressure",
            "pressure",
            **RANGES["launch.pressure"].bounds(),
            expected='the station pressure at the site, from 200 hPa to 1100 hPa, e.g. "950 hPa"',
        )
        humidity = table.quantity(
            "humidity",
            "dimensionless",
            **RANGES["launch.humidity"].bounds(),
            expected='a relative humidity from 0 % to 100 %, e.g. "60 %"',
        )
        sounding, wind, path, lines = None, None, Path(), [0]
        if table.has("sounding"):
            sounding, wind, path, lines = self._sounding(table, site_altitude)
            for key, column in (("pressure", "pressure"), ("humidity", "dew point or humidity")):
                own = sounding.pressure if key == "pressure" else sounding.dew_point
                own = own or (sounding.humidity if key == "humidity" else ())
                if own and table.has(key):
                    raise table.error(
                        key,
                        f"the sounding gives the {column} already",
                        f"{key} in [launch] only with a sounding that has no {column} column",
                    )
        weather = Weather(temperature, offset, pressure, humidity, sounding)
        try:
            air_table(weather, site_altitude)
        except WeatherError as exc:
            if exc.row is not None:
                raise DataFileError(
                    path, exc.field, exc.problem, exc.expected, lines[exc.row]
                ) from None
            if exc.field in _LAUNCH:
                raise table.error(exc.field, exc.problem, exc.expected) from None
            raise table.error("sounding", exc.problem, exc.expected) from None
        return weather, wind

    def _sounding(
        self, table: _Table, site_altitude: float
    ) -> tuple[
        Sounding,
        tuple[tuple[float, ...], tuple[float, ...], tuple[float, ...]] | None,
        Path,
        list[int],
    ]:
        """Read a sounding file (CSV, units in the header, in the mission's folder).

        Returns the sounding, its wind as rows of height above the site (None without wind
        columns), the file's path and the line of each row.
        """
        try:
            path = catalog.user_data_file(
                table.string("sounding", path=True), self.base_dir, "sounding"
            )
            data = catalog.read_table(path)
        except catalog.DataPathError as exc:
            raise table.error("sounding", exc.problem, exc.expected) from None
        except MissionFileNotFoundError as exc:
            raise table.error("sounding", str(exc), "an existing CSV file") from exc
        known = ", ".join(_SOUNDING_COLUMNS)
        header = data.header_line
        names: dict[str, str] = {}
        for name in data.columns:
            key = name.strip().lower().replace(" ", "_")
            if key not in _SOUNDING_COLUMNS:
                hint = _suggest(key, _SOUNDING_COLUMNS)
                raise DataFileError(
                    path, "", f"unknown column {catalog.excerpt(name)}{hint}", known, header
                )
            names[key] = name
        for key in ("altitude", "temperature"):
            if key not in names:
                raise DataFileError(
                    path,
                    key,
                    "column is missing",
                    f"the columns altitude and temperature, and any of: {known}",
                    header,
                )
        if "dew_point" in names and "humidity" in names:
            raise DataFileError(
                path, "humidity", "both dew_point and humidity", "one of them", header
            )
        if ("wind_speed" in names) != ("wind_direction" in names):
            raise DataFileError(
                path,
                "wind_speed",
                "one wind column without the other",
                "both wind_speed and wind_direction (blowing from), or neither",
                header,
            )
        values: dict[str, Any] = {}
        for key, name in names.items():
            dimension, unit = _SOUNDING_COLUMNS[key]
            if dimension != "dimensionless" and not (data.units[name] or "").strip():
                raise DataFileError(
                    path,
                    key,
                    f"the {key} column states no unit (a column without one is a plain number)",
                    f"a header with units, such as '{key} [{unit}]'",
                    header,
                )
            values[key] = data.numeric(name, dimension)
        import numpy as np

        rows = len(values["altitude"])
        if rows < 2:
            raise DataFileError(
                path,
                "",
                f"{rows} row" if rows == 1 else f"{rows} rows",
                "at least two rows",
                header,
            )

        def check(key: str, bad: Any, problem: str, expected: str) -> None:
            found = np.flatnonzero(bad)
            if found.size:
                row = int(found[0])
                raise DataFileError(path, key, problem, expected, data.line(row))

        altitude, temperature = values["altitude"], values["temperature"]
        check(
            "altitude",
            (altitude < -500) | (altitude > 86e3),
            "out of range",
            "an altitude above sea level from -500 m to 86 km",
        )
        check(
            "altitude",
            np.r_[False, np.diff(altitude) <= 0],
            "does not increase",
            "altitudes that increase from row to row",
        )
        check(
            "temperature",
            (temperature < 120) | (temperature > 350),
            "out of range",
            "a temperature from 120 K to 350 K (-153 degC to 77 degC)",
        )
        if "pressure" in values:
            pressure = values["pressure"]
            check("pressure", pressure <= 0, "not above zero", "a pressure above zero")
            check(
                "pressure",
                np.r_[False, np.diff(pressure) >= 0],
                "does not decrease",
                "pressures that fall as the altitude rises",
            )
        if "dew_point" in values:
            dew = values["dew_point"]
            check(
                "dew_point",
                (dew < 120) | (dew > temperature),
                "out of range",
                "a dew point from 120 K up to the row's temperature",
            )
        if "humidity" in values:
            check(
                "humidity",
                (values["humidity"] < 0) | (values["humidity"] > 1),
                "out of range",
                "a relative humidity from 0 to 1 (or 0 % to 100 % with the header 'humidity [%]')",
            )
        wind = None
        if "wind_speed" in values:
            speed, source = values["wind_speed"], values["wind_direction"]
            check(
                "wind_speed",
                (speed < 0) | (speed > 200),
                "out of range",
                "a wind speed from 0 to 200 m/s",
            )
            check(
                "wind_direction",
                (source < 0) | (source > 2 * math.pi),
                "out of range",
                "the direction the wind blows from, 0 to 360 deg clockwise from north",
            )
            wind = _sounding_wind(altitude - site_altitude, speed, source)
        sounding = Sounding(
            tuple(float(v) for v in altitude),
            tuple(float(v) for v in temperature),
            *(
                tuple(float(v) for v in values[key]) if key in values else ()
                for key in ("pressure", "dew_point", "humidity")
            ),
        )
        return sounding, wind, path, [data.line(row) for row in range(rows)]

    def _dispersions(self, top: _Table, data: dict[str, Any]) -> tuple[Dispersion, ...]:
        from propulsion import fields

        raw = top.data.get("dispersion", [])
        if not isinstance(raw, list):
            raise top.error("dispersion", f"is {_kind(raw)}", "[[dispersion]] tables")
        out: list[Dispersion] = []
        for index, entry in enumerate(raw):
            table = _Table(self, entry, ("dispersion", index), _DISPERSION)
            name = table.string("field", required=True)
            try:
                ref = fields.resolve(data, name)
            except fields.FieldError as exc:
                hint = f"; did you mean '{exc.suggestion}'?" if exc.suggestion else ""
                raise table.error(
                    "field",
                    f"{exc.problem}{hint}",
                    "a field path such as vehicle.payload or stage.booster.inert_mass",
                ) from exc
            if ref.is_count:
                raise table.error("field", "a count cannot be dispersed", "a continuous field")
            distribution = table.string("distribution", default="normal")
            if distribution not in DISTRIBUTIONS:
                hint = _suggest(distribution, sorted(DISTRIBUTIONS))
                raise table.error(
                    "distribution",
                    f"unknown distribution '{distribution}'{hint}",
                    "normal, uniform or triangular",
                )
            values: dict[str, float] = {}
            for key in DISTRIBUTIONS[distribution]:
                number = table.quantity(key, ref.dimension, required=True)
                values[key] = float(number if number is not None else 0.0)
            for key in ("mean", "sigma", "low", "high", "mode"):
                if key not in DISTRIBUTIONS[distribution] and table.has(key):
                    if key == "mean" and distribution == "normal":
                        continue
                    raise table.error(
                        key,
                        f"does not belong to a {distribution} distribution",
                        "fields: " + ", ".join(DISTRIBUTIONS[distribution]),
                    )
            mean = table.quantity("mean", ref.dimension) if distribution == "normal" else None
            if distribution == "normal" and values["sigma"] < 0:
                raise table.error(
                    "sigma",
                    "a standard deviation cannot be negative",
                    "a standard deviation of zero or more",
                )
            if distribution in ("uniform", "triangular") and values["low"] >= values["high"]:
                raise table.error(
                    "low", "the lower bound is not below the upper bound", "low < high"
                )
            if (
                distribution == "triangular"
                and not values["low"] <= values["mode"] <= values["high"]
            ):
                raise table.error("mode", "the mode lies outside low..high", "low <= mode <= high")
            out.append(
                Dispersion(
                    field=name,
                    distribution=distribution,
                    dimension=ref.dimension,
                    mean=mean,
                    sigma=values.get("sigma", 0.0),
                    low=values.get("low", 0.0),
                    high=values.get("high", 0.0),
                    mode=values.get("mode", 0.0),
                )
            )
        return tuple(out)

    def _wind(
        self, table: _Table
    ) -> tuple[tuple[float, ...], tuple[float, ...], tuple[float, ...]]:
        if not table.has("wind"):
            return (), (), ()
        rows = table.data["wind"]
        expected = (
            "a list of [height, speed, direction it blows from] rows, for example "
            '[["0 m", "3 m/s", "270 deg"], ["1 km", "8 m/s", "250 deg"]] '
            "(a row without a direction blows along the launch azimuth)"
        )
        if not isinstance(rows, list) or not rows:
            raise table.error("wind", f"is {_kind(rows)}", expected)
        altitudes: list[float] = []
        speeds: list[float] = []
        directions: list[float] = []
        for number, row in enumerate(rows, start=1):
            if not (isinstance(row, list) and len(row) in (2, 3)):
                raise table.error("wind", f"row {number} is {_kind(row)}", expected)
            values = {"altitude": row[0], "speed": row[1]}
            if len(row) == 3:
                values["direction"] = row[2]
            cells = _Table(self, values, table.path, {"altitude", "speed", "direction"})
            try:
                altitude = float(
                    cells.quantity("altitude", "length", required=True, low=0.0) or 0.0
                )
                if len(row) == 3:
                    speed = float(
                        cells.quantity("speed", "speed", required=True, low=0.0, high=200.0) or 0.0
                    )
                    direction = float(
                        cells.quantity(
                            "direction", "angle", required=True, low=0.0, high=2 * math.pi
                        )
                        or 0.0
                    )
                else:
                    speed = float(
                        cells.quantity("speed", "speed", required=True, low=-200.0, high=200.0)
                        or 0.0
                    )
                    direction = math.nan
            except MissionError as exc:
                raise table.error("wind", f"row {number}: {exc.problem}", expected) from exc
            if altitudes and altitude <= altitudes[-1]:
                raise table.error("wind", f"row {number}: heights must increase", expected)
            altitudes.append(altitude)
            speeds.append(speed)
            directions.append(direction)
        return tuple(altitudes), tuple(speeds), tuple(directions)

    def _flight(self, table: _Table | None) -> FlightSettings:
        if table is None:
            return FlightSettings()
        earth = table.string("earth", default="round")
        if earth not in ("round", "ellipsoid", "flat"):
            raise table.error("earth", f"is {earth!r}", "'round', 'ellipsoid' or 'flat'")
        stop_at = table.string("stop_at", default="apogee")
        if stop_at not in ("apogee", "ground"):
            raise table.error("stop_at", f"is {stop_at!r}", "'apogee' or 'ground'")
        guidance = table.string("guidance", default="gravity_turn")
        if guidance not in ("gravity_turn", "linear_tangent", "orbit"):
            raise table.error(
                "guidance", f"is {guidance!r}", "'gravity_turn', 'linear_tangent' or 'orbit'"
            )
        if table.has("pitch_kick_time") and table.has("pitch_kick_speed"):
            raise table.error(
                "pitch_kick_time",
                "give pitch_kick_time or pitch_kick_speed, not both",
                "one of them",
            )
        has_angle = table.has("pitch_kick_angle")
        has_when = table.has("pitch_kick_time") or table.has("pitch_kick_speed")
        # under guidance to an orbit the kick angle may be left to `fly` to choose
        chosen = guidance == "orbit" and has_when and not has_angle
        if has_angle != has_when and not chosen:
            raise table.error(
                "pitch_kick_angle" if has_when else "pitch_kick_time",
                "a pitch kick needs both its angle and when it starts",
                "pitch_kick_angle with pitch_kick_time or pitch_kick_speed",
            )
        return FlightSettings(
            earth=earth,
            stop_at=stop_at,
            max_time=float(
                table.quantity(
                    "max_time", "time", default=7200.0, low=0.0, low_inclusive=False, high=1e6
                )
                or 7200.0
            ),
            pitch_kick_angle=float(
                table.quantity(
                    "pitch_kick_angle",
                    "angle",
                    default=0.0,
                    **RANGES["flight.pitch_kick_angle"].bounds(),
                )
                or 0.0
            ),
            pitch_kick_time=table.quantity("pitch_kick_time", "time", low=0.0, high=1e5),
            pitch_kick_speed=table.quantity(
                "pitch_kick_speed", "speed", **RANGES["flight.pitch_kick_speed"].bounds()
            ),
            pitch_kick_duration=float(
                table.quantity(
                    "pitch_kick_duration",
                    "time",
                    default=1.0,
                    low=0.0,
                    low_inclusive=False,
                    high=1e4,
                )
                or 1.0
            ),
            guidance=guidance,
            kick_chosen=chosen,
            hold_speed=float(
                table.quantity("hold_attitude_below", "speed", default=10.0, low=0.0, high=1e3)
                or 0.0
            ),
        )

    def _margins(self, table: _Table | None) -> Margins:
        if table is None:
            return Margins()
        reserve = table.quantity("reserve", "speed", default=0.0, low=0.0)
        residual = table.quantity(
            "residual_fraction",
            "dimensionless",
            default=0.0,
            low=LIMITS["residual_fraction"][0],
            high=LIMITS["residual_fraction"][1],
            expected="a fraction from 0 to 50 %",
        )
        required_margin = 0.0
        is_fraction = False
        if table.has("required_margin"):
            value = table.data["required_margin"]
            if isinstance(value, int | float) and not isinstance(value, bool):
                is_fraction = True
            elif isinstance(value, str):
                try:
                    parse_quantity(value, "speed")
                except UnitParseError:
                    is_fraction = True
            dimension = "dimensionless" if is_fraction else "speed"
            both = 'a delta-v such as "100 m/s" or a percentage such as "5 %"'
            try:
                required_margin = float(
                    table.quantity(
                        "required_margin",
                        dimension,
                        low=0.0,
                        high=10.0 if is_fraction else None,
                        expected=both,
                    )
                    or 0.0
                )
            except MissionError as exc:
                raise table.error("required_margin", exc.problem, both) from None
        return Margins(float(reserve or 0.0), float(residual or 0.0), required_margin, is_fraction)

    def _flight_margin(
        self, table: _Table | None, legs: list[Leg], vehicle: Vehicle
    ) -> FlightMargin:
        if table is None:
            return FlightMargin()
        judge = table.string("judge", default="target")
        if judge not in FLIGHT_JUDGES:
            raise table.error(
                "judge",
                f"unknown margin '{judge}'{_suggest(judge, FLIGHT_JUDGES)}",
                "one of: " + ", ".join(FLIGHT_JUDGES),
            )
        target = legs[0].target if legs else ""
        if judge == "target":
            dimension = {"apogee": "length", "circular_orbit": "length"}.get(target, "speed")
            what = {
                "apogee": 'metres of apogee such as "100 m"',
                "circular_orbit": 'kilometres of perigee such as "5 km"',
                "burnout_speed": 'm/s of burnout speed such as "20 m/s"',
            }.get(target, "the target's own quantity")
            expected = f'{what}, or a percentage of the target such as "5 %"'
        elif judge == "propulsion":
            dimension = "speed"
            expected = (
                'a percentage of the total impulse such as "5 %", or ideal delta-v such as "50 m/s"'
            )
        else:
            dimension = "mass"
            expected = 'a payload mass such as "0.2 kg", or a percentage of the payload'
        if not table.has("required"):
            return FlightMargin(judge, 0.0, False)
        value = table.data["required"]
        is_fraction = isinstance(value, int | float) and not isinstance(value, bool)
        if isinstance(value, str):
            try:
                parse_quantity(value, dimension)
            except UnitParseError:
                is_fraction = True
        if is_fraction and judge == "payload" and vehicle.payload_mass <= 0.0:
            raise table.error(
                "required", "is a percentage of the payload, and the payload is 0 kg", expected
            )
        try:
            required = table.quantity(
                "required",
                "dimensionless" if is_fraction else dimension,
                low=0.0,
                high=10.0 if is_fraction else None,
                expected=expected,
            )
        except MissionError as exc:
            raise table.error("required", exc.problem, expected) from None
        return FlightMargin(judge, float(required or 0.0), is_fraction)

    def _drag_curve(self, table: _Table, key: str, name: str | None) -> DragCurve | None:
        if name is None:
            return None
        try:
            # a path must stay in the mission's folder (catalog.user_data_file)
            return catalog.load_drag_curve(name, self.base_dir)
        except catalog.DataPathError as exc:
            raise table.error(key, exc.problem, exc.expected) from None
        except MissionFileNotFoundError as exc:
            raise table.error(key, str(exc), "a shipped drag curve name or a CSV file") from exc

    def _stages(
        self,
        top: _Table,
        margins: Margins,
        diameter: float | None,
        drag: DragCurve | None,
    ) -> list[Stage]:
        raw = top.data.get("stage")
        if raw is None:
            raise top.error("stage", "is missing", "at least one [[stage]] table")
        if not isinstance(raw, list) or not raw:
            raise top.error("stage", f"is {_kind(raw)}", "one or more [[stage]] tables")
        stages: list[Stage] = []
        for index, entry in enumerate(raw):
            table = _Table(self, entry, ("stage", index), _STAGE)
            stage = self._stage(table, margins, diameter, drag)
            engine = stage.propulsion
            if index == 0 and isinstance(engine, Engine) and engine.thrust_sea_level <= 0:
                raise table.error(
                    "engine",
                    "the nozzle exit area is so large that the first stage would have no "
                    "thrust at sea level",
                    f"an exit area below {engine.thrust_vacuum / 101325.0:.4g} m^2 per engine",
                )
            if any(other.name == stage.name for other in stages):
                raise table.error("name", f"'{stage.name}' is used twice", "unique stage names")
            stages.append(stage)
        return stages

    def _stage(
        self,
        table: _Table,
        margins: Margins,
        diameter: float | None,
        drag: DragCurve | None,
    ) -> Stage:
        name = table.string("name", required=True)
        motor_table = table.table("motor", _MOTOR)
        engine_table = table.table("engine", _ENGINE)
        if (motor_table is None) == (engine_table is None):
            raise table.error(
                "",
                "needs exactly one of [stage.motor] and [stage.engine]",
                "a motor (thrust curve) or an engine (thrust and specific impulse)",
            )
        propulsion: Motor | Engine
        if motor_table is not None:
            propulsion, count = self._motor(motor_table)
            if table.has("propellant_mass"):
                raise table.error(
                    "propellant_mass",
                    "a motor stage takes its propellant from the motor",
                    "motor.propellant_mass for a curve of your own, or no field",
                )
            propellant = count * propulsion.propellant_mass
            case_mass = count * propulsion.case_mass
        else:
            assert engine_table is not None
            propulsion, count = self._engine(engine_table)
            propellant = float(
                table.quantity(
                    "propellant_mass",
                    "mass",
                    required=True,
                    **RANGES["stage.propellant_mass"].bounds(),
                    expected="a mass above zero",
                )
                or 0.0
            )
            case_mass = 0.0
        if table.has("inert_mass") == table.has("propellant_mass_fraction"):
            raise table.error(
                "inert_mass",
                "give exactly one of inert_mass and propellant_mass_fraction",
                'the stage\'s dry mass, for example "1.2 kg"',
            )
        if table.has("inert_mass"):
            structure = float(
                table.quantity(
                    "inert_mass",
                    "mass",
                    **RANGES["stage.inert_mass"].bounds(),
                    expected="a mass above zero",
                )
                or 0.0
            )
            inert = structure + case_mass
        else:
            fraction = float(
                table.quantity(
                    "propellant_mass_fraction",
                    "dimensionless",
                    low=0.0,
                    low_inclusive=False,
                    expected="a fraction above 0 and below 1",
                )
                or 0.0
            )
            if fraction >= 1.0:
                raise table.error(
                    "propellant_mass_fraction",
                    f"is {fraction:g}: a stage cannot be all propellant",
                    "a fraction above 0 and below 1",
                )
            inert = propellant * (1.0 - fraction) / fraction
            if not math.isfinite(inert) or inert > 1e12:
                raise table.error(
                    "propellant_mass_fraction",
                    f"is {fraction:g}: the inert mass would be absurdly large",
                    "a fraction of at least 0.001",
                )
        if motor_table is not None and table.has("residual_fraction"):
            # one definition of a residual in budget and flight: propellant an engine
            # stage carries and never burns. A motor burns to depletion, and its thrust
            # curve's impulse is what its propellant delivers.
            raise table.error(
                "residual_fraction",
                "a motor stage takes no residual: a motor burns all its propellant, and "
                "its thrust curve already gives the impulse it delivers",
                "residual_fraction on engine stages only (scale a motor's impulse with "
                "impulse_scale instead)",
            )
        residual = table.quantity(
            "residual_fraction",
            "dimensionless",
            # a motor burns to depletion: the mission-wide residual is for engine stages
            default=0.0 if motor_table is not None else margins.residual_fraction,
            low=LIMITS["residual_fraction"][0],
            high=LIMITS["residual_fraction"][1],
            expected="a fraction from 0 to 50 %",
        )
        stage_diameter = table.quantity(
            "diameter",
            "length",
            default=diameter,
            low=0.0,
            low_inclusive=False,
            expected="a length above zero",
        )
        drag_name = table.string("drag_curve", default="", path=True) or None
        stage_drag = self._drag_curve(table, "drag_curve", drag_name) if drag_name else drag
        tank = table.quantity(
            "tank_fraction",
            "dimensionless",
            low=LIMITS["tank_fraction"][0],
            high=LIMITS["tank_fraction"][1],
            expected="a fraction from 0 to 1",
        )
        separation = table.quantity(
            "separation_delay", "time", default=0.0, **RANGES["stage.separation_delay"].bounds()
        )
        ignition = table.quantity(
            "ignition_delay", "time", default=0.0, **RANGES["stage.ignition_delay"].bounds()
        )
        return Stage(
            name=name,
            inert_mass=inert,
            propellant_mass=propellant,
            propulsion=propulsion,
            count=count,
            residual_fraction=float(residual or 0.0),
            diameter=stage_diameter,
            drag_curve=stage_drag,
            tank_fraction=tank,
            separation_delay=float(separation or 0.0),
            ignition_delay=float(ignition or 0.0),
        )

    def _family(self, table: _Table) -> str | None:
        if not table.has("propellant"):
            return None
        key = table.string("propellant")
        families = catalog.propellant_families()
        if key not in families:
            hint = _suggest(key, sorted(families))
            raise table.error(
                "propellant",
                f"unknown propellant family '{key}'{hint}",
                "a key from data/propellants.csv (see `propulsion data`)",
            )
        return key

    def _motor(self, table: _Table) -> tuple[Motor, int]:
        count = table.integer("count", 1, 1, MAX_COUNT)
        family = self._family(table)
        propellant = table.quantity(
            "propellant_mass", "mass", low=0.0, low_inclusive=False, expected="a mass above zero"
        )
        case = table.quantity("case_mass", "mass", low=0.0)
        if table.has("name") == table.has("file"):
            raise table.error(
                "name",
                "give exactly one of name (a shipped motor) and file (your own thrust curve)",
                'for example name = "pd-G58" or file = "my_curve.csv"',
            )
        try:
            if table.has("name"):
                name = table.string("name")
                if name not in catalog.motor_names():
                    hint = _suggest(name, catalog.motor_names())
                    raise table.error(
                        "name",
                        f"no shipped motor is called '{name}'{hint}",
                        'a name listed by `propulsion data`, or file = "your_curve.csv"',
                    )
                motor = catalog.load_motor(name)
                if propellant is not None or case is not None or family is not None:
                    motor = Motor(
                        name=motor.name,
                        time=motor.time,
                        thrust=motor.thrust,
                        propellant_mass=propellant or motor.propellant_mass,
                        case_mass=motor.case_mass if case is None else case,
                        propellant_family=family or motor.propellant_family,
                        diameter=motor.diameter,
                        source=motor.source,
                    )
            else:
                # a path must stay in the mission's folder (catalog.user_data_file)
                try:
                    path = catalog.user_data_file(
                        table.string("file", path=True), self.base_dir, "thrust curve"
                    )
                except catalog.DataPathError as exc:
                    raise table.error("file", exc.problem, exc.expected) from None
                motor = catalog.read_thrust_curve(path, propellant, case, family)
        except DataFileError:
            raise
        except MissionFileNotFoundError as exc:
            raise table.error("name", str(exc), "an existing motor") from exc
        impulse_scale = table.quantity(
            "impulse_scale",
            "dimensionless",
            **RANGES["motor.impulse_scale"].bounds(),
            expected="a factor above 0 on the total impulse",
        )
        time_scale = table.quantity(
            "burn_time_scale",
            "dimensionless",
            **RANGES["motor.burn_time_scale"].bounds(),
            expected="a factor above 0 on the burn time",
        )
        if impulse_scale is not None or time_scale is not None:
            # the curve stretched in time and scaled in thrust: total impulse times the
            # impulse scale, burn time times the time scale, same propellant
            s_i = 1.0 if impulse_scale is None else impulse_scale
            s_t = 1.0 if time_scale is None else time_scale
            motor = Motor(
                name=motor.name,
                time=motor.time * s_t,
                thrust=motor.thrust * (s_i / s_t),
                propellant_mass=motor.propellant_mass,
                case_mass=motor.case_mass,
                propellant_family=motor.propellant_family,
                diameter=motor.diameter,
                source=motor.source,
            )
        if motor.propellant_family is not None:
            families = catalog.propellant_families()
            if motor.propellant_family not in families:
                raise table.error(
                    "propellant",
                    f"the motor names unknown propellant family '{motor.propellant_family}'",
                    "a key from data/propellants.csv",
                )
        return motor, count

    def _engine(self, table: _Table) -> tuple[Engine, int]:
        from propulsion.constants import STANDARD_GRAVITY, USSA76_SEA_LEVEL_PRESSURE

        count = table.integer("count", 1, 1, MAX_COUNT)
        family = self._family(table)
        if table.has("thrust_vacuum") == table.has("thrust_sea_level"):
            raise table.error(
                "thrust_vacuum",
                "give exactly one of thrust_vacuum and thrust_sea_level (per engine)",
                'a force such as "1200 lbf"',
            )
        isp_vacuum = float(
            table.quantity(
                "isp_vacuum",
                "time",
                required=True,
                expected="a specific impulse in s above zero",
                **RANGES["engine.isp_vacuum"].bounds(),
            )
            or 0.0
        )
        if table.has("isp_sea_level") == table.has("exit_area"):
            raise table.error(
                "isp_sea_level",
                "give exactly one of isp_sea_level and exit_area",
                "the sea-level specific impulse, or the nozzle exit area of one engine",
            )
        p0 = USSA76_SEA_LEVEL_PRESSURE
        exit_area: float | None = None
        isp_sea_level = 0.0
        if table.has("exit_area"):
            exit_area = float(table.quantity("exit_area", "area", low=0.0) or 0.0)
        else:
            isp_sea_level = float(
                table.quantity(
                    "isp_sea_level",
                    "time",
                    high=isp_vacuum,
                    expected="a specific impulse above zero and not above isp_vacuum",
                    low=0.0,
                    low_inclusive=False,
                )
                or 0.0
            )
        if table.has("thrust_vacuum"):
            thrust_vacuum = float(
                table.quantity("thrust_vacuum", "force", **RANGES["engine.thrust_vacuum"].bounds())
                or 0.0
            )
            if exit_area is None:
                mass_flow = thrust_vacuum / (isp_vacuum * STANDARD_GRAVITY)
                exit_area = (isp_vacuum - isp_sea_level) * STANDARD_GRAVITY * mass_flow / p0
        else:
            thrust_sea_level = float(
                table.quantity("thrust_sea_level", "force", low=0.0, low_inclusive=False) or 0.0
            )
            if exit_area is None:
                mass_flow = thrust_sea_level / (isp_sea_level * STANDARD_GRAVITY)
                thrust_vacuum = mass_flow * isp_vacuum * STANDARD_GRAVITY
                exit_area = (thrust_vacuum - thrust_sea_level) / p0
            else:
                thrust_vacuum = thrust_sea_level + p0 * exit_area
        engine = Engine(thrust_vacuum, isp_vacuum, exit_area, family)
        return engine, count

    def _legs(self, top: _Table, vehicle: Vehicle, launch: LaunchSite) -> list[Leg]:
        raw = top.data.get("leg", [])
        if not isinstance(raw, list):
            raise top.error("leg", f"is {_kind(raw)}", "[[leg]] tables")
        names = [stage.name for stage in vehicle.stages]
        legs: list[Leg] = []
        last_index = -1
        for index, entry in enumerate(raw):
            table = _Table(self, entry, ("leg", index), _LEG_BASE | _LEG_FIELDS)
            name = table.string("name", default=f"leg {index + 1}")
            kind_name = table.string("target", default="delta_v")
            if kind_name not in TARGET_KINDS:
                hint = _suggest(kind_name, sorted(TARGET_KINDS))
                raise table.error(
                    "target",
                    f"unknown target '{kind_name}'{hint}",
                    "one of: " + ", ".join(TARGET_KINDS),
                )
            kind = TARGET_KINDS[kind_name]
            for key in table.data:
                if key in _LEG_FIELDS and key not in kind.required and key not in kind.optional:
                    raise table.error(
                        key,
                        f"does not belong to target '{kind_name}'",
                        "fields: " + ", ".join([*kind.required, *kind.optional]),
                    )
            stage_names = table.strings("stages")
            for stage_name in stage_names:
                if stage_name not in names:
                    hint = _suggest(stage_name, names)
                    raise table.error(
                        "stages",
                        f"no stage is called '{stage_name}'{hint}",
                        "names of [[stage]] tables: " + ", ".join(names),
                    )
            indices = [names.index(stage_name) for stage_name in stage_names]
            if indices != sorted(set(indices)) or indices != list(
                range(indices[0], indices[-1] + 1)
            ):
                raise table.error(
                    "stages",
                    "stages must be listed once each, in firing order, without gaps",
                    'for example ["booster", "sustainer"]',
                )
            if indices[0] not in (last_index, last_index + 1):
                expected_stage = names[min(last_index + 1, len(names) - 1)]
                problem = (
                    f"stage '{names[indices[0]]}' has already fired in an earlier leg"
                    if indices[0] < last_index
                    else f"the leg skips stages; the next stage to fire is '{expected_stage}'"
                )
                raise table.error("stages", problem, "legs that follow the firing order")
            if indices[0] == last_index and vehicle.stages[last_index].is_motor:
                raise table.error(
                    "stages",
                    f"stage '{names[last_index]}' is a motor, which burns once to depletion "
                    "and cannot fly two legs",
                    "an engine stage for legs that share a stage",
                )
            last_index = indices[-1]
            fields = self._target_fields(table, kind.required, kind.optional, kind_name)
            if "inclination" in fields:
                self._check_inclination(table, fields["inclination"], launch, not legs)
            if fields.get("apogee_altitude", math.inf) < fields.get("altitude", 0.0):
                raise table.error(
                    "apogee_altitude",
                    "is below the altitude (the perigee of the orbit)",
                    "an apogee_altitude at or above altitude",
                )
            reserve = float(table.quantity("reserve", "speed", default=0.0, low=0.0) or 0.0)
            try:
                requirement = required_delta_v(
                    kind_name, fields, launch.altitude, launch.latitude, launch.azimuth
                )
            except ValueError as exc:
                raise table.error("target", str(exc), "a target that can be reached") from exc
            legs.append(Leg(name, tuple(stage_names), kind_name, fields, requirement, reserve))
        return legs

    def _check_guidance(
        self, top: _Table, legs: list[Leg], flight: FlightSettings, vehicle: Vehicle
    ) -> None:
        """Guidance to an orbit needs a first leg to a circular orbit, a round Earth and an
        engine upper stage."""
        table = top.table("flight", _FLIGHT)
        assert table is not None
        if not legs or legs[0].target != "circular_orbit":
            raise table.error(
                "guidance",
                "'orbit' guides the ascent to the first leg's orbit, and the first leg has none",
                'a first [[leg]] with target = "circular_orbit"',
            )
        if flight.earth == "flat":
            raise table.error(
                "guidance", "'orbit' needs a round Earth", 'earth = "round" or "ellipsoid"'
            )
        last = legs[0].stages[-1]
        stage = next(item for item in vehicle.stages if item.name == last)
        if stage.is_motor:
            raise table.error(
                "guidance",
                f"'orbit' cuts the last stage off at the target, and '{last}' is a motor",
                "an engine stage ([stage.engine]) as the ascent's last stage",
            )

    def _check_inclination(
        self, table: _Table, inclination: float, launch: LaunchSite, first: bool
    ) -> None:
        """A target inclination needs the site's latitude, the first leg, and must be
        reachable from the site without a plane change."""
        from propulsion.guidance import InclinationError, inertial_azimuth

        if not first:
            raise table.error(
                "inclination",
                "only the first leg's orbit (the ascent) can name an inclination",
                "inclination in the first [[leg]] (later legs keep the plane)",
            )
        if launch.latitude is None:
            raise table.error(
                "inclination",
                "needs the launch site's latitude",
                'latitude in [launch], e.g. latitude = "38 deg"',
            )
        try:
            inertial_azimuth(inclination, launch.latitude)
        except InclinationError as exc:
            raise table.error(
                "inclination", str(exc), "an inclination the site reaches directly"
            ) from None

    def _target_fields(
        self, table: _Table, required: dict[str, str], optional: dict[str, str], kind: str
    ) -> dict[str, float]:
        fields: dict[str, float] = {}
        for key, dimension in {**required, **optional}.items():
            low: float = 0.0
            inclusive = key in {"loss_allowance", "delta_v"}
            expected = ""  # the range in words, from the bounds below
            high: float | None = 1e9
            if dimension == "angle":
                high = math.pi
                expected = "an angle above 0 deg and up to 180 deg"
            elif key == "delta_v":
                high = 1e5
            value = table.quantity(
                key,
                dimension,
                required=key in required,
                low=low,
                low_inclusive=inclusive,
                high=high,
                expected=expected,
            )
            if value is not None:
                fields[key] = value
        if kind in {"transfer_burn", "hohmann", "circularise"}:
            other = "to_altitude" if kind != "circularise" else "altitude"
            if fields.get(other) == fields.get("from_altitude"):
                raise table.error(
                    other, "equals from_altitude: no burn is needed", "two different altitudes"
                )
        return fields
