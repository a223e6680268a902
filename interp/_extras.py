"""Optional dependencies: importing the library behind a file format or an extra.

A format that needs a library outside the core (laspy for LAS, rasterio for
GeoTIFF, xarray for NetCDF) imports it through :func:`require`, so a missing
library is one :class:`~interp.errors.InterpError` naming the extra to
install rather than a ``ModuleNotFoundError`` traceback.
"""

from __future__ import annotations

import importlib
from types import ModuleType

from interp.errors import InterpError


def require(module: str, extra: str, purpose: str) -> ModuleType:
    """Import ``module``, or raise InterpError saying which extra installs it.

    Parameters
    ----------
    module : str
        The module to import, such as ``"laspy"``.
    extra : str
        The name of the ``interp`` extra that installs it.
    purpose : str
        What the module is needed for, as the start of the message.

    Examples
    --------
    >>> require("json", "none", "reading JSON").__name__
    'json'
    >>> try:
    ...     require("no_such_module_here", "las", "reading LAS files")
    ... except InterpError as exc:
    ...     print(str(exc).split("; ")[1])
    install the extra with: pip install 'interp[las]'
    """
    try:
        return importlib.import_module(module)
    except ImportError:
        raise InterpError(
            f"{purpose} needs {module.split('.')[0]}, which is not installed; install the "
            f"extra with: pip install 'interp[{extra}]'"
        ) from None
