"""Keywords renamed so that one concept has one name: the old spelling still works."""

import warnings

import numpy as np
import pytest

import interp
from interp import Box, Field, Mesh, Polygon
from interp._renamed import renamed
from interp.errors import InterpError


def _old(call):
    """Run ``call`` and return its result and the single DeprecationWarning it gave."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        result = call()
    deprecations = [w for w in caught if issubclass(w.category, DeprecationWarning)]
    assert len(deprecations) == 1
    return result, str(deprecations[0].message)


def test_load_name_and_its_old_spelling(tmp_path):
    path = tmp_path / "s.csv"
    path.write_text("x,y,z,t\n0,0,1,5\n1,0,2,6\n0,1,3,7\n")
    new = interp.load(path, name="t")
    old, message = _old(lambda: interp.load(path, field="t"))
    assert list(new) == list(old) == ["t"]
    # the mean of a linear field over its triangle is the mean of its corner values
    assert interp.mean(old["t"]) == pytest.approx(6.0, rel=1e-15)
    assert message == "load(): the keyword field= is now name=; field= will be removed"


def test_region_contains_query_and_its_old_spelling():
    box = Box([0, 0], [1, 1])
    q = [[0.5, 0.5], [2.0, 0.0]]
    old, message = _old(lambda: box.contains(points=q))
    assert box.contains(query=q).tolist() == old.tolist() == [True, False]
    assert "contains(): the keyword points= is now query=" in message


def test_plot_name_and_its_old_spelling():
    pytest.importorskip("pyvista")
    from interp.grid import Grid

    x = np.linspace(0.0, 1.0, 3)
    grid = Grid((x, x), {"z": np.zeros((3, 3)), "w": np.ones((3, 3))})
    _, message = _old(lambda: interp.plot(grid, field="w", off_screen=True))
    assert message.startswith("plot(): the keyword field= is now name=")
    with pytest.raises(InterpError, match="no field named 'q'"):
        interp.plot(grid, name="q", off_screen=True)


def test_parallel_query_and_its_old_spelling():
    da = pytest.importorskip("dask.array")
    from interp import parallel

    f = Field(Mesh([[0.0, 0], [1, 0], [0, 1]], [[0, 1, 2]]), [0.0, 4.0, 8.0])
    q = da.from_array(np.array([[0.25, 0.25]]), chunks=1)
    old, _ = _old(lambda: parallel.evaluate(f, points=q))
    # P1 at barycentric (0.5, 0.25, 0.25): 0.5 * 0 + 0.25 * 4 + 0.25 * 8 = 3
    assert parallel.evaluate(f, query=q).compute().tolist() == old.compute().tolist() == [3.0]


def test_both_spellings_at_once_is_an_error():
    with pytest.raises(InterpError, match=r"got both points= and query=; give query= only"):
        Polygon([[0, 0], [1, 0], [0, 1]]).contains(points=[[0, 0]], query=[[0, 0]])


def test_the_wrapper_keeps_the_new_signature():
    @renamed(old="new")
    def f(*, new=1):
        """Doc."""
        return new

    import inspect

    assert list(inspect.signature(f).parameters) == ["new"]
    assert f.__doc__ == "Doc."


def test_sample_file_query_file_and_its_old_spelling(tmp_path):
    from interp.source import sample_file

    f = Field(Mesh([[0.0, 0], [1, 0], [0, 1]], [[0, 1, 2]]), [0.0, 4.0, 8.0])
    (tmp_path / "q.csv").write_text("x,y\n0.25,0.25\n")
    _, message = _old(
        lambda: sample_file({"z": f}, query=tmp_path / "q.csv", out=tmp_path / "o.csv")
    )
    assert message.startswith("sample_file(): the keyword query= is now query_file=")
    # P1 at barycentric (0.5, 0.25, 0.25) of corner values 0, 4, 8 is 3
    assert (tmp_path / "o.csv").read_text().splitlines() == ["x,y,z", "0.25,0.25,3"]
