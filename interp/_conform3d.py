"""Face-to-face 3D Delaunay triangulations where points are cospherical (lattices).

Where more than four points lie on one empty sphere, as the eight corners of
each cube of a lattice do, the Delaunay cell is a polytope and any
triangulation of it is Delaunay.  Qhull triangulates each such cell on its own
and bridges the faces that two cells split differently with zero-volume
tetrahedra; once those are dropped the mesh is no longer face-to-face and a P1
field jumps across the faces.  :func:`conform` triangulates every such cell
again by a pulling triangulation in the global vertex order: the lowest vertex
of the cell is coned to each boundary facet not containing it, and each facet
is fanned from its own lowest vertex.  A face's split then depends on the face
and the vertex order alone, so both cells that share it agree (the pulling
triangulations of a polyhedral complex form a triangulation of it: De Loera,
Rambau, Santos, "Triangulations", 2010, from memory).
"""

from __future__ import annotations

import warnings

import numpy as np

from interp._geometry import DEGENERATE, FLAT_MARGIN, is_flat, simplex_geometry
from interp._kernels import conform3d as kernels


def conform(
    points: np.ndarray,
    x: np.ndarray,
    cells: np.ndarray,
    vol: np.ndarray,
    size: np.ndarray,
    neighbors: np.ndarray,
    planes: np.ndarray,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Triangulate again, face to face, the Delaunay cells of cospherical points.

    Parameters
    ----------
    points : ndarray (n, 3)
        The coordinates the exact predicates decide on (the caller's own).
    x : ndarray (n, 3)
        The same points as measured: ``vol`` and ``size`` are
        :func:`~interp.mesh.simplex_geometry` of ``x[cells]``, and so are those
        of the new cells.
    cells, neighbors : ndarray (m, 4) int64
        Qhull's tetrahedra and, for each, the tetrahedron across the face
        opposite each vertex (-1 on the hull).
    vol, size : ndarray (m,)
    planes : ndarray (m, 5)
        The hyperplane of the lifted lower-hull facet each tetrahedron comes
        from (scipy's ``Delaunay.equations``): equal rows mark the pieces of
        one Delaunay cell as Qhull merged it.

    Returns
    -------
    cells, vol, size
        Unchanged when no tetrahedron is flat (points in general position).
        Otherwise the tetrahedra of every Delaunay cell with more than four
        vertices are replaced by the cell's pulling triangulation; flat
        tetrahedra stay, for the caller to drop and report.

    Examples
    --------
    A 2 x 2 x 2 block of cubes, on which Qhull emits flat tetrahedra:

    >>> import itertools
    >>> from scipy.spatial import Delaunay
    >>> p = np.array(list(itertools.product([0.0, 1, 2], repeat=3)))
    >>> tri = Delaunay(p)
    >>> cells = tri.simplices.astype(np.int64)
    >>> vol, size = simplex_geometry(p[cells])
    >>> nbr = tri.neighbors.astype(np.int64)
    >>> c, v, s = conform(p, p, cells, vol, size, nbr, tri.equations)
    >>> int((~is_flat(v, s, 3)).sum()), float(v.sum())
    (48, 8.0)
    """
    flat = is_flat(vol, size, 3)
    if not flat.any():
        return cells, vol, size
    root, across = kernels.clusters(cells, flat, neighbors, planes)
    count = np.bincount(root[~flat], minlength=len(cells))
    grouped = np.flatnonzero(~flat & (count[np.maximum(root, 0)] > 1))
    members = grouped[np.argsort(root[grouped], kind="stable")]
    first = np.flatnonzero(np.diff(root[members], prepend=-1))
    starts = np.append(first, members.size)
    # a cluster that cannot be pulled keeps its cells; its neighbours then keep
    # the triangles they face it with, so they are pulled again knowing it
    pulled = np.zeros(len(cells), dtype=bool)
    pulled[members[first]] = True
    while True:
        new, done = kernels.pulling(
            points, cells, across, members, starts, pulled, FLAT_MARGIN * DEGENERATE
        )
        failed = first[~done & pulled[members[first]]]
        if failed.size == 0:
            break
        pulled[members[failed]] = False
    keep = np.ones(len(cells), dtype=bool)
    keep[members[np.repeat(done, np.diff(starts))]] = False
    _report_seams(keep & ~flat, neighbors, flat, across)
    new_vol, new_size = simplex_geometry(x[new])
    return (
        np.concatenate([cells[keep], new]),
        np.concatenate([vol[keep], new_vol]),
        np.concatenate([size[keep], new_size]),
    )


def _report_seams(
    kept: np.ndarray, neighbors: np.ndarray, flat: np.ndarray, across: np.ndarray
) -> None:
    """Warn when a cell Qhull gave stays next to a flat cell inside the mesh: the
    faces on either side of the flat cell may be split differently, and a P1
    field jumps across them."""
    seam = kept[:, None] & flat[np.maximum(neighbors, 0)] & (neighbors >= 0) & (across >= 0)
    if seam.any():
        warnings.warn(
            f"{int(seam.sum())} face(s) inside the mesh may belong to one cell only, next "
            f"to cells too flat to keep, so a field may jump across them: the points are "
            f"nearly but not exactly cospherical (a lattice turned or rounded) or nearly "
            f"coplanar; snap them to an exact lattice or spread them",
            stacklevel=4,
        )
