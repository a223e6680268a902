"""Overlay of two triangle meshes: their common refinement.

Every cell of mesh A is intersected with every cell of mesh B it overlaps;
each non-empty intersection is a convex polygon, split into triangles by a
fan from its first vertex.  On an overlay cell a P1 field of A and a P1 field
of B are both linear, so anything computed from the two together (a
difference of surfaces, a conservative transfer) is exact there.

Candidate pairs come from B's bucket grid (:attr:`interp.Mesh.index`): the
cells of B listed in the buckets that A's cell's bounding box covers.  Each
pair is intersected by Sutherland-Hodgman clipping, which is exact for two
convex polygons; everything is computed in B's scaled coordinates.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from interp._geometry import OVERLAY_SLIVER, simplex_geometry
from interp._kernels.clip import intersect
from interp.errors import InterpError
from interp.mesh import Mesh


@dataclass(frozen=True, eq=False)
class Overlay:
    """The common refinement of two triangle meshes.

    Attributes
    ----------
    mesh : Mesh
        P1 triangle mesh of the overlay cells; nodes with identical
        coordinates are shared, in lexicographic (x, y) order.
    parents : ndarray (s, 2) int64
        For each overlay cell, the cell of mesh A and the cell of mesh B that
        contain it.

    Examples
    --------
    >>> from interp import Mesh, overlay
    >>> a = Mesh([[0.0, 0], [2, 0], [2, 2], [0, 2]], [[0, 1, 2], [0, 2, 3]])
    >>> b = Mesh([[0.0, 0], [2, 0], [2, 2], [0, 2]], [[0, 1, 3], [1, 2, 3]])
    >>> ov = overlay(a, b)
    >>> ov.mesh.n_cells, float(ov.mesh.measure().sum())
    (4, 4.0)
    """

    mesh: Mesh
    parents: np.ndarray


def overlay(mesh_a: Mesh, mesh_b: Mesh) -> Overlay:
    """Intersect every cell of one triangle mesh with every cell of another.

    Parameters
    ----------
    mesh_a, mesh_b : Mesh
        2D triangle meshes (P1 or P2; only corners matter, cells are straight).

    Returns
    -------
    Overlay
        Cells tiling the intersection of the two meshes' domains, each inside
        one cell of A and one of B (``parents``).  Intersections thinner than
        round-off are dropped.

    Raises
    ------
    InterpError
        If a mesh is not a 2D triangle mesh, or the meshes do not overlap.

    Examples
    --------
    >>> from interp import Mesh, overlay
    >>> a = Mesh([[0.0, 0], [1, 0], [0, 1]], [[0, 1, 2]])
    >>> b = Mesh([[0.0, 0], [1, 0], [1, 1]], [[0, 1, 2]])
    >>> ov = overlay(a, b)
    >>> round(float(ov.mesh.measure().sum()), 12), ov.parents.tolist()
    (0.25, [[0, 0]])
    """
    corners, parents = overlay_cells(mesh_a, mesh_b)
    if len(corners) == 0:
        raise InterpError(
            "the two meshes do not overlap: their domains share no area "
            "(check that both use the same coordinate system)"
        )
    # nodes with identical coordinates merge: sort (x, y) pairs as complex numbers
    flat = np.ascontiguousarray(corners.reshape(-1, 2)).view(np.complex128).ravel()
    nodes, inverse = np.unique(flat, return_inverse=True)
    points = np.stack([nodes.real, nodes.imag], axis=1)
    return Overlay(Mesh(points, inverse.reshape(-1, 3)), parents)


def overlay_cells(mesh_a: Mesh, mesh_b: Mesh) -> tuple[np.ndarray, np.ndarray]:
    """The overlay's triangles (s, 3, 2) and their parents (s, 2); s may be 0.

    Examples
    --------
    >>> from interp import Mesh
    >>> a = Mesh([[0.0, 0], [1, 0], [0, 1]], [[0, 1, 2]])
    >>> overlay_cells(a, Mesh(a.points + 5.0, a.cells))[0].shape
    (0, 3, 2)
    """
    for name, m in (("mesh_a", mesh_a), ("mesh_b", mesh_b)):
        if not isinstance(m, Mesh) or m.dim != 2 or m.gdim != 2:
            what = f"{m.cell_type} cells in {m.gdim}D" if isinstance(m, Mesh) else "no mesh"
            raise InterpError(f"overlay needs two 2D triangle meshes; {name} has {what}")
    index = mesh_b.index
    centre, scale = mesh_b.frame
    a = (mesh_a.points[mesh_a.corners] - centre) / scale
    b = (mesh_b.points[mesh_b.corners] - centre) / scale
    tri, parents = intersect(
        np.ascontiguousarray(a),
        np.ascontiguousarray(b),
        index.lo,
        index.h,
        index.shape,
        index.start,
        index.members,
    )
    tri = tri * scale + centre
    if len(tri):
        area, size = simplex_geometry(tri)
        keep = area > OVERLAY_SLIVER * size**2
        tri, parents = tri[keep], parents[keep]
    return tri, parents
