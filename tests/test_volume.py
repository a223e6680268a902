"""Volumes between surfaces, checked against closed-form volumes and shapely areas."""

import numpy as np
import pytest
import shapely
from test_regions import star

from interp import Box, Field, InterpError, Mesh, Polygon, Volumes, triangulate, volume_between


def square_mesh(n_points, seed, side=10.0):
    """Random points in [0, side]^2 plus the four corners, triangulated."""
    rng = np.random.default_rng(seed)
    corners = np.array([[0, 0], [side, 0], [side, side], [0, side]], dtype=float)
    return triangulate(np.vstack([corners, rng.uniform(0, side, (n_points, 2))]))


def plane(mesh, c, a, b):
    return Field(mesh, c + a * mesh.points[:, 0] + b * mesh.points[:, 1])


def test_plane_above_plane_over_a_polygon_is_area_times_height():
    mesh = square_mesh(500, 1)
    ring = star(90, (5.0, 5.0), 3.0, wobble=0.3)
    region = Polygon(ring)
    v = volume_between(plane(mesh, 4.0, 0.3, -0.2), plane(mesh, 1.5, 0.3, -0.2), region)
    area = shapely.Polygon(ring).area  # reference: shapely polygon area
    assert v.area == pytest.approx(area, rel=1e-12)
    assert v.above == pytest.approx(2.5 * area, rel=1e-12)
    assert v.below == 0.0 and v.net == v.above


def test_tilted_plane_crossing_a_level_gives_the_wedge_volumes():
    # surface z = a (x - x0) over [0, L]^2 against the level 0: the volume above is the
    # wedge L * a (L - x0)^2 / 2 and the volume below is L * a x0^2 / 2 (prism formulas)
    L, a, x0 = 10.0, 0.4, 3.7
    mesh = square_mesh(300, 2)
    v = volume_between(plane(mesh, -a * x0, a, 0.0), 0.0)
    assert v.above == pytest.approx(L * a * (L - x0) ** 2 / 2, rel=1e-12)
    assert v.below == pytest.approx(L * a * x0**2 / 2, rel=1e-12)
    assert v.net == pytest.approx(v.above - v.below, rel=1e-12)
    assert v.area == pytest.approx(L * L, rel=1e-14)


def test_cone_stockpile_converges_like_h_squared():
    # a cone of radius r and height h holds pi r^2 h / 3 (geometry of the cone, common
    # knowledge); sampled on rings of radial spacing r/m, the error falls like (r/m)^2
    r, h = 10.0, 5.0
    exact = np.pi * r**2 * h / 3
    errors = []
    for m in (4, 8, 16, 32):
        pts = [np.zeros((1, 2))]
        for k in range(1, m + m // 4 + 2):
            t = np.linspace(0, 2 * np.pi, 6 * k, endpoint=False)
            pts.append(k * r / m * np.c_[np.cos(t), np.sin(t)])
        pts = np.vstack(pts)
        z = h * np.maximum(0.0, 1.0 - np.hypot(pts[:, 0], pts[:, 1]) / r)
        v = volume_between(Field(triangulate(pts), z), 0.0)
        assert abs(v.below) < 1e-12 * exact
        errors.append(abs(v.above - exact))
    rates = np.log2(np.array(errors[:-1]) / np.array(errors[1:]))
    assert rates.min() > 1.6
    assert errors[-1] < 1e-3 * exact


def test_surfaces_on_different_meshes_match_a_common_mesh_for_planes():
    upper_mesh, lower_mesh, common = square_mesh(200, 3), square_mesh(260, 4), square_mesh(90, 5)
    ups, lows = (0.5, 0.2, -0.1), (1.2, -0.05, 0.08)
    region = Polygon(star(40, (5.0, 5.0), 4.0, wobble=0.3))
    apart = volume_between(plane(upper_mesh, *ups), plane(lower_mesh, *lows), region)
    together = volume_between(plane(common, *ups), plane(common, *lows), region)
    for name in ("above", "below", "net", "area"):
        assert getattr(apart, name) == pytest.approx(getattr(together, name), rel=1e-11)
    assert apart.above > 1.0 and apart.below > 1.0


def test_different_meshes_cover_only_their_common_area():
    a = square_mesh(100, 6)
    b = Mesh([[5.0, 5.0], [15, 5], [15, 15], [5, 15]], [[0, 1, 2], [0, 2, 3]])
    v = volume_between(plane(a, 3.0, 0.0, 0.0), plane(b, 1.0, 0.0, 0.0))
    assert v.area == pytest.approx(25.0, rel=1e-12)
    assert v.above == pytest.approx(50.0, rel=1e-12)
    boxed = volume_between(plane(a, 3.0, 0.0, 0.0), plane(b, 1.0, 0.0, 0.0), Box([4, 4], [6, 6]))
    assert boxed.area == pytest.approx(1.0, rel=1e-12)


def test_quadratic_surface_net_is_exact_and_split_converges():
    # z = x^2 + y^2 over [-1, 1]^2 against the level 1/4: the net volume is
    # 8/3 - 1 = 5/3; below the level lies the disc r < 1/2 with
    # 2 pi * integral_0^(1/2) (1/4 - r^2) r dr = pi / 32 (calculus)
    g = np.linspace(-1.0, 1.0, 9)
    mesh = triangulate(np.stack(np.meshgrid(g, g), axis=-1).reshape(-1, 2)).elevate()
    z = Field(mesh, (mesh.points**2).sum(axis=1))
    errors = []
    for levels in (0, 2, 4):
        v = volume_between(z, 0.25, subdivisions=levels)
        assert v.net == pytest.approx(5.0 / 3.0, rel=1e-12)
        errors.append(abs(v.below - np.pi / 32))
    assert errors[2] < errors[1] < errors[0]
    assert errors[2] < 1e-4 * np.pi / 32


def test_missing_values_leave_their_cells_out():
    mesh = Mesh([[0.0, 0], [2, 0], [2, 2], [0, 2]], [[0, 1, 2], [0, 2, 3]])
    with pytest.warns(UserWarning, match="leaves out 2 of the region's 4"):
        v = volume_between(Field(mesh, [1.0, 1.0, 1.0, np.nan]), 0.0)
    assert v.area == 2.0 and v.above == pytest.approx(2.0, rel=1e-14) and v.uncovered == 2.0


def test_region_outside_the_surface_gives_zero():
    mesh = square_mesh(50, 7)
    # the whole triangle (area 10 * 10 / 2 = 50) lies outside the data
    with pytest.warns(UserWarning, match=r"leaves out 50 of the region's 50 \(100%\)"):
        v = volume_between(plane(mesh, 1.0, 0.1, 0.1), 0.0, Polygon([[50, 50], [60, 50], [55, 60]]))
    assert v == Volumes(above=0.0, below=0.0, net=0.0, area=0.0, uncovered=50.0)


def test_region_half_outside_the_data_reports_the_uncovered_area():
    mesh = square_mesh(400, 11)
    ring = [[4.0, 2.0], [16.0, 1.0], [18.0, 7.5], [9.0, 9.0], [3.0, 6.0]]
    # reference: shapely area of the region minus the data's square, and of their overlap
    outside = shapely.Polygon(ring).difference(shapely.box(0, 0, 10, 10)).area
    inside = shapely.Polygon(ring).intersection(shapely.box(0, 0, 10, 10)).area
    with pytest.warns(UserWarning, match="the volume leaves out"):
        v = volume_between(plane(mesh, 3.0, 0.0, 0.0), 1.0, Polygon(ring))
    assert v.uncovered == pytest.approx(outside, rel=1e-12)
    assert v.area == pytest.approx(inside, rel=1e-12)
    assert v.net == pytest.approx(2.0 * inside, rel=1e-12)


def test_surfaces_extent_without_a_region():
    # [0, 10]^2 against [5, 15]^2: union 100 + 100 - 25 = 175, both defined on 25 (by hand)
    a = square_mesh(100, 12)
    b = triangulate(square_mesh(100, 13).points + 5.0)
    with pytest.warns(UserWarning, match=r"leaves out 150 of the region's 175"):
        v = volume_between(plane(a, 3.0, 0.0, 0.0), plane(b, 1.0, 0.0, 0.0))
    assert v.uncovered == pytest.approx(150.0, rel=1e-12)
    assert v.area == pytest.approx(25.0, rel=1e-12)


def test_covered_region_reports_nothing_uncovered(recwarn):
    mesh = square_mesh(200, 14)
    v = volume_between(plane(mesh, 3.0, 0.0, 0.0), 1.0, Box([1, 1], [9, 9]))
    assert v.uncovered == pytest.approx(0.0, abs=1e-9) and v.area == pytest.approx(64.0)
    assert not [w for w in recwarn if "leaves out" in str(w.message)]


def test_bad_input_is_refused():
    mesh = square_mesh(30, 8)
    surface = plane(mesh, 1.0, 0.0, 0.0)
    with pytest.raises(InterpError, match="upper must be an interp.Field"):
        volume_between(mesh, 0.0)
    with pytest.raises(InterpError, match="lower must be an interp.Field or a number"):
        volume_between(surface, "datum")
    with pytest.raises(InterpError, match="finite"):
        volume_between(surface, np.nan)
    with pytest.raises(InterpError, match="scalar"):
        volume_between(Field(mesh, np.zeros((mesh.n_nodes, 2))), 0.0)
    tet = Mesh([[0.0, 0, 0], [1, 0, 0], [0, 1, 0], [0, 0, 1]], [[0, 1, 2, 3]])
    with pytest.raises(InterpError, match="2D triangle mesh"):
        volume_between(Field(tet, np.zeros(4)), 0.0)
    with pytest.raises(InterpError, match="3D but the mesh is 2D"):
        volume_between(surface, 0.0, Box([0, 0, 0], [1, 1, 1]))
    with pytest.raises(InterpError, match="subdivisions"):
        volume_between(surface, 0.0, subdivisions=-1)
