"""Regular grids against scipy.interpolate.griddata, and the grid file formats."""

import numpy as np
import pytest
from conftest import square_mesh
from scipy.interpolate import griddata

import interp
from interp import Field, InterpError, to_grid


def test_grid_matches_griddata_linear(rng):
    # reference: scipy.interpolate.griddata(method="linear") (general-purpose library)
    pts = rng.random((2000, 2)) * [100.0, 60.0]
    z = 20 + np.sin(pts[:, 0] / 9) * np.cos(pts[:, 1] / 7) * 3
    grid = to_grid(Field(interp.triangulate(pts), z, name="z"), spacing=0.7)
    xx, yy = np.meshgrid(*grid.axes, indexing="ij")
    ref = griddata(pts, z, (xx, yy), method="linear")
    np.testing.assert_array_equal(np.isnan(grid.values), np.isnan(ref))
    np.testing.assert_allclose(grid.values, ref, atol=1e-12, equal_nan=True)


def test_grid_axes_and_bounds():
    f = Field(square_mesh(2), np.arange(9.0), name="v")
    g = to_grid(f, spacing=0.25, bounds=(0, 1, 0.5, 1))
    assert g.shape == (5, 3)
    np.testing.assert_allclose(g.axes[1], [0.5, 0.75, 1.0])
    g2 = to_grid(f, spacing=(0.5, 0.25))
    assert g2.shape == (3, 5)
    out = to_grid(f, spacing=0.5, bounds=(-1, 2, 0, 1))
    assert np.isnan(out.values[0]).all() and not np.isnan(out.values[2]).any()


def test_three_d_and_multicomponent(rng):
    pts = rng.random((300, 3))
    vals = np.column_stack([pts @ [1.0, 2.0, 3.0], pts[:, 0] - 1])
    g = to_grid(Field(interp.triangulate(pts), vals, name="u"), spacing=0.1)
    assert g.values.shape == g.shape + (2,)
    pts_g = g.points().reshape(g.shape + (3,))
    ok = ~np.isnan(g.values[..., 0])
    np.testing.assert_allclose(g.values[..., 0][ok], (pts_g @ [1.0, 2.0, 3.0])[ok], atol=1e-12)


def test_several_fields_share_one_location():
    m = square_mesh(3)
    a = Field(m, m.points[:, 0], name="a")
    b = Field(m, m.points[:, 1], name="b")
    g = to_grid([a, b], spacing=0.5)
    assert g.names == ["a", "b"]
    np.testing.assert_allclose(g.fields["b"][0], [0, 0.5, 1.0], atol=1e-15)


def test_save_npz_csv_vti(tmp_path):
    pv = pytest.importorskip("pyvista")
    m = square_mesh(2)
    f = Field(m, 3 * m.points[:, 0] + m.points[:, 1], name="z")
    g = to_grid(f, spacing=0.5, bounds=(0, 1.5, 0, 1))
    npz = np.load(g.save(tmp_path / "g.npz"))
    np.testing.assert_array_equal(npz["z"], g.values)
    np.testing.assert_array_equal(npz["x"], g.axes[0])
    lines = g.save(tmp_path / "g.csv").read_text().splitlines()
    assert lines[0] == "x,y,z"
    assert len(lines) == 1 + 4 * 3
    assert lines[-1] == "1.5,1,"  # outside the mesh: empty cell
    # reference reader: pyvista (VTK's own XML image-data reader)
    img = pv.read(g.save(tmp_path / "g.vti"))
    assert img.dimensions == (4, 3, 1)
    np.testing.assert_allclose(img.origin, (0, 0, 0))
    np.testing.assert_allclose(img.spacing[:2], (0.5, 0.5))
    vtk_vals = np.asarray(img.point_data["z"])
    np.testing.assert_array_equal(vtk_vals, g.values.ravel(order="F"))


def test_vti_points_follow_x_fastest(tmp_path):
    pv = pytest.importorskip("pyvista")
    m = square_mesh(1)
    f = Field(m, m.points[:, 0] * 10 + m.points[:, 1], name="z")
    g = to_grid(f, spacing=0.5)
    img = pv.read(g.save(tmp_path / "g.vti"))
    # each VTK point's value must be the field at that point's own coordinates
    xyz = np.asarray(img.points)
    np.testing.assert_allclose(np.asarray(img.point_data["z"]), xyz[:, 0] * 10 + xyz[:, 1])


def test_bad_grid_arguments():
    f = Field(square_mesh(1), np.zeros(4))
    with pytest.raises(InterpError, match="spacing must be positive"):
        to_grid(f, spacing=0)
    with pytest.raises(InterpError, match="spacing must be a positive number, or one per axis"):
        to_grid(f, spacing="fine")
    with pytest.raises(InterpError, match="spacing must be one number or 2, one per axis; got 3"):
        to_grid(f, spacing=(0.1, 0.1, 0.1))
    with pytest.raises(InterpError, match="bounds must be 4 finite numbers"):
        to_grid(f, spacing=0.1, bounds=("a", 1, 0, 1))
    with pytest.raises(InterpError, match="4 finite numbers"):
        to_grid(f, spacing=0.1, bounds=(0, 1))
    with pytest.raises(InterpError, match="maximum below"):
        to_grid(f, spacing=0.1, bounds=(1, 0, 0, 1))
    with pytest.raises(InterpError, match="does not fit in memory"):
        to_grid(f, spacing=1e-5)
    with pytest.raises(InterpError, match="cannot save a grid"):
        to_grid(f, spacing=0.5).save("grid.txt")


@pytest.mark.parametrize("d", [1, 2, 3])
def test_grid_scan_equals_point_location(rng, d):
    # the grid path walks the nodes without building them; it must give exactly what locating every
    # node one by one gives (same cells, same barycentric coordinates, same values)
    pts = rng.random((200, d))
    mesh = interp.triangulate(pts)
    f = Field(mesh, np.sin(5 * pts.sum(axis=1)))
    g = to_grid(f, spacing=0.05 if d < 3 else 0.1)
    loc_grid = mesh.index.locate_grid(g.axes)
    loc = mesh.locate(g.points())
    np.testing.assert_array_equal(loc_grid.cells, loc.cells)
    np.testing.assert_array_equal(loc_grid.bary, loc.bary)
    np.testing.assert_array_equal(g.values.ravel(), f(g.points()))


def test_bounds_as_a_two_row_array_like_mesh_bounds():
    f = Field(interp.triangulate(np.array([[0.0, 0], [4, 0], [0, 3], [4, 3]])), [0, 4, 3, 7.0])
    flat = to_grid(f, spacing=1.0, bounds=(0, 2, 1, 3))
    rows = to_grid(f, spacing=1.0, bounds=np.array([[0, 1], [2, 3]]))
    assert rows.shape == flat.shape == (3, 3)
    np.testing.assert_array_equal(rows.values, flat.values)
    assert to_grid(f, spacing=1.0, bounds=f.mesh.bounds).shape == (5, 4)
    with pytest.raises(InterpError, match=r"shape \(2, 2\)"):
        to_grid(f, spacing=1.0, bounds=np.zeros((4, 1)))
