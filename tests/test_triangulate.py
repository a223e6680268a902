"""Delaunay triangulation, duplicate merging, masks and degenerate input."""

from math import factorial

import numpy as np
import pytest
import shapely
from hypothesis import given
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp
from scipy.spatial import ConvexHull, Delaunay

from interp import InterpError, triangulate
from interp._triangulate import _drop_flat, merge_duplicates


@pytest.mark.parametrize("d", [2, 3])
def test_delaunay_fills_convex_hull(rng, d):
    # reference: scipy.spatial.ConvexHull volume (general-purpose library)
    pts = rng.random((300, d))
    mesh = triangulate(pts)
    assert mesh.measure().sum() == pytest.approx(ConvexHull(pts).volume, rel=1e-12)
    assert mesh.n_cells == Delaunay(pts).simplices.shape[0]


def test_one_dimensional():
    mesh = triangulate(np.array([3.0, 0.0, 1.0]))
    assert mesh.cells.tolist() == [[1, 2], [2, 0]]
    assert mesh.measure().tolist() == [1.0, 2.0]


def test_duplicates_merged_with_warning(rng):
    pts = rng.random((50, 2))
    with pytest.warns(UserWarning, match="3 duplicate point"):
        mesh = triangulate(np.vstack([pts, pts[:3]]))
    assert mesh.n_nodes == 50
    np.testing.assert_array_equal(mesh.points, pts)


@pytest.mark.parametrize("d", [1, 3])
def test_duplicates_merged_in_one_and_three_dimensions(rng, d):
    # reference: scipy.spatial.ConvexHull volume of the distinct points (in 1D, max - min)
    pts = rng.random((200, d))
    dup = np.vstack([pts[:10], pts, pts[5:7]])
    with pytest.warns(UserWarning, match="12 duplicate point"):
        mesh = triangulate(dup)
    # nodes are the distinct points in first-seen order
    np.testing.assert_array_equal(mesh.points, np.vstack([pts[:10], pts[10:]]))
    hull = np.ptp(pts) if d == 1 else ConvexHull(pts).volume
    assert mesh.measure().sum() == pytest.approx(hull, rel=1e-12)


def cell_union(mesh):
    """The union of a triangle mesh's cells, by shapely (general-purpose geometry library)."""
    return shapely.union_all(shapely.polygons(mesh.points[mesh.cells]))


def test_max_edge_mask():
    # a 3 x 3 lattice with one far point: max_edge removes the cells reaching it
    x = np.array([[i, j] for i in range(3) for j in range(3)], dtype=float)
    pts = np.vstack([x, [[10.0, 1.0]]])
    full = triangulate(pts)
    masked = triangulate(pts, max_edge=1.5)
    # worked out by hand: the full mesh fills the convex hull, the 2 x 2 square plus the
    # triangle (2, 0), (10, 1), (2, 2) of base 2 and height 8: 4 + 2 * 8 / 2 = 12;
    # the mask keeps the lattice's cells (edges 1 and sqrt(2) < 1.5): the square, 4
    assert full.measure().sum() == pytest.approx(12.0, rel=1e-14)
    assert masked.measure().sum() == pytest.approx(4.0, rel=1e-14)
    # shapely: the kept cells cover exactly the square, the full ones the convex hull
    assert cell_union(masked).equals(shapely.box(0, 0, 2, 2))
    assert cell_union(full).equals(shapely.MultiPoint(pts).convex_hull)
    assert (masked.cells != 9).all()


def test_boundary_mask():
    x = np.array([[i, j] for i in range(5) for j in range(5)], dtype=float)
    # an L-shaped boundary, worked out by hand: the 4 x 4 square less the 2 x 2 corner
    # square [2, 4] x [2, 4], area 16 - 4 = 12
    boundary = [[0, 0], [4, 0], [4, 2], [2, 2], [2, 4], [0, 4]]
    mesh = triangulate(x, boundary=boundary)
    assert mesh.measure().sum() == pytest.approx(12.0, rel=1e-14)
    # shapely: the kept cells cover exactly the L
    assert cell_union(mesh).equals(shapely.Polygon(boundary))


def test_too_few_points():
    with pytest.raises(InterpError, match="at least 3 points"):
        triangulate(np.zeros((2, 2)))
    with pytest.raises(InterpError, match="at least 4 distinct"):
        with pytest.warns(UserWarning):
            triangulate(np.array([[0.0, 0, 0], [1, 0, 0], [0, 1, 0], [1, 0, 0]]))


def test_collinear_and_coplanar():
    t = np.linspace(0, 1, 10)
    with pytest.raises(InterpError, match="collinear"):
        triangulate(np.column_stack([t, 2 * t + 1]))
    rng = np.random.default_rng(0)
    xy = rng.random((20, 2))
    with pytest.raises(InterpError, match="coplanar"):
        triangulate(np.column_stack([xy, xy @ [1.0, -2.0] + 3]))


def test_nan_points():
    with pytest.raises(
        InterpError, match=r"1 point\(s\).*the first is point 2 \(counting from 1\)"
    ):
        triangulate(np.array([[0.0, 0], [np.nan, 1], [1, 0], [0, 1]]))


def test_bad_masks():
    pts = np.array([[0.0, 0], [1, 0], [0, 1], [1, 1]])
    with pytest.raises(InterpError, match="max_edge must be a positive"):
        triangulate(pts, max_edge=-1)
    with pytest.raises(InterpError, match="every cell was removed"):
        triangulate(pts, max_edge=0.1)
    with pytest.raises(InterpError, match="boundary polygons apply to 2D"):
        triangulate(np.random.default_rng(0).random((10, 3)), boundary=[[0, 0], [1, 0], [0, 1]])


def test_cospherical_lattice_3d_has_no_slivers():
    # a cubic lattice is degenerate for Delaunay (8 cospherical points per cube); the
    # zero-volume tetrahedra Qhull may emit are dropped and the cube is still filled
    x = np.linspace(0, 1, 4)
    pts = np.stack(np.meshgrid(x, x, x, indexing="ij"), -1).reshape(-1, 3)
    mesh = triangulate(pts)
    assert mesh.measure().sum() == pytest.approx(1.0, rel=1e-12)


@pytest.mark.parametrize("d", [1, 2, 3])
def test_measures_and_owned_nodes_at_survey_offsets(rng, d):
    # reference: simplex measure |det E| / d! of the edge vectors E (numpy's det),
    # computed on the coordinates shifted to the origin, so the offset costs nothing
    offset = np.array([5e5, 5e6, 120.0])[:d]
    pts = rng.random((400, d)) * 50 + offset
    local = pts - offset  # exact: both terms are within a factor of two of each other
    mesh = triangulate(pts)
    corners = local[mesh.cells]
    edges = corners[:, 1:] - corners[:, :1]
    expected = np.abs(np.linalg.det(edges)) / factorial(d)
    np.testing.assert_allclose(mesh.measure(), expected, rtol=1e-9)
    # the mesh keeps its own copy of the nodes; the caller's array stays writable
    pts[0] += 1.0
    np.testing.assert_array_equal(mesh.points[0], local[0] + offset)


def test_thin_cloud_reports_the_cells_it_drops(rng):
    # reference: scipy.spatial.ConvexHull volume; a cloud 1e-9 as thick as it is wide has
    # Delaunay cells too thin for a Mesh (relative volume <= 1e-12): dropping them is said
    pts = rng.random((2000, 3))
    pts[:, 2] *= 1e-9
    with pytest.warns(UserWarning, match="cell\\(s\\) too thin to use were dropped"):
        with pytest.warns(UserWarning, match="inside the mesh may belong to one cell only"):
            mesh = triangulate(pts)
    hull = ConvexHull(pts).volume
    assert 0.99 * hull < mesh.measure().sum() < hull


def test_no_cell_left_after_dropping_flat_ones():
    # a guard: the coplanar check before Qhull refuses such input in practice, so the
    # dropping step is given cells of zero volume directly
    cells = np.array([[0, 1, 2, 3]])
    with pytest.raises(InterpError, match="every cell .* zero volume: the points are nearly"):
        _drop_flat(cells, np.zeros(1), np.ones(1))


def test_point_left_out_by_qhull_is_reported(rng):
    # 3D (Qhull): a point 1e-15 from another is not an exact duplicate, yet Qhull cannot
    # use both
    pts = rng.random((100, 3))
    near = np.vstack([pts, pts[5] + 1e-15])
    # the two points that nearly coincide are rows 6 and 101 counting from 1; which one
    # Qhull leaves out is its own choice
    in_no_cell = r"1 point\(s\) are in no cell, the first is point (6|101) \(counting from 1\)"
    with pytest.warns(UserWarning, match=in_no_cell):
        mesh = triangulate(near)
    assert mesh.n_nodes == 101
    assert np.unique(mesh.cells).size == 100


def test_near_point_is_a_vertex_in_2d(rng):
    # 2D (exact predicates): the same point is a vertex; the cells between the two are
    # too thin for a Mesh and dropped, losing no measurable area (scipy's ConvexHull)
    pts = rng.random((100, 2))
    near = np.vstack([pts, pts[5] + 1e-15])
    mesh = triangulate(near)
    assert np.unique(mesh.cells).size == 101
    assert mesh.measure().sum() == pytest.approx(ConvexHull(near).volume, rel=1e-12)


def test_non_numeric_input_named():
    with pytest.raises(InterpError, match="points must be an \\(n, d\\) array of numbers"):
        triangulate([["a", "b"], [1, 2], [3, 4]])
    with pytest.raises(InterpError, match="points must be an \\(n, d\\) array of numbers"):
        triangulate([[0.0, 1.0], [2.0]])
    with pytest.raises(InterpError, match="max_edge must be a positive length; got 'abc'"):
        triangulate(np.eye(3)[:, :2] + [[0, 0], [0, 0], [1, 1]], max_edge="abc")


@given(
    st.integers(1, 3).flatmap(
        lambda d: hnp.arrays(
            np.float64,
            st.tuples(st.integers(1, 60), st.just(d)),
            elements=st.sampled_from([0.0, 0.5, 1.0, 2.0]),
        )
    )
)
def test_merge_duplicates_matches_numpy_unique_rows(pts):
    # reference: numpy.unique over rows, its groups ranked by first occurrence
    uniq, inverse = merge_duplicates(pts)
    _, first = np.unique(pts, axis=0, return_index=True)
    np.testing.assert_array_equal(uniq, pts[np.sort(first)])
    np.testing.assert_array_equal(uniq[inverse], pts)
    assert inverse.dtype == np.int64


def test_boundary_polygon_with_a_hole_is_covered_exactly():
    # reference: shapely's area of the polygon with its hole within the points' convex
    # hull, and its test of each kept cell's centroid; the boundary's edges are
    # inserted, so no cell straddles them
    import shapely

    from interp import Polygon

    pts = np.random.default_rng(4).random((300, 2)) * 10
    square = [[1, 1], [9, 1], [9, 9], [1, 9]]
    hole = [[4, 4], [6, 4], [6, 6], [4, 6]]
    kept = triangulate(pts, boundary=Polygon(square, [hole]))
    hull = shapely.MultiPoint(pts).convex_hull
    region = shapely.Polygon(square, [hole])
    assert kept.measure().sum() == pytest.approx(region.intersection(hull).area, rel=1e-12)
    centroids = kept.points[kept.cells].mean(axis=1)
    assert shapely.contains_xy(region, centroids[:, 0], centroids[:, 1]).all()
    # one ring keeps the hole's cells
    whole = shapely.Polygon(square).intersection(hull).area
    assert triangulate(pts, boundary=square).measure().sum() == pytest.approx(whole, rel=1e-12)
