"""The air on the day: the flight's layer table for a day that is not the standard one.

The flight kernel reads the atmosphere as a layer table (the form of
:func:`propulsion.atmosphere.layer_table`): in each layer of geopotential altitude H the
temperature is linear, T = A + L H, and the pressure is ln P = C + K H - E ln T. That form
holds the exact hydrostatic pressure of ANY piecewise-linear temperature profile: a layer
with gradient L has K = 0, E = g0' M0 / (R* L) and C = ln P_b + E ln T_b; an isothermal
layer has E = 0, K = -g0' M0 / (R* T_b) and C = ln P_b - K H_b (the standard's equations
(33a) and (33b), rearranged). This module builds such a table for the day's air:

* the standard day: the 1976 table itself;
* a temperature offset: the standard's temperature profile shifted by it at every height;
  a site temperature: the same, with the offset that gives the site that temperature;
* the pressure at the site: the one given, else the standard's pressure at the site
  altitude; above and below it the pressure follows by the hydrostatic equation;
* a relative humidity, through the virtual temperature (below);
* a sounding: temperatures measured against altitude (and optionally pressure, dew point
  or relative humidity), joined above its top to the standard's temperature gradients
  continued from the sounding's top temperature (the standard profile shifted by the
  difference at the top, so the temperature is continuous there), up to 86 km.

Above 86 km geometric the table ends as the standard's does: no air, and the speed of sound
held at its value at the top. Below its lowest point the first layer's line continues.

Humid air is carried as its virtual temperature Tv, the temperature dry air would need to
have the moist air's density at the same pressure [1]:

    Tv = T / (1 - (e / P) (1 - eps)),   eps = M_water / M0 = 0.62198

with the vapour pressure e = RH e_w(T) (relative humidity with respect to water, the WMO
convention, also below 0 degC) or e = e_w(T_dew), and the saturation vapour pressure over
water of WMO-No. 8 [2]:

    e_w(t) = 611.2 Pa exp(17.62 t / (243.12 + t)),   t in degC.

The kernel then computes the density P M0 / (R* Tv) (exact for an ideal mixture), the
hydrostatic pressure with Tv (exact), and the speed of sound sqrt(gamma R* Tv / M0) with
the dry air's gamma = 1.4 (moist air's gamma is a little lower: at a vapour mole fraction
of 3 % the speed of sound is about 0.1 % too high). A relative humidity given for the site
holds from the site up to the standard's tropopause (11 km geopotential) and the air is dry
above it; a sounding's own humidity holds up to its top, dry above.

All values are SI: altitudes [m] (geometric) and [m'] (geopotential), temperatures [K],
pressures [Pa], relative humidity as a fraction.

References
----------
.. [1] J. M. Wallace and P. V. Hobbs, Atmospheric Science: An Introductory Survey, 2nd
   ed., Academic Press, 2006, section 3.1.3 (virtual temperature) (recalled from memory).
.. [2] WMO-No. 8, Guide to Meteorological Instruments and Methods of Observation, 2008
   edition, Part I, chapter 4, annex 4.B (saturation vapour pressure over water, valid
   from -45 to 60 degC; used here below -45 degC too, where it is negligible) (recalled
   from memory).
.. [3] U.S. Standard Atmosphere, 1976, NOAA-S/T 76-1562: geopotential altitude (18), the
   layer equations (33a) and (33b) (equation numbers recalled from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
import numpy.typing as npt

from propulsion.atmosphere import layer_table, standard_profile, ussa1976
from propulsion.constants import (
    STANDARD_GRAVITY,
    USSA76_EARTH_RADIUS,
    USSA76_GAS_CONSTANT,
    USSA76_MOLAR_MASS,
)
from propulsion.simplify import keep_points, simplify_table

__all__ = [
    "HUMID_TOLERANCE",
    "OFFSET_LIMIT",
    "PRESSURE_AGREEMENT",
    "SITE_PRESSURE_SPAN",
    "SOUNDING_LIMIT",
    "SOUNDING_TOLERANCE",
    "TROPOPAUSE",
    "AirTable",
    "Sounding",
    "Weather",
    "WeatherError",
    "air_table",
    "saturation_vapour_pressure",
    "virtual_temperature",
]

FloatArray = npt.NDArray[np.float64]

# Molar mass of water [kg/mol], from the standard atomic weights of hydrogen (1.00794) and
# oxygen (15.9994) (IUPAC, recalled from memory); its ratio to the standard's M0.
WATER_MOLAR_MASS = 0.01801528
EPSILON = WATER_MOLAR_MASS / USSA76_MOLAR_MASS

# g0' M0 / R* [K/m'], the hydrostatic constant of the layer equations [3].
_HYDROSTATIC = STANDARD_GRAVITY * USSA76_MOLAR_MASS / USSA76_GAS_CONSTANT

SOUNDING_LIMIT = 100
"""A sounding of more rows than this is thinned to at most this many (each layer top ends
a step of the flight)."""
SOUNDING_TOLERANCE = 0.05
"""A thinned sounding stays within this many kelvin of every row's (virtual) temperature
(doubled until it fits in ``SOUNDING_LIMIT`` rows; the tolerance used is reported)."""
HUMID_STEP = 100.0
"""Spacing [m'] of the grid a site humidity's virtual temperature is computed on."""
HUMID_TOLERANCE = 0.01
"""The humid profile is kept within this many kelvin of that grid."""
TROPOPAUSE = 11_000.0
"""Geopotential altitude [m'] up to which a site humidity holds (the standard's
tropopause); the air is dry above."""
OFFSET_LIMIT = 60.0
"""Largest temperature offset from the standard [K], given or implied by a site
temperature (60 K keeps every temperature of the profile above 125 K)."""
SITE_PRESSURE_SPAN = 0.15
"""A site pressure more than this fraction away from the standard's pressure at the site
altitude is refused: it is most likely the pressure reduced to sea level."""
PRESSURE_AGREEMENT = 0.05
"""A sounding's measured pressure may differ from the hydrostatic pressure its temperatures
give by at most this fraction (more is a wrong unit or a wrong altitude column)."""
MAX_VAPOUR_FRACTION = 0.1
"""Largest vapour pressure as a fraction of the pressure (saturated air at 45 degC at sea
level is about 0.1)."""
ISOTHERMAL_GRADIENT = 1e-7
"""A layer whose temperature gradient is below this [K/m'] is flown as isothermal at its
mean temperature (its pressure exponent g0' M0 / (R* L) would lose digits)."""


class WeatherError(ValueError):
    """Air that cannot be built: which field (or sounding column) and row, and why.

    ``field`` names the ``[launch]`` field or the sounding's column; ``row`` is the
    sounding's row (0-based) or None.
    """

    def __init__(self, field: str, problem: str, expected: str, row: int | None = None) -> None:
        self.field = field
        self.problem = problem
        self.expected = expected
        self.row = row
        super().__init__(field, problem, expected, row)

    def __str__(self) -> str:
        where = f"row {self.row + 1}: " if self.row is not None else ""
        return f"{self.field}: {where}{self.problem}; expected {self.expected}"


@dataclass(frozen=True)
class Sounding:
    """Measured air against altitude, one entry per row (SI).

    ``altitude`` geometric above sea level [m], increasing; ``temperature`` [K];
    ``pressure`` [Pa], ``dew_point`` [K] and ``humidity`` (relative, a fraction) are empty
    when the sounding does not give them (at most one of the last two).
    """

    altitude: tuple[float, ...]
    temperature: tuple[float, ...]
    pressure: tuple[float, ...] = ()
    dew_point: tuple[float, ...] = ()
    humidity: tuple[float, ...] = ()


@dataclass(frozen=True)
class Weather:
    """The day's air as the mission gives it (SI); all None: the standard day.

    ``temperature`` at the site [K] or ``temperature_offset`` from the standard [K] (not
    both); ``pressure`` at the site [Pa]; ``humidity`` relative, a fraction; ``sounding``
    (then no temperature, no offset, and no pressure when the sounding has its own).
    """

    temperature: float | None = None
    temperature_offset: float | None = None
    pressure: float | None = None
    humidity: float | None = None
    sounding: Sounding | None = None

    @property
    def is_standard(self) -> bool:
        """True for the standard day (nothing given)."""
        return (
            self.temperature is None
            and self.temperature_offset is None
            and self.pressure is None
            and self.humidity is None
            and self.sounding is None
        )


@dataclass(frozen=True)
class AirTable:
    """The kernel's layer table: ``tops`` (n,) [m'], ``rows`` (5, n + 1) A, L, C, K, E, and
    notes on what was simplified."""

    tops: FloatArray
    rows: FloatArray
    notes: tuple[str, ...] = ()


# ----------------------------------------------------------------------------------------
# Humidity
# ----------------------------------------------------------------------------------------
def saturation_vapour_pressure(temperature: FloatArray | float) -> FloatArray:
    """Saturation vapour pressure over water [Pa] at a temperature [K] (WMO-No. 8 [2]).

    Notes
    -----
    e_w = 611.2 exp(17.62 t / (243.12 + t)) Pa with t the temperature in degC.
    """
    t = np.asarray(temperature, dtype=float) - 273.15
    return np.asarray(611.2 * np.exp(17.62 * t / (243.12 + t)))


def virtual_temperature(
    temperature: FloatArray | float,
    pressure: FloatArray | float,
    vapour_pressure: FloatArray | float,
) -> FloatArray:
    """Virtual temperature [K] of moist air (Wallace and Hobbs [1]).

    Parameters
    ----------
    temperature : float or numpy.ndarray
        Air temperature [K].
    pressure : float or numpy.ndarray
        Total pressure [Pa].
    vapour_pressure : float or numpy.ndarray
        Partial pressure of the water vapour [Pa].

    Notes
    -----
    Tv = T / (1 - (e / P) (1 - eps)), eps = M_water / M0.
    """
    t = np.asarray(temperature, dtype=float)
    ratio = np.asarray(vapour_pressure, dtype=float) / np.asarray(pressure, dtype=float)
    return np.asarray(t / (1.0 - ratio * (1.0 - EPSILON)))


# ----------------------------------------------------------------------------------------
# Profiles: piecewise-linear temperature in geopotential altitude, jumps allowed
# ----------------------------------------------------------------------------------------
@dataclass(frozen=True)
class _Profile:
    """Layer i spans edges[i]..edges[i + 1] [m'], its temperature going linearly from
    low[i] to high[i] [K]; low[i + 1] may differ from high[i] (a jump, where humid air
    meets dry air)."""

    edges: FloatArray
    low: FloatArray
    high: FloatArray


def _polyline(heights: FloatArray, temperatures: FloatArray) -> _Profile:
    """A continuous profile through points (increasing heights [m'])."""
    return _Profile(np.asarray(heights, float), temperatures[:-1].copy(), temperatures[1:].copy())


def _join(below: _Profile, above: _Profile) -> _Profile:
    """Two profiles one above the other (``above`` starts where ``below`` ends)."""
    return _Profile(
        np.concatenate([below.edges, above.edges[1:]]),
        np.concatenate([below.low, above.low]),
        np.concatenate([below.high, above.high]),
    )


def _temperature_at(profile: _Profile, heights: FloatArray) -> FloatArray:
    """The profile's temperature [K] at geopotential heights [m'] (the first and last
    layers continued beyond the ends; at an edge, the layer below)."""
    h = np.asarray(heights, dtype=float)
    edges = profile.edges
    layer = np.clip(np.searchsorted(edges[1:], h, side="left"), 0, edges.size - 2)
    base, top = edges[layer], edges[layer + 1]
    low, high = profile.low[layer], profile.high[layer]
    return np.asarray(low + (high - low) * (h - base) / (top - base))


def _cut(profile: _Profile, start: float, stop: float) -> _Profile:
    """The part of a continuous profile between two heights [m'] (inside its edges)."""
    inner = profile.edges[(profile.edges > start) & (profile.edges < stop)]
    heights = np.array([start, *inner, stop])
    return _polyline(heights, _temperature_at(profile, heights))


@dataclass(frozen=True)
class _Layers:
    """A profile's layers in the table's terms: base [m'], base temperature [K], gradient
    [K/m'], base pressure [Pa]."""

    base: FloatArray
    top: FloatArray
    t_base: FloatArray
    lapse: FloatArray
    p_base: FloatArray

    def index(self, heights: FloatArray) -> npt.NDArray[np.intp]:
        """The layer of each height (at an edge, the layer below; outside, the end ones)."""
        return np.asarray(
            np.clip(np.searchsorted(self.top, heights, side="left"), 0, self.base.size - 1)
        )

    def temperature(self, heights: FloatArray) -> FloatArray:
        """Temperature [K] at heights [m'] on their layers' lines."""
        i = self.index(heights)
        return np.asarray(self.t_base[i] + self.lapse[i] * (heights - self.base[i]))

    def pressure(self, heights: FloatArray) -> FloatArray:
        """Hydrostatic pressure [Pa] at heights [m'] (the layer equations [3])."""
        h = np.asarray(heights, dtype=float)
        i = self.index(h)
        return _pressure_on(self.base[i], self.t_base[i], self.lapse[i], self.p_base[i], h)


def _pressure_on(
    base: FloatArray, t_base: FloatArray, lapse: FloatArray, p_base: FloatArray, h: FloatArray
) -> FloatArray:
    """Pressure [Pa] at h on a layer's line: P_b (T_b / T)^(g0' M0 / (R* L)), or
    P_b exp(-g0' M0 (H - H_b) / (R* T_b)) where L = 0 [3]."""
    t = t_base + lapse * (h - base)
    flat = lapse == 0.0
    safe = np.where(flat, 1.0, lapse)
    gradient = p_base * (t_base / t) ** (_HYDROSTATIC / safe)
    isothermal = p_base * np.exp(-_HYDROSTATIC * (h - base) / t_base)
    return np.asarray(np.where(flat, isothermal, gradient))


def _layers(profile: _Profile, anchor_height: float, anchor_pressure: float) -> _Layers:
    """The profile's layers with the pressure at each base, the pressure at
    ``anchor_height`` [m'] being ``anchor_pressure`` [Pa] and hydrostatic elsewhere."""
    base, top = profile.edges[:-1], profile.edges[1:]
    low, high = profile.low, profile.high
    lapse = (high - low) / (top - base)
    flat = np.abs(lapse) < ISOTHERMAL_GRADIENT
    t_base = np.where(flat & (high != low), 0.5 * (low + high), low)
    lapse = np.where(flat, 0.0, lapse)
    n = base.size
    # pressure ratio top / base of every layer
    ratio = _pressure_on(base, t_base, lapse, np.ones(n), top)
    k = int(np.clip(np.searchsorted(top, anchor_height, side="left"), 0, n - 1))
    p_base = np.empty(n)
    p_base[k] = float(
        _pressure_on(
            np.array([anchor_height]),
            np.array([t_base[k] + lapse[k] * (anchor_height - base[k])]),
            np.array([lapse[k]]),
            np.array([anchor_pressure]),
            np.array([base[k]]),
        )[0]
    )
    for i in range(k + 1, n):
        p_base[i] = p_base[i - 1] * ratio[i - 1]
    for i in range(k - 1, -1, -1):
        p_base[i] = p_base[i + 1] / ratio[i]
    return _Layers(base, top, t_base, lapse, p_base)


def _table(layers: _Layers) -> tuple[FloatArray, FloatArray]:
    """The kernel's (tops, rows) of the layers, with the row above the top (no air)."""
    n = layers.base.size
    rows = np.empty((5, n + 1))
    for b in range(n):
        h_b, t_b, lapse, p_b = (
            float(layers.base[b]),
            float(layers.t_base[b]),
            float(layers.lapse[b]),
            float(layers.p_base[b]),
        )
        if lapse == 0.0:
            isothermal = -_HYDROSTATIC / t_b
            rows[:, b] = (t_b, 0.0, math.log(p_b) - isothermal * h_b, isothermal, 0.0)
        else:
            exponent = _HYDROSTATIC / lapse
            rows[:, b] = (
                t_b - lapse * h_b,
                lapse,
                math.log(p_b) + exponent * math.log(t_b),
                0.0,
                exponent,
            )
    t_top = float(layers.t_base[-1] + layers.lapse[-1] * (layers.top[-1] - layers.base[-1]))
    rows[:, n] = (t_top, 0.0, 0.0, -math.inf, 0.0)
    return layers.top.copy(), rows


# ----------------------------------------------------------------------------------------
# The standard, shifted
# ----------------------------------------------------------------------------------------
def _geopotential(altitude: FloatArray | float) -> FloatArray:
    """Geopotential altitude [m'] of geometric altitudes [m] (the standard's (18) [3])."""
    z = np.asarray(altitude, dtype=float)
    return np.asarray(USSA76_EARTH_RADIUS * z / (USSA76_EARTH_RADIUS + z))


def _standard(offset: float) -> _Profile:
    """The standard's temperature profile shifted by ``offset`` [K] at every height."""
    edges, temperatures, _ = standard_profile()
    return _polyline(edges, temperatures + offset)


def _standard_temperature(heights: FloatArray) -> FloatArray:
    """The standard's temperature [K] at geopotential heights [m'] (its first layer
    continued below 0)."""
    return _temperature_at(_standard(0.0), heights)


def _top() -> float:
    """The table's top: 86 km geometric, in geopotential metres, as the standard has it."""
    return float(standard_profile()[0][-1])


def _site_pressure(weather: Weather, site_altitude: float) -> float:
    """The pressure at the site [Pa]: given, or the standard's at the site altitude."""
    standard = float(ussa1976(site_altitude).pressure)
    if weather.pressure is None:
        return standard
    if abs(weather.pressure / standard - 1.0) > SITE_PRESSURE_SPAN:
        raise WeatherError(
            "pressure",
            f"{weather.pressure / 100:.6g} hPa is {100 * (weather.pressure / standard - 1):+.0f} "
            f"% from the standard's {standard / 100:.6g} hPa at the site altitude "
            f"({site_altitude:g} m)",
            f"the station pressure at the site (not the pressure reduced to sea level), "
            f"within {100 * SITE_PRESSURE_SPAN:.0f} % of the standard's",
        )
    return weather.pressure


def _offset(weather: Weather, site_altitude: float) -> float:
    """The temperature offset from the standard [K]: given, or the site's."""
    if weather.temperature_offset is not None:
        offset = weather.temperature_offset
        field = "temperature_offset"
    elif weather.temperature is not None:
        site = float(_standard_temperature(_geopotential(site_altitude)))
        offset = weather.temperature - site
        field = "temperature"
    else:
        return 0.0
    if abs(offset) > OFFSET_LIMIT:
        raise WeatherError(
            field,
            f"the air would be {offset:+.1f} K from the standard",
            f"a day within {OFFSET_LIMIT:g} K of the standard's temperature",
        )
    return offset


# ----------------------------------------------------------------------------------------
# Humid air
# ----------------------------------------------------------------------------------------
def _moisten(
    heights: FloatArray,
    temperature: FloatArray,
    vapour: FloatArray,
    above: _Profile | None,
    anchor: tuple[float, float],
    measured: FloatArray | None,
    field: str,
    rows: bool,
) -> FloatArray:
    """Virtual temperatures [K] at the points of a humid polyline.

    ``vapour`` [Pa] at each point; the pressure at each point is ``measured`` or, else,
    the hydrostatic pressure of the humid polyline joined to ``above`` (iterated: the
    virtual temperature depends on the pressure only through e / P, a small term).
    """
    virtual = temperature.copy()
    for _ in range(4):
        if measured is not None:
            pressure = measured
        else:
            profile = _polyline(heights, virtual)
            if above is not None:
                profile = _join(profile, above)
            pressure = _layers(profile, *anchor).pressure(heights)
        fraction = vapour / pressure
        worst = int(np.argmax(fraction))
        if fraction[worst] > MAX_VAPOUR_FRACTION:
            raise WeatherError(
                field,
                f"the vapour pressure would be {100 * fraction[worst]:.0f} % of the air "
                f"pressure ({pressure[worst]:.6g} Pa) at {heights[worst]:.0f} m' geopotential",
                f"humid air whose vapour pressure is at most {100 * MAX_VAPOUR_FRACTION:g} % "
                "of the pressure",
                worst if rows else None,
            )
        virtual = virtual_temperature(temperature, pressure, vapour)
        if measured is not None:
            break
    return virtual


def _site_humidity(
    dry: _Profile, start: float, humidity: float, anchor: tuple[float, float]
) -> _Profile:
    """The dry profile with a constant relative humidity from ``start`` [m'] up to the
    tropopause: virtual temperatures on a grid of ``HUMID_STEP`` (and the dry profile's
    own points), kept within ``HUMID_TOLERANCE``."""
    stop = TROPOPAUSE
    grid = np.arange(start, stop, HUMID_STEP)
    inner = dry.edges[(dry.edges > start) & (dry.edges < stop)]
    heights = np.unique(np.concatenate([grid, inner, [start, stop]]))
    temperature = _temperature_at(dry, heights)
    above = _cut(dry, stop, float(dry.edges[-1]))
    vapour = humidity * saturation_vapour_pressure(temperature)
    virtual = _moisten(heights, temperature, vapour, above, anchor, None, "humidity", False)
    keep = keep_points(heights, virtual, HUMID_TOLERANCE)
    assert keep is not None
    return _join(_polyline(heights[keep], virtual[keep]), above)


# ----------------------------------------------------------------------------------------
# The table
# ----------------------------------------------------------------------------------------
def air_table(weather: Weather, site_altitude: float) -> AirTable:
    """The kernel's layer table of the day's air.

    Parameters
    ----------
    weather : Weather
        What the mission gives of the day's air (checked ranges).
    site_altitude : float
        Launch site altitude above sea level [m] (geometric).

    Returns
    -------
    AirTable
        ``tops``, ``rows`` as :func:`propulsion.atmosphere.layer_table` gives them (exactly
        that table on the standard day), and notes on a thinned sounding. The arrays are
        the caller's own.

    Raises
    ------
    WeatherError
        Air that cannot be: an offset beyond ``OFFSET_LIMIT``, a site pressure far from
        the standard's, vapour beyond ``MAX_VAPOUR_FRACTION`` of the pressure, a sounding
        that does not reach the site or whose pressures disagree with its temperatures.
    """
    if weather.is_standard:
        tops, rows = layer_table()
        return AirTable(tops, rows)
    table = _air_table(weather, float(site_altitude))
    return AirTable(table.tops.copy(), table.rows.copy(), table.notes)


@lru_cache(maxsize=32)
def _air_table(weather: Weather, site_altitude: float) -> AirTable:
    site = float(_geopotential(site_altitude))
    if weather.sounding is not None:
        return _sounding_table(weather, weather.sounding, site_altitude)
    offset = _offset(weather, site_altitude)
    anchor = (site, _site_pressure(weather, site_altitude))
    profile = _standard(offset)
    if weather.humidity:
        profile = _site_humidity(profile, site, weather.humidity, anchor)
    tops, rows = _table(_layers(profile, *anchor))
    return AirTable(tops, rows)


def _sounding_table(weather: Weather, sounding: Sounding, site_altitude: float) -> AirTable:
    """A sounding's table: its rows (thinned if long), the standard above its top."""
    altitude = np.asarray(sounding.altitude, dtype=float)
    heights = _geopotential(altitude)
    temperature = np.asarray(sounding.temperature, dtype=float)
    top = _top()
    if heights[-1] >= top - 1e-6:
        heights[-1] = top
    if altitude[0] > site_altitude or altitude[-1] <= site_altitude:
        raise WeatherError(
            "altitude",
            f"the sounding spans {altitude[0]:g} m to {altitude[-1]:g} m, and the site is at "
            f"{site_altitude:g} m",
            "a first row at or below the site altitude and a last row above it",
        )
    measured = np.asarray(sounding.pressure, dtype=float) if sounding.pressure else None
    if measured is not None:
        anchor = (float(heights[0]), float(measured[0]))
    else:
        anchor = (float(_geopotential(site_altitude)), _site_pressure(weather, site_altitude))
    # the standard's gradients continued from the top temperature
    shift = float(temperature[-1] - _standard_temperature(heights[-1:])[0])
    standard = _standard(shift)
    above = _cut(standard, float(heights[-1]), top) if heights[-1] < top else None
    notes: list[str] = []
    column = "dew_point" if sounding.dew_point else "humidity"
    if sounding.dew_point or sounding.humidity:
        if sounding.dew_point:
            vapour = saturation_vapour_pressure(np.asarray(sounding.dew_point, dtype=float))
        else:
            vapour = np.asarray(sounding.humidity, dtype=float) * saturation_vapour_pressure(
                temperature
            )
        virtual = _moisten(heights, temperature, vapour, above, anchor, measured, column, True)
    else:
        virtual = temperature
    thinned = simplify_table(heights, virtual, SOUNDING_TOLERANCE, SOUNDING_LIMIT, SOUNDING_LIMIT)
    if thinned.simplified:
        notes.append(
            f"the sounding ({thinned.original_points:,} rows) is flown as "
            f"{thinned.x.size:,} points, within {thinned.tolerance:.3g} K of every "
            "temperature"
        )
    profile = _polyline(thinned.x, thinned.y)
    if above is not None:
        profile = _join(profile, above)
    if weather.humidity and not (sounding.dew_point or sounding.humidity):
        start = float(profile.edges[0])
        if start < TROPOPAUSE:
            profile = _site_humidity(profile, start, weather.humidity, anchor)
    layers = _layers(profile, *anchor)
    if measured is not None:
        hydrostatic = layers.pressure(heights)
        off = np.abs(hydrostatic / measured - 1.0)
        worst = int(np.argmax(off))
        if off[worst] > PRESSURE_AGREEMENT:
            raise WeatherError(
                "pressure",
                f"{measured[worst]:.6g} Pa is {100 * off[worst]:.0f} % away from the "
                f"{hydrostatic[worst]:.6g} Pa the temperatures give by the hydrostatic "
                "equation from the first row",
                f"pressures within {100 * PRESSURE_AGREEMENT:g} % of the hydrostatic ones "
                "(check the altitude and pressure units)",
                worst,
            )
    tops, rows = _table(layers)
    return AirTable(tops, rows, tuple(notes))
