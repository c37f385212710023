"""The split runner: how to share the delta-v between stages, ideally and with losses.

The ideal optimum is the classical Lagrange-multiplier solution (:mod:`propulsion.staging`)
for the mission's total requirement, checked against a direct numerical optimisation. The
loss-aware optimum flies candidate stacks: for each split of the delta-v between stages,
a batched flight finds the smallest stack that meets the first leg's target with the
margin the flight's verdict asks for (``[margins.flight]``, held back as
:func:`propulsion.margins.hold_margin` does), and a bounded minimisation over the split
finds the lightest. Stacks are resized
at constant structural coefficient, with the engines scaled to keep each stage's
thrust-to-weight at ignition (a "rubber engine" assumption, stated in the result).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np

from propulsion import ascent, flight, margins
from propulsion.constants import STANDARD_GRAVITY
from propulsion.errors import RequestError
from propulsion.ledger import budget
from propulsion.mission import Mission
from propulsion.staging import StagingSolution, direct_staging, optimal_staging
from propulsion.text import plural
from propulsion.vehicle import Engine

if TYPE_CHECKING:
    import pandas as pd

__all__ = ["SplitError", "SplitResult", "split"]

FloatArray = flight.state.FloatArray


class SplitError(RequestError):
    """A mission the split cannot handle (motor stages, no legs)."""


@dataclass(frozen=True)
class LossAwareSplit:
    """The lightest stack found by flying candidate splits (SI)."""

    found: bool
    delta_v: FloatArray
    liftoff_mass: float
    stage_mass: FloatArray
    flights: int
    message: str


@dataclass
class SplitResult:
    """Ideal and loss-aware optima, and the comparison of stage counts."""

    mission: Mission
    required_delta_v: float
    specific_impulse: FloatArray
    structural_coefficient: FloatArray
    current_delta_v: FloatArray
    current_liftoff_mass: float
    lagrange: StagingSolution
    direct: StagingSolution
    counts: list[StagingSolution]
    count_margins: list[float]
    loss_aware: LossAwareSplit | None
    assumptions: list[str] = field(default_factory=list)

    def to_frame(self) -> pd.DataFrame:
        """The comparison of stage counts as a DataFrame (SI)."""
        import pandas as pd

        rows = []
        for solution, margin in zip(self.counts, self.count_margins, strict=True):
            rows.append(
                {
                    "stages": solution.stage_count,
                    "feasible": solution.feasible,
                    "liftoff_mass_kg": solution.liftoff_mass,
                    "payload_fraction": solution.payload_fraction,
                    "delta_v_per_stage_m_s": [float(v) for v in solution.delta_v],
                    "margin_at_current_liftoff_mass_m_s": margin,
                }
            )
        return pd.DataFrame(rows)

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready results with SI unit suffixes in the keys."""

        def stack(solution: StagingSolution) -> dict[str, Any]:
            return {
                "feasible": solution.feasible,
                "converged": solution.converged,
                "message": solution.message or solution.reason,
                "liftoff_mass_kg": solution.liftoff_mass,
                "payload_fraction": solution.payload_fraction,
                "delta_v_m_s": [float(v) for v in solution.delta_v],
                "stage_mass_kg": [float(v) for v in solution.stage_mass],
            }

        loss = self.loss_aware
        return {
            "mission": self.mission.name,
            "required_delta_v_m_s": self.required_delta_v,
            "current": {
                "liftoff_mass_kg": self.current_liftoff_mass,
                "delta_v_m_s": [float(v) for v in self.current_delta_v],
            },
            "lagrange": stack(self.lagrange),
            "direct": stack(self.direct),
            "stage_counts": self.to_frame().to_dict(orient="records"),
            "loss_aware": None
            if loss is None
            else {
                "found": loss.found,
                "liftoff_mass_kg": loss.liftoff_mass,
                "delta_v_m_s": [float(v) for v in loss.delta_v],
                "stage_mass_kg": [float(v) for v in loss.stage_mass],
                "flights": loss.flights,
                "message": loss.message,
            },
            "assumptions": self.assumptions,
        }


def stack_for_split(
    delta_v: FloatArray, exhaust_velocity: FloatArray, epsilon: FloatArray, payload: float
) -> FloatArray | None:
    """Stage masses [kg] (first stage first) that give each stage its delta-v [m/s].

    From the top down, a stage carrying ``m_above`` with mass ratio n = exp(dv / c) and
    structural coefficient eps has mass m_above (n - 1) / (1 - n eps) (Curtis, 3rd ed.,
    section 11.6). None when a stage cannot give its share (n eps >= 1).
    """
    masses = np.zeros(delta_v.size)
    above = payload
    for i in range(delta_v.size - 1, -1, -1):
        ratio = math.exp(delta_v[i] / exhaust_velocity[i])
        denominator = 1.0 - ratio * epsilon[i]
        if denominator <= 0:
            return None
        masses[i] = above * (ratio - 1.0) / denominator
        above += masses[i]
    return masses


def _inputs(mission: Mission) -> tuple[FloatArray, FloatArray]:
    isp, eps = [], []
    for stage in mission.vehicle.stages:
        if not isinstance(stage.propulsion, Engine):
            raise SplitError(
                f"stage '{stage.name}' flies a motor: a motor's size is fixed, so the split "
                "is for engine stages (use `propulsion pick` to choose motors)"
            )
        isp.append(stage.propulsion.isp_vacuum)
        unusable = stage.propellant_mass - stage.usable_propellant
        eps.append((stage.inert_mass + unusable) / stage.mass)
    return np.asarray(isp), np.asarray(eps)


def split(
    mission: Mission,
    counts: tuple[int, ...] = (1, 2, 3),
    losses: bool = True,
    progress: Callable[[str], None] | None = None,
) -> SplitResult:
    """Find the delta-v split between stages that minimises liftoff mass for the payload.

    Parameters
    ----------
    mission : Mission
        A checked mission of engine stages with at least one leg.
    counts : tuple of int
        Stage counts to compare (see Notes).
    losses : bool
        Also find the loss-aware optimum by flying candidate stacks.
    progress : callable or None
        Called with a short text as the loss-aware search goes.

    Returns
    -------
    SplitResult
        Ideal optimum (Lagrange and direct, which must agree), the comparison of stage
        counts, and the loss-aware optimum [SI].

    Notes
    -----
    The requirement is the mission's total (legs, reserves) plus its required margin.
    For the comparison of counts, stack k uses the mission's first k stages' specific
    impulses and structural coefficients, the last one repeated for more stages than the
    mission has.

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2013,
       section 11.6 (optimal staging by Lagrange multipliers).
    """
    if not mission.legs:
        raise SplitError("the mission has no legs, so there is no delta-v to split")
    isp, eps = _inputs(mission)
    plan = budget(mission)
    required = mission.total_required_delta_v + plan.verdict.required_margin
    payload = mission.vehicle.payload_mass
    if payload <= 0:
        raise SplitError("the split needs a payload mass above zero")
    lagrange = optimal_staging(required, isp, eps, payload)
    direct = direct_staging(required, isp, eps, payload)
    solutions = []
    margins = []
    liftoff = mission.vehicle.liftoff_mass
    for count in counts:
        stage_isp = np.array([isp[min(i, isp.size - 1)] for i in range(count)])
        stage_eps = np.array([eps[min(i, eps.size - 1)] for i in range(count)])
        solution = optimal_staging(required, stage_isp, stage_eps, payload)
        solutions.append(solution)
        margins.append(_margin_at_mass(liftoff, stage_isp, stage_eps, payload) - required)
    current = np.array([row.ideal_delta_v for row in plan.stages])
    assumptions = [
        "stacks are resized at constant structural coefficient (residual propellant counted "
        "as inert)",
        # the figure itself is in the result (`required_delta_v`), in the display's units
        "requirement: the mission's legs and reserves plus its required margin",
    ]
    loss_aware = None
    if losses and mission.legs[0].target in ("apogee", "burnout_speed", "circular_orbit"):
        assumptions.append(
            "loss-aware stacks keep each stage's thrust-to-weight at ignition (engines scaled "
            "with their stage)"
        )
        if mission.legs[0].target == "circular_orbit":
            assumptions.append("each loss-aware candidate flies its best pitch kick")
        loss_aware = _loss_aware(mission, isp, eps, lagrange, progress)
    return SplitResult(
        mission=mission,
        required_delta_v=required,
        specific_impulse=isp,
        structural_coefficient=eps,
        current_delta_v=current,
        current_liftoff_mass=liftoff,
        lagrange=lagrange,
        direct=direct,
        counts=solutions,
        count_margins=margins,
        loss_aware=loss_aware,
        assumptions=assumptions,
    )


def _margin_at_mass(liftoff: float, isp: FloatArray, eps: FloatArray, payload: float) -> float:
    """Total delta-v [m/s] an optimally split stack of this liftoff mass gives."""
    from scipy.optimize import brentq

    c = isp * STANDARD_GRAVITY
    limit = float(np.sum(c * np.log(1.0 / eps)))
    if liftoff <= payload:
        return 0.0

    def excess(delta_v: float) -> float:
        solution = optimal_staging(delta_v, isp, eps, payload)
        return (solution.liftoff_mass if solution.feasible else math.inf) - liftoff

    high = limit * (1 - 1e-9)
    if excess(high) < 0:
        return high
    return float(brentq(excess, 0.0, high, xtol=1e-6))


def _loss_aware(
    mission: Mission,
    isp: FloatArray,
    eps: FloatArray,
    ideal: StagingSolution,
    progress: Callable[[str], None] | None,
) -> LossAwareSplit:
    """Lightest stack that meets the flight target, over the split of the delta-v."""
    from scipy.optimize import minimize_scalar

    if not ideal.feasible:
        return LossAwareSplit(
            False, np.full(isp.size, np.nan), math.nan, np.full(isp.size, np.nan), 0, ideal.reason
        )
    if isp.size > 2:
        return LossAwareSplit(
            False,
            np.full(isp.size, np.nan),
            math.nan,
            np.full(isp.size, np.nan),
            0,
            "the loss-aware search handles one and two stages; the ideal split stands",
        )
    base = flight.build_core(mission, ascent.flown_stages(mission))
    if base.stages != isp.size:
        return LossAwareSplit(
            False,
            np.full(isp.size, np.nan),
            math.nan,
            np.full(isp.size, np.nan),
            0,
            "the first leg does not fly every stage",
        )
    target = margins.Target(mission, base)
    c = isp * STANDARD_GRAVITY
    above_payload = float(base.mass_initial[0]) - sum(
        float(base.inert[k, 0] + base.propellant[k, 0]) for k in range(base.stages)
    )
    # thrust-to-weight at ignition and residual fraction of each stage, kept when resized
    stage_initial = np.array(
        [
            above_payload
            + sum(float(base.inert[j, 0] + base.propellant[j, 0]) for j in range(k, base.stages))
            for k in range(base.stages)
        ]
    )
    thrust_ratio = base.thrust_vacuum[:, 0] / stage_initial
    residual = 1.0 - base.usable[:, 0] / base.propellant[:, 0]
    orbital = target.kind == "circular_orbit"
    kicks = (
        np.linspace(
            max(base.kick_angle[0] - math.radians(4), math.radians(0.1)),
            base.kick_angle[0] + math.radians(4),
            9,
        )
        if orbital
        else np.array([base.kick_angle[0]])
    )
    flights = 0

    def column(core: flight.FlightCore, j: int, stack: FloatArray, kick: float) -> None:
        """Resize sample j of the core to the stage masses of ``stack``."""
        for k in range(base.stages):
            usable = (1.0 - eps[k]) * stack[k]
            loaded = usable / (1.0 - residual[k])
            core.usable[k, j] = usable
            core.propellant[k, j] = loaded
            core.inert[k, j] = stack[k] - loaded
            initial = above_payload + float(stack[k:].sum())
            scale = thrust_ratio[k] * initial / base.thrust_vacuum[k, 0]
            core.thrust_vacuum[k, j] = base.thrust_vacuum[k, 0] * scale
            core.exit_area[k, j] = base.exit_area[k, 0] * scale
            core.mass_flow[k, j] = base.mass_flow[k, 0] * scale
        core.mass_initial[j] = above_payload + float(stack.sum())
        core.kick_angle[j] = kick

    def liftoff_for(share: float) -> tuple[float, FloatArray, FloatArray]:
        """Smallest total delta-v (batched grids, narrowed three times) that meets the target."""
        nonlocal flights
        shares = np.array([share, 1.0 - share]) if isp.size == 2 else np.array([1.0])
        low, high = ideal.delta_v.sum() * 0.85, ideal.delta_v.sum() * 1.25
        none = np.full(isp.size, np.nan)
        best: tuple[float, FloatArray, FloatArray] = (math.inf, none, none)
        for _ in range(3):
            totals = np.linspace(low, high, 7)
            stacks = [stack_for_split(total * shares, c, eps, above_payload) for total in totals]
            valid = [i for i, stack in enumerate(stacks) if stack is not None]
            if not valid:
                return best
            columns = [(i, kick) for i in valid for kick in kicks]
            core = base.take(np.zeros(len(columns), dtype=np.int64))
            for j, (i, kick) in enumerate(columns):
                stack = stacks[i]
                assert stack is not None
                column(core, j, stack, float(kick))
            # the margin the flight's verdict asks for is held back (as `size` does)
            held, offset = margins.hold_margin(mission, core, target)
            outcome = flight.simulate(held, rtol=1e-7)
            flights += len(columns)
            metric = target.metric(held, outcome) - offset
            if orbital:
                perigee = margins.perigee_altitude(outcome.state("final"))
                reached = (outcome.status == "orbit") & (perigee >= margins.MIN_PERIGEE)
                metric = np.where(reached, metric, -1e9)
            per_total: dict[int, float] = {}
            for j, (i, _) in enumerate(columns):
                per_total[i] = max(per_total.get(i, -math.inf), float(metric[j]))
            if progress is not None:
                progress(f"share {share:.3f}: {plural(flights, 'flight')}")
            meeting = [i for i in valid if per_total[i] >= 0]
            if not meeting:
                low, high = high, high * 1.3
                continue
            first = min(meeting)
            stack = stacks[first]
            assert stack is not None
            best = (above_payload + float(stack.sum()), totals[first] * shares, stack)
            low, high = (totals[first - 1] if first > 0 else totals[0] * 0.9), totals[first]
        return best

    if isp.size == 1:
        mass, dv, stack = liftoff_for(1.0)
        found = math.isfinite(mass)
        return LossAwareSplit(
            found,
            dv,
            mass,
            stack,
            flights,
            "one stage: smallest stack that meets the target"
            if found
            else "no stack in the searched range meets the target",
        )
    start = float(ideal.delta_v[0] / ideal.delta_v.sum())

    def objective(share: float) -> float:
        mass = liftoff_for(share)[0]
        return mass if math.isfinite(mass) else 1e30  # a finite penalty for the minimiser

    result = minimize_scalar(
        objective,
        bounds=(max(start - 0.2, 0.05), min(start + 0.2, 0.95)),
        method="bounded",
        options={"xatol": 0.01, "maxiter": 12},
    )
    mass, dv, stack = liftoff_for(float(result.x))
    found = math.isfinite(mass)
    message = (
        "bounded minimisation over the first stage's share, "
        f"{plural(int(result.nfev), 'split')} flown"
        if found
        else "no split in the searched range meets the target"
    )
    if found and not result.success:
        message += "; the minimisation did not converge: the best point found is shown"
    return LossAwareSplit(found, dv, mass, stack, flights, message)
