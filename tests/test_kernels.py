"""The compiled kernels: all in interp/_kernels, cached with a stamp of the whole folder."""

import ast
from pathlib import Path

import numba
import numpy as np

import interp
from interp import _kernels
from interp._kernels import (
    KernelCacheLocator,
    clip,
    evaluate,
    fit,
    geometry,
    locate,
    polygon,
    source_files,
    source_stamp,
    validate,
)

ROOT = Path(interp.__file__).parent


def _decorated_by_njit(node: ast.FunctionDef) -> bool:
    return any("njit" in ast.unparse(d) for d in node.decorator_list)


def test_every_kernel_lives_in_the_kernels_folder():
    outside = []
    for path in ROOT.rglob("*.py"):
        if path.parent.name == "_kernels":
            continue
        for node in ast.walk(ast.parse(path.read_text())):
            if isinstance(node, ast.FunctionDef) and _decorated_by_njit(node):
                outside.append(f"{path.relative_to(ROOT)}: {node.name}")
    assert not outside, "numba kernels outside interp/_kernels: " + ", ".join(outside)


def _all_kernels() -> list:
    return [
        obj
        for module in (clip, evaluate, fit, geometry, locate, polygon, validate)
        for obj in vars(module).values()
        if isinstance(obj, numba.core.registry.CPUDispatcher)
    ]


def test_every_kernel_is_cached_by_the_folder_locator():
    kernels = _all_kernels()
    assert len(kernels) >= 50
    for kernel in kernels:
        assert isinstance(kernel._cache._impl.locator, KernelCacheLocator), kernel.__name__
        # the stamp numba compares a cached kernel against is the folder's
        assert kernel._cache._impl.locator.get_source_stamp() == source_stamp()


def test_stamp_covers_every_file_of_the_folder_and_the_tolerances(tmp_path, monkeypatch):
    folder = tmp_path / "_kernels"
    folder.mkdir()
    (folder / "fit.py").write_text("A = 1\n")
    (folder / "validate.py").write_text("B = 2\n")
    tolerances = tmp_path / "_geometry.py"
    tolerances.write_text("TOLERANCE = 1e-10\n")
    monkeypatch.setattr(_kernels, "SOURCES", (folder, tolerances))
    assert [p.name for p in source_files()] == ["fit.py", "validate.py", "_geometry.py"]
    stamps = [source_stamp()]
    # an edit to a kernel that another file calls, to the other file, to a tolerance:
    # each gives a new stamp, so every cached kernel is compiled again
    (folder / "fit.py").write_text("A = 10\n")
    stamps.append(source_stamp())
    (folder / "validate.py").write_text("B = 20\n")
    stamps.append(source_stamp())
    tolerances.write_text("TOLERANCE = 1e-9\n")
    stamps.append(source_stamp())
    assert len(set(stamps)) == 4
    (folder / "fit.py").write_text("A = 1\n")
    (folder / "validate.py").write_text("B = 2\n")
    tolerances.write_text("TOLERANCE = 1e-10\n")
    assert source_stamp() == stamps[0]  # the stamp is of contents, not of times


def _kernel_named(module: str):
    """A fresh, uncached numba function that numba reports as defined in ``module``."""
    namespace = {"__name__": module}
    exec("def twice(a):\n    return 2 * a\n", namespace)
    return numba.njit(namespace["twice"])


def test_notice_once_before_the_first_kernel_compile(capsys, monkeypatch):
    monkeypatch.setattr(_kernels._ANNOUNCER, "done", False)
    _kernels.set_announce(True)
    try:
        assert _kernel_named("elsewhere")(2.0) == 4.0  # not a kernel of interp: no notice
        assert capsys.readouterr().err == ""
        assert _kernel_named("interp._kernels.sample")(2.0) == 4.0
        assert _kernel_named("interp._kernels.sample")(3) == 6  # a second compile: silent
    finally:
        _kernels.set_announce(None)
    assert capsys.readouterr().err == _kernels.NOTICE + "\n"


def test_notice_off_and_by_default_off_when_stderr_is_not_a_terminal(capsys, monkeypatch):
    for setting in (False, None):  # pytest's captured stderr is not a terminal
        monkeypatch.setattr(_kernels._ANNOUNCER, "done", False)
        _kernels.set_announce(setting)
        assert _kernel_named("interp._kernels.sample")(1.5) == 3.0
    _kernels.set_announce(None)
    assert capsys.readouterr().err == ""


def test_prepare_leaves_nothing_to_compile():
    interp.prepare()
    report = interp.prepare()  # every kernel it needs now comes from the cache
    assert report.compiled == 0
    pts = np.random.default_rng(3).random((30, 2))
    before = sum(k.stats.cache_misses.total() for k in _all_kernels())
    interp.crossvalidate(pts, pts[:, 0] ** 2, order=2)
    interp.fit(pts, pts[:, 1], order=2)(pts[:5])
    assert sum(k.stats.cache_misses.total() for k in _all_kernels()) == before
