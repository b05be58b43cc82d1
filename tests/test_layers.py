"""The package's import layers: nothing imports upward, and no module-level cycles.

The layers, lowest first (DESIGN.md §1 and §3): shared records and numerics, the
objective, the ray, the controller base, the searches and rules, the directions and
the driver, the compiled and benchmark packages, and the user-facing entry points.
A module may import from its own layer or below. The test reads the import
statements (no module is executed), so it also covers optional-dependency modules.
It also checks the source-size rule of the house: no module over 700 lines, the
Moré–Garbow–Hillstrom data module aside.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parent.parent / "src" / "linestep"

# (layer, module prefixes) — a module belongs to the layer of its longest matching prefix.
LAYERS = [
    (0, ["linestep._constants", "linestep._rebuild", "linestep._validate", "linestep._array",
         "linestep._step", "linestep._interpolate"]),
    (1, ["linestep._objective", "linestep._initial", "linestep.stopping"]),
    (2, ["linestep._ray"]),
    (3, ["linestep._controller"]),
    (4, ["linestep.searches", "linestep.rules"]),
    (5, ["linestep.directions", "linestep._descend"]),
    (6, ["linestep.jax", "linestep.bench", "linestep.advice"]),
    (7, ["linestep._demo", "linestep.cli", "linestep.__main__", "linestep"]),
]
# Modules past this many lines are split (house rule); data modules are exempt.
MAX_LINES = 700
DATA_MODULES = {"linestep.bench._mgh"}


def _module_name(path: Path) -> str:
    parts = list(path.relative_to(PACKAGE.parent).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


MODULES = {_module_name(path): path for path in sorted(PACKAGE.rglob("*.py"))}


def _reexports() -> dict[str, str]:
    """Public name -> defining module, for the names `linestep/__init__.py` re-exports.

    ``from linestep import Objective`` depends on `linestep._objective`, not on the whole
    package (a subpackage is loaded with the package already imported)."""
    tree = ast.parse((PACKAGE / "__init__.py").read_text(encoding="utf-8"))
    return {alias.asname or alias.name: node.module for node in tree.body
            if isinstance(node, ast.ImportFrom) and node.module for alias in node.names}


REEXPORTS = _reexports()


def layer_of(module: str) -> int:
    best, best_length = None, -1
    for layer, prefixes in LAYERS:
        for prefix in prefixes:
            if (module == prefix or module.startswith(prefix + ".")) and len(prefix) > best_length:
                best, best_length = layer, len(prefix)
    if best is None:
        raise AssertionError(f"{module} is in no layer; add it to LAYERS in {__file__}")
    return best


def imports_of(module: str, *, top_level_only: bool) -> set[str]:
    """The linestep modules that `module` imports (resolving `from linestep import x`)."""
    path = MODULES[module]
    tree = ast.parse(path.read_text(encoding="utf-8"))
    package = module if path.name == "__init__.py" else module.rpartition(".")[0]
    nodes = tree.body if top_level_only else list(ast.walk(tree))
    found = set()
    for node in nodes:
        if isinstance(node, ast.Import):
            names = [alias.name for alias in node.names]
        elif isinstance(node, ast.ImportFrom):
            base = node.module or ""
            if node.level:
                base = ".".join(package.split(".")[: len(package.split(".")) - node.level + 1]
                                + ([base] if base else []))
            names = []
            for alias in node.names:
                if f"{base}.{alias.name}" in MODULES:  # a submodule
                    names.append(f"{base}.{alias.name}")
                elif base == "linestep" and alias.name in REEXPORTS and module != "linestep":
                    names.append(REEXPORTS[alias.name])  # a re-exported name
                elif base == "linestep" and alias.name == "__version__":
                    continue  # package metadata, not code
                else:
                    names.append(base)
        else:
            continue
        found.update(name for name in names if name in MODULES and name != module)
    return found


@pytest.mark.parametrize("module", sorted(MODULES))
def test_no_module_imports_upward(module):
    own = layer_of(module)
    upward = {name: layer_of(name) for name in imports_of(module, top_level_only=False)
              if layer_of(name) > own}
    assert not upward, f"{module} (layer {own}) imports upward: {upward}"


def test_no_import_cycles_at_module_level():
    graph = {module: imports_of(module, top_level_only=True) for module in MODULES}
    # A package's __init__ importing its own submodules is how re-exports work, not a cycle.
    for module, targets in graph.items():
        graph[module] = {t for t in targets if not t.startswith(module + ".")}
    state: dict[str, int] = {}  # 1 = on the stack, 2 = done

    def visit(module: str, stack: list[str]) -> None:
        state[module] = 1
        for target in sorted(graph[module]):
            if state.get(target) == 1:
                cycle = stack[stack.index(target):] + [target]
                raise AssertionError("import cycle: " + " -> ".join(cycle))
            if target not in state:
                visit(target, [*stack, target])
        state[module] = 2

    for module in sorted(graph):
        if module not in state:
            visit(module, [module])


def test_the_layer_check_catches_an_upward_import(tmp_path, monkeypatch):
    """The check is not vacuous: a base module importing a search is reported."""
    fake = tmp_path / "linestep" / "_step.py"
    fake.parent.mkdir()
    fake.write_text("from linestep.searches.armijo import Armijo\n", encoding="utf-8")
    monkeypatch.setitem(MODULES, "linestep._step", fake)
    with pytest.raises(AssertionError, match="imports upward"):
        test_no_module_imports_upward("linestep._step")


@pytest.mark.parametrize("module", sorted(set(MODULES) - DATA_MODULES))
def test_no_source_module_is_over_the_size_limit(module):
    lines = len(MODULES[module].read_text(encoding="utf-8").splitlines())
    assert lines <= MAX_LINES, f"{module} has {lines} lines; split it by concern"
