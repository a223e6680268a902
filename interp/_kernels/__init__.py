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
"""

from __future__ import annotations

import hashlib
from collections.abc import Callable
from functools import cache
from pathlib import Path

from numba.core.caching import CacheImpl, InTreeCacheLocator

#: the folder of the kernels.
FOLDER = Path(__file__).resolve().parent
#: files whose contents the compiled kernels depend on.
SOURCES = (FOLDER, FOLDER.parent / "_geometry.py")


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
        digest.update(name.encode())
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
