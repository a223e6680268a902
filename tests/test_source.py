"""Sources in process: files read as named fields, summaries, file-to-file sampling."""

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
