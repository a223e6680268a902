"""Contour lines of a 2D field as data: polylines at given levels, saved as GeoJSON or CSV.

P1 (linear) fields are contoured exactly by marching triangles: a level
crosses an edge where one end is at or above it and the other below (a node
value equal to the level counts as above), at the point found by linear
interpolation from the end at or above the level.  Each crossed cell holds one
segment between the crossings on two of its edges; segments are joined into
polylines through the edges they share, keyed by the edge's node pair (never
by comparing coordinates).  Lines are oriented with higher values on their
left.  Where the level passes exactly through a node, the crossings on that
node's edges coincide; repeated vertices are dropped, so no line holds a
zero-length piece, and a line that shrinks to one point (a peak exactly at the
level) is dropped.

P2 (quadratic) fields are first split into s x s sub-triangles per cell, one
s for the whole mesh, then contoured as P1 on the sub-triangles.  On a
sub-triangle the quadratic differs from its linear interpolant by a quadratic
that vanishes at the corners, ``4 sum_e d_e L_a L_b`` over the sub-edges e = (a,
b), where d_e is the quadratic's deviation from the chord at the middle of the
sub-edge; sub-edges are parallel to the cell's edges and 1/s as long, so d_e =
D_e / s^2 with D_e the deviation at the cell edge's midpoint node, and since
``sum L_a L_b <= 1/3`` the difference is at most ``(4/3) max |D_e| / s^2``
everywhere in the cell.  s is the smallest whole number that brings this below
``tolerance`` (in the field's units), so every point of a line lies where the
field is within ``tolerance`` of the level.

With ``region=`` the joined lines are cut where they cross the region's
boundary and the pieces whose middle lies in the region are kept.
"""

from __future__ import annotations

import json
import math
import numbers
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from interp._arrays import as_floats
from interp._contour_clip import clip_lines
from interp._geometry import cross_z
from interp.basis import lattice, shape
from interp.clip import check_region
from interp.errors import InterpError
from interp.field import Field
from interp.io import atomic_path, write_table
from interp.regions import Region
from interp.volume import check_surface

#: default P2 tolerance, as a fraction of the range of the field's node values.
TOLERANCE = 1e-4
#: most sub-triangles per edge of a P2 cell.
MAX_SPLIT = 256
#: most sub-triangles a P2 field is split into.
MAX_SUBCELLS = 20_000_000
#: most levels that ``interval=`` may give.
MAX_LEVELS = 100_000
#: local corner pairs of a triangle's edges (edge k joins corners k and k + 1).
_SIDES = np.array([[0, 1], [1, 2], [2, 0]])


@dataclass(frozen=True, eq=False)
class Contours:
    """Contour lines: for each line its level, its vertices and whether it is a closed ring.

    Attributes
    ----------
    levels : ndarray (n,) float64
        The level of each line; lines are sorted by level.
    lines : tuple of ndarray (k, 2)
        The vertices of each line, in order, higher values on the left.  A
        closed ring repeats its first vertex at the end.
    closed : ndarray (n,) bool
        Whether each line is a closed ring.
    tolerance : float
        Bound on the difference between the field and the surface contoured:
        0 for a P1 field (exact), the P2 subdivision's bound otherwise.

    :func:`contours` returns read-only arrays.

    Examples
    --------
    >>> import numpy as np
    >>> from interp import Field, Mesh, contours
    >>> mesh = Mesh([[0.0, 0], [2, 0], [0, 2], [2, 2]], [[0, 1, 2], [1, 3, 2]])
    >>> c = contours(Field(mesh, mesh.points[:, 0]), [1.0])
    >>> len(c), c.lines[0].tolist(), bool(c.closed[0])
    (1, [[1.0, 2.0], [1.0, 1.0], [1.0, 0.0]], False)
    """

    levels: np.ndarray
    lines: tuple[np.ndarray, ...]
    closed: np.ndarray
    tolerance: float

    def __len__(self) -> int:
        return len(self.lines)

    def summary(self) -> dict:
        """Counts of lines, closed rings and vertices, and the levels that have lines.

        Examples
        --------
        >>> import numpy as np
        >>> c = Contours(np.array([1.0]), (np.zeros((2, 2)),), np.array([False]), 0.0)
        >>> c.summary()
        {'lines': 1, 'closed': 0, 'vertices': 2, 'levels': [1.0], 'tolerance': 0.0}
        """
        return {
            "lines": len(self),
            "closed": int(np.count_nonzero(self.closed)),
            "vertices": int(sum(len(v) for v in self.lines)),
            "levels": np.unique(self.levels).tolist(),
            "tolerance": self.tolerance,
        }

    def save(self, path: str | Path) -> Path:
        """Write the lines atomically: GeoJSON (.geojson, .json) or CSV (.csv) by suffix.

        GeoJSON (RFC 7946) is a FeatureCollection with one LineString feature
        per line and properties ``level`` and ``closed``; coordinates are the
        mesh's own (x, y), written as they are (RFC 7946 expects longitude and
        latitude unless the reader is told otherwise; no ``crs`` member is
        written).  CSV has columns ``x,y,level,line``, one row per vertex,
        ``line`` numbering the lines from 0.

        Examples
        --------
        >>> import json, tempfile
        >>> c = Contours(np.array([1.0]), (np.array([[0.0, 0], [1, 1]]),), np.array([False]), 0.0)
        >>> with tempfile.TemporaryDirectory() as d:
        ...     text = c.save(Path(d) / "c.csv").read_text()
        ...     gj = json.loads(c.save(Path(d) / "c.geojson").read_text())
        >>> text.splitlines()
        ['x,y,level,line', '0,0,1,0', '1,1,1,0']
        >>> gj["features"][0]["geometry"]["coordinates"]
        [[0.0, 0.0], [1.0, 1.0]]
        """
        path = Path(path)
        suffix = path.suffix.lower()
        if suffix == ".csv":
            counts = np.array([len(v) for v in self.lines], dtype=np.int64)
            xy = np.vstack(self.lines) if self.lines else np.zeros((0, 2))
            line = np.repeat(np.arange(len(counts)), counts)
            return write_table(path, ["x", "y", "level", "line"], [*xy.T, self.levels[line], line])
        if suffix not in (".geojson", ".json"):
            raise InterpError(
                f"cannot write contours to {path}: unknown suffix {path.suffix!r}; "
                "use .geojson (or .json) or .csv"
            )
        features = [
            {
                "type": "Feature",
                "geometry": {"type": "LineString", "coordinates": v.tolist()},
                "properties": {"level": float(level), "closed": bool(ring)},
            }
            for v, level, ring in zip(self.lines, self.levels, self.closed, strict=True)
        ]
        with atomic_path(path) as tmp:
            tmp.write_text(json.dumps({"type": "FeatureCollection", "features": features}))
        return path


def contour_levels(field: Field, interval: float) -> np.ndarray:
    """Levels at the multiples of ``interval`` within the range of a field's node values.

    For a P2 field the quadratic may pass slightly beyond its node values
    between nodes; levels are still taken within the node values' range.

    Examples
    --------
    >>> from interp import Field, Mesh
    >>> mesh = Mesh([[0.0, 0], [1, 0], [0, 1]], [[0, 1, 2]])
    >>> contour_levels(Field(mesh, [0.2, 1.75, 1.0]), 0.5).tolist()
    [0.5, 1.0, 1.5]
    """
    check_surface(field, "the contoured field")
    step = _positive(interval, "contour interval")
    vals = field.values[np.isfinite(field.values)]
    if vals.size == 0:
        raise InterpError("the field has no values (NaN at every node): nothing to contour")
    first, last = math.ceil(vals.min() / step), math.floor(vals.max() / step)
    if last - first + 1 > MAX_LEVELS:
        raise InterpError(
            f"contour interval {step:g} gives {last - first + 1:,} levels over the field's range "
            f"{vals.min():.6g}..{vals.max():.6g} (at most {MAX_LEVELS:,}); use a larger interval"
        )
    # 15 significant digits drop the round-off of k * step (3 * 0.1 -> 0.3)
    return np.array([float(f"{k * step:.15g}") for k in range(first, last + 1)])


def contours(
    field: Field,
    levels: object = None,
    *,
    interval: float | None = None,
    region: Region | None = None,
    tolerance: float | None = None,
) -> Contours:
    """Contour lines of a scalar field on a 2D triangle mesh, as polylines.

    Parameters
    ----------
    field : Field
        Scalar P1 or P2 field on triangles in the plane.  Cells with a NaN
        node value are left out.
    levels : sequence of float, optional
        The levels to draw.
    interval : float, optional
        Instead of ``levels``: every multiple of ``interval`` within the range
        of the field's node values (:func:`contour_levels`).
    region : Region, optional
        Keep only the parts of lines inside it: a Polygon, Box, HalfSpace, a
        LevelSet of a field on this mesh, or their Intersection.
    tolerance : float, optional
        P2 only: bound, in the field's units, on the difference between the
        quadratic and the piecewise-linear surface contoured (see the module
        notes).  Default 1e-4 of the range of the node values.

    Returns
    -------
    Contours

    Raises
    ------
    InterpError
        Not a scalar field on a 2D triangle mesh, neither or both of
        ``levels`` and ``interval``, levels that are not finite numbers, a
        tolerance that is not positive or would need too many sub-triangles.

    Notes
    -----
    The lines are exact for the interpolated surface, not for the ground or
    the quantity between the data points: their accuracy there depends on
    the density and method of the survey.  Check them against the applicable
    survey standards and licensed practice before using them for design.

    Examples
    --------
    >>> import numpy as np
    >>> from interp import Field, Polygon, contours, triangulate
    >>> g = np.linspace(-2.0, 2.0, 9)
    >>> mesh = triangulate(np.stack(np.meshgrid(g, g), axis=-1).reshape(-1, 2))
    >>> cone = Field(mesh, np.hypot(*mesh.points.T))
    >>> c = contours(cone, [1.0, 1.5])
    >>> c.levels.tolist(), c.closed.tolist()
    ([1.0, 1.5], [True, True])
    >>> half = contours(cone, [1.0], region=Polygon([[0, -3], [3, -3], [3, 3], [0, 3]]))
    >>> half.closed.tolist(), [float(v[:, 0].min()) for v in half.lines]
    ([False], [0.0])
    """
    check_surface(field, "the contoured field")
    if (levels is None) == (interval is None):
        raise InterpError(
            "give the contour levels either as a list (levels=) or as an interval "
            "(interval=), not both or neither"
        )
    if levels is None:
        wanted = contour_levels(field, interval)
    else:
        wanted = as_floats(levels, "contour levels must be numbers").reshape(-1)
        if wanted.size == 0 or not np.isfinite(wanted).all():
            raise InterpError(f"contour levels must be one or more finite numbers; got {levels!r}")
        wanted = np.unique(wanted)
    if region is not None:
        check_region(region, 2)
    if tolerance is not None:
        tolerance = _positive(tolerance, "contour tolerance")
    mesh = field.mesh
    values = field.values.reshape(-1)
    if mesh.order == 1:
        points, tris, bound = mesh.points, mesh.cells, 0.0
    else:
        points, tris, values, bound = _split_p2(field, wanted, tolerance)
    xy, offsets, line_level, closed = _trace(points, tris, values, wanted)
    if region is not None:
        xy, offsets, line_level, closed = clip_lines(xy, offsets, line_level, closed, region, mesh)
    lines = tuple(np.split(xy, offsets[1:-1])) if len(offsets) > 1 else ()
    out = Contours(wanted[line_level], lines, closed, bound)
    for a in (out.levels, out.closed, *out.lines):
        a.flags.writeable = False
    return out


def _positive(value: object, what: str) -> float:
    if isinstance(value, numbers.Real) and not isinstance(value, bool) and value > 0:
        if math.isfinite(value):
            return float(value)
    raise InterpError(f"{what} must be a positive number; got {value!r}")


def _split_p2(
    field: Field, levels: np.ndarray, tolerance: float | None
) -> tuple[np.ndarray, np.ndarray, np.ndarray, float]:
    """Sub-triangles of the P2 cells that a level may cross, with shared sub-nodes.

    Returns the sub-nodes' points and values, the sub-triangles and the bound
    on |quadratic - piecewise linear|.
    """
    mesh = field.mesh
    vals = field.values.reshape(-1)
    v = vals[mesh.cells]
    corner, mid = v[:, :3], v[:, 3:]
    # Bernstein coefficients bound the quadratic on its cell (convex hull property)
    bern = np.hstack([corner, 2.0 * mid - 0.5 * (corner + corner[:, [1, 2, 0]])])
    with np.errstate(invalid="ignore"):
        lo, hi = bern.min(axis=1), bern.max(axis=1)
    hit = np.flatnonzero(
        np.isfinite(v).all(axis=1)
        & (np.searchsorted(levels, lo, side="right") < np.searchsorted(levels, hi, side="right"))
    )
    finite = vals[np.isfinite(vals)]
    span = float(np.ptp(finite)) if finite.size else 0.0
    tol = tolerance or (TOLERANCE * span if span > 0 else 1.0)
    worst = float(np.abs(mid[hit] - 0.5 * (corner[hit] + corner[hit][:, [1, 2, 0]])).max(initial=0))
    s = max(1, math.ceil(math.sqrt(4.0 * worst / (3.0 * tol))))
    if s > MAX_SPLIT or len(hit) * s * s > MAX_SUBCELLS:
        raise InterpError(
            f"contour tolerance {tol:g} needs {s} sub-triangles per edge of {len(hit):,} P2 "
            f"cells (at most {MAX_SPLIT} and {MAX_SUBCELLS:,} sub-triangles); give a larger "
            "tolerance"
        )
    bary, subs, _ = lattice(s)
    k = np.rint(bary * s).astype(np.int64)
    corners = mesh.corners[hit]
    cell_edges = mesh.edges()[1][hit]
    n, n_edges = mesh.n_nodes, len(mesh.edges()[0])
    ids = np.empty((len(hit), len(bary)), dtype=np.int64)
    interior = (k > 0).all(axis=1)
    ids[:, interior] = (
        n
        + n_edges * (s - 1)
        + np.arange(len(hit))[:, None] * int(interior.sum())
        + np.arange(int(interior.sum()))
    )
    for c in range(3):
        ids[:, k[:, c] == s] = corners[:, [c]]
    for e, (a, b) in enumerate(_SIDES):
        on = (k[:, 3 - a - b] == 0) & (k[:, a] > 0) & (k[:, b] > 0)
        pos = k[on, b]
        forward = corners[:, [a]] < corners[:, [b]]
        ids[:, on] = n + cell_edges[:, [e]] * (s - 1) + np.where(forward, pos, s - pos) - 1
    uniq, inverse = np.unique(ids, return_inverse=True)
    inverse = inverse.reshape(ids.shape)
    xy = np.einsum("pk,mkd->mpd", bary, mesh.points[corners])
    points = np.empty((len(uniq), 2))
    points[inverse] = xy
    sub_vals = np.empty(len(uniq))
    sub_vals[inverse] = v[hit] @ shape(2, 2, bary).T
    tris = inverse[:, subs].reshape(-1, 3)
    return points, tris, sub_vals, 4.0 * worst / (3.0 * s * s)


def _trace(
    points: np.ndarray, tris: np.ndarray, values: np.ndarray, levels: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Contour lines of the piecewise-linear field on triangles, all levels at once.

    Returns the vertices (v, 2) of all lines one after the other, the offsets
    (n + 1,) of each line's vertices, each line's index into ``levels`` and
    whether it is a closed ring (its first vertex repeated at its end).
    """
    # a node's bin is the number of levels at or below its value (-1 for NaN): a node is
    # at or above level k when its bin exceeds k, and a cell or an edge spans the levels
    # from its lowest bin up to (not including) its highest
    bins = np.searchsorted(levels, values, side="right")
    bins[~np.isfinite(values)] = -1
    b0, b1, b2 = (bins[tris[:, k]] for k in range(3))
    lo = np.minimum(np.minimum(b0, b1), b2)
    hi = np.maximum(np.maximum(b0, b1), b2)
    crossed = np.flatnonzero((lo >= 0) & (hi > lo))
    tris, lo, hi = tris[crossed], lo[crossed], hi[crossed]
    n = len(points)
    pairs = tris[:, _SIDES]
    keys = pairs.min(axis=2) * n + pairs.max(axis=2)
    uniq, cell_edges = np.unique(keys, return_inverse=True)
    cell_edges = cell_edges.reshape(keys.shape)
    ea, eb = np.divmod(uniq, n)
    first = np.minimum(bins[ea], bins[eb])
    count = np.abs(bins[ea] - bins[eb])
    start = np.concatenate([[0], np.cumsum(count)])
    edge = np.repeat(np.arange(len(uniq)), count)
    level = first[edge] + np.arange(start[-1]) - start[edge]
    top_a = bins[ea[edge]] > level
    up = np.where(top_a, ea[edge], eb[edge])
    down = np.where(top_a, eb[edge], ea[edge])
    # from the end at or above the level, so that a node at the level is hit exactly
    frac = (values[up] - levels[level]) / (values[up] - values[down])
    cross = points[up] + frac[:, None] * (points[down] - points[up])

    # one segment per cell and level it spans, between the crossings on the two edges
    # that meet at the corner on its own side of the level
    cell = np.repeat(np.arange(len(tris)), hi - lo)
    c_start = np.concatenate([[0], np.cumsum(hi - lo)])
    c_level = lo[cell] + np.arange(c_start[-1]) - c_start[cell]
    above = bins[tris[cell]] > c_level[:, None]
    odd_above = above.sum(axis=1) == 1
    odd = np.where(odd_above, above.argmax(axis=1), above.argmin(axis=1))
    e_next = cell_edges[cell, odd]
    e_prev = cell_edges[cell, (odd + 2) % 3]
    p_next = start[e_next] + c_level - first[e_next]
    p_prev = start[e_prev] + c_level - first[e_prev]
    corner = points[tris[cell]]
    ccw = cross_z(corner[:, 1] - corner[:, 0], corner[:, 2] - corner[:, 0]) > 0
    # on a counter-clockwise cell the corner on the left of next -> prev is the odd one
    forward = odd_above == ccw
    tail = np.where(forward, p_next, p_prev)
    head = np.where(forward, p_prev, p_next)
    succ = np.full(len(cross), -1, dtype=np.int64)
    succ[tail] = head
    return _chain(succ, cross, level)


def _chain(
    succ: np.ndarray, cross: np.ndarray, level: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Join crossings into lines by their successors (-1 for none), with pointer jumping.

    Each crossing has at most one successor and one predecessor, so the
    crossings form paths and cycles.  Cycles are cut before their smallest
    crossing; then every crossing's last crossing and distance to it give its
    line and its place in it.
    """
    m = len(succ)
    ids = np.arange(m)
    steps = max(1, math.ceil(math.log2(m + 1)))
    jump = np.where(succ >= 0, succ, ids)
    low = ids.copy()
    for _ in range(steps):
        low = np.minimum(low, low[jump])
        jump = jump[jump]
    ring = succ[jump] >= 0
    cut = ring & (succ >= 0) & (succ == low)
    succ = np.where(cut, -1, succ)
    jump = np.where(succ >= 0, succ, ids)
    dist = (succ >= 0).astype(np.int64)
    for _ in range(steps):
        dist = dist + dist[jump]
        jump = jump[jump]
    # lines in order of level, then of their last crossing; crossings from first to last
    order = np.lexsort((-dist, jump, level))
    end = jump[order]
    new_line = np.r_[True, end[1:] != end[:-1]][: len(end)]
    line_of = np.cumsum(new_line) - 1
    xy, line_of, line_closed = _simplify(cross[order], line_of, cut[end[new_line]])
    counts = np.bincount(line_of, minlength=len(line_closed))
    good = counts >= np.where(line_closed, 3, 2)
    keep = good[line_of]
    xy = xy[keep]
    counts, line_closed = counts[good], line_closed[good]
    line_level = level[order][new_line][good]
    # close rings by repeating their first vertex; an open line that ends where it
    # starts (through a node at the level on the mesh's boundary) is a ring too
    starts = np.concatenate([[0], np.cumsum(counts)])
    line_closed = line_closed | (xy[starts[:-1]] == xy[starts[1:] - 1]).all(axis=1)
    ring = cut[end[new_line]][good]
    closing = starts[1:][ring]
    xy = np.insert(xy, closing, xy[starts[:-1][ring]], axis=0)
    offsets = np.concatenate([[0], np.cumsum(counts + ring)])
    return xy, offsets, line_level, line_closed


def _simplify(
    xy: np.ndarray, line_of: np.ndarray, closed: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Drop vertices equal to the one before them, and the tips of spikes (a, b, a), on lines
    (rings wrap around) until none is left.

    Both come from nodes exactly at the level: the crossings on their edges coincide,
    and an edge at the level with both sides below it is passed there and back.
    """
    while len(xy):
        first = np.r_[True, line_of[1:] != line_of[:-1]]
        last = np.r_[line_of[1:] != line_of[:-1], True]
        idx = np.arange(len(xy))
        head = np.maximum.accumulate(np.where(first, idx, 0))
        tail = np.flatnonzero(last)[np.cumsum(first) - 1]
        ring = closed[line_of]
        prev = np.where(first, np.where(ring, tail, -1), idx - 1)
        succ = np.where(last, np.where(ring, head, -1), idx + 1)
        dup = (prev >= 0) & (prev != idx) & (xy == xy[prev]).all(axis=1)
        if not dup.any():
            dup = (prev >= 0) & (succ >= 0) & (xy[prev] == xy[succ]).all(axis=1)
            if not dup.any():
                break
        xy, line_of = xy[~dup], line_of[~dup]
    return xy, line_of, closed
