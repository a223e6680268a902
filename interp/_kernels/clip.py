"""Cutting triangles: by a polygon's edges (clipping) and by each other (overlay)."""

from __future__ import annotations

import numpy as np

from interp._kernels import inner, kernel
from interp._kernels.delaunay2d import grow
from interp._kernels.geometry import sort_small
from interp._kernels.polygon import bin_index, inside


@inner
def _ccw(t, v):  # pragma: no cover
    """Write triangle t (3, 2) into v in counter-clockwise order; return v."""
    cw = (t[1, 0] - t[0, 0]) * (t[2, 1] - t[0, 1]) < (t[1, 1] - t[0, 1]) * (t[2, 0] - t[0, 0])
    second, third = (2, 1) if cw else (1, 2)
    for a in range(2):
        v[0, a] = t[0, a]
        v[1, a] = t[second, a]
        v[2, a] = t[third, a]
    return v


@inner
def _put(out, n, tri, c):  # pragma: no cover
    """out[n] = tri[c] for triangles (3, 2), entry by entry (no array assignment to compile)."""
    for i in range(3):
        for a in range(2):
            out[n, i, a] = tri[c, i, a]


@kernel
def classify(tri, lo, h, nx, ny, occupied, seg, row_start, row_members, status):  # pragma: no cover
    """Status of each triangle: 0 outside, 1 inside, 2 an edge bucket meets its bounding box."""
    gx, gy = lo[0] + nx * h, lo[1] + ny * h
    for c in range(tri.shape[0]):
        x0 = min(tri[c, 0, 0], tri[c, 1, 0], tri[c, 2, 0])
        x1 = max(tri[c, 0, 0], tri[c, 1, 0], tri[c, 2, 0])
        y0 = min(tri[c, 0, 1], tri[c, 1, 1], tri[c, 2, 1])
        y1 = max(tri[c, 0, 1], tri[c, 1, 1], tri[c, 2, 1])
        if x1 < lo[0] or x0 > gx or y1 < lo[1] or y0 > gy:
            status[c] = 0
            continue
        i0, i1 = bin_index((x0 - lo[0]) / h, nx), bin_index((x1 - lo[0]) / h, nx)
        j0, j1 = bin_index((y0 - lo[1]) / h, ny), bin_index((y1 - lo[1]) / h, ny)
        hits = occupied[j1 + 1, i1 + 1] - occupied[j0, i1 + 1] - occupied[j1 + 1, i0]
        if hits + occupied[j0, i0] > 0:
            status[c] = 2
        else:
            cx = (tri[c, 0, 0] + tri[c, 1, 0] + tri[c, 2, 0]) / 3.0
            cy = (tri[c, 0, 1] + tri[c, 1, 1] + tri[c, 2, 1]) / 3.0
            status[c] = 1 if inside(cx, cy, lo, h, ny, seg, row_start, row_members) else 0


@inner
def _y_at(x0, y0, x1, y1, x):  # pragma: no cover
    """y of the segment (x0 < x1) at x, exact at its ends."""
    if x <= x0:
        return y0
    if x >= x1:
        return y1
    return y0 + (x - x0) * (y1 - y0) / (x1 - x0)


@inner
def _clip_segment(v, ax, ay, bx, by):  # pragma: no cover
    """The part of segment a-b inside the counter-clockwise triangle v (3, 2)."""
    lo, hi = 0.0, 1.0
    for k in range(3):
        px, py = v[k, 0], v[k, 1]
        ex, ey = v[(k + 1) % 3, 0] - px, v[(k + 1) % 3, 1] - py
        f0 = ex * (ay - py) - ey * (ax - px)
        f1 = ex * (by - py) - ey * (bx - px)
        if f0 < 0.0 and f1 < 0.0:
            return False, 0.0, 0.0, 0.0, 0.0
        if f0 < 0.0:
            lo = max(lo, f0 / (f0 - f1))
        elif f1 < 0.0:
            hi = min(hi, f0 / (f0 - f1))
    if lo >= hi:
        return False, 0.0, 0.0, 0.0, 0.0
    px, py, qx, qy = ax, ay, bx, by
    if lo > 0.0:
        px, py = ax + lo * (bx - ax), ay + lo * (by - ay)
    if hi < 1.0:
        qx, qy = ax + hi * (bx - ax), ay + hi * (by - ay)
    return True, px, py, qx, qy


@inner
def _distinct(a):  # pragma: no cover
    """Sort ``a`` and move its distinct values to the front (numpy's ``unique``); their count."""
    sort_small(a)
    n = 1
    for i in range(1, a.size):
        if a[i] != a[n - 1]:
            a[n] = a[i]
            n += 1
    return n


@kernel
def cut_cells(
    tri, cand, lo, h, nx, ny, start, members, seg, row_start, row_members
):  # pragma: no cover
    """Pieces of the candidate triangles inside the polygon, grouped by candidate.

    Returns the offsets (k + 1,) of each candidate's pieces and the pieces.
    """
    n_edges = seg.shape[0]
    stamp = np.full(n_edges, -1, dtype=np.int64)
    clipped = np.empty((n_edges, 4))
    xs = np.empty(3 + 2 * n_edges)
    ys = np.empty((n_edges + 2, 3))
    at = np.empty(3)
    order = np.empty(n_edges + 2, dtype=np.int64)
    offsets = np.zeros(cand.shape[0] + 1, dtype=np.int64)
    out = np.empty((max(16, 8 * cand.shape[0]), 3, 2))
    n = 0
    v = np.empty((3, 2))
    for kk in range(cand.shape[0]):
        c = cand[kk]
        _ccw(tri[c], v)
        i0 = bin_index((min(v[0, 0], v[1, 0], v[2, 0]) - lo[0]) / h, nx)
        i1 = bin_index((max(v[0, 0], v[1, 0], v[2, 0]) - lo[0]) / h, nx)
        j0 = bin_index((min(v[0, 1], v[1, 1], v[2, 1]) - lo[1]) / h, ny)
        j1 = bin_index((max(v[0, 1], v[1, 1], v[2, 1]) - lo[1]) / h, ny)
        ns, nb = 0, 3
        xs[0], xs[1], xs[2] = v[0, 0], v[1, 0], v[2, 0]
        for j in range(j0, j1 + 1):
            for i in range(i0, i1 + 1):
                b = j * nx + i
                for q in range(start[b], start[b + 1]):
                    e = members[q]
                    if stamp[e] == kk:
                        continue
                    stamp[e] = kk
                    ok, px, py, qx, qy = _clip_segment(
                        v, seg[e, 0], seg[e, 1], seg[e, 2], seg[e, 3]
                    )
                    if not ok:
                        continue
                    xs[nb], xs[nb + 1] = px, qx
                    nb += 2
                    if px == qx:
                        continue
                    if px > qx:
                        px, py, qx, qy = qx, qy, px, py
                    clipped[ns, 0], clipped[ns, 1], clipped[ns, 2], clipped[ns, 3] = px, py, qx, qy
                    ns += 1
        need = 2 if nb == 3 else 2 * (nb - 1) * (ns + 1)
        out = grow(out, n + need)
        if nb == 3:
            cx = (v[0, 0] + v[1, 0] + v[2, 0]) / 3.0
            cy = (v[0, 1] + v[1, 1] + v[2, 1]) / 3.0
            if inside(cx, cy, lo, h, ny, seg, row_start, row_members):
                _put(out, n, tri, c)
                n += 1
            offsets[kk + 1] = n
            continue
        for s in range(_distinct(xs[:nb]) - 1):
            at[0], at[1] = xs[s], xs[s + 1]
            at[2] = 0.5 * (at[0] + at[1])
            # rows of ys: y at the slab's left end, right end and middle of each boundary;
            # row 0 is the triangle's lower side, row 1 its upper side, then the edges
            m = 0
            for k in range(3):
                p, q = k, (k + 1) % 3
                if v[p, 0] > v[q, 0]:
                    p, q = q, p
                if v[p, 0] < at[2] < v[q, 0]:
                    for a in range(3):
                        ys[m, a] = _y_at(v[p, 0], v[p, 1], v[q, 0], v[q, 1], at[a])
                    m += 1
            if m < 2:
                continue
            if ys[0, 2] > ys[1, 2]:
                for a in range(3):
                    ys[0, a], ys[1, a] = ys[1, a], ys[0, a]
            for e in range(ns):
                if clipped[e, 0] < at[2] < clipped[e, 2]:
                    for a in range(3):
                        y = _y_at(clipped[e, 0], clipped[e, 1], clipped[e, 2], clipped[e, 3], at[a])
                        ys[m, a] = min(max(y, ys[0, a]), ys[1, a])
                    m += 1
            # boundaries from bottom to top: lower side, edges by height mid-slab, upper side
            order[0] = 0
            cnt = 1
            for e in range(2, m):
                r = cnt
                while r > 1 and ys[order[r - 1], 2] > ys[e, 2]:
                    order[r] = order[r - 1]
                    r -= 1
                order[r] = e
                cnt += 1
            order[cnt] = 1
            for r in range(cnt):
                bot, top = order[r], order[r + 1]
                h0 = ys[top, 0] - ys[bot, 0]
                h1 = ys[top, 1] - ys[bot, 1]
                if h0 <= 0.0 and h1 <= 0.0:
                    continue
                ym = 0.5 * (ys[bot, 2] + ys[top, 2])
                if not inside(at[2], ym, lo, h, ny, seg, row_start, row_members):
                    continue
                if h1 > 0.0:
                    out[n, 0, 0], out[n, 0, 1] = at[0], ys[bot, 0]
                    out[n, 1, 0], out[n, 1, 1] = at[1], ys[bot, 1]
                    out[n, 2, 0], out[n, 2, 1] = at[1], ys[top, 1]
                    n += 1
                if h0 > 0.0:
                    out[n, 0, 0], out[n, 0, 1] = at[0], ys[bot, 0]
                    out[n, 1, 0], out[n, 1, 1] = at[1], ys[top, 1]
                    out[n, 2, 0], out[n, 2, 1] = at[0], ys[top, 0]
                    n += 1
        offsets[kk + 1] = n
    return offsets, out[:n]


@inner
def _same(p, q):  # pragma: no cover
    """Whether the triangles p and q (3, 2) have the same corners in the same order."""
    for i in range(3):
        if p[i, 0] != q[i, 0] or p[i, 1] != q[i, 1]:
            return False
    return True


@kernel
def assemble(tri, status, offsets, pieces, out, src, whole):  # pragma: no cover
    """Whole inside triangles and the pieces of cut ones, in triangle order.

    A candidate that kept one piece equal to itself (no edge crossed it) is whole.
    """
    n, kk = 0, 0
    for c in range(tri.shape[0]):
        if status[c] == 1:
            _put(out, n, tri, c)
            src[n] = c
            whole[n] = True
            n += 1
        elif status[c] == 2:
            single = offsets[kk + 1] - offsets[kk] == 1
            for q in range(offsets[kk], offsets[kk + 1]):
                _put(out, n, pieces, q)
                src[n] = c
                whole[n] = single and _same(pieces[q], tri[c])
                n += 1
            kk += 1


@inner
def _clip_triangle(subject, v, poly, work):  # pragma: no cover
    """Sutherland-Hodgman: subject triangle clipped by the ccw triangle v; returns the count."""
    n = 3
    for i in range(3):
        poly[i, 0], poly[i, 1] = subject[i, 0], subject[i, 1]
    for k in range(3):
        px, py = v[k, 0], v[k, 1]
        ex, ey = v[(k + 1) % 3, 0] - px, v[(k + 1) % 3, 1] - py
        m = 0
        for i in range(n):
            prev = i - 1 if i > 0 else n - 1
            sx, sy = poly[prev, 0], poly[prev, 1]
            qx, qy = poly[i, 0], poly[i, 1]
            ds = ex * (sy - py) - ey * (sx - px)
            dq = ex * (qy - py) - ey * (qx - px)
            if (ds >= 0.0) != (dq >= 0.0):
                w = ds / (ds - dq)
                work[m, 0], work[m, 1] = sx + w * (qx - sx), sy + w * (qy - sy)
                m += 1
            if dq >= 0.0:
                work[m, 0], work[m, 1] = qx, qy
                m += 1
        n = m
        for i in range(n):
            poly[i, 0], poly[i, 1] = work[i, 0], work[i, 1]
        if n < 3:
            return 0
    return n


@kernel
def intersect(a, b, lo, h, shape, start, members):  # pragma: no cover
    """Fan triangles of every non-empty intersection of a cell of a with a cell of b."""
    nb = b.shape[0]
    box = np.empty((nb, 4))
    for c in range(nb):
        box[c, 0], box[c, 1] = (
            min(b[c, 0, 0], b[c, 1, 0], b[c, 2, 0]),
            max(b[c, 0, 0], b[c, 1, 0], b[c, 2, 0]),
        )
        box[c, 2], box[c, 3] = (
            min(b[c, 0, 1], b[c, 1, 1], b[c, 2, 1]),
            max(b[c, 0, 1], b[c, 1, 1], b[c, 2, 1]),
        )
    stamp = np.full(nb, -1, dtype=np.int64)
    poly = np.empty((32, 2))
    work = np.empty((32, 2))
    u = np.empty((3, 2))  # the cells of a and b intersected, counter-clockwise
    w = np.empty((3, 2))
    out = np.empty((4 * a.shape[0] + 16, 3, 2))
    par = np.empty((out.shape[0], 2), dtype=np.int64)
    n = 0
    for c in range(a.shape[0]):
        _ccw(a[c], u)
        x0, x1 = min(u[0, 0], u[1, 0], u[2, 0]), max(u[0, 0], u[1, 0], u[2, 0])
        y0, y1 = min(u[0, 1], u[1, 1], u[2, 1]), max(u[0, 1], u[1, 1], u[2, 1])
        i0 = int(max(np.floor((x0 - lo[0]) / h[0]), 0.0))
        i1 = int(min(np.floor((x1 - lo[0]) / h[0]), shape[0] - 1.0))
        j0 = int(max(np.floor((y0 - lo[1]) / h[1]), 0.0))
        j1 = int(min(np.floor((y1 - lo[1]) / h[1]), shape[1] - 1.0))
        for i in range(i0, i1 + 1):
            for j in range(j0, j1 + 1):
                bucket = i * shape[1] + j
                for q in range(start[bucket], start[bucket + 1]):
                    d = members[q]
                    if stamp[d] == c:
                        continue
                    stamp[d] = c
                    if box[d, 0] > x1 or box[d, 1] < x0 or box[d, 2] > y1 or box[d, 3] < y0:
                        continue
                    k = _clip_triangle(u, _ccw(b[d], w), poly, work)
                    if k < 3:
                        continue
                    out = grow(out, n + k - 2)
                    par = grow(par, n + k - 2)
                    for f in range(1, k - 1):
                        for e in range(2):
                            out[n, 0, e] = poly[0, e]
                            out[n, 1, e] = poly[f, e]
                            out[n, 2, e] = poly[f + 1, e]
                        par[n, 0], par[n, 1] = c, d
                        n += 1
    return out[:n], par[:n]
