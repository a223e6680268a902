"""Exact 2D Delaunay and constrained Delaunay triangulation.

The kernels (:mod:`interp._kernels.delaunay2d`) decide every orientation and
in-circle question with Shewchuk's exact adaptive predicates, on the raw
coordinates: the result is exactly Delaunay at any coordinate offset (survey
eastings and northings included), with no centring or scaling.

Points are inserted in a biased randomised insertion order (BRIO: rounds of
doubling size drawn at random, each round sorted along a Hilbert curve), so
each walk from the last triangle made is short and the expected cost is
O(n log n) whatever order the points come in.  The order is drawn from a fixed
seed: the same input always gives the same triangulation, also for cocircular
points such as a regular grid, where the Delaunay triangulation is not unique.
"""

from __future__ import annotations

import numpy as np

from interp._kernels import delaunay2d as k
from interp.errors import InterpError
from interp.mesh import as_points, check_finite

SEED = 20261203  # fixed: the insertion order, hence the triangulation, is reproducible


def delaunay2d(points: object) -> np.ndarray:
    """Delaunay triangulation of distinct 2D points.

    Parameters
    ----------
    points : array_like (n, 2)
        Finite, pairwise distinct points (merge exact duplicates first, e.g.
        with :func:`interp.triangulate.merge_duplicates`).  Points closer than
        rounding distance but not equal (near duplicates at 1e-12) are distinct
        points: each is a vertex, and the thin cells between them are exactly
        counter-clockwise.

    Returns
    -------
    cells : ndarray (m, 3) int64
        Counter-clockwise triangles.  Every point is a vertex of some triangle;
        every triangle's open circumcircle holds no point (checked exactly).

    Raises
    ------
    InterpError
        For fewer than three points, NaN or infinite coordinates, exact
        duplicates, or points all on one line.

    Examples
    --------
    >>> delaunay2d([[0.0, 0.0], [1.0, 0.0], [0.0, 1.0], [1.0, 1.1]]).tolist()
    [[0, 1, 2], [2, 1, 3]]
    """
    pts = _checked(points)
    tri, _, ntri, order = _triangulate(pts)
    return k.real_cells(tri, ntri, len(pts), order)


def _checked(points: object) -> np.ndarray:
    pts = as_points(points, gdim=2)
    check_finite(pts)
    if len(pts) < 3:
        raise InterpError(f"a 2D triangulation needs at least 3 points; got {len(pts)}")
    return pts


def insertion_order(pts: np.ndarray) -> np.ndarray:
    """BRIO order of (n, 2) points: random rounds (each point joins round r >= 1
    with probability 2**-r, the last rounds first in size), each round along a
    Hilbert curve over the points' box.

    Examples
    --------
    >>> o = insertion_order(np.random.default_rng(0).random((100, 2)))
    >>> sorted(o.tolist()) == list(range(100))
    True
    """
    lo = pts.min(axis=0)
    span = float((pts.max(axis=0) - lo).max()) or 1.0
    level = min(16, int(np.log2(len(pts))) // 2 + 3)  # about 16 cells per point
    keys = k.hilbert_keys(pts[:, 0], pts[:, 1], lo[0], lo[1], 2.0**level / span, level)
    rounds = np.minimum(np.random.default_rng(SEED).geometric(0.5, len(pts)), 31)
    keys |= (31 - rounds) << (2 * level)
    return np.argsort(keys)


def _triangulate(pts: np.ndarray) -> tuple[np.ndarray, np.ndarray, int, np.ndarray]:
    """The kernel's triangles (in insertion order) and that order; errors raised."""
    order = insertion_order(pts)
    x = pts[order, 0]
    y = pts[order, 1]
    tri, nbr, ntri, same, status = k.delaunay(x, y)
    if status == k.COLLINEAR:
        raise InterpError(
            "the points are collinear: a 2D triangulation needs points spread in 2 "
            "dimensions (use 1D coordinates along the line instead)"
        )
    dup = np.flatnonzero(same >= 0)
    if dup.size:
        i, j = sorted((int(order[dup[0]]), int(order[same[dup[0]]])))
        raise InterpError(
            f"{dup.size} point(s) repeat an earlier point, e.g. index {j} equals index {i}; "
            f"merge exact duplicates before triangulating"
        )
    return tri, nbr, ntri, order
