"""Compile every kernel ahead of use: for servers, containers and CI.

numba compiles a kernel on its first call for the argument types of that
call and caches it on disk beside the package.  :func:`prepare` runs every
feature once on tiny invented data through the public API, so the kernels
compile for exactly the types real calls use; afterwards no call of any
process using the same installation compiles anything.
"""

from __future__ import annotations

import time
import warnings
from dataclasses import dataclass

import numpy as np
from numba.core import event

from interp._fit import fit
from interp._integrate import integrate
from interp._kernels import set_announce
from interp._validate import crossvalidate
from interp.grid import to_grid
from interp.regions import Box, Polygon
from interp.resample import profile
from interp.volume import volume_between


@dataclass(frozen=True)
class Prepared:
    """What :func:`prepare` did: kernel specialisations compiled (0 when all were cached)
    and the wall time in seconds."""

    compiled: int
    seconds: float


def prepare() -> Prepared:
    """Compile (or load from the cache) every kernel of the package.

    Runs fitting (P1 and P2, in 1D, 2D and 3D), evaluation, gradients,
    gridding, profiles, integrals over a polygon and a box, cut and fill
    volumes and leave-one-out on a few dozen invented points.  Prints
    nothing (the first-compile notice is off while it runs).

    Returns
    -------
    Prepared
        How many kernel specialisations were compiled, and the time taken.

    Examples
    --------
    >>> report = prepare()
    >>> report.compiled >= 0 and report.seconds > 0
    True
    """
    start = time.perf_counter()
    set_announce(False)
    try:
        # the workload's tiny invented surfaces are not meant to cover its regions
        with event.install_recorder("numba:compile") as record, warnings.catch_warnings():
            warnings.simplefilter("ignore")
            _workload()
    finally:
        set_announce(None)
    compiled = sum(
        1
        for _, ev in record.buffer
        if ev.is_end and ev.data["dispatcher"].py_func.__module__.startswith("interp._kernels")
    )
    return Prepared(compiled, time.perf_counter() - start)


def _workload() -> None:
    rng = np.random.default_rng(0)
    for d, n in ((1, 12), (2, 40), (3, 40)):
        pts = rng.random((n, d))
        z = pts.sum(axis=1) ** 2
        for order in (1, 2):
            f = fit(pts, z, order=order)
            f(rng.random((5, d)))
            f.gradient(rng.random((5, d)))
            integrate(f, region=Box(np.full(d, 0.2), np.full(d, 0.8)))
            crossvalidate(pts, z, order=order)
            to_grid(f, spacing=0.25)
            if d == 2:
                square = Polygon([[0.2, 0.2], [0.8, 0.2], [0.8, 0.8], [0.2, 0.8]])
                integrate(f, region=square)
                volume_between(f, fit(pts, z * 0.5, order=order), region=square)
                profile(f, [[0.1, 0.1], [0.9, 0.9]], step=0.1)
                crossvalidate(pts, z, order=order, breaklines=[[[0.3, 0.3], [0.7, 0.6]]])
