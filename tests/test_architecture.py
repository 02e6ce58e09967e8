"""The package layout, checked from the import graph of the source (``ast``, no import is executed).

Rules (DEVELOPERS.md, "Packages"): data flows one way, from the bottom up::

    core (errors, limits, numeric_args, textsafe, about) < terrain < propagation < lora < engine
        < io < products < plot < api < cli < the package itself (__init__, __main__)

A module imports only from its own package or one below it, at module level
or inside a function alike (a lazy import is an import); no import cycle
between modules; at most 12 modules directly in ``profiler/``; no module
(package ``__init__`` facades excepted) imports a name of the package only to
hand it on.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
PACKAGE = ROOT / "profiler"

LAYERS = ["core", "terrain", "propagation", "lora", "engine", "io", "products", "plot", "api", "cli", "top"]
"""Packages from the bottom up: a module may import from its own layer or a lower one."""

TOP_LEVEL = {"profiler": "top", "profiler.__main__": "top", "profiler.api": "api",
             "profiler._deprecated": "top"}
"""Top-level modules that are not core helpers."""

MAX_TOP_LEVEL_MODULES = 12


def module_name(path: Path) -> str:
    parts = list(path.relative_to(ROOT).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts = parts[:-1]
    return ".".join(parts)


def modules() -> dict[str, Path]:
    return {module_name(p): p for p in sorted(PACKAGE.rglob("*.py"))}


def is_package(path: Path) -> bool:
    return path.name == "__init__.py"


def imports_of(name: str, path: Path, known: dict[str, Path]) -> list[tuple[str, int, list[str]]]:
    """``(imported module, line, names)`` for every profiler import of a module, at any depth."""
    package = name if is_package(path) else name.rsplit(".", 1)[0]
    found = []
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            found += [(a.name, node.lineno, []) for a in node.names if a.name.split(".")[0] == "profiler"]
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")[:len(package.split(".")) - (node.level - 1)]
                target = ".".join(base + ([node.module] if node.module else []))
            else:
                target = node.module or ""
            if target.split(".")[0] != "profiler":
                continue
            plain = []
            for alias in node.names:
                if f"{target}.{alias.name}" in known:      # `from package import module`
                    found.append((f"{target}.{alias.name}", node.lineno, []))
                else:
                    plain.append(alias.name)
            if plain or not node.names:
                found.append((target, node.lineno, plain))
    return found


def layer(name: str) -> str:
    if name in TOP_LEVEL:
        return TOP_LEVEL[name]
    parts = name.split(".")
    if len(parts) == 2 and not (PACKAGE / parts[1]).is_dir():
        return "core"
    return parts[1]


def graph() -> dict[str, set[str]]:
    known = modules()
    return {name: {t for t, _, _ in imports_of(name, path, known)} for name, path in known.items()}


def test_every_subpackage_has_a_layer():
    unknown = {layer(n) for n in modules()} - set(LAYERS)
    assert unknown == set()


def test_imports_flow_one_way():
    known = modules()
    bad = []
    for name, path in known.items():
        for target, line, _ in imports_of(name, path, known):
            assert target in known, f"{name} line {line} imports {target}, which does not exist"
            if LAYERS.index(layer(target)) > LAYERS.index(layer(name)):
                bad.append(f"{path.relative_to(ROOT)}:{line} ({layer(name)}) imports {target} ({layer(target)})")
    assert bad == []


def test_physics_packages_import_no_product_writer_sheet_or_command():
    forbidden = ("profiler.products", "profiler.io", "profiler.plot", "profiler.cli", "profiler.api")
    bad = [(name, t) for name, targets in graph().items()
           if layer(name) in ("core", "terrain", "propagation", "lora", "engine")
           for t in targets if t.startswith(forbidden) or t == "profiler"]
    assert bad == []


def find_cycle(edges: dict[str, set[str]]) -> list[str] | None:
    """One import cycle (a list of modules, first == last) or None (iterative depth-first search)."""
    state: dict[str, int] = {}
    for start in sorted(edges):
        if state.get(start):
            continue
        stack = [(start, iter(sorted(edges[start])))]
        path = [start]
        state[start] = 1
        while stack:
            node, children = stack[-1]
            child = next(children, None)
            if child is None:
                state[node] = 2
                stack.pop()
                path.pop()
            elif state.get(child) == 1:
                return path[path.index(child):] + [child]
            elif not state.get(child):
                state[child] = 1
                path.append(child)
                stack.append((child, iter(sorted(edges.get(child, ())))))
    return None


def test_no_import_cycle_not_even_a_lazy_one():
    assert find_cycle(graph()) is None


def test_find_cycle_finds_a_lazy_cycle():
    # the check itself: a cycle through a function-level import is one
    assert find_cycle({"a": {"b"}, "b": {"c"}, "c": {"a"}}) == ["a", "b", "c", "a"]
    assert find_cycle({"a": {"b"}, "b": set()}) is None


def test_at_most_twelve_modules_at_the_top():
    top = sorted(p.name for p in PACKAGE.glob("*.py"))
    assert len(top) <= MAX_TOP_LEVEL_MODULES, top


def names_used(tree: ast.Module) -> set[str]:
    used = {n.id for n in ast.walk(tree) if isinstance(n, ast.Name)}
    used |= {n.value.id for n in ast.walk(tree) if isinstance(n, ast.Attribute) and isinstance(n.value, ast.Name)}
    # names in string annotations (``from __future__ import annotations`` keeps them as text)
    for n in ast.walk(tree):
        if isinstance(n, ast.Constant) and isinstance(n.value, str) and n.value.isidentifier():
            used.add(n.value)
    return used


def reexports(path: Path) -> list[str]:
    """Names a module imports from the package at module level and never uses itself."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    used = names_used(ast.Module(body=[n for n in tree.body if not isinstance(n, (ast.Import, ast.ImportFrom))],
                                 type_ignores=[]))
    handed_on = []
    for node in tree.body:
        if isinstance(node, ast.ImportFrom) and (node.level or (node.module or "").startswith("profiler")):
            handed_on += [a.asname or a.name for a in node.names if (a.asname or a.name) not in used]
    return handed_on


@pytest.mark.parametrize("name", sorted(n for n, p in modules().items() if not is_package(p)))
def test_no_module_hands_on_names_it_does_not_use(name):
    assert reexports(modules()[name]) == []


def test_reexport_check_sees_a_reexport(tmp_path):
    shim = tmp_path / "shim.py"
    shim.write_text("from .elevation import ElevationModel\nfrom .voids import fill_voids_along_profile\n\n"
                    "def f():\n    return fill_voids_along_profile\n")
    assert reexports(shim) == ["ElevationModel"]


def test_products_write_no_file():
    # a product returns its result; the writers (io.outputs, the exports' write_* functions) are called
    # by api.py and cli/ only
    known = modules()
    bad = [(name, target, names) for name, path in known.items() if layer(name) == "products"
           for target, _, names in imports_of(name, path, known)
           if target == "profiler.io.outputs" or any(n.startswith("write_") for n in names)]
    assert bad == []


def test_no_private_name_is_imported_from_another_module():
    known = modules()
    bad = [(name, target, n) for name, path in known.items()
           for target, _, names in imports_of(name, path, known) for n in names
           if n.startswith("_") and not n.startswith("__")]
    assert bad == []


def test_lazy_text_renders_import_only_writers():
    # io.outputs.text_of(module, function) imports profiler.<module> when the output is written: an
    # import the graph above cannot see, made by io code, so it may name only io modules
    import re

    calls = [(p.relative_to(ROOT), m) for p in PACKAGE.rglob("*.py")
             for m in re.findall(r"text_of\(\"([\w.]+)\"", p.read_text(encoding="utf-8"))]
    assert calls, "no text_of call found: is the check still needed?"
    assert [(p, m) for p, m in calls if not m.startswith("io.")] == []
