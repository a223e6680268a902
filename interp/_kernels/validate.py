"""Leave-one-out: the cavity left by each removed point and the prediction there."""

from __future__ import annotations

import numpy as np

from interp._geometry import EMPTY, FLAT, TOLERANCE
from interp._kernels import inner, kernel
from interp._kernels.delaunay2d import grow
from interp._kernels.fit import node_gradient
from interp._kernels.geometry import inverse_into, sort_small


@kernel
def leave_one_out(
    x, v, cells, kept, vc_ptr, vc_idx, ptr, idx, max_edge, tri, bary, grad, lo, hi, scratch_n, stamp
):  # pragma: no cover
    """For every vertex p in lo..hi-1: the cell of Delaunay(link of p) holding p, and (P2)
    corner gradients.

    Writes ``tri[p]`` (vertex ids, left -1 when p is outside its link's hull
    or the cell is masked) and ``bary[p]``; when ``grad`` is an array (P2),
    the recovered gradients at the corners of that cell with p removed.  With
    ``grad=None`` (P1) numba prunes the gradient branch at compile time, so
    the P1 specialisation compiles none of the gradient kernels.

    ``scratch_n`` (4, n) int64 (row 0 all -1, row 1 zeros) and ``stamp`` (0 at
    first) carry the state from one slice of vertices to the next; returns the
    ``stamp`` for the next slice.  Every vertex is done alike whatever the slices.
    """
    n, d = x.shape
    r = d + 1
    mark = scratch_n[0]
    local = scratch_n[1]
    link = scratch_n[2]
    members = scratch_n[3]
    combo = np.empty(r, dtype=np.int64)
    lam = np.empty(r)
    scratch = np.empty(r)
    best_lam = np.empty(r)
    best = np.empty(r, dtype=np.int64)
    face = np.empty(d, dtype=np.int64)
    verts = np.empty((r, d))
    inv = np.empty((d, d))
    for p in range(lo, hi):
        stamp += 1
        mark[p] = stamp
        k = 0
        for j in range(vc_ptr[p], vc_ptr[p + 1]):
            for t in range(r):
                q = cells[vc_idx[j], t]
                if mark[q] != stamp:
                    mark[q] = stamp
                    link[k] = q
                    k += 1
        if k < r:
            continue
        y, lift = _local_coordinates(x, p, link[:k], local)
        table = _orientations(y)
        deepest = -np.inf
        for i in range(r):
            combo[i] = i
        while True:
            if _origin_bary(table, combo, face, lam) and _smallest(lam) >= -TOLERANCE:
                for i in range(r):
                    for a in range(d):
                        verts[i, a] = y[combo[i], a]
                if _inverse(verts, inv) and _empty(y, lift, combo, verts[0], inv, scratch):
                    if _smallest(lam) > deepest:
                        deepest = _smallest(lam)
                        for i in range(r):
                            best[i] = combo[i]
                            best_lam[i] = lam[i]
                    if deepest > TOLERANCE:
                        break
            if not _next_combo(combo, k):
                break
        if deepest == -np.inf or longest(x, link, best) > max_edge:
            continue
        for i in range(r):
            tri[p, i] = link[best[i]]
            bary[p, i] = best_lam[i]
        if grad is not None:
            new, n_new = _star_cells(
                y, best, _boundary(cells, vc_idx[vc_ptr[p] : vc_ptr[p + 1]], p, local)
            )
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
                link,
                k,
                new,
                n_new,
                tri[p],
                mark,
                stamp,
                members,
                grad[p],
            )
    return stamp


@inner
def star_gradients(
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
    link,
    k,
    new,
    n_new,
    corners,
    mark,
    stamp,
    members,
    grad,
):  # pragma: no cover
    """Recovered gradients (r, d, c) at the ``corners`` with p removed and its star
    re-filled by the cells ``new`` (link-local ids); returns the last stamp used."""
    over_ptr, over_idx, stamp = _new_rings(
        x, cells, kept, vc_ptr, vc_idx, p, link, k, new, n_new, max_edge, mark, stamp
    )
    for i in range(corners.size):
        stamp += 1
        node_gradient(
            corners[i], x, v, ptr, idx, link[:k], over_ptr, over_idx, mark, stamp, members, grad[i]
        )
    return stamp


@inner
def _local_coordinates(x, p, link, local):  # pragma: no cover
    """Link vertices sorted by distance from p (in place), centred on p and scaled to radius 1.

    Returns the coordinates (k, d) and their squared norms (the lifted
    heights), and sets ``local`` to each link vertex's row.  Near vertices
    first: the cell holding p is then met early in the search.
    """
    k, d = link.size, x.shape[1]
    dist = np.empty(k)
    for i in range(k):
        dist[i] = _distance(x, link[i], p)
    order = np.argsort(dist)
    unsorted = link.copy()
    for i in range(k):
        link[i] = unsorted[order[i]]
    radius = dist[order[-1]]
    y = np.empty((k, d))
    lift = np.empty(k)
    for i in range(k):
        local[link[i]] = i
        lift[i] = 0.0
        for a in range(d):
            y[i, a] = (x[link[i], a] - x[p, a]) / radius
            lift[i] += y[i, a] ** 2
    return y, lift


@inner
def _orientations(y):  # pragma: no cover
    """Determinant of every d-subset of the rows of ``y`` (k, d), at its combinadic rank."""
    k, d = y.shape
    face = np.arange(d)
    table = np.empty(_choose(k, d))
    while True:
        if d == 1:
            det = y[face[0], 0]
        elif d == 2:
            a, b = y[face[0]], y[face[1]]
            det = a[0] * b[1] - a[1] * b[0]
        else:
            a, b, c = y[face[0]], y[face[1]], y[face[2]]
            det = (
                a[0] * (b[1] * c[2] - b[2] * c[1])
                - a[1] * (b[0] * c[2] - b[2] * c[0])
                + a[2] * (b[0] * c[1] - b[1] * c[0])
            )
        table[_rank(face)] = det
        if not _next_combo(face, k):
            return table


@inner
def _origin_bary(table, combo, face, lam):  # pragma: no cover
    """Barycentric coordinates of the origin in the simplex ``combo`` from the d-subset table.

    lam_i is (-1)^i det(the other corners) over their alternating sum, the
    determinant of the simplex's edges.  False for a flat simplex.
    """
    r = combo.size
    total = 0.0
    for i in range(r):
        for j in range(r - 1):
            face[j] = combo[j + (j >= i)]
        lam[i] = (-1.0) ** i * table[_rank(face)]
        total += lam[i]
    if total == 0.0:
        return False
    for i in range(r):
        lam[i] /= total
    return True


@inner
def _choose(n, k):  # pragma: no cover
    """Binomial coefficient C(n, k) for k <= 3 (0 when n < k)."""
    out = 1
    for i in range(k):
        out = out * (n - i) // (i + 1)
    return max(out, 0)


@inner
def _rank(face):  # pragma: no cover
    """Combinadic rank of an increasing choice: sum of C(face[t], t + 1)."""
    out = 0
    for t in range(face.size):
        out += _choose(face[t], t + 1)
    return out


@inner
def _boundary(cells, star_cells, p, local):  # pragma: no cover
    """The faces opposite p of the cells around it, as sorted link-local ids (s, d)."""
    d = cells.shape[1] - 1
    out = np.empty((star_cells.size, d), dtype=np.int64)
    for s in range(star_cells.size):
        j = 0
        for t in range(d + 1):
            q = cells[star_cells[s], t]
            if q != p:
                out[s, j] = local[q]
                j += 1
        sort_small(out[s])
    return out


@inner
def _star_cells(y, first, boundary):  # pragma: no cover
    """Cells of Delaunay(link) filling p's star, grown from ``first`` across inner faces.

    Each inner face is crossed by gift-wrapping (:func:`_apex`); the faces in
    ``boundary`` bound the star and are not crossed.  Returns the cells as
    sorted link-local ids and their count.
    """
    r = first.size
    cells = np.empty((4 * y.shape[0] + 16, r), dtype=np.int64)
    for i in range(r):
        cells[0, i] = first[i]
    count, head = 1, 0
    face = np.empty(r - 1, dtype=np.int64)
    cand = np.empty(r, dtype=np.int64)
    c0, nrm = np.empty(r - 1), np.empty(r - 1)
    while head < count:
        for i in range(r):
            for j in range(r - 1):
                face[j] = cells[head, j + (j >= i)]
            if _has_row(boundary, boundary.shape[0], face):
                continue
            e = _apex(y, face, cells[head, i], c0, nrm)
            if e < 0:
                continue
            for j in range(r - 1):
                cand[j] = face[j]
            cand[r - 1] = e
            sort_small(cand)
            if _has_row(cells, count, cand):
                continue
            cells = grow(cells, count + 1)
            for j in range(r):
                cells[count, j] = cand[j]
            count += 1
        head += 1
    return cells, count


@inner
def _has_row(rows, count, row):  # pragma: no cover
    """Whether ``row`` is one of the first ``count`` rows of ``rows``."""
    for i in range(count):
        same = True
        for j in range(row.size):
            if rows[i, j] != row[j]:
                same = False
                break
        if same:
            return True
    return False


@inner
def _apex(y, face, opposite, c0, nrm):  # pragma: no cover
    """The Delaunay neighbour across ``face`` from the vertex ``opposite``: its new vertex.

    The spheres through the face have centres c0 + t n (c0 the face's
    circumcentre, n its normal pointing away from ``opposite``); the vertex
    beyond the face with the smallest t is the first such a sphere meets, so
    its sphere holds no other vertex.  -1 when no vertex lies beyond.  ``c0``
    and ``nrm`` (d,) are scratch.
    """
    d = y.shape[1]
    g0 = y[face[0]]
    if d == 1:
        c0[0], nrm[0] = g0[0], 1.0
    elif d == 2:
        a0, a1 = y[face[1], 0] - g0[0], y[face[1], 1] - g0[1]
        c0[0], c0[1] = g0[0] + 0.5 * a0, g0[1] + 0.5 * a1
        nrm[0], nrm[1] = -a1, a0
    else:
        ea, eb, w = np.empty(3), np.empty(3), np.empty(3)
        aa, bb = 0.0, 0.0
        for k in range(3):
            ea[k] = y[face[1], k] - g0[k]
            eb[k] = y[face[2], k] - g0[k]
            aa += ea[k] ** 2
            bb += eb[k] ** 2
        _cross(ea, eb, nrm)
        nn = 0.0
        for k in range(3):
            w[k] = aa * eb[k] - bb * ea[k]
            nn += nrm[k] ** 2
        _cross(w, nrm, c0)
        for k in range(3):
            c0[k] = g0[k] + c0[k] / (2.0 * nn)
    side, size, r0 = 0.0, 0.0, 0.0
    for a in range(d):
        side += nrm[a] * (y[opposite, a] - c0[a])
        size += nrm[a] ** 2
        r0 += (g0[a] - c0[a]) ** 2
    if side > 0:
        for a in range(d):
            nrm[a] = -nrm[a]
    size = np.sqrt(size)
    best, best_t = -1, np.inf
    for e in range(y.shape[0]):
        h, dist = 0.0, 0.0
        for a in range(d):
            h += nrm[a] * (y[e, a] - c0[a])
            dist += (y[e, a] - c0[a]) ** 2
        if h <= FLAT * size:
            continue
        t = (dist - r0) / (2.0 * h)
        if t < best_t:
            best, best_t = e, t
    return best


@inner
def _cross(a, b, out):  # pragma: no cover
    """The cross product of the 3-vectors a and b into ``out`` (numpy's formula)."""
    out[0] = a[1] * b[2] - a[2] * b[1]
    out[1] = a[2] * b[0] - a[0] * b[2]
    out[2] = a[0] * b[1] - a[1] * b[0]


@inner
def _new_rings(
    x, cells, kept, vc_ptr, vc_idx, p, link, k, new, n_new, max_edge, mark, stamp
):  # pragma: no cover
    """Neighbour lists of the link vertices once p is removed, under the max_edge mask.

    A link vertex a keeps the vertices of its kept cells that do not hold p
    and gains those of the kept new cells (link-local ids in ``new``) holding a.
    """
    d = x.shape[1]
    size = 0
    for i in range(k):
        size += (vc_ptr[link[i] + 1] - vc_ptr[link[i]]) * d + k
    over_ptr = np.zeros(k + 1, dtype=np.int64)
    over_idx = np.empty(size, dtype=np.int64)
    new_kept = np.empty(n_new, dtype=np.bool_)
    for c in range(n_new):
        new_kept[c] = max_edge == np.inf or longest(x, link, new[c]) <= max_edge
    count = 0
    for i in range(k):
        a = link[i]
        stamp += 1
        mark[a] = stamp
        mark[p] = stamp
        for j in range(vc_ptr[a], vc_ptr[a + 1]):
            c = vc_idx[j]
            if not kept[c] or _holds(cells, c, p):
                continue
            for t in range(d + 1):
                q = cells[c, t]
                if mark[q] != stamp:
                    mark[q] = stamp
                    over_idx[count] = q
                    count += 1
        for c in range(n_new):
            if not new_kept[c] or not _holds(new, c, i):
                continue
            for t in range(d + 1):
                q = link[new[c, t]]
                if mark[q] != stamp:
                    mark[q] = stamp
                    over_idx[count] = q
                    count += 1
        over_ptr[i + 1] = count
    return over_ptr, over_idx, stamp


@inner
def _empty(y, lift, combo, origin, inv, lam):  # pragma: no cover
    """Whether no link vertex lies inside the circumsphere of the simplex ``combo``.

    Lifting test: q is inside when |y_q|^2 is below the plane through the
    lifted corners, i.e. below sum_j lam_j(q) |y_j|^2.
    """
    for q in range(y.shape[0]):
        corner = False
        for j in range(combo.size):
            corner = corner or combo[j] == q
        if corner:
            continue
        _bary(y[q], origin, inv, lam)
        plane = 0.0
        scale = 1.0
        for j in range(combo.size):
            plane += lam[j] * lift[combo[j]]
            scale += abs(lam[j]) * lift[combo[j]]
        if lift[q] < plane - EMPTY * scale:
            return False
    return True


@inner
def _inverse(verts, inv):  # pragma: no cover
    """Inverse of the edge matrix (rows verts[i + 1] - verts[0]) into ``inv``; False if flat."""
    d = verts.shape[1]
    e = np.empty((d, d))
    size = 1.0
    for i in range(d):
        length = 0.0
        for a in range(d):
            e[i, a] = verts[i + 1, a] - verts[0, a]
            length += e[i, a] ** 2
        size *= np.sqrt(length)
    det = inverse_into(e, d, inv)
    return size > 0.0 and abs(det) > FLAT * size


@inner
def _bary(z, origin, inv, lam):  # pragma: no cover
    """Barycentric coordinates of z in the simplex with corner ``origin`` and edge inverse."""
    d = z.size
    s = 0.0
    for b in range(d):
        t = 0.0
        for a in range(d):
            t += (z[a] - origin[a]) * inv[a, b]
        lam[b + 1] = t
        s += t
    lam[0] = 1.0 - s


@inner
def longest(x, link, combo):  # pragma: no cover
    """Longest edge of the simplex of link vertices ``combo``, in the points' coordinates."""
    out = 0.0
    for i in range(combo.size):
        for j in range(i + 1, combo.size):
            out = max(out, _distance(x, link[combo[i]], link[combo[j]]))
    return out


@inner
def _distance(x, a, b):  # pragma: no cover
    """Euclidean distance between points a and b of ``x``."""
    s = 0.0
    for k in range(x.shape[1]):
        s += (x[a, k] - x[b, k]) ** 2
    return np.sqrt(s)


@inner
def _holds(rows, i, value):  # pragma: no cover
    """Whether row i of the small 2-D array ``rows`` holds ``value``."""
    for t in range(rows.shape[1]):
        if rows[i, t] == value:
            return True
    return False


@inner
def _next_combo(combo, k):  # pragma: no cover
    """Advance ``combo`` to the next increasing choice from range(k); False after the last."""
    r = combo.size
    i = r - 1
    while i >= 0 and combo[i] == k - r + i:
        i -= 1
    if i < 0:
        return False
    combo[i] += 1
    for j in range(i + 1, r):
        combo[j] = combo[j - 1] + 1
    return True


@inner
def _smallest(a):  # pragma: no cover
    """The smallest entry of the 1-D array ``a`` (finite entries), by a loop."""
    out = a[0]
    for i in range(1, a.size):
        out = min(out, a[i])
    return out
