"""The package's layout keeps its promises (DEVELOPERS.md, "Layers"): checked from the source with ``ast``.

- each layer imports only the layers below it (physics and statistics import nothing else of the package);
- no import cycles between modules (imports inside functions count too: a lazy import hides a cycle, it does
  not remove it);
- no module uses another module's private names (``from x import _name`` or ``x._name``): what several modules
  need is a public name of the module that owns it;
- no module grows past :data:`MAX_LINES` lines (split it by concept, as the large ones were).
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "uqthermo"
MAX_LINES = 700

#: which parts of the package each part may import ("errors", "text_safety" and the package's
#: ``__init__`` are the shared bottom; ``cli`` is the top)
ALLOWED = {
    "thermo": {"errors"},
    "uq": {"errors"},
    "case": {"errors", "thermo", "uq"},
    "report": {"errors", "text_safety"},
    "pipeline": {"errors", "text_safety", "thermo", "uq", "case", "report"},
    "commands": {"errors", "text_safety", "thermo", "uq", "case", "report", "pipeline"},
    "cli": {"errors", "text_safety", "pipeline", "commands"},
    "errors": set(),
    "text_safety": set(),
}


def _modules() -> dict[str, Path]:
    mods = {}
    for path in PACKAGE.rglob("*.py"):
        parts = path.relative_to(PACKAGE.parent).with_suffix("").parts
        name = ".".join(parts[:-1] if path.name == "__init__.py" else parts)
        mods[name] = path
    return mods


MODULES = _modules()


class _Imports(ast.NodeVisitor):
    """The package modules a module imports, and the private names it takes from them."""

    def __init__(self, name: str, path: Path):
        self.name = name
        self.package = name if path.name == "__init__.py" else name.rsplit(".", 1)[0]
        self.targets: set[str] = set()
        self.private: list[str] = []
        self.aliases: dict[str, str] = {}       # local name -> package module it stands for

    def _resolve(self, node: ast.ImportFrom) -> str:
        if not node.level:
            return node.module or ""
        base = self.package.split(".")
        base = base[: len(base) - node.level + 1]
        return ".".join(base + ([node.module] if node.module else []))

    def visit_ImportFrom(self, node: ast.ImportFrom) -> None:
        source = self._resolve(node)
        if source.split(".")[0] != "uqthermo":
            return
        for alias in node.names:
            full = f"{source}.{alias.name}"
            if full in MODULES:                   # `from pkg import module`
                self.targets.add(full)
                self.aliases[alias.asname or alias.name] = full
                continue
            if source in MODULES and source != self.name:
                self.targets.add(source)
                if alias.name.startswith("_") and not alias.name.startswith("__"):
                    self.private.append(f"from {source} import {alias.name}")

    def visit_Import(self, node: ast.Import) -> None:
        for alias in node.names:
            if alias.name in MODULES:
                self.targets.add(alias.name)
                if alias.asname:
                    self.aliases[alias.asname] = alias.name

    def visit_Attribute(self, node: ast.Attribute) -> None:
        if (isinstance(node.value, ast.Name) and node.value.id in self.aliases and node.attr.startswith("_")
                and not node.attr.startswith("__")):
            self.private.append(f"{self.aliases[node.value.id]}.{node.attr}")
        self.generic_visit(node)


def _scan() -> dict[str, _Imports]:
    out = {}
    for name, path in MODULES.items():
        visitor = _Imports(name, path)
        visitor.visit(ast.parse(path.read_text(encoding="utf-8"), filename=str(path)))
        visitor.targets.discard(name)
        out[name] = visitor
    return out


SCAN = _scan()


def _part(module: str) -> str:
    parts = module.split(".")
    return parts[1] if len(parts) > 1 else "__init__"


def test_every_part_has_a_rule():
    parts = {_part(m) for m in MODULES} - {"__init__"}
    assert parts <= set(ALLOWED), f"parts of the package without a layer rule: {sorted(parts - set(ALLOWED))}"


@pytest.mark.parametrize("part", sorted(ALLOWED))
def test_layers_import_only_the_layers_below(part):
    wrong = []
    for name, scan in SCAN.items():
        if _part(name) != part:
            continue
        for target in scan.targets:
            other = _part(target)
            if other not in (part, "__init__") and other not in ALLOWED[part]:
                wrong.append(f"{name} imports {target}")
    assert not wrong, f"{part} may import only {sorted(ALLOWED[part])}:\n  " + "\n  ".join(sorted(wrong))


def test_no_import_cycles():
    graph = {name: {t for t in scan.targets if t in MODULES and not _is_parent(t, name)}
             for name, scan in SCAN.items()}
    cycles = _strongly_connected(graph)
    assert not cycles, "import cycles:\n  " + "\n  ".join(" <-> ".join(sorted(c)) for c in cycles)


def _is_parent(target: str, name: str) -> bool:
    """A package's ``__init__`` importing its own submodules (or a submodule its package) is no cycle."""
    return name.startswith(target + ".") or target.startswith(name + ".")


def _strongly_connected(graph: dict[str, set[str]]) -> list[set[str]]:
    """Tarjan's algorithm, iterative: the strongly connected components with more than one module."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on_stack: set[str] = set()
    found = []
    counter = 0
    for root in graph:
        if root in index:
            continue
        work = [(root, iter(sorted(graph[root])))]
        index[root] = low[root] = counter
        counter += 1
        stack.append(root)
        on_stack.add(root)
        while work:
            node, children = work[-1]
            for child in children:
                if child not in index:
                    index[child] = low[child] = counter
                    counter += 1
                    stack.append(child)
                    on_stack.add(child)
                    work.append((child, iter(sorted(graph.get(child, ())))))
                    break
                if child in on_stack:
                    low[node] = min(low[node], index[child])
            else:
                work.pop()
                if work:
                    low[work[-1][0]] = min(low[work[-1][0]], low[node])
                if low[node] == index[node]:
                    component = set()
                    while True:
                        member = stack.pop()
                        on_stack.discard(member)
                        component.add(member)
                        if member == node:
                            break
                    if len(component) > 1:
                        found.append(component)
    return found


def test_no_private_names_across_modules():
    uses = [f"{name}: {use}" for name, scan in SCAN.items() for use in scan.private]
    assert not uses, "private names used across modules (make them public in their owner):\n  " + "\n  ".join(uses)


def test_modules_stay_readable():
    long = {name: n for name, path in MODULES.items()
            if (n := len(path.read_text(encoding="utf-8").splitlines())) > MAX_LINES}
    assert not long, f"modules over {MAX_LINES} lines (split by concept): {long}"


def test_the_guard_sees_a_cycle_and_a_private_import():
    """The checks above would fail on a cycle and a private import (they are not vacuous)."""
    assert _strongly_connected({"a": {"b"}, "b": {"c"}, "c": {"a"}, "d": {"a"}}) == [{"a", "b", "c"}]
    visitor = _Imports("uqthermo.case.x", PACKAGE / "case" / "x.py")
    visitor.visit(ast.parse("from .loader import _hidden\nfrom . import units\nunits._private(1)\n"))
    assert visitor.private == ["from uqthermo.case.loader import _hidden", "uqthermo.case.units._private"]
