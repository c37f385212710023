"""Simplifying long tables (thrust curves, drag curves, wind profiles) for the flight core.

The flight core ends an integration step at every point of a piecewise-linear table, so
the cost of a flight grows with the number of points: a firing log sampled at 10 kHz has
tens of thousands. A table longer than the core needs is thinned here, before flight, by
the Ramer–Douglas–Peucker method: the kept points are those the polyline needs to stay
within a stated tolerance of every original point [1]. When a noisy table would still keep
more points than a cap, the tolerance is doubled until it does not, and the tolerance used
is reported, so the simplification is never silent.

References
----------
.. [1] D. H. Douglas and T. K. Peucker, "Algorithms for the reduction of the number of
   points required to represent a digitized line or its caricature", The Canadian
   Cartographer 10(2), 112-122, 1973 (the vertical-distance form used here).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import numpy.typing as npt

__all__ = ["Simplified", "keep_points", "simplify_table"]

FloatArray = npt.NDArray[np.float64]


def keep_points(
    x: FloatArray, y: FloatArray, tolerance: float, most: int | None = None
) -> npt.NDArray[np.bool_] | None:
    """The points of the polyline (x, y) to keep so that the polyline through them lies
    within ``tolerance`` of every point, vertically (x increasing).

    ``y`` may have several columns (shape (n,) or (n, k)); the largest deviation of any
    column decides. The first and last points are always kept. Iterative (a stack of
    pieces), so a long table never meets Python's recursion limit. With ``most``, the
    search stops and returns None as soon as more than ``most`` points would be kept.
    """
    n = x.size
    keep = np.zeros(n, dtype=bool)
    if n == 0:
        return keep
    keep[0] = keep[-1] = True
    kept = 2 if n > 1 else 1
    values = y.reshape(n, -1)
    pieces = [(0, n - 1)]
    while pieces:
        a, b = pieces.pop()
        if b - a < 2:
            continue
        span = x[b] - x[a]
        inner = slice(a + 1, b)
        if span > 0:
            weight = ((x[inner] - x[a]) / span)[:, None]
            line = values[a] + weight * (values[b] - values[a])
        else:
            line = np.broadcast_to(values[a], values[inner].shape)
        deviation = np.max(np.abs(values[inner] - line), axis=1)
        worst = int(np.argmax(deviation))
        if deviation[worst] > tolerance:
            middle = a + 1 + worst
            keep[middle] = True
            kept += 1
            if most is not None and kept > most:
                return None
            pieces.append((a, middle))
            pieces.append((middle, b))
    return keep


@dataclass(frozen=True)
class Simplified:
    """A table after simplification: its points, how many it had, and the tolerance held
    (in the unit of the table's values)."""

    x: FloatArray
    y: FloatArray
    original_points: int
    tolerance: float

    @property
    def simplified(self) -> bool:
        """True when points were dropped."""
        return self.x.size < self.original_points


def simplify_table(
    x: FloatArray, y: FloatArray, tolerance: float, limit: int, max_points: int
) -> Simplified:
    """Thin a table of more than ``limit`` points to within ``tolerance``, with at most
    ``max_points`` points (the tolerance doubled as often as needed for that).

    A table of ``limit`` points or fewer is returned as it is.
    """
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    if x.size <= limit:
        return Simplified(x, y, x.size, 0.0)
    tolerance = max(tolerance, 1e-300)
    while True:
        keep = keep_points(x, y, tolerance, max_points)
        if keep is not None:
            return Simplified(x[keep], y[keep], x.size, tolerance)
        tolerance *= 2.0
