"""Shared test helpers: structured meshes with known geometry."""

import numpy as np
import pytest

from interp import Mesh


def square_mesh(n: int) -> Mesh:
    """Unit square split into n x n squares, each cut into two triangles."""
    x = np.linspace(0.0, 1.0, n + 1)
    xx, yy = np.meshgrid(x, x, indexing="ij")
    points = np.column_stack([xx.ravel(), yy.ravel()])
    idx = np.arange((n + 1) ** 2).reshape(n + 1, n + 1)
    a, b = idx[:-1, :-1].ravel(), idx[1:, :-1].ravel()
    c, d = idx[1:, 1:].ravel(), idx[:-1, 1:].ravel()
    cells = np.vstack([np.column_stack([a, b, c]), np.column_stack([a, c, d])])
    return Mesh(points, cells)


def cube_mesh(n: int) -> Mesh:
    """Unit cube split into n^3 cubes, each cut into six tetrahedra (Kuhn)."""
    x = np.linspace(0.0, 1.0, n + 1)
    grid = np.stack(np.meshgrid(x, x, x, indexing="ij"), axis=-1).reshape(-1, 3)
    idx = np.arange((n + 1) ** 3).reshape(n + 1, n + 1, n + 1)
    corner = idx[:-1, :-1, :-1].ravel()
    step = np.array([(n + 1) ** 2, n + 1, 1])
    cells = []
    for perm in ([0, 1, 2], [0, 2, 1], [1, 0, 2], [1, 2, 0], [2, 0, 1], [2, 1, 0]):
        path = [corner]
        cur = corner
        for axis in perm:
            cur = cur + step[axis]
            path.append(cur)
        cells.append(np.column_stack(path))
    return Mesh(grid, np.vstack(cells))


@pytest.fixture
def rng():
    return np.random.default_rng(20261201)
