"""Thrust-curve arithmetic for rocket motors.

A thrust curve is two 1-D arrays of equal length: sample times [s] and thrust [N]. Between
samples the thrust is taken to vary linearly, so integrals use the trapezoidal rule. All values
are plain SI floats or numpy arrays.
"""

from __future__ import annotations

import math

import numpy as np
import numpy.typing as npt

from propulsion._checks import as_non_negative, as_positive, scalar_or_array
from propulsion.constants import STANDARD_GRAVITY

ArrayLike = float | npt.NDArray[np.float64]

# Upper bound of the "A" class [N s]; class k (A = 0, B = 1, ...) ends at 2.5 * 2**k N s.
_A_CLASS_UPPER = 2.5
_LETTERS = "ABCDEFGHIJKLMNOPQRSTUVWXYZ"
_FRACTIONAL_CLASSES = (("1/8A", 0.3125), ("1/4A", 0.625), ("1/2A", 1.25))


def _curve(
    time: npt.ArrayLike, thrust: npt.ArrayLike
) -> tuple[npt.NDArray[np.float64], npt.NDArray[np.float64]]:
    """Convert to float arrays and check only the shape (not the values)."""
    t = np.asarray(time, dtype=np.float64)
    f = np.asarray(thrust, dtype=np.float64)
    if t.ndim != 1 or f.ndim != 1:
        raise ValueError(f"time and thrust must be 1-D arrays, got {t.ndim}-D and {f.ndim}-D")
    if t.shape != f.shape:
        raise ValueError(f"time and thrust must have the same length, got {t.size} and {f.size}")
    if t.size < 2:
        raise ValueError(f"a thrust curve needs at least 2 points, got {t.size}")
    return t, f


def _trapezoid(t: npt.NDArray[np.float64], f: npt.NDArray[np.float64]) -> float:
    return float(np.sum(0.5 * np.diff(t) * (f[1:] + f[:-1])))


def total_impulse(time: npt.ArrayLike, thrust: npt.ArrayLike) -> float:
    r"""
    Total impulse of a thrust curve, the time integral of thrust.

    Parameters
    ----------
    time : array-like
        Sample times [s], 1-D, at least two points.
    thrust : array-like
        Thrust at each sample time [N], same length as ``time``.

    Returns
    -------
    total_impulse : float
        Total impulse [N s].

    Raises
    ------
    ValueError
        If the arrays are not 1-D, differ in length or hold fewer than two points. Use
        :func:`validate_thrust_curve` to check the values themselves.

    Notes
    -----
    Trapezoidal rule (thrust linear between samples):

    .. math:: I_t = \sum_{i=1}^{n-1} \frac{(t_{i+1} - t_i)(F_{i+1} + F_i)}{2}

    References
    ----------
    .. [1] G. P. Sutton and O. Biblarz, Rocket Propulsion Elements, 9th ed., Wiley, 2017,
       chapter 2 (total impulse).
    """
    t, f = _curve(time, thrust)
    return _trapezoid(t, f)


def burn_time(time: npt.ArrayLike, thrust: npt.ArrayLike) -> float:
    r"""
    Duration covered by a thrust curve.

    Parameters
    ----------
    time : array-like
        Sample times [s], 1-D, at least two points, increasing.
    thrust : array-like
        Thrust at each sample time [N], same length as ``time``.

    Returns
    -------
    burn_time : float
        Last sample time minus first sample time [s].

    Raises
    ------
    ValueError
        If the arrays are not 1-D, differ in length or hold fewer than two points.

    Notes
    -----
    .. math:: t_b = t_n - t_1

    This is the span of the tabulated curve. Definitions based on thrust thresholds (e.g.
    the time between 10 % of peak thrust on rise and fall) are not applied here.

    References
    ----------
    .. [1] G. P. Sutton and O. Biblarz, Rocket Propulsion Elements, 9th ed., Wiley, 2017,
       chapter 2 (definitions).
    """
    t, _ = _curve(time, thrust)
    return float(t[-1] - t[0])


def average_thrust(time: npt.ArrayLike, thrust: npt.ArrayLike) -> float:
    r"""
    Average thrust over the span of a thrust curve.

    Parameters
    ----------
    time : array-like
        Sample times [s], 1-D, at least two points, increasing.
    thrust : array-like
        Thrust at each sample time [N], same length as ``time``.

    Returns
    -------
    average_thrust : float
        Total impulse divided by burn time [N].

    Raises
    ------
    ValueError
        If the curve has the wrong shape or a non-positive burn time.

    Notes
    -----
    .. math:: \bar F = \frac{I_t}{t_b}

    References
    ----------
    .. [1] G. P. Sutton and O. Biblarz, Rocket Propulsion Elements, 9th ed., Wiley, 2017,
       chapter 2 (total impulse and average thrust).
    """
    t, f = _curve(time, thrust)
    duration = float(t[-1] - t[0])
    if not duration > 0.0:
        raise ValueError(f"burn time must be greater than zero, got {duration} s")
    return _trapezoid(t, f) / duration


def specific_impulse_from_curve(total_impulse: ArrayLike, propellant_mass: ArrayLike) -> ArrayLike:
    r"""
    Average specific impulse of a motor from its total impulse and propellant mass.

    Parameters
    ----------
    total_impulse : float or numpy.ndarray
        Total impulse [N s]. Must be positive.
    propellant_mass : float or numpy.ndarray
        Propellant mass expelled over the curve [kg]. Must be positive.

    Returns
    -------
    specific_impulse : float or numpy.ndarray
        Average specific impulse [s].

    Raises
    ------
    ValueError
        If an input is not finite or not positive.

    Notes
    -----
    .. math:: I_{sp} = \frac{I_t}{m_p g_0}

    References
    ----------
    .. [1] G. P. Sutton and O. Biblarz, Rocket Propulsion Elements, 9th ed., Wiley, 2017,
       chapter 2 (specific impulse as total impulse per unit weight of propellant).
    """
    it = as_positive("total_impulse", total_impulse)
    mp = as_positive("propellant_mass", propellant_mass)
    return scalar_or_array(it / (mp * STANDARD_GRAVITY))


def impulse_class(total_impulse: float) -> str:
    r"""
    Motor class letter for a total impulse.

    Parameters
    ----------
    total_impulse : float
        Total impulse [N s]. Must be positive and finite.

    Returns
    -------
    impulse_class : str
        ``"1/8A"``, ``"1/4A"``, ``"1/2A"``, a letter ``"A"`` to ``"Z"``, or ``">Z"`` above
        the Z class (a large booster's impulse is a valid input; it has no letter).

    Raises
    ------
    ValueError
        If ``total_impulse`` is not finite or not positive.

    Notes
    -----
    Class A covers (1.25, 2.5] N s; every following letter doubles the upper bound, so the
    class with index :math:`k` (A = 0, B = 1, ...) is the smallest one with

    .. math:: I_t \le 2.5 \cdot 2^k \ \mathrm{N\,s}

    The bounds are inclusive at the top: 2.5 N s is A, 2.51 N s is B. Below A the
    fractional classes 1/8A (up to 0.3125 N s), 1/4A (up to 0.625 N s) and 1/2A (up to
    1.25 N s) apply. The codes tabulate classes up to O (40 960 N s); P to Z continue the
    same doubling.

    References
    ----------
    .. [1] NFPA 1122, Code for Model Rocketry, and NFPA 1127, Code for High Power Rocketry,
       National Fire Protection Association, Quincy MA (motor classification by total
       impulse).
    """
    value = float(total_impulse)
    if not math.isfinite(value) or value <= 0.0:
        raise ValueError(f"total impulse must be finite and greater than zero, got {value} N s")
    for name, upper in _FRACTIONAL_CLASSES:
        if value <= upper:
            return name
    upper = _A_CLASS_UPPER
    for letter in _LETTERS:
        if value <= upper:
            return letter
        upper *= 2.0
    return ">Z"


def validate_thrust_curve(time: npt.ArrayLike, thrust: npt.ArrayLike) -> None:
    r"""
    Check a thrust curve and raise on the first problem found.

    Parameters
    ----------
    time : array-like
        Sample times [s], 1-D.
    thrust : array-like
        Thrust at each sample time [N], same length as ``time``.

    Returns
    -------
    None

    Raises
    ------
    ValueError
        With a message naming the first offending row (1-based) for: non-finite values,
        a time not strictly greater than the one before, negative thrust. Without a row
        number for: wrong shape, fewer than two points, zero total impulse.

    Notes
    -----
    The checks run in this order: shape and point count, finiteness, strictly increasing
    time, non-negative thrust, positive total impulse (trapezoidal rule, see
    :func:`total_impulse`).

    References
    ----------
    .. [1] G. P. Sutton and O. Biblarz, Rocket Propulsion Elements, 9th ed., Wiley, 2017,
       chapter 2 (total impulse).
    """
    t, f = _curve(time, thrust)
    bad = np.flatnonzero(~(np.isfinite(t) & np.isfinite(f)))
    if bad.size:
        row = int(bad[0])
        raise ValueError(
            f"row {row + 1}: time and thrust must be finite, got time={t[row]}, thrust={f[row]}"
        )
    bad = np.flatnonzero(np.diff(t) <= 0.0)
    if bad.size:
        row = int(bad[0]) + 1
        raise ValueError(f"row {row + 1}: time must increase, got {t[row]} s after {t[row - 1]} s")
    bad = np.flatnonzero(f < 0.0)
    if bad.size:
        row = int(bad[0])
        raise ValueError(f"row {row + 1}: thrust must not be negative, got {f[row]} N")
    if not _trapezoid(t, f) > 0.0:
        raise ValueError("total impulse is zero: the thrust curve never produces thrust")


def propellant_mass_flow(
    thrust: ArrayLike, total_impulse: float, propellant_mass: float
) -> ArrayLike:
    r"""
    Propellant mass flow rate assumed proportional to thrust.

    The proportionality constant is chosen so that integrating the flow over the thrust
    curve uses up exactly the stated propellant mass at the end of the curve.

    Parameters
    ----------
    thrust : float or numpy.ndarray
        Thrust at one or more instants [N]. Not negative.
    total_impulse : float
        Total impulse of the whole curve [N s]. Must be positive.
    propellant_mass : float
        Propellant mass expelled over the whole curve [kg]. Not negative.

    Returns
    -------
    mass_flow : float or numpy.ndarray
        Propellant mass flow rate [kg/s].

    Raises
    ------
    ValueError
        If an input is not finite or out of range (see Parameters).

    Notes
    -----
    Constant effective exhaust velocity :math:`c = I_t / m_p` gives

    .. math:: \dot m(t) = \frac{F(t)}{c} = F(t) \frac{m_p}{I_t}

    References
    ----------
    .. [1] G. P. Sutton and O. Biblarz, Rocket Propulsion Elements, 9th ed., Wiley, 2017,
       chapter 2 (thrust, mass flow and effective exhaust velocity).
    """
    f = as_non_negative("thrust", thrust)
    it = as_positive("total_impulse", total_impulse)
    mp = as_non_negative("propellant_mass", propellant_mass)
    return scalar_or_array(f * mp / it)
