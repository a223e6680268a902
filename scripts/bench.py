"""Benchmarks: this engine against the reference libraries, on the same data, in one run.

Usage::

    python scripts/bench.py                 # every section at full size
    python scripts/bench.py --only locate   # one section
    python scripts/bench.py --small         # small sizes, a quick smoke run

Each section prints a table of times and the ratio reference / interp
(above 1 means interp is faster).  Peak memory is the resident set of a
child process that runs one engine's whole case.
"""

from __future__ import annotations

import argparse
import resource
import subprocess
import sys
import time
from collections.abc import Callable

import numpy as np
from scipy.interpolate import LinearNDInterpolator
from scipy.spatial import Delaunay

import interp


def best_of(fn: Callable[[], object], repeat: int = 3) -> float:
    """Smallest wall time of ``repeat`` calls, in seconds."""
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return min(times)


def row(label: str, ours: float, ref: float, unit: str = "s") -> None:
    print(
        f"  {label:<44} interp {ours:9.4f} {unit}   reference {ref:9.4f} {unit}   "
        f"ratio {ref / ours:7.2f}"
    )


def grid_order(q: np.ndarray, cells_per_axis: int = 512) -> np.ndarray:
    """The same points sorted in raster order (row by row), as a grid query arrives."""
    lo, hi = q.min(axis=0), q.max(axis=0)
    key = np.floor((q - lo) / (hi - lo + 1e-12) * cells_per_axis).astype(np.int64)
    order = np.lexsort(key.T[::-1])
    return q[order]


def case_data(d: int, n: int, nq: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    rng = np.random.default_rng(42)
    pts = rng.random((n, d))
    vals = np.sin(4 * pts[:, 0]) + pts[:, -1] ** 2
    return pts, vals, rng.random((nq, d))


def bench_locate(small: bool) -> None:
    """Building mesh + index, and random / grid-ordered queries, 2D and 3D."""
    cases = [(2, 100_000, 200_000), (3, 50_000, 200_000)]
    if small:
        cases = [(2, 10_000, 20_000), (3, 5_000, 20_000)]
    for d, n, nq in cases:
        pts, vals, q = case_data(d, n, nq)
        print(f"{d}D: {n:,} points, {nq:,} queries")
        warm = interp.Field(interp.triangulate(pts[:100]), vals[:100])
        warm(q[:10])  # compile the kernels once
        t_ref_build = best_of(lambda pts=pts: Delaunay(pts), 2)
        t_build = best_of(lambda pts=pts: interp.triangulate(pts).index, 2)
        row("build (scipy: Delaunay alone)", t_build, t_ref_build)
        tri = Delaunay(pts)
        ref = LinearNDInterpolator(tri, vals)
        field = interp.Field(interp.Mesh(pts, tri.simplices), vals)
        field(q[:10])
        for label, qq in (("random-order queries", q), ("grid-ordered queries", grid_order(q))):
            t_ref = best_of(lambda qq=qq, ref=ref: ref(qq), 1)
            t_ours = best_of(lambda qq=qq, field=field: field(qq), 3)
            row(label, t_ours, t_ref)
        np.testing.assert_allclose(field(q), ref(q), atol=1e-12, equal_nan=True)
        for engine in ("interp", "scipy"):
            peak = child_peak(f"locate-{engine}-{d}-{n}-{nq}")
            print(f"  peak resident set (build + queries), {engine:<7} {peak:8.1f} MiB")


def child_peak(case: str) -> float:
    """Run one case in a child process and return its peak resident set in MiB."""
    out = subprocess.run(
        [sys.executable, __file__, "--child", case], capture_output=True, text=True, check=True
    )
    return float(out.stdout.strip())


def run_child(case: str) -> None:
    """Print the peak resident set (MiB) of one case; both engines load the same modules."""
    _, engine, d, n, nq = case.split("-")
    pts, vals, q = case_data(int(d), int(n), int(nq))
    interp.Field(interp.triangulate(pts[:50]), vals[:50])(q[:5])  # same baseline for both
    if engine == "interp":
        interp.Field(interp.triangulate(pts), vals)(q)
    else:
        LinearNDInterpolator(Delaunay(pts), vals)(q)
    print(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024)


SECTIONS = {"locate": bench_locate}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--only", help="comma-separated sections: " + ", ".join(SECTIONS))
    parser.add_argument("--small", action="store_true", help="small sizes (smoke run)")
    parser.add_argument("--child", help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.child:
        run_child(args.child)
        return
    chosen = args.only.split(",") if args.only else list(SECTIONS)
    for name in chosen:
        print(f"== {name}")
        SECTIONS[name](args.small)


if __name__ == "__main__":
    main()
