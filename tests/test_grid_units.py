"""Units stored in every grid format and read back, each checked against the library
that owns the format: numpy (.npz), Python's csv module (.csv), VTK through pyvista
(.vti), rasterio (GeoTIFF), xarray (NetCDF) and zarr.  All data are invented."""

import csv
import json

import numpy as np
import pytest
from test_cli import run

from interp import Grid, InterpError
from interp.io import read_grid

pyvista = pytest.importorskip("pyvista")
rasterio = pytest.importorskip("rasterio")
xarray = pytest.importorskip("xarray")
zarr = pytest.importorskip("zarr")

SUFFIXES = [".npz", ".csv", ".vti", ".tif", ".nc", ".zarr"]


def sample_grid():
    """Two fields on a 4 x 3 grid at survey offsets, one with units and NaN, one without."""
    x = 512000.0 + 2.0 * np.arange(4)
    y = 4180000.0 + 3.0 * np.arange(3)
    z = 100.0 + np.arange(12.0).reshape(4, 3) / 8
    z[0, 0] = np.nan
    return Grid((x, y), {"z": z, "wet": np.ones((4, 3))}, {"z": "m"})


def owner_units(path):
    """The units as the format's own library reads them."""
    suffix = path.suffix
    if suffix == ".npz":
        with np.load(path) as data:
            return dict(data["units"].tolist())
    if suffix == ".csv":
        with open(path, newline="") as fh:
            header = next(csv.reader(fh))
        assert header == ["x", "y", "z (m)", "wet"]
        return {"z": "m"}
    if suffix == ".vti":
        return dict(pyvista.read(path).field_data["units"].tolist())
    if suffix == ".tif":
        with rasterio.open(path) as src:
            return {n: u for n, u in zip(src.descriptions, src.units, strict=True) if u}
    if suffix == ".nc":
        with xarray.open_dataset(path) as ds:
            return {n: v.attrs["units"] for n, v in ds.data_vars.items() if "units" in v.attrs}
    return dict(zarr.open_group(path, mode="r").attrs)["units"]


@pytest.mark.parametrize("suffix", SUFFIXES)
def test_units_round_trip_through_each_format(tmp_path, suffix):
    grid = sample_grid()
    out = grid.save(tmp_path / f"g{suffix}")
    assert owner_units(out) == {"z": "m"}
    axes, fields, units = read_grid(out)
    assert units == {"z": "m"}
    for a, b in zip(axes, grid.axes, strict=True):
        # GeoTIFF keeps pixel corners: the centres come back to rounding of the offsets
        np.testing.assert_allclose(a, b, rtol=0, atol=1e-9)
    assert list(fields) == ["z", "wet"]
    for name in grid.fields:
        np.testing.assert_array_equal(np.asarray(fields[name]), grid.fields[name])


def test_vti_point_data_as_vtk_reads_it(tmp_path):
    grid = sample_grid()
    image = pyvista.read(grid.save(tmp_path / "g.vti"))
    # VTK orders points with x fastest: the transpose of the [i, j] arrays
    np.testing.assert_array_equal(image.point_data["z"], grid.fields["z"].T.ravel())
    assert image.dimensions == (4, 3, 1)


def test_a_field_named_units_cannot_share_an_npz_with_the_units(tmp_path):
    grid = Grid((np.arange(2.0),), {"units": np.ones(2)}, {"units": "m"})
    with pytest.raises(InterpError, match=r"\['units'\] clash with the coordinate or units"):
        grid.save(tmp_path / "g.npz")
    # without units there is no units array, and the name is free
    assert "units" in np.load(Grid(grid.axes, grid.fields).save(tmp_path / "h.npz")).files


def test_csv_grid_components_and_refusals(tmp_path):
    grid = Grid((np.arange(3.0), np.arange(2.0)), {"u": np.ones((3, 2, 2))}, {"u": "m/s"})
    out = grid.save(tmp_path / "v.csv")
    assert out.read_text().splitlines()[0] == "x,y,u_0 (m/s),u_1 (m/s)"
    _, fields, units = read_grid(out)
    assert units == {"u_0": "m/s", "u_1": "m/s"} and fields["u_1"].shape == (3, 2)
    (tmp_path / "scattered.csv").write_text("x,y,z\n0,0,1\n1,0.5,2\n0.2,1,3\n")
    with pytest.raises(InterpError, match="do not hold every node of a regular grid"):
        read_grid(tmp_path / "scattered.csv")


@pytest.mark.parametrize("suffix", [".npz", ".vti", ".tif", ".nc"])
def test_cli_grid_units_reach_info(tmp_path, suffix):
    rows = [f"{x},{y},{1 + 0.5 * x - 0.25 * y}" for x in range(0, 11) for y in range(0, 11)]
    (tmp_path / "plane.csv").write_text("x,y,z\n" + "\n".join(rows) + "\n")
    out = tmp_path / f"g{suffix}"
    r = run("grid", tmp_path / "plane.csv", "--spacing", "1", "--units", "m", "-o", out)
    assert r.returncode == 0, r.stderr
    assert owner_units(out) == {"z": "m"}
    r = run("info", out, "--json")
    assert r.returncode == 0, r.stderr
    assert json.loads(r.stdout)["fields"]["z"]["units"] == "m"
    # the plane at the corners (0, 10) and (10, 0): 1 - 2.5 = -1.5 and 1 + 5 = 6 (by hand)
    line = next(t for t in run("info", out).stdout.splitlines() if t.startswith("field z"))
    assert "range -1.500000..6.000000 m," in line


def test_cli_grid_units_in_a_csv_header(tmp_path):
    rows = [f"{x},{y},{x + y}" for x in range(3) for y in range(3)]
    (tmp_path / "p.csv").write_text("x,y,z\n" + "\n".join(rows) + "\n")
    out = tmp_path / "g.csv"
    r = run("grid", tmp_path / "p.csv", "--spacing", "1", "--units", "ft", "-o", out)
    assert r.returncode == 0, r.stderr
    assert out.read_text().splitlines()[:2] == ["x,y,z (ft)", "0,0,0"]
    assert read_grid(out)[2] == {"z": "ft"}
