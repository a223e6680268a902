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

import numba
import numpy as np

from interp._arrays import as_points
from interp._geometry import MARGIN, TIE, TOLERANCE, check_fills_space

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
        scaled = (mesh.points - self.center) / self.scale
        in_parts(
            mesh.n_cells,
            threads(mesh.n_cells, mesh.n_cells),
            lambda c0, c1: _cell_boxes(
                scaled, mesh.corners, self.lo, self.h, self.shape, pad, i0, i1, c0, c1
            ),
        )
        self.start, self.members = _bucket_cells(i0, i1, self.lo, self.h, self.shape, self.affine)

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
        _scan_grid(
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


@numba.njit(cache=True, nogil=True)
def _cell_boxes(points, corners, lo, h, shape, pad, i0, i1, c0, c1):  # pragma: no cover
    """Bucket range of the bounding box of cells c0 to c1 - 1."""
    g = i0.shape[1]
    for c in range(c0, c1):
        for a in range(g):
            cmin = np.inf
            cmax = -np.inf
            for k in range(g + 1):
                x = points[corners[c, k], a]
                cmin = min(cmin, x)
                cmax = max(cmax, x)
            i0[c, a] = min(max(int(np.floor((cmin - pad - lo[a]) / h[a])), 0), shape[a] - 1)
            i1[c, a] = min(max(int(np.floor((cmax + pad - lo[a]) / h[a])), 0), shape[a] - 1)


def _bucket_cells(i0, i1, lo, h, shape, affine):
    """CSR lists, in ascending cell order, of the cells that reach into each bucket.

    A cell is listed in the buckets of its bounding box [i0, i1]; in 3D less
    those its own planes exclude (a tetrahedron fills a sixth of its box, so
    this shortens the lists by about a third and speeds queries by as much; a
    triangle fills half of its box, and in 2D the test costs more than it saves).
    Large meshes are done in slabs of the first grid axis, one thread each:
    the slabs write disjoint buckets, and the lists come out the same.
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
        lambda a0, a1: _find_runs(i0, i1, lo, h, shape, affine, first, a0, a1, runs, count),
    )
    np.cumsum(start, out=start)
    # half the memory, and faster scans, wherever cell numbers fit
    members = np.empty(start[-1], dtype=np.int32 if m < 2**31 else np.int64)
    slot = start[:-1].copy()
    in_parts(
        n0, parts, lambda a0, a1: _fill_runs(i0, i1, shape, first, a0, a1, runs, slot, members)
    )
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


@numba.njit(cache=True, nogil=True, inline="always")
def _rows_of(i0, i1, c, a0, a1):  # pragma: no cover
    """Rows of cell c's box in the slab a0 <= i < a1 of the first axis: the ranges
    of i and j (the axes before the last; a single row in 1D) and i's first value."""
    g = i0.shape[1]
    if g == 1:
        return 0, 0, 0, 0, 0
    j0, j1 = (i0[c, 1], i1[c, 1]) if g == 3 else (0, 0)
    return max(i0[c, 0], a0), min(i1[c, 0], a1 - 1), j0, j1, i0[c, 0]


@numba.njit(cache=True, nogil=True)
def _find_runs(i0, i1, lo, h, shape, affine, first, a0, a1, runs, count):  # pragma: no cover
    """The run of buckets each row of each cell's box keeps, and the count per bucket,
    for the rows in the slab a0 <= i < a1; ``first[c]`` is cell c's first row.

    In 3D a bucket is left out when one barycentric coordinate of the cell stays
    below -MARGIN over the whole (slightly enlarged) bucket: the largest value
    of an affine function over a box is its value at the centre plus the sum of
    |slope| * half-width.  Each coordinate is affine along the last grid axis,
    so the buckets kept in a row along that axis form one run, found from where
    each coordinate crosses -MARGIN.
    """
    m, g = i0.shape
    trim = g == 3
    last = g - 1
    half = 0.5 * h * (1.0 + 1e-6) + 1e-9
    slope = np.zeros((g, g + 1))  # change of each coordinate per bucket along each axis
    top = np.empty(g + 1)  # value at the first bucket's centre plus the reach
    v = np.empty(g + 1)
    step = np.empty(g + 1)  # buckets along the last axis per unit of each coordinate
    for c in range(m):
        ia, ib, ja, jb, i_first = _rows_of(i0, i1, c, a0, a1)
        if ia > ib:
            continue
        r0 = i0[c, last]
        room = i1[c, last] - r0 + 1.0
        if trim:
            top[0] = 1.0
            for b in range(g):
                top[b + 1] = affine[c, g, b]
                top[0] -= affine[c, g, b]
            for a in range(g):
                x = lo[a] + (i0[c, a] + 0.5) * h[a]
                s = 0.0
                for b in range(g):
                    top[b + 1] += x * affine[c, a, b] + abs(affine[c, a, b]) * half[a]
                    slope[a, b + 1] = affine[c, a, b] * h[a]
                    s += affine[c, a, b]
                top[0] += -x * s + abs(s) * half[a]
                slope[a, 0] = -s * h[a]
            for b in range(g + 1):
                step[b] = 1.0 / slope[last, b] if slope[last, b] != 0.0 else 0.0
        for i in range(ia, ib + 1):
            for j in range(ja, jb + 1):
                k0, k1 = r0, i1[c, last]
                for b in range(g + 1 if trim else 0):
                    v[b] = top[b] + (i - i0[c, 0]) * slope[0, b] + (j - i0[c, 1]) * slope[1, b]
                    if step[b] == 0.0:
                        if v[b] < -MARGIN:
                            k1 = k0 - 1
                        continue
                    # steps along the row until coordinate b reaches -MARGIN, within
                    # [-1, room]; selects rather than branches on the sign of the slope
                    t = min(max((-MARGIN - v[b]) * step[b], -1.0), room)
                    up = step[b] > 0.0
                    k0 = max(k0, r0 - int(room + 2.0 - t) + int(room + 2.0) if up else k0)
                    k1 = min(k1, k1 if up else r0 + int(t + 1.0) - 1)
                r = first[c] + (i - i_first) * (jb - ja + 1) + (j - ja)
                runs[r, 0] = k0
                runs[r, 1] = k1
                row = _row(i, j, g, shape)
                for k in range(k0, k1 + 1):
                    count[row + k] += 1


@numba.njit(cache=True, nogil=True)
def _fill_runs(i0, i1, shape, first, a0, a1, runs, slot, members):  # pragma: no cover
    """Write each cell into the buckets of its runs in the slab a0 <= i < a1, at
    ``slot`` (cells in ascending order)."""
    for c in range(i0.shape[0]):
        ia, ib, ja, jb, i_first = _rows_of(i0, i1, c, a0, a1)
        for i in range(ia, ib + 1):
            for j in range(ja, jb + 1):
                r = first[c] + (i - i_first) * (jb - ja + 1) + (j - ja)
                row = _row(i, j, i0.shape[1], shape)
                for k in range(runs[r, 0], runs[r, 1] + 1):
                    members[slot[row + k]] = c
                    slot[row + k] += 1


@numba.njit(cache=True, nogil=True, inline="always")
def _row(i, j, g, shape):  # pragma: no cover
    """Flat index of the first bucket of row (i, j) along the last axis."""
    row = i if g > 1 else 0
    if g > 2:
        row = row * shape[1] + j
    return row * shape[g - 1]


def _locate_block(index: CellIndex, x: np.ndarray, cells: np.ndarray, bary: np.ndarray) -> None:
    flat = np.empty(len(x), dtype=np.int64)
    _bucket_of(x, index.lo, index.h, index.shape, flat)
    # visiting the points bucket by bucket keeps the cell data in cache; both orders
    # are the same (stable by bucket), counting wins unless buckets far outnumber points
    if 8 * len(x) < index.n_buckets:
        order = np.argsort(flat, kind="stable")
    else:
        order = _counting_order(flat, index.n_buckets)
    _scan(x, flat, order, index.start, index.members, index.affine, cells, bary)


@numba.njit(cache=True, nogil=True)
def _bucket_of(x, lo, h, shape, flat):  # pragma: no cover
    """Bucket of each point, -1 outside the grid or NaN."""
    for p in range(x.shape[0]):
        flat[p] = _bucket(x[p], lo, h, shape)


@numba.njit(cache=True, nogil=True, inline="always")
def _bucket(x, lo, h, shape):  # pragma: no cover
    """Bucket of point ``x`` (its first len(lo) coordinates), -1 outside or NaN."""
    b = 0
    for a in range(lo.size):
        v = (x[a] - lo[a]) / h[a]
        if not (v >= 0.0 and v < shape[a]):  # also False for NaN
            return -1
        b = b * shape[a] + int(v)
    return b


@numba.njit(cache=True, nogil=True)
def _counting_order(flat, n_buckets):  # pragma: no cover
    """Stable order of the points by bucket (points outside first), by counting."""
    first = np.zeros(n_buckets + 2, dtype=np.int64)
    for b in flat:
        first[b + 2] += 1
    for b in range(2, n_buckets + 2):
        first[b] += first[b - 1]
    order = np.empty(flat.size, dtype=np.int64)
    for p in range(flat.size):
        order[first[flat[p] + 1]] = p
        first[flat[p] + 1] += 1
    return order


@numba.njit(cache=True, nogil=True)
def _scan(x, flat, order, start, members, affine, cells, bary):  # pragma: no cover
    """Locate the points, visiting them in ``order``.

    The points are copied in that order first and the results scattered back at
    the end, so the scan itself reads and writes memory in sequence.
    """
    n, g = x.shape
    xs = np.empty((n, g))
    fs = np.empty(n, dtype=np.int64)
    for i in range(n):
        fs[i] = flat[order[i]]
        for a in range(g):
            xs[i, a] = x[order[i], a]
    found = np.full(n, -1, dtype=np.int64)
    coords = np.empty((n, g + 1))
    lam = np.empty(g + 1)
    for i in range(n):
        if fs[i] >= 0:
            found[i] = _deepest(xs[i], fs[i], start, members, affine, lam, coords[i])
    for i in range(n):
        if found[i] >= 0:
            p = order[i]
            cells[p] = found[i]
            for b in range(g + 1):
                bary[p, b] = coords[i, b]


@numba.njit(cache=True, nogil=True, inline="always")
def _deepest(x, bucket, start, members, affine, lam, out):  # pragma: no cover
    """The cell of ``bucket`` that contains point ``x`` deepest (-1 if none), its
    barycentric coordinates written to ``out``; ``lam`` is scratch space."""
    g = affine.shape[2]
    found = -1
    best = -np.inf
    for j in range(start[bucket], start[bucket + 1]):
        c = members[j]
        s = 0.0
        mn = np.inf
        for b in range(g):
            v = affine[c, g, b]
            for a in range(g):
                v += x[a] * affine[c, a, b]
            lam[b + 1] = v
            s += v
            mn = min(mn, v)
        lam[0] = 1.0 - s
        mn = min(mn, lam[0])
        # members are in ascending cell order, so a tie keeps the lower index
        if mn >= -TOLERANCE and (found < 0 or mn > best + TIE):
            best = mn
            found = c
            for b in range(g + 1):
                out[b] = lam[b]
            if mn > TIE:
                break  # strictly inside: cells do not overlap, no other can be deeper
    return found


@numba.njit(cache=True, nogil=True)
def _scan_grid(ax, ay, az, lo, h, shape, start, members, affine, cells, bary):  # pragma: no cover
    """Locate the nodes of the grid of axes (ax, ay, az) in C order, as :func:`_scan`
    does each point: consecutive nodes share buckets, so no ordering is needed."""
    x = np.zeros(3)
    lam = np.empty(affine.shape[2] + 1)
    p = 0
    for i in range(ax.size):
        x[0] = ax[i]
        for j in range(ay.size):
            x[1] = ay[j]
            for k in range(az.size):
                x[2] = az[k]
                bucket = _bucket(x, lo, h, shape)
                if bucket >= 0:
                    cells[p] = _deepest(x, bucket, start, members, affine, lam, bary[p])
                p += 1


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
