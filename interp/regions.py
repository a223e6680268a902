"""Regions of space to integrate over, clip meshes by, or measure.

* :class:`Polygon`: a simple planar polygon, concave or not, with holes.
* :class:`Box`: an axis-aligned box in any dimension.
* :class:`HalfSpace`: the points with ``normal . x <= offset``.
* :class:`LevelSet`: the part of a P1 field's domain where the field is above
  (or below) a value.
* :class:`Intersection`: points in all of several regions; also ``a & b``.

Every region tests points with :meth:`Region.contains`.  :func:`interp.clip.clip`
cuts a mesh exactly along a region's boundary.  Regions that are empty by
construction (a box with ``lo >= hi``, a polygon of zero area, boxes that do
not overlap) are refused when built; a region that merely misses a mesh is
fine and clips to nothing.
"""

from __future__ import annotations

from functools import cached_property

import numpy as np

from interp._arrays import as_points
from interp._geometry import ZERO_AREA, check_fills_space
from interp._renamed import renamed
from interp.errors import InterpError
from interp.field import Field
from interp.polygon import (
    EdgeGrid,
    as_ring,
    contains,
    crossing_text,
    ring_area,
    ring_edges,
    ring_names,
)


class Region:
    """Base class of regions: a point set in ``gdim`` dimensions.

    Examples
    --------
    >>> from interp import Box, HalfSpace
    >>> r = Box([0, 0], [2, 2]) & HalfSpace([1, 1], 2)
    >>> r.contains([[0.5, 0.5], [1.5, 1.5]]).tolist()
    [True, False]
    """

    gdim: int

    @renamed(points="query")
    def contains(self, query: object) -> np.ndarray:
        """Whether each of the (n, gdim) query points lies in the region (boundary included)."""
        return self._contains(as_points(query, "query points", gdim=self.gdim))

    def _contains(self, points: np.ndarray) -> np.ndarray:
        raise NotImplementedError

    @property
    def bounds(self) -> np.ndarray | None:
        """Bounding box (2, gdim) of the region, row 0 minima, row 1 maxima; None if unbounded."""
        return None

    def measure(self) -> float:
        """Length, area or volume of the region."""
        raise InterpError(
            f"a {type(self).__name__} has no measure of its own; measure it over a mesh "
            "with interp.measure(mesh, region)"
        )

    def __and__(self, other: Region) -> Intersection:
        return Intersection(self, other)


class Polygon(Region):
    """A simple polygon in the plane, concave or convex, with optional holes.

    Parameters
    ----------
    exterior : array_like (p, 2)
        Outer ring, at least 3 distinct vertices, either orientation; a
        closing vertex equal to the first is optional.
    holes : sequence of array_like (q, 2)
        Rings strictly inside the exterior, disjoint from it and from each other.

    Raises
    ------
    InterpError
        Vertices that are not 2D or not finite, fewer than 3 vertices, rings
        that cross, touch or overlap (naming the first such pair of edges),
        holes outside the exterior or inside another hole, or zero area.

    Examples
    --------
    >>> from interp import Polygon
    >>> ell = Polygon([[0, 0], [2, 0], [2, 1], [1, 1], [1, 2], [0, 2]])
    >>> ell.area
    3.0
    >>> ell.contains([[0.5, 1.5], [1.5, 1.5]]).tolist()
    [True, False]
    >>> framed = Polygon([[0, 0], [4, 0], [4, 4], [0, 4]], holes=[[[1, 1], [3, 1], [3, 3]]])
    >>> framed.area
    14.0
    """

    gdim = 2

    def __init__(self, exterior: object, holes: object = ()) -> None:
        holes = list(holes)
        names = ring_names(len(holes) + 1)
        rings = [as_ring(r, f"polygon {n}") for r, n in zip([exterior, *holes], names, strict=True)]
        crossing = crossing_text(rings, names)
        if crossing is not None:
            raise InterpError(
                f"polygon is not simple: {crossing}; reorder the vertices so no edges cross or "
                "touch, or split the polygon"
            )
        if len(rings) > 1:
            firsts = np.array([r[0] for r in rings[1:]])
            outside = ~contains(rings[:1], firsts)
            if outside.any():
                raise InterpError(
                    f"polygon {names[1 + int(np.argmax(outside))]} lies outside the exterior; "
                    "holes must be inside it"
                )
            for k in range(1, len(rings)):
                nested = contains([rings[k]], firsts)
                nested[k - 1] = False
                if nested.any():
                    raise InterpError(
                        f"polygon {names[1 + int(np.argmax(nested))]} lies inside {names[k]}; "
                        "holes must not be nested (make the inner one a separate polygon)"
                    )
        self.rings = rings
        self.area = abs(ring_area(rings[0])) - sum(abs(ring_area(r)) for r in rings[1:])
        self._bounds = np.array([rings[0].min(axis=0), rings[0].max(axis=0)])
        if self.area <= ZERO_AREA * float(np.ptp(self._bounds, axis=0).max()) ** 2:
            raise InterpError(
                f"polygon has zero area ({self.area:.3g}); it encloses nothing to clip or "
                "integrate over"
            )

    def __repr__(self) -> str:
        return (
            f"Polygon({len(self.exterior)} vertices, {len(self.holes)} hole(s), "
            f"area {self.area:.6g})"
        )

    @property
    def exterior(self) -> np.ndarray:
        """Vertices of the outer ring, (p, 2)."""
        return self.rings[0]

    @property
    def holes(self) -> tuple[np.ndarray, ...]:
        """Vertices of each hole, (q, 2) arrays."""
        return tuple(self.rings[1:])

    @property
    def bounds(self) -> np.ndarray:
        return self._bounds.copy()

    def measure(self) -> float:
        """The area: shoelace area of the exterior minus that of the holes."""
        return self.area

    @cached_property
    def edge_grid(self) -> EdgeGrid:
        """The polygon's edges in a bucket grid (inside and crossing tests), built once."""
        return EdgeGrid(ring_edges(self.rings)[0])

    def _contains(self, points: np.ndarray) -> np.ndarray:
        return self.edge_grid.contains(points)


class Box(Region):
    """An axis-aligned box ``lo <= x <= hi`` in 1, 2 or 3 dimensions.

    Examples
    --------
    >>> from interp import Box
    >>> b = Box([0, 0, 0], [1, 2, 3])
    >>> b.measure()
    6.0
    >>> b.contains([[0.5, 1.0, 3.0], [0.5, 2.5, 1.0]]).tolist()
    [True, False]
    """

    def __init__(self, lo: object, hi: object) -> None:
        self.lo = _vector(lo, "Box lo")
        self.hi = _vector(hi, "Box hi")
        if self.lo.shape != self.hi.shape:
            raise InterpError(
                f"Box lo and hi need the same number of coordinates; got {self.lo.size} "
                f"and {self.hi.size}"
            )
        empty = self.lo >= self.hi
        if empty.any():
            a = int(np.argmax(empty))
            raise InterpError(
                f"Box is empty: lo[{a}] = {self.lo[a]:g} is not below hi[{a}] = "
                f"{self.hi[a]:g}; give the lower corner first"
            )
        self.gdim = self.lo.size

    def __repr__(self) -> str:
        return f"Box({self.lo.tolist()}, {self.hi.tolist()})"

    @property
    def bounds(self) -> np.ndarray:
        return np.array([self.lo, self.hi])

    def measure(self) -> float:
        """Length, area or volume: the product of the side lengths."""
        return float(np.prod(self.hi - self.lo))

    def half_spaces(self) -> list[HalfSpace]:
        """The 2 * gdim half-spaces whose intersection is the box.

        Examples
        --------
        >>> from interp import Box
        >>> [(h.normal.tolist(), h.offset) for h in Box([1.0], [2.0]).half_spaces()]
        [([-1.0], -1.0), ([1.0], 2.0)]
        """
        out = []
        for a in range(self.gdim):
            e = np.zeros(self.gdim)
            e[a] = 1.0
            out += [HalfSpace(-e, -self.lo[a]), HalfSpace(e, self.hi[a])]
        return out

    def _contains(self, points: np.ndarray) -> np.ndarray:
        return ((points >= self.lo) & (points <= self.hi)).all(axis=1)


class HalfSpace(Region):
    """The half-space ``normal . x <= offset`` (a half-line, half-plane or half-space).

    Examples
    --------
    >>> from interp import HalfSpace
    >>> below = HalfSpace([0, 0, 1], 10.0)
    >>> below.contains([[0, 0, 9.5], [0, 0, 10.5]]).tolist()
    [True, False]
    >>> below.measure()
    inf
    """

    def __init__(self, normal: object, offset: float) -> None:
        self.normal = _vector(normal, "HalfSpace normal")
        if not np.any(self.normal):
            raise InterpError(
                "HalfSpace normal is zero; give the outward direction of the boundary"
            )
        self.offset = float(offset)
        if not np.isfinite(self.offset):
            raise InterpError(f"HalfSpace offset must be finite; got {offset}")
        self.gdim = self.normal.size

    def __repr__(self) -> str:
        return f"HalfSpace({self.normal.tolist()}, {self.offset:g})"

    def measure(self) -> float:
        """Infinite: a half-space is unbounded."""
        return float("inf")

    def _contains(self, points: np.ndarray) -> np.ndarray:
        return points @ self.normal <= self.offset


class LevelSet(Region):
    """The part of a P1 field's domain where the field is at or above (or below) a value.

    Clipping cuts each cell exactly along the straight line (plane) where the
    linear field crosses ``value``.  Cells with a NaN node value are outside.
    A value beyond the field's range gives a region that clips to nothing.

    Parameters
    ----------
    field : Field
        Scalar P1 field on a mesh whose cells fill their space.
    value : float
        The level.
    side : {"above", "below"}
        Keep ``field >= value`` ("above") or ``field <= value`` ("below").

    Examples
    --------
    >>> import numpy as np
    >>> from interp import Field, LevelSet, Mesh
    >>> mesh = Mesh([[0.0, 0], [2, 0], [0, 2]], [[0, 1, 2]])
    >>> deep = LevelSet(Field(mesh, [0.0, 4.0, 0.0]), 1.0)
    >>> deep.contains([[1.5, 0.1], [0.2, 0.2]]).tolist()
    [True, False]
    """

    def __init__(self, field: Field, value: float, side: str = "above") -> None:
        if not isinstance(field, Field):
            raise InterpError(f"LevelSet needs an interp.Field, not {type(field).__name__}")
        if field.n_components != 1:
            raise InterpError(
                f"LevelSet needs a scalar field; this one has {field.n_components} components"
            )
        if field.mesh.order != 1:
            raise InterpError(
                "LevelSet needs a P1 (linear) field so that its boundary is straight in each "
                "cell; use Field(field.mesh.linear(), field.values) for the corner values"
            )
        check_fills_space(field.mesh.dim, field.mesh.gdim, field.mesh.cell_type, "LevelSet")
        if side not in ("above", "below"):
            raise InterpError(f"LevelSet side must be 'above' or 'below'; got {side!r}")
        self.value = float(value)
        if not np.isfinite(self.value):
            raise InterpError(f"LevelSet value must be finite; got {value}")
        self.field = field
        self.side = side
        self.gdim = field.mesh.gdim

    def __repr__(self) -> str:
        return f"LevelSet({self.field!r}, {self.value:g}, side={self.side!r})"

    @property
    def bounds(self) -> np.ndarray:
        return self.field.mesh.bounds.copy()

    def excess(self, values: np.ndarray) -> np.ndarray:
        """How far values fall short of the region: <= 0 inside, > 0 outside, NaN unknown."""
        return self.value - values if self.side == "above" else values - self.value

    def _contains(self, points: np.ndarray) -> np.ndarray:
        with np.errstate(invalid="ignore"):
            return self.excess(self.field(points)) <= 0


class Intersection(Region):
    """The points that lie in every one of several regions (also written ``a & b``).

    Raises
    ------
    InterpError
        No regions, regions of different dimensions, or bounded regions whose
        bounding boxes do not overlap (the intersection would be empty).

    Examples
    --------
    >>> from interp import Box, Intersection, Polygon
    >>> r = Intersection(Polygon([[0, 0], [4, 0], [0, 4]]), Box([1, 0], [2, 5]))
    >>> r.contains([[1.5, 1.0], [0.5, 1.0]]).tolist()
    [True, False]
    """

    def __init__(self, *regions: Region) -> None:
        parts: list[Region] = []
        for r in regions:
            if not isinstance(r, Region):
                raise InterpError(f"Intersection takes regions, not {type(r).__name__}")
            parts += list(r.regions) if isinstance(r, Intersection) else [r]
        if not parts:
            raise InterpError("Intersection needs at least one region")
        dims = {r.gdim for r in parts}
        if len(dims) > 1:
            raise InterpError(
                f"Intersection of regions in different dimensions: {sorted(dims)}; "
                "use regions of one dimension"
            )
        self.regions = tuple(parts)
        self.gdim = parts[0].gdim
        boxes = [b for b in (r.bounds for r in parts) if b is not None]
        self._bounds = None
        if boxes:
            lo = np.max([b[0] for b in boxes], axis=0)
            hi = np.min([b[1] for b in boxes], axis=0)
            if np.any(lo > hi):
                raise InterpError(
                    "Intersection is empty: the bounding boxes of its regions do not overlap"
                )
            self._bounds = np.array([lo, hi])

    def __repr__(self) -> str:
        return " & ".join(repr(r) for r in self.regions)

    @property
    def bounds(self) -> np.ndarray | None:
        return None if self._bounds is None else self._bounds.copy()

    def _contains(self, points: np.ndarray) -> np.ndarray:
        inside = np.ones(len(points), dtype=bool)
        for r in self.regions:
            inside &= r._contains(points)
        return inside


def _vector(values: object, name: str) -> np.ndarray:
    v = np.asarray(values, dtype=np.float64).reshape(-1)
    if v.size not in (1, 2, 3):
        raise InterpError(f"{name} needs 1, 2 or 3 coordinates; got {v.size}")
    if not np.isfinite(v).all():
        raise InterpError(f"{name} has NaN or infinite coordinates: {v.tolist()}")
    return v
