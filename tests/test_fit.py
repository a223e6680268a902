"""Fitting scattered data: P1 and P2 fields, gradient recovery, masks, data clean-up."""

import numpy as np
import pytest
import shapely
import sympy
from hypothesis import given, settings
from hypothesis import strategies as st

from interp import Field, InterpError, fit, triangulate
from interp._fit import midpoint


def quadratic(rng, d):
    """A random quadratic polynomial in d variables, and its gradient."""
    c0, b, a = rng.normal(), rng.normal(size=d), rng.normal(size=(d, d))
    a = a + a.T

    def f(x):
        return c0 + x @ b + 0.5 * np.einsum("ni,ij,nj->n", x, a, x)

    def grad(x):
        return b + x @ a

    return f, grad


@pytest.mark.parametrize(("d", "n"), [(1, 40), (2, 200), (3, 150)])
def test_p2_reproduces_quadratics_inside_the_hull(rng, d, n):
    # P2 Lagrange interpolation reproduces quadratics when the midpoint values are exact,
    # and a least-squares quadratic fit to exact quadratic data is exact (defining
    # properties); the closed-form polynomial is the reference.
    pts = rng.random((n, d))
    f, grad = quadratic(rng, d)
    field = fit(pts, f(pts), order=2)
    assert field.mesh.order == 2
    q = rng.random((3000, d))
    got = field(q)
    inside = np.isfinite(got)
    assert inside.mean() > 0.7
    scale = np.abs(f(q)).max()
    np.testing.assert_allclose(got[inside], f(q)[inside], rtol=0, atol=1e-10 * scale)
    # the P2 gradient of a reproduced quadratic is its exact gradient
    np.testing.assert_allclose(
        field.gradient(q[inside]), grad(q[inside]), rtol=0, atol=1e-8 * scale
    )


def test_p2_reproduces_quadratics_in_projected_coordinates(rng):
    # survey coordinates far from the origin: a quadratic in offsets from a site origin is
    # still reproduced (defining property of P2 with exact recovered gradients, as above)
    origin = np.array([512_345.0, 6_123_456.0])
    pts = origin + 100.0 * rng.random((300, 2))
    f, _ = quadratic(rng, 2)
    z = f((pts - origin) / 100.0)
    field = fit(pts, z, order=2)
    q = origin + 100.0 * rng.random((2000, 2))
    got = field(q)
    inside = np.isfinite(got)
    np.testing.assert_allclose(
        got[inside], f((q[inside] - origin) / 100.0), rtol=0, atol=1e-9 * np.abs(z).max()
    )


@settings(max_examples=25, deadline=None)
@given(st.lists(st.floats(-10, 10), min_size=6, max_size=6))
def test_p2_reproduces_any_quadratic(coef):
    # defining property of P2 interpolation with exact nodal gradients, for any coefficients
    pts = np.random.default_rng(7).random((80, 2))
    x, y = pts.T
    c = coef

    def f(x, y):
        return c[0] + c[1] * x + c[2] * y + c[3] * x * x + c[4] * x * y + c[5] * y * y

    field = fit(pts, f(x, y), order=2)
    q = np.random.default_rng(8).random((400, 2))
    got = field(q)
    inside = np.isfinite(got)
    assert inside.sum() > 200
    expected = f(q[inside, 0], q[inside, 1])
    np.testing.assert_allclose(got[inside], expected, rtol=0, atol=1e-10 * (1 + max(map(abs, c))))


def test_midpoint_formula_is_exact_for_quadratics():
    # reference: sympy, a symbolic quadratic along an edge in 2D with exact gradients
    x, y, xa, ya, xb, yb = sympy.symbols("x y xa ya xb yb")
    c = sympy.symbols("c0:6")
    f = c[0] + c[1] * x + c[2] * y + c[3] * x**2 + c[4] * x * y + c[5] * y**2

    def at(px, py):
        return f.subs({x: px, y: py})

    def grad(px, py):
        return [sympy.diff(f, s).subs({x: px, y: py}) for s in (x, y)]

    ga, gb = grad(xa, ya), grad(xb, yb)
    formula = (at(xa, ya) + at(xb, yb)) / 2 + (
        (ga[0] - gb[0]) * (xb - xa) + (ga[1] - gb[1]) * (yb - ya)
    ) / 8
    assert sympy.expand(formula - at((xa + xb) / 2, (ya + yb) / 2)) == 0
    # and the array function computes that formula: f = x^2 + 3 y on (1, 0) -> (3, 2)
    va, vb = np.array([[1.0]]), np.array([[15.0]])
    gam, gbm = np.array([[[2.0], [3.0]]]), np.array([[[6.0], [3.0]]])
    assert midpoint(va, vb, gam, gbm, np.array([[2.0, 2.0]]))[0, 0] == pytest.approx(4.0 + 3.0)


def test_p2_is_closer_than_p1_on_a_smooth_surface(rng):
    # reference: the closed form sin(x) cos(y)
    pts = 3.0 * rng.random((400, 2))
    z = np.sin(pts[:, 0]) * np.cos(pts[:, 1])
    q = 3.0 * rng.random((5000, 2))
    exact = np.sin(q[:, 0]) * np.cos(q[:, 1])
    err = {}
    for order in (1, 2):
        got = fit(pts, z, order=order)(q)
        inside = np.isfinite(got)
        e = got[inside] - exact[inside]
        err[order] = (np.abs(e).max(), np.sqrt(np.mean(e**2)))
    assert err[2][0] < err[1][0]
    assert err[2][1] < 0.5 * err[1][1]


def test_linear_field_is_the_data_on_the_triangulation(rng):
    # reference: scipy's LinearNDInterpolator on the same points (general-purpose library)
    from scipy.interpolate import LinearNDInterpolator

    pts = rng.random((150, 2))
    z = np.cos(3 * pts[:, 0]) + pts[:, 1]
    field = fit(pts, z, name="z")
    assert field.name == "z" and field.mesh.order == 1
    q = rng.random((1000, 2))
    np.testing.assert_allclose(field(q), LinearNDInterpolator(pts, z)(q), atol=1e-12)


def test_max_edge_mask_and_unused_nodes(rng):
    # a lattice with one far point: the mask removes the cells reaching it (the same cells
    # as interp.triangulate's mask), the point stays a node no cell uses, and the P2 fit
    # still reproduces quadratics where cells are (defining property, as above)
    lattice = np.array([[i, j] for i in range(6) for j in range(6)], dtype=float)
    lattice += 0.05 * rng.random(lattice.shape)
    pts = np.vstack([lattice, [[20.0, 2.5]]])
    f, _ = quadratic(rng, 2)
    for order in (1, 2):
        field = fit(pts, f(pts), order=order, max_edge=2.0)
        np.testing.assert_array_equal(field.mesh.corners, triangulate(pts, max_edge=2.0).cells)
        assert np.isnan(field([[10.0, 2.5]])[0])
        assert (field.mesh.corners != len(lattice)).all()
        assert np.isfinite(field.values).all()
    q = 5.0 * rng.random((500, 2))
    got = field(q)
    inside = np.isfinite(got)
    assert inside.mean() > 0.8
    np.testing.assert_allclose(got[inside], f(q[inside]), atol=1e-10 * np.abs(f(q)).max())


def test_boundary_mask(rng):
    # an L-shaped site: cells whose centroid is outside the polygon are removed;
    # reference: shapely's point-in-polygon (general-purpose library)
    boundary = [[0, 0], [4, 0], [4, 2], [2, 2], [2, 4], [0, 4]]
    pts = 4.0 * rng.random((300, 2))
    field = fit(pts, pts[:, 0] ** 2, order=2, boundary=boundary)
    poly = shapely.Polygon(boundary)
    centroids = field.mesh.points[field.mesh.corners].mean(axis=1)
    assert shapely.contains_xy(poly, centroids[:, 0], centroids[:, 1]).all()
    assert np.isnan(field([[3.5, 3.5]])[0])
    assert field([[1.0, 1.0]])[0] == pytest.approx(1.0, abs=1e-10)


def test_duplicate_points_are_averaged(rng):
    # repeated measurements at one position are averaged (common practice, no source)
    pts = rng.random((30, 2))
    z = pts[:, 0] + 2 * pts[:, 1]
    dup = np.vstack([pts, pts[4:5]])
    zdup = np.append(z, z[4] + 1.0)
    with pytest.warns(UserWarning, match="1 duplicate point"):
        field = fit(dup, zdup)
    assert field.mesh.n_nodes == 30
    assert field.values[4] == pytest.approx(z[4] + 0.5)


def test_nan_values_are_dropped_with_a_warning(rng):
    # the fit equals the fit of the rows without NaN values
    pts = rng.random((40, 2))
    z = np.sin(4 * pts[:, 0]) + pts[:, 1]
    zn = z.copy()
    zn[[3, 17, 22]] = np.nan
    with pytest.warns(UserWarning, match="3 point\\(s\\) with NaN values dropped"):
        field = fit(pts, zn, order=2)
    keep = np.isfinite(zn)
    clean = fit(pts[keep], z[keep], order=2)
    np.testing.assert_array_equal(field.mesh.points, clean.mesh.points)
    np.testing.assert_array_equal(field.values, clean.values)


def test_several_components_fit_like_each_one(rng):
    pts = rng.random((60, 3))
    vals = np.column_stack([pts[:, 0] ** 2, np.cos(pts[:, 1]) + pts[:, 2]])
    both = fit(pts, vals, order=2)
    assert both.values.shape[1] == 2
    for c in range(2):
        np.testing.assert_allclose(both.values[:, c], fit(pts, vals[:, c], order=2).values)


def test_tiny_sets_fall_back_to_linear_gradients():
    # four points cannot carry a quadratic: the P2 fit still reproduces linear data
    # (linear least squares is exact on linear data; P2 interpolation contains P1)
    pts = np.array([[0.0, 0], [1, 0], [0, 1], [1, 1.2]])
    z = 2 + 3 * pts[:, 0] - pts[:, 1]
    field = fit(pts, z, order=2)
    q = np.array([[0.3, 0.3], [0.7, 0.8], [0.5, 0.1]])
    np.testing.assert_allclose(field(q), 2 + 3 * q[:, 0] - q[:, 1], atol=1e-12)


def test_one_dimensional_points_as_a_flat_array():
    # 1D P2 reproduces the parabola (x - 1)^2 exactly between the end points, NaN beyond
    x = np.array([0.0, 0.7, 1.1, 2.0, 3.4, 4.0])
    field = fit(x, (x - 1) ** 2, order=2)
    q = np.linspace(0, 4, 17)
    np.testing.assert_allclose(field(q), (q - 1) ** 2, atol=1e-12)
    assert np.isnan(field([5.0])[0])


def test_bad_input():
    pts = np.random.default_rng(0).random((10, 2))
    with pytest.raises(InterpError, match="order must be 1"):
        fit(pts, np.zeros(10), order=3)
    with pytest.raises(InterpError, match="10 points.*9 rows"):
        fit(pts, np.zeros(9))
    with pytest.raises(InterpError, match=r"infinite at point 3 \(counting from 1\)"):
        fit(pts, np.where(np.arange(10) == 2, np.inf, 0.0))
    assert isinstance(fit(pts, np.zeros(10)), Field)


def test_all_values_missing_is_refused(rng):
    # NaN marks no data: with no value at all there is nothing to fit
    pts = rng.random((10, 2))
    with pytest.raises(
        InterpError, match=r"all values are missing \(NaN\) at the 10 point\(s\) given.* 3 or more"
    ):
        fit(pts, np.full(10, np.nan))
    # two components, each row missing one of them: no row has values
    vals = np.ones((10, 2))
    vals[::2, 0] = vals[1::2, 1] = np.nan
    with pytest.raises(InterpError, match=r"all values are missing \(NaN\) at the 10 point"):
        fit(pts, vals, order=2)


@pytest.mark.parametrize(("d", "have"), [(1, 1), (2, 2), (3, 3)])
def test_fewer_than_d_plus_one_values_is_refused(rng, d, have):
    z = np.full(12, np.nan)
    z[:have] = 1.0
    with pytest.raises(
        InterpError,
        match=rf"only {have} of 12 point\(s\) have values, {12 - have} are missing \(NaN\); "
        rf"fitting {d}D data needs values at {d + 1} or more points",
    ):
        fit(rng.random((12, d)), z)


def test_d_plus_one_values_are_enough(rng):
    # three values in 2D: one triangle, and P1 at its centroid is the mean of the corner values
    pts = rng.random((10, 2))
    z = np.full(10, np.nan)
    z[[2, 5, 7]] = [1.0, 2.0, 6.0]
    with pytest.warns(UserWarning, match="7 point\\(s\\) with NaN values dropped"):
        field = fit(pts, z)
    assert field.mesh.n_cells == 1
    assert field([pts[[2, 5, 7]].mean(axis=0)])[0] == pytest.approx(3.0, rel=1e-12)


def test_non_numeric_values_named():
    with pytest.raises(InterpError, match="values must be numbers, one row per point"):
        fit(np.eye(3)[:, :2] + [[0, 0], [0, 0], [1, 1]], ["a", "b", "c"])


def jittered_lattice(n, d, seed, side):
    """n**d lattice points on [0, side]^d moved by up to a quarter spacing per axis.

    Points on a side of the box move only along it, so the hull stays the box and a
    hull node has neighbours on its side in line with it.
    """
    axis = np.linspace(0.0, side, n)
    pts = np.stack(np.meshgrid(*[axis] * d, indexing="ij"), axis=-1).reshape(-1, d)
    move = 0.25 * (side / (n - 1)) * np.random.default_rng(seed).uniform(-1, 1, pts.shape)
    move[(pts == 0.0) | (pts == side)] = 0.0
    return pts + move


def smooth(x):
    """sin(x) cos(y) (2D), sin(x) cos(y) cos(z) (3D)."""
    return np.sin(x[:, 0]) * np.prod(np.cos(x[:, 1:]), axis=1)


def max_errors(n, d, seed, side, level):
    """Largest |fit - f| over every cell, and over the cells with a corner on the box.

    The field is evaluated at the barycentric lattice of the given level in every
    cell (pulled 2 % towards the centroid so each point has one cell): a dense set
    covering the whole hull, evaluated in one call.
    """
    pts = jittered_lattice(n, d, seed, side)
    field = fit(pts, smooth(pts), order=2)
    corners = field.mesh.points[field.mesh.corners]
    steps = [c for c in np.ndindex(*[level + 1] * d) if sum(c) <= level]
    lam = np.array([[level - sum(c), *c] for c in steps], dtype=float) / level
    lam = 0.98 * lam + 0.02 / (d + 1)
    q = np.einsum("lk,ckg->clg", lam, corners)
    err = np.abs(field(q.reshape(-1, d)) - smooth(q.reshape(-1, d))).reshape(q.shape[:2])
    err = err.max(axis=1)
    on_box = ((corners == 0.0) | (corners == side)).any(axis=(1, 2))
    return err.max(), err[on_box].max(), err[~on_box].max()


# Expected order: P2 Lagrange interpolation of a smooth f errs by O(h^3) in the maximum
# norm (Ciarlet, The Finite Element Method for Elliptic Problems, 1978, Thm 3.1.6; from
# memory).  The midpoint values come from recovered gradients, (v_a + v_b) / 2 + (g_a -
# g_b) . (x_b - x_a) / 8, so an O(h^2) gradient error adds O(h^3); a least-squares quadratic
# fit over a patch of radius O(h) reproduces quadratics and has that O(h^2) gradient error
# (Taylor's theorem; the recovery of Zienkiewicz & Zhu, IJNME 33, 1992, and Zhang & Naga,
# SIAM J. Sci. Comput. 26, 2005), in any dimension.  The observed order of the maximum
# norm, log2 of the ratio of errors at spacings h and h / 2, must then approach 3 over the
# whole hull.  The maximum over a random mesh is set by its worst cell and is noisy from
# seed to seed, so the error at each size is the geometric mean over five seeds.
@pytest.mark.parametrize(
    ("d", "sizes", "side", "level"), [(2, (16, 32, 64, 128), 3.0, 4), (3, (5, 9, 17), 1.5, 3)]
)
def test_p2_converges_like_h_cubed_up_to_the_hull(d, sizes, side, level):
    # the spacings side / (n - 1) halve from one size to the next
    errs = np.array([[max_errors(n, d, seed, side, level) for n in sizes] for seed in range(5)])
    whole = np.exp(np.log(errs[:, :, 0]).mean(axis=0))
    orders = np.log2(whole[:-1] / whole[1:])
    assert orders.min() >= 2.7, orders
    if d == 2:
        # and for each seed, over the whole refinement from n = 16 to 128 (observed per seed
        # on this mesh family: 2.72 to 3.38; in 3D one seed of three sizes gives 2.61)
        per_seed = np.log2(errs[:, 0, 0] / errs[:, -1, 0]) / (len(sizes) - 1)
        assert per_seed.min() >= 2.7, per_seed
    # next to the box the error stays of the size it has inside (at the finest size);
    # a one-sided interpolating fit at the hull nodes made it 20-80 times larger
    hull, interior = errs[:, -1, 1], errs[:, -1, 2]
    assert (hull <= 4.0 * interior).all(), hull / interior
