"""Atomic writes: a file, or a directory store, appears complete or not at all.

Every writer of interp goes through :func:`atomic_path` (files) or
:func:`move_into_place` (directories such as a Zarr store): the data are
written beside the target under a hidden temporary name that replaces the
target only once complete, so a failed write never leaves a half-written
file and never damages an existing one.
"""

from __future__ import annotations

import os
import secrets
import shutil
import uuid
from collections.abc import Iterator
from contextlib import contextmanager, suppress
from pathlib import Path

from interp.errors import InterpError


def refuse_folder(path: Path, suffix: str = ".csv") -> None:
    """Refuse an output path that is an existing folder, suggesting a file in it.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> refuse_folder(pathlib.Path(tempfile.mkdtemp()) / "new.csv")  # not there yet: fine
    """
    if path.is_dir():
        raise InterpError(
            f"cannot write {path}: it is a folder; give a file name, such as {path / 'out'}"
            f"{path.suffix or suffix}"
        )


@contextmanager
def atomic_path(path: str | os.PathLike) -> Iterator[Path]:
    """Yield a temporary path beside ``path`` that replaces it when the block succeeds.

    The temporary file is created empty in the same folder with the same
    suffix (so writers that go by the suffix pick the right format).  When
    the ``with`` block ends normally it is moved onto ``path`` with
    :func:`os.replace`, which is atomic; when the block raises it is deleted
    and ``path`` is left as it was.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> target = pathlib.Path(tempfile.mkdtemp()) / "note.txt"
    >>> with atomic_path(target) as tmp:
    ...     _ = tmp.write_text("done")
    >>> target.read_text(), sorted(p.name for p in target.parent.iterdir())
    ('done', ['note.txt'])
    """
    path = Path(path)
    refuse_folder(path)
    tmp = path.with_name(f".{path.stem}.{secrets.token_hex(6)}.tmp{path.suffix}")
    # one block from the file's creation on: Ctrl-C or SIGTERM the moment after it still cleans up
    try:
        try:
            os.close(os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o666))
        except OSError as exc:
            raise InterpError(
                f"cannot write {path}: {exc.strerror} in the folder {path.parent}; "
                "check that it exists and is writable"
            ) from None
        yield tmp
        os.replace(tmp, path)
    except BaseException:
        with suppress(OSError):
            tmp.unlink()
        raise


def move_into_place(tmp: Path, path: Path) -> None:
    """Rename directory ``tmp`` to ``path``, setting an existing ``path`` aside first.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> d = pathlib.Path(tempfile.mkdtemp())
    >>> (d / "new").mkdir(); (d / "old").mkdir()
    >>> move_into_place(d / "new", d / "old")
    >>> sorted(p.name for p in d.iterdir())
    ['old']
    """
    old = None
    if path.exists() or path.is_symlink():
        old = path.with_name(f".{path.name}.{uuid.uuid4().hex}.old")
        os.replace(path, old)
    os.replace(tmp, path)
    if old is not None:
        if old.is_dir() and not old.is_symlink():
            shutil.rmtree(old)
        else:
            old.unlink()
