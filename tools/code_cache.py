"""Regenerate rcdoc/_code_cache.bin: the code objects of the source texts Python
compiles for rcdoc at run time (rcdoc.code_cache says which and why).

It records every text that ``dataclasses``, ``collections`` (named tuples) and
cssselect2's selector compiler hand to ``exec`` or ``eval`` while this process
imports every module of rcdoc and builds the example board's note (serially,
into a temporary folder), compiles each as the built-in would (file name
``<string>``, no inherited compiler flag) and writes them, by rcdoc.code_cache's
key, after this interpreter's bytecode magic number.

    PYTHONPATH=$PWD python3 tools/code_cache.py [--check]

Run it after changing a data class's fields or a named tuple, after editing
note.css, or on another Python (until then those texts are compiled at run
time, as before; tests/test_code_cache.py fails for rcdoc's own). ``--check``
only says whether the file holds every text this would record (exit 1 if not).
"""

from __future__ import annotations

import argparse
import builtins
import importlib
import pkgutil
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
EXAMPLE = ROOT / "projects" / "greenhouse-controller.toml"


def recorded() -> dict[bytes, object]:
    """Key -> code object of every text compiled while rcdoc loads and builds a note."""
    import collections
    import dataclasses

    import cssselect2.compiler

    seen: dict[bytes, object] = {}

    def recorder(mode: str, real):
        def run(source, *args, **kwargs):
            if type(source) is str:
                from rcdoc.code_cache import key
                seen[key(mode, source)] = compile(source, "<string>", mode, dont_inherit=True)
            return real(source, *args, **kwargs)
        return run

    # Set before rcdoc is imported: rcdoc.code_cache leaves a name a module has.
    dataclasses.exec = recorder("exec", builtins.exec)
    collections.eval = recorder("eval", builtins.eval)
    cssselect2.compiler.eval = recorder("eval", builtins.eval)
    import rcdoc
    for info in pkgutil.walk_packages(rcdoc.__path__, "rcdoc."):
        if not info.name.endswith("__main__") and ".compiled_templates." not in info.name:
            importlib.import_module(info.name)
    from rcdoc.commands.cli import main
    with tempfile.TemporaryDirectory(prefix="rcdoc-code-cache-") as tmp:
        status = main(["build", str(EXAMPLE), "-o", tmp, "--jobs", "1", "--quiet"])
    if status != 0:
        raise SystemExit(f"the example's build failed ({status})")
    return seen


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--check", action="store_true",
                    help="only say whether the file holds every text (exit 1 if not)")
    args = ap.parse_args(argv)
    sys.path.insert(0, str(ROOT))
    table = recorded()
    from rcdoc.code_cache import FILE, _read, dumps
    if args.check:
        have = _read(FILE)
        missing = [k for k in table if k not in have]
        print(f"{len(table) - len(missing)} of {len(table)} texts filed in {FILE.name}")
        return 1 if missing else 0
    FILE.write_bytes(dumps(table))
    print(f"wrote {FILE.relative_to(ROOT)}: {len(table)} code objects")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
