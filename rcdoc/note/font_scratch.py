"""Where weasyprint keeps the fonts of a template's ``@font-face`` rules while a part renders.

What it is for: weasyprint writes each ``@font-face`` font it loads into a
folder of its own for Fontconfig to read, made with tempfile.mkdtemp in the
system's temporary folder, and removes it when the garbage collector ends the
document's font configuration. A build is confined to the package, the
templates, the project folder and the output folder; a template with an
``@font-face`` made it write outside them. ``ProjectFonts`` makes that folder
inside the project folder instead (hidden, ``.rcdoc-fonts-*``), only when a
font is loaded, and ``closed`` removes it as soon as the part is written.
Where the project folder cannot take it (read-only), weasyprint's own place
is used, as before.

The shipped templates load no ``@font-face`` font: their documents share one
font configuration per process (``closed(folder, shared=True)``). A new one
read Fontconfig's configuration and font list again and started Pango with no
font loaded and no glyph shaped, for every part: about a tenth of a stage's
render. Fonts are found by the same configuration, so the same fonts are
used, and each PDF embeds its own subsets: the same bytes (tests/test_font_scratch.py).
Should a shared configuration be handed an ``@font-face`` font after all, it
is retired after that document: no later document could find that font.

What it must not do: change which font is loaded, or leave the folder behind.
"""

from __future__ import annotations

import contextlib
import shutil
import tempfile
from collections.abc import Iterator
from pathlib import Path

from rcdoc.note import renderer_libs  # noqa: F401 - weasyprint, without ctypes' library search
from weasyprint.text.fonts import FontConfiguration

__all__ = ["ProjectFonts", "closed", "PREFIX"]

#: The scratch folder's name starts so (hidden; listed in .gitignore's spirit as a build leftover).
PREFIX = ".rcdoc-fonts-"


class ProjectFonts(FontConfiguration):
    """weasyprint's font configuration with its font folder in ``folder`` (made on
    the first ``@font-face`` font, removed by ``close``)."""

    def __init__(self, folder: Path | None):
        super().__init__()
        self._home = folder

    def add_font_face(self, rule_descriptors, url_fetcher):
        if self._folder is None and self._home is not None:
            with contextlib.suppress(OSError):     # read-only: weasyprint's own place
                self._folder = Path(tempfile.mkdtemp(prefix=PREFIX, dir=self._home))
        return super().add_font_face(rule_descriptors, url_fetcher)

    def close(self) -> None:
        if self._folder is not None:
            shutil.rmtree(self._folder, ignore_errors=True)
            self._folder = None


class _SharedFonts(ProjectFonts):
    """The configuration the documents of the shipped templates share; ``spoilt``
    once an ``@font-face`` font was added to it."""

    spoilt = False

    def add_font_face(self, rule_descriptors, url_fetcher):
        self.spoilt = True
        return super().add_font_face(rule_descriptors, url_fetcher)


_SHARED: list = []          # the process's shared configuration, made on first use


@contextlib.contextmanager
def closed(folder: Path | None, shared: bool = False) -> Iterator[ProjectFonts]:
    """A ProjectFonts for one document, closed when the block ends (also on error).
    ``shared``: the document loads no ``@font-face`` font (the shipped
    templates): the process's shared configuration."""
    if not shared:
        fonts = ProjectFonts(folder)
        try:
            yield fonts
        finally:
            fonts.close()
        return
    if not _SHARED:
        _SHARED.append(_SharedFonts(None))
    fonts = _SHARED[0]
    fonts._home = folder            # a font it is handed after all: this project's folder
    try:
        yield fonts
    finally:
        if fonts.spoilt:                # a font of this document's own: not for the next
            _SHARED.clear()
            fonts.close()
