"""Input guards shared by the physics modules (plain floats and numpy arrays)."""

from __future__ import annotations

import math

import numpy as np
import numpy.typing as npt

ArrayLike = float | npt.NDArray[np.float64]


def as_finite(name: str, value: ArrayLike) -> npt.NDArray[np.float64]:
    """Convert ``value`` to a float64 array and reject NaN and infinity."""
    if type(value) is float:  # the common scalar case, without numpy's reductions
        if not math.isfinite(value):
            raise ValueError(f"{name} must be finite, got {value!r}")
        return np.float64(value)  # type: ignore[return-value]
    arr = np.asarray(value, dtype=np.float64)
    if not np.all(np.isfinite(arr)):
        raise ValueError(f"{name} must be finite, got {value!r}")
    return arr


def as_positive(name: str, value: ArrayLike) -> npt.NDArray[np.float64]:
    """As :func:`as_finite`, and every value above zero."""
    arr = as_finite(name, value)
    if arr.ndim == 0:
        if not float(arr) > 0.0:
            raise ValueError(f"{name} must be greater than zero, got {value!r}")
        return arr
    if np.any(arr <= 0.0):
        raise ValueError(f"{name} must be greater than zero, got {value!r}")
    return arr


def as_non_negative(name: str, value: ArrayLike) -> npt.NDArray[np.float64]:
    """As :func:`as_finite`, and no value below zero."""
    arr = as_finite(name, value)
    if np.any(arr < 0.0):
        raise ValueError(f"{name} must not be negative, got {value!r}")
    return arr


def scalar_or_array(arr: npt.NDArray[np.float64]) -> ArrayLike:
    """A Python float for 0-d results, the array otherwise."""
    if arr.ndim == 0:
        return float(arr)
    return arr
