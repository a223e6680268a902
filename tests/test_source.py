"""Sources in process: files read as named fields, summaries, file-to-file sampling."""

import threading

import numpy as np
import pytest

import interp
from interp import Field, InterpError, Mesh
from interp.source import (
    choose_fields,
    describe,
    is_point_file,
    load,
    read_source_points,
    sample_file,
)


def plane(xy):
    return 2.0 * xy[:, 0] + 3.0 * xy[:, 1] + 1.0


@pytest.fixture
def survey(tmp_path):
    rng = np.random.default_rng(11)
    xy = np.vstack([[[0, 0], [10, 0], [0, 10], [10, 10]], rng.random((60, 2)) * 10])
    path = tmp_path / "survey.csv"
    interp.io.write_table(path, ["x", "y", "z", "t"], np.column_stack([xy, plane(xy), xy[:, 0]]))
    return path


def test_point_and_mesh_files_are_told_apart_by_suffix():
    assert is_point_file("a.csv") and is_point_file("b.XYZ") and is_point_file("c.pts")
    assert not is_point_file("part.vtu") and not is_point_file("part.msh")


def test_point_file_fields_reproduce_a_plane(survey):
    # a linear function is reproduced exactly by P1 and P2 interpolation on any
    # triangulation (common practice: the Lagrange bases hold the linear polynomials)
    q = np.array([[2.5, 7.25], [9.0, 0.5], [5.0, 5.0]])
    for order in (1, 2):
        fields = load(survey, order=order)
        assert list(fields) == ["z", "t"]
        np.testing.assert_allclose(fields["z"](q), plane(q), rtol=1e-12)
        np.testing.assert_allclose(fields["t"](q), q[:, 0], rtol=1e-12, atol=1e-12)
    assert list(load(survey, name="t")) == ["t"]


def test_mesh_file_point_data_are_the_fields(tmp_path):
    mesh = Mesh([[0.0, 0], [2, 0], [0, 2]], [[0, 1, 2]])
    path = interp.write(tmp_path / "m.vtu", mesh, {"depth": np.array([1.0, 3.0, 5.0])})
    fields = load(path)
    assert list(fields) == ["depth"]
    # at the centroid a P1 field is the mean of its three node values: (1 + 3 + 5) / 3
    assert fields["depth"]([[2 / 3, 2 / 3]])[0] == pytest.approx(3.0, rel=1e-14)


def test_unknown_field_names_what_there_is():
    with pytest.raises(InterpError, match="no field named 'w'; available: z, t"):
        choose_fields({"z": 1, "t": 2}, "w", "s.csv")
    assert choose_fields({"z": 1}, None, "s.csv") == {"z": 1}


def test_describe_counts_measure_and_ranges():
    # two right triangles of legs 2: area 2 each, smallest angle 45 degrees; in-radius
    # (a + b - c) / 2 = 2 - sqrt 2 and circumradius c / 2 = sqrt 2 (handbook formulas for
    # a right triangle), so the radius ratio 2 r_in / r_circ is 2 (sqrt 2 - 1)
    m = Mesh([[0.0, 0], [2, 0], [0, 2], [2, 2]], [[0, 1, 2], [1, 3, 2]])
    info = describe({"z": Field(m, [0.0, np.nan, 2.0, 6.0])})
    assert (info["dimension"], info["nodes"], info["cells"]) == (2, 4, 2)
    assert info["measure"] == pytest.approx(4.0)
    assert info["bounds"] == [[0.0, 0.0], [2.0, 2.0]]
    assert info["quality"]["smallest_angle_deg"] == pytest.approx(45.0)
    assert info["quality"]["radius_ratio_min"] == pytest.approx(2 * (np.sqrt(2) - 1))
    assert info["fields"]["z"] == {"components": 1, "min": 0.0, "max": 6.0, "nan": 1}


def test_sample_file_keeps_rows_and_appends_values(survey, tmp_path):
    fields = load(survey, name="z")
    query = tmp_path / "q.csv"
    query.write_text("id,x,y\nA,1,2\nB,20,20\nC,9.5,0.25\n")
    report = sample_file(fields, query, tmp_path / "out.csv", chunk_rows=2)
    assert (report.rows, report.outside) == (3, 1)
    lines = (tmp_path / "out.csv").read_text().splitlines()
    assert lines[0] == "id,x,y,z" and lines[2] == "B,20,20,"
    assert [line.split(",")[0] for line in lines[1:]] == ["A", "B", "C"]
    # the plane at (1, 2) is 2 + 6 + 1 = 9 and at (9.5, 0.25) is 19 + 0.75 + 1 = 20.75
    assert float(lines[1].split(",")[3]) == pytest.approx(9.0, rel=1e-12)
    assert float(lines[3].split(",")[3]) == pytest.approx(20.75, rel=1e-12)


def test_sample_file_with_no_rows_is_an_error(survey, tmp_path):
    query = tmp_path / "empty.csv"
    query.write_text("x,y\n")
    with pytest.raises(InterpError, match="no data rows"):
        sample_file(load(survey, name="z"), query, tmp_path / "out.csv")
    assert not (tmp_path / "out.csv").exists()


def test_read_source_points_refuses_a_mesh_file_and_thinning_of_a_text_file(tmp_path):
    (tmp_path / "s.csv").write_text("x,y,z\n0,0,1\n1,0,2\n0,1,3\n")
    with pytest.raises(InterpError, match=r"not a point file; give one ending in \.csv"):
        read_source_points(tmp_path / "part.vtu")
    with pytest.raises(InterpError, match="apply to LAS/LAZ point clouds only"):
        read_source_points(tmp_path / "s.csv", classes=[2])
    points, values = read_source_points(tmp_path / "s.csv", coords=("x", "y"))
    assert points.tolist() == [[0.0, 0.0], [1.0, 0.0], [0.0, 1.0]]
    assert values["z"].tolist() == [1.0, 2.0, 3.0]


def triangle_field():
    """z = 4x + 8y on the unit right triangle: a P1 field reproduces a linear function
    (common practice), and at coordinates that are multiples of 1/8 every step of the
    evaluation is exact in binary floating point, so the sampled values are known exactly."""
    return Field(Mesh([[0.0, 0], [1, 0], [0, 1]], [[0, 1, 2]]), [0.0, 4.0, 8.0])


def query_rows(n):
    """Semicolon rows: a quoted id holding the delimiter, x, y, and a known z (every
    fifth cell empty); every seventh point lies outside the triangle."""
    rows, want = [], []
    for i in range(n):
        x, y = (i % 4) / 8, (i % 3) / 8
        if i % 7 == 3:
            x, y = 1.0 + x, 1.0
        known = None if i % 5 == 2 else (i % 11) / 4
        rows.append(f'"pt; {i}";{x};{y};{"" if known is None else known}')
        z = 4 * x + 8 * y if x + y <= 1 else None
        residual = None if z is None or known is None else known - z
        want.append((z, residual))
    return rows, want


def cell(v):
    # shortest round-trip text, as Python's repr writes it, without a trailing ".0"
    return "" if v is None else repr(float(v)).removesuffix(".0")


def test_sample_file_writes_every_block_in_order_whatever_the_chunk_size(tmp_path):
    rows, want = query_rows(61)
    query = tmp_path / "q.csv"
    query.write_text("id;x;y;z\n" + "\n".join(rows[:30]) + "\n\n" + "\n".join(rows[30:]) + "\n")
    expected = ["id;x;y;z;z_sampled;z_residual"] + [
        f"{row};{cell(z)};{cell(r)}" for row, (z, r) in zip(rows, want, strict=True)
    ]
    outside = sum(z is None for z, _ in want)
    for chunk_rows in (1, 3, 8, 1000):
        out = tmp_path / f"out{chunk_rows}.csv"
        report = sample_file({"z": triangle_field()}, query, out, chunk_rows=chunk_rows)
        assert out.read_bytes() == ("\n".join(expected) + "\n").encode()
        assert (report.rows, report.outside) == (61, outside)
        residuals = [r for _, r in want if r is not None]
        assert report.checks["z_sampled"]["count"] == len(residuals)
        assert report.checks["z_sampled"]["rms"] == pytest.approx(
            np.sqrt(np.mean(np.square(residuals))), rel=1e-12
        )


def test_sample_file_calls_the_evaluate_hook_in_the_callers_thread(tmp_path):
    rows, want = query_rows(20)
    query = tmp_path / "q.csv"
    query.write_text("id;x;y;z\n" + "\n".join(rows) + "\n")
    calls = []

    def evaluate(field, points):
        calls.append((threading.get_ident(), len(points)))
        return field(points) + 0.5

    report = sample_file({"z": triangle_field()}, query, tmp_path / "o.csv", evaluate=evaluate)
    assert report.rows == 20
    assert calls == [(threading.get_ident(), 20)]
    report = sample_file(
        {"z": triangle_field()}, query, tmp_path / "o.csv", chunk_rows=6, evaluate=evaluate
    )
    assert [n for _, n in calls[1:]] == [6, 6, 6, 2]
    assert {t for t, _ in calls} == {threading.get_ident()}
    lines = (tmp_path / "o.csv").read_text().splitlines()
    sampled = [line.rsplit(";", 2)[1] for line in lines[1:]]
    assert sampled == [cell(None if z is None else z + 0.5) for z, _ in want]


def failing_write(after):
    """A TableWriter.write that fails, as on a full disk, once ``after`` blocks are written."""
    write, done = interp.io.TableWriter.write, []

    def fail(self, rows, values):
        if len(done) == after:
            raise OSError(28, "No space left on device")
        done.append(len(values))
        write(self, rows, values)

    return fail


@pytest.mark.parametrize("where", ["reading", "evaluating", "writing", "writing the last block"])
def test_sample_file_failure_leaves_no_file_and_no_thread(tmp_path, monkeypatch, where):
    rows, _ = query_rows(60)
    if where == "reading":
        rows[44] = '"pt; 44";not a number;0'  # line 46 of the file
    query = tmp_path / "q.csv"
    query.write_text("id;x;y;z\n" + "\n".join(rows) + "\n")
    evaluate = None
    if where == "evaluating":
        blocks = []

        def evaluate(field, points):
            blocks.append(len(points))
            if len(blocks) == 9:
                raise InterpError("the evaluation failed")
            return field(points)

    if where.startswith("writing"):  # 15 blocks of 4 rows
        after = 14 if where.endswith("last block") else 5
        monkeypatch.setattr(interp.io.TableWriter, "write", failing_write(after))
    message = {"reading": "line 46", "evaluating": "evaluation failed"}.get(where, "No space")
    before = set(threading.enumerate())
    with pytest.raises((InterpError, OSError), match=message):
        sample_file(
            {"z": triangle_field()}, query, tmp_path / "o.csv", chunk_rows=4, evaluate=evaluate
        )
    assert set(threading.enumerate()) == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["q.csv"]


def test_sample_file_leaves_no_thread_running(tmp_path):
    rows, _ = query_rows(30)
    query = tmp_path / "q.csv"
    query.write_text("id;x;y;z\n" + "\n".join(rows) + "\n")
    before = set(threading.enumerate())
    sample_file({"z": triangle_field()}, query, tmp_path / "o.csv", chunk_rows=4)
    assert set(threading.enumerate()) == before
