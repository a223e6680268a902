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
import os
import resource
import subprocess
import sys
import time

import numpy as np
from scipy.interpolate import LinearNDInterpolator
from scipy.spatial import Delaunay
from timing import best_of, best_of_each, row

import interp


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
        t_build, t_ref_build = best_of_each(
            [lambda pts=pts: interp.triangulate(pts).index, lambda pts=pts: Delaunay(pts)]
        )
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
            print(f"  peak memory growth (build + queries), {engine:<7} {peak:8.1f} MiB")


def child_peak(case: str) -> float:
    """Run one case in a child process and return its peak resident set in MiB."""
    out = subprocess.run(
        [sys.executable, __file__, "--child", case], capture_output=True, text=True, check=True
    )
    return float(out.stdout.strip())


def rss_mib() -> float:
    """Current resident set of this process, in MiB (Linux)."""
    with open("/proc/self/statm") as fh:
        return int(fh.read().split()[1]) * resource.getpagesize() / 2**20


def run_child(case: str) -> None:
    """Print the peak growth of the resident set (MiB) while one engine runs one case.

    A thread samples the resident set every millisecond; the figure is the peak
    minus the resident set just before the case (after imports and data).
    """
    import threading

    _, engine, d, n, nq = case.split("-")
    pts, vals, q = case_data(int(d), int(n), int(nq))
    interp.Field(interp.triangulate(pts[:50]), vals[:50])(q[:5])  # same baseline for both
    base = rss_mib()
    peak = [base]
    done = threading.Event()

    def sample() -> None:
        while not done.wait(0.001):
            peak[0] = max(peak[0], rss_mib())

    watcher = threading.Thread(target=sample)
    watcher.start()
    if engine == "interp":
        interp.Field(interp.triangulate(pts), vals)(q)
    else:
        LinearNDInterpolator(Delaunay(pts), vals)(q)
    done.set()
    watcher.join()
    print(max(peak[0], rss_mib()) - base)


def bench_grid(small: bool) -> None:
    """Scattered points onto a regular grid, against scipy.interpolate.griddata."""
    from scipy.interpolate import griddata

    n, side = (100_000, 500) if small else (1_000_000, 2000)
    rng = np.random.default_rng(7)
    pts = rng.random((n, 2))
    vals = np.sin(6 * pts[:, 0]) * np.cos(4 * pts[:, 1])
    axis = np.linspace(0.0, 1.0, side)
    xx, yy = np.meshgrid(axis, axis, indexing="ij")
    print(f"{n:,} points onto a {side} x {side} grid")
    rounds = 1 if small else 2  # best of two: the first pays for touching fresh memory
    t_ref = best_of(lambda: griddata(pts, vals, (xx, yy), method="linear"), rounds)
    spacing = 1.0 / (side - 1)
    bounds = (0.0, 1.0, 0.0, 1.0)

    def ours():
        field = interp.Field(interp.triangulate(pts), vals)
        return interp.to_grid(field, spacing=spacing, bounds=bounds)

    # warm: the compiled kernels loaded from their cache once, as in any session's later calls
    interp.to_grid(interp.Field(interp.triangulate(pts[:1000]), vals[:1000]), spacing=0.1)
    t_ours = best_of(ours, rounds)
    row("end to end (triangulate + evaluate)", t_ours, t_ref)
    # scipy looks for each node outside the hull of the points among all its
    # triangles, so the grid above (whose border rows stick out) costs it most;
    # the same comparison on the nodes 1% or more inside the square leaves that out
    inner = axis[(axis >= 0.01) & (axis <= 0.99)]
    ix, iy = np.meshgrid(inner, inner, indexing="ij")
    t_ref = best_of(lambda: griddata(pts, vals, (ix, iy), method="linear"), rounds)
    inside = (inner[0], inner[-1], inner[0], inner[-1])

    def ours_inside():
        field = interp.Field(interp.triangulate(pts), vals)
        return interp.to_grid(field, spacing=spacing, bounds=inside)

    row("end to end, nodes inside the hull only", best_of(ours_inside, rounds), t_ref)
    tri = Delaunay(pts)
    ref = LinearNDInterpolator(tri, vals)
    field = interp.Field(interp.Mesh(pts, tri.simplices), vals)
    field(pts[:1])  # the index is built once, like scipy's triangulation
    t_ref = best_of(lambda: ref(xx, yy), 1)
    t_ours = best_of(lambda: interp.to_grid(field, spacing=spacing, bounds=bounds), 3)
    row("evaluation on the grid, mesh built", t_ours, t_ref)
    grid = interp.to_grid(field, spacing=spacing, bounds=bounds)
    np.testing.assert_allclose(grid.values, ref(xx, yy), atol=1e-12, equal_nan=True)


def bench_sample(small: bool) -> None:
    """Throughput and peak memory of ``interp sample`` as the query file grows (it
    streams in chunks); CPU time per row too, since the machine may be shared."""
    import shutil
    import tempfile
    from pathlib import Path

    exe = shutil.which("interp")
    sizes = (100_000, 1_000_000) if small else (1_000_000, 10_000_000)
    rng = np.random.default_rng(3)
    with tempfile.TemporaryDirectory() as tmp:
        d = Path(tmp)
        xy = rng.random((20_000, 2)) * 100
        interp.io.write_table(
            d / "survey.csv", ["x", "y", "z"], np.column_stack([xy, np.sin(xy[:, 0] / 7) * 3 + 50])
        )
        for rows in sizes:
            q = d / f"q{rows}.csv"
            with open(q, "w") as fh:
                fh.write("id,x,y\n")
                for s in range(0, rows, 1_000_000):
                    k = min(1_000_000, rows - s)
                    p = rng.random((k, 2)) * 100
                    ids = np.arange(s, s + k)
                    fh.write(
                        "".join(f"{i},{x:.3f},{y:.3f}\n" for i, (x, y) in zip(ids, p, strict=True))
                    )
            probe = (
                "import resource, subprocess, sys; subprocess.run(sys.argv[1:], check=True); "
                "u = resource.getrusage(resource.RUSAGE_CHILDREN); "
                "print(u.ru_maxrss / 1024, u.ru_utime + u.ru_stime)"
            )
            t = time.perf_counter()
            out = subprocess.run(
                [
                    sys.executable,
                    "-c",
                    probe,
                    exe,
                    "sample",
                    "-q",
                    str(d / "survey.csv"),
                    str(q),
                    "-o",
                    str(d / "out.csv"),
                ],
                capture_output=True,
                text=True,
                check=True,
            )
            dt = time.perf_counter() - t
            peak, cpu = map(float, out.stdout.split())
            print(
                f"  interp sample, {rows:>11,} rows: {dt:7.1f} s, {rows / dt:12,.0f} rows/s, "
                f"CPU {cpu:6.1f} s ({1e6 * cpu / rows:.2f} us/row), "
                f"peak resident set {peak:8.1f} MiB, load {os.getloadavg()[0]:.1f}"
            )


def bench_clip_section(small: bool) -> None:
    """Clip a large mesh by a concave polygon and integrate, against shapely."""
    from bench_clip import bench_clip

    bench_clip(50_000 if small else 1_000_000, 1000)


def bench_parallel_section(small: bool) -> None:
    """Throughput on two local worker processes against one."""
    from bench_parallel import bench_parallel

    bench_parallel(2_000_000 if small else 20_000_000)


def bench_crossvalidate_section(small: bool) -> None:
    """Leave-one-out residuals on scattered points, also with breaklines and a boundary."""
    from bench_validate import bench_constrained, bench_crossvalidate

    bench_crossvalidate(10_000 if small else 100_000)
    bench_constrained(10_000 if small else 100_000)


def bench_triangulate_section(small: bool) -> None:
    """Our exact 2D Delaunay against scipy's Qhull: survey-like inputs, breaklines, scale."""
    from bench_triangulate import main as bench_triangulate

    bench_triangulate(["--small"] if small else [])


def bench_las_section(small: bool) -> None:
    """Reading LAS/LAZ clouds, whole and thinned, against laspy's whole-file read."""
    from bench_las import bench_las

    bench_las(500_000 if small else 10_000_000)


SECTIONS = {
    "locate": bench_locate,
    "triangulate": bench_triangulate_section,
    "grid": bench_grid,
    "clip": bench_clip_section,
    "crossvalidate": bench_crossvalidate_section,
    "sample": bench_sample,
    "parallel": bench_parallel_section,
    "las": bench_las_section,
}


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
