"""Running a parsed ``interp`` command: errors, signals, warnings and pipes.

A data error becomes one line ``interp: error: ...`` and exit 1; a missing
optional extra names the extra; Ctrl-C (130) and SIGTERM (143) run the same
clean-up, so no half-written output is left; a closed pipe stops quietly
(141); a library warning is one ``interp: note: ...`` line.
"""

from __future__ import annotations

import argparse
import os
import signal
import sys
import threading
import warnings
from pathlib import Path
from typing import NoReturn

from interp._progress import write
from interp.errors import InterpError

#: the optional extra that brings each lazily imported package.
EXTRAS = {
    "dask": "dask",
    "distributed": "dask",
    "zarr": "dask",
    "pyvista": "view",
    "vtk": "view",
    "matplotlib": "view",
}
#: arguments naming input files, which no output may overwrite.
INPUTS = ("source", "query", "upper", "lower", "boundary", "region")


class Terminated(KeyboardInterrupt):
    """SIGTERM, raised like Ctrl-C so that the same clean-up runs."""


def _terminate(signum, frame) -> NoReturn:
    raise Terminated


def run(args: argparse.Namespace) -> int:
    """Run the subcommand of parsed arguments (``args.func``); returns the exit status.

    Examples
    --------
    >>> run(argparse.Namespace(quiet=True, func=lambda args: print("done")))
    done
    0
    """
    main_thread = threading.current_thread() is threading.main_thread()
    previous = signal.signal(signal.SIGTERM, _terminate) if main_thread else None
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore" if args.quiet else "always")
            # the interpreter's own notes (a file left open by an import that a signal
            # interrupted) are not notes about the user's data
            warnings.simplefilter("ignore", ResourceWarning)
            warnings.showwarning = _note
            code = _guarded(args)
        sys.stdout.flush()
    except BrokenPipeError:
        # the reader of our output (``| head``) has gone: stop quietly, as pipes expect
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        code = 128 + signal.SIGPIPE
    finally:
        if previous is not None:
            signal.signal(signal.SIGTERM, previous)
    return code


def _note(message, category, filename, lineno, file=None, line=None) -> None:
    """Show a warning from the library as one line on stderr (above a progress bar)."""
    write(f"interp: note: {' '.join(str(message).split())}")


def _check_output(args: argparse.Namespace) -> None:
    """Refuse an output path that names one of the input files."""
    out = getattr(args, "output", None) or getattr(args, "screenshot", None)
    if out is None:
        return
    for name in INPUTS:
        given = getattr(args, name, None)
        if given is not None and (
            Path(given).resolve() == Path(out).resolve()
            or (Path(given).exists() and Path(out).exists() and os.path.samefile(given, out))
        ):
            raise InterpError(
                f"the output {out} is also the input {given}; writing it would destroy the "
                "input: give another output file"
            )


def _guarded(args: argparse.Namespace) -> int:
    """Run the subcommand, turning every error into one line on stderr and an exit status."""
    try:
        _check_output(args)
        args.func(args)
    except BrokenPipeError:
        raise
    except (ValueError, OSError) as exc:
        return _error(" ".join(str(exc).split()) or type(exc).__name__)
    except MemoryError as exc:
        return _error(
            f"not enough memory ({exc or 'allocation failed'}); use a larger spacing or step, "
            "smaller bounds or fewer points"
        )
    except ModuleNotFoundError as exc:
        extra = EXTRAS.get((exc.name or "").partition(".")[0])
        if extra is None:
            raise
        return _error(
            f"this needs the optional {extra!r} extra ({exc.name} is not installed); "
            f"install it with: pip install 'interp[{extra}]'"
        )
    except Terminated:
        print("interp: error: terminated (SIGTERM); no output written", file=sys.stderr)
        return 128 + signal.SIGTERM
    except KeyboardInterrupt:
        print("interp: error: interrupted; no output written", file=sys.stderr)
        return 130
    return 0


def _error(message: str) -> int:
    print(f"interp: error: {message}", file=sys.stderr)
    return 1
