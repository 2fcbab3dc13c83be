"""Tests of rcdoc.note.fast_stacking: weasyprint 70's stacking contexts made
without copying the boxes they leave as they are.

The reference is weasyprint itself: its own ``_dispatch_children`` (the short
paths put back around each test), which must give the same PDF bytes and the
same stacking contexts (the same boxes in each list, in the same order, by
their place, size and text). The CSS exercised is from CSS 2.1 Appendix E and
§9.9 (the painting order: positioned boxes with and without a z-index,
negative ones, floats, inline blocks, tables), CSS Color 4 (``opacity``), CSS
Transforms 1 and CSS Overflow 3 (boxes that make contexts of their own), and
absolutely positioned boxes inside lines, as weasyprint implements them.
"""

from __future__ import annotations

import collections

import weasyprint

from rcdoc.note import fast_layout, fast_stacking
from test_report import make_context
from weasyprint_own import general, note_parts, render_parts, same_parts  # noqa: F401 - general: a fixture


def _with_short_path(render):
    """``render()`` with the short path in place; its result and how many boxes
    it handed on themselves ("same") and copied ("copied")."""
    from weasyprint import stacking
    own = stacking.__dict__["_dispatch_children"]
    [(owner, name, new)] = fast_stacking.replacements()
    assert (owner, name) == (stacking, "_dispatch_children") and new is not own
    counts = collections.Counter()

    def counted(box, *args):
        result = new(box, *args)
        counts["same" if result is box else "copied"] += 1
        return result

    stacking._dispatch_children = counted
    try:
        return render(), counts
    finally:
        stacking._dispatch_children = own


def _contexts(document) -> list:
    """Each page's stacking contexts, depth first: every list's boxes by type,
    place, size and text."""
    from weasyprint.stacking import StackingContext

    def box_row(box):
        return (type(box).__name__, box.element_tag, box.position_x, box.position_y,
                getattr(box, "width", None), getattr(box, "text", None),
                len(getattr(box, "children", ()) or ()))

    def walk(context, out):
        out.append(("context", box_row(context.box), context.z_index))
        out.append(("blocks", [box_row(b) for b in context.block_level_boxes]))
        out.append(("cells", sorted(repr(box_row(b)) for b in context.blocks_and_cells)))
        for name in ("negative_z_contexts", "zero_z_contexts", "positive_z_contexts",
                     "float_contexts"):
            for child in getattr(context, name):
                walk(child, out)
        return out

    return [walk(StackingContext.from_page(page._page_box), []) for page in document.pages]


_HOSTILE = """<html><head><style>
@page { size: 300px 260px; margin: 10px }
body { font: 8px/1.2 "DejaVu Sans"; margin: 0 }
.rel { position: relative; top: 2px } .z { position: relative; z-index: 2 }
.neg { position: relative; z-index: -1; background: #fcc }
.abs { position: absolute; right: 4px; top: 30px; background: #cfc }
.fl { float: right; width: 40px; background: #ccf } .op { opacity: 0.6 }
.tr { transform: rotate(3deg) } .ov { overflow: hidden; height: 20px }
.ib { display: inline-block; border: 1px solid } td { border: 1px solid #999 }
</style></head><body>
<p>Plain text, <span>a span</span> and <em>more</em>.</p>
<div class="rel">relative <span class="z">z two</span> <b class="neg">z minus one</b></div>
<p>A line with <span class="abs">absolute</span> in it and a <span class="fl">float</span>.</p>
<div class="op">Translucent <span class="ib">inline block</span></div>
<div class="tr">Turned</div><div class="ov">Cut short<br>line two<br>line three</div>
<table><tr><td>a</td><td class="rel">b</td></tr><tr><td><span class="ib">c</span></td>
<td>d</td></tr></table>
""" + "<p>Filler line to the next page.</p>" * 24 + "</body></html>"


def test_replacements_are_for_weasyprint_70_only(general, monkeypatch):
    assert len(fast_stacking.replacements()) == 1
    monkeypatch.setattr(weasyprint, "__version__", "71.0")
    assert fast_stacking.replacements() == []


def test_hostile_pages_paint_as_weasyprints_own(general):
    document = weasyprint.HTML(string=_HOSTILE).render()
    reference, contexts = document.write_pdf(), _contexts(document)
    (pdf, again), counts = _with_short_path(lambda: (document.write_pdf(), _contexts(document)))
    assert pdf == reference and again == contexts
    assert len(document.pages) >= 2
    # Boxes that lose a child to a context or a float are copied; most are not.
    assert counts["copied"] >= 5 and counts["same"] > 5 * counts["copied"]
    # Painted twice, the same bytes (nothing that draws writes into the boxes).
    (twice, _), _ = _with_short_path(lambda: (document.write_pdf(), None))
    assert twice == reference


def test_example_note_parts_are_weasyprints_own(general, monkeypatch):
    parts = note_parts(make_context())
    install = fast_layout.install
    monkeypatch.setattr(fast_layout, "install", lambda: False)   # the renderer asks
    reference = render_parts(parts)
    alone, counts = _with_short_path(lambda: render_parts(parts))
    monkeypatch.setattr(fast_layout, "install", install)
    with_layout = render_parts(parts)
    same_parts((alone, with_layout), reference)
    assert counts["same"] > 100
