"""The layer order of the package, checked from the source: imports only go down.

Each module of ``stability/`` belongs to one layer (DEVELOPERS.md, "The house");
a module imports only modules of its own layer or below, at module level, and
the imports within one layer form no cycle. Project imports inside function
bodies are not allowed at all: an import inside a function is for a heavy
third-party library loaded on first use, never to dodge a cycle. The command
line package sits above the whole library, and nothing in the library imports
it (``stability/__main__.py`` is the program's entry point, not a library module).
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]

#: Layers from the bottom up: (layer, module-name prefixes). A prefix names a
#: module or a whole subpackage.
LAYERS: list[tuple[int, tuple[str, ...]]] = [
    (
        0,
        (
            "stability._version",
            "stability.errors",
            "stability.units",
            "stability.files",
            "stability.outputs",
            "stability.measurement",
            "stability.taus",
            "stability.intervals",
            "stability.table",
            "stability.settings",
            "stability.display",
        ),
    ),
    (1, ("stability.ingest", "stability.prepare")),
    (
        2,
        (
            "stability.deviations",
            "stability.confidence",
            "stability.confidence_models",
            "stability.dead_time",
            "stability.powerlaw",
        ),
    ),
    (
        3,
        (
            "stability.noise",
            "stability.noise_methods",
            "stability.noise_evidence",
            "stability.qualify",
        ),
    ),
    (4, ("stability.analysis",)),
    (5, ("stability.spec", "stability.timing")),
    (
        6,
        (
            "stability.hat",
            "stability.hat_intervals",
            "stability.phase_noise",
            "stability.phase_noise_table",
            "stability.dynamic",
            "stability.simulate",
            "stability.aging",
            "stability.spectrum",
            "stability.periodic",
            "stability.environment",
        ),
    ),
    (7, ("stability.summary", "stability.run", "stability.causes")),
    (8, ("stability.figures",)),
    (9, ("stability.reports",)),
    (
        10,
        (
            "stability.workflow",
            "stability.workflow_timing",
            "stability.history",
            "stability.validation",
            "stability.live",
            "stability.fleet",
        ),
    ),
    (11, ("stability.__init__", "stability.__main__")),
    (12, ("stability_cli",)),
]


def layer_of(module: str) -> int | None:
    best: tuple[int, int] | None = None  # (prefix length, layer)
    for layer, prefixes in LAYERS:
        for prefix in prefixes:
            if module == prefix or module.startswith(prefix + "."):
                if best is None or len(prefix) > best[0]:
                    best = (len(prefix), layer)
    if module == "stability":
        return 11
    return None if best is None else best[1]


def _module_name(path: Path) -> str:
    rel = path.relative_to(ROOT).with_suffix("")
    parts = list(rel.parts)
    if parts[0] == "cli":
        parts[0] = "stability_cli"
    if parts[-1] == "__init__" and len(parts) > 1 and parts[0] != "stability":
        parts = parts[:-1]
    elif parts[-1] == "__init__" and len(parts) > 2:
        parts = parts[:-1]
    return ".".join(parts)


def _package_of(path: Path, module: str) -> str:
    if path.name == "__init__.py":
        return module if not module.endswith(".__init__") else module.rsplit(".", 1)[0]
    return module.rsplit(".", 1)[0]


def _resolve(node: ast.ImportFrom, path: Path, module: str) -> list[str]:
    """Absolute project module names an ``from ... import ...`` reaches."""
    if node.level == 0:
        base = node.module or ""
    else:
        package = _package_of(path, module).split(".")
        package = package[: len(package) - (node.level - 1)]
        base = ".".join(package + ([node.module] if node.module else []))
    if base == "cli" or base.startswith("cli."):
        base = "stability_cli" + base[3:]
    if not (base.startswith("stability") or base.startswith("stability_cli")):
        return []
    if node.module is None or base in ("stability", "stability_cli"):
        # ``from . import x`` / ``from stability import x``: each name may be a module
        return [
            f"{base}.{a.name}" if layer_of(f"{base}.{a.name}") is not None else base
            for a in node.names
        ]
    return [base]


def _imports(path: Path, module: str) -> tuple[list[tuple[str, int]], list[tuple[str, int, str]]]:
    """(module-level project imports, project imports inside functions)."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    top: list[tuple[str, int]] = []
    inner: list[tuple[str, int, str]] = []

    def project(node: ast.AST) -> list[str]:
        if isinstance(node, ast.ImportFrom):
            return _resolve(node, path, module)
        if isinstance(node, ast.Import):
            names = [a.name for a in node.names]
            return [n for n in names if n.split(".")[0] in ("stability", "stability_cli", "cli")]
        return []

    def visit(node: ast.AST, function: str | None) -> None:
        for child in ast.iter_child_nodes(node):
            name = function
            if isinstance(child, (ast.FunctionDef, ast.AsyncFunctionDef, ast.Lambda)):
                name = getattr(child, "name", "<lambda>")
            if isinstance(child, (ast.Import, ast.ImportFrom)):
                for target in project(child):
                    if name is None:
                        top.append((target, child.lineno))
                    else:
                        inner.append((target, child.lineno, name))
            visit(child, name)

    visit(tree, None)
    return top, inner


def _sources() -> list[Path]:
    files = sorted((ROOT / "stability").rglob("*.py")) + sorted((ROOT / "cli").rglob("*.py"))
    return [p for p in files if "__pycache__" not in p.parts]


SOURCES = _sources()


def test_every_module_has_a_layer():
    missing = [str(p.relative_to(ROOT)) for p in SOURCES if layer_of(_module_name(p)) is None]
    assert not missing, f"modules without a layer (add them to LAYERS and DEVELOPERS.md): {missing}"


def test_imports_only_go_down():
    upward = []
    for path in SOURCES:
        module = _module_name(path)
        here = layer_of(module)
        if module == "stability.__main__":
            continue  # the program's entry point: it starts the command line
        for target, line in _imports(path, module)[0]:
            there = layer_of(target)
            if there is not None and here is not None and there > here:
                upward.append(
                    f"{path.relative_to(ROOT)}:{line} {module} (layer {here}) -> "
                    f"{target} (layer {there})"
                )
    assert not upward, "imports that go up a layer:\n" + "\n".join(upward)


def test_no_project_import_inside_a_function():
    found = []
    for path in SOURCES:
        module = _module_name(path)
        for target, line, function in _imports(path, module)[1]:
            found.append(f"{path.relative_to(ROOT)}:{line} {function}() imports {target}")
    assert not found, "project imports inside functions (move them to module level):\n" + "\n".join(
        found
    )


def test_library_never_imports_the_command_line():
    found = []
    for path in SOURCES:
        module = _module_name(path)
        if not module.startswith("stability.") or module == "stability.__main__":
            continue
        for target, line in _imports(path, module)[0]:
            if target.startswith("stability_cli"):
                found.append(f"{path.relative_to(ROOT)}:{line} -> {target}")
    assert not found, "\n".join(found)


def _graph() -> dict[str, set[str]]:
    modules = {_module_name(p): p for p in SOURCES}
    graph: dict[str, set[str]] = {m: set() for m in modules}
    for module, path in modules.items():
        for target, _ in _imports(path, module)[0]:
            # an import of a package reaches its __init__ only
            hit = target if target in modules else None
            while hit is None and "." in target:
                target = target.rsplit(".", 1)[0]
                hit = target if target in modules else None
            if hit is not None and hit != module:
                graph[module].add(hit)
    return graph


def test_no_import_cycles():
    graph = _graph()
    state: dict[str, int] = {}
    cycles: list[list[str]] = []

    def walk(node: str, stack: list[str]) -> None:
        state[node] = 1
        stack.append(node)
        for nxt in sorted(graph[node]):
            if state.get(nxt) == 1:
                cycles.append(stack[stack.index(nxt) :] + [nxt])
            elif nxt not in state:
                walk(nxt, stack)
        stack.pop()
        state[node] = 2

    for node in sorted(graph):
        if node not in state:
            walk(node, [])
    # A package __init__ that re-exports its own submodules is not a cycle of layers.
    real = [
        c for c in cycles if not all(_same_package(a, b) for a, b in zip(c, c[1:], strict=False))
    ]
    assert not real, "import cycles:\n" + "\n".join(" -> ".join(c) for c in real)


def _same_package(a: str, b: str) -> bool:
    """a -> b where one is a package __init__ and the other its own submodule."""
    return b.startswith(a + ".") or a.startswith(b + ".")


@pytest.mark.parametrize("path", SOURCES, ids=lambda p: str(p.relative_to(ROOT)))
def test_modules_stay_readable(path):
    # No module over 600 lines (DEVELOPERS.md).
    lines = path.read_text(encoding="utf-8").count("\n")
    assert lines <= 600, f"{path.relative_to(ROOT)} has {lines} lines; split it along its seams"
