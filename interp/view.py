"""Pictures: surfaces and volumes of fields, meshes and grids, differences, sections, residuals.

Look at an interpolated surface before trusting a number taken from it: a
spike from a bad survey point, a triangle spanning a gap or a volume over the
wrong boundary shows at once in a picture.

pyvista (VTK) draws surfaces and volumes, matplotlib draws sections and
residual maps.  Both are the ``view`` extra (``pip install -e '.[view]'``)
and are imported only when a picture is made, never by ``import interp``.

Every picture has a builder returning the pyvista ``Plotter`` or matplotlib
``Figure`` (to add to it, inspect it or save it another way) and a ``show``
function that opens a window or writes a PNG:

- :func:`plot` / :func:`show`: a field, mesh, grid or mesh file (pyvista);
- :func:`plot_difference` / :func:`show_difference`: two surfaces (pyvista);
- :func:`plot_profile` / :func:`show_profile`: a section (matplotlib);
- :func:`plot_residuals` / :func:`show_residuals`: residuals (matplotlib).

The actors of a pyvista picture are named in ``plotter.actors``:
``"surface"``, ``"edges"``, ``"contours"``, ``"points"``, ``"region"``,
``"frame"`` (the box of a 3D grid), ``"slices"`` and ``"isosurfaces"``.

Without a display (Linux with neither ``DISPLAY`` nor ``WAYLAND_DISPLAY``
set) pictures are rendered off screen and written as PNG files.  VTK then
renders with EGL (Debian/Ubuntu packages ``libegl1`` and ``libgl1-mesa-dri``,
software rendering, no GPU needed) and falls back to OSMesa
(``libosmesa6``); no virtual display is needed.
"""

from __future__ import annotations

import ctypes.util
import os
import sys
import warnings
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from interp.basis import EDGES, shape
from interp.errors import InterpError, RenderingUnavailable
from interp.field import Field
from interp.mesh import Mesh
from interp.polygon import as_ring

if TYPE_CHECKING:
    import pyvista
    from matplotlib.figure import Figure

#: default colour map: perceptually uniform, readable in grey scale.
CMAP = "viridis"
#: colour map for differences and residuals, centred on zero.
DIVERGING_CMAP = "RdBu_r"
#: sub-triangles per edge when drawing a quadratic (P2) cell.
P2_SUBDIVISION = 6
#: upper bound on the sub-triangles drawn for a quadratic surface (fewer per cell if needed).
MAX_SUBCELLS = 4_000_000
#: survey points within this fraction of a section's length are drawn on it by default.
PROFILE_TOLERANCE = 0.02
#: PNG resolution of matplotlib pictures, dots per inch.
DPI = 100

_S = "values"
_OFFSCREEN_HELP = (
    "no off-screen OpenGL is available to render the picture: install EGL "
    "(Debian/Ubuntu: apt install libegl1 libgl1-mesa-dri) or OSMesa (apt install "
    "libosmesa6), or run where a display is available"
)
#: corner triples of the four faces of a tetrahedron (face i is opposite corner i).
_TET_FACES = ((1, 2, 3), (0, 3, 2), (0, 1, 3), (0, 2, 1))


@dataclass
class _Scene:
    """What to draw: a coloured surface, its cell edges and, in 3D, the volume."""

    surface: pyvista.PolyData | None
    edges: pyvista.PolyData | None
    volume: pyvista.DataSet | None
    nodes: np.ndarray
    node_values: np.ndarray | None
    label: str | None
    flat: bool
    lo: float = np.nan
    hi: float = np.nan


def plot(
    obj: object,
    *,
    field: str | None = None,
    warp: float | None = None,
    contours: int | list[float] | None = None,
    edges: bool = False,
    points: bool | np.ndarray | None = None,
    region: object | None = None,
    slices: int | list | None = None,
    isosurfaces: int | list[float] | None = None,
    window_size: tuple[int, int] = (1200, 900),
    cmap: str | None = None,
    clim: tuple[float, float] | None = None,
    diverging: bool = False,
    title: str | None = None,
    off_screen: bool | None = None,
) -> pyvista.Plotter:
    """Build the picture of a field, mesh, grid or mesh file as a pyvista Plotter.

    Parameters
    ----------
    obj : Field, Mesh, Grid, str or Path
        What to draw.  A path is read with :func:`interp.io.read`; a Mesh without
        a field, or a file without point data, draws the mesh edges.
    field : str, optional
        Which field of a Grid or file to draw (default the first).
    warp : float, optional
        2D data only: lift the surface to z = warp * value (vertical
        exaggeration; negative to draw depths downwards).
    contours : int or list of float, optional
        Contour lines: an int n gives n levels evenly spaced strictly inside
        the range of the drawn values, a list gives the levels.
    edges : bool
        Draw the cell edges (the mesh's cells, not the sub-triangles of a
        quadratic cell; the node lines of a grid).
    points : True or array_like (n, 2 | 3), optional
        Markers on top: True for the mesh (grid) nodes, or points.  In 2D a
        third column is the point's value (its height when warped); without
        it a warped marker sits on the surface.
    region : Polygon or array_like (p, 2), optional
        2D only: outline of a region (an :class:`interp.Polygon` or one ring).
    slices : int or list of (origin, normal), optional
        3D only: cut planes coloured by the field.  An int n gives n planes
        across the longest side of the bounding box.  A 3D grid shows three
        planes through its centre by default.
    isosurfaces : int or list of float, optional
        3D only: surfaces of equal value (an int as for ``contours``).
    window_size : (int, int)
        Width and height of the picture in pixels.
    cmap : str, optional
        Colour map name (default ``"viridis"``, or ``"RdBu_r"`` if diverging).
    clim : (float, float), optional
        Colour range (default the range of the drawn values).
    diverging : bool
        Colour on a diverging map centred on zero (differences, residuals).
    title : str, optional
        Text above the picture (default none).
    off_screen : bool, optional
        Render without a window (default: only when there is no display).

    Returns
    -------
    pyvista.Plotter
        Its actors are named (see the module documentation); quadratic cells
        are drawn subdivided so that the surface shows their curvature.

    Examples
    --------
    >>> import numpy as np
    >>> import interp
    >>> from interp.view import plot
    >>> xy = np.array([[0.0, 0], [1, 0], [0, 1], [1, 1]])
    >>> f = interp.Field(interp.triangulate(xy), xy[:, 0], name="z", units="m")
    >>> p = plot(f, contours=3, window_size=(400, 300), off_screen=True)
    >>> p.actors["surface"].mapper.scalar_range
    (0.0, 1.0)
    >>> p.close()
    """
    scene = _scene(obj, field)
    plotter = _plotter(window_size, off_screen)
    try:
        _draw(
            plotter,
            scene,
            warp=warp,
            contours=contours,
            edges=edges,
            points=points,
            region=region,
            slices=slices,
            isosurfaces=isosurfaces,
            cmap=cmap,
            clim=clim,
            diverging=diverging,
        )
    except BaseException:
        plotter.close()
        raise
    if title:
        _caption(plotter, title, "title", top=True)
    return plotter


def show(obj: object, *, screenshot: str | Path | None = None, **options: Any) -> Path | None:
    """Show a field, mesh, grid or mesh file in a window, or write it as a PNG.

    Parameters
    ----------
    obj : Field, Mesh, Grid, str or Path
        What to draw (see :func:`plot`).
    screenshot : str or Path, optional
        Write the picture to this ``.png`` file (atomically) instead of
        opening a window.  Without a display the picture is always written,
        by default to ``interp-view.png`` in the current folder.
    **options
        The keywords of :func:`plot` (field, warp, contours, edges, points,
        region, slices, isosurfaces, window_size, cmap, clim, diverging,
        title) except off_screen.

    Returns
    -------
    Path or None
        The PNG written, or None after a window was closed.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> import numpy as np
    >>> import interp
    >>> xy = np.array([[0.0, 0], [1, 0], [0, 1], [1, 1]])
    >>> f = interp.Field(interp.triangulate(xy), xy[:, 0] * xy[:, 1], name="z")
    >>> with tempfile.TemporaryDirectory() as d:
    ...     out = interp.show(f, warp=1.0, screenshot=pathlib.Path(d) / "z.png",
    ...                       window_size=(400, 300))
    ...     out.name, out.stat().st_size > 0
    ('z.png', True)
    """
    plotter = plot(obj, off_screen=_off_screen(screenshot), **options)
    return _finish_plotter(plotter, screenshot, "interp-view.png")


def plot_difference(
    upper: Field | float,
    lower: Field | float,
    *,
    volumes: object | None = None,
    region: object | None = None,
    warp: float | None = None,
    contours: int | list[float] | None = None,
    edges: bool = False,
    points: bool | np.ndarray | None = None,
    window_size: tuple[int, int] = (1200, 900),
    title: str | None = None,
    off_screen: bool | None = None,
) -> pyvista.Plotter:
    """Build the picture of ``upper - lower``, red above and blue below, white at zero.

    Parameters
    ----------
    upper, lower : Field or float
        Two surfaces, or one surface and a constant level.  The difference
        lives on the Field's mesh (``upper``'s if both are Fields); a Field on
        another mesh is interpolated at its nodes (NaN where it has no data).
    volumes : object with attributes above, below, net, area, optional
        Volumes to print in the title (for example :func:`interp.volume_between`'s
        result).
    region, warp, contours, edges, points, window_size, off_screen
        As for :func:`plot`.
    title : str, optional
        Title (default the volumes, or the names of the two surfaces).

    Volumes and the picture are aids for checking; quantities used for
    payment or design must be checked independently and follow local codes
    and licensed practice.

    Returns
    -------
    pyvista.Plotter

    Examples
    --------
    >>> import numpy as np
    >>> import interp
    >>> from interp.view import plot_difference
    >>> xy = np.array([[0.0, 0], [1, 0], [0, 1], [1, 1]])
    >>> ground = interp.Field(interp.triangulate(xy), [1.0, 3.0, 2.0, 4.0], name="ground")
    >>> p = plot_difference(ground, 2.0, window_size=(400, 300), off_screen=True)
    >>> p.actors["surface"].mapper.scalar_range
    (-2.0, 2.0)
    >>> p.close()
    """
    diff = _difference(upper, lower)
    if title is None:
        title = _volumes_text(volumes) if volumes is not None else diff.name
    plotter = plot(
        diff,
        warp=warp,
        contours=contours,
        edges=edges,
        points=points,
        region=region,
        window_size=window_size,
        diverging=True,
        title=title,
        off_screen=off_screen,
    )
    if volumes is not None:
        _caption(plotter, "check volumes independently before use for payment or design", "caution")
    return plotter


def show_difference(
    upper: Field | float,
    lower: Field | float,
    *,
    screenshot: str | Path | None = None,
    **options: Any,
) -> Path | None:
    """Show the difference of two surfaces in a window, or write it as a PNG.

    ``options`` are the keywords of :func:`plot_difference` (volumes, region,
    warp, contours, edges, points, window_size, title); ``screenshot`` and the
    result are as for :func:`show`, the default file without a display being
    ``interp-difference.png``.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> import numpy as np
    >>> import interp
    >>> xy = np.array([[0.0, 0], [1, 0], [0, 1], [1, 1]])
    >>> ground = interp.Field(interp.triangulate(xy), [1.0, 3.0, 2.0, 4.0])
    >>> with tempfile.TemporaryDirectory() as d:
    ...     out = interp.show_difference(ground, 2.5, screenshot=pathlib.Path(d) / "d.png",
    ...                                  window_size=(400, 300))
    ...     out.suffix
    '.png'
    """
    plotter = plot_difference(upper, lower, off_screen=_off_screen(screenshot), **options)
    return _finish_plotter(plotter, screenshot, "interp-difference.png")


def plot_profile(
    profile: object,
    *,
    data: tuple[object, object] | None = None,
    tolerance: float | None = None,
    label: str | None = None,
    title: str | None = None,
    figsize: tuple[float, float] = (8.0, 4.0),
) -> Figure:
    """Draw a section: value against distance along the line, with survey points near it.

    Parameters
    ----------
    profile : Profile
        A section (:func:`interp.profile`): ``distance`` (n,), ``points``
        (n, g) and ``values`` (n,) or (n, c).  NaN values (the line outside
        the mesh) are drawn as breaks in the line.
    data : (points (k, g), values (k,)), optional
        Survey points.  Those within ``tolerance`` of the line are projected
        onto it (at the distance of their nearest point on the line) and drawn
        as markers.
    tolerance : float, optional
        Largest distance from the line of a survey point drawn (default 2 % of
        the section's length).
    label : str, optional
        Name of the value axis (default the profile's field name).
    title : str, optional
    figsize : (float, float)
        Size in inches (100 pixels per inch in a PNG).

    Returns
    -------
    matplotlib.figure.Figure

    Examples
    --------
    >>> import numpy as np
    >>> from interp.resample import Profile
    >>> from interp.view import plot_profile
    >>> line = np.array([[0.0, 0.0], [4.0, 0.0]])
    >>> sec = Profile(np.arange(5.0), np.column_stack([np.arange(5.0), np.zeros(5)]),
    ...               {"z": np.array([1.0, 2.0, np.nan, 2.0, 1.0])}, line)
    >>> fig = plot_profile(sec, data=(np.array([[1.0, 0.01], [2.0, 3.0]]), np.array([2.1, 9.0])))
    >>> fig.axes[0].collections[0].get_offsets().tolist()
    [[1.0, 2.1]]
    """
    dist, pts, fields = _profile_arrays(profile)
    fig = _figure(figsize)
    ax = fig.add_subplot()
    name = label or (next(iter(fields)) if len(fields) == 1 else "value")
    for field_name, values in fields.items():
        columns = values.reshape(len(dist), -1)
        for c in range(columns.shape[1]):
            tag = field_name if columns.shape[1] == 1 else f"{field_name}[{c}]"
            ax.plot(dist, columns[:, c], lw=1.5, label=label or tag)
    if data is not None:
        length = float(dist[-1] - dist[0])
        tol = PROFILE_TOLERANCE * length if tolerance is None else float(tolerance)
        if not np.isfinite(tol) or tol < 0:
            raise InterpError(f"tolerance must be a finite distance >= 0; got {tolerance}")
        line = np.asarray(getattr(profile, "vertices", pts), dtype=np.float64)
        along, near, vals = _project(float(dist[0]), line, data)
        keep = near <= tol
        ax.scatter(
            along[keep],
            vals[keep],
            s=18,
            color="black",
            zorder=3,
            label=f"survey points within {tol:.3g} of the line ({int(keep.sum())})",
        )
    ax.set_xlabel("distance along the section")
    ax.set_ylabel(name)
    ax.grid(True, alpha=0.3)
    ax.legend(loc="best", fontsize=8)
    if title:
        ax.set_title(title)
    fig.tight_layout()
    return fig


def show_profile(
    profile: object, *, screenshot: str | Path | None = None, **options: Any
) -> Path | None:
    """Show a section in a window, or write it as a PNG.

    ``options`` are the keywords of :func:`plot_profile` (data, tolerance,
    label, title, figsize); ``screenshot`` and the result are as for
    :func:`show`, the default file without a display being
    ``interp-profile.png``.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> import numpy as np
    >>> import interp
    >>> from interp.resample import Profile
    >>> sec = Profile(np.arange(3.0), np.column_stack([np.arange(3.0), np.zeros(3)]),
    ...               {"z": np.array([1.0, 2.0, 1.5])}, np.array([[0.0, 0], [2, 0]]))
    >>> with tempfile.TemporaryDirectory() as d:
    ...     interp.show_profile(sec, screenshot=pathlib.Path(d) / "s.png").name
    's.png'
    """
    return _finish_figure(plot_profile(profile, **options), screenshot, "interp-profile.png")


def plot_residuals(
    points: object,
    residuals: object,
    *,
    title: str | None = None,
    bins: int | None = None,
    figsize: tuple[float, float] = (10.0, 4.0),
) -> Figure:
    """Draw a map of points coloured by residual (centred on zero) beside its histogram.

    Parameters
    ----------
    points : array_like (n, 2 | 3)
        Where each residual was found; the map shows x and y.
    residuals : array_like (n,)
        Residuals (for example from leave-one-out cross-validation); NaN
        residuals are left out and counted in the title.
    title : str, optional
        Title (default the count, mean, RMS and largest absolute residual).
    bins : int, optional
        Histogram bins (default numpy's "auto").
    figsize : (float, float)
        Size in inches (100 pixels per inch in a PNG).

    Returns
    -------
    matplotlib.figure.Figure
        Axes 0 is the map (its scatter's norm is symmetric about 0), axes 1
        the histogram, axes 2 the colour bar.

    Examples
    --------
    >>> import numpy as np
    >>> from interp.view import plot_residuals
    >>> fig = plot_residuals([[0.0, 0.0], [1.0, 0.0], [0.0, 1.0]], [0.5, -1.0, 0.25])
    >>> norm = fig.axes[0].collections[0].norm
    >>> norm.vmin, norm.vmax
    (-1.0, 1.0)
    """
    pts = np.asarray(points, dtype=np.float64)
    res = np.asarray(residuals, dtype=np.float64)
    if pts.ndim != 2 or pts.shape[1] not in (2, 3) or not np.isfinite(pts).all():
        raise InterpError(
            f"residual points must be a finite (n, 2) or (n, 3) array; got shape {pts.shape}"
        )
    if res.shape != (len(pts),):
        raise InterpError(
            f"residuals must be one value per point: {len(pts)} points, residuals of shape "
            f"{res.shape}"
        )
    ok = np.isfinite(res)
    if not ok.any():
        raise InterpError("all residuals are NaN: there is nothing to draw")
    pts, res = pts[ok], res[ok]
    top = float(np.abs(res).max()) or 1.0
    fig = _figure(figsize)
    ax_map, ax_hist = fig.subplots(1, 2, gridspec_kw={"width_ratios": [1.2, 1.0]})
    dots = ax_map.scatter(
        pts[:, 0],
        pts[:, 1],
        c=res,
        cmap=DIVERGING_CMAP,
        vmin=-top,
        vmax=top,
        s=16,
        edgecolors="0.3",
        linewidths=0.3,
    )
    ax_map.set_aspect("equal", adjustable="datalim")
    ax_map.set_xlabel("x")
    ax_map.set_ylabel("y")
    fig.colorbar(dots, ax=ax_map, label="residual")
    _, edges, bars = ax_hist.hist(
        res, bins="auto" if bins is None else bins, edgecolor="0.3", linewidth=0.3
    )
    for bar, centre in zip(bars, 0.5 * (edges[:-1] + edges[1:]), strict=True):
        bar.set_facecolor(dots.cmap(dots.norm(centre)))
    ax_hist.axvline(0.0, color="black", lw=1.0)
    ax_hist.set_xlabel("residual")
    ax_hist.set_ylabel("count")
    if title is None:
        dropped = f", {int((~ok).sum())} NaN left out" if not ok.all() else ""
        title = (
            f"n = {res.size}{dropped}, mean {res.mean():.3g}, RMS {np.sqrt(np.mean(res**2)):.3g}, "
            f"max |r| {top:.3g}"
        )
    fig.suptitle(title, fontsize=10)
    fig.tight_layout()
    return fig


def show_residuals(
    points: object, residuals: object, *, screenshot: str | Path | None = None, **options: Any
) -> Path | None:
    """Show residuals in a window, or write them as a PNG.

    ``options`` are the keywords of :func:`plot_residuals` (title, bins,
    figsize); ``screenshot`` and the result are as for :func:`show`, the
    default file without a display being ``interp-residuals.png``.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> import interp
    >>> with tempfile.TemporaryDirectory() as d:
    ...     interp.show_residuals([[0, 0], [1, 0], [0, 1]], [0.1, -0.2, 0.05],
    ...                           screenshot=pathlib.Path(d) / "r.png").name
    'r.png'
    """
    fig = plot_residuals(points, residuals, **options)
    return _finish_figure(fig, screenshot, "interp-residuals.png")


# --- scenes: turning inputs into pyvista data -------------------------------------------


def _scene(obj: object, field: str | None) -> _Scene:
    if isinstance(obj, (str, os.PathLike)):
        from interp.io import read

        mesh, data = read(obj)
        name = _pick(field, list(data), f"{obj}")
        return _mesh_scene(mesh, None if name is None else data[name], name, None)
    if isinstance(obj, Field):
        _pick(field, [obj.name] if obj.name else [], "the Field")
        return _mesh_scene(obj.mesh, obj.values, obj.name or "value", obj.units)
    if isinstance(obj, Mesh):
        _pick(field, [], "a Mesh (it carries no fields)")
        return _mesh_scene(obj, None, None, None)
    if hasattr(obj, "axes") and hasattr(obj, "fields"):
        return _grid_scene(obj, field)
    raise InterpError(
        f"cannot show a {type(obj).__name__}: pass an interp Field, Mesh or Grid, or a mesh "
        "file path"
    )


def _pick(field: str | None, names: list[str], where: str) -> str | None:
    if field is None:
        return names[0] if names else None
    if field not in names:
        raise InterpError(
            f"{where} has no field named {field!r}; available: {', '.join(names) or 'none'}"
        )
    return field


def _label(name: str, units: str | None, vector: bool) -> str:
    text = f"|{name}|" if vector else name
    return f"{text} [{units}]" if units else text


def _scalar(values: np.ndarray, spatial_ndim: int) -> tuple[np.ndarray, bool]:
    """Values as one scalar per node: the magnitude of a multi-component field."""
    if values.ndim > spatial_ndim:
        return np.linalg.norm(values, axis=-1), True
    return values, False


def _mesh_scene(mesh: Mesh, values: object, name: str | None, units: str | None) -> _Scene:
    if mesh.dim == 1:
        raise InterpError(
            f"cannot draw a mesh of {mesh.cell_type} cells (1D) as a surface or volume: plot "
            "its values against distance (show_profile draws a section of a 2D or 3D field)"
        )
    vals, label = None, None
    if values is not None:
        vals, vector = _scalar(np.asarray(values, dtype=np.float64), 1)
        label = _label(name, units, vector)
    pts = np.zeros((mesh.n_nodes, 3))
    pts[:, : mesh.gdim] = mesh.points
    if mesh.dim == 2:
        cells, volume = mesh.cells, None
    else:
        cells, volume = _outer_faces(mesh), _tetra_grid(mesh, pts, vals)
    surface, outline = _subdivide(pts, cells, vals, mesh.order)
    scene = _Scene(surface, outline, volume, pts, vals, label, mesh.gdim == 2)
    if vals is not None:
        drawn = np.concatenate([surface[_S], vals[np.isfinite(vals)]])
        scene.lo, scene.hi = float(drawn.min()), float(drawn.max())
    return scene


def _lattice(s: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Sub-nodes of a triangle split s times per edge: barycentric coordinates,
    the s^2 sub-triangles and the loop of sub-nodes around the boundary."""
    ij = [(i, j) for j in range(s + 1) for i in range(s + 1 - j)]
    at = {p: k for k, p in enumerate(ij)}
    up = [(at[i, j], at[i + 1, j], at[i, j + 1]) for i, j in ij if i + j < s]
    down = [(at[i + 1, j], at[i + 1, j + 1], at[i, j + 1]) for i, j in ij if i + j < s - 1]
    loop = (
        [at[i, 0] for i in range(s + 1)]
        + [at[s - j, j] for j in range(1, s + 1)]
        + [at[0, j] for j in range(s - 1, -1, -1)]
    )
    k = np.array(ij, dtype=np.float64)
    bary = np.column_stack([s - k.sum(axis=1), k[:, 0], k[:, 1]]) / s
    return bary, np.array(up + down, dtype=np.int64), np.array(loop, dtype=np.int64)


def _subdivide(
    pts: np.ndarray, cells: np.ndarray, vals: np.ndarray | None, order: int
) -> tuple[pyvista.PolyData, pyvista.PolyData]:
    """Surface of triangle cells (3 or 6 nodes), each split into sub-triangles with the
    field evaluated at the sub-nodes by the cell's basis, and the cells' boundaries."""
    import pyvista as pv

    if vals is not None:
        cells = cells[np.isfinite(vals[cells]).all(axis=1)]
        if len(cells) == 0:
            raise InterpError(
                "no cell has values at all its nodes (the field is NaN everywhere): nothing to draw"
            )
    m = len(cells)
    s = 1 if order == 1 else max(2, min(P2_SUBDIVISION, int(np.sqrt(MAX_SUBCELLS / m))))
    bary, tris, loop = _lattice(s)
    xyz = np.einsum("sk,mkd->msd", bary, pts[cells[:, :3]]).reshape(-1, 3)
    first = np.arange(m, dtype=np.int64)[:, None] * len(bary)
    surface = pv.PolyData.from_regular_faces(xyz, (tris[None] + first[:, :, None]).reshape(-1, 3))
    lines = np.hstack([np.full((m, 1), loop.size), loop[None] + first])
    outline = pv.PolyData(xyz, lines=lines.ravel())
    if vals is not None:
        sub = (vals[cells] @ shape(2, order, bary).T).reshape(-1)
        surface.point_data[_S] = sub
        outline.point_data[_S] = sub
    return surface.clean(tolerance=1e-9, absolute=False), outline


def _outer_faces(mesh: Mesh) -> np.ndarray:
    """Boundary faces of a tetrahedral mesh as triangles (3 nodes) or P2 triangles (6)."""
    faces = np.array(_TET_FACES)
    corner = mesh.corners[:, faces].reshape(-1, 3)
    _, inverse, counts = np.unique(
        np.sort(corner, axis=1), axis=0, return_inverse=True, return_counts=True
    )
    outer = counts[inverse.reshape(-1)] == 1
    if mesh.order == 1:
        return corner[outer]
    node = {frozenset(e): 4 + k for k, e in enumerate(EDGES[3])}
    mids = [[node[frozenset((f[a], f[(a + 1) % 3]))] for a in range(3)] for f in _TET_FACES]
    local = np.hstack([faces, np.array(mids)])
    return mesh.cells[:, local].reshape(-1, 6)[outer]


def _tetra_grid(mesh: Mesh, pts: np.ndarray, vals: np.ndarray | None) -> pyvista.UnstructuredGrid:
    import pyvista as pv

    kind = pv.CellType.TETRA if mesh.order == 1 else pv.CellType.QUADRATIC_TETRA
    grid = pv.UnstructuredGrid({kind: np.asarray(mesh.cells)}, pts)
    if vals is not None:
        grid.point_data[_S] = vals
    return grid


def _grid_scene(grid: object, field: str | None) -> _Scene:
    import pyvista as pv

    axes = [np.asarray(a, dtype=np.float64).reshape(-1) for a in grid.axes]
    name = _pick(field, list(grid.fields), "the grid")
    if name is None:
        raise InterpError("the grid has no fields to draw")
    if len(axes) not in (2, 3):
        raise InterpError(
            f"cannot draw a {len(axes)}D grid: pictures are of 2D or 3D grids (plot a 1D "
            "grid's values against its axis)"
        )
    vals, vector = _scalar(np.asarray(grid.fields[name], dtype=np.float64), len(axes))
    shape = tuple(len(a) for a in axes)
    if vals.shape != shape:
        raise InterpError(
            f"grid field {name!r} has shape {vals.shape} but the axes give {shape}; each "
            "field needs one value (or one row of components) per node"
        )
    if vals.size == 0 or not np.isfinite(vals).any():
        raise InterpError(
            f"the grid is empty: field {name!r} has {vals.size} nodes and none has a value "
            "(all NaN); grid a region that overlaps the mesh"
        )
    label = _label(name, getattr(grid, "units", {}).get(name), vector)
    lo, hi = float(np.nanmin(vals)), float(np.nanmax(vals))
    if len(axes) == 3:
        rect = pv.RectilinearGrid(*axes)
        rect.point_data[_S] = vals.ravel(order="F")
        return _Scene(None, None, rect, np.asarray(rect.points), rect[_S], label, False, lo, hi)
    # node (i, j) is point i + nx j, as VTK orders x fastest
    nx, ny = vals.shape
    xx, yy = np.meshgrid(axes[0], axes[1], indexing="ij")
    pts = np.column_stack([xx.ravel(order="F"), yy.ravel(order="F"), np.zeros(nx * ny)])
    node_values = vals.ravel(order="F")
    first = (np.arange(nx - 1)[:, None] + nx * np.arange(ny - 1)[None, :]).ravel(order="F")
    quads = np.column_stack([first, first + 1, first + 1 + nx, first + nx])
    quads = quads[np.isfinite(node_values[quads]).all(axis=1)]
    if len(quads) == 0:
        raise InterpError(
            f"the grid has no cell with values at all four corners in field {name!r}: "
            "nothing to draw as a surface"
        )
    surface = pv.PolyData.from_regular_faces(pts, quads)
    surface.point_data[_S] = node_values
    return _Scene(surface, surface.extract_all_edges(), None, pts, node_values, label, True, lo, hi)


def _difference(upper: Field | float, lower: Field | float) -> Field:
    fields = [f for f in (upper, lower) if isinstance(f, Field)]
    if not fields:
        raise InterpError(
            f"show_difference needs at least one Field; got two constants ({upper!r} and {lower!r})"
        )
    for f in fields:
        if f.n_components != 1:
            raise InterpError(
                f"a difference of surfaces needs scalar fields; {f.name or 'a field'} has "
                f"{f.n_components} components"
            )
    base = fields[0]

    def at_nodes(f: Field | float) -> np.ndarray:
        if isinstance(f, Field):
            return f.values if f.mesh is base.mesh else f(base.mesh.points)
        try:
            level = float(f)
        except (TypeError, ValueError):
            level = np.nan
        if not np.isfinite(level):
            raise InterpError(f"a constant level must be a finite number; got {f!r}")
        return np.full(base.mesh.n_nodes, level)

    def name(f: Field | float, default: str) -> str:
        return (f.name or default) if isinstance(f, Field) else f"{float(f):g}"

    units = next((f.units for f in fields if f.units), None)
    return Field(
        base.mesh,
        at_nodes(upper) - at_nodes(lower),
        name=f"{name(upper, 'upper')} - {name(lower, 'lower')}",
        units=units,
    )


def _volumes_text(volumes: object) -> str:
    try:
        parts = [(k, float(getattr(volumes, k))) for k in ("above", "below", "net", "area")]
    except (AttributeError, TypeError, ValueError):
        raise InterpError(
            "volumes must have numeric attributes above, below, net and area (as the result "
            f"of interp.volume_between); got a {type(volumes).__name__}"
        ) from None
    return "   ".join(f"{k} {v:.6g}" for k, v in parts)


def _profile_arrays(profile: object) -> tuple[np.ndarray, np.ndarray, dict[str, np.ndarray]]:
    try:
        dist = np.asarray(profile.distance, dtype=np.float64)
        pts = np.asarray(profile.points, dtype=np.float64)
        fields = getattr(profile, "fields", None) or {
            getattr(profile, "name", None) or "value": profile.values
        }
        fields = {k: np.asarray(v, dtype=np.float64) for k, v in fields.items()}
    except AttributeError:
        raise InterpError(
            "a profile needs attributes distance, points and values (as interp.profile's "
            f"result); got a {type(profile).__name__}"
        ) from None
    n = dist.shape[0] if dist.ndim == 1 else -1
    shapes = [v.shape for v in fields.values()]
    if n < 2 or pts.shape[:1] != (n,) or pts.ndim != 2 or any(s[:1] != (n,) for s in shapes):
        raise InterpError(
            f"a profile needs at least 2 samples with one distance, point and value each; "
            f"got distance {dist.shape}, points {pts.shape}, values {shapes}"
        )
    return dist, pts, fields


def _project(
    start: float, line: np.ndarray, data: tuple[object, object]
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Distance along a polyline (from ``start`` at its first vertex) of each data point's
    nearest point on it, the distance from the line, and the data values."""
    pts = np.asarray(data[0], dtype=np.float64)
    vals = np.asarray(data[1], dtype=np.float64).reshape(-1)
    if pts.ndim != 2 or pts.shape[1] != line.shape[1] or len(pts) != len(vals):
        raise InterpError(
            f"data must be (points (k, {line.shape[1]}), values (k,)) like the profile's "
            f"points; got points {pts.shape} and values {vals.shape}"
        )
    a, ab = line[:-1], np.diff(line, axis=0)
    length2 = np.einsum("sg,sg->s", ab, ab)
    chainage = start + np.concatenate([[0.0], np.cumsum(np.sqrt(length2))])
    t = np.einsum("ksg,sg->ks", pts[:, None, :] - a[None], ab) / np.where(length2 > 0, length2, 1)
    t = np.clip(t, 0.0, 1.0)
    gap = np.linalg.norm(pts[:, None, :] - (a[None] + t[..., None] * ab[None]), axis=2)
    seg = np.argmin(gap, axis=1)
    rows = np.arange(len(pts))
    along = chainage[seg] + t[rows, seg] * np.sqrt(length2[seg])
    return along, gap[rows, seg], vals


# --- drawing --------------------------------------------------------------------------


def _headless() -> bool:
    """True on Linux when neither an X11 nor a Wayland display is set."""
    return sys.platform.startswith("linux") and not (
        os.environ.get("DISPLAY") or os.environ.get("WAYLAND_DISPLAY")
    )


def _off_screen(screenshot: str | Path | None) -> bool:
    return screenshot is not None or _headless()


def _plotter(window_size: tuple[int, int], off_screen: bool | None) -> pyvista.Plotter:
    size = tuple(int(v) for v in np.asarray(window_size).reshape(-1))
    if len(size) != 2 or min(size) < 1:
        raise InterpError(f"window_size must be (width, height) in pixels; got {window_size!r}")
    headless = _headless()
    if headless:
        # no X server to try: go straight to EGL (VTK still falls back to OSMesa)
        os.environ.setdefault("VTK_DEFAULT_OPENGL_WINDOW", "vtkEGLRenderWindow")
    import pyvista as pv

    if headless:
        pv.OFF_SCREEN = True
    off = headless or bool(off_screen)
    plotter = pv.Plotter(off_screen=off, window_size=size, theme=pv.themes.DocumentTheme())
    if (
        off
        and plotter.ren_win.GetClassName() == "vtkOSOpenGLRenderWindow"
        and ctypes.util.find_library("OSMesa") is None
    ):
        plotter.close()
        raise RenderingUnavailable(_OFFSCREEN_HELP)
    return plotter


def _levels(levels: int | list[float], lo: float, hi: float, what: str) -> np.ndarray:
    if isinstance(levels, (int, np.integer)) and not isinstance(levels, bool):
        if levels < 1:
            raise InterpError(f"{what}: give a number of levels >= 1 or a list; got {levels}")
        return np.linspace(lo, hi, int(levels) + 2)[1:-1]
    out = np.asarray(levels, dtype=np.float64).reshape(-1)
    if out.size == 0 or not np.isfinite(out).all():
        raise InterpError(f"{what}: levels must be finite numbers; got {levels!r}")
    return np.sort(out)


def _lifted(poly: pyvista.DataSet, warp: float | None) -> pyvista.DataSet:
    """A copy with z = warp * value (unchanged when not warped)."""
    if warp is None:
        return poly
    out = poly.copy()
    out.points[:, 2] = warp * np.asarray(out[_S])
    return out


def _heights(scene: _Scene, xy: np.ndarray) -> np.ndarray:
    """Value of the drawn surface at points (x, y); the lowest value where it has none."""
    import pyvista as pv

    probe = pv.PolyData(np.column_stack([xy, np.zeros(len(xy))])).sample(scene.surface)
    found = np.asarray(probe["vtkValidPointMask"], dtype=bool)
    return np.where(found, np.asarray(probe[_S]), scene.lo)


def _markers(scene: _Scene, points: bool | object, warp: float | None) -> np.ndarray:
    if points is True:
        if scene.node_values is None:
            return scene.nodes
        keep = np.isfinite(scene.node_values)
        xyz = scene.nodes[keep]
        if warp is not None:
            xyz[:, 2] = warp * scene.node_values[keep]
        return xyz
    arr = np.asarray(points, dtype=np.float64)
    cols = (2, 3) if scene.flat else (3,)
    if arr.ndim != 2 or arr.shape[1] not in cols or not np.isfinite(arr).all():
        want = "(n, 2) or (n, 3) with x, y(, value)" if scene.flat else "(n, 3)"
        raise InterpError(f"points must be True or a finite {want} array; got shape {arr.shape}")
    if not scene.flat:
        return arr
    z = np.zeros(len(arr))
    if warp is not None:
        z = warp * (arr[:, 2] if arr.shape[1] == 3 else _heights(scene, arr[:, :2]))
    return np.column_stack([arr[:, :2], z])


def _region_lines(scene: _Scene, region: object, warp: float | None) -> pyvista.PolyData:
    import pyvista as pv

    if not scene.flat:
        raise InterpError("a region outline is drawn on 2D pictures only; this one is 3D")
    if hasattr(region, "exterior"):
        rings = [region.exterior, *region.holes]
    else:
        rings = [as_ring(region, "region")]
    parts = []
    for ring in rings:
        closed = np.vstack([ring, ring[:1]])
        if warp is not None:
            step = 0.005 * float(np.ptp(scene.nodes[:, :2], axis=0).max())
            seg = np.linalg.norm(np.diff(closed, axis=0), axis=1)
            n = np.maximum(1, np.ceil(seg / step).astype(np.int64))
            t = np.concatenate([np.arange(k) / k for k in n])
            start = np.repeat(np.arange(len(seg)), n)
            closed = closed[start] + t[:, None] * (closed[start + 1] - closed[start])
            closed = np.vstack([closed, closed[:1]])
        z = np.zeros(len(closed)) if warp is None else warp * _heights(scene, closed)
        parts.append(pv.lines_from_points(np.column_stack([closed, z])))
    return pv.merge(parts) if len(parts) > 1 else parts[0]


def _planes(volume: pyvista.DataSet, slices: int | list | None) -> list[tuple]:
    box = np.array(volume.bounds, dtype=np.float64).reshape(3, 2)
    centre = box.mean(axis=1)
    if slices is None:
        return [(centre, np.eye(3)[a]) for a in range(3)]
    if isinstance(slices, (int, np.integer)) and not isinstance(slices, bool):
        if slices < 1:
            raise InterpError(f"slices: give a number of planes >= 1 or a list; got {slices}")
        axis = int(np.argmax(box[:, 1] - box[:, 0]))
        out = []
        for pos in np.linspace(box[axis, 0], box[axis, 1], int(slices) + 2)[1:-1]:
            origin = centre.copy()
            origin[axis] = pos
            out.append((origin, np.eye(3)[axis]))
        return out
    out = []
    for k, plane in enumerate(slices):
        try:
            origin, normal = (np.asarray(v, dtype=np.float64).reshape(3) for v in plane)
        except (TypeError, ValueError):
            raise InterpError(
                f"slice {k} must be (origin, normal), two 3-vectors; got {plane!r}"
            ) from None
        if not (np.isfinite(origin).all() and np.isfinite(normal).all() and normal.any()):
            raise InterpError(f"slice {k} needs a finite origin and a non-zero normal")
        out.append((origin, normal))
    return out


def _draw(
    plotter: pyvista.Plotter,
    scene: _Scene,
    *,
    warp: float | None,
    contours: int | list[float] | None,
    edges: bool,
    points: bool | object | None,
    region: object | None,
    slices: int | list | None,
    isosurfaces: int | list[float] | None,
    cmap: str | None,
    clim: tuple[float, float] | None,
    diverging: bool,
) -> None:
    import pyvista as pv

    if scene.label is None:
        for option, given in (
            ("warp", warp),
            ("contours", contours),
            ("isosurfaces", isosurfaces),
            ("slices", slices),
        ):
            if given is not None:
                raise InterpError(f"{option} needs a field; this mesh carries none")
    if warp is not None:
        if not scene.flat:
            raise InterpError("warp lifts 2D data by its value; this picture is 3D")
        warp = float(warp)
        if not np.isfinite(warp) or warp == 0:
            raise InterpError(f"warp must be a finite non-zero factor; got {warp}")
    if scene.volume is None and (slices is not None or isosurfaces is not None):
        raise InterpError(
            "slices and isosurfaces cut volumes (tetrahedra or a 3D grid); this picture has none"
        )
    if scene.surface is None and contours is not None:
        raise InterpError("contours are drawn on surfaces; for a 3D grid use isosurfaces")
    colour = _colouring(scene, cmap, clim, diverging)
    cuts = scene.volume is not None and (slices is not None or isosurfaces is not None)
    if scene.surface is not None:
        actor = plotter.add_mesh(
            _lifted(scene.surface, warp),
            name="surface",
            opacity=0.3 if cuts else 1.0,
            smooth_shading=warp is not None,
            **(colour or {"color": "lightgrey"}),
        )
        # push polygons back so that lines and points lying on the surface stay visible
        actor.mapper.resolve = "polygon_offset"
    if scene.surface is None or slices is not None:
        cut = [scene.volume.slice(normal=n, origin=o) for o, n in _planes(scene.volume, slices)]
        cut = [c for c in cut if c.n_points]
        if cut:
            plotter.add_mesh(
                pv.merge(cut), name="slices", lighting=False, nan_opacity=0.0, **colour
            )
    if scene.surface is None:
        plotter.add_mesh(scene.volume.outline(), name="frame", color="black")
    if isosurfaces is not None:
        levels = _levels(isosurfaces, scene.lo, scene.hi, "isosurfaces")
        iso = scene.volume.contour(isosurfaces=levels, scalars=_S)
        if iso.n_points:
            plotter.add_mesh(iso, name="isosurfaces", opacity=0.7, **colour)
    lines = {}
    if contours is not None:
        levels = _levels(contours, scene.lo, scene.hi, "contours")
        lines["contours"] = (scene.surface.contour(isosurfaces=levels, scalars=_S), "black", 1.5)
    if (edges or scene.label is None) and scene.edges is not None:
        lines["edges"] = (scene.edges, "#505050", 1.0)
    if region is not None:
        lines["region"] = (_region_lines(scene, region, warp), "red", 3.0)
    for name, (data, color, width) in lines.items():
        if data.n_points:
            data = data if name == "region" else _lifted(data, warp)
            plotter.add_mesh(data, name=name, color=color, line_width=width, lighting=False)
    if points is not None and points is not False:
        plotter.add_mesh(
            pv.PolyData(_markers(scene, points, warp)),
            name="points",
            color="black",
            point_size=7,
            render_points_as_spheres=True,
        )
    if colour:
        plotter.add_scalar_bar(
            title=scene.label,
            mapper=_first_mapper(plotter),
            n_labels=5,
            fmt="%.4g",
            vertical=True,
            position_x=0.82,
            position_y=0.2,
            height=0.6,
            width=0.05,
            title_font_size=_font(plotter, 1 / 40),
            label_font_size=_font(plotter, 1 / 45),
        )
    _axes(plotter, scene, warp)


def _colouring(
    scene: _Scene, cmap: str | None, clim: tuple[float, float] | None, diverging: bool
) -> dict:
    """add_mesh options colouring by the field (empty when there is no field)."""
    if scene.label is None:
        return {}
    if clim is None:
        lo, hi = scene.lo, scene.hi
        if diverging:
            lo, hi = -max(abs(lo), abs(hi)), max(abs(lo), abs(hi))
        if lo == hi:
            pad = 0.5 * abs(lo) or 0.5
            lo, hi = lo - pad, hi + pad
        clim = (lo, hi)
    pair = np.asarray(clim, dtype=np.float64).reshape(-1)
    if pair.size != 2 or not np.isfinite(pair).all() or pair[0] >= pair[1]:
        raise InterpError(f"clim must be (low, high) with finite low < high; got {clim!r}")
    return {
        "scalars": _S,
        "cmap": cmap or (DIVERGING_CMAP if diverging else CMAP),
        "clim": (float(pair[0]), float(pair[1])),
        "show_scalar_bar": False,
    }


def _axes(plotter: pyvista.Plotter, scene: _Scene, warp: float | None) -> None:
    """Axes with coordinates (values on the vertical axis of a warped surface), and the
    camera: a map seen from above, or a view from the south-west."""
    flat = scene.flat and warp is None
    box = np.array(plotter.bounds, dtype=np.float64)
    if warp is not None:
        box[4:] = box[4:] / warp
    plotter.show_bounds(
        axes_ranges=box.tolist(),
        xtitle="x",
        ytitle="y",
        ztitle="z" if warp is None else scene.label,
        show_zaxis=not flat,
        location="outer",
        font_size=_font(plotter, 1 / 60),
        fmt="%.4g",
    )
    if flat:
        plotter.enable_parallel_projection()
        plotter.view_xy()
    else:
        plotter.view_vector((-0.8, -1.6, 1.8), viewup=(0.0, 0.0, 1.0))
    plotter.camera.zoom(0.9)
    if scene.label is not None:
        _shift_left(plotter.camera, plotter.window_size, 0.08)


def _shift_left(camera: object, window_size: list[int], fraction: float) -> None:
    """Pan the view so the picture moves left by ``fraction`` of its width (room for the
    colour bar on the right)."""
    position, focal = np.array(camera.position), np.array(camera.focal_point)
    ahead = focal - position
    if camera.parallel_projection:
        height = 2.0 * camera.parallel_scale
    else:
        height = 2.0 * np.linalg.norm(ahead) * np.tan(np.radians(camera.view_angle) / 2)
    right = np.cross(ahead, camera.up)
    step = fraction * height * window_size[0] / window_size[1] * right / np.linalg.norm(right)
    camera.position, camera.focal_point = position + step, focal + step


def _caption(plotter: pyvista.Plotter, text: str, name: str, top: bool = False) -> None:
    """A line of text centred at the top (a title) or small at the bottom left, sized to
    fit the picture's width."""
    width = plotter.window_size[0]
    # a character is about as wide as the font size in pixels
    size = min(_font(plotter, 1 / 40 if top else 1 / 70), width // max(1, len(text)))
    actor = plotter.add_text(
        text,
        position=(0.5, 0.985) if top else (0.01, 0.01),
        viewport=True,
        font_size=max(6, size),
        name=name,
    )
    actor.prop.justification_horizontal = "center" if top else "left"
    actor.prop.justification_vertical = "top" if top else "bottom"


def _font(plotter: pyvista.Plotter, fraction: float) -> int:
    """A font size in points, a fraction of the picture's height (at least 7)."""
    return max(7, round(plotter.window_size[1] * fraction))


def _first_mapper(plotter: pyvista.Plotter) -> object:
    for key in ("surface", "slices", "isosurfaces"):
        if key in plotter.actors:
            return plotter.actors[key].mapper
    raise InterpError("nothing coloured by the field was drawn: the slices miss the data")


# --- output ---------------------------------------------------------------------------


def _png_path(screenshot: str | Path | None, default: str) -> Path:
    if screenshot is None:
        path = Path.cwd() / default
        warnings.warn(
            f"no display found: the picture is written to {path}; pass screenshot= to choose "
            "the file",
            stacklevel=4,
        )
    else:
        path = Path(screenshot)
    if path.suffix.lower() != ".png":
        raise InterpError(f"pictures are written as PNG: give a .png path, not {path.name!r}")
    return path


def _finish_plotter(
    plotter: pyvista.Plotter, screenshot: str | Path | None, default: str
) -> Path | None:
    if not plotter.off_screen:
        plotter.show()
        return None
    path = _png_path(screenshot, default)
    image = plotter.screenshot(return_img=True)
    plotter.close()
    from PIL import Image

    from interp.io import atomic_path

    with atomic_path(path) as tmp:
        Image.fromarray(np.asarray(image)).save(tmp, format="PNG")
    return path


def _figure(figsize: tuple[float, float]) -> Figure:
    """A matplotlib figure: through pyplot when a window may open, else a bare Agg figure."""
    if _headless():
        from matplotlib.figure import Figure

        return Figure(figsize=figsize, dpi=DPI)
    import matplotlib.pyplot as plt

    return plt.figure(figsize=figsize, dpi=DPI)


def _finish_figure(fig: Figure, screenshot: str | Path | None, default: str) -> Path | None:
    if screenshot is None and not _headless():
        import matplotlib.pyplot as plt

        plt.show()
        return None
    path = _png_path(screenshot, default)
    from interp.io import atomic_path

    with atomic_path(path) as tmp:
        fig.savefig(tmp, format="png", dpi=DPI)
    if fig.canvas.manager is not None:
        import matplotlib.pyplot as plt

        plt.close(fig)
    return path
