"""Point tables: delimited text with a header row (comma, semicolon, tab or
whitespace), read whole with :func:`read_points` or in chunks with
:func:`iter_point_chunks`, and written back by :class:`TableWriter` and
:func:`write_table`, atomically.
"""

from __future__ import annotations

import csv
import os
import re
import warnings
from collections.abc import Iterator, Sequence
from dataclasses import dataclass
from itertools import repeat
from pathlib import Path
from typing import BinaryIO

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.csv as pacsv

from interp.errors import InterpError
from interp.io._las import is_las_file, read_las_points

#: delimiters of point files, as written; " " stands for any run of whitespace.
DELIMITERS = {",": "comma", ";": "semicolon", "\t": "tab", " ": "whitespace"}
#: data rows parsed at a time by :func:`read_points`.
CHUNK_ROWS = 500_000
#: text encoding of point files; undecodable bytes pass through unchanged.
ENCODING = {"encoding": "utf-8", "errors": "surrogateescape"}
#: parse clean blocks with ``pyarrow.csv``; False parses every block cell by cell.
BULK = True
#: bytes read from a point file at a time.
READ_BYTES = 1 << 22
#: bytes that rule a whitespace-delimited block out of the bulk path: whitespace
#: other than space, tab and line feed, which ``str.split`` also splits on, and any
#: byte of a non-ASCII character (some of them are whitespace too).
_OTHER_SPACE = re.compile(rb"[\x0b\x0c\x1c-\x1f\x80-\xff]")
#: the byte order mark that may open a UTF-8 file.
_BOM = b"\xef\xbb\xbf"


@dataclass(frozen=True)
class PointChunk:
    """A block of data rows of a point file.

    Attributes
    ----------
    points : ndarray (n, d) float64
        The coordinate columns, in the order asked for.
    values : dict of str to ndarray (n,)
        The other numeric columns by header name; empty cells are NaN.
    text : bytes
        The raw bytes of the data rows, each ended by a line feed (``\\r\\n``
        and ``\\r`` line ends read as ``\\n``); blank lines left out.
    line_numbers : ndarray (n,) int64
        The 1-based line of each row in the file.
    header : str
        The raw header line.
    names : list of str
        The header's column names, stripped.
    delimiter : str
        ``","``, ``";"``, ``"\\t"``, or ``" "`` for whitespace.
    text_columns : dict of str to int
        Columns found to hold text so far (left out of ``values``), each
        with the line of its first non-numeric cell.
    """

    points: np.ndarray
    values: dict[str, np.ndarray]
    text: bytes
    line_numbers: np.ndarray
    header: str
    names: list[str]
    delimiter: str
    text_columns: dict[str, int]

    @property
    def rows(self) -> list[str]:
        """The raw text of each data row, without the line break."""
        return self.text.decode(**ENCODING).split("\n")[:-1]


@dataclass(frozen=True)
class _Layout:
    """The columns of a point file, from its header line."""

    header: str
    names: list[str]
    delimiter: str
    coords: list[int]
    values: list[int]


def iter_point_chunks(
    path: str | os.PathLike,
    coords: Sequence[str] = ("x", "y"),
    chunk_rows: int = 500_000,
) -> Iterator[PointChunk]:
    """Read a delimited point file in blocks of rows, keeping memory bounded.

    The first non-blank line is the header; the delimiter is the first of
    tab, semicolon and comma found in it, else whitespace.  Fields may be
    quoted (``"a, b"``) in comma, semicolon and tab files.  Blank lines are
    skipped.  Columns named in ``coords`` (matched case-insensitively) are the
    coordinates and must hold a finite number in every row.  Every other
    named column becomes a value field; empty cells are NaN.  A column with a
    non-numeric cell is text (a point code, a description): from the chunk
    holding that cell on, it is left out of ``values`` and listed in
    ``text_columns``.  Rows with fewer cells than the header are padded with
    empty cells; extra cells must be empty.

    Parameters
    ----------
    path : path-like
    coords : sequence of str
        Names of the coordinate columns, 1 to 3 of them.
    chunk_rows : int
        Lines read per chunk.

    Yields
    ------
    PointChunk

    Examples
    --------
    >>> import tempfile, pathlib
    >>> path = pathlib.Path(tempfile.mkdtemp()) / "pts.csv"
    >>> _ = path.write_text("X,Y,depth\\n0,0,1.5\\n1,0,\\n1,1,2\\n")
    >>> chunks = list(iter_point_chunks(path, chunk_rows=2))
    >>> [c.rows for c in chunks]
    [['0,0,1.5', '1,0,'], ['1,1,2']]
    >>> chunks[0].values["depth"].tolist(), chunks[1].line_numbers.tolist()
    ([1.5, nan], [4])
    """
    path = Path(path)
    coords = _check_coords(coords)
    if int(chunk_rows) != chunk_rows or chunk_rows < 1:
        raise InterpError(f"chunk_rows must be a positive integer; got {chunk_rows!r}")
    with _open_table(path) as file:
        lines = _Lines(file)
        line = 0
        while raw := lines.take(1):
            line += 1
            if (text := raw.decode(**ENCODING)).strip():
                break
        else:
            raise InterpError(f"{path}: the file is empty; expected a header row such as x,y,z")
        binary = next((i for i, ch in enumerate(text) if ch < " " and ch not in "\t\r\n"), -1)
        if binary >= 0:
            raise InterpError(
                f"{path}, line {line}, column {binary + 1}: control byte "
                f"{ord(text[binary]):#04x} in the header; this is not a text point file "
                "(binary data?): give delimited text with a header row such as x,y,z"
            )
        layout = _layout(path, text.rstrip("\n"), coords)
        text_columns: dict[str, int] = {}
        while block := lines.take(int(chunk_rows)):
            count = block.count(b"\n")
            numbers = np.arange(line + 1, line + 1 + count, dtype=np.int64)
            line += count
            chunk = _parse(path, layout, block, numbers, text_columns)
            if chunk.text:
                yield chunk


def read_points(
    path: str | os.PathLike, coords: Sequence[str] = ("x", "y")
) -> tuple[np.ndarray, dict[str, np.ndarray]]:
    """Read a delimited point file: coordinates and numeric value columns.

    The file format is that of :func:`iter_point_chunks`.  Text columns are
    skipped with a warning naming them.  A row with a missing or non-numeric
    coordinate, or an infinite value, is an error naming its line.  A ``.las``
    or ``.laz`` point cloud is read whole by :func:`interp.io._las.read_las`
    (coordinates ``("x", "y")`` or ``("x", "y", "z")``; needs the ``las`` extra).

    Returns
    -------
    points : ndarray (n, len(coords)) float64
    values : dict of str to ndarray (n,)
        The numeric non-coordinate columns by header name; empty cells are NaN.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> path = pathlib.Path(tempfile.mkdtemp()) / "levels.txt"
    >>> _ = path.write_text("x  y  z\\n10 20 1.25\\n11 20 1.5\\n")
    >>> points, values = read_points(path)
    >>> points.tolist(), values["z"].tolist()
    ([[10.0, 20.0], [11.0, 20.0]], [1.25, 1.5])
    """
    if is_las_file(path):  # LAS/LAZ point clouds
        return read_las_points(path, coords=coords)
    points, values, numbers, text_columns = read_table(path, coords)
    for name, column in values.items():
        bad = np.flatnonzero(np.isinf(column))
        if bad.size:
            raise InterpError(
                f"{path}, line {numbers[bad[0]]}: the value in column {name!r} is infinite "
                f"({bad.size} row(s) in all); leave the cell empty to mark no data"
            )
    if text_columns:
        listed = ", ".join(f"{name!r} (line {line})" for name, line in text_columns.items())
        warnings.warn(
            f"{path}: skipped the text column(s) {listed}: only numeric columns become fields",
            stacklevel=2,
        )
    return points, values


def read_table(
    path: str | os.PathLike, coords: Sequence[str]
) -> tuple[np.ndarray, dict[str, np.ndarray], np.ndarray, dict[str, int]]:
    """The whole point file: points, values, line numbers and text columns."""
    points, values, numbers, text_columns = [], [], [], {}
    for chunk in iter_point_chunks(path, coords, chunk_rows=CHUNK_ROWS):
        points.append(chunk.points)
        values.append(chunk.values)
        numbers.append(chunk.line_numbers)
        text_columns = chunk.text_columns
    if not any(len(p) for p in points):  # no chunk, or only rows the reader skips
        raise InterpError(f"{path}: no data rows below the header")
    return (
        np.concatenate(points),
        {name: np.concatenate([v[name] for v in values]) for name in values[-1]},
        np.concatenate(numbers),
        text_columns,
    )


def _check_coords(coords: Sequence[str]) -> list[str]:
    if isinstance(coords, str) or not 1 <= len(coords) <= 3:
        raise InterpError(
            f"coords must name 1 to 3 coordinate columns, such as ('x', 'y'); got {coords!r}"
        )
    names = [str(c).strip().lower() for c in coords]
    if len(set(names)) != len(names):
        raise InterpError(f"coords name a column twice: {tuple(coords)}")
    return names


def _open_table(path: Path) -> BinaryIO:
    if not path.is_file():
        raise InterpError(f"{path}: no such file; check the name and folder")
    try:
        return open(path, "rb")
    except OSError as exc:
        raise InterpError(f"{path}: cannot open the file ({exc.strerror})") from None


class _Lines:
    """Whole lines of a binary file, many at a time, each ended by ``b"\\n"``.

    Line ends ``\\r\\n`` and ``\\r`` read as ``\\n`` and a leading UTF-8 byte
    order mark is dropped, as Python's text files (``utf-8-sig``) read them; a
    last line without a line break gets one.
    """

    def __init__(self, file: BinaryIO) -> None:
        self._file = file
        self._data = b""
        self._start = 0
        self._ends = np.empty(0, dtype=np.int64)
        self._first = True

    def take(self, n: int) -> bytes:
        """The next ``n`` lines (fewer at the end of the file, ``b""`` after it)."""
        pieces = []
        while n > len(self._ends):
            n -= len(self._ends)
            stop = int(self._ends[-1]) + 1 if len(self._ends) else self._start
            pieces.append(self._data[self._start : stop])
            if not self._read(self._data[stop:]):
                return b"".join(pieces)
        stop = int(self._ends[n - 1]) + 1
        pieces.append(self._data[self._start : stop])
        self._start, self._ends = stop, self._ends[n:]
        return b"".join(pieces)

    def _read(self, rest: bytes) -> bool:
        """Read on after the partial line ``rest``; False at the end of the file."""
        raw = self._file.read(max(READ_BYTES, len(_BOM)))
        while raw.endswith(b"\r") and (more := self._file.read(1)):
            raw += more
        data = raw.removeprefix(_BOM) if self._first else raw
        self._first = False
        if not raw and rest:
            data = b"\n"
        if b"\r" in data:
            data = data.replace(b"\r\n", b"\n").replace(b"\r", b"\n")
        self._data, self._start = rest + data, 0
        self._ends = np.flatnonzero(np.frombuffer(self._data, np.uint8) == 10)
        return bool(raw or data)


def _cells(line: str, delimiter: str) -> list[str]:
    """The cells of one line, honouring quotes in delimited (non-whitespace) files."""
    if delimiter == " ":
        return line.split()
    if '"' in line:
        return next(csv.reader([line], delimiter=delimiter))
    return line.split(delimiter)


def _layout(path: Path, header: str, coords: list[str]) -> _Layout:
    delimiter = next((d for d in "\t;," if d in header), " ")
    names = [n.strip() for n in _cells(header, delimiter)]
    folded = [n.lower() for n in names]
    if all(_is_number(n) for n in names):
        raise InterpError(
            f"{path}: the first line holds numbers, not column names; add a header row "
            f"naming the columns, such as {','.join(coords)}"
        )
    where = []
    for c in coords:
        hits = [j for j, n in enumerate(folded) if n == c]
        if len(hits) != 1:
            problem = "no column" if not hits else f"{len(hits)} columns"
            raise InterpError(
                f"{path}: {problem} named {c!r} in the header; its columns are "
                f"{', '.join(repr(n) for n in names)} ({DELIMITERS[delimiter]}-delimited); "
                "name the coordinate columns with coords"
            )
        where += hits
    values = [j for j, n in enumerate(names) if n and j not in where]
    seen: dict[str, int] = {}
    for j in values:
        if names[j] in seen:
            raise InterpError(
                f"{path}: the header names two columns {names[j]!r} (columns "
                f"{seen[names[j]] + 1} and {j + 1}); give each column its own name"
            )
        seen[names[j]] = j
    return _Layout(header, names, delimiter, where, values)


def _is_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


def _parse(
    path: Path,
    layout: _Layout,
    block: bytes,
    numbers: np.ndarray,
    text_columns: dict[str, int],
) -> PointChunk:
    """Parse a block of raw lines (each ended by a line feed) into a chunk.

    A clean block goes to :func:`_parse_bulk` as it is; any other is decoded,
    its blank lines are dropped, and it goes to the bulk parser again when
    that left it clean, else to :func:`_parse_cells`.
    """
    parsed = _parse_bulk(layout, block, len(numbers), text_columns) if BULK else None
    if parsed is None:
        rows = block.decode(**ENCODING).split("\n")[:-1]
        keep = np.array([bool(r.strip()) for r in rows], dtype=bool)
        if not keep.all():
            rows = [r for r, k in zip(rows, keep, strict=True) if k]
            numbers = numbers[keep]
            block = "".join(r + "\n" for r in rows).encode(**ENCODING)
            parsed = _parse_bulk(layout, block, len(numbers), text_columns) if BULK else None
        quoted = b'"' in block
        parsed = parsed or _parse_cells(path, layout, rows, numbers, text_columns, quoted)
    points, values = parsed
    return PointChunk(
        points,
        values,
        block,
        numbers,
        layout.header,
        layout.names,
        layout.delimiter,
        dict(text_columns),
    )


def _parse_bulk(
    layout: _Layout, block: bytes, rows: int, text_columns: dict[str, int]
) -> tuple[np.ndarray, dict[str, np.ndarray]] | None:
    """Points and values of a clean block of ``rows`` lines through ``pyarrow.csv``, or None.

    A block is clean when every row has the header's cells, every numeric
    column parses with no cell spelling NaN (Arrow reads ``nan(1)``, Python
    does not), and every coordinate is finite; the others (quotes, blank
    lines, ragged rows, text cells, bad coordinates, odd whitespace) go to
    :func:`_parse_cells`, which gives the same arrays and names bad rows.
    """
    delimiter = layout.delimiter
    if b'"' in block or (delimiter == " " and _OTHER_SPACE.search(block)):
        return None
    if delimiter == " ":
        block = re.sub(rb"(?m)^ +| +$", b"", re.sub(rb"[ \t]+", b" ", block))
    keys = [str(j) for j in range(len(layout.names))]
    numeric = layout.coords + [j for j in layout.values if layout.names[j] not in text_columns]
    try:
        table = pacsv.read_csv(
            pa.BufferReader(block),
            read_options=pacsv.ReadOptions(column_names=keys, use_threads=False),
            parse_options=pacsv.ParseOptions(delimiter=delimiter, quote_char=False),
            convert_options=pacsv.ConvertOptions(
                column_types=dict.fromkeys([keys[j] for j in numeric], pa.float64()),
                include_columns=[keys[j] for j in numeric],
                null_values=[""],
                strings_can_be_null=False,
            ),
        )
    except pa.ArrowInvalid:
        return None
    if table.num_rows != rows or any(pc.sum(pc.is_nan(c)).as_py() for c in table.columns):
        return None
    columns = [table.column(keys[j]).to_numpy() for j in numeric]
    points = np.column_stack(columns[: len(layout.coords)])
    if not np.isfinite(points).all():
        return None
    names = [layout.names[j] for j in numeric[len(layout.coords) :]]
    return points, dict(zip(names, columns[len(layout.coords) :], strict=True))


def _parse_cells(
    path: Path,
    layout: _Layout,
    rows: list[str],
    numbers: np.ndarray,
    text_columns: dict[str, int],
    quoted: bool,
) -> tuple[np.ndarray, dict[str, np.ndarray]]:
    """Points and values cell by cell, naming the line of a bad row; new text
    columns are added to ``text_columns``."""
    k = len(layout.names)
    cells = _flat_cells(path, rows, layout.delimiter, k, numbers, quoted)
    points = np.empty((len(rows), len(layout.coords)))
    for axis, j in enumerate(layout.coords):
        points[:, axis] = _coordinate(path, layout.names[j], cells[j::k], numbers)
    values = {}
    for j in layout.values:
        name = layout.names[j]
        if name in text_columns:
            continue
        column, bad = _to_float(cells[j::k])
        if bad < 0:
            values[name] = column
        else:
            text_columns[name] = int(numbers[bad])
    return points, values


def _flat_cells(
    path: Path, rows: list[str], delimiter: str, k: int, numbers: np.ndarray, quoted: bool
) -> list[str]:
    """All cells of the rows, row after row: len(rows) * k strings."""
    if delimiter == " ":
        rows = [" ".join(r.split()) for r in rows]
    elif quoted:
        pairs = zip(rows, numbers, strict=True)
        return [c for r, line in pairs for c in _fit(path, _cells(r, delimiter), k, line)]
    counts = np.fromiter(map(str.count, rows, repeat(delimiter)), np.int64, len(rows))
    irregular = np.flatnonzero(counts != k - 1)
    if irregular.size:
        rows = list(rows)
        for i in irregular:
            rows[i] = delimiter.join(_fit(path, rows[i].split(delimiter), k, numbers[i]))
    return delimiter.join(rows).split(delimiter) if rows else []


def _fit(path: Path, cells: list[str], k: int, line: int) -> list[str]:
    """The cells of a row padded or trimmed to the header's k columns."""
    if len(cells) < k:
        return cells + [""] * (k - len(cells))
    if any(c.strip() for c in cells[k:]):
        raise InterpError(
            f"{path}, line {line}: {len(cells)} cells but the header has {k} columns; "
            "check the delimiter and quoting of that row"
        )
    return cells[:k]


def _to_float(cells: list[str]) -> tuple[np.ndarray, int]:
    """Cells as float64 with empty cells NaN, and the index of the first non-number (or -1)."""
    try:
        return np.array(cells, dtype=np.float64), -1
    except ValueError:
        pass
    out = np.full(len(cells), np.nan)
    for i, c in enumerate(cells):
        if c.strip():
            try:
                out[i] = float(c)
            except ValueError:
                return out, i
    return out, -1


def _coordinate(path: Path, name: str, cells: list[str], numbers: np.ndarray) -> np.ndarray:
    """A coordinate column, which must be finite in every row."""
    column, bad = _to_float(cells)
    stop = bad if bad >= 0 else len(column)
    nonfinite = np.flatnonzero(~np.isfinite(column[:stop]))
    i = int(nonfinite[0]) if nonfinite.size else bad
    if i < 0:
        return column
    cell = cells[i].strip()
    cell = cell if len(cell) <= 40 else cell[:40] + "..."
    if not cell:
        problem = f"the {name} coordinate is missing"
    elif i == bad:
        problem = f"the {name} coordinate {cell!r} is not a number"
        if "," in cell:
            problem += " (write decimals with a point, not a comma)"
    else:
        problem = f"the {name} coordinate is {cell!r}"
    raise InterpError(f"{path}, line {numbers[i]}: {problem}; fix or remove that row")
