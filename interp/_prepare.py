"""Compile every kernel ahead of use: for servers, containers and CI; and the
helper processes that spread a first run's compiles over the machine's cores.

numba compiles a kernel on its first call for the argument types of that
call and caches it on disk beside the package.  :func:`prepare` runs every
feature once on tiny invented data through the public API, so the kernels
compile for exactly the types real calls use; afterwards no call of any
process using the same installation compiles anything.

numba compiles one kernel at a time in a process.  :func:`compile_ahead`
runs a block (a command of the command line, :func:`prepare`) and, if a
kernel is compiled while it runs, starts helper processes, one per spare
core, that compile the kernels the block will need, from the last one it
uses backwards, into the same cache.  The block compiles from the first one
forwards and loads from the cache what a helper has finished, so the two
meet in the middle.  Which kernels, with which argument types and in which
order, is ``interp/kernel_order.json``, written by
``scripts/kernel_order.py`` from a first run of each command on a cold
cache.  A stale list costs only time: what the block needs and does not find
compiled, it compiles itself.
"""

from __future__ import annotations

import importlib
import json
import os
import subprocess
import sys
import time
import warnings
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from numba.core import event, types
from numba.core.registry import CPUDispatcher

from interp._fit import fit
from interp._integrate import integrate
from interp._kernels import on_next_compile, set_announce
from interp._validate import crossvalidate
from interp.grid import to_grid
from interp.regions import Box, Polygon
from interp.resample import profile, transfer
from interp.volume import volume_between

#: the kernels each command compiles on a first run, in order:
#: name -> [[module, kernel, argument types], ...].
ORDER_FILE = Path(__file__).with_name("kernel_order.json")
#: the numba types that appear in :data:`ORDER_FILE`, by the names numba prints them with.
TYPES = {
    "Array": types.Array,
    "bool": types.boolean,
    "none": types.none,
    **{name: getattr(types, name) for name in ("float64", "int64", "int32", "int8", "uint8")},
}


@dataclass(frozen=True)
class Prepared:
    """What :func:`prepare` did: kernel specialisations compiled (0 when all were cached),
    the wall time in seconds, and the helper processes that compiled beside it."""

    compiled: int
    seconds: float
    helpers: int = 0


def prepare(*, jobs: int | None = None) -> Prepared:
    """Compile (or load from the cache) every kernel of the package.

    Runs fitting (P1 and P2, in 1D, 2D and 3D), evaluation, gradients,
    gridding, profiles, integrals over a polygon and a box, cut and fill
    volumes, a fit inside a boundary, a conservative transfer and
    leave-one-out on a few dozen invented points.  Prints
    nothing (the first-compile notice is off while it runs).  When something
    has to be compiled, ``jobs - 1`` helper processes compile beside it (see
    :func:`compile_ahead`).

    Parameters
    ----------
    jobs : int, optional
        Processes to compile with, this one included; default: one per core.

    Returns
    -------
    Prepared
        How many kernel specialisations were compiled (by this process and
        its helpers), the time taken, and the number of helpers.

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
        with (
            compile_ahead("prepare", helpers=None if jobs is None else jobs - 1, wait=True) as team,
            event.install_recorder("numba:compile") as record,
            warnings.catch_warnings(),
        ):
            warnings.simplefilter("ignore")
            _workload()
    finally:
        set_announce(None)
    compiled = _count(record) + team.compiled
    return Prepared(compiled, time.perf_counter() - start, team.started)


class Helpers:
    """The helper processes of one :func:`compile_ahead` block.

    ``started`` is how many were started (0 while nothing was compiled),
    ``compiled`` how many kernel specialisations they compiled (counted only
    when the block waited for them).
    """

    def __init__(self, order: str, count: int) -> None:
        self.order = order
        self.count = count
        self.processes: list[subprocess.Popen] = []
        self.started = 0
        self.compiled = 0

    def start(self) -> None:
        """Start the helpers (a kernel is being compiled: the cache is cold)."""
        parts = min(self.count, len(kernel_order(self.order)))
        # the helpers import this very copy of the package, whatever their path
        home = str(Path(__file__).resolve().parents[1])
        path = os.pathsep.join([home, *filter(None, [os.environ.get("PYTHONPATH")])])
        for part in range(parts):
            code = f"from interp._prepare import helper; helper({self.order!r}, {part}, {parts})"
            try:
                process = subprocess.Popen(
                    [sys.executable, "-c", code],
                    stdin=subprocess.DEVNULL,
                    stdout=subprocess.PIPE,
                    stderr=subprocess.DEVNULL,
                    text=True,
                    env={**os.environ, "PYTHONPATH": path},
                )
            except OSError:  # no process to spare: the block compiles on its own
                break
            self.processes.append(process)
        self.started = len(self.processes)

    def finish(self, wait: bool) -> None:
        """Wait for the helpers and count what they compiled, or stop them."""
        for process in self.processes:
            if not wait:
                process.terminate()
            out, _ = process.communicate()
            if wait and process.returncode == 0:
                self.compiled += int(out.strip() or 0)


@contextmanager
def compile_ahead(
    order: str, *, helpers: int | None = None, wait: bool = False
) -> Iterator[Helpers]:
    """Spread the kernel compiles of a block over the cores, if it compiles any.

    On the first kernel compile inside the block (none happens when every
    kernel loads from the cache), start ``helpers`` processes that compile
    the kernels of ``order`` (a key of ``interp/kernel_order.json``) from the
    last backwards.  On leaving the block they are stopped (``wait=False``: a
    kernel a helper had not finished is compiled again on its first use) or
    waited for.

    Parameters
    ----------
    order : str
        Which list of kernels: a command's name, or ``"prepare"``.  An
        unknown name starts no helper.
    helpers : int, optional
        Helper processes; default one per core but one.
    wait : bool
        Wait for the helpers to finish their lists instead of stopping them.

    Examples
    --------
    >>> with compile_ahead("prepare", helpers=0) as team:
    ...     pass
    >>> team.started
    0
    """
    count = max(_cores() - 1, 0) if helpers is None else max(helpers, 0)
    team = Helpers(order, count)
    cancel = on_next_compile(team.start) if count else (lambda: None)
    try:
        yield team
    finally:
        cancel()
        team.finish(wait)


def kernel_order(order: str) -> list[tuple[str, str, list[str]]]:
    """The kernels that ``order`` compiles on a first run: (module, kernel,
    argument types), in the order of first use; empty for an unknown name.

    Examples
    --------
    >>> module, name, args = kernel_order("prepare")[0]
    >>> module.startswith("interp._kernels.")
    True
    >>> kernel_order("no such command")
    []
    """
    return [tuple(entry) for entry in _orders().get(order, [])]


def _orders() -> dict:
    try:
        return json.loads(ORDER_FILE.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return {}


#: environment variable: processes a first run compiles with, this one included
#: (``1``: no helper process); default one per core.
JOBS_VARIABLE = "INTERP_COMPILE_JOBS"


def _cores() -> int:
    setting = os.environ.get(JOBS_VARIABLE, "").strip()
    if setting.isdigit() and int(setting) > 0:
        return int(setting)
    try:
        return len(os.sched_getaffinity(0))
    except AttributeError:  # not on every platform
        return os.cpu_count() or 1


def helper(order: str, part: int, parts: int) -> None:
    """The body of a helper process: compile every ``parts``-th kernel of
    ``order`` from the last backwards, starting ``part`` from the end, and
    print how many specialisations it compiled."""
    set_announce(False)
    with event.install_recorder("numba:compile") as record:
        for module, name, args in list(reversed(kernel_order(order)))[part::parts]:
            # a stale entry is skipped: the block compiles what it needs itself
            try:
                kernel = getattr(importlib.import_module(module), name)
                if isinstance(kernel, CPUDispatcher):
                    kernel.compile(tuple(eval(a, {"__builtins__": {}}, TYPES) for a in args))
            except Exception:  # noqa: BLE001
                continue
    print(_count(record))


def _count(record: event.RecordingListener) -> int:
    return sum(
        1
        for _, ev in record.buffer
        if ev.is_end and ev.data["dispatcher"].py_func.__module__.startswith("interp._kernels")
    )


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
                square.contains(pts)
                inner = fit(pts, z, order=order, boundary=square)
                transfer(f, inner.mesh, conservative=True)
                crossvalidate(pts, z, order=order, breaklines=[[[0.3, 0.3], [0.7, 0.6]]])
