"""Local least-squares fits of the gradient at each node (gradient recovery for P2 fits)."""

from __future__ import annotations

import numba
import numpy as np

from interp._geometry import MIN_RCOND, MIN_RCOND_LINEAR, ONE_SIDED
from interp._kernels.geometry import sort_small


@numba.njit(cache=True, nogil=True)
def _recover(
    x, v, ptr, idx, over_node, over_ptr, over_idx, grad, lo, hi, mark, members
):  # pragma: no cover
    """Gradient at nodes ``lo..hi-1`` of ``x`` into ``grad`` (n, d, c); ``mark`` (n,)
    all -1 at first and ``members`` (n,) are scratch, shared by consecutive slices."""
    for i in range(lo, hi):
        _node_gradient(i, x, v, ptr, idx, over_node, over_ptr, over_idx, mark, i, members, grad[i])


@numba.njit(cache=True, nogil=True)
def _node_gradient(
    node, x, v, ptr, idx, over_node, over_ptr, over_idx, mark, stamp, members, grad
):  # pragma: no cover
    """Recovered gradient (d, c) at ``node``: quadratic fit on the 1-ring, else 2-ring, else linear.

    The 1-ring fit is skipped when the 1-ring lies on one side of a plane
    through the node (see :func:`_one_sided`).

    The neighbours of vertex q are ``over_idx[over_ptr[j]:over_ptr[j + 1]]`` when
    ``over_node[j] == q`` and ``idx[ptr[q]:ptr[q + 1]]`` otherwise.  ``mark``
    (n,) and ``members`` (n,) are scratch; ``stamp`` must differ from every
    value already in ``mark``.

    The neighbours are put in ascending index order before each fit, so the
    result (and the choice between the fits, which the pivoting of the QR
    makes depend on row order near the threshold) does not depend on the
    order the neighbour lists come in; a leave-one-out refit, whose lists
    are built differently, then takes the same decisions.
    """
    # the degrees as int64, not literals: one compiled _local_fit for both
    members[0] = node
    mark[node] = stamp
    count = _add_ring(node, ptr, idx, over_node, over_ptr, over_idx, mark, stamp, members, 1)
    if count == 1:
        grad[:] = np.nan
        return
    ring1 = count
    sort_small(members[1:count])
    if not _one_sided(x, node, members, count) and (
        _local_fit(x, v, node, members, count, np.int64(2), grad) >= MIN_RCOND
    ):
        return
    for r in range(1, ring1):
        count = _add_ring(
            members[r], ptr, idx, over_node, over_ptr, over_idx, mark, stamp, members, count
        )
    sort_small(members[1:count])
    if count > ring1 and _local_fit(x, v, node, members, count, np.int64(2), grad) >= MIN_RCOND:
        return
    if _local_fit(x, v, node, members, count, np.int64(1), grad) < MIN_RCOND_LINEAR:
        grad[:] = np.nan


@numba.njit(cache=True, nogil=True)
def _one_sided(x, node, members, count):  # pragma: no cover
    """True when the ``members`` lie on one side of a plane (2D: line, 1D: point) through ``node``.

    Such a node is on the hull of its neighbours: on the hull of the data or
    at the edge of a masked gap.  If a supporting plane through the node
    exists, one also exists through the node and d - 1 members (a facet of
    the cone the members span), so those are the planes tried.
    """
    d, m = x.shape[1], count - 1
    y = np.empty((m, d))
    for r in range(m):
        y[r] = x[members[r + 1]] - x[node]
    normal = np.ones(d)
    if d == 1:
        return _supports(normal, y)
    for j in range(m):
        if d == 2:
            normal[0], normal[1] = -y[j, 1], y[j, 0]
            if _supports(normal, y):
                return True
            continue
        for k in range(j + 1, m):
            normal[0] = y[j, 1] * y[k, 2] - y[j, 2] * y[k, 1]
            normal[1] = y[j, 2] * y[k, 0] - y[j, 0] * y[k, 2]
            normal[2] = y[j, 0] * y[k, 1] - y[j, 1] * y[k, 0]
            if _supports(normal, y):
                return True
    return False


@numba.njit(cache=True, nogil=True)
def _supports(normal, y):  # pragma: no cover
    """True when every row of ``y`` is on one side of the plane through 0 normal to ``normal``.

    A row within a relative ``ONE_SIDED`` of the plane counts as on either side; a
    zero normal (members in line with the node) supports nothing.
    """
    size = np.sqrt(np.sum(normal**2))
    if size == 0.0:
        return False
    above = below = False
    for r in range(y.shape[0]):
        s = np.dot(normal, y[r])
        tol = ONE_SIDED * size * np.sqrt(np.sum(y[r] ** 2))
        above |= s > tol
        below |= s < -tol
        if above and below:
            return False
    return True


@numba.njit(cache=True, nogil=True)
def _add_ring(
    q, ptr, idx, over_node, over_ptr, over_idx, mark, stamp, members, count
):  # pragma: no cover
    """Append the neighbours of ``q`` not yet marked to ``members``; the new count."""
    lo, hi, src = ptr[q], ptr[q + 1], idx
    for j in range(over_node.size):
        if over_node[j] == q:
            lo, hi, src = over_ptr[j], over_ptr[j + 1], over_idx
            break
    for r in range(lo, hi):
        b = src[r]
        if mark[b] != stamp:
            mark[b] = stamp
            members[count] = b
            count += 1
    return count


@numba.njit(cache=True, nogil=True)
def _local_fit(x, v, node, members, count, degree, grad):  # pragma: no cover
    """Least-squares polynomial of ``degree`` through the ``members``, centred at ``node``.

    Writes its gradient at the node into ``grad`` (d, c) when the fit is
    accepted (pivot ratio >= MIN_RCOND, or any full-rank fit for degree 1) and
    returns the pivot ratio (0 when there are fewer points than coefficients).
    """
    d = x.shape[1]
    nc = d + 1 if degree == 1 else (d + 1) * (d + 2) // 2
    if count < nc:
        return 0.0
    h = 0.0
    for r in range(count):
        s = 0.0
        for k in range(d):
            s += (x[members[r], k] - x[node, k]) ** 2
        h = max(h, s)
    h = np.sqrt(h)
    a = np.empty((count, nc))
    b = np.empty((count, v.shape[1]))
    for r in range(count):
        j = members[r]
        a[r, 0] = 1.0
        for k in range(d):
            a[r, 1 + k] = (x[j, k] - x[node, k]) / h
        col = 1 + d
        if degree == 2:
            for k in range(d):
                for m in range(k, d):
                    a[r, col] = a[r, 1 + k] * a[r, 1 + m]
                    col += 1
        b[r] = v[j]
    norm = np.empty(nc)
    for k in range(nc):
        s = 0.0
        for r in range(count):
            s += a[r, k] ** 2
        norm[k] = np.sqrt(s)
        if s > 0:
            for r in range(count):
                a[r, k] /= norm[k]
    coef = np.empty((nc, v.shape[1]))
    min_rcond = MIN_RCOND if degree == 2 else MIN_RCOND_LINEAR
    rcond = _lstsq(a, b, coef, min_rcond)
    if rcond >= min_rcond:
        for k in range(d):
            grad[k] = coef[1 + k] / (norm[1 + k] * h)
    return rcond


@numba.njit(cache=True, nogil=True)
def _lstsq(a, b, out, min_rcond):  # pragma: no cover
    """Least squares ``a @ out ~ b`` by Householder QR with column pivoting.

    ``a`` (m, n) and ``b`` (m, c) are overwritten.  Returns |R[n-1, n-1]| /
    |R[0, 0]|; ``out`` (n, c) is solved only when that ratio is >= min_rcond.
    """
    m, n = a.shape
    perm = np.arange(n)
    w = np.empty(m)
    for j in range(n):
        best, best_norm = j, -1.0
        for k in range(j, n):
            s = 0.0
            for r in range(j, m):
                s += a[r, k] ** 2
            if s > best_norm:
                best, best_norm = k, s
        if best_norm == 0.0:
            return 0.0
        for r in range(m):
            a[r, j], a[r, best] = a[r, best], a[r, j]
        perm[j], perm[best] = perm[best], perm[j]
        alpha = -np.sqrt(best_norm) if a[j, j] > 0 else np.sqrt(best_norm)
        ww = 0.0
        for r in range(j, m):
            w[r] = a[r, j]
        w[j] -= alpha
        for r in range(j, m):
            ww += w[r] ** 2
        _reflect(w, ww, j, a, j)
        _reflect(w, ww, j, b, 0)
    rcond = abs(a[n - 1, n - 1]) / abs(a[0, 0])
    if rcond >= min_rcond:
        for j in range(n - 1, -1, -1):
            for c in range(b.shape[1]):
                s = b[j, c]
                for k in range(j + 1, n):
                    s -= a[j, k] * out[perm[k], c]
                out[perm[j], c] = s / a[j, j]
    return rcond


@numba.njit(cache=True, nogil=True)
def _reflect(w, ww, j, a, first):  # pragma: no cover
    """Apply the Householder reflection I - 2 w w^T / ww (rows j:) to columns first: of a."""
    for k in range(first, a.shape[1]):
        s = 0.0
        for r in range(j, a.shape[0]):
            s += w[r] * a[r, k]
        s *= 2.0 / ww
        for r in range(j, a.shape[0]):
            a[r, k] -= s * w[r]


#: the gradients of every node, for :func:`interp._fit.recover_gradients`.
recover = _recover
#: the local gradient fit of one node, for the leave-one-out of :mod:`interp._validate`.
node_gradient = _node_gradient
