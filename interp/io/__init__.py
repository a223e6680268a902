"""Files in and out, one module per kind of file, formats looked up by suffix.

- :mod:`interp.io._meshes`: mesh files through meshio (:func:`read`, :func:`write`);
- :mod:`interp.io._tables`: point tables (:func:`read_points`,
  :func:`iter_point_chunks`);
- :mod:`interp.io._writer`: delimited tables out (:class:`TableWriter`,
  :func:`write_table`);
- :mod:`interp.io._polygons`: polygon files (:func:`read_polygon`);
- :mod:`interp.io._grids`: grid files by suffix (:data:`GRID_WRITERS`,
  :data:`GRID_READERS`: ``.npz``, ``.csv``, ``.vti``, ``.zarr``; ``.tif``/``.tiff``
  from :mod:`interp.io._geotiff` and ``.nc`` from :mod:`interp.io._xarray`,
  registered here, writers and readers alike);
- :mod:`interp.io._las`: LAS/LAZ point clouds (:func:`read_las`,
  :func:`iter_las_chunks`, :func:`las_crs`);
- :mod:`interp.io._geojson`: GeoJSON polygons, read by :func:`read_polygon`;
- :mod:`interp.io._atomic`: atomic writes (:func:`atomic_path`, :func:`move_into_place`).

Point sources are looked up by suffix in :data:`POINT_READERS`: a new format
of scattered points is one entry, ``reader(path, coords) -> (points, values)``.
"""

from collections.abc import Callable
from pathlib import Path

import numpy as np

from interp.io._atomic import atomic_path, move_into_place
from interp.io._geotiff import read_geotiff, write_geotiff
from interp.io._grids import (
    GRID_READERS,
    GRID_WRITERS,
    ZARR_MARK,
    ZARR_VERSION,
    component_names,
    field_columns,
    read_grid,
    read_zarr,
    save_grid,
    save_zarr,
)
from interp.io._las import (
    LAS_SUFFIXES,
    is_las_file,
    iter_las_chunks,
    las_crs,
    read_las,
    read_las_points,
)
from interp.io._meshes import read, write
from interp.io._polygons import read_polygon
from interp.io._tables import PointChunk, iter_point_chunks, read_points, read_table
from interp.io._writer import TableWriter, write_table
from interp.io._xarray import crs_units, grid_to_xarray, read_netcdf, write_netcdf

GRID_WRITERS.update(
    {
        ".tif": lambda grid, path: write_geotiff(path, grid),
        ".tiff": lambda grid, path: write_geotiff(path, grid),
        ".nc": lambda grid, path: write_netcdf(path, grid),
    }
)
GRID_READERS.update({".tif": read_geotiff, ".tiff": read_geotiff, ".nc": read_netcdf})

#: readers of scattered-point files by suffix: ``reader(path, coords=...) -> (points, values)``;
#: the LAS/LAZ reader also takes ``classes``, ``every`` and ``lowest_per_cell``.
POINT_READERS: dict[str, Callable[..., tuple[np.ndarray, dict[str, np.ndarray]]]] = {
    **dict.fromkeys((".csv", ".txt", ".xyz", ".tsv", ".dat", ".pts"), read_points),
    **dict.fromkeys(LAS_SUFFIXES, read_las_points),
}


def point_reader(
    path: str | Path,
) -> Callable[..., tuple[np.ndarray, dict[str, np.ndarray]]] | None:
    """The reader :data:`POINT_READERS` has for the suffix of ``path``, or None
    (a mesh file).

    Examples
    --------
    >>> point_reader("survey.csv") is read_points, point_reader("part.vtu")
    (True, None)
    """
    return POINT_READERS.get(Path(path).suffix.lower())


__all__ = [
    "GRID_READERS",
    "GRID_WRITERS",
    "POINT_READERS",
    "ZARR_MARK",
    "ZARR_VERSION",
    "PointChunk",
    "TableWriter",
    "atomic_path",
    "component_names",
    "crs_units",
    "field_columns",
    "grid_to_xarray",
    "is_las_file",
    "iter_las_chunks",
    "iter_point_chunks",
    "las_crs",
    "move_into_place",
    "point_reader",
    "read",
    "read_grid",
    "read_las",
    "read_geotiff",
    "read_las_points",
    "read_netcdf",
    "read_points",
    "read_polygon",
    "read_table",
    "read_zarr",
    "save_grid",
    "save_zarr",
    "write",
    "write_geotiff",
    "write_netcdf",
    "write_table",
]
