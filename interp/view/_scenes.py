"""Scenes: a field, mesh, grid or mesh file turned into what a picture draws."""

from __future__ import annotations

import os
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from interp.errors import InterpError
from interp.field import Field
from interp.mesh import Mesh
from interp.view._p2 import SCALARS, outer_faces, subdivide, tetra_grid

if TYPE_CHECKING:
    import pyvista


@dataclass
class Scene:
    """What to draw: a coloured surface, its cell edges and, in 3D, the volume."""

    surface: pyvista.PolyData | None
    edges: pyvista.PolyData | None
    volume: pyvista.DataSet | None
    nodes: np.ndarray
    node_values: np.ndarray | None
    label: str | None
    flat: bool
    lo: float = np.nan
    hi: float = np.nan


def scene_of(obj: object, field: str | None) -> Scene:
    if isinstance(obj, (str, os.PathLike)):
        from interp.io import read

        mesh, data = read(obj)
        name = pick(field, list(data), f"{obj}")
        return mesh_scene(mesh, None if name is None else data[name], name, None)
    if isinstance(obj, Field):
        pick(field, [obj.name] if obj.name else [], "the Field")
        return mesh_scene(obj.mesh, obj.values, obj.name or "value", obj.units)
    if isinstance(obj, Mesh):
        pick(field, [], "a Mesh (it carries no fields)")
        return mesh_scene(obj, None, None, None)
    if hasattr(obj, "axes") and hasattr(obj, "fields"):
        return grid_scene(obj, field)
    raise InterpError(
        f"cannot show a {type(obj).__name__}: pass an interp Field, Mesh or Grid, or a mesh "
        "file path"
    )


def coordinate_units_of(obj: object) -> str | None:
    """The unit of the coordinates a drawn object states: that of a Grid's projected CRS
    (None without a CRS, for a geographic one, or when pyproj is not installed)."""
    crs = getattr(obj, "crs", None)
    if crs is None:
        return None
    from interp.io import crs_units

    try:
        return crs_units(crs)
    except InterpError:
        return None


def pick(field: str | None, names: list[str], where: str) -> str | None:
    if field is None:
        return names[0] if names else None
    if field not in names:
        raise InterpError(
            f"{where} has no field named {field!r}; available: {', '.join(names) or 'none'}"
        )
    return field


def label_of(name: str, units: str | None, vector: bool) -> str:
    text = f"|{name}|" if vector else name
    return f"{text} [{units}]" if units else text


def as_scalar(values: np.ndarray, spatial_ndim: int) -> tuple[np.ndarray, bool]:
    """Values as one scalar per node: the magnitude of a multi-component field."""
    if values.ndim > spatial_ndim:
        return np.linalg.norm(values, axis=-1), True
    return values, False


def mesh_scene(mesh: Mesh, values: object, name: str | None, units: str | None) -> Scene:
    if mesh.dim == 1:
        raise InterpError(
            f"cannot draw a mesh of {mesh.cell_type} cells (1D) as a surface or volume: plot "
            "its values against distance (show_profile draws a section of a 2D or 3D field)"
        )
    vals, label = None, None
    if values is not None:
        vals, vector = as_scalar(np.asarray(values, dtype=np.float64), 1)
        label = label_of(name, units, vector)
    pts = np.zeros((mesh.n_nodes, 3))
    pts[:, : mesh.gdim] = mesh.points
    if mesh.dim == 2:
        cells, volume = mesh.cells, None
    else:
        cells, volume = outer_faces(mesh), tetra_grid(mesh, pts, vals)
    surface, outline = subdivide(pts, cells, vals, mesh.order)
    scene = Scene(surface, outline, volume, pts, vals, label, mesh.gdim == 2)
    if vals is not None:
        drawn = np.concatenate([surface[SCALARS], vals[np.isfinite(vals)]])
        scene.lo, scene.hi = float(drawn.min()), float(drawn.max())
    return scene


def grid_scene(grid: object, field: str | None) -> Scene:
    import pyvista as pv

    axes = [np.asarray(a, dtype=np.float64).reshape(-1) for a in grid.axes]
    name = pick(field, list(grid.fields), "the grid")
    if name is None:
        raise InterpError("the grid has no fields to draw")
    if len(axes) not in (2, 3):
        raise InterpError(
            f"cannot draw a {len(axes)}D grid: pictures are of 2D or 3D grids (plot a 1D "
            "grid's values against its axis)"
        )
    vals, vector = as_scalar(np.asarray(grid.fields[name], dtype=np.float64), len(axes))
    shape = tuple(len(a) for a in axes)
    if vals.shape != shape:
        raise InterpError(
            f"grid field {name!r} has shape {vals.shape} but the axes give {shape}; each "
            "field needs one value (or one row of components) per node"
        )
    if vals.size == 0 or not np.isfinite(vals).any():
        raise InterpError(
            f"the grid is empty: field {name!r} has {vals.size} nodes and none has a value "
            "(all NaN); grid a region that overlaps the mesh"
        )
    label = label_of(name, getattr(grid, "units", {}).get(name), vector)
    lo, hi = float(np.nanmin(vals)), float(np.nanmax(vals))
    if len(axes) == 3:
        rect = pv.RectilinearGrid(*axes)
        rect.point_data[SCALARS] = vals.ravel(order="F")
        return Scene(None, None, rect, np.asarray(rect.points), rect[SCALARS], label, False, lo, hi)
    # node (i, j) is point i + nx j, as VTK orders x fastest
    nx, ny = vals.shape
    xx, yy = np.meshgrid(axes[0], axes[1], indexing="ij")
    pts = np.column_stack([xx.ravel(order="F"), yy.ravel(order="F"), np.zeros(nx * ny)])
    node_values = vals.ravel(order="F")
    first = (np.arange(nx - 1)[:, None] + nx * np.arange(ny - 1)[None, :]).ravel(order="F")
    quads = np.column_stack([first, first + 1, first + 1 + nx, first + nx])
    quads = quads[np.isfinite(node_values[quads]).all(axis=1)]
    if len(quads) == 0:
        raise InterpError(
            f"the grid has no cell with values at all four corners in field {name!r}: "
            "nothing to draw as a surface"
        )
    surface = pv.PolyData.from_regular_faces(pts, quads)
    surface.point_data[SCALARS] = node_values
    return Scene(surface, surface.extract_all_edges(), None, pts, node_values, label, True, lo, hi)
