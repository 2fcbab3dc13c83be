"""The schematic drawing's shortcuts against the code they stand in for.

rcdoc.note.outline_font keeps each outlined label string per process (ziafont
outlined every label three times) and rcdoc.note.schematic writes schemdraw's
point transform out step by step: the same SVG bytes and the same floats as
ziafont and schemdraw on their own.
"""

from __future__ import annotations

import subprocess
import sys

import pytest


@pytest.mark.slow
def test_kept_outlines_give_the_same_bytes_as_outlining_anew():
    # rcdoc.note.outline_font keeps each outlined string per process. Reference:
    # ziafont itself, unchanged, in a fresh process: the same schematic drawn twice
    # (the second time wholly from kept outlines), and strings that differ only in
    # size, alignment, line count or colour, each drawn twice, give the same bytes.
    # The plain side also keeps schemdraw's own point transform (rcdoc.note.schematic.
    # _speed_up_layout replaces it with the same arithmetic written out).
    script = (
        "import sys; import rcdoc.note.outline_font as o; import rcdoc.note.schematic as sch; "
        "o.speed_up = (lambda: None) if sys.argv[1] == 'plain' else o.speed_up; "
        "sch._speed_up_layout = (lambda: None) if sys.argv[1] == 'plain' "
        "else sch._speed_up_layout; "
        "from rcdoc.kinds.recipes import *; from rcdoc.note.schematic import render_svg; "
        "r = ladder([('series','R',Label('R14','4.7 kΩ')), ('shunt','C',Label('C9','10 µF')),"
        " ('series','R',Label('R15','4.7 kΩ'))]); "
        "sys.stdout.write(render_svg(r) + render_svg(r)); "
        "import ziafont, schemdraw.backends.svg as sv; "
        "f = ziafont.Font(sys.argv[2]); "
        "[sys.stdout.write(ziafont.Text(s, font=f, size=z, halign=h, color=c).svg()) "
        " for _ in range(2) for s in ('4.7 kΩ', 'R14\\n4.7 kΩ', 'AV') "
        " for z in (9, 11.5) for h in ('left', 'center', 'right') for c in (None, '#555555')]; "
        "[sys.stdout.write(repr(sv.text_size(s, font=sys.argv[2], size=z))) "
        " for _ in range(2) for s in ('4.7 kΩ', 'R14\\n4.7 kΩ') for z in (9, 11.5)]")
    from rcdoc.note.schematic import _font_file

    def svg(mode):
        return subprocess.run([sys.executable, "-c", script, mode, _font_file()],
                              capture_output=True, check=True,
                              env={"PYTHONHASHSEED": "123", "PATH": "/usr/bin:/bin",
                                   "PYTHONPATH": ":".join(sys.path)}).stdout
    fast, plain = svg("fast"), svg("plain")
    assert fast.count(b"<path") > 100 and fast == plain


def test_written_out_transform_gives_schemdraws_floats():
    # Reference: schemdraw's Transform.transform itself (taken before rcdoc replaces
    # it): ((pt + localshift) * zoom) rotated about the origin, + shift. Every result
    # bit for bit, signed zeros included, for right angles (schemdraw's directions),
    # other angles, zooms of one number or per axis, points as tuples or Points.
    import random
    import struct

    from schemdraw.transform import Transform
    from schemdraw.util import Point

    import rcdoc.note.schematic as sch
    sch._speed_up_layout()
    own = sch._PLAIN_TRANSFORM                  # schemdraw's, kept when it was replaced
    assert Transform.transform is sch._transform and own.__module__ == "schemdraw.transform"
    rng = random.Random(3)
    special = [0.0, -0.0, 1.0, -1.0, 0.5, -2.25, 1e-17, 1e300]

    def value(scale):
        return rng.choice(special) if rng.random() < 0.4 else rng.uniform(-scale, scale)

    def bits(point):
        return [struct.pack("d", v) for v in point]

    for _ in range(5000):
        theta = rng.choice([0, 90, 180, 270, 360, 45, -30.5, 12.345, 90.0])
        zoom = rng.choice([1, 0.5, 2.0, Point((1, -1)), Point((0.7, 1.3))])
        t = Transform(theta, (value(30), value(30)), (value(3), value(3)), zoom)
        pt = (value(10), value(10))
        for p in (pt, Point(pt)):
            want, got = own(t, p), sch._transform(t, p)
            assert type(got) is Point and bits(got) == bits(want), (theta, zoom, p, want, got)


def test_kept_outlines_are_copies():
    # A kept outline is handed out as a copy: drawing one (ziafont sets the group's
    # transform and fill, and the caller inserts it into its drawing) leaves the
    # next use untouched (ziafont's own Text.drawon; common practice for caches of
    # mutable objects).
    from rcdoc.note.outline_font import speed_up
    from rcdoc.note.schematic import _font_file
    speed_up()
    import xml.etree.ElementTree as ET
    import ziafont
    font = ziafont.Font(_font_file())
    first = ziafont.Text("C9 10 nF", font=font, size=11)
    second = ziafont.Text("C9 10 nF", font=font, size=11)
    assert first._symbols.word is not second._symbols.word
    parent = ET.Element("svg")
    first.drawon(parent, 10, 20)
    assert "transform" not in second._symbols.word.attrib
    assert ET.tostring(second._symbols.word) != ET.tostring(parent[0])


def test_mark_anchors_read_on_first_use_place_marks_as_ziafont_does():
    # Reference: ziafont's own mark-to-base and mark-to-mark subtables, which read
    # every anchor as the font loads. rcdoc.note.outline_font reads them on first
    # use: none for text without combining marks; for text with them, the same
    # outlines (the same mark positions) as ziafont's reading gives.
    import ziafont
    import ziafont.gpos as gpos
    from rcdoc.note import outline_font
    from rcdoc.note.schematic import _font_file
    outline_font.speed_up()
    lazy_base, lazy_mark = gpos.MarkToBaseSubtable, gpos.MarkToMarkSubtable
    if not getattr(lazy_base, "_rcdoc_lazy", False):
        pytest.skip("another ziafont than the one the lazy tables are written for")
    eager_base, eager_mark = lazy_base.__mro__[1], lazy_mark.__mro__[1]
    try:
        gpos.MarkToBaseSubtable, gpos.MarkToMarkSubtable = eager_base, eager_mark
        eager = ziafont.Font(_font_file())
    finally:
        gpos.MarkToBaseSubtable, gpos.MarkToMarkSubtable = lazy_base, lazy_mark
    lazy = ziafont.Font(_font_file())
    tables = [t for lookup in lazy.gpos.lookups for t in lookup.subtables
              if getattr(t, "_rcdoc_lazy", False)]
    read = lambda: {name for t in tables for name in ("markarray", "basearray", "mark1array",
                                                      "mark2array") if name in t.__dict__}
    assert {type(t).__name__ for t in tables} == {"MarkToBase", "MarkToMark"}
    assert ziafont.Text("R14 4.7 kΩ", font=lazy, size=9).svg() == \
        ziafont.Text("R14 4.7 kΩ", font=eager, size=9).svg()
    assert read() == set()                          # no mark: no anchor read
    for text in ("e\u0301", "A\u0308\u0301x", "n\u0303\u0323", "q\u0307\u0323\u0301 b\u0300"):
        for size in (9, 11.5):
            assert ziafont.Text(text, font=lazy, size=size).svg() == \
                ziafont.Text(text, font=eager, size=size).svg(), text
    assert read() == {"markarray", "basearray", "mark1array", "mark2array"}
