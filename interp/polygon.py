"""Planar polygons as rings of vertices: validation, area, point-in-polygon tests
and self-intersection checks.

A polygon is a list of rings, each an (p, 2) array of vertices in order
(closing vertex optional): the first ring is the exterior, the others holes.
The even-odd rule decides inside, so holes need no particular orientation.

Edges are binned into an :class:`EdgeGrid` of square buckets, kept twice: per
bucket (for "which edges pass near this box") and per row of buckets (for the
crossing count of a point-in-polygon test, which only needs the edges whose
y-range holds the point).  Orientation tests in the self-intersection check
are exact: a floating-point filter first, and an exact expansion of the
determinant when the filter cannot decide.
"""

from __future__ import annotations

import numba
import numpy as np

from interp._kernels.predicates import orient2d
from interp.errors import InterpError

#: largest number of buckets an automatically sized EdgeGrid uses.
MAX_BUCKETS = 1 << 22
#: slack, in bucket widths, added around each edge when binning it.
BIN_SLACK = 1e-9


def as_ring(vertices: object, name: str = "polygon") -> np.ndarray:
    """Return a polygon ring as an (p, 2) float64 array without a closing vertex.

    Consecutive repeated vertices are merged.

    Examples
    --------
    >>> as_ring([[0, 0], [1, 0], [1, 0], [0, 1], [0, 0]]).shape
    (3, 2)
    """
    ring = np.asarray(vertices, dtype=np.float64)
    if ring.ndim == 2 and ring.shape[1] == 3:
        raise InterpError(
            f"{name} vertices are 3D (x, y, z); a polygon is planar: pass x, y only "
            "(for example vertices[:, :2])"
        )
    if ring.ndim != 2 or ring.shape[1] != 2:
        raise InterpError(
            f"{name} vertices must be an (p, 2) array of x, y; got shape {ring.shape}"
        )
    if not np.isfinite(ring).all():
        raise InterpError(f"{name} has NaN or infinite vertex coordinates")
    if len(ring) > 1:
        ring = ring[np.any(ring != np.roll(ring, 1, axis=0), axis=1)]
    if len(ring) < 3:
        raise InterpError(f"{name} needs at least 3 distinct vertices; got {len(ring)}")
    return np.ascontiguousarray(ring)


def ring_area(ring: np.ndarray) -> float:
    """Signed area of a ring by the shoelace formula (positive when counter-clockwise).

    Examples
    --------
    >>> ring_area(np.array([[0.0, 0.0], [2.0, 0.0], [0.0, 1.0]]))
    1.0
    """
    x = ring[:, 0] - ring[0, 0]
    y = ring[:, 1] - ring[0, 1]
    return float(0.5 * np.sum(x * np.roll(y, -1) - np.roll(x, -1) * y))


def ring_edges(rings: list[np.ndarray]) -> tuple[np.ndarray, np.ndarray]:
    """Edges of all rings as (e, 4) rows x0, y0, x1, y1, and the next edge of each.

    Returns
    -------
    segments : ndarray (e, 4) float64
    following : ndarray (e,) int64
        Global index of the edge that follows each edge in its ring.

    Examples
    --------
    >>> seg, nxt = ring_edges([np.array([[0.0, 0], [1, 0], [0, 1]])])
    >>> seg[2].tolist(), nxt.tolist()
    ([0.0, 1.0, 0.0, 0.0], [1, 2, 0])
    """
    segments, following, base = [], [], 0
    for ring in rings:
        p = len(ring)
        segments.append(np.hstack([ring, np.roll(ring, -1, axis=0)]))
        following.append(base + (np.arange(p) + 1) % p)
        base += p
    return np.ascontiguousarray(np.vstack(segments)), np.concatenate(following).astype(np.int64)


class EdgeGrid:
    """Segments binned into a uniform grid of square buckets, by bucket and by row.

    Parameters
    ----------
    segments : ndarray (e, 4)
        Rows x0, y0, x1, y1.
    cell : float, optional
        Bucket width; by default about four buckets per segment.  It is widened
        when the grid would exceed :data:`MAX_BUCKETS`.

    The grid reaches half a bucket beyond the segments on every side, so its
    border buckets lie outside any polygon the segments bound.

    Examples
    --------
    >>> sq = np.array([[0.0, 0], [2, 0], [2, 2], [0, 2]])
    >>> grid = EdgeGrid(ring_edges([sq])[0])
    >>> grid.contains(np.array([[1.0, 1.0], [3.0, 1.0]])).tolist()
    [True, False]
    """

    def __init__(self, segments: np.ndarray, cell: float | None = None) -> None:
        self.segments = np.ascontiguousarray(segments, dtype=np.float64)
        ends = self.segments.reshape(-1, 2)
        lo, hi = ends.min(axis=0), ends.max(axis=0)
        extent = hi - lo
        span = float(extent.max()) or 1.0
        if cell is None:
            n = len(self.segments)
            cell = max(float(np.sqrt(extent[0] * extent[1] / (4 * n))), span / (4 * n))
        cell = max(cell, span * 1e-9)
        while np.prod(np.ceil(extent / cell) + 1) > MAX_BUCKETS:
            cell *= 1.5
        self.h = float(cell)
        self.lo = lo - 0.5 * self.h
        self.shape = (np.ceil((hi + 0.5 * self.h - self.lo) / self.h)).astype(np.int64)
        nx, ny = int(self.shape[0]), int(self.shape[1])
        self.start, self.members = _csr(self.segments, self.lo, self.h, nx, ny, nx * ny, False)
        self.row_start, self.row_members = _csr(self.segments, self.lo, self.h, nx, ny, ny, True)
        occupied = (np.diff(self.start) > 0).reshape(ny, nx).astype(np.int64)
        self.occupied = np.zeros((ny + 1, nx + 1), dtype=np.int64)
        self.occupied[1:, 1:] = occupied.cumsum(axis=0).cumsum(axis=1)

    def contains(self, points: np.ndarray) -> np.ndarray:
        """Even-odd test of (n, 2) points against the closed rings of the segments."""
        out = np.zeros(len(points), dtype=np.bool_)
        _inside_many(
            np.ascontiguousarray(points, dtype=np.float64),
            self.lo,
            self.h,
            int(self.shape[1]),
            self.segments,
            self.row_start,
            self.row_members,
            out,
        )
        return out


def contains(rings: list[np.ndarray], points: np.ndarray) -> np.ndarray:
    """Even-odd test of (n, 2) points against validated rings; boolean (n,).

    Examples
    --------
    >>> sq = as_ring([[0, 0], [2, 0], [2, 2], [0, 2]])
    >>> contains([sq], np.array([[1.0, 1.0], [3.0, 1.0]])).tolist()
    [True, False]
    """
    return EdgeGrid(ring_edges(rings)[0]).contains(points)


def first_crossing(rings: list[np.ndarray]) -> tuple[tuple[int, int], tuple[int, int]] | None:
    """The first pair of edges that cross, touch or overlap, or None for simple rings.

    Edges that follow each other in a ring may share their common vertex but
    must not fold back over each other.  Every other pair must be disjoint.

    Returns
    -------
    ((ring, edge), (ring, edge)) or None
        Edge k of a ring runs from its vertex k to vertex k + 1.  "First" is
        the smallest pair in the order of the rings and their edges.

    Examples
    --------
    >>> bowtie = np.array([[0.0, 0], [1, 1], [1, 0], [0, 1]])
    >>> first_crossing([bowtie])
    ((0, 0), (0, 2))
    """
    segments, following = ring_edges(rings)
    grid = EdgeGrid(segments)
    i, j = _first_pair(segments, following, grid.start, grid.members)
    if i < 0:
        return None
    sizes = np.cumsum([0] + [len(r) for r in rings])
    ri, rj = (int(np.searchsorted(sizes, k, side="right") - 1) for k in (i, j))
    return (ri, int(i - sizes[ri])), (rj, int(j - sizes[rj]))


def _csr(segments, lo, h, nx, ny, n_slots, by_row):
    start = np.zeros(n_slots + 1, dtype=np.int64)
    _visit_edges(segments, lo, h, nx, ny, start[1:], np.empty(0, dtype=np.int64), False, by_row)
    np.cumsum(start, out=start)
    members = np.empty(start[-1], dtype=np.int64)
    _visit_edges(segments, lo, h, nx, ny, start[:-1].copy(), members, True, by_row)
    return start, members


@numba.njit(cache=True, nogil=True)
def bin_index(v, n):  # pragma: no cover
    """Bucket index of a coordinate given in bucket widths, clamped to 0 .. n - 1.

    Examples
    --------
    >>> bin_index(2.7, 10), bin_index(-3.0, 10), bin_index(12.0, 10)
    (2, 0, 9)
    """
    return min(max(int(np.floor(v)), 0), n - 1)


@numba.njit(cache=True, nogil=True)
def _visit_edges(seg, lo, h, nx, ny, slot, members, fill, by_row):  # pragma: no cover
    """Count (or, with ``fill``, write) the edges of each bucket or row.

    An edge goes into every bucket its segment passes through, found row by
    row from the part of the segment inside the row's band of y.
    """
    for e in range(seg.shape[0]):
        x0, y0, x1, y1 = seg[e, 0], seg[e, 1], seg[e, 2], seg[e, 3]
        if y0 > y1:
            x0, y0, x1, y1 = x1, y1, x0, y0
        r0 = bin_index((y0 - lo[1]) / h - BIN_SLACK, ny)
        r1 = bin_index((y1 - lo[1]) / h + BIN_SLACK, ny)
        for r in range(r0, r1 + 1):
            if by_row:
                c0, c1 = 0, 0
            else:
                xa, xb = x0, x1
                if y1 > y0:
                    ya = max(y0, lo[1] + r * h)
                    yb = min(y1, lo[1] + (r + 1) * h)
                    xa = x0 + (ya - y0) * (x1 - x0) / (y1 - y0)
                    xb = x0 + (yb - y0) * (x1 - x0) / (y1 - y0)
                c0 = bin_index((min(xa, xb) - lo[0]) / h - BIN_SLACK, nx)
                c1 = bin_index((max(xa, xb) - lo[0]) / h + BIN_SLACK, nx)
            for c in range(c0, c1 + 1):
                b = r if by_row else r * nx + c
                if fill:
                    members[slot[b]] = e
                slot[b] += 1


@numba.njit(cache=True, nogil=True)
def inside(x, y, lo, h, ny, seg, row_start, row_members):  # pragma: no cover
    """Even-odd crossing test of one point against the edges of its grid row.

    The arguments are those of an :class:`EdgeGrid`: its ``lo``, ``h``,
    ``shape[1]``, ``segments``, ``row_start`` and ``row_members``.

    Examples
    --------
    >>> g = EdgeGrid(ring_edges([np.array([[0.0, 0], [2, 0], [0, 2]])])[0])
    >>> inside(0.5, 0.5, g.lo, g.h, int(g.shape[1]), g.segments, g.row_start, g.row_members)
    True
    """
    r = (y - lo[1]) / h
    if not (r >= 0.0 and r < ny):
        return False
    row = int(r)
    c = False
    for k in range(row_start[row], row_start[row + 1]):
        e = row_members[k]
        x1, y1, x2, y2 = seg[e, 0], seg[e, 1], seg[e, 2], seg[e, 3]
        if (y1 > y) != (y2 > y):
            if x < x1 + (y - y1) * (x2 - x1) / (y2 - y1):
                c = not c
    return c


@numba.njit(cache=True, nogil=True)
def _inside_many(points, lo, h, ny, seg, row_start, row_members, out):  # pragma: no cover
    for p in range(points.shape[0]):
        out[p] = inside(points[p, 0], points[p, 1], lo, h, ny, seg, row_start, row_members)


@numba.njit(cache=True, nogil=True)
def orient(ax, ay, bx, by, cx, cy):  # pragma: no cover
    """Exact sign of the turn a -> b -> c: 1 left, -1 right, 0 collinear.

    The sign of Shewchuk's adaptive exact predicate
    :func:`interp._kernels.predicates.orient2d`.

    Examples
    --------
    >>> orient(0.0, 0.0, 1.0, 0.0, 0.0, 1.0), orient(0.1, 0.1, 0.3, 0.3, 0.7, 0.7)
    (1, 0)
    """
    o = orient2d(ax, ay, bx, by, cx, cy)
    return 1 if o > 0.0 else (-1 if o < 0.0 else 0)


@numba.njit(cache=True, nogil=True)
def _on_segment(px, py, qx, qy, rx, ry):  # pragma: no cover
    """For r collinear with p-q: whether r lies on the closed segment p-q."""
    return min(px, qx) <= rx <= max(px, qx) and min(py, qy) <= ry <= max(py, qy)


@numba.njit(cache=True, nogil=True)
def _meet(seg, i, j, adjacent):  # pragma: no cover
    """Whether edges i and j share a point they should not."""
    px, py, qx, qy = seg[i, 0], seg[i, 1], seg[i, 2], seg[i, 3]
    rx, ry, sx, sy = seg[j, 0], seg[j, 1], seg[j, 2], seg[j, 3]
    if adjacent:
        # i ends where j starts: they fold back if j's end turns onto i
        return (
            orient(px, py, qx, qy, sx, sy) == 0
            and (px - qx) * (sx - rx) + (py - qy) * (sy - ry) > 0.0
        )
    o1 = orient(px, py, qx, qy, rx, ry)
    o2 = orient(px, py, qx, qy, sx, sy)
    o3 = orient(rx, ry, sx, sy, px, py)
    o4 = orient(rx, ry, sx, sy, qx, qy)
    if o1 * o2 < 0 and o3 * o4 < 0:
        return True
    return (
        (o1 == 0 and _on_segment(px, py, qx, qy, rx, ry))
        or (o2 == 0 and _on_segment(px, py, qx, qy, sx, sy))
        or (o3 == 0 and _on_segment(rx, ry, sx, sy, px, py))
        or (o4 == 0 and _on_segment(rx, ry, sx, sy, qx, qy))
    )


@numba.njit(cache=True, nogil=True)
def _first_pair(seg, following, start, members):  # pragma: no cover
    """Smallest (i, j), i < j, of edges that meet; (-1, -1) if none do."""
    big = seg.shape[0]
    bi, bj = big, big
    for b in range(start.shape[0] - 1):
        for u in range(start[b], start[b + 1]):
            for v in range(u + 1, start[b + 1]):
                i, j = members[u], members[v]
                if i > j:
                    i, j = j, i
                if i > bi or (i == bi and j >= bj):
                    continue
                if (
                    max(seg[i, 0], seg[i, 2]) < min(seg[j, 0], seg[j, 2])
                    or max(seg[j, 0], seg[j, 2]) < min(seg[i, 0], seg[i, 2])
                    or max(seg[i, 1], seg[i, 3]) < min(seg[j, 1], seg[j, 3])
                    or max(seg[j, 1], seg[j, 3]) < min(seg[i, 1], seg[i, 3])
                ):
                    continue
                if following[i] == j:
                    hit = _meet(seg, i, j, True)
                elif following[j] == i:
                    hit = _meet(seg, j, i, True)
                else:
                    hit = _meet(seg, i, j, False)
                if hit:
                    bi, bj = i, j
    if bi == big:
        return -1, -1
    return bi, bj
