"""Run a batch of flights through the compiled kernel, in threads of this process.

Each sample is integrated on its own (:mod:`propulsion.flight.kernel`), so the batch is
cut into chunks that run on a thread pool: the kernel releases the interpreter lock, and
a sample's numbers are the same bit for bit whatever the chunk or the thread.
"""

from __future__ import annotations

import os
import time
from concurrent.futures import ThreadPoolExecutor
from dataclasses import replace
from typing import Any

import numpy as np
import numpy.typing as npt

from propulsion.flight import layout
from propulsion.flight.result import Outcome, Trajectory
from propulsion.flight.state import FlightCore
from propulsion.flight.steering import SteeringSolution

FloatArray = npt.NDArray[np.float64]

__all__ = ["available_threads", "simulate"]

CHUNK = 64
"""Samples per task on the thread pool."""
RECORD_START = 4096
"""Steps a recorded flight has room for at first (the buffers grow if it needs more)."""


def _load(kernel: Any, *arrays: Any) -> None:
    """Load the compiled kernel (numba's cache, or a compilation the very first time) with
    a call that flies nothing, so that the time a batch reports is the flying alone."""
    params, stage_params, settings, tables, rtol, status, steps, times, states, values = arrays
    kernel.fly_batch(
        0, 0, params, stage_params, settings, tables, rtol, status, steps, times, states,
        values, np.empty(kernel.MEMORY), -1, np.empty(0), np.empty((0, layout.NY)),
        np.empty((0, layout.ND)), np.zeros(2, dtype=np.int64),
    )  # fmt: skip


def available_threads() -> int:
    """Cores this process may run on."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # not on Linux
        return max(1, os.cpu_count() or 1)


def simulate(
    core: FlightCore, rtol: float = 1e-8, record: bool = False, threads: int | None = None
) -> Outcome:
    """Integrate a batch of flights until each one reaches its end.

    Parameters
    ----------
    core : FlightCore
        The flights, as SI arrays (one column per sample).
    rtol : float
        Relative tolerance of the Dormand–Prince 5(4) step control [dimensionless].
    record : bool
        Keep every accepted step of sample 0 (for trajectories and pictures).
    threads : int or None
        Threads to fly on; all available cores when None.

    Returns
    -------
    Outcome
        Events, maxima, ledger marks, final states and status per sample.
    """
    from propulsion.flight import kernel

    solution = None
    if core.guidance == "orbit" and core.orbit_target is not None and core.n:
        # guided to an orbit: solve every sample's steering first (shooting on this very
        # kernel), then fly the solved steering
        from propulsion.flight.steering import solve_steering

        solution = solve_steering(core, core.orbit_target, rtol=min(rtol, 1e-9), threads=threads)
        core = replace(
            core,
            guide_a=solution.guide_a,
            guide_b=solution.guide_b,
            azimuth=solution.azimuth,
            cutoff_energy=np.full(core.n, core.orbit_target.energy),
        )
    params, stage_params, settings, tables = core.pack()
    n = core.n
    events = layout.event_count(core.stages)
    status = np.zeros(n, dtype=np.int64)
    steps = np.zeros(n, dtype=np.int64)
    event_time = np.empty((n, events))
    event_state = np.empty((n, events, layout.NY))
    event_values = np.empty((n, events, layout.ND))
    _load(kernel, params, stage_params, settings, tables, rtol, status, steps, event_time,
          event_state, event_values)  # fmt: skip
    started = time.perf_counter()
    trajectory = None
    first = 0
    if record and n:
        capacity = RECORD_START
        while True:
            times = np.empty(capacity)
            states = np.empty((capacity, layout.NY))
            values = np.empty((capacity, layout.ND))
            info = np.zeros(2, dtype=np.int64)
            kernel.fly_batch(
                0, 1, params, stage_params, settings, tables, rtol, status, steps, event_time,
                event_state, event_values, np.empty(kernel.MEMORY), 0, times, states, values,
                info,
            )  # fmt: skip
            if not info[1]:
                break
            capacity *= 4
        recorded = int(info[0])
        trajectory = Trajectory(
            time=times[:recorded].copy(),
            state=states[:recorded].copy(),
            values=values[:recorded].copy(),
        )
        first = 1
    workers = max(1, min(threads or available_threads(), (n - first + CHUNK - 1) // CHUNK))
    bounds = [(lo, min(lo + CHUNK, n)) for lo in range(first, n, CHUNK)]
    no_times = np.empty(0)
    no_states = np.empty((0, layout.NY))
    no_values = np.empty((0, layout.ND))

    def run(bound: tuple[int, int]) -> None:
        kernel.fly_batch(
            bound[0], bound[1], params, stage_params, settings, tables, rtol, status, steps,
            event_time, event_state, event_values, np.empty(kernel.MEMORY), -1, no_times,
            no_states, no_values, np.zeros(2, dtype=np.int64),
        )  # fmt: skip

    if workers > 1:
        with ThreadPoolExecutor(max_workers=workers) as pool:
            for _ in pool.map(run, bounds):
                pass
    else:
        for bound in bounds:
            run(bound)
    return Outcome(
        stage_names=core.stage_names,
        status_code=status,
        steps=steps,
        event_time=event_time,
        event_state=event_state,
        event_values=event_values,
        trajectory=trajectory,
        compute_time=time.perf_counter() - started,
        threads=workers,
        extra=_steering_extra(solution),
    )


def _steering_extra(solution: SteeringSolution | None) -> dict[str, FloatArray]:
    """The solved steering as the outcome's extra arrays (empty without guidance)."""
    if solution is None:
        return {}
    return {
        "guide_a": solution.guide_a,
        "guide_b": solution.guide_b,
        "guide_azimuth": solution.azimuth,
        "guide_converged": solution.converged.astype(float),
        "guide_radius_error": solution.radius_error,
        "guide_radial_velocity": solution.radial_velocity,
        "guide_inclination_error": solution.inclination_error,
        "guide_iterations": np.full(solution.guide_a.size, float(solution.iterations)),
        "guide_flights": np.full(solution.guide_a.size, float(solution.flights)),
    }
