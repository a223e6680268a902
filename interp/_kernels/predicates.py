"""Exact geometric predicates by Shewchuk's adaptive method (numba kernels).

J. R. Shewchuk, "Adaptive Precision Floating-Point Arithmetic and Fast Robust
Geometric Predicates", Discrete & Computational Geometry 18:305-363, 1997.

Each predicate first evaluates its determinant in floating point and returns it
when it clears the paper's forward error bound; otherwise it evaluates the
determinant exactly as a floating-point expansion (a sum of non-overlapping
doubles) built from exact differences, products and sums, and returns its most
significant component.  Only the sign of the result is meaningful, and that
sign is exact for any finite input whose products do not overflow.

``orient2d`` also has the paper's second stage (the determinant of the rounded
differences, exact when the differences are), which settles the exactly
degenerate cases of gridded coordinates without the full expansion.
"""

from __future__ import annotations

import numpy as np

from interp._kernels import inner, kernel

_EPS = 2.0**-53  # half an ulp of 1.0 (the paper's epsilon)
_SPLITTER = 2.0**27 + 1.0
_RESULT_B = (3.0 + 8.0 * _EPS) * _EPS
_CCW_A = (3.0 + 16.0 * _EPS) * _EPS
_CCW_B = (2.0 + 12.0 * _EPS) * _EPS
_CCW_C = (9.0 + 64.0 * _EPS) * _EPS * _EPS
_ICC_A = (10.0 + 96.0 * _EPS) * _EPS
_O3D_A = (7.0 + 56.0 * _EPS) * _EPS
_ISP_A = (16.0 + 224.0 * _EPS) * _EPS


@inner
def two_sum(a, b):  # pragma: no cover
    """a + b as x + y exactly, x = fl(a + b) (Knuth's branch-free sum)."""
    x = a + b
    bv = x - a
    av = x - bv
    return x, (a - av) + (b - bv)


@inner
def _fast_two_sum(a, b):  # pragma: no cover
    """a + b as x + y exactly, for |a| >= |b| (or a == 0)."""
    x = a + b
    return x, b - (x - a)


@inner
def two_diff(a, b):  # pragma: no cover
    """a - b as x + y exactly, x = fl(a - b)."""
    x = a - b
    bv = a - x
    av = x + bv
    return x, (a - av) + (bv - b)


@inner
def _split(a):  # pragma: no cover
    """a = hi + lo with each half of at most 26 significant bits (Dekker)."""
    c = _SPLITTER * a
    hi = c - (c - a)
    return hi, a - hi


@inner
def _product_presplit(a, b, bhi, blo):  # pragma: no cover
    """a * b as x + y exactly, b already split into bhi + blo."""
    x = a * b
    ahi, alo = _split(a)
    return x, alo * blo - (((x - ahi * bhi) - alo * bhi) - ahi * blo)


@inner
def two_product(a, b):  # pragma: no cover
    """a * b as x + y exactly, x = fl(a * b) (Dekker's splitting)."""
    bhi, blo = _split(b)
    return _product_presplit(a, b, bhi, blo)


@inner
def _keep(h, n, v):  # pragma: no cover
    """Append v to h[:n] unless it is zero; the new length."""
    if v != 0.0:
        h[n] = v
        return n + 1
    return n


@inner
def _close(h, n, q):  # pragma: no cover
    """h[:n] with the last component q (kept when zero only if it is the only one)."""
    if q != 0.0 or n == 0:
        h[n] = q
        n += 1
    return h[:n]


@inner
def _sum_rest(q, src, i, h, n):  # pragma: no cover
    """Add src[i:] into the running sum q, keeping the non-zero tails in h."""
    for j in range(i, src.size):
        q, hh = two_sum(q, src[j])
        n = _keep(h, n, hh)
    return q, n


@inner
def fast_expansion_sum_zeroelim(e, f):  # pragma: no cover
    """Exact sum of two expansions (components in increasing magnitude), zero
    components removed; the paper's FAST-EXPANSION-SUM.  Never empty: zero is [0.0]."""
    h = np.empty(e.size + f.size)
    ei = 0
    fi = 0
    q = 0.0
    n = 0
    while ei < e.size and fi < f.size:
        enow = e[ei]
        fnow = f[fi]
        if (fnow > enow) == (fnow > -enow):
            nxt = enow
            ei += 1
        else:
            nxt = fnow
            fi += 1
        if ei + fi == 1:
            q = nxt
            continue
        if ei + fi == 2:
            q, hh = _fast_two_sum(nxt, q)
        else:
            q, hh = two_sum(q, nxt)
        n = _keep(h, n, hh)
    q, n = _sum_rest(q, e, ei, h, n)
    q, n = _sum_rest(q, f, fi, h, n)
    return _close(h, n, q)


@inner
def scale_expansion_zeroelim(e, b):  # pragma: no cover
    """Exact product of an expansion and a double, zero components removed; the
    paper's SCALE-EXPANSION.  Never empty: zero is [0.0]."""
    h = np.empty(2 * e.size)
    bhi, blo = _split(b)
    q, hh = _product_presplit(e[0], b, bhi, blo)
    n = _keep(h, 0, hh)
    for i in range(1, e.size):
        p1, p0 = _product_presplit(e[i], b, bhi, blo)
        s, hh = two_sum(q, p0)
        n = _keep(h, n, hh)
        q, hh = _fast_two_sum(p1, s)
        n = _keep(h, n, hh)
    return _close(h, n, q)


@inner
def _mul(e, f):  # pragma: no cover
    """Exact product of two expansions: the sum of e scaled by each component of f."""
    h = scale_expansion_zeroelim(e, f[0])
    for i in range(1, f.size):
        h = fast_expansion_sum_zeroelim(h, scale_expansion_zeroelim(e, f[i]))
    return h


@inner
def _sub(e, f):  # pragma: no cover
    return fast_expansion_sum_zeroelim(e, -f)


@inner
def _exact_diff(a, b):  # pragma: no cover
    """a - b as an expansion of one or two components."""
    x, y = two_diff(a, b)
    if y == 0.0:
        return np.array([x])
    return np.array([y, x])


@inner
def _cross(ax, ay, bx, by):  # pragma: no cover
    """ax * by - ay * bx exactly, for expansions."""
    return _sub(_mul(ax, by), _mul(ay, bx))


@inner
def _top(e):  # pragma: no cover
    """The most significant component: the sign (and approximate value) of e."""
    return e[e.size - 1]


@inner
def _orient2d_exact(ax, ay, bx, by, cx, cy):  # pragma: no cover
    acx = _exact_diff(ax, cx)
    acy = _exact_diff(ay, cy)
    bcx = _exact_diff(bx, cx)
    bcy = _exact_diff(by, cy)
    return _top(_cross(acx, acy, bcx, bcy))


@kernel
def orient2d(ax, ay, bx, by, cx, cy):  # pragma: no cover
    """Twice the signed area of triangle a, b, c: the determinant
    | ax-cx  ay-cy ; bx-cx  by-cy |, with an exact sign.

    Positive when a, b, c turn counter-clockwise, negative when clockwise,
    zero when collinear (Shewchuk's convention).

    Examples
    --------
    >>> orient2d(0.0, 0.0, 1.0, 0.0, 0.0, 1.0) > 0
    True
    >>> orient2d(0.1, 0.1, 0.3, 0.3, 0.7, 0.7)
    0.0
    """
    detleft = (ax - cx) * (by - cy)
    detright = (ay - cy) * (bx - cx)
    det = detleft - detright
    if detleft > 0.0:
        if detright <= 0.0:
            return det
        detsum = detleft + detright
    elif detleft < 0.0:
        if detright >= 0.0:
            return det
        detsum = -detleft - detright
    else:
        return det
    if det >= _CCW_A * detsum or -det >= _CCW_A * detsum:
        return det
    return _orient2d_adapt(ax, ay, bx, by, cx, cy, detsum)


@inner
def _orient2d_adapt(ax, ay, bx, by, cx, cy, detsum):  # pragma: no cover
    """The paper's stages B and C, then the exact determinant."""
    acx, acxt = two_diff(ax, cx)
    bcx, bcxt = two_diff(bx, cx)
    acy, acyt = two_diff(ay, cy)
    bcy, bcyt = two_diff(by, cy)
    left = np.empty(2)
    right = np.empty(2)
    left[1], left[0] = two_product(acx, bcy)
    right[1], right[0] = two_product(acy, bcx)
    b = _sub(left, right)
    det = 0.0
    for k in range(b.size):
        det += b[k]
    bound = _CCW_B * detsum
    if det >= bound or -det >= bound:
        return det
    if acxt == 0.0 and acyt == 0.0 and bcxt == 0.0 and bcyt == 0.0:
        return det
    bound = _CCW_C * detsum + _RESULT_B * abs(det)
    det += (acx * bcyt + bcy * acxt) - (acy * bcxt + bcx * acyt)
    if det >= bound or -det >= bound:
        return det
    return _orient2d_exact(ax, ay, bx, by, cx, cy)


@inner
def _incircle_exact(ax, ay, bx, by, cx, cy, dx, dy):  # pragma: no cover
    adx = _exact_diff(ax, dx)
    ady = _exact_diff(ay, dy)
    bdx = _exact_diff(bx, dx)
    bdy = _exact_diff(by, dy)
    cdx = _exact_diff(cx, dx)
    cdy = _exact_diff(cy, dy)
    alift = fast_expansion_sum_zeroelim(_mul(adx, adx), _mul(ady, ady))
    blift = fast_expansion_sum_zeroelim(_mul(bdx, bdx), _mul(bdy, bdy))
    clift = fast_expansion_sum_zeroelim(_mul(cdx, cdx), _mul(cdy, cdy))
    det = _mul(alift, _cross(bdx, bdy, cdx, cdy))
    det = fast_expansion_sum_zeroelim(det, _mul(blift, _cross(cdx, cdy, adx, ady)))
    det = fast_expansion_sum_zeroelim(det, _mul(clift, _cross(adx, ady, bdx, bdy)))
    return _top(det)


@kernel
def incircle(ax, ay, bx, by, cx, cy, dx, dy):  # pragma: no cover
    """The in-circle determinant of d against a, b, c, with an exact sign.

    Positive when d lies inside the circle through a, b, c and a, b, c are
    counter-clockwise; negative when outside; zero when the four points are
    cocircular.  The sign flips when a, b, c are clockwise (Shewchuk's
    convention).

    Examples
    --------
    >>> incircle(0.0, 0.0, 1.0, 0.0, 0.0, 1.0, 0.5, 0.5) > 0
    True
    >>> incircle(0.0, 0.0, 1.0, 0.0, 0.0, 1.0, 1.0, 1.0)
    0.0
    """
    adx = ax - dx
    bdx = bx - dx
    cdx = cx - dx
    ady = ay - dy
    bdy = by - dy
    cdy = cy - dy
    bdxcdy = bdx * cdy
    cdxbdy = cdx * bdy
    alift = adx * adx + ady * ady
    cdxady = cdx * ady
    adxcdy = adx * cdy
    blift = bdx * bdx + bdy * bdy
    adxbdy = adx * bdy
    bdxady = bdx * ady
    clift = cdx * cdx + cdy * cdy
    det = alift * (bdxcdy - cdxbdy) + blift * (cdxady - adxcdy) + clift * (adxbdy - bdxady)
    permanent = (
        (abs(bdxcdy) + abs(cdxbdy)) * alift
        + (abs(cdxady) + abs(adxcdy)) * blift
        + (abs(adxbdy) + abs(bdxady)) * clift
    )
    bound = _ICC_A * permanent
    if det > bound or -det > bound:
        return det
    return _incircle_exact(ax, ay, bx, by, cx, cy, dx, dy)


@inner
def _minus(a, d):  # pragma: no cover
    """The rounded coordinate differences a - d of two 3D points."""
    return a[0] - d[0], a[1] - d[1], a[2] - d[2]


@inner
def _orient3d_exact(a, b, c, d):  # pragma: no cover
    adx = _exact_diff(a[0], d[0])
    ady = _exact_diff(a[1], d[1])
    adz = _exact_diff(a[2], d[2])
    bdx = _exact_diff(b[0], d[0])
    bdy = _exact_diff(b[1], d[1])
    bdz = _exact_diff(b[2], d[2])
    cdx = _exact_diff(c[0], d[0])
    cdy = _exact_diff(c[1], d[1])
    cdz = _exact_diff(c[2], d[2])
    det = _mul(adz, _cross(bdx, bdy, cdx, cdy))
    det = fast_expansion_sum_zeroelim(det, _mul(bdz, _cross(cdx, cdy, adx, ady)))
    det = fast_expansion_sum_zeroelim(det, _mul(cdz, _cross(adx, ady, bdx, bdy)))
    return _top(det)


@kernel
def orient3d(a, b, c, d):  # pragma: no cover
    """The determinant | a-d ; b-d ; c-d | (rows), with an exact sign.

    ``a``, ``b``, ``c``, ``d`` are float64 arrays of length 3.  Positive when d
    lies below the plane through a, b, c, where a, b, c appear
    counter-clockwise seen from above the plane; negative when above; zero when
    coplanar (Shewchuk's convention).  The sign flips under any swap of two
    arguments.

    Examples
    --------
    >>> import numpy as np
    >>> o, x, y = np.zeros(3), np.array([1.0, 0, 0]), np.array([0.0, 1, 0])
    >>> orient3d(o, x, y, np.array([0.0, 0, -1])) > 0
    True
    >>> orient3d(o, x, y, np.array([0.3, 0.7, 0.0]))
    0.0
    """
    adx, ady, adz = _minus(a, d)
    bdx, bdy, bdz = _minus(b, d)
    cdx, cdy, cdz = _minus(c, d)
    bdxcdy = bdx * cdy
    cdxbdy = cdx * bdy
    cdxady = cdx * ady
    adxcdy = adx * cdy
    adxbdy = adx * bdy
    bdxady = bdx * ady
    det = adz * (bdxcdy - cdxbdy) + bdz * (cdxady - adxcdy) + cdz * (adxbdy - bdxady)
    permanent = (
        (abs(bdxcdy) + abs(cdxbdy)) * abs(adz)
        + (abs(cdxady) + abs(adxcdy)) * abs(bdz)
        + (abs(adxbdy) + abs(bdxady)) * abs(cdz)
    )
    bound = _O3D_A * permanent
    if det > bound or -det > bound:
        return det
    return _orient3d_exact(a, b, c, d)


@inner
def _insphere_exact(a, b, c, d, e):  # pragma: no cover
    p = (a, b, c, d)
    dx = [_exact_diff(q[0], e[0]) for q in p]
    dy = [_exact_diff(q[1], e[1]) for q in p]
    dz = [_exact_diff(q[2], e[2]) for q in p]
    ab = _cross(dx[0], dy[0], dx[1], dy[1])
    bc = _cross(dx[1], dy[1], dx[2], dy[2])
    cd = _cross(dx[2], dy[2], dx[3], dy[3])
    da = _cross(dx[3], dy[3], dx[0], dy[0])
    ac = _cross(dx[0], dy[0], dx[2], dy[2])
    bd = _cross(dx[1], dy[1], dx[3], dy[3])
    abc = _sub(fast_expansion_sum_zeroelim(_mul(dz[0], bc), _mul(dz[2], ab)), _mul(dz[1], ac))
    bcd = _sub(fast_expansion_sum_zeroelim(_mul(dz[1], cd), _mul(dz[3], bc)), _mul(dz[2], bd))
    cda = fast_expansion_sum_zeroelim(
        fast_expansion_sum_zeroelim(_mul(dz[2], da), _mul(dz[3], ac)), _mul(dz[0], cd)
    )
    dab = fast_expansion_sum_zeroelim(
        fast_expansion_sum_zeroelim(_mul(dz[3], ab), _mul(dz[0], bd)), _mul(dz[1], da)
    )
    lift = [
        fast_expansion_sum_zeroelim(
            fast_expansion_sum_zeroelim(_mul(dx[k], dx[k]), _mul(dy[k], dy[k])),
            _mul(dz[k], dz[k]),
        )
        for k in range(4)
    ]
    det = _sub(_mul(lift[3], abc), _mul(lift[2], dab))
    det = fast_expansion_sum_zeroelim(det, _sub(_mul(lift[1], cda), _mul(lift[0], bcd)))
    return _top(det)


@kernel
def insphere(a, b, c, d, e):  # pragma: no cover
    """The in-sphere determinant of e against a, b, c, d, with an exact sign.

    Float64 arrays of length 3.  Positive when e lies inside the sphere through
    a, b, c, d and ``orient3d(a, b, c, d) > 0``; negative when outside; zero
    when the five points are cospherical.  The sign flips when
    ``orient3d(a, b, c, d) < 0`` (Shewchuk's convention).

    Examples
    --------
    >>> import numpy as np
    >>> a, b, c = np.zeros(3), np.array([1.0, 0, 0]), np.array([0.0, 1, 0])
    >>> d = np.array([0.0, 0, -1])
    >>> insphere(a, b, c, d, np.full(3, 0.1) * [1, 1, -1]) > 0
    True
    >>> insphere(a, b, c, d, np.array([1.0, 1, 0]))
    0.0
    """
    aex, aey, aez = _minus(a, e)
    bex, bey, bez = _minus(b, e)
    cex, cey, cez = _minus(c, e)
    dex, dey, dez = _minus(d, e)
    aexbey = aex * bey
    bexaey = bex * aey
    bexcey = bex * cey
    cexbey = cex * bey
    cexdey = cex * dey
    dexcey = dex * cey
    dexaey = dex * aey
    aexdey = aex * dey
    aexcey = aex * cey
    cexaey = cex * aey
    bexdey = bex * dey
    dexbey = dex * bey
    ab = aexbey - bexaey
    bc = bexcey - cexbey
    cd = cexdey - dexcey
    da = dexaey - aexdey
    ac = aexcey - cexaey
    bd = bexdey - dexbey
    abc = aez * bc - bez * ac + cez * ab
    bcd = bez * cd - cez * bd + dez * bc
    cda = cez * da + dez * ac + aez * cd
    dab = dez * ab + aez * bd + bez * da
    alift = aex * aex + aey * aey + aez * aez
    blift = bex * bex + bey * bey + bez * bez
    clift = cex * cex + cey * cey + cez * cez
    dlift = dex * dex + dey * dey + dez * dez
    det = (dlift * abc - clift * dab) + (blift * cda - alift * bcd)
    aez, bez, cez, dez = abs(aez), abs(bez), abs(cez), abs(dez)
    permanent = (
        (
            (abs(cexdey) + abs(dexcey)) * bez
            + (abs(dexbey) + abs(bexdey)) * cez
            + (abs(bexcey) + abs(cexbey)) * dez
        )
        * alift
        + (
            (abs(dexaey) + abs(aexdey)) * cez
            + (abs(aexcey) + abs(cexaey)) * dez
            + (abs(cexdey) + abs(dexcey)) * aez
        )
        * blift
        + (
            (abs(aexbey) + abs(bexaey)) * dez
            + (abs(bexdey) + abs(dexbey)) * aez
            + (abs(dexaey) + abs(aexdey)) * bez
        )
        * clift
        + (
            (abs(bexcey) + abs(cexbey)) * aez
            + (abs(cexaey) + abs(aexcey)) * bez
            + (abs(aexbey) + abs(bexaey)) * cez
        )
        * dlift
    )
    bound = _ISP_A * permanent
    if det > bound or -det > bound:
        return det
    return _insphere_exact(a, b, c, d, e)
