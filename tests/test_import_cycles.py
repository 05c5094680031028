"""No import cycles inside the package: every module's imports, module-level or inside a function, form a DAG.

A checked property of the code itself (no outside source needed): cycles make
the load order fragile and the layers unclear.
"""

from __future__ import annotations

import ast
from pathlib import Path

PACKAGE = Path(__file__).resolve().parents[1] / "render"


def module_name(path: Path) -> str:
    parts = path.relative_to(PACKAGE.parent).with_suffix("").parts
    return ".".join(parts[:-1] if parts[-1] == "__init__" else parts)


def import_graph() -> dict[str, set[str]]:
    modules = {module_name(p): p for p in PACKAGE.rglob("*.py")}
    graph: dict[str, set[str]] = {m: set() for m in modules}
    for mod, path in modules.items():
        is_pkg = path.name == "__init__.py"
        here = mod.split(".") if is_pkg else mod.split(".")[:-1]
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, ast.Import):
                targets = [a.name for a in node.names]
            elif isinstance(node, ast.ImportFrom):
                base = node.module or ""
                if node.level:
                    base = ".".join(here[: len(here) - node.level + 1] + ([base] if base else []))
                targets = [f"{base}.{a.name}" if f"{base}.{a.name}" in modules else base for a in node.names]
            else:
                continue
            for t in targets:
                while t and t not in modules:  # a name inside a module: the module itself
                    t = t.rpartition(".")[0]
                if t and t != mod:
                    graph[mod].add(t)
    return graph


def find_cycle(graph: dict[str, set[str]]) -> list[str] | None:
    state: dict[str, int] = {}
    stack: list[str] = []

    def visit(m: str) -> list[str] | None:
        state[m] = 1
        stack.append(m)
        for n in sorted(graph[m]):
            if state.get(n) == 1:
                return stack[stack.index(n) :] + [n]
            if n not in state and (found := visit(n)):
                return found
        stack.pop()
        state[m] = 2
        return None

    for m in sorted(graph):
        if m not in state and (found := visit(m)):
            return found
    return None


def test_graph_sees_imports():
    g = import_graph()
    assert "render.circuit.poly" in g["render.circuit.preamp"]  # a relative import, resolved
    assert "render.io.toml" in g["render.design.loading"]


def test_no_import_cycle():
    cycle = find_cycle(import_graph())
    assert cycle is None, "import cycle: " + " -> ".join(cycle)


def test_cycle_finder_finds_a_cycle():
    assert find_cycle({"a": {"b"}, "b": {"c"}, "c": {"a"}}) == ["a", "b", "c", "a"]
    assert find_cycle({"a": {"b"}, "b": set()}) is None
