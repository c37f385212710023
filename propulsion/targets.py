"""What a mission leg must achieve, and the delta-v each kind of target requires.

A leg's requirement is given directly (``delta_v``) or derived from a target by a
published formula. Each kind lists the fields it reads (with their dimension) so the
mission loader can check a leg without knowing any physics, and a function that turns
the fields (SI floats) into the required delta-v with its derivation, term by term.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

from propulsion import orbits
from propulsion.constants import EARTH_EQUATORIAL_RADIUS, EARTH_MU

__all__ = ["TARGET_KINDS", "Requirement", "TargetKind", "required_delta_v"]


@dataclass(frozen=True)
class Requirement:
    """A required delta-v and the terms it was built from (label, signed value [m/s])."""

    delta_v: float
    terms: tuple[tuple[str, float], ...]
    formula: str


@dataclass(frozen=True)
class TargetKind:
    """One kind of leg target: its fields (name -> dimension) and how to compute it."""

    name: str
    description: str
    required: dict[str, str]
    optional: dict[str, str]
    compute: Callable[[dict[str, float], float, float | None, float | None], Requirement]


def _radius(altitude: float) -> float:
    return EARTH_EQUATORIAL_RADIUS + altitude


def _direct(fields: dict[str, float], *_: float | None) -> Requirement:
    return Requirement(fields["delta_v"], (("given", fields["delta_v"]),), "given directly")


def _apogee(fields: dict[str, float], site_altitude: float, *_: float | None) -> Requirement:
    start = _radius(site_altitude)
    speed = float(orbits.vertical_speed_for_apogee(start, start + fields["altitude"]))
    allowance = fields["loss_allowance"]
    return Requirement(
        speed + allowance,
        (("drag-free vertical burnout speed", speed), ("loss allowance", allowance)),
        "sqrt(2 GM (1/r_site - 1/r_apogee)) + loss allowance (energy conservation, "
        "inverse-square gravity)",
    )


def _burnout_speed(fields: dict[str, float], *_: float | None) -> Requirement:
    speed, allowance = fields["speed"], fields["loss_allowance"]
    return Requirement(
        speed + allowance,
        (("burnout speed", speed), ("loss allowance", allowance)),
        "speed + loss allowance",
    )


def _circular_orbit(
    fields: dict[str, float],
    site_altitude: float,
    latitude: float | None,
    azimuth: float | None,
) -> Requirement:
    allowance = fields["loss_allowance"]
    if "apogee_altitude" in fields:
        # an ellipse entered at its perigee: the vis-viva speed there (Curtis, eq. 2.71)
        perigee, apogee = _radius(fields["altitude"]), _radius(fields["apogee_altitude"])
        speed = math.sqrt(EARTH_MU * (2.0 / perigee - 2.0 / (perigee + apogee)))
        terms = [("perigee speed of the orbit", speed), ("loss allowance", allowance)]
        formula = "sqrt(GM (2/r_p - 1/a)) + loss allowance"
    else:
        speed = float(orbits.circular_speed(_radius(fields["altitude"])))
        terms = [("circular orbit speed", speed), ("loss allowance", allowance)]
        formula = "sqrt(GM / r) + loss allowance"
    if latitude is not None and "inclination" in fields:
        # the inclination sets the azimuth flown (propulsion.guidance); unreachable
        # inclinations raise InclinationError (a ValueError)
        from propulsion.guidance import launch_azimuth

        azimuth = launch_azimuth(fields["inclination"], latitude, speed).flown
    if latitude is not None and azimuth is not None:
        rotation = float(orbits.earth_rotation_speed(latitude, azimuth))
        terms.append(("Earth rotation along azimuth", -rotation))
        formula += " - omega R cos(latitude) sin(azimuth)"
    return Requirement(sum(value for _, value in terms), tuple(terms), formula)


def _transfer_burn(fields: dict[str, float], *_: float | None) -> Requirement:
    burn = float(
        orbits.transfer_burn(_radius(fields["from_altitude"]), _radius(fields["to_altitude"]))
    )
    return Requirement(burn, (("transfer burn", burn),), "first Hohmann burn (vis-viva)")


def _circularise(fields: dict[str, float], *_: float | None) -> Requirement:
    burn = float(
        orbits.circularisation_burn(_radius(fields["altitude"]), _radius(fields["from_altitude"]))
    )
    return Requirement(burn, (("circularisation burn", burn),), "second Hohmann burn (vis-viva)")


def _hohmann(fields: dict[str, float], *_: float | None) -> Requirement:
    transfer = orbits.hohmann_transfer(
        _radius(fields["from_altitude"]), _radius(fields["to_altitude"])
    )
    first, second = float(transfer.first_burn), float(transfer.second_burn)
    return Requirement(
        first + second,
        (("first burn", first), ("second burn", second)),
        "Hohmann transfer, both burns (vis-viva)",
    )


def _plane_change(fields: dict[str, float], *_: float | None) -> Requirement:
    speed = float(orbits.circular_speed(_radius(fields["altitude"])))
    burn = float(orbits.plane_change_delta_v(speed, fields["angle"]))
    return Requirement(
        burn, (("plane change", burn),), "2 v sin(angle / 2) at circular orbit speed"
    )


TARGET_KINDS: dict[str, TargetKind] = {
    kind.name: kind
    for kind in (
        TargetKind("delta_v", "a delta-v given directly", {"delta_v": "speed"}, {}, _direct),
        TargetKind(
            "apogee",
            "reach an apogee above the launch site",
            {"altitude": "length", "loss_allowance": "speed"},
            {},
            _apogee,
        ),
        TargetKind(
            "burnout_speed",
            "reach a speed at the burnout of the leg's last stage",
            {"speed": "speed", "loss_allowance": "speed"},
            {},
            _burnout_speed,
        ),
        TargetKind(
            "circular_orbit",
            "reach a circular orbit (with Earth's rotation when the launch site gives "
            "latitude and azimuth)",
            {"altitude": "length", "loss_allowance": "speed"},
            {"tolerance": "length", "inclination": "angle", "apogee_altitude": "length"},
            _circular_orbit,
        ),
        TargetKind(
            "transfer_burn",
            "from a circular orbit, raise or lower the opposite apsis (also a deorbit burn)",
            {"from_altitude": "length", "to_altitude": "length"},
            {},
            _transfer_burn,
        ),
        TargetKind(
            "circularise",
            "at an apsis, turn the ellipse into the circle through it",
            {"altitude": "length", "from_altitude": "length"},
            {},
            _circularise,
        ),
        TargetKind(
            "hohmann",
            "both burns of a Hohmann transfer between circular orbits",
            {"from_altitude": "length", "to_altitude": "length"},
            {},
            _hohmann,
        ),
        TargetKind(
            "plane_change",
            "turn the orbit plane of a circular orbit by an angle",
            {"altitude": "length", "angle": "angle"},
            {},
            _plane_change,
        ),
    )
}


def required_delta_v(
    kind: str,
    fields: dict[str, float],
    site_altitude: float = 0.0,
    latitude: float | None = None,
    azimuth: float | None = None,
) -> Requirement:
    """Required delta-v of a leg target [m/s], with the terms it is built from.

    Parameters
    ----------
    kind : str
        A key of :data:`TARGET_KINDS`.
    fields : dict
        The kind's fields in SI units: altitudes [m] (above the launch site for
        ``apogee``, above the WGS 84 equatorial radius for orbits), speeds [m/s],
        angles [rad].
    site_altitude : float
        Launch site altitude above sea level [m].
    latitude, azimuth : float or None
        Launch latitude and azimuth from north [rad], for Earth's rotation.

    Returns
    -------
    Requirement
        The required delta-v [m/s] and its terms.

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2013,
       chapters 2 and 6 (energy law, circular orbits, Hohmann transfer, plane change).
    """
    requirement = TARGET_KINDS[kind].compute(fields, site_altitude, latitude, azimuth)
    if not math.isfinite(requirement.delta_v):
        raise ValueError(f"target {kind!r} gives a non-finite delta-v")
    return requirement
