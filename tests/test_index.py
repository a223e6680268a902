"""Point location and barycentric coordinates."""

from itertools import combinations

import numpy as np
import pytest
from conftest import cube_mesh, square_mesh
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.spatial import Delaunay

import interp
from interp import InterpError, Mesh
from interp._geometry import TIE, TOLERANCE
from interp._kernels.locate import bucket_of, counting_order


def brute_force(mesh: Mesh, q: np.ndarray) -> np.ndarray:
    """Barycentric coordinates of every query in every cell, by solving each system.

    The reference is numpy.linalg.solve (LAPACK gesv) on x - v0 = sum_k lam_k (v_k - v0)
    for every pair of query and cell, independent of the index's own affine maps.
    """
    corners = mesh.points[mesh.corners]
    t = corners[:, 1:] - corners[:, :1]
    lam = np.linalg.solve(
        np.transpose(t, (0, 2, 1))[None], (q[:, None, :] - corners[None, :, 0])[..., None]
    )[..., 0]
    return np.concatenate([1 - lam.sum(axis=2, keepdims=True), lam], axis=2)


def rule_cells(lam: np.ndarray) -> np.ndarray:
    """Cell of each point by the documented rule, from brute-force coordinates (n, m, t+1).

    interp/index.py: a point is inside a cell when its smallest barycentric coordinate
    is >= -TOLERANCE; of the cells containing it the deepest wins, ties within TIE
    going to the lowest cell index; -1 when no cell contains it.
    """
    depth = lam.min(axis=2)
    depth[depth < -TOLERANCE] = -np.inf
    deepest = depth.max(axis=1)
    tied = depth >= deepest[:, None] - TIE
    return np.where(np.isfinite(deepest), tied.argmax(axis=1), -1)


def edge_points(mesh: Mesh, t: float | np.ndarray) -> np.ndarray:
    """The point at fraction ``t`` (one value, or one per edge) along every edge of the
    cells' corners, each edge once."""
    pairs = np.vstack([mesh.corners[:, pair] for pair in combinations(range(mesh.dim + 1), 2)])
    pairs = np.unique(np.sort(pairs, axis=1), axis=0)
    t = np.broadcast_to(t, len(pairs))[:, None]
    return (1 - t) * mesh.points[pairs[:, 0]] + t * mesh.points[pairs[:, 1]]


def assert_locate_matches_brute_force(mesh: Mesh, q: np.ndarray) -> None:
    """``mesh.locate(q)`` gives the cells of the documented rule and their coordinates."""
    lam = brute_force(mesh, q)
    expected = rule_cells(lam)
    loc = mesh.locate(q)
    np.testing.assert_array_equal(loc.cells, expected)
    inside = expected >= 0
    np.testing.assert_allclose(loc.bary[inside], lam[inside, expected[inside]], atol=1e-12)
    assert np.isnan(loc.bary[~inside]).all()


@pytest.mark.parametrize("mesh", [square_mesh(7), cube_mesh(3)], ids=["square", "cube"])
def test_tie_rule_on_vertices_and_edge_midpoints(mesh):
    # every such point lies on the boundary of several cells, all at depth 0 (up to
    # rounding far below TIE): the documented rule sends it to the lowest-index one
    q = np.vstack([mesh.points, edge_points(mesh, 0.5)])
    lam = brute_force(mesh, q)
    containing = (lam.min(axis=2) >= -TOLERANCE).sum(axis=1)
    assert (containing >= 1).all()
    # ties are the case under test: in 2D only the 28 boundary edge midpoints and the
    # corners (1, 0) and (0, 1), off the diagonal, lie in a single cell (195 of 225 tie)
    assert (containing >= 2).mean() > 0.8
    assert_locate_matches_brute_force(mesh, q)


def incircle(a: np.ndarray, b: np.ndarray, c: np.ndarray, d: np.ndarray) -> np.ndarray:
    """Positive where d lies inside the circle through a, b, c (counter-clockwise).

    The incircle determinant of Guibas and Stolfi (ACM Trans. Graphics 4, 1985),
    rows (x - d_x, y - d_y, |p - d|^2) for p = a, b, c.
    """
    rows = np.stack([a - d, b - d, c - d], axis=-2)
    lifted = (rows**2).sum(axis=-1, keepdims=True)
    return np.linalg.det(np.concatenate([rows, lifted], axis=-1))


def wrong_diagonal_mesh() -> Mesh:
    """An 8 x 8 grid with jittered interior nodes, each quad cut along the diagonal
    that is not Delaunay (the opposite corner inside the circumcircle)."""
    n = 8
    rng = np.random.default_rng(8)
    x = np.linspace(0.0, 1.0, n + 1)
    points = np.stack(np.meshgrid(x, x, indexing="ij"), axis=-1).reshape(-1, 2)
    interior = ((points > 0) & (points < 1)).all(axis=1)
    points[interior] += rng.uniform(-0.2, 0.2, (interior.sum(), 2)) / n
    idx = np.arange((n + 1) ** 2).reshape(n + 1, n + 1)
    a, b = idx[:-1, :-1].ravel(), idx[1:, :-1].ravel()
    c, d = idx[1:, 1:].ravel(), idx[:-1, 1:].ravel()
    p = points
    along_ac = incircle(p[a], p[b], p[c], p[d]) > 0
    cells = np.vstack(
        [
            np.where(along_ac[:, None], np.column_stack([a, b, c]), np.column_stack([a, b, d])),
            np.where(along_ac[:, None], np.column_stack([a, c, d]), np.column_stack([b, c, d])),
        ]
    )
    return Mesh(points, cells)


def star_fan_mesh() -> Mesh:
    """A 20-pointed star (radii 1 and 0.3 alternating) fanned from its centre: skinny
    triangles around one vertex, and a domain far from convex."""
    k = 40
    angle = 2 * np.pi * np.arange(k) / k
    radius = np.where(np.arange(k) % 2 == 0, 1.0, 0.3)
    rim = np.column_stack([radius * np.cos(angle), radius * np.sin(angle)])
    points = np.vstack([[0.0, 0.0], rim])
    cells = np.column_stack([np.zeros(k, dtype=int), 1 + np.arange(k), 1 + (np.arange(k) + 1) % k])
    return Mesh(points, cells)


def jittered_cube_mesh() -> Mesh:
    """``cube_mesh(4)`` with its interior nodes moved: Kuhn tetrahedra, no longer Delaunay."""
    mesh = cube_mesh(4)
    rng = np.random.default_rng(4)
    points = mesh.points.copy()
    interior = ((points > 0) & (points < 1)).all(axis=1)
    points[interior] += rng.uniform(-0.05, 0.05, (interior.sum(), 3))
    return Mesh(points, mesh.cells)


def signed_measure_sign(mesh: Mesh) -> np.ndarray:
    """Orientation of each cell: the sign of the determinant of its edge vectors."""
    corners = mesh.points[mesh.corners]
    return np.sign(np.linalg.det(corners[:, 1:] - corners[:, :1]))


def test_non_delaunay_meshes_are_valid_and_not_delaunay():
    # the test meshes below are conforming (no inverted cell, checked with numpy's
    # determinants) and not the Delaunay triangulation of their nodes (reference:
    # scipy.spatial.Delaunay, which is unique for nodes in general position)
    grid = wrong_diagonal_mesh()
    cube = jittered_cube_mesh()
    star = star_fan_mesh()
    assert (signed_measure_sign(grid) == 1).all() and (signed_measure_sign(star) == 1).all()
    # Kuhn tetrahedra alternate in orientation with the parity of their permutation
    np.testing.assert_array_equal(signed_measure_sign(cube), signed_measure_sign(cube_mesh(4)))
    for mesh in (grid, cube):
        assert mesh.measure().sum() == pytest.approx(1.0, rel=1e-12)
    ours = {tuple(c) for c in np.sort(grid.cells, axis=1)}
    delaunay = {tuple(c) for c in np.sort(Delaunay(grid.points).simplices, axis=1)}
    assert not ours & delaunay  # every triangle has the wrong diagonal
    ours = {tuple(c) for c in np.sort(cube.cells, axis=1)}
    delaunay = {tuple(c) for c in np.sort(Delaunay(cube.points).simplices, axis=1)}
    assert ours != delaunay
    # star, worked out by hand: 40 triangles, each with sides 1 and 0.3 at the centre's
    # angle 2 pi / 40, so of area 1 * 0.3 * sin(pi / 20) / 2
    assert star.measure().sum() == pytest.approx(40 * 0.15 * np.sin(np.pi / 20), rel=1e-12)


@pytest.mark.parametrize("via_vtu", [False, True], ids=["built", "read-back"])
@pytest.mark.parametrize("build", [wrong_diagonal_mesh, star_fan_mesh, jittered_cube_mesh])
def test_locate_on_non_delaunay_meshes_matches_brute_force(rng, tmp_path, build, via_vtu):
    mesh = build()
    if via_vtu:
        mesh, _ = interp.read(interp.write(tmp_path / "mesh.vtu", mesh))
    lo, hi = mesh.bounds
    mids = edge_points(mesh, 0.5)
    q = np.vstack(
        [
            rng.uniform(lo - 0.1 * (hi - lo), hi + 0.1 * (hi - lo), (1500, mesh.gdim)),
            mesh.points,
            mids,
            edge_points(mesh, rng.random(len(mids))),
            hi + 1.0,
        ]
    )
    lam = brute_force(mesh, q)
    inside = (lam.min(axis=2) >= -TOLERANCE).any(axis=1)
    assert 0 < inside.mean() < 1  # points inside and outside the mesh are both present
    assert_locate_matches_brute_force(mesh, q)


@pytest.mark.parametrize("d, n", [(2, 400), (3, 300)])
def test_bary_matches_scipy_delaunay(rng, d, n):
    # reference: scipy.spatial.Delaunay.find_simplex and .transform (general-purpose library)
    pts = rng.random((n, d))
    tri = Delaunay(pts)
    mesh = Mesh(pts, tri.simplices)
    q = rng.uniform(-0.1, 1.1, (5000, d))
    loc = mesh.locate(q)
    ref = tri.find_simplex(q)
    np.testing.assert_array_equal(loc.cells, ref)
    inside = ref >= 0
    tr = tri.transform[ref[inside]]
    b = np.einsum("pij,pj->pi", tr[:, :d], q[inside] - tr[:, d])
    ref_bary = np.column_stack([b, 1 - b.sum(axis=1)])
    # scipy's transform maps to the coordinates of vertices 0..d-1 relative to vertex d
    np.testing.assert_allclose(loc.bary[inside], ref_bary, atol=1e-12)
    assert np.isnan(loc.bary[~inside]).all()


def test_non_convex_mesh_with_hole_matches_brute_force(rng):
    mesh = square_mesh(8)
    centroid = mesh.points[mesh.corners].mean(axis=1)
    keep = ~((np.abs(centroid - 0.5) < 0.25).all(axis=1))  # square hole
    keep &= ~((centroid[:, 0] > 0.75) & (centroid[:, 1] > 0.75))  # L-shaped notch
    holed = Mesh(mesh.points, mesh.cells[keep])
    assert_locate_matches_brute_force(holed, rng.random((3000, 2)))


@pytest.mark.parametrize("d, n", [(2, 300), (3, 200)])
def test_bucket_lists_hold_every_cell_that_can_contain_a_point(rng, d, n):
    # the index leaves a cell off a bucket's list when the cell's planes miss the
    # bucket; checked against brute force on the hardest points: mesh vertices,
    # points on faces and edges, and points just outside by half the tolerance
    pts = rng.random((n, d))
    mesh = Mesh(pts, Delaunay(pts).simplices)
    corners = mesh.points[mesh.corners]
    w = rng.random((800, d + 1))
    face = rng.integers(0, d + 1, 800)
    w[np.arange(800), face] = 0.0  # on a face
    w[np.arange(100), (face[:100] + 1) % (d + 1)] = 0.0  # on an edge (3D) or at a vertex (2D)
    w /= w.sum(axis=1, keepdims=True)
    w[400:, face[400:]] = -TOLERANCE / 4  # just outside the face
    pick = rng.integers(0, mesh.n_cells, 800)
    on_faces = np.einsum("pk,pkg->pg", w, corners[pick])
    q = np.vstack([mesh.points, on_faces, rng.random((400, d))])
    index = mesh.index
    x = (q - index.center) / index.scale
    flat = np.empty(len(q), dtype=np.int64)
    bucket_of(x, index.lo, index.h, index.shape, flat)
    lam = brute_force(mesh, q)
    near = lam.min(axis=2) >= -TOLERANCE / 2
    for p, c in zip(*np.nonzero(near), strict=True):
        listed = index.members[index.start[flat[p]] : index.start[flat[p] + 1]]
        assert c in listed, f"cell {c} missing from the bucket of point {p}"
    # the answers on these points agree with brute force too
    loc = mesh.locate(q)
    assert np.array_equal(loc.inside, (lam.min(axis=2) >= -TOLERANCE).any(axis=1))


def test_counting_order_is_a_stable_sort(rng):
    # reference: numpy's stable argsort; points outside (-1) come first
    flat = rng.integers(-1, 50, 5000)
    np.testing.assert_array_equal(counting_order(flat, 50), np.argsort(flat, kind="stable"))


def test_few_and_many_queries_agree(rng):
    # a handful of points is ordered by sorting, a large batch by counting buckets
    mesh = cube_mesh(6)
    q = rng.random((20000, 3))
    many = mesh.locate(q)
    few = mesh.locate(q[:5])
    np.testing.assert_array_equal(few.cells, many.cells[:5])
    np.testing.assert_array_equal(few.bary, many.bary[:5])


def test_shared_vertex_deterministic():
    mesh = square_mesh(2)
    centre = np.array([[0.5, 0.5]])
    first = mesh.locate(centre).cells[0]
    # every cell touching the centre contains it; the choice must not depend on the batch
    q = np.vstack([np.random.default_rng(1).random((100, 2)), centre])
    assert mesh.locate(q).cells[-1] == first
    bary = mesh.locate(centre).bary[0]
    assert np.isclose(bary.max(), 1.0)


def test_query_order_does_not_change_answers(rng):
    mesh = cube_mesh(4)
    q = rng.random((2000, 3))
    perm = rng.permutation(len(q))
    a, b = mesh.locate(q), mesh.locate(q[perm])
    np.testing.assert_array_equal(a.cells[perm], b.cells)
    np.testing.assert_array_equal(a.bary[perm], b.bary)


def test_tolerance_outside_hull():
    mesh = square_mesh(2)
    loc = mesh.locate([[1.0 + 1e-13, 0.3], [1.0 + 1e-6, 0.3], [np.nan, 0.5]])
    assert loc.cells[0] >= 0
    assert loc.cells[1] == -1 and loc.cells[2] == -1


def test_one_dimensional_locate():
    mesh = Mesh([0.0, 1.0, 3.0, 6.0], [[0, 1], [1, 2], [2, 3]])
    loc = mesh.locate([0.5, 2.0, 6.0, 7.0])
    assert loc.cells.tolist() == [0, 1, 2, -1]
    np.testing.assert_allclose(loc.bary[1], [0.5, 0.5])


def test_embedded_mesh_cannot_locate():
    mesh = Mesh([[0.0, 0, 0], [1, 0, 0], [0, 1, 0]], [[0, 1, 2]])
    with pytest.raises(InterpError, match="embedded"):
        mesh.locate([[0.1, 0.1, 0.0]])


def test_query_dimension_mismatch():
    with pytest.raises(InterpError, match="mesh is in 2D"):
        square_mesh(1).locate(np.zeros((3, 3)))


MESH2 = square_mesh(5)
MESH3 = cube_mesh(2)


@settings(max_examples=60, deadline=None)
@given(
    st.lists(
        st.tuples(st.floats(-0.2, 1.2), st.floats(-0.2, 1.2), st.floats(-0.2, 1.2)),
        min_size=1,
        max_size=30,
    ),
    st.booleans(),
)
def test_bary_properties_and_brute_force(coords, three_d):
    # property: rows sum to 1, reconstruct the point, and agree with a search over all cells
    mesh = MESH3 if three_d else MESH2
    q = np.array(coords)[:, : mesh.gdim]
    loc = mesh.locate(q)
    inside = loc.inside
    np.testing.assert_allclose(loc.bary[inside].sum(axis=1), 1.0, atol=1e-14)
    corners = mesh.points[mesh.corners[loc.cells[inside]]]
    recon = np.einsum("pi,pig->pg", loc.bary[inside], corners)
    np.testing.assert_allclose(recon, q[inside], atol=1e-13)
    assert_locate_matches_brute_force(mesh, q)


@pytest.mark.parametrize("d", [2, 3])
def test_index_built_in_slabs_equals_one_pass(rng, d, monkeypatch):
    # large meshes build their bucket lists in slabs of the first grid axis, one thread
    # each; the slabs write disjoint buckets, so the lists are those of a single pass
    import interp.index

    pts = rng.random((3000, d))
    mesh = Mesh(pts, Delaunay(pts).simplices)
    one = interp.index.CellIndex(mesh)
    monkeypatch.setattr(interp.index, "PARALLEL_CELLS", 0)
    monkeypatch.setattr(interp.index, "_cores", lambda: 3)
    three = interp.index.CellIndex(mesh)
    np.testing.assert_array_equal(three.start, one.start)
    np.testing.assert_array_equal(three.members, one.members)
    assert one.shape[0] >= 3
