"""interp: finite-element interpolation over simplicial meshes.

Build a :class:`Mesh` (or :func:`triangulate` scattered points), wrap node
values in a :class:`Field`, and evaluate, differentiate, integrate, grid or
view it.

Examples
--------
>>> import numpy as np
>>> import interp
>>> pts = np.array([[0.0, 0.0], [1.0, 0.0], [0.0, 1.0], [1.0, 1.0]])
>>> f = interp.Field(interp.triangulate(pts), pts[:, 0] + 2 * pts[:, 1])
>>> f([[0.5, 0.25]]).round(12).tolist()
[1.0]
"""

from interp._contour import Contours, contour_levels, contours
from interp.clip import Pieces
from interp.errors import InterpError
from interp.field import Field
from interp.fit import fit
from interp.grid import Grid, to_grid
from interp.index import Location, locate
from interp.integrate import integrate, integrate_pieces, mean, measure, norm_l2, summarize
from interp.io import read, read_points, read_polygon, write
from interp.mesh import Mesh
from interp.overlay import Overlay, overlay
from interp.quadrature import quadrature
from interp.regions import Box, HalfSpace, Intersection, LevelSet, Polygon, Region
from interp.resample import Profile, profile, transfer
from interp.source import load
from interp.triangulate import triangulate
from interp.validate import crossvalidate, residual_summary
from interp.view import show, show_difference, show_profile, show_residuals
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
    "Profile",
    "Region",
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
    "overlay",
    "profile",
    "quadrature",
    "read",
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
]
__version__ = "0.1.0"
