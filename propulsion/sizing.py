"""Sizing: the value of one mission field that just meets the target with its margin.

Two ways, side by side: the ideal budget with the mission's loss allowances (fast), and
the full flight simulation (losses computed). Both find the root of a margin function of
the varied field with a bracketing root finder (scipy's Brent method) after a bracket
search outward from the current value; whole-number fields (motor or engine counts) are
scanned upward instead.

When a stage's propellant is varied its inert mass follows a stated rule: it grows by the
stage's ``tank_fraction`` of the added propellant, or keeps the stage's propellant mass
fraction when the stage is given by that, or else stays fixed. The result says which.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from dataclasses import field as dataclass_field
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from propulsion import ascent, fields, flight
from propulsion.errors import PropulsionError, RequestError
from propulsion.ledger import BudgetResult, budget
from propulsion.mission import Mission, parse_mission
from propulsion.units import UnitParseError, parse_quantity

if TYPE_CHECKING:
    import pandas as pd

__all__ = ["SizingError", "SizingResult", "SizingSolution", "size"]

Progress = Callable[[str], None]

_TARGET_FIELD = {
    "apogee": ("altitude", "length"),
    "burnout_speed": ("speed", "speed"),
    "circular_orbit": ("altitude", "length"),
    "delta_v": ("delta_v", "speed"),
}


class SizingError(RequestError):
    """A sizing request that cannot be carried out (no target, a bad range)."""


@dataclass(frozen=True)
class SizingSolution:
    """One way's answer: the value [SI] of the field, or why none was found.

    ``margin`` is the margin function at the value (zero at a root): delta-v beyond the
    required margin [m/s] for the budget; the target's own terms for the flight (metres
    of apogee, m/s of burnout speed, m/s of delta-v for an orbit). ``sensitivity`` is the
    derivative of the target quantity (apogee [m], burnout speed [m/s], delta-v margin
    [m/s]) with respect to the field [per SI unit of the field].
    """

    method: str
    found: bool
    value: float
    margin: float
    achieved: float
    sensitivity: float
    evaluations: int
    message: str


@dataclass
class SizingResult:
    """Both solutions, the assumptions, and the ledgers at the solutions."""

    mission: Mission
    field: fields.FieldRef
    initial_value: float
    target_kind: str
    target_value: float
    target_dimension: str
    inert_rule: str
    budget: SizingSolution
    flight: SizingSolution
    budget_result: BudgetResult | None = dataclass_field(default=None, repr=False)
    flight_result: ascent.FlightResult | None = dataclass_field(default=None, repr=False)

    def to_frame(self) -> pd.DataFrame:
        """The two solutions as rows of a DataFrame (SI values)."""
        import pandas as pd

        return pd.DataFrame([self._row(solution) for solution in (self.budget, self.flight)])

    def _row(self, solution: SizingSolution) -> dict[str, Any]:
        unit = self.field.si_unit.replace("**", "^").replace("/", "_") or "count"
        return {
            "method": solution.method,
            "found": solution.found,
            f"value_{unit}": solution.value,
            "margin": solution.margin,
            "achieved": solution.achieved,
            "sensitivity": solution.sensitivity,
            "evaluations": solution.evaluations,
            "message": solution.message,
        }

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready results (SI; the field's unit is given as ``field_unit``)."""
        return {
            "mission": self.mission.name,
            "field": self.field.name,
            "field_unit": self.field.si_unit,
            "initial_value": self.initial_value,
            "target": self.target_kind,
            "target_value": self.target_value,
            "target_unit": {"length": "m", "speed": "m/s"}.get(self.target_dimension, ""),
            "inert_rule": self.inert_rule,
            "budget": self._row(self.budget),
            "flight": self._row(self.flight),
            "budget_meets_targets": None
            if self.budget_result is None
            else self.budget_result.verdict.meets_targets,
            "flight_meets_targets": None
            if self.flight_result is None
            else self.flight_result.verdict.meets_targets,
        }


def _inert_rule(document: dict[str, Any], ref: fields.FieldRef, tank: float | None) -> str:
    if ref.path[-1] != "propellant_mass" or ref.path[0] != "stage" or len(ref.path) != 3:
        return "other masses held fixed"
    stage = document["stage"][ref.path[1]]
    if "propellant_mass_fraction" in stage:
        return "the stage keeps its propellant mass fraction (inert mass grows with propellant)"
    fraction = tank if tank is not None else _tank_fraction(stage)
    if fraction is not None:
        return f"inert mass grows by {fraction:.1%} of the added propellant (tank fraction)"
    return "inert mass held fixed (give the stage a tank_fraction to let it grow)"


def _tank_fraction(stage: dict[str, Any]) -> float | None:
    value = stage.get("tank_fraction")
    if value is None:
        return None
    if isinstance(value, int | float):
        return float(value)
    return parse_quantity(str(value), "dimensionless")


class _Problem:
    """The mission as a function of the varied field."""

    def __init__(
        self, mission: Mission, ref: fields.FieldRef, tank: float | None, progress: Progress | None
    ) -> None:
        self.mission = mission
        self.ref = ref
        self.document = mission.document
        self.initial = fields.get_value(self.document, ref)
        self.progress = progress
        self.tank = None
        self.inert_ref: fields.FieldRef | None = None
        if ref.path[0] == "stage" and ref.path[-1] == "propellant_mass" and len(ref.path) == 3:
            stage = self.document["stage"][ref.path[1]]
            fraction = tank if tank is not None else _tank_fraction(stage)
            if fraction is not None and "inert_mass" in stage:
                self.tank = fraction
                self.inert_ref = fields.FieldRef(
                    ref.name + " (inert)", (*ref.path[:-1], "inert_mass"), "mass"
                )
                self.inert0 = fields.get_value(self.document, self.inert_ref) or 0.0
        self.base = Path(mission.source).parent if mission.source != "<mission>" else None

    def mission_at(self, value: float) -> Mission:
        document = fields.set_value(self.document, self.ref, value)
        if self.inert_ref is not None and self.tank is not None:
            grown = self.inert0 + self.tank * (value - (self.initial or 0.0))
            document = fields.set_value(document, self.inert_ref, max(grown, 1e-9))
        return parse_mission(document, source=self.mission.source, base_dir=self.base)


def _find_root(
    metric: Callable[[float], float],
    start: float,
    low: float,
    high: float,
    integer: bool,
    xtol: float,
) -> tuple[bool, float, str, int]:
    """Root of an increasing-or-decreasing metric near ``start`` within [low, high]."""
    from scipy.optimize import brentq

    count = 0

    def f(x: float) -> float:
        nonlocal count
        count += 1
        return metric(x)

    if integer:
        first = max(int(low), 1)
        for value in range(first, int(high) + 1):
            if f(float(value)) >= 0:
                return True, float(value), f"smallest whole number that meets it: {value}", count
        return False, math.nan, f"no whole number from {first} to {int(high)} meets it", count
    x0 = min(max(start, low), high) if start > 0 else max(low, 1e-6 * max(high, 1.0))
    f0 = f(x0)
    # search outward both ways (factors of two); the first bracket found is the root
    # nearest the current value, on whichever side it lies
    sides = {"up": (x0, f0), "down": (x0, f0)}
    brackets: list[tuple[float, float]] = []
    last = {"up": f0, "down": f0}
    for _ in range(40):
        for side in ("down", "up"):
            a, fa = sides[side]
            b = min(a * 2, high) if side == "up" else max(a / 2, low)
            if side == "up" and a <= 0:
                b = min(max(high * 1e-6, 1e-9), high)
            if b == a:
                continue
            fb = f(b)
            last[side] = fb
            if np.sign(fa) != np.sign(fb):
                brackets.append((a, b) if a < b else (b, a))
            sides[side] = (b, fb)
        if brackets:
            lo, hi = brackets[0]
            tolerance = xtol * max(abs(lo), abs(hi), 1e-12)
            root = float(brentq(f, lo, hi, xtol=tolerance, rtol=1e-12))
            # land on the side that meets the target: step towards it within the bracket
            meets_high = f(hi) >= 0
            for _ in range(4):
                if f(root) >= 0:
                    break
                root = min(root + tolerance, hi) if meets_high else max(root - tolerance, lo)
            return True, root, "root found by Brent's method", count
        if sides["up"][0] >= high and sides["down"][0] <= low:
            break
    return (
        False,
        math.nan,
        f"no value between {low:.6g} and {high:.6g} meets it (margin {f0:+.4g} at the current "
        f"value, {last['down']:+.4g} at {low:.6g}, {last['up']:+.4g} at {high:.6g})",
        count,
    )


def size(
    mission: Mission,
    vary: str,
    target: str | None = None,
    bounds: tuple[float, float] | None = None,
    tank_fraction: float | None = None,
    progress: Progress | None = None,
    flight_tolerance: float = 1e-4,
) -> SizingResult:
    """Find the value of one field that just meets the first leg's target with its margin.

    Parameters
    ----------
    mission : Mission
        A checked mission with at least one leg.
    vary : str
        Field path, for example ``stage.core.propellant_mass`` (see :mod:`propulsion.fields`).
    target : str or None
        A new value for the first leg's target, with units (``"3 km"`` of apogee), or None
        to keep the mission's.
    bounds : (float, float) or None
        The range searched [SI unit of the field]; by default 1/1000 to 1000 times the
        current value (counts: 1 to 64).
    tank_fraction : float or None
        Inert mass added per unit of added propellant, overriding the stage's.
    progress : callable or None
        Called with a short text after each evaluation.
    flight_tolerance : float
        Relative tolerance of the flight root [dimensionless].

    Returns
    -------
    SizingResult
        Both solutions [SI], the rule the inert mass followed, and the budget and flight
        at the solutions.
    """
    if not mission.legs:
        raise SizingError("the mission has no legs, so there is no target to size for")
    ref = fields.resolve(mission.document, vary)
    kind = mission.legs[0].target
    if kind not in _TARGET_FIELD:
        raise SizingError(f"sizing does not handle the target '{kind}' of the first leg")
    key, dimension = _TARGET_FIELD[kind]
    document = mission.document
    if target is not None:
        try:
            parse_quantity(target, dimension)
        except UnitParseError as exc:
            raise SizingError(f"--target {target!r}: {exc.reason}") from exc
        document = {**document, "leg": [dict(leg) for leg in document["leg"]]}
        document["leg"][0][key] = target
        base = Path(mission.source).parent if mission.source != "<mission>" else None
        mission = parse_mission(document, source=mission.source, base_dir=base)
    problem = _Problem(mission, ref, tank_fraction, progress)
    initial = problem.initial
    if initial is None:
        raise SizingError(f"the mission does not give {vary}; set it in the file first")
    target_value = mission.legs[0].fields[key]
    if bounds is None:
        bounds = (1.0, 64.0) if ref.is_count else (initial / 1000.0, max(initial, 1e-9) * 1000.0)
        if ref.path[-1] == "payload":
            bounds = (0.0, max(mission.vehicle.liftoff_mass, initial) * 1000.0)
        if ref.dimension == "dimensionless":
            bounds = (1e-6, 1.0 - 1e-6)
    low, high = bounds
    if not (math.isfinite(low) and math.isfinite(high)) or low >= high:
        raise SizingError(f"the range {low:g}..{high:g} is empty")
    rule = _inert_rule(mission.document, ref, tank_fraction)

    def note(text: str) -> None:
        if progress is not None:
            progress(text)

    # -- the ideal budget -----------------------------------------------------------------
    def budget_metric(value: float) -> float:
        try:
            result = budget(problem.mission_at(value))
        except PropulsionError:
            return -math.inf if value < initial else math.inf
        note(f"budget at {value:.6g}")
        return result.verdict.margin - result.verdict.required_margin

    found, value, message, count = _find_root(
        _finite(budget_metric), initial, low, high, ref.is_count, 1e-10
    )
    budget_result = budget(problem.mission_at(value)) if found else None
    budget_solution = SizingSolution(
        method="ideal budget (loss allowance)",
        found=found,
        value=value,
        margin=budget_metric(value) if found else math.nan,
        achieved=budget_result.total_ideal_delta_v if budget_result else math.nan,
        sensitivity=_derivative(budget_metric, value, ref.is_count) if found else math.nan,
        evaluations=count,
        message=message,
    )

    # -- the flight simulation ------------------------------------------------------------
    def flight_quantity(value: float) -> tuple[float, float]:
        candidate = problem.mission_at(value)
        core = flight.build_core(candidate, ascent.flown_stages(candidate))
        target_ = ascent.Target(candidate, core)
        required = budget(candidate).verdict.required_margin
        if kind == "circular_orbit":
            # an open-loop pitch programme suits one vehicle only: re-tune the kick for
            # each candidate (one batched flight over kick angles) so the sizing compares
            # each vehicle flown its best
            _, left = ascent.tune_kick(candidate, count=25)
            note(f"flight at {value:.6g}")
            if not math.isfinite(left):
                left = -1e6
            return left - required, left
        added = _mass_for_delta_v(core, required)
        if not math.isfinite(added):  # the whole ideal delta-v is less than the margin
            return -target_.required, math.nan
        core.mass_initial = core.mass_initial + added
        outcome = flight.simulate(core)
        note(f"flight at {value:.6g}")
        achieved = float(target_.achieved(core, outcome)[0])
        return float(target_.metric(core, outcome)[0]), achieved

    def flight_metric(value: float) -> float:
        try:
            return flight_quantity(value)[0]
        except PropulsionError:
            return -math.inf if value < initial else math.inf

    if kind == "delta_v":
        found, value, count = False, math.nan, 0
        message = "a delta_v target has no flight quantity to meet; the budget column answers"
    else:
        found, value, message, count = _find_root(
            _finite(flight_metric), initial, low, high, ref.is_count, flight_tolerance
        )
    flight_result = None
    if found:
        solved = problem.mission_at(value)
        if kind == "circular_orbit":
            angle, _ = ascent.tune_kick(solved, count=25)
            kick = fields.FieldRef(
                "flight.pitch_kick_angle", ("flight", "pitch_kick_angle"), "angle"
            )
            solved = parse_mission(
                fields.set_value(solved.document, kick, angle),
                source=mission.source,
                base_dir=problem.base,
            )
            message += (
                f"; pitch kick re-tuned for each candidate (here {math.degrees(angle):.2f} deg)"
            )
        flight_result = ascent.fly(solved)
    flight_solution = SizingSolution(
        method="flight simulation",
        found=found,
        value=value,
        margin=flight_metric(value) if found else math.nan,
        achieved=flight_quantity(value)[1] if found else math.nan,
        sensitivity=_derivative(lambda x: flight_quantity(x)[1], value, ref.is_count)
        if found
        else math.nan,
        evaluations=count,
        message=message,
    )
    return SizingResult(
        mission=mission,
        field=ref,
        initial_value=initial,
        target_kind=kind,
        target_value=target_value,
        target_dimension=dimension,
        inert_rule=rule,
        budget=budget_solution,
        flight=flight_solution,
        budget_result=budget_result,
        flight_result=flight_result,
    )


def _finite(metric: Callable[[float], float]) -> Callable[[float], float]:
    """Map infinite margins (invalid vehicles) to large finite ones for the root finder."""

    def wrapped(value: float) -> float:
        result = metric(value)
        if math.isinf(result):
            return math.copysign(1e30, result)
        return result

    return wrapped


def _derivative(function: Callable[[float], float], value: float, integer: bool) -> float:
    """Central difference (forward step of one for whole numbers)."""
    if integer:
        return function(value + 1) - function(value)
    step = 1e-3 * abs(value) if value else 1e-6
    return (function(value + step) - function(value - step)) / (2 * step)


def _mass_for_delta_v(core: flight.FlightCore, delta_v: float) -> float:
    """Payload mass whose addition costs ``delta_v`` of ideal delta-v [kg]."""
    from scipy.optimize import brentq

    if delta_v <= 0:
        return 0.0
    nominal = ascent.stack_delta_v(core, 0.0)
    if delta_v >= nominal:
        return math.inf
    high = float(core.mass_initial[0])
    while nominal - ascent.stack_delta_v(core, high) < delta_v:
        high *= 2
    return float(
        brentq(lambda m: nominal - ascent.stack_delta_v(core, m) - delta_v, 0.0, high, xtol=1e-12)
    )
