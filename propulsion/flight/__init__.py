"""The flight core: a compiled per-sample kernel for the ascent of staged vehicles.

One job per module:

* :mod:`~propulsion.flight.layout`: where each number sits in the kernel's arrays;
* :mod:`~propulsion.flight.state`: :class:`FlightCore` (the SI arrays of a batch) and
  :func:`build_core` (a mission into a core);
* :mod:`~propulsion.flight.kernel`: the equations of motion, the integrator and the events,
  compiled by numba;
* :mod:`~propulsion.flight.batch`: :func:`simulate`, a batch on a thread pool;
* :mod:`~propulsion.flight.result`: :class:`Outcome` and :class:`Trajectory`, what the
  kernel hands back;
* :mod:`~propulsion.flight.reference`: the same model through scipy's ``solve_ivp``, one
  sample at a time, for the agreement tests.

The runner :func:`propulsion.ascent.fly` reads only :class:`Outcome`.
"""

from __future__ import annotations

from propulsion.flight.batch import simulate
from propulsion.flight.result import Outcome, Trajectory
from propulsion.flight.state import FlightCore, build_core

__all__ = ["FlightCore", "Outcome", "Trajectory", "build_core", "simulate"]
