"""Mesh construction, validation, measure and elevation."""

from itertools import combinations
from math import comb, factorial, sqrt

import numpy as np
import pytest
from conftest import cube_mesh, square_mesh

from interp import InterpError, Mesh, triangulate
from interp.basis import EDGES


def regular_simplex(n: int) -> np.ndarray:
    """Vertices of a regular n-simplex with unit edge, in n dimensions."""
    # standard construction: e_i / sqrt(2) in R^(n+1), projected onto the hyperplane sum = const
    e = np.eye(n + 1) / sqrt(2.0)
    centred = e - e.mean(axis=0)
    basis = np.linalg.svd(centred)[2][:n]
    return centred @ basis.T


@pytest.mark.parametrize("n", [1, 2, 3])
def test_regular_simplex_volume(n):
    # volume of the regular n-simplex with unit edge: sqrt(n+1) / (n! 2^(n/2))
    # (closed form, e.g. Coxeter, Regular Polytopes)
    pts = regular_simplex(n)
    mesh = Mesh(pts, [list(range(n + 1))])
    expected = sqrt(n + 1) / (factorial(n) * 2 ** (n / 2))
    assert mesh.measure()[0] == pytest.approx(expected, rel=1e-13)


def test_measure_is_abs_det_over_factorial(rng):
    # |det(edge vectors)| / n!, computed independently with numpy.linalg.det
    pts = rng.random((4, 3))
    expected = abs(np.linalg.det(pts[1:] - pts[0])) / 6
    assert Mesh(pts, [[0, 1, 2, 3]]).measure()[0] == pytest.approx(expected, rel=1e-13)


def test_embedded_triangle_cayley_menger(rng):
    # Cayley-Menger determinant: for a triangle, det(CM) = -16 A^2 (Cayley 1841; Blumenthal 1953)
    pts = rng.random((3, 3))
    d2 = ((pts[:, None] - pts[None]) ** 2).sum(axis=2)
    cm = np.ones((4, 4))
    cm[0, 0] = 0
    cm[1:, 1:] = d2
    area = sqrt(-np.linalg.det(cm) / 16)
    assert Mesh(pts, [[0, 1, 2]]).measure()[0] == pytest.approx(area, rel=1e-12)


def test_embedded_line_length():
    mesh = Mesh([[0.0, 0.0], [3.0, 4.0]], [[0, 1]])
    assert mesh.dim == 1 and mesh.gdim == 2
    # Pythagoras: sqrt(3^2 + 4^2) = sqrt(25) = 5, exact in floating point
    assert mesh.measure().tolist() == [5.0]


def test_structured_meshes_fill_unit_domain():
    assert square_mesh(4).measure().sum() == pytest.approx(1.0, rel=1e-14)
    assert cube_mesh(3).measure().sum() == pytest.approx(1.0, rel=1e-14)


@pytest.mark.parametrize("n", [1, 2, 3])
def test_elevate_single_simplex_edge_count(n):
    # a simplex with n+1 vertices has C(n+1, 2) edges (complete graph)
    mesh = Mesh(regular_simplex(n), [list(range(n + 1))]).elevate()
    assert mesh.n_nodes == n + 1 + comb(n + 1, 2)
    assert mesh.order == 2


@pytest.mark.parametrize(("d", "n"), [(1, 30), (2, 300), (3, 200)])
def test_edges_match_a_set_of_corner_pairs(rng, d, n):
    # reference: every pair of corners of every cell, collected in a plain Python set of
    # sorted tuples (the edges of a simplicial mesh by definition), then sorted
    mesh = triangulate(rng.random((n, d)))
    cells = mesh.cells.tolist()
    expected = sorted({tuple(sorted(pair)) for cell in cells for pair in combinations(cell, 2)})
    edges, cell_edges = mesh.edges()
    assert edges.dtype == np.int64 and cell_edges.dtype == np.int64
    assert [tuple(e) for e in edges.tolist()] == expected
    # each cell's row points at its own corner pairs, in the local order of basis.EDGES
    assert cell_edges.shape == (mesh.n_cells, len(EDGES[d]))
    for cell, rows in zip(cells, cell_edges.tolist(), strict=True):
        assert [tuple(edges[r].tolist()) for r in rows] == [
            tuple(sorted((cell[i], cell[j]))) for i, j in EDGES[d]
        ]


def test_elevate_shares_midpoints():
    mesh = square_mesh(3)
    p2 = mesh.elevate()
    # Euler: edges = vertices + faces - 1 for a planar triangulation of a disc
    n_edges = mesh.n_nodes + mesh.n_cells - 1
    assert p2.n_nodes == mesh.n_nodes + n_edges
    mids = p2.points[p2.cells[:, 3:]]
    corners = p2.points[p2.cells[:, :3]]
    np.testing.assert_allclose(mids[:, 0], 0.5 * (corners[:, 0] + corners[:, 1]))
    np.testing.assert_allclose(mids[:, 1], 0.5 * (corners[:, 1] + corners[:, 2]))
    np.testing.assert_allclose(mids[:, 2], 0.5 * (corners[:, 2] + corners[:, 0]))
    assert p2.linear().n_cells == mesh.n_cells


def test_attributes():
    mesh = cube_mesh(1).elevate()
    assert (mesh.dim, mesh.gdim, mesh.order, mesh.cell_type) == (3, 3, 2, "tetra10")
    assert mesh.bounds.tolist() == [[0, 0, 0], [1, 1, 1]]
    assert mesh.points.dtype == np.float64 and mesh.cells.dtype == np.int64
    with pytest.raises(ValueError):
        mesh.points[0, 0] = 5.0


def test_mesh_owns_its_nodes():
    # the caller's array stays writable, and changing it later leaves the mesh as built
    pts = np.array([[0.0, 0.0], [1.0, 0.0], [0.0, 1.0]])
    mesh = Mesh(pts, [[0, 1, 2]])
    pts[1, 0] = 3.0
    assert mesh.points[1, 0] == 1.0
    assert mesh.measure().tolist() == [0.5]


def test_line3_in_1d():
    mesh = Mesh([0.0, 2.0, 1.0], [[0, 1, 2]])
    assert mesh.cell_type == "line3"


def test_nan_coordinates_named():
    pts = np.array([[0.0, 0], [1, 0], [np.nan, 1], [np.inf, 2]])
    with pytest.raises(InterpError, match=r"2 point\(s\).*first is point 3 \(counting from 1\)"):
        Mesh(pts, [[0, 1, 2]])


def test_index_out_of_range():
    given = r"outside 0..2.*cell 2 \(counting from 1\), nodes \[0, 1, 3\] as given"
    with pytest.raises(InterpError, match=given):
        Mesh([[0.0, 0], [1, 0], [0, 1]], [[0, 1, 2], [0, 1, 3]])


def test_repeated_node_in_cell():
    given = r"repeat a node.*cell 1 \(counting from 1\), nodes \[0, 1, 1\] as given"
    with pytest.raises(InterpError, match=given):
        Mesh([[0.0, 0], [1, 0], [0, 1]], [[0, 1, 1]])


def test_zero_area_cells_reported():
    pts = [[0.0, 0], [1, 0], [2, 0], [0, 1]]
    with pytest.raises(
        InterpError, match=r"1 cell\(s\) have zero area: cell 2 \(counting from 1\);"
    ):
        Mesh(pts, [[0, 1, 3], [0, 1, 2]])


def test_quads_refused():
    with pytest.raises(InterpError, match="quadrilaterals"):
        Mesh([[0.0, 0], [1, 0], [1, 1], [0, 1]], [[0, 1, 2, 3]])


def test_unknown_cell_type():
    with pytest.raises(InterpError, match="only simplices"):
        Mesh([[0.0, 0], [1, 0], [1, 1], [0, 1]], [[0, 1, 2, 3]], cell_type="quad")


def test_curved_p2_refused():
    pts = [[0.0, 0], [1, 0], [0, 1], [0.5, -0.2], [0.5, 0.5], [0, 0.5]]
    with pytest.raises(InterpError, match=r"midpoints: cell 1 \(counting from 1\); curved"):
        Mesh(pts, [[0, 1, 2, 3, 4, 5]])
