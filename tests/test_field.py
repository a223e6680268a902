"""P1/P2 evaluation and gradients against exact and reference values."""

import numpy as np
import pytest
from conftest import cube_mesh, square_mesh
from scipy.interpolate import LinearNDInterpolator
from scipy.spatial import Delaunay

from interp import Field, InterpError, Mesh, triangulate


def quadratic(x):
    """A full quadratic polynomial in g variables (with cross terms)."""
    g = x.shape[1]
    out = 1.5 + x @ np.arange(1.0, g + 1) + (x**2) @ np.linspace(0.5, -1.0, g)
    return out + (x[:, 0] * x[:, -1] if g > 1 else 0.0)


def quadratic_grad(x):
    g = x.shape[1]
    grad = np.arange(1.0, g + 1) + 2 * x * np.linspace(0.5, -1.0, g)
    if g > 1:
        grad[:, 0] += x[:, -1]
        grad[:, -1] += x[:, 0]
    return grad


def test_p1_matches_linear_nd_interpolator(rng):
    # reference: scipy.interpolate.LinearNDInterpolator on the same triangulation
    pts = rng.random((500, 2))
    vals = np.sin(3 * pts[:, 0]) * np.cos(2 * pts[:, 1])
    tri = Delaunay(pts)
    field = Field(Mesh(pts, tri.simplices), vals)
    q = rng.uniform(-0.05, 1.05, (20000, 2))
    ref = LinearNDInterpolator(tri, vals)(q)
    ours = field(q)
    np.testing.assert_array_equal(np.isnan(ours), np.isnan(ref))
    np.testing.assert_allclose(ours, ref, atol=1e-12, equal_nan=True)


@pytest.mark.parametrize(
    "mesh",
    [Mesh(np.linspace(0, 1, 7), [[i, i + 1] for i in range(6)]), square_mesh(3), cube_mesh(2)],
    ids=["1d", "2d", "3d"],
)
def test_lagrange_reproduction(mesh, rng):
    # Lagrange elements reproduce their polynomial space exactly (Ciarlet 1978, ch. 2)
    q = rng.random((500, mesh.gdim))
    lin = lambda x: 0.7 - 2.0 * x.sum(axis=1) + x[:, 0]  # noqa: E731
    p1 = Field(mesh, lin(mesh.points))
    np.testing.assert_allclose(p1(q), lin(q), atol=1e-13)
    p2 = Field(mesh.elevate(), quadratic(mesh.elevate().points))
    np.testing.assert_allclose(p2(q), quadratic(q), atol=1e-12)
    np.testing.assert_allclose(p2.gradient(q), quadratic_grad(q), atol=1e-11)
    grad1 = p1.gradient(q)
    expected = np.full(mesh.gdim, -2.0)
    expected[0] += 1.0
    np.testing.assert_allclose(grad1, np.broadcast_to(expected, grad1.shape), atol=1e-12)


@pytest.mark.parametrize("d, vtk_type", [(2, "QUADRATIC_TRIANGLE"), (3, "QUADRATIC_TETRA")])
def test_p2_node_order_matches_vtk(rng, d, vtk_type):
    # reference: VTK (through pyvista's sample, a vtkProbeFilter) interpolating the same
    # quadratic cells node for node with its own shape functions; had the edge nodes
    # another order, its values of this quadratic would be off by O(0.1)
    pv = pytest.importorskip("pyvista")
    mesh = triangulate(rng.random((40, d))).elevate()
    vals = quadratic(mesh.points)
    n = 1000
    cells = rng.integers(0, mesh.n_cells, n)
    # well inside the cells (barycentric >= 0.05), so VTK picks the same cell
    w = 0.05 + (1 - 0.05 * (d + 1)) * rng.dirichlet(np.ones(d + 1), n)
    corners = mesh.points[mesh.corners[cells]]
    q = np.einsum("pk,pkg->pg", w, corners)
    field = Field(mesh, vals)
    grid = pv.UnstructuredGrid(
        {getattr(pv.CellType, vtk_type): mesh.cells}, np.pad(mesh.points, ((0, 0), (0, 3 - d)))
    )
    grid.point_data["f"] = vals
    grid.point_data["x"] = grid.points
    probe = pv.PolyData(np.pad(q, ((0, 0), (0, 3 - d)))).sample(grid)
    assert np.asarray(probe.point_data["vtkValidPointMask"]).all()
    f_vtk = np.asarray(probe.point_data["f"])
    x_vtk = np.asarray(probe.point_data["x"])[:, :d]

    # Lagrange P2 reproduces quadratics exactly (Ciarlet 1978, ch. 2): rounding only
    np.testing.assert_allclose(field(q), quadratic(q), rtol=0, atol=1e-12)
    # VTK interpolates the coordinates too (exact for straight-sided cells), which shows
    # the point it evaluated at.  Its quadratic triangle inverts the cell map directly
    # on linear sub-triangles: q itself, up to rounding.  Its quadratic tetra finds the
    # parametric coordinates by iteration stopped at about 1e-5 (in one cell, parametric
    # errors up to 9.9998e-6 over 15000 points): here up to 3.2e-5 of the cell's
    # diameter over ten seeds, so bounded by 1e-4 of it
    diameter = np.linalg.norm(corners[:, :, None] - corners[:, None], axis=3).max(axis=(1, 2))
    reach = np.full(n, 1e-12) if d == 2 else 1e-4 * diameter
    assert (np.linalg.norm(x_vtk - q, axis=1) <= reach).all()
    # at that point VTK's value, interp's and the exact quadratic agree to rounding
    np.testing.assert_allclose(f_vtk, field(x_vtk), rtol=0, atol=1e-12)
    np.testing.assert_allclose(f_vtk, quadratic(x_vtk), rtol=0, atol=1e-12)


def convergence_rate(order: int) -> np.ndarray:
    f = lambda x: np.sin(np.pi * x[:, 0]) * np.cos(np.pi * x[:, 1])  # noqa: E731
    q = np.random.default_rng(5).random((20000, 2))
    errors = []
    for n in (4, 8, 16, 32):
        mesh = square_mesh(n) if order == 1 else square_mesh(n).elevate()
        errors.append(np.abs(Field(mesh, f(mesh.points))(q) - f(q)).max())
    return np.log2(np.array(errors[:-1]) / np.array(errors[1:]))


def test_convergence_p1_h2_p2_h3():
    # a-priori interpolation estimates ||u - I_h u||_inf = O(h^(k+1)) (Brenner and Scott,
    # The Mathematical Theory of Finite Element Methods, Theorem 4.4.20)
    r1 = convergence_rate(1)
    r2 = convergence_rate(2)
    assert (np.abs(r1[1:] - 2.0) < 0.2).all(), r1
    assert (np.abs(r2[1:] - 3.0) < 0.3).all(), r2


def test_multicomponent_values_and_gradient(rng):
    # each component is reproduced exactly, as P2 Lagrange elements reproduce every
    # polynomial of degree <= 2 (Ciarlet 1978, ch. 2): x, y^2 and 1, whose gradients
    # are (1, 0), (0, 2 y) and (0, 0) (worked out by hand)
    mesh = square_mesh(3).elevate()
    x = mesh.points
    vals = np.column_stack([x[:, 0], x[:, 1] ** 2, np.ones(len(x))])
    f = Field(mesh, vals)
    q = rng.random((50, 2))
    np.testing.assert_allclose(
        f(q), np.column_stack([q[:, 0], q[:, 1] ** 2, np.ones(50)]), atol=1e-13
    )
    g = f.gradient(q)
    assert g.shape == (50, 2, 3)
    expected = np.zeros((50, 2, 3))  # (point, derivative, component)
    expected[:, 0, 0] = 1.0
    expected[:, 1, 1] = 2 * q[:, 1]
    np.testing.assert_allclose(g, expected, atol=1e-12)


def test_outside_value_and_nan():
    f = Field(square_mesh(1), [1.0, 2.0, 3.0, 4.0])
    out = f([[2.0, 2.0], [0.0, 0.0]], outside=-99.0)
    assert out.tolist() == [-99.0, 1.0]
    assert np.isnan(f.gradient([[2.0, 2.0]])).all()


@pytest.mark.parametrize("build", ["Mesh", "triangulate"])
@pytest.mark.parametrize("order", [1, 2])
@pytest.mark.parametrize("d", [2, 3])
def test_large_offsets_match_shifted_data(rng, d, order, build):
    # projected coordinates (easting ~5e5, northing ~5e6, height ~120) must lose no
    # accuracy against the same data shifted to the origin
    offset = np.array([512345.0, 5123456.0, 120.0])[:d]
    extent = np.array([200.0, 200.0, 100.0])[:d]
    far = rng.random((2000 if d == 2 else 1000, d)) * extent + offset
    q_far = rng.random((3000, d)) * extent + offset
    # x - y is exact when y / 2 <= x <= 2 y (Sterbenz's lemma), which holds for every
    # coordinate here: the shifted data are the exact translates
    near, q_near = far - offset, q_far - offset
    np.testing.assert_array_equal(near + offset, far)
    tri = Delaunay(near)  # reference triangulation: scipy's Qhull
    if build == "Mesh":
        mesh_near, mesh_far = Mesh(near, tri.simplices), Mesh(far, tri.simplices)
    else:
        mesh_near, mesh_far = triangulate(near), triangulate(far)
        np.testing.assert_array_equal(mesh_far.cells, mesh_near.cells)
    if order == 2:
        mesh_near, mesh_far = mesh_near.elevate(), mesh_far.elevate()
    x = mesh_near.points
    z = 50 + 0.3 * x[:, 0] + 5 * np.sin(x[:, 1] / 20) + 0.2 * x[:, 2:].sum(axis=1)
    near_field, far_field = Field(mesh_near, z), Field(mesh_far, z)

    a, b = near_field(q_near), far_field(q_far)
    ok = ~np.isnan(a)
    np.testing.assert_array_equal(ok, tri.find_simplex(q_near) >= 0)
    assert np.array_equal(ok, ~np.isnan(b))
    assert (np.abs(a[ok] - b[ok]) <= 1e-9 * np.abs(a[ok])).all()

    # Gradients are difference quotients, sum_i z_i grad N_i with |grad N_i| up to about
    # 4 s, where s is the largest barycentric gradient of the cell (1 / its smallest
    # height; numpy's inverse of the edge matrix).  Centred on their own bounding
    # boxes the two meshes' coordinates differ only by rounding, eps * R (R = 100, half
    # the extent), which moves each barycentric gradient by about s * eps * R * s.  So
    # over the 10 basis functions at most: |delta grad| <= 40 * max|z| * eps * R * s^2,
    # about 1e-11 in a well-shaped cell (s ~ 0.3) and larger in the hull's slivers
    # (measured: at most 3% of this bound).  Coordinates rounded at their raw size,
    # 5e6, instead of after centring would carry errors 5e4 times larger.
    corners = near[tri.simplices]
    inv = np.linalg.inv(corners[:, 1:] - corners[:, :1])  # columns: grad of lam_1..lam_d
    grads = np.concatenate([inv, -inv.sum(axis=2, keepdims=True)], axis=2)
    s = np.linalg.norm(grads, axis=1).max(axis=1)[tri.find_simplex(q_near[ok])]
    tol = 40 * np.abs(z).max() * np.finfo(float).eps * 100.0 * s**2
    ga, gb = near_field.gradient(q_near[ok]), far_field.gradient(q_far[ok])
    assert (np.abs(ga - gb).max(axis=1) <= tol).all()


def test_value_length_mismatch():
    with pytest.raises(InterpError, match="4 nodes.*shape \\(3,\\)"):
        Field(square_mesh(1), [1.0, 2.0, 3.0])


def test_non_numeric_values_named():
    with pytest.raises(InterpError, match="values must be numbers, one row per mesh node"):
        Field(square_mesh(1), ["a", "b", "c", "d"])
