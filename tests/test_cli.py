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
    # reference: shapely, the triangulated area kept is that of the cells whose centroid
    # lies in the rectangle less its hole
    import shapely
    from scipy.spatial import Delaunay

    d, xy, _ = survey
    (d / "holed.csv").write_text(
        "x,y,ring\n5,5,0\n45,5,0\n45,25,0\n5,25,0\n20,10,1\n30,10,1\n30,20,1\n20,20,1\n"
    )
    r = run("info", d / "s.csv", "--boundary", d / "holed.csv", "--json")
    assert r.returncode == 0, r.stderr
    tri = Delaunay(xy)
    corners = xy[tri.simplices]
    centroid = corners.mean(axis=1)
    region = shapely.Polygon(
        [[5, 5], [45, 5], [45, 25], [5, 25]], [[[20, 10], [30, 10], [30, 20], [20, 20]]]
    )
    keep = shapely.contains_xy(region, centroid[:, 0], centroid[:, 1])
    e1, e2 = corners[:, 1] - corners[:, 0], corners[:, 2] - corners[:, 0]
    area = np.abs(e1[:, 0] * e2[:, 1] - e1[:, 1] * e2[:, 0]) / 2
    assert json.loads(r.stdout)["measure"] == pytest.approx(area[keep].sum(), rel=1e-9)


def test_prepare_compiles_ahead_then_finds_everything_cached():
    first = run("prepare")
    assert first.returncode == 0, first.stderr
    assert first.stdout.startswith(("compiled ", "every kernel already compiled"))
    second = run("prepare")  # the kernels compiled by the first run load from the cache
    assert second.returncode == 0, second.stderr
    assert second.stdout.startswith("every kernel already compiled")
    assert second.stderr == ""
