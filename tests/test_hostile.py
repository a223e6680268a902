"""Hostile input, through the ``interp`` command and through the Python API.

Every bad input gets the same answer: on the command line one line
``interp: error: ...`` on stderr saying what is wrong and where, exit 1 (2 for
a usage error), no traceback, no output file left behind (not even a hidden
temporary one), no hang and no attempt at a huge allocation; through the API an
:class:`interp.InterpError` saying the same.  Each command runs in a folder of
its own, which must hold only its inputs afterwards.  Inputs that are odd but
legal (a byte-order mark, coordinates of 1e15, NaN values) are answered by
correct results, checked against exact values.
"""

import json
import re
import shutil
import signal
import subprocess
import sys
import time
import warnings
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import interp
from interp.errors import InterpError
from interp.source import load, sample_file

EXE = shutil.which("interp") or pytest.skip(
    "the interp command is not installed", allow_module_level=True
)
#: seconds any single command may take before it counts as a hang.
HANG = 120

RNG = np.random.default_rng(15)
SURVEY_XY = RNG.random((60, 2)) * [50.0, 30.0]
LATTICE = np.array([(x, y) for x in range(5) for y in range(5)], dtype=float)

# the input files, by name: bytes or text
FILES = {
    "s.csv": "x,y,z\n"
    + "".join(f"{x!r},{y!r},{0.1 * x - 0.2 * y + 3!r}\n" for x, y in SURVEY_XY.tolist()),
    "q.csv": "id,x,y\nA,25,15\nB,80,80\n",
    "q_square.csv": "x,y\n1,1\n0.5,1.5\n",
    "q_huge.csv": "x,y\n2.5e14,5e14\n7.5e14,2.5e14\n",
    "q_tiny.csv": f"x,y\n{1e6 + 1.5e-9!r},{1e6 + 2e-9!r}\n{1e6 + 3.25e-9!r},{1e6 + 1e-9!r}\n",
    "square.csv": "x,y\n5,5\n45,5\n45,25\n5,25\n",
    "empty.csv": "",
    "header.csv": "x,y,z\n",
    "no_x.csv": "a,b,z\n1,2,3\n",
    "no_y.csv": "x,z\n1,3\n2,3\n",
    "text_coord.csv": "x,y,z\n0,0,1\n1,abc,2\n0,1,3\n",
    "text_value.csv": "x,y,z\n0,0,1\n1,0,abc\n0,1,3\n",
    "nan_coord.csv": "x,y,z\n0,0,1\n1,nan,2\n0,1,3\n",
    "inf_coord.csv": "x,y,z\n0,0,1\n1,-inf,2\n0,1,3\n",
    "nan_value.csv": "x,y,z\n0,0,0\n2,0,2\n0,2,4\n2,2,6\n1,1,nan\n",
    "inf_value.csv": "x,y,z\n0,0,1\n1,0,inf\n0,1,3\n1,1,4\n",
    "bom.csv": b"\xef\xbb\xbfx,y,z\n0,0,0\n2,0,2\n0,2,4\n",
    "latin1.csv": "x,y,h\xf6he\n0,0,1\n2,0,2\n0,2,4\n".encode("latin-1"),
    "binary.csv": bytes(np.random.default_rng(3).integers(0, 256, 3000, dtype=np.uint8)),
    "mixed_header.csv": "x;y\tz\n0;0\t1\n1;0\t2\n0;1\t3\n",
    "mixed_rows.csv": "x,y,z\n0,0,1\n1;0;2\n0,1,3\n",
    "identical.csv": "x,y,z\n1,1,1\n1,1,2\n1,1,3\n1,1,4\n",
    "two.csv": "x,y,z\n0,0,1\n1,1,2\n",
    "collinear.csv": "x,y,z\n0,0,1\n1,1,2\n2,2,3\n3,3,4\n",
    # z = 1 + 3 x / 1e15 + 2 y / 1e15 on a square 1e15 across: P1 reproduces it exactly
    "huge.csv": "x,y,z\n0,0,1\n1e15,0,4\n0,1e15,3\n1e15,1e15,6\n",
    # a 5 x 5 lattice 4e-9 across at an offset of 1e6; z = 1e9 (x - 1e6) of the stored x
    "tiny.csv": "x,y,z\n"
    + "".join(
        f"{1e6 + 1e-9 * x!r},{1e6 + 1e-9 * y!r},{((1e6 + 1e-9 * x) - 1e6) * 1e9!r}\n"
        for x, y in LATTICE.tolist()
    ),
    "bowtie.csv": "x,y\n5,5\n45,25\n45,5\n5,25\n",
    "two_vertices.csv": "x,y\n5,5\n45,25\n",
    "hole_outside.csv": "x,y,ring\n5,5,0\n45,5,0\n45,25,0\n5,25,0\n"
    "100,100,1\n110,100,1\n110,110,1\n",
    "garbage.vtu": bytes(np.random.default_rng(4).integers(0, 256, 600, dtype=np.uint8)),
}


def _vtu_files(d: Path) -> None:
    import meshio

    mesh = interp.triangulate(LATTICE)
    interp.write(d / "ok.vtu", mesh, {"t": mesh.points[:, 0]})
    raw = (d / "ok.vtu").read_bytes()
    (d / "truncated.vtu").write_bytes(raw[: len(raw) // 2])
    (d / "ok.vtu").unlink()
    pts = np.array([[0, 0, 0], [1, 0, 0], [0, 1, 0], [0, 0, 1], [1, 1, 1]], dtype=float)
    tet10 = [[0, 1, 2, 3, 4, 4, 4, 4, 4, 4]]
    meshio.write(
        d / "mixed_cells.vtu",
        meshio.Mesh(pts, [("tetra", [[0, 1, 2, 3]]), ("tetra10", tet10)], {"t": pts[:, 0]}),
    )


@pytest.fixture(scope="module")
def inputs(tmp_path_factory):
    d = tmp_path_factory.mktemp("inputs")
    for name, content in FILES.items():
        if isinstance(content, bytes):
            (d / name).write_bytes(content)
        else:
            (d / name).write_text(content)
    _vtu_files(d)
    (d / "folder.npz").mkdir()
    return d


def _blocking(*modules: str) -> list[str]:
    """A command line running ``interp`` as if ``modules`` were not installed."""
    hide = "; ".join(f"sys.modules[{m!r}] = None" for m in modules)
    return [
        sys.executable,
        "-c",
        f"import sys; {hide}; from interp.cli import main; sys.exit(main())",
    ]


# (case, command line, exit status, fragments of the error line); "@" marks an input file
# copied into the case's own folder (the output-equals-input cases), "%" one read in place
CASES = [
    # files
    ("empty file", ["info", "%empty.csv"], 1, ["empty.csv", "the file is empty"]),
    ("header only", ["info", "%header.csv"], 1, ["header.csv", "no data rows"]),
    ("no x column", ["info", "%no_x.csv"], 1, ["no_x.csv", "no column named 'x'", "'a', 'b'"]),
    ("no y column", ["info", "%no_y.csv"], 1, ["no_y.csv", "no column named 'y'"]),
    ("text coordinate", ["info", "%text_coord.csv"], 1, ["line 3", "'abc' is not a number"]),
    ("text value", ["info", "%text_value.csv"], 1, ["text_value.csv", "no value columns"]),
    ("nan coordinate", ["info", "%nan_coord.csv"], 1, ["nan_coord.csv, line 3", "'nan'"]),
    ("inf coordinate", ["info", "%inf_coord.csv"], 1, ["inf_coord.csv, line 3", "'-inf'"]),
    ("inf value", ["info", "%inf_value.csv"], 1, ["inf_value.csv", "'z'", "infinite"]),
    ("binary as csv", ["info", "%binary.csv"], 1, ["binary.csv, line 1, column", "not a text"]),
    ("mixed header", ["info", "%mixed_header.csv"], 1, ["'x;y'", "tab-delimited"]),
    ("mixed rows", ["info", "%mixed_rows.csv"], 1, ["mixed_rows.csv, line 3", "'1;0;2'"]),
    ("latin-1 to vti", ["grid", "%latin1.csv", "--spacing", "1", "-o", "g.vti"], 1, ["'höhe'"]),
    ("latin-1 to npz", ["grid", "%latin1.csv", "--spacing", "1", "-o", "g.npz"], 1, ["UTF-8"]),
    ("truncated vtu", ["info", "%truncated.vtu"], 1, ["truncated.vtu", "cannot read it"]),
    ("garbage vtu", ["info", "%garbage.vtu"], 1, ["garbage.vtu", "cannot read it"]),
    ("mixed cells", ["info", "%mixed_cells.vtu"], 1, ["mixed_cells.vtu", "tetra10 (1 cell)"]),
    # points
    ("identical points", ["info", "%identical.csv"], 1, ["at least 3 points; got 1"]),
    ("two points", ["info", "%two.csv"], 1, ["at least 3 points; got 2"]),
    ("collinear points", ["info", "%collinear.csv"], 1, ["collinear"]),
    # polygons
    (
        "self-intersecting boundary",
        ["grid", "%s.csv", "--spacing", "1", "--boundary", "%bowtie.csv", "-o", "g.npz"],
        1,
        # file lines of the crossing edges' ends: rows 1-2 and 3-4 of the file, lines 2-5
        ["bowtie.csv", "not simple", "the edge from line 2 to line 3 meets the edge from line 4"],
    ),
    (
        "self-intersecting region",
        ["integrate", "%s.csv", "--region", "%bowtie.csv"],
        1,
        ["bowtie.csv", "not simple"],
    ),
    (
        "two-vertex boundary",
        ["grid", "%s.csv", "--spacing", "1", "--boundary", "%two_vertices.csv", "-o", "g.npz"],
        1,
        ["two_vertices.csv (lines 2-3)", "at least 3 distinct vertices"],
    ),
    (
        "hole outside",
        ["grid", "%s.csv", "--spacing", "1", "--boundary", "%hole_outside.csv", "-o", "g.npz"],
        1,
        ["hole_outside.csv", "hole 1 lies outside the exterior"],
    ),
    (
        "hole outside region",
        ["volume", "%s.csv", "--level", "0", "--region", "%hole_outside.csv"],
        1,
        ["hole_outside.csv", "outside the exterior"],
    ),
    # outputs; /sys refuses new files even to root (a chmod'ed folder would not stop root)
    ("folder not writable", ["grid", "%s.csv", "--spacing", "1", "-o", "/sys/g.npz"], 1, ["/sys"]),
    ("missing folder", ["grid", "%s.csv", "--spacing", "1", "-o", "no/g.npz"], 1, ["no/g.npz"]),
    ("output in a file", ["grid", "@s.csv", "--spacing", "1", "-o", "s.csv/g.npz"], 1, ["s.csv"]),
    (
        "output a folder",
        ["grid", "%s.csv", "--spacing", "1", "-o", "%folder.npz"],
        1,
        ["folder.npz: it is a folder"],
    ),
    ("output is input", ["grid", "@s.csv", "--spacing", "1", "-o", "s.csv"], 1, ["also the"]),
    ("output is query", ["sample", "%s.csv", "@q.csv", "-o", "./q.csv"], 1, ["also the input"]),
    (
        "profile over input",
        ["profile", "@s.csv", "--line", "5,5,40,20", "--step", "1", "-o", "s.csv"],
        1,
        ["also the input"],
    ),
    # options
    ("spacing 0", ["grid", "%s.csv", "--spacing", "0", "-o", "g.npz"], 2, ["--spacing", "'0'"]),
    ("spacing < 0", ["grid", "%s.csv", "--spacing=-1", "-o", "g.npz"], 2, ["--spacing", "'-1'"]),
    ("spacing nan", ["grid", "%s.csv", "--spacing", "nan", "-o", "g.npz"], 2, ["'nan'"]),
    ("spacing inf", ["grid", "%s.csv", "--spacing", "inf", "-o", "g.npz"], 2, ["'inf'"]),
    (
        "1e12-node grid",
        ["grid", "%s.csv", "--spacing", "3e-5", "-o", "g.npz"],
        1,
        # the survey spans under 50 x 30: about 1.6e6 x 1.0e6 nodes at 8 bytes each
        ["nodes", "TiB of memory", "larger spacing"],
    ),
    (
        "1e13-node axis",
        ["grid", "%s.csv", "--spacing", "1", "--bounds=0,0,1e13,1", "-o", "g.npz"],
        1,
        ["nodes", "TiB of memory"],
    ),
    (
        "absurd spacing",
        ["grid", "%s.csv", "--spacing", "1e-300", "-o", "g.npz"],
        1,
        ["nodes would need", "memory"],
    ),
    (
        "one-point line",
        ["profile", "%s.csv", "--line", "1,2", "--step", "1", "-o", "p.csv"],
        1,
        ["--line needs at least two vertices", "got 2 numbers"],
    ),
    (
        "tiny profile step",
        ["profile", "%s.csv", "--line", "5,5,45,25", "--step", "1e-9", "-o", "p.csv"],
        1,
        ["44,721,359,551 points", "TiB of memory", "larger step"],
    ),
    ("order 3", ["info", "%s.csv", "--order", "3"], 2, ["--order", "invalid choice: 3"]),
    ("level nan", ["volume", "%s.csv", "--level", "nan"], 1, ["level must be finite"]),
    (
        "line with nan",
        ["profile", "%s.csv", "--line", "0,0,nan,1", "--step", "1", "-o", "p.csv"],
        1,
        ["two finite vertices"],
    ),
    ("coords twice", ["info", "%s.csv", "--coords", "x,x"], 1, ["name a column twice"]),
    (
        "bounds nan",
        ["grid", "%s.csv", "--spacing", "1", "--bounds", "nan,1,0,1", "-o", "g.npz"],
        1,
        ["finite numbers"],
    ),
    ("unknown subcommand", ["nosuch"], 2, ["invalid choice: 'nosuch'"]),
    ("no subcommand", [], 2, ["COMMAND"]),
    ("workers 0", ["sample", "%s.csv", "%q.csv", "-o", "o.csv", "--workers", "0"], 2, ["'0'"]),
    (
        "chunk rows -5",
        ["sample", "%s.csv", "%q.csv", "-o", "o.csv", "--chunk-rows=-5"],
        2,
        ["--chunk-rows", "'-5'"],
    ),
    (
        "unresolvable scheduler",
        ["sample", "%s.csv", "%q.csv", "-o", "o.csv", "--scheduler", "tcp://nowhere:1"],
        1,
        ["cannot reach the dask scheduler at 'tcp://nowhere:1'"],
    ),
    (
        "refusing scheduler",
        ["sample", "%s.csv", "%q.csv", "-o", "o.csv", "--scheduler", "tcp://127.0.0.1:1"],
        1,
        ["cannot reach the dask scheduler", "refused"],
    ),
    (
        "crossval missing boundary",
        ["crossval", "%s.csv", "--boundary", "nosuch.csv"],
        1,
        ["nosuch.csv: no such file"],
    ),
    (
        "crossval bad boundary",
        ["crossval", "%s.csv", "--boundary", "%bowtie.csv"],
        1,
        ["bowtie.csv", "not simple"],
    ),
    (
        "short bounds",
        ["grid", "%s.csv", "--spacing", "1", "--bounds", "0,1", "-o", "g.npz"],
        1,
        ["minx,miny,maxx,maxy", "need 4 or 6 numbers; got 2"],
    ),
]
# the same refusal when the optional dask extra is missing
NO_DASK = ("zarr without dask", ["grid", "%s.csv", "--spacing", "1", "-o", "g.zarr"])


def _argv(args: list[str], inputs: Path, here: Path) -> list[str]:
    out = []
    for a in args:
        if a.startswith("@"):
            shutil.copy(inputs / a[1:], here / a[1:])
            a = a[1:]
        elif a.startswith("%"):
            a = str(inputs / a[1:])
        out.append(a)
    return out


def _run(command: list[str], here: Path) -> subprocess.CompletedProcess:
    return subprocess.run(
        command, capture_output=True, encoding="utf-8", errors="replace", cwd=here, timeout=HANG
    )


# Runs many command lines, each in a process of its own forked from one that has imported
# interp once (starting the command costs about a second of imports; a fork, milliseconds):
# each child runs the command's entry point with its own folder, stdout, stderr and exit
# status, as the installed `interp` script does.  test_forked_runner_matches_the_command
# checks that the answers are the same as the command's.
FORKED = """
import json, os, sys, traceback
import numpy as np
import interp
from interp.cli import main
# compile the kernels once here rather than in every child
_pts = np.random.default_rng(0).random((20, 2))
_f = interp.fit(_pts, _pts[:, 0])
interp.to_grid(_f, spacing=0.5), interp.profile(_f, _pts[:2], step=0.1), interp.Polygon(_pts[:3])
try:
    import distributed
except ImportError:
    pass
out = []
for argv, here in json.load(sys.stdin):
    files = [os.path.join(here, os.pardir, os.path.basename(here) + s) for s in (".1", ".2")]
    pid = os.fork()
    if pid == 0:
        os.chdir(here)
        for fd, name in zip((1, 2), files):
            os.dup2(os.open(name, os.O_WRONLY | os.O_CREAT | os.O_TRUNC), fd)
        try:
            code = main(argv)
        except SystemExit as exc:
            code = exc.code if isinstance(exc.code, int) else 1
        except BaseException:
            traceback.print_exc()
            code = 1
        sys.stdout.flush()
        sys.stderr.flush()
        os._exit(code)
    code = os.waitstatus_to_exitcode(os.waitpid(pid, 0)[1])
    out.append([code] + [open(name, encoding="utf-8", errors="replace").read() for name in files])
json.dump(out, sys.stdout)
"""


def run_forked(jobs: list[tuple[list[str], Path]]) -> list[subprocess.CompletedProcess]:
    """Each (command line without the program name, folder) run as described above."""
    plan = json.dumps([[argv, str(here)] for argv, here in jobs])
    r = subprocess.run(
        [sys.executable, "-c", FORKED], input=plan, capture_output=True, text=True, timeout=3 * HANG
    )
    assert r.returncode == 0, r.stderr
    return [
        subprocess.CompletedProcess(argv, code, out, err)
        for (argv, _), (code, out, err) in zip(jobs, json.loads(r.stdout), strict=True)
    ]


# odd but legal input, answered by correct results; "@" and "%" as in CASES
LEGAL = {
    "bom": ["info", "%bom.csv", "--json"],
    "nan value": ["sample", "%nan_value.csv", "%q_square.csv", "-o", "o.csv"],
    "huge": ["sample", "%huge.csv", "%q_huge.csv", "-o", "o.csv"],
    "tiny": ["sample", "%tiny.csv", "%q_tiny.csv", "-o", "o.csv"],
    "latin-1 to csv": ["grid", "%latin1.csv", "--spacing", "1", "-o", "g.csv"],
    "crossval": ["crossval", "%s.csv", "--json"],
    "crossval boundary": ["crossval", "%s.csv", "--boundary", "%square.csv", "--json"],
    "sample": ["sample", "%s.csv", "%q.csv", "-o", "o.csv"],
    "sample workers": ["sample", "%s.csv", "%q.csv", "-o", "o.csv", "--workers", "1"]
    + ["--chunk-rows", "1"],
}


@pytest.fixture(scope="module")
def results(inputs, tmp_path_factory):
    """Every case of CASES and LEGAL run once, each in a folder of its own."""
    jobs = {}
    for case, args in [(c[0], c[1]) for c in CASES] + list(LEGAL.items()):
        here = tmp_path_factory.mktemp("case")
        jobs[case] = (_argv(args, inputs, here), here)
    runs = run_forked(list(jobs.values()))
    return {case: (r, jobs[case][1]) for case, r in zip(jobs, runs, strict=True)}


# cases also run through the installed command, which must answer exactly as above
THROUGH_THE_COMMAND = ["spacing 0", "output is input", "two points"]


@pytest.mark.parametrize("case", THROUGH_THE_COMMAND)
def test_forked_runner_matches_the_command(results, inputs, tmp_path, case):
    args = next(c[1] for c in CASES if c[0] == case)
    r = _run([EXE, *_argv(args, inputs, tmp_path)], tmp_path)
    forked = results[case][0]
    assert (r.returncode, r.stdout, r.stderr) == (forked.returncode, forked.stdout, forked.stderr)
    assert_nothing_written(tmp_path, inputs)


def test_command_line_names_the_missing_extra(inputs, tmp_path):
    r = _run(
        _blocking("dask", "distributed", "zarr") + _argv(NO_DASK[1], inputs, tmp_path), tmp_path
    )
    assert_refused(r, 1, ["optional 'dask' extra", "pip install 'interp[dask]'"])
    assert_nothing_written(tmp_path, inputs)


def assert_refused(r: subprocess.CompletedProcess, code: int, fragments=()) -> str:
    """One error line (after any notes), the exit status, no traceback; returns the line."""
    assert r.returncode == code, r.stderr
    assert "Traceback" not in r.stderr and r.stdout == ""
    lines = r.stderr.splitlines()
    errors = [line for line in lines if not line.startswith("interp: note: ")]
    assert len(errors) == 1 and errors[0].startswith("interp: error: "), r.stderr
    for f in fragments:
        assert f in errors[0], errors[0]
    return errors[0]


def assert_nothing_written(here: Path, inputs: Path) -> None:
    """The case's folder holds only the inputs copied there, unchanged."""
    for p in here.iterdir():
        assert p.is_file() and p.read_bytes() == (inputs / p.name).read_bytes(), p


@pytest.mark.parametrize("case, args, code, fragments", CASES, ids=[c[0] for c in CASES])
def test_command_line_refuses(results, inputs, case, args, code, fragments):
    if "scheduler" in case:
        pytest.importorskip("distributed")
    r, here = results[case]
    assert_refused(r, code, fragments)
    assert_nothing_written(here, inputs)


def test_usage_errors_are_one_line(results):
    line = assert_refused(results["spacing 0"][0], 2)
    assert (
        line.startswith("interp: error: grid: argument --spacing") and "interp grid --help" in line
    )


def test_text_value_is_noted_with_its_line(results):
    assert "'z' (line 3)" in results["text value"][0].stderr


# ---- odd but legal input: answered correctly


def ok(results, case: str) -> tuple[subprocess.CompletedProcess, Path]:
    r, here = results[case]
    assert r.returncode == 0 and "Traceback" not in r.stderr, r.stderr
    return r, here


def sampled(here: Path) -> list[float]:
    return [float(row.split(",")[-1]) for row in (here / "o.csv").read_text().splitlines()[1:]]


def test_bom_is_read(results):
    info = json.loads(ok(results, "bom")[0].stdout)
    assert list(info["fields"]) == ["z"] and info["fields"]["z"]["max"] == 4.0


def test_nan_values_are_dropped_with_a_note(results):
    r, here = ok(results, "nan value")
    assert "1 point(s) with NaN values dropped" in r.stderr
    # z = x + 2 y at the corners of the square 0..2 (its centre, NaN, dropped): P1 reproduces
    # an affine function exactly (linear precision of P1 interpolation, common practice)
    assert sampled(here) == [3.0, 3.5]


def test_large_coordinates_are_exact(results):
    # z = 1 + 3 x / 1e15 + 2 y / 1e15 is affine: P1 reproduces it (linear precision)
    np.testing.assert_allclose(sampled(ok(results, "huge")[1]), [2.75, 3.75], rtol=1e-12)


def test_tiny_spread_at_an_offset_is_exact(results):
    # z is affine in the stored x, so P1 gives it back at the stored query x
    x = np.array([float(row.split(",")[0]) for row in FILES["q_tiny.csv"].splitlines()[1:]])
    np.testing.assert_allclose(sampled(ok(results, "tiny")[1]), (x - 1e6) * 1e9, atol=1e-6)


def test_latin1_header_passes_through_csv(results):
    here = ok(results, "latin-1 to csv")[1]
    assert (here / "g.csv").read_bytes().startswith("x,y,h\xf6he\n".encode("latin-1"))


def test_crossval_boundary_is_used(results):
    z = json.loads(ok(results, "crossval boundary")[0].stdout)["z"]
    # the square 5..45 x 5..25, counted directly
    x, y = SURVEY_XY.T
    beyond = int((~((x >= 5) & (x <= 45) & (y >= 5) & (y <= 25))).sum())
    assert z["outside_boundary"] == beyond > 0
    assert z["count"] + z["outside"] == len(SURVEY_XY) and z["outside"] >= beyond
    plain = json.loads(ok(results, "crossval")[0].stdout)["z"]
    assert plain["count"] > z["count"] > 0


def test_sample_workers_and_chunk_rows_are_used(results):
    pytest.importorskip("distributed")
    (plain, a), (spread, b) = ok(results, "sample"), ok(results, "sample workers")
    assert plain.stdout == spread.stdout == "wrote o.csv: 2 rows, 1 outside the mesh\n"
    assert (a / "o.csv").read_text() == (b / "o.csv").read_text()


def test_broken_pipe_is_quiet(inputs, tmp_path):
    p = subprocess.Popen(
        [EXE, "info", str(inputs / "s.csv"), "--json"],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        cwd=tmp_path,
    )
    p.stdout.close()  # the reader has gone, as after `| head`
    err = p.stderr.read().decode()
    assert p.wait(timeout=HANG) == 128 + signal.SIGPIPE
    assert err == ""


# ---- interruption


def _default_sigint() -> None:
    signal.signal(signal.SIGINT, signal.SIG_DFL)


def _interrupt(command, here: Path, sig: int) -> tuple[int, str]:
    """Start ``command``, send ``sig`` once its temporary output appears, and wait."""
    p = subprocess.Popen(
        command,
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        cwd=here,
        text=True,
        # a shell's background job inherits SIGINT ignored, and Python keeps it so:
        # the command must see Ctrl-C as it does at a terminal
        preexec_fn=_default_sigint,
    )
    deadline = time.monotonic() + HANG
    while not any(f.name.startswith(".") for f in here.iterdir()):
        assert p.poll() is None, p.communicate()
        assert time.monotonic() < deadline, "no temporary output appeared"
        time.sleep(0.005)
    p.send_signal(sig)
    out, err = p.communicate(timeout=HANG)
    assert out == ""
    return p.returncode, err


@pytest.fixture(scope="module")
def long_query(tmp_path_factory):
    path = tmp_path_factory.mktemp("long") / "long.csv"
    xy = np.random.default_rng(2).random((200_000, 2)) * [50.0, 30.0]
    path.write_text("x,y\n" + "\n".join(f"{x:.3f},{y:.3f}" for x, y in xy.tolist()) + "\n")
    return path


@pytest.mark.parametrize(
    "sig, code, word",
    [(signal.SIGINT, 130, "interrupted"), (signal.SIGTERM, 128 + signal.SIGTERM, "terminated")],
)
@pytest.mark.parametrize("what", ["grid", "sample"])
def test_interrupt_leaves_nothing(inputs, long_query, tmp_path, what, sig, code, word):
    if what == "grid":  # about 1.6 million nodes written as CSV: seconds
        command = [EXE, "grid", str(inputs / "s.csv"), "--spacing", "0.03", "-o", "g.csv"]
    else:  # 5 rows at a time: the temporary output grows for seconds
        command = [EXE, "sample", str(inputs / "s.csv"), str(long_query), "-o", "o.csv"]
        command += ["--chunk-rows", "5"]
    returncode, err = _interrupt(command, tmp_path, sig)
    assert returncode == code, err
    lines = err.splitlines()
    assert len(lines) == 1 and lines[0].startswith(f"interp: error: {word}"), err
    assert list(tmp_path.iterdir()) == []


# ---- the same inputs through the Python API


def refused(fragments, call, *args, **kwargs) -> str:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        with pytest.raises(InterpError) as info:
            call(*args, **kwargs)
    for f in fragments:
        assert f in str(info.value), str(info.value)
    return str(info.value)


FILE_CASES = [
    ("empty.csv", ["the file is empty"]),
    ("header.csv", ["no data rows"]),
    ("no_x.csv", ["no column named 'x'"]),
    ("no_y.csv", ["no column named 'y'"]),
    ("text_coord.csv", ["line 3", "not a number"]),
    ("text_value.csv", ["no value columns"]),
    ("nan_coord.csv", ["line 3", "'nan'"]),
    ("inf_coord.csv", ["line 3", "'-inf'"]),
    ("inf_value.csv", ["'z'", "infinite"]),
    ("binary.csv", ["line 1, column", "not a text point file"]),
    ("mixed_header.csv", ["tab-delimited"]),
    ("mixed_rows.csv", ["line 3"]),
    ("truncated.vtu", ["cannot read it"]),
    ("garbage.vtu", ["cannot read it"]),
    ("mixed_cells.vtu", ["a mesh needs one cell kind"]),
    ("identical.csv", ["got 1"]),
    ("two.csv", ["got 2"]),
    ("collinear.csv", ["collinear"]),
]


@pytest.mark.parametrize("name, fragments", FILE_CASES, ids=[c[0] for c in FILE_CASES])
def test_api_load_refuses(inputs, name, fragments):
    refused([name, *fragments], load, inputs / name)


def test_api_polygons(inputs):
    refused(["line 2 to line 3", "line 4 to line 5"], interp.read_polygon, inputs / "bowtie.csv")
    bowtie = [[5.0, 5.0], [45.0, 25.0], [45.0, 5.0], [5.0, 25.0]]
    refused(["exterior edge 1 (vertex 1 to 2) meets exterior edge 3"], interp.Polygon, bowtie)
    refused(["at least 3 distinct vertices"], interp.read_polygon, inputs / "two_vertices.csv")
    rings = interp.read_polygon(inputs / "hole_outside.csv")
    refused(["outside the exterior"], interp.Polygon, rings[0], holes=rings[1:])
    refused(["at least 3"], interp.Polygon, [[0.0, 0.0], [1.0, 1.0]])


@pytest.fixture(scope="module")
def field(inputs):
    return load(inputs / "s.csv")["z"]


def test_api_grid_refuses_before_allocating(field, tmp_path):
    for spacing in (0.0, -1.0, np.nan, np.inf):
        refused(["spacing must be positive"], interp.to_grid, field, spacing=spacing)
    message = refused(["nodes would need", "TiB of memory"], interp.to_grid, field, spacing=3e-5)
    found = re.search(
        r"grid of ([\d,]+) x ([\d,]+) = ([\d,]+) nodes would need ([\d.]+) TiB", message
    )
    a, b, total = (int(found[k].replace(",", "")) for k in (1, 2, 3))
    # nodes lo, lo + s, ... up to hi on each axis of the survey's bounding box: extent / s + 1
    extent = np.ptp(field.mesh.bounds, axis=0)
    assert abs(a - (extent[0] / 3e-5 + 1)) <= 1 and abs(b - (extent[1] / 3e-5 + 1)) <= 1
    assert total == a * b > 1e12 and float(found[4]) == round(8 * total / 2**40, 1)
    refused(["nodes would need"], interp.to_grid, field, spacing=1.0, bounds=[0, 1e13, 0, 1])


def test_api_profile_refuses_before_allocating(field):
    refused(["needs at least two finite vertices"], interp.profile, field, [[1.0, 2.0]], step=1)
    # 44,721,359,549.99 steps along the line of length sqrt(40^2 + 20^2), plus its end
    refused(
        ["44,721,359,551 points", "larger step"],
        interp.profile,
        field,
        [[5, 5], [45, 25]],
        step=1e-9,
    )


def test_api_outputs(inputs, field, tmp_path):
    grid = interp.to_grid(field, spacing=5.0)
    (tmp_path / "d.npz").mkdir()
    refused(["d.npz: it is a folder"], grid.save, tmp_path / "d.npz")
    refused(["check that it exists"], grid.save, tmp_path / "no" / "g.npz")
    refused(["Not a directory"], grid.save, inputs / "s.csv" / "g.npz")
    shutil.copy(inputs / "q.csv", tmp_path / "q.csv")
    refused(
        ["the query file itself"], sample_file, {"z": field}, tmp_path / "q.csv", tmp_path / "q.csv"
    )
    latin = load(inputs / "latin1.csv")
    latin_grid = interp.to_grid(latin, spacing=1.0)
    for suffix in (".vti", ".npz"):
        refused(["'höhe'", "UTF-8"], latin_grid.save, tmp_path / f"g{suffix}")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["d.npz", "q.csv"]


def test_api_odd_vti_names_are_escaped(tmp_path):
    import xml.etree.ElementTree as ET

    g = interp.Grid((np.arange(2.0), np.arange(2.0)), {'a<b & "c"': np.zeros((2, 2))})
    head = g.save(tmp_path / "g.vti").read_bytes().split(b"<AppendedData")[0]
    root = ET.fromstring(head + b"</VTKFile>")
    assert [a.get("Name") for a in root.iter("DataArray")] == ['a<b & "c"']


# ---- fuzzing the point-file and polygon readers

VALID = b"x,y,z,ring\n0,0,1,0\n4,0,2,0\n4,4,3,0\n0,4,4,0\n1,1,5,1\n2,1,6,1\n1,2,7,1\n"
TOKENS = [b",", b";", b"\t", b" ", b"\n", b"\r", b'"', b"0", b"1", b"-", b".", b"e", b"x", b"y"]
TOKENS += [b"ring", b"nan", b"inf", b"1e400", b"\x00", b"\xff", b"\xef\xbb\xbf", b"0,1,0\n"]


def _read_both(tmp: Path, data: bytes) -> None:
    path = tmp / "fuzz.csv"
    path.write_bytes(data)
    for reader in (interp.read_points, interp.read_polygon):
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            try:
                reader(path)
            except InterpError:
                pass


FUZZ = settings(max_examples=150, deadline=None, suppress_health_check=list(HealthCheck))


@FUZZ
@given(data=st.binary(max_size=300))
def test_fuzz_arbitrary_bytes(tmp_path_factory, data):
    _read_both(tmp_path_factory.getbasetemp(), data)


@FUZZ
@given(
    edits=st.lists(
        st.tuples(st.integers(0, len(VALID)), st.integers(0, 4), st.binary(max_size=4)),
        min_size=1,
        max_size=5,
    )
)
def test_fuzz_edits_of_a_valid_file(tmp_path_factory, edits):
    data = bytearray(VALID)
    for at, cut, new in edits:
        data[at : at + cut] = new
    _read_both(tmp_path_factory.getbasetemp(), bytes(data))


@FUZZ
@given(tokens=st.lists(st.sampled_from(TOKENS), max_size=40))
def test_fuzz_tokens_after_a_header(tmp_path_factory, tokens):
    _read_both(tmp_path_factory.getbasetemp(), b"x,y,ring\n" + b"".join(tokens))


def test_a_stray_byte_order_mark_is_a_bad_cell(tmp_path):
    # found by the fuzz test above: a UTF-8 byte-order mark as the only row, after the
    # header, is a character in a cell (only one at the very start of a file is skipped)
    path = tmp_path / "bom.csv"
    path.write_bytes(b"x,y,ring\n\xef\xbb\xbf\n")
    for reader in (interp.read_points, interp.read_polygon):
        with pytest.raises(InterpError, match=r"bom.csv, line 2: the x coordinate '\\ufeff'"):
            reader(path)
