"""Regions: validation, areas and point tests against shapely (a general-purpose
reference library for planar geometry)."""

import numpy as np
import pytest
import shapely

from interp import (
    Box,
    Field,
    HalfSpace,
    InterpError,
    Intersection,
    LevelSet,
    Polygon,
    read_polygon,
    triangulate,
)


def star(n, center=(0.0, 0.0), radius=1.0, wobble=0.35, lobes=5, phase=0.0):
    """A concave star-shaped ring with n vertices, counter-clockwise."""
    t = np.linspace(0.0, 2 * np.pi, n, endpoint=False) + phase
    r = radius * (1.0 + wobble * np.sin(lobes * t))
    return np.c_[center[0] + r * np.cos(t), center[1] + r * np.sin(t)]


def test_area_of_concave_polygon_with_holes_matches_shapely():
    ext = star(300, radius=3.0)
    holes = [star(40, (0.8, 0.2), 0.4)[::-1], star(25, (-1.0, -0.6), 0.3, lobes=3)]
    poly = Polygon(ext, holes)
    # reference: shapely's polygon area
    assert poly.area == pytest.approx(shapely.Polygon(ext, holes).area, rel=1e-13)
    assert poly.measure() == poly.area


def test_contains_matches_shapely_away_from_the_boundary():
    ext = star(200, radius=2.0, lobes=7)
    holes = [star(30, (0.5, 0.0), 0.3)]
    poly = Polygon(ext, holes)
    ref = shapely.Polygon(ext, holes)
    pts = np.random.default_rng(3).uniform(-3, 3, (20000, 2))
    far = shapely.distance(ref.boundary, shapely.points(pts)) > 1e-9
    expect = shapely.contains_xy(ref, pts[:, 0], pts[:, 1])  # reference: shapely
    assert np.array_equal(poly.contains(pts)[far], expect[far])
    assert expect.any() and not expect.all()


def test_self_intersecting_polygon_names_the_first_crossing_edges():
    with pytest.raises(
        InterpError,
        match=r"exterior edge 1 \(vertex 1 to 2\) meets exterior edge 3 \(vertex 3 to 4\)",
    ):
        Polygon([[0, 0], [2, 2], [2, 0], [0, 2]])


def test_polygon_file_crossings_name_the_file_lines(tmp_path):
    # ring 0 is the square (0,0) (4,0) (4,4) (0,4) closed on line 6; line 2 repeats as the
    # closing vertex, so the ring's vertices are lines 3, 4, 5, 6.  The hole's first edge,
    # lines 7 to 8 ((1,1) to (5,2)), crosses the square's side x = 4, lines 3 to 4 (by hand)
    path = tmp_path / "site.csv"
    path.write_text("x,y,ring\n0,0,0\n4,0,0\n4,4,0\n0,4,0\n0,0,0\n1,1,1\n5,2,1\n1,3,1\n")
    with pytest.raises(InterpError) as info:
        read_polygon(path)
    assert str(info.value).startswith(
        f"{path}: the polygon is not simple: the ring 0 edge from line 3 to line 4 meets the "
        "ring 1 edge from line 7 to line 8;"
    )
    # the same rings given as arrays: vertices and edges counted from 1 in each ring
    rings = [np.array([[4.0, 0], [4, 4], [0, 4], [0, 0]]), np.array([[1.0, 1], [5, 2], [1, 3]])]
    with pytest.raises(
        InterpError, match=r"exterior edge 1 \(vertex 1 to 2\) meets hole 1 edge 1 "
    ):
        Polygon(rings[0], holes=rings[1:])


def test_hole_crossing_the_exterior_is_refused():
    with pytest.raises(
        InterpError,
        match=r"exterior edge 2 \(vertex 2 to 3\) meets hole 1 edge 1 \(vertex 1 to 2\)",
    ):
        Polygon([[0, 0], [2, 0], [2, 2], [0, 2]], holes=[[[1, 1], [3, 1], [3, 1.5]]])


def test_hole_outside_or_nested_is_refused():
    sq = [[0, 0], [10, 0], [10, 10], [0, 10]]
    with pytest.raises(InterpError, match="hole 1 lies outside"):
        Polygon(sq, holes=[[[11, 1], [12, 1], [12, 2]]])
    with pytest.raises(InterpError, match="hole 2 lies inside hole 1"):
        Polygon(sq, holes=[[[1, 1], [9, 1], [9, 9], [1, 9]], [[4, 4], [5, 4], [5, 5]]])


@pytest.mark.parametrize(
    ("vertices", "message"),
    [
        ([[0, 0, 0], [1, 0, 0], [0, 1, 0]], "3D"),
        ([[0, 0], [1, 0]], "at least 3"),
        ([[0, 0], [1, 0], [1, 0], [0, 0]], "at least 3"),
        ([[0, 0], [1, np.nan], [0, 1]], "NaN"),
        ([[0, 0], [1, 0], [2, 0]], "not simple"),
        ([[0, 0], [1, 0], [0.5, 1e-14]], "zero area"),
    ],
)
def test_bad_polygons_are_refused(vertices, message):
    with pytest.raises(InterpError, match=message):
        Polygon(vertices)


def test_box_measure_contains_and_emptiness():
    box = Box([0, -1, 2], [1, 1, 5])
    assert box.measure() == 6.0
    assert box.contains([[0, 0, 2], [1, 1, 5], [0.5, 0, 5.1]]).tolist() == [True, True, False]
    with pytest.raises(InterpError, match=r"lo\[1\] = 2 is not below hi\[1\] = 1"):
        Box([0, 2], [1, 1])
    with pytest.raises(InterpError, match="same number"):
        Box([0, 0], [1, 1, 1])
    with pytest.raises(InterpError, match="NaN"):
        Box([0, np.nan], [1, 1])


def test_half_space_contains_and_validation():
    h = HalfSpace([1.0, 2.0], 3.0)
    assert h.contains([[1, 1], [3, 0.5]]).tolist() == [True, False]
    assert h.measure() == np.inf
    with pytest.raises(InterpError, match="zero"):
        HalfSpace([0.0, 0.0], 1.0)
    with pytest.raises(InterpError, match="finite"):
        HalfSpace([1.0, 0.0], np.inf)


def test_level_set_contains_and_validation():
    mesh = triangulate(np.random.default_rng(0).uniform(0, 1, (50, 2)))
    depth = Field(mesh, mesh.points[:, 0] + mesh.points[:, 1])
    pts = np.array([[0.5, 0.6], [0.2, 0.2]])
    assert LevelSet(depth, 1.0).contains(pts).tolist() == [True, False]
    assert LevelSet(depth, 1.0, side="below").contains(pts).tolist() == [False, True]
    assert not LevelSet(depth, 1.0).contains([[5.0, 5.0]])[0]  # outside the field's mesh
    with pytest.raises(InterpError, match="P1"):
        LevelSet(Field(mesh.elevate(), np.zeros(mesh.elevate().n_nodes)), 0.0)
    with pytest.raises(InterpError, match="scalar"):
        LevelSet(Field(mesh, np.zeros((mesh.n_nodes, 2))), 0.0)
    with pytest.raises(InterpError, match="side"):
        LevelSet(depth, 0.0, side="up")
    with pytest.raises(InterpError, match="Field"):
        LevelSet(mesh, 0.0)
    with pytest.raises(InterpError, match="measure"):
        _ = LevelSet(depth, 0.5).measure()


def test_intersection_flattens_and_checks():
    a, b, c = Box([0, 0], [2, 2]), HalfSpace([1, 0], 1.0), Polygon([[0, 0], [3, 0], [0, 3]])
    both = a & b & c
    assert isinstance(both, Intersection) and len(both.regions) == 3
    pts = [[0.5, 0.5], [1.5, 0.2], [0.9, 1.95], [0.9, 2.05]]
    assert both.contains(pts).tolist() == [True, False, True, False]
    assert both.bounds.tolist() == [[0.0, 0.0], [2.0, 2.0]]
    with pytest.raises(InterpError, match="different dimensions"):
        Box([0, 0], [1, 1]) & HalfSpace([1, 0, 0], 0.0)
    with pytest.raises(InterpError, match="empty"):
        Box([0, 0], [1, 1]) & Box([2, 2], [3, 3])
    with pytest.raises(InterpError, match="regions"):
        Intersection(a, "box")
    with pytest.raises(InterpError, match="measure"):
        _ = both.measure()


def test_contains_checks_the_points():
    with pytest.raises(InterpError, match="3 coordinates"):
        Polygon([[0, 0], [1, 0], [0, 1]]).contains([[0.1, 0.1, 0.0]])
