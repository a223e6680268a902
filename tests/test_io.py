"""Mesh files through meshio, point tables, polygons and atomic writes."""

import meshio
import numpy as np
import pytest
import shapely
from conftest import cube_mesh, square_mesh
from hypothesis import given, settings
from hypothesis import strategies as st

import interp
from interp import InterpError
from interp.io import (
    PointChunk,
    TableWriter,
    atomic_path,
    iter_point_chunks,
    read_polygon,
    write_table,
)


def listing(folder):
    return sorted(p.name for p in folder.iterdir())


# ---------------------------------------------------------------- mesh files


@pytest.mark.parametrize("suffix", [".vtu", ".vtk", ".msh"])
@pytest.mark.parametrize("kind", ["triangle6", "tetra10"])
def test_mesh_round_trip(tmp_path, suffix, kind):
    mesh = (square_mesh(2) if kind == "triangle6" else cube_mesh(1)).elevate()
    x = mesh.points
    scalar = x[:, 0] + 2.0 * x[:, 1] ** 2
    vector = np.column_stack([x[:, 1], -x[:, 0], x.sum(axis=1)])
    path = interp.write(tmp_path / f"part{suffix}", mesh, {"s": scalar, "v": vector})
    assert listing(tmp_path) == [path.name]

    back, fields = interp.read(path)
    assert back.cell_type == kind and back.gdim == mesh.gdim
    np.testing.assert_array_equal(back.points, mesh.points)
    np.testing.assert_array_equal(back.cells, mesh.cells)
    assert sorted(fields) == ["s", "v"]
    np.testing.assert_array_equal(fields["s"], scalar)
    np.testing.assert_array_equal(fields["v"], vector)

    # meshio.read, the general-purpose mesh library, sees the same nodes, cells and data
    raw = meshio.read(path)
    np.testing.assert_array_equal(raw.points[:, : mesh.gdim], mesh.points)
    assert not raw.points[:, mesh.gdim :].any()
    np.testing.assert_array_equal(raw.cells_dict[kind], mesh.cells)
    np.testing.assert_array_equal(np.ravel(raw.point_data["s"]), scalar)
    np.testing.assert_array_equal(raw.point_data["v"], vector)


def test_read_takes_triangles_and_ignores_boundary_lines(tmp_path):
    mesh = square_mesh(2)
    half = mesh.n_cells // 2
    boundary = np.array([[0, 1], [1, 2], [2, 5]])
    path = tmp_path / "plate.vtu"
    meshio.write(
        path,
        meshio.Mesh(
            np.column_stack([mesh.points, np.zeros(mesh.n_nodes)]),
            [
                ("line", boundary),
                ("triangle", mesh.cells[:half]),
                ("vertex", np.array([[0], [8]])),
                ("triangle", mesh.cells[half:]),
            ],
        ),
    )
    with pytest.warns(
        UserWarning,
        match="dropped 3 line cells, 2 vertex cells: the mesh is made of the 8 triangle",
    ):
        back, fields = interp.read(path)
    assert back.cell_type == "triangle" and back.gdim == 2 and fields == {}
    np.testing.assert_array_equal(back.cells, mesh.cells)
    assert back.measure().sum() == pytest.approx(1.0, rel=1e-14)


def test_read_keeps_3d_points_of_a_surface_off_the_plane(tmp_path):
    points = np.array([[0.0, 0, 0], [1, 0, 0], [0, 1, 1]])
    path = tmp_path / "roof.vtu"
    meshio.write(path, meshio.Mesh(points, [("triangle", np.array([[0, 1, 2]]))]))
    back, _ = interp.read(path)
    assert back.gdim == 3
    # area of the triangle: |(1,0,0) x (0,1,1)| / 2 = sqrt(2) / 2
    assert back.measure()[0] == pytest.approx(np.sqrt(2) / 2, rel=1e-14)


def test_read_refuses_hexahedra_naming_them(tmp_path):
    cube = np.array([[i & 1, (i >> 1) & 1, i >> 2] for i in (0, 1, 3, 2, 4, 5, 7, 6)], float)
    points = np.vstack([cube, cube + [1.0, 0, 0]])
    hexes = np.array([np.arange(8), np.arange(8) + 8])
    path = tmp_path / "block.vtu"
    meshio.write(path, meshio.Mesh(points, [("quad", hexes[:, :4]), ("hexahedron", hexes)]))
    with pytest.raises(InterpError, match=r"block\.vtu.*simplices.*found hexahedron \(2 cells\)"):
        interp.read(path)


def test_read_refuses_a_wedge_naming_it(tmp_path):
    # a triangular prism: the triangle (0, 1, 2) at z = 0 and its copy at z = 1
    tri = np.array([[0.0, 0, 0], [1, 0, 0], [0, 1, 0]])
    points = np.vstack([tri, tri + [0, 0, 1.0]])
    path = tmp_path / "prism.vtu"
    meshio.write(path, meshio.Mesh(points, [("wedge", np.array([np.arange(6)]))]))
    with pytest.raises(InterpError, match=r"prism\.vtu: only simplices.*found wedge \(1 cell\)"):
        interp.read(path)


def test_read_refuses_quads_mixed_with_triangles(tmp_path):
    points = np.array([[0.0, 0], [1, 0], [1, 1], [0, 1], [2, 0]])
    path = tmp_path / "mixed.vtk"
    cells = [("quad", np.array([[0, 1, 2, 3]])), ("triangle", np.array([[1, 4, 2]]))]
    meshio.write(path, meshio.Mesh(points, cells))
    with pytest.raises(InterpError, match=r"simplices.*quad \(1 cell\)"):
        interp.read(path)


def test_read_missing_and_garbage_files_name_the_file(tmp_path):
    with pytest.raises(InterpError, match=r"nowhere\.vtu: no such file"):
        interp.read(tmp_path / "nowhere.vtu")
    garbage = tmp_path / "noise.vtu"
    garbage.write_bytes(b"\x00\x01 this is not a mesh \xff")
    with pytest.raises(InterpError, match=r"noise\.vtu: cannot read it as a mesh file"):
        interp.read(garbage)
    notes = tmp_path / "notes.docx"
    notes.write_text("minutes")
    with pytest.raises(InterpError, match=r"notes\.docx: meshio has no mesh format"):
        interp.read(notes)


def test_write_refuses_a_field_of_the_wrong_length(tmp_path):
    mesh = square_mesh(1)
    with pytest.raises(InterpError, match=r"field 'h' has shape \(3,\).*\(4,\)"):
        interp.write(tmp_path / "m.vtu", mesh, {"h": [1.0, 2.0, 3.0]})
    assert listing(tmp_path) == []


def test_failed_write_keeps_the_existing_file(tmp_path, monkeypatch):
    path = interp.write(tmp_path / "good.vtu", square_mesh(2), {"s": np.arange(9.0)})
    before = path.read_bytes()
    seen = []

    def broken_writer(filename, mesh, file_format=None, **kwargs):
        seen.append(filename)
        with open(filename, "wb") as f:
            f.write(b"<VTKFile half written")
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(meshio, "write", broken_writer)
    with pytest.raises(InterpError, match=r"cannot write .*good\.vtu.*No space left"):
        interp.write(path, square_mesh(1))
    assert seen and seen[0].parent == tmp_path and seen[0].suffix == ".vtu"
    assert path.read_bytes() == before
    assert listing(tmp_path) == ["good.vtu"]


def test_atomic_path_replaces_on_success_and_cleans_up_on_error(tmp_path):
    target = tmp_path / "report.txt"
    target.write_text("old")
    with pytest.raises(RuntimeError):
        with atomic_path(target) as tmp:
            tmp.write_text("partial")
            assert tmp.parent == tmp_path and tmp.suffix == ".txt" and tmp != target
            raise RuntimeError("interrupted")
    assert target.read_text() == "old" and listing(tmp_path) == ["report.txt"]
    with atomic_path(target) as tmp:
        tmp.write_text("new")
        assert target.read_text() == "old"
    assert target.read_text() == "new" and listing(tmp_path) == ["report.txt"]
    with pytest.raises(InterpError, match="no_such_folder"):
        with atomic_path(tmp_path / "no_such_folder" / "x.txt"):
            pass


# ---------------------------------------------------------------- point files


@pytest.mark.parametrize(
    "text",
    [
        "x,y,depth\n1.5,2,10.25\n-3,4e2,11\n",
        "x;y;depth\n1.5;2;10.25\n-3;4e2;11\n",
        "x\ty\tdepth\n1.5\t2\t10.25\n-3\t4e2\t11\n",
        "x  y   depth\n 1.5 2\t 10.25\n-3  4e2   11  \n",
    ],
    ids=["comma", "semicolon", "tab", "whitespace"],
)
def test_read_points_delimiters(tmp_path, text):
    path = tmp_path / "soundings.txt"
    path.write_text(text)
    points, values = interp.read_points(path)
    assert points.dtype == np.float64 and points.flags.c_contiguous
    assert points.tolist() == [[1.5, 2.0], [-3.0, 400.0]]
    assert list(values) == ["depth"] and values["depth"].tolist() == [10.25, 11.0]


def test_read_points_skips_a_text_column_with_a_warning(tmp_path):
    path = tmp_path / "survey.csv"
    path.write_text("Code,X,Y,Z,note\nBM1,0,0,5.5,\nTP2,1,0,5.75,kerb\n")
    with pytest.warns(UserWarning, match=r"survey\.csv.*'Code' \(line 2\).*'note' \(line 3\)"):
        points, values = interp.read_points(path)
    assert points.tolist() == [[0.0, 0.0], [1.0, 0.0]]
    assert list(values) == ["Z"] and values["Z"].tolist() == [5.5, 5.75]


def test_read_points_honours_quoted_cells(tmp_path):
    path = tmp_path / "q.csv"
    path.write_text('x,y,desc,z\n0,0,"fence, north",1\n2,0,plain,3\n')
    with pytest.warns(UserWarning, match="'desc'"):
        points, values = interp.read_points(path)
    assert points.tolist() == [[0.0, 0.0], [2.0, 0.0]] and values["z"].tolist() == [1.0, 3.0]


@pytest.mark.parametrize(
    "text, message",
    [
        ("x,y,z\n0,0,1\n1,0,2\n\n1,abc,3\n", r"line 5: the y coordinate 'abc' is not a number"),
        ("x,y,z\n0,0,1\n1,0,2\n2,0,2\n,1,3\n", r"line 5: the x coordinate is missing"),
        ("x;y;z\n0;0;1\n1;0;2\n2;0;2\n3;1,5;3\n", r"line 5: .*'1,5' is not a number.*decimals"),
        ("x,y,z\n0,0,1\n1,0,2\n2,0,2\n3,nan,3\n", r"line 5: the y coordinate is 'nan'"),
    ],
    ids=["text", "missing", "decimal-comma", "nan"],
)
def test_bad_coordinate_names_its_line(tmp_path, text, message):
    path = tmp_path / "levels.csv"
    path.write_text(text)
    with pytest.raises(InterpError, match=r"levels\.csv, " + message):
        interp.read_points(path)


def test_empty_value_cells_are_nan(tmp_path):
    path = tmp_path / "conc.csv"
    path.write_text("x,y,lead,zinc\n0,0,,7\n1,0,0.5\n2,0,3,\n")
    _, values = interp.read_points(path)
    np.testing.assert_array_equal(values["lead"], [np.nan, 0.5, 3.0])
    np.testing.assert_array_equal(values["zinc"], [7.0, np.nan, np.nan])


def test_read_points_3d_coordinates_in_any_column_order(tmp_path):
    path = tmp_path / "probe.csv"
    path.write_text("temp,Z,Y,X\n20.5,3,2,1\n  \n21,6,5,4\n")
    points, values = interp.read_points(path, coords=("x", "y", "z"))
    assert points.tolist() == [[1.0, 2.0, 3.0], [4.0, 5.0, 6.0]]
    assert values["temp"].tolist() == [20.5, 21.0]


def test_read_points_bom_and_crlf(tmp_path):
    path = tmp_path / "excel.csv"
    path.write_bytes("\ufeffx,y,z\r\n1,2,3\r\n4,5,6\r\n".encode())
    points, values = interp.read_points(path)
    assert points.tolist() == [[1.0, 2.0], [4.0, 5.0]] and values["z"].tolist() == [3.0, 6.0]


@pytest.mark.parametrize(
    "text, message",
    [
        ("east,north,z\n1,2,3\n", r"no column named 'x'.*'east', 'north', 'z'"),
        ("x,X,y\n1,2,3\n", r"2 columns named 'x'"),
        ("1,2,3\n4,5,6\n", "first line holds numbers"),
        ("x,y,z,z\n1,2,3,4\n", r"two columns 'z' \(columns 3 and 4\)"),
        ("\n\n", "the file is empty"),
        ("x,y,z\n", "no data rows"),
    ],
    ids=["no-x", "two-x", "no-header", "duplicate", "empty", "header-only"],
)
def test_header_problems_are_explained(tmp_path, text, message):
    path = tmp_path / "p.csv"
    path.write_text(text)
    with pytest.raises(InterpError, match=r"p\.csv: .*" + message):
        interp.read_points(path)


def test_read_points_missing_file(tmp_path):
    with pytest.raises(InterpError, match=r"absent\.csv: no such file"):
        interp.read_points(tmp_path / "absent.csv")


def test_short_rows_are_padded_and_long_rows_refused(tmp_path):
    path = tmp_path / "ragged.csv"
    path.write_text("x,y,a,b\n0,0,1\n1,1,2,3,\n")
    _, values = interp.read_points(path)
    np.testing.assert_array_equal(values["a"], [1.0, 2.0])
    np.testing.assert_array_equal(values["b"], [np.nan, 3.0])
    path.write_text("x,y,a\n0,0,1\n1,1,2\n2,2,3,4\n")
    with pytest.raises(InterpError, match=r"line 4: 4 cells but the header has 3 columns"):
        interp.read_points(path)


def test_point_chunks_concatenate_to_read_points(tmp_path):
    rows = [f"P{i},{i * 0.5},{10 - i},{i * i}" for i in range(10)]
    path = tmp_path / "ten.csv"
    path.write_text("id,x,y,h\n" + "\n".join(rows) + "\n")
    chunks = list(iter_point_chunks(path, chunk_rows=3))
    assert all(isinstance(c, PointChunk) for c in chunks)
    assert [len(c.rows) for c in chunks] == [3, 3, 3, 1]
    assert [r for c in chunks for r in c.rows] == rows
    assert np.concatenate([c.line_numbers for c in chunks]).tolist() == list(range(2, 12))
    assert {(c.header, c.delimiter, tuple(c.names)) for c in chunks} == {
        ("id,x,y,h", ",", ("id", "x", "y", "h"))
    }
    assert chunks[-1].text_columns == {"id": 2}
    with pytest.warns(UserWarning, match="'id'"):
        points, values = interp.read_points(path)
    np.testing.assert_array_equal(np.concatenate([c.points for c in chunks]), points)
    np.testing.assert_array_equal(np.concatenate([c.values["h"] for c in chunks]), values["h"])
    assert values["h"].tolist() == [float(i * i) for i in range(10)]


def test_whitespace_chunks_keep_raw_rows(tmp_path):
    path = tmp_path / "ws.xyz"
    path.write_text("x y z\n1  2 3\n\t4 5  6\n")
    (chunk,) = iter_point_chunks(path)
    assert chunk.delimiter == " " and chunk.rows == ["1  2 3", "\t4 5  6"]
    assert chunk.points.tolist() == [[1.0, 2.0], [4.0, 5.0]]


def test_column_turning_to_text_in_a_later_chunk_is_dropped(tmp_path):
    path = tmp_path / "late.csv"
    path.write_text("x,y,tag,z\n0,0,1,5\n1,0,2,6\n2,0,pipe,7\n")
    chunks = list(iter_point_chunks(path, chunk_rows=2))
    assert list(chunks[0].values) == ["tag", "z"] and list(chunks[1].values) == ["z"]
    with pytest.warns(UserWarning, match=r"'tag' \(line 4\)"):
        _, values = interp.read_points(path)
    assert list(values) == ["z"] and values["z"].tolist() == [5.0, 6.0, 7.0]


def test_table_writer_passes_rows_through(tmp_path):
    source = tmp_path / "query.csv"
    source.write_text("code,x,y\nA,0.25,0.5\nB,1,2\nC,3,4\n")
    out = tmp_path / "sampled.csv"
    with TableWriter(out, [*next(iter_point_chunks(source)).names, "z", "q"]) as writer:
        for chunk in iter_point_chunks(source, chunk_rows=2):
            z = np.where(chunk.points[:, 0] > 2, np.nan, chunk.points.sum(axis=1) / 3)
            writer.write(chunk.rows, np.column_stack([z, -chunk.points[:, 1]]))
    assert out.read_text().splitlines() == [
        "code,x,y,z,q",
        "A,0.25,0.5,0.25,-0.5",
        "B,1,2,1,-2",
        "C,3,4,,-4",
    ]
    assert listing(tmp_path) == ["query.csv", "sampled.csv"]


def test_table_writer_error_leaves_no_file(tmp_path):
    out = tmp_path / "t.tsv"
    with pytest.raises(KeyboardInterrupt):
        with TableWriter(out, ["x", "v"], "\t") as writer:
            writer.write(None, np.array([[1.0, 2.0]]))
            raise KeyboardInterrupt
    assert listing(tmp_path) == []
    with pytest.raises(InterpError, match="contains the delimiter"):
        TableWriter(out, ["a,b"])
    with pytest.raises(InterpError, match="with block"):
        TableWriter(out, ["v"]).write(None, [1.0])


@settings(max_examples=50, deadline=None)
@given(
    st.lists(
        st.tuples(
            st.floats(allow_nan=False, allow_infinity=False, width=64),
            st.floats(allow_nan=True, allow_infinity=False, width=64),
        ),
        min_size=1,
        max_size=30,
    ),
    st.sampled_from([",", ";", "\t", " "]),
)
def test_write_table_round_trips_exactly(tmp_path_factory, rows, delimiter):
    # Python's repr of a float is the shortest string that reads back to the same double
    table = np.array(rows, dtype=np.float64)
    path = tmp_path_factory.mktemp("t") / "table.txt"
    write_table(path, ["x", "v"], table, delimiter=delimiter)
    points, values = interp.read_points(path, coords=("x",))
    np.testing.assert_array_equal(points[:, 0], table[:, 0])
    np.testing.assert_array_equal(values["v"], table[:, 1])


def test_write_table_columns_and_shapes(tmp_path):
    path = write_table(tmp_path / "c.csv", ["a", "b"], [np.array([1.0, 2.5]), np.array([-0.0, 3])])
    assert path.read_text() == "a,b\n1,-0\n2.5,3\n"
    with pytest.raises(InterpError, match="header names 3 columns"):
        write_table(tmp_path / "d.csv", ["a", "b", "c"], np.zeros((2, 2)))


# ---------------------------------------------------------------- polygons


def test_read_polygon_with_holes(tmp_path):
    path = tmp_path / "site.csv"
    path.write_text(
        "X,Y,Ring\n"
        "0,0,0\n10,0,0\n10,10,0\n0,10,0\n"
        "6,6,2\n7,6,2\n7,7,2\n6,7,2\n"
        "2,2,1\n4,2,1\n4,4,1\n2,4,1\n"
    )
    rings = read_polygon(path)
    assert [r.tolist() for r in rings] == [
        [[0.0, 0.0], [10.0, 0.0], [10.0, 10.0], [0.0, 10.0]],
        [[2.0, 2.0], [4.0, 2.0], [4.0, 4.0], [2.0, 4.0]],
        [[6.0, 6.0], [7.0, 6.0], [7.0, 7.0], [6.0, 7.0]],
    ]
    # shapely, a general-purpose geometry library: 100 - 4 - 1
    assert shapely.Polygon(rings[0], holes=rings[1:]).area == 95.0
    assert interp.read_polygon is read_polygon


def test_read_polygon_without_ring_column_drops_the_closing_vertex(tmp_path):
    path = tmp_path / "pond.csv"
    path.write_text("x,y\n0,0\n3,0\n0,4\n0,0\n")
    (ring,) = read_polygon(path)
    expected = np.array([[0.0, 0.0], [3.0, 0.0], [0.0, 4.0]])
    # a ring is cyclic: the same vertex sequence, whichever vertex comes first
    assert ring.shape == (3, 2)
    assert any(np.array_equal(np.roll(ring, k, axis=0), expected) for k in range(3))


@pytest.mark.parametrize(
    "body, message",
    [
        ("0,0,0\n1,0,0\n1,1,0\n0,1,0.5\n", r"line 5: the ring number must be a whole number"),
        ("0,0,0\n1,0,0\n1,1,\n", r"line 4: the ring number"),
        ("0,0,1\n1,0,1\n1,1,1\n", r"no ring 0"),
        ("0,0,0\n4,0,0\n1,1,1\n2,1,1\n1,2,1\n4,4,0\n", r"line 7: ring 0 starts again"),
        ("0,0,0\n4,0,0\n4,4,0\n1,1,1\n2,1,1\n", r"ring 1 \(lines 5-6\) needs at least 3"),
        ("0,0,0\n4,0,0\n4,4,0\n1,1,a\n", r"line 5: the ring column must hold whole numbers"),
    ],
)
def test_read_polygon_errors_name_the_line(tmp_path, body, message):
    path = tmp_path / "bad_ring.csv"
    path.write_text("x,y,ring\n" + body)
    with pytest.raises(InterpError, match=r"bad_ring\.csv.*" + message):
        read_polygon(path)
