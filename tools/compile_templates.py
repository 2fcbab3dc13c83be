"""Regenerate rcdoc/note/compiled_templates: jinja2's Python code for each shipped
template (templates/*.html and note.css), made by the environment the note
renders with (rcdoc.note.report), one module per template.

jinja2 compiles a template into Python source and Python compiles that, once
per process (0.07 s for the shipped templates); with the modules written here
Python's import machinery keeps their bytecode, and rcdoc.note.report hands
jinja2 that code through jinja2's bytecode cache interface, where the
template, the jinja2 version and the environment's code generation settings
are the ones recorded here.

    PYTHONPATH=$PWD python3 tools/compile_templates.py [--check]

Run it after editing a shipped template (until then that template is compiled
at run time, as before; tests/test_compiled_templates.py fails) or moving to
another jinja2. ``--check`` only says whether the committed modules are the
ones this would write (exit 1 if not).
"""

from __future__ import annotations

import argparse
import re
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
TARGET = ROOT / "rcdoc" / "note" / "compiled_templates"
_BEGIN, _END = "# BEGIN GENERATED\n", "# END GENERATED\n"


def module_name(template: str) -> str:
    """The module of a template's code: "_stage.html" -> "t__stage_html"."""
    return "t_" + re.sub(r"[^0-9A-Za-z_]", "_", template)


def generated() -> dict[str, str]:
    """File name (in TARGET) -> text, for every shipped template and the table."""
    import jinja2

    from rcdoc.note import report
    shipped = report.shipped_templates_dir()
    env = report._environment([shipped])
    files, table = {}, {}
    for path in sorted(shipped.iterdir()):
        if path.suffix not in (".html", ".css"):
            continue
        name = path.name
        source, _filename, _uptodate = env.loader.get_source(env, name)
        code = env.compile(source, name, None, raw=True)
        mod = module_name(name)
        # The note goes last: jinja2 maps the code's lines to the template's (debug_info).
        files[f"{mod}.py"] = (f"{code}\n# jinja2 {jinja2.__version__}'s code of templates/{name}, "
                              "written by tools/compile_templates.py: do not edit.\n")
        table[name] = (mod, jinja2.BytecodeCache().get_source_checksum(source))
    init = (TARGET / "__init__.py").read_text(encoding="utf-8")
    head, rest = init.split(_BEGIN, 1)
    _old, tail = rest.split(_END, 1)
    rows = "".join(f"    {name!r}: {entry!r},\n" for name, entry in sorted(table.items()))
    body = (f"JINJA2 = {jinja2.__version__!r}\n"
            f"SETTINGS = {report._codegen_settings(env)!r}\n"
            f"TEMPLATES: dict[str, tuple[str, str]] = {{\n{rows}}}\n")
    files["__init__.py"] = head + _BEGIN + body + _END + tail
    return files


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--check", action="store_true", help="compare only; exit 1 if stale")
    args = ap.parse_args(argv)
    want = generated()
    have = {p.name: p.read_text(encoding="utf-8") for p in TARGET.glob("*.py")}
    stale = sorted(n for n in set(want) | set(have) if want.get(n) != have.get(n))
    if args.check:
        for n in stale:
            print(f"stale: {TARGET / n}")
        return 1 if stale else 0
    for n in stale:
        if n in want:
            (TARGET / n).write_text(want[n], encoding="utf-8")
        else:
            (TARGET / n).unlink()
        print(f"wrote {TARGET / n}" if n in want else f"removed {TARGET / n}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
