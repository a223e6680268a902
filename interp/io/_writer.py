"""Writing delimited tables: row blocks formatted in bulk, files replaced atomically."""

from __future__ import annotations

import os
from collections.abc import Sequence
from contextlib import ExitStack
from pathlib import Path
from typing import BinaryIO

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from interp.errors import InterpError
from interp.io._atomic import atomic_path
from interp.io._tables import DELIMITERS, ENCODING

#: table rows formatted at a time by :func:`write_table`.
WRITE_ROWS = 1 << 18
#: magnitudes Arrow writes in the same digits as ``repr`` (plain notation, shortest round trip).
PLAIN = (1e-4, 1e10)


class TableWriter:
    """Write a delimited table row block by row block, atomically.

    Use it as a context manager: the header is written on entry, each
    :meth:`write` appends rows, and the finished file replaces ``path`` on a
    normal exit.  On an error the temporary file is deleted and an existing
    ``path`` is left untouched.

    Parameters
    ----------
    path : path-like
    header : sequence of str
        Column names.
    delimiter : str
        ``","``, ``";"``, ``"\\t"`` or ``" "``.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> path = pathlib.Path(tempfile.mkdtemp()) / "out.csv"
    >>> with TableWriter(path, ["id", "x", "z"]) as out:
    ...     out.write(["A,0.5", "B,2"], np.array([[3.0], [np.nan]]))
    >>> path.read_text().splitlines()
    ['id,x,z', 'A,0.5,3', 'B,2,']
    """

    def __init__(
        self, path: str | os.PathLike, header: Sequence[str], delimiter: str = ","
    ) -> None:
        if delimiter not in DELIMITERS:
            raise InterpError(
                f"delimiter must be one of {', '.join(map(repr, DELIMITERS))}; got {delimiter!r}"
            )
        names = [str(n) for n in header]
        for n in names:
            if delimiter in n or "\n" in n:
                raise InterpError(
                    f"column name {n!r} contains the delimiter {delimiter!r} or a line break; "
                    "rename the column"
                )
        self.path = Path(path)
        self.header = names
        self.delimiter = delimiter
        self._stack: ExitStack | None = None
        self._file: BinaryIO | None = None

    def __enter__(self) -> TableWriter:
        with ExitStack() as stack:
            tmp = stack.enter_context(atomic_path(self.path))
            self._file = stack.enter_context(open(tmp, "wb"))
            self._file.write((self.delimiter.join(self.header) + "\n").encode(**ENCODING))
            self._stack = stack.pop_all()
        return self

    def __exit__(self, *exc_info: object) -> bool:
        stack, self._stack, self._file = self._stack, None, None
        return stack.__exit__(*exc_info)

    def write(self, rows: Sequence[str] | bytes | None, values: object) -> None:
        """Append rows: ``rows[i]`` (raw text, or nothing) then the cells of ``values[i]``.

        Parameters
        ----------
        rows : sequence of str, bytes, or None
            Leading text of each row, written unchanged: one string per row,
            or the raw bytes of all rows, each ended by a line feed (as
            :attr:`interp.io.PointChunk.text`); None for rows made of
            ``values`` only.
        values : array_like (n, k) or (n,)
            Numbers written after the row text, shortest round-trip form
            (``3`` for 3.0); NaN is an empty cell.
        """
        if self._file is None:
            raise InterpError("TableWriter.write needs an open writer: use it in a with block")
        table = np.asarray(values, dtype=np.float64)
        table = table.reshape(len(table), -1) if table.ndim == 1 else table
        lead = None if rows is None else _lead_text(rows)
        if table.ndim != 2 or (lead is not None and len(lead) != len(table)):
            raise InterpError(
                f"values must be an (n, k) array with one row per text row; got shape "
                f"{table.shape} for {'no' if lead is None else len(lead)} text rows"
            )
        if not len(table):
            return
        columns = [_number_text(column) for column in table.T]
        if lead is None:
            lead = pc.binary_join_element_wise(_LINE_FEED, columns.pop(0), _NOTHING)
        lines = pc.binary_join_element_wise(
            lead, *columns, pa.scalar(self.delimiter.encode(), _TEXT)
        )
        offsets = np.frombuffer(lines.buffers()[1], np.int64)[lines.offset :][[0, len(lines)]]
        self._file.write(memoryview(lines.buffers()[2])[offsets[0] + 1 : offsets[1]])
        self._file.write(b"\n")


#: the Arrow type of written text: bytes, 64-bit offsets.
_TEXT = pa.large_binary()
_LINE_FEED = pa.scalar(b"\n", _TEXT)
_NOTHING = pa.scalar(b"", _TEXT)


def _lead_text(rows: Sequence[str] | bytes) -> pa.Array:
    """The rows as Arrow text, each with a line feed in front: ``"\\n" + row``.

    Raw bytes (rows each ended by a line feed) are used in place: a line feed
    put before the first row makes every row's line feed the next row's first
    byte.
    """
    if isinstance(rows, bytes):
        ends = np.flatnonzero(np.frombuffer(rows, np.uint8) == 10)
        offsets = np.concatenate([[0], ends + 1])
        data = pa.py_buffer(b"\n" + rows)
        return pa.Array.from_buffers(_TEXT, len(ends), [None, pa.py_buffer(offsets), data])
    return pa.array([b"\n" + r.encode(**ENCODING) for r in rows], _TEXT)


def _number_text(column: np.ndarray) -> pa.Array:
    """Numbers in their shortest round-trip form (``3`` for 3.0, as ``repr``
    without ``.0``); NaN is an empty cell.  Arrow formats the magnitudes it
    writes like ``repr``, Python the rest."""
    missing = np.isnan(column)
    text = pc.cast(pa.array(column, mask=missing), pa.large_string())
    size = np.abs(column)
    odd = np.flatnonzero(~(((size >= PLAIN[0]) & (size < PLAIN[1])) | (column == 0) | missing))
    if odd.size:
        mask = np.zeros(len(column), dtype=bool)
        mask[odd] = True
        text = pc.replace_with_mask(
            text,
            mask,
            pa.array([repr(v).removesuffix(".0") for v in column[odd].tolist()], text.type),
        )
    return pc.fill_null(text, "").cast(_TEXT)


def write_table(
    path: str | os.PathLike,
    header: Sequence[str],
    columns: np.ndarray | Sequence[object],
    delimiter: str = ",",
) -> Path:
    """Write a numeric table with a header row, atomically; NaN is an empty cell.

    Parameters
    ----------
    path : path-like
    header : sequence of str
        One name per column.
    columns : ndarray (n, k) or sequence of k arrays (n,)
        A 2-D array is read as rows by columns; a list or tuple as columns.
    delimiter : str
        ``","``, ``";"``, ``"\\t"`` or ``" "``.

    Returns
    -------
    Path
        ``path``.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> path = pathlib.Path(tempfile.mkdtemp()) / "t.csv"
    >>> _ = write_table(path, ["x", "v"], [np.array([0.0, 0.5]), np.array([1e-3, np.nan])])
    >>> path.read_text().splitlines()
    ['x,v', '0,0.001', '0.5,']
    """
    if isinstance(columns, np.ndarray):
        table = np.asarray(columns, dtype=np.float64)
    else:
        table = np.column_stack([np.asarray(c, dtype=np.float64) for c in columns])
    if table.ndim != 2 or table.shape[1] != len(header):
        raise InterpError(
            f"the table has shape {table.shape} but the header names {len(header)} columns; "
            "pass one name per column"
        )
    with TableWriter(path, header, delimiter) as out:
        for start in range(0, len(table), WRITE_ROWS):
            out.write(None, table[start : start + WRITE_ROWS])
    return Path(path)
