"""The dask layer against the in-memory code: threaded and multi-process schedulers.

Every block is evaluated by the ordinary in-memory code, so the dask results
must equal the in-memory ones bit for bit, NaN positions included.  The field
must reach each worker once however many blocks there are.
"""

import io
import subprocess
import sys

import cloudpickle
import dask
import dask.array as da
import numpy as np
import pytest
import zarr
from conftest import cube_mesh, square_mesh
from distributed import Client, LocalCluster

import interp
from interp import Field, InterpError, Mesh, parallel
from interp.grid import Grid, to_grid

# deserialisations of CountingField in this process (read on each worker by _unpickled)
UNPICKLED = 0


def _rebuild(mesh, values):
    global UNPICKLED
    UNPICKLED += 1
    return CountingField(mesh, values)


class CountingField(Field):
    """A Field that counts how often it is unpickled, in the process that unpickles it."""

    def __reduce__(self):
        return _rebuild, (self.mesh, self.values)


def _unpickled() -> int:
    return UNPICKLED


def _reset() -> None:
    global UNPICKLED
    UNPICKLED = 0


class _Finder(cloudpickle.CloudPickler):
    """Pickler that counts the times it meets one object."""

    def __init__(self, target):
        super().__init__(io.BytesIO())
        self.target, self.hits = target, 0

    def persistent_id(self, obj):
        if obj is self.target:
            self.hits += 1
            return "target"
        return None


def keys_holding(collection, obj) -> int:
    """How many keys of the graph serialise ``obj`` when sent on their own."""
    count = 0
    for value in dict(collection.__dask_graph__()).values():
        finder = _Finder(obj)
        finder.dump(value)
        count += finder.hits > 0
    return count


@pytest.fixture(scope="module")
def client():
    with (
        LocalCluster(
            n_workers=2,
            processes=True,
            threads_per_worker=1,
            host="127.0.0.1",
            dashboard_address=None,
            scheduler_kwargs={"dashboard_address": "127.0.0.1:0"},
        ) as cluster,
        Client(cluster, set_as_default=False) as c,
    ):
        yield c


MESHES = {
    "P1-2D": lambda: square_mesh(6),
    "P2-2D": lambda: square_mesh(4).elevate(),
    "P1-3D": lambda: cube_mesh(3),
    "P2-3D": lambda: cube_mesh(2).elevate(),
}


def _case(key, comps, seed=7):
    mesh = MESHES[key]()
    rng = np.random.default_rng(seed)
    shape = (mesh.n_nodes,) if comps == 1 else (mesh.n_nodes, comps)
    field = CountingField(mesh, rng.normal(size=shape))
    # a fifth of the points outside the unit square/cube, and some NaN rows
    pts = rng.uniform(-0.25, 1.25, size=(3001, mesh.gdim))
    pts[::97] = np.nan
    return field, pts, da.from_array(pts, chunks=250)


@pytest.mark.parametrize("comps", [1, 3])
@pytest.mark.parametrize("key", list(MESHES))
def test_equals_in_memory(client, key, comps):
    field, pts, dpts = _case(key, comps)
    values = parallel.evaluate(field, dpts, outside=-1.0)
    grads = parallel.evaluate(field, dpts, what="gradient")
    loc = parallel.locate(field.mesh, dpts)
    ref_loc = field.mesh.locate(pts)
    expected = (field(pts, -1.0), field.gradient(pts), ref_loc.cells, ref_loc.bary)
    assert values.shape == expected[0].shape and grads.shape == expected[1].shape
    assert loc.cells.dtype == np.int64 and values.numblocks[0] == 13
    threaded = dask.compute(values, grads, loc.cells, loc.bary, scheduler="threads")
    processes = client.gather(client.compute([values, grads, loc.cells, loc.bary]))
    for got in (threaded, processes):
        for a, b in zip(got, expected, strict=True):
            np.testing.assert_array_equal(a, b)
    assert (expected[2] == -1).sum() > 300  # the outside points really are outside


def test_linear_field_reproduced_through_dask():
    # P1 and P2 interpolation reproduce a linear function exactly (common practice:
    # the Lagrange elements contain all polynomials up to their degree)
    mesh = cube_mesh(2).elevate()
    a = np.array([1.5, -2.0, 0.25])
    field = Field(mesh, mesh.points @ a + 4.0)
    pts = np.random.default_rng(3).uniform(0.0, 1.0, size=(500, 3))
    dpts = da.from_array(pts, chunks=64)
    values, grads = dask.compute(
        parallel.evaluate(field, dpts), parallel.evaluate(field, dpts, what="gradient")
    )
    np.testing.assert_allclose(values, pts @ a + 4.0, rtol=0, atol=1e-12)
    np.testing.assert_allclose(grads, np.broadcast_to(a, (500, 3)), rtol=0, atol=1e-11)


def test_field_is_one_key_of_the_graph():
    field, _, dpts = _case("P1-2D", 1)
    values = parallel.evaluate(field, dpts)
    assert values.numblocks[0] == 13
    assert keys_holding(values, field) == 1
    # the same field used twice in one computation is still one key
    both = da.stack([values, parallel.evaluate(field, dpts, what="gradient")[:, 0]])
    assert keys_holding(both, field) == 1
    loc = parallel.locate(field.mesh, dpts)
    assert keys_holding(loc.bary, field.mesh) == 1


def test_field_reaches_each_worker_once(client):
    field, pts, _ = _case("P2-2D", 3)
    dpts = da.from_array(np.tile(pts, (4, 1)), chunks=300)  # 41 blocks
    client.run(_reset)
    got = client.compute(parallel.evaluate(field, dpts)).result()
    np.testing.assert_array_equal(got, field(np.tile(pts, (4, 1))))
    counts = client.run(_unpickled)
    assert len(counts) == 2 and 1 <= sum(counts.values()) and max(counts.values()) == 1


def test_one_dimensional_points():
    mesh = Mesh([0.0, 1.0, 3.0, 4.0], [[0, 1], [1, 2], [2, 3]])
    field = Field(mesh, [2.0, 0.0, 6.0, 1.0])
    x = np.linspace(-1.0, 5.0, 61)
    got = parallel.evaluate(field, da.from_array(x, chunks=10)).compute(scheduler="threads")
    np.testing.assert_array_equal(got, field(x))


def test_columns_in_several_chunks_and_integer_points():
    field = Field(square_mesh(3), np.arange(16.0))
    pts = np.array([[0, 0], [1, 1], [2, 0]])
    got = parallel.evaluate(field, da.from_array(pts, chunks=(2, 1))).compute()
    np.testing.assert_array_equal(got, field(pts))


def test_bad_arguments():
    field = Field(square_mesh(2), np.arange(9.0))
    with pytest.raises(InterpError, match="dask array"):
        parallel.evaluate(field, np.zeros((3, 2)))
    with pytest.raises(InterpError, match=r"shape \(n, 2\)"):
        parallel.evaluate(field, da.zeros((3, 3)))
    with pytest.raises(InterpError, match="'value' or 'gradient'"):
        parallel.evaluate(field, da.zeros((3, 2)), what="curl")
    with pytest.raises(InterpError, match="Mesh"):
        parallel.locate(field, da.zeros((3, 2)))
    with pytest.raises(InterpError, match="non-empty 1-D axes"):
        parallel.grid({"v": field}, (np.arange(3.0),), chunks=2)
    with pytest.raises(InterpError, match="chunks"):
        parallel.grid({"v": field}, (np.arange(3.0), np.arange(2.0)), chunks=(1, 2, 3))
    with pytest.raises(InterpError, match="not both"):
        with parallel.evaluator(workers=2, scheduler="tcp://127.0.0.1:1"):
            pass
    with pytest.raises(InterpError, match="positive"):
        with parallel.evaluator(workers=0):
            pass
    with pytest.raises(InterpError, match="cannot reach the dask scheduler at 'nowhere'"):
        with parallel.evaluator(scheduler="nowhere"):
            pass


def _fields():
    mesh = square_mesh(5).elevate()
    rng = np.random.default_rng(11)
    return {
        "depth": Field(mesh, rng.normal(size=mesh.n_nodes), units="m"),
        "velocity": Field(mesh, rng.normal(size=(mesh.n_nodes, 2)), units="m/s"),
    }


def test_grid_equals_in_memory_grid(client):
    fields = _fields()
    ref = to_grid(fields, spacing=(0.013, 0.017), bounds=(-0.1, 1.1, -0.05, 1.0))
    out = parallel.grid(fields, ref.axes, chunks=(23, 17))
    assert out["depth"].numblocks == (5, 4) and out["velocity"].chunks[2] == (2,)
    threaded = dask.compute(out, scheduler="threads")[0]
    processes = client.compute(out).result()
    for got in (threaded, processes):
        for name in fields:
            np.testing.assert_array_equal(got[name], ref.fields[name])
    assert np.isnan(ref.fields["depth"]).sum() > 100


def test_grid_3d_equals_in_memory_grid():
    field = Field(cube_mesh(2).elevate(), np.random.default_rng(5).normal(size=125))
    ref = to_grid({"u": field}, spacing=0.09, bounds=(-0.1, 1.0, 0, 1, 0, 0.5))
    out = parallel.grid({"u": field}, ref.axes, chunks=5)["u"]
    np.testing.assert_array_equal(out.compute(scheduler="threads"), ref.values)


def test_grid_graph_holds_nothing_of_grid_size():
    field = Field(square_mesh(4), np.arange(25.0))
    axes = (np.linspace(0, 1, 3000), np.linspace(0, 1, 2000))  # 6e6 nodes, 48 MB a field
    out = parallel.grid({"v": field}, axes, chunks=500)["v"]
    graph = dict(out.__dask_graph__())
    assert len(graph) < 100
    assert len(cloudpickle.dumps(graph)) < 500_000


def test_zarr_round_trip(tmp_path):
    fields = _fields()
    ref = to_grid(fields, spacing=0.02)
    lazy = Grid(ref.axes, parallel.grid(fields, ref.axes, chunks=(16, 20)), ref.units)
    path = interp.io.save_zarr(lazy, tmp_path / "survey.zarr")
    back = interp.open_zarr(path)
    assert parallel.is_dask(back.fields["velocity"])
    assert back.fields["velocity"].chunks[0][0] == 16
    assert back.names == ["depth", "velocity"] and back.units == {"depth": "m", "velocity": "m/s"}
    for a, b in zip(back.axes, ref.axes, strict=True):
        np.testing.assert_array_equal(a, b)
    for name in fields:
        np.testing.assert_array_equal(back.fields[name].compute(), ref.fields[name])
    attrs = dict(zarr.open_group(str(path), mode="r").attrs)
    assert attrs["spacing"] == [0.02, 0.02] and attrs["axes"] == ["x", "y"]
    np.testing.assert_array_equal(zarr.open_group(str(path), mode="r")["x"][:], ref.axes[0])


def test_zarr_from_numpy_replaces_existing_store(tmp_path):
    path = tmp_path / "g.zarr"
    first = Grid((np.arange(4.0), np.arange(3.0)), {"a": np.ones((4, 3))})
    interp.io.save_zarr(first, path)
    values = np.arange(24.0).reshape(4, 3, 2)
    values[1, 1] = np.nan
    second = Grid((np.arange(4.0) * 2, np.arange(3.0)), {"b": values})
    interp.io.save_zarr(second, path)
    assert [p.name for p in tmp_path.iterdir()] == ["g.zarr"]
    back = interp.open_zarr(path)
    assert back.names == ["b"] and back.spacing == (2.0, 1.0)
    np.testing.assert_array_equal(back.values.compute(), values)


def test_zarr_failed_write_leaves_target_untouched(tmp_path):
    path = tmp_path / "g.zarr"
    interp.io.save_zarr(Grid((np.arange(4.0),), {"a": np.ones(4)}), path)

    def fail_on_last(block, block_info=None):
        if block_info[0]["chunk-location"] == (1,):
            raise RuntimeError("disk full")
        return block

    broken = da.ones(4, chunks=2).map_blocks(fail_on_last, dtype=float)
    # one block at a time, so that no other block is being written when the failure
    # is raised and the cleanup can be checked exactly
    with pytest.raises(RuntimeError, match="disk full"), dask.config.set(scheduler="sync"):
        interp.io.save_zarr(Grid((np.arange(4.0),), {"b": broken}), path)
    assert [p.name for p in tmp_path.iterdir()] == ["g.zarr"]
    assert interp.open_zarr(path).names == ["a"]


def test_zarr_bad_names_and_stores(tmp_path):
    for name in ("x", "a/b", "__meta", "..", ""):
        with pytest.raises(InterpError, match="cannot be stored"):
            interp.io.save_zarr(Grid((np.arange(2.0),), {name: np.zeros(2)}), tmp_path / "g.zarr")
    with pytest.raises(InterpError, match="does not exist"):
        interp.io.save_zarr(Grid((np.arange(2.0),), {"a": np.zeros(2)}), tmp_path / "no" / "g.zarr")
    assert list(tmp_path.iterdir()) == []
    with pytest.raises(InterpError, match="no Zarr grid"):
        interp.open_zarr(tmp_path / "missing.zarr")
    zarr.open_group(str(tmp_path / "other.zarr"), mode="w").attrs["title"] = "something else"
    with pytest.raises(InterpError, match="not a grid written by interp"):
        interp.open_zarr(tmp_path / "other.zarr")


def test_evaluator_on_a_running_scheduler(client):
    field, pts, _ = _case("P1-3D", 2, seed=9)
    client.run(_reset)
    with parallel.evaluator(scheduler=client.scheduler.address) as evaluate:
        for part in (pts[:1700], pts[1700:], pts[:1]):
            np.testing.assert_array_equal(evaluate(field, part), field(part))
    # broadcast once on first use, reused by the later calls
    assert list(client.run(_unpickled).values()) == [1, 1]


def test_evaluator_with_local_processes():
    mesh = cube_mesh(2).elevate()
    field = Field(mesh, np.random.default_rng(13).normal(size=mesh.n_nodes))
    pts = np.random.default_rng(14).uniform(-0.2, 1.2, size=(2000, 3))
    with parallel.evaluator(workers=2) as evaluate:
        np.testing.assert_array_equal(evaluate(field, pts), field(pts))
        assert evaluate(field, pts[:0]).shape == (0,)


def test_import_interp_does_not_import_dask():
    code = "import sys, interp, interp.parallel; print('dask' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"
