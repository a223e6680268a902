"""Moving a field elsewhere: onto another mesh's nodes, or along a section line."""

from __future__ import annotations

import warnings
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from interp._arrays import as_points
from interp._geometry import polyline_lengths
from interp.errors import InterpError
from interp.field import Field
from interp.grid import as_fields, box_of, box_text, evaluate_fields, size_text
from interp.io import field_columns, write_table
from interp.mesh import Mesh

#: the most sample points a profile holds in memory.
MAX_SAMPLES = 50_000_000


@dataclass(frozen=True)
class Profile:
    """Fields sampled along a polyline (a section).

    Attributes
    ----------
    distance : ndarray (n,)
        Distance along the line from its first vertex (chainage).
    points : ndarray (n, g)
        Sample points.
    fields : dict of str to ndarray
        Values of each field, (n,) or (n, c), NaN where the line is outside the mesh.
    vertices : ndarray (p, g)
        The polyline's vertices.
    """

    distance: np.ndarray
    points: np.ndarray
    fields: dict[str, np.ndarray]
    vertices: np.ndarray

    @property
    def values(self) -> np.ndarray:
        """The first field's values."""
        return next(iter(self.fields.values()))

    @property
    def name(self) -> str:
        """The first field's name."""
        return next(iter(self.fields))

    def save(self, path: str | Path) -> Path:
        """Write a CSV: distance, the coordinates, then one column per field (atomically).

        Examples
        --------
        >>> import tempfile
        >>> p = Profile(np.array([0.0, 1.0]), np.array([[0.0, 0], [1, 0]]),
        ...             {"z": np.array([2.0, np.nan])}, np.array([[0.0, 0], [1, 0]]))
        >>> with tempfile.TemporaryDirectory() as d:
        ...     print(p.save(Path(d) / "p.csv").read_text())
        distance,x,y,z
        0,0,0,2
        1,1,0,
        <BLANKLINE>
        """
        names, cols = field_columns(self.fields, len(self.distance))
        header = ["distance"] + list("xyz"[: self.points.shape[1]]) + names
        return write_table(path, header, np.hstack([self.distance[:, None], self.points, cols]))


def profile(
    fields: Field | Sequence[Field] | Mapping[str, Field], polyline: object, *, step: float
) -> Profile:
    """Sample fields along a polyline every ``step`` and at every vertex.

    Parameters
    ----------
    fields : Field, list of Field or dict of str to Field
        Fields to sample (on one mesh or several).
    polyline : array_like (p, g)
        At least two vertices, in the field's coordinates.
    step : float
        Sampling interval along each segment; every vertex is sampled too.

    A warning says when the whole line lies outside the data (every value NaN).

    Examples
    --------
    >>> import numpy as np
    >>> from interp import Field, triangulate
    >>> pts = np.array([[0.0, 0], [4, 0], [0, 4], [4, 4]])
    >>> f = Field(triangulate(pts), pts[:, 0])
    >>> p = profile(f, [[0, 1], [3, 1], [3, 6]], step=1.5)
    >>> p.distance.tolist()
    [0.0, 1.5, 3.0, 4.5, 6.0, 7.5, 8.0]
    >>> p.values[:3].tolist(), bool(np.isnan(p.values[-1]))
    ([0.0, 1.5, 3.0], True)
    """
    named = as_fields(fields)
    vertices = as_points(polyline, "polyline", gdim=next(iter(named.values())).mesh.gdim)
    if len(vertices) < 2 or not np.isfinite(vertices).all():
        raise InterpError("a profile line needs at least two finite vertices")
    step = float(step)
    if not np.isfinite(step) or step <= 0:
        raise InterpError(f"step must be a positive distance; got {step}")
    seg = np.diff(vertices, axis=0)
    length, start = polyline_lengths(vertices)
    if (length == 0).any():
        raise InterpError(
            f"the profile line repeats a vertex (segment {int(np.argmin(length)) + 1}, counting "
            "from 1, has zero length)"
        )
    with np.errstate(over="ignore"):
        steps = np.ceil(length / step * (1 - 1e-12))
    total = float(steps.sum()) + 1
    if total > MAX_SAMPLES:
        raise InterpError(
            f"a profile of {total:,.0f} points every {step:g} along {start[-1]:g} would need "
            f"{size_text(8 * total * (len(vertices[0]) + 4))} of memory (at most "
            f"{MAX_SAMPLES:,} points); use a larger step"
        )
    count = steps.astype(np.int64)
    which = np.repeat(np.arange(len(seg)), count)
    local = (np.arange(count.sum()) - np.repeat(np.cumsum(count) - count, count)) * step
    distance = np.concatenate([start[which] + local, start[-1:]])
    points = np.vstack(
        [vertices[which] + seg[which] * (local / length[which])[:, None], vertices[-1:]]
    )
    values = evaluate_fields(named, lambda ix: ix.locate(points))
    if all(np.isnan(v).all() for v in values.values()):
        warnings.warn(
            f"the profile line lies entirely outside the data: all {len(points):,} samples are "
            f"NaN; the data span {box_text(box_of([f.mesh for f in named.values()]))}",
            stacklevel=2,
        )
    return Profile(distance, points, values, vertices)


def transfer(field: Field, target: Mesh, *, conservative: bool = False) -> Field:
    """Move a field onto another mesh's nodes.

    Parameters
    ----------
    field : Field
        Source field.
    target : Mesh
        Mesh to carry the result (its order sets P1 or P2).
    conservative : bool
        False (default): nodal interpolation, the source evaluated at the
        target's nodes (NaN where they are outside the source mesh).  This
        is exact when the target refines the source, but does not preserve
        integrals in general.  True: the L2 projection of the source onto
        the target's space, computed on the overlay of the two meshes, so the
        integral over the common domain is preserved to round-off (2D
        triangle meshes).

    Examples
    --------
    >>> import numpy as np
    >>> from interp import Field, Mesh, triangulate
    >>> src = Field(triangulate(np.array([[0.0, 0], [1, 0], [0, 1], [1, 1]])), [0, 1, 2, 3.0])
    >>> dst = triangulate(np.array([[0.0, 0], [1, 0], [0, 1], [0.5, 0.5]]))
    >>> transfer(src, dst).values.tolist()
    [0.0, 1.0, 2.0, 1.5]
    """
    if not isinstance(target, Mesh):
        kind = type(target).__name__
        raise InterpError(f"the transfer target must be an interp.Mesh, not {kind}")
    if target.gdim != field.mesh.gdim:
        raise InterpError(
            f"the target mesh is {target.gdim}D but the field is on a {field.mesh.gdim}D mesh"
        )
    if not conservative:
        return Field(target, field(target.points), name=field.name, units=field.units)
    from interp.projection import project

    return project(field, target)
