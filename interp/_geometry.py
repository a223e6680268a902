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
"""

from __future__ import annotations

from math import factorial

import numba
import numpy as np

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
    corners = np.ascontiguousarray(corners, dtype=np.float64)
    vol = np.empty(corners.shape[0])
    size = np.empty(corners.shape[0])
    _geometry(corners, vol, size)
    return vol / factorial(corners.shape[1] - 1), size


@numba.njit(cache=True, nogil=True)
def _det(a, n):  # pragma: no cover
    """Determinant of the leading n x n block of a (n <= 3), expanded as :func:`det`."""
    if n == 1:
        return a[0, 0]
    if n == 2:
        return a[0, 0] * a[1, 1] - a[0, 1] * a[1, 0]
    return (
        a[0, 0] * (a[1, 1] * a[2, 2] - a[1, 2] * a[2, 1])
        - a[0, 1] * (a[1, 0] * a[2, 2] - a[1, 2] * a[2, 0])
        + a[0, 2] * (a[1, 0] * a[2, 1] - a[1, 1] * a[2, 0])
    )


@numba.njit(cache=True, nogil=True)
def _geometry(corners, vol, size):  # pragma: no cover
    """|det E| (or sqrt det E E^T) and the largest |E| entry of each simplex's edges E."""
    m, k, g = corners.shape
    t = k - 1
    e = np.empty((3, 3))
    gram = np.empty((3, 3))
    for c in range(m):
        big = 0.0
        for r in range(t):
            for a in range(g):
                e[r, a] = corners[c, r + 1, a] - corners[c, 0, a]
                big = max(big, abs(e[r, a]))
        size[c] = big
        if t == g:
            vol[c] = abs(_det(e, t))
            continue
        for r in range(t):
            for q in range(t):
                s = 0.0
                for a in range(g):
                    s += e[r, a] * e[q, a]
                gram[r, q] = s
        vol[c] = np.sqrt(max(_det(gram, t), 0.0))


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


@numba.njit(cache=True, nogil=True)
def affine_maps(points, corners, affine, c0, c1):  # pragma: no cover
    """Affine map to barycentric coordinates of cells c0 to c1 - 1 of a mesh whose
    cells fill their space: ``bary[1:] = x @ affine[c, :g] + affine[c, g]``."""
    g = points.shape[1]
    e = np.empty((g, g))
    inv = np.empty((g, g))
    for c in range(c0, c1):
        v0 = corners[c, 0]
        for r in range(g):
            for a in range(g):
                e[r, a] = points[corners[c, r + 1], a] - points[v0, a]
        if g == 1:
            inv[0, 0] = 1.0 / e[0, 0]
        elif g == 2:
            d = e[0, 0] * e[1, 1] - e[0, 1] * e[1, 0]
            inv[0, 0], inv[0, 1] = e[1, 1] / d, -e[0, 1] / d
            inv[1, 0], inv[1, 1] = -e[1, 0] / d, e[0, 0] / d
        else:
            # rows of the inverse of the matrix whose columns are e[:, a]: cross products
            for r in range(3):
                p, q = (r + 1) % 3, (r + 2) % 3
                inv[r, 0] = e[1, p] * e[2, q] - e[2, p] * e[1, q]
                inv[r, 1] = e[2, p] * e[0, q] - e[0, p] * e[2, q]
                inv[r, 2] = e[0, p] * e[1, q] - e[1, p] * e[0, q]
            d = e[0, 0] * inv[0, 0] + e[1, 0] * inv[0, 1] + e[2, 0] * inv[0, 2]
            for r in range(3):
                for a in range(3):
                    inv[r, a] /= d
        for b in range(g):
            shift = 0.0
            for a in range(g):
                affine[c, a, b] = inv[a, b]
                shift -= points[v0, a] * inv[a, b]
            affine[c, g, b] = shift
