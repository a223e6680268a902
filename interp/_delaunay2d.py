"""Exact 2D Delaunay and constrained Delaunay triangulation.

The kernels (:mod:`interp._kernels.delaunay2d`) decide every orientation and
in-circle question with Shewchuk's exact adaptive predicates, on the raw
coordinates: the result is exactly Delaunay at any coordinate offset (survey
eastings and northings included), with no centring or scaling.

Points are inserted in a biased randomised insertion order (BRIO: rounds of
doubling size drawn at random, each round sorted along a Hilbert curve), so
each walk from the last triangle made is short and the expected cost is
O(n log n) whatever order the points come in.  The order is drawn from a fixed
seed: the same input always gives the same triangulation, also for cocircular
points such as a regular grid, where the Delaunay triangulation is not unique.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from interp._arrays import as_points, check_finite
from interp._kernels import constrain2d as kc
from interp._kernels import delaunay2d as k
from interp._progress import task
from interp.errors import InterpError
from interp.polygon import as_ring, contains, crossing_text, ring_names

SEED = 20261203  # fixed: the insertion order, hence the triangulation, is reproducible
#: points inserted per call of the insertion kernel (about 0.1 s each).
SLICE = 1 << 17


def delaunay2d(points: object, *, repeats: bool = False) -> np.ndarray:
    """Delaunay triangulation of distinct 2D points.

    Parameters
    ----------
    points : array_like (n, 2)
        Finite, pairwise distinct points (merge exact duplicates first, e.g.
        with :func:`interp.triangulate.merge_duplicates`).  Points closer than
        rounding distance but not equal (near duplicates at 1e-12) are distinct
        points: each is a vertex, and the thin cells between them are exactly
        counter-clockwise.
    repeats : bool
        Accept exact duplicates: of equal points, one (any) is a vertex and the
        others are in no cell.

    Returns
    -------
    cells : ndarray (m, 3) int64
        Counter-clockwise triangles.  Every point is a vertex of some triangle;
        every triangle's open circumcircle holds no point (checked exactly).

    Raises
    ------
    InterpError
        For fewer than three points, NaN or infinite coordinates, exact
        duplicates (unless ``repeats``), or points all on one line.

    Examples
    --------
    >>> delaunay2d([[0.0, 0.0], [1.0, 0.0], [0.0, 1.0], [1.0, 1.1]]).tolist()
    [[0, 1, 2], [2, 1, 3]]
    """
    pts = _checked(points)
    tri, _, ntri, order = _triangulate(pts, repeats)
    return k.cells_of(tri, tri[:ntri, 2] != len(pts), order)


BREAKLINE = 1  # edge flags in Constrained.flags
BOUNDARY = 2


class Constrained(NamedTuple):
    """A constrained Delaunay triangulation (see :func:`constrained2d`)."""

    points: np.ndarray
    """(n + e, 2): the input points, then the e points the constraints added."""
    cells: np.ndarray
    """(m, 3) int64 counter-clockwise triangles."""
    origin: np.ndarray
    """(e, 2) int64: for each added point, the rows of ``segments`` that made it
    (a crossing of two segments), -1 standing for the boundary: ``(i, -1)`` is
    segment i crossing the boundary, ``(-1, -1)`` a boundary vertex or a point
    where the boundary leaves the hull of the points."""
    edges: np.ndarray
    """(k, 2) int64: the mesh edges that carry constraints."""
    flags: np.ndarray
    """(k,) int8: ``BREAKLINE`` (1), ``BOUNDARY`` (2) or both (3) for each edge."""


def constrained2d(
    points: object,
    segments: object,
    *,
    boundary_rings: list[object] | None = None,
    names: list[str] | None = None,
) -> Constrained:
    """Constrained Delaunay triangulation of distinct 2D points.

    Every segment becomes a union of mesh edges.  Segments that cross are split
    at their crossing, which becomes a new point; a segment through a point
    passes through that vertex.  Boundary rings (an outer ring and holes, even-odd
    rule) are inserted as constraints where they lie inside the convex hull of
    the points, and the cells outside them are removed, so the mesh covers
    exactly the polygon inside the hull.  Every edge that is not a constraint is
    locally Delaunay (its opposite vertices are outside each other's open
    circumcircle, exactly), and no point is added except at crossings and on
    the boundary.

    Parameters
    ----------
    points : array_like (n, 2)
        Finite, pairwise distinct points, as for :func:`delaunay2d`.
    segments : array_like (s, 2) of int
        Breakline segments as pairs of rows of ``points``.  Two segments may
        cross or share an end; they may not overlap along a piece of line.
    boundary_rings : list of array_like (k, 2), optional
        Rings of vertices (not closed: the last vertex joins the first) that
        must not cross or touch one another.
    names : list of str, optional
        What to call each segment in error messages (default "input segment i").

    Returns
    -------
    Constrained
        ``points`` (the input then the added points), ``cells``, ``origin`` of
        the added points, constraint ``edges`` and their ``flags``.

    Raises
    ------
    InterpError
        As :func:`delaunay2d`, and for a segment that is not a pair of distinct
        point rows, two segments overlapping along a piece of line, or a
        boundary ring that crosses itself or another ring.

    Examples
    --------
    >>> pts = [[0.0, 0.0], [2.0, 0.0], [2.0, 2.0], [0.0, 2.0]]
    >>> r = constrained2d(pts, [[0, 2], [1, 3]])
    >>> r.points[4].tolist(), len(r.cells), r.origin.tolist()
    ([1.0, 1.0], 4, [[0, 1]])
    """
    pts = _checked(points)
    n = len(pts)
    seg = _segments(segments, n)
    rings = [as_ring(r, "boundary") for r in boundary_rings or []]
    crossing = crossing_text(rings, ring_names(len(rings))) if rings else None
    if crossing is not None:
        raise InterpError(
            f"the boundary crosses itself: {crossing}; give rings that are simple and disjoint"
        )
    bpts, bseg = _clip_rings(rings, pts)
    coords = np.vstack([pts, bpts])
    allseg = np.vstack([seg, bseg])
    source = np.concatenate([np.arange(len(seg)), np.full(len(bseg), -1)])
    kind = np.where(source >= 0, BREAKLINE, BOUNDARY).astype(np.int8)
    called = names if names is not None else [f"input segment {i + 1}" for i in range(len(seg))]
    cpts, corigin, pieces, pseg = _split(coords, allseg, source, kind, called)
    allpts = np.vstack([coords, cpts])
    origin = np.vstack([np.full((len(bpts), 2), -1, dtype=np.int64), corigin])
    order = insertion_order(allpts)
    x = allpts[order, 0]
    y = allpts[order, 1]
    tri, nbr, ntri, same, status = _insert_all(x, y)
    if status == k.COLLINEAR:
        _triangulate(pts)  # raises the message of the unconstrained case
    vertex, canon = _merged(order, same, n)
    pk = vertex[pieces]
    use = pk[:, 0] != pk[:, 1]
    cons, status, which = kc.constrain(x, y, tri, nbr, ntri, pk[use], kind[pseg[use]])
    if status != k.OK:
        i = int(np.flatnonzero(use)[which])
        ends = " to ".join(map(str, allpts[pieces[i]].tolist()))
        what = f"the constraint piece {ends} ({_name(source, called, pseg[i])})"
        if status == k.CROSSING:
            raise InterpError(
                f"{what} crosses another constraint where rounding moved their crossing "
                f"point; move the lines apart or join them at a shared vertex"
            )
        raise InterpError(
            f"{what} could not be inserted: a defect of the triangulator; please report "
            f"it with the data"
        )
    keep = tri[:ntri, 2] != len(allpts)
    if rings:
        region, first = kc.regions(tri, nbr, cons, ntri, len(allpts), BOUNDARY)
        centroid = np.stack([x[tri[first]].mean(axis=1), y[tri[first]].mean(axis=1)], axis=1)
        keep &= contains(rings, centroid)[region]
    kept = np.ones(len(allpts), dtype=bool)
    kept[n:] = canon[n:] == np.arange(n, len(allpts))
    renumber = np.cumsum(kept) - 1
    row = renumber[canon[order]]  # output row of each kernel vertex
    cells = k.cells_of(tri, keep, row)
    edges, flags = k.flagged_edges(tri, nbr, cons, ntri, row)
    return Constrained(allpts[kept], cells, origin[kept[n:]], edges, flags)


def _segments(segments: object, n: int) -> np.ndarray:
    arr = np.asarray(segments)
    if arr.size == 0:
        return np.empty((0, 2), dtype=np.int64)
    if arr.ndim != 2 or arr.shape[1] != 2 or not np.issubdtype(arr.dtype, np.integer):
        raise InterpError(
            f"segments must be an (s, 2) array of point rows; got shape {arr.shape} of {arr.dtype}"
        )
    bad = np.flatnonzero((arr < 0).any(axis=1) | (arr >= n).any(axis=1) | (arr[:, 0] == arr[:, 1]))
    if bad.size:
        raise InterpError(
            f"segment {bad[0] + 1} joins rows {(arr[bad[0]] + 1).tolist()} (counting from 1): "
            f"a segment joins two different rows of the {n} points"
        )
    return arr.astype(np.int64)


def _hull(pts: np.ndarray) -> np.ndarray:
    """Rows of the convex hull vertices of (n, 2) points, counter-clockwise."""
    return kc.convex_hull(pts[:, 0], pts[:, 1], np.lexsort((pts[:, 1], pts[:, 0])))


def _clip_rings(rings: list[np.ndarray], pts: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The pieces of the ring edges inside the convex hull of ``pts`` (Cyrus-Beck).

    Returns the new points (b, 2) (ring vertices inside the hull, points where a
    ring crosses the hull) and the pieces as (q, 2) rows of ``[pts; new points]``.
    Where a ring crosses a hull edge, the hull edge is split there into pieces
    too: the crossing point is rounded to either side of the hull edge, and those
    pieces close the gap, so that boundary edges separate inside from outside.
    """
    n = len(pts)
    if not rings:
        return np.empty((0, 2)), np.empty((0, 2), dtype=np.int64)
    hull = _hull(pts)
    h0 = pts[hull]
    e = pts[np.roll(hull, -1)] - h0
    points: list[np.ndarray] = []
    pieces: list[tuple[int, int]] = []
    on_hull: list[tuple[int, float, int]] = []  # hull edge, place along it, point

    def add(p: np.ndarray) -> int:
        points.append(p)
        return n + len(points) - 1

    for ring in rings:
        at: dict[int, int] = {}  # ring vertex -> its point
        for i in range(len(ring)):
            j = (i + 1) % len(ring)
            p0, d = ring[i], ring[j] - ring[i]
            f0 = e[:, 0] * (p0[1] - h0[:, 1]) - e[:, 1] * (p0[0] - h0[:, 0])
            fd = e[:, 0] * d[1] - e[:, 1] * d[0]
            if np.any((fd == 0) & (f0 < 0)):
                continue
            with np.errstate(divide="ignore", invalid="ignore"):
                t = -f0 / fd
            enter = np.where(fd > 0, t, -np.inf)
            leave = np.where(fd < 0, t, np.inf)
            lo, hi = max(0.0, enter.max()), min(1.0, leave.min())
            if not lo < hi:
                continue
            ends = []
            for tt, v, edge in ((lo, i, enter.argmax()), (hi, j, leave.argmin())):
                if tt in (0.0, 1.0):
                    if v not in at:
                        at[v] = add(ring[v])
                    ends.append(at[v])
                else:
                    q = p0 + tt * d
                    ends.append(add(q))
                    on_hull.append((int(edge), float(np.dot(q - h0[edge], e[edge])), ends[-1]))
            pieces.append((ends[0], ends[1]))
    on_hull.sort()
    for edge in sorted({c[0] for c in on_hull}):
        chain = [int(hull[edge])]
        chain += [c[2] for c in on_hull if c[0] == edge]
        chain.append(int(hull[(edge + 1) % len(hull)]))
        pieces += list(zip(chain[:-1], chain[1:], strict=True))
    return np.array(points).reshape(-1, 2), np.array(pieces, dtype=np.int64).reshape(-1, 2)


def _split(
    coords: np.ndarray, seg: np.ndarray, source: np.ndarray, kind: np.ndarray, label: list[str]
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Split segments at their crossings.  Returns the crossing points, their
    origin (pairs of ``source``), and the pieces (rows of coords then crossing
    points) with the segment each is part of.  Two breakline segments that
    overlap raise."""
    a = coords[seg[:, 0]]
    b = coords[seg[:, 1]]
    # contiguous columns: one specialisation of the kernel, whatever the count
    cross, where, overlap = kc.crossings(*np.ascontiguousarray(np.hstack([a, b]).T))
    both = overlap[(kind[overlap] == BREAKLINE).all(axis=1)]
    if len(both):
        i, j = both[0]
        raise InterpError(
            f"{_name(source, label, i)} ({' to '.join(map(str, coords[seg[i]].tolist()))}) and "
            f"{_name(source, label, j)} ({' to '.join(map(str, coords[seg[j]].tolist()))}) "
            "overlap along a piece of line; join them into one line or remove the repeated piece"
        )
    c = len(cross)
    i, j = cross[:, 0], cross[:, 1]
    cpts = a[i] + where[:, :1] * (b[i] - a[i])
    origin = np.sort(source[cross], axis=1)
    origin = np.where(origin[:, :1] < 0, origin[:, ::-1], origin)  # -1 (the boundary) last
    # the vertices along each segment: its ends (t = 0, 1) and its crossings
    m = len(seg)
    sid = np.concatenate([np.arange(m), np.arange(m), i, j])
    t = np.concatenate([np.zeros(m), np.ones(m), where[:, 0], where[:, 1]])
    base = len(coords)
    vid = np.concatenate([seg[:, 0], seg[:, 1], base + np.arange(c), base + np.arange(c)])
    o = np.lexsort((t, sid))
    sid, vid = sid[o], vid[o]
    inner = sid[1:] == sid[:-1]
    pieces = np.stack([vid[:-1][inner], vid[1:][inner]], axis=1)
    return cpts, origin.astype(np.int64), pieces, sid[:-1][inner]


def _name(source: np.ndarray, label: list[str], i: int) -> str:
    return "the boundary" if source[i] < 0 else label[source[i]]


def first_outside_hull(points: np.ndarray, query: np.ndarray) -> int:
    """The first row of ``query`` strictly outside the convex hull of ``points``
    (exact), or -1.

    Examples
    --------
    >>> sq = np.array([[0.0, 0], [1, 0], [1, 1], [0, 1]])
    >>> first_outside_hull(sq, np.array([[0.5, 0.5], [1.0, 0.5], [1.5, 0.5]]))
    2
    """
    x, y = points[:, 0], points[:, 1]
    return int(kc.first_outside(x, y, _hull(points), query[:, 0], query[:, 1]))


def _merged(order: np.ndarray, same: np.ndarray, n: int) -> tuple[np.ndarray, np.ndarray]:
    """For each point (original row): the kernel vertex it is, and the lowest row
    of the points equal to it.  Equal input points raise."""
    pos = np.empty_like(order)
    pos[order] = np.arange(len(order))
    dup = np.flatnonzero(same >= 0)
    inserted = np.arange(len(order))
    inserted[dup] = same[dup]
    canon_of = order.copy()
    np.minimum.at(canon_of, same[dup], order[dup])
    vertex = inserted[pos]
    canon = canon_of[vertex]
    inputs = (order[dup] < n) & (order[same[dup]] < n)
    if inputs.any():
        d = dup[np.argmax(inputs)]
        i, j = sorted((int(order[d]), int(order[same[d]])))
        raise InterpError(
            f"point {j + 1} equals point {i + 1} (counting from 1); merge exact duplicates "
            "before triangulating"
        )
    return vertex, canon


def _checked(points: object) -> np.ndarray:
    pts = as_points(points, gdim=2)
    check_finite(pts)
    if len(pts) < 3:
        raise InterpError(f"a 2D triangulation needs at least 3 points; got {len(pts)}")
    return pts


def insertion_order(pts: np.ndarray) -> np.ndarray:
    """BRIO order of (n, 2) points: random rounds (each point joins round r >= 1
    with probability 2**-r, the last rounds first in size), each round along a
    Hilbert curve over the points' box.

    Examples
    --------
    >>> o = insertion_order(np.random.default_rng(0).random((100, 2)))
    >>> sorted(o.tolist()) == list(range(100))
    True
    """
    lo = pts.min(axis=0)
    span = float((pts.max(axis=0) - lo).max()) or 1.0
    level = min(16, int(np.log2(len(pts))) // 2 + 3)  # about 16 cells per point
    keys = k.hilbert_keys(pts[:, 0], pts[:, 1], lo[0], lo[1], 2.0**level / span, level)
    rounds = np.minimum(np.random.default_rng(SEED).geometric(0.5, len(pts)), 31)
    keys |= (31 - rounds) << (2 * level)
    return np.argsort(keys)


def _insert_all(
    x: np.ndarray, y: np.ndarray
) -> tuple[np.ndarray, np.ndarray, int, np.ndarray, int]:
    """Delaunay triangulation of points inserted in the given order, in slices of
    :data:`SLICE` points (the steps of the progress bar; the result does not depend
    on them).  Returns ``(tri, nbr, ntri, same, status)`` (see
    :func:`interp._kernels.delaunay2d.insert`)."""
    tri, nbr, mark, start_of, same, third = k.first_triangle(x, y)
    if third < 0:
        return tri, nbr, 0, same, k.COLLINEAR
    ntri, last = 4, 0
    with task("triangulating", total=len(x), unit="points") as advance:
        advance(2)  # points 0 and 1, in the first triangle
        for lo in range(2, len(x), SLICE):
            hi = min(len(x), lo + SLICE)
            ntri, last = k.insert(x, y, tri, nbr, mark, start_of, same, third, ntri, last, lo, hi)
            advance(hi - lo)
    return tri, nbr, ntri, same, k.OK


def _triangulate(
    pts: np.ndarray, repeats: bool = False
) -> tuple[np.ndarray, np.ndarray, int, np.ndarray]:
    """The kernel's triangles (in insertion order) and that order; errors raised."""
    order = insertion_order(pts)
    x = pts[order, 0]
    y = pts[order, 1]
    tri, nbr, ntri, same, status = _insert_all(x, y)
    if status == k.COLLINEAR:
        raise InterpError(
            "the points are collinear: a 2D triangulation needs points spread in 2 "
            "dimensions (use 1D coordinates along the line instead)"
        )
    dup = np.flatnonzero(same >= 0)
    if dup.size and not repeats:
        i, j = sorted((int(order[dup[0]]), int(order[same[dup[0]]])))
        raise InterpError(
            f"{dup.size} point(s) repeat an earlier point, e.g. point {j + 1} equals point "
            f"{i + 1} (counting from 1); merge exact duplicates before triangulating"
        )
    return tri, nbr, ntri, order
