"""Benchmark: clipping a large triangle mesh by a concave polygon, against shapely.

Usage::

    python scripts/bench_clip.py            # 1,000,000 triangles, 1000-vertex polygon
    python scripts/bench_clip.py --small    # 50,000 triangles, a quick smoke run

interp's time covers ``interp.clip.clip`` plus integrating a P1 field over the
pieces; shapely's covers ``shapely.intersection`` of the array of triangles
with the polygon plus ``shapely.area``.  Building the mesh and the shapely
geometries is setup and not timed.  Both must find the same cut cells with the
same areas.
"""

from __future__ import annotations

import argparse

import numpy as np
import shapely
from timing import best_with_result

import interp
from interp.clip import clip


def jittered_grid(n_triangles: int, seed: int = 0) -> interp.Mesh:
    """A unit-square mesh of about n_triangles, interior nodes jittered by 20% of the spacing."""
    k = max(2, round(np.sqrt(n_triangles / 2)))
    g = np.linspace(0.0, 1.0, k + 1)
    pts = np.stack(np.meshgrid(g, g), axis=-1).reshape(-1, 2)
    inner = ((pts > 0) & (pts < 1)).all(axis=1)
    rng = np.random.default_rng(seed)
    pts[inner] += rng.uniform(-0.2 / k, 0.2 / k, (int(inner.sum()), 2))
    idx = np.arange((k + 1) ** 2).reshape(k + 1, k + 1)
    a, b = idx[:-1, :-1].ravel(), idx[:-1, 1:].ravel()
    c, d = idx[1:, 1:].ravel(), idx[1:, :-1].ravel()
    return interp.Mesh(pts, np.vstack([np.c_[a, b, c], np.c_[a, c, d]]))


def concave_polygon(n_vertices: int) -> tuple[np.ndarray, np.ndarray]:
    """A wavy star (90% of the vertices) with a wavy hole (the rest), inside the unit square."""
    n_hole = max(3, n_vertices // 10)
    t = np.linspace(0.0, 2 * np.pi, n_vertices - n_hole, endpoint=False)
    r = 0.33 + 0.09 * np.sin(9 * t) + 0.03 * np.cos(31 * t)
    ext = np.c_[0.5 + r * np.cos(t), 0.5 + r * np.sin(t)]
    t = np.linspace(0.0, 2 * np.pi, n_hole, endpoint=False)
    r = 0.08 + 0.02 * np.sin(5 * t)
    hole = np.c_[0.52 + r * np.cos(t), 0.47 + r * np.sin(t)]
    return ext, hole


def bench_clip(n_triangles: int = 1_000_000, n_vertices: int = 1000) -> dict[str, float]:
    """Time clip + P1 integration against shapely's intersection, check they agree.

    Returns
    -------
    dict
        ``interp_s``, ``shapely_s``, ``ratio`` (shapely / interp), ``clip_s``
        (clip alone), ``n_triangles``, ``n_vertices``, ``n_pieces``,
        ``max_area_diff`` (largest per-cell difference from shapely),
        ``cells_differ`` (cells clipped by one but not the other) and
        ``integral``.
    """
    mesh = jittered_grid(n_triangles)
    ext, hole = concave_polygon(n_vertices)
    poly = interp.Polygon(ext, [hole])
    field = interp.Field(mesh, np.sin(3 * mesh.points[:, 0]) + mesh.points[:, 1] ** 2)
    warm = jittered_grid(2000)
    interp.integrate_pieces(
        interp.Field(warm, np.ones(warm.n_nodes)), warm, clip(warm, poly), 1
    )  # compile the kernels once

    def ours():
        pieces = clip(mesh, poly)
        return pieces, interp.integrate_pieces(field, mesh, pieces, 1)

    t_clip, _ = best_with_result(lambda: clip(mesh, poly))
    t_ours, (pieces, integral) = best_with_result(ours)
    triangles = shapely.polygons(mesh.points[mesh.corners])
    region = shapely.Polygon(ext, [hole])
    t_ref, ref_area = best_with_result(
        lambda: shapely.area(shapely.intersection(triangles, region)), 1
    )
    area = np.bincount(pieces.parent, pieces.measure(), minlength=mesh.n_cells)
    figures = {
        "n_triangles": float(mesh.n_cells),
        "n_vertices": float(sum(len(r) for r in poly.rings)),
        "n_pieces": float(len(pieces)),
        "clip_s": t_clip,
        "interp_s": t_ours,
        "shapely_s": t_ref,
        "ratio": t_ref / t_ours,
        "max_area_diff": float(np.abs(area - ref_area).max()),
        "cells_differ": float(np.count_nonzero((area > 0) != (ref_area > 0))),
        "integral": float(integral),
    }
    print(
        f"clip {mesh.n_cells:,} triangles by a {int(figures['n_vertices'])}-vertex concave "
        f"polygon with a hole ({len(pieces):,} pieces)"
    )
    print(f"  interp clip alone             {t_clip:9.3f} s")
    print(f"  interp clip + P1 integral     {t_ours:9.3f} s")
    print(f"  shapely intersection + area   {t_ref:9.3f} s   ratio {t_ref / t_ours:7.1f}")
    print(
        f"  per-cell area: max difference {figures['max_area_diff']:.2e}, "
        f"cells clipped differently {int(figures['cells_differ'])}"
    )
    return figures


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--small", action="store_true", help="50,000 triangles")
    args = parser.parse_args()
    bench_clip(50_000 if args.small else 1_000_000)


if __name__ == "__main__":
    main()
