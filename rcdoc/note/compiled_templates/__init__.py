"""The shipped templates, compiled ahead: the Python code jinja2 makes of each.

What it is for: jinja2 turns a template into Python source, then Python into
code, once per process: 0.07 s for the shipped templates in every process that
renders. In the one-value rebuild that is the command's process, on its
critical path (its analysis, then the front matter). The modules beside this
file hold jinja2's own Python source for each shipped template, written by
tools/compile_templates.py, so that Python's import machinery keeps their
bytecode like any module's; ``code`` hands a template's code to jinja2 through
its bytecode cache interface (rcdoc.note.report._Precompiled).

What it must not do: give other code than jinja2 would compile. A module is
used only for the shipped template it was made from, byte for byte (its
checksum, jinja2's own), by the jinja2 version that made it, for an
environment with the same code generation settings; anything else is compiled
from the template as usual. A template given with ``--templates`` always is.
tests/test_compiled_templates.py compiles every shipped template afresh and
compares the code, and renders the note both ways.
"""

from __future__ import annotations

import importlib.util
import types

__all__ = ["code", "JINJA2", "SETTINGS", "TEMPLATES"]

# Written by tools/compile_templates.py.
# BEGIN GENERATED
JINJA2 = '3.1.6'
SETTINGS = "('ImmutableSandboxedEnvironment', '{%', '%}', '{{', '}}', '{#', '#}', None, None, True, True, '\\n', True, True, True, True, False, [], ['abs', 'attr', 'batch', 'capitalize', 'center', 'count', 'd', 'default', 'dictsort', 'e', 'escape', 'figure', 'filesizeformat', 'first', 'float', 'forceescape', 'format', 'groupby', 'indent', 'int', 'items', 'join', 'keep_units', 'last', 'layout_rows', 'length', 'list', 'lower', 'map', 'max', 'min', 'pprint', 'random', 'reject', 'rejectattr', 'replace', 'reverse', 'round', 'safe', 'select', 'selectattr', 'slice', 'sort', 'string', 'striptags', 'sum', 'title', 'tojson', 'trim', 'truncate', 'unique', 'upper', 'urlencode', 'urlize', 'wordcount', 'wordwrap', 'xmlattr'], ['!=', '<', '<=', '==', '>', '>=', 'boolean', 'callable', 'defined', 'divisibleby', 'eq', 'equalto', 'escaped', 'even', 'false', 'filter', 'float', 'ge', 'greaterthan', 'gt', 'in', 'integer', 'iterable', 'le', 'lessthan', 'lower', 'lt', 'mapping', 'ne', 'none', 'number', 'numeric', 'odd', 'sameas', 'sequence', 'string', 'test', 'true', 'undefined', 'upper', 'verdict'])"
TEMPLATES: dict[str, tuple[str, str]] = {
    '_appendix.html': ('t__appendix_html', 'a09a0f68a730be7459e2c1394601dd3eb9761aee'),
    '_blocks.html': ('t__blocks_html', '2b0c948dd90c9ffc2bf9f6d735c91eb67f2ebe1c'),
    '_changes.html': ('t__changes_html', '18ce67c6b96b5576184c3dd87e52ecf6d232b9bc'),
    '_cover.html': ('t__cover_html', 'b069c775d4ef4d0f9493597b18cb1269155a8dff'),
    '_overview.html': ('t__overview_html', '83a17aa31ded8e14913e0b1a7cc2c9be0a6f1453'),
    '_stage.html': ('t__stage_html', 'c3414c2b5b9f55f81cfc8cfbb8318e00e2e7bad3'),
    '_summary.html': ('t__summary_html', 'aa860ad7cb342551585e6c9b461a129abff76864'),
    'note.css': ('t_note_css', 'd2a5407e082202271c7726595f495d3bbcdb135d'),
    'note.html': ('t_note_html', 'f39b63a9f265a89edb2b86c18e69c44a6e6a3b36'),
}
# END GENERATED


def code(name: str, checksum: str, filename: str, settings: str,
         jinja2_version: str) -> types.CodeType | None:
    """The compiled code of template ``name`` where the module made ahead is for
    this very source (``checksum``: jinja2's bytecode cache checksum), jinja2
    version and settings; its file names are ``filename`` (as jinja2's own
    compile gives them: tracebacks and error locations name the template).
    None otherwise."""
    entry = TEMPLATES.get(name)
    if entry is None or entry[1] != checksum or jinja2_version != JINJA2 or settings != SETTINGS:
        return None
    module = f"{__name__}.{entry[0]}"
    spec = importlib.util.find_spec(module)
    if spec is None or spec.loader is None:
        return None
    return _named(spec.loader.get_code(module), filename)


def _named(code: types.CodeType, filename: str) -> types.CodeType:
    """``code`` and every code object inside it with ``filename`` as their file."""
    consts = tuple(_named(c, filename) if isinstance(c, types.CodeType) else c
                   for c in code.co_consts)
    return code.replace(co_filename=filename, co_consts=consts)
