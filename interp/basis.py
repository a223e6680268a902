"""Lagrange shape functions on simplices, in barycentric form.

On a simplex with barycentric coordinates L_0 .. L_t the linear (P1) basis is
N_i = L_i, and the quadratic (P2) basis is

* corner i: N_i = L_i (2 L_i - 1)
* edge (a, b): N = 4 L_a L_b

with edges in meshio / VTK order (:data:`EDGES`).  Derivatives are taken with
respect to each L_j as if independent; the chain rule with the gradients of
the barycentric coordinates (which sum to zero) gives the spatial gradient
(:meth:`interp.index.CellIndex.spatial_gradient`).
"""

from __future__ import annotations

import numpy as np

#: local corner pairs of the edge-midpoint nodes, per topological dimension.
EDGES = {
    1: ((0, 1),),
    2: ((0, 1), (1, 2), (2, 0)),
    3: ((0, 1), (1, 2), (0, 2), (0, 3), (1, 3), (2, 3)),
}


def n_basis(dim: int, order: int) -> int:
    """Number of Lagrange nodes of a simplex of dimension ``dim`` and ``order``.

    Examples
    --------
    >>> n_basis(2, 2), n_basis(3, 2)
    (6, 10)
    """
    return dim + 1 + (len(EDGES[dim]) if order == 2 else 0)


def shape(dim: int, order: int, bary: np.ndarray) -> np.ndarray:
    """Values of the basis functions at barycentric points.

    Parameters
    ----------
    dim, order : int
        Topological dimension (1-3) and order (1 or 2).
    bary : ndarray (n, dim + 1)
        Barycentric coordinates.

    Returns
    -------
    ndarray (n, n_basis)

    Examples
    --------
    >>> shape(2, 2, np.array([[0.5, 0.5, 0.0]])).round(12).tolist()
    [[0.0, 0.0, -0.0, 1.0, 0.0, 0.0]]
    """
    if order == 1:
        return bary
    a, b = np.array(EDGES[dim]).T
    return np.hstack([bary * (2.0 * bary - 1.0), 4.0 * bary[:, a] * bary[:, b]])


def shape_dbary(dim: int, order: int, bary: np.ndarray) -> np.ndarray:
    """Derivatives of the basis functions with respect to each barycentric coordinate.

    Returns
    -------
    ndarray (n, n_basis, dim + 1)
        Entry [p, i, j] is dN_i / dL_j at point p.

    Examples
    --------
    >>> shape_dbary(1, 2, np.array([[1.0, 0.0]]))[0].tolist()
    [[3.0, 0.0], [0.0, -1.0], [0.0, 4.0]]
    """
    n, t1 = bary.shape
    if order == 1:
        return np.broadcast_to(np.eye(t1), (n, t1, t1))
    edges = np.array(EDGES[dim])
    out = np.zeros((n, n_basis(dim, order), t1))
    corner = np.arange(t1)
    out[:, corner, corner] = 4.0 * bary - 1.0
    row = t1 + np.arange(len(edges))
    out[:, row, edges[:, 0]] = 4.0 * bary[:, edges[:, 1]]
    out[:, row, edges[:, 1]] = 4.0 * bary[:, edges[:, 0]]
    return out


def lattice(s: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Sub-nodes of a triangle split s times per edge: barycentric coordinates,
    the s^2 sub-triangles and the loop of sub-nodes around the boundary.

    Examples
    --------
    >>> bary, tris, loop = lattice(2)
    >>> len(bary), tris.shape, loop.tolist()
    (6, (4, 3), [0, 1, 2, 4, 5, 3, 0])
    """
    ij = [(i, j) for j in range(s + 1) for i in range(s + 1 - j)]
    at = {p: k for k, p in enumerate(ij)}
    up = [(at[i, j], at[i + 1, j], at[i, j + 1]) for i, j in ij if i + j < s]
    down = [(at[i + 1, j], at[i + 1, j + 1], at[i, j + 1]) for i, j in ij if i + j < s - 1]
    loop = (
        [at[i, 0] for i in range(s + 1)]
        + [at[s - j, j] for j in range(1, s + 1)]
        + [at[0, j] for j in range(s - 1, -1, -1)]
    )
    k = np.array(ij, dtype=np.float64)
    bary = np.column_stack([s - k.sum(axis=1), k[:, 0], k[:, 1]]) / s
    return bary, np.array(up + down, dtype=np.int64), np.array(loop, dtype=np.int64)
