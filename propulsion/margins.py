"""Flight margins and the verdict of a flown ascent.

A flight has three margins, and each figure names which one it is:

- **Target margin**: what was achieved minus what the target asks, in the target's own
  unit (metres of apogee, m/s of burnout speed; for an orbit, kilometres by which the
  perigee and apogee lie inside the tolerance band around the target altitude), and in
  percent of the target.
- **Propulsion margin**: the largest uniform shortfall of total impulse that still meets
  the target, found by root finding on the flight. Motors: every motor's impulse scaled
  by the same factor (the same propellant delivering less). Engines: the propellant
  loaded in every engine stage scaled by the same factor. It is given as a fraction of
  the total impulse and as the ideal delta-v that shortfall takes away. This is how a
  team reads "margin": how much worse may the motors be.
- **Payload margin**: the payload mass that could be added (negative: must come off) so
  that the target is just met, found by root finding on the flight.

The verdict judges the one named in the mission's ``[margins.flight]`` against the amount
it asks for. It never depends on the loss allowances of the ideal budget.

An orbital target is judged on energy and shape: energy, that the ascent reached orbital
energy with the delta-v the later legs need still in its tanks; shape, that perigee and
apogee lie within the leg's ``tolerance`` of the target altitude. A miss says which.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

import numpy as np
import numpy.typing as npt

from propulsion import flight
from propulsion.constants import EARTH_EQUATORIAL_RADIUS, EARTH_MU
from propulsion.flight import layout
from propulsion.ledger import budget
from propulsion.mission import FlightMargin, Mission

__all__ = [
    "MIN_PERIGEE",
    "ORBIT_TOLERANCE",
    "FlightVerdict",
    "Judgement",
    "Target",
    "apsis_altitudes",
    "hold_margin",
    "ideal_delta_v",
    "impulse_fraction_for_delta_v",
    "judge_flight",
    "payload_margin",
    "perigee_altitude",
    "propulsion_margin",
    "propulsion_margins",
    "scale_propulsion",
    "stack_delta_v",
]

FloatArray = npt.NDArray[np.float64]

MIN_PERIGEE = 100e3
"""Lowest perigee altitude [m] that counts as an orbit: 100 km, the edge of space by the
convention of the Fédération Aéronautique Internationale."""
ORBIT_TOLERANCE = 10e3
"""Default band [m] either side of a circular-orbit target within which perigee and
apogee must lie (common practice, no source); a leg sets its own with ``tolerance``."""
ROOT_ROUNDS = 4
"""Rounds of batched bracket refinement after the first bracket (each cuts it 15-fold)."""
ROOT_POINTS = 16
"""Trial flights per refinement round."""

MISS_ENERGY = "energy"
"""A miss for want of delta-v: the target's energy was not reached (or, for an orbit, not
with the later legs' delta-v left)."""
MISS_SHAPE = "shape"
"""An orbital miss of steering: orbital energy reached, but perigee or apogee outside the
tolerance band."""
MISS_MARGIN = "margin"
"""The target is met, but the judged margin is below what the mission asks for."""
MISS_NO_RESULT = "no result"
"""The flight could not be integrated to its end (step failure or time limit)."""


def apsis_altitudes(states: FloatArray) -> tuple[FloatArray, FloatArray]:
    """Perigee and apogee altitudes of the osculating orbits of states (n, NY) [m].

    Two-body orbits about Earth's GM, altitudes above the equatorial radius; the apogee is
    infinite for an escape orbit (vectorised form of Curtis, Orbital Mechanics for
    Engineering Students, 3rd ed., 2013, eqs. 2.80, 2.31, 2.73).
    """
    r = states[:, layout.Y_R : layout.Y_R + 3]
    v = states[:, layout.Y_V : layout.Y_V + 3]
    radius = np.linalg.norm(r, axis=1)
    energy = 0.5 * np.sum(v * v, axis=1) - EARTH_MU / radius
    momentum = np.linalg.norm(np.cross(r, v), axis=1)
    eccentricity = np.sqrt(np.maximum(0.0, 1.0 + 2.0 * energy * momentum**2 / EARTH_MU**2))
    perigee = momentum**2 / EARTH_MU / (1.0 + eccentricity)
    with np.errstate(divide="ignore"):
        semi_major = np.where(energy < 0, -EARTH_MU / (2.0 * np.minimum(energy, -1e-300)), np.inf)
    apogee = np.where(energy < 0, 2.0 * semi_major - perigee, np.inf)
    return perigee - EARTH_EQUATORIAL_RADIUS, apogee - EARTH_EQUATORIAL_RADIUS


def perigee_altitude(states: FloatArray) -> FloatArray:
    """Perigee altitude of the osculating orbit of states (n, NY) [m] (vectorised)."""
    return apsis_altitudes(states)[0]


def ideal_delta_v(core: flight.FlightCore) -> FloatArray:
    """Ideal delta-v of the flown stages, every propellant burnt, per sample [m/s].

    Tsiolkovsky stage by stage: a motor's exhaust speed is its curve's impulse (times
    ``impulse_scale``) over its propellant; an engine's, vacuum thrust over mass flow.
    """
    mass = core.mass_initial.copy()
    total = np.zeros(core.n)
    for k in range(core.stages):
        usable = core.usable[k]
        if core.is_motor[k]:
            exhaust = core.curve_impulse[k] * core.impulse_scale[k] / usable
        else:
            exhaust = core.thrust_vacuum[k] / core.mass_flow[k]
        final = mass - usable
        total += exhaust * np.log(mass / final)
        mass = final - (core.inert[k] + core.propellant[k] - usable)
    return total


def scale_propulsion(core: flight.FlightCore, factors: FloatArray) -> flight.FlightCore:
    """Copies of sample 0 with the total impulse scaled by ``factors`` (m,) [dimensionless].

    Every motor's impulse is scaled (``impulse_scale``: the same propellant delivering
    less or more); every engine stage's propellant loaded (and with it its usable
    propellant, its burn and the lift-off mass).
    """
    factors = np.asarray(factors, dtype=float)
    batch = core.take(np.zeros(factors.size, dtype=np.int64))
    _scale_impulse(batch, factors)
    return batch


def _scale_impulse(batch: flight.FlightCore, factors: FloatArray) -> None:
    """Scale every sample's total impulse by its factor, in place (see
    :func:`scale_propulsion`)."""
    for k in range(batch.stages):
        if batch.is_motor[k]:
            batch.impulse_scale[k] = batch.impulse_scale[k] * factors
        else:
            loaded = batch.propellant[k].copy()
            batch.propellant[k] = loaded * factors
            batch.usable[k] = batch.usable[k] * factors
            batch.mass_initial = batch.mass_initial - loaded * (1.0 - factors)


def impulse_fraction_for_delta_v(core: flight.FlightCore, delta_v: float) -> FloatArray:
    """Per sample, the fraction of total impulse whose loss takes ``delta_v`` [m/s] of
    ideal delta-v from the stack (bisection on :func:`ideal_delta_v`); 1 when the whole
    stack has less."""
    nominal = ideal_delta_v(core)
    low = np.zeros(core.n)  # fraction lost
    high = np.ones(core.n)
    for _ in range(60):
        middle = 0.5 * (low + high)
        trial = core.take(np.arange(core.n))
        _scale_impulse(trial, 1.0 - middle)
        lost = nominal - ideal_delta_v(trial)
        short = lost < delta_v
        low = np.where(short, middle, low)
        high = np.where(short, high, middle)
    return 0.5 * (low + high)


def hold_margin(
    mission: Mission, core: flight.FlightCore, target: Target
) -> tuple[flight.FlightCore, float]:
    """The batch with the margin the verdict asks for held back, and an offset.

    A flight of the returned batch meets its target (metric minus the offset at least
    zero) exactly when the original flight has the judged margin it asks for: the
    payload margin asked is added as payload, the propulsion margin asked is taken off
    every sample's impulse, a target margin asked is the offset [target units]. Sizing
    and the loss-aware split solve on it. An orbit's target margin (the band) is judged
    on the flight afterwards: its offset is 0 here.
    """
    setting = mission.margins.flight
    asked = asked_amount(setting, target, mission.vehicle.payload_mass)
    held = core.take(np.arange(core.n))
    if setting.judge == "payload":
        held.mass_initial = held.mass_initial + asked
        return held, 0.0
    if setting.judge == "propulsion":
        fraction = (
            np.full(core.n, asked)
            if setting.is_fraction
            else impulse_fraction_for_delta_v(core, asked)
        )
        _scale_impulse(held, 1.0 - fraction)
        return held, 0.0
    if target.kind == "circular_orbit":
        return held, 0.0
    return held, asked


@dataclass(frozen=True)
class Judgement:
    """A batch judged against its target (per sample).

    ``meets``: target met (energy and, for an orbit, shape); ``miss``: "" when met, else
    ``MISS_ENERGY``, ``MISS_SHAPE`` or ``MISS_NO_RESULT``; ``target_margin``: the target
    margin in the target's unit (NaN where it is not defined: an orbit never reached);
    ``perigee`` and ``apogee`` [m] (orbits; NaN otherwise); ``delta_v_left`` [m/s]
    (orbits: the delta-v in the tanks at cutoff beyond what the later legs need; NaN
    where orbital energy was not reached).
    """

    meets: npt.NDArray[np.bool_]
    miss: npt.NDArray[np.str_]
    target_margin: FloatArray
    perigee: FloatArray
    apogee: FloatArray
    delta_v_left: FloatArray


class Target:
    """The first leg's target as a function of a batch's outcome (target terms, SI).

    ``kind`` is the leg's target kind; ``required`` the target value [m or m/s];
    ``dimension`` its dimension; for a circular orbit, ``tolerance`` [m] the band either
    side of the altitude for perigee and apogee, and ``later_need`` [m/s] the delta-v the
    later legs (with their reserves and the mission reserve) need from the same tanks.
    """

    def __init__(self, mission: Mission, core: flight.FlightCore) -> None:
        self.mission = mission
        self.core = core
        leg = mission.legs[0] if mission.legs else None
        self.kind = leg.target if leg is not None else ""
        self.required = math.nan
        self.dimension = ""
        self.tolerance = math.nan
        self.required_apogee = math.nan
        self.later_need = 0.0
        if leg is None:
            return
        if self.kind == "apogee":
            self.required, self.dimension = leg.fields["altitude"], "length"
        elif self.kind == "burnout_speed":
            self.required, self.dimension = leg.fields["speed"], "speed"
        elif self.kind == "circular_orbit":
            self.required, self.dimension = leg.fields["altitude"], "length"
            self.tolerance = leg.fields.get("tolerance", ORBIT_TOLERANCE)
            # an ellipse (entered at its perigee): the apogee's own band
            self.required_apogee = leg.fields.get("apogee_altitude", self.required)
            plan = budget(mission)
            later = sum(row.required_delta_v + row.reserve for row in plan.legs[1:])
            self.later_need = later + mission.margins.reserve

    @property
    def judged(self) -> bool:
        """True when the flight can judge the first leg's target."""
        return self.kind in ("apogee", "burnout_speed", "circular_orbit")

    def achieved(self, core: flight.FlightCore, outcome: flight.Outcome) -> FloatArray:
        """The achieved value per sample in target terms (NaN where not reached): apogee
        above the site, speed at the last burnout, or the altitude at cutoff."""
        if self.kind == "apogee":
            return outcome.value("apogee", "altitude")
        if self.kind == "burnout_speed":
            return outcome.value(f"burnout:{core.stages - 1}", "ground_speed")
        if self.kind == "circular_orbit":
            return outcome.final("altitude_sea_level")
        return np.full(core.n, math.nan)

    def metric(self, core: flight.FlightCore, outcome: flight.Outcome) -> FloatArray:
        """A continuous signed distance to the target per sample, for root finding.

        Apogee and burnout speed: achieved minus required [m or m/s] (minus the required
        where the event never came). Orbit: the energy margin [m/s], the delta-v left at
        cutoff beyond the later legs' need, or, short of orbital energy, the missing
        specific energy over the speed (a delta-v) minus that need. Shape is not in it:
        :meth:`judge` judges it.
        """
        if self.kind != "circular_orbit":
            achieved = self.achieved(core, outcome)
            return np.where(np.isfinite(achieved), achieved - self.required, -self.required)
        return self.energy_margin(core, outcome)

    def energy_margin(self, core: flight.FlightCore, outcome: flight.Outcome) -> FloatArray:
        """Orbits: delta-v left at cutoff beyond the later legs' need [m/s] (see
        :meth:`metric`)."""
        last = core.stages - 1
        state = outcome.state("final")
        mass_end = state[:, layout.Y_M]
        ignition_mass = outcome.state(f"ignition:{last}")[:, layout.Y_M]
        burnt = np.where(np.isfinite(ignition_mass), ignition_mass - mass_end, 0.0)
        remaining = np.maximum(core.usable[last] - burnt, 0.0)
        exhaust = core.thrust_vacuum[last] / np.maximum(core.mass_flow[last], 1e-30)
        left = exhaust * np.log(mass_end / (mass_end - remaining))
        speed = outcome.final("inertial_speed")
        energy = outcome.final("energy")
        deficit = (energy - core.cutoff_energy) / np.maximum(speed, 1.0)
        reached = outcome.status == "orbit"
        if "guide_converged" in outcome.extra:
            # guided: an orbit counts only where the steering met it (shape and plane);
            # an unconverged solve cut off at the energy somewhere else
            reached = reached & (outcome.extra["guide_converged"] > 0.5)
        return np.where(reached, left, np.minimum(deficit, 0.0)) - self.later_need

    def judge(self, core: flight.FlightCore, outcome: flight.Outcome) -> Judgement:
        """Whether each sample meets the target, why not, and its target margin."""
        n = core.n
        nan = np.full(n, math.nan)
        status = outcome.status
        failed = np.isin(status, ("step failure", "time limit"))
        if self.kind != "circular_orbit":
            achieved = self.achieved(core, outcome)
            margin = achieved - self.required
            meets = np.isfinite(margin) & (margin >= 0)
            miss = np.where(meets, "", np.where(failed, MISS_NO_RESULT, MISS_ENERGY))
            return Judgement(meets, miss, margin, nan, nan.copy(), nan.copy())
        energy = self.energy_margin(core, outcome)
        reached = status == "orbit"
        perigee, apogee = apsis_altitudes(outcome.state("final"))
        perigee = np.where(reached, perigee, math.nan)
        apogee = np.where(reached, apogee, math.nan)
        # both apsides inside their bands (for a circle the two outer sides are implied:
        # the perigee never lies above the apogee)
        band = np.minimum.reduce(
            [
                perigee - (self.required - self.tolerance),
                self.required + self.tolerance - perigee,
                apogee - (self.required_apogee - self.tolerance),
                self.required_apogee + self.tolerance - apogee,
            ]
        )
        shape_ok = reached & (band >= 0) & (perigee >= MIN_PERIGEE)
        energy_ok = reached & (energy >= 0)
        meets = energy_ok & shape_ok
        # not at orbital energy, or short of the later legs' delta-v: energy; at the
        # energy with the delta-v but off in perigee or apogee: shape (steering)
        miss = np.where(meets, "", MISS_ENERGY).astype(object)
        miss[energy_ok & ~shape_ok] = MISS_SHAPE
        miss[~meets & failed] = MISS_NO_RESULT
        return Judgement(
            meets,
            miss.astype(str),
            band,
            perigee,
            apogee,
            np.where(reached, energy, math.nan),
        )


@dataclass(frozen=True)
class RootResult:
    """A root of a scalar function of one variable found by batched bracketing.

    ``value`` is the root, or the last trial when ``bounded`` is False (no sign change in
    the searched range: the root lies beyond it); ``evaluations`` the flights flown.
    """

    value: float
    bounded: bool
    evaluations: int


def batched_root(
    evaluate: Callable[[FloatArray], FloatArray],
    trials: FloatArray,
    rounds: int = ROOT_ROUNDS,
    points: int = ROOT_POINTS,
) -> RootResult:
    """The first sign change of ``evaluate`` along ``trials`` (nominal first, then outward).

    ``evaluate`` maps an array of trial values to an array of function values (one
    batched flight). The first bracket comes from ``trials``; each of ``rounds`` rounds
    evaluates ``points`` values across the bracket and keeps the piece with the first sign
    change; the root is the secant through the final bracket's ends. With 16 points and
    four rounds a bracket shrinks by 15^4 ≈ 5e4, and the secant on the nearly linear
    last piece gives the root to round-off in practice.
    """
    values = evaluate(trials)
    count = trials.size
    for round_ in range(rounds + 1):
        change = np.flatnonzero(np.sign(values[:-1]) != np.sign(values[1:]))
        if not change.size:
            return RootResult(float(trials[-1]), False, count)
        i = int(change[0])
        low, high = float(trials[i]), float(trials[i + 1])
        f_low, f_high = float(values[i]), float(values[i + 1])
        if round_ == rounds:
            break
        trials = np.linspace(low, high, points)
        values = np.empty(points)
        values[1:-1] = evaluate(trials[1:-1])
        values[0], values[-1] = f_low, f_high
        count += points - 2
    root = low - f_low * (high - low) / (f_high - f_low) if f_high != f_low else low
    return RootResult(root, True, count)


@dataclass(frozen=True)
class MarginFigure:
    """One margin found by root finding: the amount, its ideal delta-v, and how it was
    found. ``bounded`` False: the root lies beyond the searched range and ``amount`` is
    the bound reached (the margin is at least, or the shortfall more than, that)."""

    amount: float
    delta_v: float
    bounded: bool
    evaluations: int
    method: str


def propulsion_margin(
    core: flight.FlightCore, target: Target, nominal: float, rtol: float
) -> MarginFigure:
    """The largest uniform shortfall of total impulse that still meets the target.

    Returns the fraction of impulse that can be lost (negative: the extra the vehicle
    needs) [dimensionless] and the ideal delta-v of the stack it corresponds to [m/s].
    Root finding on ``target.metric`` of flights with :func:`scale_propulsion`.
    """
    if nominal >= 0:
        losses = np.array([0.0, 0.005, 0.01, 0.02, 0.05, 0.1, 0.2, 0.3, 0.5, 0.7, 0.9])
    else:
        losses = -np.array([0.0, 0.005, 0.01, 0.02, 0.05, 0.1, 0.2, 0.5, 1.0, 2.0, 4.0])
    factors = 1.0 - losses

    def evaluate(scales: FloatArray) -> FloatArray:
        batch = scale_propulsion(core, scales)
        return target.metric(batch, flight.simulate(batch, rtol=rtol))

    root = batched_root(evaluate, factors)
    shortfall = 1.0 - root.value
    nominal_dv = float(ideal_delta_v(core.take(np.zeros(1, dtype=np.int64)))[0])
    scaled_dv = float(ideal_delta_v(scale_propulsion(core, np.array([root.value])))[0])
    method = (
        "uniform impulse scale at which the target is just met (root finding on the flight)"
        if root.bounded
        else (
            f"the target is still met with {shortfall:.0%} less impulse"
            if nominal >= 0
            else f"not met even with {-shortfall:.0%} more impulse"
        )
    )
    return MarginFigure(shortfall, nominal_dv - scaled_dv, root.bounded, root.evaluations, method)


def propulsion_margins(
    core: flight.FlightCore,
    target: Target,
    nominal: FloatArray,
    rtol: float,
    threads: int | None = None,
    tolerance: float = 1e-5,
) -> FloatArray:
    """Per sample, the fraction of its total impulse it may lose and still meet the target.

    The propulsion margin of every sample of a batch at once (negative: the extra impulse
    a short sample needs), by regula falsi with the Illinois modification on each sample's
    impulse scale [M. Dowell and P. Jarratt, BIT 11, 168-174, 1971], all unsettled samples
    flown together each round. ``nominal`` is ``target.metric`` of the batch as flown.
    Brackets: a factor of 0.05 for samples that meet the target, 5 for those that do not;
    a margin beyond them is returned as that bound (0.95, or -4).
    """
    n = core.n
    nominal = np.asarray(nominal, dtype=float)

    def metric(rows: npt.NDArray[np.int64], factors: FloatArray) -> FloatArray:
        batch = core.take(rows)
        _scale_impulse(batch, factors)
        return target.metric(batch, flight.simulate(batch, rtol=rtol, threads=threads))

    every = np.arange(n, dtype=np.int64)
    meets = nominal >= 0
    far = np.where(meets, 0.05, 5.0)
    f_far = metric(every, far)
    # bracket [lo, hi] in the impulse factor, with the metric's values at each end
    lo = np.where(meets, far, 1.0)
    hi = np.where(meets, 1.0, far)
    f_lo = np.where(meets, f_far, nominal)
    f_hi = np.where(meets, nominal, f_far)
    root = np.where(meets, far, far)  # beyond the bracket: the bound
    open_ = np.sign(f_lo) != np.sign(f_hi)
    side = np.zeros(n, dtype=np.int64)
    for _ in range(60):
        active = np.flatnonzero(open_ & (hi - lo > tolerance))
        if not active.size:
            break
        a, b = lo[active], hi[active]
        fa, fb = f_lo[active], f_hi[active]
        trial = (a * fb - b * fa) / (fb - fa)
        inside = (trial > a) & (trial < b)
        trial = np.where(inside, trial, 0.5 * (a + b))
        value = metric(active, trial)
        same_as_low = np.sign(value) == np.sign(fa)
        # the new point replaces the end on its side; the other end's value is halved
        # when the same end was kept twice running (Illinois)
        keep_high_twice = same_as_low & (side[active] == 1)
        keep_low_twice = ~same_as_low & (side[active] == -1)
        f_hi[active] = np.where(keep_high_twice, fb * 0.5, f_hi[active])
        f_lo[active] = np.where(keep_low_twice, fa * 0.5, f_lo[active])
        lo[active] = np.where(same_as_low, trial, lo[active])
        f_lo[active] = np.where(same_as_low, value, f_lo[active])
        hi[active] = np.where(same_as_low, hi[active], trial)
        f_hi[active] = np.where(same_as_low, f_hi[active], value)
        side[active] = np.where(same_as_low, 1, -1)
    settled = np.where(f_hi != f_lo, (lo * f_hi - hi * f_lo) / (f_hi - f_lo), lo)
    settled = np.clip(settled, lo, hi)
    root = np.where(open_, settled, root)
    return 1.0 - root


def payload_margin(
    core: flight.FlightCore, target: Target, nominal: float, payload: float, rtol: float
) -> MarginFigure:
    """Payload mass that can be added (negative: must come off) so the target is just met
    [kg], with the ideal delta-v that mass costs [m/s]. Root finding on the flight."""
    liftoff = float(core.mass_initial[0])
    if nominal >= 0:
        trials = liftoff * np.array([0.0, 0.005, 0.01, 0.02, 0.05, 0.1, 0.2, 0.5, 1, 2, 5, 10, 20])
    elif payload > 0:
        trials = -payload * np.array([0.0, 0.05, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 1.0])
    else:
        return MarginFigure(
            math.nan, math.nan, False, 0, "short, and there is no payload to take off"
        )

    def evaluate(masses: FloatArray) -> FloatArray:
        batch = core.take(np.zeros(masses.size, dtype=np.int64))
        batch.mass_initial = batch.mass_initial + masses
        return target.metric(batch, flight.simulate(batch, rtol=rtol))

    root = batched_root(evaluate, trials)
    one = core.take(np.zeros(2, dtype=np.int64))
    one.mass_initial = one.mass_initial + np.array([0.0, root.value])
    ideal = ideal_delta_v(one)
    if root.bounded:
        method = "payload added until the target is just met (root finding on the flight)"
    elif nominal >= 0:
        method = f"the target is still met with {root.value:.4g} kg more payload"
    else:
        method = "not met even with all of the payload off"
    return MarginFigure(
        root.value, float(ideal[0] - ideal[1]), root.bounded, root.evaluations, method
    )


@dataclass(frozen=True)
class FlightVerdict:
    """The flight judged against the first leg's target, with its three margins.

    In the target's terms (``dimension``: a length for apogee and orbit, a speed for
    burnout speed): ``achieved``, ``required``, ``target_margin`` (achieved - required;
    for an orbit, how far perigee and apogee lie inside the band of ``tolerance`` either
    side of the altitude) and ``target_margin_fraction`` (of ``required``).
    ``propulsion_margin`` is the fraction of total impulse that can be lost and
    ``propulsion_margin_delta_v`` [m/s] its ideal delta-v; ``payload_margin`` [kg] the
    payload that can be added and ``payload_margin_fraction`` that over the payload. NaN
    where not computed; a margin whose root lies beyond the searched range carries
    ``..._bounded = False``. ``judge`` names the margin the verdict judges, ``asked`` the
    amount it asks for (in that margin's terms: target unit, fraction of impulse, kg),
    ``judged`` the value judged. ``miss`` says why a verdict fails: "energy", "shape",
    "margin" or "no result" ("" when it passes).
    """

    target: str
    dimension: str
    meets_targets: bool | None
    miss: str
    achieved: float
    required: float
    target_margin: float
    target_margin_fraction: float
    tolerance: float
    perigee: float
    apogee: float
    delta_v_left: float
    propulsion_margin: float
    propulsion_margin_delta_v: float
    propulsion_bounded: bool
    payload_margin: float
    payload_margin_fraction: float
    payload_margin_delta_v: float
    payload_bounded: bool
    judge: str
    asked: float
    judged: float
    method: str
    evaluations: int = 0
    asked_is_fraction: bool = False
    required_apogee: float = math.nan
    """An elliptical target's apogee altitude [m] (NaN: not an orbit; the required
    altitude for a circle)."""

    def judged_text(self, format_value: Callable[[float, str], str]) -> str:
        """The judged margin's value in words, e.g. "11.2 % of total impulse"."""
        return self._margin_text(self.judge, self.judged, format_value)

    def asked_text(self, format_value: Callable[[float, str], str]) -> str:
        """The amount asked for, in the judged margin's terms, e.g. "5.0%" or "50 m"."""
        if self.judge == "propulsion" and self.asked_is_fraction:
            return f"{self.asked:.1%}"
        dimension = {"target": self.dimension, "payload": "mass"}.get(self.judge, "speed")
        return format_value(self.asked, dimension)

    def _margin_text(
        self, judge: str, value: float, format_value: Callable[[float, str], str]
    ) -> str:
        if not math.isfinite(value):
            return "not found"
        if judge == "target":
            return format_value(value, self.dimension)
        if judge == "payload":
            return format_value(value, "mass")
        if self.asked_is_fraction:
            return f"{value:.1%} of total impulse"
        return f"{format_value(value, 'speed')} of ideal delta-v"

    def describe(self, format_value: Callable[[float, str], str]) -> str:
        """The verdict in words; ``format_value(value, dimension)`` formats quantities."""
        if self.meets_targets is None:
            return f"No flight target to judge ({self.method})."
        fmt = format_value
        if self.target == "circular_orbit":
            band = f"{fmt(self.required, 'length')} ± {fmt(self.tolerance, 'length')}"
            if math.isfinite(self.required_apogee) and self.required_apogee != self.required:
                band = (
                    f"{fmt(self.required, 'length')} × {fmt(self.required_apogee, 'length')}"
                    f" ± {fmt(self.tolerance, 'length')}"
                )
            if math.isfinite(self.perigee):
                shape = (
                    f"perigee {fmt(self.perigee, 'length')}, apogee "
                    f"{fmt(self.apogee, 'length')} against {band}"
                )
            else:
                shape = ""
            if self.miss == MISS_ENERGY and not math.isfinite(self.delta_v_left):
                head = (
                    "Misses the orbit for want of energy: the ascent never reaches orbital "
                    f"energy (short by about {fmt(-self.propulsion_margin_delta_v, 'speed')}"
                    " of ideal delta-v)"
                    if math.isfinite(self.propulsion_margin_delta_v)
                    else "Misses the orbit for want of energy: the ascent never reaches "
                    "orbital energy"
                )
            elif self.miss == MISS_ENERGY:
                head = (
                    "Misses the orbit for want of energy: at cutoff it is "
                    f"{fmt(-self.delta_v_left, 'speed')} short of the delta-v the later "
                    f"legs need ({shape})"
                )
            elif self.miss == MISS_SHAPE:
                head = (
                    "Misses the orbit in shape (steering): orbital energy reached with "
                    f"{fmt(self.delta_v_left, 'speed')} of delta-v left after the later "
                    f"legs, but {shape}"
                )
            elif self.miss == MISS_NO_RESULT:
                head = "The flight could not be integrated to its end"
            else:
                head = (
                    f"Reaches the orbit: {shape} (inside by "
                    f"{fmt(self.target_margin, 'length')}), with "
                    f"{fmt(self.delta_v_left, 'speed')} of delta-v left after the later legs"
                )
        else:
            name = {"apogee": "apogee", "burnout_speed": "burnout speed"}[self.target]
            reached = math.isfinite(self.target_margin) and self.target_margin >= 0
            if math.isfinite(self.target_margin):
                head = (
                    f"{'Reaches' if reached else 'Falls short of'} the {name} target: "
                    f"{fmt(self.achieved, self.dimension)} against "
                    f"{fmt(self.required, self.dimension)} "
                    f"({'+' if reached else ''}{fmt(self.target_margin, self.dimension)}, "
                    f"{self.target_margin_fraction:+.1%})"
                )
            elif self.miss == MISS_NO_RESULT:
                head = "The flight could not be integrated to its end"
            else:
                head = f"Never reaches its {name}"
        if self.judge == "target" and self.asked == 0.0:
            return head + "."
        judged = self.judged_text(fmt)
        if not self.propulsion_bounded and self.judge == "propulsion":
            judged = "more than " + judged
        if not self.payload_bounded and self.judge == "payload":
            judged = "more than " + judged
        tail = f"; {self.judge} margin {judged} against {self.asked_text(fmt)} asked for"
        if self.miss == MISS_MARGIN:
            tail += ": too little"
        return head + tail + "."

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready fields (SI; units in the key names)."""
        unit = {"length": "m", "speed": "m/s"}.get(self.dimension, "")
        return {
            "target": self.target,
            "target_unit": unit,
            "achieved": self.achieved,
            "required": self.required,
            "meets_targets": self.meets_targets,
            "miss": self.miss or None,
            "orbit_tolerance_m": self.tolerance if math.isfinite(self.tolerance) else None,
            "required_apogee_m": self.required_apogee
            if math.isfinite(self.required_apogee)
            else None,
            "perigee_altitude_m": _finite(self.perigee),
            "apogee_altitude_m": _finite(self.apogee),
            "delta_v_left_after_later_legs_m_s": _finite(self.delta_v_left),
            "margins": {
                "target": {
                    "value": _finite(self.target_margin),
                    "unit": unit,
                    "fraction_of_target": _finite(self.target_margin_fraction),
                },
                "propulsion": {
                    "fraction_of_impulse": _finite(self.propulsion_margin),
                    "ideal_delta_v_m_s": _finite(self.propulsion_margin_delta_v),
                    "within_searched_range": self.propulsion_bounded,
                },
                "payload": {
                    "mass_kg": _finite(self.payload_margin),
                    "fraction_of_payload": _finite(self.payload_margin_fraction),
                    "ideal_delta_v_m_s": _finite(self.payload_margin_delta_v),
                    "within_searched_range": self.payload_bounded,
                },
            },
            "judge": self.judge,
            "asked": self.asked,
            "asked_unit": self._judged_unit(),
            "judged": _finite(self.judged),
            "method": self.method,
        }

    def _judged_unit(self) -> str:
        if self.judge == "target":
            return {"length": "m", "speed": "m/s"}.get(self.dimension, "")
        if self.judge == "payload":
            return "kg"
        return "fraction of impulse" if self.asked_is_fraction else "m/s"


def _finite(value: float) -> float | None:
    return value if math.isfinite(value) else None


def asked_amount(setting: FlightMargin, target: Target, payload: float) -> float:
    """The amount the verdict asks for, in the judged margin's terms: the target's unit,
    a fraction of impulse, or kg of payload."""
    if setting.judge == "target":
        return setting.required * target.required if setting.is_fraction else setting.required
    if setting.judge == "payload":
        return setting.required * payload if setting.is_fraction else setting.required
    return setting.required  # propulsion: a fraction, or ideal delta-v when not


def judge_flight(
    mission: Mission,
    core: flight.FlightCore,
    outcome: flight.Outcome,
    margins: bool = True,
    rtol: float = 1e-8,
) -> FlightVerdict:
    """Judge sample 0 of a flown batch against the first leg's target.

    With ``margins``, the propulsion and payload margins are found by root finding (a few
    batches of flights); without, only the target margin is known, and a verdict that
    judges another margin judges the target alone.
    """
    target = Target(mission, core)
    setting = mission.margins.flight
    nan = math.nan
    if not target.judged:
        reason = "the first leg's target is not flown" if mission.legs else "no legs stated"
        return FlightVerdict(
            target.kind, "", None, "", nan, nan, nan, nan, nan, nan, nan, nan, nan, nan, True,
            nan, nan, nan, True, setting.judge, nan, nan, reason,
        )  # fmt: skip
    judgement = target.judge(core, outcome)
    meets = bool(judgement.meets[0])
    miss = str(judgement.miss[0])
    target_margin = float(judgement.target_margin[0])
    reference = target.required
    nominal = float(target.metric(core, outcome)[0])
    propulsion = payload = None
    evaluations = 0
    if margins:
        propulsion = propulsion_margin(core, target, nominal, rtol)
        payload = payload_margin(core, target, nominal, mission.vehicle.payload_mass, rtol)
        evaluations = propulsion.evaluations + payload.evaluations
    asked = asked_amount(setting, target, mission.vehicle.payload_mass)
    judge = setting.judge
    if judge == "propulsion" and propulsion is not None:
        judged = propulsion.delta_v if not setting.is_fraction else propulsion.amount
        bounded = propulsion.bounded
    elif judge == "payload" and payload is not None:
        judged, bounded = payload.amount, payload.bounded
    else:
        judge = "target"
        judged = target_margin
        bounded = True
        if setting.judge != "target":
            asked = 0.0  # the other margins were not computed: the target alone is judged
    # the roots are resolved to about 1e-9 of their bracket: judge to that
    enough = math.isfinite(judged) and judged >= asked - 1e-9 * max(abs(asked), 1.0)
    if not bounded:
        # the root lies beyond the searched range: the margin is at least the bound when
        # the target is met, the shortfall at least the bound when it is not
        enough = nominal >= 0
    passes = meets and enough
    if meets and not enough:
        miss = MISS_MARGIN
    payload_mass = mission.vehicle.payload_mass
    return FlightVerdict(
        target=target.kind,
        dimension=target.dimension,
        meets_targets=passes,
        miss="" if passes else miss,
        achieved=float(target.achieved(core, outcome)[0]),
        required=target.required,
        target_margin=target_margin,
        target_margin_fraction=target_margin / reference if reference else nan,
        tolerance=target.tolerance,
        required_apogee=target.required_apogee,
        perigee=float(judgement.perigee[0]),
        apogee=float(judgement.apogee[0]),
        delta_v_left=float(judgement.delta_v_left[0]),
        propulsion_margin=propulsion.amount if propulsion else nan,
        propulsion_margin_delta_v=propulsion.delta_v if propulsion else nan,
        propulsion_bounded=propulsion.bounded if propulsion else True,
        payload_margin=payload.amount if payload else nan,
        payload_margin_fraction=(payload.amount / payload_mass)
        if payload and payload_mass > 0
        else nan,
        payload_margin_delta_v=payload.delta_v if payload else nan,
        payload_bounded=payload.bounded if payload else True,
        judge=judge,
        asked=asked,
        judged=judged,
        method="root finding on the flight, batched"
        if margins
        else "margins not computed (the target alone is judged)",
        evaluations=evaluations,
        asked_is_fraction=setting.is_fraction and judge == "propulsion",
    )


def stack_delta_v(core: flight.FlightCore, added: float) -> float:
    """Ideal delta-v of the flown stages of sample 0 with ``added`` payload mass [kg], every
    propellant burnt [m/s]."""
    one = core.take(np.zeros(1, dtype=np.int64))
    one.mass_initial = one.mass_initial + added
    return float(ideal_delta_v(one)[0])
