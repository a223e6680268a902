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
from interp._fit import midpoint, neighbours, samples
from interp._geometry import short_cells
from interp._kernels.validate import leave_one_out
from interp._progress import task
from interp._triangulate import inside_boundary, triangulate
from interp.basis import EDGES, shape
from interp.errors import InterpError
from interp.io import write_table
from interp.mesh import Mesh

#: points done per call of the leave-one-out kernel (a step of the progress bar).
SLICE = 4096


def crossvalidate(
    points: object,
    values: object,
    *,
    order: int = 1,
    max_edge: float | None = None,
    boundary: object | None = None,
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
    mesh = triangulate(data.unique)
    x, cells = mesh.points, mesh.cells
    kept = np.ones(len(cells), dtype=bool)
    limit = np.inf
    if max_edge is not None:
        limit = positive(max_edge, "max_edge")
        kept = short_cells(x, cells, limit)
        if not kept.any():
            raise InterpError(f"max_edge={max_edge} removes every cell; use a larger max_edge")
    if boundary is not None:
        kept &= inside_boundary(x, cells, boundary)
        if not kept.any():
            raise InterpError(
                "the boundary mask removes every cell; check that the boundary surrounds the points"
            )
    used = np.bincount(cells[kept].ravel(), minlength=len(x)) > 0
    ptr, idx = np.zeros(1, dtype=np.int64), np.zeros(0, dtype=np.int64)
    if order == 2:
        ptr, idx = neighbours(Mesh(x, cells[kept]))
    d = x.shape[1]
    tri = np.full((len(x), d + 1), -1, dtype=np.int64)
    bary = np.full((len(x), d + 1), np.nan)
    grad = np.full((len(x) if order == 2 else 0, d + 1, d, data.mean.shape[1]), np.nan)
    vc_ptr, vc_idx = _vertex_cells(cells, len(x))
    p2_grad = grad if order == 2 else None  # None: the kernel compiles no P2 branch
    scratch = np.zeros((4, len(x)), dtype=np.int64)
    scratch[0] = -1
    stamp = 0
    with task("leave-one-out", total=len(x), unit="points") as advance:
        for lo in range(0, len(x), SLICE):
            hi = min(len(x), lo + SLICE)
            stamp = leave_one_out(
                x,
                data.mean,
                cells,
                kept,
                vc_ptr,
                vc_idx,
                ptr,
                idx,
                limit,
                tri,
                bary,
                p2_grad,
                lo,
                hi,
                scratch,
                stamp,
            )
            advance(hi - lo)
    if boundary is not None:
        # the cell of the others' triangulation that holds each point, masked as the fit's
        found = np.flatnonzero(tri[:, 0] >= 0)
        tri[found[~inside_boundary(x, tri[found], boundary)]] = -1
    predicted = _predict(x, data.mean, tri, bary, grad)
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


#: percentiles of |residual| in :func:`residual_summary`: the median, and the 90th and 95th.
#: The 95th is what vertical accuracy specifications quote where errors are not normally
#: distributed about the surface, beside the RMS (from memory: the ASPRS positional accuracy
#: standards of 2014 do so for vegetated terrain).
PERCENTILES = (50, 90, 95)


def residual_summary(points: object, residuals: object, *, worst: object = None) -> dict:
    """Statistics of leave-one-out residuals, what one checks before trusting a surface.

    Per-point detail goes to a file: :func:`write_residuals`.

    Parameters
    ----------
    points : array_like (n, d)
        The points the residuals belong to.
    residuals : array_like (n,)
        One residual per point, NaN where there is none (see :func:`crossvalidate`).
    worst : optional
        Deprecated and ignored (a DeprecationWarning says so): the summary
        lists no points; write them all with :func:`write_residuals`.

    Returns
    -------
    dict
        ``count`` (rows with a residual) and ``outside`` (rows without one);
        of the residuals r (NaN when there are none): ``mean`` (the bias),
        ``rms`` (sqrt of the mean of r²), ``std`` (standard deviation about
        the mean, n - 1 in the denominator; NaN for a single residual),
        ``min`` and ``max`` (signed), ``max_abs``; and ``abs_p50``,
        ``abs_p90``, ``abs_p95``: percentiles of |r| (linear interpolation
        between order statistics, numpy's default).

    Examples
    --------
    >>> s = residual_summary([[0.0, 0], [1, 0], [2, 0]], [3.0, np.nan, -4.0])
    >>> s["count"], s["outside"], s["rms"], s["mean"], s["min"], s["max_abs"], s["abs_p50"]
    (2, 1, 3.5355339059327378, -0.5, -4.0, 4.0, 3.5)
    """
    if worst is not None:
        warnings.warn(
            "residual_summary(): worst= is deprecated and ignored; the summary holds "
            "statistics only: write each point's residual with interp.write_residuals()",
            DeprecationWarning,
            stacklevel=2,
        )
    pts = as_points(points)
    res = np.asarray(residuals, dtype=np.float64)
    if res.shape != (len(pts),):
        raise InterpError(
            f"residuals must be one value per point: {len(pts)} points but residuals of "
            f"shape {res.shape}; summarise one component at a time"
        )
    ok = np.isfinite(res)
    r = res[ok]
    out = {"count": int(ok.sum()), "outside": int((~ok).sum())}
    keys = ["mean", "rms", "std", "min", "max", "max_abs"] + [f"abs_p{q}" for q in PERCENTILES]
    if not r.size:
        return out | dict.fromkeys(keys, np.nan)
    a = np.abs(r)
    stats = [
        r.mean(),
        np.sqrt(np.mean(r**2)),
        r.std(ddof=1) if r.size > 1 else np.nan,
        r.min(),
        r.max(),
        a.max(),
        *np.percentile(a, PERCENTILES),
    ]
    return out | {k: float(v) for k, v in zip(keys, stats, strict=True)}


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


def _vertex_cells(cells: np.ndarray, n: int) -> tuple[np.ndarray, np.ndarray]:
    """Cells around each vertex, as compressed sparse rows."""
    flat = cells.ravel()
    order = np.argsort(flat, kind="stable")
    ptr = np.zeros(n + 1, dtype=np.int64)
    np.cumsum(np.bincount(flat, minlength=n), out=ptr[1:])
    return ptr, order // cells.shape[1]


def _predict(
    x: np.ndarray, v: np.ndarray, tri: np.ndarray, bary: np.ndarray, grad: np.ndarray
) -> np.ndarray:
    """Values (n, c) at the removed points from their new cells (NaN where none)."""
    out = np.full((len(tri), v.shape[1]), np.nan)
    inside = tri[:, 0] >= 0
    t, lam = tri[inside], bary[inside]
    nodal = v[t]
    order = 1
    if grad.shape[0]:
        order = 2
        g = grad[inside]
        a, b = np.array(EDGES[x.shape[1]]).T
        mids = midpoint(nodal[:, a], nodal[:, b], g[:, a], g[:, b], x[t[:, b]] - x[t[:, a]])
        nodal = np.concatenate([nodal, mids], axis=1)
    out[inside] = np.einsum("pi,pic->pc", shape(x.shape[1], order, lam), nodal)
    return out
