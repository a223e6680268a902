"""Benchmark: contour lines of a large P1 surface against matplotlib's tricontour engine.

Usage::

    python scripts/bench_contour.py            # about 1,000,000 triangles
    python scripts/bench_contour.py --small    # about 50,000 triangles, a quick smoke run

Rows, each timed in the same run as its reference (best of three; the
references once when slow):

* ``p1``: ``interp.contours`` at 20 levels against matplotlib's
  ``TriContourGenerator.create_contour`` (the engine behind ``tricontour``)
  called once per level on the same triangulation.  Building the
  triangulations is setup and not timed.  Both must give the same number of
  lines and vertices.
* ``region``: the same lines clipped to a 1000-vertex concave polygon with a
  hole, against the same contour engine followed by ``shapely.intersection``
  of its lines with the polygon (the two total lengths must agree).
* ``p2``: a P2 surface on a quarter of the cells, subdivided to the default
  tolerance (no reference).
"""

from __future__ import annotations

import argparse
from collections.abc import Sequence

import numpy as np
import shapely
from bench_clip import best_of, concave_polygon, jittered_grid
from matplotlib._tri import TriContourGenerator
from matplotlib.tri import Triangulation

import interp

#: contour levels of every row.
N_LEVELS = 20


def surface(mesh: interp.Mesh) -> interp.Field:
    """A wavy surface with hills, hollows and saddles over the unit square."""
    x, y = mesh.points.T
    return interp.Field(mesh, np.sin(8 * x) * np.cos(6 * y) + 0.5 * x)


def run(small: bool) -> list[dict]:
    """Time each row; returns one dict per row with the times, the ratio and the checks."""
    n = 50_000 if small else 1_000_000
    mesh = jittered_grid(n)
    field = surface(mesh)
    levels = np.linspace(-1.2, 1.6, N_LEVELS)
    rows = []

    t_ours, lines = best_of(lambda: interp.contours(field, levels))
    x, y = mesh.points.T
    gen = TriContourGenerator(Triangulation(x, y, mesh.cells).get_cpp_triangulation(), field.values)
    t_ref, ref = best_of(lambda: [gen.create_contour(level)[0] for level in levels])
    rows.append(
        {
            "case": f"p1: {mesh.n_cells:,} triangles, {N_LEVELS} levels",
            "interp_s": t_ours,
            "reference_s": t_ref,
            "ratio": t_ref / t_ours,
            "lines": len(lines),
            "reference_lines": sum(len(r) for r in ref),
            "vertices": sum(len(v) for v in lines.lines),
            "reference_vertices": sum(len(v) for r in ref for v in r),
        }
    )

    ext, hole = concave_polygon(1000)
    poly = interp.Polygon(ext, [hole])
    t_clip, clipped = best_of(lambda: interp.contours(field, levels, region=poly))
    region = shapely.Polygon(ext, [hole])

    def reference():
        lines = [v for level in levels for v in gen.create_contour(level)[0]]
        counts = [len(v) for v in lines]
        strings = shapely.linestrings(
            np.vstack(lines), indices=np.repeat(np.arange(len(counts)), counts)
        )
        return shapely.intersection(strings, region)

    t_ref, cut = best_of(reference)
    rows.append(
        {
            "case": f"region: the same, clipped to a {len(ext) + len(hole)}-vertex polygon "
            "(ref: tricontour engine + shapely intersection)",
            "interp_s": t_clip,
            "reference_s": t_ref,
            "ratio": t_ref / t_clip,
            "length": float(
                sum(np.linalg.norm(np.diff(v, axis=0), axis=1).sum() for v in clipped.lines)
            ),
            "reference_length": float(shapely.length(cut).sum()),
        }
    )

    quad = jittered_grid(n // 4).elevate()
    p2 = surface(quad)
    t_p2, curved = best_of(lambda: interp.contours(p2, levels))
    rows.append(
        {
            "case": f"p2: {quad.n_cells:,} P2 triangles, {N_LEVELS} levels, default tolerance",
            "interp_s": t_p2,
            "tolerance": curved.tolerance,
            "lines": len(curved),
            "vertices": sum(len(v) for v in curved.lines),
        }
    )
    return rows


def main(argv: Sequence[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--small", action="store_true", help="about 50,000 triangles")
    args = parser.parse_args(argv)
    for row in run(args.small):
        print(row.pop("case"))
        ref = row.pop("reference_s", None)
        ratio = row.pop("ratio", None)
        line = f"  interp {row.pop('interp_s'):8.3f} s"
        if ref is not None:
            line += f"   reference {ref:8.3f} s   ratio {ratio:6.2f}"
        print(line)
        print("  " + ", ".join(f"{k} {v:.6g}" for k, v in row.items()))


if __name__ == "__main__":
    main()
