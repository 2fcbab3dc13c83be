"""Size limits of the package's code: modules of at most 600 lines, functions of at most 80.

Small modules and short functions keep each piece readable on its own (the
project's engineering rules, issue 13). A function is every ``def`` and
``async def`` the AST holds, methods and nested functions included; its
length is ``end_lineno - lineno + 1`` (the ``def`` line to its last line,
decorators not counted). A module's length is its number of lines.
"""

from __future__ import annotations

import ast
import textwrap
from pathlib import Path

import rcdoc

PACKAGE = Path(rcdoc.__file__).resolve().parent
ROOT = PACKAGE.parent
MAX_MODULE_LINES = 600
MAX_FUNCTION_LINES = 80

PENDING: set[str] = set()      # no file is exempt
# Written by a tool, not by hand (tools/compile_templates.py: jinja2's code of a
# shipped template, one function per template); the templates themselves are small.
GENERATED = "rcdoc/note/compiled_templates/t_"


def long_functions(source: str, limit: int) -> list[tuple[str, int, int]]:
    """(qualified name, first line, length) of every function longer than ``limit`` lines."""
    found: list[tuple[str, int, int]] = []

    def visit(node: ast.AST, prefix: str) -> None:
        for child in ast.iter_child_nodes(node):
            name = prefix
            if isinstance(child, (ast.FunctionDef, ast.AsyncFunctionDef, ast.ClassDef)):
                name = f"{prefix}{child.name}."
            if isinstance(child, (ast.FunctionDef, ast.AsyncFunctionDef)):
                length = child.end_lineno - child.lineno + 1
                if length > limit:
                    found.append((name[:-1], child.lineno, length))
            visit(child, name)

    visit(ast.parse(source), "")
    return found


def modules() -> list[Path]:
    return sorted(p for p in PACKAGE.rglob("*.py")
                  if not p.relative_to(ROOT).as_posix().startswith(GENERATED))


def test_the_scan_sees_the_package():
    names = {p.relative_to(ROOT).as_posix() for p in modules()}
    assert "rcdoc/analysis/engine.py" in names and "rcdoc/commands/cli.py" in names
    assert "rcdoc/note/compiled_templates/__init__.py" in names
    assert not any(n.startswith(GENERATED) for n in names)
    assert len(names) > 30


def test_long_functions_counts_methods_nested_and_async_defs():
    source = textwrap.dedent(
        """\
        def short():
            return 1

        class K:
            def method(self):
                a = 1
                return a

        async def outer():
            def inner():
                b = 2
                return b
            return inner
        """
    )
    # short: lines 1-2; K.method: 5-7; outer: 9-13; outer.inner: 10-12.
    assert long_functions(source, 4) == [("outer", 9, 5)]
    assert sorted(long_functions(source, 2)) == [("K.method", 5, 3), ("outer", 9, 5), ("outer.inner", 10, 3)]
    assert long_functions(source, 5) == []


def test_modules_are_at_most_600_lines():
    over = []
    for path in modules():
        rel = path.relative_to(ROOT).as_posix()
        lines = len(path.read_text(encoding="utf-8").splitlines())
        if lines > MAX_MODULE_LINES and rel not in PENDING:
            over.append(f"{rel}: {lines} lines")
    assert not over, "modules over 600 lines:\n" + "\n".join(over)


def test_functions_are_at_most_80_lines():
    over = []
    for path in modules():
        rel = path.relative_to(ROOT).as_posix()
        if rel in PENDING:
            continue
        for name, line, length in long_functions(path.read_text(encoding="utf-8"), MAX_FUNCTION_LINES):
            over.append(f"{rel}:{line} {name}: {length} lines")
    assert not over, "functions over 80 lines:\n" + "\n".join(over)
