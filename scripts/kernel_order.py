"""Write interp/kernel_order.json: the kernels each command compiles on a first run, in order.

    python scripts/kernel_order.py [--only "interp demo",prepare,...]

Runs ``interp prepare``, ``interp demo`` and the example of each command in
``interp.cli.EXAMPLES`` (on a copy of data/; a query file is made for
``sample``), each in a fresh process on a fresh copy of the package (no
cache) with no helper processes (``INTERP_COMPILE_JOBS=1``), and records
numba's outermost compile events: the kernels called from Python, with their
argument types, in the order of their first compile.  The helper processes
of a first run (``interp/_prepare.py``) compile these lists from the end.
Rerun it after changing what a command calls or a kernel's argument types;
``tests/test_kernels.py`` checks that the list of ``prepare`` is what
``interp.prepare()`` uses and that every other list is part of it.
"""

from __future__ import annotations

import argparse
import json
import os
import shlex
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

from first_run import RECORD

ROOT = Path(__file__).resolve().parents[1]
OUT = ROOT / "interp" / "kernel_order.json"

REPORT = """
import json
depth, rows = 0, []
for _, ev in events:
    depth += 1 if ev.is_start else -1
    if ev.is_start and depth == 1:
        d = ev.data["dispatcher"]
        row = [d.py_func.__module__, d.py_func.__name__, [repr(a) for a in ev.data["args"]]]
        if row not in rows:
            rows.append(row)
print("ORDER" + json.dumps(rows))
"""


def commands() -> dict[str, list[str]]:
    """The command lines to record, by the key of their list."""
    sys.path.insert(0, str(ROOT))
    from interp.cli import EXAMPLES

    out = {"prepare": ["prepare"]}
    for name, line in EXAMPLES.items():
        if name != "prepare":
            out[f"interp {name}"] = shlex.split(line)[1:]
    return out


def record(argv: list[str], folder: Path) -> list:
    env = dict(os.environ, PYTHONPATH=str(folder), INTERP_COMPILE_JOBS="1")
    env.pop("NUMBA_CACHE_DIR", None)
    code = RECORD + f"from interp.cli import main\nmain({argv!r})\n" + REPORT
    out = subprocess.run(
        [sys.executable, "-c", code], env=env, capture_output=True, text=True, cwd=folder
    )
    if out.returncode:
        sys.exit(f"{shlex.join(argv)} failed:\n{out.stderr}")
    line = next(s for s in out.stdout.splitlines() if s.startswith("ORDER"))
    return json.loads(line[len("ORDER") :])


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__)
    ap.add_argument("--only", help="comma-separated keys to record again; the rest are kept")
    args = ap.parse_args()
    todo = commands()
    orders = json.loads(OUT.read_text()) if args.only and OUT.exists() else {}
    for key, argv in todo.items():
        if args.only and key not in args.only.split(","):
            continue
        with tempfile.TemporaryDirectory() as tmp:
            folder = Path(tmp)
            shutil.copytree(
                ROOT / "interp", folder / "interp", ignore=shutil.ignore_patterns("__pycache__")
            )
            shutil.copytree(ROOT / "data", folder / "data")
            (folder / "query.csv").write_text("id,x,y\nQ1,20,20\nQ2,60,35\nQ3,500,500\n")
            orders[key] = record(argv, folder)
            print(f"{key:<18} {len(orders[key]):3d} kernels", flush=True)
    from interp.io import atomic_path

    with atomic_path(OUT) as tmp:  # a half-written list would leave helpers nothing to read
        tmp.write_text(json.dumps(orders, indent=1) + "\n", encoding="utf-8")
    print(f"wrote {OUT.relative_to(ROOT)}")


if __name__ == "__main__":
    main()
