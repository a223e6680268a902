"""The ``interp`` command: a thin layer over the public Python API.

Every subcommand parses its arguments, calls :mod:`interp`, and prints.
Exit status: 0 on success, 2 for a usage error, 1 for a data error with a
one-line ``interp: error: ...`` message.
"""

from __future__ import annotations

import argparse
import json
import sys
import warnings
from collections.abc import Sequence
from contextlib import ExitStack
from dataclasses import replace
from pathlib import Path

import numpy as np

import interp
from interp._breaklines import segment_lengths
from interp._cli_args import (
    Parser,
    count,
    emit,
    lines_of,
    numbers,
    open_source,
    places,
    point_source,
    positive,
    region_of,
    source_options,
    spacings,
    stage,
)
from interp._cli_run import run
from interp._format import decimals, number, table, unit_power
from interp._kernels import set_announce
from interp._prepare import compile_ahead
from interp._progress import enable
from interp.grid import corner_bounds
from interp.io import is_las_file, las_crs
from interp.source import choose_fields, describe, describe_grid, is_grid_file, sample_file

MEASURES = ("length", "area", "volume")
SIGN = "difference = upper minus lower; above and below are positive amounts"

CAUTION = (
    "Caution: computed volumes depend on survey density and method; check them against the "
    "applicable survey standards and licensed practice before using them for payment, design "
    "or safety decisions."
)


def cmd_info(args: argparse.Namespace) -> None:
    if is_grid_file(args.source):
        info_grid(args)
        return
    fields = open_source(args)
    info = describe(fields)
    info["units"] = args.units
    q = info["quality"]
    mesh = next(iter(fields.values())).mesh
    k = decimals(mesh.points)
    dim = info["dimension"]
    lines = [
        f"{dim}D mesh of {info['cells']:,} {info['cell_type']} cells, {info['nodes']:,} nodes",
        "bounds: "
        + ", ".join(
            f"{number(lo, k)}..{number(hi, k)}" for lo, hi in zip(*info["bounds"], strict=True)
        )
        + (f" {args.units}" if args.units else ""),
        f"{info['measure_name']}: {number(info['measure'], k)} "
        f"{unit_power(args.units, MEASURES.index(info['measure_name']) + 1)}".rstrip(),
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
        kv = decimals(fields[name].values)
        lines.append(
            f"field {name}: {f['components']} component(s), range "
            f"{number(f['min'], kv)}..{number(f['max'], kv)}{unit_suffix(args.units)}, "
            f"{f['nan']} node(s) without data"
        )
    emit(args, info, lines)


#: grid outputs that store a coordinate reference system.
CRS_SUFFIXES = (".tif", ".tiff", ".nc")


def unit_suffix(units: str | None, power: int = 1) -> str:
    return f" {unit_power(units, power)}" if units else ""


def info_grid(args: argparse.Namespace) -> None:
    info = describe_grid(args.source)
    lines = [
        f"{info['dimension']}D grid of {' x '.join(map(str, info['shape']))} nodes, spacing "
        + ", ".join(f"{s:.12g}" for s in info["spacing"]),
        "bounds: "
        + ", ".join(
            f"{a} {lo:.12g}..{hi:.12g}" for a, lo, hi in zip("xyz", *info["bounds"], strict=False)
        ),
    ]
    for name, f in info["fields"].items():
        lines.append(
            f"field {name}: {f['components']} component(s), range "
            f"{number(f['min'], 6)}..{number(f['max'], 6)}{unit_suffix(f.get('units'))}, "
            f"{f['nan']:,} node(s) without data"
        )
    emit(args, info, lines)


def cmd_grid(args: argparse.Namespace) -> None:
    fields = open_source(args)
    bounds = None if args.bounds is None else corner_bounds(args.bounds)
    grid = interp.to_grid(fields, spacing=args.spacing, bounds=bounds)
    if not any((~np.isnan(v)).any() for v in grid.fields.values()):
        raise interp.InterpError(
            f"no grid node falls inside the data, so {args.output} was not written; give "
            "--bounds that overlap the data (see `interp info`)"
        )
    crs = args.crs or (las_crs(args.source) if is_las_file(args.source) else None)
    if crs is not None:
        grid = replace(grid, crs=crs)
        if args.output.suffix.lower() not in CRS_SUFFIXES:
            warnings.warn(
                f"{args.output.suffix} files do not store a coordinate reference system; "
                "write .tif or .nc to keep it",
                stacklevel=1,
            )
    stage(f"writing {args.output}")
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
    with ExitStack() as stack:
        evaluate = None
        if args.workers is not None or args.scheduler is not None:
            from interp.parallel import evaluator

            stage("starting the dask workers")
            evaluate = stack.enter_context(evaluator(args.workers, args.scheduler))
        report = sample_file(
            fields,
            args.query,
            args.output,
            coords=args.coords,
            chunk_rows=args.chunk_rows,
            evaluate=evaluate,
        )
    renamed = {c: o for c, o in report.columns.items() if c != o}
    if args.json:
        result = {
            "path": str(report.path),
            "rows": report.rows,
            "outside": report.outside,
            "columns": report.columns,
            "checks": report.checks,
            "units": args.units,
        }
        print(json.dumps(result, indent=2))
    elif not args.quiet:
        print(f"wrote {report.path}: {report.rows:,} rows, {report.outside:,} outside the mesh")
        for c, o in renamed.items():
            print(f"  the query file has its own column {c}: the sampled one is {o}")
    for column, check in report.checks.items():
        if not args.quiet:
            k = decimals(next(iter(fields.values())).values)
            print(
                f"interp: check points against {column}: {check['count']:,} with a known "
                f"value, RMS residual {number(check['rms'], k)}, mean {number(check['mean'], k)}, "
                f"largest |residual| {number(check['max_abs'], k)}{unit_suffix(args.units)}",
                file=sys.stderr,
            )


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
    if all(np.isnan(v).all() for v in prof.fields.values()):
        raise interp.InterpError(
            f"the --line lies entirely outside the data, so {args.output} was not written; "
            "check its coordinates against the data bounds (see `interp info`)"
        )
    out = prof.save(args.output)
    if not args.quiet:
        k = decimals(np.asarray(line))
        print(
            f"wrote {out}: {len(prof.distance):,} samples over "
            f"{number(prof.distance[-1], k)}{unit_suffix(args.units)}"
        )


def cmd_integrate(args: argparse.Namespace) -> None:
    region = region_of(args.region)
    result, lines = {}, []
    for name, f in open_source(args).items():
        r = interp.summarize(f, region=region)
        result[name] = {**r, "units": args.units}
        k, d = places(f), f.mesh.dim
        lines.append(f"{name} over {args.region or 'the whole mesh'}:")
        lines += table(
            [
                ("integral", numbers_text(r["integral"], k), unit_power(args.units, d + 1)),
                ("measure covered", number(r["measure"], k), unit_power(args.units, d)),
                ("mean", numbers_text(r["mean"], k), unit_power(args.units, 1)),
                ("region not covered", number(r["uncovered"], k), unit_power(args.units, d)),
            ]
        )
    emit(args, result, lines)


def numbers_text(v: float | list | None, k: int) -> str:
    """A result of one or several components as text."""
    return ", ".join(number(c, k) for c in v) if isinstance(v, list) else number(v, k)


def cmd_volume(args: argparse.Namespace) -> None:
    if (args.lower is None) == (args.level is None):
        raise interp.InterpError("give either a LOWER surface or --level Z, not both or neither")
    upper = first_field(open_source(args, args.upper))
    lower = args.level if args.level is not None else first_field(open_source(args, args.lower))
    vol = interp.volume_between(upper, lower, region=region_of(args.region))
    inputs = {
        "upper": str(args.upper),
        "lower": str(args.lower)
        if args.lower is not None
        else f"level {number(args.level, decimals([args.level]))}",
        "region": str(args.region) if args.region else None,
    }
    result = {
        "above": vol.above,
        "below": vol.below,
        "net": vol.net,
        "area": vol.area,
        "uncovered": vol.uncovered,
        "sign": SIGN,
        "units": args.units,
        "inputs": inputs,
        "caution": CAUTION,
    }
    k, u = places(upper), args.units
    extent = "where the upper surface has data"
    if args.lower is not None:
        extent = "where either surface has data"
    lines = [
        f"Volume between two surfaces ({SIGN})",
        f"  upper surface:  {inputs['upper']}",
        f"  lower surface:  {inputs['lower']}",
        f"  region:         {inputs['region'] or extent}",
        "",
        *table(
            [
                ("material above (upper over lower)", number(vol.above, k), unit_power(u, 3)),
                ("material below (upper under lower)", number(vol.below, k), unit_power(u, 3)),
                ("difference (above - below)", number(vol.net, k), unit_power(u, 3)),
                ("area covered", number(vol.area, k), unit_power(u, 2)),
                ("area of the region not covered", number(vol.uncovered, k), unit_power(u, 2)),
            ]
        ),
        "",
        CAUTION,
    ]
    emit(args, result, lines)


def first_field(fields: dict[str, interp.Field]) -> interp.Field:
    if len(fields) > 1:
        raise interp.InterpError(
            f"the surface file has several fields ({', '.join(fields)}); pick one with --field"
        )
    return next(iter(fields.values()))


def cmd_crossval(args: argparse.Namespace) -> None:
    points, values = point_source(args)
    values = choose_fields(values, args.field, args.source)
    if not values:
        raise interp.InterpError(f"{args.source}: no value column to cross-validate")
    region = region_of(args.boundary)
    beyond = ~region.contains(points) if region is not None else np.zeros(len(points), bool)
    found = interp.read_lines(args.breaklines) if args.breaklines else None
    result, lines, residuals = {}, [], {}
    for name, v in values.items():
        stage(f"leave-one-out residuals of {name}")
        residuals[name] = interp.crossvalidate(
            points,
            v,
            order=args.order,
            max_edge=args.max_edge,
            boundary=region,
            breaklines=found,
        )
        residuals[name][beyond] = np.nan
        stats = interp.residual_summary(points, residuals[name])
        stats["outside_boundary"] = int(beyond.sum())
        result[name] = {**stats, "units": args.units}
        k = decimals(v)
        lines.append(f"{name}: each point predicted from all the others (P{args.order} fit)")
        rows = [
            ("points predicted", f"{stats['count']:,}", ""),
            (
                "not predicted (outside the others or masked)",
                f"{stats['outside'] - stats['outside_boundary']:,}",
                "",
            ),
        ]
        if region is not None:
            rows.append(("outside the boundary", f"{stats['outside_boundary']:,}", ""))
        lines += table(
            [
                *rows,
                ("RMS residual", number(stats["rms"], k), args.units or ""),
                ("mean residual (bias)", number(stats["mean"], k), args.units or ""),
                ("largest |residual|", number(stats["max_abs"], k), args.units or ""),
            ]
        )
    if args.output:
        out = interp.write_residuals(args.output, points, values, residuals, args.coords)
        lines.append(f"residual = measured - predicted, per point in {out}")
        for stats in result.values():
            stats["residuals"] = str(out)
    emit(args, result, lines)


def cmd_contour(args: argparse.Namespace) -> None:
    if (args.interval is None) == (args.levels is None):
        raise interp.InterpError("give the contour levels with --interval STEP or --levels A,B,C")
    field = first_field(open_source(args))
    stage("tracing contours")
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
        breaklines=lines_of(args.breaklines),
        screenshot=args.screenshot,
        title=args.title,
        coordinate_units=args.units,
    )
    if out is not None and not args.quiet:
        print(f"wrote {out}")


def cmd_demo(args: argparse.Namespace) -> None:
    from interp.demo import run

    summary = run(args.out, quiet=args.quiet)
    if not args.quiet:
        print(summary.text())


def cmd_prepare(args: argparse.Namespace) -> None:
    report = interp.prepare(jobs=args.jobs)
    if not args.quiet:
        print(
            f"compiled {report.compiled} kernel specialisations in {report.seconds:.1f} s"
            + (f" ({report.helpers + 1} processes)" if report.helpers else "")
            if report.compiled
            else f"every kernel already compiled (checked in {report.seconds:.1f} s)"
        )


EXAMPLES = {
    "info": "interp info data/yard_2026_03.csv",
    "grid": "interp grid data/yard_2026_03.csv --spacing 0.5 --crs EPSG:32633 -o yard.tif",
    "sample": "interp sample data/yard_2026_03.csv query.csv -o sampled.csv",
    "profile": "interp profile data/yard_2026_03.csv --line 0,20,80,20 --step 0.5 -o section.csv",
    "integrate": "interp integrate data/yard_2026_03.csv --region data/yard_boundary.csv",
    "volume": "interp volume data/yard_2026_03.csv --level 100 --region data/yard_boundary.csv",
    "crossval": "interp crossval data/yard_2026_03.csv -o residuals.csv",
    "contour": "interp contour data/yard_2026_03.csv --interval 0.5 -o contours.geojson",
    "view": "interp view data/yard_2026_03.csv --warp 2 --contours 10 --screenshot yard.png",
    "demo": "interp demo --out interp-demo",
    "prepare": "interp prepare",
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
    p.add_argument(
        "--spacing",
        type=spacings,
        required=True,
        help="grid node spacing: one number, or one per axis (0.5,1.0)",
    )
    p.add_argument(
        "--bounds",
        type=numbers,
        help="minx,miny,maxx,maxy (3D: minx,miny,minz,maxx,maxy,maxz): the lower corner, then "
        "the upper one, as in GIS and GeoJSON (default the data's bounds); earlier versions "
        "took xmin,xmax,ymin,ymax",
    )
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
        default=100_000,
        help="query rows read, evaluated and written at a time (default 100000)",
    )
    p.add_argument(
        "--workers",
        type=count,
        help="spread the evaluation over N local worker processes (dask extra)",
    )
    p.add_argument("--scheduler", help="address of a running dask.distributed scheduler")
    source_options(p)
    json_flag(p)

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
    p.add_argument(
        "-o",
        "--output",
        type=Path,
        help="CSV of every point: coordinates, value, predicted, residual",
    )
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
    p.add_argument("--contours", type=int, help="number of contour levels (1 to 100), labelled")
    p.add_argument("--title", help="title above the picture (default the field and its units)")
    p.add_argument(
        "--edges",
        action="store_true",
        help="draw cell edges (the lines of --breaklines are drawn in magenta in any case)",
    )
    p.add_argument("--points", action="store_true", help="draw the data points")
    p.add_argument("--screenshot", type=Path, help="write a PNG instead of opening a window")
    source_options(p)

    p = add("demo", "run the whole job on the bundled demo data", cmd_demo)
    p.add_argument("--out", type=Path, default=Path("interp-demo"), help="output folder")

    p = add("prepare", "compile every kernel ahead (servers, containers, CI)", cmd_prepare)
    p.add_argument("--jobs", type=count, metavar="N", help="compiling processes (default: cores)")
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; returns the exit status.

    Examples
    --------
    >>> main(["--version"])  # doctest: +SKIP
    interp 0.1.0
    """
    args = build_parser().parse_args(argv)
    quiet = getattr(args, "quiet", False)
    if quiet:
        set_announce(False)
    # live bars of the long steps, on a terminal only (never piped, never with --quiet)
    enable(not quiet and sys.stderr.isatty())
    # on a first run, helper processes compile this command's kernels on the spare cores
    with compile_ahead(f"interp {args.command}"):
        return run(args)


if __name__ == "__main__":
    sys.exit(main())
