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

import numpy as np

from interp._geometry import SLIVER, barycentric, check_fills_space, simplex_geometry
from interp._kernels.clip import assemble, classify, cut_cells
from interp._progress import task
from interp.errors import InterpError
from interp.field import Field
from interp.index import Location
from interp.mesh import Mesh
from interp.polygon import EdgeGrid, ring_edges
from interp.regions import Box, HalfSpace, Intersection, LevelSet, Polygon, Region

#: triangles sampled to pick the bucket width of a polygon's edge grid.
SAMPLE = 20000


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
        return simplex_geometry(self.corners)[0]

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
    check_fills_space(mesh.dim, mesh.gdim, mesh.cell_type, "clip")
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
                f"cannot clip by a {type(r).__name__}; use "
                f"{', '.join(k.__name__ for k in _KINDS)} or their Intersection"
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
    kind = next(k for k in type(region).__mro__ if k in _CUTS)
    return _CUTS[kind](work, region)


def _cut_intersection(work: _Work, region: Intersection) -> _Work:
    # polygons first: their kernel sorts whole cells fastest
    for r in sorted(region.regions, key=lambda r: not isinstance(r, Polygon)):
        work = _apply(work, r)
    return work


def _cut_polygon(work: _Work, region: Polygon) -> _Work:
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


def _cut_box(work: _Work, region: Box) -> _Work:
    for h in region.half_spaces():
        work = _apply(work, h)
    return work


def _cut_half_space(work: _Work, region: HalfSpace) -> _Work:
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


def _cut_level_set(work: _Work, region: LevelSet) -> _Work:
    return work.cut(region.excess(_level_values(work, region.field)))


#: how each kind of region cuts simplices: a new kind of region is one entry here.
_CUTS = {
    Polygon: _cut_polygon,
    Box: _cut_box,
    HalfSpace: _cut_half_space,
    LevelSet: _cut_level_set,
    Intersection: _cut_intersection,
}
#: the kinds of region that clipping knows how to cut along (besides their Intersection).
_KINDS = tuple(k for k in _CUTS if k is not Intersection)


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
    rows = (grid.lo, grid.h, nx, ny)
    status = np.empty(len(tri), dtype=np.int8)
    with task("clipping to the polygon", total=3) as advance:
        classify(tri, *rows, grid.occupied, segments, grid.row_start, grid.row_members, status)
        advance(1)
        cand = np.flatnonzero(status == 2)
        start, pieces = cut_cells(
            tri, cand, *rows, grid.start, grid.members, segments, grid.row_start, grid.row_members
        )
        advance(1)
        n = int(np.count_nonzero(status == 1)) + int(start[-1])
        out = np.empty((n, 3, 2))
        src = np.empty(n, dtype=np.int64)
        whole = np.empty(n, dtype=np.bool_)
        assemble(tri, status, start, pieces, out, src, whole)
        advance(1)
    return out, src, whole


def _typical_size(tri: np.ndarray, segments: np.ndarray) -> float:
    """Median bounding-box size of (a sample of) the triangles near the polygon."""
    sample = tri[:: max(1, len(tri) // SAMPLE)]
    lo, hi = sample.min(axis=1), sample.max(axis=1)
    ends = segments.reshape(-1, 2)
    near = (hi >= ends.min(axis=0)).all(axis=1) & (lo <= ends.max(axis=0)).all(axis=1)
    size = (hi - lo).max(axis=1)
    return float(np.median(size[near] if near.any() else size))
