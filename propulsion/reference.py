"""A reference integration of one flight with scipy's solve_ivp, for checks and benchmarks.

It integrates the very same equations as :mod:`propulsion.flight` (the same right-hand
side, the same phases and events) one sample at a time with
:func:`scipy.integrate.solve_ivp`, piecewise between scheduled changes, with terminal
events for rail exit, liftoff, apogee, orbital cutoff and ground impact. It is slow and
exact to the chosen tolerance: tests compare the batched integrator against it at
``method="DOP853", rtol=1e-10``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from propulsion import flight

__all__ = ["ReferenceFlight", "reference_flight"]


@dataclass(frozen=True)
class ReferenceFlight:
    """Results of a reference integration (SI)."""

    status: str
    apogee_altitude: float
    apogee_time: float
    burnout_speed: tuple[float, ...]
    burnout_altitude: tuple[float, ...]
    final_state: np.ndarray
    evaluations: int


def reference_flight(
    core: flight.FlightCore,
    sample: int = 0,
    method: str = "DOP853",
    rtol: float = 1e-10,
    atol: float = 1e-10,
) -> ReferenceFlight:
    """Integrate one sample of a core with solve_ivp (the same model as the batched path).

    Parameters
    ----------
    core : FlightCore
        The flights; only ``sample`` is integrated.
    method : str
        A solve_ivp method, for example ``"DOP853"`` or ``"RK45"``.
    rtol, atol : float
        Tolerances handed to solve_ivp.

    Returns
    -------
    ReferenceFlight
        Apogee altitude above the site [m] and time [s], per-stage burnout speed [m/s]
        and altitude [m], final state, the number of right-hand-side evaluations.
    """
    from scipy.integrate import solve_ivp

    one = core.take(np.array([sample], dtype=np.int64))
    batch = flight._Batch(one, first_step=1e-3)
    record = flight._Recorder(one)
    flight._transitions(batch, np.ones(1, dtype=bool), record)
    evaluations = 0
    status = ""
    t = 0.0
    y = batch.y[:, 0].copy()

    def fun(time: float, state: np.ndarray) -> np.ndarray:
        return batch.model(np.array([time]), state[:, None])[:, 0]

    def make(name: str, function: Any, direction: int) -> Any:
        def event(time: float, state: np.ndarray) -> float:
            return float(function(np.array([time]), state[:, None], np.array([0]))[0])

        event.terminal = True  # type: ignore[attr-defined]
        event.direction = direction  # type: ignore[attr-defined]
        event.__name__ = name
        return event

    def liftoff(time: float, state: np.ndarray) -> float:
        return float(batch.model.rail_speed(state[:, None])[0]) - 1e-9

    liftoff.terminal = True  # type: ignore[attr-defined]
    liftoff.direction = 1  # type: ignore[attr-defined]

    while not status:
        batch.t[:] = t
        batch.y[:, 0] = y
        phase = batch.phase
        end = min(float(phase.next_time[0]), one.max_time)
        end = min(end, float(flight._curve_breakpoints(batch)[0]))
        kick = float(phase.kick_start[0])
        for boundary in (kick, kick + float(one.kick_duration[0])):
            if boundary > t:
                end = min(end, boundary)
        functions = flight._event_functions(batch)
        names, events = [], []
        for name, (function, watch, direction) in functions.items():
            if watch[0]:
                names.append(name)
                events.append(make(name, function, direction))
        if not phase.lifted[0]:
            names.append("liftoff")
            events.append(liftoff)
        if end > t:
            solution = solve_ivp(
                fun, (t, end), y, method=method, rtol=rtol, atol=atol, events=events or None
            )
            evaluations += int(solution.nfev)
            y = solution.y[:, -1].copy()
            t = float(solution.t[-1])
            fired = [
                name
                for name, times in zip(names, solution.t_events or [], strict=True)
                if len(times)
            ]
        else:
            fired = []
        batch.t[:] = t
        batch.y[:, 0] = y
        for name in fired:
            if name == "liftoff":
                phase.lifted[:] = True
            elif name == "kick":
                phase.kick_start[:] = t
            elif name == "rail_exit":
                phase.on_rail[:] = False
                phase.lifted[:] = True
                record.event(name, np.array([0]), batch.t, batch.y)
            elif name == "apogee" and one.stop_at_ground:
                record.event(name, np.array([0]), batch.t, batch.y)  # recorded; flies on
            else:
                record.event(name, np.array([0]), batch.t, batch.y)
                status = {"cutoff": "orbit"}.get(name, name)
        if status:
            break
        phase.risen |= batch.model.geometry(batch.y)[1] - one.site_altitude > 1.0
        flight._transitions(batch, batch.t >= phase.next_time, record)
        y = batch.y[:, 0].copy()
        if not phase.lifted[0] and phase.phase[0] == flight.BURNT and phase.stage[0] == 0:
            status = "no liftoff"
        elif (
            np.isfinite(one.cutoff_energy[0])
            and phase.stage[0] == one.stages - 1
            and phase.phase[0] == flight.BURNT
        ):
            status = "burnout"
        elif t >= one.max_time:
            status = "time limit"
    apogee_time, apogee_state = record.events["apogee"]
    site = float(one.site_altitude[0])

    def altitude(state: np.ndarray) -> float:
        if one.round_earth:
            return float(
                math.hypot(state[flight.X], state[flight.Y]) - flight.EARTH_EQUATORIAL_RADIUS - site
            )
        return float(state[flight.Y])

    speeds, heights = [], []
    for k in range(one.stages):
        _, state = record.events[f"burnout:{k}"]
        speeds.append(float(math.hypot(state[flight.VX, 0], state[flight.VY, 0])))
        heights.append(altitude(state[:, 0]))
    return ReferenceFlight(
        status=status,
        apogee_altitude=altitude(apogee_state[:, 0]) if np.isfinite(apogee_time[0]) else math.nan,
        apogee_time=float(apogee_time[0]),
        burnout_speed=tuple(speeds),
        burnout_altitude=tuple(heights),
        final_state=y,
        evaluations=evaluations,
    )
