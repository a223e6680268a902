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

import numpy as np

from interp._geometry import cross_z
from interp._kernels.polygon import first_pair, inside_many, visit_edges
from interp.errors import InterpError

#: largest number of buckets an automatically sized EdgeGrid uses.
MAX_BUCKETS = 1 << 22


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
        ring = ring[distinct_vertices(ring)]
    if len(ring) < 3:
        raise InterpError(f"{name} needs at least 3 distinct vertices; got {len(ring)}")
    return np.ascontiguousarray(ring)


def distinct_vertices(ring: np.ndarray) -> np.ndarray:
    """The vertices :func:`as_ring` keeps: each that differs from the one before it
    (the first compared with the last, so a closing vertex keeps its place of the first).

    Examples
    --------
    >>> distinct_vertices(np.array([[0.0, 0], [1, 0], [1, 0], [0, 1], [0, 0]])).tolist()
    [False, True, False, True, True]
    """
    return np.any(ring != np.roll(ring, 1, axis=0), axis=1)


def ring_names(n: int) -> list[str]:
    """Names of the rings of a polygon of n rings: the exterior, then holes counted from 1.

    Examples
    --------
    >>> ring_names(3)
    ['exterior', 'hole 1', 'hole 2']
    """
    return ["exterior"] + [f"hole {k}" for k in range(1, n)]


def crossing_text(
    rings: list[np.ndarray], names: list[str], labels: list[list[str]] | None = None
) -> str | None:
    """The first pair of edges that cross, touch or overlap, in words; None for simple rings.

    Edges and vertices count from 1 in each ring (edge k runs from vertex k
    to vertex k + 1, the last back to vertex 1); with ``labels``, a name for
    each vertex of each ring (such as the file line it came from), an edge
    is named by its ends, and an empty ring name is left out.

    Examples
    --------
    >>> bowtie = np.array([[0.0, 0], [1, 1], [1, 0], [0, 1]])
    >>> crossing_text([bowtie], ["exterior"])
    'exterior edge 1 (vertex 1 to 2) meets exterior edge 3 (vertex 3 to 4)'
    >>> crossing_text([bowtie], ["ring 0"], [["line 2", "line 3", "line 4", "line 5"]])
    'the ring 0 edge from line 2 to line 3 meets the ring 0 edge from line 4 to line 5'
    """
    hit = first_crossing(rings)
    if hit is None:
        return None
    parts = []
    for ring, edge in hit:
        after = (edge + 1) % len(rings[ring])
        if labels is None:
            parts.append(f"{names[ring]} edge {edge + 1} (vertex {edge + 1} to {after + 1})")
        else:
            name = f"{names[ring]} " if names[ring] else ""
            parts.append(f"the {name}edge from {labels[ring][edge]} to {labels[ring][after]}")
    return " meets ".join(parts)


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
        inside_many(
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

    def crossings(self, a: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Where segments a -> b (rows of (n, 2) arrays) cross the grid's segments.

        Returns, for each crossing, the row of ``a``/``b`` that crosses and the
        parameter t in (0, 1) of the crossing along it (a touch at either end
        of that row is not a crossing).  Only pairs sharing a bucket are tested.

        Examples
        --------
        >>> sq = np.array([[0.0, 0], [2, 0], [2, 2], [0, 2]])
        >>> grid = EdgeGrid(ring_edges([sq])[0])
        >>> a, b = np.array([[1.0, 1.0], [3.0, 3.0]]), np.array([[3.0, 1.0], [4.0, 3.0]])
        >>> s, t = grid.crossings(a, b)
        >>> s.tolist(), t.tolist()
        ([0], [0.5])
        """
        nx, ny = int(self.shape[0]), int(self.shape[1])
        lo_xy = (np.minimum(a, b) - self.lo) / self.h
        hi_xy = (np.maximum(a, b) - self.lo) / self.h
        near = np.flatnonzero((hi_xy >= 0).all(axis=1) & (lo_xy[:, 0] <= nx) & (lo_xy[:, 1] <= ny))
        i0 = np.clip(np.floor(lo_xy[near, 0]), 0, nx - 1).astype(np.int64)
        i1 = np.clip(np.floor(hi_xy[near, 0]), 0, nx - 1).astype(np.int64)
        j0 = np.clip(np.floor(lo_xy[near, 1]), 0, ny - 1).astype(np.int64)
        j1 = np.clip(np.floor(hi_xy[near, 1]), 0, ny - 1).astype(np.int64)
        wide = i1 - i0 + 1
        n_buckets = wide * (j1 - j0 + 1)
        owner = np.repeat(np.arange(len(near)), n_buckets)
        k = np.arange(len(owner)) - np.repeat(np.cumsum(n_buckets) - n_buckets, n_buckets)
        bucket = (j0[owner] + k // wide[owner]) * nx + i0[owner] + k % wide[owner]
        n_members = self.start[bucket + 1] - self.start[bucket]
        pair_seg = np.repeat(near[owner], n_members)
        k = np.arange(len(pair_seg)) - np.repeat(np.cumsum(n_members) - n_members, n_members)
        pair_edge = self.members[np.repeat(self.start[bucket], n_members) + k]
        n_edges = len(self.segments)
        key = np.unique(pair_seg * n_edges + pair_edge)
        s, e = np.divmod(key, n_edges)
        p, r = a[s], b[s] - a[s]
        q, d = self.segments[e, :2], self.segments[e, 2:] - self.segments[e, :2]
        w = q - p
        denom = cross_z(r, d)
        with np.errstate(divide="ignore", invalid="ignore"):
            t = cross_z(w, d) / denom
            u = cross_z(w, r) / denom
            hit = (denom != 0) & (t > 0) & (t < 1) & (u >= 0) & (u <= 1)
        return s[hit], t[hit]


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
    i, j = first_pair(segments, following, grid.start, grid.members)
    if i < 0:
        return None
    sizes = np.cumsum([0] + [len(r) for r in rings])
    ri, rj = (int(np.searchsorted(sizes, k, side="right") - 1) for k in (i, j))
    return (ri, int(i - sizes[ri])), (rj, int(j - sizes[rj]))


def _csr(segments, lo, h, nx, ny, n_slots, by_row):
    start = np.zeros(n_slots + 1, dtype=np.int64)
    visit_edges(segments, lo, h, nx, ny, start[1:], np.empty(0, dtype=np.int64), False, by_row)
    np.cumsum(start, out=start)
    members = np.empty(start[-1], dtype=np.int64)
    visit_edges(segments, lo, h, nx, ny, start[:-1].copy(), members, True, by_row)
    return start, members
