"""interp: finite-element interpolation over simplicial meshes.

Build a :class:`Mesh` (or :func:`triangulate` scattered points), wrap node
values in a :class:`Field`, and evaluate, differentiate, integrate, grid or
view it.

Modules, in the one-way order of their imports (each imports only modules
above it in this list):

- :mod:`interp.errors`: ``InterpError`` and ``RenderingUnavailable``;
- :mod:`interp._arrays`: input coercion (points, numbers, lengths, dask arrays);
- :mod:`interp._geometry`: determinants, inverses, barycentric coordinates,
  measures, affine maps, and every tolerance;
- :mod:`interp.parallel`: the dask layer (imports no interp class: the core
  hands it objects and it calls their methods);
- :mod:`interp.basis`: P1/P2 shape functions;
- :mod:`interp.index`: the bucket grid and point location;
- :mod:`interp.mesh`: ``Mesh``, its affine maps and spatial gradients;
- :mod:`interp.polygon`: rings and point-in-polygon;
- :mod:`interp.io`: files (meshes, point tables, polygons, grids by suffix,
  atomic writes);
- :mod:`interp.field`: ``Field``;
- :mod:`interp.regions`: ``Polygon``, ``Box``, ``HalfSpace``, ``LevelSet``,
  ``Intersection``;
- :mod:`interp._quadrature`, :mod:`interp.clip`, :mod:`interp._integrate`:
  rules, exact clipping, integrals;
- :mod:`interp._overlay`, :mod:`interp.volume`, :mod:`interp.projection`:
  common refinement, cut and fill, L2 projection;
- :mod:`interp._triangulate`, :mod:`interp._fit`, :mod:`interp._validate`:
  Delaunay with masks, scattered data to fields, leave-one-out;
- :mod:`interp.grid`, :mod:`interp.resample`: regular grids, transfer and profiles;
- :mod:`interp.source`, :mod:`interp.view`, :mod:`interp.demo`, :mod:`interp.cli`:
  files as fields, pictures, the demo, the command line.

Examples
--------
>>> import numpy as np
>>> import interp
>>> pts = np.array([[0.0, 0.0], [1.0, 0.0], [0.0, 1.0], [1.0, 1.0]])
>>> f = interp.Field(interp.triangulate(pts), pts[:, 0] + 2 * pts[:, 1])
>>> f([[0.5, 0.25]]).round(12).tolist()
[1.0]
"""

from interp._breaklines import read_lines
from interp._contour import Contours, contour_levels, contours
from interp._fit import fit
from interp._integrate import integrate, integrate_pieces, mean, measure, norm_l2, summarize
from interp._overlay import Overlay, overlay
from interp._prepare import Prepared, prepare
from interp._quadrature import quadrature
from interp._triangulate import triangulate
from interp._validate import crossvalidate, residual_summary, write_residuals
from interp.clip import Pieces
from interp.errors import InterpError, RenderingUnavailable
from interp.field import Field
from interp.grid import Grid, open_zarr, to_grid
from interp.index import Location, locate
from interp.io import read, read_points, read_polygon, write
from interp.mesh import Mesh
from interp.regions import Box, HalfSpace, Intersection, LevelSet, Polygon, Region
from interp.resample import Profile, profile, transfer
from interp.source import load
from interp.view import (
    plot,
    plot_difference,
    plot_profile,
    plot_residuals,
    show,
    show_difference,
    show_profile,
    show_residuals,
)
from interp.volume import Volumes, volume_between

__all__ = [
    "Box",
    "Contours",
    "Field",
    "Grid",
    "HalfSpace",
    "InterpError",
    "Intersection",
    "LevelSet",
    "Location",
    "Mesh",
    "Overlay",
    "Pieces",
    "Polygon",
    "Prepared",
    "Profile",
    "Region",
    "RenderingUnavailable",
    "Volumes",
    "contour_levels",
    "contours",
    "crossvalidate",
    "fit",
    "integrate",
    "integrate_pieces",
    "load",
    "locate",
    "mean",
    "measure",
    "norm_l2",
    "open_zarr",
    "overlay",
    "plot",
    "plot_difference",
    "plot_profile",
    "plot_residuals",
    "prepare",
    "profile",
    "quadrature",
    "read",
    "read_lines",
    "read_points",
    "read_polygon",
    "residual_summary",
    "show",
    "show_difference",
    "show_profile",
    "show_residuals",
    "summarize",
    "to_grid",
    "transfer",
    "triangulate",
    "volume_between",
    "write",
    "write_residuals",
]
__version__ = "0.1.0"
