"""Tests of rcdoc.note.fast_margins: the margin boxes of a page laid out once
for all the pages that show the same ones.

The reference is weasyprint itself: its own ``layout.page.make_margin_boxes``
(in place whenever fast_margins' is not), with rcdoc.note.fast_layout's short
paths and without. The margin boxes of every page, their places, sizes, texts
and every computed value of their styles, and the PDFs byte for byte, must be
the same. The CSS exercised is CSS Paged Media 3 (page selectors ``:first``,
``:left``, ``:right``, ``:blank``, named pages, the sixteen margin boxes and
their widths, ``counter(page)`` and ``counter(pages)``) and CSS Generated
Content for Paged Media (``string-set`` and ``string()`` with its keywords,
``position: running()`` and ``element()``, ``leader()``, ``target-counter()``),
as weasyprint implements them.
"""

from __future__ import annotations

import contextlib

import pytest
import weasyprint
from weasyprint.css.computed_values import PHYSICAL_FUNCTIONS
from weasyprint.css.properties import INITIAL_VALUES

from rcdoc.note import fast_layout, fast_margins, report
from test_report import EPOCH, _stage, make_context
from weasyprint_own import note_parts, render_parts

_IMAGE = ("data:image/svg+xml,%3Csvg xmlns='http://www.w3.org/2000/svg' width='8' "
          "height='8'%3E%3Crect width='8' height='8' fill='red'/%3E%3C/svg%3E")

# Margin boxes that change from page to page, or from one kind of page to the
# next, beside some that stay the same: page numbers, named strings with each
# keyword, quotes, styles and widths per page selector, margins of other sizes
# per named page (and the same boxes on pages of other margins), declarations
# that differ by a word only, a logical margin (margin-inline-start) beside its
# physical one that wins on the blank page alone (its selector weighs more
# there), texts cut short with an ellipsis (text-overflow, and line-clamp's
# block ellipsis, which weasyprint writes into the line's Pango layout as it
# draws it), and the contents kept out of the reuse (a running element, an
# image, a leader).
_HOSTILE = """<html lang="en"><head><style>
@page { size: 300px 260px; margin: 30px 40px;
  @top-left { content: string(title); font: 8px "DejaVu Sans" }
  @top-center { content: open-quote "§" close-quote; quotes: "«" "»"; font-size: 6px }
  @top-right { content: string(title, last) " / " string(sub, first-except); width: 30% }
  @bottom-left { content: "the same on every page"; font: 7px "DejaVu Sans" }
  @bottom-center { content: "see p. " target-counter(url(#end), page) }
  @left-middle { content: "side"; font-size: 5px }
  @left-bottom { content: "a text wider than its box"; white-space: nowrap; overflow: hidden;
                 text-overflow: ellipsis; font-size: 6px }
  @bottom-right { content: "clamped text, then averyveryverylongwordthatwraps";
                  width: 45%; line-clamp: 1; font-size: 7px }
}
@page :first { margin: 50px 20px; @top-left { content: "first: " string(title); color: red } }
@page :left { @bottom-left { content: "left page"; text-align: right; width: auto } }
@page :right { @bottom-left { content: "the same on every page"; color: #336 } }
@page :blank { @top-center { content: "blank" } }
@page :left { @top-center { text-align: left } }
@page :right { @top-center { text-align: right } }
@page :left, :blank { @bottom-left { margin-left: 9px } }
@page :left, :right { @bottom-left { margin-inline-start: 5px } }
@page wide { size: 420px 260px; margin: 20px 60px 35px;
  @top-left { content: element(head); width: 60% }
  @top-right { content: "wide " string(title); vertical-align: bottom }
  @top-left-corner { content: url("IMAGE") } }
@page tall { size: 300px 400px; margin: 45px;
  @top-center { content: leader(".") "x" }
  @right-top { content: "tall"; font-size: 9px } }
@page deep { margin-top: 45px }
@page roomy { margin: 45px 40px; font-size: 11px;
  @top-left { content: string(title, start) }
  @bottom-center { content: "roomy"; text-transform: uppercase; letter-spacing: 1px }
  @bottom-right { content: "page " counter(page) " of " counter(pages) }
  @bottom-right-corner { content: counter(page, upper-roman) } }
body { font: 9px/1.3 "DejaVu Sans" }
h1 { string-set: title content(); font-size: 10px; break-before: page }
h2 { string-set: sub content(); font-size: 9px }
.head { position: running(head); font-style: italic }
.wide { page: wide } .tall { page: tall } .roomy { page: roomy } .deep { page: deep }
.right { break-before: right }
p { margin: 0 0 4px }
</style></head><body>
BODY</body></html>""".replace("IMAGE", _IMAGE)
_FILLER = "<p>" + "Filler text that runs over lines and lines. " * 12 + "</p>"
_HOSTILE = _HOSTILE.replace("BODY", "".join(
    [f"<h1>Chapter {i}</h1><h2>sub {i}</h2>" + _FILLER * 7 for i in range(5)]
    + ['<div class="wide"><div class="head">Running head</div><h1>Wide</h1>' + _FILLER * 3
       + "</div>",
       '<div class="tall"><h1>Tall</h1>' + _FILLER * 2 + "</div>",
       '<div class="deep"><h1>Deep</h1><h2>sub 4</h2>' + _FILLER * 4 + "</div>",
       '<div class="roomy"><h1>Roomy</h1>' + _FILLER * 4 + "</div>",
       '<h1 class="right">On a right page</h1><h1 class="right">After a blank page</h1>'
       + _FILLER * 2,
       '<div class="roomy"><h1>Roomy again</h1>' + _FILLER * 3 + '<p id="end">End.</p></div>']))

# A page style read before the first page's size is known: its margins (in em)
# are, when the first page is made, and its font size is in viewport units
# (weasyprint takes the size of A4 until then). The first page's margin text is
# then larger than the next pages', though the pages' declarations are the same.
_VIEWPORT = """<html><head><style>
@page { size: 400px 300px; margin: max(40px, 1em); font-size: 3vw;
        @top-center { content: "the same on each page" } }
body { font: 10px "DejaVu Sans" }
</style></head><body>""" + "<p>filler line</p>" * 80 + "</body></html>"

# Every property but the logical ones (margin-inline-start...), which weasyprint
# computes for elements only; their physical ones are read.
_PROPERTIES = sorted(set(INITIAL_VALUES) - {
    function(block="ttb", inline=direction)
    for function in PHYSICAL_FUNCTIONS.values() for direction in ("ltr", "rtl")})
_LENGTHS = ("position_x", "position_y", "width", "height", "margin_top", "margin_right",
            "margin_bottom", "margin_left", "padding_top", "padding_right", "padding_bottom",
            "padding_left", "border_top_width", "border_right_width", "border_bottom_width",
            "border_left_width")


@pytest.fixture()
def general():
    """weasyprint's own functions for the test; the short paths back after it."""
    was = fast_layout.installed()
    fast_layout.uninstall()
    assert _own_margins()
    yield
    if was:
        fast_layout.install()


def _own_margins() -> bool:
    from weasyprint import layout
    from weasyprint.layout import page
    return (page.make_margin_boxes.__module__ == "weasyprint.layout.page"
            and layout.make_margin_boxes is page.make_margin_boxes)


@contextlib.contextmanager
def _margins(with_fast_layout: bool):
    """fast_margins' make_margin_boxes in place for the block (put there here,
    unless fast_layout's install already has), fast_layout's short paths too
    if asked; weasyprint's own after it."""
    if with_fast_layout:
        assert fast_layout.install()
    saved = []
    if _own_margins():
        for owner, name, new in fast_margins.replacements():
            saved.append((owner, name, owner.__dict__[name]))
            setattr(owner, name, new)
    try:
        assert not _own_margins()
        yield
    finally:
        for owner, name, old in reversed(saved):
            setattr(owner, name, old)
        fast_layout.uninstall()
        assert _own_margins()


def _margin_boxes(document) -> list[tuple]:
    """Every margin box of every page and what it holds: classes, places and
    sizes, texts, and every computed value of every style."""
    from weasyprint.formatting_structure import boxes

    def walk(box):
        style = box.style
        values = tuple(repr(style[name]) for name in _PROPERTIES)
        children = getattr(box, "children", ()) or ()
        return (type(box).__name__, getattr(box, "at_keyword", None),
                tuple(getattr(box, name, None) for name in _LENGTHS),
                getattr(box, "cached_counter_values", None),
                getattr(box, "text", None), values, tuple(walk(child) for child in children))

    return [[walk(box) for box in page._page_box.children if isinstance(box, boxes.MarginBox)]
            for page in document.pages]


def test_replacements_name_every_namespace_and_weasyprint_70_only(general, monkeypatch):
    from weasyprint import layout
    from weasyprint.layout import page
    own = page.make_margin_boxes
    replaced = fast_margins.replacements()
    assert {owner for owner, _, _ in replaced} == {page, layout}
    assert {name for _, name, _ in replaced} == {"make_margin_boxes"}
    new = replaced[0][2]
    assert all(function is new for _, _, function in replaced)
    assert new._rcdoc_own is own and new.__doc__ == own.__doc__
    monkeypatch.setattr(weasyprint, "__version__", "71.0")
    assert fast_margins.replacements() == []


def test_hostile_margins_are_the_same_bytes_as_with_weasyprints_own(general):
    reference = weasyprint.HTML(string=_HOSTILE).write_pdf()
    for with_fast_layout in (False, True):
        fast_margins.counts.clear()
        with _margins(with_fast_layout):
            pdf = weasyprint.HTML(string=_HOSTILE).write_pdf()
        assert pdf == reference, with_fast_layout
        # Each way was taken: copies, new layouts, and weasyprint's own for the
        # running element, the image and the leader.
        counts = fast_margins.counts
        assert counts["reused"] >= 10 and counts["laid_out"] >= 10, counts
        assert counts["general"] >= 3, counts


def test_hostile_margin_boxes_are_weasyprints_own(general):
    reference = _margin_boxes(weasyprint.HTML(string=_HOSTILE).render())
    with _margins(with_fast_layout=True):
        document = weasyprint.HTML(string=_HOSTILE).render()
    fast = _margin_boxes(document)
    assert len(fast) == len(reference) > 30
    for number, (a, b) in enumerate(zip(fast, reference), start=1):
        assert a == b, number
    # The texts that change from page to page are there, page by page.
    texts = [[box[6][0][6][0][4] for box in page if box[1] == "@bottom-right" and box[6]]
             for page in reference]
    numbered = [t[0] for t in texts if t and t[0].startswith("page ")]
    assert len(numbered) >= 4 and len(set(numbered)) == len(numbered)
    assert all(t.endswith(f" of {len(reference)}") for t in numbered)
    # The clamped text: its first line alone (drawn with an ellipsis).
    clamped = "clamped text, then averyveryverylongwordthatwraps"
    assert any(t and t[0] != clamped and clamped.startswith(t[0]) for t in texts)


def test_a_page_style_read_before_the_page_size_is_known_is_not_reused(general):
    reference = weasyprint.HTML(string=_VIEWPORT).write_pdf()
    boxes = _margin_boxes(weasyprint.HTML(string=_VIEWPORT).render())
    places = [page[0][2] for page in boxes]           # the one margin box's place and size
    assert len(places) > 3 and places[0] != places[1] and len(set(places[1:])) == 1
    fast_margins.counts.clear()
    with _margins(with_fast_layout=False):
        pdf = weasyprint.HTML(string=_VIEWPORT).write_pdf()
    assert pdf == reference
    # The first page's boxes laid out for it alone; the others, once.
    assert fast_margins.counts["laid_out"] == 2
    assert fast_margins.counts["reused"] == len(boxes) - 2


def test_nothing_is_kept_from_one_document_to_the_next(general):
    from weasyprint.layout import LayoutContext
    contexts = []
    init = LayoutContext.__init__

    def remembered(self, *args, **kwargs):
        init(self, *args, **kwargs)
        contexts.append(self)

    fast_margins.counts.clear()
    with _margins(with_fast_layout=False), pytest.MonkeyPatch.context() as patch:
        patch.setattr(LayoutContext, "__init__", remembered)
        weasyprint.HTML(string=_VIEWPORT).render()
        first = fast_margins.counts["laid_out"]
        weasyprint.HTML(string=_VIEWPORT).render()
    # The second document lays its boxes out anew, in a store of its own.
    assert fast_margins.counts["laid_out"] == 2 * first > 0
    kept = [context.__dict__[fast_margins._KEPT] for context in contexts]
    assert len(kept) == 2 and kept[0] is not kept[1]


@pytest.mark.slow
def test_note_parts_and_whole_note_are_the_same_bytes_and_reused(
        general, monkeypatch, tmp_path):
    ctx = make_context()          # a failing snubber: its caution box holds a list
    # A stage of four stages' blocks: pages that show the same running heads.
    blocks = [block for i in range(4) for block in _stage(f"long{i}", "", "pass")["blocks"]]
    long = {**_stage("long", "A long stage", "pass"), "blocks": blocks}
    parts = note_parts(ctx, long)

    def render(name):
        out = render_parts(parts)
        report.render_document(ctx, tmp_path / name, source_date_epoch=EPOCH)
        return out

    install = fast_layout.install
    monkeypatch.setattr(fast_layout, "install", lambda: False)   # the renderer asks
    reference = render("own.pdf")
    assert _own_margins()
    monkeypatch.setattr(fast_layout, "install", install)
    fast_margins.counts.clear()
    with _margins(with_fast_layout=True):
        fast = render("fast.pdf")
    # The long stage's pages after its first show the same margin boxes.
    assert fast_margins.counts["reused"] >= 2, fast_margins.counts
    assert fast[2]["pages"] >= 3
    assert fast_margins.counts["general"] == 0, fast_margins.counts
    for a, b in zip(fast, reference):
        assert a["pages"] == b["pages"] >= 1
        assert a["pdf"] == b["pdf"]
    assert (tmp_path / "fast.pdf").read_bytes() == (tmp_path / "own.pdf").read_bytes()
