"""Delaunay triangulation of scattered points, with the masks survey data needs.

Survey data is concave and gappy: the convex hull of the points bridges bays
and gaps with long thin triangles.  ``max_edge`` drops cells with an edge
longer than a length, and ``boundary`` inserts a polygon's edges as
constraints and drops the cells outside it.
"""

from __future__ import annotations

import warnings

import numpy as np
from scipy.spatial import Delaunay, QhullError

from interp._arrays import as_points, check_finite
from interp._breaklines import as_lines, insert
from interp._conform3d import conform
from interp._delaunay2d import delaunay2d
from interp._geometry import box_frame, is_flat, short_cells, simplex_geometry
from interp.errors import InterpError
from interp.mesh import Mesh
from interp.polygon import as_ring, contains


def merge_duplicates(points: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Merge points with identical coordinates, keeping first occurrences in order.

    Returns
    -------
    unique : ndarray (u, d)
    inverse : ndarray (n,) int64
        Row of ``unique`` for each input point.

    Examples
    --------
    >>> u, inv = merge_duplicates(np.array([[0.0, 0], [1, 0], [0, 0]]))
    >>> u.tolist(), inv.tolist()
    ([[0.0, 0.0], [1.0, 0.0]], [0, 1, 0])
    """
    # lexicographic and stable (equal points keep their input order): by the first
    # coordinate, then the few runs that tie there by all coordinates
    order = np.argsort(points[:, 0], kind="stable")
    x = points[order, 0]
    tied = np.zeros(len(points), dtype=bool)
    tied[1:] = x[1:] == x[:-1]
    tied[:-1] |= tied[1:]
    at = np.flatnonzero(tied)
    order[at] = order[at][np.lexsort(points[order[at]].T[::-1])]
    ordered = points[order]
    starts = np.ones(len(points), dtype=bool)
    starts[1:] = (ordered[1:] != ordered[:-1]).any(axis=1)
    group = np.cumsum(starts) - 1  # group of each sorted point
    first = order[starts]  # first occurrence of each group, groups in sorted order
    rank = np.empty(first.size, dtype=np.int64)
    rank[np.argsort(first)] = np.arange(first.size)
    inverse = np.empty(len(points), dtype=np.int64)
    inverse[order] = rank[group]
    return points[np.sort(first)], inverse


def triangulate(
    points: object,
    *,
    max_edge: float | None = None,
    boundary: object | None = None,
    breaklines: list[object] | None = None,
) -> Mesh:
    """Delaunay triangulation of scattered points in 1D, 2D or 3D.

    In 2D the triangulation is our own (:func:`interp._delaunay2d.delaunay2d`):
    exact predicates on the raw coordinates, so it is exactly Delaunay at any
    offset.  1D sorts the points; 3D uses scipy's Qhull on centred, scaled
    coordinates.

    Parameters
    ----------
    points : array_like (n, d)
        Scattered points, d in 1, 2, 3.  Exact duplicates are merged with a
        warning; the mesh nodes are the distinct points in first-seen order.
    max_edge : float, optional
        Drop cells with any edge longer than this.
    boundary : array_like (p, 2) or Polygon, optional
        2D only: a ring of vertices or an :class:`interp.Polygon` with holes.
        Its edges are inserted as constraints where they lie inside the convex
        hull of the points and the cells outside it are removed, so the mesh
        covers exactly the polygon inside the hull; its vertices (and its
        crossings with the hull and with breaklines) become nodes after the
        data points.
    breaklines : list of array_like (k, 2) or (k, 3), optional
        2D only: polylines x, y[, value] the mesh must follow (see
        :mod:`interp._breaklines`): every segment is a union of mesh edges and
        every other edge is locally Delaunay (a constrained Delaunay
        triangulation).  Line vertices that are not data points, and the
        crossings of lines, become nodes after the distinct data points.  A
        vertex outside the convex hull of the points, or two lines overlapping
        along a piece of line, is refused, naming the line and segment.

    Returns
    -------
    Mesh
        A P1 mesh of lines, triangles or tetrahedra.  Nodes used by no cell
        (after masking) stay in the mesh.

    Warns
    -----
    UserWarning
        When duplicates are merged; when cells too flat for a :class:`Mesh`
        (relative measure <= 1e-12) carry a share of the volume, as in a
        nearly flat cloud, and are dropped; and when a point ends up in no
        cell (one within rounding distance of another), so its value is unused.
        Where more than four points are cospherical (a lattice), Qhull's cells
        are triangulated again so that neighbours share whole faces, and the
        zero-volume cells it emits between them are dropped without a word;
        where points are only nearly cospherical (a lattice turned or rounded)
        and a dropped cell may leave a face with one cell inside the mesh, that
        is reported.

    Examples
    --------
    >>> import numpy as np
    >>> pts = np.array([[0.0, 0], [1, 0], [0, 1], [1, 1], [5, 5]])
    >>> triangulate(pts).n_cells
    4
    >>> triangulate(pts, max_edge=2.0).n_cells
    2
    >>> triangulate(pts, breaklines=[[[0, 0.5], [3, 3]]]).n_nodes
    7
    """
    return mesh_and_added(points, max_edge, boundary, breaklines)[0]


def mesh_and_added(
    points: object, max_edge: object, boundary: object, breaklines: object
) -> tuple[Mesh, np.ndarray, np.ndarray]:
    """:func:`triangulate`, the values along their lines of the nodes the
    breaklines added (NaN where a line has none), and the mesh edges (k, 2)
    that carry a breakline or the boundary."""
    pts = as_points(points)
    check_finite(pts)
    d = pts.shape[1]
    if pts.shape[0] < d + 1:
        raise InterpError(f"a {d}D triangulation needs at least {d + 1} points; got {pts.shape[0]}")
    x, scale = _normalised(pts)
    if _flat(x):
        uniq = _distinct(pts)[0]
        if len(uniq) < d + 1:
            raise InterpError(
                f"a {d}D triangulation needs at least {d + 1} distinct points; got {len(uniq)}"
            )
        what = "collinear" if d == 2 else "coplanar"
        raise InterpError(
            f"the points are {what}: a {d}D triangulation needs points spread in {d} "
            f"dimensions (use {d - 1}D coordinates instead)"
        )
    if boundary is not None and d != 2:
        raise InterpError(f"boundary polygons apply to 2D points; these are {d}D")
    if breaklines is not None and d != 2:
        raise InterpError(f"breaklines apply to 2D points; these are {d}D")
    if breaklines is not None or boundary is not None:
        uniq, inverse = _distinct(pts)
        lines = as_lines(breaklines) if breaklines is not None else []
        rings = boundary_rings(boundary)
        uniq, cells, added, edges = insert(uniq, lines, rings)
        outside = None if rings is None else ~contains(rings, uniq)
        centre = box_frame(pts.min(axis=0), pts.max(axis=0))[0]
        vol, size = simplex_geometry((uniq - centre)[cells] / scale)
        cells, vol, size = _drop_flat(cells, vol, size)
    else:
        added, outside, edges = np.empty(0), None, np.empty((0, 2), dtype=np.int64)
        cells, qhull, every_vertex = _delaunay(pts if d == 2 else x)
        vol, size = simplex_geometry(x[cells])
        if d == 3:  # cospherical points (a lattice): cells split alike from both sides
            cells, vol, size = conform(pts, x, cells, vol, size, *qhull)
        cells, vol, size = _drop_flat(cells, vol, size)
        if every_vertex:
            uniq, inverse = pts.copy(), None  # the mesh owns its nodes
        else:  # duplicates are never vertices: merging is needed only now
            uniq, inverse = _distinct(pts)
            cells = inverse[cells]
    _report_unused(uniq, cells, inverse, outside)
    keep = np.ones(len(cells), dtype=bool)
    if max_edge is not None:
        keep &= short_cells(uniq, cells, max_edge)
    if not keep.any():
        raise InterpError(
            "every cell was removed by the max_edge / boundary masks; "
            "use a larger max_edge or check that the boundary surrounds the points"
        )
    # Delaunay cells of checked points need no second check; their measures scale back
    mesh = Mesh._checked(uniq, cells[keep], (vol[keep] * scale**d, size[keep] * scale))
    return mesh, added, edges


def boundary_rings(boundary: object) -> list[np.ndarray] | None:
    """The rings of a boundary: a :class:`interp.Polygon` (holes too) or one ring."""
    if boundary is None:
        return None
    rings = getattr(boundary, "rings", None)
    return list(rings) if rings is not None else [as_ring(boundary, "boundary")]


def _drop_flat(
    cells: np.ndarray, vol: np.ndarray, size: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Drop the cells a :class:`Mesh` would refuse as having zero measure.

    Qhull emits such cells where points are cospherical (a lattice) and, in 1D,
    between duplicates; their volume is at rounding level and nothing is lost.
    Cells of a nearly flat cloud carry real volume: dropping them is reported.
    """
    d = cells.shape[1] - 1
    flat = is_flat(vol, size, d)
    if not flat.any():
        return cells, vol, size
    what = ("length", "area", "volume")[d - 1]
    nearly = ("coincident", "collinear", "coplanar")[d - 1]
    if flat.all():
        raise InterpError(
            f"every cell of the triangulation has zero {what}: the points are nearly "
            f"{nearly}; use {d - 1}D coordinates or spread the points"
        )
    lost = vol[flat].sum() / vol.sum()
    if lost > 1e-9:
        warnings.warn(
            f"{int(flat.sum())} cell(s) too thin to use were dropped, {lost:.2g} of the "
            f"triangulated {what}: the points are nearly {nearly}",
            stacklevel=3,
        )
    return cells[~flat], vol[~flat], size[~flat]


def _report_unused(
    points: np.ndarray, cells: np.ndarray, inverse: np.ndarray | None, outside: np.ndarray | None
) -> None:
    """Warn about input points that are in no cell (before masking), other than
    those ``outside`` the boundary.

    Qhull leaves out a point that lies within rounding distance of another
    without being an exact duplicate; its value would be silently ignored.
    """
    used = np.zeros(len(points), dtype=bool) if outside is None else outside.copy()
    used[cells.ravel()] = True
    if inverse is not None:
        used = used[inverse]
    if not used.all():
        missing = np.flatnonzero(~used)
        warnings.warn(
            f"{missing.size} point(s) are in no cell, the first is point {missing[0] + 1} "
            "(counting from 1): they "
            f"nearly coincide with other points or lie only in cells too thin to use; "
            f"their values are not used (merge or remove them)",
            stacklevel=3,
        )


def _distinct(points: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """:func:`merge_duplicates`, with a warning when any were merged."""
    uniq, inverse = merge_duplicates(points)
    if len(uniq) < len(points):
        warnings.warn(
            f"{len(points) - len(uniq)} duplicate point(s) merged before triangulating",
            stacklevel=3,
        )
    return uniq, inverse


def _normalised(points: np.ndarray) -> tuple[np.ndarray, float]:
    """Points centred on their bounding box and divided by the returned scale, so
    they fill [-1, 1] (Qhull's accuracy)."""
    centre, scale = box_frame(points.min(axis=0), points.max(axis=0))
    return (points - centre) / scale, scale


def _flat(x: np.ndarray) -> bool:
    """True when the points span fewer dimensions than they have coordinates."""
    sv = np.linalg.svd(x - x.mean(axis=0), compute_uv=False)
    return bool(sv[-1] <= 1e-10 * sv[0])


def _delaunay(x: np.ndarray) -> tuple[np.ndarray, tuple | None, bool]:
    """Delaunay cells of the points (1D and 3D: normalised); in 3D Qhull's cell
    across each cell's faces and the lifted hyperplane of each (None otherwise);
    and whether every point is a vertex (when not, some may be duplicates)."""
    d = x.shape[1]
    if d == 2:
        cells = delaunay2d(x, repeats=True)
        used = np.zeros(len(x), dtype=bool)
        used[cells.ravel()] = True
        return cells, None, bool(used.all())
    if d == 1:
        order = np.argsort(x[:, 0], kind="stable")
        cells = np.stack([order[:-1], order[1:]], axis=1).astype(np.int64)
        return cells, None, bool(np.all(np.diff(x[order, 0]) > 0))
    try:
        tri = Delaunay(x)
    except QhullError as exc:
        msg = str(exc).splitlines()[0]
        raise InterpError(f"Delaunay triangulation failed: {msg}") from None
    qhull = (tri.neighbors.astype(np.int64), tri.equations)
    return tri.simplices.astype(np.int64), qhull, len(tri.coplanar) == 0
