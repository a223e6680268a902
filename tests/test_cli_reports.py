"""What the ``interp`` command reports: uncovered areas, the volume and check tables,
residual files, distinct column names, precision, units and file lines."""

import json

import numpy as np
import pytest
import shapely
from test_cli import run

#: a region half outside the survey square [0, 10]^2 (an invented pentagon).
RING = [[4.0, 2.0], [16.0, 1.0], [18.0, 7.5], [9.0, 9.0], [3.0, 6.0]]


def write_points(path, xy, z, name="z"):
    rows = [",".join(map(repr, map(float, (x, y, h)))) for (x, y), h in zip(xy, z, strict=True)]
    path.write_text(f"x,y,{name}\n" + "\n".join(rows) + "\n")


@pytest.fixture(scope="module")
def square(tmp_path_factory):
    """A plane z = 1 + 0.5 x - 0.25 y sampled on a 11 x 11 grid over [0, 10]^2."""
    d = tmp_path_factory.mktemp("reports")
    g = np.linspace(0.0, 10.0, 11)
    xy = np.stack(np.meshgrid(g, g), axis=-1).reshape(-1, 2)
    write_points(d / "plane.csv", xy, 1 + 0.5 * xy[:, 0] - 0.25 * xy[:, 1])
    (d / "region.csv").write_text("x,y\n" + "\n".join(f"{x},{y}" for x, y in RING) + "\n")
    return d


def areas():
    """Reference: shapely areas of the region outside and inside the square."""
    region, data = shapely.Polygon(RING), shapely.box(0, 0, 10, 10)
    return region.difference(data).area, region.intersection(data).area


def test_volume_reports_the_region_not_covered(square):
    outside, inside = areas()
    r = run("volume", square / "plane.csv", "--level", "0", "--region", square / "region.csv")
    assert r.returncode == 0, r.stderr
    assert "interp: note: the volume leaves out" in r.stderr
    r = run(
        "volume",
        square / "plane.csv",
        "--level",
        "0",
        "--region",
        square / "region.csv",
        "--json",
        "-q",
    )
    v = json.loads(r.stdout)
    assert v["uncovered"] == pytest.approx(outside, rel=1e-12)
    assert v["area"] == pytest.approx(inside, rel=1e-12)
    # the keys the report always had are kept
    assert {"above", "below", "net", "area", "caution"} <= set(v)
    assert v["inputs"]["lower"] == "level 0" and v["sign"].startswith("difference = upper minus")


def test_volume_table_has_units_inputs_and_the_caution(square):
    r = run("volume", "plane.csv", "--level", "3", "--units", "m", cwd=square)
    assert r.returncode == 0, r.stderr
    lines = r.stdout.splitlines()
    # z - 3 = 0.5 x - 0.25 y - 2 over [0, 10]^2: its integral is 100 * (2.5 - 1.25 - 2) = -75
    # (calculus); the text gives it at the data's resolution (2 decimals) with the unit
    diff = next(line for line in lines if "difference (above - below)" in line)
    assert diff.split()[-2:] == ["-75.00", "m³"]
    covered = next(line for line in lines if line.strip().startswith("area covered"))
    assert covered.split()[-2:] == ["100.00", "m²"]
    assert any("area of the region not covered" in line for line in lines)
    assert "upper surface:  plane.csv" in r.stdout and "lower surface:  level 3" in r.stdout
    assert "difference = upper minus lower" in lines[0]
    assert "licensed practice" in lines[-1]


def test_integrate_reports_the_region_not_covered(square):
    outside, inside = areas()
    r = run("integrate", square / "plane.csv", "--region", square / "region.csv", "--json")
    assert r.returncode == 0, r.stderr
    s = json.loads(r.stdout)["z"]
    assert s["uncovered"] == pytest.approx(outside, rel=1e-12)
    assert s["measure"] == pytest.approx(inside, rel=1e-12)
    assert "interp: note: the integral leaves out" in r.stderr


def test_survey_offsets_and_large_volumes_print_in_full(tmp_path):
    # a flat pad 1169.12345 above the datum over 100 m x 100 m at survey offsets:
    # volume 10000 * 1169.12345 = 11691234.5 (by hand), bounds 512000.25 .. 4180100.25
    g = np.linspace(0.0, 100.0, 5)
    xy = np.stack(np.meshgrid(g, g), axis=-1).reshape(-1, 2) + [512000.25, 4180000.25]
    write_points(tmp_path / "pad.csv", xy, np.full(len(xy), 1169.12345))
    r = run("volume", tmp_path / "pad.csv", "--level", "0", "--json")
    assert json.loads(r.stdout)["above"] == pytest.approx(11691234.5, rel=1e-12)
    r = run("volume", tmp_path / "pad.csv", "--level", "0")
    above = next(line for line in r.stdout.splitlines() if "material above" in line)
    assert above.split()[-1] == "11691234.50000"
    r = run("info", tmp_path / "pad.csv")
    bounds = next(line for line in r.stdout.splitlines() if line.startswith("bounds"))
    assert bounds == "bounds: 512000.25..512100.25, 4180000.25..4180100.25"
    assert "e+" not in r.stdout


def test_crossval_writes_a_residual_file(square, tmp_path):
    r = run("crossval", square / "plane.csv", "-o", tmp_path / "res.csv", "--units", "m")
    assert r.returncode == 0, r.stderr
    assert "worst" not in r.stdout and "row " not in r.stdout
    assert "RMS residual" in r.stdout and f"{tmp_path / 'res.csv'}" in r.stdout
    table = np.genfromtxt(tmp_path / "res.csv", delimiter=",", names=True)
    assert table.dtype.names == ("x", "y", "value", "predicted", "residual")
    assert len(table) == 121
    np.testing.assert_allclose(table["predicted"], table["value"] - table["residual"])
    # a linear field is reproduced exactly by P1 interpolation (common practice), so every
    # inner point is predicted with no error; the 4 corners leave the hull of the others
    inner = np.isfinite(table["residual"])
    assert inner.sum() == 117
    np.testing.assert_allclose(table["residual"][inner], 0.0, atol=1e-9)


def test_crossval_json_statistics_match_numpy_on_the_residual_file(tmp_path):
    # a curved surface leaves nonzero residuals; reference: numpy's statistics of the
    # residual column the same run writes
    rng = np.random.default_rng(16)
    xy = rng.random((60, 2)) * 20.0
    write_points(tmp_path / "c.csv", xy, np.sin(xy[:, 0] / 3.0) + 0.02 * xy[:, 1] ** 2)
    r = run("crossval", tmp_path / "c.csv", "-o", tmp_path / "res.csv", "--json")
    assert r.returncode == 0, r.stderr
    s = json.loads(r.stdout)["z"]
    f = np.genfromtxt(tmp_path / "res.csv", delimiter=",", names=True)["residual"]
    f = f[np.isfinite(f)]
    assert s["count"] == f.size and "worst" not in s
    # the file holds 17 significant digits, so the statistics agree to rounding
    assert s["rms"] == pytest.approx(np.sqrt(np.mean(f**2)), rel=1e-12)
    assert s["std"] == pytest.approx(np.std(f, ddof=1), rel=1e-12)
    assert (s["min"], s["max"]) == pytest.approx((f.min(), f.max()), rel=1e-12)
    for q in (50, 90, 95):
        assert s[f"abs_p{q}"] == pytest.approx(np.percentile(np.abs(f), q), rel=1e-12)


def test_sample_gives_the_sampled_column_its_own_name_and_checks_it(square, tmp_path):
    # check points on the plane z = 1 + 0.5 x - 0.25 y, their known values off by +0.3
    # and -0.4: residuals 0.3 and -0.4, RMS sqrt((0.09 + 0.16) / 2) (by hand)
    (tmp_path / "check.csv").write_text("id,x,y,z\nK1,2.5,2.5,1.925\nK2,6,4,2.6\nK3,40,40,1\n")
    out = tmp_path / "out.csv"
    r = run("sample", square / "plane.csv", tmp_path / "check.csv", "-o", out)
    assert r.returncode == 0, r.stderr
    lines = out.read_text().splitlines()
    assert lines[0] == "id,x,y,z,z_sampled,z_residual"
    residuals = [float(line.split(",")[-1]) for line in lines[1:3]]
    assert residuals == pytest.approx([0.3, -0.4], abs=1e-12)
    assert lines[3] == "K3,40,40,1,,"
    rms = np.sqrt((0.09 + 0.16) / 2)
    assert "RMS residual 0.353553" in r.stderr and f"{rms:.6f}" == "0.353553"
    r = run("sample", square / "plane.csv", tmp_path / "check.csv", "-o", out, "--json", "-q")
    check = json.loads(r.stdout)["checks"]["z_sampled"]
    assert check["count"] == 2 and check["rms"] == pytest.approx(rms, rel=1e-12)
    assert json.loads(r.stdout)["columns"] == {"z": "z_sampled"}


def test_an_infinite_value_is_named_by_its_file_line(tmp_path):
    (tmp_path / "s.csv").write_text("x,y,z\n0,0,1\n1,0,inf\n0,1,2\n1,1,3\n")
    r = run("info", tmp_path / "s.csv")
    assert r.returncode == 1
    # the header is line 1, so the second data row is line 3
    assert "line 3: the value in column 'z' is infinite" in r.stderr.splitlines()[-1]


def test_units_reach_the_grid_file(square, tmp_path):
    zarr = pytest.importorskip("zarr")
    out = tmp_path / "g.zarr"
    r = run("grid", square / "plane.csv", "--spacing", "5", "--units", "m", "-o", out)
    assert r.returncode == 0, r.stderr
    assert dict(zarr.open_group(out, mode="r").attrs)["units"] == {"z": "m"}
