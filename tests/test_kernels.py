"""The compiled kernels: all in interp/_kernels, cached with a stamp of the whole folder."""

import ast
from pathlib import Path

import numba

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


def test_every_kernel_is_cached_by_the_folder_locator():
    kernels = [
        obj
        for module in (clip, evaluate, fit, geometry, locate, polygon, validate)
        for obj in vars(module).values()
        if isinstance(obj, numba.core.registry.CPUDispatcher)
    ]
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
