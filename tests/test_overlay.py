"""Overlay of two triangle meshes, checked against shapely (general-purpose planar
geometry: unions and intersections of the triangles)."""

import numpy as np
import pytest
import shapely

from interp import InterpError, Mesh, Overlay, overlay, triangulate
from interp._overlay import overlay_cells


@pytest.fixture(scope="module")
def pair():
    rng = np.random.default_rng(5)
    a = triangulate(rng.uniform(0, 10, (400, 2)), max_edge=1.5)
    pts = rng.uniform(3, 14, (300, 2))
    b = triangulate(pts[np.hypot(pts[:, 0] - 8, pts[:, 1] - 7) > 2.0], max_edge=2.0)
    return a, b, overlay(a, b)


def polygons(mesh):
    return shapely.polygons(mesh.points[mesh.corners])


def test_overlay_area_is_the_area_of_the_common_domain(pair):
    a, b, ov = pair
    assert isinstance(ov, Overlay)
    # reference: shapely union of each mesh's triangles, then their intersection
    common = shapely.unary_union(polygons(a)).intersection(shapely.unary_union(polygons(b)))
    assert ov.mesh.measure().sum() == pytest.approx(common.area, rel=1e-12)


def test_overlay_cells_lie_in_both_parents(pair):
    a, b, ov = pair
    assert ov.parents.shape == (ov.mesh.n_cells, 2) and ov.parents.dtype == np.int64
    centroids = ov.mesh.points[ov.mesh.cells].mean(axis=1)
    for k, mesh in enumerate((a, b)):
        tri = mesh.points[mesh.corners[ov.parents[:, k]]]
        inside = shapely.contains_xy(shapely.polygons(tri), centroids[:, 0], centroids[:, 1])
        assert inside.all()


def test_overlay_areas_per_pair_match_shapely(pair):
    a, b, ov = pair
    key = ov.parents[:, 0] * b.n_cells + ov.parents[:, 1]
    uniq, inv = np.unique(key, return_inverse=True)
    got = np.bincount(inv, ov.mesh.measure())
    pa, pb = uniq // b.n_cells, uniq % b.n_cells
    # reference: shapely intersection of each pair of triangles
    expect = shapely.area(shapely.intersection(polygons(a)[pa], polygons(b)[pb]))
    assert np.allclose(got, expect, rtol=1e-9, atol=1e-13)
    # no overlapping pair is missing: every pair whose intersection has area shows up
    tree = shapely.STRtree(polygons(b))
    ia, ib = tree.query(polygons(a), predicate="intersects")
    areas = shapely.area(shapely.intersection(polygons(a)[ia], polygons(b)[ib]))
    found = set(uniq.tolist())
    big = areas > 1e-9 * np.minimum(a.measure()[ia], b.measure()[ib])
    assert {int(i) * b.n_cells + int(j) for i, j in zip(ia[big], ib[big], strict=True)} <= found


def test_overlay_of_a_mesh_with_itself_pairs_each_cell_with_itself():
    mesh = triangulate(np.random.default_rng(2).uniform(0, 1, (200, 2)))
    ov = overlay(mesh, mesh.elevate())
    assert np.array_equal(ov.parents[:, 0], ov.parents[:, 1])
    per_cell = np.bincount(ov.parents[:, 0], ov.mesh.measure(), minlength=mesh.n_cells)
    assert np.allclose(per_cell, mesh.measure(), rtol=1e-12)


def test_overlay_survey_coordinates():
    rng = np.random.default_rng(8)
    offset = np.array([431_000.0, 5_872_000.0])
    a = triangulate(rng.uniform(0, 500, (300, 2)) + offset)
    b = triangulate(rng.uniform(100, 600, (300, 2)) + offset)
    common = shapely.unary_union(polygons(a)).intersection(shapely.unary_union(polygons(b)))
    assert overlay(a, b).mesh.measure().sum() == pytest.approx(common.area, rel=1e-10)


def test_disjoint_meshes_and_bad_input():
    a = Mesh([[0.0, 0], [1, 0], [0, 1]], [[0, 1, 2]])
    far = Mesh(a.points + 10.0, a.cells)
    assert overlay_cells(a, far)[0].shape == (0, 3, 2)
    with pytest.raises(InterpError, match="do not overlap"):
        overlay(a, far)
    tet = Mesh([[0.0, 0, 0], [1, 0, 0], [0, 1, 0], [0, 0, 1]], [[0, 1, 2, 3]])
    with pytest.raises(InterpError, match="mesh_b has tetra cells in 3D"):
        overlay(a, tet)
    with pytest.raises(InterpError, match="mesh_a has no mesh"):
        overlay(a.points, a)
