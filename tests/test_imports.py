"""Shape of the package: the import graph has no cycles, and stages keep to their own names.

The graph is built from the source with :mod:`ast` (every ``import`` and ``from ... import``,
also those inside functions), so an import hidden in a function body counts as well.
"""

from __future__ import annotations

import ast

from .conftest import ROOT

PACKAGE = "groundcalc"


def _modules() -> dict[str, ast.Module]:
    out = {}
    for path in sorted((ROOT / PACKAGE).rglob("*.py")):
        rel = path.relative_to(ROOT).with_suffix("")
        parts = list(rel.parts)
        if parts[-1] == "__init__":
            parts = parts[:-1]
        out[".".join(parts)] = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
    return out


MODULES = _modules()


def _is_package(name: str) -> bool:
    return (ROOT / name.replace(".", "/") / "__init__.py").exists()


def _imports(name: str, tree: ast.Module) -> list[tuple[str, str | None]]:
    """``(imported module, imported name or None)`` for every import of a package module."""
    base = name if _is_package(name) else name.rpartition(".")[0]
    found: list[tuple[str, str | None]] = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            found += [(a.name, None) for a in node.names if a.name.split(".")[0] == PACKAGE]
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                pkg = base.split(".")
                pkg = pkg[: len(pkg) - (node.level - 1)]
                target = ".".join(pkg + ([node.module] if node.module else []))
            else:
                target = node.module or ""
            if target.split(".")[0] != PACKAGE:
                continue
            for a in node.names:
                sub = f"{target}.{a.name}"
                found.append((sub, None) if sub in MODULES else (target, a.name))
    return found


def _graph() -> dict[str, set[str]]:
    graph = {name: set() for name in MODULES}
    for name, tree in MODULES.items():
        for target, _ in _imports(name, tree):
            assert target in MODULES, f"{name} imports {target}, which is not a module of the package"
            if target != name:
                graph[name].add(target)
    return graph


def _cycles(graph: dict[str, set[str]]) -> list[list[str]]:
    """Strongly connected components with more than one module (Tarjan's algorithm)."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on: set[str] = set()
    out: list[list[str]] = []

    def visit(v: str) -> None:
        index[v] = low[v] = len(index)
        stack.append(v)
        on.add(v)
        for w in sorted(graph[v]):
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            comp = []
            while True:
                w = stack.pop()
                on.discard(w)
                comp.append(w)
                if w == v:
                    break
            if len(comp) > 1:
                out.append(sorted(comp))

    for v in sorted(graph):
        if v not in index:
            visit(v)
    return out


def test_cycle_finder_finds_a_known_cycle():
    # the check itself on a small graph with one cycle (a -> b -> c -> a) and a tree beside it
    graph = {"a": {"b"}, "b": {"c"}, "c": {"a", "d"}, "d": set(), "e": {"d"}}
    assert _cycles(graph) == [["a", "b", "c"]]
    assert _cycles({"a": {"b"}, "b": set()}) == []


def test_the_package_has_no_import_cycle():
    graph = _graph()
    assert len(graph) > 40 and sum(len(v) for v in graph.values()) > 80  # the walk found the package
    assert _cycles(graph) == []


def test_surface_and_assembly_do_not_import_each_other():
    for name, tree in MODULES.items():
        targets = {t for t, _ in _imports(name, tree)}
        if name.startswith(f"{PACKAGE}.surface"):
            assert f"{PACKAGE}.mom.assembly" not in targets, name
        if name == f"{PACKAGE}.mom.assembly":
            assert not any(t.startswith(f"{PACKAGE}.surface") for t in targets), targets


def test_no_module_imports_private_names_of_another_subpackage():
    # a leading underscore marks a name as private to its module's stage (subpackage)
    def stage(mod: str) -> str:
        return ".".join(mod.split(".")[:2])

    def private(n: str) -> bool:
        return n.startswith("_") and not n.endswith("__")

    bad = []
    for name, tree in MODULES.items():
        for target, imported in _imports(name, tree):
            if imported and private(imported) and stage(target) != stage(name):
                bad.append(f"{name}: {imported} from {target}")
            if imported is None and private(target.rpartition(".")[2]) and stage(target) != stage(name):
                bad.append(f"{name}: module {target}")
    assert bad == []


def test_the_integrators_reach_soil_through_its_interface():
    # the operator reaches a soil model only through the Green's-function protocol and the
    # registry; the integrators do not touch a model's implementation modules
    for name in (f"{PACKAGE}.mom.operator", f"{PACKAGE}.mom.assembly", f"{PACKAGE}.surface.potential"):
        targets = {t for t, _ in _imports(name, MODULES[name])}
        soil = {t for t in targets if t.startswith(f"{PACKAGE}.soil")}
        assert soil <= {f"{PACKAGE}.soil.greens", f"{PACKAGE}.soil.registry"}, (name, soil)
