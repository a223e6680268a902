"""Kernels that make a 3D Delaunay triangulation of cospherical points face-to-face.

Qhull triangulates each Delaunay cell (a polytope whose vertices lie on one
empty sphere) on its own and bridges disagreeing splits of a shared face with
zero-volume tetrahedra.  These kernels group the tetrahedra of each cell
(:func:`clusters`) and triangulate every cell again by one rule that depends
only on the global vertex order (:func:`pulling`), so two cells split the face
they share the same way.  Geometric decisions are exact predicates.
"""

import numpy as np

from interp._kernels import inner, kernel
from interp._kernels.predicates import orient3d


@inner
def _root(parent, i):  # pragma: no cover
    """Root of ``i`` in a union-find forest, halving the path on the way."""
    while parent[i] != i:
        parent[i] = parent[parent[i]]
        i = parent[i]
    return i


@kernel
def clusters(cells, flat, neighbors, planes):  # pragma: no cover
    """Cluster root of each tetrahedron (-1 for flat ones), and the cluster
    across each face.

    Qhull computes the Delaunay cells as facets of the lifted points' lower
    hull; with triangulated output (scipy's) the tetrahedra of one facet keep
    that facet's hyperplane, so two tetrahedra that share a face and the same
    hyperplane row of ``planes`` (bit for bit) are pieces of one Delaunay cell.
    ``neighbors[t, j]`` is the cell across the face opposite vertex ``j`` of
    ``t`` (-1 on the hull), as Qhull gives it.

    ``across[t, j]`` is the cluster on the other side of that face, found
    through any flat tetrahedra Qhull put there, or -1 on the hull.
    """
    m = cells.shape[0]
    parent = np.arange(m)
    for t in range(m):
        if flat[t]:
            continue
        for j in range(4):
            u = neighbors[t, j]
            if u <= t or flat[u]:
                continue
            same = True
            for q in range(planes.shape[1]):
                same &= planes[t, q] == planes[u, q]
            rt = _root(parent, t)
            ru = _root(parent, u)
            if same and rt != ru:
                parent[max(rt, ru)] = min(rt, ru)
    root = np.empty(m, dtype=np.int64)
    for t in range(m):
        root[t] = -1 if flat[t] else _root(parent, t)
    across = np.full((m, 4), -1, dtype=np.int64)
    seen = np.full(m, -1, dtype=np.int64)
    stack = np.empty(m, dtype=np.int64)
    for t in range(m):
        if flat[t]:
            continue
        for j in range(4):
            u = neighbors[t, j]
            if u < 0 or not flat[u]:
                across[t, j] = -1 if u < 0 else root[u]
                continue
            # through the flat cells reachable from u, to a cell of another cluster
            mark = 4 * t + j
            seen[u] = mark
            stack[0] = u
            n = 1
            while n > 0 and across[t, j] < 0:
                n -= 1
                f = stack[n]
                for q in range(4):
                    g = neighbors[f, q]
                    if g < 0 or seen[g] == mark:
                        continue
                    if not flat[g]:
                        if root[g] != root[t]:
                            across[t, j] = root[g]
                    else:
                        seen[g] = mark
                        stack[n] = g
                        n += 1
    return root, across


@inner
def _pull_cluster(points, corners, across, pulled, flat_ratio, out, n_out):  # pragma: no cover
    """Pulling triangulation of the convex polytope tiled by the tetrahedra
    ``corners`` (t, 4), written to ``out`` from row ``n_out``.

    The polytope's lowest vertex v0 is coned to every boundary facet that does
    not contain it; each such facet (a planar polygon) is fanned from its own
    lowest vertex.  A facet is the boundary triangles that face one
    neighbouring cluster (``across``, per face opposite each corner: two convex
    cells meet in one face) that is triangulated again too (``pulled``), or,
    on the hull (-1), coplanar boundary triangles joined across their edges
    (exact ``orient3d == 0``); a triangle facing a cluster that keeps its
    tetrahedra is a facet of its own.  Returns the new row count, or -1 when
    the tetrahedra do not tile one convex polytope (the boundary is not a
    closed surface, or v0 is not strictly inside a facet's plane) or a new
    tetrahedron would be flat (volume at most ``flat_ratio`` times the cube of
    its largest coordinate difference); ``out`` is then left as it was up to
    ``n_out``.
    """
    t = corners.shape[0]
    verts = np.unique(corners)  # ascending: local order is the global order
    k = verts.size
    local = np.searchsorted(verts, corners)
    # faces of the tetrahedra; those used once are the boundary
    keys = np.empty(4 * t, dtype=np.int64)
    tri = np.empty((4 * t, 3), dtype=np.int64)
    for i in range(t):
        for j in range(4):
            f = 4 * i + j
            a, b, c = local[i, (j + 1) % 4], local[i, (j + 2) % 4], local[i, (j + 3) % 4]
            a, b = min(a, b), max(a, b)
            b, c = min(b, c), max(b, c)
            a, b = min(a, b), max(a, b)
            tri[f, 0], tri[f, 1], tri[f, 2] = a, b, c
            keys[f] = (a * k + b) * k + c
    order = np.argsort(keys)
    boundary = np.empty((4 * t, 3), dtype=np.int64)
    side = np.empty(4 * t, dtype=np.int64)  # the face's own tetrahedron and corner
    nb = 0
    i = 0
    while i < 4 * t:
        j = i
        while j + 1 < 4 * t and keys[order[j + 1]] == keys[order[i]]:
            j += 1
        if j - i > 1:
            return -1
        if j == i:
            boundary[nb] = tri[order[i]]
            side[nb] = order[i]
            nb += 1
        i = j + 1
    # edges of the boundary triangles: each must join exactly two of them
    ekeys = np.empty(3 * nb, dtype=np.int64)
    for p in range(nb):
        for j in range(3):
            u = boundary[p, j]
            w = boundary[p, (j + 1) % 3]
            ekeys[3 * p + j] = min(u, w) * k + max(u, w)
    eorder = np.argsort(ekeys)
    if nb % 2 == 1:
        return -1
    for i in range(0, 3 * nb, 2):
        if ekeys[eorder[i]] != ekeys[eorder[i + 1]]:
            return -1
        if i + 2 < 3 * nb and ekeys[eorder[i + 2]] == ekeys[eorder[i]]:
            return -1
    # facets: boundary triangles facing one cluster, or coplanar on the hull
    parent = np.arange(nb)
    for i in range(0, 3 * nb, 2):
        p = eorder[i] // 3
        q = eorder[i + 1] // 3
        ap = across[side[p] // 4, side[p] % 4]
        aq = across[side[q] // 4, side[q] % 4]
        if ap != aq or (ap >= 0 and not pulled[ap]):
            continue
        rp = _root(parent, p)
        rq = _root(parent, q)
        if rp == rq:
            continue
        if ap < 0:
            r = boundary[q, 0] + boundary[q, 1] + boundary[q, 2] - ekeys[eorder[i]] // k
            r -= ekeys[eorder[i]] % k
            a = points[verts[boundary[p, 0]]]
            b = points[verts[boundary[p, 1]]]
            c = points[verts[boundary[p, 2]]]
            if orient3d(a, b, c, points[verts[r]]) != 0.0:
                continue
        parent[max(rp, rq)] = min(rp, rq)
    lowest = np.full(nb, k, dtype=np.int64)
    for p in range(nb):
        rp = _root(parent, p)
        lowest[rp] = min(lowest[rp], boundary[p, 0], boundary[p, 1], boundary[p, 2])
    # v0 must lie strictly on the inner side of every facet it is coned to: on the
    # side of the corner opposite one of the facet's triangles in its tetrahedron
    v0 = points[verts[0]]
    for p in range(nb):
        rp = _root(parent, p)
        if rp != p or lowest[rp] == 0:
            continue
        a = points[verts[boundary[p, 0]]]
        b = points[verts[boundary[p, 1]]]
        c = points[verts[boundary[p, 2]]]
        inner = orient3d(a, b, c, points[verts[local[side[p] // 4, side[p] % 4]]])
        if orient3d(a, b, c, v0) * inner <= 0.0:
            return -1
    # an edge between two facets is a polygon side of each: fan it from the
    # facet's lowest vertex, cone the triangle to v0 (local vertex 0)
    start = n_out
    for i in range(0, 3 * nb, 2):
        fp = _root(parent, eorder[i] // 3)
        fq = _root(parent, eorder[i + 1] // 3)
        if fp == fq:
            continue
        u = ekeys[eorder[i]] // k
        w = ekeys[eorder[i]] % k
        for f in (fp, fq):
            low = lowest[f]
            if low != 0 and u != low and w != low:
                out[n_out, 0] = verts[0]
                out[n_out, 1] = verts[low]
                out[n_out, 2] = verts[u]
                out[n_out, 3] = verts[w]
                n_out += 1
    for i in range(start, n_out):
        size = 0.0
        for a in range(4):
            for b in range(a + 1, 4):
                for q in range(3):
                    size = max(size, abs(points[out[i, a], q] - points[out[i, b], q]))
        vol = orient3d(points[out[i, 0]], points[out[i, 1]], points[out[i, 2]], points[out[i, 3]])
        if abs(vol) <= 6.0 * flat_ratio * size**3:
            return -1
    return n_out


@kernel
def pulling(points, cells, across, members, starts, pulled, flat_ratio):  # pragma: no cover
    """Pulling triangulations of clusters of tetrahedra.

    Cluster ``c`` is the cells ``members[starts[c]:starts[c + 1]]``; ``across``
    as :func:`clusters` gives it; ``pulled[r]`` tells whether the cluster of
    root ``r`` is triangulated again (its facets are then split by the same
    rule from both sides).  Returns the new tetrahedra and, per cluster,
    whether it was triangulated again (False when it cannot be: see
    :func:`_pull_cluster`; its cells stay).
    """
    out = np.empty((4 * members.size, 4), dtype=np.int64)
    done = np.zeros(starts.size - 1, dtype=np.bool_)
    n_out = 0
    for c in range(starts.size - 1):
        group = members[starts[c] : starts[c + 1]]
        if not pulled[group[0]]:
            continue
        n = _pull_cluster(points, cells[group], across[group], pulled, flat_ratio, out, n_out)
        if n >= 0:
            n_out = n
            done[c] = True
    return out[:n_out].copy(), done
