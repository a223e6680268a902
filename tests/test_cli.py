"""The installed ``interp`` command, run as a subprocess."""

import json
import shutil
import subprocess
import sys

import numpy as np
import pytest
from scipy.interpolate import griddata

EXE = shutil.which("interp") or pytest.skip(
    "the interp command is not installed", allow_module_level=True
)


def run(*args, cwd=None):
    return subprocess.run(
        [EXE, *map(str, args)], capture_output=True, text=True, cwd=cwd, timeout=300
    )


@pytest.fixture(scope="module")
def survey(tmp_path_factory):
    d = tmp_path_factory.mktemp("cli")
    rng = np.random.default_rng(7)
    xy = rng.random((400, 2)) * [50.0, 30.0]
    z = 10 + 0.2 * xy[:, 0] - 0.1 * xy[:, 1] + np.sin(xy[:, 0] / 5)
    rows = [f"P{i},{x:.4f},{y:.4f},{h:.4f}" for i, (x, y, h) in enumerate(np.column_stack([xy, z]))]
    (d / "s.csv").write_text("code,x,y,z\n" + "\n".join(rows) + "\n")
    (d / "q.csv").write_text("name,x,y\nA,25,15\nB,80,80\nC,10,10\n")
    (d / "poly.csv").write_text("x,y\n5,5\n45,5\n45,25\n5,25\n")
    xy = np.loadtxt(d / "s.csv", delimiter=",", skiprows=1, usecols=(1, 2))
    z = np.loadtxt(d / "s.csv", delimiter=",", skiprows=1, usecols=3)
    return d, xy, z


def test_grid_matches_griddata(survey):
    d, xy, z = survey
    r = run("grid", d / "s.csv", "--spacing", "0.75", "-o", d / "g.npz")
    assert r.returncode == 0, r.stderr
    g = np.load(d / "g.npz")
    xx, yy = np.meshgrid(g["x"], g["y"], indexing="ij")
    # reference: scipy.interpolate.griddata(method="linear") on the same points and nodes
    ref = griddata(xy, z, (xx, yy), method="linear")
    np.testing.assert_array_equal(np.isnan(g["z"]), np.isnan(ref))
    np.testing.assert_allclose(g["z"], ref, atol=1e-12, equal_nan=True)


def test_sample_passes_rows_through(survey):
    d, xy, z = survey
    r = run("sample", d / "s.csv", d / "q.csv", "-o", d / "out.csv")
    assert r.returncode == 0, r.stderr
    assert "1 outside" in r.stdout
    lines = (d / "out.csv").read_text().splitlines()
    assert lines[0] == "name,x,y,z"
    assert lines[2] == "B,80,80,"
    ref = griddata(xy, z, np.array([[25.0, 15.0]]), method="linear")[0]
    assert float(lines[1].split(",")[3]) == pytest.approx(ref, rel=1e-9)


def test_info_json(survey):
    d, xy, _ = survey
    r = run("info", d / "s.csv", "--json")
    assert r.returncode == 0, r.stderr
    info = json.loads(r.stdout)
    assert info["nodes"] == 400 and info["dimension"] == 2
    assert "code" in r.stderr  # the text column is skipped with a note


def test_integrate_region_json(survey):
    d, _, _ = survey
    r = run("integrate", d / "s.csv", "--region", d / "poly.csv", "--json")
    assert r.returncode == 0, r.stderr
    out = json.loads(r.stdout)
    # the 40 x 20 rectangle lies inside the hull of 400 random points over 50 x 30
    assert out["z"]["measure"] == pytest.approx(800.0, rel=1e-9)
    assert out["z"]["mean"] == pytest.approx(out["z"]["integral"] / 800.0, rel=1e-12)


def test_volume_level_plane(tmp_path):
    # a plane z = 12 over a square, against a level 10: volume = area * 2 exactly
    pts = [(x, y) for x in range(0, 11, 2) for y in range(0, 11, 2)]
    (tmp_path / "p.csv").write_text("x,y,z\n" + "\n".join(f"{x},{y},12" for x, y in pts) + "\n")
    r = run("volume", tmp_path / "p.csv", "--level", "10", "--json")
    assert r.returncode == 0, r.stderr
    v = json.loads(r.stdout)
    assert v["above"] == pytest.approx(200.0, rel=1e-12) and v["below"] == 0.0
    assert "licensed practice" in v["caution"]
    r = run("volume", tmp_path / "p.csv", "--level", "10")
    assert "licensed practice" in r.stdout


def test_profile_and_crossval(survey):
    d, _, _ = survey
    r = run("profile", d / "s.csv", "--line", "5,5,45,25", "--step", "1", "-o", d / "p.csv")
    assert r.returncode == 0, r.stderr
    assert (d / "p.csv").read_text().splitlines()[0] == "distance,x,y,z"
    r = run("crossval", d / "s.csv", "--json")
    assert r.returncode == 0, r.stderr
    cv = json.loads(r.stdout)["z"]
    assert cv["rms"] > 0 and cv["max_abs"] >= cv["rms"]


@pytest.mark.parametrize(
    "args, message",
    [
        (["info", "missing.csv"], "missing.csv"),
        (["grid", "s.csv", "--spacing", "1", "--bounds", "0,1", "-o", "g.npz"], "bounds"),
        (["grid", "s.csv", "--spacing", "1", "-o", "g.txt"], "cannot save a grid"),
        (
            ["grid", "s.csv", "--spacing", "1", "-o", "."],
            "cannot write .: it is a folder; give a file name, such as out.tif",
        ),
        (["info", "s.csv", "--field", "depth"], "available: z"),
        (["volume", "s.csv"], "LOWER surface or --level"),
        (["profile", "s.csv", "--line", "1,2,3", "--step", "1", "-o", "p.csv"], "--line"),
    ],
)
def test_data_errors_are_one_line(survey, args, message):
    d, _, _ = survey
    r = run(*args, cwd=d)
    assert r.returncode == 1
    lines = r.stderr.strip().splitlines()
    assert lines[-1].startswith("interp: error: ") and message in lines[-1]
    assert "Traceback" not in r.stderr


def test_garbage_file_is_a_data_error(tmp_path):
    (tmp_path / "bad.vtu").write_text("not a mesh")
    r = run("info", tmp_path / "bad.vtu")
    assert r.returncode == 1 and "bad.vtu" in r.stderr and "Traceback" not in r.stderr


@pytest.mark.parametrize(
    "args", [["grid", "s.csv"], ["nosuch"], ["grid", "s.csv", "--spacing", "-1", "-o", "x"]]
)
def test_usage_errors_exit_2(survey, args):
    r = run(*args, cwd=survey[0])
    assert r.returncode == 2


def test_every_subcommand_has_help_with_example():
    for cmd in (
        "info",
        "grid",
        "sample",
        "profile",
        "integrate",
        "volume",
        "crossval",
        "view",
        "demo",
    ):
        r = run(cmd, "--help")
        assert r.returncode == 0 and "example:" in r.stdout and "interp " + cmd in r.stdout


def test_module_entry_point():
    r = subprocess.run(
        [sys.executable, "-m", "interp.cli", "--version"], capture_output=True, text=True
    )
    assert r.returncode == 0 and r.stdout.startswith("interp ")


def test_view_writes_png(survey):
    d, _, _ = survey
    r = run("view", d / "s.csv", "--warp", "2", "--contours", "5", "--screenshot", d / "v.png")
    assert r.returncode == 0, r.stderr
    from matplotlib.image import imread

    img = imread(d / "v.png")
    assert img.shape[:2] == (900, 1200) and img.std() > 0.02


def test_boundary_keeps_the_holes_of_the_polygon_file(survey):
    # reference: shapely, the area kept is that of the rectangle less its hole, within the
    # points' convex hull (the boundary's edges are inserted into the mesh)
    import shapely

    d, xy, _ = survey
    (d / "holed.csv").write_text(
        "x,y,ring\n5,5,0\n45,5,0\n45,25,0\n5,25,0\n20,10,1\n30,10,1\n30,20,1\n20,20,1\n"
    )
    r = run("info", d / "s.csv", "--boundary", d / "holed.csv", "--json")
    assert r.returncode == 0, r.stderr
    region = shapely.Polygon(
        [[5, 5], [45, 5], [45, 25], [5, 25]], [[[20, 10], [30, 10], [30, 20], [20, 20]]]
    )
    expected = region.intersection(shapely.MultiPoint(xy).convex_hull).area
    assert json.loads(r.stdout)["measure"] == pytest.approx(expected, rel=1e-9)


def test_grid_bounds_take_gis_order_negative_numbers_and_a_spacing_per_axis(survey):
    d, xy, z = survey
    # minx,miny,maxx,maxy as in GeoJSON's bbox (RFC 7946, section 5); no "=" before the minus
    r = run("grid", d / "s.csv", "--bounds", "-10,-5,20,25", "--spacing", "2,5", "-o", d / "b.npz")
    assert r.returncode == 0, r.stderr
    g = np.load(d / "b.npz")
    # by hand: -10, -8, ..., 20 is 16 nodes; -5, 0, ..., 25 is 7
    assert g["x"].tolist() == [-10.0 + 2 * i for i in range(16)]
    assert g["y"].tolist() == [-5.0 + 5 * j for j in range(7)]
    xx, yy = np.meshgrid(g["x"], g["y"], indexing="ij")
    # reference: scipy.interpolate.griddata(method="linear") at the same nodes
    ref = griddata(xy, z, (xx, yy), method="linear")
    np.testing.assert_allclose(g["z"], ref, atol=1e-12, equal_nan=True)
    r = run("grid", d / "s.csv", "--bounds", "0,0,10,10,5", "--spacing", "1", "-o", d / "c.npz")
    assert r.returncode == 1 and "minx,miny,maxx,maxy" in r.stderr and "got 5" in r.stderr
    assert "minx,miny,maxx,maxy" in run("grid", "--help").stdout


def test_grid_with_a_single_node_or_no_node_inside_says_so(survey):
    d, _, _ = survey
    r = run("grid", d / "s.csv", "--bounds", "25,15,30,20", "--spacing", "100", "-o", d / "1.npz")
    # a spacing of 100 over bounds 5 wide leaves one node per axis, at (25, 15)
    assert r.returncode == 0 and "1 x 1 grid" in r.stdout
    assert "single node along x (spacing 100 over a width of 5), y" in r.stderr
    assert np.load(d / "1.npz")["x"].tolist() == [25.0]
    r = run(
        "grid", d / "s.csv", "--bounds", "200,200,210,210", "--spacing", "1", "-o", d / "no.npz"
    )
    assert r.returncode == 1 and "no grid node falls inside the data" in r.stderr
    assert "every value is NaN" in r.stderr and not (d / "no.npz").exists()


def test_profile_line_with_negative_coordinates_and_outside_the_data(survey):
    d, xy, z = survey
    r = run("profile", d / "s.csv", "--line", "-5,15,45,15", "--step", "5", "-o", d / "p.csv")
    assert r.returncode == 0, r.stderr
    rows = np.genfromtxt(d / "p.csv", delimiter=",", skip_header=1)
    assert rows[:, 1].tolist() == [-5.0 + 5 * i for i in range(11)]
    # reference: scipy.interpolate.griddata(method="linear") at the samples
    ref = griddata(xy, z, rows[:, 1:3], method="linear")
    np.testing.assert_allclose(rows[:, 3], ref, atol=1e-12, equal_nan=True)
    r = run("profile", d / "s.csv", "--line", "-90,-80,-60,-80", "--step", "1", "-o", d / "far.csv")
    assert r.returncode == 1 and "entirely outside the data" in r.stderr
    assert not (d / "far.csv").exists()


@pytest.mark.parametrize("suffix", [".npz", ".vti"])
def test_info_reads_the_grids_interp_writes(survey, suffix):
    d, _, _ = survey
    out = d / f"info{suffix}"
    r = run("grid", d / "s.csv", "--spacing", "0.5,1.5", "--bounds", "2,3,40,27", "-o", out)
    assert r.returncode == 0, r.stderr
    run("grid", d / "s.csv", "--spacing", "0.5,1.5", "--bounds", "2,3,40,27", "-o", d / "ref.npz")
    ref = np.load(d / "ref.npz")
    r = run("info", out, "--json")
    assert r.returncode == 0, r.stderr
    info = json.loads(r.stdout)
    # by hand: 2..40 by 0.5 is 77 nodes, 3..27 by 1.5 is 17
    assert info["shape"] == [77, 17] and info["spacing"] == [0.5, 1.5]
    assert info["bounds"] == [[2.0, 3.0], [40.0, 27.0]]
    z = ref["z"]
    assert info["fields"]["z"]["min"] == np.nanmin(z) and info["fields"]["z"]["max"] == np.nanmax(z)
    assert info["fields"]["z"]["nan"] == int(np.isnan(z).sum())
    text = run("info", out).stdout
    assert "2D grid of 77 x 17 nodes, spacing 0.5, 1.5" in text and "x 2..40, y 3..27" in text


def test_mixed_and_embedded_meshes_name_what_they_measure(tmp_path):
    import meshio

    # a unit cube of 6 tetrahedra (Kuhn's subdivision) with 2 boundary triangles alongside
    cube = np.array([[i & 1, i >> 1 & 1, i >> 2 & 1] for i in range(8)], dtype=float)
    tets = np.array(
        [[0, 1, 3, 7], [0, 1, 5, 7], [0, 2, 3, 7], [0, 2, 6, 7], [0, 4, 5, 7], [0, 4, 6, 7]]
    )
    meshio.write(
        tmp_path / "mixed.vtu",
        meshio.Mesh(
            cube,
            [("tetra", tets), ("triangle", np.array([[0, 1, 3], [0, 3, 2]]))],
            point_data={"t": cube[:, 0]},
        ),
    )
    r = run("info", tmp_path / "mixed.vtu")
    assert r.returncode == 0, r.stderr
    assert "dropped 2 triangle cells" in r.stderr and "6 tetra cells" in r.stderr
    assert "volume: 1\n" in r.stdout
    # a 3-4-5 polyline in the plane (length 5 + 5) and a right triangle of legs 3 and 4 set in
    # space (area 6): measured as a length and an area, never as a volume
    line = np.array([[0.0, 0, 0], [3, 4, 0], [6, 0, 0]])
    meshio.write(
        tmp_path / "line.vtu",
        meshio.Mesh(line, [("line", np.array([[0, 1], [1, 2]]))], point_data={"t": line[:, 0]}),
    )
    roof = np.array([[0.0, 0, 1], [3, 0, 1], [0, 3.2, 3.4]])
    meshio.write(
        tmp_path / "roof.vtu",
        meshio.Mesh(roof, [("triangle", np.array([[0, 1, 2]]))], point_data={"t": roof[:, 0]}),
    )
    r = run("info", tmp_path / "line.vtu", "--json")
    assert r.returncode == 0, r.stderr
    info = json.loads(r.stdout)
    assert info["measure_name"] == "length" and info["measure"] == pytest.approx(10.0, rel=1e-14)
    r = run("info", tmp_path / "roof.vtu")
    assert r.returncode == 0, r.stderr
    # printed to the coordinates' resolution (one decimal here: 3.2, 3.4)
    assert "area: 6.0\n" in r.stdout and "volume" not in r.stdout


def test_view_caps_the_number_of_contours(survey):
    d, _, _ = survey
    r = run("view", d / "s.csv", "--contours", "5000", "--screenshot", d / "many.png")
    assert r.returncode == 1 and "from 1 to 100" in r.stderr and not (d / "many.png").exists()


def test_outputs_over_a_gigabyte_are_announced_with_their_size(survey, monkeypatch, capsys):
    import interp.io._grids as grids
    from interp.cli import main

    d, _, _ = survey
    # the note's threshold lowered so that a small grid crosses it: 61 x 41 nodes, one field,
    # 8 bytes a value in .npz = 20,008 bytes; 16 a number and 3 numbers a row in .csv
    monkeypatch.setattr(grids, "LARGE_OUTPUT_BYTES", 10_000)
    assert (
        main(
            [
                "grid",
                str(d / "s.csv"),
                "--bounds",
                "0,0,60,40",
                "--spacing",
                "1",
                "-o",
                str(d / "big.npz"),
            ]
        )
        == 0
    )
    err = capsys.readouterr().err
    assert f"writing {d / 'big.npz'}: about 2e-05 GB (61 x 41 nodes)" in err
    g = interp_grid(61, 41)
    assert grids.estimated_bytes(g, ".npz") == 61 * 41 * 8
    assert grids.estimated_bytes(g, ".csv") == 61 * 41 * 3 * 16


def interp_grid(nx, ny):
    from interp import Grid

    return Grid((np.arange(nx, dtype=float), np.arange(ny, dtype=float)), {"z": np.zeros((nx, ny))})


def test_prepare_compiles_ahead_then_finds_everything_cached():
    first = run("prepare")
    assert first.returncode == 0, first.stderr
    assert first.stdout.startswith(("compiled ", "every kernel already compiled"))
    second = run("prepare")  # the kernels compiled by the first run load from the cache
    assert second.returncode == 0, second.stderr
    assert second.stdout.startswith("every kernel already compiled")
    assert second.stderr == ""
