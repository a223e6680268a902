"""Compiled kernels (numba), by topic, under thin Python wrappers in the API modules.

- :mod:`interp._kernels.geometry`: cell measures and sizes, affine maps, cell checks;
- :mod:`interp._kernels.locate`: the bucket grid of point location and its scans;
- :mod:`interp._kernels.evaluate`: field values from barycentric weights;
- :mod:`interp._kernels.polygon`: point-in-polygon, segment tests, orientation;
- :mod:`interp._kernels.clip`: cutting triangles by a polygon, overlay of triangles;
- :mod:`interp._kernels.fit`: local least-squares gradient fits;
- :mod:`interp._kernels.validate`: the cavity search of leave-one-out.

Every kernel is compiled with ``cache=True``.  numba's own cache keys a file's
compiled kernels on that file's source alone, so a kernel inlined or called
from another file (validate calls into fit, every kernel reads tolerances of
:mod:`interp._geometry`) kept a stale compiled copy after the other file
changed.  Importing this package registers :class:`KernelCacheLocator` first
in numba's list of cache locators: for the files of this folder it keeps the
cache where numba would (``__pycache__``) but stamps it with a hash of every
``.py`` file in the folder and of ``interp/_geometry.py``, so an edit to any
of them recompiles every kernel on next use, and nothing has to be deleted by
hand.

Compiling takes from a fraction of a second to several seconds per kernel,
only on a kernel's first use after an edit, or when the cache that the
installation compiled (``scripts/build_backend.py``) does not fit the numba,
Python or processor in use.  Before the
first compile of a process, :func:`announce` prints one line on stderr
(:data:`NOTICE`) so that a first run does not look hung; by default only
when stderr is a terminal (an interactive session, the command line), never
when it is piped or redirected, and :func:`set_announce` switches it on or
off (the command line turns it off with ``--quiet``).  The line goes through
:func:`interp._progress.write`, so it lands above a progress bar that is drawn,
not inside it.  Loading a kernel from the cache compiles nothing and prints
nothing.
"""

from __future__ import annotations

import hashlib
import sys
import threading
from collections.abc import Callable
from functools import cache
from pathlib import Path

import numba
from numba.core import event
from numba.core.caching import CacheImpl, InTreeCacheLocator

from interp._progress import write

#: the folder of the kernels.
FOLDER = Path(__file__).resolve().parent
#: files whose contents the compiled kernels depend on.
SOURCES = (FOLDER, FOLDER.parent / "_geometry.py")
#: the line printed on stderr before the first compile of a process.
NOTICE = "interp: preparing compiled kernels (first run only; `interp prepare` does it ahead)"


def source_files() -> list[Path]:
    """The files whose contents stamp the kernels' cache, in a fixed order.

    Examples
    --------
    >>> names = [p.name for p in source_files()]
    >>> "__init__.py" in names and "_geometry.py" in names
    True
    """
    folder, geometry = SOURCES
    return sorted(folder.glob("*.py")) + [geometry]


@cache
def _stamp(state: tuple[tuple[str, int, int], ...]) -> str:
    digest = hashlib.sha256()
    for name, _, _ in state:
        # the file's name, not its path: a cache compiled in one place (a wheel's
        # build tree) stays valid where the package is installed
        digest.update(Path(name).name.encode())
        digest.update(Path(name).read_bytes())
    return digest.hexdigest()


def source_stamp() -> str:
    """A hash of the contents of :func:`source_files` (recomputed when one changes).

    Examples
    --------
    >>> source_stamp() == source_stamp()
    True
    """
    state = []
    for path in source_files():
        st = path.stat()
        state.append((str(path), st.st_mtime_ns, st.st_size))
    return _stamp(tuple(state))


class KernelCacheLocator(InTreeCacheLocator):
    """numba cache locator for the kernels of this folder: the in-tree cache,
    stamped with :func:`source_stamp` instead of the kernel's own file.

    Examples
    --------
    >>> KernelCacheLocator in CacheImpl._locator_classes
    True
    """

    @classmethod
    def from_function(cls, py_func: Callable, py_file: str) -> KernelCacheLocator | None:
        if Path(py_file).resolve().parent != FOLDER:
            return None
        return super().from_function(py_func, py_file)

    def get_source_stamp(self) -> str:
        return source_stamp()


if KernelCacheLocator not in CacheImpl._locator_classes:
    CacheImpl._locator_classes.insert(0, KernelCacheLocator)


class _Announcer(event.Listener):
    """numba compile listener: :data:`NOTICE` once, before the first kernel of this folder
    is compiled (numba fires no compile event when it loads a kernel from the cache)."""

    def __init__(self) -> None:
        self.enabled: bool | None = None  # None: when stderr is a terminal
        self.done = False
        self.hooks: list[Callable[[], None]] = []
        self.lock = threading.Lock()

    def on_start(self, ev: event.Event) -> None:
        ours = ev.data["dispatcher"].py_func.__module__.startswith(__name__)
        if not ours or (self.done and not self.hooks):
            return
        with self.lock:
            hooks, self.hooks = self.hooks, []
            if not self.done:
                self.done = True
                shown = self.enabled if self.enabled is not None else sys.stderr.isatty()
                if shown:
                    write(NOTICE)  # above a progress bar, not inside it
        for hook in hooks:
            hook()

    def on_end(self, ev: event.Event) -> None:
        pass


_ANNOUNCER = _Announcer()
event.register("numba:compile", _ANNOUNCER)


def on_next_compile(hook: Callable[[], None]) -> Callable[[], None]:
    """Call ``hook()`` once, when a kernel of this folder is next compiled (not
    when one loads from the cache); returns a function that cancels it.

    Examples
    --------
    >>> cancel = on_next_compile(lambda: print("compiling"))
    >>> cancel()
    """
    with _ANNOUNCER.lock:
        _ANNOUNCER.hooks.append(hook)

    def cancel() -> None:
        with _ANNOUNCER.lock:
            if hook in _ANNOUNCER.hooks:
                _ANNOUNCER.hooks.remove(hook)

    return cancel


def set_announce(enabled: bool | None) -> None:
    """Whether to print :data:`NOTICE` before this process's first kernel compile.

    Parameters
    ----------
    enabled : bool or None
        True: always; False: never; None (the default): when stderr is a terminal.

    Examples
    --------
    >>> set_announce(False)
    >>> set_announce(None)
    """
    _ANNOUNCER.enabled = enabled


#: the decorator of a kernel: cached on disk, releasing the GIL, and with numpy's
#: error model (a division by zero gives inf or nan rather than raising), which
#: spares every division its compiled check and exception; no kernel divides by
#: zero on the paths whose results it returns.
kernel = numba.njit(cache=True, nogil=True, error_model="numpy")
#: the decorator of kernels called only from other kernels: as :data:`kernel`, but
#: numba compiles no Python or C entry point for them (about a third of a small
#: kernel's compile).  A kernel called from Python, or from a doctest, takes
#: :data:`kernel`.
inner = numba.njit(cache=True, error_model="numpy", no_cpython_wrapper=True, no_cfunc_wrapper=True)
