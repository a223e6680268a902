"""Breaklines: polylines the surface must follow (kerbs, walls, crests, toes).

A breakline is a (k, 2) or (k, 3) array of vertices x, y[, value].  Its
segments become mesh edges (see :func:`interp._delaunay2d.constrained2d`), so
no cell straddles it.  A vertex without a value (NaN, or no third column)
takes the value interpolated linearly along its line, by chainage, between the
nearest vertices of the line that have one; before the first and after the
last such vertex the value is held constant.  A line with no value at all
takes its values from the surface of the data points.
"""

from __future__ import annotations

import os
from typing import NamedTuple

import numpy as np

from interp._arrays import as_floats
from interp._delaunay2d import constrained2d, first_outside_hull
from interp.errors import InterpError
from interp.io import read_table


def as_lines(lines: object, name: str = "breaklines") -> list[np.ndarray]:
    """Validated breaklines as (k, 3) float64 arrays x, y, value (NaN: none).

    Raises an :class:`InterpError` naming the line (and the segment) for a
    line that is not (k, 2) or (k, 3) numbers, has fewer than 2 vertices,
    has NaN or infinite coordinates, or repeats a vertex in a row (a segment
    of zero length).

    Examples
    --------
    >>> [v[:, 2].tolist() for v in as_lines([[[0, 0], [1, 0]], [[0, 1, 2.5], [1, 1, np.nan]]])]
    [[nan, nan], [2.5, nan]]
    """
    if isinstance(lines, np.ndarray) and lines.ndim == 2:
        lines = [lines]
    out = []
    for i, line in enumerate(lines):
        what = f"{name}: line {i + 1}"
        arr = as_floats(line, f"{what} must be a (k, 2) or (k, 3) array of numbers")
        if arr.ndim != 2 or arr.shape[1] not in (2, 3) or len(arr) < 2:
            raise InterpError(
                f"{what} has shape {arr.shape}; give at least 2 vertices as rows x, y[, value]"
            )
        if not np.isfinite(arr[:, :2]).all():
            raise InterpError(f"{what} has NaN or infinite coordinates; remove those vertices")
        zero = np.flatnonzero((arr[1:, :2] == arr[:-1, :2]).all(axis=1))
        if zero.size:
            raise InterpError(
                f"{what}, segment {zero[0] + 1}: vertices {zero[0] + 1} and {zero[0] + 2} are the "
                "same point (counting from 1); remove the repeated vertex"
            )
        if arr.shape[1] == 2:
            arr = np.column_stack([arr, np.full(len(arr), np.nan)])
        out.append(np.ascontiguousarray(arr))
    return out


def segment_lengths(line: np.ndarray) -> np.ndarray:
    """Plan lengths of the segments of a line (k, 2 or 3): (k - 1,).

    Examples
    --------
    >>> segment_lengths(np.array([[0.0, 0], [3, 4], [3, 5]])).tolist()
    [5.0, 1.0]
    """
    return np.hypot(*np.diff(line[:, :2], axis=0).T)


def filled_values(line: np.ndarray) -> np.ndarray:
    """The values of a validated line, gaps filled along its chainage (all NaN
    when no vertex has a value).

    Examples
    --------
    >>> filled_values(np.array([[0.0, 0, 1], [3, 4, np.nan], [6, 8, 3]])).tolist()
    [1.0, 2.0, 3.0]
    """
    chainage = np.concatenate([[0.0], np.cumsum(segment_lengths(line))])
    given = ~np.isnan(line[:, 2])
    if not given.any():
        return line[:, 2].copy()
    return np.interp(chainage, chainage[given], line[given, 2])


def segments(lines: list[np.ndarray]) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """All vertices (v, 3) with filled values, the segments as (s, 2) vertex rows,
    and the (line, segment) each segment is.

    Examples
    --------
    >>> v, seg, which = segments(as_lines([[[0, 0], [1, 0], [1, 1]]]))
    >>> seg.tolist(), which.tolist()
    ([[0, 1], [1, 2]], [[0, 0], [0, 1]])
    """
    if not lines:
        return np.empty((0, 3)), np.empty((0, 2), dtype=np.int64), np.empty((0, 2), dtype=np.int64)
    sizes = np.array([len(line) for line in lines])
    first = np.concatenate([[0], np.cumsum(sizes)[:-1]])
    verts = np.vstack([np.column_stack([ln[:, :2], filled_values(ln)]) for ln in lines])
    line_of = np.repeat(np.arange(len(lines)), sizes - 1)
    within = np.concatenate([np.arange(k - 1) for k in sizes])
    start = first[line_of] + within
    return verts, np.stack([start, start + 1], axis=1), np.stack([line_of, within], axis=1)


def read_lines(path: str | os.PathLike) -> list[np.ndarray]:
    """Read breaklines from a delimited file with columns ``x, y[, value], line``.

    One row per vertex; ``line`` numbers the polylines, and the rows of a line
    follow one another in order along it.  An empty ``value`` cell is a vertex
    without a value.

    Returns
    -------
    list of ndarray (k, 3)
        The lines in the order they first appear, validated by :func:`as_lines`.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> path = pathlib.Path(tempfile.mkdtemp()) / "kerbs.csv"
    >>> _ = path.write_text("x,y,value,line\\n0,0,1.5,1\\n4,0,,1\\n0,2,,2\\n4,2,2.0,2\\n")
    >>> [ln.shape for ln in read_lines(path)]
    [(2, 3), (2, 3)]
    """
    points, values, numbers, text_columns = read_table(path, ("x", "y"))
    cols = {n.lower(): n for n in [*values, *text_columns]}
    for col in ("line", "value"):
        if col in cols and cols[col] in text_columns:
            raise InterpError(
                f"{path}, line {text_columns[cols[col]]}: the {col} column must hold numbers"
            )
    if "line" not in cols:
        raise InterpError(
            f"{path}: no column named 'line'; number the polylines in a column 'line' "
            f"(columns x, y[, value], line)"
        )
    line = values[cols["line"]]
    bad = np.flatnonzero(~np.isfinite(line) | (line != np.round(line)))
    if bad.size:
        raise InterpError(f"{path}, line {numbers[bad[0]]}: the line number must be a whole number")
    value = values[cols["value"]] if "value" in cols else np.full(len(points), np.nan)
    starts = np.flatnonzero(np.r_[True, line[1:] != line[:-1]])
    ids = line[starts]
    if len(np.unique(ids)) < len(ids):
        seen = {}
        for s, ident in zip(starts, ids, strict=True):
            if ident in seen:
                raise InterpError(
                    f"{path}, line {numbers[s]}: the rows of polyline {ident:g} are not "
                    f"together (it also starts at line {numbers[seen[ident]]}); keep the "
                    f"rows of a line consecutive"
                )
            seen[ident] = s
    rows = np.column_stack([points, value])
    parts = np.split(rows, starts[1:])
    return as_lines(parts, name=str(path))


class Inserted(NamedTuple):
    """Points triangulated with breaklines (see :func:`insert`)."""

    points: np.ndarray
    """(n + e, 2): the distinct data points, then the e points the lines added."""
    cells: np.ndarray
    """(m, 3) int64 counter-clockwise triangles."""
    values: np.ndarray
    """(e,) the value of each added point along its line (NaN: the line has none)."""
    edges: np.ndarray
    """(k, 2) int64: the mesh edges that carry a breakline or the boundary."""


def insert(
    points: np.ndarray, lines: list[np.ndarray], rings: list[np.ndarray] | None = None
) -> Inserted:
    """The constrained Delaunay triangulation of distinct (n, 2) points with
    validated breaklines, and boundary rings (cells outside them removed).

    Line vertices that equal a data point are that point; the others, the
    crossings of lines, and the boundary's vertices and crossings inside the
    hull are added after the data points.  An added crossing takes its value
    along the first line crossing there that has values; boundary vertices
    have none (NaN).

    Raises an :class:`InterpError` naming the line and segment for a vertex
    outside the convex hull of the points (the surface is not defined there)
    and for two lines overlapping along a piece of line.

    Examples
    --------
    >>> pts = np.array([[0.0, 0], [2, 0], [2, 2], [0, 2]])
    >>> r = insert(pts, as_lines([[[0, 1, 5.0], [2, 1, 7.0]]]))
    >>> r.points[4:].tolist(), r.values.tolist(), len(r.cells)
    ([[0.0, 1.0], [2.0, 1.0]], [5.0, 7.0], 4)
    """
    verts, seg, which = segments(lines)
    out = first_outside_hull(points, verts[:, :2]) if len(verts) else -1
    if out >= 0:
        i, j = which[min(np.searchsorted(seg[:, 0], out), len(seg) - 1)]
        raise InterpError(
            f"breakline {i + 1}, segment {j + 1}: vertex {verts[out, :2].tolist()} lies outside "
            f"the convex hull of the data points, where there is no surface; end the line inside "
            f"the data or add points around it"
        )
    n = len(points)
    near = np.flatnonzero(np.isin(points[:, 0], verts[:, 0]))  # may equal a line vertex
    rows = {tuple(p): int(r) for r, p in zip(near, points[near].tolist(), strict=True)}
    node = np.empty(len(verts), dtype=np.int64)
    added: list[int] = []
    for v, p in enumerate(verts[:, :2].tolist()):
        key = tuple(p)
        if key not in rows:
            rows[key] = n + len(added)
            added.append(v)
        node[v] = rows[key]
    nodes = np.vstack([points, verts[added, :2]])
    names = [f"breakline {i + 1}, segment {j + 1}" for i, j in which.tolist()]
    r = constrained2d(nodes, node[seg], boundary_rings=rings, names=names)
    values = np.full(len(r.points) - n, np.nan)
    values[: len(added)] = verts[added, 2]
    for c, (i, j) in enumerate(r.origin.tolist()):
        for s in [v for v in (i, j) if v >= 0]:
            a, b = verts[seg[s]]
            if np.isfinite(a[2]) and np.isfinite(b[2]):
                t = np.dot(r.points[len(nodes) + c] - a[:2], b[:2] - a[:2])
                t /= np.dot(b[:2] - a[:2], b[:2] - a[:2])
                values[len(added) + c] = a[2] + t * (b[2] - a[2])
                break
    return Inserted(r.points, r.cells, values, r.edges)
