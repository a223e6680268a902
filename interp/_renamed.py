"""Keywords that changed name: the old spelling still works, with a warning.

The public interface names one concept one way (``query`` for the points a
question is asked at, ``name`` for the name of a field, ``measure()`` for a
size).  A keyword renamed to reach that keeps its old spelling for callers
written before, as a :class:`DeprecationWarning` naming the new one.
"""

from __future__ import annotations

import functools
import warnings
from collections.abc import Callable
from typing import Any, TypeVar

from interp.errors import InterpError

F = TypeVar("F", bound=Callable[..., Any])


def renamed(**old_to_new: str) -> Callable[[F], F]:
    """Let a function take each old keyword as its new one, with a DeprecationWarning.

    Examples
    --------
    >>> @renamed(field="name")
    ... def pick(*, name=None):
    ...     return name
    >>> import warnings
    >>> with warnings.catch_warnings(record=True) as caught:
    ...     warnings.simplefilter("always")
    ...     pick(field="z"), str(caught[0].message)
    ('z', 'pick(): the keyword field= is now name=; field= will be removed')
    """

    def wrap(func: F) -> F:
        title = func.__qualname__

        @functools.wraps(func)
        def call(*args: Any, **kwargs: Any) -> Any:
            for old, new in old_to_new.items():
                if old not in kwargs:
                    continue
                if new in kwargs:
                    raise InterpError(f"{title}() got both {old}= and {new}=; give {new}= only")
                warnings.warn(
                    f"{title}(): the keyword {old}= is now {new}=; {old}= will be removed",
                    DeprecationWarning,
                    stacklevel=2,
                )
                kwargs[new] = kwargs.pop(old)
            return func(*args, **kwargs)

        return call  # type: ignore[return-value]

    return wrap
