"""Quadrature rules against closed-form integrals of barycentric monomials."""

from fractions import Fraction
from itertools import product
from math import factorial, prod

import numpy as np
import pytest

from interp import InterpError, quadrature
from interp._quadrature import CELLS

#: highest degree checked for each cell kind, and extra degrees from the general construction
TABULATED = {"line": 10, "triangle": 8, "tetra": 6}
HIGHER = {"line": (21, 40), "triangle": (12, 15), "tetra": (9,)}


def exponents(t: int, total: int) -> np.ndarray:
    """All exponent tuples (a0, .., at) of barycentric monomials of total degree <= total."""
    return np.array([a for a in product(range(total + 1), repeat=t + 1) if sum(a) <= total])


def exact(t: int, a: np.ndarray) -> float:
    # integral over a simplex T of L0^a0 ... Lt^at divided by |T| is
    # t! a0! ... at! / (a0 + ... + at + t)!  (Eisenberg and Malvern, "On finite element
    # integration in natural co-ordinates", Int. J. Numer. Meth. Engng 7, 1973)
    return float(
        Fraction(factorial(t) * prod(factorial(int(k)) for k in a), factorial(int(a.sum()) + t))
    )


def relative_errors(cell: str, degree: int, exps: np.ndarray) -> np.ndarray:
    bary, weights = quadrature(cell, degree)
    t = CELLS.index(cell) + 1
    approx = weights @ np.prod(bary[:, None, :] ** exps[None], axis=2)
    ref = np.array([exact(t, a) for a in exps])
    return np.abs(approx - ref) / ref


@pytest.mark.parametrize(
    ("cell", "degree"),
    [(c, d) for c, top in TABULATED.items() for d in range(top + 1)]
    + [(c, d) for c, ds in HIGHER.items() for d in ds],
)
def test_rule_exact_for_every_monomial_up_to_degree(cell, degree):
    t = CELLS.index(cell) + 1
    err = relative_errors(cell, degree, exponents(t, degree))
    assert err.max() < 1e-12, err.max()


@pytest.mark.parametrize(
    ("cell", "degree"),
    [("line", 1), ("line", 7), ("triangle", 2), ("triangle", 3), ("triangle", 7),
     ("tetra", 2), ("tetra", 5)],
)  # fmt: skip
def test_rule_not_exact_one_degree_higher(cell, degree):
    # an n-point Gauss rule is exact to degree 2n - 1 and no higher (Stroud 1971, ch. 1);
    # the odd degrees and the 3- and 4-point symmetric degree-2 rules are used to that limit
    t = CELLS.index(cell) + 1
    exps = exponents(t, degree + 1)
    err = relative_errors(cell, degree, exps[exps.sum(axis=1) == degree + 1])
    assert err.max() > 1e-8


def test_line_rule_is_gauss_legendre():
    # reference: numpy.polynomial.legendre.leggauss on [-1, 1]
    x, w = np.polynomial.legendre.leggauss(6)
    bary, weights = quadrature("line", 11)
    np.testing.assert_allclose(bary[:, 1], 0.5 * (1 + x), atol=1e-15)
    np.testing.assert_allclose(weights, 0.5 * w, atol=1e-15)


def test_symmetric_degree_two_rules():
    # closed forms (Stroud 1971, Tn:2-1, from memory; the monomial test above proves them):
    # triangle (2/3, 1/6, 1/6); tetrahedron a = (5 + 3 sqrt 5) / 20, b = (5 - sqrt 5) / 20
    bary, weights = quadrature("triangle", 2)
    np.testing.assert_allclose(np.sort(bary, axis=1), [[1 / 6, 1 / 6, 2 / 3]] * 3, atol=1e-15)
    bary, weights = quadrature("tetra", 2)
    a, b = (5 + 3 * 5**0.5) / 20, (5 - 5**0.5) / 20
    np.testing.assert_allclose(np.sort(bary, axis=1), [[b, b, b, a]] * 4, atol=1e-15)
    np.testing.assert_allclose(weights, 0.25, atol=1e-16)


@pytest.mark.parametrize("cell", CELLS)
def test_rule_sizes_positive_interior_and_read_only(cell):
    # sizes as documented in interp.quadrature: n = degree // 2 + 1 points per direction
    t = CELLS.index(cell) + 1
    for degree in range(12):
        bary, weights = quadrature(cell, degree)
        n = degree // 2 + 1
        expected = t + 1 if degree == 2 and t > 1 else n**t
        assert bary.shape == (expected, t + 1)
        assert weights.shape == (expected,)
        assert (weights > 0).all() and (bary > 0).all()
        np.testing.assert_allclose(bary.sum(axis=1), 1.0, atol=1e-15)
        assert abs(weights.sum() - 1.0) < 1e-15
    assert quadrature(cell, 4)[0] is quadrature(cell, 4)[0]
    with pytest.raises(ValueError, match="read-only"):
        quadrature(cell, 3)[1][0] = 1.0


@pytest.mark.parametrize(
    ("cell", "degree", "match"),
    [("quad", 2, "unknown quadrature cell 'quad'"), ("triangle", -1, "integer >= 0"),
     ("tetra", 2.5, "integer >= 0"), ("line", "3", "integer >= 0"),
     ("line", True, "integer >= 0")],
)  # fmt: skip
def test_bad_cell_or_degree(cell, degree, match):
    with pytest.raises(InterpError, match=match):
        quadrature(cell, degree)


def test_numpy_integer_degree():
    assert quadrature("triangle", np.int64(5))[0].shape == (9, 3)
