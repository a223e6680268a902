"""The build backend (scripts/build_backend.py): setuptools, and the kernels compiled at install."""

import importlib.util
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

try:
    import tomllib
except ModuleNotFoundError:  # Python 3.10: the test requirement tomli
    import tomli as tomllib

ROOT = Path(__file__).resolve().parents[1]


@pytest.fixture
def backend(monkeypatch):
    monkeypatch.delenv("INTERP_PREPARE_ON_INSTALL", raising=False)
    spec = importlib.util.spec_from_file_location(
        "build_backend", ROOT / "scripts" / "build_backend.py"
    )
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


@pytest.fixture
def tree(tmp_path):
    """A copy of the package with no compiled kernels, as pip's build tree holds it."""
    shutil.copytree(
        ROOT / "interp", tmp_path / "tree" / "interp", ignore=shutil.ignore_patterns("__pycache__")
    )
    return tmp_path / "tree"


def test_pyproject_names_the_backend_and_its_folder():
    system = tomllib.loads((ROOT / "pyproject.toml").read_text())["build-system"]
    assert system["build-backend"] == "build_backend"
    assert (ROOT / system["backend-path"][0] / "build_backend.py").is_file()


def test_the_build_environment_gets_every_runtime_dependency(backend, monkeypatch):
    # the install step imports the package, so it needs what the package needs
    monkeypatch.chdir(ROOT)
    project = tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]
    for hook in (backend.get_requires_for_build_wheel, backend.get_requires_for_build_editable):
        requires = hook()
        assert set(project["dependencies"]) <= set(requires)


def test_the_step_imports_the_tree_being_built_and_keeps_the_build_path(
    backend, tree, tmp_path, monkeypatch
):
    # pip's build environment reaches its packages through PYTHONPATH
    build_env = tmp_path / "env"
    build_env.mkdir()
    (build_env / "from_build_env.py").write_text("")
    monkeypatch.setenv("PYTHONPATH", str(build_env))
    monkeypatch.setattr(
        backend,
        "CODE",
        "import pathlib, from_build_env, interp\n"
        "pathlib.Path('seen.txt').write_text(interp.__file__)",
    )
    assert backend.compile_kernels(tree)
    assert Path((tree / "seen.txt").read_text()) == tree / "interp" / "__init__.py"


def test_what_the_step_compiles_a_new_process_loads(backend, tree, monkeypatch):
    # a small 1D fit in one process stands for prepare() (tested in test_kernels)
    monkeypatch.setenv("INTERP_COMPILE_JOBS", "1")
    fit = "interp.fit([[0.0], [1.0], [3.0]], [1.0, 2.0, 0.0])"
    monkeypatch.setattr(backend, "CODE", f"import interp; {fit}")
    assert backend.compile_kernels(tree)
    assert list((tree / "interp" / "_kernels" / "__pycache__").glob("*.nbc"))
    code = (
        "from numba.core import event\n"
        "import interp\n"
        "with event.install_recorder('numba:compile') as r:\n"
        f"    {fit}\n"
        "print(sum(1 for _, ev in r.buffer if ev.is_end))"
    )
    out = subprocess.run(
        [sys.executable, "-c", code], cwd=tree, capture_output=True, text=True, check=True
    )
    assert out.stdout.strip() == "0"


def test_a_failed_step_does_not_stop_the_build(backend, tmp_path, monkeypatch, capsys):
    monkeypatch.setattr(backend, "CODE", "raise SystemExit(3)")
    assert not backend.compile_kernels(tmp_path)
    assert "compile on first use" in capsys.readouterr().out


def test_the_step_can_be_skipped(backend, tmp_path, monkeypatch):
    monkeypatch.setenv("INTERP_PREPARE_ON_INSTALL", "0")

    def run(*args, **kwargs):
        raise AssertionError("the step ran")

    monkeypatch.setattr(backend.subprocess, "run", run)
    assert not backend.compile_kernels(tmp_path)
