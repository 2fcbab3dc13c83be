"""The deflate level of the page streams weasyprint writes: 4 instead of
pydyf's 9.

What it is for: pydyf 0.13 compresses every stream it writes (the pages'
drawing operators, font programs, the ToUnicode maps) with
``zlib.compressobj(level=9)``. On the note's pages, text operators for the
most part, the higher levels look much harder for matches for little gain.
Measured on the streams of the example board's note (175 streams, 2.63 MB
before compression; zlib alone, best of five, on a slow run of the machine):
level 9 took 145 ms for 514 KB, level 6 (zlib's default, this module's
level until then) 87 ms for 518 KB, level 5 59 ms for 524 KB, level 4 43 ms
for 543 KB, level 3 38 ms for 576 KB, level 1 30 ms for 606 KB. Level 4, the
lowest that still defers a match to look for a longer one, is the knee:
half of level 6's time for a note 1.7 % larger (the charts' images, most of
a note's bytes, are not compressed again: rcdoc.note.pdf_images hands their
PNG rows over as they are).

How: pydyf reads ``zlib`` from its module's namespace when a stream is
written; ``install`` puts there a stand-in whose ``compressobj`` uses level
``LEVEL`` where level 9 is asked and is zlib's own otherwise.

What it must not do: change anything but the level (the same streams, read
back, give the same bytes: tests/test_deflate.py) or touch zlib for any other
module. A part's cache key names the format (rcdoc.note.assemble._PART_FORMAT),
so parts written at another level are not mixed with new ones.
"""

from __future__ import annotations

import types
import zlib

__all__ = ["LEVEL", "install", "installed", "uninstall"]

LEVEL = 4
_PYDYF_LEVEL = 9          # what pydyf 0.13's Stream.data asks for


def _compressobj(level=-1, *args, **kwargs):
    return zlib.compressobj(LEVEL if level == _PYDYF_LEVEL else level, *args, **kwargs)


# Everything of zlib's, compressobj apart.
_STAND_IN = types.SimpleNamespace(**{name: getattr(zlib, name) for name in dir(zlib)
                                     if not name.startswith("__")})
_STAND_IN.compressobj = _compressobj


def install() -> None:
    """Level ``LEVEL`` for the streams pydyf writes from now on in this process."""
    import pydyf
    pydyf.zlib = _STAND_IN


def installed() -> bool:
    import pydyf
    return pydyf.zlib is _STAND_IN


def uninstall() -> None:
    """pydyf's own level back (tests compare the two)."""
    import pydyf
    pydyf.zlib = zlib
