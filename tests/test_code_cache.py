"""The compiled code filed for the texts Python compiles for rcdoc at run time
(rcdoc.code_cache): each filed object is the one ``compile`` makes from its text,
the file holds the texts of rcdoc's own data classes and named tuples, and
whatever the file lacks or cannot give is compiled as before.

The reference is Python's own compiler (``compile`` with the file name and mode
``exec`` and ``eval`` use), in a fresh interpreter each time: the data classes
are made as rcdoc's modules load.
"""

from __future__ import annotations

import dataclasses
import importlib.util
import json
import marshal
import os
import subprocess
import sys
import textwrap
import zlib
from pathlib import Path

import pytest

from rcdoc import code_cache

ROOT = Path(__file__).resolve().parent.parent
TOOL = "PYTHONPATH=$PWD python3 tools/code_cache.py"

# Every module of rcdoc imported; then one part of a small note rendered (the
# note's style sheets: cssselect2's selector tests).
LOAD = """
import importlib, pkgutil, rcdoc
def load_all():
    for info in pkgutil.walk_packages(rcdoc.__path__, "rcdoc."):
        if not info.name.endswith("__main__") and ".compiled_templates." not in info.name:
            importlib.import_module(info.name)
def render_one_part():
    from rcdoc.commands.build import load_all
    from rcdoc.note import assemble
    from rcdoc.note.context import method_appendix
    project = load_all(["projects/greenhouse-controller.toml"])[0]
    head = assemble.project_head(project)
    assemble.render_part(assemble.appendix_context(head, method_appendix()), "appendix")
"""


def _run(*pieces: str) -> dict:
    script = "".join(textwrap.dedent(p) for p in pieces)
    proc = subprocess.run([sys.executable, "-c", script], cwd=ROOT,
                          env={**os.environ, "PYTHONPATH": str(ROOT)},
                          capture_output=True, text=True, timeout=600)
    assert proc.returncode == 0, proc.stderr
    return json.loads(proc.stdout.strip().splitlines()[-1])


def _filed_here() -> bool:
    return bool(code_cache._read(code_cache.FILE))


@pytest.mark.slow
def test_each_filed_object_is_what_compile_makes_of_its_text():
    # Source: Python's compiler. Every text handed to the shadows while rcdoc loads
    # and renders a part is compiled again here and compared with the filed object.
    if not _filed_here():
        pytest.skip("the file was made by another Python (or is missing)")
    result = _run("""
        import json, rcdoc, rcdoc.code_cache as cc
        counts = {"hits": 0, "misses": 0, "differ": 0}
        real = cc._filed
        def verifying(mode, source):
            code = real(mode, source)
            if type(source) is str:
                if code is None:
                    counts["misses"] += 1
                else:
                    counts["hits"] += 1
                    counts["differ"] += code != compile(source, "<string>", mode, dont_inherit=True)
            return code
        cc._filed = verifying
    """, LOAD, """
        load_all()
        render_one_part()
        print(json.dumps(counts))
    """)
    assert result["differ"] == 0
    assert result["hits"] > 300, result     # the data classes, named tuples and selectors


def test_the_comparison_tells_code_apart():
    # What the test above relies on: code objects compare by what they run.
    one = compile("def f(a):\n return a + 1", "<string>", "exec")
    assert one == compile("def f(a):\n return a + 1", "<string>", "exec")
    assert one != compile("def f(a):\n return a + 2", "<string>", "exec")
    assert one == marshal.loads(marshal.dumps(one))


@pytest.mark.slow
def test_the_file_holds_rcdocs_own_data_classes_and_named_tuples():
    # The texts of rcdoc's data classes and named tuples, recorded as rcdoc's
    # modules load, are all filed; if not, the file predates a change of fields.
    if not _filed_here():
        pytest.skip("the file was made by another Python (or is missing)")
    result = _run("""
        import builtins, collections, dataclasses, json, sys
        texts = []
        def exec_(source, globals=None, locals=None, /, **kw):
            if type(source) is str and str((globals or {}).get("__name__", "")).startswith("rcdoc"):
                texts.append(("exec", source))
            return builtins.exec(source, globals, locals, **kw)
        def eval_(source, globals=None, locals=None, /):
            caller = sys._getframe(2).f_globals.get("__name__", "")
            if type(source) is str and caller.startswith("rcdoc"):
                texts.append(("eval", source))
            return builtins.eval(source, globals, locals)
        dataclasses.exec, collections.eval = exec_, eval_
    """, LOAD, """
        load_all()
        from rcdoc import code_cache as cc
        table = cc._read(cc.FILE)
        missing = [s[:60] for m, s in texts if cc.key(m, s) not in table]
        print(json.dumps({"texts": len(texts), "missing": missing}))
    """)
    assert result["texts"] > 200
    assert result["missing"] == [], f"run: {TOOL}"


def test_a_file_of_another_python_or_none_is_no_file(tmp_path):
    table = {code_cache.key("eval", "1 + 1"): compile("1 + 1", "<string>", "eval")}
    body = zlib.compress(marshal.dumps(table))
    good = tmp_path / "good.bin"
    good.write_bytes(importlib.util.MAGIC_NUMBER + body)
    assert code_cache._read(good) == table
    written = tmp_path / "written.bin"          # what the tool writes reads back
    written.write_bytes(code_cache.dumps(table))
    assert code_cache._read(written) == table
    other = tmp_path / "other.bin"
    other.write_bytes(b"\x00\x01\r\n" + body)
    assert code_cache._read(other) == {}
    broken = tmp_path / "broken.bin"
    broken.write_bytes(importlib.util.MAGIC_NUMBER + b"not zlib")
    assert code_cache._read(broken) == {}
    assert code_cache._read(tmp_path / "missing.bin") == {}


def test_a_text_not_filed_is_compiled_as_before(monkeypatch):
    monkeypatch.setattr(code_cache, "_TABLE", [{}])
    ns: dict = {}
    code_cache._exec("def f(x):\n return 2 * x", {}, ns)
    assert ns["f"](21) == 42
    assert code_cache._eval("a + 1", {"a": 1}) == 2
    # A data class made now (its text is in no file) works as any other.
    Made = dataclasses.make_dataclass("MadeHereOnly", [("zz_unfiled", int)], frozen=True)
    assert Made(3) == Made(3) and repr(Made(3)) == "MadeHereOnly(zz_unfiled=3)"


def test_a_filed_text_runs_the_filed_object(monkeypatch):
    # The shadow runs what the file gives for a text (here a stand-in that says so).
    marker = compile("result = 'filed'", "<string>", "exec")
    monkeypatch.setattr(code_cache, "_TABLE", [{code_cache.key("exec", "result = 'text'"): marker}])
    ns: dict = {}
    code_cache._exec("result = 'text'", {}, ns)
    assert ns["result"] == "filed"


def test_the_shadows_are_in_place():
    import collections

    assert dataclasses.exec is code_cache._exec
    assert collections.eval is code_cache._eval
    import rcdoc.note.renderer_libs  # noqa: F401 - the renderer, with cssselect2
    assert sys.modules["cssselect2.compiler"].eval is code_cache._eval
