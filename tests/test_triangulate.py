"""Delaunay triangulation, duplicate merging, masks and degenerate input."""

import numpy as np
import pytest
import shapely
from scipy.spatial import ConvexHull, Delaunay

from interp import InterpError, triangulate


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
    with pytest.raises(InterpError, match=r"1 point\(s\).*index 1"):
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
