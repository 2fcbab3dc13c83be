"""Tests of rcdoc.note.fast_paint: shorter paths through weasyprint 70's
placing of backgrounds and writing of a line's text operators.

The reference is weasyprint itself: its own ``layout_box_backgrounds`` and
``draw_first_line`` (put back around each test), which must give the same PDF
bytes, the same attributes on every box, and the same log records (the
characters no font has, rcdoc.note.glyphs). The CSS exercised is from CSS
Backgrounds and Borders 3 (background colours, images, gradients, clips,
``border-radius`` in lengths and percentages, ``box-shadow``,
``border-image``), CSS 2.1 (``visibility``, table row and row-group
backgrounds), CSS Text 3 (letter and word spacing, justification), CSS Text
Decoration 3, CSS Overflow 3/4 (``text-overflow``, ``block-ellipsis``) and
SVG 1.1 text, as weasyprint implements them.
"""

from __future__ import annotations

import collections
import contextlib
import logging
import sys

import pytest
import weasyprint

from rcdoc.note import fast_layout, fast_paint
from test_report import make_context
from weasyprint_own import LogRecords, counted, general, note_parts, render_parts, same_parts  # noqa: F401 - general: a fixture

_NAMES = ("layout_box_backgrounds", "draw_first_line")


def _owners():
    from weasyprint.draw import text
    from weasyprint.layout import background
    return {"layout_box_backgrounds": background, "draw_first_line": text}


@contextlib.contextmanager
def _fast_paths():
    """The short paths in place; yields counts of the calls of each and of the
    calls they hand to weasyprint's own ("... general"). Both functions are
    called again through their module's name (recursion, draw_text), so the
    count of each is of every box and every line."""
    owners = _owners()
    own = {name: owner.__dict__[name] for name, owner in owners.items()}
    counts = collections.Counter()

    try:
        for name, owner in owners.items():
            setattr(owner, name, counted(counts, own[name], f"{name} general"))
        replaced = fast_paint.replacements()
        assert sorted(name for _, name, _ in replaced) == sorted(_NAMES)
        for owner, name, new in replaced:
            assert owner is owners[name]
            setattr(owner, name, counted(counts, new, name))
        yield counts
    finally:
        for name, owner in owners.items():
            setattr(owner, name, own[name])


def _render(html: str, base_url: str | None = None):
    """The PDF (written twice: the second writing finds the fonts' kept
    operators), each box's background attributes, and weasyprint's log records."""
    logger = logging.getLogger("weasyprint")
    records = LogRecords()
    logger.addHandler(records)
    try:
        document = weasyprint.HTML(string=html, base_url=base_url).render()
        pdf = document.write_pdf()
        again = document.write_pdf()
    finally:
        logger.removeHandler(records)
    assert again == pdf
    return pdf, _box_attributes(document), records.seen


def _box_attributes(document) -> list[tuple]:
    out = []

    def walk(box):
        box = getattr(box, "_box", box)        # an absolute box's placeholder
        background = getattr(box, "background", "unset")
        out.append((type(box).__name__, box.element_tag,
                    tuple(getattr(box, f"border_{corner}_radius", "unset") for corner in
                          ("top_left", "top_right", "bottom_right", "bottom_left")),
                    background if background is None or background == "unset"
                    else (background.color, len(background.layers)),
                    getattr(box, "border_image", None) is None,
                    getattr(box, "mask_border_image", None) is None))
        for child in box.all_children() if hasattr(box, "all_children") else ():
            walk(child)

    for page in document.pages:
        walk(page._page_box)
    return out


def _same_as_weasyprints_own(html: str, base_url: str | None = None):
    reference = _render(html, base_url)
    with _fast_paths() as counts:
        fast = _render(html, base_url)
    assert fast[0] == reference[0]            # the PDF, byte for byte
    assert fast[1] == reference[1]            # every box's corners and background
    assert fast[2] == reference[2]            # the log records, in order
    return reference, counts


def test_replacements_are_for_weasyprint_70_only_and_replace_every_name(
        general, monkeypatch):
    import importlib
    for name in ("weasyprint.svg.text", "weasyprint.draw", "weasyprint.layout",
                 "weasyprint.document", "weasyprint.pdf"):
        importlib.import_module(name)
    owners = _owners()
    own = {name: owner.__dict__[name] for name, owner in owners.items()}
    replaced = {(owner, name) for owner, name, _ in fast_paint.replacements()}
    # Every weasyprint module that holds one of the functions by name gets the
    # short path (svg/text.py imports draw_first_line at each call, so it reads
    # draw.text's name).
    holders = {(module, name) for module_name, module in list(sys.modules.items())
               if module_name.split(".")[0] == "weasyprint" and module is not None
               for name, function in own.items() if vars(module).get(name) is function}
    assert holders == replaced == {(owners[n], n) for n in _NAMES}
    monkeypatch.setattr(weasyprint, "__version__", "71.0")
    assert fast_paint.replacements() == []


_PNG_SIZE = (3, 2)


@pytest.fixture()
def png(tmp_path):
    from PIL import Image
    image = Image.new("RGBA", _PNG_SIZE, (200, 30, 40, 128))
    image.putpixel((1, 1), (0, 90, 200, 255))
    path = tmp_path / "dot.png"
    image.save(path)
    return path


# Backgrounds of every kind, on every kind of box, next to boxes that paint
# nothing (the short path), at extremes: radii in % and px (and one of them
# zero: the general code's short track), hidden boxes with and without shadows,
# an image that cannot be fetched, row and row-group backgrounds painted over
# their cells, clips, border and mask images, logical radii.
_BACKGROUNDS = """<html><head><style>
@page { size: 300px 420px; margin: 12px; background: #fffef0;
        @top-left { content: "head"; background: linear-gradient(red, blue) } }
body { font: 8px "DejaVu Sans"; margin: 0 }
div { margin: 2px; padding: 2px; border: 1px solid transparent }
.c { background: rgba(10, 20, 30, 0.5) } .t { background-color: transparent }
.img { background: url(dot.png) 3px 4px / 50% auto repeat-x }
.bad { background-image: url(missing.png) }
.lg { background: linear-gradient(45deg, red, rgba(0, 0, 255, 0)) }
.rg { background: radial-gradient(circle, #0f0, #00f 80%) content-box }
.multi { background: url(dot.png) no-repeat, linear-gradient(red, blue) padding-box,
         yellow }
.r1 { border-radius: 10% 0 25% 3px / 5px 50% 0 1px; background: #abc }
.r2 { border-radius: 0 7px; background: none }
.r3 { border-radius: 0px 50%; }
.rl { border-start-start-radius: 6px; border-end-end-radius: 30% }
.h { visibility: hidden; background: red } .hs { visibility: hidden; box-shadow: 2px 2px red }
.sh { box-shadow: 1px 2px 3px 4px rgba(0, 0, 0, 0.3), inset 0 0 2px blue }
.bi { border: 6px solid; border-image: url(dot.png) 1 round }
.bg { border: 6px solid; border-image: linear-gradient(red, blue) 3 }
.mask { mask-border: url(dot.png) 1 }
.clip-t { background: lime; background-clip: text } .clip-p { background: teal;
          background-clip: padding-box; border: 3px dashed }
.cur { color: #123; background-color: currentcolor }
.att { background: url(dot.png) fixed }
table { border-collapse: collapse } td { padding: 1px; border: 1px solid }
tbody.g { background: #eee } tr.r { background: url(dot.png) } td.c { background: pink }
.abs { position: absolute; top: 300px; left: 20px; background: orange; border-radius: 2px }
.fl { float: right; width: 30px; background: silver }
span.in { background: #cfc; border-radius: 3px; padding: 0 2px }
</style></head><body>
<div>plain <span>inline <b>bold</b></span></div>
<div class="c">colour</div><div class="t">transparent</div>
<div class="img">image</div><div class="bad">missing image</div>
<div class="lg">linear</div><div class="rg">radial</div><div class="multi">layers</div>
<div class="r1">radii in % and px</div><div class="r2">radii, nothing painted</div>
<div class="r3">one radius zero</div><div class="rl">logical radii</div>
<div class="h">hidden <span>child</span></div><div class="hs">hidden, shadow</div>
<div class="sh">shadows</div><div class="bi">border image</div>
<div class="bg">border gradient</div><div class="mask">mask border</div>
<div class="clip-t">clip text</div><div class="clip-p">clip padding</div>
<div class="cur">current colour</div><div class="att">attached</div>
<div class="fl">float</div><div class="abs">absolute</div>
<p>a <span class="in">painted inline box split over the end of this line and
onto the next one</span> end</p>
<table><tbody class="g"><tr class="r"><td>1</td><td class="c">2</td></tr>
<tr><td>3</td><td>4</td></tr></tbody><tbody><tr><td>5</td><td>6</td></tr></tbody></table>
<ul><li>list</li><li style="background: #fee">painted item</li></ul>
</body></html>"""


def test_backgrounds_are_weasyprints_own(general, png):
    (pdf, boxes, records), counts = _same_as_weasyprints_own(
        _BACKGROUNDS, base_url=str(png.parent) + "/")
    # The extremes are there: painted boxes, rounded corners, boxes left plain.
    painted = [b for b in boxes if b[3] not in (None, "unset")]
    assert len(painted) > 15
    assert any(b[2][0] != (0, 0) for b in boxes) and any(not b[4] for b in boxes)
    assert any("missing.png" in message for _, message in records)
    # Both ways were taken: most boxes paint nothing.
    short = counts["layout_box_backgrounds"] - counts["layout_box_backgrounds general"]
    assert short > 40 and counts["layout_box_backgrounds general"] > 20


# Text at the extremes of what a line may hold: fonts and sizes decades apart
# (and a font first used after a line's first run), letter and word spacing,
# justification, decorations, right-to-left text in two scripts with marks
# (glyphs placed with offsets: raised and moved marks), ligatures, combining
# marks, empty glyphs (joiners; tabs, which have widths), characters no font has
# (drawn as .notdef, logged), an ellipsis and a block ellipsis, and SVG text.
_TEXT = """<html lang="en"><head><style>
@page { size: 320px 900px; margin: 10px }
body { font: 9px/1.3 "DejaVu Sans" }
.ls { letter-spacing: 2.5px } .nls { letter-spacing: -0.6px }
.ws { word-spacing: 7px } .j { text-align: justify; width: 150px }
.dec { text-decoration: underline overline line-through; text-decoration-color: red }
.wavy { text-decoration: underline wavy blue 2px; text-underline-offset: 3px }
.serif { font-family: "DejaVu Serif" } .mono { font-family: "DejaVu Sans Mono" }
.tiny { font-size: 0.01px } .wee { font-size: 2e-7px } .huge { font-size: 180px }
.sc { font-variant: small-caps } .nolig { font-variant-ligatures: none }
.up { vertical-align: super; font-size: 60% }
.e { width: 60px; white-space: nowrap; overflow: hidden; text-overflow: ellipsis }
.clamp { width: 90px; max-lines: 2; block-ellipsis: auto; continue: discard }
.h { visibility: hidden }
</style></head><body>
<p>Plain, then <b>bold first used here</b>, <i>italic</i>,
<span class="mono">mono</span> and <span class="serif">serif ﬁ</span>.</p>
<p class="ls">letter spaced office fifl</p><p class="nls">tight letters</p>
<p class="ws">wide word spacing here</p>
<p class="j">Justified text over several lines so that the spaces of every line but
the last are stretched to the width of the box, and once more for good measure.</p>
<p class="dec">decorated <span class="wavy">wavy</span></p>
<p>sizes <span style="font-size: 20px">twenty</span> <span style="font-size: 4px">four</span>
<span class="up">sup</span> <span class="sc">Small Caps</span>
<span class="nolig">fi ffl</span></p>
<p class="tiny">tiny text</p><p class="wee">below pdf precision</p>
<p class="huge">Wg</p>
<p dir="rtl" lang="ar">مرحبا بالعالم بِسْمِ ٱللَّٰهِ ١٢٣ abc</p>
<p dir="rtl" lang="he">שָׁלוֹם עוֹלָם (1) abc</p>
<p>e\u0301 a\u0323\u0302 q\u0307\u0323 \u01c5 x\u20dd o\u0308\u0304 i\u0328\u0301</p>
<p>zero\u200bwidth soft\u00adhyphen no\u00a0break \u2060joined</p>
<pre>tab\tstops\there (empty glyphs with widths)</pre>
<p>missing: \u571f\u58cc \U0001f600 \ue000 \U000f0001 \u571f</p>
<p class="e">An ellipsis ends this line long before its end</p>
<p class="clamp">A block ellipsis after two lines of this paragraph, which goes on
for longer than two lines in its narrow box.</p>
<p class="h">hidden text</p>
<svg width="200" height="60"><text x="4" y="14" font-size="10">SVG text \u03a9 fi</text>
<text x="4 14 24 34" y="30" font-size="8" letter-spacing="2">abcd</text>
<text x="4" y="50" transform="rotate(5)" font-weight="bold">turned bold</text></svg>
</body></html>"""


def test_text_is_weasyprints_own(general):
    (pdf, _, records), counts = _same_as_weasyprints_own(_TEXT)
    assert any(message.startswith(".notdef glyph") for _, message in records)
    lines, handed = counts["draw_first_line"], counts["draw_first_line general"]
    # The ellipses, and the line whose second run is the bold font's first use,
    # go the general way; most lines do not.
    assert 2 < handed < lines / 3
    assert lines > 40


def _svg_font(path):
    """A font whose one glyph is drawn from its SVG table (as colour emoji
    fonts are): OpenType's SVG table, with a document for glyph 1."""
    from fontTools.fontBuilder import FontBuilder
    from fontTools.pens.ttGlyphPen import TTGlyphPen
    from fontTools.ttLib import newTable
    from fontTools.ttLib.tables.S_V_G_ import SVGDocument

    def square():
        pen = TTGlyphPen(None)
        pen.moveTo((0, 0))
        pen.lineTo((0, 800))
        pen.lineTo((800, 800))
        pen.lineTo((800, 0))
        pen.closePath()
        return pen.glyph()

    order = [".notdef", "face", "space"]
    builder = FontBuilder(1000, isTTF=True)
    builder.setupGlyphOrder(order)
    builder.setupCharacterMap({0x263A: "face", 0x20: "space"})
    builder.setupGlyf({".notdef": square(), "face": square(),
                       "space": TTGlyphPen(None).glyph()})
    builder.setupHorizontalMetrics({name: (1000, 0) for name in order})
    builder.setupHorizontalHeader(ascent=800, descent=-200)
    builder.setupNameTable({"familyName": "RcdocSvgGlyphs", "styleName": "Regular"})
    builder.setupOS2(sTypoAscender=800, usWinAscent=800, usWinDescent=200)
    builder.setupPost()
    svg = newTable("SVG ")
    svg.docList = [SVGDocument('<svg xmlns="http://www.w3.org/2000/svg"><rect id="glyph1" '
                               'y="-800" width="800" height="800" fill="red"/></svg>',
                               1, 1, False)]
    builder.font["SVG "] = svg
    builder.save(path)


def test_lines_with_glyphs_drawn_as_images_are_weasyprints_own(general, tmp_path):
    font = tmp_path / "svg-glyphs.ttf"
    _svg_font(font)
    html = f"""<style>@font-face {{ font-family: G; src: url({font.as_uri()}) }}
    p {{ font: 20px G, "DejaVu Sans" }}</style>
    <p>a \u263a b</p><p>\u263a\u263a</p><p>text alone</p><p>more text alone</p>"""
    emojis = []
    from weasyprint.draw import text
    own = text.draw_first_line

    def drawn(*args):
        found = own(*args)
        emojis.extend(found)
        return found

    text.draw_first_line = drawn             # fast_paint's general way, counted
    try:
        _, counts = _same_as_weasyprints_own(html)
    finally:
        text.draw_first_line = own
    # Three glyphs from the SVG table, at each of the four writings (two each).
    assert len(emojis) == 3 * 4
    # Of the four lines written twice, the two with those glyphs went the general way.
    assert counts["draw_first_line general"] == 2 * 2
    assert counts["draw_first_line"] == 4 * 2


@pytest.mark.slow
def test_example_note_parts_are_weasyprints_own_and_take_the_short_paths(
        general, monkeypatch):
    parts = note_parts(make_context())

    def render():
        return render_parts(parts)

    install = fast_layout.install
    monkeypatch.setattr(fast_layout, "install", lambda: False)   # the renderer asks
    reference = render()
    with _fast_paths() as counts:
        alone = render()
    monkeypatch.setattr(fast_layout, "install", install)
    with _fast_paths():
        with_layout = render()
        assert fast_layout.installed()
    same_parts((alone, with_layout), reference)
    # The short paths ran: most boxes paint nothing, and every line of the
    # example's text is drawn the short way but a line whose later run uses a
    # font the part has not used yet.
    boxes, general_boxes = (counts["layout_box_backgrounds"],
                            counts["layout_box_backgrounds general"])
    assert boxes > 200 and boxes - general_boxes > 0.8 * boxes
    lines, general_lines = counts["draw_first_line"], counts["draw_first_line general"]
    assert lines > 100 and general_lines < 0.05 * lines
