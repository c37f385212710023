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

from propulsion import ascent, fields, flight, margins
from propulsion.errors import PropulsionError, RequestError
from propulsion.ledger import BudgetResult, budget
from propulsion.mission import Mission, parse_mission
from propulsion.units import UnitParseError, format_plain, parse_quantity

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
    peak_value: float = math.nan
    """Where the margin peaks inside the range when no value meets the target [SI unit of
    the field] (NaN when it rises or falls all the way: then the range's end is nearest)."""
    peak_margin: float = math.nan
    """The margin at that peak (negative: the target is out of reach) [as ``margin``]."""
    peak_achieved: float = math.nan
    """The target quantity at that peak [as ``achieved``]."""


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
            "peak_value": solution.peak_value if math.isfinite(solution.peak_value) else None,
            "peak_margin": solution.peak_margin if math.isfinite(solution.peak_margin) else None,
            "peak_achieved": solution.peak_achieved
            if math.isfinite(solution.peak_achieved)
            else None,
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
    # the current value itself (0 included), so "at the current value" means it
    x0 = min(max(start, low), high)
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
        f"no value between {_number(low, 6)} and {_number(high, 6)} meets it (margin "
        f"{_signed(f0)} at the current value, {_signed(last['down'])} at {_number(low, 6)}, "
        f"{_signed(last['up'])} at {_number(high, 6)})",
        count,
    )


@dataclass(frozen=True)
class _Peak:
    value: float
    margin: float
    evaluations: int


def _find_peak(
    metric: Callable[[float], float], low: float, high: float, points: int = 33
) -> _Peak | None:
    """Where a margin that never reaches zero peaks inside [low, high], if it does.

    A grid of ``points`` values (geometric when the range spans more than two decades and
    starts above zero) finds the largest margin; when it lies inside the range, Brent's
    bounded method refines it between its neighbours [R. P. Brent, Algorithms for
    Minimization without Derivatives, 1973, ch. 5, as scipy.optimize.minimize_scalar].
    None when the margin is largest at an end of the range (it only rises or falls).
    """
    from scipy.optimize import minimize_scalar

    if low > 0 and high / low > 100:
        grid = np.geomspace(low, high, points)
    else:
        grid = np.linspace(low, high, points)
    values = np.array([metric(float(x)) for x in grid])
    i = int(np.argmax(values))
    if i in (0, points - 1) or not np.isfinite(values[i]):
        return None
    left, right = float(grid[i - 1]), float(grid[i + 1])
    found = minimize_scalar(
        lambda x: -metric(float(x)),
        bounds=(left, right),
        method="bounded",
        options={"xatol": 1e-6 * (right - left)},
    )
    best = float(found.x)
    margin = metric(best)
    if margin < values[i]:
        best, margin = float(grid[i]), float(values[i])
    return _Peak(best, margin, points + int(found.nfev) + 1)


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
        The range searched [SI unit of the field]; by default the whole range a
        dimensionless field may take, 0 to 1000 times the lift-off mass for the payload,
        1/1000 to 1000 times the current value otherwise (counts: 1 to 64).
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
    if tank_fraction is not None:
        low_tank, high_tank = fields.LIMITS["tank_fraction"]
        if not low_tank <= tank_fraction <= high_tank:
            raise SizingError(
                f"a tank fraction of {_number(tank_fraction)} is out of range",
                f"from {low_tank:.0%} to {high_tank:.0%}, as the stage field tank_fraction",
            )
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
        bounds = _default_bounds(ref, initial, mission)
    low, high = bounds
    if not (math.isfinite(low) and math.isfinite(high)) or low >= high:
        raise SizingError(f"the range {_number(low, 6)}..{_number(high, 6)} is empty")
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
    peak = None if found or ref.is_count else _find_peak(_finite(budget_metric), low, high)
    if peak is not None:
        count += peak.evaluations
        peaked = budget(problem.mission_at(peak.value))
        message = (
            f"out of reach: the delta-v margin peaks at {_signed(peak.margin)} m/s at "
            f"{_value_text(peak.value, ref)}, inside the range searched, and falls away "
            "on either side"
        )
    budget_solution = SizingSolution(
        method="ideal budget (loss allowance)",
        found=found,
        value=value,
        margin=budget_metric(value) if found else math.nan,
        achieved=budget_result.total_ideal_delta_v if budget_result else math.nan,
        sensitivity=_derivative(budget_metric, value, ref.is_count) if found else math.nan,
        evaluations=count,
        message=message,
        peak_value=peak.value if peak else math.nan,
        peak_margin=peak.margin if peak else math.nan,
        peak_achieved=peaked.total_ideal_delta_v if peak else math.nan,
    )

    # -- the flight simulation ------------------------------------------------------------
    def flight_quantity(value: float) -> tuple[float, float]:
        """(margin in the target's terms, achieved) of the vehicle at ``value`` flown with
        the margin the verdict asks for held back (:func:`margins.hold_margin`)."""
        candidate = problem.mission_at(value)
        core = flight.build_core(candidate, ascent.flown_stages(candidate))
        target_ = margins.Target(candidate, core)
        held, offset = margins.hold_margin(candidate, core, target_)
        if kind == "circular_orbit" and not core.kick_chosen:
            # an open-loop pitch programme suits one vehicle only: re-tune the kick for
            # each candidate (one batched flight over kick angles) so the sizing compares
            # each vehicle flown its best (a guided flight whose kick the file leaves open
            # had it chosen by build_core already, below)
            _, left = ascent.tune_kick(candidate, count=25, core=held)
            note(f"flight at {value:.6g}")
            if not math.isfinite(left):
                left = -1e6
            return left - offset, left
        outcome = flight.simulate(held)
        note(f"flight at {value:.6g}")
        achieved = float(target_.achieved(held, outcome)[0])
        return float(target_.metric(held, outcome)[0]) - offset, achieved

    def flight_metric(value: float) -> float:
        try:
            return flight_quantity(value)[0]
        except PropulsionError:
            return -math.inf if value < initial else math.inf

    peak = None
    if kind == "delta_v":
        found, value, count = False, math.nan, 0
        message = "a delta_v target has no flight quantity to meet; the budget column answers"
    else:
        found, value, message, count = _find_root(
            _finite(flight_metric), initial, low, high, ref.is_count, flight_tolerance
        )
        if not found and not ref.is_count:
            peak = _find_peak(_finite(flight_metric), low, high)
    peak_achieved = math.nan
    if peak is not None:
        count += peak.evaluations
        peak_achieved = flight_quantity(peak.value)[1]
        quantity = {
            "apogee": "the apogee",
            "burnout_speed": "the burnout speed",
            "circular_orbit": "the delta-v left after the later legs",
        }[kind]
        unit = {"apogee": "m", "burnout_speed": "m/s", "circular_orbit": "m/s"}[kind]
        message = (
            f"out of reach: {quantity} peaks at {_number(peak_achieved)} {unit} at "
            f"{_value_text(peak.value, ref)}, inside the range searched (margin "
            f"{_signed(peak.margin)} {unit} there), and falls away on either side"
        )
    flight_result = None
    if found:
        solved = problem.mission_at(value)
        if kind == "circular_orbit":
            solved_core = flight.build_core(solved, ascent.flown_stages(solved))
            held, _ = margins.hold_margin(solved, solved_core, margins.Target(solved, solved_core))
            # guided with the kick left open, build_core chose it already (most propellant
            # left); an open-loop kick is tuned here
            angle = (
                float(solved_core.kick_angle[0])
                if solved_core.kick_chosen
                else ascent.tune_kick(solved, count=25, core=held)[0]
            )
            kick = fields.FieldRef(
                "flight.pitch_kick_angle", ("flight", "pitch_kick_angle"), "angle"
            )
            solved = parse_mission(
                fields.set_value(solved.document, kick, angle),
                source=mission.source,
                base_dir=problem.base,
            )
            how = "chosen" if solved_core.kick_chosen else "re-tuned"
            message += f"; pitch kick {how} for each candidate (here {math.degrees(angle):.2f} deg)"
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
        peak_value=peak.value if peak else math.nan,
        peak_margin=peak.margin if peak else math.nan,
        peak_achieved=peak_achieved,
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


def _default_bounds(ref: fields.FieldRef, initial: float, mission: Mission) -> tuple[float, float]:
    """The range `size` searches when none is given [SI unit of the field].

    Counts: 1 to 64. A dimensionless field: the whole range the mission file allows for it
    (:data:`propulsion.fields.LIMITS`), its open ends nudged inside. The payload: 0 to a
    thousand times the lift-off mass. Other quantities: a thousandth to a thousand times
    the current value.
    """
    if ref.is_count:
        return 1.0, 64.0
    name = str(ref.path[-1])
    if ref.dimension == "dimensionless":
        low, high = fields.LIMITS.get(name, (0.0, 1.0))
        span = high - low
        return low + 1e-6 * span, high - (1e-6 * span if high <= 1.0 else 0.0)
    if name == "payload":
        return 0.0, max(mission.vehicle.liftoff_mass, initial) * 1000.0
    return initial / 1000.0, max(initial, 1e-9) * 1000.0


def _value_text(value: float, ref: fields.FieldRef) -> str:
    unit = ref.si_unit
    return f"{ref.name} = {_number(value)}{' ' + unit if unit else ''}"


def _number(value: float, digits: int = 4) -> str:
    """A number in a message: ``digits`` significant figures, plain decimals (never
    scientific notation), thousands separators."""
    return format_plain(value, digits)


def _signed(value: float, digits: int = 4) -> str:
    """:func:`_number` with its sign, ``+`` included (a margin)."""
    text = _number(value, digits)
    return f"+{text}" if value > 0 and text != "0" else text


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
