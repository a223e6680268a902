"""Pictures: surfaces and volumes of fields, meshes and grids, differences, sections, residuals.

Look at an interpolated surface before trusting a number taken from it: a
spike from a bad survey point, a triangle spanning a gap or a volume over the
wrong boundary shows at once in a picture.

pyvista (VTK) draws surfaces and volumes, matplotlib draws sections and
residual maps.  Both are the ``view`` extra (``pip install -e '.[view]'``)
and are imported only when a picture is made, never by ``import interp``.

Every picture has a builder returning the pyvista ``Plotter`` or matplotlib
``Figure`` (to add to it, inspect it or save it another way) and a ``show``
function that opens a window or writes a PNG (all four pairs are also in
``interp``):

- :func:`plot` / :func:`show`: a field, mesh, grid or mesh file (pyvista);
- :func:`plot_difference` / :func:`show_difference`: two surfaces (pyvista);
- :func:`plot_profile` / :func:`show_profile`: a section (matplotlib);
- :func:`plot_residuals` / :func:`show_residuals`: residuals (matplotlib).

The actors of a pyvista picture are named in ``plotter.actors``:
``"surface"``, ``"edges"``, ``"contours"`` (over ``"contour-halo"``, labelled by
``"contour-labels"``), ``"points"``, ``"region"``, ``"breaklines"`` (over
``"breakline-halo"``, named in the legend ``"legend"``),
``"frame"`` (the box of a 3D grid), ``"slices"`` and ``"isosurfaces"``.

Without a display (Linux with neither ``DISPLAY`` nor ``WAYLAND_DISPLAY``
set) pictures are rendered off screen and written as PNG files.  VTK then
renders with EGL (Debian/Ubuntu packages ``libegl1`` and ``libgl1-mesa-dri``,
software rendering, no GPU needed) and falls back to OSMesa
(``libosmesa6``); no virtual display is needed.

Modules: :mod:`interp.view._surfaces` (pyvista pictures),
:mod:`interp.view._look` (offset axes, tick formats, labelled contours, captions),
:mod:`interp.view._charts` (matplotlib charts), :mod:`interp.view._scenes`
(inputs as pyvista data), :mod:`interp.view._p2` (P2 subdivision),
:mod:`interp.view._difference` (surface difference) and
:mod:`interp.view._render` (display probe, EGL, PNG output).
"""

from interp.view._charts import (
    PROFILE_TOLERANCE,
    plot_profile,
    plot_residuals,
    show_profile,
    show_residuals,
)
from interp.view._p2 import MAX_SUBCELLS, P2_SUBDIVISION
from interp.view._render import DPI
from interp.view._surfaces import (
    CMAP,
    DIVERGING_CMAP,
    plot,
    plot_difference,
    show,
    show_difference,
)

__all__ = [
    "CMAP",
    "DIVERGING_CMAP",
    "DPI",
    "MAX_SUBCELLS",
    "P2_SUBDIVISION",
    "PROFILE_TOLERANCE",
    "plot",
    "plot_difference",
    "plot_profile",
    "plot_residuals",
    "show",
    "show_difference",
    "show_profile",
    "show_residuals",
]
