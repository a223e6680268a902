"""Leave-one-out cross-validation of scattered data.

Each point is predicted from all the other points, by the field that
:func:`interp.fit` would build from them, and the residual is the measured
value minus that prediction.

The whole set is triangulated once.  Removing a vertex p from a Delaunay
triangulation changes only the cells around p (its star): they are replaced
by cells of the Delaunay triangulation of p's neighbours (its link
vertices).  Those new cells are Delaunay with respect to all the remaining
points, hence to the link vertices, and the Delaunay triangulation of the
link vertices is unique for points in general position; so the cell holding
p once p is gone is the cell of Delaunay(link of p) that contains p.  One
compiled kernel serves 1D, 2D and 3D.  It finds that cell among the
simplices of link vertices: the one that contains p and whose circumsphere
holds no other link vertex (the lifting test).  That is a search of up to
C(k, d + 1) candidates for k link vertices (k is about 6 in 2D, 15 in 3D),
nearest vertices first; containment is read from a table of the
determinants of all d-subsets, so only candidates holding p pay for the
circumsphere test.  The search is the slow part in 3D (C(15, 4) = 1365
candidates), not in 1D or 2D.

For ``order=2`` the prediction also needs the recovered gradients at the
corners of that cell, and those change when p is removed: their neighbour
lists lose p and gain the new edges of the re-filled star.  The kernel
grows the new cells of the star from the cell holding p, crossing each
inner face by gift-wrapping (the Delaunay neighbour across a face is the
vertex beyond it whose sphere through the face is met first) and stopping
at the faces of the old star's boundary.  It then rebuilds the neighbour
lists of the link vertices under the ``max_edge`` mask, and repeats the
local least-squares fits of :mod:`interp.fit` at the corners, so the result
is the leave-one-out of the P2 fit itself, not an approximation of it.

Where points are not in general position (four or more points on one
circle, as on a regular grid) the re-triangulation of a star is not unique,
and the prediction depends on which of the valid triangulations is taken;
a brute-force leave-one-out is just as ambiguous there.
"""

from __future__ import annotations

import numba
import numpy as np

from interp._arrays import as_points, positive
from interp._fit import midpoint, neighbours, node_gradient, samples
from interp._geometry import EMPTY, FLAT, TOLERANCE, longest_edge
from interp._triangulate import triangulate
from interp.basis import EDGES, shape
from interp.errors import InterpError
from interp.mesh import Mesh


def crossvalidate(
    points: object, values: object, *, order: int = 1, max_edge: float | None = None
) -> np.ndarray:
    """Leave-one-out residuals: each measured value minus its prediction from all the others.

    Parameters
    ----------
    points : array_like (n, d)
        Measurement positions, d in 1, 2, 3.
    values : array_like (n,) or (n, c)
        Measured values.  Rows holding a NaN take no part (they are dropped
        with a warning, as in :func:`interp.fit`) and get a NaN residual.
    order : {1, 2}
        The fit being validated: linear (P1) or quadratic (P2), as in
        :func:`interp.fit`.
    max_edge : float, optional
        The ``max_edge`` mask of the fit: a prediction that falls in a cell
        with a longer edge is NaN.

    Returns
    -------
    ndarray (n,) or (n, c)
        One residual per input row.  NaN where the point lies outside the
        convex hull of the others (it is a vertex of the hull), where the cell
        holding it once it is removed is masked, and for rows with NaN values.
        A point measured more than once is predicted, like any point, by the
        fit of the other rows: at its location those are its other
        measurements, so its residual is the value minus their mean (a
        measure of repeatability rather than of interpolation).

    Notes
    -----
    The whole set is triangulated once and each point's neighbourhood is
    re-triangulated locally (see the module notes); the residuals equal
    those of fitting the n - 1 other points, n times over.  Residuals
    measure how well the data predict themselves at the data spacing; they
    are not a guarantee of accuracy between the points, and a surface used
    for design or payment still needs the independent checks required by
    local codes and licensed survey practice.

    Examples
    --------
    >>> import numpy as np
    >>> pts = np.array([[0.0, 0], [2, 0], [0, 2], [2, 2], [1, 1]])
    >>> r = crossvalidate(pts, [0.0, 0.0, 0.0, 0.0, 1.0])
    >>> r.tolist()  # the hull corners have no prediction; the centre is predicted 0
    [nan, nan, nan, nan, 1.0]
    """
    data = samples(points, values, order)
    mesh = triangulate(data.unique)
    x, cells = mesh.points, mesh.cells
    kept = np.ones(len(cells), dtype=bool)
    limit = np.inf
    if max_edge is not None:
        limit = positive(max_edge, "max_edge")
        kept = longest_edge(x, cells) <= limit
        if not kept.any():
            raise InterpError(f"max_edge={max_edge} removes every cell; use a larger max_edge")
    used = np.bincount(cells[kept].ravel(), minlength=len(x)) > 0
    ptr, idx = np.zeros(1, dtype=np.int64), np.zeros(0, dtype=np.int64)
    if order == 2:
        ptr, idx = neighbours(Mesh(x, cells[kept]))
    d = x.shape[1]
    tri = np.full((len(x), d + 1), -1, dtype=np.int64)
    bary = np.full((len(x), d + 1), np.nan)
    grad = np.full((len(x) if order == 2 else 0, d + 1, d, data.mean.shape[1]), np.nan)
    vc_ptr, vc_idx = _vertex_cells(cells, len(x))
    _leave_one_out(x, data.mean, cells, kept, vc_ptr, vc_idx, ptr, idx, limit, tri, bary, grad)
    predicted = _predict(x, data.mean, tri, bary, grad)
    # a repeated location: the others' fit holds the mean of its other measurements there
    rows = np.flatnonzero(data.valid)
    u = data.inverse[rows]
    others = data.count[u] - 1
    repeated = others > 0
    own = data.values[rows]
    mean_others = (data.count[u, None] * data.mean[u] - own) / np.maximum(others, 1)[:, None]
    pred = np.where(repeated[:, None], np.where(used[u, None], mean_others, np.nan), predicted[u])
    residual = np.full(data.values.shape, np.nan)
    residual[rows] = own - pred
    return data.shaped(residual)


def residual_summary(points: object, residuals: object, *, worst: int = 5) -> dict:
    """Statistics of leave-one-out residuals, and the rows with the largest ones.

    Parameters
    ----------
    points : array_like (n, d)
        The points the residuals belong to.
    residuals : array_like (n,)
        One residual per point, NaN where there is none (see :func:`crossvalidate`).
    worst : int
        How many of the largest residuals to list.

    Returns
    -------
    dict
        ``count`` (rows with a residual), ``outside`` (rows without one),
        ``rms``, ``mean`` and ``max_abs`` of the residuals (NaN when there are
        none), and ``worst``: a list of ``{"row", "point", "residual"}``,
        largest absolute residual first.

    Examples
    --------
    >>> s = residual_summary([[0.0, 0], [1, 0], [2, 0]], [3.0, np.nan, -4.0], worst=1)
    >>> s["count"], s["outside"], s["rms"], s["mean"], s["max_abs"]
    (2, 1, 3.5355339059327378, -0.5, 4.0)
    >>> s["worst"]
    [{'row': 2, 'point': [2.0, 0.0], 'residual': -4.0}]
    """
    pts = as_points(points)
    res = np.asarray(residuals, dtype=np.float64)
    if res.shape != (len(pts),):
        raise InterpError(
            f"residuals must be one value per point: {len(pts)} points but residuals of "
            f"shape {res.shape}; summarise one component at a time"
        )
    if int(worst) != worst or worst < 0:
        raise InterpError(f"worst must be a count of rows (0 or more); got {worst!r}")
    ok = np.isfinite(res)
    r = res[ok]
    rows = np.flatnonzero(ok)[np.argsort(-np.abs(r), kind="stable")[: int(worst)]]
    return {
        "count": int(ok.sum()),
        "outside": int((~ok).sum()),
        "rms": float(np.sqrt(np.mean(r**2))) if r.size else np.nan,
        "mean": float(r.mean()) if r.size else np.nan,
        "max_abs": float(np.abs(r).max()) if r.size else np.nan,
        "worst": [
            {"row": int(i), "point": pts[i].tolist(), "residual": float(res[i])} for i in rows
        ],
    }


def _vertex_cells(cells: np.ndarray, n: int) -> tuple[np.ndarray, np.ndarray]:
    """Cells around each vertex, as compressed sparse rows."""
    flat = cells.ravel()
    order = np.argsort(flat, kind="stable")
    ptr = np.zeros(n + 1, dtype=np.int64)
    np.cumsum(np.bincount(flat, minlength=n), out=ptr[1:])
    return ptr, order // cells.shape[1]


def _predict(
    x: np.ndarray, v: np.ndarray, tri: np.ndarray, bary: np.ndarray, grad: np.ndarray
) -> np.ndarray:
    """Values (n, c) at the removed points from their new cells (NaN where none)."""
    out = np.full((len(tri), v.shape[1]), np.nan)
    inside = tri[:, 0] >= 0
    t, lam = tri[inside], bary[inside]
    nodal = v[t]
    order = 1
    if grad.shape[0]:
        order = 2
        g = grad[inside]
        a, b = np.array(EDGES[x.shape[1]]).T
        mids = midpoint(nodal[:, a], nodal[:, b], g[:, a], g[:, b], x[t[:, b]] - x[t[:, a]])
        nodal = np.concatenate([nodal, mids], axis=1)
    out[inside] = np.einsum("pi,pic->pc", shape(x.shape[1], order, lam), nodal)
    return out


@numba.njit(cache=True, nogil=True)
def _leave_one_out(
    x, v, cells, kept, vc_ptr, vc_idx, ptr, idx, max_edge, tri, bary, grad
):  # pragma: no cover
    """For every vertex p: the cell of Delaunay(link of p) holding p, and (P2) corner gradients.

    Writes ``tri[p]`` (vertex ids, left -1 when p is outside its link's hull
    or the cell is masked) and ``bary[p]``; when ``grad`` has rows, the
    recovered gradients at the corners of that cell with p removed.
    """
    n, d = x.shape
    r = d + 1
    p2 = grad.shape[0] > 0
    mark = np.full(n, -1, dtype=np.int64)
    local = np.zeros(n, dtype=np.int64)
    link = np.empty(n, dtype=np.int64)
    members = np.empty(n, dtype=np.int64)
    stamp = 0
    combo = np.empty(r, dtype=np.int64)
    lam = np.empty(r)
    scratch = np.empty(r)
    best_lam = np.empty(r)
    best = np.empty(r, dtype=np.int64)
    face = np.empty(d, dtype=np.int64)
    verts = np.empty((r, d))
    inv = np.empty((d, d))
    for p in range(n):
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
            if _origin_bary(table, combo, face, lam) and lam.min() >= -TOLERANCE:
                for i in range(r):
                    verts[i] = y[combo[i]]
                if _inverse(verts, inv) and _empty(y, lift, combo, verts[0], inv, scratch):
                    if lam.min() > deepest:
                        deepest = lam.min()
                        best[:] = combo
                        best_lam[:] = lam
                    if deepest > TOLERANCE:
                        break
            if not _next_combo(combo, k):
                break
        if deepest == -np.inf or _longest(x, link, best) > max_edge:
            continue
        for i in range(r):
            tri[p, i] = link[best[i]]
            bary[p, i] = best_lam[i]
        if p2:
            new, n_new = _star_cells(
                y, best, _boundary(cells, vc_idx[vc_ptr[p] : vc_ptr[p + 1]], p, local)
            )
            over_ptr, over_idx, stamp = _new_rings(
                x, cells, kept, vc_ptr, vc_idx, p, link, k, new, n_new, max_edge, mark, stamp
            )
            for i in range(r):
                stamp += 1
                node_gradient(
                    tri[p, i],
                    x,
                    v,
                    ptr,
                    idx,
                    link[:k],
                    over_ptr,
                    over_idx,
                    mark,
                    stamp,
                    members,
                    grad[p, i],
                )


@numba.njit(cache=True, nogil=True)
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
    link[:] = link[order]
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


@numba.njit(cache=True, nogil=True)
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


@numba.njit(cache=True, nogil=True)
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


@numba.njit(cache=True, nogil=True)
def _choose(n, k):  # pragma: no cover
    """Binomial coefficient C(n, k) for k <= 3 (0 when n < k)."""
    out = 1
    for i in range(k):
        out = out * (n - i) // (i + 1)
    return max(out, 0)


@numba.njit(cache=True, nogil=True)
def _rank(face):  # pragma: no cover
    """Combinadic rank of an increasing choice: sum of C(face[t], t + 1)."""
    out = 0
    for t in range(face.size):
        out += _choose(face[t], t + 1)
    return out


@numba.njit(cache=True, nogil=True)
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
        out[s].sort()
    return out


@numba.njit(cache=True, nogil=True)
def _star_cells(y, first, boundary):  # pragma: no cover
    """Cells of Delaunay(link) filling p's star, grown from ``first`` across inner faces.

    Each inner face is crossed by gift-wrapping (:func:`_apex`); the faces in
    ``boundary`` bound the star and are not crossed.  Returns the cells as
    sorted link-local ids and their count.
    """
    r = first.size
    cells = np.empty((4 * y.shape[0] + 16, r), dtype=np.int64)
    cells[0] = first
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
            cand[: r - 1] = face
            cand[r - 1] = e
            cand.sort()
            if _has_row(cells, count, cand):
                continue
            if count == cells.shape[0]:
                cells = _grow(cells)
            cells[count] = cand
            count += 1
        head += 1
    return cells, count


@numba.njit(cache=True, nogil=True)
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


@numba.njit(cache=True, nogil=True)
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
        a = y[face[1]] - g0
        b = y[face[2]] - g0
        nrm[:] = np.cross(a, b)
        c0[:] = g0 + np.cross(np.sum(a**2) * b - np.sum(b**2) * a, nrm) / (2.0 * np.sum(nrm**2))
    side, size, r0 = 0.0, 0.0, 0.0
    for a in range(d):
        side += nrm[a] * (y[opposite, a] - c0[a])
        size += nrm[a] ** 2
        r0 += (g0[a] - c0[a]) ** 2
    if side > 0:
        nrm *= -1.0
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


@numba.njit(cache=True, nogil=True)
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
        new_kept[c] = max_edge == np.inf or _longest(x, link, new[c]) <= max_edge
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


@numba.njit(cache=True, nogil=True)
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


@numba.njit(cache=True, nogil=True)
def _inverse(verts, inv):  # pragma: no cover
    """Inverse of the edge matrix (rows verts[i + 1] - verts[0]) into ``inv``; False if flat."""
    d = verts.shape[1]
    e = np.empty((d, d))
    size = 1.0
    for i in range(d):
        e[i] = verts[i + 1] - verts[0]
        size *= np.sqrt(np.sum(e[i] ** 2))
    if d == 1:
        det = e[0, 0]
        inv[0, 0] = 1.0 / det if det != 0.0 else 0.0
    elif d == 2:
        det = e[0, 0] * e[1, 1] - e[0, 1] * e[1, 0]
        if det != 0.0:
            inv[0, 0], inv[0, 1] = e[1, 1] / det, -e[0, 1] / det
            inv[1, 0], inv[1, 1] = -e[1, 0] / det, e[0, 0] / det
    else:
        for a in range(3):
            b, c = (a + 1) % 3, (a + 2) % 3
            inv[0, a] = e[1, b] * e[2, c] - e[1, c] * e[2, b]
            inv[1, a] = e[2, b] * e[0, c] - e[2, c] * e[0, b]
            inv[2, a] = e[0, b] * e[1, c] - e[0, c] * e[1, b]
        det = e[0, 0] * inv[0, 0] + e[1, 0] * inv[1, 0] + e[2, 0] * inv[2, 0]
        if det != 0.0:
            inv[:] = inv.T.copy() / det
    return size > 0.0 and abs(det) > FLAT * size


@numba.njit(cache=True, nogil=True)
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


@numba.njit(cache=True, nogil=True)
def _longest(x, link, combo):  # pragma: no cover
    """Longest edge of the simplex of link vertices ``combo``, in the points' coordinates."""
    out = 0.0
    for i in range(combo.size):
        for j in range(i + 1, combo.size):
            out = max(out, _distance(x, link[combo[i]], link[combo[j]]))
    return out


@numba.njit(cache=True, nogil=True)
def _distance(x, a, b):  # pragma: no cover
    """Euclidean distance between points a and b of ``x``."""
    s = 0.0
    for k in range(x.shape[1]):
        s += (x[a, k] - x[b, k]) ** 2
    return np.sqrt(s)


@numba.njit(cache=True, nogil=True)
def _holds(rows, i, value):  # pragma: no cover
    """Whether row i of the small 2-D array ``rows`` holds ``value``."""
    for t in range(rows.shape[1]):
        if rows[i, t] == value:
            return True
    return False


@numba.njit(cache=True, nogil=True)
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


@numba.njit(cache=True, nogil=True)
def _grow(rows):  # pragma: no cover
    """The same rows in an array twice as long."""
    out = np.empty((2 * rows.shape[0], rows.shape[1]), dtype=rows.dtype)
    out[: rows.shape[0]] = rows
    return out
