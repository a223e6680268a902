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
