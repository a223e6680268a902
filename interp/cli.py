"""The ``interp`` command: a thin layer over the public Python API.

Every subcommand parses its arguments, calls :mod:`interp`, and prints.
Exit status: 0 on success, 2 for a usage error, 1 for a data error with a
one-line ``interp: error: ...`` message.
"""

from __future__ import annotations

import argparse
import json
import sys
import time
import warnings
from collections.abc import Sequence
from pathlib import Path

import numpy as np

import interp
from interp._kernels import set_announce
from interp.source import choose_fields, describe, load, sample_file

CAUTION = (
    "Caution: computed volumes depend on survey density and method; check them against the "
    "applicable survey standards and licensed practice before using them for payment, design "
    "or safety decisions."
)


class Progress:
    """A progress line on stderr, shown only on a terminal and not with --quiet."""

    def __init__(self, label: str, quiet: bool, total: int | None = None) -> None:
        self.label, self.total = label, total
        self.enabled = not quiet and sys.stderr.isatty()
        self.start = time.perf_counter()

    def __call__(self, done: int) -> None:
        if not self.enabled:
            return
        rate = done / max(time.perf_counter() - self.start, 1e-9)
        share = f" ({100 * done / self.total:5.1f}%)" if self.total else ""
        sys.stderr.write(f"\r{self.label}: {done:,}{share}, {rate:,.0f}/s")
        sys.stderr.flush()

    def close(self) -> None:
        if self.enabled:
            sys.stderr.write("\n")


def stage(args: argparse.Namespace, text: str) -> None:
    """Say on stderr what a long step is doing (a terminal only, not with --quiet)."""
    if not args.quiet and sys.stderr.isatty():
        sys.stderr.write(f"interp: {text}...\n")
        sys.stderr.flush()


def numbers(text: str) -> list[float]:
    """Parse a comma-separated list of numbers (an argparse type)."""
    try:
        return [float(v) for v in text.split(",")]
    except ValueError:
        raise argparse.ArgumentTypeError(
            f"expected comma-separated numbers, got {text!r}"
        ) from None


def names(text: str) -> tuple[str, ...]:
    """Parse a comma-separated list of column names (an argparse type)."""
    out = tuple(v.strip() for v in text.split(",") if v.strip())
    if not 1 <= len(out) <= 3:
        raise argparse.ArgumentTypeError(f"expected 1 to 3 column names, got {text!r}")
    return out


def positive(text: str) -> float:
    """Parse a positive number (an argparse type)."""
    v = numbers(text)
    if len(v) != 1 or not v[0] > 0:
        raise argparse.ArgumentTypeError(f"expected a positive number, got {text!r}")
    return v[0]


def source_options(p: argparse.ArgumentParser) -> None:
    g = p.add_argument_group("reading the source")
    g.add_argument(
        "--coords",
        type=names,
        default=("x", "y"),
        help="coordinate columns of a point file (default x,y; use x,y,z for 3D data)",
    )
    g.add_argument(
        "--order",
        type=int,
        choices=(1, 2),
        default=1,
        help="point files: 1 linear (P1), 2 quadratic (P2) fit (default 1)",
    )
    g.add_argument("--max-edge", type=positive, help="point files: drop cells with a longer edge")
    g.add_argument(
        "--boundary",
        type=Path,
        help="point files: POLYGON.csv; drop cells whose centroid is outside",
    )
    g.add_argument("--field", help="use only this field (default: all)")


def boundary_polygon(args: argparse.Namespace) -> interp.Polygon | None:
    """The ``--boundary`` polygon, holes included (None without the option)."""
    if not args.boundary:
        return None
    rings = interp.read_polygon(args.boundary)
    return interp.Polygon(rings[0], rings[1:])


def open_source(args: argparse.Namespace, path: Path | None = None) -> dict[str, interp.Field]:
    stage(args, f"reading {path or args.source}")
    boundary = boundary_polygon(args)
    return load(
        path or args.source,
        coords=args.coords,
        order=args.order,
        max_edge=args.max_edge,
        boundary=boundary,
        field=args.field,
    )


def region_of(path: Path | None) -> interp.Polygon | None:
    if path is None:
        return None
    rings = interp.read_polygon(path)
    return interp.Polygon(rings[0], holes=rings[1:])


def emit(args: argparse.Namespace, result: dict, text: Sequence[str]) -> None:
    if args.json:
        print(json.dumps(result, indent=2))
    else:
        print("\n".join(text))


def fmt(v: float | None) -> str:
    return "-" if v is None else f"{v:.6g}"


def cmd_info(args: argparse.Namespace) -> None:
    info = describe(open_source(args))
    q = info["quality"]
    lines = [
        f"{info['dimension']}D mesh of {info['cells']:,} {info['cell_type']} cells, "
        f"{info['nodes']:,} nodes",
        "bounds: "
        + ", ".join(f"{lo:.6g}..{hi:.6g}" for lo, hi in zip(*info["bounds"], strict=True)),
        f"{('length', 'area', 'volume')[info['dimension'] - 1]}: {info['measure']:.6g}",
        f"cell quality (radius ratio, 1 = regular): min {q['radius_ratio_min']:.3g}, "
        f"median {q['radius_ratio_median']:.3g}",
    ]
    if "smallest_angle_deg" in q:
        lines.append(f"smallest angle: {q['smallest_angle_deg']:.3g} degrees")
    for name, f in info["fields"].items():
        lines.append(
            f"field {name}: {f['components']} component(s), range "
            f"{fmt(f['min'])}..{fmt(f['max'])}, {f['nan']} node(s) without data"
        )
    emit(args, info, lines)


def cmd_grid(args: argparse.Namespace) -> None:
    fields = open_source(args)
    stage(args, "evaluating the grid")
    grid = interp.to_grid(fields, spacing=args.spacing, bounds=args.bounds)
    stage(args, f"writing {args.output}")
    out = grid.save(args.output)
    inside = sum(int((~np.isnan(v)).sum()) for v in grid.fields.values())
    if not args.quiet:
        print(
            f"wrote {out}: {' x '.join(map(str, grid.shape))} grid, fields "
            f"{', '.join(grid.names)}, {inside:,} values inside the mesh"
        )


def cmd_sample(args: argparse.Namespace) -> None:
    fields = open_source(args)
    progress = Progress("sampled", args.quiet)
    report = sample_file(fields, args.query, args.output, coords=args.coords, progress=progress)
    progress.close()
    if not args.quiet:
        print(f"wrote {report.path}: {report.rows:,} rows, {report.outside:,} outside the mesh")


def cmd_profile(args: argparse.Namespace) -> None:
    line = args.line
    g = len(args.coords)
    if len(line) < 2 * g or len(line) % g:
        raise interp.InterpError(
            f"--line needs at least two vertices of {g} coordinates each; got {len(line)} numbers"
        )
    prof = interp.profile(
        open_source(args), [line[i : i + g] for i in range(0, len(line), g)], step=args.step
    )
    out = prof.save(args.output)
    if not args.quiet:
        print(f"wrote {out}: {len(prof.distance):,} samples over {prof.distance[-1]:.6g}")


def cmd_integrate(args: argparse.Namespace) -> None:
    region = region_of(args.region)
    result = {}
    for name, f in open_source(args).items():
        result[name] = interp.summarize(f, region=region)
    lines = []
    for name, r in result.items():
        lines.append(
            f"{name}: integral {fmt(r['integral'])}, measure {fmt(r['measure'])}, "
            f"mean {fmt(r['mean'])}"
        )
    emit(args, result, lines)


def cmd_volume(args: argparse.Namespace) -> None:
    if (args.lower is None) == (args.level is None):
        raise interp.InterpError("give either a LOWER surface or --level Z, not both or neither")
    upper = first_field(open_source(args, args.upper))
    lower = args.level if args.level is not None else first_field(open_source(args, args.lower))
    vol = interp.volume_between(upper, lower, region=region_of(args.region))
    result = {
        "above": vol.above,
        "below": vol.below,
        "net": vol.net,
        "area": vol.area,
        "caution": CAUTION,
    }
    emit(
        args,
        result,
        [
            f"above (fill over the lower surface / cut): {vol.above:.6g}",
            f"below: {vol.below:.6g}",
            f"net (above - below): {vol.net:.6g}",
            f"plan area: {vol.area:.6g}",
            CAUTION,
        ],
    )


def first_field(fields: dict[str, interp.Field]) -> interp.Field:
    if len(fields) > 1:
        raise interp.InterpError(
            f"the surface file has several fields ({', '.join(fields)}); pick one with --field"
        )
    return next(iter(fields.values()))


def cmd_crossval(args: argparse.Namespace) -> None:
    points, values = interp.read_points(args.source, coords=args.coords)
    values = choose_fields(values, args.field, args.source)
    if not values:
        raise interp.InterpError(f"{args.source}: no value column to cross-validate")
    result, lines = {}, []
    boundary = boundary_polygon(args)
    for name, v in values.items():
        stage(args, f"leave-one-out residuals of {name}")
        stats = interp.residual_summary(
            points,
            interp.crossvalidate(
                points, v, order=args.order, max_edge=args.max_edge, boundary=boundary
            ),
            worst=args.worst,
        )
        result[name] = stats
        lines.append(
            f"{name}: {stats['count']:,} points, RMS {fmt(stats['rms'])}, "
            f"mean {fmt(stats['mean'])}, max |r| {fmt(stats['max_abs'])}, "
            f"{stats['outside']:,} outside the hull of the others"
        )
        for w in stats["worst"]:
            lines.append(f"  row {w['row']}: at {w['point']}, residual {w['residual']:.6g}")
    emit(args, result, lines)


def cmd_view(args: argparse.Namespace) -> None:
    fields = open_source(args)
    name = next(iter(fields))
    out = interp.show(
        fields[name],
        warp=args.warp,
        contours=args.contours,
        edges=args.edges,
        points=args.points or None,
        screenshot=args.screenshot,
    )
    if out is not None and not args.quiet:
        print(f"wrote {out}")


def cmd_demo(args: argparse.Namespace) -> None:
    from interp.demo import run

    summary = run(args.out, quiet=args.quiet)
    if not args.quiet:
        print(summary.text())


def cmd_prepare(args: argparse.Namespace) -> None:
    report = interp.prepare()
    if not args.quiet:
        print(
            f"compiled {report.compiled} kernel specialisations in {report.seconds:.1f} s"
            if report.compiled
            else f"every kernel already compiled (checked in {report.seconds:.1f} s)"
        )


EXAMPLES = {
    "info": "interp info data/yard_2026_03.csv",
    "grid": "interp grid data/yard_2026_03.csv --spacing 0.5 -o yard.npz",
    "sample": "interp sample data/yard_2026_03.csv query.csv -o sampled.csv",
    "profile": "interp profile data/yard_2026_03.csv --line 0,20,80,20 --step 0.5 -o section.csv",
    "integrate": "interp integrate data/yard_2026_03.csv --region data/yard_boundary.csv",
    "volume": "interp volume data/yard_2026_03.csv --level 100 --region data/yard_boundary.csv",
    "crossval": "interp crossval data/yard_2026_03.csv --json",
    "view": "interp view data/yard_2026_03.csv --warp 2 --contours 10 --screenshot yard.png",
    "demo": "interp demo --out interp-demo",
    "prepare": "interp prepare",
}


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="interp",
        description="Finite-element interpolation of survey and simulation fields.",
    )
    parser.add_argument("--version", action="version", version=f"interp {interp.__version__}")
    common = argparse.ArgumentParser(add_help=False)
    common.add_argument("-q", "--quiet", action="store_true", help="no progress or messages")
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")

    def add(name: str, help: str, func) -> argparse.ArgumentParser:
        p = sub.add_parser(
            name,
            help=help,
            description=help,
            parents=[common],
            epilog=f"example:\n  {EXAMPLES[name]}",
            formatter_class=argparse.RawDescriptionHelpFormatter,
        )
        p.set_defaults(func=func)
        return p

    def json_flag(p: argparse.ArgumentParser) -> None:
        p.add_argument("--json", action="store_true", help="print one JSON object")

    p = add("info", "describe a point or mesh file", cmd_info)
    p.add_argument("source", type=Path, help="point file or mesh file")
    source_options(p)
    json_flag(p)

    p = add("grid", "evaluate on a regular grid (.npz, .csv, .vti)", cmd_grid)
    p.add_argument("source", type=Path)
    p.add_argument("--spacing", type=positive, required=True, help="grid node spacing")
    p.add_argument("--bounds", type=numbers, help="xmin,xmax,ymin,ymax[,zmin,zmax]")
    p.add_argument("-o", "--output", type=Path, required=True, help="output .npz, .csv or .vti")
    source_options(p)

    p = add("sample", "evaluate at the points of a query file", cmd_sample)
    p.add_argument("source", type=Path)
    p.add_argument("query", type=Path, help="query point file (same --coords columns)")
    p.add_argument("-o", "--output", type=Path, required=True, help="output CSV")
    p.add_argument(
        "--chunk-rows",
        type=int,
        default=500_000,
        help="query rows read, evaluated and written at a time (default 500000)",
    )
    p.add_argument(
        "--workers",
        type=int,
        help="spread the evaluation over N local worker processes (dask extra)",
    )
    p.add_argument("--scheduler", help="address of a running dask.distributed scheduler")
    source_options(p)

    p = add("profile", "sample along a section line", cmd_profile)
    p.add_argument("source", type=Path)
    p.add_argument("--line", type=numbers, required=True, help="x1,y1,x2,y2[,...] vertices")
    p.add_argument("--step", type=positive, required=True, help="sampling interval")
    p.add_argument("-o", "--output", type=Path, required=True, help="output CSV")
    source_options(p)

    p = add("integrate", "integral, measure and mean of each field", cmd_integrate)
    p.add_argument("source", type=Path)
    p.add_argument("--region", type=Path, help="POLYGON.csv to integrate over")
    source_options(p)
    json_flag(p)

    p = add("volume", "volumes above and below between two surfaces", cmd_volume)
    p.add_argument("upper", type=Path, help="upper surface (point or mesh file)")
    p.add_argument("lower", type=Path, nargs="?", help="lower surface")
    p.add_argument("--level", type=float, help="a constant lower level instead of LOWER")
    p.add_argument("--region", type=Path, help="POLYGON.csv to restrict to")
    source_options(p)
    json_flag(p)

    p = add("crossval", "leave-one-out residuals of a point file", cmd_crossval)
    p.add_argument("source", type=Path, help="point file")
    p.add_argument("--worst", type=int, default=5, help="how many worst points to list")
    source_options(p)
    json_flag(p)

    p = add("view", "show a surface or volume, or write a PNG", cmd_view)
    p.add_argument("source", type=Path)
    p.add_argument("--warp", type=float, help="vertical exaggeration of the surface")
    p.add_argument("--contours", type=int, help="number of contour levels")
    p.add_argument("--edges", action="store_true", help="draw cell edges")
    p.add_argument("--points", action="store_true", help="draw the data points")
    p.add_argument("--screenshot", type=Path, help="write a PNG instead of opening a window")
    source_options(p)

    p = add("demo", "run the whole job on the bundled demo data", cmd_demo)
    p.add_argument("--out", type=Path, default=Path("interp-demo"), help="output folder")

    add("prepare", "compile every kernel ahead (servers, containers, CI)", cmd_prepare)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; returns the exit status.

    Examples
    --------
    >>> main(["--version"])  # doctest: +SKIP
    interp 0.1.0
    """
    args = build_parser().parse_args(argv)
    if args.quiet:
        set_announce(False)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore" if args.quiet else "always")
        warnings.showwarning = _note
        return _run(args)


def _note(message, category, filename, lineno, file=None, line=None) -> None:
    """Show a warning from the library as one line on stderr."""
    print(f"interp: note: {' '.join(str(message).split())}", file=sys.stderr)


def _run(args: argparse.Namespace) -> int:
    try:
        args.func(args)
    except (ValueError, OSError) as exc:
        message = " ".join(str(exc).split()) or type(exc).__name__
        print(f"interp: error: {message}", file=sys.stderr)
        return 1
    except KeyboardInterrupt:
        print("interp: error: interrupted", file=sys.stderr)
        return 130
    return 0


if __name__ == "__main__":
    sys.exit(main())
