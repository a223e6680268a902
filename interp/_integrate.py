"""Integrals, measures, means and L2 norms of fields over a mesh or part of it.

Everything here goes through one routine, :func:`integrate_pieces`: a set of
pieces, each a simplex lying inside one parent cell of the mesh, is
integrated with a :func:`interp.quadrature` rule.  The whole mesh is the case
where every cell is its own piece; a region is cut into pieces by
:func:`interp.clip.clip`.  For a field, the rule's points are mapped to
barycentric coordinates in the parent cell (by solving the small affine
system of its corners, no point location), so embedded meshes (a surface in
3D, a polyline in 2D) integrate like any other, each cell with its own
length or area.

Exactness: cells are straight-sided, so on each piece a P1 field is a
polynomial of degree 1 and a P2 field of degree 2; a rule of that degree
(twice it for the L2 norm) integrates the interpolated field exactly, up to
round-off.  An empty region (no pieces) has integral 0 and measure 0.

Caution: the integral is exact for the *interpolated* field, which is only
as good as the data and the mesh behind it.  Where a volume or quantity is
used for payment or design, check it against independent measurements and
follow local codes and licensed practice.
"""

from __future__ import annotations

import itertools
import warnings
from collections.abc import Callable

import numpy as np

from interp._format import number
from interp._geometry import barycentric, simplex_geometry
from interp._quadrature import CELLS, quadrature
from interp.basis import n_basis
from interp.clip import Pieces, clip, evaluate_at
from interp.errors import InterpError
from interp.field import Field
from interp.mesh import Mesh
from interp.regions import Intersection, LevelSet, Region

#: array entries (points x basis functions) handled per block of pieces.
BLOCK = 1 << 20

#: share of a region left uncovered by the mesh above which a result warns (0.1%).
UNCOVERED_SHARE = 1e-3

Integrand = Field | Callable[[np.ndarray], object]


def integrate(
    f: Integrand,
    mesh: Mesh | None = None,
    region: Region | None = None,
    degree: int | None = None,
) -> float | np.ndarray:
    """Integral of a field or a function over a mesh, or over the part of it in a region.

    Parameters
    ----------
    f : Field or callable
        A :class:`interp.Field` (its mesh is used), or a function
        ``f(x) -> values`` taking (n, g) points and returning (n,) or (n, c)
        values; it is called on blocks of quadrature points.
    mesh : Mesh, optional
        The domain; required for a callable, optional (and must be the
        field's own) for a field.
    region : Region, optional
        Integrate only over mesh ∩ region (see :mod:`interp.regions`); the
        mesh's cells must then fill their space (no embedded meshes).
    degree : int, optional
        Degree of the quadrature rule.  Default for a field: the field's order
        (exact).  Default for a callable: twice the mesh order (exact for
        polynomials of that degree, e.g. the product of two fields on the
        mesh); raise it for smoother integrands that are not polynomials.

    Returns
    -------
    float, or ndarray (c,) for c components.

    Raises
    ------
    InterpError
        For NaN values in the cells integrated, a missing or mismatched mesh,
        or a callable returning the wrong shape.

    Examples
    --------
    >>> from interp import Field, Mesh, integrate
    >>> mesh = Mesh([[0.0, 0], [2, 0], [0, 2]], [[0, 1, 2]])
    >>> integrate(Field(mesh, [0.0, 3.0, 3.0]))
    4.0
    >>> round(integrate(lambda x: x[:, 0] ** 2, mesh=mesh), 12)
    1.333333333333
    """
    mesh, degree = _domain(f, mesh, degree)
    parent, corners = _pieces(mesh, region)
    _missing(region, corners, "the integral")
    return _result(_integrate(f, mesh, parent, corners, degree))


def integrate_pieces(f: Integrand, mesh: Mesh, pieces: Pieces, degree: int) -> float | np.ndarray:
    """Integral of a field or function over pieces of the cells of a mesh.

    Parameters
    ----------
    f : Field or callable
        As in :func:`integrate`; a field must live on ``mesh``.
    mesh : Mesh
    pieces : Pieces
        Any object with ``parent`` (s,) int64, the cell of ``mesh`` each piece
        lies in, and ``corners`` (s, t + 1, g) float64, the corners of each
        piece (a simplex of the mesh's dimension inside its parent), such as
        :func:`interp.clip.clip` returns.
    degree : int
        Degree of the quadrature rule on each piece.

    Returns
    -------
    float, or ndarray (c,) for c components; 0 when there are no pieces.

    Examples
    --------
    >>> from types import SimpleNamespace
    >>> from interp import Field, Mesh, integrate_pieces
    >>> mesh = Mesh([[0.0, 0], [1, 0], [0, 1]], [[0, 1, 2]])
    >>> half = SimpleNamespace(parent=np.array([0]),
    ...                        corners=np.array([[[0.0, 0], [0.5, 0], [0, 0.5]]]))
    >>> round(integrate_pieces(Field(mesh, [1.0, 1.0, 1.0]), mesh, half, 1), 12)
    0.125
    """
    mesh, _ = _domain(f, mesh, degree)
    parent, corners = _check_pieces(mesh, pieces)
    return _result(_integrate(f, mesh, parent, corners, degree))


def measure(mesh: Mesh, region: Region | None = None) -> float:
    """Length, area or volume of a mesh, or of its part inside a region.

    Examples
    --------
    >>> from interp import Mesh, measure
    >>> measure(Mesh([[0.0, 0], [2, 0], [0, 2]], [[0, 1, 2]]))
    2.0
    """
    if not isinstance(mesh, Mesh):
        raise InterpError(f"measure needs an interp.Mesh, not {type(mesh).__name__}")
    return float(simplex_geometry(_pieces(mesh, region)[1])[0].sum())


def mean(field: Field, region: Region | None = None) -> float | np.ndarray:
    """Mean value of a field over its mesh, or over the part of it inside a region.

    The integral divided by the measure; per component for a vector field.

    Raises
    ------
    InterpError
        If the region does not overlap the mesh (zero measure).

    Examples
    --------
    >>> from interp import Field, Mesh, mean
    >>> mean(Field(Mesh([0.0, 1.0, 3.0], [[0, 1], [1, 2]]), [0.0, 1.0, 3.0]))
    1.5
    """
    _check_field(field)
    parent, corners = _pieces(field.mesh, region)
    size = float(simplex_geometry(corners)[0].sum())
    if size == 0.0:
        raise InterpError(
            "the region does not overlap the mesh, so the field has no mean there; "
            "check the region's coordinates against the mesh bounds "
            f"{field.mesh.bounds.tolist()}"
        )
    uncovered(region_measure(region), size, "the mean")
    return _result(_integrate(field, field.mesh, parent, corners, field.mesh.order) / size)


def summarize(field: Field, region: Region | None = None) -> dict:
    """Integral, measure and mean of a field over its mesh or a region, clipping once.

    Values are floats, or lists per component; ``mean`` is None where the
    region does not overlap the mesh (measure 0).  ``uncovered`` is the
    measure of the part of the region outside the mesh (see
    :func:`uncovered`): the integral and the measure leave it out, and a
    warning says so when it is over 0.1% of the region.

    Examples
    --------
    >>> from interp import Box, Field, Mesh
    >>> f = Field(Mesh([0.0, 2.0], [[0, 1]]), [1.0, 3.0])
    >>> summarize(f)
    {'integral': 4.0, 'measure': 2.0, 'mean': 2.0, 'uncovered': 0.0}
    >>> import warnings
    >>> with warnings.catch_warnings(record=True):
    ...     summarize(f, region=Box([1.0], [4.0]))["uncovered"]
    2.0
    """
    _check_field(field)
    parent, corners = _pieces(field.mesh, region)
    size = float(simplex_geometry(corners)[0].sum())
    total = _integrate(field, field.mesh, parent, corners, field.mesh.order)
    return {
        "integral": total.tolist(),
        "measure": size,
        "mean": (total / size).tolist() if size > 0 else None,
        "uncovered": uncovered(region_measure(region), size, "the integral"),
    }


def region_measure(region: Region | None) -> float | None:
    """Length, area or volume of a region by itself; None for no region or an unbounded one.

    A :class:`~interp.Polygon` or :class:`~interp.Box` knows its own measure;
    an :class:`~interp.Intersection` is measured by clipping a box over its
    bounds (or, holding a :class:`~interp.LevelSet`, that field's mesh).

    Examples
    --------
    >>> from interp import Box, HalfSpace, Polygon
    >>> region_measure(Polygon([[0, 0], [4, 0], [0, 4]]) & HalfSpace([1, 0], 2.0))
    6.0
    >>> region_measure(HalfSpace([1, 0], 2.0)) is None
    True
    """
    if region is None:
        return None
    parts = region.regions if isinstance(region, Intersection) else (region,)
    if len(parts) == 1 and not isinstance(parts[0], LevelSet):
        size = parts[0].measure()
        return size if np.isfinite(size) else None
    level = next((r for r in parts if isinstance(r, LevelSet)), None)
    if level is not None:
        return measure(level.field.mesh, region)
    bounds = region.bounds
    return None if bounds is None else measure(_box_mesh(bounds), region)


def uncovered(size: float | None, covered: float, what: str) -> float:
    """Measure of the part of a region of measure ``size`` that ``covered`` misses.

    ``covered`` is the measure of the region's part that a result used.  Zero
    when ``size`` is None (no region: the mesh is the region; an unbounded
    one: it is taken within the mesh).  Warns, naming ``what`` the result
    is, when the part is over :data:`UNCOVERED_SHARE` of the region.

    Examples
    --------
    >>> import warnings
    >>> uncovered(4.0, 4.0, "the volume")
    0.0
    >>> with warnings.catch_warnings(record=True) as caught:
    ...     warnings.simplefilter("always")
    ...     uncovered(220400.0, 110200.0, "the volume")
    110200.0
    >>> str(caught[0].message).split(":")[0]
    "the volume leaves out 110200 of the region's 220400 (50%)"
    """
    if size is None:
        return 0.0
    missing = max(size - covered, 0.0)
    if missing > UNCOVERED_SHARE * size:
        warnings.warn(
            f"{what} leaves out {number(missing)} of the region's {number(size)} "
            f"({100 * missing / size:.3g}%): that part is not covered by the data; "
            "extend the survey or shrink the region",
            stacklevel=3,
        )
    return missing


def norm_l2(field: Field, region: Region | None = None) -> float | np.ndarray:
    """L2 norm sqrt(integral of f^2) of a field, per component for a vector field.

    Computed exactly with a rule of twice the field's order.  For the norm of
    a vector field's length take ``np.sqrt((norm_l2(f) ** 2).sum())``.

    Examples
    --------
    >>> from interp import Field, Mesh, norm_l2
    >>> round(norm_l2(Field(Mesh([0.0, 3.0], [[0, 1]]), [0.0, 3.0])), 12)
    3.0
    """
    _check_field(field)
    parent, corners = _pieces(field.mesh, region)
    _missing(region, corners, "the L2 norm")
    order = 2 * field.mesh.order
    return _result(np.sqrt(_integrate(field, field.mesh, parent, corners, order, 2)))


def _check_field(field: object) -> None:
    if not isinstance(field, Field):
        raise InterpError(f"expected an interp.Field, got {type(field).__name__}")


def _domain(f: object, mesh: Mesh | None, degree: int | None) -> tuple[Mesh, int]:
    """Validate the integrand and its mesh; return the mesh and the rule degree."""
    if isinstance(f, Field):
        if mesh is not None and mesh is not f.mesh:
            raise InterpError(
                "the mesh given is not the field's own mesh; pass only the field, or "
                "interpolate it onto the other mesh first"
            )
        return f.mesh, f.mesh.order if degree is None else degree
    if not callable(f):
        raise InterpError(
            f"the integrand must be an interp.Field or a function of points, not {type(f).__name__}"
        )
    if not isinstance(mesh, Mesh):
        raise InterpError("integrating a function needs the domain: pass mesh=interp.Mesh(...)")
    return mesh, 2 * mesh.order if degree is None else degree


def _pieces(mesh: Mesh, region: Region | None) -> tuple[np.ndarray, np.ndarray]:
    """Parent cells and corners of the pieces of mesh ∩ region (every cell if None)."""
    if region is None:
        return np.arange(mesh.n_cells), mesh.points[mesh.corners]
    pieces = clip(mesh, region)
    return pieces.parent, pieces.corners


def _missing(region: Region | None, corners: np.ndarray, what: str) -> float:
    """:func:`uncovered` for the pieces ``corners`` of mesh ∩ region."""
    return uncovered(region_measure(region), float(simplex_geometry(corners)[0].sum()), what)


def _box_mesh(bounds: np.ndarray) -> Mesh:
    """The box ``bounds`` (2, g) cut into g! simplices (Kuhn's triangulation of a cube)."""
    g = bounds.shape[1]
    corners = np.array(list(itertools.product((0, 1), repeat=g)))[:, ::-1]
    weights = 1 << np.arange(g)
    cells = []
    for axes in itertools.permutations(range(g)):
        steps = np.cumsum(np.eye(g, dtype=np.int64)[list(axes)], axis=0)
        cells.append([0, *(steps @ weights)])
    return Mesh(bounds[0] + corners * (bounds[1] - bounds[0]), cells)


def _check_pieces(mesh: Mesh, pieces: object) -> tuple[np.ndarray, np.ndarray]:
    try:
        parent = np.asarray(pieces.parent)
        corners = np.asarray(pieces.corners, dtype=np.float64)
    except AttributeError:
        raise InterpError(
            "pieces must have attributes parent (s,) and corners (s, t+1, g), "
            "as interp.clip.clip returns"
        ) from None
    want = (parent.shape[0] if parent.ndim == 1 else -1, mesh.dim + 1, mesh.gdim)
    if parent.ndim != 1 or corners.shape != want or not np.issubdtype(parent.dtype, np.integer):
        raise InterpError(
            f"pieces of a {mesh.cell_type} mesh in {mesh.gdim}D need integer parent (s,) and "
            f"corners (s, {mesh.dim + 1}, {mesh.gdim}); got parent {parent.shape} "
            f"{parent.dtype} and corners {corners.shape}"
        )
    bad = (parent < 0) | (parent >= mesh.n_cells)
    if bad.any():
        raise InterpError(
            f"{int(bad.sum())} piece(s) name a parent cell outside 0..{mesh.n_cells - 1}, "
            f"the first is piece {int(np.flatnonzero(bad)[0]) + 1} (counting from 1)"
        )
    if not np.isfinite(corners).all():
        raise InterpError("pieces have NaN or infinite corner coordinates")
    return parent.astype(np.int64), corners


def _integrate(
    f: Integrand,
    mesh: Mesh,
    parent: np.ndarray,
    corners: np.ndarray,
    degree: int,
    power: int = 1,
) -> np.ndarray:
    """Sum over pieces of |piece| * sum_q w_q f(x_q)^power; shape () or (c,)."""
    bary, weights = quadrature(CELLS[mesh.dim - 1], degree)
    is_field = isinstance(f, Field)
    if is_field:
        _check_nan(f, parent)
        total = np.zeros(f.values.shape[1:])
        width = n_basis(mesh.dim, mesh.order)
    else:
        total = np.zeros(())
        width = mesh.gdim
    step = max(1, BLOCK // (weights.size * width))
    for s in range(0, parent.size, step):
        cell, corner = parent[s : s + step], corners[s : s + step]
        if is_field:
            values = _field_at(f, cell, corner, bary)
        else:
            values = _call(f, np.einsum("qa,pag->pqg", bary, corner))
        size = simplex_geometry(corner)[0]
        total = total + np.einsum("q,p,pq...->...", weights, size, values**power)
    return total


def _field_at(field: Field, cell: np.ndarray, corner: np.ndarray, bary: np.ndarray) -> np.ndarray:
    """Field values (p, q[, c]) at the rule points ``bary`` of pieces inside cells ``cell``."""
    # barycentric coordinates are affine, so those of the piece's corners in the parent
    # carry the rule's points over
    inner = bary @ barycentric(field.mesh.points[field.mesh.corners[cell]], corner)
    return evaluate_at(field, cell, inner)


def _call(f: Callable[[np.ndarray], object], x: np.ndarray) -> np.ndarray:
    """Values (p, q[, c]) of a callable integrand at points x (p, q, g)."""
    p, q, g = x.shape
    flat = x.reshape(-1, g)
    out = np.asarray(f(flat), dtype=np.float64)
    if out.ndim not in (1, 2) or out.shape[0] != flat.shape[0]:
        raise InterpError(
            f"the integrand must return (n,) or (n, c) values for n points; called with "
            f"{flat.shape[0]} points it returned shape {out.shape}"
        )
    bad = np.isnan(out).reshape(out.shape[0], -1).any(axis=1)
    if bad.any():
        raise InterpError(
            f"the integrand returned NaN at {int(bad.sum())} of the {bad.size} quadrature points "
            "in one call, "
            f"the first at {flat[np.flatnonzero(bad)[0]].tolist()}; it must be defined "
            "everywhere on the mesh"
        )
    return out.reshape((p, q) + out.shape[1:])


def _check_nan(field: Field, parent: np.ndarray) -> None:
    used = np.zeros(field.mesh.n_nodes, dtype=bool)
    used[field.mesh.cells[parent]] = True
    bad = used & np.isnan(field.values.reshape(field.mesh.n_nodes, -1)).any(axis=1)
    if bad.any():
        raise InterpError(
            f"the field{f' {field.name!r}' if field.name else ''} has NaN values at "
            f"{int(bad.sum())} node(s) of the cells being integrated, the first is node "
            f"{int(np.flatnonzero(bad)[0])}; fill the gaps or integrate over a region "
            "that avoids them"
        )


def _result(total: np.ndarray) -> float | np.ndarray:
    return float(total) if total.ndim == 0 else total
