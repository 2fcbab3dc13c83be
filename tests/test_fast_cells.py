"""Tests of rcdoc.note.fast_cells: a table cell laid out once where weasyprint
70 lays it out again after an attempt it dropped.

The reference is weasyprint itself: its own ``block_container_layout`` (the
short paths put back around each test), which must give the same PDF bytes,
the same boxes in the same places (to the last bits of a float: a kept cell is
moved, where weasyprint adds the same offsets to the new place) and the same
log records. The CSS exercised is from CSS Fragmentation 3 (``break-inside:
avoid``, a block taller than what is left of the page moved to the next, a page
too small for it, orphans and widows), CSS Paged Media 3 (``:first`` pages of
another size), CSS 2.1 §17 (tables: repeated header groups, ``rowspan``,
``vertical-align`` in cells, a cell's ``height``), CSS Generated Content 3
(``target-counter()`` of a page number), CSS Positioned Layout 3, floats,
inline blocks, images and footnotes (CSS GCPM 3) in cells, as weasyprint
implements them.
"""

from __future__ import annotations

import collections
import contextlib
import math

import pytest
import weasyprint

from rcdoc.note import fast_cells, fast_layout
from test_report import _stage, make_context
from weasyprint_own import general, note_parts, render_parts, rendered, same_parts  # noqa: F401 - general: a fixture

_NAME = "block_container_layout"


@contextlib.contextmanager
def _short_path():
    """The short path in place of weasyprint's own; yields counts of the cells
    handed out again ("again"), refused ("refused": not given as they were, or
    not fitting) and of the calls of weasyprint's own ("general"), and under
    "cells" the text of each table cell laid out, with "again" or "general"."""
    from weasyprint.formatting_structure import boxes
    from weasyprint.layout import block
    own = block.__dict__[_NAME]
    counts = collections.Counter()
    again = fast_cells._again

    def counted_again(entry, box, foot):
        result = again(entry, box, foot)
        counts["again" if result is not None else "refused"] += 1
        if result is not None:
            counts["cells"] += [(_text(box), "again")]
        return result

    def counted_own(context, box, *args):
        counts["general"] += 1
        if isinstance(box, boxes.TableCellBox):
            counts["cells"] += [(_text(box), "general")]
        return own(context, box, *args)

    try:
        counts["cells"] = []
        block.block_container_layout = counted_own
        [(owner, name, new)] = fast_cells.replacements()
        assert (owner, name) == (block, _NAME)
        block.block_container_layout = new
        fast_cells._again = counted_again
        yield counts
    finally:
        block.block_container_layout = own
        fast_cells._again = again


def _text(box) -> str:
    return "".join(box.element.itertext()) if box.element is not None else ""


def _boxes(document) -> list[tuple]:
    """Every box of every page: its type, tag, text, place and size."""
    out = []
    for number, page in enumerate(document.pages):
        for box in page._page_box.descendants(placeholders=True):
            out.append((number, type(box).__name__, box.element_tag, getattr(box, "text", None),
                        *(getattr(box, key, None) for key in
                          ("position_x", "position_y", "width", "height", "padding_top",
                           "margin_top", "baseline"))))
    return out


def _render(html: str):
    """The PDF, the boxes, weasyprint's log records and the page count."""
    return rendered(html, _boxes)


def _same_boxes(ours: list, theirs: list) -> None:
    assert len(ours) == len(theirs)
    for a, b in zip(ours, theirs):
        assert a[:4] == b[:4]
        for x, y in zip(a[4:], b[4:]):
            if isinstance(x, float) and isinstance(y, float):
                # A kept cell is moved: its boxes' places may differ in the last bits.
                assert math.isclose(x, y, rel_tol=1e-12, abs_tol=1e-9), (a, b)
            else:
                assert x == y, (a, b)


def _same_as_weasyprints_own(html: str):
    reference = _render(html)
    with _short_path() as counts:
        short = _render(html)
    assert short[0] == reference[0]          # the PDF, byte for byte
    _same_boxes(short[1], reference[1])
    assert short[2] == reference[2]          # the log records, in order
    assert short[3] == reference[3]
    return reference, counts


_STYLE = """<style>
@page { size: 320px 300px; margin: 10px }
body { font: 8px/1.25 "DejaVu Sans"; margin: 0; color: #223 }
table { border-collapse: collapse; width: 100%; margin: 2px 0 }
td, th { border: 1px solid #667; padding: 1px 3px }
.keep { break-inside: avoid }
.fill { height: 190px; background: #eef }
.badge { padding: 1px 3px; background: #cec; border: 1px solid #4a4 }
.mid td { vertical-align: middle } .bottom td { vertical-align: bottom }
.ref::after { content: " p. " target-counter(attr(href), page) }
.note { float: footnote }
</style>"""

_IMAGE = ("data:image/svg+xml,<svg xmlns='http://www.w3.org/2000/svg' width='12' height='9'>"
          "<rect width='12' height='9' fill='teal'/></svg>")


_IMAGE_TAG = f'<img src="{_IMAGE}"> image'


def _cells(n: int, extra: str = "") -> str:
    """Rows of plain cells of text, a badge, two lines, numbers; ``extra`` in the
    third column of every third row."""
    rows = []
    for i in range(n):
        third = extra if extra and i % 3 == 1 else f"{i * 1.5:.2f} V"
        rows.append(f"<tr><td>row {i}</td><td><span class='badge'>pass</span> ok</td>"
                    f"<td>{third}</td><td>line one<br>line two of {i}</td></tr>")
    return "".join(rows)


def _kept_table(n: int, extra: str = "", row_class: str = "") -> str:
    return (f"<div class='keep'><h3>Table of {n}</h3><table class='{row_class}'>"
            f"<thead><tr><th>a</th><th>b</th><th>c</th><th>d</th></tr></thead>"
            f"<tbody>{_cells(n, extra)}</tbody></table><p>After the table.</p></div>")


# Kept blocks at the foot of a page that go to the next (their cells handed out
# again), in both vertical alignments and with cells the short path must leave to
# weasyprint: an image, an inline block, a float, a block, a relatively
# positioned span, a page number waiting on its target, a height.
_HOSTILE = f"""<html><head>{_STYLE}</head><body>
<div class="fill"></div>
{_kept_table(9)}
<div class="fill"></div>
{_kept_table(8, _IMAGE_TAG, "mid")}
<div class="fill"></div>
{_kept_table(8, "<span style='display: inline-block; width: 20px'>ib</span>", "bottom")}
<div class="fill"></div>
{_kept_table(8, "<span style='float: right'>f</span> text")}
<div class="fill"></div>
{_kept_table(8, "<p style='margin: 0'>a block</p>")}
<div class="fill"></div>
{_kept_table(8, "<span style='position: relative; top: 1px'>moved</span>")}
<div class="fill"></div>
{_kept_table(8, "<a class='ref' href='#end'>see</a>")}
<div class="fill"></div>
{_kept_table(8, "<span style='display: block; height: 14px'>tall</span>")}
<div class="fill"></div>
<div class="keep"><table><tr><td style="height: 30px">high</td><td>x</td></tr>
{_cells(9)}</table></div>
<table><thead><tr><th>head</th><th>again</th></tr></thead><tbody>
{"".join(f"<tr><td>long {i}</td><td>{'word ' * (i % 4 + 1)}</td></tr>" for i in range(60))}
</tbody></table>
<p id="end">The end.</p>
</body></html>"""


def test_replacements_are_for_weasyprint_70_only(general, monkeypatch):
    from weasyprint.layout import block
    [(owner, name, function)] = fast_cells.replacements()
    assert (owner, name) == (block, _NAME) and function is not block.__dict__[_NAME]
    # table_layout imports the function from layout.block at each call: the only
    # holder the short path must replace. Modules that hold it under its name call
    # it for blocks that are no table cells.
    monkeypatch.setattr(weasyprint, "__version__", "71.0")
    assert fast_cells.replacements() == []


def test_hostile_cells_are_weasyprints_own_and_taken_again(general):
    (pdf, boxes, records, pages), counts = _same_as_weasyprints_own(_HOSTILE)
    assert pages >= 12
    # Cells were handed out again (the kept tables moved to the next page) and
    # weasyprint's own laid out the others.
    assert counts["again"] >= 60
    assert counts["general"] > counts["again"]
    # The page number is there (the refusals are tested below).
    assert any((b[3] or "").startswith(" p. ") for b in boxes)


def test_a_document_with_footnotes_is_laid_out_by_weasyprints_own(general):
    # A footnote's call is laid out with its line and its note placed at the page's
    # foot (CSS GCPM 3): where a document has footnotes, no cell is kept.
    html = (f"<html><head>{_STYLE}</head><body><div class='fill'></div>"
            f"{_kept_table(9, 'text<span class=note>a footnote</span>')}</body></html>")
    (_, boxes, _, pages), counts = _same_as_weasyprints_own(html)
    assert pages >= 2 and any(b[1] == "FootnoteAreaBox" for b in boxes)
    assert counts["again"] == counts["refused"] == 0 and len(counts["cells"]) > 40


def _cells_with(extra: str) -> tuple[str, set]:
    """A page with one kept table moved to the next page whose third column holds
    ``extra`` in every third row, and the rows whose cells hold it."""
    html = f"<html><head>{_STYLE}</head><body><div class='fill'></div>{_kept_table(9, extra)}</body></html>"
    return html, {i for i in range(9) if i % 3 == 1}


@pytest.mark.parametrize(("extra", "marker"), [
    (_IMAGE_TAG, "image"),
    ("<span style='display: inline-block; width: 20px'>ib</span>", "ib"),
    ("<span style='float: right'>f</span> text", "f text"),
    ("<p style='margin: 0'>a block</p>", "a block"),
    ("<span style='position: relative; top: 1px'>moved</span>", "moved"),
    ("<span style='position: absolute; top: 1px'>away</span> text", "away text"),
])
def test_cells_that_are_not_lines_of_text_are_not_kept(general, extra, marker):
    html, _ = _cells_with(extra)
    _, counts = _same_as_weasyprints_own(html)
    cells = counts["cells"]
    # The cell holding it in row 1 was laid out in both attempts, by weasyprint's
    # own each time; the other cells of its row were handed out again.
    ways = [way for text, way in cells if marker in text]
    assert len(ways) == 4 and set(ways) == {"general"}       # rows 1 (twice), 4 and 7
    assert ("row 1", "again") in cells and ("0.00 V", "again") in cells


def test_cells_whose_lines_take_an_ellipsis_are_not_kept(general):
    # CSS Overflow 3: text-overflow applies to a block whose overflow is not
    # visible; weasyprint writes the ellipsis into the line's Pango layout as it
    # draws it, and the copies of a kept cell would share that layout.
    cut = "<td style='overflow: hidden; text-overflow: ellipsis; white-space: nowrap'>"
    rows = "".join(f"<tr><td>row {i}</td>{cut}{'a long cell cut short ' * 4}</td></tr>"
                   for i in range(9))
    html = (f"<html><head>{_STYLE}</head><body><div class='fill'></div><div class='keep'>"
            f"<table style='table-layout: fixed'>{rows}</table></div></body></html>")
    _, counts = _same_as_weasyprints_own(html)
    assert ("row 0", "again") in counts["cells"]
    ways = [way for text, way in counts["cells"] if text.startswith("a long cell")]
    assert len(ways) > 9 and set(ways) == {"general"}


def test_a_cell_that_would_not_fit_where_it_goes_is_laid_out_again(general):
    # The first page is tall, the others short (CSS Paged Media 3, :first): cells
    # laid out at the foot of the first page do not all fit on the second, where
    # their table goes. Those are refused and laid out by weasyprint's own.
    html = _HOSTILE.split("<body>")[0].replace(
        "@page { size: 320px 300px; margin: 10px }",
        "@page { size: 320px 300px; margin: 10px 10px 240px } @page :first { margin: 10px }")
    html += f"<body><div class='fill'></div>{_kept_table(12)}{_kept_table(3)}</body></html>"
    (_, _, _, pages), counts = _same_as_weasyprints_own(html)
    assert pages >= 3
    assert counts["refused"] > 0 and counts["again"] > 0


def test_a_cell_given_otherwise_is_laid_out_again(general):
    # A cell with a height gets a new style at each layout (table_layout copies it
    # to lay the cell out at its content's height): never the same, never kept.
    html = (f"<html><head>{_STYLE}</head><body><div class='fill'></div><div class='keep'><table>"
            + "<tr><td style='height: 18px'>tall</td><td>plain</td></tr>" * 12
            + "</table></div></body></html>")
    _, counts = _same_as_weasyprints_own(html)
    # Each row laid out at the first page's foot: its plain cell handed out again,
    # its cell with a height refused.
    assert counts["again"] == counts["refused"] >= 3


@pytest.mark.slow
def test_example_note_parts_are_weasyprints_own(general, monkeypatch):
    # With a stage of tables of twelve rows, each kept whole: they meet page feet.
    rows = [[f"metric {i}", "9 kHz … 11 kHz", f"{9 + i / 10:.2f} kHz", "pass"] for i in range(12)]
    blocks = [{"type": "table", "title": f"Checks {n}", "rows": rows, "note": "Worst of 2000.",
               "columns": ["Metric", "Requirement", "Worst", "Verdict"]} for n in range(9)]
    parts = note_parts(make_context(), {**_stage("long", "A long stage", "pass"), "blocks": blocks})
    install = fast_layout.install
    monkeypatch.setattr(fast_layout, "install", lambda: False)   # the renderer asks
    reference = render_parts(parts)
    with _short_path():
        alone = render_parts(parts)
    monkeypatch.setattr(fast_layout, "install", install)
    try:
        with _short_path() as counts:
            with_layout = render_parts(parts)
            assert fast_layout.installed()
    finally:
        fast_layout.uninstall()     # before the short path is taken away
    same_parts((alone, with_layout), reference)
    assert counts["again"] > 0


def test_the_kept_cells_live_as_long_as_their_layout(general):
    # The kept cells are the layout context's (one document's): a second
    # document starts with none, and a cell is only handed out for itself.
    html, _ = _cells_with("")
    with _short_path() as counts:
        first = weasyprint.HTML(string=html).render()
        n = counts["again"]
        second = weasyprint.HTML(string=html).render()
    assert n > 0 and counts["again"] == 2 * n
    assert first.write_pdf() == second.write_pdf()
