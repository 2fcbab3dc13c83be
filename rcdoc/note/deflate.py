"""The deflate level of the page streams weasyprint writes: zlib's default (6)
instead of pydyf's 9.

What it is for: pydyf 0.13 compresses every stream it writes (the pages'
drawing operators, font programs, the ToUnicode maps) with
``zlib.compressobj(level=9)``. On the note's pages, text operators for the
most part, level 9 looks much harder for matches for little gain: measured on
the example board's note (its render, interleaved, best of four), level 6 took
0.10 s less CPU of 2.33 s for a PDF 0.2 % larger (1 496 354 bytes against
1 492 885); level 1 saved only 0.02 s more for a PDF 6 % larger.

How: pydyf reads ``zlib`` from its module's namespace when a stream is
written; ``install`` puts there a stand-in whose ``compressobj`` uses level 6
where level 9 is asked and is zlib's own otherwise. The charts' images are not
compressed again (rcdoc.note.pdf_images hands their PNG rows over as they are).

What it must not do: change anything but the level (the same streams, read
back, give the same bytes: tests/test_deflate.py) or touch zlib for any other
module. A part's cache key names the format (rcdoc.note.assemble._PART_FORMAT),
so parts written at the old level are not mixed with new ones.
"""

from __future__ import annotations

import types
import zlib

__all__ = ["LEVEL", "install", "installed", "uninstall"]

LEVEL = 6
_PYDYF_LEVEL = 9          # what pydyf 0.13's Stream.data asks for


def _compressobj(level=-1, *args, **kwargs):
    return zlib.compressobj(LEVEL if level == _PYDYF_LEVEL else level, *args, **kwargs)


# Everything of zlib's, compressobj apart.
_STAND_IN = types.SimpleNamespace(**{name: getattr(zlib, name) for name in dir(zlib)
                                     if not name.startswith("__")})
_STAND_IN.compressobj = _compressobj


def install() -> None:
    """Level 6 for the streams pydyf writes from now on in this process."""
    import pydyf
    pydyf.zlib = _STAND_IN


def installed() -> bool:
    import pydyf
    return pydyf.zlib is _STAND_IN


def uninstall() -> None:
    """pydyf's own level back (tests compare the two)."""
    import pydyf
    pydyf.zlib = zlib
