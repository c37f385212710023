"""Launch azimuth for a target inclination, over a rotating Earth.

A launch site at geodetic latitude phi reaches an orbit of inclination i directly (without
a plane change) only if cos i <= cos phi, that is phi <= i <= 180 deg - phi. The inertial
azimuth of the ascending pass (clockwise from north) then follows from spherical
trigonometry [1]:

    sin beta_I = cos i / cos phi.

The ground rolls eastward under the rocket at v_eq cos phi (v_eq = omega R, the equator's
speed), so the azimuth flown relative to the ground is the direction of the velocity the
vehicle must add to the ground's [2]:

    tan beta_R = (v_orbit sin beta_I - v_eq cos phi) / (v_orbit cos beta_I),

with v_orbit the speed at insertion. A launch southward (the descending pass) flies
180 deg - beta instead.

All angles are in radians, speeds in m/s.

References
----------
.. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2014, section
   on the launch azimuth (the relation cos i = cos phi sin beta) (section recalled from
   memory).
.. [2] D. A. Vallado, Fundamentals of Astrodynamics and Applications, 4th ed., 2013, the
   launch-azimuth velocity triangle over a rotating Earth (section recalled from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from propulsion.constants import EARTH_EQUATORIAL_RADIUS, EARTH_ROTATION_RATE

__all__ = [
    "Azimuth",
    "InclinationError",
    "inertial_azimuth",
    "launch_azimuth",
]


class InclinationError(ValueError):
    """An inclination the site cannot reach directly (below its latitude)."""


@dataclass(frozen=True)
class Azimuth:
    """The launch azimuth for a target inclination.

    ``inertial`` [rad]: the azimuth of the orbit's ground track at the site (non-rotating);
    ``flown`` [rad]: the azimuth to fly relative to the rotating ground; ``correction``
    [rad] = flown - inertial; ``southward``: the descending pass.
    """

    inertial: float
    flown: float
    correction: float
    southward: bool


def inertial_azimuth(inclination: float, latitude: float, southward: bool = False) -> float:
    """Inertial launch azimuth [rad], clockwise from north, for an orbit's inclination [rad]
    from a site at ``latitude`` [rad] (sin beta = cos i / cos phi [1]), in [0, 2 pi).

    Raises :class:`InclinationError` when the inclination is below the latitude (or above
    180 deg minus it): no direct launch reaches it.
    """
    cos_i = math.cos(inclination)
    cos_phi = math.cos(latitude)
    if not 0.0 <= inclination <= math.pi:
        raise InclinationError(
            f"an inclination of {math.degrees(inclination):g} deg is out of range "
            "(expected 0 to 180 deg)"
        )
    if abs(cos_i) > cos_phi + 1e-12:
        low = math.degrees(abs(latitude))
        raise InclinationError(
            f"an inclination of {math.degrees(inclination):.2f} deg cannot be reached from a "
            f"site at latitude {math.degrees(latitude):.2f} deg without a plane change: a "
            f"direct launch reaches {low:.2f} to {180.0 - low:.2f} deg"
        )
    beta = math.asin(max(-1.0, min(1.0, cos_i / cos_phi)))
    # in [0, 2 pi), as the flown azimuth: a retrograde orbit's ascending pass heads
    # north-west (beta < 0)
    return math.pi - beta if southward else beta % (2.0 * math.pi)


def launch_azimuth(
    inclination: float,
    latitude: float,
    orbit_speed: float,
    southward: bool = False,
    rotation_rate: float = EARTH_ROTATION_RATE,
    radius: float = EARTH_EQUATORIAL_RADIUS,
) -> Azimuth:
    """The azimuth to fly [rad] from a rotating Earth to an orbit of ``inclination`` [rad].

    ``orbit_speed`` [m/s] is the inertial speed at insertion; ``rotation_rate`` [rad/s] and
    ``radius`` [m] give the equator's speed (0 rotation: the inertial azimuth).
    """
    beta = inertial_azimuth(inclination, latitude, southward)
    ground = rotation_rate * radius * math.cos(latitude)
    east = orbit_speed * math.sin(beta) - ground
    north = orbit_speed * math.cos(beta)
    flown = math.atan2(east, north) % (2.0 * math.pi)
    correction = (flown - beta + math.pi) % (2.0 * math.pi) - math.pi
    return Azimuth(inertial=beta, flown=flown, correction=correction, southward=southward)
