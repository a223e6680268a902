"""Progress of the long steps, as live bars on stderr (tqdm); off unless switched on.

A long step wraps its loop in :func:`task` and calls the function it yields
after each chunk of work with the number of units done.  Off (the default,
and always for the Python API), :func:`task` yields a function that does
nothing, so a step pays one empty call per chunk.  The command line switches
the bars on (:func:`enable`) when stderr is a terminal and ``--quiet`` is not
given.  On, a bar appears only once its step has run for :data:`DELAY`
seconds: short steps print nothing.

Lines written while a bar is shown go through :func:`write`, which clears the
bar, prints the line and redraws the bar below it.

This module imports nothing from :mod:`interp`: every layer may report to it.
"""

from __future__ import annotations

import sys
from collections.abc import Callable, Iterator
from contextlib import contextmanager

#: seconds a step runs before its bar is drawn (steps that end sooner show none).
DELAY = 1.0
_state = {"on": False}


def enable(on: bool) -> None:
    """Switch the bars on or off for this process (off by default).

    Examples
    --------
    >>> enable(False)
    >>> enabled()
    False
    """
    _state["on"] = bool(on)


def enabled() -> bool:
    """Whether the bars are on.

    Examples
    --------
    >>> enabled()
    False
    """
    return _state["on"]


def _nothing(done: int = 1) -> None:
    """What a step reports to when the bars are off."""


@contextmanager
def task(label: str, total: int | None = None, unit: str = "") -> Iterator[Callable[[int], None]]:
    """A bar for one long step; yields ``advance(done)``, to call after each chunk.

    Parameters
    ----------
    label : str
        What the step does, such as ``"evaluating the grid"``.
    total : int, optional
        Units of work in the whole step (None: a counter without an end).
    unit : str
        What one unit is (``"points"``, ``"nodes"``), or "" for steps counted in stages.

    Examples
    --------
    >>> with task("counting", total=3) as advance:
    ...     for _ in range(3):
    ...         advance(1)
    """
    if not _state["on"]:
        yield _nothing
        return
    from tqdm import tqdm

    counted = f"{{n_fmt}}/{{total_fmt}} {unit or 'stages'}"
    with tqdm(
        total=total,
        bar_format=None
        if total is None
        else f"{{l_bar}}{{bar}}| {counted} [{{elapsed}}<{{remaining}}]",
        desc=f"interp: {label}",
        unit=f" {unit}" if unit else " stages",
        unit_scale=bool(unit),
        delay=DELAY,
        leave=None,
        file=sys.stderr,
        dynamic_ncols=True,
        mininterval=0.2,
    ) as bar:
        yield bar.update


def write(line: str) -> None:
    """Print one line on stderr, above any bar that is drawn.

    Examples
    --------
    >>> import contextlib, io
    >>> with contextlib.redirect_stderr(io.StringIO()) as err:
    ...     write("interp: hello")
    >>> err.getvalue()
    'interp: hello\\n'
    """
    if _state["on"]:
        from tqdm import tqdm

        tqdm.write(line, file=sys.stderr)
    else:
        print(line, file=sys.stderr, flush=True)
