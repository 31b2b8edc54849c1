"""The package layout: stages import only from their own stage or earlier ones, and no cycles.

The order is the data flow of a build (DEVELOPERS.md, "Module map"): the count measures and the
error type first, then the config, the data, the scorecard object, binning, the engines and
their passes, fitting, evaluation, the build pipeline, the outputs, the demo, the plain API and
last the command line. A module that reaches forward (binning importing the workbook, say) would
tie an early stage to a late one; this test names the import at fault.
"""

from __future__ import annotations

import ast
from pathlib import Path

import scorecard

PACKAGE = Path(scorecard.__file__).parent

# Each top-level module or sub-package of scorecard, by stage; equal numbers may import each other.
STAGES = {
    "__init__": 0, "errors": 0, "progress": 0, "constraints": 0, "measures": 0,
    "config": 1,
    "data": 2,
    "card": 3,
    "binning": 4,
    "engines": 5,
    "fit": 6,
    "evaluation": 7,
    "build": 8,
    "outputs": 9,
    "demo": 10,
    "api": 11,
    "cli": 12, "__main__": 12,
}


def _module_name(path: Path) -> str:
    parts = path.relative_to(PACKAGE.parent).with_suffix("").parts
    return ".".join(parts[:-1] if parts[-1] == "__init__" else parts)


def _run_time_nodes(tree: ast.AST):
    """Every node but those under ``if TYPE_CHECKING:``, which run only for type checkers."""
    stack = [tree]
    while stack:
        node = stack.pop()
        yield node
        for child in ast.iter_child_nodes(node):
            if isinstance(child, ast.If) and isinstance(child.test, ast.Name) \
                    and child.test.id == "TYPE_CHECKING":
                stack.extend(child.orelse)
                continue
            stack.append(child)


def _imports(path: Path) -> list[tuple[str, int]]:
    """Every module of the package that ``path`` imports, with the line, wherever it stands."""
    found = []
    for node in _run_time_nodes(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            if node.module == "scorecard" or node.module.startswith("scorecard."):
                found.append((node.module, node.lineno))
                # `from scorecard.x import y` may name a sub-module y.
                for alias in node.names:
                    found.append((f"{node.module}.{alias.name}", node.lineno))
        elif isinstance(node, ast.Import):
            found += [(a.name, node.lineno) for a in node.names if a.name.startswith("scorecard.")]
        elif isinstance(node, ast.ImportFrom) and node.level > 0:
            found.append(("." * node.level + (node.module or ""), node.lineno))
    return found


def _modules() -> dict[str, Path]:
    return {_module_name(p): p for p in sorted(PACKAGE.rglob("*.py"))}


def _stage(module: str) -> int:
    top = module.split(".")[1] if "." in module else "__init__"
    return STAGES[top]


def test_every_module_has_a_stage():
    unplaced = [m for m in _modules() if (m.split(".")[1] if "." in m else "__init__") not in STAGES]
    assert not unplaced, f"add these to STAGES (and to DEVELOPERS.md's module map): {unplaced}"


def test_imports_are_absolute_and_point_to_the_same_or_an_earlier_stage():
    modules = _modules()
    wrong = []
    for name, path in modules.items():
        for target, line in _imports(path):
            if target.startswith("."):
                wrong.append(f"{path.name}:{line}: relative import {target}")
                continue
            if target not in modules and target.rpartition(".")[0] in modules:
                continue   # a name imported from a module, not a module
            if target in modules and _stage(target) > _stage(name):
                wrong.append(f"{name}:{line} imports the later stage {target}")
    assert not wrong, "\n".join(wrong)


def test_the_import_graph_has_no_cycle():
    modules = _modules()
    graph = {name: sorted({t for t, _ in _imports(path) if t in modules and t != name
                           and not name.startswith(t + ".")})
             for name, path in modules.items()}
    state: dict[str, int] = {}
    path: list[str] = []

    def visit(node: str) -> list[str] | None:
        state[node] = 1
        path.append(node)
        for nxt in graph[node]:
            if state.get(nxt) == 1:
                return path[path.index(nxt):] + [nxt]
            if nxt not in state:
                cycle = visit(nxt)
                if cycle:
                    return cycle
        path.pop()
        state[node] = 2
        return None

    for node in graph:
        if node not in state:
            cycle = visit(node)
            assert cycle is None, " -> ".join(cycle)


def test_the_stage_order_rejects_a_forward_import(tmp_path):
    # The check itself must be able to fail: a binning module importing the workbook is caught.
    bad = tmp_path / "bad.py"
    bad.write_text("from scorecard.outputs.workbook import write_workbook\n")
    imports = _imports(bad)
    assert ("scorecard.outputs.workbook", 1) in imports
    assert _stage("scorecard.outputs.workbook") > _stage("scorecard.binning.coarse")
