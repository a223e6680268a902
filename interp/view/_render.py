"""Where pictures go: a window, or a PNG rendered off screen.

The display probe (``DISPLAY`` / ``WAYLAND_DISPLAY``), the EGL / OSMesa
choice of VTK's off-screen window, the pyvista plotter and the matplotlib
figure, and writing either as a PNG atomically.
"""

from __future__ import annotations

import ctypes.util
import os
import sys
import warnings
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from interp.errors import InterpError, RenderingUnavailable

if TYPE_CHECKING:
    import pyvista
    from matplotlib.figure import Figure


#: PNG resolution of matplotlib pictures, dots per inch.
DPI = 100


OFFSCREEN_HELP = (
    "no off-screen OpenGL is available to render the picture: install EGL "
    "(Debian/Ubuntu: apt install libegl1 libgl1-mesa-dri) or OSMesa (apt install "
    "libosmesa6), or run where a display is available"
)


def no_display() -> bool:
    """True on Linux when neither an X11 nor a Wayland display is set."""
    return sys.platform.startswith("linux") and not (
        os.environ.get("DISPLAY") or os.environ.get("WAYLAND_DISPLAY")
    )


def off_screen_for(screenshot: str | Path | None) -> bool:
    return screenshot is not None or no_display()


def new_plotter(window_size: tuple[int, int], off_screen: bool | None) -> pyvista.Plotter:
    size = tuple(int(v) for v in np.asarray(window_size).reshape(-1))
    if len(size) != 2 or min(size) < 1:
        raise InterpError(f"window_size must be (width, height) in pixels; got {window_size!r}")
    headless = no_display()
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
        raise RenderingUnavailable(OFFSCREEN_HELP)
    return plotter


def png_path(screenshot: str | Path | None, default: str) -> Path:
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


def finish_plotter(
    plotter: pyvista.Plotter, screenshot: str | Path | None, default: str
) -> Path | None:
    if not plotter.off_screen:
        plotter.show()
        return None
    path = png_path(screenshot, default)
    image = plotter.screenshot(return_img=True)
    plotter.close()
    from PIL import Image

    from interp.io import atomic_path

    with atomic_path(path) as tmp:
        Image.fromarray(np.asarray(image)).save(tmp, format="PNG")
    return path


def new_figure(figsize: tuple[float, float]) -> Figure:
    """A matplotlib figure: through pyplot when a window may open, else a bare Agg figure."""
    if no_display():
        from matplotlib.figure import Figure

        return Figure(figsize=figsize, dpi=DPI)
    import matplotlib.pyplot as plt

    return plt.figure(figsize=figsize, dpi=DPI)


def finish_figure(fig: Figure, screenshot: str | Path | None, default: str) -> Path | None:
    if screenshot is None and not no_display():
        import matplotlib.pyplot as plt

        plt.show()
        return None
    path = png_path(screenshot, default)
    from interp.io import atomic_path

    with atomic_path(path) as tmp:
        fig.savefig(tmp, format="png", dpi=DPI)
    if fig.canvas.manager is not None:
        import matplotlib.pyplot as plt

        plt.close(fig)
    return path
