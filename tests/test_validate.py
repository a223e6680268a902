"""Leave-one-out cross-validation against brute-force refits, and the residual summary."""

import numpy as np
import pytest
from scipy.interpolate import LinearNDInterpolator
from scipy.spatial import ConvexHull, Delaunay

from interp import InterpError, crossvalidate, fit, residual_summary


def brute_scipy(pts, vals, max_edge=None):
    """Leave-one-out with scipy (general-purpose reference library), one Delaunay per point.

    A prediction falling in a Delaunay cell with an edge longer than max_edge is NaN.
    """
    n = len(pts)
    out = np.full(n, np.nan)
    for i in range(n):
        others = np.arange(n) != i
        tri = Delaunay(pts[others])
        cell = tri.find_simplex(pts[i : i + 1])[0]
        if cell < 0:
            continue
        corners = tri.points[tri.simplices[cell]]
        longest = max(np.linalg.norm(a - b) for a in corners for b in corners)
        if max_edge is not None and longest > max_edge:
            continue
        out[i] = vals[i] - LinearNDInterpolator(tri, vals[others])(pts[i : i + 1])[0]
    return out


def brute_refit(pts, vals, order, max_edge=None):
    """Leave-one-out by definition: refit the others with interp.fit, evaluate at the point."""
    n = len(pts)
    out = np.full(n, np.nan)
    for i in range(n):
        others = np.arange(n) != i
        out[i] = (
            vals[i]
            - fit(pts[others], vals[others], order=order, max_edge=max_edge)(pts[i : i + 1])[0]
        )
    return out


def assert_same(got, expected, atol=1e-12):
    np.testing.assert_array_equal(np.isnan(got), np.isnan(expected))
    np.testing.assert_allclose(got[np.isfinite(got)], expected[np.isfinite(got)], atol=atol)


@pytest.mark.parametrize(("d", "n"), [(2, 200), (3, 60)])
def test_linear_equals_brute_force_scipy(rng, d, n):
    # reference: scipy.interpolate.LinearNDInterpolator refitted without each point
    pts = rng.random((n, d))
    vals = np.sin(3 * pts[:, 0]) + pts[:, -1] ** 2
    got = crossvalidate(pts, vals)
    expected = brute_scipy(pts, vals)
    assert np.isfinite(expected).sum() > 0.6 * n
    assert_same(got, expected)


@pytest.mark.parametrize(("d", "n", "max_edge"), [(2, 120, 0.15), (3, 50, 0.5)])
def test_max_edge_equals_brute_force_scipy(rng, d, n, max_edge):
    # reference: scipy Delaunay of the others, the cell holding the point masked by max_edge
    pts = rng.random((n, d))
    vals = np.cos(2 * pts[:, 0]) * pts[:, 1]
    got = crossvalidate(pts, vals, max_edge=max_edge)
    expected = brute_scipy(pts, vals, max_edge=max_edge)
    # the mask takes more predictions away than the hull does (scipy.spatial.ConvexHull)
    assert np.isnan(expected).sum() > len(ConvexHull(pts).vertices)
    assert_same(got, expected)


def test_one_dimensional_equals_brute_force_numpy(rng):
    # reference: numpy.interp between the neighbours, NaN beyond the ends (no extrapolation)
    x = rng.random(40)
    vals = np.sin(5 * x)
    got = crossvalidate(x, vals)
    expected = np.full(40, np.nan)
    for i in range(40):
        others = np.arange(40) != i
        xo, vo = x[others], vals[others]
        if xo.min() < x[i] < xo.max():
            order = np.argsort(xo)
            expected[i] = vals[i] - np.interp(x[i], xo[order], vo[order])
    assert_same(got, expected)


@pytest.mark.parametrize(
    ("d", "n", "max_edge"), [(1, 25, None), (2, 90, None), (2, 90, 0.25), (3, 45, None)]
)
def test_quadratic_equals_refitting_without_each_point(rng, d, n, max_edge):
    # reference: the definition, fit(order=2) of the n - 1 others evaluated at the point
    pts = rng.random((n, d))
    vals = np.exp(pts[:, 0]) * np.cos(2 * pts[:, -1])
    got = crossvalidate(pts, vals, order=2, max_edge=max_edge)
    assert_same(got, brute_refit(pts, vals, 2, max_edge), atol=1e-10)


def test_quadratic_equals_refitting_on_clustered_points():
    # reference: the definition, as above; on strongly clustered points some nodes sit near
    # the threshold between the 1-ring and the 2-ring fit, and the refit must decide alike
    pts = np.random.default_rng(101).random((150, 2)) ** 3
    vals = np.sin(3 * pts[:, 0]) + pts[:, 1] ** 2
    got = crossvalidate(pts, vals, order=2)
    assert_same(got, brute_refit(pts, vals, 2), atol=1e-10)


def test_linear_equals_refitting_with_a_mask_in_3d(rng):
    # reference: the definition, fit(order=1, max_edge) of the others evaluated at the point
    pts = rng.random((45, 3))
    vals = pts @ np.array([1.0, -2.0, 0.5]) + np.sin(4 * pts[:, 0])
    got = crossvalidate(pts, vals, max_edge=0.5)
    assert_same(got, brute_refit(pts, vals, 1, max_edge=0.5))


@pytest.mark.parametrize("order", [1, 2])
def test_polynomials_of_the_order_are_predicted_exactly(rng, order):
    # P1 reproduces linear data and the P2 fit quadratic data (defining properties)
    pts = rng.random((250, 2))
    x, y = pts.T
    vals = 1 + 2 * x - y + (order - 1) * (3 * x * x - x * y + 2 * y * y)
    got = crossvalidate(pts, vals, order=order)
    hull = np.isnan(crossvalidate(pts, vals))
    np.testing.assert_array_equal(np.isnan(got), hull)
    np.testing.assert_allclose(got[~hull], 0.0, atol=1e-10)


@pytest.mark.parametrize("order", [1, 2])
def test_regular_grid(order):
    # a lattice (cocircular points): the re-triangulation of a star is not unique, but every
    # choice reproduces polynomials of the fit's order; only the four corners are hull vertices
    g = np.arange(7.0)
    pts = np.array([[a, b] for a in g for b in g])
    x, y = pts.T
    vals = 1 + 0.5 * x - y + (order - 1) * (x * x - 0.3 * x * y + y * y) / 10
    got = crossvalidate(pts, vals, order=order)
    corner = np.isin(x, [0, 6]) & np.isin(y, [0, 6])
    np.testing.assert_array_equal(np.isnan(got), corner)
    np.testing.assert_allclose(got[~corner], 0.0, atol=1e-10)


def test_repeated_points_are_predicted_by_their_other_measurements(rng):
    # reference: the definition; the fit of the other rows holds, at a repeated position,
    # the mean of its other measurements (repeats are averaged, common practice)
    pts = rng.random((30, 2))
    vals = np.sin(3 * pts[:, 0]) + pts[:, 1]
    rep = np.vstack([pts, pts[[5, 5]]])
    rvals = np.append(vals, [vals[5] + 0.3, vals[5] - 0.9])
    with pytest.warns(UserWarning, match="2 duplicate point"):
        got = crossvalidate(rep, rvals)
    group = rvals[[5, 30, 31]]
    for row, value in zip([5, 30, 31], group, strict=True):
        assert got[row] == pytest.approx(value - (group.sum() - value) / 2, abs=1e-14)
    # every row equals refitting without that row
    with pytest.warns(UserWarning, match="duplicate point"):
        expected = brute_refit(rep, rvals, 1)
    assert_same(got, expected)


def test_nan_values_take_no_part(rng):
    # the residuals equal those of the rows without NaN values
    pts = rng.random((60, 2))
    vals = np.cos(3 * pts[:, 1]) + pts[:, 0]
    vals[[2, 40]] = np.nan
    with pytest.warns(UserWarning, match="2 point\\(s\\) with NaN values dropped"):
        got = crossvalidate(pts, vals, order=2)
    assert np.isnan(got[[2, 40]]).all()
    keep = np.isfinite(vals)
    np.testing.assert_array_equal(got[keep], crossvalidate(pts[keep], vals[keep], order=2))


def test_several_components(rng):
    pts = rng.random((50, 2))
    vals = np.column_stack([pts[:, 0] ** 2, np.sin(pts[:, 1])])
    got = crossvalidate(pts, vals, order=2)
    assert got.shape == (50, 2)
    for c in range(2):
        np.testing.assert_allclose(got[:, c], crossvalidate(pts, vals[:, c], order=2), atol=1e-14)


def test_bad_input(rng):
    pts = rng.random((12, 2))
    with pytest.raises(InterpError, match="order must be 1"):
        crossvalidate(pts, np.zeros(12), order=0)
    with pytest.raises(InterpError, match="12 points.*11 rows"):
        crossvalidate(pts, np.zeros(11))
    with pytest.raises(InterpError, match="max_edge"):
        crossvalidate(pts, np.zeros(12), max_edge=-1.0)
    with pytest.raises(InterpError, match="removes every cell"):
        crossvalidate(pts, np.zeros(12), max_edge=1e-6)
    with pytest.raises(InterpError, match=r"all values are missing \(NaN\) at the 12 point"):
        crossvalidate(pts, np.full(12, np.nan))


def test_residual_summary():
    # statistics worked by hand: residuals 1, -3, 2 -> RMS sqrt(14 / 3), mean 0, max 3,
    # standard deviation sqrt((1 + 9 + 4) / 2) = sqrt(7) about the mean 0 (n - 1 = 2),
    # |r| sorted 1, 2, 3: median 2, 90th percentile 2 + 0.8 * (3 - 2) = 2.8 (linear between
    # order statistics: position 0.9 * (3 - 1) = 1.8), 95th 2.9
    pts = np.array([[0.0, 0], [1, 0], [2, 0], [3, 0]])
    s = residual_summary(pts, [1.0, np.nan, -3.0, 2.0])
    assert s["count"] == 3 and s["outside"] == 1
    assert s["rms"] == pytest.approx(np.sqrt(14 / 3))
    assert s["mean"] == pytest.approx(0.0)
    assert s["std"] == pytest.approx(np.sqrt(7.0))
    assert s["min"] == -3.0 and s["max"] == 2.0 and s["max_abs"] == 3.0
    assert s["abs_p50"] == 2.0
    assert s["abs_p90"] == pytest.approx(2.8) and s["abs_p95"] == pytest.approx(2.9)
    assert "worst" not in s
    empty = residual_summary(pts, np.full(4, np.nan))
    assert empty["count"] == 0 and np.isnan(empty["rms"]) and np.isnan(empty["abs_p95"])
    one = residual_summary(pts, [np.nan, 0.5, np.nan, np.nan])
    assert one["rms"] == 0.5 and np.isnan(one["std"])
    with pytest.raises(InterpError, match="one component at a time"):
        residual_summary(pts, np.zeros((4, 2)))


def test_residual_summary_matches_numpy(rng):
    # reference: numpy's mean, std (ddof=1), min, max and percentile of the finite residuals
    r = rng.normal(0.02, 0.1, 500)
    r[rng.random(500) < 0.1] = np.nan
    s = residual_summary(rng.random((500, 2)), r)
    f = r[np.isfinite(r)]
    assert s["count"] == f.size and s["outside"] == 500 - f.size
    assert s["mean"] == pytest.approx(np.mean(f), rel=1e-12)
    assert s["rms"] == pytest.approx(np.sqrt(np.mean(f**2)), rel=1e-12)
    assert s["std"] == pytest.approx(np.std(f, ddof=1), rel=1e-12)
    assert (s["min"], s["max"]) == (f.min(), f.max())
    for q in (50, 90, 95):
        assert s[f"abs_p{q}"] == pytest.approx(np.percentile(np.abs(f), q), rel=1e-12)
    # the RMS, mean and standard deviation are tied by rms^2 = mean^2 + std^2 (n - 1) / n
    n = f.size
    assert s["rms"] ** 2 == pytest.approx(s["mean"] ** 2 + s["std"] ** 2 * (n - 1) / n, rel=1e-12)


def test_residual_summary_worst_is_deprecated():
    pts = np.array([[0.0, 0], [1, 0]])
    with pytest.warns(DeprecationWarning, match="write_residuals"):
        s = residual_summary(pts, [1.0, -2.0], worst=5)
    assert s["max_abs"] == 2.0 and "worst" not in s
