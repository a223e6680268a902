"""Leave-one-out on a constrained 2D triangulation: each star re-triangulated as a polygon."""

from __future__ import annotations

import numpy as np

from interp._kernels import inner, kernel
from interp._kernels.predicates import incircle, orient2d
from interp._kernels.validate import longest, star_gradients

OK = 0  # status of each point: predicted (or outside the others' mesh, or masked)
ON_LINE = 1  # at a bend, an end or a crossing of the constraints: not computed
NO_FAN = 2  # inside the data, but its cells are not one fan (a thin cell was dropped)


@kernel
def leave_one_out2d(
    x,
    v,
    cells,
    kept,
    vc_ptr,
    vc_idx,
    ptr,
    idx,
    max_edge,
    cptr,
    cidx,
    fixed,
    plain,
    pvc_ptr,
    pvc_idx,
    dep_ptr,
    dep_idx,
    tri,
    bary,
    nodal,
    status,
    grad,
):  # pragma: no cover
    """For every data vertex p: the cell holding p once p is removed from the
    constrained triangulation ``cells``, its corner values and (P2) gradients.

    The star of p is re-filled by the constrained Delaunay triangulation of its
    link polygon (split at p's two constraint neighbours when p lies on a
    line that runs straight through it).  ``cptr, cidx``: the constraint neighbours of each
    node; ``fixed``: data vertices whose removal changes the constraint input
    (a line end, a line vertex with its own value, a bend).  ``plain`` is the plain
    Delaunay triangulation of the data vertices (``pvc_*`` its vertex cells);
    the nodes ``dep_idx[dep_ptr[p]:dep_ptr[p + 1]]`` are valued from that
    surface through p, and are valued again from the others for p's
    prediction.  Writes ``tri[p]`` (-1 when there is none), ``bary[p]``,
    ``nodal[p]`` (the corner values), ``status[p]`` and, when ``grad`` is an
    array (P2), ``grad[p]``.  ``v`` is changed during the loop and restored.
    """
    n = fixed.size
    c = v.shape[1]
    mark = np.full(x.shape[0], -1, dtype=np.int64)
    members = np.empty(x.shape[0], dtype=np.int64)
    stamp = 0
    for p in range(n):
        ring, k, closed = _ring(cells, vc_idx[vc_ptr[p] : vc_ptr[p + 1]], p)
        if k < 2 or not _ring(plain, pvc_idx[pvc_ptr[p] : pvc_ptr[p + 1]], p)[2]:
            continue  # outside the mesh, or on the hull of the data
        cdeg = cptr[p + 1] - cptr[p]
        if fixed[p] or not (cdeg == 0 or cdeg == 2):
            status[p] = ON_LINE
            continue
        split = np.full(2, -1, dtype=np.int64)
        if cdeg == 2:
            a, b = cidx[cptr[p]], cidx[cptr[p] + 1]
            for i in range(k):
                if ring[i] == a or ring[i] == b:
                    split[0 if split[0] < 0 else 1] = i
            if split[1] < 0 or (not closed and (split[0] != 0 or split[1] != k - 1)):
                status[p] = NO_FAN
                continue
        elif not closed:
            status[p] = NO_FAN
            continue
        new, n_new = _fill(x, ring, k, closed, split)
        if n_new < 0:
            status[p] = ON_LINE
            continue
        deps = dep_idx[dep_ptr[p] : dep_ptr[p + 1]]
        saved = np.empty((deps.size, c))
        for j in range(deps.size):
            saved[j] = v[deps[j]]
        if deps.size and not _revalue(x, v, plain, pvc_idx[pvc_ptr[p] : pvc_ptr[p + 1]], p, deps):
            _restore(v, deps, saved)
            status[p] = NO_FAN
            continue
        cell = _holding(x, ring, new, n_new, p)
        if cell >= 0 and longest(x, ring, new[cell]) <= max_edge:
            _barycentric(x, ring, new[cell], p, bary[p])
            for i in range(3):
                tri[p, i] = ring[new[cell, i]]
                nodal[p, i] = v[tri[p, i]]
            if grad is not None:
                stamp = star_gradients(
                    x,
                    v,
                    cells,
                    kept,
                    vc_ptr,
                    vc_idx,
                    ptr,
                    idx,
                    max_edge,
                    p,
                    ring,
                    k,
                    new,
                    n_new,
                    tri[p],
                    mark,
                    stamp,
                    members,
                    grad[p],
                )
        _restore(v, deps, saved)


@inner
def _ring(cells, star, p):  # pragma: no cover
    """The link of p in counter-clockwise order around it, its length and
    whether it is closed (k cells) or a chain (k - 1 cells).  Length 0 when the
    star is not one fan."""
    m = star.size
    ring = np.empty(m + 1, dtype=np.int64)
    if m == 0:
        return ring, 0, True
    first = np.empty(m, dtype=np.int64)
    second = np.empty(m, dtype=np.int64)
    for s in range(m):
        for t in range(3):
            if cells[star[s], t] == p:
                first[s] = cells[star[s], (t + 1) % 3]
                second[s] = cells[star[s], (t + 2) % 3]
    start = 0
    closed = True
    for s in range(m):
        if not _contains(second, first[s]):
            start, closed = s, False
            break
    ring[0] = first[start]
    k = 1
    current = start
    while True:
        nxt = second[current]
        if closed and nxt == ring[0]:
            break
        ring[k] = nxt
        k += 1
        current = _find(first, nxt)
        if current < 0:
            break
        if k > m:
            return ring, 0, True
    if k != (m if closed else m + 1):
        return ring, 0, True
    return ring, k, closed


@inner
def _contains(arr, value):  # pragma: no cover
    return _find(arr, value) >= 0


@inner
def _find(arr, value):  # pragma: no cover
    """Position of ``value`` in ``arr``, -1 when absent."""
    for i in range(arr.size):
        if arr[i] == value:
            return i
    return -1


@inner
def _fill(x, ring, k, closed, split):  # pragma: no cover
    """Constrained Delaunay triangles (positions in ``ring``) filling the star.

    The polygon is the ring (a chain is closed by the segment from its last
    vertex to its first); when ``split`` holds two positions the ring is cut
    into two polygons along the segment between them, which stays an edge.
    Returns the triangles and their count (-1 when a polygon cannot be
    triangulated).
    """
    out = np.empty((k, 3), dtype=np.int64)
    if split[0] < 0 or not closed:
        poly = np.arange(k)
        count = _polygon(x, ring, poly, out, 0)
        return out, count
    i, j = split[0], split[1]
    count = _polygon(x, ring, np.arange(i, j + 1), out, 0)
    if count < 0:
        return out, count
    rest = np.empty(k - (j - i) + 1, dtype=np.int64)
    for t in range(rest.size):
        rest[t] = (j + t) % k
    return out, _polygon(x, ring, rest, out, count)


@inner
def _polygon(x, ring, poly, out, count):  # pragma: no cover
    """Append the constrained Delaunay triangulation of the simple polygon
    ``ring[poly]`` (counter-clockwise) to ``out`` from row ``count``: ears
    clipped, then Lawson flips of its inner edges until each is locally
    Delaunay (exact predicates).  Returns the new count, -1 on failure."""
    m = poly.size
    if m < 3:
        return -1
    nxt = np.empty(m, dtype=np.int64)
    prv = np.empty(m, dtype=np.int64)
    for i in range(m):
        nxt[i] = (i + 1) % m
        prv[i] = (i - 1) % m
    start = count
    left, i, tried = m, 0, 0
    while left > 3:
        a, b = prv[i], nxt[i]
        if _ear(x, ring, poly, nxt, a, i, b):
            out[count, 0], out[count, 1], out[count, 2] = poly[a], poly[i], poly[b]
            count += 1
            nxt[a], prv[b] = b, a
            left -= 1
            i, tried = a, 0
        else:
            i = b
            tried += 1
            if tried > left:
                return -1
    a, b = prv[i], nxt[i]
    if _orient(x, ring, poly[a], poly[i], poly[b]) <= 0.0:
        return -1
    out[count, 0], out[count, 1], out[count, 2] = poly[a], poly[i], poly[b]
    count += 1
    _flip(x, ring, out, start, count)
    return count


@inner
def _ear(x, ring, poly, nxt, a, i, b):  # pragma: no cover
    """Whether the corner a, i, b of the remaining polygon is convex and holds
    no other remaining vertex (closed triangle)."""
    pa, pi, pb = poly[a], poly[i], poly[b]
    if _orient(x, ring, pa, pi, pb) <= 0.0:
        return False
    j = nxt[b]
    while j != a:
        q = poly[j]
        if (
            _orient(x, ring, pa, pi, q) >= 0.0
            and _orient(x, ring, pi, pb, q) >= 0.0
            and _orient(x, ring, pb, pa, q) >= 0.0
        ):
            return False
        j = nxt[j]
    return True


@inner
def _flip(x, ring, out, start, count):  # pragma: no cover
    """Lawson flips over the edges shared by rows start..count of ``out``."""
    changed = True
    while changed:
        changed = False
        for s in range(start, count):
            for e in range(3):
                a, b, c = out[s, e], out[s, (e + 1) % 3], out[s, (e + 2) % 3]
                for t in range(start, count):
                    if t == s:
                        continue
                    f = _opposite(out, t, b, a)
                    if f < 0:
                        continue
                    d = out[t, f]
                    ga, gb, gc, gd = ring[a], ring[b], ring[c], ring[d]
                    inside = incircle(
                        x[ga, 0],
                        x[ga, 1],
                        x[gb, 0],
                        x[gb, 1],
                        x[gc, 0],
                        x[gc, 1],
                        x[gd, 0],
                        x[gd, 1],
                    )
                    if inside > 0.0:
                        out[s, 0], out[s, 1], out[s, 2] = a, d, c
                        out[t, 0], out[t, 1], out[t, 2] = d, b, c
                        changed = True
                    break
                if changed:
                    break
            if changed:
                break


@inner
def _opposite(out, t, a, b):  # pragma: no cover
    """Position in row t of the vertex after the directed edge a -> b, -1 if t lacks it."""
    for e in range(3):
        if out[t, e] == a and out[t, (e + 1) % 3] == b:
            return (e + 2) % 3
    return -1


@inner
def _orient(x, ring, a, b, c):  # pragma: no cover
    ga, gb, gc = ring[a], ring[b], ring[c]
    return orient2d(x[ga, 0], x[ga, 1], x[gb, 0], x[gb, 1], x[gc, 0], x[gc, 1])


@inner
def _holding(x, ring, new, n_new, p):  # pragma: no cover
    """The first of the new triangles whose closed area holds node p, -1 if none."""
    for s in range(n_new):
        a, b, c = ring[new[s, 0]], ring[new[s, 1]], ring[new[s, 2]]
        if (
            orient2d(x[a, 0], x[a, 1], x[b, 0], x[b, 1], x[p, 0], x[p, 1]) >= 0.0
            and orient2d(x[b, 0], x[b, 1], x[c, 0], x[c, 1], x[p, 0], x[p, 1]) >= 0.0
            and orient2d(x[c, 0], x[c, 1], x[a, 0], x[a, 1], x[p, 0], x[p, 1]) >= 0.0
        ):
            return s
    return -1


@inner
def _barycentric(x, ring, corners, p, lam):  # pragma: no cover
    """Barycentric coordinates of node p in the triangle ``ring[corners]``, from
    coordinates relative to p."""
    a, b, c = ring[corners[0]], ring[corners[1]], ring[corners[2]]
    ax, ay = x[a, 0] - x[p, 0], x[a, 1] - x[p, 1]
    bx, by = x[b, 0] - x[p, 0], x[b, 1] - x[p, 1]
    cx, cy = x[c, 0] - x[p, 0], x[c, 1] - x[p, 1]
    la, lb, lc = bx * cy - by * cx, cx * ay - cy * ax, ax * by - ay * bx
    total = la + lb + lc
    lam[0], lam[1], lam[2] = la / total, lb / total, lc / total


@inner
def _revalue(x, v, plain, star, p, deps):  # pragma: no cover
    """Set the values of the nodes ``deps`` from the plain Delaunay surface of
    the data without p: its star re-filled, each node located in it (in the
    triangle it is least outside of, when rounding put it outside them all).
    False when p's star is not closed."""
    ring, k, closed = _ring(plain, star, p)
    if k < 3 or not closed:
        return False
    split = np.full(2, -1, dtype=np.int64)
    new, n_new = _fill(x, ring, k, True, split)
    if n_new < 0:
        return False
    lam = np.empty(3)
    for q in deps:
        cell = _holding(x, ring, new, n_new, q)
        if cell < 0:  # rounded just outside (a point where the boundary meets the hull)
            deepest = -np.inf
            for s in range(n_new):
                _barycentric(x, ring, new[s], q, lam)
                if lam.min() > deepest:
                    cell, deepest = s, lam.min()
        _barycentric(x, ring, new[cell], q, lam)
        for e in range(v.shape[1]):
            v[q, e] = 0.0
            for i in range(3):
                v[q, e] += lam[i] * v[ring[new[cell, i]], e]
    return True


@inner
def _restore(v, deps, saved):  # pragma: no cover
    for j in range(deps.size):
        v[deps[j]] = saved[j]
