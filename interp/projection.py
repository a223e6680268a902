"""Conservative transfer: the L2 projection of a field onto another mesh.

On the overlay of the source and target meshes (their common refinement)
both the source field and the target's basis functions are polynomials on
every overlay cell, so the load vector b_i = integral of f phi_i is computed
exactly with a rule of degree (source order + target order).  The target's
mass matrix M is assembled exactly per target cell, and u solves M u = b.
Because the target basis sums to one, the integral of u equals the integral
of f over the common domain.
"""

from __future__ import annotations

import numpy as np
from scipy.sparse import coo_matrix
from scipy.sparse.linalg import spsolve

from interp._geometry import barycentric, simplex_geometry
from interp._overlay import overlay_cells
from interp._quadrature import quadrature
from interp.basis import shape
from interp.clip import evaluate_at
from interp.errors import InterpError
from interp.field import Field
from interp.mesh import Mesh


def project(field: Field, target: Mesh) -> Field:
    """L2 projection of a 2D field onto the P1 or P2 space of a target mesh.

    The source counts as zero outside its own domain, so target nodes whose
    basis functions reach beyond it get values pulled towards zero there;
    the integral over the common domain is preserved to round-off.  Target
    nodes used by no cell are NaN.

    Examples
    --------
    >>> import numpy as np
    >>> from interp import Field, triangulate
    >>> src = triangulate(np.array([[0.0, 0], [1, 0], [0, 1], [1, 1]]))
    >>> dst = triangulate(np.array([[0.0, 0], [1, 0], [0, 1], [1, 1], [0.4, 0.6]]))
    >>> f = Field(src, [0.0, 1.0, 1.0, 2.0])
    >>> round(float(project(f, dst).integrate()), 12), round(float(f.integrate()), 12)
    (1.0, 1.0)
    """
    src = field.mesh
    if src.gdim != 2 or src.dim != 2 or target.dim != 2:
        raise InterpError(
            "conservative transfer needs 2D triangle meshes; use nodal transfer "
            f"(conservative=False) for {src.cell_type} to {target.cell_type}"
        )
    missing = int(np.isnan(field.values.reshape(src.n_nodes, -1)).any(axis=1).sum())
    if missing:
        raise InterpError(
            f"the field has {missing} node(s) without data (NaN); fill them before a "
            "conservative transfer"
        )
    corners, parents = overlay_cells(src, target)
    bary_q, weights = quadrature("triangle", src.order + target.order)
    x = np.einsum("qa,pag->pqg", bary_q, corners)
    src_bary = barycentric(src.points[src.corners[parents[:, 0]]], x)
    tgt_bary = barycentric(target.points[target.corners[parents[:, 1]]], x)
    values = evaluate_at(field, parents[:, 0], src_bary)
    phi = shape(2, target.order, tgt_bary.reshape(-1, 3)).reshape(x.shape[:2] + (-1,))
    wq = weights * simplex_geometry(corners)[0][:, None]
    load = np.einsum("pq,pqi,pq...->pi...", wq, phi, values)
    n = target.n_nodes
    rhs = np.zeros((n,) + field.values.shape[1:])
    np.add.at(rhs, target.cells[parents[:, 1]], load)
    mass = _mass_matrix(target)
    used = np.bincount(target.cells.ravel(), minlength=n) > 0
    out = np.full_like(rhs, np.nan)
    sub = mass[used][:, used].tocsc()
    out[used] = spsolve(sub, rhs[used]).reshape(rhs[used].shape)
    return Field(target, out, name=field.name, units=field.units)


def _mass_matrix(mesh: Mesh):
    """The exact P1/P2 mass matrix of a triangle mesh, sparse (n, n)."""
    bary, weights = quadrature("triangle", 2 * mesh.order)
    phi = shape(2, mesh.order, bary)
    local = np.einsum("q,qi,qj->ij", weights, phi, phi)
    area = mesh.measure()
    k = mesh.cells.shape[1]
    rows = np.repeat(mesh.cells, k, axis=1).ravel()
    cols = np.tile(mesh.cells, (1, k)).ravel()
    vals = (area[:, None, None] * local[None]).ravel()
    return coo_matrix((vals, (rows, cols)), shape=(mesh.n_nodes, mesh.n_nodes)).tocsr()
