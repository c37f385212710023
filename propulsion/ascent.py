"""The flight runner: fly a mission's ascent and turn the kernel's outcome into a ledger.

:func:`fly` integrates the stages of the first leg with :mod:`propulsion.flight`, then
builds the delta-v ledger (ideal plus the Earth-rotation credit minus gravity, drag,
steering, back-pressure and pad losses equals the change of speed, per stage and in
total), the events a team checks, and flight warnings, and hands the outcome to
:mod:`propulsion.margins` for the verdict and its three margins (target, propulsion,
payload). It reads only :class:`propulsion.flight.Outcome`: every number of the flight is
derived in the kernel.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass, field, replace
from typing import TYPE_CHECKING, Any

import numpy as np

from propulsion import flight
from propulsion.constants import EARTH_EQUATORIAL_RADIUS, EARTH_MU, STANDARD_GRAVITY
from propulsion.flight import layout
from propulsion.impacts import Impact, dropped_stage_impacts
from propulsion.ledger import Rows, budget
from propulsion.margins import (
    MIN_PERIGEE,
    FlightVerdict,
    Target,
    judge_flight,
    perigee_altitude,
)
from propulsion.mission import Mission
from propulsion.plausibility import Finding

if TYPE_CHECKING:
    import pandas as pd

__all__ = [
    "FlightEvent",
    "FlightResult",
    "FlightVerdict",
    "LossLedger",
    "Orbit",
    "flown_stages",
    "fly",
    "osculating_orbit",
]

FloatArray = flight.state.FloatArray

# Rules of thumb for the flight warnings (each with its source in the finding).
RAIL_EXIT_SPEED_MIN = 15.0
"""Usual minimum rail exit speed [m/s] for fin-stabilised rockets (common practice, no source)."""
TRANSONIC_MACH = 0.8
"""Mach number above which the flow is transonic and a rough drag curve is least certain."""
SHORT_LIFE_PERIGEE = 150e3
"""Perigee altitude [m] below which an orbit decays within days (common practice, no source)."""
WAIVER_APOGEE = 3000.0
"""Apogee above the launch site [m] beyond which flights usually need an airspace authorisation."""
LEDGER_SCALE_FLOOR = 100.0
"""Smallest delta-v [m/s] the ledger's resolution is taken of (a tiny flight's ledger is
still resolved no finer than rtol times this)."""
IGNITION_TILT_MAX = math.radians(20.0)
"""Largest tilt from the vertical [rad] at which an unguided upper stage should light: flight-
safety codes commonly ask for an upper stage to light only within about 20 degrees of
vertical (common practice in flight-safety codes, no source)."""


@dataclass(frozen=True)
class Orbit:
    """Osculating orbit of a state (two-body, Earth's GM), altitudes above the equatorial radius."""

    semi_major_axis: float
    eccentricity: float
    perigee_altitude: float
    apogee_altitude: float
    specific_energy: float
    angular_momentum: float
    inclination: float = math.nan


def osculating_orbit(
    position: FloatArray | tuple[float, ...],
    velocity: FloatArray | tuple[float, ...],
    mu: float = EARTH_MU,
) -> Orbit:
    """Osculating orbit of an inertial state: semi-major axis, eccentricity, apsis altitudes.

    Parameters
    ----------
    position : array of 3 floats
        Position from Earth's centre, inertial frame [m].
    velocity : array of 3 floats
        Inertial velocity [m/s].
    mu : float
        Gravitational parameter [m³/s²].

    Returns
    -------
    Orbit
        Elements [m, dimensionless, m, m, J/kg, m²/s, rad]; the apogee altitude is infinite
        for an escape orbit. A body moving straight up or down (zero angular momentum,
        eccentricity 1) has its apogee at 2a - r_p, with r_p = 0.

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2013,
       eqs. 2.80 (energy), 2.31 (angular momentum), 2.21 (conic radius), 2.73 (apsides)
       and Algorithm 4.2 (inclination).
    """
    r = np.asarray(position, dtype=float)
    v = np.asarray(velocity, dtype=float)
    radius = float(np.linalg.norm(r))
    energy = 0.5 * float(v @ v) - mu / radius
    h = np.cross(r, v)
    momentum = float(np.linalg.norm(h))
    eccentricity = math.sqrt(max(0.0, 1.0 + 2.0 * energy * momentum**2 / mu**2))
    semi_major = -mu / (2.0 * energy) if energy < 0 else math.inf
    perigee = momentum**2 / mu / (1.0 + eccentricity)
    # r_a = 2a - r_p holds for every ellipse, the degenerate straight line included
    apogee = math.inf if energy >= 0 else 2.0 * semi_major - perigee
    inclination = math.acos(max(-1.0, min(1.0, h[2] / momentum))) if momentum > 0 else math.nan
    return Orbit(
        semi_major_axis=semi_major,
        eccentricity=eccentricity,
        perigee_altitude=perigee - EARTH_EQUATORIAL_RADIUS,
        apogee_altitude=apogee - EARTH_EQUATORIAL_RADIUS,
        specific_energy=energy,
        angular_momentum=momentum,
        inclination=inclination,
    )


@dataclass(frozen=True)
class FlightEvent:
    """One event of the flight, with the state there (SI).

    ``speed`` is relative to the ground (the rotating Earth, without wind);
    ``inertial_speed`` is the speed in the inertial frame. ``downrange`` and
    ``crossrange`` are measured from the launch site along and across the launch azimuth
    (crossrange positive to the right).
    """

    name: str
    time: float
    altitude: float
    speed: float
    mach: float
    acceleration: float
    dynamic_pressure: float
    inertial_speed: float = math.nan
    downrange: float = math.nan
    crossrange: float = math.nan

    def to_dict(self) -> dict[str, Any]:
        """Fields keyed with SI unit suffixes."""
        return {
            "name": self.name,
            "time_s": self.time,
            "altitude_m": self.altitude,
            "speed_m_s": self.speed,
            "inertial_speed_m_s": self.inertial_speed,
            "mach": self.mach,
            "acceleration_g": self.acceleration / STANDARD_GRAVITY,
            "dynamic_pressure_pa": self.dynamic_pressure,
            "downrange_m": self.downrange,
            "crossrange_m": self.crossrange,
        }


@dataclass(frozen=True)
class LossLedger:
    """Delta-v ledger of one stage's segment of the flight, or of the whole flight (m/s).

    A stage's segment runs from its ignition to the next stage's ignition (the last one
    to the end of the flight), so coasts count with the stage before them. ``achieved``
    is the change of the ledger's speed: relative to the rotating Earth while the vehicle
    is in the atmosphere, inertial once it has left it (the difference of the two at that
    moment is part of ``rotation_credit``).
    """

    segment: str
    ideal: float
    gravity_loss: float
    drag_loss: float
    steering_loss: float
    pressure_loss: float
    achieved: float
    rotation_credit: float = 0.0
    pad_loss: float = 0.0

    @property
    def closure(self) -> float:
        """Ideal plus credit minus losses minus achieved [m/s]: zero but for integration error."""
        losses = (
            self.gravity_loss
            + self.drag_loss
            + self.steering_loss
            + self.pressure_loss
            + self.pad_loss
        )
        return self.ideal + self.rotation_credit - losses - self.achieved

    def cleaned(self, resolution: float) -> LossLedger:
        """A copy with every term within ``resolution`` [m/s] of zero set to 0: a loss of
        -5e-15 m/s is round-off, not a result. The closure is left to show the rest."""

        def clean(value: float) -> float:
            return 0.0 if abs(value) <= resolution else value

        return replace(
            self,
            ideal=clean(self.ideal),
            gravity_loss=clean(self.gravity_loss),
            drag_loss=clean(self.drag_loss),
            steering_loss=clean(self.steering_loss),
            pressure_loss=clean(self.pressure_loss),
            achieved=clean(self.achieved),
            rotation_credit=clean(self.rotation_credit),
            pad_loss=clean(self.pad_loss),
        )

    def to_dict(self) -> dict[str, Any]:
        """Fields keyed with SI unit suffixes."""
        return {
            "segment": self.segment,
            "ideal_m_s": self.ideal,
            "rotation_credit_m_s": self.rotation_credit,
            "gravity_loss_m_s": self.gravity_loss,
            "drag_loss_m_s": self.drag_loss,
            "steering_loss_m_s": self.steering_loss,
            "pressure_loss_m_s": self.pressure_loss,
            "pad_loss_m_s": self.pad_loss,
            "achieved_m_s": self.achieved,
            "closure_m_s": self.closure,
        }


@dataclass(frozen=True)
class StageFlight:
    """A stage's ignition and burnout as flown (SI)."""

    name: str
    ignition_time: float
    burnout_time: float
    burnout_altitude: float
    burnout_speed: float
    burnout_mach: float
    ignition_vertical_speed: float = math.nan
    ignition_air_speed: float = math.nan
    ignition_tilt: float = math.nan

    def to_dict(self) -> dict[str, Any]:
        """Fields keyed with SI unit suffixes."""
        return {
            "name": self.name,
            "ignition_time_s": self.ignition_time,
            "burnout_time_s": self.burnout_time,
            "burnout_altitude_m": self.burnout_altitude,
            "burnout_speed_m_s": self.burnout_speed,
            "burnout_mach": self.burnout_mach,
            "ignition_vertical_speed_m_s": self.ignition_vertical_speed,
            "ignition_air_speed_m_s": self.ignition_air_speed,
            "ignition_tilt_deg": math.degrees(self.ignition_tilt),
        }


@dataclass
class FlightResult:
    """The flown ascent: trajectory, events, loss ledger, verdict and warnings (SI)."""

    mission: Mission
    outcome: flight.Outcome = field(repr=False)
    events: Rows[FlightEvent]
    ledger: Rows[LossLedger]
    stages: Rows[StageFlight]
    verdict: FlightVerdict
    findings: tuple[Finding, ...]
    status: str
    apogee: float
    apogee_time: float
    max_dynamic_pressure: float
    max_mach: float
    max_acceleration: float
    rail_exit_speed: float
    orbit: Orbit | None
    compute_time: float
    apogee_downrange: float = math.nan
    apogee_crossrange: float = math.nan
    landing: tuple[float, float] | None = None
    """Where the flight came down, (east, north) from the site [m], when it flew to the
    ground."""
    rtol: float = 1e-8
    """Relative tolerance the flight was integrated to."""
    impacts: tuple[Impact, ...] = ()
    guidance: GuidedAscent | None = None
    """Where things came down: every dropped stage, falling on its own without recovery,
    and the vehicle itself when the mission flies to the ground (in the order they land
    on the list: dropped stages first)."""

    @property
    def resolution(self) -> float:
        """The smallest ledger figure [m/s] that is not integration noise.

        The integrator holds each ledger integral to about ``rtol`` of the delta-v at
        stake: rtol times the ideal delta-v (at least 100 m/s). A term within it of zero
        is shown as 0, and the closure as a bound below it.
        """
        return self.rtol * max(abs(self.ledger[-1].ideal), LEDGER_SCALE_FLOOR)

    def clean_ledger(self) -> list[LossLedger]:
        """The ledger with round-off (terms within :attr:`resolution` of zero) set to 0."""
        resolution = self.resolution
        return [row.cleaned(resolution) for row in self.ledger]

    @property
    def total(self) -> LossLedger:
        """The whole-flight ledger row."""
        return self.ledger[-1]

    @property
    def trajectory(self) -> pd.DataFrame:
        """Every accepted step of the flight as a table (SI; unit suffixes in the column
        names). Built on first use: pandas is imported only when it is needed."""
        cached = self.__dict__.get("_trajectory")
        if cached is None:
            cached = _trajectory(self.outcome)
            self.__dict__["_trajectory"] = cached
        return cached

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready results with SI unit suffixes in the keys."""
        total = self.total.cleaned(self.resolution)
        return {
            "mission": self.mission.name,
            "source": self.mission.source,
            "status": self.status,
            "apogee_m": self.apogee,
            "apogee_time_s": self.apogee_time,
            "apogee_downrange_m": self.apogee_downrange,
            "apogee_crossrange_m": self.apogee_crossrange,
            "landing_east_m": None if self.landing is None else self.landing[0],
            "landing_north_m": None if self.landing is None else self.landing[1],
            "impacts": [impact.to_dict() for impact in self.impacts],
            "max_dynamic_pressure_pa": self.max_dynamic_pressure,
            "max_mach": self.max_mach,
            "max_acceleration_g": self.max_acceleration / STANDARD_GRAVITY,
            "rail_exit_speed_m_s": self.rail_exit_speed,
            "stages": [row.to_dict() for row in self.stages],
            "ledger": {
                "ideal_m_s": total.ideal,
                "rotation_credit_m_s": total.rotation_credit,
                "gravity_loss_m_s": total.gravity_loss,
                "drag_loss_m_s": total.drag_loss,
                "steering_loss_m_s": total.steering_loss,
                "pressure_loss_m_s": total.pressure_loss,
                "pad_loss_m_s": total.pad_loss,
                "achieved_m_s": total.achieved,
                "closure_m_s": self.total.closure,
                "resolution_m_s": self.resolution,
                "segments": [
                    {**row.cleaned(self.resolution).to_dict(), "closure_m_s": row.closure}
                    for row in self.ledger[:-1]
                ],
            },
            "events": [event.to_dict() for event in self.events],
            "orbit": None
            if self.orbit is None
            else {
                "perigee_altitude_m": self.orbit.perigee_altitude,
                "apogee_altitude_m": self.orbit.apogee_altitude,
                "eccentricity": self.orbit.eccentricity,
                "semi_major_axis_m": self.orbit.semi_major_axis,
                "inclination_deg": math.degrees(self.orbit.inclination),
            },
            "guidance": None if self.guidance is None else self.guidance.to_dict(),
            **self.verdict.to_dict(),
            "warnings": [finding.__dict__ for finding in self.findings],
            "compute_time_s": self.compute_time,
        }


@dataclass(frozen=True)
class GuidedAscent:
    """How guidance to an orbit flew (SI): the pitch kick [rad] and whether `fly` chose
    it, the azimuth flown relative to the ground and its inertial value [rad], the
    steering law's ``guide_a``/``guide_b``, the target's perigee, apogee [m above the
    equatorial radius] and inclination [rad] (NaN: none) against what was reached, the
    propellant left in the last stage at cutoff [kg], and the solve's iterations and
    convergence."""

    kick_angle: float
    kick_chosen: bool
    azimuth: float
    inertial_azimuth: float
    guide_a: float
    guide_b: float
    target_perigee: float
    target_apogee: float
    target_inclination: float
    perigee: float
    apogee: float
    inclination: float
    propellant_left: float
    converged: bool
    iterations: int

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready (SI, angles in degrees)."""
        return {
            "pitch_kick_deg": math.degrees(self.kick_angle),
            "pitch_kick_chosen": self.kick_chosen,
            "azimuth_deg": math.degrees(self.azimuth),
            "inertial_azimuth_deg": math.degrees(self.inertial_azimuth),
            "steering_a": self.guide_a,
            "steering_b": self.guide_b,
            "target_perigee_altitude_m": self.target_perigee,
            "target_apogee_altitude_m": self.target_apogee,
            "target_inclination_deg": _degrees_or_none(self.target_inclination),
            "perigee_altitude_m": self.perigee,
            "apogee_altitude_m": self.apogee,
            "inclination_deg": _degrees_or_none(self.inclination),
            "propellant_left_kg": self.propellant_left,
            "converged": self.converged,
            "iterations": self.iterations,
        }


def _degrees_or_none(angle: float) -> float | None:
    return math.degrees(angle) if math.isfinite(angle) else None


def guided_ascent(core: flight.FlightCore, outcome: flight.Outcome) -> GuidedAscent | None:
    """Sample 0's guidance summary, or None when the flight was not guided to an orbit."""
    target = core.orbit_target
    if target is None or "guide_a" not in outcome.extra:
        return None
    from propulsion.flight.steering import insertion

    last = core.stages - 1
    final = outcome.state("final")[:1]
    ignition = float(outcome.state(f"ignition:{last}")[0, layout.Y_M])
    burnt = ignition - float(final[0, layout.Y_M]) if math.isfinite(ignition) else 0.0
    left = max(float(core.usable[last, 0]) - burnt, 0.0)
    _, _, inclination = insertion(final)
    orbit = osculating_orbit(
        final[0, layout.Y_R : layout.Y_R + 3], final[0, layout.Y_V : layout.Y_V + 3]
    )
    azimuth = float(outcome.extra["guide_azimuth"][0])
    inertial = math.nan
    if core.omega[0] != 0.0 or target.inclination is not None:
        from propulsion.guidance import InclinationError, inertial_azimuth

        try:
            inertial = (
                inertial_azimuth(target.inclination, float(core.latitude[0]))
                if target.inclination is not None
                else math.nan
            )
        except InclinationError:
            inertial = math.nan
    return GuidedAscent(
        kick_angle=float(core.kick_angle[0]),
        kick_chosen=core.kick_chosen,
        azimuth=azimuth,
        inertial_azimuth=inertial,
        guide_a=float(outcome.extra["guide_a"][0]),
        guide_b=float(outcome.extra["guide_b"][0]),
        target_perigee=target.perigee_radius - EARTH_EQUATORIAL_RADIUS,
        target_apogee=target.apogee_radius - EARTH_EQUATORIAL_RADIUS,
        target_inclination=target.inclination if target.inclination is not None else math.nan,
        perigee=orbit.perigee_altitude,
        apogee=orbit.apogee_altitude,
        inclination=float(inclination[0]),
        propellant_left=left if outcome.status[0] == "orbit" else 0.0,
        converged=bool(outcome.extra["guide_converged"][0] > 0.5),
        iterations=int(outcome.extra["guide_iterations"][0]),
    )


def flown_stages(mission: Mission) -> int:
    """How many stages (from the bottom) fly the first leg; all when there are no legs."""
    if not mission.legs:
        return len(mission.vehicle.stages)
    return mission.vehicle.stage_index(mission.legs[0].stages[-1]) + 1


def tune_kick(
    mission: Mission,
    span: float = math.radians(6.0),
    count: int = 49,
    core: flight.FlightCore | None = None,
) -> tuple[float, float]:
    """The pitch kick angle that leaves the most delta-v after an orbital ascent.

    One batched flight over ``count`` kick angles within ``span`` [rad] either side of
    the mission's own (of sample 0 of ``core`` when given: a vehicle with a margin held
    back, say); an ascent counts only when its perigee is at least ``MIN_PERIGEE``, and
    those whose perigee and apogee lie within the target's tolerance band come first.
    Returns (angle [rad], delta-v left beyond the later legs [m/s]); the delta-v is -inf
    when no angle reaches the orbit.
    """
    if core is None:
        core = flight.build_core(mission, flown_stages(mission))
    target = Target(mission, core)
    if target.kind != "circular_orbit":
        raise ValueError("kick tuning is for circular_orbit targets")
    low = max(core.kick_angle[0] - span, math.radians(0.1))
    high = core.kick_angle[0] + span
    best_angle, best_margin = float(core.kick_angle[0]), -math.inf
    # a coarse pass over the span, then a fine one across the best coarse angle's
    # neighbours: the orbit's shape changes fast with the kick (tenths of a degree move
    # the perigee by tens of kilometres)
    for _ in range(2):
        angles = np.linspace(low, high, count)
        batch = core.take(np.zeros(count, dtype=np.int64))
        batch.kick_angle = angles
        outcome = flight.simulate(batch)
        margins = target.energy_margin(batch, outcome)
        reached = (outcome.status == "orbit") & (
            perigee_altitude(outcome.state("final")) >= MIN_PERIGEE
        )
        if not np.any(reached):
            break
        # prefer the angles whose orbit lies within the target's tolerance band
        band = target.judge(batch, outcome).target_margin
        in_band = reached & np.isfinite(band) & (band >= 0)
        candidates = in_band if np.any(in_band) else reached
        best = int(np.argmax(np.where(candidates, margins, -np.inf)))
        best_angle, best_margin = float(angles[best]), float(margins[best])
        step = (high - low) / max(count - 1, 1)
        low, high = max(best_angle - step, math.radians(0.1)), best_angle + step
    return best_angle, best_margin


def bad_ignitions(core: flight.FlightCore, outcome: flight.Outcome) -> np.ndarray:
    """Per sample: did an unguided upper stage light descending, too slow to steer, or
    tilted more than ``IGNITION_TILT_MAX`` from vertical? (See the flight warnings.)"""
    flagged = np.zeros(outcome.n, dtype=bool)
    guided = core.guidance != "gravity_turn"
    for k in range(1, core.stages):
        if guided and core.steered[k]:
            continue
        key = f"ignition:{k}"
        lit = outcome.happened(key)
        bad = (
            (outcome.value(key, "vertical_speed") < 0)
            | (outcome.value(key, "air_speed") < core.hold_speed)
            | (outcome.value(key, "tilt") > IGNITION_TILT_MAX)
        )
        flagged |= lit & bad
    return flagged


def _event(outcome: flight.Outcome, name: str, key: str) -> FlightEvent | None:
    """The event ``key`` of sample 0 as a row, or None if it did not happen."""
    if not outcome.happened(key)[0]:
        return None

    def value(quantity: str) -> float:
        return float(outcome.value(key, quantity)[0])

    return FlightEvent(
        name=name,
        time=float(outcome.time(key)[0]),
        altitude=value("altitude"),
        speed=value("ground_speed"),
        inertial_speed=value("inertial_speed"),
        mach=value("mach"),
        acceleration=value("acceleration"),
        dynamic_pressure=value("dynamic_pressure"),
        downrange=value("downrange"),
        crossrange=value("crossrange"),
    )


def _trajectory(outcome: flight.Outcome) -> pd.DataFrame:
    """The recorded steps of sample 0 as a table (SI, unit suffixes in the column names)."""
    import pandas as pd

    path = outcome.trajectory
    assert path is not None
    stage = np.searchsorted(_separation_times(outcome), path.time, side="right")
    names = [outcome.stage_names[min(int(k), outcome.stages - 1)] for k in stage]
    return pd.DataFrame(
        {
            "time_s": path.time,
            "altitude_m": path["altitude"],
            "downrange_m": path["downrange"],
            "crossrange_m": path["crossrange"],
            "east_m": path["east"],
            "north_m": path["north"],
            "speed_m_s": path["ground_speed"],
            "inertial_speed_m_s": path["inertial_speed"],
            "vertical_speed_m_s": path["vertical_speed"],
            "mach": path["mach"],
            "dynamic_pressure_pa": path["dynamic_pressure"],
            "acceleration_g": path["acceleration"] / STANDARD_GRAVITY,
            "flight_path_angle_deg": np.degrees(path["flight_path_angle"]),
            "mass_kg": path["mass"],
            "stage": names,
        }
    )


def _separation_times(outcome: flight.Outcome) -> FloatArray:
    times = [float(outcome.time(f"separation:{k}")[0]) for k in range(outcome.stages - 1)]
    return np.array([t if math.isfinite(t) else math.inf for t in times])


def fly(mission: Mission, rtol: float = 1e-8, margin: bool = True) -> FlightResult:
    """Integrate the ascent of a mission and build its delta-v ledger, events and verdict.

    Parameters
    ----------
    mission : Mission
        A checked mission. The stages of its first leg fly (all stages when it has none).
    rtol : float
        Relative tolerance of the integrator [dimensionless].
    margin : bool
        Find the propulsion and payload margins by root finding on the flight (a few
        more batches of flights); without, the verdict judges the target alone.

    Returns
    -------
    FlightResult
        SI results: ``trajectory`` (pandas DataFrame), ``events``, ``ledger`` (per stage
        segment and total), ``verdict``, ``findings``.

    Notes
    -----
    Ideal delta-v is the integral of vacuum thrust over mass. While the vehicle is in the
    atmosphere, the losses are taken along its velocity relative to the rotating Earth,
    as the textbooks take them [1]: gravity loss the integral of g sin(flight-path
    angle), drag loss the integral of the drag's component along the velocity over
    mass, steering loss the integral of (thrust / mass)(1 - cos(angle between thrust
    and velocity)), back-pressure loss the integral of ambient pressure times exit area
    over mass. Once the vehicle leaves the atmosphere the same integrals follow the
    inertial velocity, and the difference of the inertial and Earth-relative speeds at
    that moment (with the small centrifugal term before it) is the Earth-rotation
    credit. Thrust spent while the pad still holds the vehicle is the pad loss.

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2013,
       section 11.2, eq. 11.8 and following (the delta-v losses of a launch).
    """
    core = flight.build_core(mission, flown_stages(mission))
    outcome = flight.simulate(core, rtol=rtol, record=True)
    compute_time = outcome.compute_time
    events: list[FlightEvent | None] = [
        _event(outcome, "liftoff", "liftoff"),
        _event(outcome, "rail exit", "rail_exit"),
    ]
    for k, name in enumerate(core.stage_names):
        if k > 0:
            events.append(_event(outcome, f"{name} ignition", f"ignition:{k}"))
        events.append(_event(outcome, f"{name} burnout", f"burnout:{k}"))
        if k < core.stages - 1:
            events.append(_event(outcome, f"{name} separation", f"separation:{k}"))
    events += [
        _event(outcome, "engine cutoff (orbit)", "cutoff"),
        _event(outcome, "max dynamic pressure", "max_dynamic_pressure"),
        _event(outcome, "max Mach", "max_mach"),
        _event(outcome, "max acceleration", "max_acceleration"),
        _event(outcome, "leaves the atmosphere", "left_atmosphere"),
        _event(outcome, "apogee", "apogee"),
        _event(outcome, "ground impact", "ground"),
    ]
    rows = sorted((event for event in events if event is not None), key=lambda e: e.time)

    ledger = _ledger(core, outcome)
    stages = []
    for k, name in enumerate(core.stage_names):
        burnout = f"burnout:{k}"
        ignition = f"ignition:{k}"
        stages.append(
            StageFlight(
                name=name,
                ignition_time=float(outcome.time(ignition)[0]),
                burnout_time=float(outcome.time(burnout)[0]),
                burnout_altitude=float(outcome.value(burnout, "altitude")[0]),
                burnout_speed=float(outcome.value(burnout, "ground_speed")[0]),
                burnout_mach=float(outcome.value(burnout, "mach")[0]),
                ignition_vertical_speed=float(outcome.value(ignition, "vertical_speed")[0]),
                ignition_air_speed=float(outcome.value(ignition, "air_speed")[0]),
                ignition_tilt=float(outcome.value(ignition, "tilt")[0]),
            )
        )
    status = str(outcome.status[0])
    orbit = None
    if core.round_earth and status in ("orbit", "burnout"):
        final = outcome.state("final")[0]
        orbit = osculating_orbit(
            final[layout.Y_R : layout.Y_R + 3], final[layout.Y_V : layout.Y_V + 3]
        )
    verdict = judge_flight(mission, core, outcome, margins=margin, rtol=rtol)
    landing = None
    impacts: list[Impact] = []
    if outcome.happened("ground")[0]:
        landing = (
            float(outcome.value("ground", "east")[0]),
            float(outcome.value("ground", "north")[0]),
        )
        impacts.append(
            Impact(
                core.stage_names[-1] if core.stages > 1 else "vehicle",
                landing[0],
                landing[1],
                float(outcome.time("ground")[0]),
                float(outcome.value("ground", "ground_speed")[0]),
            )
        )
    # every dropped stage falls on its own, without recovery, to the ground
    for name, (east, north, time, speed) in dropped_stage_impacts(core, outcome, rtol).items():
        if math.isfinite(east[0]):
            impacts.insert(
                len(impacts) - (1 if landing else 0),
                Impact(name, float(east[0]), float(north[0]), float(time[0]), float(speed[0])),
            )
    result = FlightResult(
        mission=mission,
        outcome=outcome,
        events=Rows(rows),
        ledger=Rows(ledger),
        stages=Rows(stages),
        verdict=verdict,
        findings=(),
        status=status,
        apogee=float(outcome.value("apogee", "altitude")[0]),
        apogee_time=float(outcome.time("apogee")[0]),
        apogee_downrange=float(outcome.value("apogee", "downrange")[0]),
        apogee_crossrange=float(outcome.value("apogee", "crossrange")[0]),
        max_dynamic_pressure=float(outcome.value("max_dynamic_pressure", "dynamic_pressure")[0]),
        max_mach=float(outcome.value("max_mach", "mach")[0]),
        max_acceleration=float(outcome.value("max_acceleration", "acceleration")[0]),
        rail_exit_speed=float(outcome.value("rail_exit", "ground_speed")[0]),
        orbit=orbit,
        guidance=guided_ascent(core, outcome),
        compute_time=compute_time,
        rtol=rtol,
        landing=landing,
        impacts=tuple(impacts),
    )
    # the liftoff thrust-to-weight rule is the budget's (it knows the propellant family's
    # usual minimum); it is a flight warning too
    liftoff = [f for f in budget(mission).findings if "thrust-to-weight" in f.message]
    result.findings = tuple(liftoff) + tuple(_findings(result, core))
    return result


def _ledger(core: flight.FlightCore, outcome: flight.Outcome) -> list[LossLedger]:
    terms, speeds = outcome.ledger_marks()
    marks = terms[:, 0, :]
    speed = speeds[:, 0]
    rows = []
    boundaries = [k for k in range(core.stages + 1) if np.isfinite(speed[k])]

    def row(name: str, a: int, b: int) -> LossLedger:
        d = marks[b] - marks[a]
        named = dict(zip(layout.LEDGER_TERMS, d, strict=True))
        return LossLedger(
            segment=name,
            ideal=float(named["ideal"]),
            gravity_loss=float(named["gravity"]),
            drag_loss=float(named["drag"]),
            steering_loss=float(named["steering"]),
            pressure_loss=float(named["pressure"]),
            pad_loss=float(named["pad"]),
            rotation_credit=float(named["rotation"]),
            achieved=float(speed[b] - speed[a]),
        )

    for a, b in itertools.pairwise(boundaries):
        rows.append(row(core.stage_names[a], a, b))
    rows.append(row("whole flight", 0, core.stages))
    return rows


def _findings(result: FlightResult, core: flight.FlightCore) -> list[Finding]:
    findings: list[Finding] = [
        Finding(
            "table",
            note,
            f"a table of more than {flight.state.TABLE_LIMIT} points is thinned before "
            "flight, within the stated tolerance",
            "Douglas and Peucker, The Canadian Cartographer 10(2), 1973",
        )
        for note in core.notes
    ]
    if result.status == "no liftoff":
        findings.append(
            Finding(
                "flight",
                "the vehicle never left the pad: thrust stayed below weight",
                "thrust must exceed weight at liftoff",
                "Newton's second law",
            )
        )
    if result.status == "time limit":
        findings.append(
            Finding(
                "flight",
                f"the flight did not reach its end within {float(core.max_time[0]):g} s",
                "flights end at apogee, orbit or impact",
                "set [flight] max_time to allow more",
            )
        )
    if result.status == "step failure":
        findings.append(
            Finding(
                "flight",
                "the integrator could not continue (the step size fell to nothing)",
                "a flight must be integrable to its end",
                "check the vehicle's masses, thrust and drag for impossible values",
            )
        )
    if math.isfinite(result.rail_exit_speed) and result.rail_exit_speed < RAIL_EXIT_SPEED_MIN:
        findings.append(
            Finding(
                "rail exit",
                f"rail exit speed {result.rail_exit_speed:.1f} m/s is below the usual minimum of "
                f"{RAIL_EXIT_SPEED_MIN:g} m/s",
                "fins need air speed to stabilise the rocket when it leaves the rail",
                "common practice, no source",
            )
        )
    guided = core.guidance != "gravity_turn"
    hold = float(core.hold_speed[0])
    for k, stage in enumerate(result.stages):
        if k == 0 or not math.isfinite(stage.ignition_time) or (guided and core.steered[k]):
            continue
        problems = []
        if stage.ignition_vertical_speed < 0:
            problems.append(f"while descending ({stage.ignition_vertical_speed:.1f} m/s)")
        if stage.ignition_air_speed < hold:
            problems.append(
                f"below the {hold:g} m/s of air speed that steers it "
                f"({stage.ignition_air_speed:.1f} m/s)"
            )
        if stage.ignition_tilt > IGNITION_TILT_MAX:
            problems.append(
                f"tilted {math.degrees(stage.ignition_tilt):.0f} deg from vertical "
                f"(limit {math.degrees(IGNITION_TILT_MAX):.0f} deg)"
            )
        if problems:
            findings.append(
                Finding(
                    "ignition",
                    f"{stage.name} lights " + ", ".join(problems),
                    "an unguided upper stage should light rising, fast enough to steer, "
                    f"and within {math.degrees(IGNITION_TILT_MAX):.0f} deg of vertical",
                    "common practice in flight-safety codes, no source",
                )
            )
    if result.max_mach >= TRANSONIC_MACH:
        findings.append(
            Finding(
                "aerodynamics",
                f"the flight passes through the transonic range (max Mach {result.max_mach:.2f}), "
                "where a rough drag curve is least certain",
                "check the drag curve near Mach 1 (a rough default may not hold)",
                "common practice, no source",
            )
        )
    if math.isfinite(result.apogee) and result.apogee > WAIVER_APOGEE:
        findings.append(
            Finding(
                "airspace",
                f"apogee {result.apogee:,.0f} m above the site usually needs an airspace "
                "authorisation or waiver",
                f"apogees above about {WAIVER_APOGEE:,.0f} m need the aviation authority's "
                "permission in many countries; thresholds differ",
                "common practice, no source",
            )
        )
    if (
        result.orbit is not None
        and MIN_PERIGEE <= result.orbit.perigee_altitude < SHORT_LIFE_PERIGEE
    ):
        findings.append(
            Finding(
                "orbit",
                f"perigee {result.orbit.perigee_altitude / 1e3:,.0f} km: "
                "the orbit decays within days",
                f"a parking orbit's perigee above about {SHORT_LIFE_PERIGEE / 1e3:.0f} km",
                "common practice, no source",
            )
        )
    total = result.total
    scale = max(abs(total.ideal), 1.0)
    if abs(total.closure) > 1e-4 * scale:
        findings.append(
            Finding(
                "ledger",
                f"the ledger closes only to {total.closure:.3g} m/s",
                "ideal + credit - losses - achieved = 0",
                "definition of the ledger",
            )
        )
    return findings
