"""The package's one-way structure: every rcdoc module imports only from its own
layer or the layers before it, and no set of modules imports itself in a ring.

Layers, lowest first: base (rcdoc/__init__, code_cache, errors, files, teardown,
versions) < input < analysis < kinds < note < commands < rcdoc/__main__ (the entry
point). The scan reads the source with ast, so imports inside functions count as much as those at the
top of a module (an import hidden in a function is still a dependency).
"""

from __future__ import annotations

import ast
import subprocess
import sys
from pathlib import Path

import pytest

import rcdoc

PACKAGE = Path(rcdoc.__file__).parent
LAYERS = ("base", "input", "analysis", "kinds", "note", "commands", "entry")

# Imports allowed to go up a layer: none.
PENDING: set[tuple[str, str]] = set()
# Rings allowed: none.
PENDING_CYCLES: set[frozenset[str]] = set()


def _modules() -> dict[str, tuple[Path, bool]]:
    """Dotted module name -> (file, is a package's __init__)."""
    out = {}
    for path in sorted(PACKAGE.rglob("*.py")):
        parts = list(path.relative_to(PACKAGE.parent).with_suffix("").parts)
        is_pkg = parts[-1] == "__init__"
        out[".".join(parts[:-1] if is_pkg else parts)] = (path, is_pkg)
    return out


MODULES = _modules()


def layer_of(module: str) -> int:
    if module == "rcdoc.__main__":
        return LAYERS.index("entry")
    parts = module.split(".")
    if len(parts) > 1 and parts[1] in LAYERS:
        return LAYERS.index(parts[1])
    return LAYERS.index("base")


def _owner(name: str) -> str | None:
    """The rcdoc module a dotted name lives in (a module, or an object of one)."""
    while name and name not in MODULES:
        name = name.rpartition(".")[0]
    return name or None


def imports_of(module: str) -> set[tuple[str, int]]:
    """(imported rcdoc module, line) for every import statement anywhere in ``module``."""
    path, is_pkg = MODULES[module]
    package = module if is_pkg else module.rpartition(".")[0]
    out = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            names = [a.name for a in node.names]
        elif isinstance(node, ast.ImportFrom):
            base = node.module or ""
            if node.level:             # relative: from the package, up level - 1
                up = package.split(".")[:len(package.split(".")) - (node.level - 1)]
                base = ".".join(up + ([node.module] if node.module else []))
            # `from pkg import mod` imports the module pkg.mod; `from mod import obj`, mod.
            names = [f"{base}.{a.name}" if f"{base}.{a.name}" in MODULES else base
                     for a in node.names]
        else:
            continue
        for name in names:
            if name == "rcdoc" or name.startswith("rcdoc."):
                target = _owner(name)
                if target and target != module:
                    out.add((target, node.lineno))
    return out


GRAPH = {m: imports_of(m) for m in MODULES}


def test_the_scan_sees_imports_inside_functions_and_relative_ones(tmp_path):
    # The scanner itself: a function-level import and a relative one are found.
    src = ("def f():\n    from rcdoc.note import charts\n"
           "from .errors import ProjectError\nimport rcdoc.files\n")
    MODULES["rcdoc.kinds._probe"] = (tmp_path / "probe.py", False)
    (tmp_path / "probe.py").write_text(src.replace(".errors", "..errors"))
    try:
        found = {t for t, _ in imports_of("rcdoc.kinds._probe")}
    finally:
        del MODULES["rcdoc.kinds._probe"]
    assert found == {"rcdoc.note.charts", "rcdoc.errors", "rcdoc.files"}


def test_every_module_has_a_layer():
    assert len(MODULES) > 30
    for m in MODULES:
        parts = m.split(".")
        assert len(parts) == 1 or parts[1] in LAYERS or m in (
            "rcdoc.__main__", "rcdoc.code_cache", "rcdoc.errors", "rcdoc.files",
            "rcdoc.teardown", "rcdoc.versions"), f"{m} is in no layer folder"


def test_no_import_goes_up_a_layer():
    bad = []
    for m, deps in GRAPH.items():
        for target, line in sorted(deps):
            if layer_of(target) > layer_of(m) and (m, target) not in PENDING:
                bad.append(f"{MODULES[m][0].relative_to(PACKAGE.parent)}:{line}: {m} "
                           f"({LAYERS[layer_of(m)]}) imports {target} "
                           f"({LAYERS[layer_of(target)]})")
    assert not bad, "imports going up a layer:\n" + "\n".join(bad)


def test_pending_allowances_are_still_needed():
    # An allowance whose import is gone must be removed, so the list stays honest.
    edges = {(m, t) for m, deps in GRAPH.items() for t, _ in deps}
    assert PENDING <= edges, f"no longer imported: {PENDING - edges}"
    rings = {frozenset(c) for c in cycles(GRAPH)}
    assert PENDING_CYCLES <= rings, f"no longer a ring: {PENDING_CYCLES - rings}"


def cycles(graph) -> list[list[str]]:
    """Strongly connected components with more than one module (Tarjan)."""
    index, low, stack, on, out = {}, {}, [], set(), []
    counter = [0]

    def visit(v):
        index[v] = low[v] = counter[0]
        counter[0] += 1
        stack.append(v)
        on.add(v)
        for w, _ in graph[v]:
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


def test_cycle_finder_finds_a_ring():
    g = {"a": {("b", 1)}, "b": {("c", 1)}, "c": {("a", 1)}, "d": {("a", 1)}}
    assert cycles(g) == [["a", "b", "c"]]
    assert cycles({"a": {("b", 1)}, "b": set()}) == []


def test_no_import_cycle():
    rings = [c for c in cycles(GRAPH) if frozenset(c) not in PENDING_CYCLES]
    assert not rings, "modules importing each other in a ring: " + "; ".join(
        " <-> ".join(c) for c in rings)


@pytest.mark.parametrize("module", ["rcdoc.input.project", "rcdoc.analysis.analyse"])
def test_loader_and_analysis_do_not_load_drawing_libraries(module):
    # Loading a project (and analysing it) draws nothing: matplotlib takes seconds to import.
    code = (f"import sys, {module}\n"
            "print(sorted(m for m in ('matplotlib', 'schemdraw', 'weasyprint', 'jinja2') "
            "if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         cwd=PACKAGE.parent, check=True)
    assert out.stdout.strip() == "[]", out.stdout + out.stderr
