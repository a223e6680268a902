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

The constrained case takes the same 2D points with 40 breaklines of 25
segments each (1,000 segments, crossing one another) and a boundary with a
hole, times P1 and P2 against the unconstrained leave-one-out in the same
run, and checks a few points against ``interp.fit`` refits with the same
lines and boundary.
"""

from __future__ import annotations

import sys
import time

import numpy as np
from scipy.interpolate import LinearNDInterpolator
from scipy.spatial import Delaunay
from timing import best_of_each, best_with_result

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
        ref2, tb2 = _brute_fit(pts, vals, sample2)
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


def bench_constrained(n: int = 100_000, check: int = 3) -> dict:
    """Time crossvalidate with 1,000 breakline segments and a boundary with a hole
    on n random 2D points against the unconstrained one, and check it by refits."""
    rng = np.random.default_rng(42)
    pts = rng.random((n, 2))
    vals = np.sin(4 * pts[:, 0]) * np.cos(3 * pts[:, 1]) + 0.01 * rng.normal(size=n)
    lines = []
    for i in range(40):  # gentle meanders, every other one across the others
        t = np.linspace(0.05, 0.95, 26)
        across = 0.05 + 0.9 * (i + 0.5) / 40 + 0.01 * np.sin(7 * t + i)
        lines.append(np.column_stack([t, across] if i % 2 == 0 else [across, t]))
    boundary = interp.Polygon(
        [[0.02, 0.02], [0.98, 0.03], [0.97, 0.98], [0.03, 0.97]],
        [[[0.4, 0.4], [0.6, 0.41], [0.59, 0.6], [0.41, 0.59]]],
    )
    kw = {"breaklines": lines, "boundary": boundary}
    for order in (1, 2):  # compile once
        interp.crossvalidate(pts[:300], vals[:300], order=order, breaklines=[lines[0][10:14]])
    figures = {"points": n, "segments": sum(len(ln) - 1 for ln in lines)}
    print(f"2D: {n:,} points, {figures['segments']:,} breakline segments and a boundary")
    for order in (1, 2):
        plain, constrained = best_of_each(
            [
                lambda o=order: interp.crossvalidate(pts, vals, order=o),
                lambda o=order: interp.crossvalidate(pts, vals, order=o, **kw),
            ],
            repeat=2,
        )
        res = interp.crossvalidate(pts, vals, order=order, **kw)
        inside = np.flatnonzero(np.isfinite(res))
        sample = rng.choice(inside, check, replace=False)
        ref, tb = _brute_fit(pts, vals, sample, order, kw)
        figures[f"p{order}"] = {
            "plain_seconds": plain,
            "constrained_seconds": constrained,
            "ratio": constrained / plain,
            "refit_seconds_per_point": tb / check,
            "max_difference": _difference(res[sample], ref),
            "predicted": int(inside.size),
        }
        print(
            f"  P{order}: constrained {constrained:6.2f} s   unconstrained {plain:6.2f} s   "
            f"ratio {constrained / plain:5.2f}   refit {tb / check:6.2f} s per point "
            f"({tb / check * n / 3600:5.1f} h for all); {inside.size:,} predicted; "
            f"max |diff| from {check} refits {figures[f'p{order}']['max_difference']:.1e}"
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


def _brute_fit(
    pts: np.ndarray, vals: np.ndarray, sample: np.ndarray, order: int = 2, kw: dict | None = None
) -> tuple[np.ndarray, float]:
    """Residuals at ``sample`` from interp.fit of all other points (``kw`` passed
    on), and the seconds the fits took."""
    out = np.empty(len(sample))
    start = time.perf_counter()
    for j, i in enumerate(sample):
        others = np.arange(len(pts)) != i
        f = interp.fit(pts[others], vals[others], order=order, **(kw or {}))
        out[j] = vals[i] - f(pts[i : i + 1])[0]
    return out, time.perf_counter() - start


def _difference(got: np.ndarray, expected: np.ndarray) -> float:
    """Largest |got - expected| where both are finite; raises if the NaN positions differ."""
    if not np.array_equal(np.isnan(got), np.isnan(expected)):
        raise AssertionError("crossvalidate and brute force disagree on which points are outside")
    ok = np.isfinite(got)
    return float(np.abs(got[ok] - expected[ok]).max()) if ok.any() else 0.0


if __name__ == "__main__":
    size = int(sys.argv[1]) if len(sys.argv) > 1 else 100_000
    bench_crossvalidate(size)
    bench_constrained(size)
