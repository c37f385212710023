"""Model objects for the vehicle: propulsion, stages and the stack. SI floats throughout.

These objects hold validated data only; they are built by :mod:`propulsion.mission`
(from a mission file) or directly from Python. Quantities that follow from the data
(specific impulse of a motor, burn time of an engine, stack masses) are properties.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property

import numpy as np
import numpy.typing as npt

from propulsion import thrust_curve as tc
from propulsion.constants import STANDARD_GRAVITY, USSA76_SEA_LEVEL_PRESSURE

__all__ = ["DragCurve", "Engine", "Motor", "Stage", "Vehicle"]

FloatArray = npt.NDArray[np.float64]


@dataclass(frozen=True, eq=False)
class Motor:
    """A solid or hybrid motor described by its thrust curve (one motor of a cluster).

    Attributes
    ----------
    name : str
        The motor's name (library name or file stem).
    time : ndarray
        Sample times of the thrust curve, starting at ignition [s].
    thrust : ndarray
        Thrust at those times [N].
    propellant_mass : float
        Propellant burnt over the curve [kg].
    case_mass : float
        Mass of the spent motor (loaded mass minus propellant) [kg].
    propellant_family : str or None
        Key of the propellant family in ``data/propellants.csv``.
    diameter : float or None
        Motor diameter [m], where the file states it.
    source : str
        The file the curve was read from.
    exit_area : float
        Nozzle exit area [m^2] where the file gives the nozzle exit diameter; 0 otherwise
        (the curve is then flown as measured, whatever the ambient pressure).
    test_pressure : float
        Ambient pressure the curve was measured at [Pa] (default: sea-level standard,
        101 325 Pa). With an exit area, the flight corrects the thrust to the ambient
        pressure: F = F_test + (p_test - p_a) A_e (G. P. Sutton and O. Biblarz, Rocket
        Propulsion Elements, 9th ed., 2017, chapter 3, the thrust equation).
    """

    name: str
    time: FloatArray
    thrust: FloatArray
    propellant_mass: float
    case_mass: float = 0.0
    propellant_family: str | None = None
    diameter: float | None = None
    source: str = ""
    exit_area: float = 0.0
    test_pressure: float = USSA76_SEA_LEVEL_PRESSURE

    @cached_property
    def total_impulse(self) -> float:
        """Total impulse of one motor [N·s] (trapezoidal integral of the curve)."""
        return float(tc.total_impulse(self.time, self.thrust))

    @property
    def burn_time(self) -> float:
        """Duration of the thrust curve [s]."""
        return float(tc.burn_time(self.time, self.thrust))

    @property
    def average_thrust(self) -> float:
        """Total impulse over burn time [N]."""
        return self.total_impulse / self.burn_time

    @property
    def specific_impulse(self) -> float:
        """Delivered specific impulse, total impulse over propellant weight [s]."""
        return float(tc.specific_impulse_from_curve(self.total_impulse, self.propellant_mass))

    @property
    def impulse_class(self) -> str:
        """Impulse class letter of one motor."""
        return tc.impulse_class(self.total_impulse)

    @property
    def loaded_mass(self) -> float:
        """Mass of one motor before firing [kg]."""
        return self.propellant_mass + self.case_mass


@dataclass(frozen=True)
class Engine:
    """A liquid (or throttled hybrid) engine given by thrust and specific impulse.

    Thrust at ambient pressure p is ``thrust_vacuum - p * exit_area``; the mass flow is
    ``thrust_vacuum / (isp_vacuum * g0)`` and does not depend on altitude.

    Attributes
    ----------
    thrust_vacuum : float
        Vacuum thrust of one engine [N].
    isp_vacuum : float
        Vacuum specific impulse [s].
    exit_area : float
        Nozzle exit area of one engine [m²].
    propellant_family : str or None
        Key of the propellant family in ``data/propellants.csv``.
    """

    thrust_vacuum: float
    isp_vacuum: float
    exit_area: float
    propellant_family: str | None = None

    @property
    def mass_flow(self) -> float:
        """Propellant mass flow of one engine [kg/s]."""
        return self.thrust_vacuum / (self.isp_vacuum * STANDARD_GRAVITY)

    @property
    def thrust_sea_level(self) -> float:
        """Thrust of one engine at standard sea-level pressure [N]."""
        return self.thrust_vacuum - USSA76_SEA_LEVEL_PRESSURE * self.exit_area

    @property
    def isp_sea_level(self) -> float:
        """Specific impulse at standard sea-level pressure [s]."""
        return self.thrust_sea_level / (self.mass_flow * STANDARD_GRAVITY)


@dataclass(frozen=True, eq=False)
class DragCurve:
    """Drag coefficient against Mach number, linearly interpolated, held at the ends."""

    name: str
    mach: FloatArray
    drag_coefficient: FloatArray
    source: str = ""

    def __call__(self, mach: float | FloatArray) -> float | FloatArray:
        """Drag coefficient at the given Mach number(s) [dimensionless]."""
        return np.interp(mach, self.mach, self.drag_coefficient)


@dataclass(frozen=True)
class Stage:
    """One stage of the stack, with its propulsion (a motor cluster or an engine cluster).

    Attributes
    ----------
    name : str
        The stage's name, unique in the vehicle.
    inert_mass : float
        Everything in the stage that is not propellant, motor cases included [kg].
    propellant_mass : float
        Propellant loaded in the stage, all motors or tanks together [kg].
    propulsion : Motor or Engine
        One motor or engine of the cluster.
    count : int
        Number of motors or engines firing together.
    residual_fraction : float
        Fraction of the propellant that cannot be burnt [dimensionless].
    diameter : float or None
        Reference diameter for drag [m].
    drag_curve : DragCurve or None
        Drag coefficient of the stack while this stage is the lowest one.
    tank_fraction : float or None
        Inert mass added per unit of added propellant when the stage is resized
        [dimensionless]; None when the mission does not say.
    separation_delay : float
        Time from burnout to separation of this stage [s].
    ignition_delay : float
        Time from the separation below to ignition of this stage [s].
    """

    name: str
    inert_mass: float
    propellant_mass: float
    propulsion: Motor | Engine
    count: int = 1
    residual_fraction: float = 0.0
    diameter: float | None = None
    drag_curve: DragCurve | None = None
    tank_fraction: float | None = None
    separation_delay: float = 0.0
    ignition_delay: float = 0.0

    @property
    def is_motor(self) -> bool:
        """True for a thrust-curve motor stage (burns once, to depletion)."""
        return isinstance(self.propulsion, Motor)

    @property
    def mass(self) -> float:
        """Loaded stage mass [kg]."""
        return self.inert_mass + self.propellant_mass

    @property
    def usable_propellant(self) -> float:
        """Propellant that can be burnt, net of the unusable residual [kg]."""
        return self.propellant_mass * (1.0 - self.residual_fraction)

    @property
    def specific_impulse(self) -> float:
        """Specific impulse used in the ideal budget [s]: delivered (motor) or vacuum (engine)."""
        if isinstance(self.propulsion, Motor):
            return self.propulsion.specific_impulse
        return self.propulsion.isp_vacuum

    @property
    def propellant_family(self) -> str | None:
        """Key of the stage's propellant family, where known."""
        return self.propulsion.propellant_family

    @property
    def thrust_sea_level(self) -> float:
        """Thrust of the whole cluster at sea level [N]; the average thrust for motors."""
        if isinstance(self.propulsion, Motor):
            return self.count * self.propulsion.average_thrust
        return self.count * self.propulsion.thrust_sea_level

    @property
    def thrust_vacuum(self) -> float:
        """Thrust of the whole cluster in vacuum [N]; the average thrust for motors."""
        if isinstance(self.propulsion, Motor):
            return self.count * self.propulsion.average_thrust
        return self.count * self.propulsion.thrust_vacuum

    @property
    def burn_time(self) -> float:
        """Burn time of the stage [s]: the curve's duration, or usable propellant over flow."""
        if isinstance(self.propulsion, Motor):
            return self.propulsion.burn_time
        return self.usable_propellant / (self.count * self.propulsion.mass_flow)

    @property
    def total_impulse(self) -> float:
        """Total impulse of the cluster [N·s] (vacuum for engines)."""
        if isinstance(self.propulsion, Motor):
            return self.count * self.propulsion.total_impulse
        return self.thrust_vacuum * self.burn_time


@dataclass(frozen=True)
class Vehicle:
    """The stack: stages in firing order (first = lowest) and the payload on top."""

    stages: tuple[Stage, ...]
    payload_mass: float
    name: str = ""
    drag_scale: float = 1.0
    notes: dict[str, str] = field(default_factory=dict)

    def stage_index(self, name: str) -> int:
        """Position of a stage in firing order; ``KeyError`` if there is none of that name."""
        for index, stage in enumerate(self.stages):
            if stage.name == name:
                return index
        raise KeyError(name)

    def mass_above(self, index: int) -> float:
        """Loaded mass carried by stage ``index``: the stages above it and the payload [kg]."""
        return self.payload_mass + sum(stage.mass for stage in self.stages[index + 1 :])

    @property
    def liftoff_mass(self) -> float:
        """Loaded mass of the whole vehicle [kg]."""
        return self.payload_mass + sum(stage.mass for stage in self.stages)
