"""Fitting scattered data: a P1 or P2 field on the Delaunay triangulation of the points.

The linear (P1) fit takes the data as node values of the triangulation.  The
quadratic (P2) fit keeps the data at the corners and sets each edge midpoint
from gradients recovered at the two end nodes:

* at every node a full quadratic (3, 6 or 10 coefficients in 1D, 2D, 3D) is
  fitted by least squares to the node and its neighbours in the
  triangulation (the 1-ring; the 2-ring where the 1-ring has fewer points
  than coefficients, lies on one side of a plane through the node, or the
  fit is ill-conditioned), in coordinates centred
  on the node and scaled by the farthest neighbour, with columns scaled to
  unit length and solved by Householder QR with column pivoting;
* the midpoint of edge (a, b) gets

      m = (v_a + v_b) / 2 + (g_a - g_b) . (x_b - x_a) / 8.

  Along the edge, with t from 0 at a to 1 at b, a quadratic is f(t) = v_a +
  t f'(0) + t^2 c, where f'(0) = g_a . (x_b - x_a) and f'(1) = g_b . (x_b -
  x_a) = f'(0) + 2 c.  Then f(1) = v_a + f'(0) + c, so f(1/2) = v_a +
  f'(0) / 2 + c / 4 = (f(0) + f(1)) / 2 - c / 4, and -c / 4 = (f'(0) -
  f'(1)) / 8 is the second term: the formula gives the midpoint value of
  any quadratic along the edge when the gradients are exact.

A node on the hull of the data (or at the edge of a masked gap) sees its
1-ring from one side only: there the 1-ring often has exactly as many points
as coefficients, three of them on the hull's edge, and the fit interpolates
rather than smooths.  Its gradient error is amplified by the conditioning of
that fit, the worst of the hull nodes gets worse as the mesh is refined and
has more of them, and the maximum error of the field stops falling like
h^3.  Those nodes go to the 2-ring, whose least-squares fit keeps the
gradient error O(h^2) as in the interior.

Where even the 2-ring cannot carry a quadratic (tiny data sets, a node whose
2-ring is nearly on a conic) the gradient comes from a linear least-squares
fit over the 2-ring; the P2 field there reproduces linear data only.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass

import numpy as np

from interp._arrays import as_floats, as_points, check_finite
from interp._kernels.fit import recover as _recover
from interp._progress import task
from interp._triangulate import merge_duplicates, mesh_and_added, triangulate
from interp.errors import InterpError
from interp.field import Field
from interp.mesh import Mesh

#: nodes whose gradients are recovered per call of the kernel (a step of the progress bar).
SLICE = 1 << 14


@dataclass(frozen=True)
class Samples:
    """Validated scattered data, NaN rows dropped and duplicate points merged.

    Attributes
    ----------
    valid : ndarray (n,) bool
        Input rows whose values are all finite.
    unique : ndarray (u, d)
        Distinct points of the valid rows, in first-seen order.
    inverse : ndarray (n,) int64
        Row of ``unique`` for each input row, -1 for rows dropped.
    values : ndarray (n, c)
        The input values (NaN rows included).
    mean : ndarray (u, c)
        Average of the values of the rows merged into each distinct point.
    count : ndarray (u,) int64
        Number of rows merged into each distinct point.
    scalar : bool
        True when the input values were one per point (shape (n,)).

    Examples
    --------
    >>> s = samples([[0.0], [1.0]], [[1.0, 2.0], [3.0, 4.0]], 1)
    >>> s.mean.shape, s.scalar, s.shaped(s.mean).shape
    ((2, 2), False, (2, 2))
    """

    valid: np.ndarray
    unique: np.ndarray
    inverse: np.ndarray
    values: np.ndarray
    mean: np.ndarray
    count: np.ndarray
    scalar: bool

    def shaped(self, values: np.ndarray) -> np.ndarray:
        """``values`` (k, c) as the caller passed them: (k,) for scalar data."""
        return values[:, 0] if self.scalar else values


def samples(points: object, values: object, order: int) -> Samples:
    """Validate scattered data for :func:`fit` and :func:`interp.crossvalidate`.

    Warns with the number of rows dropped for NaN values and of duplicate
    points merged (their values averaged).  Raises when NaN values leave
    fewer than d + 1 rows with values, saying how many have values and how
    many are missing.

    Examples
    --------
    >>> with warnings.catch_warnings(record=True) as caught:
    ...     warnings.simplefilter("always")
    ...     s = samples([[0.0, 0], [1, 0], [0, 0]], [1.0, 2.0, 3.0], 1)
    >>> str(caught[0].message)
    '1 duplicate point(s) merged, their values averaged'
    >>> s.unique.tolist(), s.mean[:, 0].tolist(), s.count.tolist()
    ([[0.0, 0.0], [1.0, 0.0]], [2.0, 2.0], [2, 1])
    """
    if order not in (1, 2):
        raise InterpError(f"order must be 1 (linear, P1) or 2 (quadratic, P2); got {order!r}")
    pts = as_points(points)
    check_finite(pts)
    vals = as_floats(values, "values must be numbers, one row per point")
    if vals.ndim not in (1, 2) or vals.shape[0] != pts.shape[0]:
        raise InterpError(
            f"values must have one row per point: {pts.shape[0]} points but values of "
            f"shape {vals.shape} ({vals.shape[0] if vals.ndim else 0} rows); pass an (n,) "
            "or (n, c) array"
        )
    scalar = vals.ndim == 1
    vals = vals.reshape(len(vals), -1)
    if np.isinf(vals).any():
        row = int(np.flatnonzero(np.isinf(vals).any(axis=1))[0])
        raise InterpError(
            f"values are infinite at point {row + 1} (counting from 1); use NaN to mark "
            "missing values (those points are dropped)"
        )
    valid = ~np.isnan(vals).any(axis=1)
    have, need = int(valid.sum()), pts.shape[1] + 1
    if have < need and not valid.all():
        missing = len(valid) - have
        if have == 0:
            raise InterpError(
                f"all values are missing (NaN) at the {missing} point(s) given; nothing to "
                f"fit: pass measured values at {need} or more of the points (NaN marks no data)"
            )
        raise InterpError(
            f"only {have} of {len(valid)} point(s) have values, {missing} are missing (NaN); "
            f"fitting {need - 1}D data needs values at {need} or more points: pass more "
            "measured values"
        )
    if not valid.all():
        warnings.warn(
            f"{int((~valid).sum())} point(s) with NaN values dropped before fitting",
            stacklevel=3,
        )
    unique, inv = merge_duplicates(pts[valid])
    if len(unique) < valid.sum():
        warnings.warn(
            f"{int(valid.sum()) - len(unique)} duplicate point(s) merged, their values averaged",
            stacklevel=3,
        )
    count = np.bincount(inv, minlength=len(unique))
    mean = (
        np.stack(
            [np.bincount(inv, weights=col, minlength=len(unique)) for col in vals[valid].T], axis=1
        )
        / count[:, None]
    )
    inverse = np.full(len(pts), -1, dtype=np.int64)
    inverse[valid] = inv
    return Samples(valid, unique, inverse, vals, mean, count, scalar)


def fit(
    points: object,
    values: object,
    *,
    order: int = 1,
    max_edge: float | None = None,
    boundary: object | None = None,
    breaklines: list[object] | None = None,
    name: str | None = None,
    units: str | None = None,
) -> Field:
    """A field through scattered data: P1 or P2 on the Delaunay triangulation of the points.

    Parameters
    ----------
    points : array_like (n, d)
        Measurement positions, d in 1, 2, 3.  Points at identical coordinates
        are merged into one node carrying the mean of their values, with a
        warning giving how many were merged.
    values : array_like (n,) or (n, c)
        One value, or c components, per point.  Rows holding a NaN are
        dropped with a warning giving how many; fewer than d + 1 rows left
        with values, or infinite values, are refused.
    order : {1, 2}
        1: the data are the node values of a linear (P1) field.  2: a
        quadratic (P2) field on ``mesh.elevate()``, corners at the data and
        edge midpoints from gradients recovered by local least-squares
        quadratic fits (see the module notes); data sampled from any
        quadratic polynomial are reproduced exactly inside the hull.
    max_edge, boundary
        Masks passed to :func:`interp.triangulate`: cells with an edge longer
        than ``max_edge``, or (2D) with the centroid outside the ``boundary``
        polygon (an :class:`interp.Polygon`, holes included, or one ring), are
        removed.
    breaklines : list of array_like (k, 2) or (k, 3), optional
        2D: polylines x, y[, value] passed to :func:`interp.triangulate`, so no
        cell straddles them.  Their vertices and crossings that are not data
        points are nodes too, valued along their line (see
        :mod:`interp._breaklines`); a line without values takes them from the
        surface of the data points.
    name, units
        Name and units of the field (see :class:`interp.Field`).

    Returns
    -------
    Field
        NaN outside the convex hull of the points and in masked cells: no
        extrapolation is done.  Near the hull the gradient fits are one-sided
        (they use the neighbours there are).  The gradient fits see only the
        edges of the cells kept by the masks, so data across a masked gap do
        not shape each other; a point left in no cell by the masks is a node
        that no cell uses.

    Notes
    -----
    A P2 surface can overshoot the data between points where the data
    change sharply.  Check it with :func:`interp.crossvalidate` before it is
    used for design or for quantities paid for; the fitted surface does not
    replace the checks required by local codes and licensed survey practice.

    Examples
    --------
    >>> import numpy as np
    >>> import interp
    >>> pts = np.random.default_rng(0).random((60, 2))
    >>> z = 1 + pts[:, 0] ** 2 - pts[:, 0] * pts[:, 1]
    >>> f = interp.fit(pts, z, order=2, name="z")
    >>> f.mesh.cell_type
    'triangle6'
    >>> round(float(f([[0.5, 0.5]])[0]), 10)  # 1 + 0.25 - 0.25
    1.0
    """
    data = samples(points, values, order)
    mesh, added, _ = mesh_and_added(data.unique, max_edge, boundary, breaklines)
    mean = node_values(data, mesh, added)
    if order == 1:
        return Field(mesh, data.shaped(mean), name=name, units=units)
    ptr, idx = neighbours(mesh)
    grad = recover_gradients(mesh.points, mean, ptr, idx)
    edges = mesh.edges()[0]
    a, b = edges.T
    mids = midpoint(mean[a], mean[b], grad[a], grad[b], mesh.points[b] - mesh.points[a])
    values = data.shaped(np.vstack([mean, mids]))
    return Field(mesh.elevate(), values, name=name, units=units)


def node_values(
    data: Samples, mesh: Mesh, added: np.ndarray, plain: Mesh | None = None
) -> np.ndarray:
    """Values at every mesh node: the data, then the nodes that breaklines added
    (their values along the line; from the data's own surface where the line has
    none).  ``plain`` is the data's own Delaunay triangulation when the caller
    has it already.

    Examples
    --------
    >>> data = samples([[0.0, 0], [2, 0], [0, 2], [2, 2]], [0.0, 2.0, 0.0, 2.0], 1)
    >>> mesh, added, _ = mesh_and_added(data.unique, None, None, [[[1.0, 0, 5], [1, 2, np.nan]]])
    >>> node_values(data, mesh, added)[4:, 0].tolist()  # a value given, one held from it
    [5.0, 5.0]
    >>> mesh, added, _ = mesh_and_added(data.unique, None, None, [[[1.0, 0], [1, 2]]])
    >>> node_values(data, mesh, added)[4:, 0].tolist()  # no values: the data's own surface
    [1.0, 1.0]
    """
    if not added.size:
        return data.mean
    c = data.mean.shape[1]
    if c > 1 and np.isfinite(added).any():
        raise InterpError(
            f"breakline values are one number per vertex but the data have {c} components; "
            f"give the breaklines as x, y only"
        )
    vals = np.repeat(added[:, None], c, axis=1)
    missing = np.isnan(added)
    if missing.any():
        plain = plain if plain is not None else triangulate(data.unique)
        surface = Field(plain, data.shaped(data.mean))
        where = mesh.points[len(data.unique) :][missing]
        vals[missing] = np.asarray(surface(where)).reshape(len(where), c)
    return np.vstack([data.mean, vals])


def neighbours(mesh: Mesh) -> tuple[np.ndarray, np.ndarray]:
    """Neighbours of every node along the mesh's edges, as compressed sparse rows.

    Returns
    -------
    ptr : ndarray (n_nodes + 1,) int64
    idx : ndarray int64
        The neighbours of node i are ``idx[ptr[i]:ptr[i + 1]]``, ascending.

    Examples
    --------
    >>> m = Mesh([[0.0, 0], [1, 0], [0, 1], [1, 1]], [[0, 1, 2], [1, 3, 2]])
    >>> ptr, idx = neighbours(m)
    >>> idx[ptr[1]:ptr[2]].tolist()
    [0, 2, 3]
    """
    return adjacency(mesh.edges()[0], mesh.n_nodes)


def adjacency(edges: np.ndarray, n: int) -> tuple[np.ndarray, np.ndarray]:
    """Neighbours of each of n nodes along ``edges`` (e, 2), as compressed sparse rows
    (see :func:`neighbours`).

    Examples
    --------
    >>> ptr, idx = adjacency(np.array([[0, 2], [2, 1]]), 3)
    >>> ptr.tolist(), idx.tolist()
    ([0, 1, 2, 4], [2, 2, 0, 1])
    """
    key = np.sort(np.concatenate([edges[:, 0] * n + edges[:, 1], edges[:, 1] * n + edges[:, 0]]))
    ptr = np.zeros(n + 1, dtype=np.int64)
    np.cumsum(np.bincount(key // n, minlength=n), out=ptr[1:])
    return ptr, key % n


def recover_gradients(
    points: np.ndarray, values: np.ndarray, ptr: np.ndarray, idx: np.ndarray
) -> np.ndarray:
    """Gradients at every node from local least-squares quadratic fits.

    Parameters
    ----------
    points : ndarray (n, d)
    values : ndarray (n, c)
    ptr, idx : ndarray int64
        Neighbour lists, see :func:`neighbours`.

    Returns
    -------
    ndarray (n, d, c)
        NaN at nodes without neighbours.

    Examples
    --------
    >>> x = np.array([[0.0], [1.0], [3.0]])
    >>> ptr, idx = np.array([0, 1, 3, 4]), np.array([1, 0, 2, 1])
    >>> (recover_gradients(x, x**2, ptr, idx)[:, 0, 0].round(12) + 0.0).tolist()
    [0.0, 2.0, 6.0]
    """
    n = len(points)
    grad = np.empty(points.shape + values.shape[1:])
    none, one = np.empty(0, dtype=np.int64), np.zeros(1, dtype=np.int64)  # no overrides
    mark, members = np.full(n, -1, dtype=np.int64), np.empty(n, dtype=np.int64)
    with task("recovering gradients (P2)", total=n, unit="nodes") as advance:
        for lo in range(0, n, SLICE):
            hi = min(n, lo + SLICE)
            _recover(points, values, ptr, idx, none, one, none, grad, lo, hi, mark, members)
            advance(hi - lo)
    return grad


def midpoint(
    va: np.ndarray, vb: np.ndarray, ga: np.ndarray, gb: np.ndarray, dx: np.ndarray
) -> np.ndarray:
    """Value at the middle of edges from the end values and gradients.

    ``(va + vb) / 2 + (ga - gb) . dx / 8`` with ``dx = xb - xa``: exact for a
    quadratic along the edge when the gradients are exact.

    Parameters
    ----------
    va, vb : ndarray (..., c)
    ga, gb : ndarray (..., d, c)
    dx : ndarray (..., d)

    Examples
    --------
    >>> # f = x**2 on [1, 3]: f(2) = 4
    >>> midpoint(np.array([[1.0]]), np.array([[9.0]]), np.array([[[2.0]]]),
    ...          np.array([[[6.0]]]), np.array([[2.0]])).tolist()
    [[4.0]]
    """
    return 0.5 * (va + vb) + np.einsum("...g,...gc->...c", dx, ga - gb) / 8.0
