"""Geometry of simplices and the tolerances of the whole engine, in one place.

Determinants and closed-form inverses of small matrices, barycentric
coordinates, cell measures and sizes, the centring frame of a box, longest
edges, the affine maps of cells to barycentric coordinates, and every
tolerance the engine compares against, so that they can be read side by side.

Tolerances
----------
All are relative: to a cell's size (its largest coordinate difference along
an edge) raised to the cell's dimension for measures, or in barycentric units.

- ``DEGENERATE`` (1e-12): a cell whose measure is at most this times
  size**dim is flat; a :class:`interp.Mesh` refuses it and
  :func:`interp.triangulate` drops it.
- ``TOLERANCE`` (1e-10): a point whose smallest barycentric coordinate is at
  least ``-TOLERANCE`` is inside the cell (point location, leave-one-out).
- ``TIE`` (1e-12): two containing cells whose depths differ by less are a tie.
- ``MARGIN`` (1e-8): a bucket of the point-location grid leaves a cell off its
  list only when the cell's planes miss it by this much (a hundred times
  ``TOLERANCE``, far above rounding).
- ``SLIVER`` (1e-14) and ``OVERLAY_SLIVER`` (1e-10): pieces thinner than
  round-off.  They differ on purpose.  The pieces of a clipped cell are only
  integrated: dropping one loses its share of the integral, so the threshold
  sits just above rounding (about 50 machine epsilons).  The triangles of an
  overlay become the cells of a new :class:`interp.Mesh`, which refuses
  cells at ``DEGENERATE``: the threshold must lie above that, and a hundred
  times it keeps every overlay cell clear of the mesh check.
- ``FLAT`` and ``EMPTY`` (1e-12): leave-one-out's relative determinant below
  which a simplex of link vertices is flat, and its margin of the
  empty-circumsphere test.
- ``ZERO_AREA`` (1e-12): a polygon ring with less area, relative to its
  extent squared, has none.
- ``BIN_SLACK`` (1e-9): bucket widths added around a polygon edge when it is
  binned, so that rounding never leaves an edge out of a bucket it touches.
- ``MIN_RCOND`` (1e-3) and ``MIN_RCOND_LINEAR`` (1e-14): the conditioning a
  local least-squares gradient fit needs to be accepted (quadratic, then the
  linear fallback, which only has to be of full rank).
"""

from __future__ import annotations

from math import factorial

import numpy as np

from interp._arrays import positive
from interp._kernels.geometry import measure_and_size
from interp.errors import InterpError

#: relative size below which a cell counts as degenerate (zero measure).
DEGENERATE = 1e-12
#: how far outside a cell, in barycentric units, a point still counts as inside.
TOLERANCE = 1e-10
#: barycentric difference below which two containing cells are a tie.
TIE = 1e-12
#: barycentric margin, well above rounding, by which a bucket must miss a cell's
#: planes to leave the cell off the bucket's list.
MARGIN = 1e-8
#: pieces of a clipped cell with measure below this, relative to their size**dim,
#: are round-off slivers (dropped; they carry no measurable share of an integral).
SLIVER = 1e-14
#: overlay triangles with area below this, relative to their size**2, are round-off
#: slivers; a hundred times DEGENERATE, so that every overlay cell passes the mesh check.
OVERLAY_SLIVER = 1e-10
#: leave-one-out: a link vertex counts as inside a circumsphere when it is inside by
#: more than this, relative to the lifted heights (coordinates scaled to the link's radius).
EMPTY = 1e-12
#: leave-one-out: simplices of link vertices with |det| / (product of edge lengths)
#: below this are skipped.
FLAT = 1e-12
#: polygon area, relative to its bounding box's squared size, below which it counts as empty.
ZERO_AREA = 1e-12
#: slack, in bucket widths, added around each polygon edge when binning it.
BIN_SLACK = 1e-9
#: smallest ratio of the last to the first pivot of the column-scaled design
#: matrix for which a quadratic fit is accepted (below it: the 2-ring, then linear).
MIN_RCOND = 1e-3
#: the same for the linear fallback fit, which only has to be of full rank.
MIN_RCOND_LINEAR = 1e-14
#: relative distance from a plane within which a neighbour counts as on either side of it,
#: when gradient recovery asks whether a node sees its 1-ring from one side only.
ONE_SIDED = 1e-10
#: a cell made anew by the 3D face-to-face repair must have this many times the relative
#: volume a :class:`Mesh` refuses as flat (measured on the caller's coordinates, so with a
#: margin for rounding).
FLAT_MARGIN = 10.0


def is_flat(vol: np.ndarray, size: np.ndarray, dim: int) -> np.ndarray:
    """Cells of zero measure relative to their size, which a :class:`Mesh` refuses:
    ``vol <= DEGENERATE * size**dim`` (``size`` as :func:`simplex_geometry` gives it).

    Examples
    --------
    >>> is_flat(np.array([0.5, 1e-14]), np.array([1.0, 1.0]), 2).tolist()
    [False, True]
    """
    return vol <= DEGENERATE * size**dim


def box_frame(lo: np.ndarray, hi: np.ndarray) -> tuple[np.ndarray, float]:
    """Centre of the box [lo, hi] and half its longest side (1 for a single point):
    ``(x - centre) / scale`` maps the box into [-1, 1] on every axis.

    Examples
    --------
    >>> c, s = box_frame(np.array([0.0, 0.0]), np.array([4.0, 2.0]))
    >>> c.tolist(), s
    ([2.0, 1.0], 2.0)
    """
    return 0.5 * (lo + hi), float(0.5 * (hi - lo).max()) or 1.0


def cross_z(u: np.ndarray, w: np.ndarray) -> np.ndarray:
    """z component of the cross product of rows of 2D vectors.

    Examples
    --------
    >>> cross_z(np.array([[1.0, 0.0]]), np.array([[0.0, 2.0]])).tolist()
    [2.0]
    """
    return u[:, 0] * w[:, 1] - u[:, 1] * w[:, 0]


def det(a: np.ndarray) -> np.ndarray:
    """Determinants of a stack of 1x1, 2x2 or 3x3 matrices (closed form).

    Examples
    --------
    >>> float(det(np.array([[[2.0, 1.0], [1.0, 3.0]]]))[0])
    5.0
    """
    n = a.shape[-1]
    if n == 1:
        return a[..., 0, 0].copy()
    if n == 2:
        return a[..., 0, 0] * a[..., 1, 1] - a[..., 0, 1] * a[..., 1, 0]
    return (
        a[..., 0, 0] * (a[..., 1, 1] * a[..., 2, 2] - a[..., 1, 2] * a[..., 2, 1])
        - a[..., 0, 1] * (a[..., 1, 0] * a[..., 2, 2] - a[..., 1, 2] * a[..., 2, 0])
        + a[..., 0, 2] * (a[..., 1, 0] * a[..., 2, 1] - a[..., 1, 1] * a[..., 2, 0])
    )


def inverse(a: np.ndarray) -> np.ndarray:
    """Inverses of a stack of 1x1, 2x2 or 3x3 matrices by the adjugate (closed form).

    Examples
    --------
    >>> inverse(np.array([[[2.0, 1.0], [1.0, 1.0]]])).tolist()
    [[[1.0, -1.0], [-1.0, 2.0]]]
    """
    n = a.shape[-1]
    if n == 1:
        return 1.0 / a
    if n == 2:
        adj = np.stack([a[:, 1, 1], -a[:, 0, 1], -a[:, 1, 0], a[:, 0, 0]], axis=1)
        return (adj / det(a)[:, None]).reshape(-1, 2, 2)
    c0, c1, c2 = a[:, :, 0], a[:, :, 1], a[:, :, 2]
    rows = np.stack([np.cross(c1, c2), np.cross(c2, c0), np.cross(c0, c1)], axis=1)
    return rows / det(a)[:, None, None]


def barycentric(simplex: np.ndarray, x: np.ndarray) -> np.ndarray:
    """Barycentric coordinates (p, k, t+1) of points x (p, k, g) in simplices (p, t+1, g).

    Solves x - c0 = sum_i L_i (c_i - c0) with the closed-form inverse of the
    edge vectors; an embedded cell's edges are first completed to a basis of
    space by normals to the cell, so its points are projected orthogonally
    onto the cell's plane or line.

    Examples
    --------
    >>> tri = np.array([[[0.0, 0, 0], [2, 0, 0], [0, 2, 0]]])
    >>> barycentric(tri, np.array([[[1.0, 0.5, 3.0]]])).tolist()
    [[[0.25, 0.5, 0.25]]]
    """
    edges = simplex[:, 1:] - simplex[:, :1]
    t = edges.shape[1]
    if t < edges.shape[2]:
        edges = np.concatenate([edges, _normals(edges)], axis=1)
    lam = (x - simplex[:, :1]) @ inverse(edges)[:, :, :t]
    return np.concatenate([1.0 - lam.sum(axis=2, keepdims=True), lam], axis=2)


def _normals(edges: np.ndarray) -> np.ndarray:
    """Vectors (p, g - t, g) completing the edges (p, t, g) of embedded cells to a basis."""
    e = edges[:, 0]
    if edges.shape[2] == 2:
        return np.stack([-e[:, 1], e[:, 0]], axis=1)[:, None]
    if edges.shape[1] == 2:
        return np.cross(e, edges[:, 1])[:, None]
    across = np.cross(e, np.eye(3)[np.argmin(np.abs(e), axis=1)])
    return np.stack([across, np.cross(e, across)], axis=1)


def simplex_geometry(corners: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Measure and size of simplices given by their corners (m, t+1, g).

    The measure (length, area or volume) is |det E| / t! of the edge vectors E
    from corner 0 when t == g, and the Gram determinant sqrt(det(E E^T)) / t!
    for a simplex embedded in a higher-dimensional space.  The size is the
    largest coordinate difference along those edges, the scale against which
    a measure counts as zero.

    Examples
    --------
    >>> vol, size = simplex_geometry(np.array([[[0.0, 0], [1, 0], [0, 2]]]))
    >>> float(vol[0]), float(size[0])
    (1.0, 2.0)
    """
    corners = np.require(corners, np.float64, ["C", "W"])  # one layout: one compiled kernel
    vol = np.empty(corners.shape[0])
    size = np.empty(corners.shape[0])
    measure_and_size(corners, vol, size)
    return vol / factorial(corners.shape[1] - 1), size


def longest_edge(points: np.ndarray, cells: np.ndarray) -> np.ndarray:
    """Length of the longest edge of each cell, (m,).

    Examples
    --------
    >>> longest_edge(np.array([[0.0, 0], [3, 0], [0, 4]]), np.array([[0, 1, 2]])).tolist()
    [5.0]
    """
    k = cells.shape[1]
    a, b = np.triu_indices(k, 1)
    return np.linalg.norm(points[cells[:, a]] - points[cells[:, b]], axis=2).max(axis=1)


def short_cells(points: np.ndarray, cells: np.ndarray, max_edge: object) -> np.ndarray:
    """The ``max_edge`` mask: True for cells whose edges are all at most ``max_edge``
    (a positive length, checked here).

    Examples
    --------
    >>> pts = np.array([[0.0, 0], [3, 0], [0, 4], [1, 1]])
    >>> short_cells(pts, np.array([[0, 1, 2], [0, 1, 3]]), 4.0).tolist()
    [False, True]
    """
    return longest_edge(points, cells) <= positive(max_edge, "max_edge")


def polyline_lengths(line: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Lengths of the segments of a polyline (p, g) and the distance along it of each
    vertex from the first (the chainage).

    Examples
    --------
    >>> seg, along = polyline_lengths(np.array([[0.0, 0], [3, 4], [3, 5]]))
    >>> seg.tolist(), along.tolist()
    ([5.0, 1.0], [0.0, 5.0, 6.0])
    """
    length = np.linalg.norm(np.diff(line, axis=0), axis=1)
    return length, np.concatenate([[0.0], np.cumsum(length)])


def check_fills_space(dim: int, gdim: int, cell_type: str, what: str) -> None:
    """Raise unless cells of dimension ``dim`` fill their ``gdim``-D space;
    ``what`` names the operation that needs them (``"clip"``, ``"point location"``).

    Examples
    --------
    >>> check_fills_space(2, 2, "triangle", "clip")
    """
    if dim != gdim:
        raise InterpError(
            f"{what} needs cells that fill their space; this mesh has {cell_type} cells "
            f"in {gdim}D (an embedded curve or surface)"
        )


def grid_nodes(axes: tuple[np.ndarray, ...]) -> np.ndarray:
    """Coordinates (N, g) of every node of the regular grid of ``axes``, in C order.

    Examples
    --------
    >>> grid_nodes((np.arange(2.0), np.arange(3.0)))[:4].tolist()
    [[0.0, 0.0], [0.0, 1.0], [0.0, 2.0], [1.0, 0.0]]
    """
    mesh = np.meshgrid(*axes, indexing="ij")
    return np.stack([m.ravel() for m in mesh], axis=1)
