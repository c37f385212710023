"""Where things come down: the ballistic impact of every dropped stage, and footprints.

A stage dropped at separation falls on its own: from the state of the stack at the
separation event (position, velocity, time), with its spent mass (inert mass and any
propellant it did not burn), its own reference area and drag curve, no thrust, no
recovery device, down to the ground. That is the "recovery failed" case a range safety
discussion asks about first; the vehicle itself comes down the same way when the mission
flies to the ground (``[flight] stop_at = "ground"``).

A dispersion study gives many impact points per body; :func:`footprint` summarises them:
the mean point, the 1σ and 3σ ellipses of the points' covariance (for a two-dimensional
normal distribution they hold 39.3 % and 98.9 % of the points: 1 − exp(−k²/2)), and the
largest distance from the pad. These are planning figures for a range safety discussion,
not the range safety analysis.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import Any

import numpy as np
import numpy.typing as npt

from propulsion import flight
from propulsion.flight import layout

__all__ = [
    "Ellipse",
    "Footprint",
    "Impact",
    "dropped_stage_core",
    "dropped_stage_impacts",
    "ellipse_probability",
    "footprint",
]

FloatArray = npt.NDArray[np.float64]

PASSIVE_FLOW = 1.0
"""Mass flow [kg/s] given to a dropped stage's (empty) engine, so that its burn lasts
0 s: the core then flies it as a body without thrust."""


@dataclass(frozen=True)
class Impact:
    """Where one body came down (SI): east and north of the pad [m], the distance [m], the
    time since the first ignition [s], and the speed relative to the ground [m/s]."""

    body: str
    east: float
    north: float
    time: float
    speed: float

    @property
    def distance(self) -> float:
        """Distance from the pad along the ground [m]."""
        return math.hypot(self.east, self.north)

    def to_dict(self) -> dict[str, Any]:
        """Fields keyed with SI unit suffixes."""
        return {
            "body": self.body,
            "east_m": self.east,
            "north_m": self.north,
            "distance_m": self.distance,
            "time_s": self.time,
            "speed_m_s": self.speed,
        }


def dropped_stage_core(
    core: flight.FlightCore, outcome: flight.Outcome, k: int
) -> tuple[flight.FlightCore, npt.NDArray[np.bool_]]:
    """A batch of stage ``k`` of every sample that dropped it, falling on its own.

    Returns the core (one sample per sample that separated stage ``k``) and the mask of
    those samples. The dropped mass is the stack's mass at burnout less its mass after
    separation (inert mass and unburnt propellant); the body keeps the stage's area and
    drag curve and starts from the separation event's state and time.
    """
    happened = outcome.happened(f"separation:{k}")
    rows = np.flatnonzero(happened)
    part = core.take(rows)
    before = outcome.state(f"burnout:{k}")[rows, layout.Y_M]
    after = outcome.state(f"separation:{k}")[rows, layout.Y_M]
    state = outcome.state(f"separation:{k}")[rows]
    dropped = np.maximum(before - after, 1e-9)
    n = rows.size

    def one(values: FloatArray) -> FloatArray:
        return np.asarray(values, dtype=float).reshape(1, n).copy()

    falling = replace(
        part,
        stage_names=(f"{core.stage_names[k]} (dropped)",),
        is_motor=(False,),
        steered=(False,),
        curve_time=(np.zeros(2),),
        curve_thrust=(np.zeros(2),),
        curve_impulse=(0.0,),
        drag_mach=(core.drag_mach[k],),
        drag_cd=(core.drag_cd[k],),
        mass_initial=dropped,
        kick_angle=np.zeros(n),
        cutoff_energy=np.full(n, math.nan),
        inert=one(dropped),
        propellant=one(np.zeros(n)),
        usable=one(np.zeros(n)),
        area=one(part.area[k]),
        separation_delay=one(np.zeros(n)),
        ignition_delay=one(np.zeros(n)),
        impulse_scale=one(np.ones(n)),
        time_scale=one(np.ones(n)),
        thrust_vacuum=one(np.zeros(n)),
        exit_area=one(np.zeros(n)),
        mass_flow=one(np.full(n, PASSIVE_FLOW)),
        test_pressure=one(np.zeros(n)),
        start_time=np.asarray(outcome.time(f"separation:{k}")[rows], dtype=float),
        start_state=np.ascontiguousarray(state[:, : layout.Y_M].T),
        stop_at_ground=True,
        airborne=True,
        guidance="gravity_turn",
    )
    return falling, happened


def dropped_stage_impacts(
    core: flight.FlightCore,
    outcome: flight.Outcome,
    rtol: float = 1e-8,
    threads: int | None = None,
) -> dict[str, tuple[FloatArray, FloatArray, FloatArray, FloatArray]]:
    """Impact points of every stage the batch dropped.

    Returns, per dropped stage name, arrays over the batch's samples (NaN where the stage
    was not dropped or did not reach the ground): east and north of the pad [m], time [s]
    and ground speed [m/s] at impact.
    """
    found: dict[str, tuple[FloatArray, FloatArray, FloatArray, FloatArray]] = {}
    for k in range(core.stages - 1):
        falling, happened = dropped_stage_core(core, outcome, k)
        east = np.full(core.n, math.nan)
        north = east.copy()
        time = east.copy()
        speed = east.copy()
        if falling.n:
            landed = flight.simulate(falling, rtol=rtol, threads=threads)
            rows = np.flatnonzero(happened)
            east[rows] = landed.value("ground", "east")
            north[rows] = landed.value("ground", "north")
            time[rows] = landed.time("ground")
            speed[rows] = landed.value("ground", "ground_speed")
        found[core.stage_names[k]] = (east, north, time, speed)
    return found


@dataclass(frozen=True)
class Ellipse:
    """An ellipse of a footprint: its semi-axes [m] (major first), the bearing of the major
    axis clockwise from north [rad], and the share of points it is meant to hold."""

    major: float
    minor: float
    bearing: float
    sigmas: float

    @property
    def probability(self) -> float:
        """The share of a two-dimensional normal distribution inside it."""
        return ellipse_probability(self.sigmas)


def ellipse_probability(sigmas: float) -> float:
    """P(Mahalanobis distance ≤ k) of a two-dimensional normal distribution: 1 − exp(−k²/2),
    the chi-square distribution with two degrees of freedom (0.393 for 1σ, 0.989 for 3σ)."""
    return 1.0 - math.exp(-0.5 * sigmas * sigmas)


@dataclass(frozen=True)
class Footprint:
    """Where the samples of one body came down: points (east, north) [m] and their
    statistics. ``ellipses`` are the 1σ and 3σ ellipses about ``mean``; ``farthest`` is
    the largest distance from the pad [m]."""

    body: str
    east: FloatArray
    north: FloatArray
    mean: tuple[float, float]
    covariance: FloatArray
    ellipses: tuple[Ellipse, ...]
    farthest: float

    @property
    def count(self) -> int:
        """Points in the footprint."""
        return int(self.east.size)

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready statistics (SI)."""
        return {
            "body": self.body,
            "points": self.count,
            "mean_east_m": self.mean[0],
            "mean_north_m": self.mean[1],
            "covariance_m2": self.covariance.tolist(),
            "ellipses": [
                {
                    "sigmas": e.sigmas,
                    "probability": e.probability,
                    "semi_major_m": e.major,
                    "semi_minor_m": e.minor,
                    "bearing_deg": math.degrees(e.bearing),
                }
                for e in self.ellipses
            ],
            "farthest_from_pad_m": self.farthest,
        }


def footprint(body: str, east: FloatArray, north: FloatArray) -> Footprint:
    """The footprint of a body's impact points (NaN left out).

    The ellipses are the level sets of the points' sample covariance Σ: the eigenvalues of
    Σ give the semi-axes (k √λ for the kσ ellipse), the eigenvector of the larger one its
    bearing [1].

    References
    ----------
    .. [1] T. W. Anderson, An Introduction to Multivariate Statistical Analysis, 3rd ed.,
       Wiley, 2003, section 3.2 (the ellipsoids of constant density of a normal
       distribution).
    """
    keep = np.isfinite(east) & np.isfinite(north)
    east, north = np.asarray(east)[keep], np.asarray(north)[keep]
    if east.size == 0:
        nan = math.nan
        return Footprint(body, east, north, (nan, nan), np.full((2, 2), nan), (), nan)
    mean = (float(np.mean(east)), float(np.mean(north)))
    covariance = np.cov(np.vstack([east, north])) if east.size > 1 else np.zeros((2, 2))
    values, vectors = np.linalg.eigh(covariance)
    values = np.maximum(values, 0.0)
    major = vectors[:, 1]  # eigh sorts the eigenvalues in ascending order
    bearing = math.atan2(major[0], major[1]) % math.pi  # from north, clockwise
    ellipses = tuple(
        Ellipse(k * math.sqrt(values[1]), k * math.sqrt(values[0]), bearing, k) for k in (1.0, 3.0)
    )
    farthest = float(np.max(np.hypot(east, north)))
    return Footprint(body, east, north, mean, covariance, ellipses, farthest)
