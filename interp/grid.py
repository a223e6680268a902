"""Regular node-centred grids: evaluating fields on them and saving them.

A :class:`Grid` has one coordinate axis per dimension and one array per
field, indexed ``[i, j(, k)]`` along x, y(, z) ("ij" indexing) with a
trailing component axis for multi-component fields, NaN where a node is
outside the mesh.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable, Mapping, Sequence
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from interp import parallel
from interp._arrays import as_floats
from interp._geometry import grid_nodes
from interp._progress import task
from interp.errors import InterpError
from interp.field import Field
from interp.index import CellIndex, Location, threads
from interp.io import grid_to_xarray, read_zarr, save_grid

if TYPE_CHECKING:
    import xarray

#: the largest grid evaluated in memory; larger ones go through dask chunks.
MAX_NODES = 500_000_000
#: grid rows evaluated per block, bounding temporary memory.
BLOCK_NODES = 1 << 20


@dataclass(frozen=True)
class Grid:
    """Fields sampled on a regular grid.

    Attributes
    ----------
    axes : tuple of ndarray
        Node coordinates along x, y(, z).
    fields : dict of str to ndarray
        Arrays of shape ``shape`` (+ components), NaN outside the mesh.
    units : dict of str to str
        Units of the fields that have them.
    crs : str, optional
        Coordinate reference system of the axes (``"EPSG:nnnn"`` or WKT),
        stored by the formats that hold one (``.tif``, ``.nc``); None when
        unknown.

    Examples
    --------
    >>> import numpy as np
    >>> g = Grid((np.arange(3.0), np.arange(2.0)), {"z": np.zeros((3, 2))})
    >>> g.shape, g.names, g.spacing
    ((3, 2), ['z'], (1.0, 1.0))
    """

    axes: tuple[np.ndarray, ...]
    fields: dict[str, np.ndarray]
    units: dict[str, str] = field(default_factory=dict)
    crs: str | None = None

    @property
    def shape(self) -> tuple[int, ...]:
        """Number of nodes along each axis."""
        return tuple(len(a) for a in self.axes)

    @property
    def names(self) -> list[str]:
        """Field names, in order."""
        return list(self.fields)

    @property
    def values(self) -> np.ndarray:
        """The first field's array."""
        return next(iter(self.fields.values()))

    @property
    def spacing(self) -> tuple[float, ...]:
        """Node spacing along each axis (0 for an axis with one node)."""
        return tuple(float(a[1] - a[0]) if len(a) > 1 else 0.0 for a in self.axes)

    def points(self) -> np.ndarray:
        """Coordinates of every node, (N, g), in the C order of the field arrays."""
        return grid_nodes(self.axes)

    def save(self, path: str | Path) -> Path:
        """Write the grid, choosing the format by the file extension.

        ``.npz``: arrays ``x``, ``y`` (``z``) and one array per field;
        ``.csv``: one row per node, coordinates then fields (empty cell for
        NaN); ``.vti``: VTK XML image data (an open format read by ParaView
        and pyvista); ``.zarr``: a Zarr store written chunk by chunk (for
        dask-backed grids larger than memory; needs the ``dask`` extra);
        ``.tif``/``.tiff``: a GeoTIFF of a 2D grid, one band per field
        component, with ``crs`` (needs the ``geotiff`` extra; see
        :func:`interp.io._geotiff.write_geotiff`); ``.nc``: NetCDF through
        xarray, with ``crs`` (needs the ``xarray`` extra; see
        :func:`interp.io._xarray.write_netcdf`).  The file is written atomically.

        Examples
        --------
        >>> import tempfile, numpy as np
        >>> g = Grid((np.arange(3.0), np.arange(2.0)), {"z": np.ones((3, 2))})
        >>> with tempfile.TemporaryDirectory() as d:
        ...     out = g.save(Path(d) / "g.npz")
        ...     sorted(np.load(out).files)
        ['x', 'y', 'z']
        """
        return save_grid(self, path)

    def to_xarray(self) -> xarray.Dataset:
        """The grid as an ``xarray.Dataset`` with ``crs`` (needs the ``xarray`` extra).

        See :func:`interp.io._xarray.grid_to_xarray`.

        Examples
        --------
        >>> g = Grid((np.arange(3.0), np.arange(2.0)), {"z": np.ones((3, 2))}, {"z": "m"})
        >>> g.to_xarray()["z"].attrs["units"]
        'm'
        """
        return grid_to_xarray(self)


def open_zarr(path: str | Path) -> Grid:
    """Open a grid written as ``.zarr`` by :meth:`Grid.save`; its fields are lazy dask arrays.

    Examples
    --------
    >>> import tempfile
    >>> g = Grid((np.arange(3.0), np.arange(2.0)), {"z": np.arange(6.0).reshape(3, 2)})
    >>> with tempfile.TemporaryDirectory() as d:
    ...     back = open_zarr(g.save(Path(d) / "g.zarr"))
    ...     back.shape, back.fields["z"][2].compute().tolist()
    ((3, 2), [4.0, 5.0])
    """
    return Grid(*read_zarr(path))


def grid_axes(bounds: np.ndarray, spacing: np.ndarray) -> tuple[np.ndarray, ...]:
    """Node coordinates lo, lo + s, ... up to hi along each axis.

    Examples
    --------
    >>> [a.tolist() for a in grid_axes(np.array([[0.0, 0.0], [1.0, 0.5]]), np.array([0.5, 0.5]))]
    [[0.0, 0.5, 1.0], [0.0, 0.5]]
    """
    n = grid_shape(bounds, spacing)
    return tuple(lo + s * np.arange(k) for lo, s, k in zip(bounds[0], spacing, n, strict=True))


def grid_shape(bounds: np.ndarray, spacing: np.ndarray) -> tuple[int, ...]:
    """Number of nodes along each axis, as Python integers (exact however large).

    Examples
    --------
    >>> grid_shape(np.array([[0.0, 0.0], [1.0, 3.0]]), np.array([0.5, 1e-6]))
    (3, 3000001)
    """
    with np.errstate(over="ignore"):
        n = np.floor((bounds[1] - bounds[0]) / spacing * (1 + 1e-12) + 1e-9)
    # beyond 1e18 nodes an axis is absurd anyway; the cap keeps products within float range
    return tuple(int(k) + 1 for k in np.minimum(n, 1e18).tolist())


def check_size(shape: tuple[int, ...], components: int, limit: int = MAX_NODES) -> None:
    """Refuse, before allocating, a grid of more than ``limit`` nodes, saying what it would need.

    Examples
    --------
    >>> check_size((1000, 1000), 1)
    >>> check_size((10**6, 10**6), 1)  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    interp.errors.InterpError: a grid of 1,000,000 x 1,000,000 = ... nodes would need 7.3 TiB ...
    """
    total = math.prod(shape)
    if total > limit:
        raise InterpError(
            f"a grid of {' x '.join(map(_many, shape))} = {_many(total)} nodes would need "
            f"{size_text(8 * total * components)} of memory for {components} value"
            f"{'s' * (components != 1)} per node: it does not fit in memory (at most "
            f"{limit:,} nodes are evaluated at once); use a larger spacing or smaller bounds, or "
            "evaluate it in chunks through dask (interp.to_grid(..., chunks=...))"
        )


def _many(k: int) -> str:
    return f"{k:,}" if k < 10**15 else f"{k:.2e}"


def size_text(nbytes: float) -> str:
    """A byte count in binary units, such as ``'7.3 TiB'``.

    Examples
    --------
    >>> size_text(512), size_text(3 * 2**30)
    ('512 B', '3.0 GiB')
    """
    units = ["B", "KiB", "MiB", "GiB", "TiB", "PiB", "EiB"]
    if nbytes >= 1024 ** len(units):
        return f"{nbytes:.2e} B"
    k = 0
    while nbytes >= 1024 and k < len(units) - 1:
        nbytes, k = nbytes / 1024, k + 1
    return f"{nbytes:.0f} {units[k]}" if k == 0 else f"{nbytes:.1f} {units[k]}"


def as_fields(fields: Field | Sequence[Field] | Mapping[str, Field]) -> dict[str, Field]:
    """Name the fields to grid: a Field, a list of Fields or a dict of them.

    Unnamed fields are called ``value``, ``value_1``, ...

    Examples
    --------
    >>> from interp import Field, Mesh
    >>> m = Mesh([[0.0, 0], [1, 0], [0, 1]], [[0, 1, 2]])
    >>> list(as_fields([Field(m, [0, 1, 2.0], name="z"), Field(m, [1, 1, 1.0])]))
    ['z', 'value']
    """
    if isinstance(fields, Field):
        fields = [fields]
    if isinstance(fields, Mapping):
        named = dict(fields)
    else:
        named = {}
        for f in fields:
            base = f.name or "value"
            name, k = base, 0
            while name in named:
                k += 1
                name = f"{base}_{k}"
            named[name] = f
    if not named or not all(isinstance(f, Field) for f in named.values()):
        raise InterpError("pass a Field, or a list or dict of Fields")
    gdim = {f.mesh.gdim for f in named.values()}
    if len(gdim) > 1:
        raise InterpError(f"fields evaluated together must be in one dimension; got {sorted(gdim)}")
    return named


def evaluate_fields(
    named: dict[str, Field], where: Callable[[CellIndex], Location]
) -> dict[str, np.ndarray]:
    """Evaluate named fields, locating once per distinct mesh with ``where(index)``.

    Examples
    --------
    >>> from interp import Field, Mesh
    >>> m = Mesh([[0.0, 0], [1, 0], [0, 1]], [[0, 1, 2]])
    >>> evaluate_fields({"a": Field(m, [0, 1, 2.0])}, lambda ix: ix.locate(np.array([[.5, .5]])))
    {'a': array([1.5])}
    """
    located: dict[int, Location] = {}
    out = {}
    for name, f in named.items():
        if id(f.mesh) not in located:
            located[id(f.mesh)] = where(f.mesh.index)
        out[name] = f.evaluate(located[id(f.mesh)])
    return out


def box_of(meshes: Sequence[object]) -> np.ndarray:
    """The (2, g) box around the bounds of meshes."""
    return np.array(
        [
            np.min([m.bounds[0] for m in meshes], axis=0),
            np.max([m.bounds[1] for m in meshes], axis=0),
        ]
    )


def box_text(box: np.ndarray) -> str:
    """A (2, g) box as ``x lo..hi, y lo..hi``, at full precision.

    Examples
    --------
    >>> box_text(np.array([[512000.0, 4180000.0], [512600.5, 4180400.0]]))
    'x 512000..512600.5, y 4180000..4180400'
    """
    return ", ".join(f"{'xyz'[a]} {lo:.12g}..{hi:.12g}" for a, (lo, hi) in enumerate(box.T))


def grid_bounds(mesh_bounds: np.ndarray, bounds: object | None) -> np.ndarray:
    """Bounds as a (2, g) array from a flat (xmin, xmax, ymin, ymax[, zmin, zmax]), or
    from a (2, g) array of minima and maxima (as :attr:`interp.Mesh.bounds`).

    Examples
    --------
    >>> grid_bounds(np.zeros((2, 2)), (0, 10, 5, 6)).tolist()
    [[0.0, 5.0], [10.0, 6.0]]
    >>> grid_bounds(np.zeros((2, 2)), [[0, 5], [10, 6]]).tolist()
    [[0.0, 5.0], [10.0, 6.0]]
    """
    g = mesh_bounds.shape[1]
    if bounds is None:
        return mesh_bounds.astype(np.float64)
    given = as_floats(bounds, f"bounds must be {2 * g} finite numbers (xmin, xmax, ...)")
    b = given.ravel()
    if b.size != 2 * g or given.ndim not in (1, 2) or not np.isfinite(b).all():
        raise InterpError(
            f"bounds must be {2 * g} finite numbers (xmin, xmax, ...) or a (2, {g}) array of "
            f"minima and maxima for a {g}D field; got {np.asarray(bounds).tolist()}"
        )
    if given.ndim == 2 and given.shape != (2, g):
        raise InterpError(
            f"bounds as an array must have shape (2, {g}): minima, then maxima; got shape "
            f"{given.shape}"
        )
    out = given.copy() if given.ndim == 2 else b.reshape(g, 2).T.copy()
    if (out[1] < out[0]).any():
        raise InterpError(f"bounds have a maximum below its minimum: {b.tolist()}")
    return out


def corner_bounds(values: Sequence[float]) -> np.ndarray:
    """Bounds as a (2, g) array from a flat ``(minx, miny[, minz], maxx, maxy[, maxz])``:
    the lower corner, then the upper one (the order of GIS tools and GeoJSON's ``bbox``).

    Examples
    --------
    >>> corner_bounds([512000, 4180000, 512600, 4180400]).tolist()
    [[512000.0, 4180000.0], [512600.0, 4180400.0]]
    >>> corner_bounds([0, 0, -30, 10, 20, 0]).tolist()
    [[0.0, 0.0, -30.0], [10.0, 20.0, 0.0]]
    """
    flat = as_floats(values, "bounds must be numbers").ravel()
    if flat.size not in (4, 6):
        raise InterpError(
            "bounds in the order minx,miny,maxx,maxy (2D) or minx,miny,minz,maxx,maxy,maxz "
            f"(3D) need 4 or 6 numbers; got {flat.size}: {flat.tolist()}"
        )
    return flat.reshape(2, -1)


def grid_spacing(spacing: object, g: int) -> np.ndarray:
    """Spacing per axis from a number or a sequence of g positive numbers.

    Examples
    --------
    >>> grid_spacing(0.5, 2).tolist()
    [0.5, 0.5]
    """
    s = as_floats(spacing, "spacing must be a positive number, or one per axis").ravel()
    if s.size not in (1, g):
        raise InterpError(f"spacing must be one number or {g}, one per axis; got {s.size}")
    s = np.broadcast_to(s, (g,)).copy()
    if not (np.isfinite(s).all() and (s > 0).all()):
        raise InterpError(f"spacing must be positive; got {np.asarray(spacing).tolist()}")
    return s


def to_grid(
    fields: Field | Sequence[Field] | Mapping[str, Field],
    *,
    spacing: float | Sequence[float],
    bounds: Sequence[float] | np.ndarray | None = None,
    chunks: object | None = None,
) -> Grid:
    """Evaluate one or more fields on a regular node-centred grid.

    Parameters
    ----------
    fields : Field, list of Field or dict of str to Field
        Fields to grid (located once per distinct mesh).
    spacing : float or sequence of float
        Node spacing, one number or one per axis.
    bounds : sequence of float or array_like (2, g), optional
        ``(xmin, xmax, ymin, ymax[, zmin, zmax])``, or minima and maxima as
        rows of a (2, g) array like :attr:`interp.Mesh.bounds`; default the
        bounds of the meshes.
        Nodes start at each minimum and step by ``spacing`` up to the maximum.
    chunks : int, tuple or str, optional
        Evaluate lazily with dask in blocks of this shape (any form dask
        accepts, e.g. ``1000`` or ``(2000, 2000)``): the grid's ``fields`` are
        then dask arrays, for grids larger than memory; save them with
        ``Grid.save("grid.zarr")``.  Needs the ``dask`` extra.

    Returns
    -------
    Grid
        NaN at nodes outside the mesh.  A warning says when an axis has a
        single node (a spacing wider than the bounds) and when no node at all
        falls inside the mesh (bounds away from the data).

    Examples
    --------
    >>> import numpy as np
    >>> from interp import Field, triangulate
    >>> pts = np.array([[0.0, 0], [2, 0], [0, 2], [2, 2]])
    >>> g = to_grid(Field(triangulate(pts), pts.sum(axis=1), name="z"), spacing=1.0)
    >>> g.shape, g.values[1, 2]
    ((3, 3), np.float64(3.0))
    """
    named = as_fields(fields)
    meshes = [f.mesh for f in named.values()]
    box = grid_bounds(box_of(meshes), bounds)
    step = grid_spacing(spacing, meshes[0].gdim)
    shape = grid_shape(box, step)
    components = sum(int(np.prod(f.values.shape[1:])) for f in named.values())
    # a lazy grid still holds its axes in memory: bound each axis alike
    check_size(shape if chunks is None else (max(shape),), components)
    axes = grid_axes(box, step)
    single = [
        f"{'xyz'[a]} (spacing {step[a]:g} over a width of {np.ptp(box[:, a]):g})"
        for a, ax in enumerate(axes)
        if len(ax) == 1
    ]
    if single:
        warnings.warn(
            f"the grid has a single node along {', '.join(single)}; use a spacing smaller "
            "than the width of the bounds",
            stacklevel=2,
        )
    units = {n: f.units for n, f in named.items() if f.units}
    if chunks is not None:
        return Grid(axes, parallel.grid(named, axes, chunks), units)
    total = math.prod(shape)
    out = {
        name: np.empty((total,) + f.values.shape[1:], dtype=np.float64) for name, f in named.items()
    }
    rows = max(1, BLOCK_NODES // max(1, total // shape[0]))
    for m in meshes:
        _ = m.index  # built before the grid's bar starts: it has a bar of its own
    per_row = total // shape[0]

    def rows_from(s: int) -> int:
        block = (axes[0][s : s + rows],) + axes[1:]
        for name, v in evaluate_fields(named, lambda ix: ix.locate_grid(block)).items():
            out[name][s * per_row : s * per_row + len(v)] = v
        return len(block[0]) * per_row

    starts = range(0, shape[0], rows)
    # blocks in threads (the kernels release the GIL), each writing its own rows
    with (
        task("evaluating the grid", total=total, unit="nodes") as advance,
        ThreadPoolExecutor(threads(total, len(starts))) as pool,
    ):
        for done in pool.map(rows_from, starts):
            advance(done)
    fields_out = {n: v.reshape(shape + v.shape[1:]) for n, v in out.items()}
    if all(np.isnan(v).all() for v in out.values()):
        warnings.warn(
            f"no node of the {' x '.join(map(str, shape))} grid falls inside the mesh: every "
            f"value is NaN; the data span {box_text(box_of(meshes))} and the grid "
            f"{box_text(np.array([[a[0] for a in axes], [a[-1] for a in axes]]))}",
            stacklevel=2,
        )
    return Grid(axes, fields_out, units)
