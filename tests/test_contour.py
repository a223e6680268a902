"""Contour lines as data: against matplotlib's tricontour, hand arithmetic, analytic curves,
shapely's intersection, and the GeoJSON / CSV files read back."""

import json

import numpy as np
import pytest
import shapely
from conftest import cube_mesh, square_mesh
from hypothesis import given, settings
from hypothesis import strategies as st
from matplotlib._tri import TriContourGenerator
from matplotlib.tri import Triangulation
from shapely.geometry import LineString, MultiLineString, Point, shape

from interp import (
    Box,
    Field,
    HalfSpace,
    InterpError,
    LevelSet,
    Mesh,
    Polygon,
    contour_levels,
    contours,
    triangulate,
)
from interp.cli import main


def wavy(n=500, seed=1):
    rng = np.random.default_rng(seed)
    pts = rng.random((n, 2)) * [40.0, 25.0] + [5000.0, 2000.0]
    mesh = triangulate(pts)
    x, y = (mesh.points - [5000.0, 2000.0]).T
    return Field(mesh, np.sin(x / 6) * np.cos(y / 5) + 0.03 * x)


def canonical(line, closed):
    """A polyline independent of its start point and direction."""
    v = np.asarray(line, dtype=np.float64)
    if closed:
        v = v[:-1]
        k = int(np.argmin(v[:, 0]))
        v = np.roll(v, -k, axis=0)
        if v[-1, 1] < v[1, 1]:
            v = np.roll(v[::-1], 1, axis=0)
    elif tuple(v[-1]) < tuple(v[0]):
        v = v[::-1]
    return v


def matplotlib_lines(field, level):
    """(vertices, closed) of each line of matplotlib's tricontour on the same triangles."""
    x, y = field.mesh.points.T
    gen = TriContourGenerator(
        Triangulation(x, y, field.mesh.cells).get_cpp_triangulation(), field.values
    )
    verts, codes = gen.create_contour(level)
    return [(v, bool(c[-1] == 79)) for v, c in zip(verts, codes, strict=True)]


def same_lines(ours, reference, atol):
    """Match two lists of (vertices, closed) as sets, to atol."""
    a = sorted([(canonical(v, c), c) for v, c in ours], key=lambda p: tuple(p[0][0]))
    b = sorted([(canonical(v, c), c) for v, c in reference], key=lambda p: tuple(p[0][0]))
    assert len(a) == len(b)
    for (va, ca), (vb, cb) in zip(a, b, strict=True):
        assert ca == cb
        assert va.shape == vb.shape
        np.testing.assert_allclose(va, vb, rtol=0, atol=atol)


def test_p1_matches_matplotlib_tricontour():
    field = wavy()
    levels = [-0.6, 0.0, 0.45, 0.8, 1.3]
    c = contours(field, levels)
    assert c.tolerance == 0.0
    assert np.all(np.diff(c.levels) >= 0)
    for level in levels:
        ours = [
            (v, cl) for v, cl, lv in zip(c.lines, c.closed, c.levels, strict=True) if lv == level
        ]
        # reference: matplotlib.tri's contour generator (TriContourGenerator, the engine
        # behind tricontour) on the same triangulation
        same_lines(ours, matplotlib_lines(field, level), atol=1e-9)


def test_lines_of_a_plane_are_straight_at_known_places():
    mesh = square_mesh(6)
    x, y = mesh.points.T
    c = contours(Field(mesh, 2 * x + 3 * y), [1.0, 2.0, 4.0])
    assert c.levels.tolist() == [1.0, 2.0, 4.0] and not c.closed.any()
    # hand arithmetic: 2x + 3y = L meets the square's sides at (L/2, 0) and (0, L/3) for
    # L <= 2, and at (1, (L - 2)/3) and ((L - 3)/2, 1) for 3 <= L <= 5
    ends = {
        1.0: [(0.5, 0.0), (0.0, 1 / 3)],
        2.0: [(1.0, 0.0), (0.0, 2 / 3)],
        4.0: [(1.0, 2 / 3), (0.5, 1.0)],
    }
    for v, level in zip(c.lines, c.levels, strict=True):
        np.testing.assert_allclose(2 * v[:, 0] + 3 * v[:, 1], level, atol=1e-12)
        np.testing.assert_allclose(sorted(map(tuple, v[[0, -1]])), sorted(ends[level]), atol=1e-12)
        # higher values on the left: the gradient (2, 3) points left of the direction
        d = v[-1] - v[0]
        assert -d[1] * 2 + d[0] * 3 > 0


def test_cell_orientation_does_not_change_the_lines():
    mesh = square_mesh(5)
    cells = mesh.cells.copy()
    cells[::2] = cells[::2, ::-1]  # every other cell clockwise
    x, y = mesh.points.T
    a = contours(Field(mesh, x * y + x), [0.3, 0.9])
    b = contours(Field(Mesh(mesh.points, cells), x * y + x), [0.3, 0.9])
    assert len(a) == len(b) == 2
    for va, vb in zip(a.lines, b.lines, strict=True):
        np.testing.assert_array_equal(va, vb)


def test_cone_gives_closed_rings_inside_the_true_circles():
    g = np.linspace(-1.0, 1.0, 41)
    mesh = triangulate(np.stack(np.meshgrid(g, g), axis=-1).reshape(-1, 2))
    r = np.hypot(*mesh.points.T)
    c = contours(Field(mesh, r), [0.3, 0.55, 0.8])
    assert c.closed.tolist() == [True, True, True]
    for v, level in zip(c.lines, c.levels, strict=True):
        np.testing.assert_array_equal(v[0], v[-1])
        ring = shapely.Polygon(v)
        assert ring.is_valid and ring.contains(Point(0, 0))
        # the cone is convex, so its linear interpolant lies above it (a chord is above
        # a convex function): the interpolant's level line lies inside the circle r = L
        rv = np.hypot(*v.T)
        assert rv.max() <= level + 1e-12
        assert rv.min() >= level - 0.05**2 / level
        # higher values on the left: the cone rises outwards, so the ring turns clockwise
        assert not shapely.is_ccw(shapely.LinearRing(v))


def test_paraboloid_ring_vertices_on_edges():
    mesh = square_mesh(20)
    x, y = (mesh.points - 0.5).T
    c = contours(Field(mesh, x * x + y * y), [0.1])
    assert len(c) == 1 and c.closed[0]
    # each vertex lies on a mesh edge, where the interpolant is the chord of the parabola:
    # at most h^2 / 4 above x^2 + y^2 along an axis-aligned edge of length h (h = 1/20), and
    # h^2 / 2 along a diagonal (analytic: the chord of t^2 over a step h is at most h^2 / 4
    # above it)
    rv2 = np.sum((c.lines[0] - 0.5) ** 2, axis=1)
    assert np.all(rv2 <= 0.1 + 1e-12) and np.all(rv2 >= 0.1 - 0.05**2 / 2 - 1e-12)


def test_node_values_at_the_level_give_no_repeated_vertices():
    mesh = square_mesh(4)
    x = mesh.points[:, 0]
    c = contours(Field(mesh, x), [0.5])
    # the line x = 0.5 runs through the nodes there, each once, and nowhere else
    assert len(c) == 1 and not c.closed[0]
    v = c.lines[0]
    np.testing.assert_array_equal(v[:, 0], 0.5)
    np.testing.assert_array_equal(np.sort(v[:, 1]), np.linspace(0, 1, 5))


def test_a_peak_exactly_at_the_level_gives_no_line():
    mesh = square_mesh(4)
    x, y = (mesh.points - 0.5).T
    assert len(contours(Field(mesh, -np.hypot(x, y)), [0.0])) == 0


@settings(max_examples=40, deadline=None)
@given(st.lists(st.integers(-2, 2), min_size=36, max_size=36), st.integers(-2, 2))
def test_ties_never_give_zero_length_pieces(values, level):
    mesh = square_mesh(5)
    field = Field(mesh, np.array(values, dtype=np.float64))
    c = contours(field, [float(level)])
    for v, closed in zip(c.lines, c.closed, strict=True):
        assert len(v) >= (4 if closed else 2)
        assert np.all(np.linalg.norm(np.diff(v, axis=0), axis=1) > 0)
        assert closed == bool(np.all(v[0] == v[-1]))
        # every vertex is where the (piecewise-linear) surface is at the level
        np.testing.assert_allclose(field(v), level, atol=1e-12)


def disk_p2(n=12):
    g = np.linspace(-1.5, 1.5, n)
    return triangulate(np.stack(np.meshgrid(g, g), axis=-1).reshape(-1, 2)).elevate()


@pytest.mark.parametrize("tol", [1e-2, 1e-4])
def test_p2_circle_within_the_stated_tolerance(tol):
    mesh = disk_p2()
    x, y = mesh.points.T
    field = Field(mesh, x * x + y * y)  # P2 holds x^2 + y^2 exactly
    c = contours(field, [1.0], tolerance=tol)
    assert len(c) == 1 and c.closed[0] and 0 < c.tolerance <= tol
    # analytic: the true level line is the circle x^2 + y^2 = 1; every vertex lies where
    # the quadratic is within the stated tolerance of the level
    r2 = np.sum(c.lines[0] ** 2, axis=1)
    assert np.abs(r2 - 1.0).max() <= tol
    # and the corners alone (P1) are farther off than that
    p1 = contours(Field(mesh.linear(), field.values), [1.0])
    assert np.abs(np.sum(p1.lines[0] ** 2, axis=1) - 1.0).max() > tol


def test_p2_of_a_plane_needs_no_subdivision():
    mesh = disk_p2(5)
    x, y = mesh.points.T
    c = contours(Field(mesh, x - y), [0.25])
    p1 = contours(Field(mesh.linear(), x - y), [0.25])
    assert c.tolerance == 0.0
    same_lines(zip(c.lines, c.closed, strict=True), zip(p1.lines, p1.closed, strict=True), 0.0)


@pytest.mark.parametrize(
    "region",
    [
        Polygon(
            [[5008, 2003], [5036, 2005], [5030, 2022], [5020, 2012], [5010, 2021]],
            holes=[[[5014, 2007], [5020, 2007], [5017, 2011]]],
        ),
        Box([5010.5, 2004.25], [5031.0, 2019.5]),
        HalfSpace([1.0, -0.5], 4000.0),
        Polygon([[5008, 2003], [5036, 2005], [5030, 2022]]) & Box([5000, 2000], [5025, 2015]),
    ],
)
def test_clipped_lines_match_shapely_intersection(region):
    field = wavy()
    levels = [-0.5, 0.1, 0.6, 1.1]
    whole = contours(field, levels)
    clipped = contours(field, levels, region=region)
    if isinstance(region, HalfSpace):
        # the half-plane x - y/2 <= 4000 as a large polygon
        ref = shapely.Polygon([[0, 0], [4000, 0], [4000 + 0.5 * 3000, 3000], [0, 3000]])
    elif isinstance(region, Polygon):
        ref = shapely.Polygon(region.exterior, region.holes)
    elif isinstance(region, Box):
        ref = shapely.box(*region.lo, *region.hi)
    else:
        tri, box = region.regions
        ref = shapely.Polygon(tri.exterior).intersection(shapely.box(*box.lo, *box.hi))
    for level in levels:
        # reference: shapely's intersection of each whole line with the region
        want = shapely.union_all(
            [
                LineString(v).intersection(ref)
                for v, lv in zip(whole.lines, whole.levels, strict=True)
                if lv == level
            ]
        )
        got = [
            LineString(v)
            for v, lv in zip(clipped.lines, clipped.levels, strict=True)
            if lv == level
        ]
        got = MultiLineString(got) if got else shapely.GeometryCollection()
        assert got.length == pytest.approx(want.length, rel=1e-9, abs=1e-9)
        if not want.is_empty:
            assert shapely.hausdorff_distance(got, want) < 1e-9
    # every clipped line ends on the region's boundary or where the whole line ends
    ends = np.array(
        [v[[0, -1]] for v, cl in zip(clipped.lines, clipped.closed, strict=True) if not cl]
    ).reshape(-1, 2)
    whole_ends = np.array([v[[0, -1]] for v in whole.lines]).reshape(-1, 2)
    boundary = ref.boundary
    for p in ends:
        assert (
            boundary.distance(Point(p)) < 1e-7
            or np.min(np.linalg.norm(whole_ends - p, axis=1)) < 1e-9
        )


def test_ring_cut_by_a_region_stays_one_line_across_its_start():
    g = np.linspace(-1.0, 1.0, 21)
    mesh = triangulate(np.stack(np.meshgrid(g, g), axis=-1).reshape(-1, 2))
    field = Field(mesh, np.hypot(*mesh.points.T))
    ring = contours(field, [0.5]).lines[0]

    # a notch over the ring's first vertex and one elsewhere: two open lines, neither
    # broken at the ring's start
    def square(p, h=0.06):
        return p + np.array([[-h, -h], [h, -h], [h, h], [-h, h]])

    keep = Polygon([[-2, -2], [2, -2], [2, 2], [-2, 2]], holes=[square(ring[0]), square(-ring[0])])
    c = contours(field, [0.5], region=keep)
    assert len(c) == 2 and not c.closed.any()
    ref = LineString(ring).intersection(shapely.Polygon(keep.exterior, keep.holes))
    assert sum(LineString(v).length for v in c.lines) == pytest.approx(ref.length, rel=1e-12)


def test_levelset_region_on_the_same_mesh():
    mesh = square_mesh(8)
    x, y = mesh.points.T
    c = contours(Field(mesh, y), [0.25, 0.75], region=LevelSet(Field(mesh, x), 0.5))
    # hand arithmetic: y = 0.25 and y = 0.75 from x = 0.5 to x = 1
    assert len(c) == 2
    for v in c.lines:
        np.testing.assert_allclose(sorted(v[[0, -1], 0]), [0.5, 1.0], atol=1e-12)
    with pytest.raises(InterpError, match="another mesh"):
        contours(Field(mesh, y), [0.5], region=LevelSet(Field(square_mesh(3), x[:16]), 0.5))


def test_geojson_and_csv_read_back(tmp_path):
    c = contours(wavy(), [0.0, 0.5])
    gj = json.loads(c.save(tmp_path / "c.geojson").read_text())
    assert gj["type"] == "FeatureCollection" and len(gj["features"]) == len(c)
    for feat, v, level, closed in zip(gj["features"], c.lines, c.levels, c.closed, strict=True):
        assert feat["type"] == "Feature" and feat["geometry"]["type"] == "LineString"
        assert feat["properties"] == {"level": level, "closed": bool(closed)}
        # reference: shapely reads the GeoJSON geometry (RFC 7946 LineString)
        np.testing.assert_array_equal(np.asarray(shape(feat["geometry"]).coords), v)
    table = np.loadtxt(c.save(tmp_path / "c.csv"), delimiter=",", skiprows=1)
    assert (tmp_path / "c.csv").read_text().splitlines()[0] == "x,y,level,line"
    line = table[:, 3].astype(int)
    for k, (v, level) in enumerate(zip(c.lines, c.levels, strict=True)):
        np.testing.assert_array_equal(table[line == k, :2], v)
        np.testing.assert_array_equal(table[line == k, 2], level)
    with pytest.raises(InterpError, match="unknown suffix"):
        c.save(tmp_path / "c.shp")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["c.csv", "c.geojson"]


def test_interval_levels():
    mesh = square_mesh(2)
    field = Field(mesh, np.linspace(-0.35, 1.02, 9))
    # multiples of 0.1 in [-0.35, 1.02]: -0.3, -0.2, ..., 1.0, written without round-off
    assert contour_levels(field, 0.1).tolist() == [round(0.1 * k, 1) for k in range(-3, 11)]
    c = contours(field, interval=0.5)
    assert np.unique(c.levels).tolist() == [0.0, 0.5, 1.0]
    for bad in (0.0, -1.0, np.nan, "x"):
        with pytest.raises(InterpError, match="positive"):
            contour_levels(field, bad)


def test_bad_input():
    mesh = square_mesh(2)
    field = Field(mesh, mesh.points[:, 0])
    with pytest.raises(InterpError, match="not both or neither"):
        contours(field)
    with pytest.raises(InterpError, match="not both or neither"):
        contours(field, [0.5], interval=0.5)
    with pytest.raises(InterpError, match="finite"):
        contours(field, [np.nan])
    with pytest.raises(InterpError, match="2D triangle mesh"):
        contours(Field(cube_mesh(1), np.zeros(8)), [0.5])
    with pytest.raises(InterpError, match="scalar"):
        contours(Field(mesh, np.zeros((9, 2))), [0.5])
    for f in (field, Field(mesh.elevate(), np.zeros(25))):
        with pytest.raises(InterpError, match="tolerance must be a positive"):
            contours(f, [0.5], tolerance=0.0)
    with pytest.raises(InterpError, match="Polygon is planar|region is"):
        contours(field, [0.5], region=Box([0, 0, 0], [1, 1, 1]))


def test_nan_cells_are_left_out():
    mesh = square_mesh(4)
    x = mesh.points[:, 0]
    vals = np.where(mesh.points[:, 1] > 0.6, np.nan, x)
    (v,) = contours(Field(mesh, vals), [0.5]).lines
    np.testing.assert_allclose(v[:, 0], 0.5)
    assert v[:, 1].max() == 0.5


@pytest.fixture
def survey(tmp_path):
    rng = np.random.default_rng(3)
    xy = rng.random((300, 2)) * 20
    z = 0.3 * xy[:, 0] + np.sin(xy[:, 1] / 3)
    rows = "\n".join(",".join(map(repr, r)) for r in np.column_stack([xy, z]).tolist())
    (tmp_path / "s.csv").write_text("x,y,z\n" + rows + "\n")
    (tmp_path / "poly.csv").write_text("x,y\n2,2\n18,3\n15,17\n4,15\n")
    xyz = np.column_stack([xy, rng.random(300), z])
    rows = "\n".join(",".join(map(repr, r)) for r in xyz.tolist())
    (tmp_path / "s3.csv").write_text("x,y,h,z\n" + rows + "\n")
    return tmp_path


def test_cli_round_trip(survey, capsys):
    out = survey / "c.geojson"
    assert main(["contour", str(survey / "s.csv"), "--interval", "0.5", "-o", str(out)]) == 0
    assert capsys.readouterr().out.startswith(f"wrote {out}: ")
    field = Field(
        triangulate(np.loadtxt(survey / "s.csv", delimiter=",", skiprows=1)[:, :2]),
        np.loadtxt(survey / "s.csv", delimiter=",", skiprows=1)[:, 2],
    )
    ref = contours(field, interval=0.5)
    feats = json.loads(out.read_text())["features"]
    assert [f["properties"]["level"] for f in feats] == ref.levels.tolist()
    csv = survey / "c.csv"
    args = [
        "contour",
        str(survey / "s.csv"),
        "--levels",
        "1,2.5",
        "--region",
        str(survey / "poly.csv"),
        "-o",
        str(csv),
        "--json",
    ]
    assert main(args) == 0
    summary = json.loads(capsys.readouterr().out)
    assert summary["levels"] == [1.0, 2.5] and summary["output"] == str(csv)
    table = np.loadtxt(csv, delimiter=",", skiprows=1)
    assert len(table) == summary["vertices"]
    # every vertex inside the region (shapely, with a small tolerance for the boundary)
    assert (
        shapely.Polygon([[2, 2], [18, 3], [15, 17], [4, 15]])
        .buffer(1e-9)
        .contains(shapely.points(table[:, :2]))
        .all()
    )


@pytest.mark.parametrize(
    "args, message",
    [
        (["s.csv", "-o", "c.geojson"], "--interval STEP or --levels"),
        (["s.csv", "--interval", "0", "-o", "c.geojson"], "positive"),
        (["s.csv", "--interval", "-1", "-o", "c.geojson"], "positive"),
        (["s3.csv", "--coords", "x,y,h", "--interval", "1", "-o", "c.geojson"], "2D triangle mesh"),
        (["s.csv", "--interval", "1", "-o", "c.txt"], "unknown suffix"),
    ],
)
def test_cli_bad_input_is_one_line(survey, capsys, args, message):
    argv = [
        "contour",
        *(str(survey / a) if a.endswith(("csv", "geojson", "txt")) else a for a in args),
    ]
    assert main(argv) == 1
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("interp: error: ") and message in err[0]


def test_cli_help_has_an_example(capsys):
    with pytest.raises(SystemExit):
        main(["contour", "--help"])
    assert "interp contour" in capsys.readouterr().out.split("example:")[1]
