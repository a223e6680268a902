"""Surfaces and volumes drawn with pyvista: fields, meshes, grids and differences."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from interp._breaklines import as_lines
from interp._renamed import renamed
from interp.errors import InterpError
from interp.field import Field
from interp.polygon import as_ring
from interp.view._difference import surface_difference, volumes_text
from interp.view._look import (
    BREAKLINE_COLOUR,
    BREAKLINE_HALO,
    MARKERS,
    add_contours,
    axes_and_camera,
    caption,
    font,
    tick_decimals,
)
from interp.view._p2 import SCALARS
from interp.view._render import finish_plotter, new_plotter, off_screen_for
from interp.view._scenes import Scene, coordinate_units_of, scene_of

if TYPE_CHECKING:
    import pyvista

#: default colour map: perceptually uniform, readable in grey scale.
CMAP = "viridis"
#: colour map for differences and residuals, centred on zero.
DIVERGING_CMAP = "RdBu_r"
#: depth offsets (in units of the depth buffer's resolution) of lines drawn over cell edges
FRONT = {"breakline-halo": -20, "breaklines": -40}
#: width and height of the legend, as fractions of the picture's
LEGEND_SIZE = (0.16, 0.05)
#: the most contour levels or isosurfaces drawn: more would merge into a solid tint.
MAX_LEVELS = 100


@renamed(field="name")
def plot(
    obj: object,
    *,
    name: str | None = None,
    warp: float | None = None,
    contours: int | list[float] | None = None,
    edges: bool = False,
    points: bool | np.ndarray | None = None,
    region: object | None = None,
    breaklines: object | None = None,
    slices: int | list | None = None,
    isosurfaces: int | list[float] | None = None,
    window_size: tuple[int, int] = (1200, 900),
    cmap: str | None = None,
    clim: tuple[float, float] | None = None,
    diverging: bool = False,
    title: str | None = None,
    coordinate_units: str | None = None,
    off_screen: bool | None = None,
) -> pyvista.Plotter:
    """Build the picture of a field, mesh, grid or mesh file as a pyvista Plotter.

    Parameters
    ----------
    obj : Field, Mesh, Grid, str or Path
        What to draw.  A path is read with :func:`interp.io.read`; a Mesh without
        a field, or a file without point data, draws the mesh edges.
    name : str, optional
        Which field of a Grid or file to draw, by name (default the first).
        (``field=`` is the old spelling of this keyword.)
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
    breaklines : list of array_like (k, 2) or (k, 3), optional
        2D only: breaklines (as :func:`interp.read_lines` returns them), drawn
        in magenta over a dark halo, apart from the grey cell edges and the red
        region outline, and named in a legend; a warped picture drapes them
        on the surface.
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
        Text above the picture (default the field's name and units; ``""`` for none).
    coordinate_units : str, optional
        Units of the coordinates (``"m"``), added to the axis titles:
        ``x - 512000 (m)``; default the unit of a Grid's projected ``crs``
        (none without one).  The field's own units go on the colour bar.
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
    scene = scene_of(obj, name)
    if coordinate_units is None:
        coordinate_units = coordinate_units_of(obj)
    plotter = new_plotter(window_size, off_screen)
    try:
        _draw(
            plotter,
            scene,
            warp=warp,
            contours=contours,
            edges=edges,
            points=points,
            region=region,
            breaklines=breaklines,
            slices=slices,
            isosurfaces=isosurfaces,
            cmap=cmap,
            clim=clim,
            diverging=diverging,
            coordinate_units=coordinate_units,
        )
    except BaseException:
        plotter.close()
        raise
    if title is None:
        title = scene.label or "mesh"
    if title:
        caption(plotter, title, "title", top=True)
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
        The keywords of :func:`plot` (name, warp, contours, edges, points,
        region, breaklines, slices, isosurfaces, window_size, cmap, clim,
        diverging, title, coordinate_units) except off_screen.

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
    plotter = plot(obj, off_screen=off_screen_for(screenshot), **options)
    return finish_plotter(plotter, screenshot, "interp-view.png")


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
    coordinate_units: str | None = None,
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
    region, warp, contours, edges, points, window_size, coordinate_units, off_screen
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
    diff = surface_difference(upper, lower)
    if title is None:
        title = volumes_text(volumes) if volumes is not None else diff.name
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
        coordinate_units=coordinate_units,
        off_screen=off_screen,
    )
    if volumes is not None:
        caption(plotter, "check volumes independently before use for payment or design", "caution")
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
    warp, contours, edges, points, window_size, title, coordinate_units); ``screenshot`` and the
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
    plotter = plot_difference(upper, lower, off_screen=off_screen_for(screenshot), **options)
    return finish_plotter(plotter, screenshot, "interp-difference.png")


def levels_of(levels: int | list[float], lo: float, hi: float, what: str) -> np.ndarray:
    if isinstance(levels, (int, np.integer)) and not isinstance(levels, bool):
        if not 1 <= levels <= MAX_LEVELS:
            raise InterpError(
                f"{what}: give a number of levels from 1 to {MAX_LEVELS} (more merge into a "
                f"solid tint), or a list of levels; got {levels}"
            )
        return np.linspace(lo, hi, int(levels) + 2)[1:-1]
    out = np.asarray(levels, dtype=np.float64).reshape(-1)
    if out.size == 0 or not np.isfinite(out).all():
        raise InterpError(f"{what}: levels must be finite numbers; got {levels!r}")
    if out.size > MAX_LEVELS:
        raise InterpError(f"{what}: at most {MAX_LEVELS} levels are drawn; got {out.size}")
    return np.sort(out)


def _lifted(poly: pyvista.DataSet, warp: float | None) -> pyvista.DataSet:
    """A copy with z = warp * value (unchanged when not warped)."""
    if warp is None:
        return poly
    out = poly.copy()
    out.points[:, 2] = warp * np.asarray(out[SCALARS])
    return out


def _heights(scene: Scene, xy: np.ndarray) -> np.ndarray:
    """Value of the drawn surface at points (x, y); the lowest value where it has none."""
    import pyvista as pv

    probe = pv.PolyData(np.column_stack([xy, np.zeros(len(xy))])).sample(scene.surface)
    found = np.asarray(probe["vtkValidPointMask"], dtype=bool)
    return np.where(found, np.asarray(probe[SCALARS]), scene.lo)


def _markers(scene: Scene, points: bool | object, warp: float | None) -> np.ndarray:
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


def _region_lines(scene: Scene, region: object, warp: float | None) -> pyvista.PolyData:
    if not scene.flat:
        raise InterpError("a region outline is drawn on 2D pictures only; this one is 3D")
    if hasattr(region, "exterior"):
        rings = [region.exterior, *region.holes]
    else:
        rings = [as_ring(region, "region")]
    return _polylines(scene, [np.vstack([ring, ring[:1]]) for ring in rings], warp)


def _breakline_lines(scene: Scene, breaklines: object, warp: float | None) -> pyvista.PolyData:
    if not scene.flat:
        raise InterpError("breaklines are drawn on 2D pictures only; this one is 3D")
    return _polylines(scene, [line[:, :2] for line in as_lines(breaklines)], warp)


def _polylines(scene: Scene, lines: list[np.ndarray], warp: float | None) -> pyvista.PolyData:
    """Polylines (k, 2) in the plane of a flat picture, or draped on its warped surface
    (split into pieces of 0.5% of the picture's width, so that they follow it)."""
    import pyvista as pv

    parts = []
    for line in lines:
        if warp is not None:
            step = 0.005 * float(np.ptp(scene.nodes[:, :2], axis=0).max())
            seg = np.linalg.norm(np.diff(line, axis=0), axis=1)
            n = np.maximum(1, np.ceil(seg / step).astype(np.int64))
            t = np.concatenate([np.arange(k) / k for k in n])
            start = np.repeat(np.arange(len(seg)), n)
            pieces = line[start] + t[:, None] * (line[start + 1] - line[start])
            line = np.vstack([pieces, line[-1:]])
        z = np.zeros(len(line)) if warp is None else warp * _heights(scene, line)
        parts.append(pv.lines_from_points(np.column_stack([line, z])))
    return pv.merge(parts) if len(parts) > 1 else parts[0] if parts else pv.PolyData()


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
    for k, plane in enumerate(slices, start=1):
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
    scene: Scene,
    *,
    warp: float | None,
    contours: int | list[float] | None,
    edges: bool,
    points: bool | object | None,
    region: object | None,
    breaklines: object | None,
    slices: int | list | None,
    isosurfaces: int | list[float] | None,
    cmap: str | None,
    clim: tuple[float, float] | None,
    diverging: bool,
    coordinate_units: str | None,
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
        levels = levels_of(isosurfaces, scene.lo, scene.hi, "isosurfaces")
        iso = scene.volume.contour(isosurfaces=levels, scalars=SCALARS)
        if iso.n_points:
            plotter.add_mesh(iso, name="isosurfaces", opacity=0.7, **colour)
    lines = {}
    if contours is not None:
        levels = levels_of(contours, scene.lo, scene.hi, "contours")
        drawn = scene.surface.contour(isosurfaces=levels, scalars=SCALARS)
        if drawn.n_points:
            add_contours(plotter, _lifted(drawn, warp), levels, 1.5)
    if (edges or scene.label is None) and scene.edges is not None:
        lines["edges"] = (scene.edges, "#505050", 1.0)
    if region is not None:
        lines["region"] = (_region_lines(scene, region, warp), "red", 3.0)
    if breaklines is not None:
        drawn = _breakline_lines(scene, breaklines, warp)
        lines["breakline-halo"] = (drawn, BREAKLINE_HALO, 5.5)
        lines["breaklines"] = (drawn, BREAKLINE_COLOUR, 3.0)
    for name, (data, color, width) in lines.items():
        if data.n_points:
            data = _lifted(data, warp) if name == "edges" else data
            actor = plotter.add_mesh(data, name=name, color=color, line_width=width, lighting=False)
            if name in FRONT:
                # breaklines run along cell edges: pull them (the line over its halo) to
                # the front, or the lines would fight over the same depth
                actor.mapper.SetRelativeCoincidentTopologyLineOffsetParameters(0, FRONT[name])
    if "breaklines" in plotter.actors:
        legend = plotter.add_legend(
            [["breaklines", BREAKLINE_COLOUR]],
            bcolor="white",
            border=True,
            face="line",
            size=LEGEND_SIZE,
            name="legend",
        )
        # bottom right, below the colour bar (pyvista's corners let it overhang the picture)
        legend.SetPosition(0.98 - LEGEND_SIZE[0], 0.02)
    if points is not None and points is not False:
        plotter.add_mesh(
            pv.PolyData(_markers(scene, points, warp)),
            name="points",
            render_points_as_spheres=True,
            **MARKERS,
        )
    if colour:
        plotter.add_scalar_bar(
            title=scene.label,
            mapper=_first_mapper(plotter),
            n_labels=5,
            fmt=f"%.{tick_decimals(*colour['clim'], 5)}f",
            vertical=True,
            position_x=0.82,
            position_y=0.2,
            height=0.6,
            width=0.05,
            title_font_size=font(plotter, 1 / 40),
            label_font_size=font(plotter, 1 / 45),
        )
    axes_and_camera(plotter, scene, warp, coordinate_units)


def _colouring(
    scene: Scene, cmap: str | None, clim: tuple[float, float] | None, diverging: bool
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
        "scalars": SCALARS,
        "cmap": cmap or (DIVERGING_CMAP if diverging else CMAP),
        "clim": (float(pair[0]), float(pair[1])),
        "show_scalar_bar": False,
    }


def _first_mapper(plotter: pyvista.Plotter) -> object:
    for key in ("surface", "slices", "isosurfaces"):
        if key in plotter.actors:
            return plotter.actors[key].mapper
    raise InterpError("nothing coloured by the field was drawn: the slices miss the data")
