"""Tests of rcdoc.note.fast_write: pydyf 0.13's writing of numbers and page
streams with its common cases first.

The reference is pydyf itself (a general-purpose PDF writer): its own
``_to_bytes`` and ``Stream.data``, which must give the same bytes for every
value (numbers of every kind and size, names, strings, pydyf objects,
subclasses of float such as numpy's) and every stream, compressed or not; and
weasyprint's PDF of a page drawn through them must be the same bytes.
"""

from __future__ import annotations

import math

import numpy as np
import pydyf
import pytest
import weasyprint

from rcdoc.note import deflate, fast_write
from weasyprint_own import general  # noqa: F401 - a fixture

_VALUES = [b"", b"/F1", b"12 0 obj", 0, 1, -7, 10 ** 20, True, False, 0.0, -0.0, 1.0, -12.0,
           0.5, 1e-7, -1e-7, 0.1 + 0.2, 123.456789123, 1e20, 2.0 ** 70, -3.75e-5, math.inf,
           -math.inf, np.float64(2.5), np.float64(3.0), np.float32(0.1), "/Name", "text",
           pydyf.Dictionary({"Type": "/Page", "Count": 3}), pydyf.Array([1, 2.5, b"/X"]),
           pydyf.String("a (b) c")]


def _own():
    return pydyf.__dict__["_to_bytes"], pydyf.Stream.__dict__["data"]


def test_replacements_are_for_the_pinned_libraries_only(general, monkeypatch):
    names = [(owner, name) for owner, name, _ in fast_write.replacements()]
    assert names == [(pydyf, "_to_bytes"), (pydyf.Stream, "data")]
    monkeypatch.setattr(pydyf, "__version__", "0.14.0")
    assert fast_write.replacements() == []


def test_every_value_is_written_as_pydyf_writes_it(general):
    own, _ = _own()
    [(_, _, fast), _] = fast_write.replacements()
    for value in _VALUES:
        assert fast(value) == own(value), value
    nan = fast(math.nan)
    assert nan == own(math.nan) == b"nan"
    # Many floats of every size: the same bytes.
    rng = np.random.default_rng(7)
    for x in rng.standard_normal(2000) * 10.0 ** rng.integers(-9, 9, 2000):
        x = float(x)
        assert fast(x) == own(x)


@pytest.mark.parametrize("compress", [False, True])
def test_streams_are_written_as_pydyf_writes_them(general, monkeypatch, compress):
    _, own_data = _own()
    [(_, _, fast), (_, _, data)] = fast_write.replacements()

    def stream():
        s = pydyf.Stream(compress=compress)
        s.move_to(1.5, -0.0)
        s.line_to(2, 3.25)
        s.set_color_rgb(0.2, 0.4, 1.0)
        s.stream.extend([b"BT", 12, 1e-7, np.float64(4.5), pydyf.Array([1, 2]), b"ET"])
        return s

    for level in ("pydyf's", "rcdoc's"):
        if level == "rcdoc's":
            deflate.install()
        try:
            reference = own_data.fget(stream())
            monkeypatch.setattr(pydyf, "_to_bytes", fast)
            assert data.fget(stream()) == reference
            monkeypatch.setattr(pydyf, "_to_bytes", _own()[0])
        finally:
            deflate.uninstall()


def test_a_page_is_the_same_pdf(general, monkeypatch):
    html = ("<style>@page { size: 200px 150px } p { border: 1.5px solid #369; padding: 2.25px;"
            " background: #fdf }</style><p>Numbers 0.5 and -3 <b>bold</b></p>" * 6)
    reference = weasyprint.HTML(string=html).write_pdf()
    [(_, _, fast), (_, _, data)] = fast_write.replacements()
    calls = []

    def counted(item):
        calls.append(type(item))
        return fast(item)

    monkeypatch.setattr(pydyf, "_to_bytes", counted)
    monkeypatch.setattr(pydyf.Stream, "data", data)
    assert weasyprint.HTML(string=html).write_pdf() == reference
    assert len(calls) > 100 and float in calls
