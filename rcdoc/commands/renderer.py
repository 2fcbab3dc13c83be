"""The PDF renderer's system libraries: is each one there, and if not, which package?

weasyprint loads Pango (and GLib, HarfBuzz, Fontconfig) with dlopen when it is
imported and raises OSError, after printing a banner on stdout, when one is
missing; with no font at all it writes a note without text. ``rcdoc build``
calls ``require_renderer`` before any work, so a fresh machine gets one line
naming the library and the Debian package that provides it (a ProjectError:
exit status 2), not a traceback. ``rcdoc check`` and ``diff`` never call it and
never import the renderer, so they work without these libraries.
"""

from __future__ import annotations

import contextlib
import io

from rcdoc.errors import ProjectError

# The file name weasyprint asks dlopen for first (it is quoted in the OSError),
# the library a person knows it by, and the Debian (and Ubuntu) package.
# Most specific names first: "pangoft2" before "pango".
LIBRARIES = (
    ("harfbuzz-subset", "HarfBuzz's font subsetter", "libharfbuzz-subset0"),
    ("pangoft2", "Pango's FreeType back end (PangoFT2)", "libpangoft2-1.0-0"),
    ("pango", "Pango", "libpango-1.0-0"),
    ("gobject", "GLib's GObject", "libglib2.0-0"),
    ("harfbuzz", "HarfBuzz", "libharfbuzz0b"),
    ("fontconfig", "Fontconfig", "libfontconfig1"),
)
FONT_PACKAGE = "fonts-dejavu-core"


def missing_library(message: str) -> tuple[str, str] | None:
    """(library, Debian package) named in a dlopen failure's message, or None."""
    # cffi's message starts "cannot load library 'NAME': ..."; the rest may
    # quote other names (the loader's own wording), so the quoted name decides.
    head = message.split(":", 1)[0].lower()
    for key, library, package in LIBRARIES:
        if key in head:
            return library, package
    return None


def library_message(exc: OSError) -> str:
    """The one line for a renderer that could not load a system library."""
    found = missing_library(str(exc))
    if found is None:
        return (f"the PDF renderer could not load a system library ({str(exc).splitlines()[0]}); "
                "on Debian or Ubuntu: apt-get install libpango-1.0-0 libpangoft2-1.0-0 "
                f"{FONT_PACKAGE}")
    library, package = found
    return (f"the PDF renderer needs {library}, which is not installed; "
            f"on Debian or Ubuntu: apt-get install {package}")


def require_renderer() -> list[str]:
    """Load the renderer, or raise a one-line ProjectError naming what is missing.

    Returns notices (one line each) about optional libraries that are missing:
    without HarfBuzz's subsetter the note is still written, only more slowly.
    """
    try:
        # weasyprint prints its installation banner on stdout before raising:
        # stdout carries results, and rcdoc says it in one line instead.
        with contextlib.redirect_stdout(io.StringIO()):
            import rcdoc.note.report  # noqa: F401 - the note layer's import of weasyprint
    except OSError as exc:
        raise ProjectError(library_message(exc)) from None
    except ImportError as exc:
        if not (exc.name or "").startswith("weasyprint"):
            raise
        raise ProjectError("the PDF renderer (the weasyprint package) is not installed; "
                           "python3 -m pip install weasyprint") from None
    from weasyprint.text import ffi
    if _font_count(ffi) == 0:
        raise ProjectError("the PDF renderer finds no font; on Debian or Ubuntu: "
                           f"apt-get install {FONT_PACKAGE}")
    notices = []
    if getattr(ffi, "harfbuzz_subset", True) is None:
        library, package = missing_library("harfbuzz-subset")
        notices.append(f"{library} is not installed, so the note's fonts are subset more "
                       f"slowly; on Debian or Ubuntu: apt-get install {package}")
    return notices


def _font_count(ffi) -> int:
    """How many fonts Fontconfig finds (with the user's Fontconfig settings)."""
    config = ffi.fontconfig.FcInitLoadConfigAndFonts()
    if config == ffi.ffi.NULL:
        return 0
    try:
        fonts = ffi.fontconfig.FcConfigGetFonts(config, ffi.fontconfig.FcSetSystem)
        return 0 if fonts == ffi.ffi.NULL else int(fonts.nfont)
    finally:
        ffi.fontconfig.FcConfigDestroy(config)
