"""The import structure: no import circles, the engine never imports the front ends, and every module imports
on its own in a fresh interpreter.

The graph is read from the source with :mod:`ast` (every ``import`` statement, also those inside functions,
since a late import is still a dependency) and checked with :func:`networkx`-free Tarjan search written
here in a few lines. An edge to a package also stands for its ``__init__``.
"""

from __future__ import annotations

import ast
import pathlib
import subprocess
import sys

ROOT = pathlib.Path(__file__).resolve().parents[2]
PKG = ROOT / "nodeterm"


def _module_name(path: pathlib.Path) -> str:
    parts = list(path.relative_to(ROOT).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def _modules() -> dict[str, pathlib.Path]:
    return {_module_name(p): p for p in PKG.rglob("*.py")}


def _resolve(node: ast.ImportFrom, module: str, is_package: bool) -> str:
    if not node.level:
        return node.module or ""
    base = module.split(".") if is_package else module.split(".")[:-1]
    base = base[: len(base) - (node.level - 1)]
    return ".".join(base + ([node.module] if node.module else []))


def import_graph() -> dict[str, set[str]]:
    """module -> the project modules it imports (anywhere in its body)."""
    mods = _modules()
    graph: dict[str, set[str]] = {m: set() for m in mods}
    for name, path in mods.items():
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            targets = []
            if isinstance(node, ast.Import):
                targets = [a.name for a in node.names]
            elif isinstance(node, ast.ImportFrom):
                src = _resolve(node, name, path.name == "__init__.py")
                targets = [f"{src}.{a.name}" if f"{src}.{a.name}" in mods else src for a in node.names]
            for t in targets:
                while t and t not in mods:  # `import a.b.c` of a non-module attribute: its module
                    t = t.rpartition(".")[0]
                if t and t != name:
                    graph[name].add(t)
    return graph


def circles(graph: dict[str, set[str]]) -> list[list[str]]:
    """Strongly connected components with more than one module (Tarjan's algorithm)."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on: set[str] = set()
    found: list[list[str]] = []

    def visit(v: str) -> None:
        index[v] = low[v] = len(index)
        stack.append(v)
        on.add(v)
        for w in sorted(graph[v]):
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            comp = []
            while True:
                w = stack.pop()
                on.discard(w)
                comp.append(w)
                if w == v:
                    break
            if len(comp) > 1:
                found.append(sorted(comp))

    sys.setrecursionlimit(10_000)
    for v in sorted(graph):
        if v not in index:
            visit(v)
    return found


def test_circle_finder_finds_a_circle():
    # the checker itself must be able to fail
    assert circles({"a": {"b"}, "b": {"c"}, "c": {"a"}, "d": {"a"}}) == [["a", "b", "c"]]
    assert circles({"a": {"b"}, "b": set()}) == []


def test_no_import_circles():
    found = circles(import_graph())
    assert not found, "import circles: " + "; ".join(" <-> ".join(c) for c in found)


def test_arrows_point_one_way():
    """engine never imports present, cli or ui; present never imports ui or cli."""
    bad = []
    for mod, deps in import_graph().items():
        for d in deps:
            if mod.startswith("nodeterm.engine") and d.startswith(("nodeterm.present", "nodeterm.ui",
                                                                   "nodeterm.cli")):
                bad.append(f"{mod} -> {d}")
            if mod.startswith("nodeterm.present") and d.startswith(("nodeterm.ui", "nodeterm.cli")):
                bad.append(f"{mod} -> {d}")
    assert not bad, bad


def test_every_module_imports_in_a_fresh_interpreter():
    code = (
        "import importlib, sys\n"
        f"names = {sorted(m for m in _modules() if not m.endswith('__main__'))!r}\n"
        "bad = []\n"
        "for n in names:\n"
        "    try:\n"
        "        importlib.import_module(n)\n"
        "    except Exception as e:\n"
        "        bad.append(f'{n}: {type(e).__name__}: {e}')\n"
        "print('\\n'.join(bad))\n"
        "sys.exit(1 if bad else 0)\n"
    )
    run = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT, timeout=240)
    assert run.returncode == 0, run.stdout + run.stderr
