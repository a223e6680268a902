"""Leave-one-out with breaklines and a boundary against brute-force refits.

The reference is the definition: refit the other points with ``interp.fit``
and the same breaklines and boundary (the vertex at the point taken out of the
line or ring that has one there), and evaluate at the point.  That fit runs on
our own constrained Delaunay triangulator, which is checked against exact
rational arithmetic (Python's ``fractions``) and shapely in
tests/test_delaunay2d.py and tests/test_breaklines.py.
"""

import json
import shutil
import subprocess
import warnings

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from interp import InterpError, Polygon, crossvalidate, fit

OFFSET = np.array([5e5, 6e6])  # survey eastings and northings (invented)


def without(lines, p):
    """The lines with any vertex at p taken out (a line left with one vertex is dropped)."""
    out = []
    for ln in lines:
        keep = ~(np.asarray(ln)[:, :2] == p).all(axis=1)
        if keep.sum() >= 2:
            out.append(np.asarray(ln)[keep])
    return out


def brute(pts, vals, order, lines=None, rings=None, max_edge=None):
    """Residuals by definition: one interp.fit of the others per point."""
    out = np.full(len(pts), np.nan)
    for i in range(len(pts)):
        others = np.arange(len(pts)) != i
        bl = None if lines is None else without(lines, pts[i])
        bd = None
        if rings is not None:
            left = without(rings, pts[i])
            bd = Polygon(left[0], left[1:])
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            try:
                f = fit(pts[others], vals[others], order=order, breaklines=bl, boundary=bd)
            except InterpError:  # e.g. a line vertex outside the others' hull
                continue
        out[i] = vals[i] - f(pts[i : i + 1])[0]
    return out


def yard(rng, offset):
    """Random points on [0, 4]^2 with its corners, three crossing breaklines (a bent
    one, a straight one with a middle vertex, one with values) and a square
    boundary with a hole; some points put on the lines."""
    pts = np.vstack([[[0, 0], [4, 0], [4, 4], [0, 4]], rng.random((110, 2)) * 4])
    bent = np.array([[0.3, 0.5], [3.5, 3.1], [3.7, 0.4]])
    straight = np.array([[0.5, 3.5], [1.5, 2.5], [3.0, 1.0]])  # on y = 4 - x
    valued = np.array([[0.4, 2.0, 1.0], [3.6, 2.0, 2.0]])
    on_lines = np.array(
        [
            [3.5, 3.1],  # the bend of the first line
            [0.5, 3.5],  # the end of the second
            [1.0, 3.0],  # inside a segment of the second
            [1.75, 2.25],  # inside its other segment, before a crossing
            [1.2, 2.0],  # inside the valued line
            [3.0, 2.0],  # inside the valued line
        ]
    )
    pts = np.vstack([pts, on_lines]) + offset
    lines = [bent + offset, straight + offset, valued + np.r_[offset, 0]]
    square = np.array([[0.2, 0.2], [3.8, 0.3], [3.9, 3.8], [0.1, 3.7]]) + offset
    hole = np.array([[1.7, 1.2], [2.6, 1.3], [2.5, 1.9], [1.6, 1.8]]) + offset
    x, y = (pts - offset).T
    vals = np.cos(x) + y**2 + np.abs(y - 2.0)
    return pts, vals, lines, [square, hole], len(pts) - len(on_lines)


def assert_same(got, expected, scale):
    np.testing.assert_array_equal(np.isnan(got), np.isnan(expected))
    ok = np.isfinite(got)
    np.testing.assert_allclose(got[ok], expected[ok], rtol=0, atol=1e-9 * scale)


@pytest.mark.parametrize("order", [1, 2])
@pytest.mark.parametrize("offset", [np.zeros(2), OFFSET], ids=["local", "survey"])
@pytest.mark.parametrize("with_boundary", [False, True], ids=["lines", "lines+boundary"])
def test_equals_brute_force_refits(rng, order, offset, with_boundary):
    pts, vals, lines, rings, first = yard(rng, offset)
    boundary = Polygon(rings[0], rings[1:]) if with_boundary else None
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        got = crossvalidate(pts, vals, order=order, breaklines=lines, boundary=boundary)
    expected = brute(pts, vals, order, lines, rings if with_boundary else None)
    # the bend and the end change the lines when left out: NaN, and said so
    changed = [first, first + 1]
    assert np.isnan(got[changed]).all() and np.isfinite(expected[changed]).all()
    assert [str(w.message).split()[0] for w in caught if "bend" in str(w.message)] == ["2"]
    rest = np.setdiff1d(np.arange(len(pts)), changed)
    assert np.isfinite(got[rest]).sum() > 0.6 * len(rest)
    # the points inside straight pieces of line are predicted
    assert np.isfinite(got[first + 2 : first + 6]).all() or with_boundary
    assert_same(got[rest], expected[rest], np.abs(vals).max())


def test_boundary_with_a_hole_equals_brute_force_refits(rng):
    # points in the hole or outside the polygon get NaN, as the refit does there
    pts = rng.random((150, 2)) * 4
    vals = np.cos(pts[:, 0]) + pts[:, 1]
    square = [[0.2, 0.2], [3.8, 0.2], [3.8, 3.8], [0.2, 3.8]]
    hole = [[1.5, 1.5], [2.5, 1.5], [2.5, 2.5], [1.5, 2.5]]
    poly = Polygon(square, [hole])
    for order in (1, 2):
        got = crossvalidate(pts, vals, order=order, boundary=poly)
        expected = brute(pts, vals, order, rings=[np.array(square), np.array(hole)])
        inside = poly.contains(pts)  # interp's even-odd test, checked against shapely elsewhere
        assert np.isnan(got[~inside]).all() and np.isfinite(got[inside]).sum() > 100
        assert_same(got, expected, 4.0)


def test_max_edge_with_breaklines_equals_brute_force(rng):
    pts = np.vstack([[[0, 0], [1, 0], [1, 1], [0, 1]], rng.random((100, 2))])
    vals = np.sin(3 * pts[:, 0]) + pts[:, 1]
    lines = [np.array([[0.1, 0.2], [0.9, 0.7]]), np.array([[0.2, 0.9], [0.8, 0.1]])]
    for order in (1, 2):
        got = crossvalidate(pts, vals, order=order, breaklines=lines, max_edge=0.2)
        out = np.full(len(pts), np.nan)
        for i in range(len(pts)):
            o = np.arange(len(pts)) != i
            f = fit(pts[o], vals[o], order=order, breaklines=lines, max_edge=0.2)
            out[i] = vals[i] - f(pts[i : i + 1])[0]
        assert np.isnan(out).sum() > 4  # the hull and the mask
        assert_same(got, out, 2.0)


def test_a_crease_on_a_breakline_is_predicted_exactly(rng):
    # z = |y - 0.5| + x is linear on each side of y = 0.5 (a closed form): with the
    # crease as a breakline every P1 prediction is exact; without it, not
    pts = np.vstack([[[0, 0], [1, 0], [1, 1], [0, 1]], rng.random((200, 2))])
    z = np.abs(pts[:, 1] - 0.5) + pts[:, 0]
    line = [np.array([[0.0, 0.5, 0.0], [1.0, 0.5, 1.0]])]
    with_line = crossvalidate(pts, z, breaklines=line)
    assert np.isfinite(with_line).sum() > 180
    np.testing.assert_allclose(with_line[np.isfinite(with_line)], 0.0, atol=1e-12)
    assert np.nanmax(np.abs(crossvalidate(pts, z))) > 0.01


@settings(max_examples=12, deadline=None)
@given(
    seed=st.integers(0, 2**32 - 1),
    order=st.sampled_from([1, 2]),
    n_lines=st.integers(1, 3),
    with_boundary=st.booleans(),
    offset=st.sampled_from([0.0, 1.0]),
)
def test_property_equals_brute_force(seed, order, n_lines, with_boundary, offset):
    rng = np.random.default_rng(seed)
    shift = offset * OFFSET
    pts = np.vstack([[[0, 0], [1, 0], [1, 1], [0, 1]], rng.random((36, 2))]) + shift
    vals = rng.normal(size=len(pts))
    lines = [shift + 0.1 + 0.8 * rng.random((int(rng.integers(2, 5)), 2)) for _ in range(n_lines)]
    rings = None
    if with_boundary:  # a quadrilateral with a square hole
        outer = [[0.05, 0.05], [0.95, 0.1], [0.9, 0.95], [0.1, 0.9]]
        rings = [
            shift + np.array(outer),
            shift + 0.4 + 0.2 * np.array([[0, 0], [1, 0], [1, 1], [0, 1]]),
        ]
    boundary = None if rings is None else Polygon(rings[0], rings[1:])
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            got = crossvalidate(pts, vals, order=order, breaklines=lines, boundary=boundary)
    except InterpError:  # two random lines overlapping: refused, as by fit
        with pytest.raises(InterpError):
            fit(pts, vals, breaklines=lines, boundary=boundary)
        return
    assert_same(got, brute(pts, vals, order, lines, rings), np.abs(vals).max())


def test_constraints_are_two_dimensional():
    with pytest.raises(InterpError, match="2D"):
        crossvalidate(np.random.default_rng(0).random((10, 3)), np.ones(10), breaklines=[])


EXE = shutil.which("interp")


@pytest.mark.skipif(EXE is None, reason="the interp command is not installed")
def test_command_line_takes_breaklines_and_boundary(tmp_path, rng):
    # the crease of test_a_crease_on_a_breakline_is_predicted_exactly, through files
    pts = np.vstack([[[0, 0], [1, 0], [1, 1], [0, 1]], rng.random((150, 2))])
    z = np.abs(pts[:, 1] - 0.5) + pts[:, 0]
    rows = "\n".join(f"{x!r},{y!r},{v!r}" for x, y, v in np.column_stack([pts, z]).tolist())
    (tmp_path / "s.csv").write_text("x,y,z\n" + rows + "\n")
    (tmp_path / "l.csv").write_text("x,y,value,line\n0,0.5,0,1\n1,0.5,1,1\n")
    (tmp_path / "b.csv").write_text("x,y\n0.05,0.05\n0.95,0.05\n0.95,0.95\n0.05,0.95\n")
    args = [EXE, "crossval", tmp_path / "s.csv", "--breaklines", tmp_path / "l.csv"]
    r = subprocess.run([*map(str, args), "--json"], capture_output=True, text=True)
    assert r.returncode == 0, r.stderr
    cv = json.loads(r.stdout)["z"]
    assert cv["count"] > 130 and cv["max_abs"] < 1e-12
    plain = subprocess.run(
        [EXE, "crossval", str(tmp_path / "s.csv"), "--json"], capture_output=True, text=True
    )
    assert json.loads(plain.stdout)["z"]["max_abs"] > 0.01
    out = tmp_path / "r.csv"
    r = subprocess.run(
        [*map(str, args), "--boundary", str(tmp_path / "b.csv"), "-o", str(out)],
        capture_output=True,
        text=True,
    )
    assert r.returncode == 0, r.stderr
    res = np.genfromtxt(out, delimiter=",", names=True)["residual"]
    inside = (np.abs(pts - 0.5) < 0.45).all(axis=1)
    assert np.isnan(res[~inside]).all()
    np.testing.assert_allclose(res[np.isfinite(res)], 0.0, atol=1e-12)
    # the same residuals as the API with the same lines and boundary
    ring = [[0.05, 0.05], [0.95, 0.05], [0.95, 0.95], [0.05, 0.95]]
    api = crossvalidate(pts, z, breaklines=[[[0, 0.5, 0], [1, 0.5, 1]]], boundary=ring)
    np.testing.assert_array_equal(np.isnan(res), np.isnan(api))
