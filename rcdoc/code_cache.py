"""Compiled code for the source texts that Python compiles for rcdoc as it starts:
the methods ``dataclasses`` writes for each data class, the ``__new__`` of each
named tuple, and each CSS selector's test that cssselect2 (the renderer's
selector matcher) writes, all compiled once and filed with the package.

What it is for: those three write Python source at run time and compile it
with ``exec`` or ``eval``, in every process: 0.04 s of the command's CPU in a
one-value rebuild (327 data class methods and 51 named tuples as rcdoc's
modules load, 409 selector tests as the note's style sheets are read), all
before its first page. Python keeps the bytecode of modules between runs
(``__pycache__``), not of such texts. Here the texts a build compiles are
compiled ahead, by ``tools/code_cache.py``, into ``rcdoc/_code_cache.bin``:
each text's code object (marshal), filed by the SHA-256 of the compile mode and
the text. ``install`` puts, in each of those three modules, an ``exec`` or
``eval`` of its own before the built-in one: for a text the file holds, it
runs the filed code object, which is the object ``compile`` makes from that
text (the same Python: the file starts with the interpreter's bytecode magic
number, as a module's cached bytecode does; the same mode; the same file name, ``<string>``; none of the three
modules imports from ``__future__``, so no compiler flag is inherited); any
other text, or a code object, goes to the built-in as before.

What it must not do: run anything but what the built-in would run. A file made
by another Python, a missing file or one that cannot be read is no file; a
text not in it is compiled as before (a data class whose fields changed since
the file was written: tests/test_code_cache.py then asks for the tool). The
file is read on the first text, not at import.
"""

from __future__ import annotations

import builtins
import hashlib
import importlib.util
import marshal
import sys
import zlib
from pathlib import Path

__all__ = ["install", "install_selectors", "key", "dumps", "FILE"]

FILE = Path(__file__).resolve().parent / "_code_cache.bin"
# The modules whose run-time compiling goes through here, and how each compiles.
CONSUMERS = {"dataclasses": "exec", "collections": "eval", "cssselect2.compiler": "eval"}

_TABLE: list[dict] = []          # the file's code objects by key, once read


def key(mode: str, source: str) -> bytes:
    """The file's key of ``source`` compiled in ``mode`` ("exec" or "eval")."""
    return hashlib.sha256(mode.encode("ascii") + b"\0"
                          + source.encode("utf-8", "surrogatepass")).digest()


def _table() -> dict:
    if not _TABLE:
        # Under -O the compiler drops asserts: the filed objects are -O0's.
        _TABLE.append({} if sys.flags.optimize else _read(FILE))
    return _TABLE[0]


def _read(path: Path) -> dict:
    """The code objects of ``path``, or {} where it is missing, unreadable or made
    by another Python (its first bytes are not this interpreter's magic number)."""
    magic = importlib.util.MAGIC_NUMBER
    try:
        data = path.read_bytes()
        if not data.startswith(magic):
            return {}
        table = marshal.loads(zlib.decompress(data[len(magic):]))
    except (OSError, ValueError, EOFError, TypeError, zlib.error):
        return {}
    return table if isinstance(table, dict) else {}


def dumps(table: dict) -> bytes:
    """The file's bytes for ``table`` (key -> code object), as ``_read`` reads them:
    this interpreter's magic number, then the table marshalled (in key order, so
    that the same texts give the same bytes) and compressed."""
    ordered = {k: table[k] for k in sorted(table)}
    return importlib.util.MAGIC_NUMBER + zlib.compress(marshal.dumps(ordered), 9)


def _filed(mode: str, source) -> object:
    """The filed code object of ``source`` (a str) in ``mode``, or None."""
    if type(source) is not str:
        return None
    return _table().get(key(mode, source))


def _exec(source, globals=None, locals=None, /, **kwargs):
    code = _filed("exec", source)
    return builtins.exec(source if code is None else code, globals, locals, **kwargs)


def _eval(source, globals=None, locals=None, /):
    code = _filed("eval", source)
    return builtins.eval(source if code is None else code, globals, locals)


_SHADOWS = {"exec": _exec, "eval": _eval}


def _shadow(module) -> None:
    name = CONSUMERS[module.__name__]
    if name not in module.__dict__:          # a name of its own: left as it is
        setattr(module, name, _SHADOWS[name])


def install() -> None:
    """Shadow the built-in in ``dataclasses`` and ``collections`` (before rcdoc's
    data classes are made: rcdoc/__init__.py). Idempotent."""
    import collections
    import dataclasses
    for module in (dataclasses, collections):
        _shadow(module)


def install_selectors() -> None:
    """Shadow the built-in ``eval`` in cssselect2's compiler, where it is imported
    (rcdoc.note.renderer_libs, as the renderer loads). Idempotent."""
    module = sys.modules.get("cssselect2.compiler")
    if module is not None:
        _shadow(module)
