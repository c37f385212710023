"""The ideal delta-v ledger: what each stage gives and what each leg needs, with margins.

Each stage's ideal delta-v follows from the Tsiolkovsky rocket equation with everything
above it riding along. Legs are flown in order: stages that only serve one leg burn to
depletion (a motor always does), while the engine stage that ends a leg burns just what
the leg needs and keeps the rest for later legs and the margin. The propellant each leg
consumes is tracked through the rocket equation. The verdict compares what is left with
the margin the mission asks for.
"""

from __future__ import annotations

from dataclasses import asdict, dataclass, field, fields
from typing import TYPE_CHECKING, Any, Generic, TypeVar

from propulsion import rocket_equation as rq
from propulsion.constants import STANDARD_GRAVITY
from propulsion.mission import Leg, Mission
from propulsion.plausibility import Finding, budget_findings
from propulsion.units import DisplayUnits, display_units, format_quantity
from propulsion.vehicle import Motor, Stage

if TYPE_CHECKING:
    import pandas as pd

__all__ = ["BudgetResult", "LegLedger", "Rows", "StageLedger", "Verdict", "budget"]

T = TypeVar("T")

# Column units for the pandas frames and JSON keys (the unit becomes part of the name).
_UNIT_SUFFIX = {
    "mass": "_kg",
    "delta_v": "_m_s",
    "speed": "_m_s",
    "time": "_s",
    "force": "_n",
    "impulse": "_n_s",
}


class Rows(tuple[T, ...], Generic[T]):
    """A tuple of ledger rows that can become a pandas DataFrame."""

    def to_frame(self) -> pd.DataFrame:
        """Return the rows as a DataFrame; column names carry their SI unit."""
        import pandas as pd

        return pd.DataFrame([row.to_dict() for row in self])  # type: ignore[attr-defined]


def _keyed(row: Any) -> dict[str, Any]:
    """Row fields as a dict with SI unit suffixes in the keys (``initial_mass_kg``)."""
    out: dict[str, Any] = {}
    for item in fields(row):
        dimension = str(item.metadata.get("dimension", ""))
        out[item.name + _UNIT_SUFFIX.get(dimension, "")] = getattr(row, item.name)
    return out


def _q(dimension: str) -> Any:
    return field(metadata={"dimension": dimension})


@dataclass(frozen=True)
class StageLedger:
    """One stage in the stack, with everything above it riding along (SI units)."""

    name: str
    propulsion: str
    propellant_family: str | None
    initial_mass: float = _q("mass")
    final_mass: float = _q("mass")
    propellant_mass: float = _q("mass")
    usable_propellant: float = _q("mass")
    inert_mass: float = _q("mass")
    mass_above: float = _q("mass")
    mass_ratio: float = _q("")
    propellant_mass_fraction: float = _q("")
    structural_coefficient: float = _q("")
    payload_ratio: float = _q("")
    isp: float = _q("time")
    ideal_delta_v: float = _q("delta_v")
    burn_time: float = _q("time")
    thrust: float = _q("force")
    thrust_to_weight: float = _q("")
    total_impulse: float = _q("impulse")
    impulse_class: str | None = None

    def to_dict(self) -> dict[str, Any]:
        """Fields keyed with SI unit suffixes, for JSON and DataFrames."""
        return _keyed(self)


@dataclass(frozen=True)
class LegLedger:
    """One mission leg: required, available and delivered delta-v, propellant (SI units).

    ``margin`` is the delta-v available at the start of the leg beyond what the leg
    needs (its requirement plus its reserve) and what the legs right after it, flown by
    this leg's last stage alone, will need from the same propellant. (Burns of one stage
    add up exactly: the rocket equation's logarithm is additive.)
    """

    name: str
    target: str
    stages: tuple[str, ...]
    required_delta_v: float = _q("delta_v")
    reserve: float = _q("delta_v")
    available_delta_v: float = _q("delta_v")
    delivered_delta_v: float = _q("delta_v")
    margin: float = _q("delta_v")
    margin_fraction: float = _q("")
    propellant_used: float = _q("mass")
    propellant_remaining: float = _q("mass")
    met: bool = False
    derivation: str = ""

    def to_dict(self) -> dict[str, Any]:
        """Fields keyed with SI unit suffixes, for JSON and DataFrames."""
        out = _keyed(self)
        out["stages"] = list(self.stages)
        return out


@dataclass(frozen=True)
class Verdict:
    """The one-line judgement: does the mission meet its targets, and by how much.

    ``margin`` [m/s] is the delta-v left beyond every leg's need and the mission reserve
    (negative: the shortfall). ``required_margin`` [m/s] is what the mission asks for.
    ``meets_targets`` is None when the mission states no legs. ``short_legs`` names the
    legs whose requirement is not met.
    """

    meets_targets: bool | None
    margin: float
    margin_fraction: float
    total_required: float
    required_margin: float
    short_legs: tuple[str, ...]

    @property
    def text(self) -> str:
        """The verdict in words, in SI units."""
        return self.describe(display_units("si"))

    def describe(self, units: DisplayUnits) -> str:
        """The verdict in words, with delta-v in the given display units."""

        def dv(value: float) -> str:
            return format_quantity(value, "speed", units, digits=3)

        if self.meets_targets is None:
            return "No legs stated: nothing to judge."
        if self.meets_targets:
            text = (
                f"Meets its targets with {dv(self.margin)} ({self.margin_fraction:.1%}) "
                "of delta-v to spare"
            )
            if self.required_margin > 0:
                text += f", above the required margin of {dv(self.required_margin)}"
        elif self.short_legs:
            names = ", ".join(f"'{name}'" for name in self.short_legs)
            text = (
                f"Falls short by {dv(-self.margin)} ({-self.margin_fraction:.1%}) of delta-v: "
                f"leg {names} is not met"
            )
        else:
            text = (
                f"Falls short of the required margin: {dv(self.margin)} "
                f"({self.margin_fraction:.1%}) to spare, {dv(self.required_margin)} required"
            )
        return text + "."


@dataclass(frozen=True)
class BudgetResult:
    """The ideal delta-v budget of a mission."""

    mission: Mission
    stages: Rows[StageLedger]
    legs: Rows[LegLedger]
    total_ideal_delta_v: float
    leftover_delta_v: float
    verdict: Verdict
    findings: tuple[Finding, ...]

    def to_frame(self) -> pd.DataFrame:
        """The stage table as a DataFrame (``legs.to_frame()`` gives the leg table)."""
        return self.stages.to_frame()

    def to_dict(self) -> dict[str, Any]:
        """Everything as plain JSON-ready values with SI unit suffixes in the keys."""
        return {
            "mission": self.mission.name,
            "source": self.mission.source,
            "stages": [row.to_dict() for row in self.stages],
            "legs": [row.to_dict() for row in self.legs],
            "total_ideal_delta_v_m_s": self.total_ideal_delta_v,
            "total_required_delta_v_m_s": self.verdict.total_required,
            "leftover_delta_v_m_s": self.leftover_delta_v,
            "margin_m_s": self.verdict.margin,
            "margin_fraction": self.verdict.margin_fraction,
            "required_margin_m_s": self.verdict.required_margin,
            "meets_targets": self.verdict.meets_targets,
            "verdict": self.verdict.text,
            "warnings": [asdict(finding) for finding in self.findings],
        }


def _propulsion_label(stage: Stage) -> str:
    name = stage.propulsion.name if isinstance(stage.propulsion, Motor) else "engine"
    return f"{stage.count} × {name}" if stage.count > 1 else name


def _stage_ledger(mission: Mission) -> list[StageLedger]:
    vehicle = mission.vehicle
    rows = []
    for index, stage in enumerate(vehicle.stages):
        above = vehicle.mass_above(index)
        initial = above + stage.mass
        final = initial - stage.usable_propellant
        isp = stage.specific_impulse
        thrust = stage.thrust_sea_level if index == 0 else stage.thrust_vacuum
        motor = stage.propulsion if isinstance(stage.propulsion, Motor) else None
        rows.append(
            StageLedger(
                name=stage.name,
                propulsion=_propulsion_label(stage),
                propellant_family=stage.propellant_family,
                initial_mass=initial,
                final_mass=final,
                propellant_mass=stage.propellant_mass,
                usable_propellant=stage.usable_propellant,
                inert_mass=stage.inert_mass,
                mass_above=above,
                mass_ratio=initial / final,
                propellant_mass_fraction=float(
                    rq.propellant_mass_fraction(stage.inert_mass, stage.propellant_mass)
                ),
                structural_coefficient=float(
                    rq.structural_coefficient(stage.inert_mass, stage.propellant_mass)
                ),
                payload_ratio=float(
                    rq.payload_ratio(above, stage.inert_mass, stage.propellant_mass)
                ),
                isp=isp,
                ideal_delta_v=float(rq.ideal_delta_v(isp, initial, final)),
                burn_time=stage.burn_time,
                thrust=thrust,
                thrust_to_weight=thrust / (initial * STANDARD_GRAVITY),
                total_impulse=stage.total_impulse,
                impulse_class=_cluster_class(stage) if motor else None,
            )
        )
    return rows


def _cluster_class(stage: Stage) -> str:
    from propulsion.thrust_curve import impulse_class

    return impulse_class(stage.total_impulse)


class _Stack:
    """Propellant left in each stage while the legs are flown (SI)."""

    def __init__(self, mission: Mission) -> None:
        self.stages = mission.vehicle.stages
        self.payload = mission.vehicle.payload_mass
        self.remaining = [stage.usable_propellant for stage in self.stages]

    def mass(self, index: int) -> float:
        """Mass of the stack while stage ``index`` is the lowest one [kg]."""
        total = self.payload
        for stage, remaining in zip(self.stages[index:], self.remaining[index:], strict=True):
            total += stage.inert_mass + (stage.propellant_mass - stage.usable_propellant)
            total += remaining
        return total

    def full_burn(self, index: int) -> float:
        """Delta-v of burning all that is left in stage ``index`` [m/s]."""
        initial = self.mass(index)
        final = initial - self.remaining[index]
        return float(rq.ideal_delta_v(self.stages[index].specific_impulse, initial, final))

    def capability(self, first: int, last: int) -> float:
        """Delta-v of burning everything left in stages ``first..last`` in order [m/s]."""
        return sum(self.full_burn(index) for index in range(first, last + 1))

    def burn(self, index: int, delta_v: float | None) -> tuple[float, float]:
        """Burn stage ``index`` for ``delta_v`` (None: to depletion); (delta-v, propellant)."""
        full = self.full_burn(index)
        if delta_v is None or delta_v >= full:
            used = self.remaining[index]
            self.remaining[index] = 0.0
            return full, used
        used = float(
            rq.propellant_for_delta_v(
                delta_v, self.stages[index].specific_impulse, self.mass(index)
            )
        )
        self.remaining[index] -= used
        return delta_v, used


def _fly_legs(mission: Mission, stack: _Stack) -> list[LegLedger]:
    names = [stage.name for stage in mission.vehicle.stages]
    index_of = {name: i for i, name in enumerate(names)}
    legs = mission.legs
    # later legs flown by this leg's last stage alone draw on the same propellant: the
    # need of each run of consecutive one-stage legs on the same stage, summed from the
    # end (one pass, so a file of many legs costs time in proportion to its legs)
    alone = [leg.stages[0] if len(leg.stages) == 1 else None for leg in legs]
    run_need = [0.0] * (len(legs) + 1)
    for j in range(len(legs) - 1, -1, -1):
        if alone[j] is None:
            continue
        run_need[j] = legs[j].required_delta_v + legs[j].reserve
        if j + 1 < len(legs) and alone[j + 1] == alone[j]:
            run_need[j] += run_need[j + 1]
    rows = []
    for position, leg in enumerate(legs):
        first, last = index_of[leg.stages[0]], index_of[leg.stages[-1]]
        following = alone[position + 1] if position + 1 < len(legs) else None
        later_need = run_need[position + 1] if following == names[last] else 0.0
        need = leg.required_delta_v + leg.reserve
        available = stack.capability(first, last)
        delivered = used = 0.0
        for index in range(first, last + 1):
            stage = mission.vehicle.stages[index]
            can_stop = index == last and not stage.is_motor
            gained, burnt = stack.burn(index, max(need - delivered, 0.0) if can_stop else None)
            delivered += gained
            used += burnt
        margin = available - need - later_need
        rows.append(
            LegLedger(
                name=leg.name,
                target=leg.target,
                stages=leg.stages,
                required_delta_v=leg.required_delta_v,
                reserve=leg.reserve,
                available_delta_v=available,
                delivered_delta_v=delivered,
                margin=margin,
                margin_fraction=margin / need if need > 0 else float("inf"),
                propellant_used=used,
                propellant_remaining=sum(stack.remaining[first : last + 1]),
                met=delivered >= need * (1 - 1e-12),
                derivation=_derivation(leg),
            )
        )
    return rows


def _derivation(leg: Leg) -> str:
    terms = " ".join(
        f"{'+' if value >= 0 else '-'} {abs(value):.1f} m/s ({label})"
        for label, value in leg.requirement.terms
    )
    return terms.lstrip("+ ")


def _verdict(mission: Mission, legs: list[LegLedger], leftover: float) -> Verdict:
    total_required = mission.total_required_delta_v
    required_margin = mission.margins.required_margin_delta_v(total_required)
    if not legs:
        return Verdict(None, leftover, 0.0, 0.0, 0.0, ())
    surplus = [row.delivered_delta_v - row.required_delta_v - row.reserve for row in legs]
    short = tuple(row.name for row in legs if not row.met)
    if short:
        margin = sum(value for value in surplus if value < 0) - mission.margins.reserve
    else:
        margin = sum(surplus) + leftover - mission.margins.reserve
    fraction = margin / total_required if total_required > 0 else 0.0
    meets = not short and margin >= required_margin * (1 - 1e-12)
    return Verdict(meets, margin, fraction, total_required, required_margin, short)


def budget(mission: Mission) -> BudgetResult:
    """Compute the ideal delta-v budget of a mission.

    Parameters
    ----------
    mission : Mission
        A checked mission (see :func:`propulsion.load_mission`).

    Returns
    -------
    BudgetResult
        Stage and leg ledgers [SI units], the total ideal delta-v [m/s], the delta-v of
        the propellant left after the last leg [m/s], the verdict and plausibility
        findings.

    Notes
    -----
    Stage delta-v: :math:`\\Delta v = I_{sp} g_0 \\ln(m_0/m_f)` with
    :math:`g_0 = 9.80665` m/s², where :math:`m_0` includes all stages above and the
    payload, and :math:`m_f = m_0 - m_p(1 - f_{residual})`.

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2013,
       section 11.3 (the rocket equation) and 11.5 (multistage rockets).
    """
    stages = _stage_ledger(mission)
    stack = _Stack(mission)
    legs = _fly_legs(mission, stack)
    start = mission.vehicle.stage_index(mission.legs[-1].stages[-1]) if mission.legs else 0
    leftover = stack.capability(start, len(mission.vehicle.stages) - 1)
    return BudgetResult(
        mission=mission,
        stages=Rows(stages),
        legs=Rows(legs),
        total_ideal_delta_v=sum(row.ideal_delta_v for row in stages),
        leftover_delta_v=leftover,
        verdict=_verdict(mission, legs, leftover),
        findings=tuple(budget_findings(mission, stages)),
    )
