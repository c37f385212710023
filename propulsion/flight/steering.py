"""Guidance to a target orbit: the steering parameters solved per flight by shooting.

Under ``guidance = "orbit"`` the steered upper stage flies the linear-tangent law

    tan(pitch) = A + B tau,    tau = (t - t_ignition) / burn time,

pitch being the thrust's angle above the local horizontal in the plane of the inertial
velocity. The linear-tangent law is the optimal steering of a rocket of given thrust
history in uniform gravity without drag (A. E. Bryson and Y.-C. Ho, Applied Optimal
Control, 1975, section 2.7 (section recalled from memory)); Powered Explicit Guidance
flies the same law and re-solves its parameters from the state as the burn goes on
(R. L. McHenry et al., Journal of the Astronautical Sciences 27(1), 1979). Here the
parameters are solved for each flight before it flies, by shooting on the compiled
flight itself (gravity, drag, Earth's rotation and the real thrust history included):
Newton's method with a finite-difference Jacobian, all samples of a batch at once.

The last stage cuts off when the orbital energy reaches the target's,
-mu / (r_perigee + r_apogee). The solve asks, at that cutoff, for

* the radius to equal the target's perigee radius, and
* the radial velocity to be zero (the cutoff lies at the perigee),

which together give the perigee and apogee of the target; and, when the target names an
inclination, the launch azimuth is solved too, for the inclination of the orbit plane.
The result: perigee and apogee within :data:`RADIUS_TOLERANCE` plus the apogee moved by
:data:`RADIAL_TOLERANCE`, the inclination within :data:`INCLINATION_TOLERANCE`.

All values are SI: metres, m/s, radians.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING

import numpy as np
import numpy.typing as npt

from propulsion.constants import EARTH_MU
from propulsion.flight import layout

if TYPE_CHECKING:
    from propulsion.flight.result import Outcome
    from propulsion.flight.state import FlightCore

__all__ = [
    "INCLINATION_TOLERANCE",
    "MAX_ITERATIONS",
    "RADIAL_TOLERANCE",
    "RADIUS_TOLERANCE",
    "OrbitTarget",
    "SteeringSolution",
    "insertion",
    "solve_steering",
]

FloatArray = npt.NDArray[np.float64]

RADIUS_TOLERANCE = 20.0
"""The solve ends when the radius at cutoff is within this of the target's perigee [m]."""
RADIAL_TOLERANCE = 0.01
"""...and the radial velocity at cutoff within this of zero [m/s] (0.01 m/s moves the
apogee of a low orbit by about 10 m)..."""
INCLINATION_TOLERANCE = math.radians(1e-4)
"""...and, when the target names one, the inclination within this [rad]."""
MAX_ITERATIONS = 30
"""Newton iterations at most (each flies 3 or 4 flights per sample)."""
_STEP = (1e-5, 1e-5, 1e-6)
"""Finite-difference steps of A, B [dimensionless] and the azimuth [rad]."""
_MAX_CHANGE = (0.5, 1.0, math.radians(2.0))
"""Largest change of A, B and the azimuth in one Newton step."""


@dataclass(frozen=True)
class OrbitTarget:
    """The orbit the guidance flies to: perigee and apogee radii [m] (from Earth's centre)
    and an inclination [rad] (None: the plane the launch azimuth gives)."""

    perigee_radius: float
    apogee_radius: float
    inclination: float | None = None

    @property
    def energy(self) -> float:
        """Specific orbital energy of the target [J/kg], -mu / (2a)."""
        return -EARTH_MU / (self.perigee_radius + self.apogee_radius)


@dataclass(frozen=True)
class SteeringSolution:
    """The solved steering per sample: ``guide_a``, ``guide_b``, ``azimuth`` [rad];
    ``converged`` (bool), the ``radius_error`` [m], ``radial_velocity`` [m/s] and
    ``inclination_error`` [rad] at cutoff (NaN where the flight never cut off), the
    ``iterations`` taken and the ``flights`` flown."""

    guide_a: FloatArray
    guide_b: FloatArray
    azimuth: FloatArray
    converged: npt.NDArray[np.bool_]
    radius_error: FloatArray
    radial_velocity: FloatArray
    inclination_error: FloatArray
    iterations: int
    flights: int


def insertion(state: FloatArray) -> tuple[FloatArray, FloatArray, FloatArray]:
    """Radius [m], radial velocity [m/s] and inclination [rad] of inertial states (n, NY)
    (inclination from the angular momentum: cos i = h_z / |h|, Curtis, Orbital Mechanics
    for Engineering Students, Algorithm 4.2)."""
    r = state[:, layout.Y_R : layout.Y_R + 3]
    v = state[:, layout.Y_V : layout.Y_V + 3]
    radius = np.linalg.norm(r, axis=1)
    radial = np.einsum("ij,ij->i", r, v) / np.maximum(radius, 1.0)
    h = np.cross(r, v)
    size = np.linalg.norm(h, axis=1)
    inclination = np.arccos(np.clip(h[:, 2] / np.maximum(size, 1e-30), -1.0, 1.0))
    return radius, radial, inclination


def _residuals(
    core: FlightCore, outcome: Outcome, target: OrbitTarget, with_plane: bool
) -> FloatArray:
    """Residuals per sample, scaled by their tolerances (n, 2 or 3); inf where the flight
    came down or never lit its last stage."""
    radius, radial, inclination = insertion(outcome.state("final"))
    columns = [
        (radius - target.perigee_radius) / RADIUS_TOLERANCE,
        radial / RADIAL_TOLERANCE,
    ]
    if with_plane:
        assert target.inclination is not None
        columns.append((inclination - target.inclination) / INCLINATION_TOLERANCE)
    out = np.stack(columns, axis=1)
    lit = np.isfinite(outcome.time(f"ignition:{core.stages - 1}"))
    flying = (outcome.status == "orbit") | (outcome.status == "burnout")
    out[~(lit & flying)] = np.inf
    return out


def _initial(core: FlightCore, rtol: float, threads: int | None) -> None:
    """A, B of the plain linear-tangent law (horizontal at burnout) as the first guess."""
    from propulsion.flight.batch import simulate as fly

    trial = replace(core, guide_a=np.full(core.n, math.nan), guide_b=np.full(core.n, math.nan))
    outcome = fly(trial, rtol=rtol, threads=threads)
    state = outcome.state(f"ignition:{core.stages - 1}")
    r = state[:, layout.Y_R : layout.Y_R + 3]
    v = state[:, layout.Y_V : layout.Y_V + 3]
    sine = np.einsum("ij,ij->i", r, v) / np.maximum(
        np.linalg.norm(r, axis=1) * np.linalg.norm(v, axis=1), 1e-30
    )
    a = np.tan(np.arcsin(np.clip(np.nan_to_num(sine, nan=0.3), -0.9, 0.9)))
    core.guide_a = a
    core.guide_b = -a


def solve_steering(
    core: FlightCore,
    target: OrbitTarget,
    rtol: float = 1e-9,
    threads: int | None = None,
    max_iterations: int = MAX_ITERATIONS,
) -> SteeringSolution:
    """Solve A, B (and the azimuth, when the target names an inclination) for every sample.

    The core's own ``guide_a``/``guide_b`` are the first guess where finite; elsewhere the
    plain linear-tangent law's. Newton's method with a finite-difference Jacobian and a
    halved step where the residual grew; samples stop as they converge.
    """
    from propulsion.flight.batch import simulate as fly

    n = core.n
    with_plane = target.inclination is not None
    m = 3 if with_plane else 2
    work = replace(
        core,
        guide_a=core.guide_a.copy(),
        guide_b=core.guide_b.copy(),
        azimuth=core.azimuth.copy(),
        cutoff_energy=np.full(n, target.energy),
        orbit_target=None,  # its flights fly the steering given, unsolved
    )
    unsolved = ~np.isfinite(work.guide_a) | ~np.isfinite(work.guide_b)
    if np.any(unsolved):
        first = work.take(np.flatnonzero(unsolved))
        _initial(first, rtol, threads)
        work.guide_a[unsolved] = first.guide_a
        work.guide_b[unsolved] = first.guide_b
    x = np.stack([work.guide_a, work.guide_b, work.azimuth][:m], axis=1)
    previous = x.copy()
    best_x = x.copy()  # the point of the smallest residual so far
    best = np.full(n, np.inf)
    step_scale = np.ones(n)
    converged = np.zeros(n, dtype=bool)
    residual = np.full((n, m), np.inf)
    flights = 0
    iterations = 0
    active = np.arange(n)
    for iterations in range(1, max_iterations + 1):  # noqa: B007 (reported after)
        if active.size == 0:
            break
        count = active.size
        # each active sample at x, and at x plus a step in each unknown
        trial = work.take(np.repeat(active, m + 1))
        points = np.repeat(x[active], m + 1, axis=0)
        for j in range(m):
            points[j + 1 :: m + 1, j] += _STEP[j]
        trial.guide_a = points[:, 0].copy()
        trial.guide_b = points[:, 1].copy()
        if with_plane:
            trial.azimuth = points[:, 2].copy()
        outcome = fly(trial, rtol=rtol, threads=threads)
        flights += trial.n
        values = _residuals(trial, outcome, target, with_plane).reshape(count, m + 1, m)
        at_x = values[:, 0, :]
        size = np.max(np.abs(at_x), axis=1)
        still: list[int] = []
        for row, i in enumerate(active):
            if size[row] <= 1.0:
                converged[i] = True
                residual[i] = at_x[row]
                best[i] = size[row]
                best_x[i] = x[i]
                continue
            if not size[row] < best[i]:
                # the step made it worse (or the flight came down): go back half way
                step_scale[i] *= 0.5
                if step_scale[i] < 1e-3:
                    continue  # no progress: left unconverged
                x[i] = previous[i] + 0.5 * (x[i] - previous[i])
                still.append(int(i))
                continue
            best[i] = size[row]
            best_x[i] = x[i]
            residual[i] = at_x[row]
            jacobian = (values[row, 1:, :] - at_x[row]).T / np.array(_STEP[:m])
            if not np.all(np.isfinite(jacobian)):
                continue
            try:
                change = -np.linalg.solve(jacobian, at_x[row])
            except np.linalg.LinAlgError:
                continue
            limit = np.max(np.abs(change) / np.array(_MAX_CHANGE[:m]))
            if limit > 1.0:
                change /= limit
            previous[i] = x[i].copy()
            step_scale[i] = 1.0
            x[i] = x[i] + change
            still.append(int(i))
        active = np.array(still, dtype=np.int64)
    radius_error = residual[:, 0] * RADIUS_TOLERANCE
    radial = residual[:, 1] * RADIAL_TOLERANCE
    plane = residual[:, 2] * INCLINATION_TOLERANCE if with_plane else np.full(n, math.nan)
    # a sample that ended unconverged keeps the best point it reached
    return SteeringSolution(
        guide_a=best_x[:, 0].copy(),
        guide_b=best_x[:, 1].copy(),
        azimuth=best_x[:, 2].copy() if with_plane else core.azimuth.copy(),
        converged=converged,
        radius_error=np.where(np.isfinite(radius_error), radius_error, math.nan),
        radial_velocity=np.where(np.isfinite(radial), radial, math.nan),
        inclination_error=np.where(np.isfinite(plane), plane, math.nan),
        iterations=iterations,
        flights=flights,
    )


KICK_RANGE = (math.radians(0.5), math.radians(30.0))
"""Pitch kick angles [rad] :func:`choose_kick` searches when the file leaves it open."""
KICK_COUNT = 24
"""Kick angles flown per pass of :func:`choose_kick` (two passes: coarse, then fine)."""


def choose_kick(core: FlightCore, rtol: float = 1e-9, threads: int | None = None) -> float:
    """The pitch kick angle [rad] that leaves the most propellant at a guided insertion.

    Sample 0 of ``core`` (guided: ``orbit_target`` set) is flown with :data:`KICK_COUNT`
    kick angles across :data:`KICK_RANGE`, each with its steering solved; among those whose
    solve converged and reached the cutoff (when none converged: those that reached it),
    the one with the most mass at cutoff is kept, and a second pass across its neighbours
    refines it. Returns the core's own angle when no angle reaches the orbit (the flight
    then shows why).
    """
    from propulsion.flight.batch import simulate as fly

    low, high = KICK_RANGE
    best = float(core.kick_angle[0])
    for _ in range(2):
        angles = np.linspace(low, high, KICK_COUNT)
        batch = core.take(np.zeros(KICK_COUNT, dtype=np.int64))
        batch.kick_angle = angles
        outcome = fly(batch, rtol=rtol, threads=threads)
        mass = outcome.state("final")[:, layout.Y_M]
        reached = outcome.status == "orbit"
        good = reached & (outcome.extra["guide_converged"] > 0.5)
        if not np.any(good):
            # no angle met every condition to its tolerance: an inclination at the edge
            # of what the site reaches (i = latitude, a launch due east: the closest plane
            # flown lies a few thousandths of a degree above it). The angles that still
            # reached the cutoff, each flying its closest solution, are the choice.
            good = reached
        if not np.any(good):
            break
        index = int(np.argmax(np.where(good, mass, -np.inf)))
        best = float(angles[index])
        step = (high - low) / (KICK_COUNT - 1)
        low, high = max(best - step, KICK_RANGE[0]), min(best + step, KICK_RANGE[1])
    return best
