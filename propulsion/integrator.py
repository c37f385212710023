"""A batched Dormand–Prince 5(4) step with error estimate, dense output and root finding.

Many flights advance together: the state is an array of shape (components, samples),
every sample has its own time and step size, and each call does the same arithmetic
for all samples at once. There is no Python loop over samples anywhere here.

References
----------
.. [1] J. R. Dormand and P. J. Prince, "A family of embedded Runge-Kutta formulae",
   Journal of Computational and Applied Mathematics 6(1), 19-26, 1980.
.. [2] E. Hairer, S. P. Nørsett and G. Wanner, Solving Ordinary Differential Equations I,
   2nd ed., Springer, 1993, section II.4 (automatic step size control) and II.6
   (dense output; cubic Hermite interpolation).
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
import numpy.typing as npt

__all__ = [
    "Rhs",
    "dp5_step",
    "error_norm",
    "find_crossing",
    "find_maximum",
    "hermite",
    "hermite_derivative",
    "new_step_size",
]

FloatArray = npt.NDArray[np.float64]
Rhs = Callable[[FloatArray, FloatArray], FloatArray]
"""f(t, y) -> dy/dt for t of shape (n,) and y of shape (components, n)."""

# Dormand–Prince 5(4) tableau [1], with the fifth-order solution propagated (FSAL).
_C = np.array([0.0, 1 / 5, 3 / 10, 4 / 5, 8 / 9, 1.0, 1.0])
_A = [
    [],
    [1 / 5],
    [3 / 40, 9 / 40],
    [44 / 45, -56 / 15, 32 / 9],
    [19372 / 6561, -25360 / 2187, 64448 / 6561, -212 / 729],
    [9017 / 3168, -355 / 33, 46732 / 5247, 49 / 176, -5103 / 18656],
    [35 / 384, 0.0, 500 / 1113, 125 / 192, -2187 / 6784, 11 / 84],
]
_B = np.array([35 / 384, 0.0, 500 / 1113, 125 / 192, -2187 / 6784, 11 / 84, 0.0])
_B_LOW = np.array([5179 / 57600, 0.0, 7571 / 16695, 393 / 640, -92097 / 339200, 187 / 2100, 1 / 40])
_E = _B - _B_LOW


def dp5_step(
    rhs: Rhs, t: FloatArray, y: FloatArray, h: FloatArray, f0: FloatArray
) -> tuple[FloatArray, FloatArray, FloatArray]:
    """Take one Dormand–Prince 5(4) step for every sample.

    Parameters
    ----------
    rhs : callable
        ``f(t, y)`` for times of shape (n,) [s] and states of shape (k, n).
    t : ndarray (n,)
        Times at the start of the step [s].
    y : ndarray (k, n)
        States at the start of the step.
    h : ndarray (n,)
        Step sizes [s]; may differ per sample, and may be zero.
    f0 : ndarray (k, n)
        ``f(t, y)``, known from the previous step (first same as last).

    Returns
    -------
    y1 : ndarray (k, n)
        Fifth-order state at ``t + h``.
    f1 : ndarray (k, n)
        ``f(t + h, y1)``.
    error : ndarray (k, n)
        Difference of the fifth- and fourth-order solutions (local error estimate).
    """
    stages = [f0]
    for i in range(1, 7):
        increment = sum(a * stage for a, stage in zip(_A[i], stages, strict=False) if a != 0.0)
        stages.append(rhs(t + _C[i] * h, y + h * increment))
    y1 = y + h * sum(b * stage for b, stage in zip(_B, stages, strict=True) if b != 0.0)
    error = h * sum(e * stage for e, stage in zip(_E, stages, strict=True) if e != 0.0)
    return y1, stages[-1], error


def error_norm(
    error: FloatArray, y0: FloatArray, y1: FloatArray, rtol: float, atol: FloatArray
) -> FloatArray:
    """Root-mean-square scaled error per sample (Hairer et al., eq. II.4.11)."""
    scale = atol[:, None] + rtol * np.maximum(np.abs(y0), np.abs(y1))
    ratio = error / scale
    # add the components one by one: numpy's reduction order along axis 0 depends on the
    # batch size, which would make a sample's result depend on its neighbours in the
    # last bit
    total = np.zeros(ratio.shape[1])
    for row in ratio:
        total += row * row
    return np.sqrt(total / ratio.shape[0])


def new_step_size(h: FloatArray, norm: FloatArray) -> FloatArray:
    """Next step size from the error norm (order 5; safety 0.9; growth limited to 0.2..5)."""
    with np.errstate(divide="ignore"):
        factor = np.where(norm > 0, 0.9 * norm ** (-1 / 5), 5.0)
    return h * np.clip(factor, 0.2, 5.0)


def hermite(
    y0: FloatArray, y1: FloatArray, f0: FloatArray, f1: FloatArray, h: FloatArray, theta: FloatArray
) -> FloatArray:
    """Cubic Hermite interpolant of a step at fraction ``theta`` (0..1) of the step.

    Uses the states and derivatives at both ends (Hairer et al., section II.6).
    """
    t2 = theta * theta
    t3 = t2 * theta
    h00 = 2 * t3 - 3 * t2 + 1
    h10 = t3 - 2 * t2 + theta
    h01 = -2 * t3 + 3 * t2
    h11 = t3 - t2
    return h00 * y0 + h10 * h * f0 + h01 * y1 + h11 * h * f1


def hermite_derivative(
    y0: FloatArray, y1: FloatArray, f0: FloatArray, f1: FloatArray, h: FloatArray, theta: FloatArray
) -> FloatArray:
    """Time derivative of the cubic Hermite interpolant at fraction ``theta`` of the step."""
    t2 = theta * theta
    d00 = (6 * t2 - 6 * theta) / h
    d10 = 3 * t2 - 4 * theta + 1
    d01 = (-6 * t2 + 6 * theta) / h
    d11 = 3 * t2 - 2 * theta
    return d00 * y0 + d10 * f0 + d01 * y1 + d11 * f1


def find_crossing(
    g: Callable[[FloatArray], FloatArray], g0: FloatArray, g1: FloatArray, iterations: int = 30
) -> FloatArray:
    """Fraction of the step where a function crosses zero, by vectorised bisection.

    ``g(theta)`` evaluates the event function on the dense output for every sample in
    the batch at once; ``g0`` and ``g1`` are its values at the ends, of opposite signs.
    30 halvings bring the bracket to 1e-9 of the step; the caller then refines the root
    on the integrated states.
    """
    low = np.zeros_like(g0)
    high = np.ones_like(g0)
    sign_low = np.sign(g0)
    for _ in range(iterations):
        middle = 0.5 * (low + high)
        same = np.sign(g(middle)) == sign_low
        low = np.where(same, middle, low)
        high = np.where(same, high, middle)
    return 0.5 * (low + high)


def find_maximum(
    s: Callable[[FloatArray], FloatArray], n: int, iterations: int = 60
) -> tuple[FloatArray, FloatArray]:
    """Maximum of a function over the step (fraction 0..1), by vectorised golden section.

    Returns the fraction and the value. Assumes one interior maximum per step, which
    holds when the caller has checked that the slope turns from rising to falling.
    """
    ratio = (np.sqrt(5.0) - 1) / 2
    low, high = np.zeros(n), np.ones(n)
    a = high - ratio * (high - low)
    b = low + ratio * (high - low)
    sa, sb = s(a), s(b)
    for _ in range(iterations):
        left = sa > sb
        high = np.where(left, b, high)
        low = np.where(left, low, a)
        b_new = np.where(left, a, low + ratio * (high - low))
        a_new = np.where(left, high - ratio * (high - low), b)
        sb_new = np.where(left, sa, np.nan)
        sa_new = np.where(left, np.nan, sb)
        values = s(np.where(left, a_new, b_new))
        sa = np.where(left, values, sa_new)
        sb = np.where(left, sb_new, values)
        a, b = a_new, b_new
    theta = 0.5 * (low + high)
    return theta, s(theta)
