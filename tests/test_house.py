"""The house rules of the installed package (issue 16): which room may do what.

Read from the installed package's source files (never the checkout), so they check what users get.
"""

from __future__ import annotations

import ast
import re
from pathlib import Path

import frostwatch

PACKAGE = Path(frostwatch.__file__).parent


def _modules() -> list[Path]:
    return sorted(p for p in PACKAGE.rglob("*.py") if "__pycache__" not in p.parts)


def test_only_the_store_speaks_sql():
    # the store/ package is the only code that sends SQL: every other module calls its functions
    outside = []
    for path in _modules():
        rel = path.relative_to(PACKAGE)
        if rel.parts[0] == "store":
            continue
        for n, line in enumerate(path.read_text(encoding="utf-8").splitlines(), 1):
            if re.search(r"\.execute(many|script)?\(", line):
                outside.append(f"frostwatch/{rel}:{n}: {line.strip()}")
    assert not outside, "SQL outside frostwatch/store/:\n" + "\n".join(outside)


def _module_name(path: Path) -> str:
    parts = list(path.relative_to(PACKAGE.parent).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def _imports(tree: ast.Module, lazy: bool) -> list[ast.Import | ast.ImportFrom]:
    """Imports run when the module is imported: at the top, or under a module-level if/try/with;
    with `lazy`, also those inside functions and classes (run later, on first use). Never those
    under `if TYPE_CHECKING:` (they are not run at all)."""
    found: list = []

    def visit(body: list[ast.stmt]) -> None:
        for node in body:
            if isinstance(node, ast.Import | ast.ImportFrom):
                found.append(node)
            elif isinstance(node, ast.If):
                if "TYPE_CHECKING" not in ast.unparse(node.test):
                    visit(node.body)
                visit(node.orelse)
            elif isinstance(node, ast.Try):
                for block in (node.body, node.orelse, node.finalbody, *(h.body for h in node.handlers)):
                    visit(block)
            elif isinstance(node, ast.With | ast.For | ast.While):
                visit(node.body)
            elif lazy and isinstance(node, ast.FunctionDef | ast.AsyncFunctionDef | ast.ClassDef):
                visit(node.body)

    visit(tree.body)
    return found


def import_graph(lazy: bool = False) -> dict[str, set[str]]:
    """frostwatch module -> the frostwatch modules it imports at module level (and, with `lazy`,
    inside its functions too)."""
    paths = {_module_name(p): p for p in _modules()}
    graph: dict[str, set[str]] = {}
    for name, path in paths.items():
        is_package = path.name == "__init__.py"
        targets: set[str] = set()
        for node in _imports(ast.parse(path.read_text(encoding="utf-8"), str(path)), lazy):
            if isinstance(node, ast.Import):
                bases = [a.name for a in node.names]
                for b in bases:
                    targets.add(b)
                continue
            base = node.module or ""
            if node.level:
                anchor = name.split(".") if is_package else name.split(".")[:-1]
                anchor = anchor[: len(anchor) - (node.level - 1)]
                base = ".".join(anchor + ([base] if base else []))
            for alias in node.names:
                sub = f"{base}.{alias.name}"
                targets.add(sub if sub in paths else base)
        graph[name] = {t for t in targets if t in paths and t != name}
    return graph


def import_circles(graph: dict[str, set[str]]) -> list[list[str]]:
    """Every strongly connected group of two or more modules (Tarjan), each sorted."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on_stack: set[str] = set()
    groups: list[list[str]] = []
    counter = [0]

    def connect(v: str) -> None:
        index[v] = low[v] = counter[0]
        counter[0] += 1
        stack.append(v)
        on_stack.add(v)
        for w in sorted(graph.get(v, ())):
            if w not in index:
                connect(w)
                low[v] = min(low[v], low[w])
            elif w in on_stack:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            group = []
            while True:
                w = stack.pop()
                on_stack.discard(w)
                group.append(w)
                if w == v:
                    break
            if len(group) > 1:
                groups.append(sorted(group))

    for v in sorted(graph):
        if v not in index:
            connect(v)
    return sorted(groups)


# Known circles through imports inside functions, each to be removed from this list by the change
# that breaks it (pipeline <-> backtest was the last: backtest imports the pipeline, never back).
KNOWN_LAZY_CIRCLES: list[list[str]] = []


def _shown(circles: list[list[str]]) -> str:
    return "\n".join(" <-> ".join(c) for c in circles)


def test_no_import_circle_among_frostwatch_modules():
    # a circle makes import order matter and hides which room depends on which
    circles = import_circles(import_graph())
    assert not circles, "import circles among frostwatch modules (module-level imports):\n" + _shown(circles)


def test_no_import_circle_through_imports_inside_functions_either():
    # an import inside a function only hides a circle until that function runs; a known circle
    # that is gone must leave KNOWN_LAZY_CIRCLES too, so the list cannot go stale
    circles = import_circles(import_graph(lazy=True))
    unknown = [c for c in circles if c not in KNOWN_LAZY_CIRCLES]
    assert not unknown, "import circles among frostwatch modules (imports in functions counted):\n" + _shown(unknown)
    gone = [c for c in KNOWN_LAZY_CIRCLES if c not in circles]
    assert not gone, "these known circles are gone; remove them from KNOWN_LAZY_CIRCLES:\n" + _shown(gone)


def test_the_circle_finder_finds_a_circle():
    # the finder itself, on a made-up graph: a -> b -> c -> a is one circle, d -> a is none
    graph = {"a": {"b"}, "b": {"c"}, "c": {"a"}, "d": {"a"}, "e": set()}
    assert import_circles(graph) == [["a", "b", "c"]]


def test_the_import_graph_reads_the_package():
    graph = import_graph()
    assert "frostwatch.store.db" in graph["frostwatch.store"]  # from frostwatch.store.db import ...
    assert "frostwatch.store.outbox" in graph["frostwatch.alerts.outbox"]  # from frostwatch.store import outbox
    assert "frostwatch.secrets" in graph["frostwatch.alerts.channels.webhook"]
    assert "frostwatch.alerts.channels.email" not in graph["frostwatch.alerts.channels"]  # imported in sender()
    assert "frostwatch.alerts.channels.email" in import_graph(lazy=True)["frostwatch.alerts.channels"]


def test_the_sql_check_sees_the_package():
    # the check above would pass on an empty folder: it must be reading the real modules
    names = {p.relative_to(PACKAGE).as_posix() for p in _modules()}
    assert "store/outbox.py" in names and "alerts/outbox.py" in names
    assert any("execute(" in p.read_text(encoding="utf-8") for p in (PACKAGE / "store").glob("*.py"))
