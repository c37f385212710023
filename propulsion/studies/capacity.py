"""Payload to orbit against altitude (and inclination): each point a guided, sized flight.

For each circular altitude (and, when asked, each inclination) the mission's first leg is
moved to that orbit, the later legs are dropped (they start from the parking orbit the
file names), and the largest payload is found that the guided ascent still puts into the
orbit with the mission's delta-v reserve left: the payload margin of the flight
(:func:`propulsion.margins.payload_margin`, root finding on the compiled flight with its
steering solved for every trial, :mod:`propulsion.flight.steering`) added to the file's
payload. When the file leaves the pitch kick open, it is chosen again for the payload
found and the margin found once more, so every point flies the kick that suits it.

All values are SI: altitudes [m], inclinations [rad], payloads [kg].
"""

from __future__ import annotations

import copy
import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any

from propulsion import ascent, flight, margins
from propulsion.errors import RequestError
from propulsion.mission import Mission, parse_mission

__all__ = ["MAX_POINTS", "CapacityPoint", "CapacityResult", "capacity"]

MAX_POINTS = 200
"""Most points (altitudes times inclinations) one curve may ask for."""
RECHOOSE = 0.98
"""The second pass chooses the kick at this fraction of the payload first found."""
PASSES = 2
"""Payload searches per point when the kick is chosen: found, then re-found at the kick
that suits the payload found."""


@dataclass(frozen=True)
class CapacityPoint:
    """One point of the curve: ``altitude`` [m], ``inclination`` [rad] (NaN: the file's
    plane), the largest ``payload`` [kg] (NaN when the orbit is out of reach even with no
    payload), the pitch ``kick`` [rad] flown, whether the root was ``bounded``, and the
    flights' ``evaluations``."""

    altitude: float
    inclination: float
    payload: float
    kick: float
    bounded: bool
    evaluations: int

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready (SI; angles in degrees)."""
        return {
            "altitude_m": self.altitude,
            "inclination_deg": None
            if math.isnan(self.inclination)
            else math.degrees(self.inclination),
            "payload_kg": None if math.isnan(self.payload) else self.payload,
            "pitch_kick_deg": math.degrees(self.kick),
            "bounded": self.bounded,
            "evaluations": self.evaluations,
        }


@dataclass(frozen=True)
class CapacityResult:
    """The curve: ``points`` in altitude order within each inclination."""

    mission: Mission
    points: tuple[CapacityPoint, ...]
    reserve: float

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready (SI)."""
        return {
            "mission": self.mission.name,
            "source": self.mission.source,
            "reserve_m_s": self.reserve,
            "points": [point.to_dict() for point in self.points],
            "method": "largest payload of a guided ascent to each circular orbit "
            "(payload margin by root finding on the flight)",
        }


def _check(mission: Mission, altitudes: Sequence[float], inclinations: Sequence[float]) -> None:
    if mission.flight.guidance != "orbit":
        raise RequestError(
            "the mission does not fly guided to an orbit",
            'a mission whose [flight] has guidance = "orbit" (and a first leg to a circular orbit)',
        )
    if not altitudes:
        raise RequestError("no altitudes", "at least one circular altitude")
    count = len(altitudes) * max(len(inclinations), 1)
    if count > MAX_POINTS:
        raise RequestError(
            f"{count:,} points is too many", f"at most {MAX_POINTS} altitudes × inclinations"
        )
    for altitude in altitudes:
        if not 80e3 <= altitude <= 40_000e3:
            raise RequestError(
                f"a circular altitude of {altitude / 1e3:g} km is out of range",
                "altitudes from 80 km to 40,000 km",
            )


def _at(mission: Mission, altitude: float, inclination: float, payload: float | None) -> Mission:
    """The mission with its first leg moved to the orbit and the later legs dropped."""
    document = copy.deepcopy(mission.document)
    leg = document["leg"][0]
    leg["altitude"] = f"{altitude!r} m"
    if not math.isnan(inclination):
        leg["inclination"] = f"{math.degrees(inclination)!r} deg"
    leg.pop("tolerance", None)
    document["leg"] = [leg]
    # the largest payload is the curve's answer: no flight margin is held on top of it
    document.get("margins", {}).pop("flight", None)
    if payload is not None:
        document["vehicle"]["payload"] = f"{payload!r} kg"
    return parse_mission(document, source=mission.source, base_dir=_folder(mission))


def _folder(mission: Mission) -> str | None:
    from pathlib import Path

    return str(Path(mission.source).parent) if mission.source != "<mission>" else None


def _largest_payload(mission: Mission, rtol: float) -> tuple[float, float, bool, int]:
    """(largest payload [kg], kick [rad], bounded, evaluations) of one mission."""
    core = flight.build_core(mission, ascent.flown_stages(mission))
    target = margins.Target(mission, core)
    outcome = flight.simulate(core, rtol=rtol)
    nominal = float(target.metric(core, outcome)[0])
    payload = mission.vehicle.payload_mass
    figure = margins.payload_margin(core, target, nominal, payload, rtol)
    value = payload + figure.amount if figure.bounded else math.nan
    return value, float(core.kick_angle[0]), figure.bounded, figure.evaluations


def capacity(
    mission: Mission,
    altitudes: Sequence[float],
    inclinations: Sequence[float] = (),
    rtol: float = 1e-8,
    progress: Callable[[int, int], None] | None = None,
) -> CapacityResult:
    """The largest payload to each circular altitude [m] (and inclination [rad]).

    Raises :class:`~propulsion.errors.RequestError` for a mission not guided to an orbit,
    no altitudes, too many points or an altitude out of range; an inclination the site
    cannot reach raises the loader's error for the leg's inclination.
    """
    _check(mission, altitudes, inclinations)
    planes = list(inclinations) or [math.nan]
    total = len(altitudes) * len(planes)
    points: list[CapacityPoint] = []
    for plane in planes:
        for altitude in altitudes:
            moved = _at(mission, altitude, plane, None)
            payload, kick, bounded, evaluations = _largest_payload(moved, rtol)
            if mission.flight.kick_chosen and not bounded:
                # out of reach with the file's payload, so no kick was found for it: look
                # again from an empty payload bay
                payload, kick, bounded, more = _largest_payload(
                    _at(mission, altitude, plane, 0.0), rtol
                )
                evaluations += more
            if mission.flight.kick_chosen and bounded:
                for _ in range(PASSES - 1):
                    # the kick chosen for the file's payload may not suit the payload
                    # found: choose it again a little below it (at the payload found
                    # itself no kick has anything to spare) and keep the better answer
                    resized = _at(mission, altitude, plane, max(RECHOOSE * payload, 0.0))
                    again, turn, found, more = _largest_payload(resized, rtol)
                    evaluations += more
                    if found and again > payload:
                        payload, kick = again, turn
            points.append(CapacityPoint(altitude, plane, payload, kick, bounded, evaluations))
            if progress is not None:
                progress(len(points), total)
    return CapacityResult(mission, tuple(points), mission.margins.reserve)
