"""weasyprint imported without ctypes' library search (rcdoc.note.renderer_libs) opens
the same library files as with it, runs no subprocess for it, and leaves
ctypes.util.find_library as it was. Each case in a fresh interpreter."""

from __future__ import annotations

import json
import subprocess
import sys
import textwrap

import pytest

pytestmark = pytest.mark.skipif(not sys.platform.startswith("linux"),
                                reason="the shortcut is taken on Linux only")

# The renderer's libraries as mapped into the process (/proc/self/maps, Linux),
# and the subprocesses started while importing (subprocess.Popen counted).
PROBE = textwrap.dedent("""
    import ctypes.util, json, subprocess, sys
    started = []
    real_popen = subprocess.Popen.__init__
    def counting(self, args, *a, **k):
        started.append(args if isinstance(args, str) else " ".join(map(str, args)))
        return real_popen(self, args, *a, **k)
    subprocess.Popen.__init__ = counting
    finder = ctypes.util.find_library
    if sys.argv[1] == "rcdoc":
        import rcdoc.note.report
    else:
        import weasyprint
    names = ("pango", "gobject", "harfbuzz", "fontconfig")
    maps = sorted({line.split()[-1] for line in open("/proc/self/maps")
                   if ".so" in line and any("lib" + n in line for n in names)})
    print(json.dumps({"maps": maps, "started": started,
                      "restored": ctypes.util.find_library is finder}))
""")


def _probe(how: str) -> dict:
    out = subprocess.run([sys.executable, "-c", PROBE, how], capture_output=True, text=True,
                         check=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def test_same_library_files_without_the_search():
    direct, ours = _probe("weasyprint"), _probe("rcdoc")
    assert ours["maps"] == direct["maps"]
    assert any("libpango-1.0.so" in m for m in ours["maps"])
    # weasyprint's own import searched with ldconfig (and gcc, ld) for names it
    # could not open; through rcdoc.note.renderer_libs nothing is started.
    assert any("ldconfig" in s for s in direct["started"])
    assert ours["started"] == [] and ours["restored"] is True
