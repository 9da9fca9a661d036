"""The plan of the house, checked: which room may import which.

Rules (DEVELOPERS.md, "Rules of the house"; shared DESIGN.md):
- nothing under ``engine/`` imports a window toolkit (PySide6, PyQt, pyqtgraph, qtpy) or
  the window package ``starkiln.gui``, at module level or inside a function;
- ``cli/`` imports the window only inside the function that opens it;
- no module imports another module's private (underscore) names;
- no import cycle between modules of the package.

The imports are read with :mod:`ast` from every ``.py`` file in every subfolder, so a
lazy import inside a function counts as much as one at the top.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
#: repository folder -> package name (pyproject.toml [tool.setuptools.package-dir])
ROOMS = {"api": "starkiln", "cli": "starkiln.cli", "engine": "starkiln.engine",
         "gui": "starkiln.gui", "assets": "starkiln.assets"}
QT = ("PySide6", "PySide2", "PyQt5", "PyQt6", "pyqtgraph", "qtpy", "shiboken6")


def _modules():
    """(package module name, path, parsed tree) for every source file of the package."""
    out = []
    for folder, package in ROOMS.items():
        for path in sorted((ROOT / folder).rglob("*.py")):
            rel = path.relative_to(ROOT / folder).with_suffix("")
            parts = [p for p in rel.parts if p != "__init__"]
            name = ".".join([package, *parts])
            out.append((name, path, ast.parse(path.read_text(encoding="utf-8"))))
    return out


MODULES = _modules()


def _imports(tree, module_name, is_package):
    """Every imported module name in ``tree`` (absolute), with the line and whether it is
    inside a function, and the names taken by ``from X import a, b``."""
    found = []
    typing_only = set()
    for node in ast.walk(tree):  # ``if TYPE_CHECKING:`` imports never run (PEP 484)
        if isinstance(node, ast.If) and "TYPE_CHECKING" in ast.unparse(node.test):
            typing_only.update(id(n) for b in node.body for n in ast.walk(b))
    for node in ast.walk(tree):
        if id(node) in typing_only:
            continue
        if isinstance(node, ast.Import):
            for alias in node.names:
                found.append((alias.name, node.lineno, ()))
        elif isinstance(node, ast.ImportFrom):
            base = node.module or ""
            if node.level:
                pkg = module_name if is_package else module_name.rpartition(".")[0]
                for _ in range(node.level - 1):
                    pkg = pkg.rpartition(".")[0]
                base = f"{pkg}.{base}" if base else pkg
            found.append((base, node.lineno, tuple(a.name for a in node.names)))
    return found


def _top_level_imports(tree):
    """Module names imported at module level (not inside a function or class body)."""
    names = set()
    for node in tree.body:
        stmts = [node]
        if isinstance(node, ast.If) and "TYPE_CHECKING" in ast.unparse(node.test):
            continue  # typing-only imports never run (PEP 484)
        if isinstance(node, (ast.If, ast.Try)):
            stmts = list(ast.walk(node))
        for s in stmts:
            if isinstance(s, ast.Import):
                names.update(a.name for a in s.names)
            elif isinstance(s, ast.ImportFrom) and s.module and not s.level:
                names.add(s.module)
                names.update(f"{s.module}.{a.name}" for a in s.names)
    return names


def test_every_room_is_found():
    names = {m for m, _, _ in MODULES}
    assert "starkiln.engine.pipeline.render" in names
    assert "starkiln.cli.main" in names
    assert len([m for m in names if m.startswith("starkiln.engine.")]) > 20


@pytest.mark.parametrize("name,path,tree", [m for m in MODULES if m[0].startswith("starkiln.engine")],
                         ids=[m[0] for m in MODULES if m[0].startswith("starkiln.engine")])
def test_engine_never_imports_qt_or_the_window(name, path, tree):
    bad = [(mod, line) for mod, line, _ in _imports(tree, name, path.name == "__init__.py")
           if mod.split(".")[0] in QT or mod == "starkiln.gui" or mod.startswith("starkiln.gui.")]
    assert bad == [], f"{path.relative_to(ROOT)} imports {bad}"


def test_no_module_imports_private_names_of_another():
    offenders = []
    for name, path, tree in MODULES:
        for mod, line, taken in _imports(tree, name, path.name == "__init__.py"):
            if not mod.startswith("starkiln") or mod == name:
                continue
            for t in taken:
                if t.startswith("_") and not t.startswith("__"):
                    offenders.append(f"{path.relative_to(ROOT)}:{line} {mod}.{t}")
    assert offenders == []


def test_cli_opens_the_window_only_on_demand():
    for name, path, tree in MODULES:
        if name.startswith("starkiln.cli"):
            top = _top_level_imports(tree)
            assert not any(t.startswith("starkiln.gui") or t.split(".")[0] in QT for t in top), path


def _graph(all_imports: bool):
    """module -> the package modules it imports (at module level, or anywhere)."""
    names = {m for m, _, _ in MODULES}
    graph = {}
    for name, path, tree in MODULES:
        if all_imports:
            found = set()
            for mod, _, taken in _imports(tree, name, path.name == "__init__.py"):
                found.add(mod)
                found.update(f"{mod}.{t}" for t in taken)
        else:
            found = _top_level_imports(tree)
        deps = set()
        for t in found:
            while t and t not in names:
                t = t.rpartition(".")[0]
            if t and t != name and not name.startswith(t + "."):
                deps.add(t)
        graph[name] = deps
    return graph


def find_cycle(graph: dict) -> list:
    """One import cycle in ``graph`` (a list of modules, first == last), or [] (depth-first
    search with an explicit stack: white/grey/black colouring)."""
    colour = {n: 0 for n in graph}
    for start in sorted(graph):
        if colour[start]:
            continue
        path, iters = [start], [iter(sorted(graph[start]))]
        colour[start] = 1
        while path:
            nxt = next(iters[-1], None)
            if nxt is None:
                colour[path.pop()] = 2
                iters.pop()
            elif colour.get(nxt, 2) == 1:
                return path[path.index(nxt):] + [nxt]
            elif colour.get(nxt) == 0:
                colour[nxt] = 1
                path.append(nxt)
                iters.append(iter(sorted(graph[nxt])))
    return []


def test_cycle_finder_finds_a_cycle():
    assert find_cycle({"a": {"b"}, "b": {"c"}, "c": {"a"}, "d": set()}) == ["a", "b", "c", "a"]
    assert find_cycle({"a": {"b"}, "b": set(), "c": {"a", "b"}}) == []


@pytest.mark.parametrize("all_imports", [False, True], ids=["module-level", "lazy-included"])
def test_no_import_cycles(all_imports):
    assert find_cycle(_graph(all_imports)) == []


def test_engine_and_cli_import_without_qt(python_run):
    code = ("import sys, starkiln, starkiln.engine.pipeline.render, starkiln.cli.main\n"
            "starkiln.cli.main.build_parser()\n"
            "import pkgutil, importlib, starkiln.engine\n"
            "for m in pkgutil.walk_packages(starkiln.engine.__path__, 'starkiln.engine.'):\n"
            "    importlib.import_module(m.name)\n"
            "bad = [m for m in sys.modules if m.split('.')[0] in "
            f"{QT!r} or m.startswith('starkiln.gui')]\n"
            "print('QT:' + ','.join(sorted(bad)))\n")
    res = python_run(code, timeout=120)
    assert res.returncode == 0, res.stderr
    assert res.stdout.strip().splitlines()[-1] == "QT:"
