"""Progress bars: drawn on stderr when it is a terminal, never when piped or with --quiet.

The command runs in a pseudo-terminal (Python's ``pty``).  The bars normally
appear only after a step has run for ``interp._progress.DELAY`` seconds; the
runs here set it to 0 so that the bars of these small data sets are drawn,
without waiting and without any timing assertion.
"""

import contextlib
import fcntl
import io
import os
import pty
import re
import struct
import subprocess
import sys
import termios

import numpy as np
import pytest

from interp import _progress

#: the ``interp`` command with bars drawn from the first unit of work.
COMMAND = (
    "import sys; import interp._progress as p; p.DELAY = 0; "
    "from interp.cli import main; sys.exit(main(sys.argv[1:]))"
)


def run(args, *, terminal=True):
    """Run ``interp args``; stderr on a pseudo-terminal of 120 columns (or a pipe).
    Returns (exit code, stdout, stderr)."""
    argv = [sys.executable, "-c", COMMAND, *map(str, args)]
    if not terminal:
        r = subprocess.run(argv, capture_output=True, text=True, timeout=300)
        return r.returncode, r.stdout, r.stderr
    main, child = pty.openpty()
    fcntl.ioctl(child, termios.TIOCSWINSZ, struct.pack("HHHH", 40, 120, 0, 0))
    with subprocess.Popen(
        argv, stdin=subprocess.DEVNULL, stdout=subprocess.PIPE, stderr=child, text=True
    ) as proc:
        os.close(child)
        err = b""
        while True:
            try:
                chunk = os.read(main, 65536)
            except OSError:  # the child closed the terminal (Linux raises EIO)
                break
            if not chunk:
                break
            err += chunk
        out = proc.stdout.read()
        proc.wait(timeout=300)
    os.close(main)
    return proc.returncode, out, err.decode()


def pieces(text):
    """The states of the terminal lines: text split at carriage returns and newlines."""
    return [p.strip() for p in re.split(r"[\r\n]", text) if p.strip()]


@pytest.fixture(scope="module")
def survey(tmp_path_factory):
    d = tmp_path_factory.mktemp("progress")
    rng = np.random.default_rng(11)
    xy = rng.random((400, 2)) * [50.0, 30.0]
    z = 10 + 0.2 * xy[:, 0] - 0.1 * xy[:, 1]
    rows = [f"{x:.3f},{y:.3f},{h:.3f}" for x, y, h in np.column_stack([xy, z])]
    (d / "s.csv").write_text("x,y,z\n" + "\n".join(rows) + "\n")
    q = rng.random((250, 2)) * [50.0, 30.0]
    (d / "q.csv").write_text("x,y\n" + "\n".join(f"{x:.3f},{y:.3f}" for x, y in q) + "\n")
    return d


def test_grid_draws_bars_on_a_terminal(survey):
    code, out, err = run(["grid", survey / "s.csv", "--spacing", "2.5", "-o", survey / "g.npz"])
    assert code == 0, err
    g = np.load(survey / "g.npz")
    nodes = len(g["x"]) * len(g["y"])  # the grid file's own axes
    assert 100 <= nodes < 1000  # printed as a plain number, no k suffix
    lines = pieces(err)
    # each bar ends full, its count the step's known size: 400 points, the grid's nodes
    assert any(
        p.startswith("interp: triangulating: 100%|") and "| 400/400 points [" in p for p in lines
    ), err
    assert any(
        p.startswith("interp: evaluating the grid: 100%|") and f"| {nodes}/{nodes} nodes [" in p
        for p in lines
    ), err
    assert any(
        p.startswith("interp: building the point index: 100%|") and "| 3/3 stages [" in p
        for p in lines
    ), err
    assert out.startswith(f"wrote {survey / 'g.npz'}")


def test_crossval_draws_a_bar_per_point(survey):
    code, _, err = run(["crossval", survey / "s.csv", "--order", "2"])
    assert code == 0, err
    lines = pieces(err)
    assert any(
        p.startswith("interp: leave-one-out: 100%|") and "| 400/400 points [" in p for p in lines
    ), err
    assert "interp: leave-one-out residuals of z..." in lines


def test_sample_counts_the_rows(survey):
    code, _, err = run(["sample", survey / "s.csv", survey / "q.csv", "-o", survey / "o.csv"])
    assert code == 0, err
    assert len((survey / "o.csv").read_text().splitlines()) == 251  # header and 250 rows
    # no total is known ahead for a CSV query file: a counter of the rows
    assert any(p.startswith("interp: sampling: 250 rows") for p in pieces(err)), err


@pytest.mark.parametrize(
    "args",
    [
        ["grid", "s.csv", "--spacing", "2.5", "-o", "g2.npz"],
        ["sample", "s.csv", "q.csv", "-o", "o2.csv"],
        ["crossval", "s.csv"],
    ],
)
def test_no_bar_when_piped_or_quiet(survey, args):
    args = [survey / a if a.endswith((".csv", ".npz")) else a for a in args]
    code, _, err = run(args, terminal=False)
    assert code == 0, err
    assert "%|" not in err and "interp: " not in err
    code, _, err = run([*args, "--quiet"])
    assert code == 0, err
    assert err == ""


def test_off_by_default_and_silent():
    """The Python API draws nothing: with the bars off (the default) a step's
    ``advance`` is one function that does nothing, even with no delay."""
    assert not _progress.enabled()
    err = io.StringIO()
    with contextlib.redirect_stderr(err), _progress.task("x", total=5) as advance:
        advance(5)
    assert advance is _progress._nothing
    assert err.getvalue() == ""


def test_a_line_goes_above_the_bar(monkeypatch):
    """A note (the first-compile notice, a warning) printed while a bar is drawn
    gets a terminal line of its own, not the middle of the bar."""
    monkeypatch.setattr(_progress, "DELAY", 0)
    err = io.StringIO()
    with contextlib.redirect_stderr(err):
        _progress.enable(True)
        try:
            with _progress.task("counting", total=4, unit="points") as advance:
                advance(2)
                _progress.write("interp: a note")
                advance(2)
        finally:
            _progress.enable(False)
    assert "interp: a note" in pieces(err.getvalue())
    assert any(p.startswith("interp: counting: 100%|") for p in pieces(err.getvalue()))


def test_slices_do_not_change_results(monkeypatch):
    """The chunked kernels give bit for bit what one call over every point gives
    (the slice length set to cover all the points in one call, then to a few)."""
    import interp
    from interp import _delaunay2d, _fit, _validate

    rng = np.random.default_rng(5)
    pts = rng.random((700, 2))
    z = np.sin(3 * pts[:, 0]) + pts[:, 1] ** 2
    runs = []
    for size in (10**6, 37):
        for module in (_delaunay2d, _fit, _validate):
            monkeypatch.setattr(module, "SLICE", size)
        f = interp.fit(pts, z, order=2)
        runs.append((_delaunay2d.delaunay2d(pts), f.values, interp.crossvalidate(pts, z, order=2)))
    for whole, sliced in zip(*runs, strict=True):
        np.testing.assert_array_equal(whole, sliced)


def test_las_reading_counts_the_header_points(tmp_path):
    laspy = pytest.importorskip("laspy")
    rng = np.random.default_rng(3)
    las = laspy.LasData(laspy.LasHeader(point_format=3, version="1.4"))
    xy = rng.random((300, 2)) * 40.0
    las.x, las.y, las.z = xy[:, 0], xy[:, 1], 5.0 + 0.1 * xy[:, 0]
    las.write(tmp_path / "cloud.las")
    code, _, err = run(["crossval", tmp_path / "cloud.las"])
    assert code == 0, err
    # the bar's total is the header's point count, 300 as written
    assert any(
        p.startswith("interp: reading cloud.las: 100%|") and "| 300/300 points [" in p
        for p in pieces(err)
    ), err
