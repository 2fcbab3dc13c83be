"""Tests of rcdoc.note.note_html: weasyprint's user-agent sheet without the rules
for note pseudo-elements, for the shipped templates only.

The reference is weasyprint itself with its whole sheet: every part rendered with
the trimmed sheet must be the same PDF, byte for byte. What the trimmed rules
style (footnote and note calls and markers, list markers) is CSS Generated
Content for Paged Media (W3C, ``float: footnote``, ``::footnote-call``) and CSS
Lists 3 (W3C, ``::marker`` boxes for list items), as weasyprint implements them.
"""

from __future__ import annotations

import re

import pytest
import weasyprint
from weasyprint.css import get_all_computed_styles

from rcdoc.note import assemble, report, note_html
from test_report import EPOCH, make_context

SHIPPED = report.shipped_templates_dir()


def test_shipped_templates_use_nothing_the_trimmed_sheet_leaves_out():
    # The trimmed sheet is right only for documents without footnotes and notes
    # whose list items are li elements: a template that starts using them must
    # also stop using the trimmed sheet.
    for path in sorted(SHIPPED.iterdir()):
        if path.suffix not in (".html", ".css"):
            continue
        text = path.read_text(encoding="utf-8")
        for word in ("footnote", "note(", "list-item", "marker", "::before", "::after",
                     ":before", ":after"):
            assert word not in text, (path.name, word)
        assert not re.search(r"\bdisplay\s*:\s*[^;]*list", text), path.name


def test_the_trimmed_sheet_drops_the_pseudo_element_styles_and_nothing_else():
    sheet = note_html.trimmed_sheet()
    assert sheet is not None                   # weasyprint's sheet is the expected one
    html = ("<table><tr><td>1</td><td><a href='#x'>2</a></td></tr></table>"
            "<ul><li id='x'>item</li></ul><h2>Title</h2>")
    full = weasyprint.HTML(string=html)
    trimmed = note_html.NoteHTML(string=html)
    styles = {}
    for name, doc in (("full", full), ("trimmed", trimmed)):
        style_for = get_all_computed_styles(doc)
        styles[name] = (style_for, {k for k in style_for.get_computed_styles()
                                    if isinstance(k, tuple) and k[1] is not None})
    td = full.etree_element.find(".//td")
    # weasyprint's own sheet gives a cell six pseudo-element styles; the trimmed none.
    assert {p for e, p in styles["full"][1] if e is td} >= {
        "marker", "footnote-call", "footnote-marker", "note-call", "note-marker",
        "note-callback"}
    assert not {p for e, p in styles["trimmed"][1] if e.tag == "td"}
    # The list item keeps its marker style, with the same values.
    li_full = styles["full"][0](full.etree_element.find(".//li"), "marker")
    li_trim = styles["trimmed"][0](trimmed.etree_element.find(".//li"), "marker")
    for name in ("font_variant_numeric", "white_space", "text_transform", "font_size"):
        assert li_full[name] == li_trim[name], name
    # Every element's own style is the same (the properties the layout reads first).
    for a, b in zip(full.etree_element.iter(), trimmed.etree_element.iter()):
        sa, sb = styles["full"][0](a), styles["trimmed"][0](b)
        for name in ("display", "margin_top", "padding_left", "color", "font_weight",
                     "text_decoration_line", "bookmark_level", "break_after"):
            assert sa[name] == sb[name], (a.tag, name)


def test_template_folder_with_a_shipped_name_keeps_the_whole_sheet(tmp_path):
    # A replaced template may use footnotes: weasyprint's own sheet for it.
    assert note_html.html_class([], SHIPPED) is note_html.NoteHTML
    (tmp_path / "logo.png").write_bytes(b"")          # an asset of its own: no template
    assert note_html.html_class([tmp_path], SHIPPED) is note_html.NoteHTML
    (tmp_path / "_stage.html").write_text("<p>own</p>")
    assert note_html.html_class([tmp_path], SHIPPED) is weasyprint.HTML


@pytest.mark.slow
def test_parts_and_whole_note_are_the_same_bytes_as_with_the_whole_sheet(monkeypatch, tmp_path):
    # The reference: the same parts rendered with weasyprint's whole sheet.
    ctx = make_context()          # a failing snubber: its caution box holds a list
    parts = [("front", ctx), ("stage", {**assemble._head(ctx), "stages": ctx["stages"]}),
             ("appendix", assemble.appendix_context(ctx, ctx["appendix"]))]
    kw = dict(source_date_epoch=EPOCH)
    trimmed = [assemble.render_part(c, p, **kw) for p, c in parts]
    report.render_document(ctx, tmp_path / "trimmed.pdf", source_date_epoch=EPOCH)
    monkeypatch.setattr(note_html, "html_class", lambda *a: weasyprint.HTML)
    full = [assemble.render_part(c, p, **kw) for p, c in parts]
    report.render_document(ctx, tmp_path / "full.pdf", source_date_epoch=EPOCH)
    for a, b in zip(trimmed, full):
        assert a["pages"] == b["pages"] >= 1
        assert a["pdf"] == b["pdf"]
    assert (tmp_path / "trimmed.pdf").read_bytes() == (tmp_path / "full.pdf").read_bytes()
