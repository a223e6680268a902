"""Exact predicates against exact rational arithmetic (Python's ``fractions``).

Reference: the determinants of Shewchuk (1997), "Adaptive Precision
Floating-Point Arithmetic and Fast Robust Geometric Predicates", evaluated
exactly with :class:`fractions.Fraction` (every double is a rational number,
so the Fraction value is the true determinant of the given doubles).
"""

from fractions import Fraction

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from interp._kernels.predicates import incircle, insphere, orient2d, orient3d


def sign(v) -> int:
    return int(v > 0) - int(v < 0)


def f_orient2d(a, b, c) -> int:
    ax, ay, bx, by, cx, cy = (Fraction(v) for v in (*a, *b, *c))
    return sign((ax - cx) * (by - cy) - (ay - cy) * (bx - cx))


def f_incircle(a, b, c, d) -> int:
    rows = []
    for p in (a, b, c):
        x, y = Fraction(p[0]) - Fraction(d[0]), Fraction(p[1]) - Fraction(d[1])
        rows.append((x, y, x * x + y * y))
    (a1, a2, a3), (b1, b2, b3), (c1, c2, c3) = rows
    return sign(a1 * (b2 * c3 - b3 * c2) - a2 * (b1 * c3 - b3 * c1) + a3 * (b1 * c2 - b2 * c1))


def f_det(m) -> Fraction:
    """Determinant by cofactor expansion along the first row, exactly."""
    if len(m) == 1:
        return m[0][0]
    return sum(
        (-1) ** j * m[0][j] * f_det([row[:j] + row[j + 1 :] for row in m[1:]])
        for j in range(len(m))
    )


def f_orient3d(a, b, c, d) -> int:
    return sign(f_det([[Fraction(p[k]) - Fraction(d[k]) for k in range(3)] for p in (a, b, c)]))


def f_insphere(a, b, c, d, e) -> int:
    rows = []
    for p in (a, b, c, d):
        r = [Fraction(p[k]) - Fraction(e[k]) for k in range(3)]
        rows.append(r + [sum(v * v for v in r)])
    # rows (a-e, |a-e|^2), ...: positive inside when orient3d(a, b, c, d) > 0
    return sign(f_det(rows))


OFFSET = np.array([5e5, 6e6, 1e2])  # survey-style offsets (easting, northing, height)


def ulp_perturbed(rng, points):
    """Points moved by at most one ulp in each coordinate."""
    steps = rng.integers(-1, 2, size=points.shape)
    out = points.copy()
    out[steps > 0] = np.nextafter(out[steps > 0], np.inf)
    out[steps < 0] = np.nextafter(out[steps < 0], -np.inf)
    return out


def test_known_values():
    # hand-worked: unit right triangle, doubled area 1; (1, 1) on its circumcircle
    assert orient2d(0.0, 0.0, 1.0, 0.0, 0.0, 1.0) == 1.0
    assert orient2d(0.0, 0.0, 0.0, 1.0, 1.0, 0.0) == -1.0
    assert incircle(0.0, 0.0, 1.0, 0.0, 0.0, 1.0, 1.0, 1.0) == 0.0
    assert incircle(0.0, 0.0, 1.0, 0.0, 0.0, 1.0, 0.5, 0.5) > 0
    assert incircle(0.0, 0.0, 1.0, 0.0, 0.0, 1.0, 2.0, 2.0) < 0


def test_orient2d_near_collinear_at_survey_offsets():
    rng = np.random.default_rng(1)
    for _ in range(400):
        t = rng.random(3) * np.array([1e-3, 1e3, -1e3])
        base = OFFSET[:2] + np.outer(t, [0.6, 0.8])  # on a line, then one ulp off
        a, b, c = ulp_perturbed(rng, base)
        assert sign(orient2d(*a, *b, *c)) == f_orient2d(a, b, c)


def test_orient2d_classroom_example():
    # Kettner, Mehlhorn, Pion, Schirra, Yap, "Classroom examples of robustness problems
    # in geometric computations" (CGTA 40, 2008): p = (0.5 + x u, 0.5 + y u), q = (12, 12),
    # r = (24, 24), u = 2^-53, where the plain floating-point determinant errs
    u = 2.0**-53
    wrong_float = 0
    for i in range(64):
        for j in range(64):
            a, b, c = (0.5 + i * u, 0.5 + j * u), (12.0, 12.0), (24.0, 24.0)
            expected = f_orient2d(a, b, c)
            assert sign(orient2d(*a, *b, *c)) == expected
            naive = (a[0] - c[0]) * (b[1] - c[1]) - (a[1] - c[1]) * (b[0] - c[0])
            wrong_float += sign(naive) != expected
    assert wrong_float > 1000  # 1442 of 4096 signs wrong in plain float64 here


def test_incircle_near_cocircular_at_survey_offsets():
    rng = np.random.default_rng(2)
    for _ in range(300):
        ang = rng.random(4) * 2 * np.pi
        r = 1.0 + 99.0 * rng.random()
        base = OFFSET[:2] + r * np.stack([np.cos(ang), np.sin(ang)], axis=1)
        p = ulp_perturbed(rng, base)
        expected = f_incircle(*p)
        assert sign(incircle(*p.ravel())) == expected
    # exactly cocircular integer points (3-4-5 circle) give zero
    pts = [(5e5 + 5, 6e6), (5e5, 6e6 + 5), (5e5 - 3, 6e6 - 4), (5e5 + 4, 6e6 - 3)]
    assert incircle(*np.ravel(pts)) == 0.0


def test_grid_degeneracies_are_zero():
    # integer grids at offsets: collinear triples and cocircular squares are exact zeros
    x0, y0 = 512345.0, 6123456.0
    assert orient2d(x0, y0, x0 + 1, y0 + 1, x0 + 3, y0 + 3) == 0.0
    assert incircle(x0, y0, x0 + 1, y0, x0 + 1, y0 + 1, x0, y0 + 1) == 0.0
    assert incircle(x0, y0, x0 + 0.5, y0, x0 + 0.5, y0 + 0.5, x0, y0 + 0.5) == 0.0


def test_orient3d_and_insphere_near_degenerate():
    rng = np.random.default_rng(3)
    for _ in range(150):
        # four points on a plane through the offset, one perturbed by an ulp
        u, v = rng.normal(size=3), rng.normal(size=3)
        st_ = rng.random((4, 2)) * 20
        base = OFFSET + st_[:, :1] * u + st_[:, 1:] * v
        p = ulp_perturbed(rng, base)
        assert sign(orient3d(*p)) == f_orient3d(*p)
        # five points on a sphere, perturbed
        w = rng.normal(size=(5, 3))
        w /= np.linalg.norm(w, axis=1, keepdims=True)
        q = ulp_perturbed(rng, OFFSET + 7.0 * w)
        assert sign(insphere(*q)) == f_insphere(*q)


def test_insphere_known_sign_and_cospherical_zero():
    a, b, c = np.zeros(3), np.array([1.0, 0, 0]), np.array([0.0, 1, 0])
    d = np.array([0.0, 0, -1])
    assert orient3d(a, b, c, d) > 0
    assert insphere(a, b, c, d, np.array([0.5, 0.5, -0.5])) > 0  # sphere centre
    assert insphere(a, b, c, d, np.array([5.0, 5.0, 5.0])) < 0
    assert insphere(a, b, c, d, np.array([1.0, 1.0, -1.0])) == 0.0  # cube corner


coord = st.floats(-1e3, 1e3, allow_nan=False).map(lambda v: v + 5e5)
small = st.sampled_from([0.0, 1.0, 0.5, 2.0, 1e-9])
pt2 = st.tuples(coord, coord | small)
pt3 = st.tuples(coord, coord, coord | small)


@settings(max_examples=300, deadline=None)
@given(pt2, pt2, pt2, pt2)
def test_2d_sign_equals_fraction_and_antisymmetric(a, b, c, d):
    o = orient2d(*a, *b, *c)
    assert sign(o) == f_orient2d(a, b, c)
    assert sign(orient2d(*b, *a, *c)) == -sign(o)
    assert sign(orient2d(*b, *c, *a)) == sign(o)
    i = incircle(*a, *b, *c, *d)
    assert sign(i) == f_incircle(a, b, c, d)
    assert sign(incircle(*b, *a, *c, *d)) == -sign(i)
    assert sign(incircle(*a, *c, *b, *d)) == -sign(i)


@settings(max_examples=150, deadline=None)
@given(pt3, pt3, pt3, pt3, pt3)
def test_3d_sign_equals_fraction_and_antisymmetric(a, b, c, d, e):
    a, b, c, d, e = (np.array(p) for p in (a, b, c, d, e))
    o = orient3d(a, b, c, d)
    assert sign(o) == f_orient3d(a, b, c, d)
    assert sign(orient3d(b, a, c, d)) == -sign(o)
    s = insphere(a, b, c, d, e)
    assert sign(s) == f_insphere(a, b, c, d, e)
    assert sign(insphere(b, a, c, d, e)) == -sign(s)
    assert sign(insphere(a, b, c, e, d)) == -sign(s)
