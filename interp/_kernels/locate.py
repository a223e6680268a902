"""Point location: the bucket lists of the index and the scans that search them."""

from __future__ import annotations

import numpy as np

from interp._geometry import MARGIN, TIE, TOLERANCE
from interp._kernels import inner, kernel


@kernel
def cell_boxes(points, corners, lo, h, shape, pad, i0, i1, c0, c1):  # pragma: no cover
    """Bucket range of the bounding box of cells c0 to c1 - 1."""
    g = i0.shape[1]
    for c in range(c0, c1):
        for a in range(g):
            cmin = np.inf
            cmax = -np.inf
            for k in range(g + 1):
                x = points[corners[c, k], a]
                cmin = min(cmin, x)
                cmax = max(cmax, x)
            i0[c, a] = min(max(int(np.floor((cmin - pad - lo[a]) / h[a])), 0), shape[a] - 1)
            i1[c, a] = min(max(int(np.floor((cmax + pad - lo[a]) / h[a])), 0), shape[a] - 1)


@inner
def _rows_of(i0, i1, c, a0, a1):  # pragma: no cover
    """Rows of cell c's box in the slab a0 <= i < a1 of the first axis: the ranges
    of i and j (the axes before the last; a single row in 1D) and i's first value."""
    g = i0.shape[1]
    if g == 1:
        return 0, 0, 0, 0, 0
    j0, j1 = (i0[c, 1], i1[c, 1]) if g == 3 else (0, 0)
    return max(i0[c, 0], a0), min(i1[c, 0], a1 - 1), j0, j1, i0[c, 0]


@kernel
def find_runs(i0, i1, lo, h, shape, affine, first, a0, a1, runs, count):  # pragma: no cover
    """The run of buckets each row of each cell's box keeps, and the count per bucket,
    for the rows in the slab a0 <= i < a1; ``first[c]`` is cell c's first row.

    In 3D a bucket is left out when one barycentric coordinate of the cell stays
    below -MARGIN over the whole (slightly enlarged) bucket: the largest value
    of an affine function over a box is its value at the centre plus the sum of
    |slope| * half-width.  Each coordinate is affine along the last grid axis,
    so the buckets kept in a row along that axis form one run, found from where
    each coordinate crosses -MARGIN.
    """
    m, g = i0.shape
    trim = g == 3
    last = g - 1
    half = 0.5 * h * (1.0 + 1e-6) + 1e-9
    slope = np.zeros((g, g + 1))  # change of each coordinate per bucket along each axis
    top = np.empty(g + 1)  # value at the first bucket's centre plus the reach
    v = np.empty(g + 1)
    step = np.empty(g + 1)  # buckets along the last axis per unit of each coordinate
    for c in range(m):
        ia, ib, ja, jb, i_first = _rows_of(i0, i1, c, a0, a1)
        if ia > ib:
            continue
        r0 = i0[c, last]
        room = i1[c, last] - r0 + 1.0
        if trim:
            top[0] = 1.0
            for b in range(g):
                top[b + 1] = affine[c, g, b]
                top[0] -= affine[c, g, b]
            for a in range(g):
                x = lo[a] + (i0[c, a] + 0.5) * h[a]
                s = 0.0
                for b in range(g):
                    top[b + 1] += x * affine[c, a, b] + abs(affine[c, a, b]) * half[a]
                    slope[a, b + 1] = affine[c, a, b] * h[a]
                    s += affine[c, a, b]
                top[0] += -x * s + abs(s) * half[a]
                slope[a, 0] = -s * h[a]
            for b in range(g + 1):
                step[b] = 1.0 / slope[last, b] if slope[last, b] != 0.0 else 0.0
        for i in range(ia, ib + 1):
            for j in range(ja, jb + 1):
                k0, k1 = r0, i1[c, last]
                for b in range(g + 1 if trim else 0):
                    v[b] = top[b] + (i - i0[c, 0]) * slope[0, b] + (j - i0[c, 1]) * slope[1, b]
                    if step[b] == 0.0:
                        if v[b] < -MARGIN:
                            k1 = k0 - 1
                        continue
                    # steps along the row until coordinate b reaches -MARGIN, within
                    # [-1, room]; selects rather than branches on the sign of the slope
                    t = min(max((-MARGIN - v[b]) * step[b], -1.0), room)
                    up = step[b] > 0.0
                    k0 = max(k0, r0 - int(room + 2.0 - t) + int(room + 2.0) if up else k0)
                    k1 = min(k1, k1 if up else r0 + int(t + 1.0) - 1)
                r = first[c] + (i - i_first) * (jb - ja + 1) + (j - ja)
                runs[r, 0] = k0
                runs[r, 1] = k1
                row = _row(i, j, g, shape)
                for k in range(k0, k1 + 1):
                    count[row + k] += 1


@kernel
def fill_runs(i0, i1, shape, first, a0, a1, runs, slot, members):  # pragma: no cover
    """Write each cell into the buckets of its runs in the slab a0 <= i < a1, at
    ``slot`` (cells in ascending order)."""
    for c in range(i0.shape[0]):
        ia, ib, ja, jb, i_first = _rows_of(i0, i1, c, a0, a1)
        for i in range(ia, ib + 1):
            for j in range(ja, jb + 1):
                r = first[c] + (i - i_first) * (jb - ja + 1) + (j - ja)
                row = _row(i, j, i0.shape[1], shape)
                for k in range(runs[r, 0], runs[r, 1] + 1):
                    members[slot[row + k]] = c
                    slot[row + k] += 1


@inner
def _row(i, j, g, shape):  # pragma: no cover
    """Flat index of the first bucket of row (i, j) along the last axis."""
    row = i if g > 1 else 0
    if g > 2:
        row = row * shape[1] + j
    return row * shape[g - 1]


@kernel
def bucket_of(x, lo, h, shape, flat):  # pragma: no cover
    """Bucket of each point, -1 outside the grid or NaN."""
    for p in range(x.shape[0]):
        flat[p] = _bucket(x[p], lo, h, shape)


@inner
def _bucket(x, lo, h, shape):  # pragma: no cover
    """Bucket of point ``x`` (its first len(lo) coordinates), -1 outside or NaN."""
    b = 0
    for a in range(lo.size):
        v = (x[a] - lo[a]) / h[a]
        if not (v >= 0.0 and v < shape[a]):  # also False for NaN
            return -1
        b = b * shape[a] + int(v)
    return b


@kernel
def counting_order(flat, n_buckets):  # pragma: no cover
    """Stable order of the points by bucket (points outside first), by counting."""
    first = np.zeros(n_buckets + 2, dtype=np.int64)
    for b in flat:
        first[b + 2] += 1
    for b in range(2, n_buckets + 2):
        first[b] += first[b - 1]
    order = np.empty(flat.size, dtype=np.int64)
    for p in range(flat.size):
        order[first[flat[p] + 1]] = p
        first[flat[p] + 1] += 1
    return order


@kernel
def scan(x, flat, order, start, members, affine, cells, bary):  # pragma: no cover
    """Locate the points, visiting them in ``order``.

    The points are copied in that order first and the results scattered back at
    the end, so the scan itself reads and writes memory in sequence.
    """
    n, g = x.shape
    xs = np.empty((n, g))
    fs = np.empty(n, dtype=np.int64)
    for i in range(n):
        fs[i] = flat[order[i]]
        for a in range(g):
            xs[i, a] = x[order[i], a]
    found = np.full(n, -1, dtype=np.int64)
    coords = np.empty((n, g + 1))
    lam = np.empty(g + 1)
    for i in range(n):
        if fs[i] >= 0:
            found[i] = _deepest(xs[i], fs[i], start, members, affine, lam, coords[i])
    for i in range(n):
        if found[i] >= 0:
            p = order[i]
            cells[p] = found[i]
            for b in range(g + 1):
                bary[p, b] = coords[i, b]


@inner
def _deepest(x, bucket, start, members, affine, lam, out):  # pragma: no cover
    """The cell of ``bucket`` that contains point ``x`` deepest (-1 if none), its
    barycentric coordinates written to ``out``; ``lam`` is scratch space."""
    g = affine.shape[2]
    found = -1
    best = -np.inf
    for j in range(start[bucket], start[bucket + 1]):
        c = members[j]
        s = 0.0
        mn = np.inf
        for b in range(g):
            v = affine[c, g, b]
            for a in range(g):
                v += x[a] * affine[c, a, b]
            lam[b + 1] = v
            s += v
            mn = min(mn, v)
        lam[0] = 1.0 - s
        mn = min(mn, lam[0])
        # members are in ascending cell order, so a tie keeps the lower index
        if mn >= -TOLERANCE and (found < 0 or mn > best + TIE):
            best = mn
            found = c
            for b in range(g + 1):
                out[b] = lam[b]
            if mn > TIE:
                break  # strictly inside: cells do not overlap, no other can be deeper
    return found


@kernel
def scan_grid(ax, ay, az, lo, h, shape, start, members, affine, cells, bary):  # pragma: no cover
    """Locate the nodes of the grid of axes (ax, ay, az) in C order, as :func:`scan`
    does each point: consecutive nodes share buckets, so no ordering is needed."""
    x = np.zeros(3)
    lam = np.empty(affine.shape[2] + 1)
    p = 0
    for i in range(ax.size):
        x[0] = ax[i]
        for j in range(ay.size):
            x[1] = ay[j]
            for k in range(az.size):
                x[2] = az[k]
                bucket = _bucket(x, lo, h, shape)
                if bucket >= 0:
                    cells[p] = _deepest(x, bucket, start, members, affine, lam, bary[p])
                p += 1
