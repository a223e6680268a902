"""Exact clipping of a mesh by a region: the pieces of every cell inside it.

:func:`clip` returns :class:`Pieces`, simplices that tile mesh ∩ region
exactly (up to round-off), each inside one cell of the mesh, its parent.
Integrating over a region then reduces to integrating over simplices.

Two cutting methods, each exact:

* Planes (:class:`~interp.HalfSpace`, the faces of a :class:`~interp.Box`, the
  zero crossing of a P1 :class:`~interp.LevelSet`): a linear function d is
  known at the corners of each simplex; the part where d <= 0 is a simplex, a
  quadrilateral (two triangles) or a prism-like solid (three tetrahedra),
  chosen by the sign pattern of the corners from a fixed table.  Vectorized.
* Polygons (2D): cells are first sorted by a grid of the polygon's edges (a
  cell whose bounding box meets no edge bucket lies wholly inside or outside;
  one point-in-polygon test decides).  A cell that an edge may cross is cut
  into vertical slabs at the x of its corners and of the polygon's vertices
  and crossings inside it; within a slab no edges cross, so the edges split
  the slab into trapezoids that lie wholly inside or outside the polygon.  A
  trapezoid is kept when its centre is inside, and split into two triangles.
  This holds for concave polygons, holes and islands alike.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass
from math import factorial

import numba
import numpy as np

from interp._geometry import SLIVER, barycentric, det, simplex_geometry
from interp.errors import InterpError
from interp.field import Field
from interp.index import Location
from interp.mesh import Mesh
from interp.polygon import EdgeGrid, bin_index, inside, ring_edges
from interp.regions import Box, HalfSpace, Intersection, LevelSet, Polygon, Region

#: triangles sampled to pick the bucket width of a polygon's edge grid.
SAMPLE = 20000
#: the kinds of region that clipping knows how to cut along.
_KINDS = (Polygon, Box, HalfSpace, LevelSet)


@dataclass(frozen=True, eq=False)
class Pieces:
    """Simplices tiling mesh ∩ region, each inside one cell (its parent) of the mesh.

    Attributes
    ----------
    parent : ndarray (s,) int64
        The cell of the mesh that each piece lies in (ascending from :func:`clip`).
    corners : ndarray (s, dim + 1, gdim) float64
        Corner coordinates of each piece.

    :func:`clip` returns read-only arrays.

    Examples
    --------
    >>> from interp import HalfSpace, Mesh
    >>> from interp.clip import clip
    >>> mesh = Mesh([[0.0, 0], [2, 0], [0, 2]], [[0, 1, 2]])
    >>> pieces = clip(mesh, HalfSpace([1, 0], 1.0))
    >>> len(pieces), float(pieces.measure().sum())
    (2, 1.5)
    """

    parent: np.ndarray
    corners: np.ndarray

    def __len__(self) -> int:
        return len(self.parent)

    def measure(self) -> np.ndarray:
        """Length, area or volume of each piece, (s,) float64."""
        return _measure(self.corners)

    def bary(self, mesh: Mesh) -> np.ndarray:
        """Barycentric coordinates of each piece's corners in its parent cell.

        Returns
        -------
        ndarray (s, dim + 1, dim + 1)
            Entry [p, k, :] locates corner k of piece p in cell ``parent[p]``.

        Examples
        --------
        >>> from interp import Box, Mesh
        >>> from interp.clip import clip
        >>> mesh = Mesh([[0.0, 0], [1, 0], [0, 1]], [[0, 1, 2]])
        >>> clip(mesh, Box([0, 0], [0.5, 0.5])).bary(mesh).shape
        (2, 3, 3)
        """
        return _bary(mesh, self.parent, self.corners)


def clip(mesh: Mesh, region: Region) -> Pieces:
    """Cut a mesh exactly along a region's boundary: the pieces of cells inside it.

    Parameters
    ----------
    mesh : Mesh
        Cells that fill their space: lines in 1D, triangles in 2D or tetrahedra
        in 3D, P1 or P2 (only the corners matter: cells are straight-sided).
    region : Region
        Of the mesh's dimension.  :class:`~interp.Polygon` is 2D only.  A
        :class:`~interp.LevelSet` must be on this mesh (or its P1 corners).

    Returns
    -------
    Pieces
        Simplices that tile mesh ∩ region up to round-off, sorted by parent.
        A cell wholly inside is one piece, equal to the cell.  A region that
        misses the mesh gives no pieces.

    Examples
    --------
    >>> import numpy as np
    >>> from interp import Polygon, triangulate
    >>> from interp.clip import clip
    >>> g = np.linspace(0.0, 4.0, 5)
    >>> mesh = triangulate(np.stack(np.meshgrid(g, g), axis=-1).reshape(-1, 2))
    >>> ell = Polygon([[0.5, 0.5], [3.5, 0.5], [3.5, 1.5], [1.5, 1.5], [1.5, 3.5], [0.5, 3.5]])
    >>> pieces = clip(mesh, ell)
    >>> round(float(pieces.measure().sum()), 12), ell.area
    (5.0, 5.0)
    """
    if not isinstance(mesh, Mesh):
        raise InterpError(f"clip needs an interp.Mesh, not {type(mesh).__name__}")
    if mesh.dim != mesh.gdim:
        raise InterpError(
            f"clip needs cells that fill their space; this mesh has {mesh.cell_type} cells "
            f"in {mesh.gdim}D (an embedded curve or surface)"
        )
    check_region(region, mesh.gdim)
    corners = mesh.points[mesh.corners]
    cells = np.arange(mesh.n_cells)
    out, source = _clip(corners, [(mesh, cells)], region)
    if np.any(source[1:] < source[:-1]):
        order = np.argsort(source, kind="stable")
        source, out = source[order], out[order]
    source.flags.writeable = False
    out.flags.writeable = False
    return Pieces(source, out)


def check_region(region: object, gdim: int) -> None:
    """Raise unless ``region`` is a Region of dimension ``gdim``.

    Examples
    --------
    >>> from interp import Box
    >>> check_region(Box([0], [1]), 1)
    """
    if not isinstance(region, Region):
        raise InterpError(
            f"expected an interp region (Polygon, Box, ...), not {type(region).__name__}"
        )
    parts = region.regions if isinstance(region, Intersection) else (region,)
    for r in parts:
        if not isinstance(r, _KINDS):
            raise InterpError(
                f"cannot clip by a {type(r).__name__}; use Polygon, Box, HalfSpace, LevelSet "
                "or their Intersection"
            )
    if gdim != 2 and any(isinstance(r, Polygon) for r in parts):
        raise InterpError(
            f"a Polygon is planar (2D) but the mesh is {gdim}D; use Box or HalfSpace "
            "regions for 1D and 3D meshes"
        )
    if region.gdim != gdim:
        raise InterpError(f"the region is {region.gdim}D but the mesh is {gdim}D")


def clip_simplices(
    corners: np.ndarray, cells: list[tuple[Mesh, np.ndarray]], region: Region
) -> tuple[np.ndarray, np.ndarray]:
    """Clip simplices that lie in known cells of one or more meshes.

    Parameters
    ----------
    corners : ndarray (s, t + 1, g)
        The simplices.
    cells : list of (Mesh, ndarray (s,) int64)
        Meshes and, for each simplex, the cell of that mesh containing it; a
        :class:`~interp.LevelSet` region must be on one of these meshes.
    region : Region
        Validated with :func:`check_region`.

    Returns
    -------
    corners : ndarray (r, t + 1, g)
        The pieces.
    source : ndarray (r,) int64
        The input simplex each piece came from.

    Examples
    --------
    >>> from interp import HalfSpace, Mesh
    >>> mesh = Mesh([0.0, 1.0], [[0, 1]])
    >>> out, src = clip_simplices(np.array([[[0.0], [1.0]]]), [(mesh, np.array([0]))],
    ...                           HalfSpace([1.0], 0.25))
    >>> out.tolist(), src.tolist()
    ([[[0.0], [0.25]]], [0])
    """
    return _clip(corners, cells, region)


def cut_simplices(corners: np.ndarray, d: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Keep the part of each simplex where a linear function is <= 0.

    Parameters
    ----------
    corners : ndarray (s, t + 1, g)
        The simplices (t = 1, 2, 3).
    d : ndarray (s, t + 1)
        The function's values at the corners; simplices with a NaN are dropped,
        and so are pieces of zero measure (where d vanishes at a corner).

    Returns
    -------
    corners : ndarray (r, t + 1, g)
        Simplices wholly kept come first, unchanged, then the cut pieces.
    source : ndarray (r,) int64
        The input simplex of each piece.

    Examples
    --------
    >>> tri = np.array([[[0.0, 0.0], [2.0, 0.0], [0.0, 2.0]]])
    >>> out, src = cut_simplices(tri, np.array([[-1.0, 1.0, 1.0]]))
    >>> out.tolist()
    [[[0.0, 0.0], [1.0, 0.0], [0.0, 1.0]]]
    """
    s, k, g = corners.shape
    pairs, table = _TABLES[k - 1]
    with np.errstate(invalid="ignore"):
        below = d <= 0
    known = ~np.isnan(d).any(axis=1)
    mask = np.where(known, below.astype(np.int64) @ (1 << np.arange(k)), 0)
    full = (1 << k) - 1
    whole = np.flatnonzero(mask == full)
    out_c, out_s = [corners[whole]], [whole]
    part = np.flatnonzero((mask > 0) & (mask < full))
    if part.size:
        i, j = pairs[:, 0], pairs[:, 1]
        di, dj = d[part][:, i], d[part][:, j]
        crossed = (di <= 0) != (dj <= 0)
        w = np.where(crossed, di / np.where(crossed, di - dj, 1.0), 0.0)[..., None]
        x = corners[part]
        pts = np.concatenate([x, x[:, i] + w * (x[:, j] - x[:, i])], axis=1)
        pattern = mask[part]
        for code, simplices in table.items():
            rows = np.flatnonzero(pattern == code)
            if rows.size == 0:
                continue
            new = pts[rows][:, simplices].reshape(-1, k, g)
            vol, size = simplex_geometry(new)
            keep = vol > SLIVER * size ** (k - 1)
            out_c.append(new[keep])
            out_s.append(np.repeat(part[rows], len(simplices))[keep])
    return np.concatenate(out_c), np.concatenate(out_s).astype(np.int64)


def _cut_table(t: int) -> tuple[np.ndarray, dict[int, np.ndarray]]:
    """Corner pairs of a t-simplex, and for each sign pattern the pieces where d <= 0.

    Points 0..t are the corners; point t + 1 + e lies on the zero crossing of
    corner pair e.  Pattern bit i is set when corner i has d <= 0.
    """
    pairs = list(itertools.combinations(range(t + 1), 2))

    def e(a: int, b: int) -> int:
        return t + 1 + pairs.index((min(a, b), max(a, b)))

    def prism(a: tuple, b: tuple) -> list[tuple]:
        # triangle a0 a1 a2 joined to b0 b1 b2 by edges ai-bi: a staircase of 3 tetrahedra
        return [(a[0], a[1], a[2], b[0]), (a[1], a[2], b[0], b[1]), (a[2], b[0], b[1], b[2])]

    table = {}
    for code in range(1, (1 << (t + 1)) - 1):
        ins = [i for i in range(t + 1) if code >> i & 1]
        out = [i for i in range(t + 1) if not code >> i & 1]
        if len(ins) == 1:
            a = ins[0]
            pieces = [(a, *(e(a, o) for o in out))]
        elif t == 2:
            (a, b), c = ins, out[0]
            pieces = [(a, b, e(b, c)), (a, e(b, c), e(a, c))]
        elif len(ins) == 2:
            (a, b), (c, d) = ins, out
            pieces = prism((a, e(a, c), e(a, d)), (b, e(b, c), e(b, d)))
        else:
            (a, b, c), d = ins, out[0]
            pieces = prism((a, b, c), (e(a, d), e(b, d), e(c, d)))
        table[code] = np.array(pieces, dtype=np.int64)
    return np.array(pairs, dtype=np.int64), table


_TABLES = {t: _cut_table(t) for t in (1, 2, 3)}


def _measure(corners: np.ndarray) -> np.ndarray:
    t = corners.shape[1] - 1
    if len(corners) == 0:
        return np.zeros(0)
    return np.abs(det(corners[:, 1:] - corners[:, :1])) / factorial(t)


def _bary(mesh: Mesh, parent: np.ndarray, corners: np.ndarray) -> np.ndarray:
    cell = mesh.points[mesh.corners[parent]]
    k = cell.shape[1]
    out = np.broadcast_to(np.eye(k), corners.shape[:1] + (k, k)).copy()
    # pieces that are their whole parent cell (corners in the same order) need no solve
    rest = np.flatnonzero(~(corners == cell).all(axis=(1, 2)))
    out[rest] = barycentric(cell[rest], corners[rest])
    return out


def same_cells(a: Mesh, b: Mesh) -> bool:
    """Whether two meshes have the same cells with the same corner coordinates.

    Examples
    --------
    >>> from interp import Mesh
    >>> m = Mesh([[0.0, 0], [1, 0], [0, 1]], [[0, 1, 2]])
    >>> same_cells(m, m.elevate()), same_cells(m, Mesh(m.points * 2, m.cells))
    (True, False)
    """
    return a is b or (
        a.dim == b.dim
        and a.n_cells == b.n_cells
        and a.gdim == b.gdim
        and np.array_equal(a.corners, b.corners)
        and np.array_equal(a.points[a.corners], b.points[b.corners])
    )


def evaluate_at(field: Field, cells: np.ndarray, bary: np.ndarray) -> np.ndarray:
    """Values of a field at points given by cells (s,) and barycentric coordinates (s, k, t+1).

    Returns
    -------
    ndarray (s, k) or (s, k, c)

    Examples
    --------
    >>> from interp import Field, Mesh
    >>> f = Field(Mesh([0.0, 2.0], [[0, 1]]), [1.0, 5.0])
    >>> evaluate_at(f, np.array([0]), np.array([[[0.5, 0.5], [1.0, 0.0]]])).tolist()
    [[3.0, 1.0]]
    """
    s, k, t1 = bary.shape
    loc = Location(np.repeat(cells, k), bary.reshape(-1, t1))
    vals = field.evaluate(loc)
    return vals.reshape((s, k) + vals.shape[1:])


@dataclass
class _Work:
    """Simplices being clipped.

    ``source`` is the input simplex of each piece and ``whole`` marks pieces
    that are still their input simplex (and keep its exact coordinates).
    Tests and cuts are computed relative to ``center``, so that large
    coordinates (projected survey data) lose no accuracy.
    """

    corners: np.ndarray
    source: np.ndarray
    whole: np.ndarray
    center: np.ndarray
    cells: list[tuple[Mesh, np.ndarray]]

    def replace(self, corners: np.ndarray, src: np.ndarray, whole: np.ndarray) -> _Work:
        corners[whole] = self.corners[src[whole]]
        return _Work(corners, self.source[src], whole, self.center, self.cells)

    def cut(self, d: np.ndarray) -> _Work:
        corners, src = cut_simplices(self.corners, d)
        with np.errstate(invalid="ignore"):
            n_full = int(np.count_nonzero((d <= 0).all(axis=1)))
        whole = np.zeros(len(src), dtype=bool)
        whole[:n_full] = self.whole[src[:n_full]]
        return self.replace(corners, src, whole)


def _clip(corners, cells, region):
    flat = corners.reshape(-1, corners.shape[2])
    center = 0.5 * (flat.min(axis=0) + flat.max(axis=0))
    n = len(corners)
    work = _Work(corners, np.arange(n), np.ones(n, dtype=bool), center, cells)
    work = _apply(work, region)
    return work.corners, work.source


def _apply(work: _Work, region: Region) -> _Work:
    if isinstance(region, Intersection):
        # polygons first: their kernel sorts whole cells fastest
        for r in sorted(region.regions, key=lambda r: not isinstance(r, Polygon)):
            work = _apply(work, r)
        return work
    if isinstance(region, Polygon):
        local = np.ascontiguousarray(work.corners - work.center)
        out, src, whole = _clip_polygon(local, [r - work.center for r in region.rings])
        corners = np.empty_like(out)
        # in cut pieces, corners of the input triangle get back their exact input coordinates
        cut = np.flatnonzero(~whole)
        new, old = out[cut], src[cut]
        same = (new[:, :, None, :] == local[old][:, None, :, :]).all(axis=3)
        pick = work.corners[old][np.arange(len(cut))[:, None], same.argmax(axis=2)]
        corners[cut] = np.where(same.any(axis=2)[..., None], pick, new + work.center)
        return work.replace(corners, src, whole & work.whole[src])
    if isinstance(region, Box):
        for h in region.half_spaces():
            work = _apply(work, h)
        return work
    if isinstance(region, HalfSpace):
        n = region.normal
        work = work.cut((work.corners - work.center) @ n - (region.offset - n @ work.center))
        axis = np.flatnonzero(n)
        if axis.size == 1:
            # a face of a box: keep round-off from putting crossings beyond the face
            a = int(axis[0])
            bound = region.offset / n[a]
            clamp = np.minimum if n[a] > 0 else np.maximum
            cut = ~work.whole
            work.corners[cut, :, a] = clamp(work.corners[cut, :, a], bound)
        return work
    return work.cut(region.excess(_level_values(work, region.field)))


def _level_values(work: _Work, field: Field) -> np.ndarray:
    """The field's values at the corners of the work's pieces."""
    for mesh, cells in work.cells:
        if same_cells(mesh, field.mesh):
            parent = cells[work.source]
            return evaluate_at(field, parent, _bary(field.mesh, parent, work.corners))
    raise InterpError(
        "the LevelSet's field is on another mesh than the one clipped; build the LevelSet "
        "from a field on this mesh"
    )


def _clip_polygon(tri: np.ndarray, rings: list[np.ndarray]):
    """Pieces of triangles (m, 3, 2) inside a polygon, the triangle of each piece and
    whether the piece is that whole triangle."""
    if len(tri) == 0:
        return tri, np.zeros(0, dtype=np.int64), np.zeros(0, dtype=bool)
    segments = ring_edges(rings)[0]
    grid = EdgeGrid(segments, cell=_typical_size(tri, segments))
    nx, ny = int(grid.shape[0]), int(grid.shape[1])
    status = np.empty(len(tri), dtype=np.int8)
    _classify(
        tri,
        grid.lo,
        grid.h,
        nx,
        ny,
        grid.occupied,
        segments,
        grid.row_start,
        grid.row_members,
        status,
    )
    cand = np.flatnonzero(status == 2)
    start, pieces = _cut_cells(
        tri,
        cand,
        grid.lo,
        grid.h,
        nx,
        ny,
        grid.start,
        grid.members,
        segments,
        grid.row_start,
        grid.row_members,
    )
    n = int(np.count_nonzero(status == 1)) + int(start[-1])
    out = np.empty((n, 3, 2))
    src = np.empty(n, dtype=np.int64)
    whole = np.empty(n, dtype=np.bool_)
    _assemble(tri, status, start, pieces, out, src, whole)
    return out, src, whole


def _typical_size(tri: np.ndarray, segments: np.ndarray) -> float:
    """Median bounding-box size of (a sample of) the triangles near the polygon."""
    sample = tri[:: max(1, len(tri) // SAMPLE)]
    lo, hi = sample.min(axis=1), sample.max(axis=1)
    ends = segments.reshape(-1, 2)
    near = (hi >= ends.min(axis=0)).all(axis=1) & (lo <= ends.max(axis=0)).all(axis=1)
    size = (hi - lo).max(axis=1)
    return float(np.median(size[near] if near.any() else size))


@numba.njit(cache=True, nogil=True)
def _classify(
    tri, lo, h, nx, ny, occupied, seg, row_start, row_members, status
):  # pragma: no cover
    """Status of each triangle: 0 outside, 1 inside, 2 an edge bucket meets its bounding box."""
    gx, gy = lo[0] + nx * h, lo[1] + ny * h
    for c in range(tri.shape[0]):
        x0 = min(tri[c, 0, 0], tri[c, 1, 0], tri[c, 2, 0])
        x1 = max(tri[c, 0, 0], tri[c, 1, 0], tri[c, 2, 0])
        y0 = min(tri[c, 0, 1], tri[c, 1, 1], tri[c, 2, 1])
        y1 = max(tri[c, 0, 1], tri[c, 1, 1], tri[c, 2, 1])
        if x1 < lo[0] or x0 > gx or y1 < lo[1] or y0 > gy:
            status[c] = 0
            continue
        i0, i1 = bin_index((x0 - lo[0]) / h, nx), bin_index((x1 - lo[0]) / h, nx)
        j0, j1 = bin_index((y0 - lo[1]) / h, ny), bin_index((y1 - lo[1]) / h, ny)
        hits = occupied[j1 + 1, i1 + 1] - occupied[j0, i1 + 1] - occupied[j1 + 1, i0]
        if hits + occupied[j0, i0] > 0:
            status[c] = 2
        else:
            cx = (tri[c, 0, 0] + tri[c, 1, 0] + tri[c, 2, 0]) / 3.0
            cy = (tri[c, 0, 1] + tri[c, 1, 1] + tri[c, 2, 1]) / 3.0
            status[c] = 1 if inside(cx, cy, lo, h, ny, seg, row_start, row_members) else 0


@numba.njit(cache=True, nogil=True)
def _y_at(x0, y0, x1, y1, x):  # pragma: no cover
    """y of the segment (x0 < x1) at x, exact at its ends."""
    if x <= x0:
        return y0
    if x >= x1:
        return y1
    return y0 + (x - x0) * (y1 - y0) / (x1 - x0)


@numba.njit(cache=True, nogil=True)
def _clip_segment(v, ax, ay, bx, by):  # pragma: no cover
    """The part of segment a-b inside the counter-clockwise triangle v (3, 2)."""
    lo, hi = 0.0, 1.0
    for k in range(3):
        px, py = v[k, 0], v[k, 1]
        ex, ey = v[(k + 1) % 3, 0] - px, v[(k + 1) % 3, 1] - py
        f0 = ex * (ay - py) - ey * (ax - px)
        f1 = ex * (by - py) - ey * (bx - px)
        if f0 < 0.0 and f1 < 0.0:
            return False, 0.0, 0.0, 0.0, 0.0
        if f0 < 0.0:
            lo = max(lo, f0 / (f0 - f1))
        elif f1 < 0.0:
            hi = min(hi, f0 / (f0 - f1))
    if lo >= hi:
        return False, 0.0, 0.0, 0.0, 0.0
    px, py, qx, qy = ax, ay, bx, by
    if lo > 0.0:
        px, py = ax + lo * (bx - ax), ay + lo * (by - ay)
    if hi < 1.0:
        qx, qy = ax + hi * (bx - ax), ay + hi * (by - ay)
    return True, px, py, qx, qy


@numba.njit(cache=True, nogil=True)
def _cut_cells(
    tri, cand, lo, h, nx, ny, start, members, seg, row_start, row_members
):  # pragma: no cover
    """Pieces of the candidate triangles inside the polygon, grouped by candidate.

    Returns the offsets (k + 1,) of each candidate's pieces and the pieces.
    """
    n_edges = seg.shape[0]
    stamp = np.full(n_edges, -1, dtype=np.int64)
    clipped = np.empty((n_edges, 4))
    xs = np.empty(3 + 2 * n_edges)
    ys = np.empty((n_edges + 2, 3))
    at = np.empty(3)
    order = np.empty(n_edges + 2, dtype=np.int64)
    offsets = np.zeros(cand.shape[0] + 1, dtype=np.int64)
    out = np.empty((max(16, 8 * cand.shape[0]), 3, 2))
    n = 0
    v = np.empty((3, 2))
    for kk in range(cand.shape[0]):
        c = cand[kk]
        v[:, :] = tri[c]
        if (v[1, 0] - v[0, 0]) * (v[2, 1] - v[0, 1]) < (v[1, 1] - v[0, 1]) * (v[2, 0] - v[0, 0]):
            v[1, :], v[2, :] = tri[c, 2], tri[c, 1]
        i0 = bin_index((v[:, 0].min() - lo[0]) / h, nx)
        i1 = bin_index((v[:, 0].max() - lo[0]) / h, nx)
        j0 = bin_index((v[:, 1].min() - lo[1]) / h, ny)
        j1 = bin_index((v[:, 1].max() - lo[1]) / h, ny)
        ns, nb = 0, 3
        xs[0], xs[1], xs[2] = v[0, 0], v[1, 0], v[2, 0]
        for j in range(j0, j1 + 1):
            for i in range(i0, i1 + 1):
                b = j * nx + i
                for q in range(start[b], start[b + 1]):
                    e = members[q]
                    if stamp[e] == kk:
                        continue
                    stamp[e] = kk
                    ok, px, py, qx, qy = _clip_segment(
                        v, seg[e, 0], seg[e, 1], seg[e, 2], seg[e, 3]
                    )
                    if not ok:
                        continue
                    xs[nb], xs[nb + 1] = px, qx
                    nb += 2
                    if px == qx:
                        continue
                    if px > qx:
                        px, py, qx, qy = qx, qy, px, py
                    clipped[ns, 0], clipped[ns, 1], clipped[ns, 2], clipped[ns, 3] = px, py, qx, qy
                    ns += 1
        need = 2 if nb == 3 else 2 * (nb - 1) * (ns + 1)
        if n + need > out.shape[0]:
            grown = np.empty((max(2 * out.shape[0], n + need), 3, 2))
            grown[:n] = out[:n]
            out = grown
        if nb == 3:
            cx = (v[0, 0] + v[1, 0] + v[2, 0]) / 3.0
            cy = (v[0, 1] + v[1, 1] + v[2, 1]) / 3.0
            if inside(cx, cy, lo, h, ny, seg, row_start, row_members):
                out[n] = tri[c]
                n += 1
            offsets[kk + 1] = n
            continue
        bx = np.unique(xs[:nb])
        for s in range(bx.shape[0] - 1):
            at[0], at[1] = bx[s], bx[s + 1]
            at[2] = 0.5 * (at[0] + at[1])
            # rows of ys: y at the slab's left end, right end and middle of each boundary;
            # row 0 is the triangle's lower side, row 1 its upper side, then the edges
            m = 0
            for k in range(3):
                p, q = v[k], v[(k + 1) % 3]
                if p[0] > q[0]:
                    p, q = q, p
                if p[0] < at[2] < q[0]:
                    for a in range(3):
                        ys[m, a] = _y_at(p[0], p[1], q[0], q[1], at[a])
                    m += 1
            if m < 2:
                continue
            if ys[0, 2] > ys[1, 2]:
                for a in range(3):
                    ys[0, a], ys[1, a] = ys[1, a], ys[0, a]
            for e in range(ns):
                if clipped[e, 0] < at[2] < clipped[e, 2]:
                    for a in range(3):
                        y = _y_at(clipped[e, 0], clipped[e, 1], clipped[e, 2], clipped[e, 3], at[a])
                        ys[m, a] = min(max(y, ys[0, a]), ys[1, a])
                    m += 1
            # boundaries from bottom to top: lower side, edges by height mid-slab, upper side
            order[0] = 0
            cnt = 1
            for e in range(2, m):
                r = cnt
                while r > 1 and ys[order[r - 1], 2] > ys[e, 2]:
                    order[r] = order[r - 1]
                    r -= 1
                order[r] = e
                cnt += 1
            order[cnt] = 1
            for r in range(cnt):
                bot, top = order[r], order[r + 1]
                h0 = ys[top, 0] - ys[bot, 0]
                h1 = ys[top, 1] - ys[bot, 1]
                if h0 <= 0.0 and h1 <= 0.0:
                    continue
                ym = 0.5 * (ys[bot, 2] + ys[top, 2])
                if not inside(at[2], ym, lo, h, ny, seg, row_start, row_members):
                    continue
                if h1 > 0.0:
                    out[n, 0, 0], out[n, 0, 1] = at[0], ys[bot, 0]
                    out[n, 1, 0], out[n, 1, 1] = at[1], ys[bot, 1]
                    out[n, 2, 0], out[n, 2, 1] = at[1], ys[top, 1]
                    n += 1
                if h0 > 0.0:
                    out[n, 0, 0], out[n, 0, 1] = at[0], ys[bot, 0]
                    out[n, 1, 0], out[n, 1, 1] = at[1], ys[top, 1]
                    out[n, 2, 0], out[n, 2, 1] = at[0], ys[top, 0]
                    n += 1
        offsets[kk + 1] = n
    return offsets, out[:n]


@numba.njit(cache=True, nogil=True)
def _assemble(tri, status, offsets, pieces, out, src, whole):  # pragma: no cover
    """Whole inside triangles and the pieces of cut ones, in triangle order.

    A candidate that kept one piece equal to itself (no edge crossed it) is whole.
    """
    n, kk = 0, 0
    for c in range(tri.shape[0]):
        if status[c] == 1:
            out[n] = tri[c]
            src[n] = c
            whole[n] = True
            n += 1
        elif status[c] == 2:
            single = offsets[kk + 1] - offsets[kk] == 1
            for q in range(offsets[kk], offsets[kk + 1]):
                out[n] = pieces[q]
                src[n] = c
                whole[n] = single and np.all(pieces[q] == tri[c])
                n += 1
            kk += 1
