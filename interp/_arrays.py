"""Reading user input as arrays: the checks every public function shares.

Points are (n, d) float64 with d in 1, 2 or 3; lengths are positive finite
numbers; anything that is not numbers raises :class:`InterpError` naming
what was expected.  Nothing here imports another interp module but
:mod:`interp.errors`, so every layer may use it.
"""

from __future__ import annotations

import sys

import numpy as np

from interp.errors import InterpError


def as_floats(values: object, expected: str) -> np.ndarray:
    """``values`` as a float64 array; input that is not numbers raises an
    :class:`InterpError` that starts with ``expected``.

    Examples
    --------
    >>> as_floats([1, 2], "spacing must be numbers").tolist()
    [1.0, 2.0]
    """
    try:
        return np.asarray(values, dtype=np.float64)
    except (TypeError, ValueError) as exc:
        raise InterpError(f"{expected}: {exc}") from None


def as_points(points: object, name: str = "points", gdim: int | None = None) -> np.ndarray:
    """Return ``points`` as a C-contiguous (n, g) float64 array.

    A 1-D array is read as n points on a line when ``gdim`` is 1 or unknown,
    and as a single point when ``gdim`` equals its length.

    Examples
    --------
    >>> as_points([0.0, 1.0, 2.0]).shape
    (3, 1)
    >>> as_points([1.0, 2.0], gdim=2).shape
    (1, 2)
    """
    arr = as_floats(points, f"{name} must be an (n, d) array of numbers with d in 1, 2 or 3")
    if arr.ndim == 1:
        arr = arr.reshape(1, -1) if gdim is not None and gdim > 1 else arr.reshape(-1, 1)
    if arr.ndim != 2 or arr.shape[1] not in (1, 2, 3):
        raise InterpError(
            f"{name} must have shape (n, d) with d in 1, 2 or 3; got shape {np.shape(points)}"
        )
    if gdim is not None and arr.shape[1] != gdim:
        raise InterpError(
            f"{name} have {arr.shape[1]} coordinates per point but the mesh is in {gdim}D; "
            f"pass an (n, {gdim}) array"
        )
    return np.ascontiguousarray(arr)


def check_finite(points: np.ndarray, name: str = "points") -> None:
    """Raise if any coordinate is NaN or infinite, naming how many and the first.

    Examples
    --------
    >>> check_finite(np.zeros((2, 2)))
    """
    bad = ~np.isfinite(points).all(axis=1)
    if bad.any():
        idx = np.flatnonzero(bad)
        raise InterpError(
            f"{name}: {idx.size} point(s) have NaN or infinite coordinates, the first is point "
            f"{idx[0] + 1} (counting from 1); remove or fill them before building a mesh"
        )


def positive(value: object, name: str) -> float:
    """``value`` as a positive finite length; anything else raises, naming ``name``.

    Examples
    --------
    >>> positive("2.5", "max_edge")
    2.5
    """
    try:
        v = float(value)
    except (TypeError, ValueError):
        v = np.nan
    if not np.isfinite(v) or v <= 0:
        raise InterpError(f"{name} must be a positive length; got {value!r}")
    return v


def is_dask(obj: object) -> bool:
    """True when ``obj`` is a dask array; never imports dask.

    Examples
    --------
    >>> import dask.array as da
    >>> is_dask(np.zeros(3)), is_dask(da.zeros(3))
    (False, True)
    """
    array = sys.modules.get("dask.array")
    return array is not None and isinstance(obj, array.Array)
