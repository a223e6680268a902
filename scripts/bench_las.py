"""LAS/LAZ reading: interp's streamed reader against laspy's whole-file read + numpy.

Each case runs in its own process, which reports its wall time and peak
resident set: the streamed reader's memory follows what it keeps, the
reference's the whole cloud.  The cloud is invented: uniform points over
1 km x 1 km, half of them ground (class 2).
"""

from __future__ import annotations

import subprocess
import sys
import tempfile
import time
from pathlib import Path

import laspy
import numpy as np

from interp.io._las import read_las

CASES = {
    "whole cloud": {},
    "class 2, every 10th": {"classes": [2], "every": 10},
    "lowest per 1 m cell": {"lowest_per_cell": 1.0},
}


def make_cloud(folder: Path, n: int) -> list[Path]:
    rng = np.random.default_rng(20261203)
    header = laspy.LasHeader(point_format=6, version="1.4")
    header.scales = np.array([0.001, 0.001, 0.001])
    header.offsets = np.array([300000.0, 5000000.0, 0.0])
    las = laspy.LasData(header)
    las.x = 300000 + rng.random(n) * 1000
    las.y = 5000000 + rng.random(n) * 1000
    las.z = 100 + rng.random(n) * 10
    las.classification = rng.choice([1, 2], n)
    paths = [folder / "cloud.las", folder / "cloud.laz"]
    for p in paths:
        las.write(p)
    return paths


def reference(path: str, options: dict) -> int:
    """laspy reads the whole file; numpy filters and thins it in memory."""
    las = laspy.read(path)
    x, y, z = np.asarray(las.x), np.asarray(las.y), np.asarray(las.z)
    keep = np.ones(len(x), dtype=bool)
    if "classes" in options:
        keep = np.isin(np.asarray(las.classification), options["classes"])
    take = np.flatnonzero(keep)[:: options.get("every", 1)]
    x, y, z = x[take], y[take], z[take]
    if "lowest_per_cell" in options:
        s = options["lowest_per_cell"]
        ix, iy = np.floor(x / s).astype(np.int64), np.floor(y / s).astype(np.int64)
        order = np.lexsort((z, iy, ix))
        ix, iy = ix[order], iy[order]
        return int(np.count_nonzero(np.r_[True, (ix[1:] != ix[:-1]) | (iy[1:] != iy[:-1])]))
    return len(x)


def child(engine: str, case: str, path: str) -> None:
    t = time.perf_counter()
    if engine == "interp":
        n = len(read_las(path, **CASES[case])[0])
    else:
        n = reference(path, CASES[case])
    dt = time.perf_counter() - t
    print(n, dt, peak_mib())


def peak_mib() -> float:
    """Peak resident set of this process since it started, in MiB (Linux VmHWM).

    Not ``getrusage``: its ``ru_maxrss`` survives ``exec`` and so counts the
    parent's memory at the fork.
    """
    with open("/proc/self/status") as fh:
        line = next(x for x in fh if x.startswith("VmHWM:"))
    return int(line.split()[1]) / 1024


def run(engine: str, case: str, path: Path) -> tuple[int, float, float]:
    out = subprocess.run(
        [sys.executable, __file__, engine, case, str(path)],
        capture_output=True,
        text=True,
        check=True,
    )
    n, dt, peak = out.stdout.split()
    return int(n), float(dt), float(peak)


def bench_las(n: int) -> None:
    with tempfile.TemporaryDirectory() as folder:
        paths = make_cloud(Path(folder), n)
        print(f"  {n:,} points; peak resident set of the whole process (reference: laspy.read)")
        for path in paths:
            for case in CASES:
                kept, ours, our_peak = run("interp", case, path)
                _, ref, ref_peak = run("reference", case, path)
                print(
                    f"  {path.suffix} {case:<22} {kept:>10,} kept   interp {ours:6.2f} s "
                    f"{our_peak:7.0f} MiB   reference {ref:6.2f} s {ref_peak:7.0f} MiB   "
                    f"ratio {ref / ours:5.2f}"
                )


if __name__ == "__main__":
    child(*sys.argv[1:4])
