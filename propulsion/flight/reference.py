"""A second, independent integration of one flight, for agreement tests of the kernel.

The compiled kernel (:mod:`propulsion.flight.kernel`) carries its own integrator, event
location and table handling. This module integrates the same model for ONE sample of a
:class:`~propulsion.flight.state.FlightCore` a different way: a plain Python right-hand
side with scalar floats and :mod:`math`, handed to :func:`scipy.integrate.solve_ivp`
(Dormand–Prince 8(5,3) by default [1]) at tight tolerances. It shares no code with the
kernel: only the array layout (:mod:`propulsion.flight.layout`), the constants and, of
the core's layer table of the air, the layer tops, temperatures and one pressure.

The flight is integrated piecewise. Each ``solve_ivp`` call covers a *stretch* in which
nothing discrete changes: it ends at the next scheduled time (ignition, burnout,
separation, a thrust-curve point, the start or end of a timed pitch kick, the time limit)
or at the first terminal event (lift-off, rail exit, a pitch kick by speed, the air speed
crossing the attitude-hold threshold, the top of the atmosphere, apogee after the last
burnout, ground impact, orbital cutoff, or a point of a piecewise-linear table: a drag-
curve Mach number, an atmosphere layer top, a wind-profile height). Within a stretch each
table is read on the piece it started on, so the right-hand side is smooth there.

The model (SI throughout):

* a point mass in an Earth-centred inertial frame, over a sphere of the WGS 84 equatorial
  radius with inverse-square gravity, or the WGS 84 ellipsoid with J2 gravity [2], turning
  at the flight's rotation rate; or a flat Earth (east, north, up) with uniform standard
  gravity;
* the core's air up to 86 km (the U.S. Standard Atmosphere 1976 [3] on the standard
  day, else the day's air of :mod:`propulsion.weather`), turning with the Earth, plus a wind
  profile (piecewise linear in height above the site, east and north components);
* drag ``0.5 rho |v_air| Cd(Mach) A`` against the air-relative velocity;
* thrust from a piecewise-linear motor curve (scaled in impulse and time) or a constant
  engine thrust less back-pressure times exit area;
* a rail fixed to the turning Earth (the pad holds the vehicle while the thrust along the
  rail does not beat its weight), a pitch kick programme, linear-tangent steering of upper
  stages, otherwise thrust along the air-relative velocity, held in direction below a
  threshold air speed;
* the delta-v ledger (ideal, gravity, drag, steering, back-pressure, pad, Earth-rotation
  credit): rates of the ledger speed's change, the speed relative to the turning Earth in
  the atmosphere, the inertial speed above it [4].

References
----------
.. [1] E. Hairer, S. P. Nørsett and G. Wanner, Solving Ordinary Differential Equations I,
   2nd ed., Springer, 1993, section II.10 (DOP853).
.. [2] NIMA TR8350.2, Department of Defense World Geodetic System 1984, 3rd ed., 2000.
.. [3] U.S. Standard Atmosphere, 1976, NOAA-S/T 76-1562.
.. [4] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2013, section
   11.2 (gravity, drag and steering losses during ascent).
"""

from __future__ import annotations

import bisect
import math
from collections.abc import Callable
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np
import numpy.typing as npt
from scipy.integrate import solve_ivp
from scipy.optimize import minimize_scalar

from propulsion.atmosphere import TOP_ALTITUDE
from propulsion.constants import (
    EARTH_EQUATORIAL_RADIUS,
    EARTH_FLATTENING,
    EARTH_J2,
    EARTH_MU,
    STANDARD_GRAVITY,
    USSA76_EARTH_RADIUS,
    USSA76_GAMMA,
    USSA76_GAS_CONSTANT,
    USSA76_MOLAR_MASS,
)
from propulsion.flight import layout
from propulsion.flight.state import FlightCore

__all__ = ["ReferenceFlight", "reference_flight"]

FloatArray = npt.NDArray[np.float64]
Vector = tuple[float, float, float]

WAITING, BURNING, BURNT = "waiting", "burning", "burnt"

# Air speed [m/s] under which the air-relative velocity has no usable direction.
_STILL_AIR = 1e-9
# Height above the site [m] a flight must pass once before ground impact is watched.
_RISE_HEIGHT = 1.0


# ----------------------------------------------------------------------------------------
# Small vector algebra on tuples
# ----------------------------------------------------------------------------------------
def _dot(a: Vector, b: Vector) -> float:
    return a[0] * b[0] + a[1] * b[1] + a[2] * b[2]


def _cross(a: Vector, b: Vector) -> Vector:
    return (a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0])


def _norm(a: Vector) -> float:
    return math.sqrt(a[0] * a[0] + a[1] * a[1] + a[2] * a[2])


def _unit(a: Vector) -> Vector:
    size = _norm(a)
    return (a[0] / size, a[1] / size, a[2] / size)


def _combine(p: float, a: Vector, q: float, b: Vector) -> Vector:
    """p a + q b."""
    return (p * a[0] + q * b[0], p * a[1] + q * b[1], p * a[2] + q * b[2])


def _turn(a: Vector, angle: float) -> Vector:
    """A vector turned by ``angle`` [rad] about the polar (z) axis."""
    c, s = math.cos(angle), math.sin(angle)
    return (c * a[0] - s * a[1], s * a[0] + c * a[1], a[2])


# ----------------------------------------------------------------------------------------
# Tables
# ----------------------------------------------------------------------------------------
def _points_at_or_below(x: float, points: list[float]) -> int:
    """How many of the (increasing) points are at or below x."""
    return bisect.bisect_right(points, x)


def _on_piece(x: float, xs: list[float], ys: list[float], count: int) -> float:
    """A piecewise-linear table read on the piece above its ``count``-th point.

    The piece is continued linearly past its ends; before the first point and after the
    last the table is constant.
    """
    if count <= 0:
        return ys[0]
    if count >= len(xs):
        return ys[-1]
    a, b = count - 1, count
    return ys[a] + (ys[b] - ys[a]) * (x - xs[a]) / (xs[b] - xs[a])


class _Atmosphere:
    """The flight's air by layers of constant temperature gradient.

    From the core's layer table (the day's air of :mod:`propulsion.weather`; the U.S.
    Standard Atmosphere 1976 [3] on the standard day) only the layer tops [m'], each
    layer's temperature line T = A + L H [K] and one pressure are taken: the first layer's
    pressure at its top [Pa]. The first layer is reckoned from its top; every base
    pressure above is built here from that one with the standard's layer equations:
    ``P = P_b (T_b / T)^(g0 M0 / (R* L_b))`` (gradient layer) or
    ``P = P_b exp(-g0 M0 (H - H_b) / (R* T_b))`` (isothermal layer). A layer's base
    temperature is its own line's (the day's air may jump in temperature between
    layers; the pressure does not).
    """

    def __init__(self, tops: FloatArray, rows: FloatArray) -> None:
        self.tops = [float(top) for top in tops]
        self.hydrostatic = STANDARD_GRAVITY * USSA76_MOLAR_MASS / USSA76_GAS_CONSTANT  # [K/m']
        self.layers: list[tuple[float, float, float, float]] = []  # H_b, T_b, P_b, L_b
        base = self.tops[0]
        a, lapse, log_constant, isothermal, exponent = (float(v) for v in rows[:, 0])
        temperature = a + lapse * base
        pressure = math.exp(log_constant + isothermal * base - exponent * math.log(temperature))
        for index, top in enumerate(self.tops):
            a, lapse = float(rows[0, index]), float(rows[1, index])
            self.layers.append((base, a + lapse * base, pressure, lapse))
            temperature, pressure = self._layer(index, top)
            base = top
        self.top_temperature = temperature

    def _layer(self, index: int, geopotential: float) -> tuple[float, float]:
        base, t_base, p_base, lapse = self.layers[index]
        temperature = t_base + lapse * (geopotential - base)
        if lapse == 0.0:
            pressure = p_base * math.exp(-self.hydrostatic * (geopotential - base) / t_base)
        else:
            pressure = p_base * (t_base / temperature) ** (self.hydrostatic / lapse)
        return temperature, pressure

    def layer_of(self, geopotential: float) -> int:
        """Index of the layer a geopotential altitude [m'] lies in (len(tops): above)."""
        return _points_at_or_below(geopotential, self.tops)

    def air(self, geopotential: float, layer: int) -> tuple[float, float, float]:
        """Density [kg/m^3], pressure [Pa] and speed of sound [m/s] on a given layer."""
        if layer >= len(self.tops):
            return 0.0, 0.0, math.sqrt(self._sound_factor * self.top_temperature)
        temperature, pressure = self._layer(layer, geopotential)
        density = pressure * USSA76_MOLAR_MASS / (USSA76_GAS_CONSTANT * temperature)
        return density, pressure, math.sqrt(self._sound_factor * temperature)

    _sound_factor = USSA76_GAMMA * USSA76_GAS_CONSTANT / USSA76_MOLAR_MASS


# ----------------------------------------------------------------------------------------
# The flight's discrete state and one evaluation of the model
# ----------------------------------------------------------------------------------------
@dataclass
class _Mode:
    """Everything that stays fixed within a stretch."""

    stage: int = 0
    phase: str = WAITING
    ignition_time: float = math.nan
    ignition_mass: float = math.nan
    burn_time: float = math.nan
    next_time: float = 0.0
    on_rail: bool = False
    lifted: bool = False
    risen: bool = False
    kick_start: float = math.inf
    kick_end: float = math.inf
    guide_angle: float = 0.0
    hold: bool = False
    hold_direction: Vector = (0.0, 0.0, 1.0)
    inertial: bool = False
    watch_apogee: bool = False
    curve_piece: int = 0  # thrust-curve points at or before the stretch's start
    mach_piece: int = 0  # drag-curve points at or below the Mach number
    layer: int = 0  # atmosphere layer
    wind_piece: int = 0  # wind-profile heights at or below the height


@dataclass
class _Point:
    """The model at one time and state: rates of the state and the quantities events use."""

    rates: list[float]
    altitude: float  # above sea level [m]
    height: float  # above the site [m]
    geopotential: float  # [m']
    air_speed: float
    mach: float
    density: float
    dynamic_pressure: float
    ground_speed: float
    inertial_speed: float
    vertical_speed: float
    rail_distance: float
    rail_acceleration: float
    energy: float
    direction: Vector
    up: Vector
    east: Vector
    north: Vector


@dataclass(frozen=True)
class ReferenceFlight:
    """Results of one reference integration (SI).

    ``status`` is one of :data:`propulsion.flight.layout.STATUS_NAMES`. Altitudes are above
    the launch site [m], speeds relative to the turning Earth (without wind) unless named
    inertial [m/s], times [s]. NaN where something did not happen. ``final_state`` is the
    state vector at the end (the layout of :mod:`propulsion.flight.layout`), ``ledger`` the
    seven ledger totals from start to end [m/s], ``event_times`` the time of every event
    that happened (names as in :data:`propulsion.flight.layout.EVENT_NAMES`, plus
    ``ignition:K``, ``burnout:K``, ``separation:K``), ``evaluations`` the right-hand-side
    calls and ``stretches`` the ``solve_ivp`` calls.
    """

    status: str
    apogee_altitude: float
    apogee_time: float
    burnout_speed: tuple[float, ...]
    burnout_altitude: tuple[float, ...]
    burnout_time: tuple[float, ...]
    liftoff_time: float
    rail_exit_time: float
    rail_exit_speed: float
    max_dynamic_pressure: float
    max_dynamic_pressure_time: float
    max_mach: float
    max_mach_time: float
    ground_downrange: float
    final_time: float
    final_state: FloatArray
    ledger: dict[str, float]
    event_times: dict[str, float]
    evaluations: int
    stretches: int


class _Flight:
    """One sample of a core: its parameters as plain floats and the model's equations."""

    def __init__(self, core: FlightCore, sample: int) -> None:
        i = sample

        def one(name: str) -> float:
            return float(getattr(core, name)[i])

        def per_stage(name: str) -> list[float]:
            return [float(value) for value in getattr(core, name)[:, i]]

        self.earth = core.earth
        self.stages = core.stages
        self.is_motor = core.is_motor
        self.steered = core.steered
        self.guidance = core.guidance
        self.stop_at_ground = core.stop_at_ground
        self.airborne = core.airborne
        self.curve_time = [[float(x) for x in c] for c in core.curve_time]
        self.curve_thrust = [[float(x) for x in c] for c in core.curve_thrust]
        self.curve_impulse = [float(x) for x in core.curve_impulse]
        self.drag_mach = [[float(x) for x in c] for c in core.drag_mach]
        self.drag_cd = [[float(x) for x in c] for c in core.drag_cd]
        self.wind_height = [float(x) for x in core.wind_height]
        self.wind_east = [float(x) for x in core.wind_east]
        self.wind_north = [float(x) for x in core.wind_north]
        for name in (
            "mass_initial", "site_altitude", "rail_length", "elevation", "azimuth", "latitude",
            "omega", "cd_scale", "wind_scale", "wind_turn", "wind_offset", "kick_angle",
            "kick_time", "kick_speed", "kick_duration", "cutoff_energy", "hold_speed",
            "max_time", "start_time", "guide_a", "guide_b",
        ):  # fmt: skip
            setattr(self, name, one(name))
        self.start_state = [float(x) for x in core.start_state[:, i]]
        for name in (
            "inert", "propellant", "usable", "area", "separation_delay", "ignition_delay",
            "impulse_scale", "time_scale", "thrust_vacuum", "exit_area", "mass_flow",
            "test_pressure",
        ):  # fmt: skip
            setattr(self, name, per_stage(name))
        self.atmosphere = _Atmosphere(core.layer_tops, core.layer_rows)
        self._site()

    # these are set by setattr above; declared for the type checker
    mass_initial: float
    site_altitude: float
    rail_length: float
    elevation: float
    azimuth: float
    latitude: float
    omega: float
    cd_scale: float
    wind_scale: float
    wind_turn: float
    wind_offset: float
    kick_angle: float
    guide_a: float
    guide_b: float
    kick_time: float
    kick_speed: float
    kick_duration: float
    cutoff_energy: float
    hold_speed: float
    max_time: float
    start_time: float
    inert: list[float]
    propellant: list[float]
    usable: list[float]
    area: list[float]
    separation_delay: list[float]
    ignition_delay: list[float]
    impulse_scale: list[float]
    time_scale: list[float]
    thrust_vacuum: list[float]
    exit_area: list[float]
    mass_flow: list[float]
    test_pressure: list[float]

    # --- geometry ------------------------------------------------------------------------
    def _site(self) -> None:
        """The launch site and its directions, in the Earth-fixed frame at time 0.

        Round Earth: longitude 0, geocentric latitude = the given latitude, on the sphere.
        Ellipsoid: geodetic latitude on WGS 84 [2]. Flat Earth: x east, y north, z up.
        """
        lat, h = self.latitude, self.site_altitude
        if self.earth == "flat":
            self.site: Vector = (0.0, 0.0, 0.0)
            up: Vector = (0.0, 0.0, 1.0)
            east: Vector = (1.0, 0.0, 0.0)
            north: Vector = (0.0, 1.0, 0.0)
        else:
            s, c = math.sin(lat), math.cos(lat)
            if self.earth == "ellipsoid":
                e2 = EARTH_FLATTENING * (2.0 - EARTH_FLATTENING)
                normal = EARTH_EQUATORIAL_RADIUS / math.sqrt(1.0 - e2 * s * s)
                self.site = ((normal + h) * c, 0.0, (normal * (1.0 - e2) + h) * s)
            else:
                radius = EARTH_EQUATORIAL_RADIUS + h
                self.site = (radius * c, 0.0, radius * s)
            up, east, north = (c, 0.0, s), (0.0, 1.0, 0.0), (-s, 0.0, c)
        along = _combine(math.sin(self.azimuth), east, math.cos(self.azimuth), north)
        self.rail_fixed = _combine(math.cos(self.elevation), along, math.sin(self.elevation), up)
        # normal of the vertical plane through the launch azimuth
        self.plane_fixed = _cross(up, along)

    def _local(self, r: Vector) -> tuple[Vector, Vector, Vector, float]:
        """Local up, east, north (inertial frame) and the altitude above sea level [m]."""
        if self.earth == "flat":
            return (0.0, 0.0, 1.0), (1.0, 0.0, 0.0), (0.0, 1.0, 0.0), r[2] + self.site_altitude
        x, y, z = r
        rho = math.hypot(x, y)
        co, so = (x / rho, y / rho) if rho > 0.0 else (1.0, 0.0)
        if self.earth == "ellipsoid":
            lat, altitude = _geodetic(rho, z)
            sl, cl = math.sin(lat), math.cos(lat)
        else:
            radius = math.sqrt(rho * rho + z * z)
            sl, cl = z / radius, rho / radius
            altitude = radius - EARTH_EQUATORIAL_RADIUS
        up = (cl * co, cl * so, sl)
        east = (-so, co, 0.0)
        north = (-sl * co, -sl * so, cl)
        return up, east, north, altitude

    def _gravity(self, r: Vector) -> Vector:
        """Gravitational acceleration [m/s^2]: uniform g0, inverse square, or with J2 [2]."""
        if self.earth == "flat":
            return (0.0, 0.0, -STANDARD_GRAVITY)
        x, y, z = r
        radius = _norm(r)
        central = -EARTH_MU / radius**3
        gx, gy, gz = central * x, central * y, central * z
        if self.earth == "ellipsoid":
            # the J2 term of the potential's gradient (Vallado's form)
            factor = -1.5 * EARTH_J2 * EARTH_MU * EARTH_EQUATORIAL_RADIUS**2 / radius**5
            ratio = 5.0 * z * z / (radius * radius)
            gx += factor * x * (1.0 - ratio)
            gy += factor * y * (1.0 - ratio)
            gz += factor * z * (3.0 - ratio)
        return gx, gy, gz

    def _ground_relative(self, r: Vector, v: Vector) -> Vector:
        """Velocity relative to the turning Earth: v - omega x r."""
        w = self.omega
        return (v[0] + w * r[1], v[1] - w * r[0], v[2])

    def _wind(self, height: float, east: Vector, north: Vector, piece: int) -> Vector:
        """Wind velocity [m/s] (inertial components, relative to the ground)."""
        wind_east = wind_north = 0.0
        if self.wind_height:
            e = _on_piece(height, self.wind_height, self.wind_east, piece)
            n = _on_piece(height, self.wind_height, self.wind_north, piece)
            # the profile turned clockwise (seen from above) by wind_turn
            c, s = math.cos(self.wind_turn), math.sin(self.wind_turn)
            wind_east = self.wind_scale * (c * e + s * n)
            wind_north = self.wind_scale * (c * n - s * e)
        if self.wind_offset != 0.0:
            wind_east += self.wind_offset * math.sin(self.azimuth)
            wind_north += self.wind_offset * math.cos(self.azimuth)
        return _combine(wind_east, east, wind_north, north)

    def _propulsion(self, t: float, mode: _Mode, pressure: float) -> tuple[float, float, float]:
        """Thrust [N], vacuum thrust [N] and mass flow [kg/s] of the burning stage."""
        if mode.phase != BURNING:
            return 0.0, 0.0, 0.0
        k = mode.stage
        if self.is_motor[k]:
            times, thrusts = self.curve_time[k], self.curve_thrust[k]
            a = mode.curve_piece - 1
            if a < 0 or a >= len(times) - 1:
                return 0.0, 0.0, 0.0
            scale = self.time_scale[k]
            since = (t - mode.ignition_time) / scale
            curve = thrusts[a] + (thrusts[a + 1] - thrusts[a]) * (since - times[a]) / (
                times[a + 1] - times[a]
            )
            force = self.impulse_scale[k] * curve / scale
            # the propellant burns in proportion to the curve's impulse
            flow = self.usable[k] * (curve / scale) / self.curve_impulse[k]
            if self.exit_area[k] > 0.0 and curve > 0.0:
                # measured at the test pressure: F = F_test + (p_test - p_a) A_e
                vacuum = force + self.test_pressure[k] * self.exit_area[k]
                return max(vacuum - pressure * self.exit_area[k], 0.0), vacuum, flow
            return force, force, flow
        vacuum = self.thrust_vacuum[k]
        return max(vacuum - pressure * self.exit_area[k], 0.0), vacuum, self.mass_flow[k]

    def _horizontal_in_plane(self, t: float, up: Vector) -> Vector:
        """Unit local-horizontal vector in the launch plane, towards the launch azimuth."""
        plane = _turn(self.plane_fixed, self.omega * t)
        return _unit(_cross(plane, up))

    def _kick_active(self, t: float, mode: _Mode) -> bool:
        return self.kick_angle > 0.0 and t < mode.kick_end

    def _steering(self, mode: _Mode) -> bool:
        """True while the linear-tangent law steers the burning stage."""
        return (
            self.guidance in ("linear_tangent", "orbit")
            and self.steered[mode.stage]
            and mode.phase == BURNING
        )

    def _direction(
        self, t: float, y: list[float], up: Vector, air: Vector, air_speed: float, mode: _Mode
    ) -> tuple[Vector, bool]:
        """Unit thrust direction (inertial frame); True while the rail or pad constrain."""
        if mode.on_rail or not mode.lifted:
            return _turn(self.rail_fixed, self.omega * t), True
        if self._kick_active(t, mode):
            done = 0.0
            if t > mode.kick_start:
                done = min((t - mode.kick_start) / self.kick_duration, 1.0)
            pitch = self.elevation - self.kick_angle * done
            horizontal = self._horizontal_in_plane(t, up)
            return _combine(math.cos(pitch), horizontal, math.sin(pitch), up), False
        if self._steering(mode):
            # tan(pitch) falls linearly from its value at ignition to zero at burnout, in
            # the vertical plane of the inertial velocity (no steering out of it)
            fraction = min(max((t - mode.ignition_time) / mode.burn_time, 0.0), 1.0)
            if self.guidance == "orbit" and math.isfinite(self.guide_a):
                # the law with the parameters solved for the target orbit (given, not
                # solved here: this reference checks the flight, not the solve)
                pitch = math.atan(self.guide_a + self.guide_b * fraction)
            else:
                pitch = math.atan((1.0 - fraction) * math.tan(mode.guide_angle))
            v = (y[3], y[4], y[5])
            level = _combine(1.0, v, -_dot(v, up), up)
            if _norm(level) > 0.0:
                return _combine(math.cos(pitch), _unit(level), math.sin(pitch), up), False
        if mode.hold or air_speed <= _STILL_AIR:
            return mode.hold_direction, False
        return (air[0] / air_speed, air[1] / air_speed, air[2] / air_speed), False

    # --- the equations of motion ------------------------------------------------------------
    def point(self, t: float, y: list[float], mode: _Mode) -> _Point:
        """The model at time t [s], state y, in a mode: rates and derived quantities."""
        r: Vector = (y[0], y[1], y[2])
        v: Vector = (y[3], y[4], y[5])
        mass = y[layout.Y_M]
        omega = self.omega
        up, east, north, altitude = self._local(r)
        height = altitude - self.site_altitude
        ground = self._ground_relative(r, v)
        wind = self._wind(height, east, north, mode.wind_piece)
        air = (ground[0] - wind[0], ground[1] - wind[1], ground[2] - wind[2])
        air_speed = _norm(air)
        geopotential = USSA76_EARTH_RADIUS * altitude / (USSA76_EARTH_RADIUS + altitude)
        density, pressure, sound = self.atmosphere.air(geopotential, mode.layer)
        mach = air_speed / sound if density > 0.0 else math.nan
        k = mode.stage
        cd = _on_piece(
            mach if density > 0.0 else 0.0, self.drag_mach[k], self.drag_cd[k], mode.mach_piece
        )
        # drag force = -drag_factor * air [N]
        drag_factor = 0.5 * density * air_speed * cd * self.cd_scale * self.area[k]
        thrust, vacuum, flow = self._propulsion(t, mode, pressure)
        u, constrained = self._direction(t, y, up, air, air_speed, mode)
        gravity = self._gravity(r)
        # acceleration without any support: thrust, drag and gravity
        free = (
            (thrust * u[0] - drag_factor * air[0]) / mass + gravity[0],
            (thrust * u[1] - drag_factor * air[1]) / mass + gravity[1],
            (thrust * u[2] - drag_factor * air[2]) / mass + gravity[2],
        )
        # acceleration of a point carried round by the Earth: omega x (omega x r)
        carried = (-omega * omega * r[0], -omega * omega * r[1], 0.0)
        rail_distance = rail_acceleration = math.nan
        held = False
        if constrained:
            # motion along a rail that turns with the Earth: r = R(omega t) (site + s e),
            # r'' = s'' u + 2 omega x (s' u) + omega x (omega x r), and s'' is the push
            # along the rail of everything but the rail itself (the Coriolis term is across)
            fixed = _turn(r, -omega * t)
            rail_distance = _dot(
                (fixed[0] - self.site[0], fixed[1] - self.site[1], fixed[2] - self.site[2]),
                self.rail_fixed,
            )
            along = _dot(u, (free[0] - carried[0], free[1] - carried[1], free[2]))
            rail_acceleration = along
            if not mode.lifted and along <= 0.0:
                along, held = 0.0, True  # the pad carries the weight
            speed_along = _dot(u, ground)
            coriolis = (-2.0 * omega * speed_along * u[1], 2.0 * omega * speed_along * u[0], 0.0)
            acceleration = (
                along * u[0] + coriolis[0] + carried[0],
                along * u[1] + coriolis[1] + carried[1],
                along * u[2],
            )
        else:
            acceleration = free
        ground_speed = _norm(ground)
        inertial_speed = _norm(v)
        # the ledger speed and its direction
        ledger_velocity, ledger_speed = (
            (v, inertial_speed) if mode.inertial else (ground, ground_speed)
        )
        if ledger_speed > _STILL_AIR:
            e = (
                ledger_velocity[0] / ledger_speed,
                ledger_velocity[1] / ledger_speed,
                ledger_velocity[2] / ledger_speed,
            )
        else:
            e = u
        ideal = vacuum / mass
        back = (vacuum - thrust) / mass
        steering = thrust / mass * (1.0 - _dot(u, e))
        drag = drag_factor * _dot(air, e) / mass
        # d|w|/dt = e . (r'' - omega x (omega x r)) in the turning frame's speed
        rotation = 0.0 if mode.inertial else -_dot(carried, e)
        if held:
            # nothing moves: the thrust's whole ideal gain is lost to the pad
            gravity_loss = 0.0
            pad = ideal - back - steering - drag + rotation
        else:
            gravity_loss = -_dot(gravity, e)
            support = (
                acceleration[0] - free[0],
                acceleration[1] - free[1],
                acceleration[2] - free[2],
            )
            pad = -_dot(support, e)
        rates = [
            v[0], v[1], v[2], acceleration[0], acceleration[1], acceleration[2], -flow,
            ideal, gravity_loss, drag, steering, back, pad, rotation,
        ]  # fmt: skip
        energy = (
            math.nan
            if self.earth == "flat"
            else 0.5 * inertial_speed * inertial_speed - EARTH_MU / _norm(r)
        )
        return _Point(
            rates=rates,
            altitude=altitude,
            height=height,
            geopotential=geopotential,
            air_speed=air_speed,
            mach=mach,
            density=density,
            dynamic_pressure=0.5 * density * air_speed * air_speed,
            ground_speed=ground_speed,
            inertial_speed=inertial_speed,
            vertical_speed=_dot(ground, up),
            rail_distance=rail_distance,
            rail_acceleration=rail_acceleration,
            energy=energy,
            direction=u,
            up=up,
            east=east,
            north=north,
        )

    def burn_time(self, k: int) -> float:
        """Burn time of stage k [s]."""
        if self.is_motor[k]:
            return self.time_scale[k] * self.curve_time[k][-1]
        return self.usable[k] / self.mass_flow[k] if self.mass_flow[k] > 0.0 else 0.0

    def downrange(self, t: float, y: list[float]) -> float:
        """Distance over the ground from the site along the launch azimuth [m].

        Round Earth: the great-circle arc (on the WGS 84 equatorial radius) from the site
        to the point below the vehicle, times the cosine of its bearing from the azimuth.
        """
        if self.earth == "flat":
            return y[0] * math.sin(self.azimuth) + y[1] * math.cos(self.azimuth)
        below = _unit(_turn((y[0], y[1], y[2]), -self.omega * t))
        site = _unit(self.site)
        lat = math.atan2(site[2], math.hypot(site[0], site[1]))
        east = (0.0, 1.0, 0.0)
        north = (-math.sin(lat), 0.0, math.cos(lat))
        arc = math.atan2(_norm(_cross(site, below)), _dot(site, below))
        bearing = math.atan2(_dot(below, east), _dot(below, north))
        return EARTH_EQUATORIAL_RADIUS * arc * math.cos(bearing - self.azimuth)


def _geodetic(rho: float, z: float) -> tuple[float, float]:
    """Geodetic latitude [rad] and height [m] on WGS 84 [2], by fixed-point iteration."""
    a = EARTH_EQUATORIAL_RADIUS
    e2 = EARTH_FLATTENING * (2.0 - EARTH_FLATTENING)
    lat = math.atan2(z, rho * (1.0 - e2))
    height = 0.0
    for _ in range(30):
        s = math.sin(lat)
        normal = a / math.sqrt(1.0 - e2 * s * s)
        c = math.cos(lat)
        height = rho / c - normal if abs(c) > 0.1 else z / s - normal * (1.0 - e2)
        new = math.atan2(z, rho * (1.0 - e2 * normal / (normal + height)))
        if abs(new - lat) < 1e-15:
            lat = new
            break
        lat = new
    s, c = math.sin(lat), math.cos(lat)
    normal = a / math.sqrt(1.0 - e2 * s * s)
    height = rho / c - normal if abs(c) > 0.1 else z / s - normal * (1.0 - e2)
    return lat, height


# ----------------------------------------------------------------------------------------
# The piecewise integration
# ----------------------------------------------------------------------------------------
class _Stretch:
    """The model in one fixed mode, as solve_ivp calls it (the last point is kept)."""

    def __init__(self, flight: _Flight, mode: _Mode) -> None:
        self.flight = flight
        self.mode = mode
        self._key: tuple[float, list[float]] | None = None
        self._point: _Point | None = None

    def point(self, t: float, y: FloatArray) -> _Point:
        state = y.tolist()
        if self._point is not None and self._key == (t, state):
            return self._point
        self._point = self.flight.point(t, state, self.mode)
        self._key = (t, state)
        return self._point

    def rates(self, t: float, y: FloatArray) -> list[float]:
        return self.point(t, y).rates


class _Event:
    """A terminal event for solve_ivp: a quantity of the model crossing a level.

    ``direction`` +1 watches a rise through the level, -1 a fall, 0 both. A value sitting
    exactly on the level counts as not yet across it, so a quantity that stays on a table
    point (a Mach number of 0 on the pad) never fires.
    """

    def __init__(
        self,
        name: str,
        stretch: _Stretch,
        quantity: Callable[[_Point], float],
        level: float,
        direction: int,
    ) -> None:
        self.name = name
        self.stretch = stretch
        self.quantity = quantity
        self.level = level
        self.direction = direction
        self.terminal = True

    def __call__(self, t: float, y: FloatArray) -> float:
        value = self.quantity(self.stretch.point(t, y)) - self.level
        if value == 0.0 and self.direction != 0:
            return -self.direction * 1e-300
        return value


@dataclass
class _Piece:
    """One stretch flown: its dense output, step nodes and states, and its mode."""

    solution: Any
    nodes: FloatArray
    states: FloatArray
    mode: _Mode


@dataclass
class _Record:
    """Events (time, state, mode) and the stretches of a flight."""

    events: dict[str, tuple[float, list[float], _Mode]] = field(default_factory=dict)
    pieces: list[_Piece] = field(default_factory=list)
    evaluations: int = 0

    def event(self, name: str, t: float, y: list[float], mode: _Mode) -> None:
        if name not in self.events:
            self.events[name] = (t, list(y), replace(mode))


# Tables whose piece an event has just set (so it is not found again from the state).
_KEEP_LAYER, _KEEP_MACH, _KEEP_WIND = "layer", "mach", "wind"


def _locate(flight: _Flight, t: float, y: list[float], mode: _Mode, keep: set[str]) -> None:
    """Put the mode on the pieces of the tables and of the thrust curve at time t."""
    _, _, _, altitude = flight._local((y[0], y[1], y[2]))
    geopotential = USSA76_EARTH_RADIUS * altitude / (USSA76_EARTH_RADIUS + altitude)
    if _KEEP_LAYER not in keep:
        mode.layer = flight.atmosphere.layer_of(geopotential)
    if _KEEP_WIND not in keep:
        mode.wind_piece = _points_at_or_below(altitude - flight.site_altitude, flight.wind_height)
    if mode.phase == BURNING and flight.is_motor[mode.stage]:
        mode.curve_piece = _points_at_or_below(t, _curve_points(flight, mode))
    if _KEEP_MACH not in keep:
        point = flight.point(t, y, mode)
        mach = point.mach if point.density > 0.0 else 0.0
        mode.mach_piece = _points_at_or_below(mach, flight.drag_mach[mode.stage])


def _follow(flight: _Flight, y: list[float], mode: _Mode, rising: bool) -> None:
    """After a layer or wind event: the other of the two height tables found from the
    state, moved only the way the flight goes.

    A layer top and a wind point may be one height (a sounding's row), reached by two
    sums that differ in the last digit, and an event is located to a tolerance: the state
    may lie just past the other point (its event would not fire) or just short of it (its
    event fires next). Found again freely, each piece would undo the other's event
    without end.
    """
    _, _, _, altitude = flight._local((y[0], y[1], y[2]))
    geopotential = USSA76_EARTH_RADIUS * altitude / (USSA76_EARTH_RADIUS + altitude)
    layer = flight.atmosphere.layer_of(geopotential)
    top = len(flight.atmosphere.tops) - 1
    # leaving or entering the air is the "top" event's to decide
    layer = min(layer, top) if mode.layer <= top else mode.layer
    wind = _points_at_or_below(altitude - flight.site_altitude, flight.wind_height)
    pick = max if rising else min
    mode.layer = pick(mode.layer, layer)
    mode.wind_piece = pick(mode.wind_piece, wind)


def _curve_points(flight: _Flight, mode: _Mode) -> list[float]:
    """Times [s] of the burning motor's curve points."""
    k = mode.stage
    scale = flight.time_scale[k]
    return [mode.ignition_time + scale * point for point in flight.curve_time[k]]


def _next_curve_point(flight: _Flight, t: float, mode: _Mode) -> float:
    if mode.phase != BURNING or not flight.is_motor[mode.stage]:
        return math.inf
    for time in _curve_points(flight, mode):
        if time > t:
            return time
    return math.inf


def _events(flight: _Flight, t: float, stretch: _Stretch) -> list[_Event]:
    """The terminal events watched in a stretch starting at time t."""
    mode = stretch.mode
    events: list[_Event] = []

    def watch(name: str, quantity: Callable[[_Point], float], level: float, sign: int) -> None:
        events.append(_Event(name, stretch, quantity, level, sign))

    constrained = mode.on_rail or not mode.lifted
    if not mode.lifted and mode.phase == BURNING:
        watch("liftoff", lambda p: p.rail_acceleration, 0.0, 1)
    if mode.on_rail and mode.lifted:
        watch("rail_exit", lambda p: p.rail_distance, flight.rail_length, 1)
    if math.isfinite(flight.kick_speed) and not math.isfinite(mode.kick_start) and mode.lifted:
        watch("kick", lambda p: p.air_speed, flight.kick_speed, 1)
    if not constrained and not flight._kick_active(t, mode) and not flight._steering(mode):
        watch("hold", lambda p: p.air_speed, flight.hold_speed, 1 if mode.hold else -1)
    above = mode.layer >= len(flight.atmosphere.tops)
    watch("top", lambda p: p.altitude, TOP_ALTITUDE, -1 if above else 1)
    if mode.watch_apogee:
        watch("apogee", lambda p: p.vertical_speed, 0.0, -1)
    if mode.risen:
        watch("ground", lambda p: p.height, 0.0, -1)
    else:
        watch("rise", lambda p: p.height, _RISE_HEIGHT, 1)
    if (
        math.isfinite(flight.cutoff_energy)
        and flight.earth != "flat"
        and mode.stage == flight.stages - 1
        and mode.phase == BURNING
    ):
        watch("cutoff", lambda p: p.energy, flight.cutoff_energy, 1)
    # the points of the piecewise-linear tables on either side of the current pieces
    tops = flight.atmosphere.tops
    if mode.layer < len(tops) - 1:  # the last layer's top is the "top" event
        watch("layer_up", lambda p: p.geopotential, tops[mode.layer], 1)
    if 0 < mode.layer < len(tops):
        watch("layer_down", lambda p: p.geopotential, tops[mode.layer - 1], -1)
    if mode.layer < len(tops):  # Mach numbers only inside the atmosphere
        machs = flight.drag_mach[mode.stage]
        if mode.mach_piece < len(machs):
            watch("mach_up", lambda p: p.mach, machs[mode.mach_piece], 1)
        if mode.mach_piece > 0:
            watch("mach_down", lambda p: p.mach, machs[mode.mach_piece - 1], -1)
    heights = flight.wind_height
    if heights:
        if mode.wind_piece < len(heights):
            watch("wind_up", lambda p: p.height, heights[mode.wind_piece], 1)
        if mode.wind_piece > 0:
            watch("wind_down", lambda p: p.height, heights[mode.wind_piece - 1], -1)
    return events


def _enter_free(flight: _Flight, t: float, y: list[float], mode: _Mode) -> None:
    """Free flight begins: hold the thrust direction if the air is too slow to steer it."""
    point = flight.point(t, y, mode)
    if point.air_speed < flight.hold_speed:
        mode.hold = True
        mode.hold_direction = point.direction
    else:
        mode.hold = False


def _on_event(
    flight: _Flight, name: str, t: float, y: list[float], mode: _Mode, record: _Record
) -> tuple[str, set[str]]:
    """Apply a terminal event at time t: the status if the flight ends, and pieces kept."""
    keep: set[str] = set()
    status = ""
    if name == "liftoff":
        mode.lifted = True
        record.event("liftoff", t, y, mode)
        if not mode.on_rail:
            _enter_free(flight, t, y, mode)
    elif name == "rail_exit":
        mode.on_rail = False
        record.event("rail_exit", t, y, mode)
        if not flight._kick_active(t, mode):
            _enter_free(flight, t, y, mode)
    elif name == "kick":
        mode.kick_start = t
        mode.kick_end = t + flight.kick_duration
        record.event("kick", t, y, mode)
    elif name == "hold":
        if mode.hold:
            mode.hold = False
        else:
            mode.hold_direction = flight.point(t, y, mode).direction
            mode.hold = True
            record.event("first_hold", t, y, mode)
    elif name == "top":
        point = flight.point(t, y, mode)
        if point.vertical_speed >= 0.0:
            if not mode.inertial:
                # out of the air the ledger follows the inertial speed; the difference of
                # the two speeds is what the turning Earth gave
                mode.inertial = True
                y[layout.Y_ROTATION] += point.inertial_speed - point.ground_speed
            record.event("left_atmosphere", t, y, mode)
            mode.layer = len(flight.atmosphere.tops)
        else:
            record.event("reentry", t, y, mode)
            mode.layer = len(flight.atmosphere.tops) - 1
        keep.add(_KEEP_LAYER)
    elif name == "apogee":
        record.event("apogee", t, y, mode)
        mode.watch_apogee = False
        if not flight.stop_at_ground:
            status = layout.STATUS_NAMES[layout.ST_APOGEE]
    elif name == "ground":
        record.event("ground", t, y, mode)
        status = layout.STATUS_NAMES[layout.ST_GROUND]
    elif name == "rise":
        mode.risen = True
    elif name == "cutoff":
        record.event("cutoff", t, y, mode)
        mode.phase = BURNT
        mode.next_time = math.inf
        status = layout.STATUS_NAMES[layout.ST_ORBIT]
    elif name.startswith("layer_"):
        mode.layer += 1 if name == "layer_up" else -1
        _follow(flight, y, mode, name == "layer_up")
        keep |= {_KEEP_LAYER, _KEEP_WIND}
    elif name.startswith("mach_"):
        mode.mach_piece += 1 if name == "mach_up" else -1
        keep.add(_KEEP_MACH)
    elif name.startswith("wind_"):
        mode.wind_piece += 1 if name == "wind_up" else -1
        _follow(flight, y, mode, name == "wind_up")
        keep |= {_KEEP_WIND, _KEEP_LAYER}
    return status, keep


def _scheduled(flight: _Flight, t: float, y: list[float], mode: _Mode, record: _Record) -> str:
    """Apply the ignitions, burnouts and separations due at time t; a status if it ends."""
    last = flight.stages - 1
    while t >= mode.next_time:
        k = mode.stage
        if mode.phase == WAITING:
            mode.phase = BURNING
            mode.ignition_time = t
            mode.ignition_mass = y[layout.Y_M]
            mode.burn_time = flight.burn_time(k)
            mode.next_time = t + mode.burn_time
            # the linear-tangent law starts from the inertial flight-path angle
            v = (y[3], y[4], y[5])
            speed = _norm(v)
            up = flight._local((y[0], y[1], y[2]))[0]
            sine = _dot(v, up) / speed if speed > _STILL_AIR else 0.0
            mode.guide_angle = math.asin(min(max(sine, -1.0), 1.0))
            record.event(f"ignition:{k}", t, y, mode)
            if not mode.lifted:
                _locate(flight, t, y, mode, set())
                if flight.point(t, y, mode).rail_acceleration > 0.0:
                    mode.lifted = True
                    record.event("liftoff", t, y, mode)
                    if not mode.on_rail:
                        _enter_free(flight, t, y, mode)
        elif mode.phase == BURNING:
            record.event(f"burnout:{k}", t, y, mode)
            mode.phase = BURNT
            mode.next_time = math.inf if k == last else t + flight.separation_delay[k]
            if k == 0 and not mode.lifted:
                return layout.STATUS_NAMES[layout.ST_NO_LIFTOFF]
            if k == last:
                if math.isfinite(flight.cutoff_energy) and flight.earth != "flat":
                    return layout.STATUS_NAMES[layout.ST_BURNOUT]
                _locate(flight, t, y, mode, set())
                if flight.point(t, y, mode).vertical_speed > 0.0:
                    mode.watch_apogee = True
                elif not flight.stop_at_ground:
                    return layout.STATUS_NAMES[layout.ST_APOGEE]
        else:
            if k >= last:
                mode.next_time = math.inf
                break
            # the spent stage leaves with its inert mass and unburnt propellant
            burnt = mode.ignition_mass - y[layout.Y_M]
            y[layout.Y_M] -= flight.inert[k] + flight.propellant[k] - burnt
            mode.stage = k + 1
            mode.phase = WAITING
            mode.next_time = t + flight.ignition_delay[k + 1]
            record.event(f"separation:{k}", t, y, mode)
    return ""


def _fly(
    flight: _Flight, method: str, rtol: float, atol: float
) -> tuple[str, float, list[float], _Record]:
    """Fly one sample from start to end: status, end time, end state and the record."""
    record = _Record()
    mode = _Mode()
    if flight.kick_angle > 0.0 and math.isfinite(flight.kick_time):
        mode.kick_start = flight.kick_time
        mode.kick_end = flight.kick_time + flight.kick_duration
    if flight.airborne:
        t = flight.start_time
        y = [*flight.start_state, flight.mass_initial]
        mode.lifted = mode.risen = True
    else:
        t = 0.0
        site = flight.site
        # the pad turns with the Earth
        y = [*site, -flight.omega * site[1], flight.omega * site[0], 0.0, flight.mass_initial]
        mode.on_rail = flight.rail_length > 0.0
    y += [0.0] * (layout.NY - len(y))
    mode.next_time = t
    _locate(flight, t, y, mode, set())
    start = flight.point(t, y, mode)
    mode.hold_direction = start.direction
    if flight.airborne:
        _enter_free(flight, t, y, mode)
    if start.altitude > TOP_ALTITUDE:
        mode.inertial = True
    status = _scheduled(flight, t, y, mode, record)
    keep: set[str] = set()
    stuck = 0
    while not status:
        _locate(flight, t, y, mode, keep)
        keep = set()
        end = min(mode.next_time, flight.max_time, _next_curve_point(flight, t, mode))
        for boundary in (mode.kick_start, mode.kick_end):
            if boundary > t:
                end = min(end, boundary)
        stretch = _Stretch(flight, replace(mode))
        events = _events(flight, t, stretch)
        fired: list[str] = []
        if end > t:
            solution = solve_ivp(
                stretch.rates, (t, end), np.asarray(y), method=method, rtol=rtol, atol=atol,
                events=events, dense_output=True,
            )  # fmt: skip
            record.evaluations += int(solution.nfev)
            if solution.status == -1:
                return layout.STATUS_NAMES[layout.ST_STEP_FAILURE], t, y, record
            record.pieces.append(_Piece(solution.sol, solution.t, solution.y, stretch.mode))
            fired = [
                event.name
                for event, times in zip(events, solution.t_events, strict=True)
                if len(times)
            ]
            stuck = stuck + 1 if float(solution.t[-1]) == t else 0
            if stuck > 10:
                raise RuntimeError(f"the reference flight is stuck at {t} s ({fired})")
            t = float(solution.t[-1])
            y = [float(value) for value in solution.y[:, -1]]
        for name in fired:
            ended, kept = _on_event(flight, name, t, y, mode, record)
            status = status or ended
            keep |= kept
        if status:
            break
        scheduled = not fired
        # a kick that ends on time hands over to free flight
        kick_over = scheduled and flight.kick_angle > 0.0 and t == mode.kick_end
        if kick_over and mode.lifted and not mode.on_rail:
            _enter_free(flight, t, y, mode)
        if t >= mode.next_time:
            status = _scheduled(flight, t, y, mode, record)
        if not status and t >= flight.max_time:
            status = layout.STATUS_NAMES[layout.ST_TIME_LIMIT]
    return status, t, y, record


def _peak(
    flight: _Flight, record: _Record, quantity: Callable[[_Point], float]
) -> tuple[float, float]:
    """Largest value of a quantity over the flight and its time: (value, time).

    In every stretch, a bounded Brent search on the dense output between the neighbours
    of its best step node finds the stretch's maximum; the largest of those wins.
    """
    best, best_time = -math.inf, math.nan
    for piece in record.pieces:

        def value(t: float, y: list[float], piece: _Piece = piece) -> float:
            result = quantity(flight.point(t, y, piece.mode))
            return result if math.isfinite(result) else -math.inf

        values = [value(float(t), piece.states[:, i].tolist()) for i, t in enumerate(piece.nodes)]
        index = int(np.argmax(values))
        if values[index] > best:
            best, best_time = values[index], float(piece.nodes[index])
        lo = float(piece.nodes[max(index - 1, 0)])
        hi = float(piece.nodes[min(index + 1, len(piece.nodes) - 1)])
        if not hi > lo or values[index] == -math.inf:
            continue

        def negative(t: float, piece: _Piece = piece, value: Callable[..., float] = value) -> float:
            return -value(t, piece.solution(t).tolist())

        search = minimize_scalar(
            negative, bounds=(lo, hi), method="bounded", options={"xatol": 1e-10 * (hi - lo)}
        )
        if -float(search.fun) > best:
            best, best_time = -float(search.fun), float(search.x)
    if best == -math.inf:
        return math.nan, math.nan
    return best, best_time


def reference_flight(
    core: FlightCore,
    sample: int = 0,
    method: str = "DOP853",
    rtol: float = 1e-12,
    atol: float = 1e-12,
) -> ReferenceFlight:
    """Integrate one sample of a core with scipy's solve_ivp, independently of the kernel.

    Parameters
    ----------
    core : FlightCore
        The flights; only ``sample`` is integrated.
    sample : int
        Which sample.
    method : str
        A solve_ivp method with dense output, for example ``"DOP853"`` or ``"RK45"``.
    rtol, atol : float
        Tolerances handed to solve_ivp (atol in the state's SI units).

    Returns
    -------
    ReferenceFlight
        Status, apogee, burnouts, rail exit, lift-off, maxima of dynamic pressure and Mach
        number, final state and ledger (SI).
    """
    flight = _Flight(core, sample)
    status, t, y, record = _fly(flight, method, rtol, atol)
    events = record.events

    def at(name: str) -> _Point | None:
        if name not in events:
            return None
        when, state, mode = events[name]
        return flight.point(when, state, mode)

    def time(name: str) -> float:
        return events[name][0] if name in events else math.nan

    apogee_time = time("apogee")
    apogee = at("apogee")
    apogee_altitude = apogee.height if apogee is not None else math.nan
    last_burnout = f"burnout:{flight.stages - 1}"
    orbital = math.isfinite(flight.cutoff_energy) and flight.earth != "flat"
    ended_high = status == layout.STATUS_NAMES[layout.ST_APOGEE] or (
        status == layout.STATUS_NAMES[layout.ST_GROUND] and last_burnout in events
    )
    if apogee is None and ended_high and not orbital:
        # the last stage burnt out already falling: the apogee is the highest point
        apogee_altitude, apogee_time = _peak(flight, record, lambda p: p.height)
    burnouts = [at(f"burnout:{k}") for k in range(flight.stages)]
    rail_exit = at("rail_exit")
    max_q, max_q_time = _peak(flight, record, lambda p: p.dynamic_pressure)
    max_mach, max_mach_time = _peak(flight, record, lambda p: p.mach)
    ground = status == layout.STATUS_NAMES[layout.ST_GROUND]
    return ReferenceFlight(
        status=status,
        apogee_altitude=apogee_altitude,
        apogee_time=apogee_time,
        burnout_speed=tuple(p.ground_speed if p else math.nan for p in burnouts),
        burnout_altitude=tuple(p.height if p else math.nan for p in burnouts),
        burnout_time=tuple(time(f"burnout:{k}") for k in range(flight.stages)),
        liftoff_time=time("liftoff"),
        rail_exit_time=time("rail_exit"),
        rail_exit_speed=rail_exit.ground_speed if rail_exit is not None else math.nan,
        max_dynamic_pressure=max_q,
        max_dynamic_pressure_time=max_q_time,
        max_mach=max_mach,
        max_mach_time=max_mach_time,
        ground_downrange=flight.downrange(t, y) if ground else math.nan,
        final_time=t,
        final_state=np.array(y),
        ledger=dict(
            zip(layout.LEDGER_TERMS, y[layout.Y_IDEAL : layout.Y_ROTATION + 1], strict=True)
        ),
        event_times={name: entry[0] for name, entry in events.items()},
        evaluations=record.evaluations,
        stretches=len(record.pieces),
    )
