"""The demo: the whole main job on the bundled, invented scenario.

The fictional Tarrow Bend gravel yard was surveyed in March and June 2026; a
base survey of the pad predates the stockpiles.  The demo fits both epochs,
grids them, samples check points, cuts a section through the main pile,
computes the stockpile volumes above the pad and the change between epochs
inside the site boundary, cross-validates the June survey, and integrates
the temperature over a fictional pump bracket (a P2 tetrahedral mesh).  The
north bay, surveyed in September, is fitted with and without its breaklines
(the toe, crest and hips of a pile with plane faces, the toe and top of a
retaining wall), and the pile's volume over the slab is set beside the
closed form of the invented solid.  It writes every output and a summary to
a folder.  The data come from ``scripts/make_demo_data.py``;
``data/scenario.json`` holds the true volumes of the invented piles.
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from pathlib import Path

from interp._breaklines import read_lines
from interp._fit import fit
from interp._integrate import integrate
from interp._validate import crossvalidate, residual_summary
from interp.errors import InterpError, RenderingUnavailable
from interp.field import Field
from interp.grid import to_grid
from interp.io import atomic_path, read, read_points, read_polygon
from interp.regions import Polygon
from interp.resample import profile
from interp.source import sample_file
from interp.volume import volume_between

#: the bundled demo data, beside the package in a source checkout
DATA = Path(__file__).resolve().parents[1] / "data"
#: the section line through the main pile (site grid, metres)
SECTION = [[5.0, 30.0], [65.0, 30.0]]


@dataclass
class Summary:
    """Figures and files produced by :func:`run`."""

    figures: dict = field(default_factory=dict)
    files: list[Path] = field(default_factory=list)

    def text(self) -> str:
        """A readable report of the figures and the files written."""
        f = self.figures
        lines = ["Tarrow Bend yard (invented demo scenario)"]
        for epoch, v in f["volumes"].items():
            lines.append(
                f"  {epoch}: stockpile volume over the pad, net {v['net']:.1f} m3 "
                f"(above {v['above']:.1f}, below {v['below']:.1f}; true volume of the invented "
                f"piles {v['true']:.1f} m3, difference {v['error_percent']:+.2f}%)"
            )
        c = f["change"]
        lines.append(
            f"  change March to June: fill {c['above']:.1f} m3, cut {c['below']:.1f} m3, "
            f"net {c['net']:+.1f} m3 over {c['area']:.0f} m2"
        )
        r = f["crossvalidation"]
        lines.append(
            f"  June survey leave-one-out: RMS {r['rms']:.3f} m, max |r| {r['max_abs']:.3f} m"
        )
        b = f["bay"]
        lines.append(
            f"  north bay pile (September survey): volume over the slab with breaklines "
            f"{b['with_breaklines']:.3f} m3, without {b['without_breaklines']:.3f} m3 "
            f"({b['error_percent_without']:+.2f}%); closed form of the invented frustum "
            f"(prismoidal formula) {b['closed_form']:.3f} m3"
        )
        b = f["bracket"]
        lines.append(
            f"  bracket: volume {b['volume'] * 1e6:.1f} cm3, mean temperature "
            f"{b['mean_temperature']:.3f} C (exact {b['exact_mean_temperature']:.3f} C)"
        )
        lines.append(
            "Caution: computed volumes depend on survey density and method; check them against "
            "the applicable survey standards and licensed practice before using them for "
            "payment, design or safety decisions."
        )
        if "pictures" in f:
            lines.append(f"  pictures {f['pictures']}")
        lines.append("Files:")
        lines += [f"  {p}" for p in self.files]
        return "\n".join(lines)


def run(
    out: str | Path = "interp-demo",
    *,
    data: str | Path | None = None,
    quiet: bool = True,
    pictures: bool = True,
) -> Summary:
    """Run the demo and write its outputs to ``out``.

    Parameters
    ----------
    out : path
        Output folder (created).
    data : path, optional
        Folder with the demo data; default the bundled ``data/``.
    pictures : bool
        Also write PNG pictures (needs the ``view`` extra).

    Examples
    --------
    >>> summary = run("interp-demo")  # doctest: +SKIP
    >>> print(summary.text())  # doctest: +SKIP
    """
    data = Path(data) if data is not None else DATA
    if not (data / "scenario.json").exists():
        raise InterpError(
            f"demo data not found in {data}; run scripts/make_demo_data.py or pass data="
        )
    out = Path(out)
    out.mkdir(parents=True, exist_ok=True)
    scenario = json.loads((data / "scenario.json").read_text())
    rings = read_polygon(data / "yard_boundary.csv")
    site = Polygon(rings[0], holes=rings[1:])
    summary = Summary()

    def keep(path: Path) -> Path:
        summary.files.append(path)
        return path

    surfaces = {}
    for epoch in scenario["epochs"]:
        points, values = read_points(data / f"yard_{epoch}.csv")
        surfaces[epoch] = fit(points, values["z"], boundary=rings[0], name=f"z_{epoch}")
        keep(to_grid(surfaces[epoch], spacing=0.5).save(out / f"yard_{epoch}_grid.vti"))
    base_points, base_values = read_points(data / "yard_base.csv")
    base = fit(base_points, base_values["z"], boundary=rings[0], name="z_base")
    june = surfaces["2026_06"]
    keep(to_grid(june, spacing=1.0).save(out / "yard_2026_06_grid.npz"))
    keep(
        sample_file(
            {june.name: june}, data / "yard_checkpoints.csv", out / "checkpoints_2026_06.csv"
        ).path
    )
    section = profile(list(surfaces.values()), SECTION, step=0.25)
    keep(section.save(out / "section.csv"))

    volumes = {}
    for epoch, surf in surfaces.items():
        v = volume_between(surf, base, region=site)
        true = scenario["epochs"][epoch]["volume_above_pad"]
        volumes[epoch] = {
            "above": v.above,
            "below": v.below,
            "net": v.net,
            "area": v.area,
            "uncovered": v.uncovered,
            "true": true,
            "error_percent": 100 * (v.net - true) / true,
        }
    change = volume_between(june, surfaces["2026_03"], region=site)
    bay, bay_lines, bay_figures = _north_bay(data, scenario["bay"])
    residuals = crossvalidate(points, values["z"])

    mesh, fields = read(data / "bracket.vtu")
    temp = Field(mesh, fields["temperature"], name="temperature", units="C")
    volume = float(mesh.measure().sum())
    mean_t = float(integrate(temp)) / volume
    summary.figures = {
        "volumes": volumes,
        "change": {
            "above": change.above,
            "below": change.below,
            "net": change.net,
            "area": change.area,
            "uncovered": change.uncovered,
        },
        "crossvalidation": residual_summary(points, residuals),
        "bay": bay_figures,
        "bracket": {
            "volume": volume,
            "mean_temperature": mean_t,
            "exact_mean_temperature": scenario["bracket"]["mean_temperature"],
        },
    }
    if pictures and not _viewer_installed():
        summary.figures["pictures"] = "skipped: install the view extra (pyvista, matplotlib)"
    elif pictures:
        try:
            summary.files += _pictures(
                out,
                june,
                base,
                surfaces["2026_03"],
                change,
                section,
                (points, values["z"]),
                residuals,
                site,
                temp,
                (bay, bay_lines),
            )
        except RenderingUnavailable as exc:  # the figures and files above still stand
            summary.figures["pictures"] = f"skipped: {exc}"
    with atomic_path(out / "summary.json") as tmp:
        tmp.write_text(json.dumps(summary.figures, indent=2) + "\n", encoding="utf-8")
    keep(out / "summary.json")
    with atomic_path(out / "summary.txt") as tmp:
        tmp.write_text(summary.text() + "\n", encoding="utf-8")
    keep(out / "summary.txt")
    return summary


def _north_bay(data: Path, bay: dict) -> tuple[Field, list, dict]:
    """The bay's surface fitted with its breaklines, the lines, and the pile's volume over
    the slab with and without them beside the closed form."""
    points, values = read_points(data / f"yard_bay_{bay['survey']}.csv")
    lines = read_lines(data / "yard_bay_breaklines.csv")
    slab = Polygon(read_polygon(data / "yard_bay_slab.csv")[0])
    surface = fit(points, values["z"], breaklines=lines, name=f"z_bay_{bay['survey']}")
    plain = fit(points, values["z"])
    exact = bay["pile"]["volume_above_slab"]
    with_lines, without = (
        volume_between(s, bay["slab_level"], region=slab).net for s in (surface, plain)
    )
    return (
        surface,
        lines,
        {
            "with_breaklines": with_lines,
            "without_breaklines": without,
            "closed_form": exact,
            "error_percent_with": 100 * (with_lines - exact) / exact,
            "error_percent_without": 100 * (without - exact) / exact,
        },
    )


def _viewer_installed() -> bool:
    from importlib.util import find_spec

    return find_spec("pyvista") is not None and find_spec("matplotlib") is not None


def _pictures(out, june, base, march, change, section, data, residuals, site, temp, bay):
    from interp import view

    metres = {"coordinate_units": "m"}  # the yard's invented grid is in metres
    files = [
        view.show(
            june, warp=3.0, contours=12, region=site, screenshot=out / "yard_2026_06.png", **metres
        ),
        view.show_difference(
            june,
            march,
            volumes=change,
            region=site,
            screenshot=out / "change_march_june.png",
            **metres,
        ),
        view.show_profile(section, data=data, screenshot=out / "section.png", **metres),
        view.show_residuals(data[0], residuals, screenshot=out / "residuals_2026_06.png", **metres),
        view.show(temp, screenshot=out / "bracket_temperature.png", **metres),
        view.show(
            bay[0],
            warp=2.0,
            edges=True,
            breaklines=bay[1],
            screenshot=out / "north_bay.png",
            **metres,
        ),
    ]
    return [Path(f) for f in files]
