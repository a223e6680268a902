"""Pictures: rendered off screen to PNG and checked pixel by pixel and through the plotter."""

import ctypes.util
import os
import subprocess
import sys
from pathlib import Path

import matplotlib
import matplotlib.image
import meshio
import numpy as np
import pytest
from conftest import cube_mesh, square_mesh

import interp
from interp import view
from interp._format import number
from interp.grid import Grid
from interp.resample import Profile
from interp.view import _render, plot, plot_difference, plot_profile, plot_residuals

SIZE = (400, 300)


def image_of(plotter):
    img = np.asarray(plotter.screenshot(return_img=True), dtype=np.float64)
    plotter.close()
    return img


def title_of(plotter) -> str:
    return plotter.actors["title"].input


def read_png(path: Path) -> np.ndarray:
    return matplotlib.image.imread(path)[..., :3]


def ramp(n: int = 6, units: str | None = "m") -> interp.Field:
    """A field rising to the right: f = x on the unit square."""
    mesh = square_mesh(n)
    return interp.Field(mesh, mesh.points[:, 0], name="elevation", units=units)


def red_minus_blue(img: np.ndarray) -> tuple[float, float]:
    """Mean red minus blue of the left and right halves of the coloured pixels.

    Coloured pixels (channel spread above 0.15 of full scale) left of the colour
    bar are the surface; white background, black text and grey axes are not.
    """
    rgb = img / img.max()
    coloured = (rgb.max(axis=2) - rgb.min(axis=2)) > 0.15
    coloured[:, int(0.8 * img.shape[1]) :] = False
    rows, cols = np.nonzero(coloured)
    mid = np.median(cols)
    rb = rgb[rows, cols, 0] - rgb[rows, cols, 2]
    return float(rb[cols < mid].mean()), float(rb[cols > mid].mean())


def test_import_interp_leaves_the_viewer_libraries_unloaded():
    code = (
        "import sys, interp; "
        "print(any(m in sys.modules for m in ('pyvista', 'vtkmodules', 'matplotlib')))"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"


def test_show_writes_a_png_of_the_requested_size_atomically(tmp_path):
    out = interp.show(ramp(), contours=3, screenshot=tmp_path / "ramp.png", window_size=SIZE)
    assert out == tmp_path / "ramp.png"
    img = read_png(out)
    assert img.shape == (SIZE[1], SIZE[0], 3)
    # a flat image has zero variance; a surface, a colour bar and axes give plenty
    assert img.std() > 0.1
    assert sorted(p.name for p in tmp_path.iterdir()) == ["ramp.png"]


def test_rising_field_is_warmer_on_the_right():
    # viridis runs from dark purple (low) to yellow (high): red minus blue grows
    # along the map (matplotlib's colour map data)
    rgba = matplotlib.colormaps["viridis"](np.linspace(0, 1, 101))
    rb = rgba[:, 0] - rgba[:, 2]
    contrast = rb[51:].mean() - rb[:50].mean()
    assert contrast > 0.3
    left, right = red_minus_blue(image_of(plot(ramp(), window_size=SIZE)))
    # lighting dims the surface, so ask for half the colour map's own contrast
    assert right - left > 0.5 * contrast


def test_colour_bar_range_and_title_are_the_fields():
    f = ramp()
    p = plot(f, window_size=SIZE)
    lut_range = p.scalar_bar.GetLookupTable().GetRange()
    assert lut_range == pytest.approx((f.values.min(), f.values.max()), abs=1e-12)
    assert p.actors["surface"].mapper.scalar_range == pytest.approx((0.0, 1.0), abs=1e-12)
    assert p.scalar_bar.GetTitle() == "elevation [m]"
    p.close()
    p = plot(f, clim=(-1.0, 3.0), window_size=SIZE)
    assert p.scalar_bar.GetLookupTable().GetRange() == pytest.approx((-1.0, 3.0))
    p.close()
    p = plot(f, diverging=True, window_size=SIZE)
    assert p.scalar_bar.GetLookupTable().GetRange() == pytest.approx((-1.0, 1.0))
    p.close()


def test_contour_levels_lie_evenly_inside_the_range_and_on_the_level_lines():
    mesh = square_mesh(5)
    f = interp.Field(mesh, mesh.points.sum(axis=1), name="s")
    p = plot(f, contours=4, window_size=SIZE)
    lines = p.actors["contours"].mapper.dataset
    levels = np.unique(np.round(lines["values"], 9))
    # 4 levels strictly inside [0, 2], evenly spaced: 0.4, 0.8, 1.2, 1.6
    assert levels == pytest.approx([0.4, 0.8, 1.2, 1.6], abs=1e-9)
    # a linear field is reproduced exactly by P1: each contour point has x + y = level
    pts = np.asarray(lines.points)
    assert pts[:, :2].sum(axis=1) == pytest.approx(np.asarray(lines["values"]), abs=1e-9)
    p.close()
    p = plot(f, contours=[0.5], window_size=SIZE)
    assert np.asarray(p.actors["contours"].mapper.dataset["values"]) == pytest.approx(0.5)
    p.close()


def test_p2_surface_is_subdivided_and_follows_the_quadratic():
    mesh = square_mesh(3)
    p1 = plot(interp.Field(mesh, mesh.points[:, 0] ** 2), window_size=SIZE)
    quad = mesh.elevate()
    p2 = plot(interp.Field(quad, quad.points[:, 0] ** 2), window_size=SIZE)
    n1 = p1.actors["surface"].mapper.dataset.n_cells
    surface = p2.actors["surface"].mapper.dataset
    assert n1 == mesh.n_cells
    assert surface.n_cells == mesh.n_cells * view.P2_SUBDIVISION**2
    # P2 Lagrange elements reproduce quadratics exactly, so the sub-node values are x^2
    # (inside the cells, where a piecewise-flat picture would be wrong)
    x = np.asarray(surface.points)[:, 0]
    assert np.asarray(surface["values"]) == pytest.approx(x**2, abs=1e-12)
    assert np.unique(np.round(x, 9)).size == 3 * view.P2_SUBDIVISION + 1
    p1.close()
    p2.close()


def test_warp_lifts_the_surface_by_the_value_and_labels_the_vertical_axis():
    p = plot(ramp(), warp=2.0, window_size=SIZE)
    pts = np.asarray(p.actors["surface"].mapper.dataset.points)
    assert pts[:, 2] == pytest.approx(2.0 * pts[:, 0], abs=1e-12)
    img = image_of(p)
    assert img.std() > 20


def test_points_and_region_are_drawn_where_given():
    f = ramp(4)
    ring = np.array([[0.2, 0.2], [0.8, 0.2], [0.5, 0.7]])
    p = plot(f, points=True, region=interp.Polygon(ring), warp=3.0, window_size=SIZE)
    markers = np.asarray(p.actors["points"].mapper.dataset.points)
    assert len(markers) == f.mesh.n_nodes
    assert markers[:, 2] == pytest.approx(3.0 * f.values, abs=1e-12)
    outline = np.asarray(p.actors["region"].mapper.dataset.points)
    # the outline is draped on the surface z = 3 x (f = x is exact on the mesh)
    assert outline[:, 2] == pytest.approx(3.0 * outline[:, 0], abs=1e-9)
    for v in ring:
        assert np.min(np.linalg.norm(outline[:, :2] - v, axis=1)) < 1e-12
    p.close()
    survey = np.array([[0.5, 0.5, 0.9], [0.1, 0.9, 0.2]])
    p = plot(f, points=survey, warp=2.0, window_size=SIZE)
    assert np.asarray(p.actors["points"].mapper.dataset.points)[:, 2] == pytest.approx([1.8, 0.4])
    p.close()


def test_tetra_mesh_draws_its_outer_surface_slices_and_isosurfaces():
    mesh = cube_mesh(2)
    f = interp.Field(mesh, mesh.points.sum(axis=1), name="t", units="degC")
    p = plot(f, edges=True, window_size=SIZE)
    # Kuhn split: each of the 6 cube faces holds 2 x 2 squares of 2 triangles
    assert p.actors["surface"].mapper.dataset.n_cells == 6 * 4 * 2
    assert image_of(p).std() > 20
    p = plot(f, slices=[((0.5, 0.5, 0.5), (1, 0, 0))], isosurfaces=[1.0], window_size=SIZE)
    cut = p.actors["slices"].mapper.dataset
    assert np.asarray(cut.points)[:, 0] == pytest.approx(0.5, abs=1e-12)
    assert np.asarray(cut["values"]) == pytest.approx(np.asarray(cut.points).sum(axis=1))
    iso = np.asarray(p.actors["isosurfaces"].mapper.dataset.points)
    assert iso.sum(axis=1) == pytest.approx(1.0, abs=1e-9)
    assert image_of(p).std() > 20


def test_p2_tetra_surface_follows_the_quadratic():
    mesh = cube_mesh(1).elevate()
    f = interp.Field(mesh, mesh.points[:, 2] ** 2)
    p = plot(f, slices=2, window_size=SIZE)
    surface = p.actors["surface"].mapper.dataset
    assert surface.n_cells == 12 * view.P2_SUBDIVISION**2
    z = np.asarray(surface.points)[:, 2]
    assert np.asarray(surface["values"]) == pytest.approx(z**2, abs=1e-12)
    # two planes across the longest side (all equal: the first, x) at 1/3 and 2/3
    xs = np.unique(np.round(np.asarray(p.actors["slices"].mapper.dataset.points)[:, 0], 9))
    assert xs == pytest.approx([1 / 3, 2 / 3])
    p.close()


def test_surface_in_space_is_drawn_as_it_lies():
    # a bent strip: two triangles in the plane z = 0 and two in the plane x = 1
    pts = [[0.0, 0, 0], [1, 0, 0], [1, 1, 0], [0, 1, 0], [1, 0, 1], [1, 1, 1]]
    mesh = interp.Mesh(pts, [[0, 1, 2], [0, 2, 3], [1, 4, 5], [1, 5, 2]])
    f = interp.Field(mesh, np.asarray(pts)[:, 2], name="h")
    p = plot(f, contours=[0.5], window_size=SIZE)
    lines = np.asarray(p.actors["contours"].mapper.dataset.points)
    assert lines[:, 0] == pytest.approx(1.0) and lines[:, 2] == pytest.approx(0.5)
    assert image_of(p).std() > 20


def test_vector_field_is_drawn_by_its_magnitude():
    mesh = square_mesh(2)
    f = interp.Field(mesh, mesh.points, name="v")
    p = plot(f, window_size=SIZE)
    assert p.scalar_bar.GetTitle() == "|v|"
    assert p.scalar_bar.GetLookupTable().GetRange() == pytest.approx((0.0, np.sqrt(2.0)))
    p.close()


def test_grid_2d_is_an_image_surface_with_nan_left_out():
    x, y = np.linspace(0, 4, 5), np.linspace(0, 2, 3)
    z = np.add.outer(x, 0 * y)
    z[0, 0] = np.nan
    p = plot(Grid((x, y), {"z": z, "w": -z}, {"z": "m"}), edges=True, window_size=SIZE)
    surface = p.actors["surface"].mapper.dataset
    # 4 x 2 cells, one of them touches the NaN node
    assert surface.n_cells == 7
    assert p.scalar_bar.GetTitle() == "z [m]"
    assert p.scalar_bar.GetLookupTable().GetRange() == pytest.approx((0.0, 4.0))
    left, right = red_minus_blue(image_of(p))
    assert right - left > 0.2
    p = plot(Grid((x, y), {"z": z, "w": -z}), name="w", warp=1.0, window_size=SIZE)
    pts = np.asarray(p.actors["surface"].mapper.dataset.points)
    ok = np.isfinite(pts[:, 2])
    assert pts[ok, 2] == pytest.approx(-pts[ok, 0])
    p.close()


def test_grid_3d_shows_its_frame_and_three_central_slices():
    ax = np.linspace(0, 1, 5)
    v = np.add.outer(np.add.outer(ax, 2 * ax), 3 * ax)
    p = plot(Grid((ax, ax, ax), {"v": v}), window_size=SIZE)
    assert "frame" in p.actors
    cut = p.actors["slices"].mapper.dataset
    pts = np.asarray(cut.points)
    assert np.asarray(cut["values"]) == pytest.approx(pts @ [1.0, 2.0, 3.0])
    on_plane = np.isclose(pts, 0.5, atol=1e-12)
    assert on_plane.any(axis=1).all() and on_plane.any(axis=0).all()
    assert image_of(p).std() > 20


def test_mesh_without_field_draws_its_edges():
    mesh = square_mesh(3)
    p = plot(mesh, window_size=SIZE)
    assert "edges" in p.actors and not p.scalar_bars
    edges = p.actors["edges"].mapper.dataset
    # every cell boundary: 3 segments per triangle
    assert edges.n_cells == mesh.n_cells
    assert image_of(p).std() > 10


def test_mesh_file_is_read_and_its_field_chosen(tmp_path):
    mesh = square_mesh(2)
    path = tmp_path / "plate.vtu"
    meshio.write(
        path,
        meshio.Mesh(
            np.column_stack([mesh.points, np.zeros(mesh.n_nodes)]),
            [("triangle", mesh.cells)],
            point_data={"a": mesh.points[:, 0], "b": 5 + mesh.points[:, 1]},
        ),
    )
    p = plot(path, name="b", window_size=SIZE)
    assert p.scalar_bar.GetLookupTable().GetRange() == pytest.approx((5.0, 6.0))
    p.close()
    with pytest.raises(interp.InterpError, match=r"no field named 'c'; available: a, b"):
        plot(path, name="c")


def test_bad_input_gives_clear_errors(tmp_path):
    with pytest.raises(interp.InterpError, match="1D"):
        plot(interp.Field(interp.Mesh([0.0, 1.0, 2.0], [[0, 1], [1, 2]]), [0.0, 1.0, 2.0]))
    x = np.arange(3.0)
    with pytest.raises(interp.InterpError, match="empty"):
        plot(Grid((x, x), {"z": np.full((3, 3), np.nan)}))
    with pytest.raises(interp.InterpError, match="empty"):
        plot(Grid((np.zeros(0), x), {"z": np.zeros((0, 3))}))
    with pytest.raises(interp.InterpError, match=r"shape \(3, 2\) but the axes give \(3, 3\)"):
        plot(Grid((x, x), {"z": np.zeros((3, 2))}))
    with pytest.raises(interp.InterpError, match=r"no field named 'q'; available: z, w"):
        plot(Grid((x, x), {"z": np.zeros((3, 3)), "w": np.ones((3, 3))}), name="q")
    with pytest.raises(interp.InterpError, match="no field named 'z'; available: none"):
        plot(square_mesh(1), name="z")
    with pytest.raises(interp.InterpError, match="warp needs a field"):
        plot(square_mesh(1), warp=1.0)
    cube = interp.Field(cube_mesh(1), np.zeros(8))
    with pytest.raises(interp.InterpError, match="3D"):
        plot(cube, warp=1.0)
    with pytest.raises(interp.InterpError, match="slices"):
        plot(ramp(1), slices=2)
    with pytest.raises(interp.InterpError, match="NaN everywhere"):
        plot(interp.Field(square_mesh(1), np.full(4, np.nan)))
    with pytest.raises(interp.InterpError, match="clim must be"):
        plot(ramp(1), clim=(1.0, 0.0))
    with pytest.raises(interp.InterpError, match="cannot show a dict"):
        plot({"z": 1})
    with pytest.raises(interp.InterpError, match=r"\.png"):
        interp.show(ramp(1), screenshot=tmp_path / "a.jpg", window_size=SIZE)


def test_without_display_the_picture_goes_to_a_default_file(tmp_path, monkeypatch):
    monkeypatch.delenv("DISPLAY", raising=False)
    monkeypatch.delenv("WAYLAND_DISPLAY", raising=False)
    monkeypatch.chdir(tmp_path)
    with pytest.warns(UserWarning, match="no display"):
        out = interp.show(ramp(1), window_size=SIZE)
    assert out == tmp_path / "interp-view.png"
    assert read_png(out).shape == (SIZE[1], SIZE[0], 3)


def test_missing_offscreen_opengl_is_an_error_not_a_crash(monkeypatch):
    # VTK picks OSMesa when told to; with the library absent rendering would crash
    monkeypatch.setenv("VTK_DEFAULT_OPENGL_WINDOW", "vtkOSOpenGLRenderWindow")
    monkeypatch.setattr(ctypes.util, "find_library", lambda name: None)
    with pytest.raises(interp.InterpError, match="libosmesa6"):
        plot(ramp(1), window_size=SIZE, off_screen=True)


def test_difference_is_centred_on_zero_with_volumes_in_the_title(tmp_path):
    ground = ramp(4)
    level = 0.25
    vols = interp.volume_between(ground, level)
    p = plot_difference(ground, level, volumes=vols, window_size=SIZE)
    surface = p.actors["surface"].mapper.dataset
    assert np.asarray(surface["values"]) == pytest.approx(np.asarray(surface.points)[:, 0] - level)
    lo, hi = p.scalar_bar.GetLookupTable().GetRange()
    assert (lo, hi) == pytest.approx((-0.75, 0.75))
    # RdBu_r is white in the middle: the colour at 0 is near white
    centre = [0.0, 0.0, 0.0]
    p.scalar_bar.GetLookupTable().GetColor(0.0, centre)
    assert min(centre) > 0.9
    assert f"above {number(vols.above)}" in title_of(p)
    p.close()
    out = interp.show_difference(ground, level, screenshot=tmp_path / "d.png", window_size=SIZE)
    img = read_png(out)
    assert img.shape == (SIZE[1], SIZE[0], 3) and img.std() > 0.1


def test_difference_of_fields_on_different_meshes_interpolates_the_lower():
    upper = ramp(4)
    other = square_mesh(3)
    lower = interp.Field(other, 2 * other.points[:, 1], name="base")
    p = plot_difference(upper, lower, window_size=SIZE)
    surface = p.actors["surface"].mapper.dataset
    pts = np.asarray(surface.points)
    # both are linear, so the difference x - 2 y is exact at every node
    assert np.asarray(surface["values"]) == pytest.approx(pts[:, 0] - 2 * pts[:, 1], abs=1e-12)
    assert title_of(p) == "elevation - base"
    p.close()
    with pytest.raises(interp.InterpError, match="at least one Field"):
        plot_difference(1.0, 2.0)
    with pytest.raises(interp.InterpError, match="finite number; got 'deep'"):
        plot_difference(upper, "deep")
    with pytest.raises(interp.InterpError, match="above, below, net and area"):
        plot_difference(upper, 0.0, volumes=3.0)


def bent_profile() -> Profile:
    """A section along (0,0) -> (3,0) -> (3,4), length 7, sampled every 0.5, with a gap."""
    d = np.arange(0.0, 7.01, 0.5)
    pts = np.where(
        d[:, None] <= 3, np.column_stack([d, 0 * d]), np.column_stack([0 * d + 3, d - 3])
    )
    z = 10 + np.sin(d)
    z[(d > 2) & (d < 3.5)] = np.nan
    return Profile(d, pts, {"depth": z}, np.array([[0.0, 0], [3, 0], [3, 4]]))


def test_profile_projects_near_survey_points_and_breaks_at_gaps(tmp_path):
    data = (np.array([[1.0, 0.05], [3.1, 2.0], [1.0, 2.0]]), np.array([10.5, 11.0, 12.0]))
    fig = plot_profile(bent_profile(), data=data, tolerance=0.2)
    ax = fig.axes[0]
    # by hand: (1, 0.05) is 1 along the first leg; (3.1, 2) is 3 + 2 along, 0.1 off the
    # second leg; (1, 2) is 2 from the line and left out
    markers = np.asarray(ax.collections[0].get_offsets())
    assert markers == pytest.approx(np.array([[1.0, 10.5], [5.0, 11.0]]))
    assert np.isnan(ax.lines[0].get_ydata()).sum() == 2
    assert ax.get_ylabel() == "depth"
    out = interp.show_profile(bent_profile(), data=data, screenshot=tmp_path / "s.png")
    img = read_png(out)
    assert img.shape == (400, 800, 3) and img.std() > 0.05


def test_residual_map_is_centred_on_zero_beside_its_histogram(tmp_path, rng):
    pts = rng.uniform(0, 100, (60, 2))
    res = rng.normal(0.0, 0.2, 60)
    res[5] = np.nan
    fig = plot_residuals(pts, res)
    dots = fig.axes[0].collections[0]
    top = np.nanmax(np.abs(res))
    assert (dots.norm.vmin, dots.norm.vmax) == pytest.approx((-top, top))
    assert sum(p.get_height() for p in fig.axes[1].patches) == 59
    assert "1 NaN left out" in fig._suptitle.get_text()
    out = interp.show_residuals(pts, res, screenshot=tmp_path / "r.png")
    img = read_png(out)
    assert img.shape == (400, 1000, 3) and img.std() > 0.05
    with pytest.raises(interp.InterpError, match="one value per point"):
        plot_residuals(pts, res[:-1])


def test_profile_bad_input():
    with pytest.raises(interp.InterpError, match="distance, points and values"):
        plot_profile(object())
    with pytest.raises(interp.InterpError, match="data must be"):
        plot_profile(bent_profile(), data=(np.zeros((2, 3)), np.zeros(2)))


@pytest.mark.skipif(os.name != "posix", reason="display variables are a Linux matter")
def test_headless_detection_follows_the_display_variables(monkeypatch):
    monkeypatch.delenv("DISPLAY", raising=False)
    monkeypatch.delenv("WAYLAND_DISPLAY", raising=False)
    assert _render.no_display() == sys.platform.startswith("linux")
    monkeypatch.setenv("WAYLAND_DISPLAY", "wayland-0")
    assert not _render.no_display()


def relative_luminance(rgb) -> float:
    # WCAG 2.1, "relative luminance": sRGB channels linearised, weighted 0.2126/0.7152/0.0722
    c = np.asarray(rgb, dtype=np.float64)[:3]
    lin = np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)
    return float(lin @ [0.2126, 0.7152, 0.0722])


def contrast(a, b) -> float:
    # WCAG 2.1, "contrast ratio": (L1 + 0.05) / (L2 + 0.05), lighter over darker
    la, lb = sorted([relative_luminance(a), relative_luminance(b)], reverse=True)
    return (la + 0.05) / (lb + 0.05)


def survey_field() -> interp.Field:
    """A unit-square ramp stretched to 600 x 400 m at survey offsets (512000, 4180000)."""
    mesh = square_mesh(4)
    xy = mesh.points * [600.0, 400.0] + [512000.0, 4180000.0]
    return interp.Field(interp.Mesh(xy, mesh.cells), 100 + mesh.points[:, 0], name="z", units="m")


def test_survey_coordinates_are_drawn_local_with_the_offset_on_the_axis():
    p = plot(survey_field(), window_size=SIZE)
    axes = p.renderer.cube_axes_actor
    assert axes.GetXTitle() == "x - 512000" and axes.GetYTitle() == "y - 4180000"
    # the ticks run over the local range 0..600 and 0..400, whole metres apart
    assert axes.x_axis_range == pytest.approx((0.0, 600.0))
    assert axes.y_axis_range == pytest.approx((0.0, 400.0))
    assert axes.x_label_format == "%.0f"
    # the data stay where they are; only the numbers on the axes are local
    assert p.actors["surface"].mapper.dataset.bounds[0] == pytest.approx(512000.0)
    assert title_of(p) == "z [m]" and p.scalar_bar.GetTitle() == "z [m]"
    assert image_of(p).std() > 20
    p = plot(ramp(), window_size=SIZE)
    assert p.renderer.cube_axes_actor.GetXTitle() == "x"
    p.close()


def test_contours_are_labelled_and_readable_on_both_ends_of_the_colour_map(tmp_path):
    f = ramp(4)
    p = plot(f, contours=[0.25, 0.5, 0.75], window_size=SIZE)
    labels = pyvista_labels(p)
    # f = x: each level's label sits on the line x = level, and reads the level
    assert labels["text"] == ["0.25", "0.50", "0.75"]
    assert labels["points"][:, 0] == pytest.approx([0.25, 0.5, 0.75], abs=1e-9)
    light = p.actors["contours"].prop.color
    dark = p.actors["contour-halo"].prop.color
    assert p.actors["contour-halo"].prop.line_width > p.actors["contours"].prop.line_width
    ends = matplotlib.colormaps[view.CMAP]([0.0, 1.0])
    # WCAG 2.1 asks 3:1 for graphical objects: the light line on the darkest colour, the
    # dark halo on the lightest
    assert contrast(light.float_rgb, ends[0]) > 3 and contrast(dark.float_rgb, ends[1]) > 3
    # the pixels the lines change (labels hidden) hold both the light line and the dark halo
    p.actors["contour-labels"].SetVisibility(False)
    changed = image_of(p) / 255.0
    plain = image_of(plot(f, window_size=SIZE)) / 255.0
    moved = np.abs(changed - plain).max(axis=2) > 0.1
    lum = changed[moved] @ [0.2126, 0.7152, 0.0722]
    assert (lum > 0.9).sum() > 50 and (lum < 0.15).sum() > 50
    with pytest.raises(interp.InterpError, match="from 1 to 100"):
        plot(f, contours=101, window_size=SIZE)
    with pytest.raises(interp.InterpError, match="at most 100 levels"):
        plot(f, contours=list(np.linspace(0.1, 0.9, 101)), window_size=SIZE)


def pyvista_labels(plotter) -> dict:
    import pyvista as pv

    actor = plotter.actors["contour-labels"]
    data = pv.wrap(actor.GetMapper().GetInputAlgorithm().GetInput())
    return {"text": [str(t) for t in data["labels"]], "points": np.asarray(data.points)}


def test_point_markers_leave_the_surface_visible():
    f = ramp(4)
    p = plot(f, points=True, window_size=SIZE)
    prop = p.actors["points"].prop
    assert prop.opacity < 1 and prop.point_size <= 6
    with_points = image_of(p)
    without = image_of(plot(f, window_size=SIZE))
    # the surface's colour still shows: the markers change the picture by little (0.27 of
    # 255 on average when measured; opaque black markers of size 7 changed it by 0.97)
    assert np.abs(with_points - without).mean() < 0.5


def test_residual_map_shows_survey_coordinates_with_their_offset(rng):
    pts = rng.uniform(0, 100, (30, 2)) + [512000.0, 4180000.0]
    fig = plot_residuals(pts, rng.normal(0.0, 0.1, 30))
    ax = fig.axes[0]
    assert ax.get_xlabel() == "x - 512000" and ax.get_ylabel() == "y - 4180000"
    offsets = np.asarray(ax.collections[0].get_offsets())
    assert offsets == pytest.approx(pts - [512000.0, 4180000.0])


#: breaklines cross the ramp's cell edges and run along one of them (x = 0.8)
LINES = [np.array([[0.2, 0.3], [0.8, 0.3], [0.8, 0.8]]), np.array([[0.1, 0.9, 1.0], [0.5, 0.5, 0]])]


def magenta(img: np.ndarray) -> np.ndarray:
    """Pixels of the breakline colour #ff00ff: red and blue high, green low (0..1 scale)."""
    return (img[..., 0] > 0.8) & (img[..., 2] > 0.8) & (img[..., 1] < 0.35)


def along(lines: list[np.ndarray], step: float = 0.002) -> np.ndarray:
    """Points every ``step`` along polylines (x, y)."""
    out = []
    for line in lines:
        for a, b in zip(line[:-1, :2], line[1:, :2], strict=True):
            t = np.linspace(0.0, 1.0, int(np.ceil(np.linalg.norm(b - a) / step)) + 1)
            out.append(a + t[:, None] * (b - a))
    return np.vstack(out)


def pixels_of(plotter, xyz: np.ndarray) -> np.ndarray:
    """(row, column) in the screenshot of world points, by the renderer's own projection."""
    renderer, height = plotter.renderer, plotter.window_size[1]
    out = []
    for p in xyz:
        renderer.SetWorldPoint(*p, 1.0)
        renderer.WorldToDisplay()
        x, y, _ = renderer.GetDisplayPoint()
        out.append((height - 1 - y, x))  # display y runs up from the bottom row
    return np.array(out)


@pytest.mark.parametrize("warp", [None, 0.5])
def test_breaklines_are_drawn_in_their_own_colour_along_their_lines(warp):
    from scipy.spatial import cKDTree

    f = ramp(5)
    p = plot(f, edges=True, breaklines=LINES, warp=warp, window_size=SIZE)
    img = np.asarray(p.screenshot(return_img=True), dtype=np.float64)[..., :3] / 255.0
    track = along(LINES)
    # drawn flat at z = 0, or draped on the warped surface z = warp * x (f = x is exact)
    z = np.zeros(len(track)) if warp is None else warp * track[:, 0]
    expected = pixels_of(p, np.column_stack([track, z]))
    legend = p.legend.GetPosition()
    p.close()
    rows, cols = np.nonzero(magenta(img))
    in_legend = (cols >= legend[0] * SIZE[0]) & (rows >= (1 - legend[1] - 0.06) * SIZE[1])
    assert in_legend.sum() > 10  # the legend's key
    found = np.column_stack([rows, cols])[~in_legend]
    # every magenta pixel of the picture lies on a line (3 px wide), and the lines are
    # magenta along nearly all their length (the dark halo and the cell edges do not hide it)
    gap, _ = cKDTree(expected).query(found)
    assert gap.max() < 3.0
    near, _ = cKDTree(found).query(expected)
    assert np.mean(near < 1.5) > 0.97
    plain = np.asarray(plot(f, edges=True, warp=warp, window_size=SIZE).screenshot(return_img=True))
    assert not magenta(plain[..., :3] / 255.0).any()


def test_breaklines_stand_apart_from_edges_region_and_colour_maps():
    f = ramp(4)
    p = plot(f, edges=True, region=LINES[0][:3], breaklines=LINES, window_size=SIZE)
    line = p.actors["breaklines"].prop
    halo = p.actors["breakline-halo"].prop
    assert halo.line_width > line.line_width > p.actors["edges"].prop.line_width
    colours = {p.actors[name].prop.color.hex_rgb for name in ("breaklines", "edges", "region")}
    assert len(colours) == 3
    p.close()
    # WCAG 2.1 asks 3:1 for graphical objects: the magenta line on the dark ends of both
    # colour maps, its dark halo on their light ends (matplotlib's colour map data)
    for cmap in (view.CMAP, view.DIVERGING_CMAP):
        samples = matplotlib.colormaps[cmap](np.linspace(0.0, 1.0, 11))
        dark = min(samples, key=relative_luminance)
        light = max(samples, key=relative_luminance)
        assert contrast(line.color.float_rgb, dark) > 3
        assert contrast(halo.color.float_rgb, light) > 3
    p = plot(f, breaklines=[], window_size=SIZE)  # no lines: nothing drawn, no legend
    assert not {"breaklines", "breakline-halo", "legend"} & set(p.actors)
    p.close()
    with pytest.raises(interp.InterpError, match="breaklines are drawn on 2D pictures only"):
        plot(interp.Field(cube_mesh(1), np.zeros(8)), breaklines=LINES, window_size=SIZE)
    with pytest.raises(interp.InterpError, match="line 1 has shape"):
        plot(f, breaklines=[[[0.0, 0.0]]], window_size=SIZE)


def test_cli_view_draws_the_breaklines_file(tmp_path):
    import shutil

    exe = shutil.which("interp") or pytest.skip("the interp command is not installed")
    g = np.linspace(0.0, 10.0, 6)
    xy = np.stack(np.meshgrid(g, g), axis=-1).reshape(-1, 2)
    interp.io.write_table(tmp_path / "pts.csv", ["x", "y", "z"], np.column_stack([xy, xy[:, 0]]))
    rows = "".join(f"{x},{y},{i}\n" for i, ln in enumerate(LINES) for x, y in ln[:, :2] * 10)
    (tmp_path / "lines.csv").write_text("x,y,line\n" + rows)
    for extra, drawn in ((["--breaklines", "lines.csv"], True), ([], False)):
        r = subprocess.run(
            [exe, "view", "pts.csv", "--edges", *extra, "--screenshot", "v.png"],
            capture_output=True,
            text=True,
            cwd=tmp_path,
            timeout=300,
        )
        assert r.returncode == 0, r.stderr
        assert r.stdout.strip() == "wrote v.png"
        # the 1200 x 900 picture: 10 m lines 3 px wide give thousands of magenta pixels
        assert (magenta(read_png(tmp_path / "v.png")).sum() > 1000) == drawn
