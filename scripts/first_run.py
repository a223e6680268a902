"""First-run (cold cache) times: each case in a fresh process on a fresh copy of the package.

    python scripts/first_run.py [--only evaluate,fit2,...] [--kernels]

Each case copies ``interp/`` and ``data/`` to an empty temporary folder (so no
compiled kernel is cached), runs in a new Python process with that copy first
on the path, and prints its wall time and the CPU time of the process (on a
shared machine the CPU time is the steadier figure); ``--kernels`` also lists the compile
time of each kernel specialisation (numba's compile events, outermost only, in CPU
seconds of the process, so that other jobs on the machine do not inflate them).
A second, warm run of the same case in the same copy gives the time without
compiling.
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]

SETUP = """
import numpy as np
import interp
rng = np.random.default_rng(7)
pts = rng.random((400, 2)) * 100
z = np.sin(pts[:, 0] / 17) * 5 + pts[:, 1] * 0.1
"""

CASES = {
    "evaluate": "f = interp.fit(pts, z); f(rng.random((50, 2)) * 100)",
    "fit2": "f = interp.fit(pts, z, order=2); f(rng.random((50, 2)) * 100)",
    "integral": (
        "f = interp.fit(pts, z)\n"
        "poly = interp.Polygon([[10, 10], [90, 20], [80, 90], [20, 70]])\n"
        "interp.integrate(f, region=poly)"
    ),
    "crossvalidate": "interp.crossvalidate(pts, z)",
    "prepare": "interp.prepare()",
}

RECORD = """
import json, time
from numba.core import event
events = []
class Listener(event.Listener):
    def on_start(self, ev):
        events.append((time.process_time(), ev))
    def on_end(self, ev):
        events.append((time.process_time(), ev))
event.register("numba:compile", Listener())
"""

REPORT = """
stack, rows = [], []
for t, ev in events:
    if ev.is_start:
        stack.append(t)
    else:
        t0 = stack.pop()
        if not stack:
            d = ev.data["dispatcher"]
            name = d.py_func.__module__ + "." + d.py_func.__qualname__
            rows.append((t - t0, name, str(ev.data["args"])))
print("KERNELS" + json.dumps(rows))
"""


def run_case(name: str, code: str, folder: Path, kernels: bool) -> tuple[float, float, list]:
    env = dict(os.environ, PYTHONPATH=str(folder))
    env.pop("NUMBA_CACHE_DIR", None)
    if name == "demo":
        cmd = [sys.executable, "-m", "interp.cli", "demo", "-q", "--out", str(folder / "demo-out")]
        if kernels:
            cmd = [
                sys.executable,
                "-c",
                RECORD + "from interp.cli import main\n"
                f"main(['demo', '-q', '--out', {str(folder / 'demo-out')!r}])\n" + REPORT,
            ]
    else:
        body = SETUP + code + "\n"
        cmd = [sys.executable, "-c", (RECORD + body + REPORT) if kernels else body]
    t, cpu = time.perf_counter(), _children_cpu()
    out = subprocess.run(cmd, env=env, capture_output=True, text=True, cwd=folder)
    wall, cpu = time.perf_counter() - t, _children_cpu() - cpu
    if out.returncode:
        sys.exit(f"{name} failed:\n{out.stderr}")
    rows = []
    for line in out.stdout.splitlines():
        if line.startswith("KERNELS"):
            rows = json.loads(line[len("KERNELS") :])
    return wall, cpu, rows


def _children_cpu() -> float:
    usage = resource.getrusage(resource.RUSAGE_CHILDREN)
    return usage.ru_utime + usage.ru_stime


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__)
    ap.add_argument("--only", default=",".join([*CASES, "demo"]))
    ap.add_argument("--kernels", action="store_true", help="list the compile time of each kernel")
    args = ap.parse_args()
    for name in args.only.split(","):
        with tempfile.TemporaryDirectory() as tmp:
            folder = Path(tmp)
            shutil.copytree(
                ROOT / "interp", folder / "interp", ignore=shutil.ignore_patterns("__pycache__")
            )
            shutil.copytree(ROOT / "data", folder / "data")
            code = CASES.get(name, "")
            cold, cold_cpu, rows = run_case(name, code, folder, args.kernels)
            warm, warm_cpu, _ = run_case(name, code, folder, False)
            print(
                f"{name:<14} cold {cold:6.1f} s (cpu {cold_cpu:6.1f} s)   "
                f"warm {warm:6.1f} s (cpu {warm_cpu:6.1f} s)",
                flush=True,
            )
            for secs, kernel, sig in sorted(rows, reverse=True):
                print(f"    {secs:6.2f} s  {kernel}  {sig[:120]}")


if __name__ == "__main__":
    main()
