"""GeoJSON polygons in: a boundary or region as rings, as the CSV polygon files give.

GeoJSON is RFC 7946.  A file may hold a Polygon, a MultiPolygon, a Feature
or a FeatureCollection; it must come down to exactly one polygon (an
exterior ring and any holes), since a region here is one polygon.  RFC 7946
puts coordinates in WGS 84 longitude and latitude; files exported from
survey and design work often carry projected coordinates instead.  Either
way they are read as they stand, in the same coordinates as the data, and
never transformed; altitudes (a third number) are dropped.
"""

from __future__ import annotations

import json
import os
from pathlib import Path

import numpy as np

from interp.errors import InterpError
from interp.polygon import as_ring, ring_names

#: file suffixes read as GeoJSON.
GEOJSON_SUFFIXES = (".geojson", ".json")


def is_geojson_file(path: str | os.PathLike) -> bool:
    """True when ``path`` is read as GeoJSON (by its suffix).

    Examples
    --------
    >>> is_geojson_file("site.geojson"), is_geojson_file("site.csv")
    (True, False)
    """
    return Path(path).suffix.lower() in GEOJSON_SUFFIXES


def _polygons(obj: object, where: str) -> list[tuple[str, list]]:
    """The polygons (their place in the file and coordinate arrays) of a GeoJSON object."""
    if not isinstance(obj, dict) or not isinstance(obj.get("type"), str):
        raise InterpError(f"{where} is not a GeoJSON object (no 'type' member)")
    kind = obj["type"]
    if kind == "FeatureCollection":
        features = obj.get("features")
        if not isinstance(features, list):
            raise InterpError(f"{where}: a FeatureCollection needs a 'features' list")
        return [
            p for k, f in enumerate(features, start=1) for p in _polygons(f, f"{where} feature {k}")
        ]
    if kind == "Feature":
        if obj.get("geometry") is None:
            return []
        return _polygons(obj["geometry"], where)
    if kind not in ("Polygon", "MultiPolygon"):
        raise InterpError(
            f"{where} is a {kind}, not a Polygon or MultiPolygon; a boundary or region must be "
            "a polygon"
        )
    coordinates = obj.get("coordinates")
    if not isinstance(coordinates, list):
        raise InterpError(f"{where}: the {kind} has no 'coordinates' list")
    if kind == "Polygon":
        return [(where, coordinates)]
    return [(f"{where} polygon {k}", c) for k, c in enumerate(coordinates, start=1)]


def _ring(positions: object, name: str) -> np.ndarray:
    """One linear ring: positions [x, y(, z)], closed as RFC 7946 requires."""
    if not isinstance(positions, list) or not all(
        isinstance(p, list) and len(p) >= 2 for p in positions
    ):
        raise InterpError(
            f"{name}: a ring must be a list of positions [x, y] (or [x, y, z]); check the "
            "nesting of 'coordinates'"
        )
    try:
        xy = np.array([p[:2] for p in positions], dtype=np.float64)
    except (TypeError, ValueError):
        raise InterpError(f"{name}: a position holds something other than numbers") from None
    if len(xy) < 2 or (xy[0] != xy[-1]).any():
        raise InterpError(
            f"{name}: the ring is not closed (its last position must repeat the first, "
            "RFC 7946 section 3.1.6)"
        )
    return as_ring(xy[:-1], name=name)


def read_geojson_polygon(path: str | os.PathLike) -> list[np.ndarray]:
    """Read one polygon from a GeoJSON file (RFC 7946): exterior ring, then holes.

    Parameters
    ----------
    path : path-like
        A file holding a Polygon, a MultiPolygon of one polygon, or a Feature
        or FeatureCollection whose geometries make exactly one polygon
        (features without geometry are skipped).

    Returns
    -------
    list of ndarray (p, 2)
        The exterior ring first, then the holes in the file's order, each
        validated by :func:`interp.polygon.as_ring` (closing vertex dropped),
        as :func:`interp.io.read_polygon` returns for a CSV polygon.

    Raises
    ------
    InterpError
        Not JSON, not GeoJSON, a geometry that is not a polygon, no polygon
        or several, rings that are not closed or whose positions are not
        numbers.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> path = pathlib.Path(tempfile.mkdtemp()) / "pad.geojson"
    >>> _ = path.write_text('{"type": "Polygon", "coordinates": ['
    ...     '[[0, 0], [4, 0], [4, 4], [0, 4], [0, 0]], [[1, 1], [2, 1], [1, 2], [1, 1]]]}')
    >>> [r.shape for r in read_geojson_polygon(path)]
    [(4, 2), (3, 2)]
    """
    path = Path(path)
    if not path.is_file():
        raise InterpError(f"{path}: no such file; check the name and folder")
    try:
        obj = json.loads(path.read_text(encoding="utf-8-sig"))
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise InterpError(
            f"{path}: not a JSON file ({exc}); a GeoJSON polygon is expected"
        ) from None
    found = _polygons(obj, str(path))
    if len(found) != 1:
        raise InterpError(
            f"{path}: holds {len(found)} polygons; a boundary or region is one polygon (with "
            "any holes): keep one, or merge them into one outline"
        )
    where, rings = found[0]
    if not rings:
        raise InterpError(f"{where}: the polygon has no rings")
    return [_ring(r, f"{where} {n}") for r, n in zip(rings, ring_names(len(rings)), strict=True)]
