"""Sources: turning a file into fields, describing them, and sampling them file to file.

A source is either a point file (delimited text with a header, or a LAS/LAZ
point cloud; its value columns are fitted on the fly with :func:`interp.fit`)
or a mesh file that meshio reads (its point data are the fields).  These
functions are what the command line calls; they are as usable from Python.
"""

from __future__ import annotations

import dataclasses
from collections import deque
from collections.abc import Callable, Iterator, Sequence
from concurrent.futures import ThreadPoolExecutor
from contextlib import ExitStack
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from interp._fit import fit
from interp._progress import task
from interp._renamed import renamed
from interp.errors import InterpError
from interp.field import Field
from interp.io import (
    GRID_READERS,
    POINT_READERS,
    TableWriter,
    component_names,
    field_columns,
    is_las_file,
    iter_las_chunks,
    iter_point_chunks,
    point_reader,
    read,
    read_grid,
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


@renamed(field="name")
def load(
    path: str | Path,
    *,
    coords: Sequence[str] = ("x", "y"),
    order: int = 1,
    max_edge: float | None = None,
    boundary: object | None = None,
    breaklines: list[object] | None = None,
    name: str | None = None,
    classes: Sequence[int] | None = None,
    every: int | None = None,
    lowest_per_cell: float | None = None,
    units: str | None = None,
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
    name : str, optional
        Keep only the field of this name.  (``field=`` is the old spelling
        of this keyword.)
    classes, every, lowest_per_cell
        LAS/LAZ files only: classification codes to keep, every n-th point,
        the lowest point per square cell of this size; see
        :func:`interp.io._las.read_las`.
    units : str, optional
        Units of the values given to every field (labels, grids, reports).

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
    if point_reader(path) is not None:
        points, values = read_source_points(path, coords=coords, **thinning)
        if not values:
            raise InterpError(
                f"{path}: no value columns besides the coordinates {', '.join(coords)}"
            )
        chosen = choose_fields(values, name, path)
        if breaklines is not None and len(chosen) > 1:
            breaklines = [np.asarray(line, dtype=float)[:, :2] for line in breaklines]
        options = {"order": order, "max_edge": max_edge, "boundary": boundary}
        fields = {}
        for column, v in chosen.items():
            try:
                fields[column] = fit(
                    points, v, **options, breaklines=breaklines, name=column, units=units
                )
            except InterpError as exc:
                raise InterpError(f"{path}, column {column!r}: {exc}") from None
        return fields
    mesh, data = read(path)
    if not data:
        raise InterpError(f"{path}: the mesh file has no point data to use as a field")
    chosen = choose_fields(data, name, path)
    return {key: Field(mesh, v, name=key, units=units) for key, v in chosen.items()}


def read_source_points(
    path: str | Path,
    *,
    coords: Sequence[str] = ("x", "y"),
    classes: Sequence[int] | None = None,
    every: int | None = None,
    lowest_per_cell: float | None = None,
) -> tuple[np.ndarray, dict[str, np.ndarray]]:
    """Read the points and value columns of a point file or a LAS/LAZ cloud.

    The reader is the one :data:`interp.io.POINT_READERS` has for the
    suffix; ``classes``, ``every`` and ``lowest_per_cell`` thin a LAS/LAZ
    cloud as it is read (see :func:`interp.io._las.read_las`) and are
    refused for any other source, as is a mesh file.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> d = pathlib.Path(tempfile.mkdtemp())
    >>> _ = (d / "s.csv").write_text("x,y,z\\n0,0,1\\n1,0,2\\n0,1,3\\n")
    >>> points, values = read_source_points(d / "s.csv")
    >>> points.shape, values["z"].tolist()
    ((3, 2), [1.0, 2.0, 3.0])
    """
    thinning = {"classes": classes, "every": every, "lowest_per_cell": lowest_per_cell}
    thinning = {k: v for k, v in thinning.items() if v is not None}
    if thinning and not is_las_file(path):
        raise InterpError(
            f"{path}: the thinning options (classes, every, lowest_per_cell; on the command "
            "line --classes, --every, --lowest-per-cell) apply to LAS/LAZ point clouds only"
        )
    reader = point_reader(path)
    if reader is None:
        raise InterpError(
            f"{path}: not a point file; give one ending in {', '.join(POINT_READERS)}"
        )
    return reader(path, coords=tuple(coords), **thinning)


def choose_fields(values: dict[str, np.ndarray], name: str | None, path: str | Path) -> dict:
    """All of ``values``, or only the one called ``name`` (an error lists the names).

    Examples
    --------
    >>> list(choose_fields({"z": 1, "t": 2}, "t", "f.csv"))
    ['t']
    """
    if name is None:
        return values
    if name not in values:
        raise InterpError(
            f"{path}: no field named {name!r}; available: {', '.join(values) or 'none'}"
        )
    return {name: values[name]}


#: what the measure of a mesh's cells is, by their topological dimension.
MEASURE_NAMES = {1: "length", 2: "area", 3: "volume"}


def describe(fields: dict[str, Field]) -> dict:
    """A summary of a source: dimension, counts, bounds, field ranges, cell quality.

    ``measure`` is the total length, area or volume of the cells, named by
    ``measure_name`` after the cells' own dimension: lines in 2D or 3D have a
    length, triangles in 3D an area, whatever the dimension of the points.

    Examples
    --------
    >>> import numpy as np
    >>> from interp import Field, Mesh
    >>> m = Mesh([[0.0, 0], [1, 0], [0, 1]], [[0, 1, 2]])
    >>> info = describe({"z": Field(m, [1.0, 2.0, 4.0])})
    >>> info["cells"], info["measure"], info["measure_name"], info["fields"]["z"]["max"]
    (1, 0.5, 'area', 4.0)
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
        "measure_name": MEASURE_NAMES[mesh.dim],
        "quality": {
            "radius_ratio_min": float(quality.min()),
            "radius_ratio_median": float(np.median(quality)),
        },
        "fields": {},
    }
    if mesh.dim == 2:
        out["quality"]["smallest_angle_deg"] = float(mesh.angles().min())
    for name, f in fields.items():
        out["fields"][name] = value_summary(f.values, f.n_components)
    return out


def value_summary(values: object, components: int) -> dict:
    """Components, finite range and count of places without data (NaN) of an array
    whose last axis holds the components when there are several.

    Examples
    --------
    >>> value_summary(np.array([[1.0, 2.0], [np.nan, 5.0]]), 2)
    {'components': 2, 'min': 1.0, 'max': 2.0, 'nan': 1}
    """
    v = np.asarray(values, dtype=np.float64).reshape(-1, components)
    missing = np.isnan(v).any(axis=1)
    finite = v[np.isfinite(v).all(axis=1)]
    return {
        "components": components,
        "min": float(finite.min()) if finite.size else None,
        "max": float(finite.max()) if finite.size else None,
        "nan": int(missing.sum()),
    }


def is_grid_file(path: str | Path) -> bool:
    """True when ``path`` has the suffix of a grid format interp reads back
    (:data:`interp.io.GRID_READERS`: ``.npz``, ``.vti``, ``.zarr``, ``.tif``, ``.nc``).
    A ``.csv`` is a point file to every command, a grid one included (its
    units are in its column names); :func:`interp.io.read_grid` reads it as a grid.

    Examples
    --------
    >>> is_grid_file("yard.vti"), is_grid_file("yard.tif"), is_grid_file("yard.csv")
    (True, True, False)
    """
    suffix = Path(path).suffix.lower()
    return suffix in GRID_READERS and suffix != ".csv"


def describe_grid(path: str | Path) -> dict:
    """A summary of a grid file: shape, spacing, bounds and the range of each field.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> from interp import Grid
    >>> g = Grid((np.arange(3.0), np.arange(2.0) * 0.5), {"z": np.arange(6.0).reshape(3, 2)})
    >>> info = describe_grid(g.save(pathlib.Path(tempfile.mkdtemp()) / "g.vti"))
    >>> info["shape"], info["spacing"], info["bounds"], info["fields"]["z"]["max"]
    ([3, 2], [1.0, 0.5], [[0.0, 0.0], [2.0, 0.5]], 5.0)
    """
    axes, fields, units = read_grid(path)
    out = {
        "dimension": len(axes),
        "shape": [len(a) for a in axes],
        "spacing": [float(a[1] - a[0]) if len(a) > 1 else 0.0 for a in axes],
        "bounds": [[float(a[0]) for a in axes], [float(a[-1]) for a in axes]],
        "fields": {},
    }
    for name, v in fields.items():
        comps = 1 if v.ndim == len(axes) else int(v.shape[-1])
        out["fields"][name] = value_summary(v, comps) | (
            {"units": units[name]} if name in units else {}
        )
    return out


@dataclass(frozen=True)
class SampleReport:
    """What :func:`sample_file` did: rows read, rows outside the mesh, and check points.

    ``columns`` maps each sampled field (component) to its column in the
    output.  ``checks`` holds, for each sampled column that the query file
    also has as a known value, ``count`` (rows with both), ``rms``, ``mean``
    and ``max_abs`` of the residual known minus sampled (None without rows).
    """

    rows: int
    outside: int
    path: Path
    columns: dict[str, str] = dataclasses.field(default_factory=dict)
    checks: dict[str, dict] = dataclasses.field(default_factory=dict)


#: suffix of a sampled column whose name the query file already uses.
SAMPLED = "_sampled"

#: suffix of the residual column of a check point (known minus sampled).
RESIDUAL = "_residual"

#: blocks of query rows :func:`sample_file` reads ahead of the one it evaluates.
READ_AHEAD = 2


@renamed(query="query_file")
def sample_file(
    fields: dict[str, Field],
    query_file: str | Path,
    out: str | Path,
    *,
    coords: Sequence[str] = ("x", "y"),
    chunk_rows: int = 100_000,
    evaluate: Callable[[Field, np.ndarray], np.ndarray] | None = None,
) -> SampleReport:
    """Evaluate fields at the points of a query file, streaming it in chunks.

    Each row of the query file is written unchanged, followed by one column
    per field (one per component for vector fields); points outside the mesh
    get empty cells.  A sampled column whose name the query file already has
    (compared ignoring case) is written as ``<name>_sampled``, so no two
    columns share a name.  When that query column holds numbers it is taken
    as a known value at a check point: a column ``<name>_residual``, known
    minus sampled, follows, and the report gives the RMS of the residuals.
    A LAS/LAZ query cloud (``.las``, ``.laz``) is streamed the same way and
    written as comma-separated columns ``x, y`` (``z``) and its fields (``z`` and
    extra dimensions), then the sampled fields.  The three stages overlap: a
    thread reads and parses up to :data:`READ_AHEAD` blocks ahead, the calling
    thread evaluates one block (``evaluate`` is called there), and another
    thread formats and writes the block before it; an error in any stage is
    raised in the calling thread, once the other two have stopped.  Memory
    stays bounded by ``chunk_rows`` however long the file.  The output is
    written atomically.

    Parameters
    ----------
    fields : dict of str to Field
        The fields to sample, by the names their columns get.
    query_file : str or Path
        The query points: a point file or a LAS/LAZ cloud.  (``query=`` is
        the old spelling of this keyword.)
    out : str or Path
        The output file.
    coords : sequence of str
        The coordinate columns of the query file.
    chunk_rows : int
        Query rows read, evaluated and written at a time.
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
    >>> _ = (d / "c.csv").write_text("x,y,z\\n0.25,0.25,3.5\\n0.5,0,1.5\\n")
    >>> report = sample_file({"z": f}, d / "c.csv", d / "o.csv")
    >>> (d / "o.csv").read_text().splitlines()
    ['x,y,z,z_sampled,z_residual', '0.25,0.25,3.5,3,0.5', '0.5,0,1.5,2,-0.5']
    >>> report.checks["z_sampled"]["rms"]
    0.5
    """
    if Path(out).resolve() == Path(query_file).resolve():
        raise InterpError(
            f"the output {out} is the query file itself; writing it would destroy the query "
            "file: give another output file"
        )
    evaluate = evaluate or (lambda f, p: f(p))
    rows = outside = 0
    sampled = [c for n, f in fields.items() for c in component_names(n, f.n_components)]
    with ExitStack() as stack:
        advance = stack.enter_context(task("sampling", unit="rows"))
        blocks = _query_blocks(query_file, coords, chunk_rows)
        stack.callback(blocks.close)
        reader = _stage(stack)
        ahead = deque(reader.submit(next, blocks, None) for _ in range(READ_AHEAD))
        writer = written = None
        while (block := ahead.popleft().result()) is not None:
            ahead.append(reader.submit(next, blocks, None))
            head, delimiter, text, points, lead, numeric = block
            if writer is None:
                columns, known, residuals = _output_columns(head, numeric, sampled)
                header = head + [h for c in sampled for h in (columns[c], residuals.get(c)) if h]
                writer = stack.enter_context(TableWriter(out, header, delimiter))
                formatter = _stage(stack)
                sums = {c: np.zeros(3) for c in known}
                worst = dict.fromkeys(known, 0.0)
            values = np.hstack(
                [evaluate(f, points).reshape(len(points), -1) for f in fields.values()]
            )
            outside += int(np.isnan(values).all(axis=1).sum())
            table = []
            for j, c in enumerate(sampled):
                table.append(values[:, j])
                if c in known:
                    r = numeric[known[c]] - values[:, j] if known[c] in numeric else None
                    r = np.full(len(values), np.nan) if r is None else r
                    table.append(r)
                    ok = r[np.isfinite(r)]
                    sums[c] += (ok.size, ok.sum(), (ok**2).sum())
                    worst[c] = max(worst[c], float(np.abs(ok).max(initial=0.0)))
            cells = np.column_stack(table)
            if written is not None:
                written.result()
            written = formatter.submit(
                writer.write, text, cells if lead is None else np.hstack([lead, cells])
            )
            rows += len(points)
            advance(len(points))
        if writer is None:
            raise InterpError(f"{query_file}: the query file has no data rows")
        written.result()
    checks = {columns[c]: _check_summary(sums[c], worst[c]) for c in known}
    return SampleReport(rows, outside, Path(out), columns, checks)


def _stage(stack: ExitStack) -> ThreadPoolExecutor:
    """A thread of its own for one stage of :func:`sample_file`, its work run in
    order; when ``stack`` closes, work not started is dropped and the thread joined."""
    pool = ThreadPoolExecutor(1)
    stack.callback(pool.shutdown, cancel_futures=True)
    return pool


def _output_columns(names: list[str], numeric: dict, sampled: list[str]) -> tuple[dict, ...]:
    """For each sampled column: its output name, the numeric query column it checks
    against, and the name of its residual column; no name is used twice."""
    query = {n.casefold(): n for n in names}
    taken = set(query)
    columns, known, residuals = {}, {}, {}
    for c in sampled:
        if c.casefold() not in query:
            columns[c] = _free(c, "", taken)
            continue
        columns[c] = _free(c, SAMPLED, taken)
        if query[c.casefold()] in numeric:
            known[c] = query[c.casefold()]
            residuals[c] = _free(c, RESIDUAL, taken)
    return columns, known, residuals


def _free(name: str, suffix: str, taken: set[str]) -> str:
    """``name + suffix``, numbered when a column already has that name; marked as taken."""
    out, k = name + suffix, 1
    while out.casefold() in taken:
        k += 1
        out = f"{name}{suffix}{k}"
    taken.add(out.casefold())
    return out


def _check_summary(sums: np.ndarray, worst: float) -> dict:
    count, total, squares = int(sums[0]), float(sums[1]), float(sums[2])
    if not count:
        return {"count": 0, "rms": None, "mean": None, "max_abs": None}
    return {
        "count": count,
        "rms": float(np.sqrt(squares / count)),
        "mean": total / count,
        "max_abs": worst,
    }


def _query_blocks(
    query: str | Path, coords: Sequence[str], chunk_rows: int
) -> Iterator[tuple[list[str], str, bytes | None, np.ndarray, np.ndarray | None, dict]]:
    """Blocks of a query file: header, delimiter, raw rows, points, leading numbers,
    and the numeric query columns by name.

    A point file's rows are written back as they are (no leading numbers); a
    LAS/LAZ cloud's points as comma-separated x, y(, z) and their fields.
    """
    if is_las_file(query):  # LAS/LAZ query clouds
        for chunk in iter_las_chunks(query, coords=coords, chunk_points=chunk_rows):
            columns = dict(zip(coords, chunk.points.T, strict=True)) | chunk.fields
            head, lead = field_columns(columns, len(chunk.points))
            yield head, ",", None, chunk.points, lead, columns
        return
    for chunk in iter_point_chunks(query, coords=tuple(coords), chunk_rows=chunk_rows):
        yield list(chunk.names), chunk.delimiter, chunk.text, chunk.points, None, chunk.values
