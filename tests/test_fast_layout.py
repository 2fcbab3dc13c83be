"""Tests of rcdoc.note.fast_layout: shorter paths through weasyprint 70's
computed styles, used lengths, flow tests and the placing of lines.

The reference is weasyprint itself (its own functions, put back with
``fast_layout.uninstall``): every computed property of every element, every
box's used lengths, and every PDF must be the same. The CSS exercised is
from CSS 2.1 (W3C: percentages of the containing block §10.2-10.7, floats
and positioning §9, the collapsing border model §17.6.2), CSS Box Sizing 3
(``box-sizing``), CSS Logical Properties 1 (``margin-inline-start``), CSS
Custom Properties 1 (``var()``), CSS Values 4 (``calc()``, ``min()``), CSS
Text Decoration 3 (propagated decorations), CSS Paged Media 3 (named pages)
and CSS Generated Content for Paged Media (``position: running()``,
``float: footnote``), as weasyprint implements them.
"""

from __future__ import annotations

import collections
import copy

import pytest
import weasyprint
from weasyprint.css.properties import INITIAL_VALUES

from rcdoc.note import assemble, fast_layout, fast_margins, report
from test_report import EPOCH, make_context
from weasyprint_own import general, note_parts, render_parts  # noqa: F401 - general: a fixture

# Every feature the short paths treat apart, at extremes a template may use:
# percentages of an auto height, calc() and min(), lengths decades apart,
# inherited custom properties, logical margins, decorations on nested boxes.
_HTML = """<html lang="en"><head><style>
@page { size: 300px 400px; margin: 10px; @top-center { content: string(t) } }
@page wide { size: 600px 400px }
:root { --gap: 3px; --ink: #123456; }
body { margin: 2%; font: 10px/1.3 "DejaVu Sans"; color: var(--ink) }
.pct { width: 50%; height: 20%; min-height: 10%; max-width: 90%; padding: 1% 2% 3% 4%;
       margin: 5% auto 0 1e-3px }
.calc { width: calc(100% - 2 * var(--gap)); margin-left: min(10%, 7px);
        padding-top: calc(1em + 1%) }
.bb { box-sizing: border-box; width: 100px; min-width: 10000px; max-width: 0.001px;
      padding: 3px; border: 2px solid }
.pb { box-sizing: padding-box; height: 40px; padding: 5px 0; max-height: 20%; }
.fl { float: right; width: 30%; margin-inline-start: 4px }
.ab { position: absolute; top: 10%; right: calc(5% + 1px); width: 20% }
.fx { position: fixed; bottom: 0; left: 0 }
.run { position: running(head) }
.fn { float: footnote }
.dec { text-decoration: underline overline; text-decoration-color: red }
.dec span { text-decoration: line-through }
.named { page: wide }
.fr { display: flow-root; overflow: hidden }
table { border-collapse: collapse; width: 100% } td { border: 1px solid; padding: 1%; }
table.sep { border-collapse: separate; border-spacing: 2px }
h1 { string-set: t content() }
</style></head><body>
<h1 class="run">Running head</h1><h1>Title</h1>
<div class="pct">percent <span class="dec">dec <span>nested</span></span></div>
<div class="calc">calc<div class="bb">border box</div><div class="pb">padding box</div></div>
<p>Text before the float <span class="fl">floated</span> and after it, long enough to wrap
around the floated box more than once, and once more.<span class="fn">A footnote.</span></p>
<div class="ab">absolute</div><div class="fx">fixed</div>
<div class="fr">flow root</div>
<table><tr><td>1</td><td style="width: 30%">2 <b>bold</b></td></tr>
<tr><td colspan="2">spanning</td></tr></table>
<table class="sep"><tr><td>a</td><td>b</td></tr></table>
<ul><li>item</li><li dir="rtl">בּ item</li></ul>
<p dir="rtl">abc! (1) x</p><p>abc! (1) x</p><p lang="tr">fi ﬁ İi</p>
<p style="margin-inline-start: 9px; padding-inline-end: 3px">left, right</p>
<p dir="rtl" style="margin-inline-start: 9px; padding-inline-end: 3px">right, left</p>
<section class="named"><p>On a named page.</p></section>
<p lang="de">Straße <span style="font-language-override: 'TRK'">fi</span>
<span style="font: italic small-caps 300 1e-2px serif">tiny</span>
<span style="font-size: 100px; font-variant-numeric: tabular-nums">10</span></p>
</body></html>"""

_LENGTHS = ("position_x", "position_y", "width", "height", "min_width", "max_width",
            "min_height", "max_height", "margin_top", "margin_right", "margin_bottom",
            "margin_left", "padding_top", "padding_right", "padding_bottom", "padding_left",
            "border_top_width", "border_right_width", "border_bottom_width",
            "border_left_width")


def _boxes(document) -> list[tuple]:
    out = []

    def walk(box):
        out.append((type(box).__name__, box.element_tag,
                    tuple(getattr(box, name, None) for name in _LENGTHS),
                    box.is_in_normal_flow(), box.establishes_formatting_context()))
        for child in getattr(box, "children", ()) or ():
            walk(child)
        for child in getattr(box, "footnote_area", None) and [box.footnote_area] or ():
            walk(child)

    for page in document.pages:
        walk(page._page_box)
    return out


def _styles(html: weasyprint.HTML) -> list[tuple]:
    from weasyprint.css import get_all_computed_styles
    style_for = get_all_computed_styles(html)
    out = []
    for element in html.wrapper_element.iter_subtree():
        for pseudo in (None, "before", "marker"):
            style = style_for(element.etree_element, pseudo)
            if style is None:
                continue
            # Every property, read in two orders: the short path must not depend
            # on what was read before.
            for names in (sorted(INITIAL_VALUES), sorted(INITIAL_VALUES, reverse=True)):
                fresh = style.copy()
                fresh.clear()
                out.append((element.etree_element.tag, pseudo,
                            tuple((k, repr(fresh[k])) for k in names)))
    return out


def test_install_patches_weasyprint_70_only(monkeypatch, general):
    assert not fast_layout.installed()
    monkeypatch.setattr(weasyprint, "__version__", "71.0")
    assert fast_layout.install() is False and not fast_layout.installed()
    monkeypatch.setattr(weasyprint, "__version__", "70.0")
    assert fast_layout.install() is True and fast_layout.installed()
    from weasyprint.layout import block, percent, table
    assert block.resolve_percentages is percent.resolve_percentages
    assert table.resolve_percentages is percent.resolve_percentages
    fast_layout.uninstall()
    assert not fast_layout.installed()
    assert block.resolve_percentages.__module__ == "weasyprint.layout.percent"


def test_every_computed_property_is_weasyprints_own(general):
    reference = _styles(weasyprint.HTML(string=_HTML))
    assert fast_layout.install()
    fast = _styles(weasyprint.HTML(string=_HTML))
    assert len(fast) == len(reference) > 40
    for a, b in zip(fast, reference):
        assert a == b, (a[0], a[1], [x for x, y in zip(a[2], b[2]) if x != y][:3])


def test_every_box_has_weasyprints_own_used_lengths(general):
    reference = _boxes(weasyprint.HTML(string=_HTML).render())
    assert fast_layout.install()
    fast = _boxes(weasyprint.HTML(string=_HTML).render())
    kinds = {b[0] for b in reference}
    assert {"TableCellBox", "LineBox", "BlockBox", "PageBox", "MarginBox"} <= kinds
    assert any(not b[3] for b in reference)          # out-of-flow boxes are there
    assert len(fast) == len(reference) > 60
    for a, b in zip(fast, reference):
        assert a == b


def test_the_same_pdf_as_with_weasyprints_own(general):
    # Text in other directions, languages, fonts and sizes decades apart, with
    # decorations: the Pango contexts and font descriptions kept for reuse.
    reference = weasyprint.HTML(string=_HTML).write_pdf()
    assert fast_layout.install()
    fonts = weasyprint.text.fonts.FontConfiguration()
    assert weasyprint.HTML(string=_HTML).write_pdf() == reference
    twice = [weasyprint.HTML(string=_HTML).write_pdf(font_config=fonts) for _ in range(2)]
    assert twice == [reference, reference]           # the kept ones, used again
    contexts, descriptions = fonts._rcdoc_pango
    assert len(contexts) >= 3 and len(descriptions) >= 4


def _flow(html: weasyprint.HTML) -> list[tuple]:
    # Boxes of each kind for every element's style, as the formatting structure
    # builds them (before layout moves footnotes and running elements away).
    from weasyprint.css import get_all_computed_styles
    from weasyprint.formatting_structure import boxes
    style_for = get_all_computed_styles(html)
    out = []
    for element in html.wrapper_element.iter_subtree():
        style = style_for(element.etree_element)
        for kind in (boxes.BlockBox, boxes.InlineBox, boxes.InlineBlockBox, boxes.TableCellBox,
                     boxes.FlexBox, boxes.LineBox):
            box = kind(element.etree_element.tag, style, element.etree_element, [])
            out.append((element.etree_element.tag, kind.__name__, box.is_in_normal_flow(),
                        box.establishes_formatting_context()))
    return out


def test_flow_tests_are_weasyprints_own(general):
    reference = _flow(weasyprint.HTML(string=_HTML))
    assert fast_layout.install()
    fast = _flow(weasyprint.HTML(string=_HTML))
    assert fast == reference
    # Each answer is there: in flow or not, a formatting context or not.
    assert {(r[2], r[3]) for r in reference} == {(True, True), (True, False),
                                                 (False, True), (False, False)}
    assert {r[0] for r in reference if not r[2]} >= {"span", "div", "h1"}


@pytest.mark.slow
def test_parts_and_whole_note_are_the_same_bytes_as_with_weasyprints_own(
        general, monkeypatch, tmp_path):
    ctx = make_context()          # a failing snubber: its caution box holds a list
    parts = note_parts(ctx)

    def render(name):
        out = render_parts(parts)
        report.render_document(ctx, tmp_path / name, source_date_epoch=EPOCH)
        return out

    install = fast_layout.install
    monkeypatch.setattr(fast_layout, "install", lambda: False)   # the renderer asks
    reference = render("own.pdf")
    assert not fast_layout.installed()
    monkeypatch.setattr(fast_layout, "install", install)
    fast = render("fast.pdf")
    assert fast_layout.installed()
    for a, b in zip(fast, reference):
        assert a["pages"] == b["pages"] >= 1
        assert a["pdf"] == b["pdf"]
    assert (tmp_path / "fast.pdf").read_bytes() == (tmp_path / "own.pdf").read_bytes()


def _laid_out(document) -> list:
    """Every box laid out in ``document`` (an absolute box's own box)."""
    out = []

    def walk(box):
        box = getattr(box, "_box", box)        # an absolute box's placeholder
        out.append(box)
        for child in getattr(box, "children", ()) or ():
            walk(child)

    for page in document.pages:
        walk(page._page_box)
    return out


def test_kept_answers_are_weasyprints_own(general):
    # The used lengths and line struts kept per style are read again at later calls
    # (table cells and their lines share styles): each kept one is weasyprint's own
    # answer for that style, computed afresh.
    from weasyprint.layout import percent
    from weasyprint.text import line_break
    own_strut, own_resolve = line_break.strut, percent.resolve_percentages
    html = _HTML.replace("</body>", "<table>" + "<tr><td>x</td><td>2 %</td></tr>" * 30
                         + "</table></body>")
    reference = _boxes(weasyprint.HTML(string=html).render())
    assert fast_layout.install()
    document = weasyprint.HTML(string=html).render()
    assert _boxes(document) == reference
    struts = used = 0
    for box in {id(box.style): box for box in _laid_out(document)}.values():
        kept = box.style.__dict__.get("_rcdoc_strut")
        if kept is not None:
            struts += 1
            assert kept == own_strut(box.style)
        for (width, height, _), (lengths, _, _) in box.style.__dict__.get(
                "_rcdoc_used", {}).items():
            used += 1
            fresh = copy.copy(box)
            for name in lengths:
                delattr(fresh, name)
            own_resolve(fresh, (width, height))
            assert lengths == {name: getattr(fresh, name) for name in lengths}
    assert struts > 10 and used > 20


# Used lengths every way CSS 2.1 §10 and CSS Box Sizing 3 give them, in boxes that
# share styles across containing blocks of other sizes: percentages of widths and
# of auto and fixed heights (0 % of an infinite maximum height is NaN), calc(),
# min() and max(), border-box and padding-box sizing, percentages on pages and
# margin boxes, collapsed and separate table borders, floats beside lines (left,
# right, in cells), right-to-left blocks and cells, and containing blocks placed
# by fractions of a pixel (sums in another order give other floats).
_EDGES = """<html><head><style>
@page { size: 333.3px 444.4px; margin: 3% 1.7% 2.9% 5%;
        @top-left { content: "head"; width: 33.3%; padding: 1% } }
body { font: 8px/1.3 "DejaVu Sans"; margin: 0.1px 0.2px; padding: 0.3px 0.7px;
       border-left: 0.35px solid }
div { margin-left: 0.1px; padding-left: 0.2px; border-left: 0.45px solid }
.w1 { width: 33.3333% } .w2 { width: 71.7%; margin-right: 3.3% }
.h { height: 61.1px } .hp { height: 37% } .hc { height: calc(40% + 1.1px) }
td { padding: 1.5% 2px 0.7% 3.3%; border: 0.6px solid; height: 10%; min-height: 5%;
     max-height: 0% }
td.c { padding: calc(1% + 0.4px) min(3%, 2px) max(0.1px, 2%) 0; width: calc(50% - 1.1px) }
td.bb { box-sizing: border-box; width: 40%; padding: 1px 2%; border: 1.3px solid }
td.pb { box-sizing: padding-box; height: 30px; padding: 0.9px 0; max-width: 80% }
table { border-collapse: collapse } table.sep { border-collapse: separate;
        border-spacing: 0.5px 1.5px }
.rtl { direction: rtl } .fl { float: left; width: 20%; height: 2.5em }
.fr { float: right; width: 15%; margin: 0.3px } .ib { display: inline-block; width: 30%;
      padding: 2%; min-width: calc(10% + 1px) }
.mh { min-height: 12%; max-height: 80%; height: 50%; margin: 1% 2% }
</style></head><body>
""" + "".join(f"""<div class="{w}{h}">
<p>Lines in a block of its own width, long enough to wrap at least twice over here.</p>
<table class="{t}"><tr><td>a cell</td><td class="c">a calc cell with words</td>
<td class="bb">border box</td><td class="pb">padding box</td></tr>
<tr><td class="rtl">עברית abc</td><td colspan="3">spanning <span class="ib">ib</span></td></tr>
</table>
<p><span class="fl">left float</span>Text beside a float to the left, and more text
to wrap below it.<span class="fr">right</span> Then a line or two more than that.</p>
<div class="rtl mh"><p>abc right to left, lines long enough to wrap, ! (1) x</p>
<span class="fr">float in rtl</span><p>another line</p></div>
</div>""" for w, h, t in (("w1", " h", ""), ("w2", " hp", "sep"), ("w1", " hc", "sep"),
                            ("w2", "", ""))) + "</body></html>"


def _checking(patch, name, check) -> list:
    """Each short path installed as ``name`` wrapped: ``check(short, own, args,
    kwargs)`` runs at each call and returns (the call's result, a record)."""
    records = []
    for owner, attribute, own in fast_layout._SAVED:
        if attribute == name:
            short = owner.__dict__[name]

            def checked(*args, _short=short, _own=own, **kwargs):
                result, record = check(_short, _own, args, kwargs)
                records.append(record)
                return result

            patch.setattr(owner, name, checked)
    return records


def _same_used_lengths(short, own, args, kwargs):
    # weasyprint's own on a copy of the box as it was before the call
    box, before = args[0], copy.copy(args[0])
    short(*args, **kwargs)
    own(before, *args[1:], **kwargs)
    assert ([repr(getattr(box, name, None)) for name in _LENGTHS]
            == [repr(getattr(before, name, None)) for name in _LENGTHS]), type(box)
    return None, type(box).__name__


def _same_place(short, own, args, kwargs):
    context, box = args[:2]
    mine, theirs = short(*args, **kwargs), own(*args, **kwargs)
    assert repr(mine) == repr(theirs), (type(box), kwargs)
    return mine, (type(box).__name__, bool(context.excluded_shapes),
                  args[2].style["direction"])


@pytest.mark.parametrize("html", [_EDGES, _HTML], ids=["edges", "features"])
def test_every_call_is_answered_as_weasyprint_answers(general, monkeypatch, html):
    # Each call of the short paths, in a whole layout: the box's used lengths and the
    # line's place are the ones weasyprint's own functions give at that call.
    reference = weasyprint.HTML(string=html).render()
    assert fast_layout.install()
    with monkeypatch.context() as patch:
        resolved = _checking(patch, "resolve_percentages", _same_used_lengths)
        placed = _checking(patch, "avoid_collisions", _same_place)
        document = weasyprint.HTML(string=html).render()
    assert _boxes(document) == _boxes(reference)
    assert document.write_pdf() == reference.write_pdf()
    assert {"TableCellBox", "LineBox", "PageBox", "MarginBox"} <= set(resolved)
    kinds = set(placed)
    assert ("LineBox", False, "ltr") in kinds and ("LineBox", True, "ltr") in kinds
    if html is _EDGES:
        # lines beside floats and without, in right-to-left blocks too
        assert {("LineBox", False, "rtl"), ("LineBox", True, "rtl")} <= kinds
        # answers kept for styles met in containing blocks of several sizes
        kept = [len(box.style.__dict__.get("_rcdoc_used", ()))
                for box in {id(box.style): box for box in _laid_out(document)}.values()]
        assert sum(kept) > 20 and max(kept) >= 2


def test_a_line_is_placed_by_weasyprints_arithmetic(general):
    # Lengths whose sums depend on their order, margins the lines of documents do
    # not have: each of the short path's operations is weasyprint's, in its order.
    import random
    from weasyprint.formatting_structure import boxes
    from weasyprint.layout import float as floats
    own = floats.avoid_collisions
    assert fast_layout.install()
    short = floats.avoid_collisions
    assert short is not own
    root = weasyprint.HTML(string="<p dir=rtl>x</p><p>y</p>").render().pages[0]._page_box
    blocks = root.children[0].children[0].children       # the two paragraphs
    assert [b.style["direction"] for b in blocks] == ["rtl", "ltr"]
    context = type("Context", (), {"excluded_shapes": []})()
    rng = random.Random(70)
    for trial in range(400):
        block = blocks[trial % 2].copy()
        line = boxes.LineBox.anonymous_from(blocks[rng.randrange(2)], [])   # any direction
        for box in (block, line):
            for name in _LENGTHS:
                setattr(box, name, rng.choice([0, 1, -0.0, 1e16])
                        + rng.random() * 10 ** rng.randint(-3, 3))
        for outer in (False, True):
            args = (context, line, block, outer)
            assert repr(short(*args)) == repr(own(*args))


# Lines in blocks and in cells of tables of three widths, with percentages, and
# no float: the lines of a paragraph share a style and a containing block.
_PLAIN = """<html><head><style>
@page { size: 300px 400px; margin: 10px } body { font: 8px/1.2 "DejaVu Sans" }
td { padding: 1% 2px; border: 0.5px solid } td.p { width: 30% }
p { margin: 0 0 2px } p.h { height: 40% }
</style></head><body>""" + "".join(
    f"<div style='width: {w}px'><p class=h>{'A paragraph of lines to wrap. ' * 12}</p>"
    f"<table><tr><td class=p>{'cell text ' * 8}</td><td>more cell text</td></tr>"
    "<tr><td>a</td><td class=p>b</td></tr></table></div>" for w in (150, 200.5, 280) * 2
) + "</body></html>"


def _counted(patch) -> collections.Counter:
    """Calls of weasyprint's own avoid_collisions, by kind of box, where the short
    path hands a case on to it, and of its adjust_box_sizing, which the used
    lengths' short path calls twice for each box it computes (not copies)."""
    from weasyprint import layout
    calls = collections.Counter()
    for home, name, which in ((layout.float, "avoid_collisions", 1),
                              (layout.percent, "adjust_box_sizing", None)):
        own = home.__dict__[name]

        def counted(*args, _name=name, _own=own, _which=which, **kwargs):
            calls[_name, None if _which is None else type(args[_which]).__name__] += 1
            return _own(*args, **kwargs)

        for module in vars(layout).values():
            if getattr(module, "__dict__", {}).get(name) is own:
                patch.setattr(module, name, counted)
    return calls


@pytest.mark.parametrize("extra, line_beside_a_float", [
    ("", False), ("<p><span style='float: left'>float</span> beside it</p>", True),
], ids=["plain", "float"])
def test_the_short_paths_are_taken(general, monkeypatch, extra, line_beside_a_float):
    html = _PLAIN.replace("</body>", extra + "</body>")
    reference = weasyprint.HTML(string=html).write_pdf()
    with monkeypatch.context() as patch:
        calls = _counted(patch)
        assert fast_layout.install()            # the short paths hand on to the counted
        try:
            with monkeypatch.context() as wrap:     # undone before the uninstall
                resolved = _checking(wrap, "resolve_percentages",
                                     lambda short, own, args, kw: (short(*args, **kw), 1))
                placed = _checking(wrap, "avoid_collisions",
                                   lambda short, own, args, kw: (short(*args, **kw), 1))
                document = weasyprint.HTML(string=html).render()
                pdf = document.write_pdf()
        finally:
            fast_layout.uninstall()
    from weasyprint.layout import block, float as floats, inline
    assert {block.resolve_percentages.__module__, inline.avoid_collisions.__module__,
            floats.avoid_collisions.__module__} == {"weasyprint.layout.percent",
                                                    "weasyprint.layout.float"}
    assert pdf == reference
    # Lines placed by weasyprint's own code only beside the float; the tables'
    # wrappers (not lines) always.
    lines = sum(1 for b in _laid_out(document) if type(b).__name__ == "LineBox")
    assert lines > 20 and len(placed) >= 3 * lines
    assert calls["avoid_collisions", "LineBox"] == (3 if line_beside_a_float else 0)
    assert calls["avoid_collisions", "BlockBox"] >= 6 + line_beside_a_float  # + the float
    # Most boxes copy used lengths kept for their style and containing block.
    computed = calls["adjust_box_sizing", None] / 2
    assert 0 < computed < len(resolved) / 2


# Text whose drawing needs a layout other than the measured one, or that Pango
# breaks inside one paragraph: justified lines (their word spacing is set only
# to draw), an ellipsis, preserved newlines and tabs, a line separator (U+2028,
# a mandatory break in Unicode line breaking, UAX #14), letter and word
# spacing, right-to-left text, a text too long for its cell, and SVG text.
_TEXTS = """<html lang="en"><head><style>
@page { size: 220px 300px; margin: 8px }
body { font: 9px/1.2 "DejaVu Sans" }
.j { text-align: justify; width: 120px }
.e { width: 60px; white-space: nowrap; overflow: hidden; text-overflow: ellipsis }
.s { letter-spacing: 1.5px; word-spacing: 4px }
td { border: 1px solid; width: 30px; overflow-wrap: anywhere }
</style></head><body>
<p class="j">Justified text set over several lines so that the word spacing of
every line but the last is stretched to the full width of its box, twice.</p>
<p class="e">An ellipsis ends this line long before its end</p>
<pre>pre line one\tand a tab
line two\rthree</pre>
<p>a line\u2028separator and a paragraph\u2029separator</p>
<p class="s">spaced out words</p><p dir="rtl">טקסט abc עברי (1)</p>
<table><tr><td>Averyveryverylongword</td><td>10 kΩ</td></tr></table>
<svg width="120" height="30"><text x="4" y="20" font-size="10">SVG text Ω</text></svg>
</body></html>"""


def _shaped(html: str, monkeypatch) -> tuple[bytes, int]:
    """The PDF of ``html``, and how many Pango layouts its drawing made (after
    the layout of its pages)."""
    from weasyprint.text import line_break
    made = []
    setup = line_break.Layout.setup

    def counted(self, style):
        made.append(1)
        return setup(self, style)

    with monkeypatch.context() as patch:
        patch.setattr(line_break.Layout, "setup", counted)
        document = weasyprint.HTML(string=html).render()
        measured = len(made)
        pdf = document.write_pdf()
    return pdf, len(made) - measured


def test_each_line_is_shaped_once_and_drawn_the_same(general, monkeypatch):
    # weasyprint measures a line with a Pango layout, drops it, and makes and shapes
    # it again to draw it; the kept layout is drawn instead, where it is the same.
    plain = _HTML.replace("</body>", "<p>plain text</p>" * 40 + "</body>")
    for html in (_HTML, _TEXTS, plain):
        reference, redrawn = _shaped(html, monkeypatch)
        assert redrawn > 20                      # weasyprint: every drawn line again
        assert fast_layout.install()
        reused = fast_margins.counts["reused"]
        try:
            pdf, again = _shaped(html, monkeypatch)
        finally:
            fast_layout.uninstall()
        # A page whose margin boxes are a copy of an earlier page's draws their line
        # (one here) with a layout of its own (rcdoc.note.fast_margins).
        again -= fast_margins.counts["reused"] - reused
        assert pdf == reference
        if html is _TEXTS:
            # Made again to draw: the justified lines, the lines with breaks in them.
            assert 0 < again < redrawn
        else:
            assert again == 0


# Pages of every kind CSS Paged Media 3 selects (:first, :left, :right, :blank,
# named pages, nth()), margin boxes reading the page counters and strings that
# change from page to page, margins of other sizes: styles are handed out again
# only where the same rules cascade onto two page types.
_PAGES = """<html><head><style>
@page { size: 200px 260px; margin: 30px 20px;
        @top-left { content: string(t) } @bottom-right { content: counter(page) " / " counter(pages) } }
@page :first { margin-top: 50px; @top-left { content: none } }
@page :left { @bottom-left { content: "left " counter(page); width: 40% } }
@page :right { margin-right: 35px }
@page :blank { @top-center { content: "blank" } }
@page :nth(4) { @top-right { content: "fourth"; color: red } }
@page wide { size: 300px 200px; margin: 10px; @top-left { content: "wide: " string(t) } }
@page wide:nth(2 of wide) { margin-left: 40px }
h1 { string-set: t content(); font: 12px sans-serif; break-before: right }
.w { page: wide }
p { font: 10px/1.3 sans-serif; margin: 0 0 4px }
</style></head><body>
""" + "".join(f"<h1>Chapter {i}</h1>" + "<p>Line of text in the chapter.</p>" * (5 + 7 * i)
              + ("<section class='w'>" + "<p>On a wide page.</p>" * 30 + "</section>"
                 if i == 1 else "") for i in range(3)) + "</body></html>"


def test_page_styles_are_shared_only_where_the_same_rules_apply(general):
    reference_doc = weasyprint.HTML(string=_PAGES).render()
    reference = reference_doc.write_pdf()
    assert len(reference_doc.pages) >= 10
    assert fast_layout.install()
    document = weasyprint.HTML(string=_PAGES).render()
    assert _boxes(document) == _boxes(reference_doc)
    assert document.write_pdf() == reference
    # Fewer page styles than pages, more than one (first, left, right, blank, nth,
    # wide pages differ), and each page's margin boxes carry its own page's styles.
    pages = [page._page_box for page in document.pages]
    distinct = {id(page.style) for page in pages}
    assert 5 <= len(distinct) < len(pages)
    for a, b in zip(pages, [page._page_box for page in reference_doc.pages]):
        assert a.page_type == b.page_type
        for prop in ("margin_top", "margin_right", "margin_left", "width", "height"):
            assert getattr(a, prop) == getattr(b, prop)


def test_page_styles_read_before_the_first_page_size_are_not_shared(general):
    # The first page's style is read before its size is known: its font size in
    # viewport units is then read against A4 (weasyprint's css/units.py), its
    # margin text larger than on the next pages though their rules are the same.
    html = ("<html><head><style>@page { size: 400px 300px; margin: max(40px, 1em);"
            " font-size: 3vw; @top-center { content: 'the same on each page' } }"
            " body { font: 10px 'DejaVu Sans' }</style></head><body>"
            + "<p>filler line</p>" * 80 + "</body></html>")
    reference = weasyprint.HTML(string=html).render()
    assert fast_layout.install()
    fast = weasyprint.HTML(string=html).render()
    assert len(fast.pages) >= 4
    assert _boxes(fast) == _boxes(reference)
    assert fast.write_pdf() == reference.write_pdf()
    sizes = [p._page_box.style["font_size"] for p in fast.pages]
    assert sizes[0] != sizes[1] == sizes[-1]


def test_a_stage_part_computes_its_page_styles_once(general):
    ctx = make_context()
    part = {**assemble._head(ctx), "stages": ctx["stages"] * 3}     # a page break each
    assert fast_layout.install()
    made = []
    from weasyprint.css import StyleFor
    own = StyleFor.set_computed_styles

    def counting(self, element, *args, **kwargs):
        if not hasattr(element, "tag"):         # a page type, not an element
            made.append(element)
        return own(self, element, *args, **kwargs)

    StyleFor.set_computed_styles = counting
    try:
        out = assemble.render_part(part, "stage", source_date_epoch=EPOCH)
    finally:
        StyleFor.set_computed_styles = own
    assert out["pages"] >= 5
    # The first page's styles, the second's, and the others' no more: not a set
    # per page (the first page's are made before its size is known).
    assert len({page_type.index for page_type in made}) == 2
