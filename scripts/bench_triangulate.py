"""Benchmark: the exact 2D Delaunay triangulator against scipy's Delaunay (Qhull).

Usage::

    python scripts/bench_triangulate.py            # 1M points per case, 10M for scale
    python scripts/bench_triangulate.py --small    # 50k points, 500k for scale: a smoke run

Each case times ``interp._delaunay2d.delaunay2d`` and ``scipy.spatial.Delaunay``
(on centred coordinates, as ``interp.triangulate`` has used it) on the same
points in one run, interleaved over rounds, best of each; the ratio is
scipy / ours (above 1: ours is faster).  The scale row runs in a child process
and reports the peak resident-set growth over the resident set just before the
call.  The constraint row times ``constrained2d`` with 10,000 breakline segments
against ``delaunay2d`` on the same points.
"""

from __future__ import annotations

import argparse
import os
import subprocess
import sys
import time
from functools import partial

import numpy as np
from scipy.spatial import Delaunay
from timing import best_of_each

from interp._delaunay2d import constrained2d, delaunay2d

OFFSET = np.array([512000.0, 6123000.0])  # invented site coordinates


def random_points(n: int, rng: np.random.Generator) -> np.ndarray:
    return OFFSET + rng.random((n, 2)) * 1000.0


def parallel_lines(n: int, rng: np.random.Generator) -> np.ndarray:
    """Survey lines 2 m apart, points every 0.1 m along them, with 1 cm noise."""
    lines = max(2, int(np.sqrt(n / 20)))
    per = n // lines
    x = np.repeat(np.arange(lines) * 2.0, per)
    y = np.tile(np.arange(per) * 0.1, lines)
    return OFFSET + np.stack([x, y], axis=1) + rng.normal(scale=0.01, size=(lines * per, 2))


def clustered(n: int, rng: np.random.Generator) -> np.ndarray:
    """200 tight clusters (scanner stations), normal spread 5 m, over 1 km."""
    centres = rng.random((200, 2)) * 1000.0
    pick = rng.integers(0, 200, n)
    return OFFSET + centres[pick] + rng.normal(scale=5.0, size=(n, 2))


def jittered_grid(n: int, rng: np.random.Generator) -> np.ndarray:
    k = int(np.sqrt(n))
    g = np.stack(np.meshgrid(np.arange(k), np.arange(k)), axis=-1).reshape(-1, 2) * 1.0
    return OFFSET + g + rng.uniform(-0.1, 0.1, size=g.shape)


CASES = {
    "random": random_points,
    "parallel lines": parallel_lines,
    "clustered": clustered,
    "jittered grid": jittered_grid,
}


def breaklines(pts: np.ndarray, n_segments: int, rng: np.random.Generator) -> tuple:
    """Points plus 100 random-walk polylines of n_segments / 100 segments each,
    their vertices appended to the points; the segments as point rows."""
    lines, per = 100, n_segments // 100
    lo, hi = pts.min(axis=0), pts.max(axis=0)
    start = lo + (hi - lo) * (0.2 + 0.6 * rng.random((lines, 1, 2)))
    steps = rng.normal(scale=(hi - lo).max() / 2000, size=(lines, per, 2))
    verts = np.concatenate([start, start + np.cumsum(steps, axis=1)], axis=1)
    verts = np.clip(verts, lo, hi).reshape(-1, 2)
    rows = len(pts) + np.arange(len(verts)).reshape(lines, per + 1)
    seg = np.stack([rows[:, :-1].ravel(), rows[:, 1:].ravel()], axis=1)
    return np.vstack([pts, verts]), seg


def scale_child(n: int) -> None:
    """In a child: triangulate n random points; print time and peak RSS growth."""
    import resource

    pts = random_points(n, np.random.default_rng(1))
    delaunay2d(pts[:1000])  # compile outside the measure
    with open("/proc/self/statm") as f:
        before = int(f.read().split()[1]) * resource.getpagesize()
    t = time.perf_counter()
    cells = delaunay2d(pts)
    dt = time.perf_counter() - t
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
    print(dt, (peak - before) / 2**30, len(cells))


def run(small: bool) -> list[tuple[str, float, float, str]]:
    """Rows (case, ours in s, reference in s or 0, note)."""
    n = 50_000 if small else 1_000_000
    rounds = 2 if small else 3
    rng = np.random.default_rng(0)
    delaunay2d(random_points(1000, rng))  # compile
    constrained2d(*breaklines(random_points(1000, rng), 100, rng))
    rows = []
    for name, make in CASES.items():
        pts = make(n, rng)
        centred = pts - pts.mean(axis=0)
        ours, ref = best_of_each([partial(delaunay2d, pts), partial(Delaunay, centred)], rounds)
        rows.append((f"{name}, {len(pts):,} points", ours, ref, ""))
    pts, seg = breaklines(random_points(n, rng), 10_000, rng)
    plain, cons = best_of_each([lambda: delaunay2d(pts), lambda: constrained2d(pts, seg)], rounds)
    rows.append(
        (
            f"{len(seg):,} breakline segments on {len(pts):,} points",
            cons,
            0.0,
            f"+{100 * (cons / plain - 1):.0f}% over {plain:.2f} s unconstrained",
        )
    )
    big = 500_000 if small else 10_000_000
    out = subprocess.run(
        [sys.executable, __file__, "--scale-child", str(big)],
        check=True,
        capture_output=True,
        text=True,
    ).stdout.split()
    rows.append(
        (
            f"scale, {big:,} random points",
            float(out[0]),
            0.0,
            f"peak RSS growth {float(out[1]):.2f} GiB",
        )
    )
    return rows


def main(argv: list[str] | None = None) -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--small", action="store_true", help="small sizes for a quick run")
    ap.add_argument("--scale-child", type=int, help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    if args.scale_child:
        scale_child(args.scale_child)
        return
    print(f"load average before the run: {os.getloadavg()[0]:.2f} on {os.cpu_count()} cores")
    print(f"{'case':50s} {'interp':>9s} {'scipy':>9s} {'ratio':>7s}  note")
    for case, ours, ref, note in run(args.small):
        ratio = f"{ref / ours:7.2f}" if ref else " " * 7
        refs = f"{ref:8.3f}s" if ref else " " * 9
        print(f"{case:50s} {ours:8.3f}s {refs} {ratio}  {note}", flush=True)


if __name__ == "__main__":
    main()
