"""Generate the demo data in data/ (deterministic: run it again and the files are identical).

The scenario is invented: the Tarrow Bend gravel yard, a fictional depot on a
gently sloping pad.  Two survey epochs (March and June 2026) of scattered
ground points show a conical stockpile that grew between them and a second
pile started in June.  The base surface is the pad as surveyed before any
stockpiling.  The north bay, built over the summer and surveyed on its own
in September 2026, has sharp edges for breaklines: a concrete slab, a
battered retaining wall along its north side and a pile of crushed rock with
plane faces (a frustum of a square pyramid); its points lie exactly on those
invented faces, with no survey noise, so that the volume fitted with the
breaklines can be checked against the closed form.  A fictional pump
bracket, meshed with quadratic tetrahedra, carries a steady temperature
field for the mesh-file half of the demo.

Usage::

    python scripts/make_demo_data.py [--out data]
"""

from __future__ import annotations

import argparse
import json
from pathlib import Path

import numpy as np

import interp

#: the pad: z = 100 + 0.010 x - 0.005 y (metres, a local site grid)
PAD = (100.0, 0.010, -0.005)
#: site boundary (exterior) and the site office footprint (a hole)
BOUNDARY = [(0, 0), (90, 0), (90, 40), (70, 40), (70, 70), (0, 70)]
OFFICE = [(5, 55), (20, 55), (20, 65), (5, 65)]
#: piles per epoch: centre x, centre y, base radius, height
PILES = {
    "2026_03": [(35.0, 30.0, 14.0, 5.0)],
    "2026_06": [(35.0, 30.0, 17.0, 6.5), (75.0, 15.0, 9.0, 3.0)],
}
NOISE = 0.01  # standard deviation of the survey's height error, metres
#: the north bay: survey area (x0, y0, x1, y1); slab level; the wall's toe and top lines
#: (y) and the level behind it; the pile: centre, toe and crest sides (square), height
BAY_AREA = (28.0, 49.0, 68.0, 70.0)
SLAB = 100.5
WALL = (64.0, 64.25, 102.3)
BAY_PILE = ((46.0, 56.5), 14.0, 4.0, 3.75)


def pad(xy: np.ndarray) -> np.ndarray:
    return PAD[0] + PAD[1] * xy[:, 0] + PAD[2] * xy[:, 1]


def surface(xy: np.ndarray, piles) -> np.ndarray:
    z = pad(xy)
    for cx, cy, r, h in piles:
        rho = np.hypot(xy[:, 0] - cx, xy[:, 1] - cy)
        z += h * np.clip(1 - rho / r, 0, None)
    return z


def survey_points(rng: np.random.Generator, piles, n_open: int, n_pile: int) -> np.ndarray:
    """Scattered survey positions: sparse over the yard, dense on the piles (walked shots)."""
    ring = interp.polygon.as_ring(BOUNDARY)
    office = interp.polygon.as_ring(OFFICE)
    xy = rng.uniform([0, 0], [90, 70], (4 * n_open, 2))
    xy = xy[interp.polygon.contains([ring, office], xy)][:n_open]
    extra = []
    for cx, cy, r, _ in piles:
        rho = r * np.sqrt(rng.random(n_pile)) * 1.05
        phi = rng.uniform(0, 2 * np.pi, n_pile)
        extra.append(np.column_stack([cx + rho * np.cos(phi), cy + rho * np.sin(phi)]))
        # the toe and the crest are always shot
        phi = np.linspace(0, 2 * np.pi, 48, endpoint=False)
        extra.append(np.column_stack([cx + r * np.cos(phi), cy + r * np.sin(phi)]))
        extra.append([[cx, cy]])
    xy = np.vstack([xy, *extra])
    xy = xy[interp.polygon.contains([ring, office], xy)]
    corners = np.array(BOUNDARY + OFFICE, dtype=float)
    return np.vstack([corners, xy])


def write_csv(path: Path, header: str, rows: list[str]) -> None:
    path.write_text(header + "\n" + "\n".join(rows) + "\n", encoding="utf-8")


def make_yard(out: Path, rng: np.random.Generator) -> dict:
    meta = {"pad": PAD, "noise_sd": NOISE, "epochs": {}}
    for epoch, piles in PILES.items():
        xy = survey_points(rng, piles, 900, 1400)
        z = surface(xy, piles) + rng.normal(0, NOISE, len(xy))
        codes = np.where(np.isin(np.arange(len(xy)), np.arange(10)), "BND", "GRD")
        rows = [f"{c},{x:.3f},{y:.3f},{h:.3f}" for c, (x, y), h in zip(codes, xy, z, strict=True)]
        write_csv(out / f"yard_{epoch}.csv", "code,x,y,z", rows)
        # volume of each cone above the pad: pi r^2 h / 3 (the pad's tilt adds nothing)
        volume = sum(np.pi * r * r * h / 3 for _, _, r, h in piles)
        meta["epochs"][epoch] = {"piles": piles, "volume_above_pad": volume, "points": len(xy)}
    base_xy = survey_points(rng, [], 400, 0)
    base_z = pad(base_xy) + rng.normal(0, NOISE, len(base_xy))
    write_csv(
        out / "yard_base.csv",
        "x,y,z",
        [f"{x:.3f},{y:.3f},{h:.3f}" for (x, y), h in zip(base_xy, base_z, strict=True)],
    )
    ring_rows = [f"{x},{y},0" for x, y in BOUNDARY] + [f"{x},{y},1" for x, y in OFFICE]
    write_csv(out / "yard_boundary.csv", "x,y,ring", ring_rows)
    check = np.array([[20.0, 20.0], [35.0, 30.0], [45.0, 35.0], [80.0, 10.0], [60.0, 60.0]])
    write_csv(
        out / "yard_checkpoints.csv",
        "name,x,y",
        [f"CP{i + 1},{x},{y}" for i, (x, y) in enumerate(check)],
    )
    return meta


def bay_surface(xy: np.ndarray) -> np.ndarray:
    """The north bay: slab, pile faces (each a plane), wall face, ground behind the wall."""
    (cx, cy), toe, crest, height = BAY_PILE
    toe_y, top_y, behind = WALL
    m = np.maximum(np.abs(xy[:, 0] - cx), np.abs(xy[:, 1] - cy))  # square rings about the centre
    pile = height * np.clip((toe / 2 - m) / ((toe - crest) / 2), 0.0, 1.0)
    wall = SLAB + (behind - SLAB) * np.clip((xy[:, 1] - toe_y) / (top_y - toe_y), 0.0, 1.0)
    return np.where(xy[:, 1] <= toe_y, SLAB + pile, wall)


def bay_lines() -> list[np.ndarray]:
    """Breaklines x, y, value: the pile's toe and crest, its four hips, the wall's toe and top."""
    (cx, cy), toe, crest, height = BAY_PILE
    square = np.array([[-1.0, -1], [1, -1], [1, 1], [-1, 1], [-1, -1]]) / 2
    toe_ring = np.column_stack([(cx, cy) + toe * square, np.full(5, SLAB)])
    crest_ring = np.column_stack([(cx, cy) + crest * square, np.full(5, SLAB + height)])
    hips = [np.vstack([crest_ring[c], toe_ring[c]]) for c in range(4)]
    x0, _, x1, _ = BAY_AREA
    toe_y, top_y, behind = WALL
    along = np.linspace(x0, x1, 9)  # the wall shot every 5 m
    wall = [
        np.column_stack([along, np.full(9, y), np.full(9, z)])
        for y, z in ((toe_y, SLAB), (top_y, behind))
    ]
    return [toe_ring, crest_ring, *hips, *wall]


def make_bay(out: Path, rng: np.random.Generator) -> dict:
    x0, y0, x1, y1 = BAY_AREA
    (cx, cy), toe, crest, height = BAY_PILE
    lines = bay_lines()
    shots = np.vstack([line[:, :2] for line in lines])  # the surveyor shoots every vertex
    open_ground = rng.uniform((x0, y0), (x1, y1), (150, 2))
    pile = (cx, cy) + rng.uniform(-0.55 * toe, 0.55 * toe, (250, 2))
    corners = [[x0, y0], [x1, y0], [x1, y1], [x0, y1]]
    xy = np.unique(np.round(np.vstack([corners, shots, open_ground, pile]), 3), axis=0)
    xy = xy[(xy >= (x0, y0)).all(axis=1) & (xy <= (x1, y1)).all(axis=1)]
    z = bay_surface(xy)  # exact on the faces: the heights of the millimetre positions
    write_csv(
        out / "yard_bay_2026_09.csv",
        "x,y,z",
        [f"{x:.3f},{y:.3f},{float(h)!r}" for (x, y), h in zip(xy, z, strict=True)],
    )
    write_csv(
        out / "yard_bay_breaklines.csv",
        "x,y,value,line",
        [f"{x:g},{y:g},{v:g},{i}" for i, line in enumerate(lines) for x, y, v in line],
    )
    slab = [(x0, y0), (x1, y0), (x1, WALL[0]), (x0, WALL[0])]
    write_csv(out / "yard_bay_slab.csv", "x,y", [f"{x:g},{y:g}" for x, y in slab])
    # the pile above the slab: prismoidal formula V = h / 6 (A1 + 4 Am + A2), exact for a
    # frustum of a pyramid (Am: the section at mid-height, side (toe + crest) / 2)
    volume = height / 6 * (toe**2 + 4 * ((toe + crest) / 2) ** 2 + crest**2)
    return {
        "bay": {
            "survey": "2026_09",
            "points": len(xy),
            "slab_level": SLAB,
            "wall": {"toe_y": WALL[0], "top_y": WALL[1], "level_behind": WALL[2]},
            "pile": {
                "centre": [cx, cy],
                "toe_side": toe,
                "crest_side": crest,
                "height": height,
                "volume_above_slab": volume,
            },
        }
    }


def make_bracket(out: Path) -> dict:
    """A fictional pump bracket: an L-shaped block, quadratic tetrahedra, temperature in C."""
    x = np.linspace(0.0, 0.12, 13)
    y = np.linspace(0.0, 0.06, 7)
    z = np.linspace(0.0, 0.04, 5)
    grid = np.stack(np.meshgrid(x, y, z, indexing="ij"), axis=-1).reshape(-1, 3)
    keep = ~((grid[:, 0] > 0.06 + 1e-9) & (grid[:, 2] > 0.02 + 1e-9))
    pts = grid[keep]
    mesh = interp.triangulate(pts)
    centroid = mesh.points[mesh.corners].mean(axis=1)
    inside = ~((centroid[:, 0] > 0.06) & (centroid[:, 2] > 0.02))
    mesh = interp.Mesh(mesh.points, mesh.cells[inside]).elevate()
    p = mesh.points
    # steady conduction with a hot mounting face at x = 0 and a cooled tip: T = 80 - 400 x
    # plus a quadratic bulge across the thickness (a heat source), degree 2 so P2 is exact
    temp = 80.0 - 400.0 * p[:, 0] + 5000.0 * p[:, 2] * (0.04 - p[:, 2])
    interp.write(out / "bracket.vtu", mesh, {"temperature": temp})

    # exact mean over the L-shaped block = box [0, .06]x[0, .06]x[0, .04] plus
    # box [.06, .12]x[0, .06]x[0, .02], integrating the polynomial in closed form per box
    def box_integral(x0, x1, z0, z1, ly=0.06):
        lx, lz = x1 - x0, z1 - z0
        zpart = 0.02 * (z1**2 - z0**2) - (z1**3 - z0**3) / 3
        return ly * (80 * lx * lz - 200 * (x1**2 - x0**2) * lz + 5000 * lx * zpart)

    total = box_integral(0, 0.06, 0, 0.04) + box_integral(0.06, 0.12, 0, 0.02)
    volume = 0.06 * 0.06 * 0.04 + 0.06 * 0.06 * 0.02
    return {
        "bracket": {
            "cells": mesh.n_cells,
            "temperature": "80 - 400 x + 5000 z (0.04 - z)",
            "volume": volume,
            "mean_temperature": total / volume,
        }
    }


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", type=Path, default=Path(__file__).parents[1] / "data")
    args = parser.parse_args()
    args.out.mkdir(parents=True, exist_ok=True)
    rng = np.random.default_rng(2026)
    meta = make_yard(args.out, rng)
    meta.update(make_bay(args.out, np.random.default_rng(909)))
    meta.update(make_bracket(args.out))
    (args.out / "scenario.json").write_text(json.dumps(meta, indent=2) + "\n", encoding="utf-8")


if __name__ == "__main__":
    main()
