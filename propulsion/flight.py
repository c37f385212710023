"""Ascent of a staged vehicle: a point mass in a vertical plane, many flights at once.

The core works on arrays of shape (components, samples) of SI floats. A :class:`FlightCore`
holds every number the equations need, one value per sample (and per stage), so that
dispersion studies fill it with sampled values and advance thousands of flights together.
:func:`build_core` turns a mission into a core; :func:`simulate` integrates a batch;
:func:`propulsion.ascent.fly` runs one flight and builds the ledger from the outcome.

Frame: an inertial plane through Earth's centre that holds the launch site and the launch
direction; x downrange, y up at the launch site (round Earth: origin at Earth's centre;
flat Earth: origin on the surface below the site, uniform gravity). State components:
position (2), velocity (2), mass, and five running integrals that make up the delta-v
ledger: ideal (thrust in vacuum over mass), gravity, drag, steering and back-pressure
losses. Their closure, ideal - losses - change of inertial speed, is zero by construction
of the equations and small in the numbers (the integrator's accuracy).

References
----------
.. [1] G. P. Sutton and O. Biblarz, Rocket Propulsion Elements, 9th ed., Wiley, 2017,
   chapter 4 (flight performance; gravity and drag losses).
.. [2] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2013,
   section 11.2 (launch trajectories, gravity turn, delta-v losses).
.. [3] U.S. Standard Atmosphere, 1976, NOAA-S/T 76-1562.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import numpy.typing as npt

from propulsion import integrator as rk
from propulsion.atmosphere import density_pressure_sound
from propulsion.constants import (
    EARTH_EQUATORIAL_RADIUS,
    EARTH_MU,
    EARTH_ROTATION_RATE,
    STANDARD_GRAVITY,
)
from propulsion.mission import Mission
from propulsion.vehicle import Engine, Motor

__all__ = ["COMPONENTS", "FlightCore", "Outcome", "build_core", "simulate"]

FloatArray = npt.NDArray[np.float64]
IntArray = npt.NDArray[np.int64]
BoolArray = npt.NDArray[np.bool_]

COMPONENTS = ("x", "y", "vx", "vy", "mass", "ideal", "gravity", "drag", "steering", "pressure")
X, Y, VX, VY, M, IDEAL, GRAVITY, DRAG, STEERING, PRESSURE = range(10)
_LEDGER = slice(IDEAL, PRESSURE + 1)

# Absolute tolerance of speeds [m/s] (and of the ledger integrals) in the step control.
_ATOL_SPEED = 1e-6
_NEVER = math.inf


@dataclass
class FlightCore:
    """Everything the equations of motion need, as SI arrays (n samples, s stages).

    Per sample (shape (n,)): ``mass_initial`` [kg], ``site_altitude`` [m],
    ``rail_length`` [m], ``elevation`` [rad], ``rotation_speed`` (the co-rotating
    surface's speed along the launch direction) [m/s], ``cd_scale``, ``wind_scale``,
    ``kick_angle`` [rad], ``kick_time`` [s], ``kick_speed`` [m/s], ``kick_duration`` [s],
    ``cutoff_energy`` (orbital energy at which the last stage cuts off; NaN: burn to
    depletion) [J/kg].
    Per stage (shape (s, n)): ``inert``, ``propellant``, ``usable`` [kg], ``area`` [m²],
    ``separation_delay``, ``ignition_delay``, ``burn_time`` [s], ``impulse_scale``,
    ``time_scale`` (motor curves), ``thrust_vacuum`` [N], ``exit_area`` [m²],
    ``mass_flow`` [kg/s] (engines, whole cluster).
    Shared per stage: the thrust curve of the cluster (time [s], thrust [N], total impulse
    [N·s]), the drag curve (Mach, Cd), ``is_motor``.
    """

    n: int
    stage_names: tuple[str, ...]
    is_motor: tuple[bool, ...]
    curve_time: tuple[FloatArray, ...]
    curve_thrust: tuple[FloatArray, ...]
    curve_impulse: tuple[float, ...]
    drag_mach: tuple[FloatArray, ...]
    drag_cd: tuple[FloatArray, ...]
    mass_initial: FloatArray
    site_altitude: FloatArray
    rail_length: FloatArray
    elevation: FloatArray
    rotation_speed: FloatArray
    cd_scale: FloatArray
    wind_scale: FloatArray
    wind_offset: FloatArray
    kick_angle: FloatArray
    kick_time: FloatArray
    kick_speed: FloatArray
    kick_duration: FloatArray
    cutoff_energy: FloatArray
    inert: FloatArray
    propellant: FloatArray
    usable: FloatArray
    area: FloatArray
    separation_delay: FloatArray
    ignition_delay: FloatArray
    impulse_scale: FloatArray
    time_scale: FloatArray
    thrust_vacuum: FloatArray
    exit_area: FloatArray
    mass_flow: FloatArray
    wind_altitude: FloatArray = field(default_factory=lambda: np.zeros(0))
    wind_speed: FloatArray = field(default_factory=lambda: np.zeros(0))
    round_earth: bool = True
    linear_tangent: bool = False
    stop_at_ground: bool = False
    max_time: float = 7200.0
    airborne: bool = False
    """Start in free flight (off the pad) with the horizontal speed ``rotation_speed``:
    for checks of coasting flight and for stages that start in the air."""

    @property
    def stages(self) -> int:
        """Number of stages."""
        return len(self.stage_names)

    def burn_time(self) -> FloatArray:
        """Burn time of each stage and sample [s] (shape (s, n))."""
        out = np.empty_like(self.usable)
        for k in range(self.stages):
            if self.is_motor[k]:
                out[k] = self.time_scale[k] * self.curve_time[k][-1]
            else:
                out[k] = self.usable[k] / self.mass_flow[k]
        return out

    def take(self, index: IntArray) -> FlightCore:
        """The core restricted to some samples (per-sample arrays indexed by ``index``)."""
        values: dict[str, Any] = {}
        for name, value in self.__dict__.items():
            if isinstance(value, np.ndarray) and name not in ("wind_altitude", "wind_speed"):
                values[name] = value[..., index]
            else:
                values[name] = value
        values["n"] = len(index)
        return FlightCore(**values)


def build_core(mission: Mission, stages: int | None = None, n: int = 1) -> FlightCore:
    """Build the SI arrays for ``n`` identical flights of a mission's first ``stages``.

    Parameters
    ----------
    mission : Mission
        A checked mission.
    stages : int or None
        How many stages fly (from the bottom); all when None.
    n : int
        Number of samples (identical copies; studies then change some values).
    """
    vehicle = mission.vehicle
    flown = vehicle.stages if stages is None else vehicle.stages[:stages]
    s = len(flown)
    ones = np.ones(n)

    def per_stage(values: list[float]) -> FloatArray:
        return np.repeat(np.asarray(values, dtype=float)[:, None], n, axis=1)

    curve_time, curve_thrust, curve_impulse = [], [], []
    thrust_vacuum, exit_area, mass_flow = [], [], []
    drag_mach, drag_cd, area = [], [], []
    for stage in flown:
        prop = stage.propulsion
        if isinstance(prop, Motor):
            curve_time.append(np.asarray(prop.time, dtype=float))
            curve_thrust.append(stage.count * np.asarray(prop.thrust, dtype=float))
            curve_impulse.append(stage.count * prop.total_impulse)
            thrust_vacuum.append(0.0)
            exit_area.append(0.0)
            mass_flow.append(0.0)
        else:
            assert isinstance(prop, Engine)
            curve_time.append(np.zeros(2))
            curve_thrust.append(np.zeros(2))
            curve_impulse.append(0.0)
            thrust_vacuum.append(stage.count * prop.thrust_vacuum)
            exit_area.append(stage.count * prop.exit_area)
            mass_flow.append(stage.count * prop.mass_flow)
        if stage.drag_curve is not None and stage.diameter is not None:
            drag_mach.append(np.asarray(stage.drag_curve.mach, dtype=float))
            drag_cd.append(np.asarray(stage.drag_curve.drag_coefficient, dtype=float))
            area.append(math.pi * stage.diameter**2 / 4)
        else:
            drag_mach.append(np.array([0.0, 1.0]))
            drag_cd.append(np.zeros(2))
            area.append(0.0)
    above = vehicle.payload_mass + sum(stage.mass for stage in vehicle.stages[s:])
    launch = mission.launch
    settings = mission.flight
    rotation = 0.0
    if launch.rotation and settings.earth == "round":
        assert launch.latitude is not None and launch.azimuth is not None
        radius = EARTH_EQUATORIAL_RADIUS + launch.altitude
        rotation = EARTH_ROTATION_RATE * radius * math.cos(launch.latitude)
        rotation *= math.sin(launch.azimuth)
    cutoff = math.nan
    if mission.legs and mission.legs[0].target == "circular_orbit":
        radius = EARTH_EQUATORIAL_RADIUS + mission.legs[0].fields["altitude"]
        cutoff = -EARTH_MU / (2 * radius)
    return FlightCore(
        n=n,
        stage_names=tuple(stage.name for stage in flown),
        is_motor=tuple(stage.is_motor for stage in flown),
        curve_time=tuple(curve_time),
        curve_thrust=tuple(curve_thrust),
        curve_impulse=tuple(curve_impulse),
        drag_mach=tuple(drag_mach),
        drag_cd=tuple(drag_cd),
        mass_initial=ones * (above + sum(stage.mass for stage in flown)),
        site_altitude=ones * launch.altitude,
        rail_length=ones * (launch.rail_length or 0.0),
        elevation=ones * launch.elevation,
        rotation_speed=ones * rotation,
        cd_scale=ones * vehicle.drag_scale,
        wind_scale=ones.copy(),
        wind_offset=ones * launch.wind_offset,
        kick_angle=ones * settings.pitch_kick_angle,
        kick_time=ones
        * (settings.pitch_kick_time if settings.pitch_kick_time is not None else _NEVER),
        kick_speed=ones
        * (settings.pitch_kick_speed if settings.pitch_kick_speed is not None else _NEVER),
        kick_duration=ones * settings.pitch_kick_duration,
        cutoff_energy=ones * cutoff,
        inert=per_stage([stage.inert_mass for stage in flown]),
        propellant=per_stage([stage.propellant_mass for stage in flown]),
        usable=per_stage([stage.usable_propellant for stage in flown]),
        area=per_stage(area),
        separation_delay=per_stage([stage.separation_delay for stage in flown]),
        ignition_delay=per_stage([stage.ignition_delay for stage in flown]),
        impulse_scale=per_stage([1.0] * s),
        time_scale=per_stage([1.0] * s),
        thrust_vacuum=per_stage(thrust_vacuum),
        exit_area=per_stage(exit_area),
        mass_flow=per_stage(mass_flow),
        wind_altitude=np.asarray(launch.wind_altitude, dtype=float),
        wind_speed=np.asarray(launch.wind_speed, dtype=float),
        round_earth=settings.earth == "round",
        linear_tangent=settings.guidance == "linear_tangent",
        stop_at_ground=settings.stop_at == "ground",
        max_time=settings.max_time,
    )


# Phases of the lowest attached stage.
WAITING, BURNING, BURNT = 0, 1, 2


@dataclass
class _Phase:
    """Discrete state per sample, constant within a step (steps end on every change)."""

    stage: IntArray
    phase: IntArray
    ignition_time: FloatArray
    ignition_mass: FloatArray
    next_time: FloatArray
    on_rail: BoolArray
    lifted: BoolArray
    kick_start: FloatArray
    guidance_angle: FloatArray
    risen: BoolArray

    def take(self, index: IntArray) -> _Phase:
        return _Phase(**{name: value[index] for name, value in self.__dict__.items()})


class _Model:
    """The right-hand side and the derived quantities, for one core and its phases."""

    def __init__(self, core: FlightCore, phase: _Phase) -> None:
        self.core = core
        self.phase = phase
        site_radius = EARTH_EQUATORIAL_RADIUS + core.site_altitude
        self.origin_y = site_radius if core.round_earth else np.zeros(core.n)
        # rail direction in the inertial frame at the site: elevation above the horizon
        # a vertical rail is exactly vertical (cos(pi/2) is 6e-17, which a low-thrust
        # gravity turn would grow into a pitch-over)
        self.rail_x = np.where(np.abs(np.cos(core.elevation)) < 1e-12, 0.0, np.cos(core.elevation))
        self.rail_y = np.sin(core.elevation)
        self.burn = core.burn_time()

    def rail_speed(self, y: FloatArray) -> FloatArray:
        """Speed along the rail relative to the launch site [m/s]."""
        return (y[VX] - self.core.rotation_speed) * self.rail_x + y[VY] * self.rail_y

    def rail_distance(self, t: FloatArray, y: FloatArray) -> FloatArray:
        """Distance travelled along the rail from the launch site [m]."""
        dx = y[X] - self.core.rotation_speed * t
        dy = y[Y] - self.origin_y
        return dx * self.rail_x + dy * self.rail_y

    # -- geometry -----------------------------------------------------------------------
    def geometry(self, y: FloatArray) -> tuple[FloatArray, FloatArray, FloatArray, FloatArray]:
        """Radius [m], altitude above sea level [m], and the local up unit vector."""
        if self.core.round_earth:
            radius = np.hypot(y[X], y[Y])
            return radius, radius - EARTH_EQUATORIAL_RADIUS, y[X] / radius, y[Y] / radius
        altitude = y[Y] + self.core.site_altitude
        return altitude, altitude, np.zeros_like(altitude), np.ones_like(altitude)

    def air_velocity(
        self,
        y: FloatArray,
        radius: FloatArray,
        altitude: FloatArray,
        up_x: FloatArray,
        up_y: FloatArray,
    ) -> tuple[FloatArray, FloatArray]:
        """Velocity relative to the (co-rotating, windy) air [m/s]."""
        core = self.core
        horizontal = self._surface_speed(radius, altitude)
        if core.wind_altitude.size:
            wind = np.interp(altitude - core.site_altitude, core.wind_altitude, core.wind_speed)
            horizontal = horizontal + core.wind_scale * wind
        horizontal = horizontal + core.wind_offset
        # downrange horizontal unit vector is the up vector turned by -90 degrees
        return y[VX] - horizontal * up_y, y[VY] + horizontal * up_x

    def _surface_speed(self, radius: FloatArray, altitude: FloatArray) -> FloatArray:
        """Horizontal speed of the co-rotating Earth (and its air) at a radius [m/s]."""
        core = self.core
        if core.round_earth and np.any(core.rotation_speed != 0):
            site_radius = EARTH_EQUATORIAL_RADIUS + core.site_altitude
            return core.rotation_speed * radius / site_radius
        return np.zeros_like(altitude)

    def ground_velocity(self, y: FloatArray) -> tuple[FloatArray, FloatArray]:
        """Velocity relative to the rotating Earth (no wind) [m/s]."""
        radius, altitude, up_x, up_y = self.geometry(y)
        horizontal = self._surface_speed(radius, altitude)
        return y[VX] - horizontal * up_y, y[VY] + horizontal * up_x

    def thrust(
        self, t: FloatArray, pressure: FloatArray
    ) -> tuple[FloatArray, FloatArray, FloatArray, FloatArray]:
        """Thrust [N], ideal (vacuum) thrust [N], back-pressure force [N], mass flow [kg/s]."""
        core, phase = self.core, self.phase
        n = core.n
        thrust, ideal, back, flow = np.zeros(n), np.zeros(n), np.zeros(n), np.zeros(n)
        burning = phase.phase == BURNING
        if not np.any(burning):
            return thrust, ideal, back, flow
        since = t - phase.ignition_time
        for k in range(core.stages):
            mask = burning & (phase.stage == k)
            if not np.any(mask):
                continue
            if core.is_motor[k]:
                scale_t = core.time_scale[k, mask]
                scale_i = core.impulse_scale[k, mask]
                curve = np.interp(
                    since[mask] / scale_t, core.curve_time[k], core.curve_thrust[k], right=0.0
                )
                force = curve * scale_i / scale_t
                thrust[mask] = force
                ideal[mask] = force
                flow[mask] = curve / scale_t * core.usable[k, mask] / core.curve_impulse[k]
            else:
                force_back = pressure[mask] * core.exit_area[k, mask]
                ideal[mask] = core.thrust_vacuum[k, mask]
                thrust[mask] = np.maximum(core.thrust_vacuum[k, mask] - force_back, 0.0)
                back[mask] = ideal[mask] - thrust[mask]
                flow[mask] = core.mass_flow[k, mask]
        return thrust, ideal, back, flow

    def drag_coefficient(self, mach: FloatArray) -> tuple[FloatArray, FloatArray]:
        """Drag coefficient and reference area [m²] of the current stack."""
        core, phase = self.core, self.phase
        cd = np.zeros(core.n)
        area = np.zeros(core.n)
        for k in range(core.stages):
            mask = phase.stage == k
            if np.any(mask):
                cd[mask] = np.interp(mach[mask], core.drag_mach[k], core.drag_cd[k])
                area[mask] = core.area[k, mask]
        return cd * core.cd_scale, area

    def direction(
        self,
        t: FloatArray,
        y: FloatArray,
        air_x: FloatArray,
        air_y: FloatArray,
        air_speed: FloatArray,
        up_x: FloatArray,
        up_y: FloatArray,
    ) -> tuple[FloatArray, FloatArray]:
        """Unit vector of the thrust."""
        core, phase = self.core, self.phase
        constrained = phase.on_rail | ~phase.lifted
        moving = air_speed > 1e-9
        safe = np.where(moving, air_speed, 1.0)
        ux = np.where(moving, air_x / safe, self.rail_x)
        uy = np.where(moving, air_y / safe, self.rail_y)
        programmed = core.kick_angle > 0
        if np.any(programmed):
            # pitch programme: hold the launch direction (in the local frame) until the kick
            # starts, tilt it towards downrange by the kick angle, then the gravity turn
            # takes over once the tilt is done and the air-relative velocity follows it.
            started = np.isfinite(phase.kick_start)
            progress = np.where(
                started, np.clip((t - phase.kick_start) / core.kick_duration, 0.0, 1.0), 0.0
            )
            active = programmed & (progress < 1.0)
            angle = core.elevation - core.kick_angle * progress
            # launch direction expressed in the local frame (up, downrange)
            kx = np.cos(angle) * up_y + np.sin(angle) * up_x
            ky = -np.cos(angle) * up_x + np.sin(angle) * up_y
            ux = np.where(active, kx, ux)
            uy = np.where(active, ky, uy)
        if core.linear_tangent:
            steering = (phase.stage > 0) & (phase.phase == BURNING)
            if np.any(steering):
                # linear-tangent law driving the pitch above the local horizon from its value
                # at ignition to zero at burnout: tan(theta) = tan(theta0) (1 - tau / T).
                burn = np.take_along_axis(self.burn, phase.stage[None, :], axis=0)[0]
                tau = np.clip((t - phase.ignition_time) / burn, 0.0, 1.0)
                theta = np.arctan(np.tan(phase.guidance_angle) * (1.0 - tau))
                gx = np.cos(theta) * up_y + np.sin(theta) * up_x
                gy = -np.cos(theta) * up_x + np.sin(theta) * up_y
                ux = np.where(steering, gx, ux)
                uy = np.where(steering, gy, uy)
        ux = np.where(constrained, self.rail_x, ux)
        uy = np.where(constrained, self.rail_y, uy)
        return ux, uy

    def __call__(self, t: FloatArray, y: FloatArray) -> FloatArray:
        """Time derivative of the state (components, n)."""
        core, phase = self.core, self.phase
        radius, altitude, up_x, up_y = self.geometry(y)
        density, pressure, sound = density_pressure_sound(altitude)
        air_x, air_y = self.air_velocity(y, radius, altitude, up_x, up_y)
        air_speed = np.hypot(air_x, air_y)
        mach = np.where(density > 0, air_speed / sound, 0.0)  # no Mach number in vacuum
        cd, area = self.drag_coefficient(mach)
        drag = 0.5 * density * air_speed * cd * area  # drag force / air speed [N s/m]
        thrust, ideal, back, flow = self.thrust(t, pressure)
        ux, uy = self.direction(t, y, air_x, air_y, air_speed, up_x, up_y)
        mass = y[M]
        g = EARTH_MU / (radius * radius) if core.round_earth else np.full(core.n, STANDARD_GRAVITY)
        gx, gy = -g * up_x, -g * up_y
        ax = (thrust * ux - drag * air_x) / mass + gx
        ay = (thrust * uy - drag * air_y) / mass + gy
        speed = np.hypot(y[VX], y[VY])
        moving = speed > 1e-9
        safe = np.where(moving, speed, 1.0)
        vx_hat = np.where(moving, y[VX] / safe, self.rail_x)
        vy_hat = np.where(moving, y[VY] / safe, self.rail_y)
        constrained = phase.on_rail | ~phase.lifted
        if np.any(constrained):
            # on the rail (or the pad) only the component along the rail acts; the pad
            # holds a vehicle whose thrust is below its weight
            along = ax * self.rail_x + ay * self.rail_y
            held = constrained & ~phase.lifted & (along <= 0.0)
            along = np.where(held, 0.0, along)
            ax = np.where(constrained, along * self.rail_x, ax)
            ay = np.where(constrained, along * self.rail_y, ay)
        else:
            held = np.zeros(core.n, dtype=bool)
        out = np.empty_like(y)
        out[X] = y[VX]
        out[Y] = y[VY]
        out[VX] = ax
        out[VY] = ay
        out[M] = -flow
        cos_steer = ux * vx_hat + uy * vy_hat
        out[IDEAL] = ideal / mass
        out[PRESSURE] = back / mass
        out[STEERING] = thrust * (1.0 - cos_steer) / mass
        out[DRAG] = drag * (air_x * vx_hat + air_y * vy_hat) / mass
        gravity_loss = -(gx * vx_hat + gy * vy_hat)
        # while held on the pad, the pad's support takes what thrust gives: count it as
        # gravity loss so that the ledger still closes
        held_loss = (thrust * cos_steer) / mass - out[DRAG]
        out[GRAVITY] = np.where(held, held_loss, gravity_loss)
        return out

    # -- derived quantities ---------------------------------------------------------------
    def describe(self, t: FloatArray, y: FloatArray) -> dict[str, FloatArray]:
        """Altitude, speeds, Mach, dynamic pressure, acceleration and angles for output."""
        radius, altitude, up_x, up_y = self.geometry(y)
        density, _, sound = density_pressure_sound(altitude)
        air_x, air_y = self.air_velocity(y, radius, altitude, up_x, up_y)
        air_speed = np.hypot(air_x, air_y)
        derivative = self(t, y)
        g = (
            EARTH_MU / radius**2
            if self.core.round_earth
            else np.full(self.core.n, STANDARD_GRAVITY)
        )
        sensed_x = derivative[VX] + g * up_x
        sensed_y = derivative[VY] + g * up_y
        speed = np.hypot(y[VX], y[VY])
        vertical = y[VX] * up_x + y[VY] * up_y
        ground_x, ground_y = self.ground_velocity(y)
        if self.core.round_earth:
            # the site turns with the Earth: measure downrange from where it is now
            site_rate = self.core.rotation_speed / (
                EARTH_EQUATORIAL_RADIUS + self.core.site_altitude
            )
            downrange = EARTH_EQUATORIAL_RADIUS * (np.arctan2(y[X], y[Y]) - site_rate * t)
        else:
            downrange = y[X]
        return {
            "altitude": altitude - self.core.site_altitude,
            "altitude_sea_level": altitude,
            "downrange": downrange,
            "speed": speed,
            "ground_speed": np.hypot(ground_x, ground_y),
            "vertical_speed": vertical,
            "air_speed": air_speed,
            "mach": np.where(density > 0, air_speed / sound, 0.0),
            "dynamic_pressure": 0.5 * density * air_speed**2,
            "acceleration": np.hypot(sensed_x, sensed_y),
            "flight_path_angle": np.arcsin(
                np.clip(vertical / np.where(speed > 0, speed, 1), -1, 1)
            ),
            "mass": y[M].copy(),
            "energy": 0.5 * speed**2 - EARTH_MU / radius
            if self.core.round_earth
            else np.full_like(speed, np.nan),
        }


@dataclass
class Outcome:
    """Raw results of a batch of flights (SI), as the runners and studies read them.

    ``events`` maps an event name (``rail_exit``, ``apogee``, ``ground``, ``cutoff``, and
    ``ignition:K``, ``burnout:K``, ``separation:K`` per stage K) to arrays of time [s]
    (n,) and state (components, n), NaN where the event did not happen. ``maxima`` maps
    ``dynamic_pressure`` [Pa], ``mach`` and ``acceleration`` [m/s²] to (time, value).
    ``ledger_marks`` (s + 1, 5, n) holds the ledger integrals at each stage's ignition and
    at the end; ``speed_marks`` (s + 1, n) the inertial speed there. ``status`` is one of
    "apogee", "ground", "orbit", "burnout", "no liftoff", "time limit". ``trajectory``
    holds (t, state, derivative, phase) of sample 0 at every accepted step when recorded.
    """

    n: int
    status: npt.NDArray[np.str_]
    final_time: FloatArray
    final_state: FloatArray
    events: dict[str, tuple[FloatArray, FloatArray]]
    maxima: dict[str, tuple[FloatArray, FloatArray]]
    ledger_marks: FloatArray
    speed_marks: FloatArray
    steps: IntArray
    trajectory: list[tuple[float, FloatArray, FloatArray, _Phase]] = field(default_factory=list)


_MAXIMA = ("dynamic_pressure", "mach", "acceleration")
_TERMINAL = ("rail_exit", "kick", "apogee", "ground", "cutoff")


def _initial(core: FlightCore) -> tuple[FloatArray, _Phase]:
    n = core.n
    y = np.zeros((len(COMPONENTS), n))
    if core.round_earth:
        y[Y] = EARTH_EQUATORIAL_RADIUS + core.site_altitude
    y[VX] = core.rotation_speed
    y[M] = core.mass_initial
    phase = _Phase(
        stage=np.zeros(n, dtype=np.int64),
        phase=np.full(n, WAITING, dtype=np.int64),
        ignition_time=np.zeros(n),
        ignition_mass=core.mass_initial.copy(),
        next_time=np.zeros(n),
        on_rail=(core.rail_length > 0) & (not core.airborne),
        lifted=np.full(n, core.airborne),
        kick_start=np.where(np.isfinite(core.kick_time), core.kick_time, np.inf),
        guidance_angle=np.zeros(n),
        risen=np.full(n, core.airborne),
    )
    return y, phase


class _Batch:
    """The samples still flying: their times, states, phases and step sizes."""

    def __init__(self, core: FlightCore, first_step: float) -> None:
        self.core = core
        self.y, self.phase = _initial(core)
        self.t = np.zeros(core.n)
        self.h = np.full(core.n, first_step)
        self.index = np.arange(core.n)
        self.burn = core.burn_time()
        self.model = _Model(core, self.phase)
        self.f = self.model(self.t, self.y)

    def refresh(self) -> None:
        """Re-evaluate the derivative after a change of phase or mass."""
        self.f = self.model(self.t, self.y)

    def keep(self, mask: BoolArray) -> None:
        """Drop the samples that have finished."""
        where = np.flatnonzero(mask)
        self.core = self.core.take(where)
        self.phase = self.phase.take(where)
        self.model = _Model(self.core, self.phase)
        self.t, self.y, self.f, self.h = (
            self.t[where],
            self.y[:, where],
            self.f[:, where],
            self.h[where],
        )
        self.index, self.burn = self.index[where], self.burn[:, where]


class _Recorder:
    """Per-sample results, indexed by the original sample number."""

    def __init__(self, core: FlightCore) -> None:
        n, s = core.n, core.stages
        nan_state = np.full((len(COMPONENTS), n), np.nan)
        names = list(_TERMINAL) + [
            f"{kind}:{k}" for k in range(s) for kind in ("ignition", "burnout", "separation")
        ]
        self.events = {name: (np.full(n, np.nan), nan_state.copy()) for name in names}
        self.maxima = {name: (np.full(n, np.nan), np.full(n, -np.inf)) for name in _MAXIMA}
        self.ledger_marks = np.full((s + 1, 5, n), np.nan)
        self.speed_marks = np.full((s + 1, n), np.nan)
        self.status = np.full(n, "", dtype=object)
        self.final_time = np.full(n, np.nan)
        self.final_state = nan_state.copy()
        self.steps = np.zeros(n, dtype=np.int64)

    def event(self, name: str, index: IntArray, t: FloatArray, y: FloatArray) -> None:
        times, states = self.events[name]
        times[index] = t
        states[:, index] = y


def _transitions(batch: _Batch, due: BoolArray, record: _Recorder) -> None:
    """Apply the scheduled changes due now: ignition, burnout, separation (may chain)."""
    core, phase = batch.core, batch.phase
    for _ in range(3 * core.stages + 1):
        due = due & (batch.t >= phase.next_time)
        if not np.any(due):
            return
        t, y = batch.t, batch.y
        for k in range(core.stages):
            at = due & (phase.stage == k)
            ignite = at & (phase.phase == WAITING)
            burnout = at & (phase.phase == BURNING)
            separate = at & (phase.phase == BURNT)
            if np.any(ignite):
                where = np.flatnonzero(ignite)
                record.event(f"ignition:{k}", batch.index[where], t[where], y[:, where])
                record.ledger_marks[k][:, batch.index[where]] = y[_LEDGER, where]
                record.speed_marks[k][batch.index[where]] = np.hypot(y[VX, where], y[VY, where])
                phase.phase[where] = BURNING
                phase.ignition_time[where] = t[where]
                phase.ignition_mass[where] = y[M, where]
                phase.next_time[where] = t[where] + batch.burn[k, where]
                _, _, up_x, up_y = batch.model.geometry(y)
                speed = np.hypot(y[VX, where], y[VY, where])
                vertical = y[VX, where] * up_x[where] + y[VY, where] * up_y[where]
                vertical = vertical / np.maximum(speed, 1e-9)
                phase.guidance_angle[where] = np.arcsin(np.clip(vertical, -1.0, 1.0))
            if np.any(burnout):
                where = np.flatnonzero(burnout)
                record.event(f"burnout:{k}", batch.index[where], t[where], y[:, where])
                phase.phase[where] = BURNT
                last = k == core.stages - 1
                phase.next_time[where] = (
                    np.inf if last else t[where] + core.separation_delay[k, where]
                )
            if np.any(separate) and k < core.stages - 1:
                where = np.flatnonzero(separate)
                record.event(f"separation:{k}", batch.index[where], t[where], y[:, where])
                burnt = phase.ignition_mass[where] - y[M, where]
                y[M, where] -= core.inert[k, where] + core.propellant[k, where] - burnt
                phase.stage[where] = k + 1
                phase.phase[where] = WAITING
                phase.next_time[where] = t[where] + core.ignition_delay[k + 1, where]
            # a stage whose phase changed must not also act as the next stage this pass
            due = due & ~(ignite | burnout | separate)
        due = np.ones_like(due)


def _event_functions(batch: _Batch) -> dict[str, tuple[Any, BoolArray, int]]:
    """Event name -> (g(t, y), which samples watch it, direction of the crossing)."""
    core, phase = batch.core, batch.phase
    last = core.stages - 1
    after_last_ignition = (phase.stage == last) & (phase.phase != WAITING)
    models: dict[bytes, _Model] = {}

    def model_of(where: IntArray) -> _Model:
        """The model of some samples, built once per step (bisection calls it often)."""
        key = where.tobytes()
        if key not in models:
            models[key] = _Model(core.take(where), phase.take(where))
        return models[key]

    def rail(t: FloatArray, y: FloatArray, where: IntArray) -> FloatArray:
        sub = model_of(where)
        return sub.rail_distance(t, y) - core.rail_length[where]

    def vertical(t: FloatArray, y: FloatArray, where: IntArray) -> FloatArray:
        sub = model_of(where)
        _, _, up_x, up_y = sub.geometry(y)
        return y[VX] * up_x + y[VY] * up_y

    def height(t: FloatArray, y: FloatArray, where: IntArray) -> FloatArray:
        sub = model_of(where)
        return sub.geometry(y)[1] - core.site_altitude[where]

    def air_speed(t: FloatArray, y: FloatArray, where: IntArray) -> FloatArray:
        sub = model_of(where)
        radius, altitude, up_x, up_y = sub.geometry(y)
        air_x, air_y = sub.air_velocity(y, radius, altitude, up_x, up_y)
        return np.hypot(air_x, air_y) - core.kick_speed[where]

    def energy(t: FloatArray, y: FloatArray, where: IntArray) -> FloatArray:
        radius = np.hypot(y[X], y[Y])
        return 0.5 * (y[VX] ** 2 + y[VY] ** 2) - EARTH_MU / radius - core.cutoff_energy[where]

    orbital = np.isfinite(core.cutoff_energy) & (phase.stage == last) & (phase.phase == BURNING)
    lifted = phase.lifted
    return {
        "rail_exit": (rail, phase.on_rail, +1),
        "kick": (air_speed, ~np.isfinite(phase.kick_start) & np.isfinite(core.kick_speed), +1),
        "apogee": (vertical, lifted & after_last_ignition & ~np.isfinite(core.cutoff_energy), -1),
        "ground": (height, lifted & phase.risen, -1),
        "cutoff": (energy, orbital & core.round_earth, +1),
    }


def _air_quantities(model: _Model, y: FloatArray) -> FloatArray:
    """Dynamic pressure [Pa] and Mach number, stacked as rows (2, n)."""
    radius, altitude, up_x, up_y = model.geometry(y)
    density, _, sound = density_pressure_sound(altitude)
    air_x, air_y = model.air_velocity(y, radius, altitude, up_x, up_y)
    air_speed = np.hypot(air_x, air_y)
    return np.stack([0.5 * density * air_speed**2, np.where(density > 0, air_speed / sound, 0.0)])


def _sensed_acceleration(model: _Model, y: FloatArray, derivative: FloatArray) -> FloatArray:
    """Acceleration an accelerometer on board would read (thrust, drag, support) [m/s²]."""
    radius, _, up_x, up_y = model.geometry(y)
    if model.core.round_earth:
        g = EARTH_MU / radius**2
    else:
        g = np.full(model.core.n, STANDARD_GRAVITY)
    return np.hypot(derivative[VX] + g * up_x, derivative[VY] + g * up_y)


def _track_maxima(
    batch: _Batch,
    where: IntArray,
    y0: FloatArray,
    y1: FloatArray,
    f0: FloatArray,
    f1: FloatArray,
    t0: FloatArray,
    h: FloatArray,
    record: _Recorder,
) -> None:
    """Update the running maxima of dynamic pressure, Mach and acceleration.

    Dynamic pressure and Mach are smooth within a step: where the slope at the start is
    rising and at the end falling, the maximum inside the step is found by golden-section
    search on the dense output. The sensed acceleration jumps at burnouts and bends at
    thrust-curve breakpoints, which are step ends, so its maximum is taken at step ends.
    """
    sub = _Model(batch.core.take(where), batch.phase.take(where))
    original = batch.index[where]
    ones = np.ones(where.size)
    epsilon = 1e-4

    def at(theta: FloatArray) -> FloatArray:
        return _air_quantities(sub, rk.hermite(y0, y1, f0, f1, h, theta))

    start, near_start, near_end, end = (at(v * ones) for v in (0.0, epsilon, 1 - epsilon, 1.0))
    for row, name in enumerate(("dynamic_pressure", "mach")):
        times, values = record.maxima[name]
        best = np.maximum(start[row], end[row])
        best_theta = np.where(end[row] >= start[row], 1.0, 0.0)
        inside = (near_start[row] > start[row]) & (near_end[row] > end[row])
        if np.any(inside):
            pick = np.flatnonzero(inside)
            model = _Model(sub.core.take(pick), sub.phase.take(pick))

            def inner(
                theta: FloatArray, pick: IntArray = pick, model: _Model = model, row: int = row
            ) -> FloatArray:
                state = rk.hermite(
                    y0[:, pick], y1[:, pick], f0[:, pick], f1[:, pick], h[pick], theta
                )
                return _air_quantities(model, state)[row]

            theta, value = rk.find_maximum(inner, pick.size, iterations=40)
            better = value > best[pick]
            best[pick] = np.where(better, value, best[pick])
            best_theta[pick] = np.where(better, theta, best_theta[pick])
        improve = best > values[original]
        values[original] = np.where(improve, best, values[original])
        times[original] = np.where(improve, t0 + best_theta * h, times[original])
    times, values = record.maxima["acceleration"]
    for state, derivative, when in ((y0, f0, t0), (y1, f1, t0 + h)):
        value = _sensed_acceleration(sub, state, derivative)
        improve = value > values[original]
        values[original] = np.where(improve, value, values[original])
        times[original] = np.where(improve, when, times[original])


def _curve_breakpoints(batch: _Batch) -> FloatArray:
    """Time of the next thrust-curve breakpoint of each burning motor [s] (inf if none)."""
    core, phase = batch.core, batch.phase
    out = np.full(core.n, np.inf)
    burning = phase.phase == BURNING
    for k in range(core.stages):
        mask = burning & (phase.stage == k)
        if not core.is_motor[k] or not np.any(mask):
            continue
        scale = core.time_scale[k, mask]
        start = phase.ignition_time[mask]
        since = (batch.t[mask] - start) / scale
        grid = core.curve_time[k]
        nxt = np.searchsorted(grid, since * (1 + 1e-12) + 1e-12, side="right")
        inside = nxt < grid.size
        out[mask] = np.where(inside, start + scale * grid[np.minimum(nxt, grid.size - 1)], np.inf)
    return out


def _on_step(
    function: Any,
    step: tuple[FloatArray, FloatArray, FloatArray, FloatArray, FloatArray, FloatArray],
    where: IntArray,
) -> Any:
    """An event function evaluated on the dense output of a step, at fraction theta."""
    t0, y0, y1, f0, f1, h = step

    def g(theta: FloatArray) -> FloatArray:
        state = rk.hermite(y0, y1, f0, f1, h, theta)
        return function(t0 + theta * h, state, where)

    return g


def _refine_events(
    batch: _Batch,
    functions: dict[str, tuple[Any, BoolArray, int]],
    names: npt.NDArray[np.object_],
    cut: IntArray,
    theta: FloatArray,
    step: tuple[FloatArray, FloatArray, FloatArray, FloatArray, FloatArray, FloatArray],
    iterations: int = 8,
) -> tuple[FloatArray, FloatArray]:
    """Step again from the start of the step to each event, refining its time.

    The dense output gives the first estimate of the fraction ``theta``; a Dormand–Prince
    step of that length gives the state there, as accurate as any step end (and the ledger
    integrals see nothing beyond the event). Regula falsi (Illinois variant) on those true
    states, bracketed by the step's ends, then moves the fraction onto the root.
    """
    t0, y0, y1, f0, _, h = (part[..., cut] for part in step)
    sub = _Model(batch.core.take(cut), batch.phase.take(cut))

    def event_value(states: FloatArray, times: FloatArray) -> FloatArray:
        out = np.zeros(cut.size)
        for name in set(names.tolist()):
            mask = names == name
            out[mask] = functions[name][0](times[mask], states[:, mask], cut[mask])
        return out

    low, high = np.zeros(cut.size), np.ones(cut.size)
    g_low, g_high = event_value(y0, t0), event_value(y1, t0 + h)
    last_side = np.zeros(cut.size)
    for _ in range(iterations):
        state, _, _ = rk.dp5_step(sub, t0, y0, h * theta, f0)
        g = event_value(state, t0 + h * theta)
        same = np.sign(g) == np.sign(g_low)
        # Illinois modification: halve the value kept twice on the same side
        g_high = np.where(same & (last_side == 1), 0.5 * g_high, g_high)
        g_low = np.where(~same & (last_side == -1), 0.5 * g_low, g_low)
        low, g_low = np.where(same, theta, low), np.where(same, g, g_low)
        high, g_high = np.where(same, high, theta), np.where(same, g_high, g)
        last_side = np.where(same, 1.0, -1.0)
        denominator = np.where(g_high != g_low, g_high - g_low, 1.0)
        theta = np.clip(low - g_low * (high - low) / denominator, low, high)
    state, _, _ = rk.dp5_step(sub, t0, y0, h * theta, f0)
    return theta, state


def simulate(core: FlightCore, rtol: float = 1e-8, record: bool = False) -> Outcome:
    """Integrate a batch of flights until each one reaches its stop event.

    Parameters
    ----------
    core : FlightCore
        The flights, as SI arrays (one column per sample).
    rtol : float
        Relative tolerance of the Dormand–Prince 5(4) step control [dimensionless].
    record : bool
        Keep every accepted step of sample 0 (for trajectories and plots).

    Returns
    -------
    Outcome
        Events, maxima, stage events, ledger integrals and final states per sample.

    Notes
    -----
    Steps end exactly on scheduled changes (ignitions, burnouts, separations, thrust-curve
    breakpoints, the start and end of a timed pitch kick). Rail exit, a pitch kick by
    speed, apogee, ground impact and orbital cutoff are located by bisection on the cubic
    Hermite dense output, then refined by stepping again to the event (Illinois regula
    falsi on the integrated states), and the step ends there. Maxima of dynamic
    pressure, Mach number and acceleration are located inside steps by golden-section
    search on the dense output.
    """
    batch = _Batch(core, first_step=1e-3)
    record_ = _Recorder(core)
    atol = np.array([1e-4, 1e-4, _ATOL_SPEED, _ATOL_SPEED, 1e-9] + [_ATOL_SPEED] * 5)
    trajectory: list[tuple[float, FloatArray, FloatArray, _Phase]] = []

    def snapshot() -> None:
        first = np.zeros(1, dtype=np.int64)
        trajectory.append(
            (float(batch.t[0]), batch.y[:, 0].copy(), batch.f[:, 0].copy(), batch.phase.take(first))
        )

    _transitions(batch, np.ones(core.n, dtype=bool), record_)
    batch.refresh()
    record_.ledger_marks[0] = batch.y[_LEDGER]
    record_.speed_marks[0] = np.hypot(batch.y[VX], batch.y[VY])
    if record:
        snapshot()
    while batch.index.size:
        phase = batch.phase
        limit = np.minimum(np.minimum(phase.next_time, core.max_time), _curve_breakpoints(batch))
        kick = phase.kick_start
        limit = np.where(kick > batch.t, np.minimum(limit, kick), limit)
        kick_end = kick + batch.core.kick_duration
        limit = np.where(kick_end > batch.t, np.minimum(limit, kick_end), limit)
        h = np.clip(np.minimum(batch.h, limit - batch.t), 1e-12, None)
        t0, y0, f0 = batch.t, batch.y, batch.f
        y1, f1, error = rk.dp5_step(batch.model, t0, y0, h, f0)
        norm = rk.error_norm(error, y0, y1, rtol, atol)
        accept = norm <= 1.0
        h_next = rk.new_step_size(h, norm)
        t1 = t0 + h
        stop = np.zeros(batch.index.size, dtype=bool)
        fired = np.full(batch.index.size, "", dtype=object)
        theta_event = np.ones(batch.index.size)
        functions = _event_functions(batch)
        for name, (function, watch, direction) in functions.items():
            candidates = np.flatnonzero(accept & watch)
            if not candidates.size:
                continue
            g0 = function(t0[candidates], y0[:, candidates], candidates)
            g1 = function(t1[candidates], y1[:, candidates], candidates)
            crossed = (g0 * direction < 0) & (g1 * direction >= 0)
            if not np.any(crossed):
                continue
            hit = candidates[crossed]

            step = (t0[hit], y0[:, hit], y1[:, hit], f0[:, hit], f1[:, hit], h[hit])
            theta = rk.find_crossing(_on_step(function, step, hit), g0[crossed], g1[crossed])
            earlier = theta < theta_event[hit]
            theta_event[hit[earlier]] = theta[earlier]
            fired[hit[earlier]] = name
        cut = np.flatnonzero(fired != "")
        if cut.size:
            theta, redo = _refine_events(
                batch, functions, fired[cut], cut, theta_event[cut], (t0, y0, y1, f0, f1, h)
            )
            theta_event[cut] = theta
            y1 = y1.copy()
            y1[:, cut] = redo
            t1 = t1.copy()
            t1[cut] = t0[cut] + theta * h[cut]
            h_next = h_next.copy()
            h_next[cut] = np.maximum(h[cut] * theta, 1e-6)
        accepted = np.flatnonzero(accept)
        if accepted.size:
            h_acc = t1[accepted] - t0[accepted]
            f_end = f1[:, accepted]
            if cut.size:
                f_end = batch.model(t1, y1)[:, accepted]
            _track_maxima(
                batch,
                accepted,
                y0[:, accepted],
                y1[:, accepted],
                f0[:, accepted],
                f_end,
                t0[accepted],
                h_acc,
                record_,
            )
        record_.steps[batch.index] += accept
        batch.t = np.where(accept, t1, t0)
        batch.y = np.where(accept, y1, y0)
        batch.h = h_next
        changed = accept & (fired != "")
        for name in _TERMINAL:
            hit = np.flatnonzero(changed & (fired == name))
            if not hit.size:
                continue
            record_.event(name, batch.index[hit], batch.t[hit], batch.y[:, hit])
            if name == "rail_exit":
                phase.on_rail[hit] = False
            elif name == "kick":
                phase.kick_start[hit] = batch.t[hit]
            elif name == "apogee" and batch.core.stop_at_ground:
                pass  # recorded; the flight goes on to the ground
            elif name == "cutoff":
                phase.phase[hit] = BURNT
                phase.next_time[hit] = np.inf
                stop[hit] = True
                record_.status[batch.index[hit]] = "orbit"
            else:
                stop[hit] = True
                record_.status[batch.index[hit]] = name
        lifted_now = batch.model.rail_speed(batch.y) > 1e-9
        phase.lifted |= lifted_now
        due = batch.t >= phase.next_time
        _transitions(batch, due, record_)
        phase.risen |= batch.model.geometry(batch.y)[1] - batch.core.site_altitude > 1.0
        batch.refresh()
        orbital_burnout = (
            np.isfinite(batch.core.cutoff_energy)
            & (phase.stage == batch.core.stages - 1)
            & (phase.phase == BURNT)
            & ~stop
        )
        record_.status[batch.index[orbital_burnout]] = "burnout"
        stop = stop | orbital_burnout
        no_liftoff = ~phase.lifted & (phase.stage == 0) & (phase.phase == BURNT)
        timeout = batch.t >= core.max_time
        record_.status[batch.index[no_liftoff & ~stop]] = "no liftoff"
        record_.status[batch.index[timeout & ~stop & ~no_liftoff]] = "time limit"
        stop = stop | no_liftoff | timeout
        if record and batch.index[0] == 0 and np.any(accept[:1]):
            snapshot()
        if np.any(stop):
            done = np.flatnonzero(stop)
            original = batch.index[done]
            record_.final_time[original] = batch.t[done]
            record_.final_state[:, original] = batch.y[:, done]
            s = core.stages
            record_.ledger_marks[s][:, original] = batch.y[_LEDGER][:, done]
            record_.speed_marks[s][original] = np.hypot(batch.y[VX, done], batch.y[VY, done])
            batch.keep(~stop)
    return Outcome(
        n=core.n,
        status=record_.status.astype(str),
        final_time=record_.final_time,
        final_state=record_.final_state,
        events=record_.events,
        maxima=record_.maxima,
        ledger_marks=record_.ledger_marks,
        speed_marks=record_.speed_marks,
        steps=record_.steps,
        trajectory=trajectory,
    )
