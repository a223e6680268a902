"""Volumes between two surfaces, or between a surface and a level.

A surface is a 2D field z = f(x, y).  The plan domain (where both surfaces
are defined, within an optional region) is cut into pieces on which both
surfaces are polynomials: the cells of the common mesh, or of the overlay
(:func:`interp.overlay`) when the surfaces are on different meshes, clipped by
the region (:func:`interp.clip.clip`).  Each piece is then split where the
difference d = upper - lower changes sign, and each surface is integrated
over the parts with :func:`interp.integrate_pieces`.

For P1 surfaces d is linear on each piece, so the split along d = 0 is a
straight cut and every figure is exact for the piecewise-linear surfaces.
For P2 surfaces d is quadratic on each piece: the integrals are exact on
every part, the net volume is exact, and the split between above and below
follows the zero line of the linear interpolant of d on a refinement of each
piece into ``4 ** subdivisions`` triangles, which approximates the curved
zero line (the error shrinks with the sub-triangle size, like h**2).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from interp._integrate import integrate_pieces, measure, region_measure, uncovered
from interp._overlay import overlay_cells
from interp._progress import task
from interp.clip import (
    Pieces,
    check_region,
    clip,
    clip_simplices,
    cut_simplices,
    evaluate_at,
    same_cells,
)
from interp.errors import InterpError
from interp.field import Field
from interp.regions import Region


@dataclass(frozen=True)
class Volumes:
    """Volumes between an upper and a lower surface over a plan area.

    Attributes
    ----------
    above : float
        Volume where upper > lower: what fills the space over the lower
        surface.  With the existing ground as upper and a design level as
        lower, it is the cut (material to remove).
    below : float
        Volume where upper < lower, as a positive number (with the ground as
        upper: the fill, material to bring).
    net : float
        above - below: the integral of upper - lower.
    area : float
        Plan area over which both surfaces are defined (within the region).
    uncovered : float
        Plan area of the region where the surfaces are not both defined (no
        data on either, or outside either mesh), which the volumes leave out.
        The region is the one given, or without one the plan extent of either
        surface (the upper surface alone against a level); an unbounded
        region (a HalfSpace) is taken within that extent.

    Examples
    --------
    >>> Volumes(above=3.0, below=1.0, net=2.0, area=4.0, uncovered=0.0).net
    2.0
    """

    above: float
    below: float
    net: float
    area: float
    uncovered: float


def volume_between(
    upper: Field,
    lower: Field | float,
    region: Region | None = None,
    *,
    subdivisions: int = 3,
) -> Volumes:
    """Volumes above and below between two surfaces, or a surface and a level.

    Computed volumes depend on survey density and method; check them against
    the applicable survey standards and licensed practice before using them
    for payment, design or safety decisions.

    Parameters
    ----------
    upper : Field
        Scalar field on a 2D triangle mesh: the surface z = upper(x, y).
    lower : Field or float
        A second surface (on the same mesh or another) or a constant level.
    region : Region, optional
        2D region to restrict the plan area to (a :class:`~interp.Polygon`, ...).
    subdivisions : int
        P2 surfaces only: levels of refinement of each piece for locating the
        line where the surfaces cross (see the module notes).

    Returns
    -------
    Volumes
        ``above``, ``below``, ``net``, ``area`` and ``uncovered``, in the units
        of the coordinates (areas) and of the coordinates squared times the
        values (volumes).  Cells with a NaN node value on either surface are
        left out of the volumes and of ``area``, and count as ``uncovered``.

    Warns
    -----
    UserWarning
        When ``uncovered`` is over 0.1% of the region: the volumes are then
        those of the covered part only.

    Examples
    --------
    >>> import numpy as np
    >>> from interp import Field, Mesh, volume_between
    >>> mesh = Mesh([[0.0, 0], [2, 0], [2, 2], [0, 2]], [[0, 1, 2], [0, 2, 3]])
    >>> ground = Field(mesh, mesh.points[:, 0])          # z = x, from 0 to 2
    >>> v = volume_between(ground, 0.5)
    >>> [round(x, 12) for x in (v.above, v.below, v.net, v.area, v.uncovered)]
    [2.25, 0.25, 2.0, 4.0, 0.0]
    """
    check_surface(upper, "upper")
    level = None
    if isinstance(lower, Field):
        check_surface(lower, "lower")
    else:
        try:
            level = float(lower)
        except (TypeError, ValueError):
            raise InterpError(
                f"lower must be an interp.Field or a number, not {type(lower).__name__}"
            ) from None
        if not np.isfinite(level):
            raise InterpError(f"the lower level must be finite; got {lower}")
    if region is not None:
        check_region(region, 2)
    if not isinstance(subdivisions, int) or subdivisions < 0:
        raise InterpError(f"subdivisions must be an integer >= 0; got {subdivisions!r}")
    with task("volumes between the surfaces", total=4) as advance:
        corners, pa, pb = _common_pieces(upper, lower, level, region)
        advance(1)
        extent = _extent(upper, lower, level, region, float(Pieces(pa, corners).measure().sum()))
        d = _difference(upper, lower, level, corners, pa, pb)
        known = ~np.isnan(d).any(axis=1)
        corners, pa, pb, d = corners[known], pa[known], pb[known], d[known]
        degree = max(upper.mesh.order, 1 if level is not None else lower.mesh.order)
        if degree == 2:
            corners, src = _subdivide(corners, subdivisions)
            pa, pb = pa[src], pb[src]
            d = _difference(upper, lower, level, corners, pa, pb)
        area = float(Pieces(pa, corners).measure().sum())
        advance(1)
        above = _integral(upper, lower, level, *_part(corners, pa, pb, -d), degree)
        advance(1)
        below = 0.0 - _integral(upper, lower, level, *_part(corners, pa, pb, d), degree)
        advance(1)
    missing = uncovered(extent, area, "the volume")
    return Volumes(above=above, below=below, net=above - below, area=area, uncovered=missing)


def check_surface(field: object, name: str) -> None:
    """Raise unless ``field`` is a scalar surface z = f(x, y) on a 2D triangle mesh.

    Examples
    --------
    >>> from interp import Field, Mesh
    >>> check_surface(Field(Mesh([[0, 0], [1, 0], [0, 1]], [[0, 1, 2]]), [0, 1, 2]), "z")
    """
    if not isinstance(field, Field):
        raise InterpError(f"{name} must be an interp.Field, not {type(field).__name__}")
    mesh = field.mesh
    if mesh.dim != 2 or mesh.gdim != 2:
        raise InterpError(
            f"{name} must be a surface z = f(x, y) on a 2D triangle mesh; its mesh has "
            f"{mesh.cell_type} cells in {mesh.gdim}D"
        )
    if field.n_components != 1:
        raise InterpError(f"{name} must be a scalar field; it has {field.n_components} components")


def _extent(upper, lower, level, region, both: float) -> float:
    """Plan area the volumes should cover: the region's, or the surfaces' extent within it.

    ``both`` is the area where the two meshes overlap (within the region).
    """
    size = region_measure(region)
    if size is not None:
        return size
    size = measure(upper.mesh, region)
    if level is None:
        size += measure(lower.mesh, region) - both
    return size


def _common_pieces(upper, lower, level, region):
    """Triangles on which both surfaces are polynomials, and their cells in each mesh."""
    mesh = upper.mesh
    if level is not None or same_cells(mesh, lower.mesh):
        if region is None:
            cells = np.arange(mesh.n_cells)
            return mesh.points[mesh.corners], cells, cells
        pieces = clip(mesh, region)
        return pieces.corners, pieces.parent, pieces.parent
    corners, parents = overlay_cells(mesh, lower.mesh)
    pa, pb = parents[:, 0], parents[:, 1]
    if region is not None and len(corners):
        corners, src = clip_simplices(corners, [(mesh, pa), (lower.mesh, pb)], region)
        pa, pb = pa[src], pb[src]
    return corners, pa, pb


def _difference(upper, lower, level, corners, pa, pb):
    """upper - lower at the corners of each piece, (s, 3)."""
    bary = Pieces(pa, corners).bary(upper.mesh)
    d = evaluate_at(upper, pa, bary)
    if level is not None:
        return d - level
    if not same_cells(upper.mesh, lower.mesh):
        bary = Pieces(pb, corners).bary(lower.mesh)
    return d - evaluate_at(lower, pb, bary)


def _part(corners, pa, pb, d):
    """The parts of the pieces where d <= 0, with their cells in each mesh."""
    out, src = cut_simplices(corners, d)
    return out, pa[src], pb[src]


def _integral(upper, lower, level, corners, pa, pb, degree) -> float:
    """Integral of upper - lower over the pieces."""
    total = integrate_pieces(upper, upper.mesh, Pieces(pa, corners), degree)
    if level is not None:
        return float(total - level * Pieces(pa, corners).measure().sum())
    return float(total - integrate_pieces(lower, lower.mesh, Pieces(pb, corners), degree))


def _subdivide(corners: np.ndarray, levels: int) -> tuple[np.ndarray, np.ndarray]:
    """Split each triangle into 4**levels by edge midpoints; returns the source of each."""
    src = np.arange(len(corners))
    for _ in range(levels):
        a, b, c = corners[:, 0], corners[:, 1], corners[:, 2]
        ab, bc, ca = 0.5 * (a + b), 0.5 * (b + c), 0.5 * (c + a)
        children = [(a, ab, ca), (ab, b, bc), (ca, bc, c), (ab, bc, ca)]
        corners = np.stack([np.stack(t, axis=1) for t in children], axis=1).reshape(-1, 3, 2)
        src = np.repeat(src, 4)
    return corners, src
