"""The package's shape: imports flow one way, modules stay small, outputs only render.

These checks read the source as text (Python's own ``ast``), so they hold for every
module whether or not a test imports it.
"""

from __future__ import annotations

import ast
from pathlib import Path

import networkx as nx

ROOT = Path(__file__).resolve().parent.parent
PACKAGE = ROOT / "planner"

#: The ceiling on a module's length [lines] (the project's rule: small rooms, one concern each).
MAX_LINES = 800


def _module_name(path: Path) -> str:
    rel = path.relative_to(ROOT).with_suffix("")
    parts = list(rel.parts)
    if parts[-1] == "__init__":
        parts = parts[:-1]
    return ".".join(parts)


def _modules() -> dict[str, Path]:
    return {_module_name(p): p for p in sorted(PACKAGE.rglob("*.py"))}


def _imports(path: Path, name: str, known: set[str]) -> set[str]:
    """Project modules that ``name`` imports, at any depth of its code."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    pkg = name if path.name == "__init__.py" else name.rsplit(".", 1)[0]
    out = set()
    typing_only = {id(n) for stmt in ast.walk(tree) if isinstance(stmt, ast.If)
                   and ast.unparse(stmt.test).endswith("TYPE_CHECKING") for n in ast.walk(stmt)}
    for node in ast.walk(tree):
        if id(node) in typing_only:  # imports for annotations only are no dependency at run time
            continue
        if isinstance(node, ast.Import):
            targets = [a.name for a in node.names]
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = pkg.split(".")
                base = base[: len(base) - node.level + 1]
                mod = ".".join(base + ([node.module] if node.module else []))
            else:
                mod = node.module or ""
            targets = [mod] + [f"{mod}.{a.name}" for a in node.names]
        else:
            continue
        for t in targets:
            while t and t not in known:
                t = t.rsplit(".", 1)[0] if "." in t else ""
            if t and t != name:
                out.add(t)
    return out


def import_graph() -> nx.DiGraph:
    mods = _modules()
    g = nx.DiGraph()
    g.add_nodes_from(mods)
    for name, path in mods.items():
        for t in _imports(path, name, set(mods)):
            g.add_edge(name, t)
    return g


def _is_inside(child: str, parent: str) -> bool:
    return child == parent or child.startswith(parent + ".")


def test_no_import_circle():
    """No module imports, directly or through others, a module that imports it.

    A package's ``__init__`` that re-exports its own modules is the package's face,
    not a circle: edges from a module to its own package's ``__init__`` are left out.
    """
    g = import_graph()
    g.remove_edges_from([(a, b) for a, b in list(g.edges) if _is_inside(a, b)])
    cycles = list(nx.simple_cycles(g))
    assert not cycles, f"import circles: {cycles[:5]}"


def test_no_module_over_the_ceiling():
    long = {name: n for name, p in _modules().items()
            if (n := len(p.read_text(encoding="utf-8").splitlines())) > MAX_LINES}
    assert not long, f"modules over {MAX_LINES} lines: {long}"


def test_outputs_do_not_solve():
    """The dossier renders what the analyses computed: it imports neither the solver nor the engine."""
    g = import_graph()
    for name in g.nodes:
        if _is_inside(name, "planner.dossier"):
            bad = [t for t in g.successors(name) if t in ("planner.solve", "planner.engine")
                   or _is_inside(t, "planner.solve")]
            assert not bad, f"{name} imports {bad}"


def test_solver_knows_only_arrays():
    """The solver imports nothing of the project but its errors."""
    g = import_graph()
    for name in g.nodes:
        if _is_inside(name, "planner.solve"):
            bad = [t for t in g.successors(name) if not (_is_inside(t, "planner.solve") or t == "planner.errors")]
            assert not bad, f"{name} imports {bad}"
