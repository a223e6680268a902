"""Dask through the public API, and the streaming ``interp sample`` command."""

import shutil
import subprocess
import sys

import numpy as np
import pytest

import interp

da = pytest.importorskip("dask.array")
EXE = shutil.which("interp")


@pytest.fixture(scope="module")
def field():
    rng = np.random.default_rng(11)
    pts = rng.random((400, 2))
    mesh = interp.triangulate(pts).elevate()
    return interp.Field(mesh, np.column_stack([np.sin(3 * mesh.points[:, 0]), mesh.points[:, 1]]))


def test_public_api_dispatches_dask_arrays(field):
    q = np.random.default_rng(1).random((5000, 2)) * 1.2 - 0.1
    lazy = da.from_array(q, chunks=(700, 2))
    np.testing.assert_array_equal(field(lazy).compute(), field(q))
    np.testing.assert_array_equal(field.gradient(lazy).compute(), field.gradient(q))
    loc = field.mesh.locate(lazy)
    ref = field.mesh.locate(q)
    np.testing.assert_array_equal(np.asarray(loc.cells), ref.cells)
    np.testing.assert_array_equal(np.asarray(loc.bary), ref.bary)


def test_chunked_grid_saves_to_zarr(field, tmp_path):
    from interp import open_zarr

    g = interp.to_grid(field, spacing=0.01, chunks=(40, 30))
    ref = interp.to_grid(field, spacing=0.01)
    np.testing.assert_array_equal(g.values.compute(), ref.values)
    back = open_zarr(g.save(tmp_path / "g.zarr"))
    np.testing.assert_array_equal(np.asarray(back.values), ref.values)
    np.testing.assert_array_equal(back.axes[0], ref.axes[0])


def write_queries(path, rows, rng):
    with open(path, "w") as fh:
        fh.write("id,x,y\n")
        for s in range(0, rows, 500_000):
            k = min(500_000, rows - s)
            p = rng.random((k, 2)) * 100
            text = np.char.add(
                np.char.add(np.arange(s, s + k).astype(str), ","), np.char.mod("%.3f", p[:, 0])
            )
            text = np.char.add(np.char.add(text, ","), np.char.mod("%.3f", p[:, 1]))
            fh.write("\n".join(text.tolist()) + "\n")


@pytest.mark.skipif(EXE is None, reason="the interp command is not installed")
def test_sample_with_workers_equals_in_memory(tmp_path):
    rng = np.random.default_rng(5)
    xy = rng.random((3000, 2)) * 100
    interp.io.write_table(
        tmp_path / "s.csv", ["x", "y", "z"], np.column_stack([xy, np.cos(xy[:, 0] / 9) * 4])
    )
    write_queries(tmp_path / "q.csv", 20_000, rng)
    common = [EXE, "sample", "-q", tmp_path / "s.csv", tmp_path / "q.csv", "--chunk-rows", "6000"]
    a = subprocess.run(
        [*map(str, common), "-o", str(tmp_path / "a.csv")],
        capture_output=True,
        text=True,
        timeout=300,
    )
    b = subprocess.run(
        [*map(str, common), "-o", str(tmp_path / "b.csv"), "--workers", "2"],
        capture_output=True,
        text=True,
        timeout=300,
    )
    assert a.returncode == 0 and b.returncode == 0, a.stderr + b.stderr
    assert (tmp_path / "a.csv").read_bytes() == (tmp_path / "b.csv").read_bytes()


@pytest.mark.skipif(EXE is None, reason="the interp command is not installed")
def test_sample_memory_stays_flat(tmp_path):
    # the command reads, evaluates and writes in chunks, so its peak resident set must not
    # grow with the file: 2M and 8M rows differ by less than 20% (a loose bound; the
    # figures themselves are printed and recorded from scripts/bench.py)
    rng = np.random.default_rng(9)
    xy = rng.random((5000, 2)) * 100
    interp.io.write_table(
        tmp_path / "s.csv", ["x", "y", "z"], np.column_stack([xy, xy[:, 0] * 0.1])
    )
    probe = (
        "import resource, subprocess, sys; subprocess.run(sys.argv[1:], check=True); "
        "print(resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024)"
    )
    peaks = {}
    for rows in (2_000_000, 8_000_000):
        q = tmp_path / "q.csv"
        write_queries(q, rows, rng)
        out = subprocess.run(
            [
                sys.executable,
                "-c",
                probe,
                EXE,
                "sample",
                "-q",
                str(tmp_path / "s.csv"),
                str(q),
                "-o",
                str(tmp_path / "o.csv"),
            ],
            capture_output=True,
            text=True,
            timeout=900,
        )
        assert out.returncode == 0, out.stderr
        peaks[rows] = float(out.stdout)
        with open(tmp_path / "o.csv") as fh:
            assert sum(1 for _ in fh) == rows + 1
        q.unlink()
    print(f"peak resident set of interp sample: {peaks} MiB")
    assert abs(peaks[8_000_000] - peaks[2_000_000]) / peaks[2_000_000] < 0.2
