"""What the flight kernel hands back: events, maxima, ledger marks and trajectory samples.

Every number a runner or a study needs is here, already derived in the kernel with the
flight's own phase at that moment (:data:`propulsion.flight.layout.DESCRIBED`), so the
runner never rebuilds the equations of motion.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import numpy.typing as npt

from propulsion.flight import layout

__all__ = ["Outcome", "Trajectory"]

FloatArray = npt.NDArray[np.float64]
IntArray = npt.NDArray[np.int64]

_QUANTITY = {name: column for column, name in enumerate(layout.DESCRIBED)}


def quantity_column(quantity: str) -> int:
    """Column of a derived quantity (one of :data:`propulsion.flight.layout.DESCRIBED`)."""
    try:
        return _QUANTITY[quantity]
    except KeyError:
        raise KeyError(f"unknown flight quantity {quantity!r}") from None


@dataclass(frozen=True)
class Trajectory:
    """Every accepted step of one flight (SI): times (m,), states (m, NY), values (m, ND).

    At a change of phase (an ignition, a burnout, a separation, an event) the same time
    appears twice: the values just before and just after the change.
    """

    time: FloatArray
    state: FloatArray
    values: FloatArray

    def __len__(self) -> int:
        return int(self.time.size)

    def __getitem__(self, quantity: str) -> FloatArray:
        """One derived quantity along the trajectory."""
        return self.values[:, quantity_column(quantity)]


@dataclass
class Outcome:
    """Raw results of a batch of flights (SI), as the runners and studies read them.

    ``event_time`` (n, E), ``event_state`` (n, E, NY) and ``event_values`` (n, E, ND) hold
    each event slot of :mod:`propulsion.flight.layout`: NaN where the event did not happen.
    Maxima (``max_dynamic_pressure``, ``max_mach``, ``max_acceleration``,
    ``max_altitude``) are slots too: their time, state and values where the maximum lies.
    ``final`` is the state where the flight ended, ``status_code`` why.
    """

    stage_names: tuple[str, ...]
    status_code: IntArray
    steps: IntArray
    event_time: FloatArray
    event_state: FloatArray
    event_values: FloatArray
    trajectory: Trajectory | None = None
    compute_time: float = 0.0
    threads: int = 1
    extra: dict[str, FloatArray] = field(default_factory=dict)

    @property
    def n(self) -> int:
        """Number of samples."""
        return int(self.status_code.size)

    @property
    def stages(self) -> int:
        """Number of stages flown."""
        return len(self.stage_names)

    @property
    def status(self) -> npt.NDArray[np.str_]:
        """Why each flight ended: "apogee", "ground", "orbit", "burnout", "no liftoff",
        "time limit" or "step failure"."""
        names = np.array(layout.STATUS_NAMES)
        return names[self.status_code]

    def time(self, event: str) -> FloatArray:
        """Time of an event per sample [s] (NaN where it did not happen)."""
        return self.event_time[:, layout.event_slot(event)]

    def happened(self, event: str) -> npt.NDArray[np.bool_]:
        """Whether each sample reached an event."""
        return np.isfinite(self.time(event))

    def state(self, event: str) -> FloatArray:
        """State at an event per sample (n, NY)."""
        return self.event_state[:, layout.event_slot(event), :]

    def value(self, event: str, quantity: str) -> FloatArray:
        """A derived quantity at an event per sample (SI)."""
        return self.event_values[:, layout.event_slot(event), quantity_column(quantity)]

    def final(self, quantity: str) -> FloatArray:
        """A derived quantity where each flight ended."""
        return self.value("final", quantity)

    def ledger_marks(self) -> tuple[FloatArray, FloatArray]:
        """Ledger integrals and ledger speed at each stage's ignition and at the end.

        Returns ``terms`` (s + 1, n, 7), in the order of
        :data:`propulsion.flight.layout.LEDGER_TERMS`, and ``speeds`` (s + 1, n) [m/s];
        row k is stage k's ignition (NaN if it never lit), row s the end of the ascent: the
        end of the flight, or its apogee when it flew on to the ground (the fall adds speed
        with gravity's help: a ledger through it would show a negative gravity loss).
        A stage's segment of the ledger is the difference of consecutive rows.
        """
        s = self.stages
        terms = np.full((s + 1, self.n, len(layout.LEDGER_TERMS)), np.nan)
        speeds = np.full((s + 1, self.n), np.nan)
        for k in range(s):
            terms[k] = self.state(f"ignition:{k}")[:, layout.Y_IDEAL : layout.Y_ROTATION + 1]
            speeds[k] = self.value(f"ignition:{k}", "ledger_speed")
        fell = (self.status == "ground") & np.isfinite(self.time("apogee"))
        end = np.where(fell[:, None], self.state("apogee"), self.state("final"))
        terms[s] = end[:, layout.Y_IDEAL : layout.Y_ROTATION + 1]
        speeds[s] = np.where(fell, self.value("apogee", "ledger_speed"), self.final("ledger_speed"))
        return terms, speeds
