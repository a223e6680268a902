"""Polygon files: rings of vertices as point tables."""

from __future__ import annotations

import os

import numpy as np

from interp.errors import InterpError
from interp.io._geojson import is_geojson_file, read_geojson_polygon
from interp.io._tables import read_table
from interp.polygon import as_ring, crossing_text, distinct_vertices


def read_polygon(path: str | os.PathLike) -> list[np.ndarray]:
    """Read a polygon file: columns x, y with one vertex per row, in order.

    An optional ``ring`` column numbers the rings: 0 for the exterior,
    1, 2, ... for holes; the rows of a ring must be consecutive.  Without it
    the file holds the exterior only.  A closing vertex equal to the first
    is dropped.

    Returns
    -------
    list of ndarray (p, 2)
        The exterior ring first, then the holes in order of their numbers,
        each validated by :func:`interp.polygon.as_ring`.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> path = pathlib.Path(tempfile.mkdtemp()) / "site.csv"
    >>> _ = path.write_text("x,y,ring\\n0,0,0\\n4,0,0\\n0,4,0\\n1,1,1\\n2,1,1\\n1,2,1\\n")
    >>> [r.shape for r in read_polygon(path)]
    [(3, 2), (3, 2)]
    """
    if is_geojson_file(path):  # GeoJSON polygons
        return read_geojson_polygon(path)
    points, values, numbers, text_columns = read_table(path, ("x", "y"))
    key = next((n for n in [*values, *text_columns] if n.lower() == "ring"), None)
    if key is None:
        ring = as_ring(points, name=f"{path} (lines {numbers[0]}-{numbers[-1]})")
        _check_simple(path, [ring], [""], [(points, numbers)])
        return [ring]
    if key in text_columns:
        raise InterpError(
            f"{path}, line {text_columns[key]}: the ring column must hold whole numbers "
            "(0 for the exterior, 1, 2, ... for holes)"
        )
    ring = values[key]
    bad = np.flatnonzero(~(ring >= 0) | (ring != np.round(ring)))
    if bad.size:
        raise InterpError(
            f"{path}, line {numbers[bad[0]]}: the ring number must be a whole number >= 0 "
            "(0 for the exterior, 1, 2, ... for holes)"
        )
    starts = np.flatnonzero(np.r_[True, ring[1:] != ring[:-1]])
    ends = np.r_[starts[1:], len(ring)]
    ids = ring[starts].astype(np.int64)
    seen: set[int] = set()
    for s, r in zip(starts, ids, strict=True):
        if r in seen:
            raise InterpError(
                f"{path}, line {numbers[s]}: ring {r} starts again after other rows; "
                "keep the rows of each ring together, in order"
            )
        seen.add(r)
    if 0 not in seen:
        raise InterpError(f"{path}: no ring 0; number the exterior ring 0 and holes 1, 2, ...")
    order = sorted(zip(ids.tolist(), starts, ends, strict=True))
    rings = [
        as_ring(points[s:e], name=f"{path} ring {r} (lines {numbers[s]}-{numbers[e - 1]})")
        for r, s, e in order
    ]
    rows = [(points[s:e], numbers[s:e]) for _, s, e in order]
    _check_simple(path, rings, [f"ring {r}" for r, _, _ in order], rows)
    return rings


def _check_simple(
    path: str | os.PathLike,
    rings: list[np.ndarray],
    names: list[str],
    rows: list[tuple[np.ndarray, np.ndarray]],
) -> None:
    """Refuse rings whose edges cross, touch or overlap, naming the file lines of their ends."""
    labels = [[f"line {n}" for n in lines[distinct_vertices(xy)]] for xy, lines in rows]
    crossing = crossing_text(rings, names, labels)
    if crossing is not None:
        raise InterpError(
            f"{path}: the polygon is not simple: {crossing}; reorder the vertices so no edges "
            "cross or touch, or split the polygon"
        )
