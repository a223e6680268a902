"""The ``interp`` command's argument types, source options and output helpers.

Shared by the subcommands of :mod:`interp.cli`; like them, they compute
nothing of their own and call the public API.
"""

from __future__ import annotations

import argparse
import json
import re
from collections.abc import Sequence
from pathlib import Path
from typing import NoReturn

import numpy as np

import interp
from interp._format import decimals
from interp._progress import enabled, write
from interp.source import load, read_source_points

#: a value such as ``-512000.5,-20,3e5``: a number list taken as an option's value, not an option
NUMBER_LIST = re.compile(r"^-\.?\d[-+.,\deE]*$")


class Parser(argparse.ArgumentParser):
    """An argument parser whose usage errors are one line ``interp: error: ...``, exit 2, and
    that takes comma-separated numbers starting with ``-`` as values, so ``--bounds
    -10,-5,10,5`` needs no ``=`` (none of our options looks like a number)."""

    def __init__(self, *args, **kwargs) -> None:
        super().__init__(*args, **kwargs)
        self._negative_number_matcher = NUMBER_LIST

    def error(self, message: str) -> NoReturn:
        where = self.prog.removeprefix("interp").strip()
        self.exit(
            2,
            f"interp: error: {where + ': ' if where else ''}{message} (see '{self.prog} --help')\n",
        )


def stage(text: str) -> None:
    """Say on stderr what a step is doing, while the progress bars are on (a terminal,
    not --quiet)."""
    if enabled():
        write(f"interp: {text}...")


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


def spacings(text: str) -> list[float]:
    """Parse one positive number or one per axis (an argparse type)."""
    v = numbers(text)
    if not 1 <= len(v) <= 3 or not all(0 < s < np.inf for s in v):
        raise argparse.ArgumentTypeError(
            f"expected a positive spacing, or one per axis (e.g. 0.5,1.0), got {text!r}"
        )
    return v


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
    g.add_argument(
        "--units",
        help="unit of the coordinates and values, such as m: labels reports, grids and fields",
    )

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
    stage(f"reading {path or args.source}")
    return load(
        path or args.source,
        coords=args.coords,
        order=args.order,
        max_edge=args.max_edge,
        boundary=region_of(args.boundary),
        breaklines=lines_of(args.breaklines),
        name=args.field,
        **las_options(args),
        units=args.units,
    )


def las_options(args: argparse.Namespace) -> dict:
    """The LAS/LAZ thinning options given on the command line (checked by the reader)."""
    return {"classes": args.classes, "every": args.every, "lowest_per_cell": args.lowest_per_cell}


def point_source(args: argparse.Namespace) -> tuple[np.ndarray, dict[str, np.ndarray]]:
    """The points and value columns of the SOURCE point file or LAS/LAZ cloud."""
    return read_source_points(args.source, coords=args.coords, **las_options(args))


def region_of(path: Path | None) -> interp.Polygon | None:
    if path is None:
        return None
    rings = interp.read_polygon(path)
    try:
        return interp.Polygon(rings[0], holes=rings[1:])
    except interp.InterpError as exc:
        raise interp.InterpError(f"{path}: {exc}") from None


def lines_of(path: Path | None) -> list[np.ndarray] | None:
    return None if path is None else interp.read_lines(path)


def emit(args: argparse.Namespace, result: dict, text: Sequence[str]) -> None:
    if args.json:
        print(json.dumps(result, indent=2))
    else:
        print("\n".join(text))


def places(field: interp.Field) -> int:
    """Decimal places of a field's coordinates and values (the data's resolution)."""
    return decimals(np.append(field.mesh.points, field.values))
