"""Charts drawn with matplotlib: sections along a line and residual maps."""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from interp._geometry import polyline_lengths
from interp.errors import InterpError
from interp.view._look import axis_offset, axis_title
from interp.view._render import finish_figure, new_figure
from interp.view._surfaces import DIVERGING_CMAP

if TYPE_CHECKING:
    from matplotlib.figure import Figure

#: survey points within this fraction of a section's length are drawn on it by default.
PROFILE_TOLERANCE = 0.02


def plot_profile(
    profile: object,
    *,
    data: tuple[object, object] | None = None,
    tolerance: float | None = None,
    label: str | None = None,
    title: str | None = None,
    coordinate_units: str | None = None,
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
    coordinate_units : str, optional
        Units of the coordinates, added to the distance axis: ``distance
        along the section (m)``.
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
    fig = new_figure(figsize)
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
    ax.set_xlabel(axis_title("distance along the section", 0.0, coordinate_units))
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
    label, title, coordinate_units, figsize); ``screenshot`` and the result are as for
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
    return finish_figure(plot_profile(profile, **options), screenshot, "interp-profile.png")


def plot_residuals(
    points: object,
    residuals: object,
    *,
    title: str | None = None,
    bins: int | None = None,
    coordinate_units: str | None = None,
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
    coordinate_units : str, optional
        Units of the coordinates, added to the map's axis titles (``x - 512000 (m)``).
    figsize : (float, float)
        Size in inches (100 pixels per inch in a PNG).

    Large coordinates are drawn less a round offset stated on the axis (``x - 512000``).

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
    fig = new_figure(figsize)
    ax_map, ax_hist = fig.subplots(1, 2, gridspec_kw={"width_ratios": [1.2, 1.0]})
    offset = [axis_offset(float(c.min()), float(c.max())) for c in pts[:, :2].T]
    dots = ax_map.scatter(
        pts[:, 0] - offset[0],
        pts[:, 1] - offset[1],
        c=res,
        cmap=DIVERGING_CMAP,
        vmin=-top,
        vmax=top,
        s=16,
        edgecolors="0.3",
        linewidths=0.3,
    )
    ax_map.set_aspect("equal", adjustable="datalim")
    ax_map.ticklabel_format(useOffset=False, style="plain")
    ax_map.set_xlabel(axis_title("x", offset[0], coordinate_units))
    ax_map.set_ylabel(axis_title("y", offset[1], coordinate_units))
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
    coordinate_units, figsize); ``screenshot`` and the result are as for :func:`show`, the
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
    return finish_figure(fig, screenshot, "interp-residuals.png")


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
    length, chainage = polyline_lengths(line)
    chainage = start + chainage
    t = np.einsum("ksg,sg->ks", pts[:, None, :] - a[None], ab) / np.where(length2 > 0, length2, 1)
    t = np.clip(t, 0.0, 1.0)
    gap = np.linalg.norm(pts[:, None, :] - (a[None] + t[..., None] * ab[None]), axis=2)
    seg = np.argmin(gap, axis=1)
    rows = np.arange(len(pts))
    along = chainage[seg] + t[rows, seg] * length[seg]
    return along, gap[rows, seg], vals
