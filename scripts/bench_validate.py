"""Benchmark: leave-one-out cross-validation against brute-force refits.

Usage::

    python scripts/bench_validate.py            # 100,000 points
    python scripts/bench_validate.py 10000      # another size

The brute-force reference refits without each point: for P1 a scipy
Delaunay of the others and a LinearNDInterpolator on it, for P2 one
``interp.fit``.  It runs on a random sample of the points, is compared with
the residuals there, and its time is extrapolated to the whole set.  For P1
only the Delaunay time counts (a lower bound for any refit: scipy's first
point location on a new triangulation adds seconds more at this size).
"""

from __future__ import annotations

import sys

import numpy as np
from scipy.interpolate import LinearNDInterpolator
from scipy.spatial import Delaunay
from timing import best_with_result

import interp


def bench_crossvalidate(n: int = 100_000, check: int = 6, check_p2: int = 4) -> dict:
    """Time crossvalidate on n random 2D points (and n // 5 in 3D) and check it.

    Returns a dict of the figures printed: seconds per run, the brute-force
    time per point and its extrapolation to n points, and the largest
    difference from brute force on the sampled points (NaN positions must
    agree).
    """
    rng = np.random.default_rng(42)
    figures = {}
    for d, size in ((2, n), (3, n // 5)):
        pts = rng.random((size, d))
        vals = np.sin(4 * pts[:, 0]) * np.cos(3 * pts[:, -1]) + 0.01 * rng.normal(size=size)
        for order in (1, 2):
            interp.crossvalidate(pts[:200], vals[:200], order=order)  # compile once
        t1, res1 = best_with_result(lambda pts=pts, vals=vals: interp.crossvalidate(pts, vals), 1)
        t2, res2 = best_with_result(
            lambda pts=pts, vals=vals: interp.crossvalidate(pts, vals, order=2), 1
        )
        # the leftmost point is a vertex of the hull: its residual must be NaN in both
        sample = np.append(np.argmin(pts[:, 0]), rng.choice(size, check, replace=False))
        ref1, tb1 = _brute_linear(pts, vals, sample)
        sample2 = sample[:check_p2]
        tb2, ref2 = best_with_result(
            lambda pts=pts, vals=vals, s=sample2: _brute_fit(pts, vals, s), 1
        )
        case = {
            "points": size,
            "p1_seconds": t1,
            "p2_seconds": t2,
            "brute_p1_seconds_per_point": tb1 / len(sample),
            "brute_p2_seconds_per_point": tb2 / len(sample2),
            "p1_max_difference": _difference(res1[sample], ref1),
            "p2_max_difference": _difference(res2[sample2], ref2),
        }
        figures[f"{d}d"] = case
        print(f"{d}D: {size:,} points, leave-one-out residuals")
        for order, t, tb in ((1, t1, tb1 / len(sample)), (2, t2, tb2 / len(sample2))):
            print(
                f"  P{order}: interp {t:8.2f} s   refit {tb:7.3f} s per point, "
                f"{tb * size / 3600:8.1f} h for all   ratio {tb * size / t:10.0f}"
            )
        print(
            f"  agreement with brute force: P1 on {len(sample)} points, max |diff| "
            f"{case['p1_max_difference']:.1e}; P2 on {len(sample2)} points, max |diff| "
            f"{case['p2_max_difference']:.1e} (NaN positions equal)"
        )
    return figures


def _brute_linear(
    pts: np.ndarray, vals: np.ndarray, sample: np.ndarray
) -> tuple[np.ndarray, float]:
    """Residuals at ``sample`` from scipy's linear interpolation of all other points.

    Also returns the seconds spent in the Delaunay triangulations alone.
    """
    out = np.empty(len(sample))
    seconds = 0.0
    for j, i in enumerate(sample):
        others = np.arange(len(pts)) != i
        t, tri = best_with_result(lambda others=others: Delaunay(pts[others]), 1)
        seconds += t
        out[j] = vals[i] - LinearNDInterpolator(tri, vals[others])(pts[i : i + 1])[0]
    return out, seconds


def _brute_fit(pts: np.ndarray, vals: np.ndarray, sample: np.ndarray) -> np.ndarray:
    """Residuals at ``sample`` from interp.fit(order=2) of all other points."""
    out = np.empty(len(sample))
    for j, i in enumerate(sample):
        others = np.arange(len(pts)) != i
        out[j] = vals[i] - interp.fit(pts[others], vals[others], order=2)(pts[i : i + 1])[0]
    return out


def _difference(got: np.ndarray, expected: np.ndarray) -> float:
    """Largest |got - expected| where both are finite; raises if the NaN positions differ."""
    if not np.array_equal(np.isnan(got), np.isnan(expected)):
        raise AssertionError("crossvalidate and brute force disagree on which points are outside")
    ok = np.isfinite(got)
    return float(np.abs(got[ok] - expected[ok]).max()) if ok.any() else 0.0


if __name__ == "__main__":
    bench_crossvalidate(int(sys.argv[1]) if len(sys.argv) > 1 else 100_000)
