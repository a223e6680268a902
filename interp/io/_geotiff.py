"""GeoTIFF out: a 2D grid as a georeferenced raster, one band per field component.

Written through rasterio (GDAL), the ``geotiff`` extra.

Georeferencing.  A :class:`~interp.grid.Grid` holds values at nodes.  Each
node becomes the centre of one pixel, and the file says so in the form GIS
software reads most consistently: raster type RasterPixelIsArea (the GeoTIFF
default, GeoTIFF 1.1, OGC 19-008, key GTRasterTypeGeoKey) with the transform
placed half a pixel up and to the left of the first node.  So the node at
``axes[0][i]``, ``axes[1][j]`` is the centre of pixel (row ``ny - 1 - j``,
column ``i``): rows run north to south, and the transform's origin is
``(x0 - dx / 2, y_max + dy / 2)``.  RasterPixelIsPoint would describe the
same nodes without the half-pixel shift, but readers differ in whether they
apply the shift it implies; area with the shift is read the same way by all
of them.

Values are written as float64, the precision they were computed in (float32
steps by about 0.06 mm at an elevation of 1000 m and by 1 mm at 10 km), with
NaN as the nodata value, compressed without loss (deflate with the
floating-point predictor).
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np

from interp._extras import require
from interp.errors import InterpError
from interp.io._atomic import atomic_path
from interp.io._grids import GridLike, GridParts, component_names


def raster_transform(grid: GridLike, path: str | os.PathLike = "grid") -> tuple[float, ...]:
    """The affine transform (a, b, c, d, e, f) placing each node at a pixel centre.

    ``x = a * col + b * row + c`` and ``y = d * col + e * row + f`` at a
    pixel's top-left corner; ``c = x0 - dx / 2`` and ``f = y_max + dy / 2``.

    Raises
    ------
    InterpError
        A grid that is not 2D, has fewer than two nodes along an axis, or
        unevenly spaced nodes.

    Examples
    --------
    >>> from interp import Grid
    >>> g = Grid((np.array([10.0, 12.0, 14.0]), np.array([0.0, 1.0])), {"z": np.zeros((3, 2))})
    >>> raster_transform(g)
    (2.0, 0.0, 9.0, 0.0, -1.0, 1.5)
    """
    if len(grid.axes) != 2:
        raise InterpError(
            f"{path}: a GeoTIFF holds 2D grids only; this grid is {len(grid.axes)}D: save it "
            "as .nc, .vti, .npz or .zarr"
        )
    steps = []
    for name, axis in zip("xy", grid.axes, strict=True):
        if len(axis) < 2:
            raise InterpError(
                f"{path}: a GeoTIFF needs at least two nodes along {name} to know the pixel "
                f"size; the grid has {len(axis)}"
            )
        step = np.diff(axis)
        if not np.allclose(step, step[0], rtol=1e-9, atol=0) or step[0] <= 0:
            raise InterpError(
                f"{path}: the {name} nodes are not evenly spaced in increasing order; a "
                "GeoTIFF needs a regular grid"
            )
        steps.append(float(axis[-1] - axis[0]) / (len(axis) - 1))
    (dx, dy), (x, y) = steps, grid.axes
    return (dx, 0.0, float(x[0]) - dx / 2, 0.0, -dy, float(y[-1]) + dy / 2)


def write_geotiff(path: str | os.PathLike, grid: GridLike, crs: str | None = None) -> Path:
    """Write a 2D grid as a GeoTIFF, atomically: one float64 band per field component.

    Parameters
    ----------
    path : path-like
        Output ``.tif`` file.
    grid : Grid
        A 2D grid with evenly spaced nodes; NaN (outside the mesh) is
        written as the nodata value.
    crs : str, optional
        ``"EPSG:nnnn"`` or WKT; default ``grid.crs``.  With neither, no CRS
        is stored (none is assumed): a GIS then asks for one or treats the
        coordinates as unreferenced.

    Returns
    -------
    Path
        ``path``.  Band descriptions are the field names (``u_0``, ``u_1``
        for the components of a vector field) and band units the fields'
        units.

    Examples
    --------
    >>> import tempfile, rasterio
    >>> from interp import Grid
    >>> g = Grid((np.arange(3.0), np.arange(2.0)), {"z": np.arange(6.0).reshape(3, 2)})
    >>> with tempfile.TemporaryDirectory() as d:
    ...     with rasterio.open(write_geotiff(Path(d) / "z.tif", g, "EPSG:32633")) as src:
    ...         src.read(1).tolist(), src.descriptions, src.crs.to_epsg()
    ([[1.0, 3.0, 5.0], [0.0, 2.0, 4.0]], ('z',), 32633)
    """
    path = Path(path)
    transform = raster_transform(grid, path)
    rasterio = require("rasterio", "geotiff", "writing GeoTIFF grids")
    crs = grid.crs if crs is None else crs
    if crs is not None:
        try:
            crs = rasterio.crs.CRS.from_user_input(crs)
        except (rasterio.errors.CRSError, ValueError) as exc:
            raise InterpError(
                f"{path}: {crs!r} is not a coordinate reference system ({exc}); give "
                "EPSG:nnnn or WKT"
            ) from None
    bands, names, units = [], [], []
    for name, values in grid.fields.items():
        table = np.asarray(values, dtype=np.float64).reshape(grid.shape + (-1,))
        for k, label in enumerate(component_names(name, table.shape[2])):
            # [i, j] along x, y -> [row, col] with rows running north to south
            bands.append(table[:, ::-1, k].T)
            names.append(label)
            units.append(grid.units.get(name, ""))
    with atomic_path(path) as tmp:
        profile = {
            "driver": "GTiff",
            "width": grid.shape[0],
            "height": grid.shape[1],
            "count": len(bands),
            "dtype": "float64",
            "nodata": np.nan,
            "crs": crs,
            "transform": rasterio.Affine(*transform),
            "compress": "deflate",
            "predictor": 3,
        }
        with rasterio.open(tmp, "w", **profile) as dst:
            dst.write(np.stack(bands))
            dst.descriptions = tuple(names)
            dst.units = tuple(units)
    return path


def read_geotiff(path: str | os.PathLike) -> GridParts:
    """Axes, fields and units of a GeoTIFF: each band a field named by its description
    (``band_k`` counting from 1 without one), with the band's unit, nodes at the pixel
    centres (see the module notes); nodata values become NaN.

    Examples
    --------
    >>> import tempfile
    >>> from interp import Grid
    >>> g = Grid((np.arange(3.0), np.arange(2.0)), {"z": np.arange(6.0).reshape(3, 2)}, {"z": "m"})
    >>> with tempfile.TemporaryDirectory() as d:
    ...     axes, fields, units = read_geotiff(write_geotiff(Path(d) / "z.tif", g))
    >>> [a.tolist() for a in axes], fields["z"].tolist(), units
    ([[0.0, 1.0, 2.0], [0.0, 1.0]], [[0.0, 1.0], [2.0, 3.0], [4.0, 5.0]], {'z': 'm'})
    """
    rasterio = require("rasterio", "geotiff", "reading GeoTIFF grids")
    try:
        src = rasterio.open(path)
    except rasterio.errors.RasterioIOError as exc:
        raise InterpError(f"{path}: not a readable GeoTIFF ({exc})") from None
    with src:
        a, b, c, d, e, f = tuple(src.transform)[:6]
        if b or d or e >= 0:
            raise InterpError(
                f"{path}: the raster is rotated or runs south to north; only north-up "
                "GeoTIFFs are read as grids"
            )
        x = c + a * (np.arange(src.width) + 0.5)
        y = f + e * (np.arange(src.height)[::-1] + 0.5)
        bands = src.read(masked=True).astype(np.float64).filled(np.nan)
        fields, units = {}, {}
        for k, (name, unit) in enumerate(zip(src.descriptions, src.units, strict=True)):
            name = name or f"band_{k + 1}"
            # [row, col] with rows running north to south -> [i, j] along x, y
            fields[name] = np.ascontiguousarray(bands[k][::-1].T)
            if unit:
                units[name] = unit
    return (x, y), fields, units
