"""The numbers a batch of flights needs, as SI arrays, and how a mission becomes them.

A :class:`FlightCore` holds one value per sample for everything a dispersion study may
change (masses, scales, launch angles, wind, the pitch programme) and the tables every
sample shares (thrust curves, drag curves, the wind profile). :func:`build_core` fills it
from a checked mission; studies then change some per-sample values. :meth:`FlightCore.pack`
lays it out as the plain arrays the compiled kernel reads (:mod:`propulsion.flight.layout`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, fields, replace
from typing import TYPE_CHECKING

import numpy as np
import numpy.typing as npt

from propulsion.atmosphere import layer_table
from propulsion.constants import EARTH_EQUATORIAL_RADIUS, EARTH_MU, EARTH_ROTATION_RATE
from propulsion.flight import layout
from propulsion.flight.steering import OrbitTarget
from propulsion.guidance import launch_azimuth
from propulsion.simplify import simplify_table
from propulsion.weather import air_table

if TYPE_CHECKING:
    from propulsion.mission import Mission

__all__ = ["DEFAULT_HOLD_SPEED", "FlightCore", "build_core"]

FloatArray = npt.NDArray[np.float64]
IntArray = npt.NDArray[np.int64]

TABLE_LIMIT = 500
"""A table (thrust curve, drag curve, wind profile) of more than this many points is
simplified before flight (:mod:`propulsion.simplify`): the core ends a step at every point,
so a 10 kHz firing log would otherwise cost a step per sample."""
CURVE_POINTS = 1000
"""At most this many points of a simplified thrust curve (the tolerance grows for a noisy
curve until it fits)."""
THRUST_TOLERANCE = 0.005
"""A simplified thrust curve stays within this fraction of its peak thrust of every point
of the original (then its total impulse is restored exactly)."""
DRAG_TOLERANCE = 0.002
"""A simplified drag curve stays within this fraction of its largest drag coefficient."""
WIND_TOLERANCE = 0.05
"""A simplified wind profile stays within this many m/s of every row, in each component."""

DEFAULT_HOLD_SPEED = 10.0
"""Air speed [m/s] below which the thrust holds its direction instead of following the
air-relative velocity: fins steer a rocket only with air flowing over them (a modelling
choice, common practice, no source)."""

# Per-sample fields (shape (n,)) and the kernel column each one fills.
_PER_SAMPLE = {
    "mass_initial": layout.P_MASS,
    "site_altitude": layout.P_SITE_ALTITUDE,
    "rail_length": layout.P_RAIL,
    "elevation": layout.P_ELEVATION,
    "azimuth": layout.P_AZIMUTH,
    "latitude": layout.P_LATITUDE,
    "omega": layout.P_OMEGA,
    "cd_scale": layout.P_CD_SCALE,
    "wind_scale": layout.P_WIND_SCALE,
    "wind_turn": layout.P_WIND_TURN,
    "wind_offset": layout.P_WIND_ALONG,
    "kick_angle": layout.P_KICK_ANGLE,
    "kick_time": layout.P_KICK_TIME,
    "kick_speed": layout.P_KICK_SPEED,
    "kick_duration": layout.P_KICK_DURATION,
    "cutoff_energy": layout.P_CUTOFF_ENERGY,
    "hold_speed": layout.P_HOLD_SPEED,
    "max_time": layout.P_MAX_TIME,
    "start_time": layout.P_START_TIME,
    "guide_a": layout.P_GUIDE_A,
    "guide_b": layout.P_GUIDE_B,
}
# Per-stage fields (shape (s, n)).
_PER_STAGE = {
    "inert": layout.S_INERT,
    "propellant": layout.S_PROPELLANT,
    "usable": layout.S_USABLE,
    "area": layout.S_AREA,
    "separation_delay": layout.S_SEPARATION_DELAY,
    "ignition_delay": layout.S_IGNITION_DELAY,
    "impulse_scale": layout.S_IMPULSE_SCALE,
    "time_scale": layout.S_TIME_SCALE,
    "thrust_vacuum": layout.S_THRUST_VACUUM,
    "exit_area": layout.S_EXIT_AREA,
    "mass_flow": layout.S_MASS_FLOW,
    "test_pressure": layout.S_TEST_PRESSURE,
}
_EARTHS = {
    "flat": layout.EARTH_FLAT,
    "round": layout.EARTH_ROUND,
    "ellipsoid": layout.EARTH_ELLIPSOID,
}
_GUIDANCE = {
    "gravity_turn": layout.GUIDE_GRAVITY_TURN,
    "linear_tangent": layout.GUIDE_LINEAR_TANGENT,
    "orbit": layout.GUIDE_ORBIT,
}


@dataclass
class FlightCore:
    """Everything the equations of motion need, as SI arrays (n samples, s stages).

    Per sample (shape (n,)): ``mass_initial`` [kg], ``site_altitude`` [m],
    ``rail_length`` [m], ``elevation`` and ``azimuth`` of the rail [rad], ``latitude``
    [rad], ``omega`` (Earth's rotation rate, 0 for a flight without rotation) [rad/s],
    ``cd_scale``, ``wind_scale``, ``wind_turn`` (the profile turned clockwise) [rad],
    ``wind_offset`` (steady wind blowing along the launch azimuth) [m/s], ``kick_angle``
    [rad], ``kick_time`` [s], ``kick_speed`` [m/s], ``kick_duration`` [s],
    ``cutoff_energy`` (orbital energy at which the last stage cuts off; NaN: burn to
    depletion) [J/kg], ``hold_speed`` [m/s], ``max_time`` [s], ``start_time`` [s],
    ``guide_a`` and ``guide_b`` (guidance "orbit": the steered stage flies tan(pitch) =
    A + B tau, tau its time since ignition over its burn time; NaN: not solved, the
    linear-tangent law is flown) and
    ``start_state`` (6, n) (an airborne start: position [m] and velocity [m/s] in the
    frame of the state).
    Per stage (shape (s, n)): ``inert``, ``propellant``, ``usable`` [kg], ``area`` [m²],
    ``separation_delay``, ``ignition_delay`` [s], ``impulse_scale``, ``time_scale``
    (motor curves), ``thrust_vacuum`` [N], ``exit_area`` [m²], ``mass_flow`` [kg/s]
    (engines, whole cluster).
    Shared: the thrust curve of each stage's cluster (time [s], thrust [N], total impulse
    [N s]), each stage's drag curve (Mach, Cd), the wind profile (height above the site
    [m], east and north components [m/s]), the air as the kernel's layer table
    (``layer_tops`` [m'] and ``layer_rows`` A, L, C, K, E: :mod:`propulsion.weather`; the
    U.S. Standard Atmosphere 1976 by default), and the settings ``earth`` ("flat",
    "round", "ellipsoid"), ``guidance``, ``stop_at_ground`` and ``airborne``.
    """

    n: int
    stage_names: tuple[str, ...]
    is_motor: tuple[bool, ...]
    steered: tuple[bool, ...]
    curve_time: tuple[FloatArray, ...]
    curve_thrust: tuple[FloatArray, ...]
    curve_impulse: tuple[float, ...]
    drag_mach: tuple[FloatArray, ...]
    drag_cd: tuple[FloatArray, ...]
    mass_initial: FloatArray
    site_altitude: FloatArray
    rail_length: FloatArray
    elevation: FloatArray
    azimuth: FloatArray
    latitude: FloatArray
    omega: FloatArray
    cd_scale: FloatArray
    wind_scale: FloatArray
    wind_turn: FloatArray
    wind_offset: FloatArray
    kick_angle: FloatArray
    kick_time: FloatArray
    kick_speed: FloatArray
    kick_duration: FloatArray
    cutoff_energy: FloatArray
    hold_speed: FloatArray
    max_time: FloatArray
    start_time: FloatArray
    guide_a: FloatArray
    guide_b: FloatArray
    start_state: FloatArray
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
    test_pressure: FloatArray
    wind_height: FloatArray = field(default_factory=lambda: np.zeros(0))
    wind_east: FloatArray = field(default_factory=lambda: np.zeros(0))
    wind_north: FloatArray = field(default_factory=lambda: np.zeros(0))
    layer_tops: FloatArray = field(default_factory=lambda: layer_table()[0])
    layer_rows: FloatArray = field(default_factory=lambda: layer_table()[1])
    earth: str = "round"
    guidance: str = "gravity_turn"
    orbit_target: OrbitTarget | None = None
    kick_chosen: bool = False
    stop_at_ground: bool = False
    airborne: bool = False
    notes: tuple[str, ...] = ()
    """What was done to the mission's tables before flight (long tables simplified)."""

    @property
    def stages(self) -> int:
        """Number of stages."""
        return len(self.stage_names)

    @property
    def round_earth(self) -> bool:
        """True unless the Earth is flat."""
        return self.earth != "flat"

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
        """The core restricted to some samples (``index`` into the sample axis)."""
        index = np.asarray(index, dtype=np.int64)
        changes: dict[str, object] = {"n": int(index.size)}
        for name in (*_PER_SAMPLE, *_PER_STAGE, "start_state"):
            changes[name] = getattr(self, name)[..., index].copy()
        return replace(self, **changes)  # type: ignore[arg-type]

    @staticmethod
    def concatenate(cores: list[FlightCore]) -> FlightCore:
        """Samples of several cores with the same shared tables, as one batch."""
        first = cores[0]
        changes: dict[str, object] = {"n": sum(core.n for core in cores)}
        for name in (*_PER_SAMPLE, *_PER_STAGE, "start_state"):
            changes[name] = np.concatenate([getattr(core, name) for core in cores], axis=-1)
        return replace(first, **changes)  # type: ignore[arg-type]

    def shared_tables_equal(self, other: FlightCore) -> bool:
        """True when both cores share the same curves, profiles and settings."""
        for item in fields(self):
            name = item.name
            if name == "n" or name in _PER_SAMPLE or name in _PER_STAGE or name == "start_state":
                continue
            mine, theirs = getattr(self, name), getattr(other, name)
            if isinstance(mine, tuple):
                if len(mine) != len(theirs):
                    return False
                for a, b in zip(mine, theirs, strict=True):
                    if not np.array_equal(np.asarray(a), np.asarray(b)):
                        return False
            elif isinstance(mine, np.ndarray):
                if not np.array_equal(mine, theirs):
                    return False
            elif mine != theirs:
                return False
        return True

    def pack(self) -> tuple[FloatArray, FloatArray, IntArray, layout.Tables]:
        """The kernel's arrays: per-sample (n, NP), per-stage (n, s, NS), settings, tables."""
        n, s = self.n, self.stages
        params = np.zeros((n, layout.NP))
        for name, column in _PER_SAMPLE.items():
            params[:, column] = getattr(self, name)
        params[:, layout.P_START_STATE : layout.P_START_STATE + 6] = self.start_state.T
        stage_params = np.zeros((n, s, layout.NS))
        for name, column in _PER_STAGE.items():
            stage_params[:, :, column] = getattr(self, name).T
        for k in range(s):
            stage_params[:, k, layout.S_IS_MOTOR] = float(self.is_motor[k])
            stage_params[:, k, layout.S_CURVE_IMPULSE] = self.curve_impulse[k]
            stage_params[:, k, layout.S_STEERED] = float(self.steered[k])
        settings = np.zeros(layout.NC, dtype=np.int64)
        settings[layout.C_EARTH] = _EARTHS[self.earth]
        settings[layout.C_STOP] = layout.STOP_GROUND if self.stop_at_ground else layout.STOP_APOGEE
        settings[layout.C_AIRBORNE] = int(self.airborne)
        settings[layout.C_STAGES] = s
        settings[layout.C_GUIDANCE] = _GUIDANCE[self.guidance]
        tops = np.ascontiguousarray(self.layer_tops, dtype=np.float64)
        rows = np.ascontiguousarray(self.layer_rows, dtype=np.float64)
        kept = [kinks_only(m, cd) for m, cd in zip(self.drag_mach, self.drag_cd, strict=True)]
        mach = tuple(
            np.asarray(m, dtype=float)[k] for m, k in zip(self.drag_mach, kept, strict=True)
        )
        cd = tuple(np.asarray(c, dtype=float)[k] for c, k in zip(self.drag_cd, kept, strict=True))
        wind = kinks_only(self.wind_height, self.wind_east, self.wind_north)
        tables = layout.Tables(
            curve_time=np.concatenate(self.curve_time).astype(np.float64),
            curve_thrust=np.concatenate(self.curve_thrust).astype(np.float64),
            curve_start=_starts(self.curve_time),
            drag_mach=np.concatenate(mach),
            drag_cd=np.concatenate(cd),
            drag_start=_starts(mach),
            wind_height=np.ascontiguousarray(self.wind_height[wind], dtype=np.float64),
            wind_east=np.ascontiguousarray(self.wind_east[wind], dtype=np.float64),
            wind_north=np.ascontiguousarray(self.wind_north[wind], dtype=np.float64),
            layer_tops=tops,
            layer_rows=rows,
        )
        return params, stage_params, settings, tables

    def start_airborne(self, height: FloatArray | float, velocity: FloatArray) -> None:
        """Start every sample in free flight ``height`` [m] above the site, at time 0.

        ``velocity`` (3,) or (3, n) is relative to the ground, in the site's east, north
        and up directions [m/s].
        """
        from propulsion.flight.kernel import site_frame

        params, _, settings, _ = self.pack()
        velocity = np.broadcast_to(np.asarray(velocity, dtype=float).reshape(3, -1), (3, self.n))
        heights = np.broadcast_to(np.asarray(height, dtype=float), (self.n,))
        state = np.zeros((6, self.n))
        frame = np.empty(layout.NF)
        for i in range(self.n):
            site_frame(params[i], int(settings[layout.C_EARTH]), frame)
            up = frame[layout.F_UP : layout.F_UP + 3]
            east = frame[layout.F_EAST : layout.F_EAST + 3]
            north = frame[layout.F_NORTH : layout.F_NORTH + 3]
            position = frame[layout.F_SITE : layout.F_SITE + 3] + heights[i] * up
            relative = velocity[0, i] * east + velocity[1, i] * north + velocity[2, i] * up
            spin = np.array([0.0, 0.0, self.omega[i]])
            state[:3, i] = position
            state[3:, i] = relative + np.cross(spin, position)
        self.start_state = state
        self.start_time = np.zeros(self.n)
        self.airborne = True


def kinks_only(x: FloatArray, *columns: FloatArray) -> npt.NDArray[np.bool_]:
    """Which points of a piecewise-linear table (held constant beyond its ends) are kinks.

    A point where the slope of every column is the same on both sides (the ends count the
    constant extension as a slope of zero) changes nothing when it is left out; the kernel
    ends a step at every point it reads, so such points would cost steps for nothing. At
    least one point is kept.
    """
    x = np.asarray(x, dtype=float)
    keep = np.zeros(x.size, dtype=bool)
    if x.size == 0:
        return keep
    for column in columns:
        y = np.asarray(column, dtype=float)
        slopes = np.zeros(x.size + 1)
        if x.size > 1:
            slopes[1:-1] = np.diff(y) / np.diff(x)
        scale = max(float(np.max(np.abs(slopes))), 1e-300)
        keep |= np.abs(np.diff(slopes)) > 1e-12 * scale
    if not keep.any():
        keep[0] = True
    return keep


def _starts(parts: tuple[FloatArray, ...]) -> IntArray:
    out = np.zeros(len(parts) + 1, dtype=np.int64)
    out[1:] = np.cumsum([len(part) for part in parts])
    return out


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
    from propulsion.vehicle import Engine, Motor

    vehicle = mission.vehicle
    flown = vehicle.stages if stages is None else vehicle.stages[:stages]
    s = len(flown)
    ones = np.ones(n)

    def per_stage(values: list[float]) -> FloatArray:
        return np.repeat(np.asarray(values, dtype=float)[:, None], n, axis=1)

    curve_time, curve_thrust, curve_impulse = [], [], []
    thrust_vacuum, exit_area, mass_flow, test_pressure = [], [], [], []
    drag_mach, drag_cd, area = [], [], []
    notes: list[str] = []
    for stage in flown:
        prop = stage.propulsion
        if isinstance(prop, Motor):
            time, thrust = _flight_curve(stage.name, prop.time, prop.thrust, notes)
            curve_time.append(time)
            curve_thrust.append(stage.count * thrust)
            curve_impulse.append(stage.count * prop.total_impulse)
            thrust_vacuum.append(0.0)
            # a motor file that gives its nozzle exit: the curve is moved from the test
            # pressure to the ambient one in flight (the kernel's thrust equation)
            exit_area.append(stage.count * prop.exit_area)
            mass_flow.append(0.0)
            test_pressure.append(prop.test_pressure)
        else:
            assert isinstance(prop, Engine)
            curve_time.append(np.zeros(2))
            curve_thrust.append(np.zeros(2))
            curve_impulse.append(0.0)
            thrust_vacuum.append(stage.count * prop.thrust_vacuum)
            exit_area.append(stage.count * prop.exit_area)
            mass_flow.append(stage.count * prop.mass_flow)
            test_pressure.append(0.0)
        if stage.drag_curve is not None and stage.diameter is not None:
            cd = np.asarray(stage.drag_curve.drag_coefficient, dtype=float)
            table = simplify_table(
                np.asarray(stage.drag_curve.mach, dtype=float),
                cd,
                DRAG_TOLERANCE * max(float(np.max(np.abs(cd))), 1e-12),
                TABLE_LIMIT,
                TABLE_LIMIT,
            )
            if table.simplified:
                notes.append(
                    f"the drag curve of {stage.name} ({table.original_points:,} points) is "
                    f"flown as {table.x.size:,} points, within {table.tolerance:.3g} of its "
                    "drag coefficient"
                )
            drag_mach.append(table.x)
            drag_cd.append(table.y)
            area.append(math.pi * stage.diameter**2 / 4)
        else:
            drag_mach.append(np.array([0.0, 1.0]))
            drag_cd.append(np.zeros(2))
            area.append(0.0)
    above = vehicle.payload_mass + sum(stage.mass for stage in vehicle.stages[s:])
    launch = mission.launch
    settings = mission.flight
    azimuth = launch.azimuth if launch.azimuth is not None else 0.0
    latitude = launch.latitude if launch.latitude is not None else 0.0
    rotation = launch.rotation
    cutoff = math.nan
    orbit_target = None
    if mission.legs and mission.legs[0].target == "circular_orbit":
        first = mission.legs[0].fields
        radius = EARTH_EQUATORIAL_RADIUS + first["altitude"]
        # a circle, or an ellipse entered at its perigee (the leg's apogee_altitude)
        far = EARTH_EQUATORIAL_RADIUS + first.get("apogee_altitude", first["altitude"])
        cutoff = -EARTH_MU / (radius + far)
        inclination = first.get("inclination")
        if inclination is not None and launch.latitude is not None:
            # the azimuth that reaches the inclination over the rotating Earth (the
            # guidance then solves it exactly); the loader checked it is reachable
            speed = math.sqrt(EARTH_MU * (2.0 / radius - 2.0 / (radius + far)))
            azimuth = launch_azimuth(inclination, launch.latitude, speed).flown
            rotation = True
        if settings.guidance == "orbit":
            orbit_target = OrbitTarget(radius, far, inclination)
    omega = EARTH_ROTATION_RATE if rotation and settings.earth != "flat" else 0.0
    air = air_table(launch.air, launch.altitude)
    notes.extend(air.notes)
    wind_heights, wind_east, wind_north = launch.wind_components()
    profile = simplify_table(
        np.asarray(wind_heights, dtype=float),
        np.column_stack([wind_east, wind_north]) if len(wind_heights) else np.zeros((0, 2)),
        WIND_TOLERANCE,
        TABLE_LIMIT,
        TABLE_LIMIT,
    )
    if profile.simplified:
        notes.append(
            f"the wind profile ({profile.original_points:,} rows) is flown as "
            f"{profile.x.size:,} rows, within {profile.tolerance:.3g} m/s of every wind"
        )
    core = FlightCore(
        n=n,
        stage_names=tuple(stage.name for stage in flown),
        is_motor=tuple(stage.is_motor for stage in flown),
        steered=tuple(k > 0 for k in range(s)),
        curve_time=tuple(curve_time),
        curve_thrust=tuple(curve_thrust),
        curve_impulse=tuple(curve_impulse),
        drag_mach=tuple(drag_mach),
        drag_cd=tuple(drag_cd),
        mass_initial=ones * (above + sum(stage.mass for stage in flown)),
        site_altitude=ones * launch.altitude,
        rail_length=ones * (launch.rail_length or 0.0),
        elevation=ones * launch.elevation,
        azimuth=ones * azimuth,
        latitude=ones * latitude,
        omega=ones * omega,
        cd_scale=ones * vehicle.drag_scale,
        wind_scale=ones * launch.wind_scale,
        wind_turn=ones * launch.wind_turn,
        wind_offset=ones * launch.wind_offset,
        kick_angle=ones * settings.pitch_kick_angle,
        kick_time=ones
        * (settings.pitch_kick_time if settings.pitch_kick_time is not None else math.inf),
        kick_speed=ones
        * (settings.pitch_kick_speed if settings.pitch_kick_speed is not None else math.inf),
        kick_duration=ones * settings.pitch_kick_duration,
        cutoff_energy=ones * cutoff,
        hold_speed=ones * settings.hold_speed,
        max_time=ones * settings.max_time,
        start_time=np.zeros(n),
        guide_a=np.full(n, math.nan),
        guide_b=np.full(n, math.nan),
        start_state=np.zeros((6, n)),
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
        test_pressure=per_stage(test_pressure),
        wind_height=profile.x,
        wind_east=np.ascontiguousarray(profile.y[:, 0]),
        wind_north=np.ascontiguousarray(profile.y[:, 1]),
        layer_tops=air.tops,
        layer_rows=air.rows,
        earth=settings.earth,
        guidance=settings.guidance,
        orbit_target=orbit_target,
        stop_at_ground=settings.stop_at == "ground",
        airborne=False,
        notes=tuple(notes),
    )
    if settings.kick_chosen and orbit_target is not None:
        # the file leaves the kick angle open: the one that leaves the most propellant
        from propulsion.flight.steering import choose_kick

        core.kick_angle[:] = choose_kick(core.take(np.zeros(1, dtype=np.int64)))
        core.kick_chosen = True
    return core


def _flight_curve(
    name: str, time: FloatArray, thrust: FloatArray, notes: list[str]
) -> tuple[FloatArray, FloatArray]:
    """A motor's thrust curve as the core flies it: a curve of more than ``TABLE_LIMIT``
    points thinned to within ``THRUST_TOLERANCE`` of its peak thrust (at most
    ``CURVE_POINTS`` points) and scaled back to its total impulse exactly (trapezoid rule,
    as the piecewise-linear curve is flown)."""
    time = np.asarray(time, dtype=float)
    thrust = np.asarray(thrust, dtype=float)
    table = simplify_table(
        time, thrust, THRUST_TOLERANCE * float(np.max(thrust)), TABLE_LIMIT, CURVE_POINTS
    )
    if not table.simplified:
        return time, thrust
    impulse = float(np.sum(0.5 * (thrust[1:] + thrust[:-1]) * np.diff(time)))
    kept = float(np.sum(0.5 * (table.y[1:] + table.y[:-1]) * np.diff(table.x)))
    scale = impulse / kept if kept > 0 else 1.0
    notes.append(
        f"the thrust curve of {name} ({table.original_points:,} points) is flown as "
        f"{table.x.size:,} points, within {table.tolerance:.3g} N of every point, its total "
        f"impulse kept (scaled by {scale:.6f})"
    )
    return table.x, table.y * scale
