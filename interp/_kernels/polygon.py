"""Polygons: edge buckets, even-odd point-in-polygon, orientation, segment crossings."""

from __future__ import annotations

import numba
import numpy as np

from interp._geometry import BIN_SLACK


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


@numba.njit(cache=True, nogil=True)
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


@numba.njit(cache=True, nogil=True)
def inside_many(points, lo, h, ny, seg, row_start, row_members, out):  # pragma: no cover
    for p in range(points.shape[0]):
        out[p] = inside(points[p, 0], points[p, 1], lo, h, ny, seg, row_start, row_members)


@numba.njit(cache=True, nogil=True)
def _two_sum(a, b):  # pragma: no cover
    x = a + b
    bv = x - a
    av = x - bv
    return x, (a - av) + (b - bv)


@numba.njit(cache=True, nogil=True)
def _two_product(a, b):  # pragma: no cover
    x = a * b
    c = 134217729.0 * a
    ahi = c - (c - a)
    alo = a - ahi
    c = 134217729.0 * b
    bhi = c - (c - b)
    blo = b - bhi
    return x, alo * blo - (((x - ahi * bhi) - alo * bhi) - ahi * blo)


@numba.njit(cache=True, nogil=True)
def orient(ax, ay, bx, by, cx, cy):  # pragma: no cover
    """Exact sign of the turn a -> b -> c: 1 left, -1 right, 0 collinear.

    A floating-point determinant decides when it is clear of its error bound
    (Shewchuk's ccwerrboundA); otherwise the six products of the expanded
    determinant are summed exactly as a floating-point expansion.

    Examples
    --------
    >>> orient(0.0, 0.0, 1.0, 0.0, 0.0, 1.0), orient(0.1, 0.1, 0.3, 0.3, 0.7, 0.7)
    (1, 0)
    """
    left = (ax - cx) * (by - cy)
    right = (ay - cy) * (bx - cx)
    d = left - right
    bound = 3.3306690738754716e-16 * (abs(left) + abs(right))
    if d > bound:
        return 1
    if -d > bound:
        return -1
    terms = np.empty(12)
    pairs = ((ax, by), (bx, cy), (cx, ay), (-ay, bx), (-by, cx), (-cy, ax))
    for k in range(6):
        terms[2 * k], terms[2 * k + 1] = _two_product(pairs[k][0], pairs[k][1])
    expansion = np.zeros(13)
    n = 0
    for k in range(12):
        q = terms[k]
        for i in range(n):
            q, expansion[i] = _two_sum(q, expansion[i])
        expansion[n] = q
        n += 1
    for i in range(n - 1, -1, -1):
        if expansion[i] > 0.0:
            return 1
        if expansion[i] < 0.0:
            return -1
    return 0


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
