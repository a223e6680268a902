"""Polygons: edge buckets, even-odd point-in-polygon, orientation, segment crossings."""

from __future__ import annotations

import numpy as np

from interp._geometry import BIN_SLACK
from interp._kernels import inner, kernel
from interp._kernels.predicates import orient2d


@kernel
def bin_index(v, n):  # pragma: no cover
    """Bucket index of a coordinate given in bucket widths, clamped to 0 .. n - 1.

    Examples
    --------
    >>> bin_index(2.7, 10), bin_index(-3.0, 10), bin_index(12.0, 10)
    (2, 0, 9)
    """
    return min(max(int(np.floor(v)), 0), n - 1)


@kernel
def visit_edges(seg, lo, h, nx, ny, slot, members, fill, by_row):  # pragma: no cover
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


@kernel
def inside(x, y, lo, h, ny, seg, row_start, row_members):  # pragma: no cover
    """Even-odd crossing test of one point against the edges of its grid row.

    The arguments are those of an :class:`EdgeGrid`: its ``lo``, ``h``,
    ``shape[1]``, ``segments``, ``row_start`` and ``row_members``.

    Examples
    --------
    >>> from interp.polygon import EdgeGrid, ring_edges
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


@kernel
def inside_many(points, lo, h, ny, seg, row_start, row_members, out):  # pragma: no cover
    for p in range(points.shape[0]):
        out[p] = inside(points[p, 0], points[p, 1], lo, h, ny, seg, row_start, row_members)


@kernel
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


@inner
def _on_segment(px, py, qx, qy, rx, ry):  # pragma: no cover
    """For r collinear with p-q: whether r lies on the closed segment p-q."""
    return min(px, qx) <= rx <= max(px, qx) and min(py, qy) <= ry <= max(py, qy)


@inner
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


@kernel
def first_pair(seg, following, start, members):  # pragma: no cover
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
                # one specialisation of _meet: ``adjacent`` a run-time bool, not a literal
                adjacent = following[i] == j or following[j] == i
                first, second = (j, i) if following[i] != j and following[j] == i else (i, j)
                if _meet(seg, first, second, adjacent):
                    bi, bj = i, j
    if bi == big:
        return -1, -1
    return bi, bj
