"""Cell geometry: measures and sizes, affine maps to barycentric coordinates, cell checks."""

from __future__ import annotations

import numpy as np

from interp._kernels import inner, kernel


@inner
def _det(a, n):  # pragma: no cover
    """Determinant of the leading n x n block of a (n <= 3), expanded as :func:`det`."""
    if n == 1:
        return a[0, 0]
    if n == 2:
        return a[0, 0] * a[1, 1] - a[0, 1] * a[1, 0]
    return (
        a[0, 0] * (a[1, 1] * a[2, 2] - a[1, 2] * a[2, 1])
        - a[0, 1] * (a[1, 0] * a[2, 2] - a[1, 2] * a[2, 0])
        + a[0, 2] * (a[1, 0] * a[2, 1] - a[1, 1] * a[2, 0])
    )


@kernel
def measure_and_size(corners, vol, size):  # pragma: no cover
    """|det E| (or sqrt det E E^T) and the largest |E| entry of each simplex's edges E."""
    m, k, g = corners.shape
    t = k - 1
    e = np.empty((3, 3))
    gram = np.empty((3, 3))
    for c in range(m):
        big = 0.0
        for r in range(t):
            for a in range(g):
                e[r, a] = corners[c, r + 1, a] - corners[c, 0, a]
                big = max(big, abs(e[r, a]))
        size[c] = big
        if t == g:
            vol[c] = abs(_det(e, t))
            continue
        for r in range(t):
            for q in range(t):
                s = 0.0
                for a in range(g):
                    s += e[r, a] * e[q, a]
                gram[r, q] = s
        vol[c] = np.sqrt(max(_det(gram, t), 0.0))


@inner
def inverse_into(e, g, inv):  # pragma: no cover
    """Inverse of the g x g matrix ``e`` (g <= 3) into ``inv`` by the adjugate, and
    its determinant (``inv`` is meaningless when that is 0)."""
    if g == 1:
        d = e[0, 0]
        if d != 0.0:
            inv[0, 0] = 1.0 / d
        return d
    if g == 2:
        d = e[0, 0] * e[1, 1] - e[0, 1] * e[1, 0]
        if d != 0.0:
            inv[0, 0], inv[0, 1] = e[1, 1] / d, -e[0, 1] / d
            inv[1, 0], inv[1, 1] = -e[1, 0] / d, e[0, 0] / d
        return d
    # rows of the inverse of the matrix whose columns are e[:, a]: cross products
    for r in range(3):
        p, q = (r + 1) % 3, (r + 2) % 3
        inv[r, 0] = e[1, p] * e[2, q] - e[2, p] * e[1, q]
        inv[r, 1] = e[2, p] * e[0, q] - e[0, p] * e[2, q]
        inv[r, 2] = e[0, p] * e[1, q] - e[1, p] * e[0, q]
    d = e[0, 0] * inv[0, 0] + e[1, 0] * inv[0, 1] + e[2, 0] * inv[0, 2]
    if d != 0.0:
        for r in range(3):
            for a in range(3):
                inv[r, a] /= d
    return d


@kernel
def affine_maps(points, corners, affine, c0, c1):  # pragma: no cover
    """Affine map to barycentric coordinates of cells c0 to c1 - 1 of a mesh whose
    cells fill their space: ``bary[1:] = x @ affine[c, :g] + affine[c, g]``."""
    g = points.shape[1]
    e = np.empty((g, g))
    inv = np.empty((g, g))
    for c in range(c0, c1):
        v0 = corners[c, 0]
        for r in range(g):
            for a in range(g):
                e[r, a] = points[corners[c, r + 1], a] - points[v0, a]
        inverse_into(e, g, inv)
        for b in range(g):
            shift = 0.0
            for a in range(g):
                affine[c, a, b] = inv[a, b]
                shift -= points[v0, a] * inv[a, b]
            affine[c, g, b] = shift


@kernel
def bad_cells(cells, n):  # pragma: no cover
    """Cells with a node index outside 0..n-1, and cells that repeat a node."""
    m, k = cells.shape
    out_of_range = np.zeros(m, dtype=np.bool_)
    repeated = np.zeros(m, dtype=np.bool_)
    for c in range(m):
        for i in range(k):
            if cells[c, i] < 0 or cells[c, i] >= n:
                out_of_range[c] = True
            for j in range(i):
                if cells[c, i] == cells[c, j]:
                    repeated[c] = True
    return np.flatnonzero(out_of_range), np.flatnonzero(repeated)


@inner
def sort_small(a):  # pragma: no cover
    """Sort the short 1-D array ``a`` in place, by insertion.

    For the few entries of a cell, a vertex ring or a slab's breakpoints:
    as fast there as numpy's sort, and it compiles in a fraction of the time
    numba's quicksort takes.  numba's own sort runs this same insertion sort
    below 16 entries; any correct sort gives the same order of integers.
    """
    for i in range(1, a.size):
        key = a[i]
        j = i
        while j > 0 and key < a[j - 1]:
            a[j] = a[j - 1]
            j -= 1
        a[j] = key
