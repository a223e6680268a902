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

import dataclasses
import os
import socket
import uuid
import weakref
from collections.abc import Callable, Iterator, Mapping
from contextlib import ExitStack, contextmanager
from typing import TYPE_CHECKING, Any

import numpy as np

from interp._arrays import as_points, is_dask
from interp._geometry import grid_nodes
from interp._renamed import renamed
from interp.errors import InterpError

if TYPE_CHECKING:
    import dask.array
    from dask.delayed import Delayed

#: seconds allowed to reach a dask scheduler.
CONNECT_TIMEOUT = 10

# a stable graph key per shipped object, so that one object used twice in a
# computation is still sent once
_KEYS: weakref.WeakKeyDictionary[object, str] = weakref.WeakKeyDictionary()


def _ship(*objs: Any) -> Delayed:
    """One graph key holding ``objs`` (a tuple of fields or meshes), their spatial
    indexes built."""
    import dask

    for obj in objs:
        _ = getattr(obj, "mesh", obj).index
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


def _evaluate_block(points: np.ndarray, *, shipped: tuple[Any], what: str, outside: float):
    (field,) = shipped
    return field(points, outside) if what == "value" else field.gradient(points)


@renamed(points="query")
def evaluate(
    field: Any, query: dask.array.Array, *, what: str = "value", outside: float = np.nan
) -> dask.array.Array:
    """Evaluate a field, or its gradient, at a dask array of query points, lazily.

    Parameters
    ----------
    field : Field
        The field; it is sent to the workers once, with its mesh's spatial index.
    query : dask array (n, g)
        Query points chunked along rows (columns are merged into one chunk).
    what : {"value", "gradient"}
        Field values, or spatial gradients.
    outside : float
        Value for points outside the mesh (values only; gradients are NaN there).

    Returns
    -------
    dask array
        ``(n,)`` or ``(n, c)`` values, ``(n, g)`` or ``(n, g, c)`` gradients, with
        the row chunks of ``query``; equal to ``field(query)`` or
        ``field.gradient(query)`` computed in memory.

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

    if not _is(field, "Field"):
        raise InterpError(f"evaluate needs an interp.Field, not {type(field).__name__}")
    if what not in ("value", "gradient"):
        raise InterpError(f"what must be 'value' or 'gradient'; got {what!r}")
    pts = _dask_points(query, field.mesh.gdim)
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


def _locate_block(points: np.ndarray, *, shipped: tuple[Any]) -> tuple[np.ndarray, np.ndarray]:
    (mesh,) = shipped
    loc = mesh.locate(points)
    return loc.cells, loc.bary


@renamed(points="query")
def locate(mesh: Any, query: dask.array.Array) -> Any:
    """Locate a dask array of query points in a mesh, lazily.

    Returns
    -------
    Location
        Whose ``cells`` (n,) int64 and ``bary`` (n, dim + 1) are dask arrays
        chunked like the rows of ``query``; compute them together
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

    if not _is(mesh, "Mesh"):
        raise InterpError(f"locate needs an interp.Mesh, not {type(mesh).__name__}")
    pts = _dask_points(query, mesh.gdim)
    shipped = _ship(mesh)
    cells, bary = da.apply_gufunc(
        _locate_block,
        "(g)->(),(k)",
        pts,
        output_dtypes=(np.int64, np.float64),
        output_sizes={"k": mesh.dim + 1},
        shipped=shipped,
    )
    # the mesh's own Location type (this module imports no interp class)
    return dataclasses.replace(mesh.locate(np.empty((0, mesh.gdim))), cells=cells, bary=bary)


def _is(obj: object, name: str) -> bool:
    """Whether ``obj`` is an instance of the interp class ``name`` (by its class
    path, as this module imports no interp class)."""
    return any(
        f"{c.__module__}.{c.__name__}" == f"interp.{name.lower()}.{name}" for c in type(obj).__mro__
    )


def _grid_block(*coords: np.ndarray, shipped: tuple[Any, ...]):
    """Evaluate fields at the nodes of one block; ``coords`` broadcast to the block.

    Returns one array per field, or the array itself for a single field.
    """
    shape = np.broadcast_shapes(*(c.shape for c in coords))
    nodes = grid_nodes(tuple(c.ravel() for c in coords))
    loc = shipped[0].mesh.index.locate(nodes)
    out = tuple(f.evaluate(loc).reshape(shape + f.values.shape[1:]) for f in shipped)
    return out if len(out) > 1 else out[0]


def grid(
    fields: Mapping[str, Any], axes: tuple[np.ndarray, ...], chunks: object
) -> dict[str, dask.array.Array]:
    """Lazy dask arrays of fields on the regular grid of nodes ``axes``.

    Each block computes its own node coordinates from slices of the axes, so
    nothing of the grid's size is held in the graph; the fields are located
    once per block for all of them.

    Parameters
    ----------
    fields : dict of str to Field
        Fields on one mesh, named (as :func:`interp.to_grid` names them).
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

    named = dict(fields)
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


def _probe(address: str) -> None:
    """Open and close a TCP connection to a ``tcp://host:port`` scheduler, failing fast.

    dask's client retries a refused or unresolvable address until its
    timeout; this answers those at once (other protocols are left to dask).
    """
    from distributed.comm import parse_address, parse_host_port

    protocol, location = parse_address(address)
    if protocol == "tcp":
        socket.create_connection(parse_host_port(location), timeout=CONNECT_TIMEOUT).close()


def _evaluate_piece(points: np.ndarray, field: Any) -> np.ndarray:
    return field(points)


@contextmanager
def evaluator(
    workers: int | None = None, scheduler: str | None = None
) -> Iterator[Callable[[Any, np.ndarray], np.ndarray]]:
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
        shipped: dict[int, tuple[Any, object]] = {}

        def evaluate(field: Any, points: np.ndarray) -> np.ndarray:
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
