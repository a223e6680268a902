"""Field values at located points: barycentric weights times node values."""

from __future__ import annotations

from interp._kernels import kernel


@kernel
def combine(weights, nodes, cells, values, outside, out):  # pragma: no cover
    """out[p] = sum_k weights[p, k] values[nodes[cells[p], k]]; ``outside`` where cells[p] < 0.

    One pass with no temporaries: the gathers of a numpy version cost more
    than the arithmetic.
    """
    for p in range(cells.size):
        c = cells[p]
        for j in range(values.shape[1]):
            if c < 0:
                out[p, j] = outside
                continue
            s = 0.0
            for k in range(weights.shape[1]):
                s += weights[p, k] * values[nodes[c, k], j]
            out[p, j] = s
