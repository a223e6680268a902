"""The spatial index over a mesh's cells, and point location.

:class:`CellIndex` lays a uniform grid of buckets over the mesh (about one
bucket per cell in 2D, one per two cells in 3D) and lists, in compressed sparse
rows, the cells that reach into each bucket: the buckets of a cell's bounding
box, in 3D less those its own planes exclude.  Query points are ordered by
bucket (a counting sort, or a stable argsort when buckets far outnumber the
points), gathered, tested against the few cells listed in their bucket and
scattered back, so the cost per point does not depend on the order of the
queries, and the index works on any mesh whose cells fill their space: convex
or not, with holes, Delaunay or not.

Coordinates are centred on the mesh's bounding box and scaled to [-1, 1]
before anything is computed, so projected survey coordinates (x near 5e5,
y near 5e6) lose no accuracy.

Containment rule
----------------
A point is inside a cell when its smallest barycentric coordinate is at least
``-TOLERANCE`` (1e-10, relative to the cell's size).  Among the cells that
contain a point (on a shared edge or vertex there are several) the deepest
is chosen: the cells are tried in ascending index order and a later one
replaces the one kept only when the point lies deeper in it by more than
``TIE`` (1e-12), so ties go to the lowest cell index and the answer is
deterministic.
"""

from __future__ import annotations

import os
from collections.abc import Callable
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from typing import Protocol

import numpy as np

from interp._arrays import as_points
from interp._geometry import check_fills_space
from interp._kernels.locate import (
    bucket_of,
    cell_boxes,
    counting_order,
    fill_runs,
    find_runs,
    scan,
    scan_grid,
)
from interp._progress import task

#: buckets per cell in the index grid, by dimension (tuned with scripts/bench.py:
#: a tetrahedron's bounding box is large for its volume, so 3D takes fewer).
BUCKETS_PER_CELL = {1: 2.0, 2: 1.0, 3: 0.5}
#: meshes with fewer cells build their index in one thread.
PARALLEL_CELLS = 1 << 16
#: query points handled per block (bounds the temporary memory to about 20 MiB).
BLOCK = 1 << 18


@dataclass(frozen=True)
class Location:
    """Where query points fall in a mesh.

    Attributes
    ----------
    cells : ndarray (n,) int64
        Containing cell of each point, -1 where the point is outside the mesh.
    bary : ndarray (n, dim + 1) float64
        Barycentric coordinates in that cell (rows sum to 1); NaN outside.

    Examples
    --------
    >>> from interp import Mesh
    >>> loc = Mesh([[0.0, 0], [1, 0], [0, 1]], [[0, 1, 2]]).locate([[0.1, 0.2]])
    >>> bool(loc.inside[0])
    True
    """

    cells: np.ndarray
    bary: np.ndarray

    @property
    def inside(self) -> np.ndarray:
        """Boolean mask of the points that fall in a cell."""
        return self.cells >= 0


class Cells(Protocol):
    """What the index reads of a mesh: an :class:`interp.Mesh` (which builds its
    index, so this module cannot import it)."""

    points: np.ndarray
    corners: np.ndarray
    bounds: np.ndarray
    affine: np.ndarray
    frame: tuple[np.ndarray, float]
    dim: int
    gdim: int
    n_cells: int
    cell_type: str


class CellIndex:
    """Bucket grid over a mesh's cells, reading the mesh's affine map of every cell.

    Built once per mesh (see :attr:`interp.Mesh.index`) and reused by every
    query.

    Examples
    --------
    The unit square cut along x + y = 1 into two triangles.  Scaled to
    [-1, 1]^2 its area is 4; at ``BUCKETS_PER_CELL[2] == 1`` the bucket side is
    sqrt(4 / 2) = sqrt(2), so each axis takes ceil(2 / sqrt(2)) = 2 buckets.
    Each quadrant of the square meets both triangles (the lower-left and
    upper-right ones touch the far triangle at the centre (0.5, 0.5)), so every
    bucket lists both cells:

    >>> from interp import Mesh
    >>> m = Mesh([[0.0, 0], [1, 0], [0, 1], [1, 1]], [[0, 1, 2], [1, 3, 2]])
    >>> m.index.shape.tolist(), m.index.n_buckets
    ([2, 2], 4)
    >>> s = m.index.start
    >>> [m.index.members[s[b] : s[b + 1]].tolist() for b in range(4)]
    [[0, 1], [0, 1], [0, 1], [0, 1]]
    """

    def __init__(self, mesh: Cells) -> None:
        check_fills_space(mesh.dim, mesh.gdim, mesh.cell_type, "point location")
        g = mesh.gdim
        lo, hi = mesh.bounds
        self.center, self.scale = mesh.frame
        pad = 1e-9
        self.lo = (lo - self.center) / self.scale - pad
        extent = np.maximum((hi - lo) / self.scale + 2 * pad, 1e-12)
        h = (np.prod(extent) / (BUCKETS_PER_CELL[g] * mesh.n_cells)) ** (1.0 / g)
        self.shape = np.maximum(np.ceil(extent / h), 1).astype(np.int64)
        self.h = extent / self.shape
        # bary[1:] = x @ affine[c, :g] + affine[c, g] in the frame: the mesh's maps
        self.affine = mesh.affine
        i0 = np.empty((mesh.n_cells, g), dtype=np.int32)  # bucket range of each cell's box
        i1 = np.empty_like(i0)
        with task("building the point index", total=3) as advance:
            scaled = (mesh.points - self.center) / self.scale
            in_parts(
                mesh.n_cells,
                threads(mesh.n_cells, mesh.n_cells),
                lambda c0, c1: cell_boxes(
                    scaled, mesh.corners, self.lo, self.h, self.shape, pad, i0, i1, c0, c1
                ),
            )
            advance(1)
            self.start, self.members = _bucket_cells(
                i0, i1, self.lo, self.h, self.shape, self.affine, advance
            )

    @property
    def n_buckets(self) -> int:
        """Number of buckets in the grid."""
        return int(np.prod(self.shape))

    def locate_grid(self, axes: tuple[np.ndarray, ...]) -> Location:
        """Locate the nodes of a regular grid (the C-order points of its axes).

        Equivalent to :meth:`locate` on ``Grid.points()`` (the same buckets,
        cells, tests and barycentric coordinates), without building the points
        or ordering them: consecutive nodes in C order share buckets.
        """
        g = len(axes)
        scaled = [
            np.ascontiguousarray((a - self.center[k]) / self.scale) for k, a in enumerate(axes)
        ]
        full = scaled + [np.zeros(1) for _ in range(3 - g)]
        n = int(np.prod([len(a) for a in axes]))
        cells = np.full(n, -1, dtype=np.int64)
        bary = np.full((n, g + 1), np.nan)
        scan_grid(
            *full, self.lo, self.h, self.shape, self.start, self.members, self.affine, cells, bary
        )
        return Location(cells, bary)

    def locate(self, points: np.ndarray) -> Location:
        """Locate validated (n, g) points; NaN rows are outside."""
        n, g = points.shape
        cells = np.full(n, -1, dtype=np.int64)
        bary = np.full((n, g + 1), np.nan)
        x = (points - self.center) / self.scale
        for s in range(0, n, BLOCK):
            _locate_block(self, x[s : s + BLOCK], cells[s : s + BLOCK], bary[s : s + BLOCK])
        return Location(cells, bary)


def _bucket_cells(i0, i1, lo, h, shape, affine, advance):
    """CSR lists, in ascending cell order, of the cells that reach into each bucket.

    A cell is listed in the buckets of its bounding box [i0, i1]; in 3D less
    those its own planes exclude (a tetrahedron fills a sixth of its box, so
    this shortens the lists by about a third and speeds queries by as much; a
    triangle fills half of its box, and in 2D the test costs more than it saves).
    Large meshes are done in slabs of the first grid axis, one thread each:
    the slabs write disjoint buckets, and the lists come out the same.
    ``advance(1)`` is called after each of the two passes (a progress stage).
    """
    m, g = i0.shape
    # one run of buckets along the last axis for each row of each cell's box
    rows = np.prod(i1[:, :-1] - i0[:, :-1] + 1, axis=1, dtype=np.int64)
    first = np.cumsum(rows) - rows
    runs = np.empty((int(rows.sum()), 2), dtype=np.int32)
    start = np.zeros(int(np.prod(shape)) + 1, dtype=np.int64)
    n0 = int(shape[0])
    parts = threads(m, n0 if g > 1 else 1)  # slabs of the first grid axis (one in 1D)
    count = start[1:]
    in_parts(
        n0,
        parts,
        lambda a0, a1: find_runs(i0, i1, lo, h, shape, affine, first, a0, a1, runs, count),
    )
    np.cumsum(start, out=start)
    advance(1)
    # half the memory, and faster scans, wherever cell numbers fit
    members = np.empty(start[-1], dtype=np.int32 if m < 2**31 else np.int64)
    slot = start[:-1].copy()
    in_parts(n0, parts, lambda a0, a1: fill_runs(i0, i1, shape, first, a0, a1, runs, slot, members))
    advance(1)
    return start, members


def threads(n_cells: int, parts: int) -> int:
    """Threads for building the index of a mesh of ``n_cells`` in at most ``parts``.

    Examples
    --------
    >>> threads(10, 4)
    1
    """
    return 1 if n_cells < PARALLEL_CELLS else max(1, min(_cores(), parts))


def _cores() -> int:
    """Processor cores this process may run on."""
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:  # not on Linux
        return os.cpu_count() or 1


def in_parts(n: int, parts: int, work: Callable[[int, int], None]) -> None:
    """Run ``work(a0, a1)`` on [0, n) cut into ``parts`` ranges, in threads when there
    are several (the compiled kernels release the GIL).

    Examples
    --------
    >>> done = []
    >>> in_parts(10, 2, lambda a0, a1: done.append((a0, a1)))
    >>> sorted(done)
    [(0, 5), (5, 10)]
    """
    if parts == 1:
        work(0, n)
        return
    cuts = np.linspace(0, n, parts + 1).round().astype(np.int64).tolist()
    with ThreadPoolExecutor(parts) as pool:
        for done in [pool.submit(work, a0, a1) for a0, a1 in zip(cuts[:-1], cuts[1:], strict=True)]:
            done.result()


def _locate_block(index: CellIndex, x: np.ndarray, cells: np.ndarray, bary: np.ndarray) -> None:
    flat = np.empty(len(x), dtype=np.int64)
    bucket_of(x, index.lo, index.h, index.shape, flat)
    # visiting the points bucket by bucket keeps the cell data in cache; both orders
    # are the same (stable by bucket), counting wins unless buckets far outnumber points
    if 8 * len(x) < index.n_buckets:
        order = np.argsort(flat, kind="stable")
    else:
        order = counting_order(flat, index.n_buckets)
    scan(x, flat, order, index.start, index.members, index.affine, cells, bary)


def locate(mesh: Cells, query: object) -> Location:
    """Find the containing cell and barycentric coordinates of each query point.

    Parameters
    ----------
    mesh : Mesh
        Cells must fill their space (``mesh.dim == mesh.gdim``).
    query : array_like (n, g)
        Query points; rows with NaN are reported outside.

    Returns
    -------
    Location
        ``cells`` (-1 outside) and ``bary`` (NaN outside).

    Examples
    --------
    >>> from interp import Mesh
    >>> m = Mesh([0.0, 1.0, 3.0], [[0, 1], [1, 2]])
    >>> loc = locate(m, [0.5, 2.0, 4.0])
    >>> loc.cells.tolist()
    [0, 1, -1]
    >>> loc.bary[1].tolist()
    [0.5, 0.5]
    """
    points = as_points(query, "query points", gdim=mesh.gdim)
    return mesh.index.locate(points)
