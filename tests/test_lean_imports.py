"""rcdoc.note.lean_imports leaves undone at import what the note never uses; each step
must give what the library's own import gives.

Reference for every check: the library itself, imported as it ships (with
``lean_imports.install`` made a no-op before anything is imported), in a fresh
process beside a fresh process with the steps in place; the two print the same
values, and the same bytes for the note.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parent.parent
EXAMPLE = REPO / "projects" / "greenhouse-controller.toml"

# Prepended to every script: "plain" turns the steps off before any import.
HEAD = ("import sys\n"
        "import rcdoc.note.lean_imports as lean\n"
        "if sys.argv[1] == 'plain':\n"
        "    lean.install = lambda: None\n")


def _env() -> dict:
    env = {k: v for k, v in os.environ.items() if k != "SOURCE_DATE_EPOCH"}
    env["PYTHONPATH"] = str(REPO)
    env["PYTHONHASHSEED"] = "7"
    return env


def _run(script: str, mode: str) -> subprocess.CompletedProcess:
    proc = subprocess.run([sys.executable, "-c", HEAD + script, mode], capture_output=True,
                          text=True, env=_env(), cwd=REPO, timeout=600)
    assert proc.returncode == 0, proc.stderr
    return proc


def _both(script: str) -> tuple[str, str]:
    lean, plain = _run(script, "lean"), _run(script, "plain")
    # The same messages (fontTools' notes), and no warning of the steps' own.
    assert lean.stderr == plain.stderr and "Warning" not in lean.stderr
    return lean.stdout, plain.stdout


# weasyprint's own HTML class (its user-agent sheets), laid out, not written: the
# boxes' places and sizes, list markers numbered with the UA's counter styles
# (armenian, lower-roman, disc), a form control (the forms sheet) and presentational
# hints (the hints sheet: width, align, bgcolor).
UA_DOCUMENT = r'''
import rcdoc.note.renderer_libs
import logging
import weasyprint, weasyprint.html as ua
class Printed(logging.Handler):   # weasyprint's messages (its logger has a NullHandler)
    def emit(self, record):
        print("log", record.getMessage())
logging.getLogger("weasyprint").addHandler(Printed())
print("deferred", type(ua.UA_STYLESHEET) is not weasyprint.CSS)
print(sorted((k, repr(v)) for k, v in ua.UA_COUNTER_STYLE.items()))
html = """<html><body><h1>Title</h1><p>Text <b>bold</b> <i>it</i></p>
<ol style="list-style-type: armenian"><li>one</li><li>two</li></ol>
<ol style="list-style-type: lower-roman" start="4"><li>four</li></ol>
<ul><li>disc</li></ul><table width="50%" bgcolor="#eeeeee"><tr><td align="right">1</td>
<td>2</td></tr></table><form><input type="text" value="v"><select><option>a</option>
</select></form><pre>pre  text</pre><hr></body></html>"""
def walk(box, depth=0):
    text = getattr(box, "text", "")
    print(depth, type(box).__name__, box.element_tag, round(box.position_x, 3),
          round(box.position_y, 3), round(box.width, 3), round(box.height, 3), text,
          box.style["display"], box.style["list_style_type"], box.style["background_color"])
    for child in getattr(box, "children", []):
        walk(child, depth + 1)
for hints in (False, True):
    doc = weasyprint.HTML(string=html).render(presentational_hints=hints, pdf_forms=True)
    for page in doc.pages:
        walk(page._page_box)
print("deferred after", type(ua.UA_STYLESHEET) is not weasyprint.CSS)
'''


def test_weasyprint_sheets_made_on_first_use_lay_out_the_same():
    lean, plain = _both(UA_DOCUMENT)
    assert lean.splitlines()[0] == "deferred True" and plain.splitlines()[0] == "deferred False"
    # The counter styles (parsed at import on both sides) and every box, with the
    # three sheets in use, are the same, and so are weasyprint's messages (none: the
    # counter styles parsed again once warned of "disc" and "decimal"); afterwards
    # the sheet is weasyprint's CSS.
    assert lean.splitlines()[1:] == plain.splitlines()[1:]
    assert "log " not in lean
    assert lean.count("\n") > 60 and "'armenian'" in lean and lean.endswith("after False\n")


FONT_SUBSET = r'''
import hashlib, io, os
os.environ["SOURCE_DATE_EPOCH"] = "1700000000"    # fontTools stamps head.modified
import rcdoc.note.renderer_libs
print(type(sys.modules["fontTools.subset"]).__name__)
from fontTools import subset
from fontTools.ttLib import TTFont
from rcdoc.note.schematic import _font_file
font = TTFont(_font_file())
options = subset.Options()
subsetter = subset.Subsetter(options)
subsetter.populate(text="4.7 kΩ ±10 % µF")
subsetter.subset(font)
out = io.BytesIO()
font.save(out)
print(hashlib.sha256(out.getvalue()).hexdigest(), len(out.getvalue()))
print(sorted(n for n in dir(subset) if not n.startswith("__")))
'''


def test_font_subsetter_loaded_on_first_use_subsets_the_same():
    lean, plain = _both(FONT_SUBSET)
    assert lean.splitlines()[0] == "_LazyModule" and plain.splitlines()[0] == "module"
    # A subset of DejaVu Sans through fontTools' own Subsetter: the same bytes, and
    # the module, once loaded, has the same names.
    assert lean.splitlines()[1:] == plain.splitlines()[1:]
    assert "Subsetter" in lean


GLYPH_LIST = r'''
import rcdoc.note.renderer_libs
import matplotlib.dviread
print(type(sys.modules["fontTools.agl"]).__name__)
# Read as matplotlib's DVI reader reads it.
agl = matplotlib.dviread.fontTools.agl
print(agl.toUnicode("Omega"), agl.toUnicode("uni2126"), agl.toUnicode("mu"), len(agl.AGL2UV))
print(sorted(n for n in dir(agl) if not n.startswith("__")))
import fontTools.agl
print(fontTools.agl is agl, sys.modules["fontTools.agl"] is agl)
'''


def test_glyph_list_loaded_on_first_use_reads_the_same():
    lean, plain = _both(GLYPH_LIST)
    # matplotlib's DVI reader imports it; its table is read on the first look-up.
    assert lean.splitlines()[0] == "_LazyModule" and plain.splitlines()[0] == "module"
    assert lean.splitlines()[1:] == plain.splitlines()[1:]
    assert lean.splitlines()[1].split()[:2] == ["\u2126", "\u2126"]   # both the ohm sign
    assert lean.splitlines()[-1] == "True True"


WOFF2 = r'''
import hashlib, io, os
os.environ["SOURCE_DATE_EPOCH"] = "1700000000"    # fontTools stamps head.modified
import rcdoc.note.renderer_libs
import weasyprint.text.fonts as text_fonts
print(type(text_fonts.woff2).__name__, "fontTools.ttLib.tables._g_l_y_f" in sys.modules)
from fontTools.ttLib import TTFont
from rcdoc.note.schematic import _font_file
font = TTFont(_font_file())
font.flavor = "woff2"
packed = io.BytesIO()
font.save(packed)
out = io.BytesIO()
text_fonts.woff2.decompress(io.BytesIO(packed.getvalue()), out)
print(hashlib.sha256(out.getvalue()).hexdigest(), len(out.getvalue()))
print(sorted(n for n in dir(text_fonts.woff2) if not n.startswith("__")))
'''


def test_woff2_module_loaded_on_first_use_decompresses_the_same():
    lean, plain = _both(WOFF2)
    # Not loaded (nor the glyph tables it brings) until a WOFF2 font is read;
    # then fontTools' own round trip of DejaVu Sans gives the same bytes.
    assert lean.splitlines()[0] == "_LazyModule False"
    assert plain.splitlines()[0] == "module True"
    assert lean.splitlines()[1:] == plain.splitlines()[1:]
    assert "decompress" in lean


# A variable font made with fontTools' own FontBuilder (one glyph, a weight axis,
# one delta set), instanced through the name weasyprint's PDF font module holds.
VARIABLE_FONT = r'''
import hashlib, io, os
os.environ["SOURCE_DATE_EPOCH"] = "1700000000"
import rcdoc.note.renderer_libs
import weasyprint.pdf.fonts as pdf_fonts
print("varLib loaded", "fontTools.varLib" in sys.modules)
from fontTools.fontBuilder import FontBuilder
from fontTools.pens.ttGlyphPen import TTGlyphPen
from fontTools.ttLib import TTFont
from fontTools.ttLib.tables.TupleVariation import TupleVariation
def box(w, h):
    pen = TTGlyphPen(None)
    pen.moveTo((0, 0)); pen.lineTo((0, h)); pen.lineTo((w, h)); pen.lineTo((w, 0))
    pen.closePath()
    return pen.glyph()
fb = FontBuilder(1000, isTTF=True)
fb.setupGlyphOrder([".notdef", "A"])
fb.setupCharacterMap({65: "A"})
fb.setupGlyf({".notdef": box(500, 700), "A": box(600, 700)})
fb.setupHorizontalMetrics({".notdef": (500, 0), "A": (600, 0)})
fb.setupHorizontalHeader(ascent=800, descent=-200)
fb.setupNameTable({"familyName": "Axis Test", "styleName": "Regular"})
fb.setupOS2()
fb.setupPost()
fb.setupFvar([("wght", 100, 400, 900, "Weight")], [])
fb.setupGvar({"A": [TupleVariation({"wght": (0, 1.0, 1.0)},
                                   [(0, 0), (0, 0), (200, 0), (200, 0)] + [(0, 0)] * 4)]})
buf = io.BytesIO()
fb.save(buf)
for weight in (400, 650, 900):
    font = TTFont(io.BytesIO(buf.getvalue()))
    static = pdf_fonts.instantiateVariableFont(font, {"wght": weight}, static=True)
    out = io.BytesIO()
    static.save(out)
    print(weight, "fvar" in static, max(x for x, _ in static["glyf"]["A"].coordinates), hashlib.sha256(out.getvalue()).hexdigest())
'''


def test_variable_font_instancer_imported_on_first_call_gives_the_same_font():
    lean, plain = _both(VARIABLE_FONT)
    assert lean.splitlines()[0] == "varLib loaded False"
    assert plain.splitlines()[0] == "varLib loaded True"
    # fontTools' instancer through weasyprint's name for it: the same static fonts
    # (the glyph 200 units wider at full weight, as the delta set says).
    assert lean.splitlines()[1:] == plain.splitlines()[1:]
    assert "400 False 600 " in lean and "900 False 800 " in lean


CHART = r'''
import hashlib, io
import rcdoc.note.renderer_libs
from matplotlib import projections
from matplotlib.figure import Figure
print(sorted(projections.get_projection_names()))
print("mplot3d" in " ".join(sys.modules))
fig = Figure(figsize=(3, 2))
ax = fig.add_subplot(projection="polar")
ax.plot([0, 1, 2], [1, 2, 1])
ax2 = fig.add_axes((0.6, 0.6, 0.3, 0.3))
ax2.semilogx([1, 10, 100], [3, 2, 1])
buf = io.BytesIO()
fig.savefig(buf, format="png", dpi=100)
print(hashlib.sha256(buf.getvalue()).hexdigest(), len(buf.getvalue()))
'''


def test_matplotlib_without_its_3d_toolkit_draws_the_same():
    lean, plain = _both(CHART)
    lean_names, plain_names = (eval(s.splitlines()[0]) for s in (lean, plain))
    # Only the 3D projection is missing (the note draws none), without a warning
    # (matplotlib's 'Unable to import Axes3D': _both), and the toolkit was not imported.
    assert set(plain_names) - set(lean_names) == {"3d"} and "polar" in lean_names
    assert lean.splitlines()[1] == "False" and plain.splitlines()[1] == "True"
    assert lean.splitlines()[2:] == plain.splitlines()[2:]      # the PNG's bytes


# Every artist class's set() (docstring and signature) as matplotlib wrote it while
# the classes were made, the property tables (kwdoc) asked for afterwards, and the
# docstrings that quote them (Axes.plot, Figure.add_subplot, ...).
ARTIST_DOCS = r'''
import rcdoc.note.renderer_libs
import matplotlib.figure, matplotlib.backends.backend_agg, matplotlib.backends.backend_svg
import matplotlib.pyplot, matplotlib.axes
from matplotlib import artist
def subclasses(c):
    for s in c.__subclasses__():
        yield s
        yield from subclasses(s)
# (the 3D toolkit's classes left out: test_matplotlib_without_its_3d_toolkit...)
classes = sorted({c for c in subclasses(artist.Artist) if c.__module__.startswith("matplotlib.")}
                 | {artist.Artist}, key=lambda c: (c.__module__, c.__qualname__))
print(len(classes))
for c in classes:
    print(c.__module__, c.__qualname__, c.set.__signature__)
    print(c.set.__doc__)
    print(artist.kwdoc(c))
for f in (matplotlib.axes.Axes.plot, matplotlib.axes.Axes.text, matplotlib.figure.Figure.add_subplot):
    print(f.__doc__)
'''


def test_artist_docstrings_written_with_kept_answers_are_the_same():
    lean, plain = _both(ARTIST_DOCS)
    assert int(lean.splitlines()[0]) > 80 and "linewidth or linewidths" in lean
    assert lean == plain


SCHEMATIC = r'''
import rcdoc.note.renderer_libs
from rcdoc.kinds.recipes import *
from rcdoc.note.schematic import render_svg
r = ladder([("series", "R", Label("R14", "4.7 kΩ")), ("shunt", "C", Label("C9", "10 µF"))])
svg = render_svg(r)
import ziamath, ziamath.zmath as zm
from ziamath.mathfont import MathFont
print("pyplot", "matplotlib.pyplot" in sys.modules, "mpl backend",
      "schemdraw.backends.mpl" in sys.modules)
print("default font read", type(zm.loadedfonts["default"]) is MathFont,
      "escapes", "ziamath.escapes" in sys.modules, "tex", "latex2mathml" in sys.modules)
print(svg)
print(ziamath.Math.fromlatex(r"f_c = \frac{1}{2 \pi R C}").svg())
print(ziamath.Text("gain $A_v$ at 1 kHz", size=12).svg())
print(ziamath.Math.fromlatex(r"x \le 3 \cdot 10^{-3} \pm \Omega").svg())
# The operator names ziamath declares as it starts, declared as its LaTeX reader loads.
print(ziamath.Math.fromlatex(r"\tg x + \th y").svg())
import latex2mathml.commands
print(latex2mathml.commands.FUNCTIONS)
import ziamath.escapes
print(ziamath.escapes.unescape("<mn>-1</mn><mo>&times;</mo><mi>&alpha;</mi>"))
print("default font read", type(zm.loadedfonts["default"]) is MathFont)
'''


def test_schemdraw_and_ziamath_with_parts_left_out_draw_the_same():
    lean, plain = _both(SCHEMATIC)
    # schemdraw's matplotlib backend (and pyplot) left out; ziamath's math font,
    # escapes and LaTeX reader loaded only when math is drawn: the schematic, formulas (escapes and
    # signs among them) and text with math alike.
    assert lean.splitlines()[:2] == ["pyplot False mpl backend False",
                                     "default font read False escapes False tex False"]
    assert plain.splitlines()[:2] == ["pyplot True mpl backend True",
                                      "default font read True escapes True tex True"]
    assert lean.splitlines()[2:] == plain.splitlines()[2:]
    assert lean.count("<path") > 10 and lean.endswith("default font read True\n")


@pytest.mark.slow
def test_example_note_has_the_same_bytes(tmp_path):
    # The whole example board, built in fresh processes with two workers (so the
    # fork server's preload too); "plain" turns the steps off in every process of
    # the build through a sitecustomize module on the path.
    plain_site = tmp_path / "plain-site"
    plain_site.mkdir()
    (plain_site / "sitecustomize.py").write_text(
        "import rcdoc.note.lean_imports as lean\nlean.install = lambda: None\n")
    outs = {}
    for mode in ("lean", "plain"):
        env = _env()
        if mode == "plain":
            env["PYTHONPATH"] = f"{plain_site}{os.pathsep}{REPO}"
        out = tmp_path / mode
        proc = subprocess.run(
            [sys.executable, "-m", "rcdoc", "build", str(EXAMPLE), "-o", str(out), "--quiet",
             "--jobs", "2", "--samples", "200"],
            capture_output=True, text=True, env=env, cwd=REPO, timeout=900)
        assert proc.returncode in (0, 1), proc.stderr
        outs[mode] = out
    name = EXAMPLE.stem
    for suffix in (".pdf", ".json"):
        lean, plain = ((outs[m] / (name + suffix)).read_bytes() for m in ("lean", "plain"))
        assert len(lean) > 10_000 and lean == plain


COMPILED_FFI = r'''
import rcdoc.note.renderer_libs
import weasyprint, weasyprint.text.ffi as F
print(type(F.ffi).__module__, type(F.ffi).__name__)
pdf = weasyprint.HTML(string="<p>Ω <b>bold</b></p><table><tr><td>1</td></tr></table>").write_pdf()
print("pdf", len(pdf) > 1000, "pycparser" in sys.modules)
'''


def _compiled_ffi_applies() -> bool:
    """Whether lean_imports hands weasyprint the compiled FFI here (the pinned
    weasyprint and cffi; any other version imports as it ships)."""
    from rcdoc.note import lean_imports
    return (lean_imports._version_is(*lean_imports._WEASYPRINT)
            and lean_imports._version_is(*lean_imports._CFFI))


def test_weasyprint_gets_the_compiled_ffi_and_never_parses_c():
    # With the step, weasyprint's FFI is cffi's compiled (out-of-line) one and pycparser
    # is never imported, not even for the type strings a document's layout names; the
    # same document's bytes are compared with weasyprint's own import in
    # test_example_note_has_the_same_bytes.
    if not _compiled_ffi_applies():
        pytest.skip("another weasyprint or cffi: the compiled FFI is not used")
    lean, plain = _run(COMPILED_FFI, "lean").stdout, _run(COMPILED_FFI, "plain").stdout
    assert lean.splitlines() == ["_cffi_backend FFI", "pdf True False"]
    assert plain.splitlines() == ["cffi.api FFI", "pdf True True"]


def test_compiled_ffi_is_the_one_the_tool_writes(tmp_path):
    # rcdoc/note/_weasyprint_ffi.py is what tools/weasyprint_ffi.py makes from the
    # installed weasyprint's text/ffi.py with the installed cffi (both pinned by
    # lean_imports; elsewhere the step stays off and this has nothing to compare).
    import importlib

    from rcdoc.note import lean_imports
    if not _compiled_ffi_applies():
        pytest.skip("another weasyprint or cffi: the compiled FFI is not used")
    sys.path.insert(0, str(REPO / "tools"))
    try:
        tool = importlib.import_module("weasyprint_ffi")
    finally:
        sys.path.remove(str(REPO / "tools"))
    digest = tool.generate(tmp_path / "fresh.py")
    assert digest == lean_imports._FFI_SOURCE
    assert (tmp_path / "fresh.py").read_bytes() == tool.TARGET.read_bytes()


def test_compiled_ffi_keeps_its_libraries_loaded():
    # A library the compiled FFI opened is unmapped when its Lib object is freed; at the
    # interpreter's exit that came before objects whose destructors live in it (the
    # suite's process ended in a segmentation fault in its last garbage collection).
    # Each is opened with RTLD_NODELETE beside weasyprint's own flags (dlopen(3)).
    if not _compiled_ffi_applies():
        pytest.skip("another weasyprint or cffi: the compiled FFI is not used")
    from rcdoc.note import lean_imports
    from rcdoc.note._weasyprint_ffi import ffi

    class Recording:
        RTLD_NODELETE = ffi.RTLD_NODELETE

        def dlopen(self, name, flags):
            return name, flags

    assert lean_imports._open_library(Recording(), "libpango-1.0.so.0", ffi.RTLD_NOW) == (
        "libpango-1.0.so.0", ffi.RTLD_NOW | ffi.RTLD_NODELETE)
    assert ffi.RTLD_NODELETE and not ffi.RTLD_NOW & ffi.RTLD_NODELETE
