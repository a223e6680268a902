"""Coordinate units on the axes of every picture, read back from the pyvista and
matplotlib objects and seen in the PNGs rendered off screen.  All data are invented."""

import matplotlib
import matplotlib.image
import numpy as np
import pytest
from conftest import square_mesh
from test_cli import run

import interp
from interp import Grid
from interp.resample import Profile
from interp.view import plot, plot_difference, plot_profile, plot_residuals

SIZE = (400, 300)


def survey_field() -> interp.Field:
    """A ramp over 600 x 400 m at survey offsets (512000, 4180000)."""
    mesh = square_mesh(4)
    xy = mesh.points * [600.0, 400.0] + [512000.0, 4180000.0]
    return interp.Field(interp.Mesh(xy, mesh.cells), 100 + mesh.points[:, 0], name="z", units="m")


def titles(plotter) -> tuple[str, str, str]:
    axes = plotter.renderer.cube_axes_actor
    return axes.GetXTitle(), axes.GetYTitle(), axes.GetZTitle()


def test_surface_axes_carry_the_coordinate_units_beside_the_offset():
    p = plot(survey_field(), coordinate_units="m", window_size=SIZE)
    assert titles(p)[:2] == ("x - 512000 (m)", "y - 4180000 (m)")
    p.close()
    # warped, the vertical axis holds the field (its units as on the colour bar)
    p = plot(survey_field(), warp=2.0, coordinate_units="ft", window_size=SIZE)
    assert titles(p) == ("x - 512000 (ft)", "y - 4180000 (ft)", "z [m]")
    p.close()
    p = plot(survey_field(), window_size=SIZE)
    assert titles(p)[:2] == ("x - 512000", "y - 4180000")
    p.close()
    p = plot_difference(survey_field(), 100.0, coordinate_units="m", window_size=SIZE)
    assert titles(p)[:2] == ("x - 512000 (m)", "y - 4180000 (m)")
    p.close()


def test_a_grid_with_a_projected_crs_states_its_unit():
    pytest.importorskip("pyproj")
    z = np.add.outer(np.arange(4.0), np.arange(3.0))
    axes = (512000.0 + 2.0 * np.arange(4), 4180000.0 + 2.0 * np.arange(3))
    # EPSG:32633 (UTM zone 33N) is in metres, EPSG:2264 (a state plane) in US survey feet,
    # EPSG:4326 in degrees, which are no length (from the EPSG registry, through pyproj)
    for crs, unit in (
        ("EPSG:32633", " (m)"),
        ("EPSG:2264", " (US survey foot)"),
        ("EPSG:4326", ""),
    ):
        p = plot(Grid(axes, {"z": z}, {"z": "m"}, crs=crs), window_size=SIZE)
        assert titles(p)[0] == f"x - 512000{unit}"
        p.close()
    p = plot(Grid(axes, {"z": z}, crs="EPSG:32633"), coordinate_units="ft", window_size=SIZE)
    assert titles(p)[0] == "x - 512000 (ft)"
    p.close()


def test_units_show_in_the_rendered_png(tmp_path):
    with_units = interp.show(
        survey_field(), coordinate_units="m", screenshot=tmp_path / "u.png", window_size=SIZE
    )
    plain = interp.show(survey_field(), screenshot=tmp_path / "p.png", window_size=SIZE)
    a = matplotlib.image.imread(with_units)[..., :3]
    b = matplotlib.image.imread(plain)[..., :3]
    assert a.shape == b.shape == (SIZE[1], SIZE[0], 3)
    # only the axis titles differ: the longer titles darken more pixels below and beside
    # the map, none inside the coloured surface
    changed = np.abs(a - b).max(axis=2) > 0.2
    assert changed.sum() > 20
    coloured = (b.max(axis=2) - b.min(axis=2)) > 0.15
    assert (changed & coloured).sum() <= 0.01 * coloured.sum()


def test_matplotlib_charts_label_their_axes_with_the_units(tmp_path, rng):
    pts = rng.uniform(0, 100, (30, 2)) + [512000.0, 4180000.0]
    fig = plot_residuals(pts, rng.normal(0.0, 0.1, 30), coordinate_units="m")
    fig.savefig(tmp_path / "r.png")
    ax = fig.axes[0]
    assert ax.get_xlabel() == "x - 512000 (m)" and ax.get_ylabel() == "y - 4180000 (m)"
    assert matplotlib.image.imread(tmp_path / "r.png").shape[:2] == (400, 1000)
    sec = Profile(
        np.arange(3.0),
        np.column_stack([np.arange(3.0), np.zeros(3)]),
        {"z": np.array([1.0, 2.0, 1.5])},
        np.array([[0.0, 0], [2, 0]]),
    )
    fig = plot_profile(sec, coordinate_units="m")
    assert fig.axes[0].get_xlabel() == "distance along the section (m)"
    assert plot_profile(sec).axes[0].get_xlabel() == "distance along the section"


@pytest.fixture
def survey_csv(tmp_path):
    g = np.linspace(0.0, 1.0, 6)
    xy = np.stack(np.meshgrid(g, g), axis=-1).reshape(-1, 2) * [600.0, 400.0]
    xy += [512000.0, 4180000.0]
    rows = [f"{x!r},{y!r},{100 + (x - 512000) / 600}" for x, y in xy.tolist()]
    path = tmp_path / "s.csv"
    path.write_text("x,y,z\n" + "\n".join(rows) + "\n")
    return path


def test_cli_view_passes_units_to_the_axes(survey_csv, tmp_path, monkeypatch):
    from interp.cli import main

    seen = {}
    monkeypatch.setattr(interp, "show", lambda obj, **options: seen.update(options))
    main(["view", str(survey_csv), "--units", "m", "--screenshot", str(tmp_path / "v.png")])
    assert seen["coordinate_units"] == "m"
    # and through the installed command, a picture is written
    r = run("view", survey_csv, "--units", "m", "--screenshot", tmp_path / "w.png")
    assert r.returncode == 0, r.stderr
    assert matplotlib.image.imread(tmp_path / "w.png").shape[:2] == (900, 1200)


def test_slice_errors_count_from_1():
    from conftest import cube_mesh

    mesh = cube_mesh(1)
    f = interp.Field(mesh, mesh.points[:, 0])
    good = ((0.5, 0.5, 0.5), (1, 0, 0))
    with pytest.raises(interp.InterpError, match="slice 2 needs a finite origin"):
        plot(f, slices=[good, ((0.5, 0.5, 0.5), (0, 0, 0))], window_size=SIZE)
