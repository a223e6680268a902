"""A field: one value (or vector of values) per mesh node, interpolated by the
mesh's Lagrange basis (P1 on linear meshes, P2 on quadratic ones).
"""

from __future__ import annotations

import numpy as np

from interp import parallel
from interp._arrays import as_floats, as_points, is_dask
from interp._kernels.evaluate import combine
from interp.basis import shape, shape_dbary
from interp.errors import InterpError
from interp.index import Location
from interp.mesh import Mesh


class Field:
    """Node values on a mesh, evaluated with the P1 or P2 Lagrange basis.

    Parameters
    ----------
    mesh : Mesh
        The mesh carrying the values; its order selects P1 or P2.
    values : array_like, shape (n_nodes,) or (n_nodes, c)
        One value, or c components, per node.  NaN marks no data.
    name : str, optional
        Name of the quantity (used in outputs and pictures).
    units : str, optional
        Units of the values, for labels.

    Examples
    --------
    >>> import numpy as np
    >>> from interp import Field, Mesh
    >>> mesh = Mesh([[0.0, 0], [1, 0], [0, 1]], [[0, 1, 2]])
    >>> f = Field(mesh, [1.0, 3.0, 5.0], name="depth")
    >>> f([[0.5, 0.0], [2.0, 2.0]]).tolist()
    [2.0, nan]
    >>> f.gradient([[0.2, 0.2]]).tolist()
    [[2.0, 4.0]]
    """

    def __init__(
        self,
        mesh: Mesh,
        values: object,
        *,
        name: str | None = None,
        units: str | None = None,
    ) -> None:
        if not isinstance(mesh, Mesh):
            raise InterpError(f"a Field needs an interp.Mesh, not {type(mesh).__name__}")
        vals = as_floats(values, f"values must be numbers, one row per mesh node ({mesh.n_nodes})")
        if vals.ndim not in (1, 2) or vals.shape[0] != mesh.n_nodes:
            raise InterpError(
                f"values must have one row per mesh node: the mesh has {mesh.n_nodes} nodes, "
                f"the values have shape {vals.shape}"
            )
        vals = vals.copy()
        vals.flags.writeable = False
        self.mesh = mesh
        self.values = vals
        self.name = name
        self.units = units

    def __repr__(self) -> str:
        label = f"{self.name!r}, " if self.name else ""
        return f"Field({label}P{self.mesh.order} on {self.mesh!r}, {self.n_components} comp.)"

    @property
    def n_components(self) -> int:
        """Number of components per node (1 for a scalar field)."""
        return 1 if self.values.ndim == 1 else self.values.shape[1]

    def _locate(self, query: object) -> Location:
        return self.mesh.index.locate(as_points(query, "query points", gdim=self.mesh.gdim))

    def __call__(self, query: object, outside: float = np.nan) -> np.ndarray:
        """Evaluate the field at query points.

        Parameters
        ----------
        query : array_like (n, g)
            Points to evaluate at (rows with NaN are outside).
        outside : float
            Value returned for points outside the mesh (default NaN).

        Returns
        -------
        ndarray (n,) or (n, c)
            A lazy dask array when ``query`` is a dask array (chunked along
            rows): each chunk is evaluated with this code on the workers, the
            field being shipped once (see :mod:`interp.parallel`).
        """
        if is_dask(query):
            return parallel.evaluate(self, query, outside=outside)
        return self.evaluate(self._locate(query), outside)

    def evaluate(self, location: Location, outside: float = np.nan) -> np.ndarray:
        """Evaluate the field at points already located in its mesh.

        Several fields on one mesh can share one :meth:`Mesh.locate`.

        Examples
        --------
        >>> from interp import Field, Mesh
        >>> mesh = Mesh([[0.0, 0], [1, 0], [0, 1]], [[0, 1, 2]])
        >>> loc = mesh.locate([[0.5, 0.5]])
        >>> Field(mesh, [0.0, 2.0, 4.0]).evaluate(loc).tolist()
        [3.0]
        """
        weights = shape(self.mesh.dim, self.mesh.order, location.bary)
        values = self.values.reshape(self.mesh.n_nodes, -1)
        out = np.empty((location.cells.size, values.shape[1]))
        combine(weights, self.mesh.cells, location.cells, values, float(outside), out)
        return out.reshape(location.cells.shape + self.values.shape[1:])

    def gradient(self, query: object) -> np.ndarray:
        """Spatial gradient of the field at query points.

        Returns
        -------
        ndarray (n, g) or (n, g, c)
            NaN for points outside the mesh.

        Examples
        --------
        >>> from interp import Field, Mesh
        >>> f = Field(Mesh([0.0, 2.0], [[0, 1]]), [1.0, 5.0])
        >>> f.gradient([1.0]).tolist()
        [[2.0]]
        """
        if is_dask(query):
            return parallel.evaluate(self, query, what="gradient")
        loc = self._locate(query)
        inside = loc.inside
        g = self.mesh.gdim
        out = np.full((inside.size, g) + self.values.shape[1:], np.nan)
        cid = loc.cells[inside]
        dn = shape_dbary(self.mesh.dim, self.mesh.order, loc.bary[inside])
        dbary = np.einsum("pij,pi...->pj...", dn, self.values[self.mesh.cells[cid]])
        out[inside] = self.mesh.spatial_gradient(cid, dbary)
        return out

    def integrate(self, region: object | None = None) -> float | np.ndarray:
        """Integral of the field over its mesh, or over the part inside ``region``.

        Exact for the interpolated field; see :func:`interp.integrate`.

        Parameters
        ----------
        region : Region, optional
            Integrate over the part of the mesh inside it.

        Returns
        -------
        float, or ndarray (c,) for c components.

        Examples
        --------
        >>> from interp import Field, Mesh
        >>> Field(Mesh([0.0, 2.0], [[0, 1]]), [1.0, 5.0]).integrate()
        6.0
        """
        # The one import that points back up the layers, and a harmless one: it runs
        # when the method is called, never while either module loads, and
        # interp._integrate needs nothing of this method (tests/test_architecture.py
        # allows exactly this edge, and only as a function-local import).
        from interp._integrate import integrate

        return integrate(self, region=region)
