"""Evaluating fields on dask: query sets and grids larger than memory, and worker processes.

The mesh fits in memory; the query points or grid nodes do not.  Every
function here splits the points into blocks and evaluates each block with the
ordinary in-memory code (:class:`interp.Field`, :meth:`interp.Mesh.locate`),
so the results equal the in-memory ones exactly.  The field or mesh, with its
spatial index already built, is put in the dask graph once, as a single key
that every block refers to: a distributed scheduler sends it to each worker
once, not once per block.

dask, distributed and zarr are the optional ``dask`` extra; they are imported
only when one of these functions runs.
"""

from __future__ import annotations

import os
import shutil
import socket
import sys
import uuid
import weakref
from collections.abc import Callable, Iterator, Mapping
from contextlib import ExitStack, contextmanager
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from interp.errors import InterpError
from interp.field import Field
from interp.grid import Grid, as_fields
from interp.index import Location
from interp.mesh import Mesh, as_points

if TYPE_CHECKING:
    import dask.array
    from dask.delayed import Delayed

#: name stored in a Zarr store's attributes to mark a grid written by :func:`save_zarr`.
ZARR_MARK = "interp.grid"
#: version of the Zarr grid layout described in :func:`save_zarr`.
ZARR_VERSION = 1
#: seconds allowed to reach a dask scheduler.
CONNECT_TIMEOUT = 10

# a stable graph key per shipped object, so that one object used twice in a
# computation is still sent once
_KEYS: weakref.WeakKeyDictionary[object, str] = weakref.WeakKeyDictionary()


def is_dask(obj: object) -> bool:
    """True when ``obj`` is a dask array; never imports dask.

    Examples
    --------
    >>> import dask.array as da
    >>> is_dask(np.zeros(3)), is_dask(da.zeros(3))
    (False, True)
    """
    array = sys.modules.get("dask.array")
    return array is not None and isinstance(obj, array.Array)


def _ship(*objs: Field | Mesh) -> Delayed:
    """One graph key holding ``objs`` (a tuple), their spatial indexes built."""
    import dask

    for obj in objs:
        _ = (obj.mesh if isinstance(obj, Field) else obj).index
    names = [_KEYS.setdefault(obj, uuid.uuid4().hex) for obj in objs]
    return dask.delayed(objs, name="interp-shipped-" + dask.base.tokenize(*names), traverse=False)


def _dask_points(points: object, gdim: int) -> dask.array.Array:
    """Validate a dask array of query points: (n, gdim) float64, one chunk across columns."""
    if not is_dask(points):
        raise InterpError(
            f"expected a dask array of query points, got {type(points).__name__}; "
            "evaluate numpy arrays with the field directly"
        )
    if points.ndim == 1 and gdim == 1:
        points = points[:, None]
    if points.ndim != 2 or points.shape[1] != gdim:
        raise InterpError(
            f"query points must have shape (n, {gdim}) for a {gdim}D mesh; got a dask array "
            f"of shape {points.shape}"
        )
    return points.astype(np.float64).rechunk({1: -1})


def _evaluate_block(points: np.ndarray, *, shipped: tuple[Field], what: str, outside: float):
    (field,) = shipped
    return field(points, outside) if what == "value" else field.gradient(points)


def evaluate(
    field: Field, points: dask.array.Array, *, what: str = "value", outside: float = np.nan
) -> dask.array.Array:
    """Evaluate a field, or its gradient, at a dask array of query points, lazily.

    Parameters
    ----------
    field : Field
        The field; it is sent to the workers once, with its mesh's spatial index.
    points : dask array (n, g)
        Query points chunked along rows (columns are merged into one chunk).
    what : {"value", "gradient"}
        Field values, or spatial gradients.
    outside : float
        Value for points outside the mesh (values only; gradients are NaN there).

    Returns
    -------
    dask array
        ``(n,)`` or ``(n, c)`` values, ``(n, g)`` or ``(n, g, c)`` gradients, with
        the row chunks of ``points``; equal to ``field(points)`` or
        ``field.gradient(points)`` computed in memory.

    Examples
    --------
    >>> import dask.array as da
    >>> from interp import Field, Mesh
    >>> f = Field(Mesh([[0.0, 0], [1, 0], [0, 1]], [[0, 1, 2]]), [0.0, 4.0, 8.0])
    >>> pts = da.from_array(np.array([[0.25, 0.25], [2.0, 2.0]]), chunks=1)
    >>> evaluate(f, pts).compute().tolist()
    [3.0, nan]
    >>> evaluate(f, pts, what="gradient").compute()[0].tolist()
    [4.0, 8.0]
    """
    import dask.array as da

    if not isinstance(field, Field):
        raise InterpError(f"evaluate needs an interp.Field, not {type(field).__name__}")
    if what not in ("value", "gradient"):
        raise InterpError(f"what must be 'value' or 'gradient'; got {what!r}")
    pts = _dask_points(points, field.mesh.gdim)
    core = {"value": ("()", "(c)"), "gradient": ("(g)", "(g,c)")}[what][field.values.ndim - 1]
    return da.apply_gufunc(
        _evaluate_block,
        "(g)->" + core,
        pts,
        output_dtypes=np.float64,
        output_sizes={"c": field.n_components},
        shipped=_ship(field),
        what=what,
        outside=float(outside),
    )


def _locate_block(points: np.ndarray, *, shipped: tuple[Mesh]) -> tuple[np.ndarray, np.ndarray]:
    (mesh,) = shipped
    loc = mesh.locate(points)
    return loc.cells, loc.bary


def locate(mesh: Mesh, points: dask.array.Array) -> Location:
    """Locate a dask array of query points in a mesh, lazily.

    Returns
    -------
    Location
        Whose ``cells`` (n,) int64 and ``bary`` (n, dim + 1) are dask arrays
        chunked like the rows of ``points``; compute them together
        (``dask.compute(loc.cells, loc.bary)``) to locate each block once.

    Examples
    --------
    >>> import dask, dask.array as da
    >>> from interp import Mesh
    >>> m = Mesh([[0.0, 0], [1, 0], [0, 1]], [[0, 1, 2]])
    >>> loc = locate(m, da.from_array(np.array([[0.25, 0.25], [2.0, 2.0]]), chunks=1))
    >>> cells, bary = dask.compute(loc.cells, loc.bary)
    >>> cells.tolist(), bary[0].tolist()
    ([0, -1], [0.5, 0.25, 0.25])
    """
    import dask.array as da

    if not isinstance(mesh, Mesh):
        raise InterpError(f"locate needs an interp.Mesh, not {type(mesh).__name__}")
    pts = _dask_points(points, mesh.gdim)
    shipped = _ship(mesh)
    cells, bary = da.apply_gufunc(
        _locate_block,
        "(g)->(),(k)",
        pts,
        output_dtypes=(np.int64, np.float64),
        output_sizes={"k": mesh.dim + 1},
        shipped=shipped,
    )
    return Location(cells, bary)


def _grid_block(*coords: np.ndarray, shipped: tuple[Field, ...]):
    """Evaluate fields at the nodes of one block; ``coords`` broadcast to the block.

    Returns one array per field, or the array itself for a single field.
    """
    shape = np.broadcast_shapes(*(c.shape for c in coords))
    nodes = Grid(tuple(c.ravel() for c in coords), {}).points()
    loc = shipped[0].mesh.index.locate(nodes)
    out = tuple(f.evaluate(loc).reshape(shape + f.values.shape[1:]) for f in shipped)
    return out if len(out) > 1 else out[0]


def grid(
    fields: Mapping[str, Field], axes: tuple[np.ndarray, ...], chunks: object
) -> dict[str, dask.array.Array]:
    """Lazy dask arrays of fields on the regular grid of nodes ``axes``.

    Each block computes its own node coordinates from slices of the axes, so
    nothing of the grid's size is held in the graph; the fields are located
    once per block for all of them.

    Parameters
    ----------
    fields : dict of str to Field
        Fields on one mesh.
    axes : tuple of ndarray
        Node coordinates along x, y(, z), one axis per mesh coordinate.
    chunks : int, tuple or str
        Block shape over the grid, in any form dask accepts (``1000``,
        ``(1000, 500)``, ``"auto"``); a component axis is never split.

    Returns
    -------
    dict of str to dask array
        Of shape ``tuple(len(a) for a in axes)`` (+ components), "ij"
        indexed, NaN outside the mesh: equal to :func:`interp.grid.to_grid`.

    Examples
    --------
    >>> from interp import Field, Mesh
    >>> f = Field(Mesh([[0.0, 0], [2, 0], [0, 2]], [[0, 1, 2]]), [0.0, 2.0, 4.0])
    >>> out = grid({"z": f}, (np.arange(3.0), np.arange(2.0)), chunks=2)
    >>> out["z"].chunks
    ((2, 1), (2,))
    >>> out["z"].compute().tolist()
    [[0.0, 2.0], [1.0, 3.0], [2.0, nan]]
    """
    import dask.array as da

    named = as_fields(fields)
    gdim = next(iter(named.values())).mesh.gdim
    axes = tuple(np.asarray(a, dtype=np.float64) for a in axes)
    if len(axes) != gdim or any(a.ndim != 1 or a.size == 0 for a in axes):
        raise InterpError(
            f"a grid over a {gdim}D mesh needs {gdim} non-empty 1-D axes; got shapes "
            f"{[a.shape for a in axes]}"
        )
    if not all(np.isfinite(a).all() for a in axes):
        raise InterpError("grid axes must hold finite coordinates")
    shape = tuple(a.size for a in axes)
    try:
        blocks = da.core.normalize_chunks(chunks, shape, dtype=np.float64)
    except (ValueError, TypeError) as exc:
        raise InterpError(f"chunks {chunks!r} do not fit a grid of shape {shape}: {exc}") from None
    coords = [
        da.from_array(a, chunks=(c,))[(None,) * i + (slice(None),) + (None,) * (gdim - i - 1)]
        for i, (a, c) in enumerate(zip(axes, blocks, strict=True))
    ]
    outs = ["()" if f.values.ndim == 1 else f"(c{i})" for i, f in enumerate(named.values())]
    result = da.apply_gufunc(
        _grid_block,
        ",".join(["()"] * gdim) + "->" + ",".join(outs),
        *coords,
        output_dtypes=[np.float64] * len(named),
        output_sizes={f"c{i}": f.n_components for i, f in enumerate(named.values())},
        shipped=_ship(*named.values()),
    )
    return dict(zip(named, result if len(named) > 1 else (result,), strict=True))


def _zarr_names(grid: Grid) -> list[str]:
    """Axis array names, after checking the field names can sit beside them in a store."""
    axes = list("xyz"[: len(grid.axes)])
    for name in grid.fields:
        if name in axes or not name or "/" in name or name.startswith("__") or not name.strip("."):
            raise InterpError(
                f"field name {name!r} cannot be stored in a Zarr grid: names must differ from "
                f"the axes {axes}, be non-empty, hold no '/', not be only dots nor start with "
                "'__'; rename the field"
            )
    return axes


def save_zarr(grid: Grid, path: str | Path) -> Path:
    """Write a grid to a Zarr store, block by block, atomically.

    Fields that are dask arrays are computed and written one block at a time
    (all fields of a block together), so the grid is never held in memory
    whole.  The store is written in a temporary directory beside ``path`` and
    then moved in place; an existing ``path`` is replaced.  If writing fails,
    ``path`` is left as it was and the temporary directory is removed (blocks
    that other workers were still writing at that moment can leave part of it
    behind, as a hidden ``.NAME.*.tmp`` directory beside ``path``).

    Format (Zarr group, layout version 1):

    - arrays ``x``, ``y`` (``z``): the node coordinates along each axis, float64;
    - one array per field, float64, named after the field, of shape
      ``(len(x), len(y)[, len(z)])`` indexed ``[i, j(, k)]`` ("ij"), with a
      trailing axis for the components of a multi-component field, NaN at
      nodes outside the mesh; chunked like the dask array (or as zarr
      chooses for numpy);
    - group attributes: ``"interp": "interp.grid"``, ``"version": 1``,
      ``"axes"`` (the axis array names), ``"fields"`` (field names in order),
      ``"spacing"`` (node spacing per axis, 0 for a single node) and
      ``"units"`` (field name to units, for fields that have them).

    Parameters
    ----------
    grid : Grid
        Fields as dask or numpy arrays.
    path : str or Path
        The store directory, conventionally ending in ``.zarr``.

    Returns
    -------
    Path
        ``path``.

    Examples
    --------
    >>> import tempfile, zarr
    >>> g = Grid((np.arange(3.0), np.arange(2.0)), {"z": np.ones((3, 2))}, {"z": "m"})
    >>> with tempfile.TemporaryDirectory() as d:
    ...     out = save_zarr(g, Path(d) / "g.zarr")
    ...     dict(zarr.open_group(out, mode="r").attrs)["units"]
    {'z': 'm'}
    """
    import dask
    import dask.array as da
    import zarr

    path = Path(path)
    names = _zarr_names(grid)
    if not path.parent.is_dir():
        raise InterpError(f"cannot write {path}: the folder {path.parent} does not exist")
    tmp = path.with_name(f".{path.name}.{uuid.uuid4().hex}.tmp")
    try:
        writes = [
            da.to_zarr(da.from_array(a), str(tmp), component=n, compute=False)
            for n, a in zip(names, grid.axes, strict=True)
        ]
        for name, values in grid.fields.items():
            arr = values if is_dask(values) else da.from_array(np.asarray(values))
            if any(len(set(c[:-1])) > 1 or c[-1] > c[0] for c in arr.chunks):
                arr = arr.rechunk(arr.chunksize)  # zarr needs equal chunks but the last
            writes.append(da.to_zarr(arr, str(tmp), component=name, compute=False))
        dask.compute(*writes)
        zarr.open_group(str(tmp), mode="r+").attrs.update(
            {
                "interp": ZARR_MARK,
                "version": ZARR_VERSION,
                "axes": names,
                "fields": list(grid.fields),
                "spacing": list(grid.spacing),
                "units": dict(grid.units),
            }
        )
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    _move_into_place(tmp, path)
    return path


def _move_into_place(tmp: Path, path: Path) -> None:
    """Rename directory ``tmp`` to ``path``, setting an existing ``path`` aside first."""
    old = None
    if path.exists() or path.is_symlink():
        old = path.with_name(f".{path.name}.{uuid.uuid4().hex}.old")
        os.replace(path, old)
    os.replace(tmp, path)
    if old is not None:
        if old.is_dir() and not old.is_symlink():
            shutil.rmtree(old)
        else:
            old.unlink()


def open_zarr(path: str | Path) -> Grid:
    """Open a grid written by :func:`save_zarr`; its fields are lazy dask arrays.

    Examples
    --------
    >>> import tempfile
    >>> g = Grid((np.arange(3.0), np.arange(2.0)), {"z": np.arange(6.0).reshape(3, 2)})
    >>> with tempfile.TemporaryDirectory() as d:
    ...     back = open_zarr(save_zarr(g, Path(d) / "g.zarr"))
    ...     back.shape, back.fields["z"][2].compute().tolist()
    ((3, 2), [4.0, 5.0])
    """
    import dask.array as da
    import zarr

    try:
        root = zarr.open_group(str(path), mode="r")
    except (FileNotFoundError, zarr.errors.GroupNotFoundError) as exc:
        raise InterpError(f"{path}: no Zarr grid there ({exc})") from None
    attrs = dict(root.attrs)
    if attrs.get("interp") != ZARR_MARK or attrs.get("version") != ZARR_VERSION:
        raise InterpError(
            f"{path}: not a grid written by interp (layout version {ZARR_VERSION}); "
            "its attributes lack the 'interp' mark"
        )
    axes = tuple(np.asarray(root[n][:], dtype=np.float64) for n in attrs["axes"])
    fields = {n: da.from_zarr(str(path), component=n) for n in attrs["fields"]}
    return Grid(axes, fields, dict(attrs["units"]))


def _probe(address: str) -> None:
    """Open and close a TCP connection to a ``tcp://host:port`` scheduler, failing fast.

    dask's client retries a refused or unresolvable address until its
    timeout; this answers those at once (other protocols are left to dask).
    """
    from distributed.comm import parse_address, parse_host_port

    protocol, location = parse_address(address)
    if protocol == "tcp":
        socket.create_connection(parse_host_port(location), timeout=CONNECT_TIMEOUT).close()


def _evaluate_piece(points: np.ndarray, field: Field) -> np.ndarray:
    return field(points)


@contextmanager
def evaluator(
    workers: int | None = None, scheduler: str | None = None
) -> Iterator[Callable[[Field, np.ndarray], np.ndarray]]:
    """Spread evaluations of in-memory point chunks over worker processes.

    Starts a local cluster of ``workers`` single-threaded processes listening
    on 127.0.0.1 only (no dashboard), or connects to the dask scheduler at
    ``scheduler``, and yields ``evaluate(field, points) -> values``, equal to
    ``field(points)``: the points are split into one piece per worker thread
    and the pieces assembled in order.  Each field is sent to every worker
    once, on its first use, and reused by later calls.  The cluster (or the
    connection) is closed on exit.

    Parameters
    ----------
    workers : int, optional
        Number of local worker processes (default: the number of CPUs).
    scheduler : str, optional
        Address of a running dask scheduler, e.g. ``"tcp://127.0.0.1:8786"``;
        excludes ``workers``.

    Examples
    --------
    >>> from interp import Field, Mesh
    >>> f = Field(Mesh([[0.0, 0], [1, 0], [0, 1]], [[0, 1, 2]]), [0.0, 4.0, 8.0])
    >>> with evaluator(workers=1) as evaluate:
    ...     evaluate(f, np.array([[0.25, 0.25], [2.0, 2.0]])).tolist()
    [3.0, nan]
    """
    from distributed import Client, LocalCluster

    if workers is not None and scheduler is not None:
        raise InterpError("give either a number of workers or a scheduler address, not both")
    if workers is not None and (not isinstance(workers, int) or workers < 1):
        raise InterpError(f"workers must be a positive whole number; got {workers!r}")
    with ExitStack() as stack:
        if scheduler is None:
            cluster = stack.enter_context(
                LocalCluster(
                    n_workers=workers or os.cpu_count() or 1,
                    threads_per_worker=1,
                    processes=True,
                    host="127.0.0.1",
                    dashboard_address=None,
                    # the scheduler's plain HTTP endpoint: loopback, any free port
                    scheduler_kwargs={"dashboard_address": "127.0.0.1:0"},
                )
            )
            client = stack.enter_context(Client(cluster, set_as_default=False))
        else:
            try:
                _probe(scheduler)
                client = stack.enter_context(
                    Client(scheduler, timeout=CONNECT_TIMEOUT, set_as_default=False)
                )
            except (OSError, ValueError) as exc:
                raise InterpError(
                    f"cannot reach the dask scheduler at {scheduler!r} ({exc}); check the "
                    "address, or use local workers instead"
                ) from None
        shipped: dict[int, tuple[Field, object]] = {}

        def evaluate(field: Field, points: np.ndarray) -> np.ndarray:
            pts = as_points(points, "query points", gdim=field.mesh.gdim)
            if id(field) not in shipped:
                _ = field.mesh.index
                shipped[id(field)] = (field, client.scatter(field, broadcast=True, hash=False))
            remote = shipped[id(field)][1]
            n = max(1, min(len(pts), sum(client.nthreads().values())))
            pieces = client.scatter(np.array_split(pts, n), hash=False)
            done = client.map(_evaluate_piece, pieces, field=remote, pure=False)
            return np.concatenate(client.gather(done))

        yield evaluate
