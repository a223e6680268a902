"""The finished look of the pyvista pictures: short coordinates on the axes with the offset
stated in the axis title, tick formats from the range shown, contour lines drawn light over
a dark halo and labelled with their level, markers that leave the surface visible, captions
and the camera."""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from interp.view._p2 import SCALARS
from interp.view._scenes import Scene

if TYPE_CHECKING:
    import pyvista

#: contour lines: a light line over a dark, wider halo, readable on the dark and the light
#: ends of a colour map alike.
CONTOUR_LIGHT, CONTOUR_DARK = "white", "#1a1a1a"
#: breaklines: magenta, a hue of neither colour map (nor of the grey cell edges or the red
#: region outline), over a dark halo that keeps them readable on the light end of the map.
BREAKLINE_COLOUR, BREAKLINE_HALO = "#ff00ff", CONTOUR_DARK
#: data point markers: small, dark and half transparent, so the surface shows through.
MARKERS = {"color": "#1a1a1a", "point_size": 5, "opacity": 0.55}
#: coordinates from this size on are shown relative to a round offset when their range is
#: small beside them (survey coordinates such as 512000..512600 would read 5.12e+05).
OFFSET_FROM = 1e4
#: the minus sign of axis titles such as "x - 512000" (VTK's own font has no U+2212).
MINUS = "-"


def axis_offset(lo: float, hi: float) -> float:
    """A round number to subtract from coordinates lo..hi so that ticks stay short, or 0
    when they are short already (below :data:`OFFSET_FROM`, or a range wide beside them).

    Examples
    --------
    >>> axis_offset(512003.2, 512600.0), axis_offset(4180000.0, 4180400.0), axis_offset(0.0, 90)
    (512000.0, 4180000.0, 0.0)
    """
    big, span = max(abs(lo), abs(hi)), hi - lo
    if big < OFFSET_FROM or big < 20 * span:
        return 0.0
    step = 10.0 ** np.ceil(np.log10(span)) if span > 0 else 10.0 ** np.floor(np.log10(big))
    return float(np.floor(lo / step) * step)


def decimals(span: float) -> int:
    """Decimal places that tell apart about five ticks over a range of ``span``.

    Examples
    --------
    >>> decimals(600.0), decimals(5.6), decimals(0.4), decimals(0.0)
    (0, 1, 2, 0)
    """
    if not span > 0:
        return 0
    return int(min(6, max(0, 1 - np.floor(np.log10(span)))))


def tick_decimals(lo: float, hi: float, n: int) -> int:
    """Decimal places that write the n evenly spaced ticks from lo to hi exactly, up to 2;
    ticks that need more (a range of data, 99.653..106.715) get the places of :func:`decimals`
    for their step, which tell neighbouring ticks apart.

    Examples
    --------
    >>> tick_decimals(0.0, 90.0, 5), tick_decimals(0.0, 600.0, 5), tick_decimals(99.653, 106.715, 3)
    (1, 0, 1)
    """
    ticks = np.linspace(lo, hi, n)
    for places in range(3):
        if np.allclose(np.round(ticks, places), ticks, rtol=0, atol=1e-9 * max(1.0, hi - lo)):
            return places
    return decimals((hi - lo) / max(1, n - 1))


def axis_title(name: str, offset: float, units: str | None = None) -> str:
    """``name``, or ``name − offset`` when the axis shows coordinates less an offset, then
    the coordinates' units in brackets when they are known.

    Examples
    --------
    >>> axis_title("x", 512000.0), axis_title("y", 0.0), axis_title("x", 512000.0, "m")
    ('x - 512000', 'y', 'x - 512000 (m)')
    """
    title = f"{name} {MINUS} {offset:.12g}" if offset else name
    return f"{title} ({units})" if units else title


def axes_and_camera(
    plotter: pyvista.Plotter, scene: Scene, warp: float | None, units: str | None = None
) -> None:
    """Axes with local coordinates (values on the vertical axis of a warped surface), titled
    with the coordinates' ``units`` when known, and the camera: a map seen from above, or a
    view from the south-west."""
    flat = scene.flat and warp is None
    box = np.array(plotter.bounds, dtype=np.float64).reshape(3, 2)
    if warp is not None:
        box[2] = box[2] / warp
    offsets = [axis_offset(lo, hi) for lo, hi in box]
    shown = box - np.array(offsets)[:, None]
    counts = (5, 5, 3)
    drawn = 2 if flat else 3
    places = max(
        tick_decimals(lo, hi, k) for (lo, hi), k in zip(shown[:drawn], counts[:drawn], strict=True)
    )
    plotter.show_bounds(
        axes_ranges=shown.ravel().tolist(),
        xtitle=axis_title("x", offsets[0], units),
        ytitle=axis_title("y", offsets[1], units),
        ztitle=(
            axis_title("z", offsets[2], units)
            if warp is None
            else axis_title(scene.label, offsets[2])
        ),
        show_zaxis=not flat,
        n_xlabels=counts[0],
        n_ylabels=counts[1],
        n_zlabels=counts[2],
        location="outer",
        font_size=font(plotter, 1 / 60),
        fmt=f"%.{places}f",
    )
    if flat:
        plotter.enable_parallel_projection()
        plotter.view_xy()
    else:
        plotter.view_vector((-0.8, -1.6, 1.8), viewup=(0.0, 0.0, 1.0))
    plotter.camera.zoom(0.9)
    if scene.label is not None:
        shift_left(plotter.camera, plotter.window_size, 0.08)


def add_contours(
    plotter: pyvista.Plotter, lines: pyvista.PolyData, levels: np.ndarray, width: float
) -> None:
    """Contour lines (actor ``"contours"``) over a dark halo (``"contour-halo"``), each
    level labelled once with its value (``"contour-labels"``)."""
    plotter.add_mesh(
        lines, name="contour-halo", color=CONTOUR_DARK, line_width=width + 2.5, lighting=False
    )
    plotter.add_mesh(lines, name="contours", color=CONTOUR_LIGHT, line_width=width, lighting=False)
    values = np.asarray(lines[SCALARS])
    step = float(np.diff(levels).min()) if len(levels) > 1 else abs(float(levels[0]))
    places = decimals(step)
    where, text = [], []
    for level in levels:
        on = np.flatnonzero(np.isclose(values, level, rtol=0, atol=1e-9 * max(1, abs(level))))
        if on.size:
            where.append(lines.points[on[on.size // 2]])
            text.append(f"{level:.{places}f}")
    if where:
        plotter.add_point_labels(
            np.array(where),
            text,
            name="contour",
            font_size=font(plotter, 1 / 55),
            text_color="black",
            shape_color="white",
            shape_opacity=0.75,
            margin=2,
            show_points=False,
            always_visible=True,
        )


def shift_left(camera: object, window_size: list[int], fraction: float) -> None:
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


def caption(plotter: pyvista.Plotter, text: str, name: str, top: bool = False) -> None:
    """A line of text centred at the top (a title) or small at the bottom left, sized to
    fit the picture's width."""
    width = plotter.window_size[0]
    # a character is about as wide as the font size in pixels
    size = min(font(plotter, 1 / 40 if top else 1 / 70), width // max(1, len(text)))
    actor = plotter.add_text(
        text,
        position=(0.5, 0.985) if top else (0.01, 0.01),
        viewport=True,
        font_size=max(6, size),
        name=name,
    )
    actor.prop.justification_horizontal = "center" if top else "left"
    actor.prop.justification_vertical = "top" if top else "bottom"


def font(plotter: pyvista.Plotter, fraction: float) -> int:
    """A font size in points, a fraction of the picture's height (at least 7)."""
    return max(7, round(plotter.window_size[1] * fraction))
