"""Leave-one-out cross-validation of scattered data.

Each point is predicted from all the other points, by the field that
:func:`interp.fit` would build from them, and the residual is the measured
value minus that prediction.

The whole set is triangulated once.  Removing a vertex p from a Delaunay
triangulation changes only the cells around p (its star): they are replaced
by cells of the Delaunay triangulation of p's neighbours (its link
vertices).  Those new cells are Delaunay with respect to all the remaining
points, hence to the link vertices, and the Delaunay triangulation of the
link vertices is unique for points in general position; so the cell holding
p once p is gone is the cell of Delaunay(link of p) that contains p.  One
compiled kernel serves 1D, 2D and 3D.  It finds that cell among the
simplices of link vertices: the one that contains p and whose circumsphere
holds no other link vertex (the lifting test).  That is a search of up to
C(k, d + 1) candidates for k link vertices (k is about 6 in 2D, 15 in 3D),
nearest vertices first; containment is read from a table of the
determinants of all d-subsets, so only candidates holding p pay for the
circumsphere test.  The search is the slow part in 3D (C(15, 4) = 1365
candidates), not in 1D or 2D.

For ``order=2`` the prediction also needs the recovered gradients at the
corners of that cell, and those change when p is removed: their neighbour
lists lose p and gain the new edges of the re-filled star.  The kernel
grows the new cells of the star from the cell holding p, crossing each
inner face by gift-wrapping (the Delaunay neighbour across a face is the
vertex beyond it whose sphere through the face is met first) and stopping
at the faces of the old star's boundary.  It then rebuilds the neighbour
lists of the link vertices under the ``max_edge`` mask, and repeats the
local least-squares fits of :mod:`interp.fit` at the corners, so the result
is the leave-one-out of the P2 fit itself, not an approximation of it.

Where points are not in general position (four or more points on one
circle, as on a regular grid) the re-triangulation of a star is not unique,
and the prediction depends on which of the valid triangulations is taken;
a brute-force leave-one-out is just as ambiguous there.
"""

from __future__ import annotations

import warnings
from collections.abc import Sequence
from pathlib import Path

import numpy as np

from interp._arrays import as_points, positive
from interp._breaklines import as_lines
from interp._fit import Samples, adjacency, midpoint, neighbours, node_values, samples
from interp._geometry import short_cells
from interp._kernels.validate import leave_one_out
from interp._kernels.validate2d import ON_LINE, leave_one_out2d
from interp._triangulate import mesh_and_added, triangulate
from interp.basis import EDGES, shape
from interp.errors import InterpError
from interp.io import write_table
from interp.mesh import Mesh


def crossvalidate(
    points: object,
    values: object,
    *,
    order: int = 1,
    max_edge: float | None = None,
    boundary: object | None = None,
    breaklines: list[object] | None = None,
) -> np.ndarray:
    """Leave-one-out residuals: each measured value minus its prediction from all the others.

    Parameters
    ----------
    points : array_like (n, d)
        Measurement positions, d in 1, 2, 3.
    values : array_like (n,) or (n, c)
        Measured values.  Rows holding a NaN take no part (they are dropped
        with a warning, as in :func:`interp.fit`) and get a NaN residual.
    order : {1, 2}
        The fit being validated: linear (P1) or quadratic (P2), as in
        :func:`interp.fit`.
    max_edge : float, optional
        The ``max_edge`` mask of the fit: a prediction that falls in a cell
        with a longer edge is NaN.
    boundary : Polygon or array_like (p, 2), optional
        2D only: a polygon (an :class:`interp.Polygon`, holes included, or
        one ring): a prediction that falls in a cell of the others' Delaunay
        triangulation whose centroid lies outside it is NaN.  ``fit(...,
        boundary=)`` inserts the boundary's edges and vertices instead, so in
        the cells the boundary crosses (or whose circumcircle holds one of
        its vertices) a residual differs from that of a refit; elsewhere it
        is the same.  For ``order=2`` the gradients around a removed point
        are recovered from its re-triangulated neighbourhood whether or not
        those new cells are inside the boundary.  Breaklines are not taken
        into account.

    Returns
    -------
    ndarray (n,) or (n, c)
        One residual per input row.  NaN where the point lies outside the
        convex hull of the others (it is a vertex of the hull), where the cell
        holding it once it is removed is masked, and for rows with NaN values.
        A point measured more than once is predicted, like any point, by the
        fit of the other rows: at its location those are its other
        measurements, so its residual is the value minus their mean (a
        measure of repeatability rather than of interpolation).

    Notes
    -----
    The whole set is triangulated once and each point's neighbourhood is
    re-triangulated locally (see the module notes); the residuals equal
    those of fitting the n - 1 other points, n times over.  Residuals
    measure how well the data predict themselves at the data spacing; they
    are not a guarantee of accuracy between the points, and a surface used
    for design or payment still needs the independent checks required by
    local codes and licensed survey practice.

    Examples
    --------
    >>> import numpy as np
    >>> pts = np.array([[0.0, 0], [2, 0], [0, 2], [2, 2], [1, 1]])
    >>> r = crossvalidate(pts, [0.0, 0.0, 0.0, 0.0, 1.0])
    >>> r.tolist()  # the hull corners have no prediction; the centre is predicted 0
    [nan, nan, nan, nan, 1.0]
    """
    data = samples(points, values, order)
    limit = np.inf if max_edge is None else positive(max_edge, "max_edge")
    if breaklines is None and boundary is None:
        x, tri, bary, nodal, grad, used = _plain(data, order, limit)
    else:
        x, tri, bary, nodal, grad, used = _constrained(data, order, limit, boundary, breaklines)
    predicted = _predict(x, tri, bary, nodal, grad)
    # a repeated location: the others' fit holds the mean of its other measurements there
    rows = np.flatnonzero(data.valid)
    u = data.inverse[rows]
    others = data.count[u] - 1
    repeated = others > 0
    own = data.values[rows]
    mean_others = (data.count[u, None] * data.mean[u] - own) / np.maximum(others, 1)[:, None]
    pred = np.where(repeated[:, None], np.where(used[u, None], mean_others, np.nan), predicted[u])
    residual = np.full(data.values.shape, np.nan)
    residual[rows] = own - pred
    return data.shaped(residual)


def residual_summary(points: object, residuals: object, *, worst: int = 5) -> dict:
    """Statistics of leave-one-out residuals, and the rows with the largest ones.

    Parameters
    ----------
    points : array_like (n, d)
        The points the residuals belong to.
    residuals : array_like (n,)
        One residual per point, NaN where there is none (see :func:`crossvalidate`).
    worst : int
        How many of the largest residuals to list.

    Returns
    -------
    dict
        ``count`` (rows with a residual), ``outside`` (rows without one),
        ``rms``, ``mean`` and ``max_abs`` of the residuals (NaN when there are
        none), and ``worst``: a list of ``{"row", "point", "residual"}``,
        largest absolute residual first.

    Examples
    --------
    >>> s = residual_summary([[0.0, 0], [1, 0], [2, 0]], [3.0, np.nan, -4.0], worst=1)
    >>> s["count"], s["outside"], s["rms"], s["mean"], s["max_abs"]
    (2, 1, 3.5355339059327378, -0.5, 4.0)
    >>> s["worst"]
    [{'row': 2, 'point': [2.0, 0.0], 'residual': -4.0}]
    """
    pts = as_points(points)
    res = np.asarray(residuals, dtype=np.float64)
    if res.shape != (len(pts),):
        raise InterpError(
            f"residuals must be one value per point: {len(pts)} points but residuals of "
            f"shape {res.shape}; summarise one component at a time"
        )
    if int(worst) != worst or worst < 0:
        raise InterpError(f"worst must be a count of rows (0 or more); got {worst!r}")
    ok = np.isfinite(res)
    r = res[ok]
    rows = np.flatnonzero(ok)[np.argsort(-np.abs(r), kind="stable")[: int(worst)]]
    return {
        "count": int(ok.sum()),
        "outside": int((~ok).sum()),
        "rms": float(np.sqrt(np.mean(r**2))) if r.size else np.nan,
        "mean": float(r.mean()) if r.size else np.nan,
        "max_abs": float(np.abs(r).max()) if r.size else np.nan,
        "worst": [
            {"row": int(i), "point": pts[i].tolist(), "residual": float(res[i])} for i in rows
        ],
    }


def write_residuals(
    path: str | Path,
    points: object,
    values: dict[str, np.ndarray],
    residuals: dict[str, np.ndarray],
    coords: Sequence[str] = ("x", "y"),
) -> Path:
    """Write one row per point: coordinates, measured value, prediction and residual.

    With one field the columns after the coordinates are ``value``,
    ``predicted`` and ``residual``; with several, ``<name>``,
    ``<name>_predicted`` and ``<name>_residual`` for each.  The prediction is
    the value minus the residual; cells without a residual are empty.  The
    file is written atomically.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> path = pathlib.Path(tempfile.mkdtemp()) / "r.csv"
    >>> _ = write_residuals(path, [[0.0, 1.0], [2.0, 3.0]], {"z": np.array([5.0, 6.0])},
    ...                     {"z": np.array([0.5, np.nan])})
    >>> path.read_text().splitlines()
    ['x,y,value,predicted,residual', '0,1,5,4.5,0.5', '2,3,6,,']
    """
    pts = as_points(points)
    header, columns = list(coords), list(pts.T)
    for name, r in residuals.items():
        v = np.asarray(values[name], dtype=np.float64)
        labels = ("value", "predicted", "residual")
        if len(residuals) > 1:
            labels = (name, f"{name}_predicted", f"{name}_residual")
        header += labels
        columns += [v, v - r, r]
    return write_table(path, header, columns)


def _plain(data: Samples, order: int, limit: float) -> tuple[np.ndarray, ...]:
    """The mesh nodes; the cell of the others' Delaunay triangulation holding
    each point, its barycentric coordinates, corner values and (P2) corner
    gradients; and which points some cell uses."""
    mesh = triangulate(data.unique)
    x, cells = mesh.points, mesh.cells
    kept = _short(x, cells, limit)
    ptr, idx = _rings(mesh, kept, order)
    tri, bary, grad = _outputs(len(x), x.shape[1], data.mean.shape[1], order)
    vc_ptr, vc_idx = _vertex_cells(cells, len(x))
    p2_grad = grad if order == 2 else None  # None: the kernel compiles no P2 branch
    leave_one_out(x, data.mean, cells, kept, vc_ptr, vc_idx, ptr, idx, limit, tri, bary, p2_grad)
    nodal = data.mean[np.maximum(tri, 0)]
    return x, tri, bary, nodal, grad, _used(cells, kept, len(x))


def _constrained(
    data: Samples, order: int, limit: float, boundary: object, breaklines: object
) -> tuple[np.ndarray, ...]:
    """As :func:`_plain`, on the constrained triangulation that ``fit`` builds
    with the breaklines and boundary; warns about the points on them that get
    no residual."""
    mesh, added, edges = mesh_and_added(data.unique, None, boundary, breaklines)
    x, cells = mesh.points, mesh.cells
    n = len(data.unique)
    v = node_values(data, mesh, added)
    kept = _short(x, cells, limit)
    ptr, idx = _rings(mesh, kept, order)
    tri, bary, grad = _outputs(n, 2, v.shape[1], order)
    nodal = np.full((n, 3, v.shape[1]), np.nan)
    vc_ptr, vc_idx = _vertex_cells(cells, len(x))
    cptr, cidx = adjacency(edges, len(x))
    plain = triangulate(data.unique).cells
    pvc_ptr, pvc_idx = _vertex_cells(plain, n)
    dep_ptr, dep_idx = _dependants(data.unique, plain, x, n + np.flatnonzero(np.isnan(added)))
    status = np.zeros(n, dtype=np.int8)
    fixed = _fixed(data.unique, breaklines)
    p2_grad = grad if order == 2 else None
    leave_one_out2d(
        x,
        v,
        cells,
        kept,
        vc_ptr,
        vc_idx,
        ptr,
        idx,
        limit,
        cptr,
        cidx,
        fixed,
        plain,
        pvc_ptr,
        pvc_idx,
        dep_ptr,
        dep_idx,
        tri,
        bary,
        nodal,
        status,
        p2_grad,
    )
    skipped = int((status == ON_LINE).sum())
    if skipped:
        warnings.warn(
            f"{skipped} point(s) at a bend, an end or a crossing of a breakline or of the "
            f"boundary get no residual (NaN): leaving one out changes the lines themselves",
            stacklevel=3,
        )
    return x, tri, bary, nodal, grad, _used(cells, kept, len(x))[:n]


def _short(x: np.ndarray, cells: np.ndarray, limit: float) -> np.ndarray:
    """The ``max_edge`` mask of the fit (every cell when there is no limit)."""
    if limit == np.inf:
        return np.ones(len(cells), dtype=bool)
    kept = short_cells(x, cells, limit)
    if not kept.any():
        raise InterpError(f"max_edge={limit:g} removes every cell; use a larger max_edge")
    return kept


def _rings(mesh: Mesh, kept: np.ndarray, order: int) -> tuple[np.ndarray, np.ndarray]:
    """The neighbour lists of the fit's kept cells (P2), or empty ones (P1)."""
    if order == 1:
        return np.zeros(1, dtype=np.int64), np.zeros(0, dtype=np.int64)
    return neighbours(Mesh(mesh.points, mesh.cells[kept]))


def _outputs(n: int, d: int, c: int, order: int) -> tuple[np.ndarray, ...]:
    """Empty ``tri``, ``bary`` and ``grad`` (no rows for P1) for the kernels."""
    tri = np.full((n, d + 1), -1, dtype=np.int64)
    bary = np.full((n, d + 1), np.nan)
    grad = np.full((n if order == 2 else 0, d + 1, d, c), np.nan)
    return tri, bary, grad


def _used(cells: np.ndarray, kept: np.ndarray, n: int) -> np.ndarray:
    return np.bincount(cells[kept].ravel(), minlength=n) > 0


def _dependants(
    points: np.ndarray, plain: np.ndarray, x: np.ndarray, nodes: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """For each data point, the ``nodes`` (rows of ``x``) valued from the data's
    own surface through it: those in a cell of the plain Delaunay triangulation
    ``plain`` of the ``points`` that has it as a corner; compressed sparse rows."""
    n = len(points)
    cell = Mesh(points, plain).locate(x[nodes]).cells
    found = cell >= 0
    corner = plain[cell[found]].ravel()
    node = np.repeat(nodes[found], 3)
    order = np.argsort(corner, kind="stable")
    ptr = np.zeros(n + 1, dtype=np.int64)
    np.cumsum(np.bincount(corner, minlength=n), out=ptr[1:])
    return ptr, node[order]


def _fixed(points: np.ndarray, breaklines: object) -> np.ndarray:
    """Data points at a line's end or at a line vertex with its own value:
    leaving them out changes the lines."""
    out = np.zeros(len(points), dtype=bool)
    if breaklines is None:
        return out
    ends = [
        ln[np.r_[0, len(ln) - 1, np.flatnonzero(np.isfinite(ln[:, 2]))], :2]
        for ln in as_lines(breaklines)
    ]
    keys = {tuple(p) for p in np.vstack(ends).tolist()}
    near = np.flatnonzero(np.isin(points[:, 0], [k[0] for k in keys]))
    out[near] = [tuple(p) in keys for p in points[near].tolist()]
    return out


def _vertex_cells(cells: np.ndarray, n: int) -> tuple[np.ndarray, np.ndarray]:
    """Cells around each vertex, as compressed sparse rows."""
    flat = cells.ravel()
    order = np.argsort(flat, kind="stable")
    ptr = np.zeros(n + 1, dtype=np.int64)
    np.cumsum(np.bincount(flat, minlength=n), out=ptr[1:])
    return ptr, order // cells.shape[1]


def _predict(
    x: np.ndarray, tri: np.ndarray, bary: np.ndarray, nodal: np.ndarray, grad: np.ndarray
) -> np.ndarray:
    """Values (n, c) at the removed points from their new cells (NaN where none),
    given the values (n, d + 1, c) at the cells' corners."""
    out = np.full((len(tri), nodal.shape[2]), np.nan)
    inside = tri[:, 0] >= 0
    t, lam = tri[inside], bary[inside]
    nodal = nodal[inside]
    order = 1
    if grad.shape[0]:
        order = 2
        g = grad[inside]
        a, b = np.array(EDGES[x.shape[1]]).T
        mids = midpoint(nodal[:, a], nodal[:, b], g[:, a], g[:, b], x[t[:, b]] - x[t[:, a]])
        nodal = np.concatenate([nodal, mids], axis=1)
    out[inside] = np.einsum("pi,pic->pc", shape(x.shape[1], order, lam), nodal)
    return out
