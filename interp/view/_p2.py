"""Cells as pyvista data: quadratic (P2) triangles subdivided so that the
surface shows their curvature, boundary faces and volumes of tetrahedra.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from interp.basis import EDGES, lattice, shape
from interp.errors import InterpError
from interp.mesh import Mesh

if TYPE_CHECKING:
    import pyvista


#: sub-triangles per edge when drawing a quadratic (P2) cell.
P2_SUBDIVISION = 6


#: upper bound on the sub-triangles drawn for a quadratic surface (fewer per cell if needed).
MAX_SUBCELLS = 4_000_000


SCALARS = "values"
#: corner triples of the four faces of a tetrahedron (face i is opposite corner i).
TET_FACES = ((1, 2, 3), (0, 3, 2), (0, 1, 3), (0, 2, 1))


def subdivide(
    pts: np.ndarray, cells: np.ndarray, vals: np.ndarray | None, order: int
) -> tuple[pyvista.PolyData, pyvista.PolyData]:
    """Surface of triangle cells (3 or 6 nodes), each split into sub-triangles with the
    field evaluated at the sub-nodes by the cell's basis, and the cells' boundaries."""
    import pyvista as pv

    if vals is not None:
        cells = cells[np.isfinite(vals[cells]).all(axis=1)]
        if len(cells) == 0:
            raise InterpError(
                "no cell has values at all its nodes (the field is NaN everywhere): nothing to draw"
            )
    m = len(cells)
    s = 1 if order == 1 else max(2, min(P2_SUBDIVISION, int(np.sqrt(MAX_SUBCELLS / m))))
    bary, tris, loop = lattice(s)
    xyz = np.einsum("sk,mkd->msd", bary, pts[cells[:, :3]]).reshape(-1, 3)
    first = np.arange(m, dtype=np.int64)[:, None] * len(bary)
    surface = pv.PolyData.from_regular_faces(xyz, (tris[None] + first[:, :, None]).reshape(-1, 3))
    lines = np.hstack([np.full((m, 1), loop.size), loop[None] + first])
    outline = pv.PolyData(xyz, lines=lines.ravel())
    if vals is not None:
        sub = (vals[cells] @ shape(2, order, bary).T).reshape(-1)
        surface.point_data[SCALARS] = sub
        outline.point_data[SCALARS] = sub
    return surface.clean(tolerance=1e-9, absolute=False), outline


def outer_faces(mesh: Mesh) -> np.ndarray:
    """Boundary faces of a tetrahedral mesh as triangles (3 nodes) or P2 triangles (6)."""
    faces = np.array(TET_FACES)
    corner = mesh.corners[:, faces].reshape(-1, 3)
    _, inverse, counts = np.unique(
        np.sort(corner, axis=1), axis=0, return_inverse=True, return_counts=True
    )
    outer = counts[inverse.reshape(-1)] == 1
    if mesh.order == 1:
        return corner[outer]
    node = {frozenset(e): 4 + k for k, e in enumerate(EDGES[3])}
    mids = [[node[frozenset((f[a], f[(a + 1) % 3]))] for a in range(3)] for f in TET_FACES]
    local = np.hstack([faces, np.array(mids)])
    return mesh.cells[:, local].reshape(-1, 6)[outer]


def tetra_grid(mesh: Mesh, pts: np.ndarray, vals: np.ndarray | None) -> pyvista.UnstructuredGrid:
    import pyvista as pv

    kind = pv.CellType.TETRA if mesh.order == 1 else pv.CellType.QUADRATIC_TETRA
    grid = pv.UnstructuredGrid({kind: np.asarray(mesh.cells)}, pts)
    if vals is not None:
        grid.point_data[SCALARS] = vals
    return grid
