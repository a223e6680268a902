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

With breaklines or a boundary (2D) the triangulation is constrained, and
that test is the wrong one: a triangle of the constrained triangulation may
hold a link vertex in its circumcircle that a constraint hides from it, and a
triangle of link vertices holding p may stick out of a star that is not
convex.  Removing a vertex that is on no constraint still changes only its
star, and the new cells are the constrained Delaunay triangulation of the
star polygon (the link ring, a simple polygon star-shaped from p).  The
kernel of :mod:`interp._kernels.validate2d` triangulates that polygon as a
polygon: ears clipped, then Lawson flips of its inner edges until each is
locally Delaunay, with the exact predicates of the triangulator, so it
agrees with a refit at any coordinate offset.  A point inside a straight
constraint (on two collinear constraint edges) leaves the constraint in
place: its star is cut in two along the segment between its two constraint
neighbours, and each half is triangulated so.  Nodes that ``fit`` values
from the plain Delaunay surface of the data (boundary vertices, vertices of
lines without values) are valued again from the others where the removed
point is a corner of the plain cell holding them (its plain star re-filled
the same way), so their values are those of the refit.

For ``order=2`` the prediction also needs the recovered gradients at the
corners of that cell, and those change when p is removed: their neighbour
lists lose p and gain the new edges of the re-filled star.  The kernel
grows the new cells of the star from the cell holding p, crossing each
inner face by gift-wrapping (the Delaunay neighbour across a face is the
vertex beyond it whose sphere through the face is met first) and stopping
at the faces of the old star's boundary (with constraints: the polygon's
triangles).  It then rebuilds the neighbour lists of the link vertices
under the ``max_edge`` mask, and repeats the local least-squares fits of
:mod:`interp.fit` at the corners, so the result is the leave-one-out of the
P2 fit itself, not an approximation of it.  The fit's gradient recovery
uses the mesh's edges, including those along a breakline, whose end nodes
see across it; the leave-one-out does the same.

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
from interp._kernels.predicates import orient2d
from interp._kernels.validate import leave_one_out
from interp._kernels.validate2d import NO_FAN, ON_LINE, leave_one_out2d
from interp._progress import task
from interp._triangulate import boundary_rings, mesh_and_added, triangulate
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
        2D only: the ``boundary`` of :func:`interp.fit` (an
        :class:`interp.Polygon`, holes included, or one ring): its edges are
        constraints of the triangulation and the cells outside it are dropped,
        so a point outside it has no residual.
    breaklines : list of array_like (k, 2) or (k, 3), optional
        2D only: the ``breaklines`` of :func:`interp.fit`, as x, y[, value]
        polylines.  Their vertices are not rows of ``points`` and get no
        residual themselves; they stay in every refit, with their values.

    With ``breaklines`` or ``boundary`` the fit validated is the one
    :func:`interp.fit` builds with them (a constrained Delaunay triangulation,
    breakline and boundary nodes valued as there), and each residual equals
    that of ``fit(others, breaklines=lines, boundary=polygon)`` evaluated at
    the point, P1 or P2.  For a point that lies on a breakline or on the
    boundary, "leaving it out" also takes its vertex out of the line or ring
    that has one there (the line then runs straight from the previous to the
    next vertex), and then:

    * where the line runs straight through the point (it lies inside a
      segment, or at a vertex exactly in line with its neighbours on the mesh,
      that has no value of its own), the line is unchanged and the residual
      is that of the refit;
    * at a bend, an end or a crossing of lines, next to a crossing point that
      rounding moved off the line, or at a line vertex with a value of its
      own, taking the vertex out changes the lines themselves (new crossings,
      new line values, a boundary with a corner cut off) and with it the
      triangulation beyond the point's neighbourhood.  Those points get NaN
      and one warning gives their count; refit them one by one with
      :func:`interp.fit` if they are needed.

    A point on the convex hull of the data (a vertex of it or on one of its
    edges) gets NaN with breaklines or a boundary.  So does a point beside a
    cell that the triangulation dropped as too thin to use (a point within
    rounding distance of a line, not on it), with a warning giving their
    count.

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
    those of fitting the n - 1 other points, n times over (to rounding).  Residuals
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

    A crease along y = 1, followed by a breakline there (a linear fit on each
    side predicts the data exactly; without the line it cuts across):

    >>> pts = np.array([[0.0, 0], [2, 0], [0, 2], [2, 2], [1, 0.5], [1, 1.5]])
    >>> z = np.abs(pts[:, 1] - 1)
    >>> crossvalidate(pts, z)[4:].round(6).tolist()
    [-0.333333, -0.333333]
    >>> (crossvalidate(pts, z, breaklines=[[[0, 1, 0.0], [2, 1, 0.0]]])[4:].round(12) + 0).tolist()
    [0.0, 0.0]
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
    plain = triangulate(data.unique)
    v = node_values(data, mesh, added, plain)
    kept = _short(x, cells, limit)
    ptr, idx = _rings(mesh, kept, order)
    tri, bary, grad = _outputs(n, 2, v.shape[1], order)
    nodal = np.full((n, 3, v.shape[1]), np.nan)
    vc_ptr, vc_idx = _vertex_cells(cells, len(x))
    cptr, cidx = adjacency(edges, len(x))
    pvc_ptr, pvc_idx = _vertex_cells(plain.cells, n)
    dep_ptr, dep_idx = _dependants(plain, x, n + np.flatnonzero(np.isnan(added)))
    status = np.zeros(n, dtype=np.int8)
    fixed = _fixed(data.unique, breaklines, boundary)
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
        plain.cells,
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
    skipped, thin = int((status == ON_LINE).sum()), int((status == NO_FAN).sum())
    if skipped:
        warnings.warn(
            f"{skipped} point(s) at a bend, an end or a crossing of a breakline or of the "
            f"boundary get no residual (NaN): leaving one out changes the lines themselves",
            stacklevel=3,
        )
    if thin:
        warnings.warn(
            f"{thin} point(s) beside a cell too thin to use (within rounding of a line) get "
            f"no residual (NaN): their neighbourhood is not one fan of cells",
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


def _dependants(plain: Mesh, x: np.ndarray, nodes: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """For each data point, the ``nodes`` (rows of ``x``) valued from the data's
    own surface through it: those in a cell of ``plain``, the data's own Delaunay
    triangulation, that has it as a corner; compressed sparse rows."""
    n = plain.n_nodes
    cell = plain.locate(x[nodes]).cells
    found = cell >= 0
    corner = plain.cells[cell[found]].ravel()
    node = np.repeat(nodes[found], 3)
    order = np.argsort(corner, kind="stable")
    ptr = np.zeros(n + 1, dtype=np.int64)
    np.cumsum(np.bincount(corner, minlength=n), out=ptr[1:])
    return ptr, node[order]


def _fixed(points: np.ndarray, breaklines: object, boundary: object) -> np.ndarray:
    """Data points whose leaving out changes the lines: at a line's end, at a
    line vertex with a value of its own, or at a vertex where a line or a
    boundary ring bends (exact)."""
    chains = [(ln, False) for ln in as_lines(breaklines)] if breaklines is not None else []
    chains += [
        (np.column_stack([r, r[:, 0] * np.nan]), True) for r in boundary_rings(boundary) or []
    ]
    marked = []
    for ln, closed in chains:
        prev, nxt = np.roll(ln[:, :2], 1, axis=0), np.roll(ln[:, :2], -1, axis=0)
        turn = np.array(
            [orient2d(*a, *b, *c) for a, b, c in zip(prev, ln[:, :2], nxt, strict=True)]
        )
        ahead = np.einsum("ij,ij->i", prev - ln[:, :2], nxt - ln[:, :2]) >= 0
        flag = (turn != 0) | ahead | np.isfinite(ln[:, 2])
        if not closed:
            flag[[0, -1]] = True
        marked += ln[flag, :2].tolist()
    keys = {tuple(p) for p in marked}
    out = np.zeros(len(points), dtype=bool)
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
