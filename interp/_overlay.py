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

import numba
import numpy as np

from interp._geometry import OVERLAY_SLIVER, simplex_geometry
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
    tri, parents = _intersect(
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


@numba.njit(cache=True, nogil=True)
def _ccw(t):  # pragma: no cover
    """Copy of triangle t (3, 2) in counter-clockwise order."""
    v = t.copy()
    if (v[1, 0] - v[0, 0]) * (v[2, 1] - v[0, 1]) < (v[1, 1] - v[0, 1]) * (v[2, 0] - v[0, 0]):
        v[1, :] = t[2]
        v[2, :] = t[1]
    return v


@numba.njit(cache=True, nogil=True)
def _clip_triangle(subject, v, poly, work):  # pragma: no cover
    """Sutherland-Hodgman: subject triangle clipped by the ccw triangle v; returns the count."""
    n = 3
    poly[:3] = subject
    for k in range(3):
        px, py = v[k, 0], v[k, 1]
        ex, ey = v[(k + 1) % 3, 0] - px, v[(k + 1) % 3, 1] - py
        m = 0
        for i in range(n):
            prev = i - 1 if i > 0 else n - 1
            sx, sy = poly[prev, 0], poly[prev, 1]
            qx, qy = poly[i, 0], poly[i, 1]
            ds = ex * (sy - py) - ey * (sx - px)
            dq = ex * (qy - py) - ey * (qx - px)
            if (ds >= 0.0) != (dq >= 0.0):
                w = ds / (ds - dq)
                work[m, 0], work[m, 1] = sx + w * (qx - sx), sy + w * (qy - sy)
                m += 1
            if dq >= 0.0:
                work[m, 0], work[m, 1] = qx, qy
                m += 1
        n = m
        poly[:n] = work[:n]
        if n < 3:
            return 0
    return n


@numba.njit(cache=True, nogil=True)
def _intersect(a, b, lo, h, shape, start, members):  # pragma: no cover
    """Fan triangles of every non-empty intersection of a cell of a with a cell of b."""
    nb = b.shape[0]
    box = np.empty((nb, 4))
    for c in range(nb):
        box[c, 0], box[c, 1] = b[c, :, 0].min(), b[c, :, 0].max()
        box[c, 2], box[c, 3] = b[c, :, 1].min(), b[c, :, 1].max()
    stamp = np.full(nb, -1, dtype=np.int64)
    poly = np.empty((32, 2))
    work = np.empty((32, 2))
    out = np.empty((4 * a.shape[0] + 16, 3, 2))
    par = np.empty((out.shape[0], 2), dtype=np.int64)
    n = 0
    for c in range(a.shape[0]):
        u = _ccw(a[c])
        x0, x1 = u[:, 0].min(), u[:, 0].max()
        y0, y1 = u[:, 1].min(), u[:, 1].max()
        i0 = int(max(np.floor((x0 - lo[0]) / h[0]), 0.0))
        i1 = int(min(np.floor((x1 - lo[0]) / h[0]), shape[0] - 1.0))
        j0 = int(max(np.floor((y0 - lo[1]) / h[1]), 0.0))
        j1 = int(min(np.floor((y1 - lo[1]) / h[1]), shape[1] - 1.0))
        for i in range(i0, i1 + 1):
            for j in range(j0, j1 + 1):
                bucket = i * shape[1] + j
                for q in range(start[bucket], start[bucket + 1]):
                    d = members[q]
                    if stamp[d] == c:
                        continue
                    stamp[d] = c
                    if box[d, 0] > x1 or box[d, 1] < x0 or box[d, 2] > y1 or box[d, 3] < y0:
                        continue
                    k = _clip_triangle(u, _ccw(b[d]), poly, work)
                    if k < 3:
                        continue
                    if n + k - 2 > out.shape[0]:
                        grown = np.empty((2 * out.shape[0] + k, 3, 2))
                        grown[:n] = out[:n]
                        out = grown
                        grown_par = np.empty((grown.shape[0], 2), dtype=np.int64)
                        grown_par[:n] = par[:n]
                        par = grown_par
                    for f in range(1, k - 1):
                        out[n, 0], out[n, 1], out[n, 2] = poly[0], poly[f], poly[f + 1]
                        par[n, 0], par[n, 1] = c, d
                        n += 1
    return out[:n], par[:n]
