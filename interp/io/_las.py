"""LAS and LAZ point clouds in: coordinates, classes, thinning, extra dimensions, CRS.

Read through laspy (LAZ through lazrs), the ``las`` extra.  A cloud is read
as a surface by default: ``x, y`` are the coordinates and ``z`` is the value
field named ``z``, exactly as in a point file with columns ``x,y,z``; with
``coords=("x", "y", "z")`` the points are 3D and only the extra dimensions
are fields.  The file is streamed in chunks of points, and the filters and
thinning below run chunk by chunk, so a cloud larger than memory can be
reduced to what fits.

Coordinates follow the ASPRS LAS Specification 1.4 (R15, "Point Data
Records"): a coordinate is the stored integer times the header's scale plus
its offset.  Scales are decimal in practice (0.01, 0.001); for those the
coordinate is computed as one division of two exact integers, so it is the
float64 nearest to the decimal value (``raw * scale + offset`` in floating
point rounds twice and can be one unit in the last place off).

Classification codes are those of the same specification's standard point
classes (from memory: 1 unclassified, 2 ground, 6 building, 7 low point
(noise), 9 water; 8 is "model key-point" in point formats 0-5, which later
formats flag instead).
"""

from __future__ import annotations

import os
from collections.abc import Iterator, Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from interp._extras import require
from interp._progress import task
from interp.errors import InterpError

#: file suffixes read as LAS point clouds.
LAS_SUFFIXES = (".las", ".laz")
#: points read from the file at a time.
CHUNK_POINTS = 1_000_000
#: powers of ten tried when turning a decimal scale and offset into exact integers.
_DECIMALS = range(10)


def is_las_file(path: str | os.PathLike) -> bool:
    """True when ``path`` is read as a LAS/LAZ point cloud (by its suffix).

    Examples
    --------
    >>> is_las_file("ground.LAZ"), is_las_file("survey.csv")
    (True, False)
    """
    return Path(path).suffix.lower() in LAS_SUFFIXES


@dataclass(frozen=True)
class LasChunk:
    """A block of points of a LAS/LAZ file, after the class filter and thinning.

    Attributes
    ----------
    points : ndarray (n, d) float64
        The coordinate columns asked for.
    fields : dict of str to ndarray
        ``z`` unless it is a coordinate, then each extra dimension, (n,) or
        (n, c) float64.
    """

    points: np.ndarray
    fields: dict[str, np.ndarray]


def exact_coordinates(raw: np.ndarray, scale: float, offset: float) -> np.ndarray:
    """Coordinates from stored integers: ``raw * scale + offset``, rounded once.

    When ``scale`` is ``m / 10**k`` and ``offset`` a multiple of ``10**-k``
    (a decimal scale and offset, as files use), the result is
    ``(raw * m + offset * 10**k) / 10**k``: integers below 2**53, exact, then
    one correctly rounded division.  Other scales use the formula as it
    stands.

    Examples
    --------
    >>> exact_coordinates(np.array([123456789]), 0.001, 500000.0).tolist()
    [623456.789]
    """
    raw = np.asarray(raw, dtype=np.float64)
    for k in _DECIMALS:
        p = 10.0**k
        m, shift = round(scale * p), round(offset * p)
        bound = np.abs(raw).max(initial=0.0) * m + abs(shift)
        if (
            m >= 1
            and abs(scale * p - m) <= 1e-14 * m
            and abs(offset * p - shift) <= 1e-6
            and bound < 2**53
        ):
            return (raw * m + shift) / p
    return raw * scale + offset


def _open(path: Path):
    """laspy's reader for ``path``, with errors as InterpError."""
    laspy = require("laspy", "las", "reading LAS/LAZ point clouds")
    if path.suffix.lower() == ".laz":
        require("lazrs", "las", "reading compressed LAZ point clouds")
    if not path.is_file():
        raise InterpError(f"{path}: no such file; check the name and folder")
    try:
        return laspy.open(path)
    except (laspy.errors.LaspyException, OSError, ValueError) as exc:
        raise InterpError(
            f"{path}: cannot read it as a LAS/LAZ point cloud ({exc}); check that the file is "
            "complete"
        ) from None


def _crs_text(header: object, path: Path) -> str | None:
    """The CRS of a LAS header as ``"EPSG:n"`` when it has a code, else WKT; None if absent."""
    require("pyproj", "las", "reading the coordinate reference system of a LAS file")
    try:
        crs = header.parse_crs()
    except Exception as exc:  # pyproj and laspy raise several kinds on a malformed CRS record
        raise InterpError(
            f"{path}: the coordinate reference system in the header cannot be read ({exc}); "
            "fix the file's CRS record"
        ) from None
    if crs is None:
        return None
    epsg = crs.to_epsg()
    return f"EPSG:{epsg}" if epsg else crs.to_wkt()


def las_crs(path: str | os.PathLike) -> str | None:
    """The coordinate reference system of a LAS/LAZ file, read from its header only.

    Returns
    -------
    str or None
        ``"EPSG:nnnn"`` when the CRS has an EPSG code, else its WKT; None
        when the file stores no CRS (none is assumed).

    Examples
    --------
    >>> import tempfile, pathlib, laspy
    >>> path = pathlib.Path(tempfile.mkdtemp()) / "c.las"
    >>> laspy.LasData(laspy.LasHeader(point_format=3, version="1.4")).write(path)
    >>> las_crs(path) is None
    True
    """
    path = Path(path)
    with _open(path) as reader:
        return _crs_text(reader.header, path)


def _check_coords(coords: Sequence[str]) -> tuple[str, ...]:
    names = tuple(str(c).strip().lower() for c in coords)
    if names not in (("x", "y"), ("x", "y", "z")):
        raise InterpError(
            f"a LAS/LAZ point cloud has coordinates x, y (z the value) or x, y, z; got coords "
            f"{tuple(coords)!r}"
        )
    return names


def _check_options(
    classes: Sequence[int] | None, every: int | None, lowest_per_cell: float | None
) -> tuple[np.ndarray | None, int, float | None]:
    if classes is not None:
        try:
            codes = np.unique(np.asarray(list(classes), dtype=np.float64))
        except (TypeError, ValueError):
            codes = np.array([np.nan])
        if not codes.size or (codes != np.round(codes)).any() or not (0 <= codes).all():
            raise InterpError(
                f"classes must be whole classification codes 0 to 255, such as 2 (ground); "
                f"got {list(classes)!r}"
            )
        if (codes > 255).any():
            raise InterpError(f"classification codes go up to 255; got {codes.max():g}")
        classes = codes.astype(np.int64)
    if every is None:
        every = 1
    elif isinstance(every, bool) or int(every) != every or every < 1:
        raise InterpError(f"every must be a positive whole number of points; got {every!r}")
    if lowest_per_cell is not None and not (np.isfinite(lowest_per_cell) and lowest_per_cell > 0):
        raise InterpError(f"lowest_per_cell must be a positive cell size; got {lowest_per_cell!r}")
    return classes, int(every), lowest_per_cell


def _no_data(header: object) -> dict[str, np.ndarray]:
    """The "no data" value of each extra dimension that has one, as stored (before scaling).

    LAS 1.4 (R15), Extra Bytes record: option bit 0 says the no_data member
    holds one.
    """
    out = {}
    for vlr in header.vlrs.get("ExtraBytesVlr"):
        for struct in vlr.extra_bytes_structs:
            if struct.options & 1:
                name = bytes(struct.name).rstrip(b"\0").decode("ascii", errors="replace")
                out[name] = np.asarray(struct.no_data[:])
    return out


def _columns(
    record: object, header: object, extra: list[str], no_data: dict[str, np.ndarray]
) -> dict[str, np.ndarray]:
    """x, y, z (exact) and the extra dimensions of a point record, float64; no data as NaN."""
    out = {
        axis: exact_coordinates(np.asarray(getattr(record, axis.upper())), scale, offset)
        for axis, scale, offset in zip("xyz", header.scales, header.offsets, strict=True)
    }
    for name in extra:
        values = np.asarray(record[name], dtype=np.float64)
        values = values.reshape(len(values), -1) if values.ndim > 1 else values
        if name in no_data:
            stored = np.asarray(record.array[name]).reshape(values.shape)
            flags = no_data[name][: values.shape[1]] if values.ndim > 1 else no_data[name][0]
            values = np.where(stored == flags, np.nan, values)
        out[name] = values
    return out


def _iter_columns(
    path: Path, classes: np.ndarray | None, every: int, chunk_points: int
) -> Iterator[dict[str, np.ndarray]]:
    """Columns of the points kept by the class filter and every-n-th thinning, by chunk."""
    if isinstance(chunk_points, bool) or int(chunk_points) != chunk_points or chunk_points < 1:
        raise InterpError(f"chunk_points must be a positive integer; got {chunk_points!r}")
    with (
        _open(path) as reader,
        task(f"reading {path.name}", total=reader.header.point_count, unit="points") as advance,
    ):
        header = reader.header
        extra = list(header.point_format.extra_dimension_names)
        clash = sorted({"x", "y", "z"} & {n.lower() for n in extra})
        if clash:
            raise InterpError(f"{path}: extra dimensions named {clash} clash with x, y, z")
        no_data = _no_data(header)
        found = np.zeros(256, dtype=np.int64)
        seen = kept = 0
        for record in reader.chunk_iterator(int(chunk_points)):
            advance(len(record))
            keep = np.ones(len(record), dtype=bool)
            if classes is not None:
                codes = np.asarray(record.classification, dtype=np.int64)
                found += np.bincount(codes, minlength=256)[:256]
                keep = np.isin(codes, classes)
            if every > 1:
                count = int(keep.sum())
                keep &= (seen + np.cumsum(keep) - 1) % every == 0
                seen += count
            if keep.any():
                kept += int(keep.sum())
                yield _columns(record if keep.all() else record[keep], header, extra, no_data)
        if not kept:
            if classes is not None and header.point_count:
                present = ", ".join(f"{c} ({found[c]:,})" for c in np.flatnonzero(found))
                raise InterpError(
                    f"{path}: no points of class {', '.join(map(str, classes))}; the file's "
                    f"classes (points) are {present}"
                )
            raise InterpError(f"{path}: the point cloud holds no points")


def _split(
    columns: dict[str, np.ndarray], coords: tuple[str, ...]
) -> tuple[np.ndarray, dict[str, np.ndarray]]:
    points = np.column_stack([columns[c] for c in coords])
    return points, {name: v for name, v in columns.items() if name not in coords}


def iter_las_chunks(
    path: str | os.PathLike,
    *,
    coords: Sequence[str] = ("x", "y"),
    classes: Sequence[int] | None = None,
    every: int | None = None,
    chunk_points: int = CHUNK_POINTS,
) -> Iterator[LasChunk]:
    """Stream a LAS/LAZ point cloud in chunks, keeping memory bounded.

    Parameters
    ----------
    path : path-like
    coords : ("x", "y") or ("x", "y", "z")
        The coordinates; ``z`` is a field unless named here.
    classes : sequence of int, optional
        Keep only points with these classification codes (2 ground, ...).
    every : int, optional
        Keep every n-th point (the first, the (n+1)-th, ...) of those the
        class filter keeps, counted across the whole file.
    chunk_points : int
        Points read from the file at a time.

    Yields
    ------
    LasChunk
        Chunks with at least one point.

    Examples
    --------
    >>> import tempfile, pathlib, laspy
    >>> path = pathlib.Path(tempfile.mkdtemp()) / "c.las"
    >>> las = laspy.LasData(laspy.LasHeader(point_format=3, version="1.4"))
    >>> las.x, las.y, las.z = [0.0, 1, 2, 3, 4], [0.0, 0, 1, 1, 2], [5.0, 6, 7, 8, 9]
    >>> las.write(path)
    >>> [c.fields["z"].tolist() for c in iter_las_chunks(path, every=2, chunk_points=2)]
    [[5.0], [7.0], [9.0]]
    """
    coords = _check_coords(coords)
    classes, every, _ = _check_options(classes, every, None)
    for columns in _iter_columns(Path(path), classes, every, chunk_points):
        yield LasChunk(*_split(columns, coords))


def _cell_keys(columns: dict[str, np.ndarray], size: float, origin: np.ndarray) -> np.ndarray:
    """One int64 key per point for its size x size cell, cells counted from ``origin``."""
    cells = [
        np.floor(columns[a] / size).astype(np.int64) - o for a, o in zip("xy", origin, strict=True)
    ]
    if any(np.abs(c).max(initial=0) >= 2**31 for c in cells):
        raise InterpError(
            f"lowest_per_cell {size:g} is too small for the extent of the cloud (over 2**31 "
            "cells along an axis); use a larger cell size"
        )
    return (cells[0] << 32) + cells[1]


def _lowest(
    keys: np.ndarray, columns: dict[str, np.ndarray]
) -> tuple[np.ndarray, dict[str, np.ndarray]]:
    """The lowest point of each cell (the first in order on equal z), sorted by key."""
    order = np.argsort(keys, kind="stable")
    keys, z = keys[order], columns["z"][order]
    start = np.r_[True, keys[1:] != keys[:-1]]
    group = np.cumsum(start) - 1
    low = np.flatnonzero(z == np.minimum.reduceat(z, np.flatnonzero(start))[group])
    first = low[np.r_[True, group[low[1:]] != group[low[:-1]]]]
    return keys[first], {name: v[order[first]] for name, v in columns.items()}


def _merge_lowest(
    kept: tuple[np.ndarray, dict[str, np.ndarray]],
    new: tuple[np.ndarray, dict[str, np.ndarray]],
) -> tuple[np.ndarray, dict[str, np.ndarray]]:
    """Cells kept so far updated by a later chunk's lowest points, sorted by key.

    A later point replaces a kept one only when strictly lower, so on a tie
    the point earlier in the file stays.
    """
    (keys, columns), (new_keys, new_columns) = kept, new
    at = np.searchsorted(keys, new_keys)
    seen = at < len(keys)
    seen[seen] = keys[at[seen]] == new_keys[seen]
    lower = np.flatnonzero(seen)[new_columns["z"][seen] < columns["z"][at[seen]]]
    for name, v in columns.items():
        v[at[lower]] = new_columns[name][lower]
    fresh = ~seen
    keys = np.concatenate([keys, new_keys[fresh]])
    # two sorted runs: the stable sort merges them in linear time
    order = np.argsort(keys, kind="stable")
    merged = {n: np.concatenate([v, new_columns[n][fresh]])[order] for n, v in columns.items()}
    return keys[order], merged


def read_las(
    path: str | os.PathLike,
    *,
    coords: Sequence[str] = ("x", "y"),
    classes: Sequence[int] | None = None,
    every: int | None = None,
    lowest_per_cell: float | None = None,
    chunk_points: int = CHUNK_POINTS,
) -> tuple[np.ndarray, dict[str, np.ndarray], str | None]:
    """Read a LAS/LAZ point cloud: points, fields and the CRS, filtered and thinned.

    The filters apply in this order, chunk by chunk as the file streams:
    ``classes``, then ``every``, then ``lowest_per_cell``.

    Parameters
    ----------
    path : path-like
    coords : ("x", "y") or ("x", "y", "z")
        The coordinates; ``z`` is the field ``z`` unless named here.
    classes : sequence of int, optional
        Keep only these classification codes (2 ground, 8 model key-point).
    every : int, optional
        Keep every n-th point of those kept so far.
    lowest_per_cell : float, optional
        Keep only the lowest point (smallest z) in each square cell of this
        size, cells aligned on multiples of the size in x and y: a first
        ground surface from a raw cloud.  On a tie the first point in the
        file is kept.  The result is in cell order, not file order.
    chunk_points : int
        Points read at a time.

    Returns
    -------
    points : ndarray (n, 2) or (n, 3) float64
    fields : dict of str to ndarray
        ``z`` (unless a coordinate), then each extra dimension by name,
        (n,) or (n, c) float64, NaN where it holds its "no data" value.
    crs : str or None
        ``"EPSG:nnnn"`` or WKT from the header; None when it stores none.

    Examples
    --------
    >>> import tempfile, pathlib, laspy
    >>> path = pathlib.Path(tempfile.mkdtemp()) / "c.las"
    >>> las = laspy.LasData(laspy.LasHeader(point_format=3, version="1.4"))
    >>> las.x, las.y, las.z = [0.2, 0.7, 1.5], [0.1, 0.4, 0.5], [3.0, 2.0, 4.0]
    >>> las.classification = [2, 2, 1]
    >>> las.write(path)
    >>> points, fields, crs = read_las(path, classes=[2], lowest_per_cell=1.0)
    >>> points.tolist(), fields["z"].tolist(), crs
    ([[0.7, 0.4]], [2.0], None)
    """
    path = Path(path)
    coords = _check_coords(coords)
    classes, every, lowest_per_cell = _check_options(classes, every, lowest_per_cell)
    lowest: tuple[np.ndarray, dict[str, np.ndarray]] | None = None
    parts = []
    for columns in _iter_columns(path, classes, every, chunk_points):
        if lowest_per_cell is None:
            parts.append(columns)
            continue
        if lowest is None:
            origin = np.floor(
                [columns["x"][0] / lowest_per_cell, columns["y"][0] / lowest_per_cell]
            )
            origin = origin.astype(np.int64)
        cells = _lowest(_cell_keys(columns, lowest_per_cell, origin), columns)
        lowest = cells if lowest is None else _merge_lowest(lowest, cells)
    kept = (
        lowest[1]
        if lowest is not None
        else {n: np.concatenate([p[n] for p in parts]) for n in parts[0]}
    )
    return (*_split(kept, coords), las_crs(path))


def read_las_points(
    path: str | os.PathLike,
    *,
    coords: Sequence[str] = ("x", "y"),
    classes: Sequence[int] | None = None,
    every: int | None = None,
    lowest_per_cell: float | None = None,
) -> tuple[np.ndarray, dict[str, np.ndarray]]:
    """Points and fields of :func:`read_las` (same options), without the CRS: the
    ``.las``/``.laz`` entry of :data:`interp.io.POINT_READERS`.

    Examples
    --------
    >>> import tempfile, pathlib, laspy
    >>> path = pathlib.Path(tempfile.mkdtemp()) / "c.laz"
    >>> las = laspy.LasData(laspy.LasHeader(point_format=3, version="1.4"))
    >>> las.x, las.y, las.z = [0.2, 0.7, 1.5], [0.1, 0.4, 0.5], [3.0, 2.0, 4.0]
    >>> las.write(path)
    >>> points, fields = read_las_points(path, every=2)
    >>> points.tolist(), list(fields)
    ([[0.2, 0.1], [1.5, 0.5]], ['z'])
    """
    options = {"classes": classes, "every": every, "lowest_per_cell": lowest_per_cell}
    return read_las(path, coords=coords, **options)[:2]
