"""Constraint insertion into a 2D Delaunay triangulation (numba kernels).

The data structure is that of :mod:`interp._kernels.delaunay2d`.  Constraints
(segments between vertices) are inserted by Sloan's method: the edges the
segment crosses are flipped until none is left, a vertex lying exactly on the
segment splitting it; then Lawson flips make every unconstrained edge locally
Delaunay.  Also here: the regions the constraints cut the mesh into, the exact
crossings of segments, and the convex hull.
"""

from __future__ import annotations

import numpy as np

from interp._kernels import inner, kernel
from interp._kernels.delaunay2d import CROSSING, LOST, OK, between, grow, slot, vertex_triangles
from interp._kernels.predicates import incircle, orient2d


@inner
def _find_edge(tri, nbr, vt, q, r):  # pragma: no cover
    """A triangle with edge q-r and the slot opposite it, by turning around q;
    (-1, -1) when there is no such edge."""
    t = vt[q]
    start = t
    while True:
        kq = slot(tri, t, q)
        if tri[t, (kq + 1) % 3] == r:
            return t, (kq + 2) % 3
        if tri[t, (kq + 2) % 3] == r:
            return t, (kq + 1) % 3
        t = nbr[t, (kq + 1) % 3]
        if t == start:
            return -1, -1


@inner
def _mark(nbr, cons, t, k, kind):  # pragma: no cover
    """Flag the edge opposite slot k of t, on both of its sides."""
    cons[t, k] |= kind
    u = nbr[t, k]
    cons[u, slot(nbr, u, t)] |= kind


@inner
def _flip(tri, nbr, cons, vt, t, k):  # pragma: no cover
    """Replace the edge opposite slot k of t by the other diagonal of its quad:
    t = (p, v1, v2), u = (s, v2, v1) become t = (p, v1, s), u = (p, s, v2)."""
    p = tri[t, k]
    v1 = tri[t, (k + 1) % 3]
    v2 = tri[t, (k + 2) % 3]
    u = nbr[t, k]
    m = slot(nbr, u, t)
    s = tri[u, m]
    n_tq, c_tq = nbr[t, (k + 1) % 3], cons[t, (k + 1) % 3]
    n_tr, c_tr = nbr[t, (k + 2) % 3], cons[t, (k + 2) % 3]
    n_ur, c_ur = nbr[u, (m + 1) % 3], cons[u, (m + 1) % 3]
    n_uq, c_uq = nbr[u, (m + 2) % 3], cons[u, (m + 2) % 3]
    tri[t, 0], tri[t, 1], tri[t, 2] = p, v1, s
    nbr[t, 0], nbr[t, 1], nbr[t, 2] = n_ur, u, n_tr
    cons[t, 0], cons[t, 1], cons[t, 2] = c_ur, 0, c_tr
    tri[u, 0], tri[u, 1], tri[u, 2] = p, s, v2
    nbr[u, 0], nbr[u, 1], nbr[u, 2] = n_uq, n_tq, t
    cons[u, 0], cons[u, 1], cons[u, 2] = c_uq, c_tq, 0
    nbr[n_ur, slot(nbr, n_ur, u)] = t
    nbr[n_tq, slot(nbr, n_tq, t)] = u
    vt[p] = t
    vt[v1] = t
    vt[s] = u
    vt[v2] = u


@inner
def _opposite_sides(o1, o2):  # pragma: no cover
    return (o1 > 0.0 and o2 < 0.0) or (o1 < 0.0 and o2 > 0.0)


@inner
def _push(stack, n, q, r):  # pragma: no cover
    stack = grow(stack, n + 1)
    stack[n, 0] = q
    stack[n, 1] = r
    return stack, n + 1


@inner
def _insert_segment(x, y, tri, nbr, cons, vt, a, b, kind, fresh, nfresh):  # pragma: no cover
    """Make segment a-b a union of edges flagged ``kind`` (Sloan's flips); the edges
    made are appended to ``fresh`` for the Delaunay pass.  Returns
    ``(status, fresh, nfresh)``."""
    inf = x.shape[0]
    while a != b:
        # turn around a: the edge to b, a vertex on the segment, or the first edge crossed
        t = vt[a]
        start = t
        crossing = False
        while True:
            ka = slot(tri, t, a)
            q = tri[t, (ka + 1) % 3]
            r = tri[t, (ka + 2) % 3]
            if tri[t, 2] != inf:
                if q == b:
                    _mark(nbr, cons, t, (ka + 2) % 3, kind)
                    a = b
                    break
                if r == b:
                    _mark(nbr, cons, t, (ka + 1) % 3, kind)
                    a = b
                    break
                oq = orient2d(x[a], y[a], x[b], y[b], x[q], y[q])
                if oq == 0.0 and between(x, y, a, b, np.int64(q)):
                    _mark(nbr, cons, t, (ka + 2) % 3, kind)
                    a = q
                    break
                o_r = orient2d(x[a], y[a], x[b], y[b], x[r], y[r])
                # r too: on the hull, a's last neighbour is the r of a triangle only
                if o_r == 0.0 and between(x, y, a, b, r):
                    _mark(nbr, cons, t, (ka + 1) % 3, kind)
                    a = r
                    break
                if oq < 0.0 and o_r > 0.0:
                    crossing = True
                    break
            t = nbr[t, (ka + 1) % 3]
            if t == start:
                return LOST, fresh, nfresh
        if not crossing:
            continue
        # the edges crossed, q on the right of a->b and r on its left, up to b or a
        # vertex on the segment
        if cons[t, ka] != 0:
            return CROSSING, fresh, nfresh
        work = np.empty((16, 2), dtype=np.int32)
        work[0, 0] = q
        work[0, 1] = r
        nwork = 1
        prev = t
        u = nbr[t, ka]
        end = b
        while True:
            s = tri[u, slot(nbr, u, prev)]
            if s == b:
                break
            o = orient2d(x[a], y[a], x[b], y[b], x[s], y[s])
            if o == 0.0:
                end = s
                break
            if o < 0.0:
                ks = slot(tri, u, q)
                q = s
            else:
                ks = slot(tri, u, r)
                r = s
            if cons[u, ks] != 0:
                return CROSSING, fresh, nfresh
            work, nwork = _push(work, nwork, q, r)
            prev = u
            u = nbr[u, ks]
        # flip crossed edges in convex quads until none crosses (a FIFO queue)
        size = nwork
        head = 0
        count = nwork
        tries = 0
        while count > 0:
            q = work[head, 0]
            r = work[head, 1]
            head = (head + 1) % size
            count -= 1
            t, k = _find_edge(tri, nbr, vt, np.int64(q), np.int64(r))
            p = tri[t, k]
            u = nbr[t, k]
            s = tri[u, slot(nbr, u, t)]
            v1 = tri[t, (k + 1) % 3]
            v2 = tri[t, (k + 2) % 3]
            tail = (head + count) % size
            if (
                orient2d(x[p], y[p], x[v1], y[v1], x[s], y[s]) > 0.0
                and orient2d(x[p], y[p], x[s], y[s], x[v2], y[v2]) > 0.0
            ):
                _flip(tri, nbr, cons, vt, t, k)
                op = orient2d(x[a], y[a], x[end], y[end], x[p], y[p])
                os = orient2d(x[a], y[a], x[end], y[end], x[s], y[s])
                if _opposite_sides(op, os):
                    work[tail, 0] = p
                    work[tail, 1] = s
                    count += 1
                else:
                    fresh, nfresh = _push(fresh, nfresh, p, s)
            else:
                work[tail, 0] = q
                work[tail, 1] = r
                count += 1
            tries += 1
            if tries > 64 * size * size + 1024:
                return LOST, fresh, nfresh
        t, k = _find_edge(tri, nbr, vt, a, end)
        _mark(nbr, cons, t, k, kind)
        a = end
    return OK, fresh, nfresh


@kernel
def constrain(x, y, tri, nbr, ntri, seg, kind):  # pragma: no cover
    """Insert segments ``seg[i] = (a, b)`` (vertex indices) flagged ``kind[i]``
    into a Delaunay triangulation, then flip every unflagged edge that is not
    locally Delaunay (Lawson) until all are: the constrained Delaunay
    triangulation.  Returns ``(cons, status, segment)``: ``cons[t, k]`` holds the
    flags of the edge opposite slot k (0 for none); on failure, the segment."""
    inf = x.shape[0]
    vt = vertex_triangles(tri, ntri, inf)
    cons = np.zeros((tri.shape[0], 3), dtype=np.int8)
    fresh = np.empty((64, 2), dtype=np.int32)
    nfresh = np.int64(0)  # not a literal: one compiled _insert_segment
    for i in range(seg.shape[0]):
        status, fresh, nfresh = _insert_segment(
            x, y, tri, nbr, cons, vt, seg[i, 0], seg[i, 1], kind[i], fresh, nfresh
        )
        if status != OK:
            return cons, status, i
    while nfresh > 0:
        nfresh -= 1
        q = fresh[nfresh, 0]
        r = fresh[nfresh, 1]
        t, k = _find_edge(tri, nbr, vt, np.int64(q), np.int64(r))
        if t < 0 or cons[t, k] != 0:
            continue
        u = nbr[t, k]
        if tri[t, 2] == inf or tri[u, 2] == inf:
            continue
        p = tri[t, k]
        v1 = tri[t, (k + 1) % 3]
        v2 = tri[t, (k + 2) % 3]
        s = tri[u, slot(nbr, u, t)]
        if incircle(x[p], y[p], x[v1], y[v1], x[v2], y[v2], x[s], y[s]) > 0.0:
            _flip(tri, nbr, cons, vt, t, k)
            fresh, nfresh = _push(fresh, nfresh, v1, s)
            fresh, nfresh = _push(fresh, nfresh, s, v2)
            fresh, nfresh = _push(fresh, nfresh, v2, p)
            fresh, nfresh = _push(fresh, nfresh, p, v1)
    return cons, OK, -1


@kernel
def regions(tri, nbr, cons, ntri, inf, wall):  # pragma: no cover
    """Label the real triangles by the connected regions that edges flagged
    ``wall`` separate (ghosts get -1).  Returns ``(label, first)``: the label of
    each triangle and one triangle of each region."""
    label = np.full(ntri, -1, dtype=np.int32)
    first = np.empty(16, dtype=np.int32)
    stack = np.empty(64, dtype=np.int32)
    nreg = 0
    for t0 in range(ntri):
        if label[t0] >= 0 or tri[t0, 2] == inf:
            continue
        first = grow(first, nreg + 1)
        first[nreg] = t0
        label[t0] = nreg
        stack[0] = t0
        n = 1
        while n > 0:
            n -= 1
            t = stack[n]
            for k in range(3):
                u = nbr[t, k]
                if label[u] >= 0 or tri[u, 2] == inf or (cons[t, k] & wall) != 0:
                    continue
                label[u] = nreg
                if n == stack.shape[0]:
                    stack = grow(stack, n + 1)
                stack[n] = u
                n += 1
        nreg += 1
    return label, first[:nreg]


@kernel
def crossings(ax, ay, bx, by):  # pragma: no cover
    """Pairs of segments a[i]-b[i] that cross at one interior point, and pairs
    that overlap along a piece of positive length (collinear).

    Returns ``(cross, where, overlap)``: ``cross`` (c, 2) pairs i < j, ``where``
    (c, 2) the parameter along each (point = a + t (b - a)), ``overlap`` (o, 2).
    Candidates come from a sweep over x; the tests are exact.
    """
    m = ax.shape[0]
    xlo = np.minimum(ax, bx)
    xhi = np.maximum(ax, bx)
    ylo = np.minimum(ay, by)
    yhi = np.maximum(ay, by)
    order = np.argsort(xlo)
    cross = np.empty((16, 2), dtype=np.int64)
    where = np.empty((16, 2), dtype=np.float64)
    overlap = np.empty((16, 2), dtype=np.int64)
    nc = 0
    no = 0
    for ii in range(m):
        i = order[ii]
        for jj in range(ii + 1, m):
            j = order[jj]
            if xlo[j] > xhi[i]:
                break
            if ylo[j] > yhi[i] or ylo[i] > yhi[j]:
                continue
            o1 = orient2d(ax[i], ay[i], bx[i], by[i], ax[j], ay[j])
            o2 = orient2d(ax[i], ay[i], bx[i], by[i], bx[j], by[j])
            if o1 == 0.0 and o2 == 0.0:
                if _collinear_overlap(ax, ay, bx, by, i, j):
                    overlap = grow(overlap, no + 1)
                    overlap[no, 0] = min(i, j)
                    overlap[no, 1] = max(i, j)
                    no += 1
                continue
            if not _opposite_sides(o1, o2):
                continue
            o3 = orient2d(ax[j], ay[j], bx[j], by[j], ax[i], ay[i])
            o4 = orient2d(ax[j], ay[j], bx[j], by[j], bx[i], by[i])
            if not _opposite_sides(o3, o4):
                continue
            cross = grow(cross, nc + 1)
            where = grow(where, nc + 1)
            ti = o3 / (o3 - o4)
            tj = o1 / (o1 - o2)
            if i < j:
                cross[nc, 0], cross[nc, 1] = i, j
                where[nc, 0], where[nc, 1] = ti, tj
            else:
                cross[nc, 0], cross[nc, 1] = j, i
                where[nc, 0], where[nc, 1] = tj, ti
            nc += 1
    return cross[:nc], where[:nc], overlap[:no]


@inner
def _collinear_overlap(ax, ay, bx, by, i, j):  # pragma: no cover
    """For collinear segments i and j: whether they share more than a point."""
    if ax[i] != bx[i] or ax[j] != bx[j]:
        lo = max(min(ax[i], bx[i]), min(ax[j], bx[j]))
        hi = min(max(ax[i], bx[i]), max(ax[j], bx[j]))
    else:
        lo = max(min(ay[i], by[i]), min(ay[j], by[j]))
        hi = min(max(ay[i], by[i]), max(ay[j], by[j]))
    return lo < hi


@kernel
def convex_hull(x, y, order):  # pragma: no cover
    """Vertices of the convex hull, counter-clockwise, no collinear vertex
    (Andrew's monotone chain over points sorted by x then y, exact turns)."""
    n = order.shape[0]
    hull = np.empty(2 * n + 1, dtype=np.int64)
    h = 0
    for ii in range(n):
        i = order[ii]
        while (
            h >= 2
            and orient2d(x[hull[h - 2]], y[hull[h - 2]], x[hull[h - 1]], y[hull[h - 1]], x[i], y[i])
            <= 0.0
        ):
            h -= 1
        hull[h] = i
        h += 1
    low = h + 1
    for ii in range(n - 2, -1, -1):
        i = order[ii]
        while (
            h >= low
            and orient2d(x[hull[h - 2]], y[hull[h - 2]], x[hull[h - 1]], y[hull[h - 1]], x[i], y[i])
            <= 0.0
        ):
            h -= 1
        hull[h] = i
        h += 1
    return hull[: h - 1]


@kernel
def first_outside(x, y, hull, px, py):  # pragma: no cover
    """The first point (px[i], py[i]) strictly outside the convex polygon of
    counter-clockwise vertices ``hull`` (rows of x, y), or -1 (exact)."""
    h = hull.shape[0]
    for i in range(px.shape[0]):
        for j in range(h):
            a = hull[j]
            b = hull[(j + 1) % h]
            if orient2d(x[a], y[a], x[b], y[b], px[i], py[i]) < 0.0:
                return i
    return -1
