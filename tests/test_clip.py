"""Exact clipping of meshes by regions, checked against shapely (general-purpose
planar geometry), scipy (convex hull volumes) and closed-form volumes."""

import numpy as np
import pytest
import shapely
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.spatial import ConvexHull
from test_regions import star

from interp import (
    Box,
    Field,
    HalfSpace,
    InterpError,
    LevelSet,
    Mesh,
    Polygon,
    Region,
    integrate,
    triangulate,
)
from interp.clip import clip, cut_simplices


@pytest.fixture(scope="module")
def bay():
    """A concave mesh with a gap: random points, long hull triangles removed."""
    rng = np.random.default_rng(7)
    pts = rng.uniform(0, 10, (1500, 2))
    pts = pts[np.hypot(pts[:, 0] - 6, pts[:, 1] - 4) > 1.5]
    return triangulate(pts, max_edge=0.9)


def cell_areas(pieces, n_cells):
    return np.bincount(pieces.parent, pieces.measure(), minlength=n_cells)


def shapely_cells(mesh):
    return shapely.polygons(mesh.points[mesh.corners])


def test_polygon_clip_matches_shapely_cell_by_cell(bay):
    ext = star(400, (5.0, 5.0), 3.5, lobes=7)
    holes = [star(60, (4.0, 5.5), 0.8)[::-1], star(9, (5.5, 3.8), 0.3, lobes=2)]
    poly = Polygon(ext, holes)
    ref = shapely.Polygon(ext, holes)
    pieces = clip(bay, poly)
    # reference: shapely.intersection of every triangle with the polygon
    expect = shapely.area(shapely.intersection(shapely_cells(bay), ref))
    got = cell_areas(pieces, bay.n_cells)
    assert np.abs(got - expect).max() < 1e-12 * bay.measure().max()
    assert np.array_equal(got > 1e-14, expect > 1e-14)
    # reference: shapely area of (mesh domain ∩ polygon)
    domain = shapely.unary_union(shapely_cells(bay))
    assert got.sum() == pytest.approx(domain.intersection(ref).area, rel=1e-12)


def test_pieces_lie_in_their_parent_and_tile_inside_cells(bay):
    poly = Polygon(star(250, (5.0, 5.0), 3.0, lobes=4), [star(30, (5.5, 4.0), 0.5)])
    pieces = clip(bay, poly)
    assert np.all(np.diff(pieces.parent) >= 0)
    assert pieces.bary(bay).min() > -1e-12
    ref = shapely.Polygon(poly.exterior, poly.holes)
    inside = shapely.contains(ref, shapely_cells(bay))  # reference: shapely
    got = cell_areas(pieces, bay.n_cells)
    assert inside.sum() > 100
    assert np.allclose(got[inside], bay.measure()[inside], rtol=1e-13, atol=0)


def test_polygon_vertices_on_mesh_nodes_and_edges():
    g = np.linspace(0.0, 4.0, 9)
    mesh = triangulate(np.stack(np.meshgrid(g, g), axis=-1).reshape(-1, 2))
    ring = [[0.5, 0.5], [3.5, 0.5], [3.5, 3.5], [2.0, 3.5], [2.0, 1.5], [0.5, 1.5]]
    pieces = clip(mesh, Polygon(ring))
    expect = shapely.area(shapely.intersection(shapely_cells(mesh), shapely.Polygon(ring)))
    assert np.abs(cell_areas(pieces, mesh.n_cells) - expect).max() < 1e-14
    assert pieces.measure().sum() == pytest.approx(6.0, rel=1e-14)


@settings(max_examples=150, deadline=None)
@given(st.lists(st.tuples(st.integers(0, 8), st.integers(0, 8)), min_size=3, max_size=8))
def test_integer_polygons_on_an_integer_grid_match_shapely(vertices):
    # vertices on mesh nodes, edges along mesh edges and through mesh vertices
    try:
        poly = Polygon(np.array(vertices, dtype=float) / 2)
    except InterpError:
        return
    g = np.linspace(0.0, 4.0, 9)
    mesh = triangulate(np.stack(np.meshgrid(g, g), axis=-1).reshape(-1, 2))
    pieces = clip(mesh, poly)
    expect = shapely.area(shapely.intersection(shapely_cells(mesh), shapely.Polygon(poly.exterior)))
    assert np.abs(cell_areas(pieces, mesh.n_cells) - expect).max() < 1e-14
    assert pieces.bary(mesh).min() > -1e-14


def test_island_and_hole_inside_a_single_cell():
    mesh = Mesh([[0.0, 0], [10, 0], [0, 10]], [[0, 1, 2]])
    island = star(12, (2.0, 2.0), 0.5)
    assert clip(mesh, Polygon(island)).measure().sum() == pytest.approx(
        shapely.Polygon(island).area, rel=1e-13
    )
    framed = Polygon([[-1, -1], [20, -1], [-1, 20]], holes=[island])
    assert clip(mesh, framed).measure().sum() == pytest.approx(
        50.0 - shapely.Polygon(island).area, rel=1e-13
    )


def test_polygon_covering_the_mesh_keeps_every_cell_whole(bay):
    pieces = clip(bay, Polygon([[-1, -1], [11, -1], [11, 11], [-1, 11]]))
    assert np.array_equal(pieces.parent, np.arange(bay.n_cells))
    assert np.array_equal(pieces.corners, bay.points[bay.corners])


@settings(max_examples=40, deadline=None)
@given(
    st.floats(0, 2 * np.pi),
    st.floats(-8.0, 8.0),
    st.sampled_from([2, 3]),
)
def test_half_space_additivity(angle, offset, dim):
    # measure over HalfSpace(n, c) plus over HalfSpace(-n, -c) is the whole mesh
    rng = np.random.default_rng(dim)
    mesh = triangulate(rng.uniform(-5, 5, (60, dim)))
    n = np.array([np.cos(angle), np.sin(angle), 0.4][:dim])
    total = clip(mesh, HalfSpace(n, offset)).measure().sum()
    total += clip(mesh, HalfSpace(-n, -offset)).measure().sum()
    assert total == pytest.approx(mesh.measure().sum(), rel=1e-12)


@pytest.fixture(scope="module")
def cube():
    g = np.linspace(0.0, 1.0, 5)
    return triangulate(np.stack(np.meshgrid(g, g, g), axis=-1).reshape(-1, 3))


def corner_volume(c):
    """Volume of {x in [0,1]^3 : x + y + z <= c}: the Irwin-Hall distribution function
    for three uniform variables, (1/6) sum_k (-1)^k C(3,k) (c - k)_+^3 (common knowledge)."""
    return sum((-1) ** k * (1, 3, 3, 1)[k] * max(c - k, 0.0) ** 3 for k in range(4)) / 6


@pytest.mark.parametrize("c", [0.3, 1.0, 1.37, 2.2, 2.95])
def test_tetra_mesh_cut_by_a_plane_matches_the_cube_corner_volume(cube, c):
    pieces = clip(cube, HalfSpace([1.0, 1.0, 1.0], c))
    assert pieces.measure().sum() == pytest.approx(corner_volume(c), rel=1e-12)
    assert pieces.bary(cube).min() > -1e-12


def test_box_in_3d_and_1d(cube):
    # the box [0.2, 0.7] x [-1, 0.5] x [0.1, 2] meets the unit cube in 0.5 * 0.5 * 0.9
    pieces = clip(cube, Box([0.2, -1.0, 0.1], [0.7, 0.5, 2.0]))
    assert pieces.measure().sum() == pytest.approx(0.225, rel=1e-12)
    line = Mesh([0.0, 0.3, 1.0, 2.5], [[0, 1], [1, 2], [2, 3]])
    pieces = clip(line, Box([0.2], [1.7]))
    assert pieces.parent.tolist() == [0, 1, 2]
    ends = np.sort(pieces.corners[:, :, 0], axis=1)
    assert np.allclose(ends, [[0.2, 0.3], [0.3, 1.0], [1.0, 1.7]], rtol=0, atol=1e-15)


@settings(max_examples=60, deadline=None)
@given(st.integers(0, 10_000))
def test_plane_cut_of_a_simplex_matches_the_convex_hull(seed):
    rng = np.random.default_rng(seed)
    for dim in (2, 3):
        simplex = rng.normal(size=(1, dim + 1, dim))
        d = rng.normal(size=(1, dim + 1))
        if (d <= 0).all() or (d > 0).all():
            continue
        out, src = cut_simplices(simplex, d)
        # reference: scipy's convex hull of the corners with d <= 0 and the edge crossings
        pts = list(simplex[0][d[0] <= 0])
        for i in range(dim + 1):
            for j in range(i + 1, dim + 1):
                if (d[0, i] <= 0) != (d[0, j] <= 0):
                    w = d[0, i] / (d[0, i] - d[0, j])
                    pts.append(simplex[0, i] + w * (simplex[0, j] - simplex[0, i]))
        hull = ConvexHull(np.array(pts)).volume
        vol = np.abs(np.linalg.det(out[:, 1:] - out[:, :1])).sum() / (2 if dim == 2 else 6)
        assert vol == pytest.approx(hull, rel=1e-9)
        assert np.all(src == 0)


def test_level_set_of_a_linear_field_is_a_half_plane(bay):
    f = Field(bay, 2.0 * bay.points[:, 0] - bay.points[:, 1])
    above = clip(bay, LevelSet(f, 3.0))
    plane = clip(bay, HalfSpace([-2.0, 1.0], -3.0))
    assert np.allclose(cell_areas(above, bay.n_cells), cell_areas(plane, bay.n_cells), atol=1e-13)
    below = clip(bay, LevelSet(f, 3.0, side="below"))
    total = above.measure().sum() + below.measure().sum()
    assert total == pytest.approx(bay.measure().sum(), rel=1e-13)


def test_level_set_cuts_along_the_linear_crossing(bay):
    z = np.sin(bay.points[:, 0]) * np.cos(bay.points[:, 1])
    f = Field(bay, z)
    pieces = clip(bay, LevelSet(f, 0.2) & Box([2, 2], [8, 8]))
    corner_values = np.einsum("skt,st->sk", pieces.bary(bay), z[bay.corners[pieces.parent]])
    assert corner_values.min() > 0.2 - 1e-12
    assert pieces.corners.min() >= 2.0 and pieces.corners.max() <= 8.0
    assert np.isclose(corner_values.min(), 0.2, atol=1e-12)


def test_level_set_skips_cells_with_missing_values():
    mesh = Mesh([[0.0, 0], [1, 0], [1, 1], [0, 1]], [[0, 1, 2], [0, 2, 3]])
    f = Field(mesh, [0.0, 1.0, 1.0, np.nan])
    pieces = clip(mesh, LevelSet(f, 0.5))
    # in cell 0 the field is x: the part x >= 0.5 of the triangle y <= x has area 3/8
    assert set(pieces.parent.tolist()) == {0}
    assert pieces.measure().sum() == pytest.approx(0.375, rel=1e-14)


def test_intersection_of_polygon_and_box_matches_shapely(bay):
    ring = star(120, (5.0, 5.0), 3.5, lobes=3)
    pieces = clip(bay, Polygon(ring) & Box([3.0, 1.0], [7.5, 6.0]) & HalfSpace([1, 1], 11.0))
    region = shapely.Polygon(ring) & shapely.box(3.0, 1.0, 7.5, 6.0)
    region = region & shapely.Polygon([[0, 0], [11, 0], [0, 11]])
    expect = shapely.area(shapely.intersection(shapely_cells(bay), region))
    assert np.abs(cell_areas(pieces, bay.n_cells) - expect).max() < 1e-12


def test_quadratic_mesh_clips_like_its_corners(bay):
    poly = Polygon(star(50, (5.0, 5.0), 2.0))
    p1, p2 = clip(bay, poly), clip(bay.elevate(), poly)
    assert np.array_equal(p1.parent, p2.parent)
    assert np.array_equal(p1.corners, p2.corners)


def test_region_outside_the_mesh_gives_nothing(bay):
    far = Polygon([[100, 100], [101, 100], [100, 101]])
    pieces = clip(bay, far)
    assert len(pieces) == 0 and pieces.measure().sum() == 0.0
    assert integrate(Field(bay, np.ones(bay.n_nodes)), region=far) == 0.0
    assert len(clip(bay, Box([20, 20], [30, 30]))) == 0


def test_survey_coordinates_clip_exactly():
    rng = np.random.default_rng(11)
    offset = np.array([512_345.0, 6_123_456.0])
    mesh = triangulate(rng.uniform(0, 200, (800, 2)) + offset)
    ring = star(80, (100.0, 100.0), 60.0) + offset
    expect = shapely.area(shapely.intersection(shapely_cells(mesh), shapely.Polygon(ring)))
    got = cell_areas(clip(mesh, Polygon(ring)), mesh.n_cells)
    assert np.abs(got - expect).max() < 1e-6 * mesh.measure().max()


def test_bad_input_is_refused(cube, bay):
    with pytest.raises(InterpError, match="Polygon is planar"):
        clip(cube, Polygon([[0, 0], [1, 0], [0, 1]]))
    with pytest.raises(InterpError, match="2D but the mesh is 3D"):
        clip(cube, Box([0, 0], [1, 1]))
    with pytest.raises(InterpError, match="region"):
        clip(bay, [[0, 0], [1, 1]])
    with pytest.raises(InterpError, match="Mesh"):
        clip(bay.points, Box([0, 0], [1, 1]))
    surface = Mesh([[0.0, 0, 0], [1, 0, 0], [0, 1, 1]], [[0, 1, 2]])
    with pytest.raises(InterpError, match="fill their space"):
        clip(surface, Box([0, 0, 0], [1, 1, 1]))

    class Disc(Region):
        gdim = 2

    with pytest.raises(InterpError, match="cannot clip by a Disc"):
        clip(bay, Disc() & Box([0, 0], [1, 1]))
    other = triangulate(np.random.default_rng(1).uniform(0, 10, (40, 2)))
    with pytest.raises(InterpError, match="another mesh"):
        clip(bay, LevelSet(Field(other, other.points[:, 0]), 5.0))
