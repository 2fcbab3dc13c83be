"""Start-up CPU: work the renderer's libraries do when imported that a build never uses,
left undone or done on first use.

What it is for: every build process imports weasyprint and matplotlib (the command
itself, and the fork server its workers start from, which also imports schemdraw
and ziamath): about 2 s of CPU each before any page. Measured with
bench/imports.py, some of it is for things the note never asks for:

- weasyprint 70 parses its user-agent sheets when ``weasyprint.html`` is imported
  (the HTML sheet, the forms sheet, the presentational hints sheet: 0.1 s). The
  note's documents use the trimmed sheet of ``note_html`` instead and no
  presentational hints. Here the three are made on their first use (any attribute
  read), with the same arguments; the HTML sheet's ``@counter-style`` rules are
  still parsed at import into the shared counter styles that weasyprint hands to
  every document (``HTML._ua_counter_style``, read before any sheet).
- weasyprint 70 imports ``fontTools.subset`` for the font subsetting it does
  only where HarfBuzz's subsetter is missing, and fontTools' variable font
  instancer (with fontTools.varLib and lxml) for variable fonts, which the note
  does not use: 0.15 s; its text module imports fontTools' WOFF2 reader (with
  the glyph tables: 0.02 s) for ``@font-face`` fonts in that format. Here the
  subsetter and the WOFF2 reader are loaded by ``importlib.util.LazyLoader``
  (their code runs on their first attribute read; set up as weasyprint loads,
  since setting them up imports fontTools.ttLib, which a process that only
  draws never needs), and
  ``instantiateVariableFont`` is a function that imports the instancer on its
  first call and hands it the same arguments.
- matplotlib 3.11 imports its 3D toolkit (``mpl_toolkits.mplot3d``) with its
  projections: the note draws no 3D axes. Here that import fails quietly while
  ``matplotlib.projections`` is imported (matplotlib expects it may: the 3D
  projection is then not registered; its warning is not shown).
- matplotlib 3.11's DVI reader (for TeX's output, which the note never gives
  matplotlib) imports fontTools' Adobe glyph list, a table of 4500 glyph names
  read as it loads (7 ms of each drawing process's start). Here the list is
  loaded by LazyLoader once the reader has loaded (the reader's ``import`` meets
  a stand-in: an import statement reads a module's ``__spec__``, which would
  load a lazy one at once).
- matplotlib 3.11 writes the docstring of each artist class's ``set`` as the
  class is made: the accepted values of every setter, read from the setter's
  docstring (``ArtistInspector.get_valid_values``), again for every class that
  inherits it (8000 reads), and reads the class's aliases and setters twice
  (0.25 s in all). Here each answer is kept per setter function and docstring,
  and the second reading of a class takes the first one's answers: the same
  signatures and docstrings.
- schemdraw 0.23 imports its optional matplotlib backend, and with it pyplot;
  the note draws schematics with its SVG backend only. Here that backend is
  missing while schemdraw is imported (schemdraw expects it may; its default
  canvas is then SVG, which rcdoc.note.schematic asks for anyway).
- weasyprint 70 declares the C functions and types of Pango, HarfBuzz,
  fontconfig and GObject with cffi when ``weasyprint.text.ffi`` is imported:
  pycparser (imported for it) parses 16 kB of C, and parses again each type
  string weasyprint's code names on first use (``ffi.new("PangoRectangle *")``):
  0.04 s at import and 0.06 s in a worker's first part. Here, where that file
  is byte for byte the one of weasyprint 70.0 and cffi is 2.0.0, weasyprint gets
  the same declarations compiled ahead by cffi (its out-of-line ABI mode:
  ``rcdoc/note/_weasyprint_ffi.py``, written by tools/weasyprint_ffi.py), whose
  types cffi reads from its own tables without pycparser; the libraries are
  opened by the same names and flags.
- ziamath 0.13 reads its default math font (STIX Two Math) and compiles its
  table of MathML escapes (2000 names in one regular expression) when
  imported: 0.1 s. Schematic labels are plain text, outlined with a text font
  through ziafont. Here the font is read on its first use (a math expression),
  and ``unescape`` is a function that imports the escapes on its first call.
  It also imports its LaTeX reader (``ziamath.tex``, with latex2mathml, which
  reads its own distribution's metadata and, through xml.sax.saxutils, loads
  urllib.request, http.client and ssl: 0.02 s of the fork server's preload,
  on a one-value rebuild's path to the stage's drawing). Here ``tex2mml`` is
  a function that imports it on its first call, and the operator names
  ziamath declares as it starts are declared as the reader loads.

What it must not do: change a value or a byte of the note. Each step applies
only to the library version it was written for (read from the installed
distribution's folder name, without importing the library); for any other
version, or when the module was imported before ``install``, the library
imports as it would. tests/test_lean_imports.py compares each with the
library's own import, in fresh processes: documents laid out with weasyprint's
own sheets, fontTools' subsets and instances, every artist's docstrings, a
chart's PNG, schematics and formulas in SVG, and the example note's PDF bytes.
"""

from __future__ import annotations

import contextlib
import importlib.abc
import importlib.machinery
import importlib.util
import sys
import types
import warnings

__all__ = ["install"]

# The versions each step was written for (and checked against).
_WEASYPRINT = ("weasyprint", "70.0")
_MATPLOTLIB = ("matplotlib", "3.11.2")
_SCHEMDRAW = ("schemdraw", "0.23")
_ZIAMATH = ("ziamath", "0.13")
_CFFI = ("cffi", "2.0.0")
# weasyprint 70.0's text/ffi.py (sha256), from which rcdoc/note/_weasyprint_ffi.py was made.
_FFI_SOURCE = "530e83118f7841d2791678ece23d5e43a7a24150ee1ea64bb4ba70c70b3eb5da"

_DONE: list[bool] = []          # install has run in this process


def install() -> None:
    """Put each step in place where its library is the pinned version and the
    module it changes is not imported yet. Idempotent; call before importing
    weasyprint, matplotlib or schemdraw."""
    if _DONE:
        return
    _DONE.append(True)
    if _version_is(*_WEASYPRINT):
        _around("weasyprint.html", _deferred_sheets)
        # As weasyprint loads: setting them up imports fontTools.ttLib (8 ms), which
        # a process that only draws (the pool's fork server of a build) never needs.
        _around("weasyprint", _font_tools_on_first_use)
        _around("weasyprint.pdf.fonts", _deferred_instancer)
        if _version_is(*_CFFI):
            _around("weasyprint.text.ffi", _prebuilt_ffi)
    if _version_is(*_MATPLOTLIB):
        _around("matplotlib.projections", _without_3d)
        _around("matplotlib.dviread", _glyph_list_on_first_use)
        _around("matplotlib.artist", _artist_docs_kept)
    if _version_is(*_SCHEMDRAW):
        _around("schemdraw", _without_mpl_backend)
    if _version_is(*_ZIAMATH):
        _around("ziamath", _deferred_tex)
        _around("ziamath.tex", _declared_operators)
        _around("ziamath.zmath", _deferred_math_font)


def _version_is(name: str, version: str) -> bool:
    """Whether ``name`` is installed as ``version`` (its one ``.dist-info`` folder
    beside the package, rcdoc.versions), read without importing it."""
    from rcdoc.versions import folder_version
    return folder_version(name) == version


# ---- running code around one module's import ------------------------------------

class _Around(importlib.abc.MetaPathFinder):
    """Finds ``name`` as the path finder does, once, and runs ``around(module)`` (a
    context manager) around its execution."""

    def __init__(self, name: str, around):
        self.name, self.around = name, around

    def find_spec(self, fullname, path=None, target=None):
        if fullname != self.name:
            return None
        with contextlib.suppress(ValueError):
            sys.meta_path.remove(self)
        spec = importlib.machinery.PathFinder.find_spec(fullname, path, target)
        if spec is None or spec.loader is None:
            return spec
        spec.loader = _AroundLoader(spec.loader, self.around)
        return spec


class _AroundLoader(importlib.abc.Loader):
    def __init__(self, real, around):
        self.real, self.around = real, around

    def create_module(self, spec):
        return self.real.create_module(spec)

    def exec_module(self, module):
        # The module keeps the path finder's own loader (tracebacks, source).
        module.__loader__ = module.__spec__.loader = self.real
        with self.around(module):
            self.real.exec_module(module)


def _around(name: str, around) -> None:
    if name not in sys.modules:
        sys.meta_path.insert(0, _Around(name, around))


def _lazy(name: str) -> None:
    """``name`` loaded by LazyLoader: its code runs on its first attribute read
    (the recipe of the importlib documentation)."""
    if name in sys.modules:
        return
    spec = importlib.util.find_spec(name)       # imports the parent package
    if spec is None or spec.loader is None:
        return
    spec.loader = importlib.util.LazyLoader(spec.loader)
    module = importlib.util.module_from_spec(spec)
    sys.modules[name] = module
    spec.loader.exec_module(module)
    parent, _, child = name.rpartition(".")
    setattr(sys.modules[parent], child, module)


@contextlib.contextmanager
def _font_tools_on_first_use(module):
    """While weasyprint loads: fontTools' subsetter and WOFF2 reader loaded by
    LazyLoader (their code runs on their first attribute read)."""
    _lazy("fontTools.subset")
    _lazy("fontTools.ttLib.woff2")
    yield


def _deferred(cls):
    """A subclass of ``cls`` whose instances are made (``cls.__init__`` with the same
    arguments) on their first read of an attribute they do not have yet; they are
    then plain ``cls`` instances."""

    class Deferred(cls):
        def __init__(self, *args, **kwargs):
            self.__dict__["_rcdoc_deferred"] = (args, kwargs)

        def __getattr__(self, name):
            pending = self.__dict__.pop("_rcdoc_deferred", None)
            if pending is None:
                raise AttributeError(name)
            self.__class__ = cls
            cls.__init__(self, *pending[0], **pending[1])
            return getattr(self, name)

    Deferred.__name__ = Deferred.__qualname__ = cls.__name__
    Deferred.__module__ = cls.__module__
    return Deferred


@contextlib.contextmanager
def _stand_in(name: str, **attrs):
    """While the block runs, module ``name`` is a stand-in holding ``attrs`` (each
    a function importing the real one on its first call); nothing where the real
    module is imported already."""
    if name in sys.modules:
        yield
        return
    stand_in = types.ModuleType(name, "rcdoc.note.lean_imports: imported on first use")
    for key, value in attrs.items():
        setattr(stand_in, key, value)
    sys.modules[name] = stand_in
    try:
        yield
    finally:
        if sys.modules.get(name) is stand_in:
            del sys.modules[name]


@contextlib.contextmanager
def _absent(name: str):
    """While the block runs, importing ``name`` raises ImportError (its entry in
    sys.modules is None, as the import system documents); nothing where it is
    imported already."""
    if name in sys.modules:
        yield
        return
    sys.modules[name] = None
    try:
        yield
    finally:
        if sys.modules.get(name, 0) is None:
            del sys.modules[name]


# ---- the steps ------------------------------------------------------------------

@contextlib.contextmanager
def _deferred_sheets(module):
    """weasyprint.html makes its sheets with ``CSS(...)`` (weasyprint's class, read
    from the package as the module starts): deferred sheets while it runs."""
    package = sys.modules["weasyprint"]
    real = package.CSS
    deferred = _deferred(real)

    def sheet(*args, **kwargs):
        counters, text = kwargs.get("counter_style"), kwargs.get("string")
        if counters is not None and isinstance(text, str):
            # The counter styles go into the shared dict now: documents copy it.
            lines = text.splitlines()
            rules = [line for line in lines if line.lstrip().startswith("@counter-style")]
            if rules:
                real(string="\n".join(rules), counter_style=counters)
                # Not again when the sheet is read: weasyprint would warn that
                # "disc" and "decimal" are defined already (and keep the first).
                kwargs["string"] = "\n".join(
                    "" if line.lstrip().startswith("@counter-style") else line
                    for line in lines)
        return deferred(*args, **kwargs)

    package.CSS = sheet
    try:
        yield
    finally:
        package.CSS = real
        if module.__dict__.get("CSS") is sheet:
            module.CSS = real


def _open_library(ffi, name, flags):
    """``ffi.dlopen(name, flags)``: one place that opens weasyprint's libraries
    through the compiled FFI (tests/test_system_libs.py makes it fail as a
    missing library does). RTLD_NODELETE where the system has it: a library the
    compiled FFI opened is closed when its Lib object is freed, which at the
    interpreter's exit may come before objects whose destructors are in that
    library: the test suite's process ended in a segmentation fault in its last
    garbage collection (none with the libraries kept, none with weasyprint's own
    FFI). weasyprint's libraries stay loaded for the life of the process, as
    they do anyway."""
    return ffi.dlopen(name, flags | getattr(ffi, "RTLD_NODELETE", 0))


@contextlib.contextmanager
def _prebuilt_ffi(module):
    """weasyprint.text.ffi makes ``ffi = cffi.FFI()``, declares its C with
    ``ffi.cdef(...)`` and opens each library with ``ffi.dlopen``. While it runs,
    ``cffi.FFI()`` gives a stand-in: its ``cdef`` declares nothing (the compiled
    FFI holds those declarations: the file is checked to be the one it was made
    from), ``dlopen`` and the rest are the compiled FFI's; afterwards the
    module's ``ffi`` is the compiled FFI itself, which every other module of
    weasyprint imports from it."""
    import hashlib
    try:
        with open(module.__spec__.origin, "rb") as fh:
            same = hashlib.sha256(fh.read()).hexdigest() == _FFI_SOURCE
    except (OSError, TypeError):
        same = False
    if not same:
        yield
        return
    import cffi

    from rcdoc.note._weasyprint_ffi import ffi as compiled

    class StandIn:
        def cdef(self, source, *args, **kwargs):
            """Declared already, in the compiled FFI."""

        def dlopen(self, name, flags=0):
            return _open_library(compiled, name, flags)

        def __getattr__(self, name):
            return getattr(compiled, name)

    real = cffi.FFI
    cffi.FFI = StandIn
    try:
        yield
    finally:
        cffi.FFI = real
    if isinstance(module.__dict__.get("ffi"), StandIn):
        module.ffi = compiled


def _instantiate_variable_font(*args, **kwargs):
    """fontTools.varLib.instancer.instantiateVariableFont, imported on its first call."""
    from fontTools.varLib.instancer import instantiateVariableFont
    return instantiateVariableFont(*args, **kwargs)


@contextlib.contextmanager
def _deferred_instancer(module):
    """weasyprint.pdf.fonts imports ``instantiateVariableFont`` by name from
    fontTools.varLib.instancer: while it runs, that module is a stand-in holding a
    function that imports the real one on its first call."""
    with _stand_in("fontTools.varLib.instancer",
                   instantiateVariableFont=_instantiate_variable_font):
        yield


@contextlib.contextmanager
def _without_3d(module):
    """matplotlib.projections without mpl_toolkits.mplot3d (an ImportError there,
    which matplotlib catches; its warning is not shown)."""
    with _absent("mpl_toolkits.mplot3d"), warnings.catch_warnings():
        warnings.filterwarnings("ignore", message="Unable to import Axes3D")
        yield


@contextlib.contextmanager
def _artist_docs_kept(module):
    """After matplotlib.artist has run: each class's ``set`` signature and
    docstring written with one reading of the class, each setter's docstring
    read once."""
    yield
    _keep_valid_values(module.ArtistInspector)
    _one_reading_per_update(module.Artist, module.ArtistInspector)


def _keep_valid_values(inspector) -> None:
    """``ArtistInspector.get_valid_values`` keeps each answer per setter function
    and docstring (what the answer is read from: the docstring, the first
    parameter's name in the function's code; a ``_kwarg_doc`` is read as is)."""
    real = inspector.get_valid_values
    kept: dict = {}

    def get_valid_values(self, attr):
        func = getattr(self.o, f"set_{attr}", None)
        doc = getattr(func, "__doc__", None)
        if not isinstance(doc, str) or hasattr(func, "_kwarg_doc"):
            return real(self, attr)
        try:
            return kept[func, doc]
        except KeyError:
            answer = kept[func, doc] = real(self, attr)
            return answer
        except TypeError:               # a setter that cannot be a key
            return real(self, attr)

    get_valid_values.__doc__ = real.__doc__
    inspector.get_valid_values = get_valid_values


_READING: list = []     # the answers of the class being written now, if any


def _one_reading_per_update(artist, inspector) -> None:
    """``Artist._update_set_signature_and_docstring`` reads the class's aliases
    and setters twice (once for the signature, once for the docstring), each a
    walk over every name of the class; both readings see the class as it is
    then. Here the second reading takes the first one's answers."""
    update = artist.__dict__["_update_set_signature_and_docstring"].__func__

    def _update_set_signature_and_docstring(cls):
        _READING.append({})
        try:
            update(cls)
        finally:
            _READING.pop()

    _update_set_signature_and_docstring.__doc__ = update.__doc__
    artist._update_set_signature_and_docstring = classmethod(_update_set_signature_and_docstring)
    for name in ("get_aliases", "get_setters"):
        setattr(inspector, name, _read_once(name, getattr(inspector, name)))


def _read_once(name: str, real):
    def read(self):
        if not _READING:
            return real(self)
        key = (name, self.o)
        answers = _READING[-1]
        if key not in answers:
            answers[key] = real(self)
        # A copy each time, as each call of the library's own makes anew: the
        # setters' names (a list), the aliases (a dict of sets of names).
        answer = answers[key]
        if isinstance(answer, dict):
            return {k: set(v) for k, v in answer.items()}
        return list(answer)

    read.__name__, read.__doc__ = real.__name__, real.__doc__
    return read


@contextlib.contextmanager
def _glyph_list_on_first_use(module):
    """matplotlib.dviread imports fontTools.agl and reads it only in a function:
    a stand-in while it loads, then the list itself by LazyLoader (the package's
    attribute, which the reader's functions read, and sys.modules)."""
    with _stand_in("fontTools.agl"):
        yield
    _lazy("fontTools.agl")


@contextlib.contextmanager
def _without_mpl_backend(module):
    """schemdraw without its matplotlib backend (an ImportError, which it catches)."""
    with _absent("schemdraw.backends.mpl"):
        yield


def _unescape(xmlstr):
    """ziamath.escapes.unescape, imported on its first call."""
    from ziamath.escapes import unescape
    return unescape(xmlstr)


# Operator names ziamath declares (declareoperator) before its LaTeX reader is loaded:
# declared, in order, as it loads (_declared_operators).
_OPERATORS: list[str] = []


def _tex2mml(tex, inline=False):
    """ziamath.tex.tex2mml, imported on its first call."""
    from ziamath.tex import tex2mml
    return tex2mml(tex, inline=inline)


def _declareoperator(name):
    """ziamath.tex.declareoperator: kept for the LaTeX reader until it is loaded."""
    real = sys.modules.get("ziamath.tex")
    if real is None or getattr(real, "declareoperator", _declareoperator) is _declareoperator:
        _OPERATORS.append(name)
    else:
        real.declareoperator(name)


@contextlib.contextmanager
def _deferred_tex(module):
    """The ziamath package (and ziamath.zmath as it runs) imports ``tex2mml`` and
    ``declareoperator`` by name from ziamath.tex, and declares ten operator names
    as it starts: a stand-in module holding functions that import the real one on
    the first formula, and keep the declarations for it."""
    with _stand_in("ziamath.tex", tex2mml=_tex2mml, declareoperator=_declareoperator):
        yield


@contextlib.contextmanager
def _declared_operators(module):
    """ziamath.tex loaded for real: the operator names declared before, in order."""
    yield
    while _OPERATORS:
        module.declareoperator(_OPERATORS.pop(0))


@contextlib.contextmanager
def _deferred_math_font(module):
    """ziamath.zmath reads ``MathFont`` from ziamath.mathfont as it starts and
    makes the default font with it: a deferred one while it runs. It imports
    ``unescape`` by name from ziamath.escapes: a stand-in module holding a
    function that imports the real one on its first call."""
    fonts = importlib.import_module("ziamath.mathfont")
    real = fonts.MathFont
    fonts.MathFont = _deferred(real)
    try:
        with _stand_in("ziamath.escapes", unescape=_unescape):
            yield
    finally:
        fonts.MathFont = real
        if module.__dict__.get("MathFont") is not real:
            module.MathFont = real
