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
from contextlib import ExitStack
from dataclasses import replace
from pathlib import Path
from typing import NoReturn

import numpy as np

import interp
from interp._breaklines import segment_lengths
from interp._cli_run import run
from interp.io import is_las_file, las_crs, read_las_points
from interp.source import choose_fields, describe, load, sample_file

CAUTION = (
    "Caution: computed volumes depend on survey density and method; check them against the "
    "applicable survey standards and licensed practice before using them for payment, design "
    "or safety decisions."
)


class Parser(argparse.ArgumentParser):
    """An argument parser whose usage errors are one line ``interp: error: ...``, exit 2."""

    def error(self, message: str) -> NoReturn:
        where = self.prog.removeprefix("interp").strip()
        self.exit(
            2,
            f"interp: error: {where + ': ' if where else ''}{message} (see '{self.prog} --help')\n",
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


def codes(text: str) -> list[int]:
    """Parse a comma-separated list of classification codes 0-255 (an argparse type)."""
    try:
        out = [int(v) for v in text.split(",")]
    except ValueError:
        out = []
    if not out or not all(0 <= v <= 255 for v in out):
        raise argparse.ArgumentTypeError(
            f"expected comma-separated classification codes 0-255, such as 2,8; got {text!r}"
        )
    return out


def count(text: str) -> int:
    """Parse a positive whole number (an argparse type)."""
    try:
        v = int(text)
    except ValueError:
        v = 0
    if v < 1:
        raise argparse.ArgumentTypeError(f"expected a positive whole number, got {text!r}")
    return v


def positive(text: str) -> float:
    """Parse a positive number (an argparse type)."""
    v = numbers(text)
    if len(v) != 1 or not 0 < v[0] < np.inf:
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
        help="point files: POLYGON.csv or .geojson (holes kept); its edges become mesh edges "
        "and the cells outside are dropped (crossval: points outside get no residual)",
    )
    g.add_argument(
        "--breaklines",
        type=Path,
        help="point files: LINES.csv with columns x,y[,value],line; the surface follows them",
    )
    g.add_argument("--field", help="use only this field (default: all)")
    las = p.add_argument_group("LAS/LAZ point clouds (z is the value; needs the las extra)")
    las.add_argument(
        "--classes",
        type=codes,
        help="keep only these classification codes, e.g. 2 (ground) or 2,8",
    )
    las.add_argument("--every", type=count, metavar="N", help="keep every N-th point")
    las.add_argument(
        "--lowest-per-cell",
        type=positive,
        metavar="SIZE",
        help="keep the lowest point in each SIZE x SIZE cell (ground from a raw cloud)",
    )


def open_source(args: argparse.Namespace, path: Path | None = None) -> dict[str, interp.Field]:
    stage(args, f"reading {path or args.source}")
    return load(
        path or args.source,
        coords=args.coords,
        order=args.order,
        max_edge=args.max_edge,
        boundary=region_of(args.boundary),
        breaklines=interp.read_lines(args.breaklines) if args.breaklines else None,
        field=args.field,
        **las_options(args, path or args.source),
    )


def las_options(args: argparse.Namespace, path: Path) -> dict:
    """The LAS/LAZ reading options given on the command line, checked against the source."""
    options = {
        "classes": args.classes,
        "every": args.every,
        "lowest_per_cell": args.lowest_per_cell,
    }
    if not is_las_file(path) and any(v is not None for v in options.values()):
        raise interp.InterpError(
            f"{path}: --classes, --every and --lowest-per-cell apply to .las/.laz sources only"
        )
    return options


def region_of(path: Path | None) -> interp.Polygon | None:
    if path is None:
        return None
    rings = interp.read_polygon(path)
    try:
        return interp.Polygon(rings[0], holes=rings[1:])
    except interp.InterpError as exc:
        raise interp.InterpError(f"{path}: {exc}") from None


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
    if args.breaklines:
        found = interp.read_lines(args.breaklines)
        length = float(sum(segment_lengths(line).sum() for line in found))
        info["breaklines"] = {"count": len(found), "length": length}
        lines.append(f"breaklines: {len(found)}, total length {length:.6g}")
    for name, f in info["fields"].items():
        lines.append(
            f"field {name}: {f['components']} component(s), range "
            f"{fmt(f['min'])}..{fmt(f['max'])}, {f['nan']} node(s) without data"
        )
    emit(args, info, lines)


#: grid outputs that store a coordinate reference system.
CRS_SUFFIXES = (".tif", ".tiff", ".nc")


def cmd_grid(args: argparse.Namespace) -> None:
    fields = open_source(args)
    stage(args, "evaluating the grid")
    grid = interp.to_grid(fields, spacing=args.spacing, bounds=args.bounds)
    crs = args.crs or (las_crs(args.source) if is_las_file(args.source) else None)
    if crs is not None:
        grid = replace(grid, crs=crs)
        if args.output.suffix.lower() not in CRS_SUFFIXES:
            warnings.warn(
                f"{args.output.suffix} files do not store a coordinate reference system; "
                "write .tif or .nc to keep it",
                stacklevel=1,
            )
    stage(args, f"writing {args.output}")
    out = grid.save(args.output)
    inside = sum(int((~np.isnan(v)).sum()) for v in grid.fields.values())
    stored = ""
    if args.output.suffix.lower() in CRS_SUFFIXES:
        stored = ", no CRS stored (give --crs)" if crs is None else ", CRS stored"
    if not args.quiet:
        print(
            f"wrote {out}: {' x '.join(map(str, grid.shape))} grid, fields "
            f"{', '.join(grid.names)}, {inside:,} values inside the mesh{stored}"
        )


def cmd_sample(args: argparse.Namespace) -> None:
    fields = open_source(args)
    progress = Progress("sampled", args.quiet)
    with ExitStack() as stack:
        evaluate = None
        if args.workers is not None or args.scheduler is not None:
            from interp.parallel import evaluator

            stage(args, "starting the dask workers")
            evaluate = stack.enter_context(evaluator(args.workers, args.scheduler))
        report = sample_file(
            fields,
            args.query,
            args.output,
            coords=args.coords,
            chunk_rows=args.chunk_rows,
            progress=progress,
            evaluate=evaluate,
        )
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
    options = las_options(args, args.source)
    if is_las_file(args.source):  # LAS/LAZ point clouds
        points, values = read_las_points(args.source, coords=args.coords, **options)
    else:
        points, values = interp.read_points(args.source, coords=args.coords)
    values = choose_fields(values, args.field, args.source)
    if not values:
        raise interp.InterpError(f"{args.source}: no value column to cross-validate")
    region = region_of(args.boundary)
    beyond = ~region.contains(points) if region is not None else np.zeros(len(points), bool)
    result, lines = {}, []
    for name, v in values.items():
        stage(args, f"leave-one-out residuals of {name}")
        residuals = interp.crossvalidate(
            points, v, order=args.order, max_edge=args.max_edge, boundary=region
        )
        residuals[beyond] = np.nan
        stats = interp.residual_summary(points, residuals, worst=args.worst)
        stats["outside_boundary"] = int(beyond.sum())
        result[name] = stats
        lines.append(
            f"{name}: {stats['count']:,} points, RMS {fmt(stats['rms'])}, "
            f"mean {fmt(stats['mean'])}, max |r| {fmt(stats['max_abs'])}, "
            f"{stats['outside'] - stats['outside_boundary']:,} outside the hull of the others"
            + (f", {stats['outside_boundary']:,} outside the boundary" if region else "")
        )
        for w in stats["worst"]:
            lines.append(f"  row {w['row']}: at {w['point']}, residual {w['residual']:.6g}")
    emit(args, result, lines)


def cmd_contour(args: argparse.Namespace) -> None:
    if (args.interval is None) == (args.levels is None):
        raise interp.InterpError("give the contour levels with --interval STEP or --levels A,B,C")
    field = first_field(open_source(args))
    stage(args, "tracing contours")
    lines = interp.contours(
        field,
        args.levels,
        interval=args.interval,
        region=region_of(args.region),
        tolerance=args.tolerance,
    )
    out = lines.save(args.output)
    result = {"output": str(out), **lines.summary()}
    levels = result["levels"]
    span = f" from {levels[0]:.6g} to {levels[-1]:.6g}" if levels else ""
    text = [
        f"wrote {out}: {result['lines']:,} lines ({result['closed']:,} closed) at "
        f"{len(levels)} levels{span}"
    ]
    if args.json or not args.quiet:
        emit(args, result, text)


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


EXAMPLES = {
    "info": "interp info data/yard_2026_03.csv",
    "grid": "interp grid data/yard_2026_03.csv --spacing 0.5 --crs EPSG:32633 -o yard.tif",
    "sample": "interp sample data/yard_2026_03.csv query.csv -o sampled.csv",
    "profile": "interp profile data/yard_2026_03.csv --line 0,20,80,20 --step 0.5 -o section.csv",
    "integrate": "interp integrate data/yard_2026_03.csv --region data/yard_boundary.csv",
    "volume": "interp volume data/yard_2026_03.csv --level 100 --region data/yard_boundary.csv",
    "crossval": "interp crossval data/yard_2026_03.csv --json",
    "contour": "interp contour data/yard_2026_03.csv --interval 0.5 -o contours.geojson",
    "view": "interp view data/yard_2026_03.csv --warp 2 --contours 10 --screenshot yard.png",
    "demo": "interp demo --out interp-demo",
}


def build_parser() -> argparse.ArgumentParser:
    parser = Parser(
        prog="interp",
        description="Finite-element interpolation of survey and simulation fields.",
    )
    parser.add_argument("--version", action="version", version=f"interp {interp.__version__}")
    common = Parser(add_help=False)
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

    p = add("grid", "evaluate on a regular grid (.tif, .nc, .npz, .csv, .vti, .zarr)", cmd_grid)
    p.add_argument("source", type=Path)
    p.add_argument("--spacing", type=positive, required=True, help="grid node spacing")
    p.add_argument("--bounds", type=numbers, help="xmin,xmax,ymin,ymax[,zmin,zmax]")
    p.add_argument(
        "-o",
        "--output",
        type=Path,
        required=True,
        help="output .tif (GeoTIFF, 2D), .nc (NetCDF), .npz, .csv, .vti or .zarr",
    )
    p.add_argument(
        "--crs",
        help="coordinate reference system stored in .tif/.nc, EPSG:nnnn or WKT "
        "(default: that of a LAS/LAZ source; none otherwise)",
    )
    source_options(p)

    p = add("sample", "evaluate at the points of a query file", cmd_sample)
    p.add_argument("source", type=Path)
    p.add_argument(
        "query", type=Path, help="query point file (same --coords columns) or LAS/LAZ cloud"
    )
    p.add_argument("-o", "--output", type=Path, required=True, help="output CSV")
    p.add_argument(
        "--chunk-rows",
        type=count,
        default=500_000,
        help="query rows read, evaluated and written at a time (default 500000)",
    )
    p.add_argument(
        "--workers",
        type=count,
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
    p.add_argument("--region", type=Path, help="POLYGON.csv or .geojson to integrate over")
    source_options(p)
    json_flag(p)

    p = add("volume", "volumes above and below between two surfaces", cmd_volume)
    p.add_argument("upper", type=Path, help="upper surface (point or mesh file)")
    p.add_argument("lower", type=Path, nargs="?", help="lower surface")
    p.add_argument("--level", type=float, help="a constant lower level instead of LOWER")
    p.add_argument("--region", type=Path, help="POLYGON.csv or .geojson to restrict to")
    source_options(p)
    json_flag(p)

    p = add("crossval", "leave-one-out residuals of a point file", cmd_crossval)
    p.add_argument("source", type=Path, help="point file")
    p.add_argument("--worst", type=int, default=5, help="how many worst points to list")
    source_options(p)
    json_flag(p)

    p = add("contour", "contour lines of a 2D surface (.geojson or .csv)", cmd_contour)
    p.add_argument("source", type=Path)
    p.add_argument("--interval", type=float, help="a line at every multiple of this step")
    p.add_argument("--levels", type=numbers, help="the levels a,b,c instead of --interval")
    p.add_argument("--region", type=Path, help="POLYGON.csv or .geojson to clip the lines to")
    p.add_argument(
        "--tolerance",
        type=float,
        help="P2 (--order 2): largest difference between the surface and the one contoured",
    )
    p.add_argument(
        "-o", "--output", type=Path, required=True, help="output .geojson (or .json) or .csv"
    )
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
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; returns the exit status.

    Examples
    --------
    >>> main(["--version"])  # doctest: +SKIP
    interp 0.1.0
    """
    return run(build_parser().parse_args(argv))


if __name__ == "__main__":
    sys.exit(main())
