"""Plausibility checks: warnings, not errors, each with its rule and where the rule comes from.

A finding never stops a calculation. It tells the team that a number is outside what
vehicles of that kind usually reach, so that they look at it again before trusting it.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

from propulsion import catalog
from propulsion.vehicle import Motor

if TYPE_CHECKING:
    from propulsion.ledger import StageLedger
    from propulsion.mission import Mission

__all__ = ["Finding", "budget_findings"]

_FAMILY_SOURCE = "data/propellants.csv, row '{key}' ({source})"


@dataclass(frozen=True)
class Finding:
    """One plausibility warning: what was seen, the rule, and the rule's source."""

    subject: str
    message: str
    rule: str
    source: str


def budget_findings(mission: Mission, stages: Sequence[StageLedger]) -> list[Finding]:
    """Check a mission's stages against the usual ranges of their propellant families.

    Checks: specific impulse within the family's usual delivered range; stage propellant
    mass fraction within the family's usual range; liftoff thrust-to-weight at least the
    family's usual minimum (and above 1, below which the vehicle cannot lift off); a motor
    no wider than its stage.
    """
    findings: list[Finding] = []
    families = catalog.propellant_families()
    for index, (stage, row) in enumerate(zip(mission.vehicle.stages, stages, strict=True)):
        subject = f"stage '{stage.name}'"
        if index == 0 and row.thrust_to_weight < 1.0:
            findings.append(
                Finding(
                    subject,
                    f"liftoff thrust-to-weight is {row.thrust_to_weight:.2f}: the vehicle "
                    "cannot lift off",
                    "thrust must exceed weight at liftoff",
                    "Newton's second law",
                )
            )
        family = families.get(stage.propellant_family or "")
        if family is None:
            findings.append(
                Finding(
                    subject,
                    "no propellant family given: specific impulse and mass fraction not checked",
                    "name the propellant family to have the stage checked",
                    "common practice, no source",
                )
            )
        else:
            source = _FAMILY_SOURCE.format(key=family.key, source=family.source)
            if not family.isp_min <= row.isp <= family.isp_max:
                findings.append(
                    Finding(
                        subject,
                        f"specific impulse {row.isp:.0f} s is outside the usual "
                        f"{family.isp_min:.0f}–{family.isp_max:.0f} s of {family.name}",
                        "delivered specific impulse within the family's usual range",
                        source,
                    )
                )
            fraction = row.propellant_mass_fraction
            low, high = family.stage_mass_fraction_min, family.stage_mass_fraction_max
            if not low <= fraction <= high:
                side = "above" if fraction > high else "below"
                findings.append(
                    Finding(
                        subject,
                        f"propellant mass fraction {fraction:.3f} is {side} the usual "
                        f"{low:.2f}–{high:.2f} of stages flying {family.name}",
                        "stage propellant mass fraction within the family's usual range",
                        source,
                    )
                )
            minimum = family.liftoff_thrust_to_weight_min
            if index == 0 and 1.0 <= row.thrust_to_weight < minimum:
                findings.append(
                    Finding(
                        subject,
                        f"liftoff thrust-to-weight {row.thrust_to_weight:.1f} is below the "
                        f"usual minimum of {minimum:g} for vehicles flying {family.name}",
                        "liftoff thrust-to-weight at least the usual minimum, so the vehicle "
                        "leaves the rail or tower fast enough to be stable",
                        source,
                    )
                )
        motor = stage.propulsion
        if (
            isinstance(motor, Motor)
            and motor.diameter is not None
            and stage.diameter is not None
            and motor.diameter > stage.diameter
        ):
            findings.append(
                Finding(
                    subject,
                    f"motor {motor.name} ({motor.diameter * 1000:.0f} mm) is wider than the "
                    f"stage ({stage.diameter * 1000:.0f} mm)",
                    "a motor fits inside its airframe",
                    "geometry",
                )
            )
    return findings
