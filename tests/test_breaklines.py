"""Breaklines: reading, values along lines, and surfaces that follow them.

References: the frustum of a pyramid, V = h / 3 (A1 + A2 + sqrt(A1 A2)), which
the prismoidal formula V = h / 6 (A1 + 4 Am + A2) of earthwork computation
gives exactly for a prismoid (both standard handbook formulas, quoted from
memory); exact rational arithmetic (``fractions``) for orientations; shapely
for hull areas.
"""

import json
from fractions import Fraction

import numpy as np
import pytest
import shapely
from hypothesis import given, settings
from hypothesis import strategies as st

import interp
from interp._breaklines import as_lines, filled_values, read_lines
from interp.errors import InterpError


def test_values_along_the_line_by_chainage():
    # hand-worked: a 3-4-5 segment then a 6-8-10 one; values 1 at 0 and 4 at chainage 15
    line = np.array([[0.0, 0, 1], [3, 4, np.nan], [9, 12, 4]])
    assert filled_values(line).tolist() == [1.0, 2.0, 4.0]
    # held constant beyond the last value; none given: all NaN
    assert filled_values(np.array([[0.0, 0, 5], [1, 0, np.nan]])).tolist() == [5.0, 5.0]
    assert np.isnan(filled_values(np.array([[0.0, 0, np.nan], [1, 0, np.nan]]))).all()


def test_read_lines(tmp_path):
    path = tmp_path / "lines.csv"
    path.write_text("x,y,value,line\n0,0,1.5,7\n4,0,,7\n4,3,2,7\n0,2,,3\n4,2,2.0,3\n")
    lines = read_lines(path)
    assert [ln.shape for ln in lines] == [(3, 3), (2, 3)]
    np.testing.assert_array_equal(lines[0][:, :2], [[0, 0], [4, 0], [4, 3]])
    assert np.isnan(lines[0][1, 2]) and lines[1][1, 2] == 2.0
    (tmp_path / "two.csv").write_text("x,y,line\n0,0,1\n1,0,1\n")
    assert np.isnan(read_lines(tmp_path / "two.csv")[0][:, 2]).all()


def test_read_lines_errors(tmp_path):
    (tmp_path / "a.csv").write_text("x,y,value\n0,0,1\n1,0,2\n")
    with pytest.raises(InterpError, match="no column named 'line'"):
        read_lines(tmp_path / "a.csv")
    (tmp_path / "b.csv").write_text("x,y,line\n0,0,1\n1,0,2\n2,0,1\n")
    with pytest.raises(InterpError, match=r"line 4: the rows of polyline 1 are not together"):
        read_lines(tmp_path / "b.csv")
    (tmp_path / "c.csv").write_text("x,y,line\n0,0,1\n0,0,1\n")
    with pytest.raises(
        InterpError,
        match=r"line 1, segment 1: vertices 1 and 2 are the same point \(counting from 1\)",
    ):
        read_lines(tmp_path / "c.csv")
    with pytest.raises(InterpError, match="at least 2 vertices"):
        as_lines([[[0.0, 0.0]]])


def frustum(x, y):
    """Invented stockpile: a square frustum, toe 20 x 20 at z = 0, crest 8 x 8 at z = 3,
    on flat ground; plane faces meeting along the toe, the crest and four hips."""
    m = np.maximum(np.abs(x), np.abs(y))
    return np.clip(3.0 * (10.0 - m) / 6.0, 0.0, 3.0)


def frustum_lines():
    toe = np.array([[-10.0, -10], [10, -10], [10, 10], [-10, 10], [-10, -10]])
    crest = toe * 0.4
    lines = [np.column_stack([toe, np.zeros(5)]), np.column_stack([crest, np.full(5, 3.0)])]
    for c in range(4):  # the hips, crest corner to toe corner
        lines.append(np.array([[*crest[c], 3.0], [*toe[c], 0.0]]))
    return lines


def test_stockpile_volume_exact_with_breaklines():
    # V = h / 3 (A1 + A2 + sqrt(A1 A2)) = 3 / 3 (400 + 64 + 160) = 624; prismoidal:
    # h / 6 (A1 + 4 Am + A2) = 3 / 6 (400 + 4 * 196 + 64) = 624
    rng = np.random.default_rng(4)
    xy = rng.uniform(-15, 15, (3000, 2))
    xy = np.vstack([xy, [[-15.0, -15], [15, -15], [15, 15], [-15, 15]]])
    z = frustum(xy[:, 0], xy[:, 1])
    with_lines = interp.fit(xy, z, breaklines=frustum_lines())
    assert interp.integrate(with_lines) == pytest.approx(624.0, rel=1e-9)
    # the breaklines' own values agree with the faces: no vertex gets a wrong height
    nodes = with_lines.mesh.points
    np.testing.assert_allclose(
        with_lines.values, frustum(nodes[:, 0], nodes[:, 1]), rtol=0, atol=1e-12
    )
    # without them the surface cuts across the edges; measured 2026-12-03 on this data:
    # 624.291, 4.7e-4 too much (the chords across the toe add more than those under
    # the crest remove)
    plain = interp.integrate(interp.fit(xy, z))
    error = abs(plain - 624.0) / 624.0
    assert error > 1e-4, f"volume without breaklines off by {error:.2e} (relative)"


def test_breaklines_are_mesh_edges_and_crossings_are_nodes():
    rng = np.random.default_rng(8)
    pts = np.array([512000.0, 6123000.0]) + rng.random((300, 2)) * 40
    lo = pts.min(axis=0) + 5
    lines = [
        np.array([lo, lo + [30, 30]]),
        np.array([lo + [0, 30], lo + [15, 15.5], lo + [30, 0]]),
    ]
    mesh = interp.triangulate(pts, breaklines=lines)
    # nodes: the 300 points, 5 line vertices, 1 crossing (the polyline crosses the diagonal)
    assert mesh.n_nodes == 306
    edges = {frozenset(e) for e in mesh.edges()[0].tolist()}
    p = mesh.points
    for line in lines:
        for a, b in zip(line[:-1], line[1:], strict=True):
            # the nodes on the segment, in order, are joined by mesh edges
            d = b - a
            on = [
                i
                for i in range(len(p))
                if abs(d[0] * (p[i, 1] - a[1]) - d[1] * (p[i, 0] - a[0])) < 1e-9 * (d @ d)
                and -1e-12 <= (p[i] - a) @ d <= (1 + 1e-12) * (d @ d)
            ]
            on.sort(key=lambda i: (p[i] - a) @ d)
            assert len(on) >= 2
            assert all(frozenset(e) in edges for e in zip(on[:-1], on[1:], strict=True))
    hull = shapely.MultiPoint(pts).convex_hull.area
    assert mesh.measure().sum() == pytest.approx(hull, rel=1e-12)


def test_breakline_errors_name_the_line():
    pts = np.array([[0.0, 0], [10, 0], [10, 10], [0, 10], [5, 5]])
    with pytest.raises(InterpError, match=r"breakline 2, segment 2: vertex \[12.0, 5.0\] lies"):
        interp.triangulate(pts, breaklines=[[[1, 1], [2, 2]], [[1, 5], [8, 5], [12, 5]]])
    with pytest.raises(
        InterpError,
        match=r"breakline 1, segment 1 \(\[1.0, 1.0\] to \[4.0, 4.0\]\) and breakline 2, "
        r"segment 1 \(\[3.0, 3.0\] to \[6.0, 6.0\]\) overlap",
    ):
        interp.triangulate(pts, breaklines=[[[1, 1], [4, 4]], [[3, 3], [6, 6]]])
    with pytest.raises(InterpError, match="breaklines apply to 2D"):
        interp.triangulate(np.random.default_rng(0).random((10, 3)), breaklines=[[[0, 0]] * 2])


def exact_area(points, cells) -> Fraction:
    total = Fraction(0)
    for a, b, c in cells.tolist():
        (ax, ay), (bx, by), (cx, cy) = (map(Fraction, points[v]) for v in (a, b, c))
        o = (ax - cx) * (by - cy) - (ay - cy) * (bx - cx)
        assert o > 0, "cell not counter-clockwise"
        total += o / 2
    return total


grid = st.integers(0, 30).map(lambda v: v * 0.5)


@settings(max_examples=30, deadline=None)
@given(
    st.lists(st.tuples(grid, grid), min_size=6, max_size=40, unique=True),
    st.lists(
        st.lists(st.tuples(st.floats(0, 1), st.floats(0, 1)), min_size=2, max_size=4), max_size=3
    ),
)
def test_random_breaklines_valid_mesh_and_every_point_located(raw, lines):
    pts = np.array(raw)
    if np.linalg.matrix_rank(pts - pts[0], tol=1e-9) < 2:
        return
    hull = shapely.MultiPoint(pts).convex_hull
    lo, hi = pts.min(axis=0), pts.max(axis=0)
    # line vertices placed inside the hull: shrink toward its centroid
    c = np.array(hull.centroid.coords[0])
    bl = [c + 0.8 * (lo + np.array(ln) * (hi - lo) - c) for ln in lines]
    bl = [ln for ln in bl if (np.diff(ln, axis=0) != 0).any(axis=1).all()]
    try:
        mesh = interp.triangulate(pts, breaklines=bl or None)
    except InterpError as exc:
        assert "overlap" in str(exc) or "outside the convex hull" in str(exc)
        return
    assert float(exact_area(mesh.points, mesh.cells)) == pytest.approx(hull.area, rel=1e-12)
    assert (mesh.locate(pts).cells >= 0).all()
    assert set(range(len(pts))) <= set(np.unique(mesh.cells).tolist())


def test_boundary_polygon_with_hole_fills_it_exactly():
    # reference: shapely's area of (polygon with hole) intersected with the points' hull;
    # the boundary's edges are mesh edges, so the mesh covers it with no gap
    rng = np.random.default_rng(12)
    pts = rng.random((800, 2)) * 100
    outer = np.array([[-5.0, 30], [50, -10], [105, 45], [60, 80], [45, 55], [20, 90]])
    hole = np.array([[40.0, 30], [60, 35], [55, 52], [38, 48]])
    mesh = interp.triangulate(pts, boundary=interp.Polygon(outer, holes=[hole]))
    expected = shapely.Polygon(outer, [hole]).intersection(shapely.MultiPoint(pts).convex_hull)
    assert mesh.measure().sum() == pytest.approx(expected.area, rel=1e-9)
    union = shapely.union_all(shapely.polygons(mesh.points[mesh.cells]))
    assert union.symmetric_difference(expected).area <= 1e-9 * expected.area
    # a ring alone is the exterior; the hole's corners are nodes
    plain = interp.triangulate(pts, boundary=outer)
    assert plain.measure().sum() == pytest.approx(
        shapely.Polygon(outer).intersection(shapely.MultiPoint(pts).convex_hull).area, rel=1e-9
    )
    for v in hole:
        assert (np.abs(mesh.points - v).max(axis=1) == 0).any()


def test_fit_with_boundary_and_breaklines_reproduces_a_plane():
    # a plane is reproduced exactly by P1 on any mesh: added nodes must carry plane values
    rng = np.random.default_rng(13)
    pts = rng.random((400, 2)) * 50
    z = 2.0 + 0.3 * pts[:, 0] - 0.1 * pts[:, 1]
    ring = np.array([[5.0, 5], [45, 8], [40, 45], [8, 40]])
    line = np.array([[10.0, 10], [30, 35]])
    f = interp.fit(pts, z, boundary=ring, breaklines=[line])
    nodes = f.mesh.points
    np.testing.assert_allclose(f.values, 2.0 + 0.3 * nodes[:, 0] - 0.1 * nodes[:, 1], atol=1e-9)
    assert f.mesh.n_nodes > 400  # the ring's corners, the line's ends, where they cross


def test_cli_volume_with_breaklines_file(tmp_path, capsys):
    # the frustum of test_stockpile_volume_exact_with_breaklines, through files and the
    # command line: 624 exactly with the lines, off without them
    from interp.cli import main

    rng = np.random.default_rng(4)
    xy = np.vstack([rng.uniform(-15, 15, (2000, 2)), [[-15, -15], [15, -15], [15, 15], [-15, 15]]])
    np.savetxt(
        tmp_path / "s.csv",
        np.column_stack([xy, frustum(xy[:, 0], xy[:, 1])]),
        delimiter=",",
        header="x,y,z",
        comments="",
    )
    rows = [[*v, i] for i, line in enumerate(frustum_lines()) for v in line]
    np.savetxt(tmp_path / "l.csv", rows, delimiter=",", header="x,y,value,line", comments="")
    out = {}
    for extra in ([], ["--breaklines", str(tmp_path / "l.csv")]):
        main(["volume", str(tmp_path / "s.csv"), "--level", "0", "--json", *extra])
        out[bool(extra)] = json.loads(capsys.readouterr().out)["net"]
    assert out[True] == pytest.approx(624.0, rel=1e-9)
    assert abs(out[False] - 624.0) > 1e-3


def test_cli_info_reports_breaklines(tmp_path, capsys):
    # two lines: a 3-4-5 segment and a 1 m one, total plan length 6 (hand-worked)
    from interp.cli import main

    pts = np.array([[0.0, 0], [10, 0], [10, 10], [0, 10], [5, 5]])
    np.savetxt(
        tmp_path / "s.csv", np.c_[pts, pts[:, 0]], delimiter=",", header="x,y,z", comments=""
    )
    (tmp_path / "l.csv").write_text("x,y,line\n1,1,0\n4,5,0\n6,2,1\n7,2,1\n")
    main(["info", str(tmp_path / "s.csv"), "--breaklines", str(tmp_path / "l.csv"), "--json"])
    assert json.loads(capsys.readouterr().out)["breaklines"] == {"count": 2, "length": 6.0}
