"""Integrals, measures, means and L2 norms against exact values (sympy, closed forms)."""

from math import cos, e, pi, sin, sqrt
from types import SimpleNamespace

import numpy as np
import pytest
import shapely
import sympy as sp
from conftest import cube_mesh, square_mesh
from hypothesis import given, settings
from hypothesis import strategies as st
from sympy.integrals.intpoly import polytope_integrate

import interp
from interp import (
    Box,
    Field,
    HalfSpace,
    InterpError,
    Mesh,
    Polygon,
    integrate,
    integrate_pieces,
    mean,
    measure,
    norm_l2,
    summarize,
    triangulate,
)
from interp._integrate import region_measure

X, Y, Z = sp.symbols("x y z")
LINEAR_2D = 0.5 - 2 * X + 3 * Y
QUADRATIC_2D = 1.5 + 2 * X - Y + 0.5 * X**2 - X * Y + 0.75 * Y**2
QUADRATIC_3D = 1 - X + 2 * Z + X * Z - 0.5 * Y**2 + 0.25 * X * Y + Z**2
PENTAGON = [(0, 0), (4, 0), (5, 2), (3, 4), (0, 3)]


def values(expr, points):
    """Evaluate a sympy expression at (n, g) points."""
    return sp.lambdify((X, Y, Z)[: points.shape[1]], expr, "numpy")(*points.T) + 0 * points[:, 0]


def polygon_mesh(rng) -> Mesh:
    """The convex PENTAGON triangulated with interior points."""
    verts = np.array(PENTAGON, dtype=float)
    w = rng.dirichlet(np.ones(len(verts)), 40)
    return triangulate(np.vstack([verts, w @ verts]))


def square_pieces():
    """The part x <= 0.5 of square_mesh(1), cut by hand into pieces of its two cells."""
    # square_mesh(1) cells: 0 = (0,0) (1,0) (1,1); 1 = (0,0) (1,1) (0,1)
    corners = [
        [(0.0, 0.0), (0.5, 0.0), (0.5, 0.5)],
        [(0.0, 0.0), (0.5, 0.5), (0.5, 1.0)],
        [(0.0, 0.0), (0.5, 1.0), (0.0, 1.0)],
    ]
    return SimpleNamespace(parent=np.array([0, 1, 1]), corners=np.array(corners))


def test_p1_and_p2_on_polygon_match_sympy(rng):
    # reference: sympy polytope_integrate (exact integral of a polynomial over a polygon)
    poly = sp.Polygon(*PENTAGON[::-1])  # clockwise, as polytope_integrate wants

    def exact(expr):
        return float(polytope_integrate(poly, sp.expand(expr)))

    mesh = polygon_mesh(rng)
    p2 = mesh.elevate()
    lin = Field(mesh, values(LINEAR_2D, mesh.points))
    quad = Field(p2, values(QUADRATIC_2D, p2.points))
    area = exact(sp.Integer(1))
    assert area == 15.5  # shoelace formula, by hand
    assert integrate(lin) == pytest.approx(exact(LINEAR_2D), rel=1e-12)
    assert integrate(quad) == pytest.approx(exact(QUADRATIC_2D), rel=1e-12)
    assert measure(mesh) == pytest.approx(area, rel=1e-13)
    assert mean(quad) == pytest.approx(exact(QUADRATIC_2D) / area, rel=1e-12)
    assert norm_l2(lin) == pytest.approx(sqrt(exact(LINEAR_2D**2)), rel=1e-12)
    assert norm_l2(quad) == pytest.approx(sqrt(exact(QUADRATIC_2D**2)), rel=1e-12)
    assert quad.integrate() == integrate(quad)


def test_tetra10_matches_sympy():
    # reference: sympy integrate over the box [1, 3] x [-1, 0] x [0, 3]
    base = cube_mesh(2).elevate()
    mesh = Mesh(base.points * [2.0, 1.0, 3.0] + [1.0, -1.0, 0.0], base.cells)
    field = Field(mesh, values(QUADRATIC_3D, mesh.points))
    box = ((X, 1, 3), (Y, -1, 0), (Z, 0, 3))
    assert integrate(field) == pytest.approx(float(sp.integrate(QUADRATIC_3D, *box)), rel=1e-12)
    assert norm_l2(field) == pytest.approx(
        sqrt(float(sp.integrate(QUADRATIC_3D**2, *box))), rel=1e-12
    )
    assert measure(mesh) == pytest.approx(6.0, rel=1e-13)
    p1 = Field(mesh.linear(), values(1 - X + 2 * Y + 3 * Z, mesh.points))
    assert integrate(p1) == pytest.approx(float(sp.integrate(1 - X + 2 * Y + 3 * Z, *box)), 1e-12)


def test_tilted_plane_surface_in_3d():
    # a graph z = a x + b y over a region of area A has area A sqrt(1 + a^2 + b^2), i.e. the
    # projected area over the cosine of the tilt (calculus, surface area of a graph);
    # and the integral of g(x, y) over it is sqrt(1 + a^2 + b^2) times that over the region
    a, b = 0.3, -0.4
    flat = square_mesh(3)
    xy = flat.points * [2.0, 1.0]
    surface = Mesh(np.column_stack([xy, 1.0 + a * xy[:, 0] + b * xy[:, 1]]), flat.cells)
    stretch = sqrt(1 + a * a + b * b)
    assert surface.dim == 2 and surface.gdim == 3
    assert measure(surface) == pytest.approx(2.0 * stretch, rel=1e-13)
    p2 = surface.elevate()
    field = Field(p2, values(QUADRATIC_2D, p2.points[:, :2]))
    ref = stretch * float(sp.integrate(QUADRATIC_2D, (X, 0, 2), (Y, 0, 1)))
    assert integrate(field) == pytest.approx(ref, rel=1e-12)
    assert mean(Field(surface, np.ones(surface.n_nodes))) == pytest.approx(1.0, rel=1e-13)


def test_polyline_in_2d():
    # perimeter of a regular n-gon inscribed in a circle of radius r is 2 n r sin(pi / n)
    # (elementary geometry); by symmetry the integral of x along it is its centre's x times
    # the perimeter
    n, r, centre = 12, 2.0, np.array([1.0, -1.0])
    angle = 2 * pi * np.arange(n) / n
    points = centre + r * np.column_stack([np.cos(angle), np.sin(angle)])
    ring = Mesh(points, np.column_stack([np.arange(n), (np.arange(n) + 1) % n]))
    perimeter = 2 * n * r * sin(pi / n)
    assert measure(ring) == pytest.approx(perimeter, rel=1e-13)
    assert integrate(Field(ring, points[:, 0])) == pytest.approx(centre[0] * perimeter, 1e-13)
    # a quadratic along a straight P2 segment in 3D of length 3: integral of (s / 3)^2 ds = 1
    seg = Mesh([[0.0, 0, 0], [1, 2, 2], [0.5, 1, 1]], [[0, 1, 2]], cell_type="line3")
    assert integrate(Field(seg, seg.points[:, 0] ** 2)) == pytest.approx(1.0, rel=1e-13)


def test_multicomponent_field_per_component():
    mesh = square_mesh(2).elevate()
    vals = np.column_stack(
        [values(LINEAR_2D, mesh.points), values(QUADRATIC_2D, mesh.points), np.ones(mesh.n_nodes)]
    )
    field = Field(mesh, vals)
    # reference: sympy integrate over the unit square, one value per component
    square = ((X, 0, 1), (Y, 0, 1))
    ref = [float(sp.integrate(ex, *square)) for ex in (LINEAR_2D, QUADRATIC_2D, sp.Integer(1))]
    total = integrate(field)
    assert total.shape == (3,)
    np.testing.assert_allclose(total, ref, rtol=1e-12)
    np.testing.assert_allclose(mean(field), ref, rtol=1e-12)
    sq = [float(sp.integrate(ex**2, *square)) for ex in (LINEAR_2D, QUADRATIC_2D, sp.Integer(1))]
    np.testing.assert_allclose(norm_l2(field), np.sqrt(sq), rtol=1e-12)
    assert integrate(Field(mesh, vals[:, 1])) == pytest.approx(total[1], rel=1e-14)


def test_mean_and_norm_by_hand():
    # f = x on the unit square: mean 1/2, L2 norm sqrt(integral of x^2) = sqrt(1/3)
    mesh = square_mesh(4)
    field = Field(mesh, mesh.points[:, 0])
    assert mean(field) == pytest.approx(0.5, rel=1e-14)
    assert norm_l2(field) == pytest.approx(sqrt(1 / 3), rel=1e-14)


def test_callable_integrand_and_degree():
    mesh = square_mesh(2)
    f = lambda x: x[:, 0] ** 5 * x[:, 1]  # noqa: E731
    # integral of x^5 y over the unit square is 1/6 * 1/2 (hand calculation)
    assert integrate(f, mesh=mesh, degree=6) == pytest.approx(1 / 12, rel=1e-13)
    # the default degree (2 for a P1 mesh) is not exact for a degree-6 integrand
    assert abs(integrate(f, mesh=mesh) - 1 / 12) > 1e-4
    # closed form: integral of exp(x) sin(y) over the unit square is (e - 1)(1 - cos 1)
    smooth = lambda x: np.exp(x[:, 0]) * np.sin(x[:, 1])  # noqa: E731
    assert integrate(smooth, mesh=mesh, degree=12) == pytest.approx((e - 1) * (1 - cos(1)), 1e-12)
    two = integrate(lambda x: np.column_stack([x[:, 0], np.ones(len(x))]), mesh=mesh)
    np.testing.assert_allclose(two, [0.5, 1.0], rtol=1e-14)


def test_pieces_built_by_hand():
    # reference: sympy integrate over [0, 1/2] x [0, 1], tiled by pieces of the two cells
    mesh = square_mesh(1).elevate()
    field = Field(mesh, values(QUADRATIC_2D, mesh.points))
    ref = float(sp.integrate(QUADRATIC_2D, (X, 0, 0.5), (Y, 0, 1)))
    pieces = square_pieces()
    assert integrate_pieces(field, mesh, pieces, 2) == pytest.approx(ref, rel=1e-13)
    assert integrate_pieces(lambda x: np.ones(len(x)), mesh, pieces, 0) == pytest.approx(0.5)
    callable_ref = integrate_pieces(lambda x: values(QUADRATIC_2D, x), mesh, pieces, 2)
    assert callable_ref == pytest.approx(ref, rel=1e-13)


def test_regions_through_clip_match_sympy():
    # reference: sympy integrate / polytope_integrate over mesh ∩ region
    mesh = square_mesh(3).elevate()
    field = Field(mesh, values(QUADRATIC_2D, mesh.points))
    left = HalfSpace([1.0, 0.0], 0.4)
    ref = float(sp.integrate(QUADRATIC_2D, (X, 0, 0.4), (Y, 0, 1)))
    assert integrate(field, region=left) == pytest.approx(ref, rel=1e-12)
    assert field.integrate(left) == pytest.approx(ref, rel=1e-12)
    assert measure(mesh, left) == pytest.approx(0.4, rel=1e-13)
    assert mean(field, left) == pytest.approx(ref / 0.4, rel=1e-12)
    sq = float(sp.integrate(sp.expand(QUADRATIC_2D**2), (X, 0, 0.4), (Y, 0, 1)))
    assert norm_l2(field, left) == pytest.approx(sqrt(sq), rel=1e-12)
    cb = lambda x: values(QUADRATIC_2D, x)  # noqa: E731
    assert integrate(cb, mesh=mesh, region=left) == pytest.approx(ref, rel=1e-12)
    # a concave polygon partly outside the mesh: the L-shape clipped to the unit square
    ell = [(0.2, 0.1), (1.5, 0.1), (1.5, 0.5), (0.6, 0.5), (0.6, 0.9), (0.2, 0.9)]
    inside = [(0.2, 0.1), (1, 0.1), (1, 0.5), (0.6, 0.5), (0.6, 0.9), (0.2, 0.9)]
    # polytope_integrate wants clockwise vertices; `inside` runs counter-clockwise
    exact = float(polytope_integrate(sp.Polygon(*inside[::-1]), QUADRATIC_2D))
    assert integrate(field, region=Polygon(ell)) == pytest.approx(exact, rel=1e-12)
    assert measure(mesh, Polygon(ell)) == pytest.approx(0.8 * 0.4 + 0.4 * 0.4, rel=1e-12)


def test_box_region_on_tetra10_matches_sympy():
    # reference: sympy integrate over the box [0.25, 1] x [0, 0.5] x [0.1, 0.7]
    mesh = cube_mesh(2).elevate()
    field = Field(mesh, values(QUADRATIC_3D, mesh.points))
    box = Box([0.25, -1.0, 0.1], [2.0, 0.5, 0.7])
    ref = float(sp.integrate(QUADRATIC_3D, (X, 0.25, 1), (Y, 0, 0.5), (Z, 0.1, 0.7)))
    assert integrate(field, region=box) == pytest.approx(ref, rel=1e-12)
    assert measure(mesh, box) == pytest.approx(0.75 * 0.5 * 0.6, rel=1e-12)


def test_empty_region_is_zero_and_mean_refused():
    mesh = square_mesh(1)
    far = Box([5.0, 5.0], [6.0, 6.0])
    vector = Field(mesh, np.ones((mesh.n_nodes, 2)))
    assert integrate(Field(mesh, np.ones(mesh.n_nodes)), region=far) == 0.0
    np.testing.assert_array_equal(integrate(vector, region=far), [0.0, 0.0])
    assert integrate(lambda x: x[:, 0], mesh=mesh, region=far) == 0.0
    assert measure(mesh, far) == 0.0
    with pytest.raises(InterpError, match="does not overlap the mesh"):
        mean(vector, far)
    with pytest.raises(InterpError, match="does not overlap the mesh"):
        mean(vector, HalfSpace([1.0, 0.0], -1.0))


@settings(max_examples=25, deadline=None)
@given(
    w=st.lists(st.floats(0.05, 1.0), min_size=4, max_size=4),
    cell=st.integers(0, 11),
    dim=st.sampled_from([2, 3]),
)
def test_splitting_a_cell_keeps_the_integral(w, cell, dim):
    # additivity of the integral: fan a cell from an interior point into t + 1 sub-simplices
    mesh = (square_mesh(2) if dim == 2 else cube_mesh(1)).elevate()
    expr = QUADRATIC_2D if dim == 2 else QUADRATIC_3D
    field = Field(mesh, values(expr, mesh.points))
    cell = cell % mesh.n_cells
    corners = mesh.points[mesh.corners[cell]]
    centre = (np.array(w[: dim + 1]) / sum(w[: dim + 1])) @ corners
    fan = np.repeat(corners[None], dim + 1, axis=0)
    fan[np.arange(dim + 1), np.arange(dim + 1)] = centre
    whole = integrate_pieces(field, mesh, SimpleNamespace(parent=[cell], corners=[corners]), 2)
    split = integrate_pieces(
        field, mesh, SimpleNamespace(parent=[cell] * (dim + 1), corners=fan), 2
    )
    assert split == pytest.approx(whole, rel=1e-12)


def test_pieces_of_an_embedded_cell():
    # pieces of a triangle lying in a tilted plane in 3D: barycentric coordinates by projection
    corners = np.array([[0.0, 0, 1], [2, 0, 2], [0, 1, 1]])
    mesh = Mesh(corners, [[0, 1, 2]]).elevate()
    field = Field(mesh, mesh.points[:, 0] ** 2 + mesh.points[:, 1])
    mid = corners.mean(axis=0)
    fan = np.repeat(corners[None], 3, axis=0)
    fan[[0, 1, 2], [0, 1, 2]] = mid
    split = integrate_pieces(field, mesh, SimpleNamespace(parent=[0, 0, 0], corners=fan), 2)
    # the cell has area |(2, 0, 1) x (0, 1, 0)| / 2 = sqrt(5) / 2; over it x = 2u, y = v with
    # (u, v) in the unit triangle, so the integral is sqrt(5) (4/12 + 1/6) (hand calculation)
    assert split == pytest.approx(sqrt(5) * 0.5, rel=1e-13)
    assert integrate(field) == pytest.approx(sqrt(5) * 0.5, rel=1e-13)


def test_survey_scale_coordinates_give_the_same_integral():
    # the integral of the same node values is invariant under translation of the mesh
    base = square_mesh(3).elevate()
    shifted = Mesh(base.points * 50.0 + [512345.0, 6123456.0], base.cells)
    vals = values(QUADRATIC_2D, base.points)
    ref = integrate(Field(base, vals)) * 2500.0
    assert integrate(Field(shifted, vals)) == pytest.approx(ref, rel=1e-11)


def test_nan_values_are_refused_only_where_integrated():
    mesh = square_mesh(1)
    vals = np.ones(mesh.n_nodes)
    vals[[2, 3]] = np.nan  # nodes (1, 0) and (1, 1), both in cell 0, node 3 also in cell 1
    field = Field(mesh, vals, name="depth")
    with pytest.raises(InterpError, match=r"'depth' has NaN values at 2 node\(s\)"):
        integrate(field)
    vals[3] = 1.0
    only_cell_1 = SimpleNamespace(parent=[1], corners=[mesh.points[mesh.corners[1]]])
    assert integrate_pieces(Field(mesh, vals), mesh, only_cell_1, 1) == pytest.approx(0.5)
    with pytest.raises(InterpError, match="NaN at 3 of the 6 quadrature points"):
        integrate(lambda x: np.where(x[:, 0] > x[:, 1], np.nan, 1.0), mesh=mesh)


def test_bad_input():
    mesh = square_mesh(1)
    field = Field(mesh, np.zeros(mesh.n_nodes))
    with pytest.raises(InterpError, match="pass mesh="):
        integrate(lambda x: x[:, 0])
    with pytest.raises(InterpError, match="not the field's own mesh"):
        integrate(field, mesh=square_mesh(1))
    with pytest.raises(InterpError, match="Field or a function"):
        integrate(3.0, mesh=mesh)
    with pytest.raises(InterpError, match=r"returned shape \(1,\)"):
        integrate(lambda x: np.zeros(1), mesh=mesh)
    with pytest.raises(InterpError, match="integer >= 0"):
        integrate(field, degree=-2)
    with pytest.raises(InterpError, match="expected an interp.Field"):
        mean(lambda x: x)
    with pytest.raises(InterpError, match="needs an interp.Mesh"):
        measure(field)
    with pytest.raises(InterpError, match=r"corners \(s, 3, 2\)"):
        integrate_pieces(field, mesh, SimpleNamespace(parent=[0], corners=np.zeros((1, 4, 2))), 1)
    with pytest.raises(InterpError, match="outside 0..1"):
        integrate_pieces(field, mesh, SimpleNamespace(parent=[2], corners=np.zeros((1, 3, 2))), 1)
    with pytest.raises(InterpError, match="attributes parent"):
        integrate_pieces(field, mesh, object(), 1)


def test_public_names():
    assert interp.integrate is integrate and interp.quadrature("line", 0)[1].tolist() == [1.0]


def test_region_half_outside_the_mesh_reports_the_uncovered_area():
    g = np.linspace(0.0, 10.0, 6)
    mesh = triangulate(np.stack(np.meshgrid(g, g), axis=-1).reshape(-1, 2))
    ring = [[4.0, 2.0], [16.0, 1.0], [18.0, 7.5], [9.0, 9.0], [3.0, 6.0]]
    square = shapely.box(0, 0, 10, 10)
    # reference: shapely areas of the region outside and inside the mesh's square
    outside = shapely.Polygon(ring).difference(square).area
    inside = shapely.Polygon(ring).intersection(square).area
    with pytest.warns(UserWarning, match="the integral leaves out"):
        s = summarize(Field(mesh, np.full(mesh.n_nodes, 2.0)), region=Polygon(ring))
    assert s["uncovered"] == pytest.approx(outside, rel=1e-12)
    assert s["integral"] == pytest.approx(2.0 * inside, rel=1e-12)
    with pytest.warns(UserWarning, match="the integral leaves out"):
        integrate(Field(mesh, np.full(mesh.n_nodes, 2.0)), region=Polygon(ring))


def test_region_measure_of_intersections():
    tri = [[0.0, 0], [4, 0], [0, 4]]
    # reference: shapely area of the triangle cut by x <= 1.5
    cut = shapely.Polygon(tri).intersection(shapely.box(-1, -1, 1.5, 5)).area
    assert region_measure(Polygon(tri) & HalfSpace([1, 0], 1.5)) == pytest.approx(cut, rel=1e-12)
    # the unit cube cut by x + y + z <= 1 is the corner tetrahedron, volume 1/6 (by hand)
    corner = Box([0, 0, 0], [1, 1, 1]) & HalfSpace([1, 1, 1], 1.0)
    assert region_measure(corner) == pytest.approx(1.0 / 6.0, rel=1e-12)
    assert region_measure(HalfSpace([1, 0], 1.5)) is None and region_measure(None) is None
