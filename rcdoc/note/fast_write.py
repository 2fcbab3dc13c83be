"""pydyf 0.13's writing of numbers and page streams with its common cases first;
for every document rcdoc renders.

What it is for: every operand weasyprint draws goes through pydyf's
``_to_bytes`` (a number, a name, the bytes of an operator), which asks
``isinstance`` of bytes, float and pydyf's Object in turn, some 60 000 times
for the example's note; a page's stream is then joined item by item through
it, in a generator. Here the exact types met nearly always (bytes, float,
int) are answered first, and a stream's items that are bytes already are
joined as they are.

What it must not do: write another byte. A float, a whole one included, and
an int are written by pydyf's own expressions; anything else (a subclass of
float such as numpy's, a bool, a pydyf object, a string) goes to pydyf's own
``_to_bytes``. ``Stream.data`` is pydyf's own but for the join, and still
compresses through ``pydyf.zlib`` (rcdoc.note.deflate sets its level).
tests/test_fast_write.py compares both with pydyf's own.
"""

from __future__ import annotations

import pydyf

from rcdoc.note import renderer_libs  # noqa: F401 - weasyprint, without ctypes' library search
import weasyprint  # noqa: E402 - after renderer_libs

__all__ = ["replacements"]

_VERSIONS = ("70.0", "0.13.0")       # weasyprint's, pydyf's


def replacements() -> list:
    """(owner, name, function) in the shape of rcdoc.note.fast_layout's; empty
    for another weasyprint or pydyf than the ones this was written for."""
    if (weasyprint.__version__, pydyf.__version__) != _VERSIONS:
        return []
    own = pydyf.__dict__["_to_bytes"]
    own = getattr(own, "_rcdoc_own", own)
    to_bytes = _fast_to_bytes(own)
    # pydyf's functions and methods read _to_bytes from the module at each call.
    return [(pydyf, "_to_bytes", to_bytes), (pydyf.Stream, "data", _stream_data(to_bytes))]


def _fast_to_bytes(own):
    def _to_bytes(item):
        kind = type(item)
        if kind is bytes:
            return item
        if kind is float:
            if item.is_integer():
                return str(int(item)).encode('ascii')
            return f'{item:f}'.rstrip('0').encode('ascii')
        if kind is int:
            return str(item).encode('ascii')
        return own(item)

    _to_bytes.__doc__ = own.__doc__
    _to_bytes._rcdoc_own = own
    return _to_bytes


def _stream_data(to_bytes):
    Dictionary = pydyf.Dictionary

    def data(self):
        stream = b'\n'.join([item if type(item) is bytes else to_bytes(item)
                             for item in self.stream])
        extra = Dictionary(self.extra.copy())
        if self.compress:
            extra['Filter'] = '/FlateDecode'
            compressobj = pydyf.zlib.compressobj(level=9)
            stream = compressobj.compress(stream)
            stream += compressobj.flush()
        extra['Length'] = len(stream)
        return b'\n'.join((extra.data, b'stream', stream, b'endstream'))

    return property(data, doc=pydyf.Stream.__dict__["data"].__doc__)
