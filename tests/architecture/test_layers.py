"""The package's shape: no import cycle, no layer importing one above it, small modules.

Imports are read with Python's ``ast`` module from the source of every module
of curate, wherever they stand: at the top, inside functions, and under
``if TYPE_CHECKING:``. A cycle among modules, or a lower layer importing a
higher one, fails the test and names the modules. The layer order is the one
DEVELOPERS.md draws (common practice, no source: a layered package imports
downward only); the size limit is the house rule of 400 lines per module.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

# Lower layers first. A module may import its own package and any layer below it.
LAYERS = ("errors", "settings", "io", "space", "neighbours", "methods", "spec", "cluster",
          "pipeline", "report", "evaluation", "api", "sampler", "demo", "cli", "__main__")
RANK = {name: rank for rank, name in enumerate(LAYERS)}
RANK["sampler"] = RANK["api"]  # two entry points side by side; neither imports the other
MAX_LINES = 400


def _module_name(root: Path, path: Path) -> str:
    parts = ("curate", *path.relative_to(root).with_suffix("").parts)
    return ".".join(parts[:-1] if parts[-1] == "__init__" else parts)


def _modules(root: Path) -> dict[str, Path]:
    return {_module_name(root, p): p for p in sorted(root.rglob("*.py"))}


def _imports(name: str, path: Path, known: set[str]) -> set[str]:
    """Every curate module ``name`` imports, anywhere in its code."""
    package = name if path.name == "__init__.py" else name.rpartition(".")[0]
    found: set[str] = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            found.update(alias.name for alias in node.names)
        elif isinstance(node, ast.ImportFrom):
            base = node.module or ""
            if node.level:
                parent = package.split(".")[:len(package.split(".")) - node.level + 1]
                base = ".".join([*parent, *([node.module] if node.module else [])])
            for alias in node.names:
                sub = f"{base}.{alias.name}"
                found.add(sub if sub in known else base)
    return {m for m in found if m in known and m != name}


@pytest.fixture(scope="module")
def graph(package_root: Path) -> dict[str, set[str]]:
    modules = _modules(package_root)
    return {name: _imports(name, path, set(modules)) for name, path in modules.items()}


def _layer(module: str) -> str:
    parts = module.split(".")
    return parts[1] if len(parts) > 1 else "__main__"  # the package itself is the top


def test_the_graph_is_read(graph: dict[str, set[str]]) -> None:
    """The reader sees the imports it must see (a check of the check itself)."""
    assert "curate.neighbours.search" in graph["curate.cluster.session"]
    assert "curate.neighbours._fast" in graph["curate.neighbours.backends"]  # in a function
    assert "curate.pipeline.records" in graph["curate.report.html"]  # under TYPE_CHECKING


def test_every_module_has_a_layer(graph: dict[str, set[str]]) -> None:
    unplaced = sorted(m for m in graph if _layer(m) not in RANK)
    assert not unplaced, f"modules outside the layer list: {unplaced}"


def test_no_import_cycle(graph: dict[str, set[str]]) -> None:
    """Depth-first search; a back edge is a cycle, reported with its modules in order."""
    state: dict[str, int] = {}
    path: list[str] = []

    def visit(module: str) -> None:
        state[module] = 1
        path.append(module)
        for target in sorted(graph[module]):
            if state.get(target) == 1:
                cycle = path[path.index(target):] + [target]
                raise AssertionError("import cycle: " + " -> ".join(cycle))
            if target not in state:
                visit(target)
        path.pop()
        state[module] = 2

    for module in sorted(graph):
        if module not in state:
            visit(module)


def test_no_layer_imports_a_layer_above_it(graph: dict[str, set[str]]) -> None:
    upward = sorted(f"{source} imports {target}" for source, targets in graph.items()
                    for target in targets
                    if _layer(source) != _layer(target)
                    and RANK[_layer(target)] >= RANK[_layer(source)])
    assert not upward, "\n".join(upward)


@pytest.mark.parametrize(("layer", "never"), [
    ("methods", ("pipeline", "io", "cli")),
    ("neighbours", ("methods", "pipeline", "cluster")),
])
def test_named_boundaries_hold(graph: dict[str, set[str]], layer: str,
                               never: tuple[str, ...]) -> None:
    """The boundaries the design names: methods never see a run, files or the command line;
    the neighbour engine never sees methods, runs or the cluster."""
    crossing = sorted(f"{s} imports {t}" for s, targets in graph.items() if _layer(s) == layer
                      for t in targets if _layer(t) in never)
    assert not crossing, "\n".join(crossing)


def test_method_families_do_not_import_each_other(graph: dict[str, set[str]]) -> None:
    """A family module imports shared helpers (base and the private modules), never another
    family, so a new method touches one family module and the registry."""
    families = {m for m in graph if m.startswith("curate.methods.")
                and not m.rpartition(".")[2].startswith("_") and m != "curate.methods.base"}
    crossing = sorted(f"{s} imports {t}" for s in families for t in graph[s] if t in families)
    assert not crossing, "\n".join(crossing)


def test_modules_stay_under_the_size_limit(package_root: Path) -> None:
    sizes = {p: len(p.read_text(encoding="utf-8").splitlines())
             for p in package_root.rglob("*.py")}
    large = sorted(f"{p.relative_to(package_root)}: {n} lines" for p, n in sizes.items()
                   if n > MAX_LINES)
    assert not large, "\n".join(large)
