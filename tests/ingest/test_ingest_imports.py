"""The ingest layer's imports: project modules at module level, from layer 0 and itself only."""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

import stability.ingest

INGEST = Path(stability.ingest.__file__).parent
#: Modules of the bottom layer that ingest may use (the layer map of the project).
ALLOWED = {"errors", "units", "measurement", "files", "display"}
MODULES = sorted(INGEST.glob("*.py"))


def _imports(tree: ast.AST) -> list[tuple[ast.AST, str]]:
    """(node, module) of every import; relative modules as "..name" or ".name"."""
    out = []
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom):
            out.append((node, "." * node.level + (node.module or "")))
        elif isinstance(node, ast.Import):
            out.extend((node, a.name) for a in node.names)
    return out


def _project(module: str) -> bool:
    return module.startswith(".") or module.split(".")[0] == "stability"


@pytest.mark.parametrize("path", MODULES, ids=lambda p: p.name)
def test_project_imports_are_at_module_level(path):
    tree = ast.parse(path.read_text())
    top = {id(n) for n in tree.body}
    inner = [(n.lineno, m) for n, m in _imports(tree) if _project(m) and id(n) not in top]
    assert inner == [], f"{path.name}: project imports inside a body"


@pytest.mark.parametrize("path", MODULES, ids=lambda p: p.name)
def test_imports_only_layer_zero_and_ingest(path):
    for node, module in _imports(ast.parse(path.read_text())):
        if module.startswith("..") or module.startswith("stability."):
            name = module.lstrip(".").removeprefix("stability.").split(".")[0]
            if module.startswith("stability.ingest"):
                continue
            assert name in ALLOWED, f"{path.name}:{node.lineno} imports {module}"
        elif module == "stability":
            pytest.fail(f"{path.name}:{node.lineno} imports the package face")


@pytest.mark.parametrize("path", MODULES, ids=lambda p: p.name)
def test_no_progress_bar_library(path):
    # progress goes out through a callback; drawing a bar is the caller's business
    modules = [m for _, m in _imports(ast.parse(path.read_text()))]
    assert not [m for m in modules if m.split(".")[0] == "rich"], path.name
