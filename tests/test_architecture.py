"""The shape of the package: one-way imports, small modules, no private names
borrowed across modules.

Every file of interp/ is parsed with :mod:`ast` and every import statement
counts, wherever it stands: at the top, inside a function, or under
``if TYPE_CHECKING:``.  Importing ``interp.a.b`` also runs ``interp/a/__init__.py``,
so it counts as importing ``interp.a`` too (except from a module of ``interp.a`` itself,
which runs while that ``__init__`` is already loaded).
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent / "interp"
#: the longest a module may grow, in lines.
MAX_LINES = 600
#: the one import that points back up the layers: ``Field.integrate`` forwards to
#: ``interp.integrate`` as a convenience.  It is allowed only as an import inside
#: a function (it runs at call time, when both modules are loaded).
UPWARD = {("interp.field", "interp._integrate")}


def _module_name(path: Path) -> str:
    parts = path.relative_to(ROOT.parent).with_suffix("").parts
    return ".".join(parts[:-1] if parts[-1] == "__init__" else parts)


MODULES = {_module_name(p): p for p in sorted(ROOT.rglob("*.py"))}


def _package(name: str) -> str:
    return name if MODULES[name].name == "__init__.py" else name.rpartition(".")[0]


def _resolve(module: str, node: ast.ImportFrom) -> str:
    """The absolute module name of a ``from ... import`` (relative ones included)."""
    if node.level == 0:
        return node.module or ""
    base = _package(module).split(".")
    base = base[: len(base) - node.level + 1]
    return ".".join(base + ([node.module] if node.module else []))


def _with_parents(name: str) -> list[str]:
    """``interp.a.b`` and the packages whose ``__init__`` importing it runs (all but
    ``interp`` itself, which every module's import runs)."""
    parts = name.split(".")
    return [name] + [".".join(parts[:i]) for i in range(2, len(parts))]


def imports(module: str) -> list[tuple[str, str, bool, int]]:
    """(imported module, name or "", inside a function, line) for every import statement."""
    tree = ast.parse(MODULES[module].read_text(), filename=str(MODULES[module]))
    found = []

    def visit(node: ast.AST, local: bool) -> None:
        for child in ast.iter_child_nodes(node):
            inner = local or isinstance(child, (ast.FunctionDef, ast.AsyncFunctionDef))
            if isinstance(child, ast.Import):
                found.extend((a.name, "", local, child.lineno) for a in child.names)
            elif isinstance(child, ast.ImportFrom):
                target = _resolve(module, child)
                for a in child.names:
                    sub = f"{target}.{a.name}"
                    found.append((sub if sub in MODULES else target, a.name, local, child.lineno))
            visit(child, inner)

    visit(tree, False)
    return found


def graph() -> dict[str, set[str]]:
    """Edges between interp modules, from every import statement."""
    edges: dict[str, set[str]] = {m: set() for m in MODULES}
    for module in MODULES:
        for target, _, _, _ in imports(module):
            for name in _with_parents(target):
                # a package's own modules run inside its __init__, which is loaded first
                inside = module.startswith(name + ".") and name != target
                if (
                    name in MODULES
                    and name != module
                    and not inside
                    and (module, name) not in UPWARD
                ):
                    edges[module].add(name)
    return edges


def find_cycle(edges: dict[str, set[str]]) -> list[str] | None:
    """One cycle of the graph as a list of modules (first repeated last), or None."""
    state: dict[str, int] = {}  # 1 on the path being explored, 2 done
    path: list[str] = []

    def walk(node: str) -> list[str] | None:
        state[node] = 1
        path.append(node)
        for nxt in sorted(edges[node]):
            if state.get(nxt) == 1:
                return path[path.index(nxt) :] + [nxt]
            if nxt not in state:
                cycle = walk(nxt)
                if cycle:
                    return cycle
        state[node] = 2
        path.pop()
        return None

    for node in sorted(edges):
        if node not in state:
            cycle = walk(node)
            if cycle:
                return cycle
    return None


def test_cycle_finder_finds_a_planted_cycle():
    # a -> b -> c -> a plus a tail d -> a: the finder must report the loop itself
    edges = {"a": {"b"}, "b": {"c"}, "c": {"a"}, "d": {"a"}}
    assert find_cycle(edges) == ["a", "b", "c", "a"]
    assert find_cycle({"a": {"b"}, "b": set()}) is None


def test_every_import_is_seen():
    # a function-local import and a package parent are edges (mesh -> index at the
    # top, grid -> interp.io through its __init__)
    edges = graph()
    assert "interp.index" in edges["interp.mesh"]
    assert "interp.io" in edges["interp.grid"]
    local = [t for t, _, inside, _ in imports("interp.field") if inside]
    assert local == ["interp._integrate"]


def test_import_graph_has_no_cycle():
    cycle = find_cycle(graph())
    assert cycle is None, "import cycle: " + " -> ".join(cycle)


def test_the_one_upward_import_stays_inside_a_function():
    for module, target in UPWARD:
        found = [inside for t, _, inside, _ in imports(module) if t == target]
        assert found and all(found), f"{module} must import {target} only inside a function"


@pytest.mark.parametrize("module", sorted(MODULES))
def test_module_is_short(module):
    lines = MODULES[module].read_text().count("\n")
    assert lines <= MAX_LINES, f"{MODULES[module]} has {lines} lines (at most {MAX_LINES})"


def test_no_private_name_imported_across_modules():
    borrowed = []
    for module in MODULES:
        for target, name, _, line in imports(module):
            if target.startswith("interp") and name.startswith("_") and target != module:
                borrowed.append(f"{MODULES[module]}:{line}: {name} from {target}")
    assert not borrowed, "private names imported across modules:\n" + "\n".join(borrowed)
