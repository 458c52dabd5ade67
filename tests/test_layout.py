"""The package's shape: stages that import only the stages before them, and no import cycles.

Every ``import`` statement counts, also those inside functions and under ``TYPE_CHECKING``: a lazy
import that points up the pipeline is still a cycle waiting to happen. The rule is written down in
docs/architecture.md ("Layering"); these tests keep the tree true to it.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "planner"

#: Stages in pipeline order; a module may import from its own stage or an earlier one.
LAYERS = (
    "core",
    "inputs",
    "sky",
    "photometry",
    "visibility",
    "diagnostics",
    "lightcurve",
    "schedule",
    "pipeline",
    "outputs",
    "demo",
    "commands",
    "cli",
    "__main__",
)
#: The size a module should stay under (lines), so each file holds one concept.
MAX_MODULE_LINES = 450


def _modules() -> dict[str, Path]:
    out = {}
    for path in sorted(PACKAGE.rglob("*.py")):
        parts = path.relative_to(PACKAGE.parent).with_suffix("").parts
        name = ".".join(parts[:-1] if parts[-1] == "__init__" else parts)
        out[name] = path
    return out


def _imports(name: str, path: Path, known: set[str]) -> set[str]:
    """Modules of the package that ``name`` imports (absolute or relative, anywhere in the file)."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    is_pkg = path.name == "__init__.py"
    found: set[str] = set()
    for node in ast.walk(tree):
        targets: list[str] = []
        if isinstance(node, ast.Import):
            targets = [a.name for a in node.names]
        elif isinstance(node, ast.ImportFrom):
            base = node.module or ""
            if node.level:
                anchor = name.split(".") if is_pkg else name.split(".")[:-1]
                anchor = anchor[: len(anchor) - (node.level - 1)]
                base = ".".join(anchor + ([base] if base else []))
            targets = [f"{base}.{a.name}" for a in node.names] + [base]
        for t in targets:
            # the longest known module that the dotted name starts with
            parts = t.split(".")
            for k in range(len(parts), 0, -1):
                cand = ".".join(parts[:k])
                if cand in known:
                    found.add(cand)
                    break
    found.discard(name)
    return found


def _graph() -> dict[str, set[str]]:
    mods = _modules()
    known = set(mods)
    return {name: _imports(name, path, known) for name, path in mods.items()}


def _stage(module: str) -> str | None:
    parts = module.split(".")
    return parts[1] if len(parts) > 1 else None


def test_every_module_belongs_to_a_stage():
    strays = [m for m in _modules() if m != "planner" and _stage(m) not in LAYERS]
    assert not strays, f"modules outside the stages of docs/architecture.md: {strays}"


def test_imports_point_down_the_pipeline():
    bad = []
    for module, deps in _graph().items():
        if module == "planner":
            continue  # the public face re-exports from every stage, lazily (PEP 562)
        for dep in deps:
            if dep == "planner":
                bad.append(f"{module} imports the package root (import from the stage instead)")
            elif LAYERS.index(_stage(dep)) > LAYERS.index(_stage(module)):
                bad.append(f"{module} -> {dep}")
    assert not bad, "imports against the pipeline:\n" + "\n".join(sorted(bad))


def test_no_import_cycles():
    graph = _graph()
    graph.pop("planner", None)
    for deps in graph.values():
        deps.discard("planner")
    # Tarjan's strongly connected components: any component with more than one module is a cycle.
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on_stack: set[str] = set()
    cycles: list[list[str]] = []

    def visit(v: str) -> None:
        index[v] = low[v] = len(index)
        stack.append(v)
        on_stack.add(v)
        for w in graph.get(v, ()):
            if w not in graph:
                continue
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on_stack:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            comp = []
            while True:
                w = stack.pop()
                on_stack.discard(w)
                comp.append(w)
                if w == v:
                    break
            if len(comp) > 1:
                cycles.append(sorted(comp))

    for v in graph:
        if v not in index:
            visit(v)
    assert not cycles, f"import cycles: {cycles}"


@pytest.mark.parametrize("module", sorted(_modules()))
def test_modules_stay_small(module):
    lines = _modules()[module].read_text(encoding="utf-8").count("\n")
    assert lines <= MAX_MODULE_LINES, f"{module} has {lines} lines; split it by concept"
