"""Structure rules of the package (DEVELOPERS.md, DESIGN.md), checked on the source with ``ast``.

* No function body longer than 120 lines (the docstring excluded).
* No cycle in the package's internal import graph: module-level and function-level
  imports (``from .x import y``, ``from . import x``, ``import eclipsekit.x``) are edges,
  resolved to modules; a package's ``__init__`` is a node of its own.
* ``import eclipsekit`` loads none of the heavy libraries (the public names are lazy), and
  every name in ``eclipsekit.__all__`` resolves.

These are project rules (common practice for keeping code readable and start-up quick),
not checks against an outside reference.
"""

from __future__ import annotations

import ast
import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

import eclipsekit

PACKAGE = Path(__file__).resolve().parents[1] / "eclipsekit"
ROOT = PACKAGE.name
MAX_BODY_LINES = 120
#: Imported lazily by design; ``import eclipsekit`` must not load them.
HEAVY = ("lmfit", "matplotlib", "astropy.table", "scipy.optimize")


# -- helpers: the source as modules ------------------------------------------------------
def _module_files(package: Path = PACKAGE) -> dict[str, Path]:
    """Dotted module name -> file, for every ``.py`` file of the package (``__init__`` = the package)."""
    out = {}
    for path in sorted(package.rglob("*.py")):
        parts = list(path.relative_to(package.parent).with_suffix("").parts)
        if parts[-1] == "__init__":
            parts.pop()
        out[".".join(parts)] = path
    return out


def _is_package(name: str, modules: dict[str, Path]) -> bool:
    return modules[name].name == "__init__.py"


def _type_checking_only(node: ast.AST, parents: dict[ast.AST, ast.AST]) -> bool:
    """True for imports under ``if TYPE_CHECKING:`` (never executed, so not an import edge)."""
    while node in parents:
        node = parents[node]
        if isinstance(node, ast.If) and "TYPE_CHECKING" in ast.unparse(node.test):
            return True
    return False


def _resolve(importer: str, node: ast.Import | ast.ImportFrom, modules: dict[str, Path]) -> set[str]:
    """The package modules an import statement loads (the named module and any package it lives in)."""
    targets: set[str] = set()
    if isinstance(node, ast.Import):
        names = [alias.name for alias in node.names]
    else:
        if node.level:
            base = importer if _is_package(importer, modules) else importer.rpartition(".")[0]
            for _ in range(node.level - 1):
                base = base.rpartition(".")[0]
            base = f"{base}.{node.module}" if node.module else base
        else:
            base = node.module or ""
        # `from pkg import name`: the submodule pkg.name if there is one, else a name defined in pkg
        names = [f"{base}.{alias.name}" if f"{base}.{alias.name}" in modules else base for alias in node.names]
    for name in names:
        while name and name not in modules:  # `import eclipsekit.x.y` of an attribute: the module holding it
            name = name.rpartition(".")[0]
        if not name or name.split(".")[0] != ROOT:
            continue
        targets.add(name)
        # importing a.b.c also runs the __init__ of every package on the way that the importer is not in
        parent = name.rpartition(".")[0]
        while parent and not (importer == parent or importer.startswith(parent + ".")):
            targets.add(parent)
            parent = parent.rpartition(".")[0]
    targets.discard(importer)
    return targets


def import_graph(package: Path = PACKAGE) -> dict[str, set[str]]:
    """Module -> the package modules it imports anywhere in its source (functions included)."""
    modules = _module_files(package)
    graph: dict[str, set[str]] = {}
    for name, path in modules.items():
        tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
        parents = {child: parent for parent in ast.walk(tree) for child in ast.iter_child_nodes(parent)}
        graph[name] = set()
        for node in ast.walk(tree):
            if isinstance(node, (ast.Import, ast.ImportFrom)) and not _type_checking_only(node, parents):
                graph[name] |= _resolve(name, node, modules)
    return graph


def strongly_connected_components(graph: dict[str, set[str]]) -> list[list[str]]:
    """Tarjan's algorithm (Tarjan 1972, SIAM J. Comput. 1, 146), iterative; components of >1 node or a self-loop."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    on_stack: set[str] = set()
    stack: list[str] = []
    found: list[list[str]] = []
    counter = 0
    for root in sorted(graph):
        if root in index:
            continue
        work = [(root, iter(sorted(graph[root])))]
        index[root] = low[root] = counter
        counter += 1
        stack.append(root)
        on_stack.add(root)
        while work:
            node, children = work[-1]
            child = next(children, None)
            if child is not None:
                if child not in index:
                    index[child] = low[child] = counter
                    counter += 1
                    stack.append(child)
                    on_stack.add(child)
                    work.append((child, iter(sorted(graph.get(child, ())))))
                elif child in on_stack:
                    low[node] = min(low[node], index[child])
                continue
            work.pop()
            if work:
                low[work[-1][0]] = min(low[work[-1][0]], low[node])
            if low[node] == index[node]:
                component = []
                while True:
                    member = stack.pop()
                    on_stack.discard(member)
                    component.append(member)
                    if member == node:
                        break
                if len(component) > 1 or node in graph.get(node, ()):
                    found.append(sorted(component))
    return found


def _cycle_in(component: list[str], graph: dict[str, set[str]]) -> list[str]:
    """The shortest cycle through the first module of a strongly connected component (breadth-first)."""
    start, members = component[0], set(component)
    previous: dict[str, str | None] = {start: None}
    queue = [start]
    for node in queue:
        for nxt in sorted(graph[node] & members):
            if nxt == start:
                path = [node]
                while previous[path[-1]] is not None:
                    path.append(previous[path[-1]])
                return path[::-1] + [start]
            if nxt not in previous:
                previous[nxt] = node
                queue.append(nxt)
    raise AssertionError(f"{component} is not strongly connected")


def long_functions(package: Path = PACKAGE, limit: int = MAX_BODY_LINES) -> list[str]:
    """``file:line qualified_name (n lines)`` for every function whose body (docstring excluded) exceeds ``limit``."""
    found = []
    for name, path in _module_files(package).items():
        tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
        todo: list[tuple[ast.AST, str]] = [(tree, "")]
        while todo:
            node, prefix = todo.pop()
            for child in ast.iter_child_nodes(node):
                if isinstance(child, (ast.FunctionDef, ast.AsyncFunctionDef, ast.ClassDef)):
                    qualname = f"{prefix}{child.name}"
                    todo.append((child, qualname + "."))
                    if not isinstance(child, ast.ClassDef):
                        n = _body_lines(child)
                        if n > limit:
                            found.append(f"{path.relative_to(package.parent)}:{child.lineno} {qualname} "
                                         f"({n} lines)")
                else:
                    todo.append((child, prefix))
    return sorted(found)


def _body_lines(func: ast.FunctionDef | ast.AsyncFunctionDef) -> int:
    body = func.body
    if (body and isinstance(body[0], ast.Expr) and isinstance(body[0].value, ast.Constant)
            and isinstance(body[0].value.value, str)):
        body = body[1:]  # the docstring
    if not body:
        return 0
    return body[-1].end_lineno - body[0].lineno + 1


# -- the checks of the helpers themselves --------------------------------------------------
def _write_package(tmp_path: Path, files: dict[str, str]) -> Path:
    package = tmp_path / ROOT
    for name, text in files.items():
        path = package / name
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(text)
    return package


def test_import_graph_finds_function_level_and_package_cycles(tmp_path):
    # a hand-made package: a <-> b through a function-level import; c -> sub.d -> (sub/__init__) -> c
    package = _write_package(tmp_path, {
        "__init__.py": "from ._version import v\n",
        "_version.py": "v = 1\n",
        "a.py": "def f():\n    from .b import g\n",
        "b.py": "import eclipsekit.a\n",
        "c.py": "from .sub.d import h\n",
        "sub/__init__.py": "from . import d\n",
        "sub/d.py": "from .. import c\n",
        "e.py": "from typing import TYPE_CHECKING\nif TYPE_CHECKING:\n    from .f import x\n",
        "f.py": "from .e import y\n",
        "g.py": "from . import v\n",
    })
    graph = import_graph(package)
    assert graph["eclipsekit"] == {"eclipsekit._version"}
    assert graph["eclipsekit.c"] == {"eclipsekit.sub", "eclipsekit.sub.d"}
    assert graph["eclipsekit.sub.d"] == {"eclipsekit.c"}  # `from .. import c` is the module c
    assert graph["eclipsekit.e"] == set()                  # TYPE_CHECKING imports never run
    assert graph["eclipsekit.g"] == {"eclipsekit"}         # a name defined in the package's __init__
    components = strongly_connected_components(graph)
    assert components == [["eclipsekit.a", "eclipsekit.b"], ["eclipsekit.c", "eclipsekit.sub", "eclipsekit.sub.d"]]
    assert _cycle_in(components[0], graph) == ["eclipsekit.a", "eclipsekit.b", "eclipsekit.a"]


def test_long_functions_counts_body_without_docstring(tmp_path):
    body = "\n".join(f"    x{i} = {i}" for i in range(5))
    package = _write_package(tmp_path, {
        "__init__.py": "",
        "m.py": f'def short():\n    """Doc\n\n    string."""\n{body}\n\n'
                f"class C:\n    def method(self):\n{body.replace('    ', '        ')}\n",
    })
    assert long_functions(package, limit=5) == []
    assert long_functions(package, limit=4) == ["eclipsekit/m.py:1 short (5 lines)",
                                                "eclipsekit/m.py:12 C.method (5 lines)"]


# -- the rules on the package ---------------------------------------------------------------
def test_no_function_body_over_120_lines():
    too_long = long_functions()
    assert not too_long, "functions over 120 lines (split them into named steps):\n  " + "\n  ".join(too_long)


def test_no_import_cycles():
    graph = import_graph()
    cycles = [" -> ".join(_cycle_in(c, graph)) for c in strongly_connected_components(graph)]
    assert not cycles, "import cycles:\n  " + "\n  ".join(cycles)


def test_import_is_light_and_public_names_resolve():
    # a fresh interpreter: what `import eclipsekit` loads, and whether every public name resolves
    code = ("import json, sys, eclipsekit\n"
            f"heavy = [m for m in {HEAVY!r} if m in sys.modules]\n"
            "missing = [n for n in eclipsekit.__all__ if not hasattr(eclipsekit, n)]\n"
            "print(json.dumps({'heavy': heavy, 'missing': missing, 'dir': sorted(dir(eclipsekit))}))")
    report = json.loads(_run_fresh(code).stdout)
    assert report["heavy"] == [], f"`import eclipsekit` imports {report['heavy']}"
    assert report["missing"] == []
    assert set(report["dir"]) >= set(eclipsekit.__all__)


def _run_fresh(code: str) -> subprocess.CompletedProcess:
    """Run ``code`` in a new interpreter that imports this checkout of the package."""
    env = {**os.environ, "PYTHONPATH": str(PACKAGE.parent)}
    return subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True, env=env)


@pytest.mark.parametrize("argv", [["--version"], ["--help"], ["run", "--help"]])
def test_command_line_help_is_light(argv):
    # --help and --version only build the parser: no numerical library is loaded
    code = ("import json, sys\nfrom eclipsekit.cli import main\n"
            f"try:\n    main({argv!r})\nexcept SystemExit:\n    pass\n"
            f"print(json.dumps([m for m in {HEAVY + ('numpy',)!r} if m in sys.modules]), file=sys.stderr)")
    proc = _run_fresh(code)
    assert json.loads(proc.stderr.strip().splitlines()[-1]) == []
