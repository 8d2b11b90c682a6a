"""The package's layers only point down, and no module imports itself back through others.

The order, bottom first (docs/ARCHITECTURE.md): check, then the shared words and defaults
(version, vocabulary, settings, errors), model, search, io, api, and on top gate, cli and the
package's own __init__ (which only re-exports). An import inside a function counts like any other.
"""

from __future__ import annotations

import ast
from pathlib import Path

PACKAGE = Path(__file__).resolve().parent.parent / "certify"
LAYERS = [("check",), ("version", "vocabulary", "settings", "errors"), ("model",), ("search",),
          ("io",), ("api",), ("gate", "cli", "__init__")]


def _module(path: Path) -> str:
    return ".".join(path.relative_to(PACKAGE.parent).with_suffix("").parts)


def _layer(module: str) -> int:
    part = module.split(".")[1] if "." in module else "__init__"
    for level, names in enumerate(LAYERS):
        if part in names:
            return level
    raise AssertionError(f"{module} belongs to no layer; add it to LAYERS and the docs")


def _imports(path: Path) -> set[str]:
    """Return the certify modules that the file imports (relative imports resolved)."""
    module = _module(path)
    package = module if path.name == "__init__.py" else module.rpartition(".")[0]
    found = set()
    for node in ast.walk(ast.parse(path.read_text())):
        if isinstance(node, ast.Import):
            found |= {a.name for a in node.names if a.name.split(".")[0] == "certify"}
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")[:len(package.split(".")) - node.level + 1]
                target = ".".join(base + ([node.module] if node.module else []))
            elif (node.module or "").split(".")[0] == "certify":
                target = node.module
            else:
                continue
            names = [f"{target}.{a.name}" for a in node.names]
            found |= {n for n in names if _file(n)} or {target}
    return {m for m in found if m != module}


def _file(module: str) -> Path | None:
    path = PACKAGE.parent.joinpath(*module.split("."))
    for candidate in (path.with_suffix(".py"), path / "__init__.py"):
        if candidate.exists():
            return candidate
    return None


def _graph() -> dict[str, set[str]]:
    graph = {}
    for path in PACKAGE.rglob("*.py"):
        graph[_module(path)] = {m.removesuffix(".__init__") for m in _imports(path)}
    return {(m.removesuffix(".__init__")): deps for m, deps in graph.items()}


def test_imports_point_down():
    upward = [f"{m} imports {d}" for m, deps in _graph().items() for d in deps
              if _layer(m) < _layer(d)]
    assert not upward, "\n".join(sorted(upward))


def test_no_import_circles():
    graph = _graph()
    state: dict[str, int] = {}
    circles = []

    def visit(m: str, path: list[str]) -> None:
        state[m] = 1
        for d in sorted(graph.get(m, ())):
            if d not in graph:
                continue
            if state.get(d) == 1:
                circles.append(" -> ".join(path[path.index(d):] + [d]))
            elif d not in state:
                visit(d, path + [d])
        state[m] = 2

    for m in sorted(graph):
        if m not in state:
            visit(m, [m])
    assert not circles, "\n".join(circles)


def test_the_checker_imports_nothing_from_the_rest():
    for m, deps in _graph().items():
        if m.startswith("certify.check"):
            assert all(d.startswith("certify.check") for d in deps), (m, deps)


def test_functions_a_reader_can_hold():
    """No function of the package is longer than 60 lines (split it; data tables excepted)."""
    long = []
    for path in PACKAGE.rglob("*.py"):
        for node in ast.walk(ast.parse(path.read_text())):
            if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
                length = node.end_lineno - node.lineno + 1
                if length > 60:
                    long.append(f"{_module(path)}.{node.name}: {length} lines")
    assert not long, "\n".join(long)
