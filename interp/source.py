"""Sources: turning a file into fields, describing them, and sampling them file to file.

A source is either a point file (delimited text with a header, or a LAS/LAZ
point cloud; its value columns are fitted on the fly with :func:`interp.fit`)
or a mesh file that meshio reads (its point data are the fields).  These
functions are what the command line calls; they are as usable from Python.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator, Sequence
from contextlib import ExitStack
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from interp._fit import fit
from interp.errors import InterpError
from interp.field import Field
from interp.io import (
    TableWriter,
    component_names,
    field_columns,
    is_las_file,
    iter_las_chunks,
    iter_point_chunks,
    point_reader,
    read,
)


def is_point_file(path: str | Path) -> bool:
    """True when ``path`` is read as a point file rather than a mesh file (its
    suffix is in :data:`interp.io.POINT_READERS`; anything else goes to meshio).

    Examples
    --------
    >>> is_point_file("survey.csv"), is_point_file("part.vtu")
    (True, False)
    """
    return point_reader(path) is not None


def load(
    path: str | Path,
    *,
    coords: Sequence[str] = ("x", "y"),
    order: int = 1,
    max_edge: float | None = None,
    boundary: object | None = None,
    breaklines: list[object] | None = None,
    field: str | None = None,
    classes: Sequence[int] | None = None,
    every: int | None = None,
    lowest_per_cell: float | None = None,
) -> dict[str, Field]:
    """Read a source file as named fields.

    Parameters
    ----------
    path : str or Path
        A point file (``.csv``, ``.txt``, ``.xyz``, ``.tsv``, ``.dat``,
        ``.pts``), a LAS/LAZ point cloud (``.las``, ``.laz``; ``z`` is its
        value, extra dimensions further fields) or a mesh file that meshio
        reads.
    coords : sequence of str
        Point files only: the coordinate columns; every other numeric column
        is a field.  The default ``("x", "y")`` makes ``z`` of a survey file
        its value.
    order, max_edge, boundary, breaklines
        Point files only: passed to :func:`interp.fit`.  Breakline values
        are used when one field is fitted; with several, the lines are used
        as x, y only (each field's values along them come from its data).
    field : str, optional
        Keep only this field.
    classes, every, lowest_per_cell
        LAS/LAZ files only: classification codes to keep, every n-th point,
        the lowest point per square cell of this size; see
        :func:`interp.io._las.read_las`.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> d = pathlib.Path(tempfile.mkdtemp())
    >>> _ = (d / "s.csv").write_text("x,y,z\\n0,0,1\\n1,0,2\\n0,1,3\\n")
    >>> f = load(d / "s.csv")["z"]
    >>> float(f([[0.5, 0.0]])[0])
    1.5
    """
    thinning = {"classes": classes, "every": every, "lowest_per_cell": lowest_per_cell}
    thinning = {k: v for k, v in thinning.items() if v is not None}
    if thinning and not is_las_file(path):
        raise InterpError(
            f"{path}: classes, every and lowest_per_cell apply to LAS/LAZ point clouds only"
        )
    reader = point_reader(path)
    if reader is not None:
        points, values = reader(path, coords=tuple(coords), **thinning)
        if not values:
            raise InterpError(
                f"{path}: no value columns besides the coordinates {', '.join(coords)}"
            )
        chosen = choose_fields(values, field, path)
        if breaklines is not None and len(chosen) > 1:
            breaklines = [np.asarray(line, dtype=float)[:, :2] for line in breaklines]
        options = {"order": order, "max_edge": max_edge, "boundary": boundary}
        fields = {}
        for name, v in chosen.items():
            try:
                fields[name] = fit(points, v, **options, breaklines=breaklines, name=name)
            except InterpError as exc:
                raise InterpError(f"{path}, column {name!r}: {exc}") from None
        return fields
    mesh, data = read(path)
    if not data:
        raise InterpError(f"{path}: the mesh file has no point data to use as a field")
    return {name: Field(mesh, v, name=name) for name, v in choose_fields(data, field, path).items()}


def choose_fields(values: dict[str, np.ndarray], field: str | None, path: str | Path) -> dict:
    """All of ``values``, or only the one named ``field`` (an error lists the names).

    Examples
    --------
    >>> list(choose_fields({"z": 1, "t": 2}, "t", "f.csv"))
    ['t']
    """
    if field is None:
        return values
    if field not in values:
        raise InterpError(
            f"{path}: no field named {field!r}; available: {', '.join(values) or 'none'}"
        )
    return {field: values[field]}


def describe(fields: dict[str, Field]) -> dict:
    """A summary of a source: dimension, counts, bounds, field ranges, cell quality.

    Examples
    --------
    >>> import numpy as np
    >>> from interp import Field, Mesh
    >>> m = Mesh([[0.0, 0], [1, 0], [0, 1]], [[0, 1, 2]])
    >>> info = describe({"z": Field(m, [1.0, 2.0, 4.0])})
    >>> info["cells"], info["measure"], info["fields"]["z"]["max"]
    (1, 0.5, 4.0)
    """
    mesh = next(iter(fields.values())).mesh
    quality = mesh.quality()
    out = {
        "dimension": mesh.gdim,
        "cell_type": mesh.cell_type,
        "nodes": mesh.n_nodes,
        "cells": mesh.n_cells,
        "bounds": mesh.bounds.tolist(),
        "measure": float(mesh.measure().sum()),
        "quality": {
            "radius_ratio_min": float(quality.min()),
            "radius_ratio_median": float(np.median(quality)),
        },
        "fields": {},
    }
    if mesh.dim == 2:
        out["quality"]["smallest_angle_deg"] = float(mesh.angles().min())
    for name, f in fields.items():
        v = f.values
        finite = v[np.isfinite(v).all(axis=1)] if v.ndim == 2 else v[np.isfinite(v)]
        out["fields"][name] = {
            "components": f.n_components,
            "min": float(finite.min()) if finite.size else None,
            "max": float(finite.max()) if finite.size else None,
            "nan": int(np.isnan(v).any(axis=1).sum() if v.ndim == 2 else np.isnan(v).sum()),
        }
    return out


@dataclass(frozen=True)
class SampleReport:
    """What :func:`sample_file` did: rows read and rows outside the mesh."""

    rows: int
    outside: int
    path: Path


def sample_file(
    fields: dict[str, Field],
    query: str | Path,
    out: str | Path,
    *,
    coords: Sequence[str] = ("x", "y"),
    chunk_rows: int = 500_000,
    progress: Callable[[int], None] | None = None,
    evaluate: Callable[[Field, np.ndarray], np.ndarray] | None = None,
) -> SampleReport:
    """Evaluate fields at the points of a query file, streaming it in chunks.

    Each row of the query file is written unchanged, followed by one column
    per field (one per component for vector fields); points outside the mesh
    get empty cells.  A LAS/LAZ query cloud (``.las``, ``.laz``) is streamed
    the same way and written as comma-separated columns ``x, y`` (``z``) and
    its fields (``z`` and extra dimensions), then the sampled fields.  Memory
    stays bounded by ``chunk_rows`` however long the file.  The output is
    written atomically.

    Parameters
    ----------
    evaluate : callable, optional
        ``evaluate(field, points) -> values``; default ``field(points)``.  The
        dask layer passes one that spreads the chunk over workers.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> from interp import Field, Mesh
    >>> d = pathlib.Path(tempfile.mkdtemp())
    >>> _ = (d / "q.csv").write_text("id,x,y\\nA,0.25,0.25\\nB,5,5\\n")
    >>> f = Field(Mesh([[0.0, 0], [1, 0], [0, 1]], [[0, 1, 2]]), [0.0, 4.0, 8.0])
    >>> sample_file({"z": f}, d / "q.csv", d / "o.csv").outside
    1
    >>> (d / "o.csv").read_text().splitlines()
    ['id,x,y,z', 'A,0.25,0.25,3', 'B,5,5,']
    """
    if Path(out).resolve() == Path(query).resolve():
        raise InterpError(
            f"the output {out} is the query file itself; writing it would destroy the query "
            "file: give another output file"
        )
    evaluate = evaluate or (lambda f, p: f(p))
    rows = outside = 0
    names = [c for n, f in fields.items() for c in component_names(n, f.n_components)]
    with ExitStack() as stack:
        writer = None
        for head, delimiter, text, points, lead in _query_blocks(query, coords, chunk_rows):
            if writer is None:
                writer = stack.enter_context(TableWriter(out, head + names, delimiter))
            values = np.hstack(
                [evaluate(f, points).reshape(len(points), -1) for f in fields.values()]
            )
            outside += int(np.isnan(values).all(axis=1).sum())
            writer.write(text, values if lead is None else np.hstack([lead, values]))
            rows += len(points)
            if progress:
                progress(rows)
        if writer is None:
            raise InterpError(f"{query}: the query file has no data rows")
    return SampleReport(rows, outside, Path(out))


def _query_blocks(
    query: str | Path, coords: Sequence[str], chunk_rows: int
) -> Iterator[tuple[list[str], str, list[str] | None, np.ndarray, np.ndarray | None]]:
    """Blocks of a query file: header, delimiter, raw rows, points, leading numbers.

    A point file's rows are written back as they are (no leading numbers); a
    LAS/LAZ cloud's points as comma-separated x, y(, z) and their fields.
    """
    if is_las_file(query):  # LAS/LAZ query clouds
        for chunk in iter_las_chunks(query, coords=coords, chunk_points=chunk_rows):
            columns = dict(zip(coords, chunk.points.T, strict=True)) | chunk.fields
            head, lead = field_columns(columns, len(chunk.points))
            yield head, ",", None, chunk.points, lead
        return
    for chunk in iter_point_chunks(query, coords=tuple(coords), chunk_rows=chunk_rows):
        yield list(chunk.names), chunk.delimiter, chunk.rows, chunk.points, None
