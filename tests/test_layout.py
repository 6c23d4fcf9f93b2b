"""The package's layout rules: no import cycle between modules (imports inside functions
included) and no module over 600 lines.  Source: the package's own files, read with ast."""

from __future__ import annotations

import ast
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent / "powerspec"
MAX_LINES = 600


def _modules() -> dict[str, Path]:
    out = {}
    for p in ROOT.rglob("*.py"):
        parts = p.relative_to(ROOT.parent).with_suffix("").parts
        name = ".".join(parts[:-1] if parts[-1] == "__init__" else parts)
        out[name] = p
    return out


def _imports(name: str, path: Path, known: set[str]) -> set[str]:
    """Package modules that ``name`` imports anywhere in its body (a package's own
    ``__init__`` counts for ``from package import x`` unless x is a submodule)."""
    is_pkg = path.name == "__init__.py"
    base = name if is_pkg else name.rpartition(".")[0]
    found = set()
    for node in ast.walk(ast.parse(path.read_text(), str(path))):
        if isinstance(node, ast.Import):
            found.update(a.name for a in node.names if a.name in known)
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                up = base.split(".")
                up = up[:len(up) - node.level + 1]
                mod = ".".join(up + ([node.module] if node.module else []))
            else:
                mod = node.module or ""
            for a in node.names:
                sub = f"{mod}.{a.name}"
                if sub in known:
                    found.add(sub)
                elif mod in known:
                    found.add(mod)
    found.discard(name)
    return found


def _cycles(graph: dict[str, set[str]]) -> list[list[str]]:
    """Strongly connected components with more than one module (Tarjan)."""
    index, low, stack, on, out = {}, {}, [], set(), []
    counter = [0]

    def visit(v):
        index[v] = low[v] = counter[0]
        counter[0] += 1
        stack.append(v)
        on.add(v)
        for w in graph[v]:
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
                out.append(sorted(comp))

    for v in graph:
        if v not in index:
            visit(v)
    return out


def test_no_import_cycle():
    mods = _modules()
    graph = {}
    for name, path in mods.items():
        graph[name] = _imports(name, path, set(mods))
    assert sum(len(d) for d in graph.values()) > 200      # the reader sees the imports at all
    assert "powerspec.numbers.hp" in graph["powerspec.answers.notation"]
    assert _cycles(graph) == []


def test_the_cycle_finder_finds_a_cycle():
    # the check itself must be able to fail: a two-module loop and a three-module loop
    assert _cycles({"a": {"b"}, "b": {"a"}, "c": set()}) == [["a", "b"]]
    assert _cycles({"x": {"y"}, "y": {"z"}, "z": {"x"}}) == [["x", "y", "z"]]


def test_no_module_over_the_line_limit():
    long = {str(p.relative_to(ROOT.parent)): n for p in ROOT.rglob("*.py")
            if (n := len(p.read_text().splitlines())) > MAX_LINES}
    assert long == {}
