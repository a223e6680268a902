"""Grids as xarray Datasets, and NetCDF out through them.

The ``xarray`` extra (xarray, netCDF4, and pyproj for the CRS).  The
Dataset follows the NetCDF Climate and Forecast (CF) Metadata Conventions
(CF-1.8) where that is simple: coordinates ``x``, ``y`` (``z``) with their
``axis`` attribute, data variables laid out ``(z,) y, x`` as CF recommends
(then a ``<name>_component`` dimension for a vector field), a ``units``
attribute where the field has units, and the CRS as a grid-mapping variable
``crs`` (CF section 5.6, with ``crs_wkt``) named by each data variable's
``grid_mapping`` attribute.  Without a CRS none is stored.
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from interp._extras import require
from interp.errors import InterpError
from interp.io._atomic import atomic_path
from interp.io._grids import GridLike, GridParts

if TYPE_CHECKING:
    import xarray


def _parsed(crs: str) -> object:
    """A CRS as pyproj reads it; an unreadable one is an InterpError."""
    pyproj = require("pyproj", "xarray", "reading a coordinate reference system")
    try:
        return pyproj.CRS.from_user_input(crs)
    except pyproj.exceptions.CRSError as exc:
        raise InterpError(
            f"{crs!r} is not a coordinate reference system ({exc}); give EPSG:nnnn or WKT"
        ) from None


def _projected_unit(parsed: object) -> str:
    unit = parsed.axis_info[0].unit_name
    return "m" if unit == "metre" else unit


def crs_units(crs: str) -> str | None:
    """The unit of the easting and northing of a projected CRS (``"m"`` for metres);
    None for any other CRS (a geographic one gives degrees, not a length).

    Examples
    --------
    >>> crs_units("EPSG:32633"), crs_units("EPSG:2264"), crs_units("EPSG:4326")
    ('m', 'US survey foot', None)
    """
    parsed = _parsed(crs)
    return _projected_unit(parsed) if parsed.is_projected else None


def _grid_mapping(crs: str) -> tuple[dict, list[dict]]:
    """CF grid-mapping attributes of a CRS and the CF attributes of its x, y axes."""
    parsed = _parsed(crs)
    axes: list[dict] = [{}, {}]
    if parsed.is_geographic:
        axes = [
            {"standard_name": "longitude", "units": "degrees_east"},
            {"standard_name": "latitude", "units": "degrees_north"},
        ]
    elif parsed.is_projected:
        unit = _projected_unit(parsed)
        axes = [{"standard_name": f"projection_{n}_coordinate", "units": unit} for n in "xy"]
    return parsed.to_cf(), axes


def grid_to_xarray(grid: GridLike, crs: str | None = None) -> xarray.Dataset:
    """The grid as an ``xarray.Dataset``, CF style, with the CRS when known.

    Parameters
    ----------
    grid : Grid
        Any dimension; dask-backed fields stay lazy.
    crs : str, optional
        ``"EPSG:nnnn"`` or WKT; default ``grid.crs``; with neither no CRS is
        stored.

    Returns
    -------
    xarray.Dataset
        Coordinates ``x``, ``y`` (``z``); one variable per field with dims
        ``(z,) y, x`` (and ``<name>_component`` for vectors); ``units``
        attributes; a ``crs`` variable holding the CF grid mapping
        (``crs_wkt`` among its attributes) when a CRS is given.

    Examples
    --------
    >>> import numpy as np
    >>> from interp import Grid
    >>> g = Grid((np.arange(3.0), np.arange(2.0)), {"z": np.arange(6.0).reshape(3, 2)})
    >>> ds = grid_to_xarray(g, "EPSG:32633")
    >>> ds["z"].dims, ds["z"].sel(x=2.0, y=1.0).item(), ds["z"].attrs["grid_mapping"]
    (('y', 'x'), 5.0, 'crs')
    """
    xr = require("xarray", "xarray", "building an xarray Dataset")
    crs = grid.crs if crs is None else crs
    g = len(grid.axes)
    names = list("xyz"[:g])
    if set(names) & set(grid.fields) or "crs" in grid.fields:
        raise InterpError(
            f"field names {sorted((set(names) | {'crs'}) & set(grid.fields))} clash with the "
            "coordinate or CRS variables of a Dataset; rename those fields"
        )
    coords = {
        n: (n, a, {"axis": n.upper(), "long_name": f"{n} coordinate of the grid nodes"})
        for n, a in zip(names, grid.axes, strict=True)
    }
    attrs = {"Conventions": "CF-1.8"}
    variables = {}
    if crs is not None:
        mapping, axes = _grid_mapping(crs)
        for n, extra in zip(names, axes, strict=False):
            coords[n][2].update(extra)
        variables["crs"] = ((), 0, mapping)
    # [i, j(, k)] along x, y(, z) -> dims (z,) y, x, then components
    order = tuple(range(g))[::-1]
    for name, values in grid.fields.items():
        dims = names[::-1]
        axes = order
        if values.ndim > g:
            dims = dims + [f"{name}_component"]
            axes = order + (g,)
        field_attrs = {}
        if grid.units.get(name):
            field_attrs["units"] = grid.units[name]
        if crs is not None:
            field_attrs["grid_mapping"] = "crs"
        variables[name] = (dims, values.transpose(axes), field_attrs)
    return xr.Dataset(variables, coords=coords, attrs=attrs)


def write_netcdf(path: str | os.PathLike, grid: GridLike, crs: str | None = None) -> Path:
    """Write a grid as NetCDF-4 (through xarray and netCDF4), atomically.

    The file holds :func:`grid_to_xarray`'s Dataset; NaN is stored as the
    fill value.  ``crs`` as there (default ``grid.crs``; none is invented).

    Examples
    --------
    >>> import tempfile, numpy as np, xarray
    >>> from interp import Grid
    >>> g = Grid((np.arange(3.0), np.arange(2.0)), {"z": np.ones((3, 2))}, {"z": "m"})
    >>> with tempfile.TemporaryDirectory() as d:
    ...     with xarray.open_dataset(write_netcdf(Path(d) / "g.nc", g)) as ds:
    ...         ds["z"].shape, ds["z"].attrs["units"]
    ((2, 3), 'm')
    """
    path = Path(path)
    dataset = grid_to_xarray(grid, crs)
    require("netCDF4", "xarray", "writing NetCDF grids")
    with atomic_path(path) as tmp:
        dataset.to_netcdf(tmp, engine="netcdf4")
    return path


def read_netcdf(path: str | os.PathLike) -> GridParts:
    """Axes, fields and units of a NetCDF grid laid out as :func:`grid_to_xarray` writes it:
    coordinates ``x``, ``y`` (``z``), each data variable on ``(z,) y, x`` (then its
    component dimension), its ``units`` attribute as the field's units; the CRS variable
    is left out.

    Examples
    --------
    >>> import tempfile, numpy as np
    >>> from interp import Grid
    >>> g = Grid((np.arange(3.0), np.arange(2.0)), {"z": np.arange(6.0).reshape(3, 2)}, {"z": "m"})
    >>> with tempfile.TemporaryDirectory() as d:
    ...     axes, fields, units = read_netcdf(write_netcdf(Path(d) / "g.nc", g))
    >>> fields["z"].tolist(), units
    ([[0.0, 1.0], [2.0, 3.0], [4.0, 5.0]], {'z': 'm'})
    """
    xr = require("xarray", "xarray", "reading NetCDF grids")
    require("netCDF4", "xarray", "reading NetCDF grids")
    try:
        ds = xr.open_dataset(path, engine="netcdf4")
    except (OSError, ValueError) as exc:
        raise InterpError(f"{path}: not a readable NetCDF file ({exc})") from None
    with ds:
        names = [n for n in "xyz" if n in ds.coords and ds[n].ndim == 1]
        if not names or names != list("xyz"[: len(names)]):
            raise InterpError(
                f"{path}: not a grid written by interp: it needs 1D coordinates x, y(, z); "
                f"found {', '.join(map(str, ds.coords)) or 'none'}"
            )
        axes = tuple(ds[n].values.astype(np.float64) for n in names)
        fields, units = {}, {}
        for name, var in ds.data_vars.items():
            if name == "crs":
                continue
            extra = [dim for dim in var.dims if dim not in names]
            if set(var.dims) - set(extra) != set(names) or len(extra) > 1:
                raise InterpError(
                    f"{path}: the variable {name!r} lies on {var.dims}, not on the grid's "
                    f"axes {tuple(names[::-1])} (and at most one component dimension)"
                )
            fields[str(name)] = np.ascontiguousarray(
                var.transpose(*names, *extra).values.astype(np.float64)
            )
            if var.attrs.get("units"):
                units[str(name)] = str(var.attrs["units"])
    return axes, fields, units
