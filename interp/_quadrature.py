"""Quadrature rules on the line segment, triangle and tetrahedron.

:func:`quadrature` returns points in barycentric coordinates and weights that
sum to 1: the integral of a function over a simplex T of measure |T| is
approximately ``|T| * sum(weights * f(points))``, and exactly so for every
polynomial of total degree at most ``degree``.

Rules
-----
* line: Gauss-Legendre with ``degree // 2 + 1`` points.
* triangle and tetrahedron: the conical product rules of Stroud
  (A. H. Stroud, *Approximate Calculation of Multiple Integrals*,
  Prentice-Hall 1971, section 2.7): the simplex is collapsed onto the unit
  square or cube (the Duffy map) and a Gauss-Jacobi rule is taken in each
  collapsed direction, absorbing the Jacobian (1 - s)^k into the Jacobi
  weight.  With ``n = degree // 2 + 1`` points per direction the rule has
  n^2 points on the triangle and n^3 on the tetrahedron, all weights
  positive and all points interior, for any degree.
* degree 2 on the triangle and tetrahedron: the symmetric rules of Hammer,
  Marlowe and Stroud (Math. Tables Aids Comput. 10, 1956; Stroud 1971,
  formulas T2:2-1 and Tn:2-1) with t + 1 points, each corner weighted
  towards by the closed-form coordinate ``a`` below, weights 1/(t+1).

Number of points per degree::

    degree     0  1  2  3   4   5   6   7    8    9   10
    line       1  1  2  2   3   3   4   4    5    5    6
    triangle   1  1  3  4   9   9  16  16   25   25   36
    tetra      1  1  4  8  27  27  64  64  125  125  216

A Gauss-Legendre or conical product rule built for an even degree is in fact
exact one degree higher.

Rules are cached and returned as read-only arrays.
"""

from __future__ import annotations

import operator
from functools import lru_cache
from math import sqrt

import numpy as np
from scipy.special import roots_jacobi

from interp.errors import InterpError

#: cell names accepted by :func:`quadrature`, indexed by topological dimension - 1.
CELLS = ("line", "triangle", "tetra")

#: barycentric coordinate of the favoured corner in the symmetric degree-2 rules
#: (Stroud 1971, Tn:2-1): a = (1 + t r) / (t + 1) with r = 1 / sqrt(t + 2).
_SYMMETRIC_2 = {t: (1.0 + t / sqrt(t + 2.0)) / (t + 1.0) for t in (2, 3)}


def quadrature(cell: str, degree: int) -> tuple[np.ndarray, np.ndarray]:
    """A quadrature rule on a simplex, exact for polynomials up to ``degree``.

    Parameters
    ----------
    cell : {"line", "triangle", "tetra"}
        The simplex kind.
    degree : int
        Total polynomial degree the rule must integrate exactly, >= 0.

    Returns
    -------
    bary : ndarray (q, t + 1), read-only
        Points in barycentric coordinates (rows sum to 1).
    weights : ndarray (q,), read-only
        Positive weights summing to 1; multiply by the cell's measure.

    Raises
    ------
    InterpError
        For an unknown cell name or a degree that is not an integer >= 0.

    Examples
    --------
    >>> bary, weights = quadrature("triangle", 2)
    >>> bary.shape, float(weights.sum())
    ((3, 3), 1.0)
    >>> # the integral of L0^2 over a triangle is |T| / 6
    >>> round(float(weights @ bary[:, 0] ** 2), 15)
    0.166666666666667
    """
    if cell not in CELLS:
        raise InterpError(f"unknown quadrature cell {cell!r}; use one of {', '.join(CELLS)}")
    try:
        deg = operator.index(degree)
    except TypeError:
        deg = -1
    if isinstance(degree, bool) or deg < 0:
        raise InterpError(f"quadrature degree must be an integer >= 0, got {degree!r}")
    return _rule(CELLS.index(cell) + 1, deg)


@lru_cache(maxsize=64)
def _rule(t: int, degree: int) -> tuple[np.ndarray, np.ndarray]:
    if degree == 2 and t > 1:
        a = _SYMMETRIC_2[t]
        bary = np.full((t + 1, t + 1), (1.0 - a) / t)
        np.fill_diagonal(bary, a)
        weights = np.full(t + 1, 1.0 / (t + 1))
    else:
        bary, weights = _conical_product(t, degree // 2 + 1)
    bary.flags.writeable = False
    weights.flags.writeable = False
    return bary, weights


def _conical_product(t: int, n: int) -> tuple[np.ndarray, np.ndarray]:
    """Stroud's collapsed-coordinate rule with n Gauss-Jacobi points per direction.

    Direction k (k = 0 .. t-1) uses the weight (1 - s)^(t - 1 - k) on [0, 1];
    the barycentric coordinates follow L_{k+1} = s_k * prod_{j<k} (1 - s_j)
    and L_0 = prod_j (1 - s_j).
    """
    nodes, weights = [], []
    for k in range(t):
        x, w = roots_jacobi(n, t - 1 - k, 0)
        nodes.append(0.5 * (1.0 + x))
        weights.append(w)
    s = np.stack(np.meshgrid(*nodes, indexing="ij"), axis=-1).reshape(-1, t)
    w = np.prod(np.stack(np.meshgrid(*weights, indexing="ij"), axis=-1), axis=-1).ravel()
    remaining = np.cumprod(1.0 - s, axis=1)
    bary = np.empty((s.shape[0], t + 1))
    bary[:, 1] = s[:, 0]
    bary[:, 2:] = s[:, 1:] * remaining[:, :-1]
    bary[:, 0] = remaining[:, -1]
    return bary, w / w.sum()
