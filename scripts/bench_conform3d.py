"""Benchmark: 3D triangulation with the face-to-face repair against scipy's Delaunay.

Usage::

    python scripts/bench_conform3d.py            # 50,000 random points, a 40^3 lattice
    python scripts/bench_conform3d.py --small    # 10,000 random points, a 20^3 lattice

For each case, ``interp.triangulate`` and ``scipy.spatial.Delaunay`` run on the
same points, interleaved over a few rounds, each keeping its best time (the
host is shared).  scipy is handed the points centred and scaled as triangulate
hands them to it: on raw coordinates at a survey offset Qhull leaves almost
every point of the lattice out (20^3 at (5e5, 6e6, 120): 32 cells, 7985
points "coplanar").  The repair's own time is measured apart, on Qhull's output
for the same normalised points: for points in general position it is the test
that finds no flat cell; for a lattice it is the whole repair.
"""

from __future__ import annotations

import sys

import numpy as np
from scipy.spatial import Delaunay
from timing import best_of_each

import interp
from interp._conform3d import conform
from interp._geometry import simplex_geometry
from interp._triangulate import _delaunay, _normalised


def lattice(n: int, h: float = 1.0, offset: float | np.ndarray = 0.0) -> np.ndarray:
    x = np.arange(n) * h
    return np.stack(np.meshgrid(x, x, x, indexing="ij"), -1).reshape(-1, 3) + offset


def bench_case(name: str, pts: np.ndarray, rounds: int) -> dict:
    """Times of triangulate, scipy's Delaunay and the repair alone on ``pts``."""
    x, _ = _normalised(pts)
    cells, qhull, _ = _delaunay(x)
    vol, size = simplex_geometry(x[cells])
    t_ours, t_scipy = best_of_each(
        [lambda: interp.triangulate(pts), lambda: Delaunay(_normalised(pts)[0])], rounds
    )
    (t_repair,) = best_of_each([lambda: conform(pts, x, cells, vol, size, *qhull)], rounds)
    mesh = interp.triangulate(pts)
    return {
        "case": name,
        "points": len(pts),
        "cells": mesh.n_cells,
        "qhull cells": len(cells),
        "triangulate s": t_ours,
        "scipy Delaunay s": t_scipy,
        "ratio": t_scipy / t_ours,
        "repair s": t_repair,
    }


def main(small: bool) -> None:
    interp.triangulate(lattice(3))  # compile the kernels once
    rng = np.random.default_rng(42)
    n_random, side, rounds = (10_000, 20, 3) if small else (50_000, 40, 3)
    cases = [
        ("random points", rng.random((n_random, 3))),
        (f"{side}^3 lattice", lattice(side)),
        (f"{side}^3 lattice, spacing 0.1 at (5e5, 6e6, 120)", lattice(side, 0.1, [5e5, 6e6, 120])),
    ]
    print(
        f"{'case':<48} {'points':>7} {'cells':>7} {'interp s':>9} {'scipy s':>8} "
        f"{'ratio':>6} {'repair s':>9}"
    )
    for name, pts in cases:
        r = bench_case(name, pts, rounds)
        print(
            f"{r['case']:<48} {r['points']:>7} {r['cells']:>7} {r['triangulate s']:>9.3f} "
            f"{r['scipy Delaunay s']:>8.3f} {r['ratio']:>6.2f} {r['repair s']:>9.4f}"
        )


if __name__ == "__main__":
    main("--small" in sys.argv[1:])
