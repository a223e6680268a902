"""Planar polygons as rings of vertices: validation and point-in-polygon tests.

A polygon is a list of rings, each an (p, 2) array of vertices in order
(closing vertex optional): the first ring is the exterior, the others holes.
The even-odd rule decides inside, so holes need no particular orientation.
"""

from __future__ import annotations

import numba
import numpy as np

from interp.errors import InterpError


def as_ring(vertices: object, name: str = "polygon") -> np.ndarray:
    """Return a polygon ring as an (p, 2) float64 array without a closing vertex.

    Examples
    --------
    >>> as_ring([[0, 0], [1, 0], [0, 1], [0, 0]]).shape
    (3, 2)
    """
    ring = np.asarray(vertices, dtype=np.float64)
    if ring.ndim != 2 or ring.shape[1] != 2:
        raise InterpError(
            f"{name} vertices must be an (p, 2) array of x, y; got shape {ring.shape}"
        )
    if len(ring) > 1 and np.array_equal(ring[0], ring[-1]):
        ring = ring[:-1]
    if len(ring) < 3:
        raise InterpError(f"{name} needs at least 3 distinct vertices; got {len(ring)}")
    if not np.isfinite(ring).all():
        raise InterpError(f"{name} has NaN or infinite vertex coordinates")
    return np.ascontiguousarray(ring)


def contains(rings: list[np.ndarray], points: np.ndarray) -> np.ndarray:
    """Even-odd test of (n, 2) points against validated rings; boolean (n,).

    Examples
    --------
    >>> sq = as_ring([[0, 0], [2, 0], [2, 2], [0, 2]])
    >>> contains([sq], np.array([[1.0, 1.0], [3.0, 1.0]])).tolist()
    [True, False]
    """
    inside = np.zeros(len(points), dtype=np.bool_)
    for ring in rings:
        _crossings(points, ring, inside)
    return inside


@numba.njit(cache=True, nogil=True)
def _crossings(points, ring, inside):  # pragma: no cover
    m = ring.shape[0]
    for p in range(points.shape[0]):
        x, y = points[p, 0], points[p, 1]
        c = False
        for i in range(m):
            x1, y1 = ring[i, 0], ring[i, 1]
            x2, y2 = ring[(i + 1) % m, 0], ring[(i + 1) % m, 1]
            if (y1 > y) != (y2 > y):
                if x < x1 + (y - y1) * (x2 - x1) / (y2 - y1):
                    c = not c
        if c:
            inside[p] = not inside[p]
