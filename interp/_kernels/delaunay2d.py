"""Incremental 2D Delaunay triangulation (numba kernels).

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

Constraints are inserted by :mod:`interp._kernels.constrain2d`.
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
def slot(tri, t, v):  # pragma: no cover
    """Position of vertex v in triangle t."""
    if tri[t, 0] == v:
        return 0
    if tri[t, 1] == v:
        return 1
    return 2


@numba.njit(cache=True, nogil=True)
def between(x, y, u, v, p):  # pragma: no cover
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
        return o == 0.0 and between(x, y, a, b, p)
    return incircle(x[a], y[a], x[b], y[b], x[c], y[c], x[p], y[p]) > 0.0


@numba.njit(cache=True, nogil=True)
def grow(a, n):  # pragma: no cover
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
def first_triangle(x, y):  # pragma: no cover
    """The state of an insertion: the triangle of points 0, 1 and the first point
    off their line, and room for the triangulation of all the points.

    Returns ``(tri, nbr, mark, start_of, same, third)``; ``third`` is -1 when
    every point is on one line (then nothing is set up).  Points 2.. are then
    inserted in order by :func:`insert`, in one call or in consecutive slices.
    """
    n = x.shape[0]
    cap = 2 * n + 8
    tri = np.empty((cap, 3), dtype=np.int32)
    nbr = np.empty((cap, 3), dtype=np.int32)
    mark = np.zeros(cap, dtype=np.int32)
    start_of = np.empty(n + 1, dtype=np.int32)
    same = np.full(n, -1, dtype=np.int32)
    third = -1
    for k in range(2, n):
        if orient2d(x[0], y[0], x[1], y[1], x[k], y[k]) != 0.0:
            third = k
            break
    if third >= 0:
        _first_triangle(x, y, tri, nbr, 0, 1, third, n)
    return tri, nbr, mark, start_of, same, third


@numba.njit(cache=True, nogil=True)
def insert(x, y, tri, nbr, mark, start_of, same, third, ntri, last, lo, hi):  # pragma: no cover
    """Insert points ``lo..hi-1`` (point ``third`` is already in) into the state
    of :func:`first_triangle`; returns ``(ntri, last)`` to pass to the next slice
    (4 and 0 for the first).

    The first ``ntri`` rows of ``tri``/``nbr`` are the triangles, ghosts
    included (``tri[t, 2] == n``); ``same[i]`` is set to the vertex equal to
    point i when i was not inserted for that reason.  The result does not
    depend on how the points are cut into slices.
    """
    n = x.shape[0]
    inf = n
    cav = np.empty(64, dtype=np.int32)
    bd = np.empty((64, 4), dtype=np.int32)  # boundary edge a, b, outside triangle, its slot
    end_of = np.empty(64, dtype=np.int32)
    for i in range(lo, hi):
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
                        cav = grow(cav, ncav + 1)
                    cav[ncav] = nb
                    ncav += 1
                else:
                    if nbd == bd.shape[0]:
                        bd = grow(bd, nbd + 1)
                    bd[nbd, 0] = tri[c, (k + 1) % 3]
                    bd[nbd, 1] = tri[c, (k + 2) % 3]
                    bd[nbd, 2] = nb
                    bd[nbd, 3] = slot(nbr, nb, c)
                    nbd += 1
        # the fan: cavity slots reused, two more appended
        if nbd > cav.shape[0]:
            cav = grow(cav, nbd)
        if nbd > end_of.shape[0]:
            end_of = grow(end_of, nbd)
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
    return ntri, last


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
