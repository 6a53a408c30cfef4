"""The layers of the code hold (DEVELOPERS.md, "Layers and imports"): models/ never imports
optim/; optim/study/ never imports optim/morning/ or optim/cli/; optim/morning/ never imports
optim/cli/; no import cycle among optim's modules; imports sit at module top, except those of the
heavy optional libraries (the allow-list below). Read from the source with ``ast`` (the rules
are the project's own, no source)."""

from __future__ import annotations

import ast
from pathlib import Path

ROOT = Path(__file__).resolve().parents[3]
#: Libraries that load slowly or are optional: imported inside the function that needs them.
HEAVY = (
    "matplotlib",
    "contourpy",
    "ezdxf",
    "skfem",
    "selenium",
    "pyarrow",
    "psycopg2",
    "models.fem",
)
#: Package -> packages it must never import.
FORBIDDEN = {
    "models": ("optim",),
    "optim.study": ("optim.morning", "optim.cli"),
    "optim.morning": ("optim.cli",),
}


def _modules(package: str) -> dict[str, ast.Module]:
    out = {}
    for path in sorted((ROOT / package).rglob("*.py")):
        name = ".".join(path.relative_to(ROOT).with_suffix("").parts)
        name = name.removesuffix(".__init__")
        out[name] = ast.parse(path.read_text(encoding="utf-8"), str(path))
    return out


def _imported(node, module: str, is_package: bool) -> list[str]:
    """The modules an import statement names (a relative one resolved; ``from p import m``
    names both ``p`` and ``p.m``)."""
    if isinstance(node, ast.Import):
        return [a.name for a in node.names]
    base = node.module or ""
    if node.level:
        parts = module.split(".")
        parts = parts if is_package else parts[:-1]
        parts = parts[: len(parts) - node.level + 1]
        base = ".".join(parts + ([base] if base else []))
    return [base] + [f"{base}.{a.name}" for a in node.names]


def _in(name: str, package: str) -> bool:
    return name == package or name.startswith(package + ".")


def _imports(tree: ast.Module):
    """(import node, whether it sits inside a function) for every import of a module."""
    inside = set()
    for f in ast.walk(tree):
        if isinstance(f, (ast.FunctionDef, ast.AsyncFunctionDef)):
            inside |= {id(n) for n in ast.walk(f) if isinstance(n, (ast.Import, ast.ImportFrom))}
    for n in ast.walk(tree):
        if isinstance(n, (ast.Import, ast.ImportFrom)):
            yield n, id(n) in inside


MODULES = _modules("optim") | _modules("models")


def test_no_package_imports_a_layer_above_it():
    broken = []
    for name, tree in MODULES.items():
        for package, above in FORBIDDEN.items():
            if not _in(name, package):
                continue
            for node, _ in _imports(tree):
                for target in _imported(node, name, name not in _leaf_names()):
                    if any(_in(target, a) for a in above):
                        broken.append(f"{name} imports {target}")
    assert broken == []


def _leaf_names() -> set[str]:
    return {
        ".".join(p.relative_to(ROOT).with_suffix("").parts)
        for pkg in ("optim", "models")
        for p in (ROOT / pkg).rglob("*.py")
        if p.name != "__init__.py"
    }


def test_only_heavy_optional_libraries_are_imported_inside_functions():
    inside = []
    for name, tree in MODULES.items():
        if not _in(name, "optim"):
            continue
        for node, in_function in _imports(tree):
            targets = _imported(node, name, name not in _leaf_names())
            if in_function and not any(_in(t, h) for t in targets for h in HEAVY):
                inside.append(f"{name}:{node.lineno} {targets[0]}")
    assert inside == []


def test_no_import_cycle_among_optim_modules():
    """Module-level imports only (an import inside a function runs after every module is
    loaded): a depth-first search finds no way back to a module from what it imports."""
    leaves = _leaf_names()
    graph = {}
    for name, tree in MODULES.items():
        if not _in(name, "optim"):
            continue
        graph[name] = {
            t
            for node, in_function in _imports(tree)
            if not in_function
            for t in _imported(node, name, name not in leaves)
            if t in MODULES and t != name and _in(t, "optim")
        }
    cycles = []
    state: dict[str, int] = {}

    def visit(node, path):
        state[node] = 1
        for nxt in sorted(graph.get(node, ())):
            if state.get(nxt) == 1:
                cycles.append(" -> ".join(path[path.index(nxt) :] + [nxt]))
            elif nxt not in state:
                visit(nxt, path + [nxt])
        state[node] = 2

    for name in sorted(graph):
        if name not in state:
            visit(name, [name])
    # a package's __init__ importing its own modules is not a cycle of the code's layers
    cycles = [c for c in cycles if not _package_self(c)]
    assert cycles == []


def _package_self(cycle: str) -> bool:
    names = cycle.split(" -> ")
    packages = [n for n in names if n not in _leaf_names()]
    return bool(packages) and all(_in(n, packages[0]) for n in names)
