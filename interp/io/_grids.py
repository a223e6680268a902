"""Grid files, looked up by suffix: writers and readers of regular grids.

A grid format is one entry of :data:`GRID_WRITERS` (and of :data:`GRID_READERS`
when it can be read back): a function of the grid and the target path.  The
writers read a grid through the attributes of :class:`interp.Grid` (``axes``,
``fields``, ``units``, ``shape``, ``spacing``, ``points()``), so this module
sits below it.  ``.npz``, ``.csv`` and ``.vti`` are written through
:func:`~interp.io.atomic_path`; ``.zarr`` is a directory written block by
block and moved into place.

Every format stores the fields' units, each in its own way: ``.npz`` an
array ``units`` of (field, unit) rows of text; ``.csv`` the column name
``name (unit)``, which every CSV reader reads as it stands; ``.vti`` a
string array ``units`` of (field, unit) tuples in the image's field data;
``.zarr`` the group attribute ``units``; GeoTIFF each band's unit
(:mod:`interp.io._geotiff`); NetCDF each variable's ``units`` attribute
(:mod:`interp.io._xarray`).
"""

from __future__ import annotations

import re
import shutil
import uuid
import warnings
from collections.abc import Callable, Mapping
from pathlib import Path
from typing import Any, Protocol
from xml.sax.saxutils import quoteattr

import numpy as np

from interp._arrays import is_dask
from interp._geometry import grid_nodes
from interp.errors import InterpError
from interp.io._atomic import atomic_path, move_into_place, refuse_folder
from interp.io._tables import read_table
from interp.io._writer import write_table

#: name stored in a Zarr store's attributes to mark a grid written by :func:`save_zarr`.
ZARR_MARK = "interp.grid"
#: version of the Zarr grid layout described in :func:`save_zarr`.
ZARR_VERSION = 1

#: an output estimated above this many bytes gets a warning with its size before it is written.
LARGE_OUTPUT_BYTES = 1_000_000_000
#: bytes per stored number: 8 for the binary formats (before compression), about 16 in a
#: text table (up to 17 significant digits and a delimiter).
BYTES_PER_VALUE = {".csv": 16}

#: name of the array of (field, unit) pairs in a ``.npz`` grid and in a ``.vti`` grid's field data.
UNITS = "units"
#: a ``.csv`` grid column holding units: ``name (unit)``, as in ``z (m)``.
UNIT_COLUMN = re.compile(r"^(.*\S) \(([^()]+)\)$")

#: what a grid reader returns: axes, fields and units.
GridParts = tuple[tuple[np.ndarray, ...], dict[str, Any], dict[str, str]]


class GridLike(Protocol):
    """What the writers read of a grid (an :class:`interp.Grid`)."""

    axes: tuple[np.ndarray, ...]
    fields: dict[str, Any]
    units: dict[str, str]
    crs: str | None

    @property
    def shape(self) -> tuple[int, ...]: ...

    @property
    def spacing(self) -> tuple[float, ...]: ...

    def points(self) -> np.ndarray: ...


def component_names(name: str, k: int) -> list[str]:
    """Column names of a field with k components: the name, or name_0 .. name_{k-1}.

    Examples
    --------
    >>> component_names("z", 1), component_names("u", 2)
    (['z'], ['u_0', 'u_1'])
    """
    return [name] if k == 1 else [f"{name}_{c}" for c in range(k)]


def field_columns(fields: Mapping[str, np.ndarray], n: int) -> tuple[list[str], np.ndarray]:
    """Named fields of n values (+ components) as column names and an (n, k) table.

    Examples
    --------
    >>> field_columns({"z": np.zeros(2), "u": np.ones((2, 2))}, 2)[0]
    ['z', 'u_0', 'u_1']
    """
    flat = [v.reshape(n, -1) for v in fields.values()]
    names = [
        c for name, v in zip(fields, flat, strict=True) for c in component_names(name, v.shape[1])
    ]
    return names, np.hstack(flat)


def estimated_bytes(grid: GridLike, suffix: str) -> int:
    """The size a grid takes in the format of ``suffix``, before compression.

    Examples
    --------
    >>> from interp import Grid
    >>> g = Grid((np.arange(1000.0), np.arange(500.0)), {"z": np.zeros((1000, 500))})
    >>> estimated_bytes(g, ".npz"), estimated_bytes(g, ".csv")
    (4000000, 24000000)
    """
    nodes = int(np.prod(grid.shape))
    values = sum(int(np.prod(v.shape)) for v in grid.fields.values())
    if suffix == ".csv":
        values += nodes * len(grid.axes)
    return values * BYTES_PER_VALUE.get(suffix, 8)


def save_grid(grid: GridLike, path: str | Path) -> Path:
    """Write a grid in the format its suffix names (see :data:`GRID_WRITERS`).

    An output estimated over :data:`LARGE_OUTPUT_BYTES` (1 GB) gets a warning
    with its size before it is written.

    Examples
    --------
    >>> import tempfile
    >>> from interp import Grid
    >>> g = Grid((np.arange(2.0),), {"z": np.ones(2)})
    >>> with tempfile.TemporaryDirectory() as d:
    ...     save_grid(g, Path(d) / "g.csv").read_text().splitlines()
    ['x,z', '0,1', '1,1']
    """
    path = Path(path)
    suffix = path.suffix.lower()
    writer = GRID_WRITERS.get(suffix)
    if suffix != ".zarr":  # a Zarr store is a folder
        refuse_folder(path, ".tif")
    if writer is None:
        raise InterpError(f"cannot save a grid as {path.name!r}: use {', '.join(GRID_WRITERS)}")
    if suffix != ".csv":
        _check_names(grid.fields, path)
    size = estimated_bytes(grid, path.suffix.lower())
    if size > LARGE_OUTPUT_BYTES:
        warnings.warn(
            f"writing {path}: about {size / 1e9:.3g} GB ({' x '.join(map(str, grid.shape))} "
            "nodes); use a larger spacing or smaller bounds for a smaller file",
            stacklevel=2,
        )
    return writer(grid, path)


def _check_names(fields: Mapping[str, object], path: Path) -> None:
    """Refuse field names that are not text (undecodable bytes of a non-UTF-8 source file)."""
    for name in fields:
        try:
            name.encode("utf-8")
        except UnicodeEncodeError:
            shown = name.encode("utf-8", "surrogateescape").decode("latin-1")
            raise InterpError(
                f"cannot write {path}: the field name {shown!r} is not UTF-8 text (the source "
                "file's header is in another encoding, such as Latin-1); save the source file "
                "as UTF-8, or write a .csv grid, which keeps the bytes as they are"
            ) from None


def read_grid(path: str | Path) -> GridParts:
    """Axes, fields and units of a grid file, read by its suffix (see :data:`GRID_READERS`).

    Examples
    --------
    >>> read_grid("g.txt")  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    interp.errors.InterpError: cannot read a grid from 'g.txt': readable grid formats are .csv, ...
    """
    path = Path(path)
    reader = GRID_READERS.get(path.suffix.lower())
    if reader is None:
        raise InterpError(
            f"cannot read a grid from {path.name!r}: readable grid formats are "
            f"{', '.join(GRID_READERS)}"
        )
    if not path.exists():
        raise InterpError(f"{path}: no such file; check the name and folder")
    return reader(path)


def _read_npz(path: Path) -> GridParts:
    """A grid written as ``.npz``: the leading 1D arrays among x, y, z are the axes (as
    many as the other arrays have leading dimensions), the others the fields."""
    try:
        with np.load(path, allow_pickle=False) as data:
            arrays = {name: data[name] for name in data.files}
    except (OSError, ValueError) as exc:
        raise InterpError(f"{path}: not a readable .npz file ({exc})") from None
    units = {}
    if UNITS in arrays and arrays[UNITS].dtype.kind == "U":
        units = dict(arrays.pop(UNITS).reshape(-1, 2).tolist())
    for g in (3, 2, 1):
        names = list("xyz"[:g])
        if not all(n in arrays and arrays[n].ndim == 1 for n in names):
            continue
        shape = tuple(len(arrays[n]) for n in names)
        fields = {n: v.astype(np.float64) for n, v in arrays.items() if n not in names}
        if fields and all(v.shape[:g] == shape for v in fields.values()):
            return tuple(arrays[n].astype(np.float64) for n in names), fields, units
    raise InterpError(
        f"{path}: not a grid written by interp: it needs 1D arrays x, y(, z) and fields "
        f"shaped along them; found {', '.join(f'{n} {v.shape}' for n, v in arrays.items())}"
    )


def _read_vti(path: Path) -> GridParts:
    """A grid written as ``.vti`` by :func:`_write_vti` (raw appended Float64 arrays)."""
    raw = path.read_bytes()
    start = raw.find(b'<AppendedData encoding="raw">')
    head = raw[:start].decode("utf-8", errors="replace")
    image = re.search(r'<ImageData WholeExtent="([^"]*)" Origin="([^"]*)" Spacing="([^"]*)"', head)
    arrays = re.findall(
        r'<DataArray type="Float64" Name="([^"]*)" NumberOfComponents="(\d+)" '
        r'format="appended" offset="(\d+)"/>',
        head,
    )
    if start < 0 or image is None or 'header_type="UInt64"' not in head:
        raise InterpError(
            f"{path}: not a grid written by interp (VTK image data with raw appended Float64 "
            "arrays and UInt64 headers)"
        )
    extent, origin, spacing = (np.array(v.split(), dtype=np.float64) for v in image.groups())
    n = (extent[1::2] - extent[0::2]).astype(np.int64) + 1
    g = 3 if n[2] > 1 else 2 if n[1] > 1 else 1
    axes = tuple(origin[a] + spacing[a] * np.arange(n[a]) for a in range(g))
    body = raw.index(b"_", start) + 1
    fields = {}
    for name, comps, offset in arrays:
        at = body + int(offset)
        size = int(np.frombuffer(raw, "<u8", 1, at)[0])
        if at + 8 + size > len(raw):
            raise InterpError(f"{path}: the array {name!r} is cut short; the file is incomplete")
        data = np.frombuffer(raw, "<f8", size // 8, at + 8)
        k = int(comps)
        # VTK stores x fastest: read the spatial axes reversed, then put them back
        v = data.reshape(tuple(n[:g][::-1]) + ((k,) if k > 1 else ()))
        fields[name] = np.ascontiguousarray(np.moveaxis(v, range(g), range(g)[::-1]))
    return axes, fields, _vti_units(head)


def _vti_units(head: str) -> dict[str, str]:
    """The (field, unit) pairs of a ``.vti`` grid's field data: UTF-8 strings, each ended by
    a zero byte, written as ASCII numbers (VTK's form of a string array)."""
    found = re.search(
        rf'<Array type="String" Name="{UNITS}" NumberOfComponents="2" NumberOfTuples="\d+" '
        r'format="ascii">([^<]*)</Array>',
        head,
    )
    if found is None:
        return {}
    text = bytes(int(b) for b in found.group(1).split()).split(b"\0")[:-1]
    words = [t.decode("utf-8") for t in text]
    return dict(zip(words[0::2], words[1::2], strict=True))


def _read_csv(path: Path) -> GridParts:
    """A grid written as ``.csv``: one row per node, x slowest, then y(, z); fields after
    them, a column ``name (unit)`` holding a field with units.  The columns of a
    multi-component field (``u_0``, ``u_1``) come back as fields of their own."""
    points, values, _, _ = read_table(path, ("x",))
    n = len(points)
    for g in (3, 2, 1):
        names = list("xyz"[:g])
        if not all(c in values for c in names[1:]):
            continue
        nodes = np.column_stack([points[:, 0], *(values[c] for c in names[1:])])
        axes = tuple(np.unique(c) for c in nodes.T)
        shape = tuple(len(a) for a in axes)
        rest = {c: v for c, v in values.items() if c not in names}
        if rest and np.prod(shape) == n and np.array_equal(grid_nodes(axes), nodes):
            fields, units = {}, {}
            for column, v in rest.items():
                labelled = UNIT_COLUMN.match(column)
                name = labelled.group(1) if labelled else column
                if labelled:
                    units[name] = labelled.group(2)
                fields[name] = v.reshape(shape)
            return axes, fields, units
    raise InterpError(
        f"{path}: not a grid written by interp: its x, y(, z) columns do not hold every node "
        "of a regular grid, one row per node with x varying slowest"
    )


def _write_csv(grid: GridLike, path: Path) -> Path:
    n, g = int(np.prod(grid.shape)), len(grid.axes)
    names, cols = field_columns(grid.fields, n)
    unit = {
        c: f"{c} ({grid.units[name]})"
        for name, v in grid.fields.items()
        if grid.units.get(name)
        for c in component_names(name, int(np.prod(v.shape[g:])))
    }
    header = list("xyz"[:g]) + [unit.get(c, c) for c in names]
    return write_table(path, header, np.hstack([grid.points(), cols]))


def _atomically(write: Callable[[GridLike, Path], None]) -> Callable[[GridLike, Path], Path]:
    """A writer of a single file, run through :func:`atomic_path`."""

    def run(grid: GridLike, path: Path) -> Path:
        with atomic_path(path) as tmp:
            write(grid, tmp)
        return path

    return run


def _write_npz(grid: GridLike, path: Path) -> None:
    arrays = dict(zip("xyz", grid.axes, strict=False))
    pairs = _unit_pairs(grid)
    if pairs:
        arrays[UNITS] = np.array(pairs, dtype=str)
    clash = set(arrays) & set(grid.fields)
    if clash:
        raise InterpError(
            f"field names {sorted(clash)} clash with the coordinate or units arrays in .npz; "
            "rename those fields"
        )
    with open(path, "wb") as fh:
        np.savez_compressed(fh, **arrays, **grid.fields)


def _unit_pairs(grid: GridLike) -> list[tuple[str, str]]:
    """(field, unit) for each field that has units, in the order of the fields."""
    return [(name, grid.units[name]) for name in grid.fields if grid.units.get(name)]


def _write_vti(grid: GridLike, path: Path) -> None:
    g = len(grid.axes)
    n = list(grid.shape) + [1] * (3 - g)
    origin = [float(a[0]) for a in grid.axes] + [0.0] * (3 - g)
    spacing = [s or 1.0 for s in grid.spacing] + [1.0] * (3 - g)
    extent = " ".join(f"0 {k - 1}" for k in n)
    blocks, arrays, offset = [], [], 0
    for name, v in grid.fields.items():
        comps = 1 if v.ndim == g else v.shape[-1]
        # VTK stores x fastest: reverse the spatial axes, keep components last
        axes = tuple(range(g))[::-1] + tuple(range(g, v.ndim))
        data = np.ascontiguousarray(np.transpose(v, axes))
        raw = data.astype("<f8").tobytes()
        arrays.append(
            f'<DataArray type="Float64" Name={quoteattr(name)} NumberOfComponents="{comps}" '
            f'format="appended" offset="{offset}"/>'
        )
        blocks.append(np.uint64(len(raw)).tobytes() + raw)
        offset += 8 + len(raw)
    pairs = _unit_pairs(grid)
    field_data = ""
    if pairs:
        codes = " ".join(str(b) for word in sum(pairs, ()) for b in (*word.encode(), 0))
        field_data = (
            f'<FieldData>\n<Array type="String" Name="{UNITS}" NumberOfComponents="2" '
            f'NumberOfTuples="{len(pairs)}" format="ascii">{codes}</Array>\n</FieldData>\n'
        )
    head = (
        '<?xml version="1.0"?>\n'
        '<VTKFile type="ImageData" version="1.0" byte_order="LittleEndian" '
        'header_type="UInt64">\n'
        f'<ImageData WholeExtent="{extent}" Origin="{" ".join(map(repr, origin))}" '
        f'Spacing="{" ".join(map(repr, spacing))}">\n'
        + field_data
        + f'<Piece Extent="{extent}">\n<PointData>\n'
        + "\n".join(arrays)
        + "\n</PointData>\n"
        "</Piece>\n</ImageData>\n"
        '<AppendedData encoding="raw">\n_'
    )
    with open(path, "wb") as fh:
        fh.write(head.encode())
        for b in blocks:
            fh.write(b)
        fh.write(b"\n</AppendedData>\n</VTKFile>\n")


def _zarr_names(grid: GridLike) -> list[str]:
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


def save_zarr(grid: GridLike, path: str | Path) -> Path:
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
    >>> from interp import Grid
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
    move_into_place(tmp, path)
    return path


def read_zarr(path: str | Path) -> GridParts:
    """Axes, fields (lazy dask arrays) and units of a grid written by :func:`save_zarr`;
    :func:`interp.open_zarr` makes them a :class:`interp.Grid`.

    Examples
    --------
    >>> import tempfile
    >>> from interp import Grid
    >>> g = Grid((np.arange(3.0), np.arange(2.0)), {"z": np.arange(6.0).reshape(3, 2)})
    >>> with tempfile.TemporaryDirectory() as d:
    ...     axes, fields, units = read_zarr(save_zarr(g, Path(d) / "g.zarr"))
    ...     [len(a) for a in axes], fields["z"][2].compute().tolist()
    ([3, 2], [4.0, 5.0])
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
    return axes, fields, dict(attrs["units"])


#: grid writers by file suffix: ``writer(grid, path) -> path``.
GRID_WRITERS: dict[str, Callable[[GridLike, Path], Path]] = {
    ".csv": _write_csv,
    ".zarr": save_zarr,
    ".npz": _atomically(_write_npz),
    ".vti": _atomically(_write_vti),
}
#: grid readers by file suffix: ``reader(path) -> (axes, fields, units)``.
GRID_READERS: dict[str, Callable[[Path], GridParts]] = {
    ".csv": _read_csv,
    ".npz": _read_npz,
    ".vti": _read_vti,
    ".zarr": read_zarr,
}
