"""The simplicial mesh: points, cells and what can be derived from them.

A :class:`Mesh` holds node coordinates ``points`` (n, g) and cell
connectivity ``cells`` (m, k).  The cell kind follows from k and g: lines
have 2 (P1) or 3 (P2) nodes, triangles 3 or 6, tetrahedra 4 or 10.  Node
order inside a cell is meshio's (the VTK convention): corners first, then
edge midpoints in the order of :data:`interp.basis.EDGES`.

A mesh is immutable after construction; its spatial index is built on the
first :meth:`Mesh.locate` and cached.
"""

from __future__ import annotations

from functools import cached_property
from math import comb

import numpy as np

from interp import parallel
from interp._arrays import as_points, check_finite, is_dask
from interp._geometry import box_frame, check_fills_space, is_flat, simplex_geometry
from interp._kernels.geometry import affine_maps, bad_cells
from interp.basis import EDGES
from interp.errors import InterpError
from interp.index import CellIndex, Location, in_parts, locate, threads

#: meshio cell type names by (topological dimension, order).
CELL_TYPES = {
    (1, 1): "line",
    (1, 2): "line3",
    (2, 1): "triangle",
    (2, 2): "triangle6",
    (3, 1): "tetra",
    (3, 2): "tetra10",
}
_KIND = {name: key for key, name in CELL_TYPES.items()}


class Mesh:
    """A mesh of simplices (lines, triangles or tetrahedra), linear or quadratic.

    Parameters
    ----------
    points : array_like, shape (n, g)
        Node coordinates, g in 1, 2, 3.  A 1-D array is n points on a line.
    cells : array_like of int, shape (m, k)
        Node indices of each cell, corners first then edge midpoints
        (meshio / VTK order).
    cell_type : str, optional
        meshio name of the cell kind (``"line"``, ``"line3"``, ``"triangle"``,
        ``"triangle6"``, ``"tetra"``, ``"tetra10"``).  Needed only where k is
        ambiguous: k == 3 means ``"line3"`` in 1D and ``"triangle"`` otherwise.

    Attributes
    ----------
    points : ndarray (n, g) float64, read-only
    cells : ndarray (m, k) int64, read-only
    dim : int
        Topological dimension t of the cells (1, 2 or 3), t <= gdim.
    gdim : int
        Number of coordinates per point.
    order : int
        1 for linear (P1) cells, 2 for quadratic (P2) cells.

    Quadratic cells are straight-sided: every midpoint node must lie at the
    middle of its edge (curved, isoparametric cells are refused).

    Examples
    --------
    >>> import numpy as np
    >>> from interp import Mesh
    >>> m = Mesh([[0.0, 0.0], [1.0, 0.0], [0.0, 1.0], [1.0, 1.0]], [[0, 1, 2], [1, 3, 2]])
    >>> m.dim, m.gdim, m.order, m.n_cells
    (2, 2, 1, 2)
    >>> m.measure().tolist()
    [0.5, 0.5]
    """

    def __init__(self, points: object, cells: object, *, cell_type: str | None = None) -> None:
        pts = as_points(points).copy()  # the mesh owns its nodes; the caller's array stays as is
        check_finite(pts)
        try:
            cel = np.asarray(cells)
        except (TypeError, ValueError) as exc:
            raise InterpError(f"cells must be an (m, k) array of node indices: {exc}") from None
        if cel.ndim != 2 or cel.shape[0] == 0:
            raise InterpError(
                f"cells must be a non-empty (m, k) array of node indices; got shape {cel.shape}"
            )
        if not np.issubdtype(cel.dtype, np.integer):
            if not np.issubdtype(cel.dtype, np.floating) or np.any(cel != np.round(cel)):
                raise InterpError("cells must hold integer node indices")
        cel = cel.astype(np.int64)
        g, k = pts.shape[1], cel.shape[1]
        self._dim, self._order = _infer_kind(k, g, cell_type)
        if self._dim > g:
            raise InterpError(
                f"{CELL_TYPES[self._dim, self._order]} cells need at least {self._dim} "
                f"coordinates per point; the points are {g}D"
            )
        _check_indices(cel, pts.shape[0])
        pts.flags.writeable = False
        cel = np.ascontiguousarray(cel)
        cel.flags.writeable = False
        self._points, self._cells = pts, cel
        _check_measure(self)
        if self._order == 2:
            _check_midpoints(self)

    @classmethod
    def _checked(
        cls, points: np.ndarray, cells: np.ndarray, geometry: tuple[np.ndarray, np.ndarray]
    ) -> Mesh:
        """A P1 mesh of arrays its caller has checked, with their cell geometry.

        ``points`` are finite (n, g) float64 that the mesh owns from now on,
        ``cells`` (m, g + 1) int64 of distinct in-range nodes, and ``geometry``
        what :func:`simplex_geometry` gives for them, every measure positive.
        """
        mesh = cls.__new__(cls)
        mesh._dim, mesh._order = points.shape[1], 1
        cells = np.ascontiguousarray(cells)
        points.flags.writeable = False
        cells.flags.writeable = False
        mesh._points, mesh._cells = points, cells
        mesh.__dict__["_geometry"] = geometry  # the cached property, already known
        return mesh

    def __repr__(self) -> str:
        return (
            f"Mesh({self.n_nodes} nodes, {self.n_cells} {self.cell_type} cells, "
            f"{self.gdim}D, bounds {self.bounds.tolist()})"
        )

    @property
    def points(self) -> np.ndarray:
        """Node coordinates, (n, g) float64, read-only."""
        return self._points

    @property
    def cells(self) -> np.ndarray:
        """Cell connectivity, (m, k) int64, read-only."""
        return self._cells

    @property
    def dim(self) -> int:
        """Topological dimension of the cells."""
        return self._dim

    @property
    def gdim(self) -> int:
        """Geometric dimension: coordinates per point."""
        return self._points.shape[1]

    @property
    def order(self) -> int:
        """Polynomial order of the cells: 1 (P1) or 2 (P2)."""
        return self._order

    @property
    def cell_type(self) -> str:
        """meshio name of the cell kind, e.g. ``"triangle6"``."""
        return CELL_TYPES[self._dim, self._order]

    @property
    def n_nodes(self) -> int:
        """Number of nodes (points)."""
        return self._points.shape[0]

    @property
    def n_cells(self) -> int:
        """Number of cells."""
        return self._cells.shape[0]

    @cached_property
    def corners(self) -> np.ndarray:
        """Corner node indices of each cell, (m, dim + 1), C-contiguous and read-only.

        One memory layout for P1 and P2 meshes alike, so a compiled kernel
        reading the corners needs one specialisation.
        """
        if self._cells.shape[1] == self._dim + 1:
            return self._cells
        corners = np.ascontiguousarray(self._cells[:, : self._dim + 1])
        corners.flags.writeable = False
        return corners

    @cached_property
    def bounds(self) -> np.ndarray:
        """Bounding box of the nodes used by cells, (2, g): row 0 minima, row 1 maxima."""
        used = self._points[np.bincount(self._cells.ravel(), minlength=self.n_nodes) > 0]
        return np.array([used.min(axis=0), used.max(axis=0)])

    def measure(self) -> np.ndarray:
        """Length, area or volume of each cell, (m,) float64.

        Embedded cells (a triangle in 3D, a line in 2D) get their own measure.

        Examples
        --------
        >>> Mesh([[0.0, 0, 0], [1, 0, 0], [0, 1, 0]], [[0, 1, 2]]).measure().tolist()
        [0.5]
        """
        return self._cell_measure.copy()

    @cached_property
    def _cell_measure(self) -> np.ndarray:
        return self._geometry[0]

    @cached_property
    def _geometry(self) -> tuple[np.ndarray, np.ndarray]:
        return simplex_geometry(self._points[self.corners])

    def quality(self) -> np.ndarray:
        """Radius ratio of each cell, t r_in / r_circ: 1 for a regular simplex, 0 if flat.

        Examples
        --------
        >>> m = Mesh([[0.0, 0], [1, 0], [0.5, 0.75**0.5]], [[0, 1, 2]])
        >>> round(float(m.quality()[0]), 12)
        1.0
        """
        t = self._dim
        corners = self._points[self.corners]
        if t == 1:
            return np.ones(self.n_cells)
        edges = corners[:, 1:] - corners[:, :1]
        gram = np.einsum("mig,mjg->mij", edges, edges)
        w = np.linalg.solve(gram, 0.5 * np.einsum("mii->mi", gram)[..., None])[..., 0]
        r_circ = np.linalg.norm(np.einsum("mi,mig->mg", w, edges), axis=1)
        facets = sum(simplex_geometry(np.delete(corners, i, axis=1))[0] for i in range(t + 1))
        r_in = t * self._cell_measure / facets
        return t * r_in / r_circ

    def angles(self) -> np.ndarray:
        """Interior angles of triangle cells in degrees, (m, 3); angle i at corner i.

        Examples
        --------
        >>> Mesh([[0.0, 0], [1, 0], [0, 1]], [[0, 1, 2]]).angles().round(6).tolist()
        [[90.0, 45.0, 45.0]]
        """
        if self._dim != 2:
            raise InterpError(f"angles are defined for triangle cells, not {self.cell_type}")
        c = self._points[self.corners]
        a = c[:, [1, 2, 0]] - c
        b = c[:, [2, 0, 1]] - c
        cos = np.einsum("mig,mig->mi", a, b) / (
            np.linalg.norm(a, axis=2) * np.linalg.norm(b, axis=2)
        )
        return np.degrees(np.arccos(np.clip(cos, -1.0, 1.0)))

    def edges(self) -> tuple[np.ndarray, np.ndarray]:
        """Unique edges between corner nodes and the edges of each cell.

        Returns
        -------
        edges : ndarray (e, 2) int64
            Node pairs, smaller index first, sorted.
        cell_edges : ndarray (m, n_local) int64
            For each cell, the row in ``edges`` of its local edges in the order
            of :data:`interp.basis.EDGES`.

        Examples
        --------
        >>> m = Mesh([[0.0, 0], [1, 0], [0, 1], [1, 1]], [[0, 1, 2], [1, 3, 2]])
        >>> m.edges()[0].tolist()
        [[0, 1], [0, 2], [1, 2], [1, 3], [2, 3]]
        """
        return self._edges

    @cached_property
    def _edges(self) -> tuple[np.ndarray, np.ndarray]:
        # one int64 key a * n + b per edge (a < b) sorts like the pair (a, b) and is
        # far faster to make unique than rows of a 2-column array
        n = self.n_nodes
        pairs = self.corners[:, np.array(EDGES[self._dim])]
        keys = pairs.min(axis=2) * n + pairs.max(axis=2)
        uniq, inverse = np.unique(keys, return_inverse=True)
        return np.column_stack(np.divmod(uniq, n)), inverse.reshape(keys.shape)

    def elevate(self) -> Mesh:
        """Return the quadratic (P2) mesh with one shared midpoint node per edge.

        New nodes are appended after the existing ones, so a P1 node keeps its
        index.  A quadratic mesh is returned unchanged.

        Examples
        --------
        >>> m = Mesh([[0.0, 0], [1, 0], [0, 1]], [[0, 1, 2]]).elevate()
        >>> m.cell_type, m.n_nodes
        ('triangle6', 6)
        """
        if self._order == 2:
            return self
        edges, cell_edges = self.edges()
        mid = 0.5 * (self._points[edges[:, 0]] + self._points[edges[:, 1]])
        points = np.vstack([self._points, mid])
        cells = np.hstack([self._cells, cell_edges + self.n_nodes])
        return Mesh(points, cells, cell_type=CELL_TYPES[self._dim, 2])

    def linear(self) -> Mesh:
        """Return the P1 mesh of the corners (midpoint nodes kept but unused).

        Examples
        --------
        >>> Mesh([[0.0, 0], [1, 0], [0, 1]], [[0, 1, 2]]).elevate().linear().cell_type
        'triangle'
        """
        if self._order == 1:
            return self
        return Mesh(self._points, self.corners, cell_type=CELL_TYPES[self._dim, 1])

    @cached_property
    def frame(self) -> tuple[np.ndarray, float]:
        """Centre and scale of the bounding box: ``(x - centre) / scale`` lies in [-1, 1].

        Examples
        --------
        >>> Mesh([[0.0, 0], [4, 0], [0, 2]], [[0, 1, 2]]).frame
        (array([2., 1.]), 2.0)
        """
        return box_frame(*self.bounds)

    @cached_property
    def affine(self) -> np.ndarray:
        """Affine maps of the cells to barycentric coordinates, (m, g + 1, g), in the
        centred, scaled coordinates of :attr:`frame`: for ``y = (x - centre) / scale``,
        ``bary[1:] = y @ affine[c, :g] + affine[c, g]`` (one block of memory per cell).

        Read by point location and :meth:`spatial_gradient`; needs cells that fill
        their space.

        Examples
        --------
        >>> Mesh([0.0, 2.0], [[0, 1]]).affine.tolist()
        [[[0.5], [0.5]]]
        """
        check_fills_space(self._dim, self.gdim, self.cell_type, "point location")
        g = self.gdim
        centre, scale = self.frame
        scaled = (self._points - centre) / scale
        out = np.empty((self.n_cells, g + 1, g))
        corners = self.corners
        in_parts(
            self.n_cells,
            threads(self.n_cells, self.n_cells),
            lambda c0, c1: affine_maps(scaled, corners, out, c0, c1),
        )
        return out

    def spatial_gradient(self, cells: np.ndarray, dbary: np.ndarray) -> np.ndarray:
        """Spatial gradient, (n, g) or (n, g, c), of a field in ``cells`` given its
        derivatives ``dbary``, (n, dim + 1) or (n, dim + 1, c), with respect to each
        barycentric coordinate there.

        The chain rule: as the coordinates sum to one, the gradient is the sum over
        b >= 1 of (dbary[b] - dbary[0]) times the gradient of coordinate b, which
        the cell's affine map holds; in the mesh's own coordinates.

        Examples
        --------
        >>> m = Mesh([[0.0, 0], [1, 0], [0, 1]], [[0, 1, 2]])
        >>> m.spatial_gradient(np.array([0]), np.array([[0.0, 2.0, 4.0]])).tolist()
        [[2.0, 4.0]]
        """
        g = self.gdim
        rise = dbary[:, 1:] - dbary[:, :1]
        return np.einsum("pab,pb...->pa...", self.affine[cells, :g], rise) / self.frame[1]

    @cached_property
    def index(self) -> CellIndex:
        """The spatial index over the cells, built on first use and cached."""
        return CellIndex(self)

    def locate(self, query: object) -> Location:
        """Find the cell containing each query point and its barycentric coordinates.

        Works on any mesh whose cells fill their space (dim == gdim): convex or
        not, with holes, Delaunay or not.  See :func:`interp.index.locate`.

        Examples
        --------
        >>> m = Mesh([[0.0, 0], [1, 0], [0, 1]], [[0, 1, 2]])
        >>> loc = m.locate([[0.25, 0.25], [2.0, 2.0]])
        >>> loc.cells.tolist()
        [0, -1]
        >>> loc.bary[0].tolist()
        [0.5, 0.25, 0.25]
        """
        return parallel.locate(self, query) if is_dask(query) else locate(self, query)


def _infer_kind(k: int, g: int, cell_type: str | None) -> tuple[int, int]:
    if cell_type is not None:
        if cell_type not in _KIND:
            raise InterpError(
                f"cell type {cell_type!r} is not a simplex; only simplices are supported: "
                f"{', '.join(_KIND)}"
            )
        dim, order = _KIND[cell_type]
        expected = comb(dim + 1, 1) if order == 1 else comb(dim + 2, 2)
        if k != expected:
            raise InterpError(f"{cell_type} cells have {expected} nodes; cells have {k} columns")
        return dim, order
    by_k = {2: (1, 1), 4: (3, 1), 6: (2, 2), 10: (3, 2)}
    if k == 3:
        return (1, 2) if g == 1 else (2, 1)
    if k == 4 and g < 3:
        raise InterpError(
            f"cells with 4 nodes in {g}D look like quadrilaterals; only simplices are supported "
            "(split each quadrilateral into two triangles)"
        )
    if k not in by_k:
        raise InterpError(
            f"cells with {k} nodes are not simplices; supported: 2/3 (lines), 3/6 (triangles), "
            "4/10 (tetrahedra)"
        )
    return by_k[k]


def _check_indices(cells: np.ndarray, n: int) -> None:
    out_of_range, repeated = bad_cells(cells, n)
    if out_of_range.size:
        row = int(out_of_range[0])
        raise InterpError(
            f"cells refer to nodes outside 0..{n - 1}: {out_of_range.size} cell(s), "
            f"the first is cell {row + 1} (counting from 1), nodes {cells[row].tolist()} as given"
        )
    if repeated.size:
        row = int(repeated[0])
        raise InterpError(
            f"{repeated.size} cell(s) repeat a node, the first is cell {row + 1} (counting from "
            f"1), nodes {cells[row].tolist()} as given; each cell needs distinct nodes"
        )


def _check_measure(mesh: Mesh) -> None:
    vol, size = mesh._geometry
    bad = is_flat(vol, size, mesh.dim)
    if bad.any():
        idx = np.flatnonzero(bad)
        raise InterpError(
            f"{idx.size} cell(s) have zero {('length', 'area', 'volume')[mesh.dim - 1]}: "
            f"{_first_cells(idx)}; remove degenerate cells"
        )


def _check_midpoints(mesh: Mesh) -> None:
    local = np.array(EDGES[mesh.dim])
    corners = mesh.points[mesh.corners]
    expected = 0.5 * (corners[:, local[:, 0]] + corners[:, local[:, 1]])
    actual = mesh.points[mesh.cells[:, mesh.dim + 1 :]]
    size = np.ptp(corners, axis=1).max(axis=1)
    off = np.abs(actual - expected).max(axis=(1, 2)) > 1e-8 * size
    if off.any():
        idx = np.flatnonzero(off)
        raise InterpError(
            f"{idx.size} quadratic cell(s) have midpoint nodes away from their edge midpoints: "
            f"{_first_cells(idx)}; curved cells are not supported"
        )


def _first_cells(rows: np.ndarray, shown: int = 5) -> str:
    """Up to ``shown`` cell rows named counting from 1, as messages give them."""
    more = ", ..." if len(rows) > shown else ""
    listed = ", ".join(str(r + 1) for r in rows[:shown])
    return f"cell{'s' * (len(rows) > 1)} {listed}{more} (counting from 1)"
