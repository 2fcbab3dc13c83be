"""Import weasyprint without ctypes' library search: a third of its import time.

What it is for: weasyprint (pinned, 70.0) opens Pango, GObject, HarfBuzz and
Fontconfig when it is imported, trying each library's names for every
platform in turn ("libpango-1.0-0", "pango-1.0-0", "pango-1.0",
"libpango-1.0.so.0", ...). For a name that is not a file name, cffi asks
ctypes.util.find_library, which on Linux runs ``ldconfig -p``, then gcc, then
ld in subprocesses: about 25 ms for each name that is not found, 0.6 s of
every process that imports weasyprint (measured: the command itself, and the
fork server its workers start from, both on the way to the first page).

On Linux, while weasyprint is imported, find_library answers "not found" at
once. Each of weasyprint's lists holds the library's Linux file name
(libpango-1.0.so.0), which cffi hands to dlopen as it is: the system's loader
finds it in its cache or on LD_LIBRARY_PATH, the same file find_library would
have named (it answers with that file name). A library that is not installed
still fails, with cffi's message naming it (rcdoc.commands.renderer reads it).

What it must not do: change which library file is loaded, or stay in place
after the import (cffi's users elsewhere get the real search).
"""

from __future__ import annotations

import contextlib
import ctypes.util
import sys

from rcdoc.note import lean_imports


@contextlib.contextmanager
def _no_library_search():
    if not sys.platform.startswith("linux") or "weasyprint" in sys.modules:
        yield
        return
    real = ctypes.util.find_library
    ctypes.util.find_library = lambda name: None
    try:
        yield
    finally:
        ctypes.util.find_library = real


# What weasyprint, matplotlib and schemdraw do at import that the note never uses,
# left for later (rcdoc.note.lean_imports): before any of them is imported.
lean_imports.install()

with _no_library_search():
    import weasyprint  # noqa: E402,F401 - the import this module exists for

# cssselect2 (imported by weasyprint) compiles each CSS selector's test with eval:
# those of the note's sheets are compiled ahead (rcdoc.code_cache).
from rcdoc import code_cache  # noqa: E402

code_cache.install_selectors()
