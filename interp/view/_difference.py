"""The difference of two surfaces (fields or constant levels) as one field."""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from interp._format import number
from interp.errors import InterpError
from interp.field import Field

if TYPE_CHECKING:
    pass


def surface_difference(upper: Field | float, lower: Field | float) -> Field:
    fields = [f for f in (upper, lower) if isinstance(f, Field)]
    if not fields:
        raise InterpError(
            f"show_difference needs at least one Field; got two constants ({upper!r} and {lower!r})"
        )
    for f in fields:
        if f.n_components != 1:
            raise InterpError(
                f"a difference of surfaces needs scalar fields; {f.name or 'a field'} has "
                f"{f.n_components} components"
            )
    base = fields[0]

    def at_nodes(f: Field | float) -> np.ndarray:
        if isinstance(f, Field):
            return f.values if f.mesh is base.mesh else f(base.mesh.points)
        try:
            level = float(f)
        except (TypeError, ValueError):
            level = np.nan
        if not np.isfinite(level):
            raise InterpError(f"a constant level must be a finite number; got {f!r}")
        return np.full(base.mesh.n_nodes, level)

    def name(f: Field | float, default: str) -> str:
        return (f.name or default) if isinstance(f, Field) else f"{float(f):g}"

    units = next((f.units for f in fields if f.units), None)
    return Field(
        base.mesh,
        at_nodes(upper) - at_nodes(lower),
        name=f"{name(upper, 'upper')} - {name(lower, 'lower')}",
        units=units,
    )


def volumes_text(volumes: object) -> str:
    try:
        parts = [(k, float(getattr(volumes, k))) for k in ("above", "below", "net", "area")]
    except (AttributeError, TypeError, ValueError):
        raise InterpError(
            "volumes must have numeric attributes above, below, net and area (as the result "
            f"of interp.volume_between); got a {type(volumes).__name__}"
        ) from None
    return "   ".join(f"{k} {number(v)}" for k, v in parts)
