"""Point tables: the bulk parser (pyarrow.csv) and the cell parser agree.

Every check reads the same file once with ``BULK = True`` and once with
``BULK = False`` (every block cell by cell) and compares both with a
reference outside the project: ``numpy.loadtxt`` or Python's ``csv`` module
with ``float``.
"""

import csv
import io
import subprocess
import sys

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from interp import InterpError
from interp.io import TableWriter, _tables, iter_point_chunks, read_points, write_table


def both(path, coords=("x", "y"), chunk_rows=None):
    """(points, values) per chunk from the bulk and the cell parser, in that order."""
    out = []
    for bulk in (True, False):
        _tables.BULK = bulk
        try:
            if chunk_rows is None:
                out.append(read_points(path, coords))
            else:
                chunks = iter_point_chunks(path, coords, chunk_rows=chunk_rows)
                out.append([(c.points, c.values, c.line_numbers) for c in chunks])
        finally:
            _tables.BULK = True
    return out


def assert_same(a, b):
    """Identical arrays, bit for bit (NaN where NaN)."""
    np.testing.assert_array_equal(a[0], b[0])
    assert list(a[1]) == list(b[1])
    for name in a[1]:
        np.testing.assert_array_equal(a[1][name], b[1][name])


CLEAN = {
    ",": "x,y,z\n0.5,1.25,-3\n1e3,2.5E-7,4\n-0,7,.5\n10,20,5.\n",
    ";": "x;y;z\n0.5;1.25;-3\n1e3;2.5E-7;4\n-0;7;.5\n10;20;5.\n",
    "\t": "x\ty\tz\n0.5\t1.25\t-3\n1e3\t2.5E-7\t4\n-0\t7\t.5\n10\t20\t5.\n",
    " ": "x y z\n  0.5   1.25\t-3\n1e3 2.5E-7 4  \n-0 7 .5\n10\t20 5.\n",
}


@pytest.mark.parametrize("delimiter", list(CLEAN))
def test_bulk_and_cell_parsers_match_numpy_loadtxt(tmp_path, delimiter):
    path = tmp_path / "pts.txt"
    path.write_text(CLEAN[delimiter])
    bulk, cells = both(path)
    assert_same(bulk, cells)
    # reference: numpy.loadtxt, whitespace runs when delimiter=None
    ref = np.loadtxt(path, delimiter=None if delimiter == " " else delimiter, skiprows=1)
    np.testing.assert_array_equal(bulk[0], ref[:, :2])
    np.testing.assert_array_equal(bulk[1]["z"], ref[:, 2])


def test_clean_blocks_take_the_bulk_path(tmp_path, monkeypatch):
    path = tmp_path / "pts.csv"
    path.write_text(CLEAN[","] + "\n\n3,4,\n")

    def refuse(*args):
        raise AssertionError("a clean block went to the cell parser")

    monkeypatch.setattr(_tables, "_parse_cells", refuse)
    points, values = read_points(path)
    assert points[-1].tolist() == [3.0, 4.0] and np.isnan(values["z"][-1])


def test_empty_cells_blank_lines_and_text_columns_agree(tmp_path):
    text = "id,x,y,depth,code\n\nA,1,2,,GR\nB,3,4,5.5,\n  \nC,6,7,8,TR 2\n"
    path = tmp_path / "pts.csv"
    path.write_text(text)
    with pytest.warns(UserWarning, match="'id' \\(line 3\\), 'code' \\(line 3\\)"):
        bulk, cells = both(path)
    assert_same(bulk, cells)
    # reference: Python's csv module, empty cells NaN
    rows = [r for r in csv.reader(io.StringIO(text)) if "".join(r).strip()][1:]
    np.testing.assert_array_equal(bulk[0], [[float(r[1]), float(r[2])] for r in rows])
    np.testing.assert_array_equal(bulk[1]["depth"], [float(r[3] or "nan") for r in rows])


def test_a_column_turning_to_text_in_a_later_chunk_agrees(tmp_path):
    path = tmp_path / "pts.csv"
    path.write_text("x,y,v,w\n0,0,1,2\n1,0,3,4\n1,1,n/a,5\n2,2,6,7\n")
    bulk, cells = both(path, chunk_rows=2)
    for a, b in zip(bulk, cells, strict=True):
        assert_same(a, b)
        np.testing.assert_array_equal(a[2], b[2])
    assert [list(c[1]) for c in bulk] == [["v", "w"], ["w"]]


@pytest.mark.parametrize(
    "cell", ["nan", "NaN", "inf", "-inf", "nan(0)", "1_0", "+1.5", ".5", "5.", " 2", "1e400", "1e"]
)
def test_unusual_value_cells_read_as_python_float(tmp_path, cell):
    path = tmp_path / "pts.csv"
    path.write_text(f"x,y,v\n0,0,1\n1,0,{cell}\n")
    # the parsers themselves (read_points goes on to refuse an infinite value, naming its line)
    [bulk], [cells] = both(path, chunk_rows=10)
    assert_same(bulk, cells)
    # reference: Python's float, which the cell parser follows; a cell it refuses is text
    try:
        expected = [1.0, float(cell)]
    except ValueError:
        assert "v" not in bulk[1]
    else:
        np.testing.assert_array_equal(bulk[1]["v"], expected)


@pytest.mark.parametrize(
    ("body", "message"),
    [
        ("0,0\n\n1,x\n", "line 5: the y coordinate 'x' is not a number"),
        ("0,0\n1,\n", "line 4: the y coordinate is missing"),
        ("0,0\n1,inf\n", "line 4: the y coordinate is 'inf'"),
        ("0,0\n1,2,3\n", "line 4: 3 cells but the header has 2 columns"),
        ('0,0\n"1",nan\n', "line 4: the y coordinate is 'nan'"),
    ],
)
def test_a_bad_row_is_named_by_its_line_on_both_paths(tmp_path, body, message):
    path = tmp_path / "pts.csv"
    path.write_text("x,y\n1,1\n" + body)
    for bulk in (True, False):
        _tables.BULK = bulk
        try:
            with pytest.raises(InterpError, match=message):
                list(iter_point_chunks(path, chunk_rows=2))
        finally:
            _tables.BULK = True


finite = st.floats(allow_nan=False, allow_infinity=False)
numbers = st.floats(allow_nan=True, allow_infinity=False) | st.sampled_from(
    [0.0, -0.0, 1e-4, 9.999999999999999e-05, 1e10, 9999999999.999998, 1e16, 5e-324]
)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(finite, finite, numbers), min_size=1, max_size=40))
def test_written_text_is_repr_and_reads_back_exactly(tmp_path_factory, rows):
    path = tmp_path_factory.mktemp("t") / "t.csv"
    table = np.array(rows)
    write_table(path, ["x", "y", "z"], table)
    # reference: Python's csv module writing repr without ".0", NaN an empty cell
    ref = io.StringIO()
    writer = csv.writer(ref, lineterminator="\n")
    writer.writerow(["x", "y", "z"])
    for row in rows:
        writer.writerow(["" if v != v else repr(v).removesuffix(".0") for v in row])
    assert path.read_text() == ref.getvalue()
    bulk, cells = both(path)
    assert_same(bulk, cells)
    np.testing.assert_array_equal(bulk[0], table[:, :2])
    np.testing.assert_array_equal(bulk[1]["z"], table[:, 2])


def test_cli_sample_output_is_the_same_on_both_paths(tmp_path):
    (tmp_path / "s.csv").write_text("x,y,z\n0,0,0\n4,0,8\n0,4,4\n")
    rows = "".join(f"P{i};{x};{y}\n" for i, (x, y) in enumerate([(1, 1), (0.5, 2), (9, 9)]))
    (tmp_path / "q.csv").write_text("id;x;y\n" + rows)
    script = (
        "import sys; from interp.io import _tables; _tables.BULK = sys.argv[1] == 'bulk'; "
        "from interp.cli import main; sys.exit(main(sys.argv[2:]))"
    )
    texts = []
    for mode in ("bulk", "cells"):
        out = tmp_path / f"{mode}.csv"
        args = ["sample", "-q", str(tmp_path / "s.csv"), str(tmp_path / "q.csv"), "-o", str(out)]
        subprocess.run([sys.executable, "-c", script, mode, *args], check=True)
        texts.append(out.read_text())
    # z = 2x + y on the triangle (0,0),(4,0),(0,4): a plane, so P1 is exact
    assert texts[0] == texts[1] == "id;x;y;z\nP0;1;1;3\nP1;0.5;2;3\nP2;9;9;\n"


@settings(max_examples=80, deadline=None)
@given(
    st.lists(
        st.tuples(
            st.integers(-999, 999),
            st.integers(0, 99),
            st.sampled_from(["\n", "\r\n", "\r", "\n\n", "\r\n \r\n", "\n\t\n"]),
        ),
        min_size=1,
        max_size=30,
    ),
    st.booleans(),
    st.booleans(),
    st.integers(1, 7),
    st.integers(1, 40),
)
def test_line_ends_and_block_edges_read_as_python_text_files(
    tmp_path_factory, rows, bom, last_break, chunk_rows, read_bytes
):
    path = tmp_path_factory.mktemp("t") / "t.csv"
    text = "x,y\n" + "".join(f"{x},{y}{end}" for x, y, end in rows)
    if not last_break:
        text = text.rstrip("\r\n\t ")
    path.write_bytes(("\ufeff" if bom else "").encode() + text.encode())
    # reference: Python's text files (universal newlines, utf-8-sig), blank lines skipped
    with open(path, encoding="utf-8-sig") as fh:
        lines = fh.read().split("\n")
    ref = [(n, line) for n, line in enumerate(lines[1:], start=2) if line.strip()]
    _tables.READ_BYTES, before = read_bytes, _tables.READ_BYTES
    try:
        chunks = list(iter_point_chunks(path, chunk_rows=chunk_rows))
    finally:
        _tables.READ_BYTES = before
    assert [r for c in chunks for r in c.rows] == [line for _, line in ref]
    assert [n for c in chunks for n in c.line_numbers.tolist()] == [n for n, _ in ref]
    points = np.concatenate([c.points for c in chunks])
    assert points.tolist() == [[float(v) for v in line.split(",")] for _, line in ref]


def test_rows_written_from_bytes_equal_rows_written_as_strings(tmp_path):
    source = tmp_path / "q.csv"
    source.write_bytes(
        "id;x;y\r\nA\u00e9;0.5;1\r\n\r\nB\xff;2;3\r\n".encode(errors="surrogateescape")
    )
    texts = []
    for as_bytes in (True, False):
        out = tmp_path / f"o{as_bytes}.csv"
        with TableWriter(out, ["id", "x", "y", "z"], ";") as writer:
            for chunk in iter_point_chunks(source, chunk_rows=2):
                z = chunk.points[:, 1] / 1e5
                writer.write(chunk.text if as_bytes else chunk.rows, z)
        texts.append(out.read_bytes())
    # the row bytes pass through (line ends as \n, the blank line dropped); IEEE division is
    # correctly rounded, so y / 1e5 is the double nearest 1e-05 and 3e-05: Python's repr
    assert (
        texts[0]
        == texts[1]
        == "id;x;y;z\nA\u00e9;0.5;1;1e-05\nB\xff;2;3;3e-05\n".encode(errors="surrogateescape")
    )


def test_lines_of_unicode_spaces_before_the_header_are_blank(tmp_path):
    # str.isspace: U+00A0 (no-break space) and U+2003 (em space) are whitespace in Python
    path = tmp_path / "pts.csv"
    path.write_text("\u00a0\n\u2003 \nx,y,z\n1,2,3\n", encoding="utf-8")
    chunk = next(iter_point_chunks(path))
    assert chunk.names == ["x", "y", "z"] and chunk.line_numbers.tolist() == [4]
