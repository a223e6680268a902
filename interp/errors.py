"""The project's error types.

Every error raised on bad input derives from :class:`ValueError`, so callers
that already catch ``ValueError`` keep working, and the command line turns any
:class:`InterpError` into one line ``interp: error: ...``.
"""


class InterpError(ValueError):
    """Bad input or data: the message says what was wrong, where, and what to do.

    Examples
    --------
    >>> from interp.errors import InterpError
    >>> issubclass(InterpError, ValueError)
    True
    """


class RenderingUnavailable(InterpError):
    """No way to draw a picture here: no display and no off-screen OpenGL.

    Raised by :mod:`interp.view` before it would let the rendering library
    crash; the message names the system packages to install.

    Examples
    --------
    >>> from interp.errors import InterpError, RenderingUnavailable
    >>> issubclass(RenderingUnavailable, InterpError)
    True
    """
