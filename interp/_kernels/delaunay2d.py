"""Incremental 2D Delaunay triangulation and constraint insertion (numba kernels).

Data structure: triangles as int32 rows ``tri[t] = (a, b, c)``, counter-clockwise,
with ``nbr[t, k]`` the triangle across the edge opposite ``tri[t, k]``.  The hull
is closed by ghost triangles ``(u, v, n)`` through a vertex at infinity with index
``n`` (always in the last slot), one per hull edge, so that every triangle has
three neighbours.  Every decision is taken by the exact predicates of
:mod:`interp._kernels.predicates`.

Insertion is Bowyer-Watson: the point is located by a visibility walk from the
last triangle made, the triangles whose open circumcircle holds it (for a ghost:
the open outer half-plane and the open hull edge) form the cavity, and the
cavity is replaced by the fan from the point to its boundary.  A point on a
circumcircle does not conflict with that triangle: that is the tie rule for
cocircular input, which makes the result a valid Delaunay triangulation fixed
by the insertion order.

Constraints (segments between vertices) are inserted by Sloan's method: the
edges the segment crosses are flipped until none is left, a vertex lying
exactly on the segment splitting it; then Lawson flips make every
unconstrained edge locally Delaunay.
"""

from __future__ import annotations

import numba
import numpy as np

from interp._kernels.predicates import incircle, orient2d

# status codes returned by the kernels
OK = 0
COLLINEAR = 1  # every point on one line
CROSSING = 2  # a segment crosses a constraint edge
LOST = 3  # a segment end could not be reached (not a vertex)


@numba.njit(cache=True, nogil=True)
def _slot(tri, t, v):  # pragma: no cover
    """Position of vertex v in triangle t."""
    if tri[t, 0] == v:
        return 0
    if tri[t, 1] == v:
        return 1
    return 2


@numba.njit(cache=True, nogil=True)
def _between(x, y, u, v, p):  # pragma: no cover
    """For p collinear with u-v: whether p lies strictly inside the segment."""
    if x[u] != x[v]:
        return min(x[u], x[v]) < x[p] < max(x[u], x[v])
    return min(y[u], y[v]) < y[p] < max(y[u], y[v])


@numba.njit(cache=True, nogil=True)
def _conflict(x, y, tri, t, p, inf):  # pragma: no cover
    """Whether p lies in the open circumcircle of triangle t (ghosts: open outer
    half-plane or open hull edge)."""
    a = tri[t, 0]
    b = tri[t, 1]
    c = tri[t, 2]
    if c == inf:
        o = orient2d(x[a], y[a], x[b], y[b], x[p], y[p])
        if o > 0.0:
            return True
        return o == 0.0 and _between(x, y, a, b, p)
    return incircle(x[a], y[a], x[b], y[b], x[c], y[c], x[p], y[p]) > 0.0


@numba.njit(cache=True, nogil=True)
def _grow(a, n):  # pragma: no cover
    """a with room for at least n entries."""
    if n <= a.shape[0]:
        return a
    b = np.empty((2 * n,) + a.shape[1:], dtype=a.dtype)
    b[: a.shape[0]] = a
    return b


@numba.njit(cache=True, nogil=True)
def _first_triangle(x, y, tri, nbr, a, b, c, inf):  # pragma: no cover
    """Triangle 0 = (a, b, c) counter-clockwise and its three ghosts 1..3."""
    if orient2d(x[a], y[a], x[b], y[b], x[c], y[c]) < 0.0:
        a, b = b, a
    tri[0, 0], tri[0, 1], tri[0, 2] = a, b, c
    tri[1, 0], tri[1, 1], tri[1, 2] = b, a, inf
    tri[2, 0], tri[2, 1], tri[2, 2] = c, b, inf
    tri[3, 0], tri[3, 1], tri[3, 2] = a, c, inf
    for t in range(4):  # link the edges u->v of one to v->u of another
        for k in range(3):
            u = tri[t, (k + 1) % 3]
            v = tri[t, (k + 2) % 3]
            for s in range(4):
                for m in range(3):
                    if tri[s, (m + 1) % 3] == v and tri[s, (m + 2) % 3] == u:
                        nbr[t, k] = s


@numba.njit(cache=True, nogil=True)
def delaunay(x, y):  # pragma: no cover
    """Delaunay triangulation of distinct points, inserted in the given order.

    Returns ``(tri, nbr, ntri, same, status)``: the first ``ntri`` rows of
    ``tri``/``nbr`` are the triangles, ghosts included (``tri[t, 2] == n``);
    ``same[i]`` is the vertex equal to point i when i was not inserted for
    that reason, else -1.
    """
    n = x.shape[0]
    inf = n
    cap = 2 * n + 8
    tri = np.empty((cap, 3), dtype=np.int32)
    nbr = np.empty((cap, 3), dtype=np.int32)
    mark = np.zeros(cap, dtype=np.int32)
    start_of = np.empty(n + 1, dtype=np.int32)
    same = np.full(n, -1, dtype=np.int32)
    cav = np.empty(64, dtype=np.int32)
    bd = np.empty((64, 4), dtype=np.int32)  # boundary edge a, b, outside triangle, its slot
    end_of = np.empty(64, dtype=np.int32)
    third = -1
    for k in range(2, n):
        if orient2d(x[0], y[0], x[1], y[1], x[k], y[k]) != 0.0:
            third = k
            break
    if third < 0:
        return tri, nbr, 0, same, COLLINEAR
    _first_triangle(x, y, tri, nbr, 0, 1, third, inf)
    ntri = 4
    last = 0
    for i in range(2, n):
        if i == third:
            continue
        px = x[i]
        py = y[i]
        # visibility walk from the last triangle made
        t = last
        came = -1
        while tri[t, 2] != inf:
            moved = False
            for k in range(3):
                nb = nbr[t, k]
                if nb == came:
                    continue
                a = tri[t, (k + 1) % 3]
                b = tri[t, (k + 2) % 3]
                if orient2d(x[a], y[a], x[b], y[b], px, py) < 0.0:
                    came = t
                    t = nb
                    moved = True
                    break
            if not moved:
                break
        if tri[t, 2] != inf:
            for k in range(3):
                v = tri[t, k]
                if x[v] == px and y[v] == py:
                    same[i] = v
            if same[i] >= 0:
                continue
        # cavity: triangles in conflict, found breadth-first from t
        stamp = i + 1
        mark[t] = stamp
        cav[0] = t
        ncav = 1
        nbd = 0
        j = 0
        while j < ncav:
            c = cav[j]
            j += 1
            for k in range(3):
                nb = nbr[c, k]
                if mark[nb] == stamp:
                    continue
                if _conflict(x, y, tri, nb, i, inf):
                    mark[nb] = stamp
                    if ncav == cav.shape[0]:
                        cav = _grow(cav, ncav + 1)
                    cav[ncav] = nb
                    ncav += 1
                else:
                    if nbd == bd.shape[0]:
                        bd = _grow(bd, nbd + 1)
                    bd[nbd, 0] = tri[c, (k + 1) % 3]
                    bd[nbd, 1] = tri[c, (k + 2) % 3]
                    bd[nbd, 2] = nb
                    bd[nbd, 3] = _slot(nbr, nb, c)
                    nbd += 1
        # the fan: cavity slots reused, two more appended
        if nbd > cav.shape[0]:
            cav = _grow(cav, nbd)
        if nbd > end_of.shape[0]:
            end_of = _grow(end_of, nbd)
        for q in range(ncav, nbd):
            cav[q] = ntri
            ntri += 1
        for q in range(nbd):
            s = cav[q]
            a = bd[q, 0]
            b = bd[q, 1]
            nb = bd[q, 2]
            # slots of i, a, b in the new triangle (a ghost keeps inf last)
            if a == inf:
                tri[s, 0], tri[s, 1], tri[s, 2] = b, i, inf
                bd[q, 0], bd[q, 1], bd[q, 2] = 1, 2, 0
            elif b == inf:
                tri[s, 0], tri[s, 1], tri[s, 2] = i, a, inf
                bd[q, 0], bd[q, 1], bd[q, 2] = 0, 1, 2
            else:
                tri[s, 0], tri[s, 1], tri[s, 2] = a, b, i
                bd[q, 0], bd[q, 1], bd[q, 2] = 2, 0, 1
                last = s
            nbr[s, bd[q, 0]] = nb
            nbr[nb, bd[q, 3]] = s
            start_of[a] = q
            end_of[q] = b
        for q in range(nbd):
            s = cav[q]
            q2 = start_of[end_of[q]]
            s2 = cav[q2]
            nbr[s, bd[q, 1]] = s2  # across b-i, opposite a
            nbr[s2, bd[q2, 2]] = s  # across i-b of the next, opposite its end
    return tri, nbr, ntri, same, OK


@numba.njit(cache=True, nogil=True)
def cells_of(tri, keep, label):  # pragma: no cover
    """The triangles ``t`` with ``keep[t]`` as int64 rows of ``label[vertex]``."""
    m = 0
    for t in range(keep.shape[0]):
        if keep[t]:
            m += 1
    out = np.empty((m, 3), dtype=np.int64)
    m = 0
    for t in range(keep.shape[0]):
        if keep[t]:
            for k in range(3):
                out[m, k] = label[tri[t, k]]
            m += 1
    return out


@numba.njit(cache=True, nogil=True)
def flagged_edges(tri, nbr, cons, ntri, label):  # pragma: no cover
    """Each flagged edge once: (e, 2) int64 rows of ``label[vertex]`` and the flags."""
    m = 0
    for t in range(ntri):
        for k in range(3):
            if cons[t, k] != 0 and t < nbr[t, k]:
                m += 1
    out = np.empty((m, 2), dtype=np.int64)
    flags = np.empty(m, dtype=np.int8)
    m = 0
    for t in range(ntri):
        for k in range(3):
            if cons[t, k] != 0 and t < nbr[t, k]:
                out[m, 0] = label[tri[t, (k + 1) % 3]]
                out[m, 1] = label[tri[t, (k + 2) % 3]]
                flags[m] = cons[t, k]
                m += 1
    return out, flags


@numba.njit(cache=True, nogil=True)
def hilbert_keys(x, y, lo_x, lo_y, scale, order):  # pragma: no cover
    """Index of each point along a Hilbert curve of 2**order x 2**order cells
    laid over the box from (lo_x, lo_y) with cell count per unit ``scale``."""
    n = x.shape[0]
    side = 1 << order
    out = np.empty(n, dtype=np.int64)
    for i in range(n):
        cx = min(max(int((x[i] - lo_x) * scale), 0), side - 1)
        cy = min(max(int((y[i] - lo_y) * scale), 0), side - 1)
        d = 0
        s = side >> 1
        while s > 0:
            rx = 1 if (cx & s) > 0 else 0
            ry = 1 if (cy & s) > 0 else 0
            d += s * s * ((3 * rx) ^ ry)
            if ry == 0:
                if rx == 1:
                    cx = side - 1 - cx
                    cy = side - 1 - cy
                cx, cy = cy, cx
            s >>= 1
        out[i] = d
    return out


@numba.njit(cache=True, nogil=True)
def vertex_triangles(tri, ntri, n):  # pragma: no cover
    """A triangle holding each vertex (the vertex at infinity included)."""
    vt = np.full(n + 1, -1, dtype=np.int32)
    for t in range(ntri):
        for k in range(3):
            vt[tri[t, k]] = t
    return vt


@numba.njit(cache=True, nogil=True)
def _find_edge(tri, nbr, vt, q, r):  # pragma: no cover
    """A triangle with edge q-r and the slot opposite it, by turning around q;
    (-1, -1) when there is no such edge."""
    t = vt[q]
    start = t
    while True:
        kq = _slot(tri, t, q)
        if tri[t, (kq + 1) % 3] == r:
            return t, (kq + 2) % 3
        if tri[t, (kq + 2) % 3] == r:
            return t, (kq + 1) % 3
        t = nbr[t, (kq + 1) % 3]
        if t == start:
            return -1, -1


@numba.njit(cache=True, nogil=True)
def _mark(nbr, cons, t, k, kind):  # pragma: no cover
    """Flag the edge opposite slot k of t, on both of its sides."""
    cons[t, k] |= kind
    u = nbr[t, k]
    cons[u, _slot(nbr, u, t)] |= kind


@numba.njit(cache=True, nogil=True)
def _flip(tri, nbr, cons, vt, t, k):  # pragma: no cover
    """Replace the edge opposite slot k of t by the other diagonal of its quad:
    t = (p, v1, v2), u = (s, v2, v1) become t = (p, v1, s), u = (p, s, v2)."""
    p = tri[t, k]
    v1 = tri[t, (k + 1) % 3]
    v2 = tri[t, (k + 2) % 3]
    u = nbr[t, k]
    m = _slot(nbr, u, t)
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
    nbr[n_ur, _slot(nbr, n_ur, u)] = t
    nbr[n_tq, _slot(nbr, n_tq, t)] = u
    vt[p] = t
    vt[v1] = t
    vt[s] = u
    vt[v2] = u


@numba.njit(cache=True, nogil=True)
def _opposite_sides(o1, o2):  # pragma: no cover
    return (o1 > 0.0 and o2 < 0.0) or (o1 < 0.0 and o2 > 0.0)


@numba.njit(cache=True, nogil=True)
def _push(stack, n, q, r):  # pragma: no cover
    stack = _grow(stack, n + 1)
    stack[n, 0] = q
    stack[n, 1] = r
    return stack, n + 1


@numba.njit(cache=True, nogil=True)
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
            ka = _slot(tri, t, a)
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
                if oq == 0.0 and _between(x, y, a, b, q):
                    _mark(nbr, cons, t, (ka + 2) % 3, kind)
                    a = q
                    break
                if oq < 0.0 and orient2d(x[a], y[a], x[b], y[b], x[r], y[r]) > 0.0:
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
        work, nwork = _push(work, 0, q, r)
        prev = t
        u = nbr[t, ka]
        end = b
        while True:
            s = tri[u, _slot(nbr, u, prev)]
            if s == b:
                break
            o = orient2d(x[a], y[a], x[b], y[b], x[s], y[s])
            if o == 0.0:
                end = s
                break
            if o < 0.0:
                ks = _slot(tri, u, q)
                q = s
            else:
                ks = _slot(tri, u, r)
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
            t, k = _find_edge(tri, nbr, vt, q, r)
            p = tri[t, k]
            u = nbr[t, k]
            s = tri[u, _slot(nbr, u, t)]
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


@numba.njit(cache=True, nogil=True)
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
    nfresh = 0
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
        t, k = _find_edge(tri, nbr, vt, q, r)
        if t < 0 or cons[t, k] != 0:
            continue
        u = nbr[t, k]
        if tri[t, 2] == inf or tri[u, 2] == inf:
            continue
        p = tri[t, k]
        v1 = tri[t, (k + 1) % 3]
        v2 = tri[t, (k + 2) % 3]
        s = tri[u, _slot(nbr, u, t)]
        if incircle(x[p], y[p], x[v1], y[v1], x[v2], y[v2], x[s], y[s]) > 0.0:
            _flip(tri, nbr, cons, vt, t, k)
            fresh, nfresh = _push(fresh, nfresh, v1, s)
            fresh, nfresh = _push(fresh, nfresh, s, v2)
            fresh, nfresh = _push(fresh, nfresh, v2, p)
            fresh, nfresh = _push(fresh, nfresh, p, v1)
    return cons, OK, -1


@numba.njit(cache=True, nogil=True)
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
        first = _grow(first, nreg + 1)
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
                    stack = _grow(stack, n + 1)
                stack[n] = u
                n += 1
        nreg += 1
    return label, first[:nreg]


@numba.njit(cache=True, nogil=True)
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
                    overlap = _grow(overlap, no + 1)
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
            cross = _grow(cross, nc + 1)
            where = _grow(where, nc + 1)
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


@numba.njit(cache=True, nogil=True)
def _collinear_overlap(ax, ay, bx, by, i, j):  # pragma: no cover
    """For collinear segments i and j: whether they share more than a point."""
    if ax[i] != bx[i] or ax[j] != bx[j]:
        lo = max(min(ax[i], bx[i]), min(ax[j], bx[j]))
        hi = min(max(ax[i], bx[i]), max(ax[j], bx[j]))
    else:
        lo = max(min(ay[i], by[i]), min(ay[j], by[j]))
        hi = min(max(ay[i], by[i]), max(ay[j], by[j]))
    return lo < hi


@numba.njit(cache=True, nogil=True)
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


@numba.njit(cache=True, nogil=True)
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
