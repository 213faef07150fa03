"""The package's import graph: stages import only downward, no cycles, no hidden imports, small modules.

Every module under ``netopt/`` is parsed with :mod:`ast` (nothing is imported), so the rules hold for
the source as written.  The cycle check uses networkx (``simple_cycles``), an outside reference.
"""

from __future__ import annotations

import ast
from pathlib import Path

import networkx as nx
import pytest

PACKAGE = Path(__file__).resolve().parent.parent / "netopt"

# The pipeline, earliest stage first: a module may import netopt modules of its own stage or an earlier one.
STAGES = ["data", "network", "model", "engine", "studies", "present", "api", "cli"]
# Thin public facades: they may import anything, and no stage module may import them.
FACADES = {"netopt", "netopt.__main__", "netopt.frames"}
MAX_LINES = 500


def _module_name(path: Path) -> str:
    parts = list(path.relative_to(PACKAGE.parent).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


MODULES: dict[str, Path] = {_module_name(p): p for p in sorted(PACKAGE.rglob("*.py"))}
TREES: dict[str, ast.Module] = {name: ast.parse(p.read_text(encoding="utf-8"), str(p)) for name, p in MODULES.items()}


def _stage(module: str) -> str | None:
    """The pipeline stage of a netopt module; None for a facade."""
    if module in FACADES:
        return None
    part = module.split(".")[1]
    if part not in STAGES:
        raise AssertionError(f"{module} belongs to no stage; stages are {STAGES}")
    return part


def _is_package(module: str) -> bool:
    return MODULES[module].name == "__init__.py"


def _resolve(module: str, node: ast.Import | ast.ImportFrom) -> list[str]:
    """The netopt modules an import statement names (a ``from`` name that is a submodule counts as that module)."""
    if isinstance(node, ast.Import):
        names = [a.name for a in node.names]
    else:
        if node.level:
            base = module.split(".") if _is_package(module) else module.split(".")[:-1]
            base = base[: len(base) - (node.level - 1)]
            target = ".".join(base + ([node.module] if node.module else []))
        else:
            target = node.module or ""
        names = []
        for a in node.names:
            sub = f"{target}.{a.name}"
            names.append(sub if sub in MODULES else target)
    out: list[str] = []
    for name in names:
        if name != "netopt" and not name.startswith("netopt."):
            continue
        # `import netopt.data.case` names that module; a dotted name that is no module is resolved to its package
        while name not in MODULES and "." in name:
            name = name.rsplit(".", 1)[0]
        if name not in out:
            out.append(name)
    return out


def _imports(module: str) -> list[tuple[int, str, bool]]:
    """(line, imported netopt module, at top level?) for every import statement in the module."""
    found: list[tuple[int, str, bool]] = []

    def visit(node: ast.AST, top: bool) -> None:
        for child in ast.iter_child_nodes(node):
            if isinstance(child, ast.Import | ast.ImportFrom):
                found.extend((child.lineno, target, top) for target in _resolve(module, child))
            inner = top and not isinstance(child, ast.FunctionDef | ast.AsyncFunctionDef | ast.ClassDef | ast.Lambda)
            visit(child, inner)

    visit(TREES[module], True)
    return found


def test_every_module_is_found_and_has_a_stage():
    assert {"netopt.api", "netopt.data.case", "netopt.network.lanes", "netopt.cli"} <= set(MODULES)
    for module in MODULES:
        _stage(module)


def test_stages_import_only_downward():
    rank = {s: i for i, s in enumerate(STAGES)}
    bad = []
    for module in MODULES:
        own = _stage(module)
        if own is None:
            continue
        for line, target, _ in _imports(module):
            other = _stage(target)
            if other is None:
                bad.append(f"{MODULES[module].relative_to(PACKAGE.parent)}:{line} ({own}) imports the facade {target}")
            elif rank[other] > rank[own]:
                bad.append(f"{MODULES[module].relative_to(PACKAGE.parent)}:{line} ({own}) imports {target} ({other})")
    assert not bad, "imports against the pipeline order:\n" + "\n".join(bad)


def test_no_import_cycles():
    g = nx.DiGraph()
    g.add_nodes_from(MODULES)
    for module in MODULES:
        g.add_edges_from((module, target) for _, target, _ in _imports(module) if target != module)
    cycles = sorted(" → ".join([*c, c[0]]) for c in nx.simple_cycles(g))
    assert not cycles, "import cycles:\n" + "\n".join(cycles)


def test_no_function_level_netopt_imports():
    bad = [
        f"{MODULES[module].relative_to(PACKAGE.parent)}:{line} imports {target} inside a function or class"
        for module in MODULES
        for line, target, top in _imports(module)
        if not top
    ]
    assert not bad, "netopt imports must sit at the top of the module:\n" + "\n".join(bad)


def test_no_module_over_the_line_limit():
    long = {
        str(p.relative_to(PACKAGE.parent)): n
        for p in MODULES.values()
        if (n := len(p.read_text(encoding="utf-8").splitlines())) > MAX_LINES
    }
    assert not long, f"modules over {MAX_LINES} lines: {long}"


# ----------------------------------------------------------------------------- the checker itself


@pytest.mark.parametrize(
    "module, source, expected",
    [
        ("netopt.engine.solve", "from netopt.data import case", ["netopt.data.case"]),
        ("netopt.engine.solve", "from netopt.data.case import Case", ["netopt.data.case"]),
        ("netopt.engine.solve", "import netopt.network.geo as g", ["netopt.network.geo"]),
        ("netopt.engine.solve", "from . import tables", ["netopt.engine.tables"]),
        ("netopt.engine.solve", "from ..model.core import Builder", ["netopt.model.core"]),
        ("netopt.data", "from .case import Case", ["netopt.data.case"]),
        ("netopt.engine.solve", "from netopt import solve", ["netopt"]),
        ("netopt.engine.solve", "import numpy as np", []),
    ],
)
def test_resolve_names_the_imported_module(module, source, expected):
    node = ast.parse(source).body[0]
    assert isinstance(node, ast.Import | ast.ImportFrom)
    assert _resolve(module, node) == expected


def test_function_level_import_is_seen():
    src = "import os\n\ndef f():\n    from netopt.data.case import Case\n    return Case\n"
    TREES["netopt.engine.__probe__"] = ast.parse(src)
    try:
        assert _imports("netopt.engine.__probe__") == [(4, "netopt.data.case", False)]
    finally:
        del TREES["netopt.engine.__probe__"]
