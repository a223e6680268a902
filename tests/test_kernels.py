"""The compiled kernels: all in interp/_kernels, cached with a stamp of the whole folder."""

import ast
from pathlib import Path

import numba
import numpy as np

import interp
from interp import _kernels
from interp._kernels import (
    KernelCacheLocator,
    source_files,
    source_stamp,
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


def _kernel_modules() -> list:
    import importlib
    import pkgutil

    return [
        importlib.import_module(f"interp._kernels.{m.name}")
        for m in pkgutil.iter_modules(_kernels.__path__)
    ]


def _all_kernels() -> list:
    # every module of the folder, so a new one cannot be left out
    return [
        obj
        for module in _kernel_modules()
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


def test_stamp_is_the_same_wherever_the_package_lies(tmp_path, monkeypatch):
    # a cache compiled in a wheel's build tree must stay valid where it is installed
    stamps = []
    for place in ("build", "site-packages"):
        folder = tmp_path / place / "_kernels"
        folder.mkdir(parents=True)
        (folder / "fit.py").write_text("A = 1\n")
        (folder.parent / "_geometry.py").write_text("TOLERANCE = 1e-10\n")
        monkeypatch.setattr(_kernels, "SOURCES", (folder, folder.parent / "_geometry.py"))
        stamps.append(source_stamp())
    assert stamps[0] == stamps[1]
    (folder / "fit.py").rename(folder / "locate.py")  # same contents, another kernel file
    assert source_stamp() != stamps[0]


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


def test_every_kernel_order_names_kernels_with_their_argument_count_and_known_types():
    import inspect

    from interp import _prepare

    orders = _prepare._orders()
    assert {"prepare", "interp demo", "interp grid", "interp crossval"} <= set(orders)
    for key in orders:
        entries = _prepare.kernel_order(key)
        assert entries, key
        for module, name, args in entries:
            kernel = getattr(__import__(module, fromlist=[name]), name)
            assert isinstance(kernel, numba.core.registry.CPUDispatcher), (key, name)
            assert len(inspect.signature(kernel.py_func).parameters) == len(args), (key, name)
            for a in args:  # each type is one numba type, spelt as numba prints it
                assert repr(eval(a, {"__builtins__": {}}, _prepare.TYPES)) == a


def test_kernel_orders_are_what_prepare_uses(tmp_path):
    # a fresh process runs prepare's workload (loading from the cache or compiling) and
    # lists every kernel specialisation it holds; each entry of the "prepare" list must
    # be one of them (a helper compiles nothing the workload does not use), and every
    # command's list must be part of the "prepare" list (prepare leaves nothing out)
    code = (
        "import json, pkgutil, importlib, numba\n"
        "import interp._kernels as k\n"
        "from interp._prepare import _workload\n"
        "_workload()\n"
        "held = []\n"
        "for m in pkgutil.iter_modules(k.__path__):\n"
        "    mod = importlib.import_module('interp._kernels.' + m.name)\n"
        "    for name, d in vars(mod).items():\n"
        "        if isinstance(d, numba.core.registry.CPUDispatcher):\n"
        "            for sig in d.overloads:\n"
        "                held.append([mod.__name__, name, [repr(a) for a in sig]])\n"
        "print(json.dumps(held))\n"
    )
    import json
    import subprocess
    import sys

    from interp import _prepare

    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    held = {json.dumps(e) for e in json.loads(out.stdout.splitlines()[-1])}
    prepared = {json.dumps(list(e)) for e in _prepare.kernel_order("prepare")}
    assert prepared <= held, sorted(prepared - held)[:3]
    for key in _prepare._orders():
        listed = {json.dumps(list(e)) for e in _prepare.kernel_order(key)}
        assert listed <= prepared, (key, sorted(listed - prepared)[:3])


def test_helpers_compile_the_list_from_the_end_into_the_cache(tmp_path):
    # a copy of the package, so that nothing is cached: its list names two small kernels;
    # the block compiles a third one, which starts one helper, and waits for it
    import json
    import shutil
    import subprocess
    import sys

    shutil.copytree(ROOT, tmp_path / "interp", ignore=shutil.ignore_patterns("__pycache__"))
    counting = ["Array(int64, 1, 'C', False, aligned=True)", "int64"]
    order = {"test": [["interp._kernels.locate", "counting_order", counting]]}
    (tmp_path / "interp" / "kernel_order.json").write_text(json.dumps(order))
    code = (
        "import numpy as np\n"
        "from interp._prepare import compile_ahead\n"
        "from interp._kernels.geometry import bad_cells\n"
        "with compile_ahead('test', helpers=1, wait=True) as team:\n"
        "    bad_cells(np.zeros((2, 3), dtype=np.int64), np.int64(3))\n"
        "print(team.started, team.compiled)\n"
    )
    env = {"PYTHONPATH": str(tmp_path), "PATH": "/usr/bin:/bin"}
    out = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, env=env, cwd=tmp_path
    )
    assert out.returncode == 0, out.stderr
    assert out.stdout.split() == ["1", "1"]
    cached = [p.name for p in (tmp_path / "interp" / "_kernels" / "__pycache__").glob("*.nbi")]
    assert any(n.startswith("locate.counting_order") for n in cached), cached
    assert any(n.startswith("geometry.bad_cells") for n in cached), cached


def test_a_block_that_compiles_nothing_and_an_unknown_list_start_no_helper():
    from interp import _prepare
    from interp._prepare import compile_ahead

    pts = np.random.default_rng(1).random((20, 2))
    interp.fit(pts, np.arange(20.0))  # its kernels are compiled or loaded now
    with compile_ahead("prepare", helpers=1) as team:
        interp.fit(pts, np.arange(20.0))
    assert team.started == 0
    # a list the file does not have: a compile would start nobody
    team = _prepare.Helpers("no such list", 4)
    team.start()
    assert team.started == 0 and team.processes == []


def test_helpers_that_cannot_start_leave_the_block_to_compile_alone(monkeypatch):
    from interp import _prepare

    def refuse(*args, **kwargs):
        raise OSError("Resource temporarily unavailable")

    monkeypatch.setattr(_prepare.subprocess, "Popen", refuse)
    team = _prepare.Helpers("prepare", 2)
    team.start()
    assert team.started == 0 and team.processes == []
    team.finish(wait=True)
    assert team.compiled == 0
