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

from interp.errors import InterpError
from interp.field import Field
from interp.index import Location, locate
from interp.mesh import Mesh
from interp.triangulate import triangulate

__all__ = ["Field", "InterpError", "Location", "Mesh", "locate", "triangulate"]
__version__ = "0.1.0"
