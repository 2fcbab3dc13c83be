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
import tinyhtml5
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


# What the user-agent rules written one selector per element name style (HTML
# Living Standard, 15.3 rendering: lists nested in lists, the dir attribute,
# hidden table parts, the rules and frame attributes of tables).
_IS_RULES = """<html><body>
<ul><li>a<ol><li>b<ul dir="rtl"><li>c<menu><li>d</li></menu></li></ul></li></ol></li></ul>
<div dir="ltr"><dir><li>e</li></dir><div dir="rtl"><ul dir="ltr" class="x"><li>f</li></ul>
<dl><dt>t</dt><dd>g<dl><dd>h</dd></dl></dd></dl></div></div>
<table rules="all" frame="box"><thead><tr><th>H</th></tr></thead>
<tbody><tr><td>1</td></tr><tr hidden="hidden"><td>2</td></tr></tbody></table>
<table rules="rows"><tr><td>3</td><td hidden="hidden">4</td></tr></table>
<p hidden="hidden">gone</p><p>kept</p></body></html>"""


def test_rules_written_per_element_name_give_the_same_styles_and_pdf():
    from weasyprint.css.properties import INITIAL_VALUES

    sheet = note_html.trimmed_sheet()
    assert sheet is not None
    # The eleven rules are filed under element names: none is left to be tried
    # on every element but the plain attribute and link rules.
    others = [s for s in sheet.matcher.other_selectors]
    assert len(others) <= 6, len(others)
    full = weasyprint.HTML(string=_IS_RULES)
    trimmed = note_html.NoteHTML(string=_IS_RULES)
    fs, ts = get_all_computed_styles(full), get_all_computed_styles(trimmed)
    names = sorted(INITIAL_VALUES)
    checked = 0
    for a, b in zip(full.etree_element.iter(), trimmed.etree_element.iter()):
        assert a.tag == b.tag
        sa, sb = fs(a), ts(b)
        if sa is None:
            assert sb is None
            continue
        assert [(n, repr(sa[n])) for n in names] == [(n, repr(sb[n])) for n in names], a.tag
        checked += 1
    assert checked > 30
    # The rules do apply here: nested lists lose their margins, rtl lists pad right,
    # hidden rows collapse, ruled tables have black cell borders.
    ul_rtl = trimmed.etree_element.find(".//ul[@dir='rtl']")
    assert ts(ul_rtl)["padding_right"].value == 40 and ts(ul_rtl)["margin_top"].value == 0
    row = trimmed.etree_element.find(".//tr[@hidden]")
    assert ts(row)["visibility"] == "collapse"
    ruled = ts(trimmed.etree_element.find(".//td"))["border_top_color"]
    plain = note_html.NoteHTML(string="<table><tr><td>x</td></tr></table>")
    assert ruled != get_all_computed_styles(plain)(plain.etree_element.find(".//td"))[
        "border_top_color"]
    assert full.write_pdf() == trimmed.write_pdf()


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


def _tree(root) -> list[tuple]:
    return [(e.tag, dict(e.attrib), e.text or "", e.tail or "") for e in root.iter()]


def _html5(html: str) -> list[tuple]:
    # As weasyprint.HTML reads a string: tinyhtml5, no namespaces.
    return _tree(tinyhtml5.parse(html, namespace_html_elements=False))


def _part_htmls(ctx: dict) -> list[str]:
    head = assemble._head(ctx)
    parts = [(assemble.front_context(ctx), "front"),
             ({**head, "stages": ctx["stages"][:1]}, "stage"),
             ({**head, "stages": ctx["stages"]}, "stage"),
             (assemble.appendix_context(ctx, ctx.get("appendix") or []), "appendix"),
             ({**head, "stages": [], "page_count": 3}, "numbers")]
    htmls = [report.render_html({**c, "part": p, "shared_css": True}, source_date_epoch=EPOCH)
             for c, p in parts]
    return htmls + [report.render_html(ctx, source_date_epoch=EPOCH)]   # the whole note


def test_shipped_templates_read_by_expat_as_by_tinyhtml5():
    htmls = _part_htmls(make_context())
    for html in htmls:
        root = note_html.xhtml_tree(html)
        assert root is not None                       # every part takes the fast path
        assert _tree(root) == _html5(html)


@pytest.mark.slow
def test_example_board_parts_read_by_expat_as_by_tinyhtml5():
    from rcdoc.commands.build import analyse_project
    from rcdoc.kinds import load_project
    from rcdoc.note.page import note_context

    project = load_project(str(assemble.Path(__file__).resolve().parents[1] / "projects"
                               / "greenhouse-controller.toml"), samples=20)
    out = analyse_project(project, jobs=1, draw=True)
    ctx = note_context(project, out.results, stage_contexts=out.contexts,
                       overview=out.overview)
    htmls = _part_htmls(ctx) + [
        report.render_html({**assemble._head(ctx), "stages": [st], "part": "stage",
                            "shared_css": True}) for st in ctx["stages"]]
    for html in htmls:
        root = note_html.xhtml_tree(html)
        assert root is not None and _tree(root) == _html5(html)


HEAD = "<!DOCTYPE html>\n<html>\n<head><title>t</title><style>p { color: red; }</style></head>\n"


@pytest.mark.parametrize("body", [
    "<body>\n<p>a <div>block</div> b</p>\n</body>\n</html>\n",      # a block ends the p
    "<body><p><span><table></table></span></p></body></html>",      # deeper in the p
    "<body><table><tr><td>1</td></tr></table></body></html>",       # HTML5 adds a tbody
    '<body><p title="two\nlines">x</p></body></html>',              # XML: newline -> space
    "<body><!-- a comment --><p>x</p></body></html>",               # kept by tinyhtml5
    "<body><p>x<br>y</p></body></html>",                            # not XML
    "<body><p>x</p></body>\ntext after the body</html>",            # moved into the body
    "<body><p>&nbsp;</p></body></html>",                            # an HTML entity
    "<body><table><tbody>stray<tr><td>1</td></tr></tbody></table></body></html>",  # moved out
    "<body><table><tbody><tr><td>1</td>stray</tr></tbody></table></body></html>",
    "<body><P>x</P></body></html>",                                 # HTML5 lowers names
    "<body><pre>\nx</pre></body></html>",                           # first newline dropped
    "<body><p>\ud800</p></body></html>",                            # a lone surrogate
])
def test_documents_expat_would_read_otherwise_go_to_tinyhtml5(body):
    html = HEAD + body
    assert note_html.xhtml_tree(html) is None
    assert _tree(note_html.NoteHTML(string=html).etree_element) == _html5(html)


def test_css_with_ampersand_goes_to_tinyhtml5():
    # In HTML a style element's text is raw; XML would decode "&amp;".
    html = ("<html><head><style>p::after { content: \"&amp;\"; }</style></head>"
            "<body><p>x</p></body></html>")
    assert note_html.xhtml_tree(html) is None


def test_whitespace_around_head_and_body_moves_as_in_html5():
    html = HEAD + "<body>\n<p>x</p>\n</body>\n</html>\n\n"
    root = note_html.xhtml_tree(html)
    assert root is not None and _tree(root) == _html5(html)
    doc = note_html.NoteHTML(string=html, base_url="/tmp/")
    assert doc.base_url == "/tmp/" and _tree(doc.etree_element) == _html5(html)


def _stage_ctx(title: str | None = None) -> dict:
    ctx = make_context()
    stage = dict(ctx["stages"][0], **({"title": title} if title else {}))
    return {**assemble._head(ctx), "stages": [stage], "part": "stage"}


def test_margin_texts_are_the_ones_the_templates_set():
    # What margin_css measures must be what string-set puts in the margin boxes.
    from xml.etree import ElementTree
    ctx = _stage_ctx()
    root = ElementTree.fromstring(report.render_html({**ctx, "shared_css": True}))
    running = {e.get("data-running") for e in root.iter() if e.get("data-running")}
    generator = {e.get("data-generator") for e in root.iter() if e.get("data-generator")}
    titles = [e.get("data-title") for e in root.iter() if e.get("data-title")]
    top, bottom = note_html.margin_texts(ctx)
    assert set(top) == running | set(titles) and {bottom} == generator


def test_margin_widths_only_where_every_text_fits():
    from rcdoc.note.table_widths import text_width
    assert note_html.margin_css(_stage_ctx()).startswith("@page")
    assert note_html.margin_css({**_stage_ctx(), "part": "front"}) == ""
    half = (210 - 36) / 25.4 * 72 / 2                 # A4 less 18 mm margins, in pt, halved
    long_title = "Wide title " * 12
    assert text_width(long_title, size=7.5) > half
    assert note_html.margin_css(_stage_ctx(long_title)) == ""


def _title_of_width(points: float) -> str:
    from rcdoc.note.table_widths import text_width
    words = "Input filter of the long cable run to the pump controller".split()
    title = ""
    for i in range(200):
        longer = (title + " " + words[i % len(words)]).strip()
        if text_width(longer, size=7.5) > points:
            return title
        title = longer
    return title


@pytest.mark.slow
@pytest.mark.parametrize("room", [1.5, 30.0])
def test_margin_widths_give_the_same_pages(monkeypatch, room):
    # The reference: weasyprint sharing the width out itself (no widths given),
    # with a title just inside the limit and one well inside it.
    half = (210 - 36) / 25.4 * 72 / 2
    ctx = _stage_ctx(_title_of_width(half - room))
    assert note_html.margin_css(ctx)
    given = assemble.render_part(ctx, "stage", source_date_epoch=EPOCH)
    monkeypatch.setattr(note_html, "margin_css", lambda context: "")
    shared = assemble.render_part(ctx, "stage", source_date_epoch=EPOCH)
    assert given["pages"] == shared["pages"] >= 1
    assert given["pdf"] == shared["pdf"]


def test_margin_box_fonts_are_the_ones_margin_css_measures():
    # margin_css measures DejaVu Sans at 7.5 pt on an A4 page with 18 mm side
    # margins: note.css must not set the margin boxes larger or the page narrower.
    css = (SHIPPED / "note.css").read_text(encoding="utf-8")
    page = css[css.index("@page {"):css.index("@page :first")]
    assert "size: A4 portrait;" in page and "margin: 20mm 18mm 18mm 18mm;" in page
    sizes = re.findall(r"font: ([\d.]+)pt \"DejaVu Sans\"", page)
    assert len(sizes) == 4 and max(float(s) for s in sizes) <= note_html._HEADER_PT
    assert not re.search(r"letter-spacing|word-spacing|font-weight|text-transform", page)


# The palette's values put in place of var() (CSS Custom Properties 1, W3C: a var()
# takes the inherited custom property's value, else its fallback).
_ROOT_CSS = ":root { --rc-pass: #2f7d4f; --rc-ink: #262b33; }\n"


def test_inline_palette_takes_the_roots_value_or_the_fallback():
    css = _ROOT_CSS + ("/* a var() in a comment */ p { color: var(--rc-ink, #000) }\n"
                       "b { border: 1pt solid var( --rc-pass ) } i { color: var(--rc-x, red) }")
    out = note_html.inline_palette(css)
    assert out == _ROOT_CSS + ("/* a var() in a comment */ p { color: #262b33 }\n"
                               "b { border: 1pt solid #2f7d4f } i { color: red }")
    assert note_html.inline_palette("p { color: var(--a, blue) }") == "p { color: blue }"


@pytest.mark.parametrize("css", [
    _ROOT_CSS + "p { --rc-ink: red; color: var(--rc-ink) }",      # set outside the palette
    _ROOT_CSS + "p { color: var(--rc-none) }",                    # neither set nor fallback
    _ROOT_CSS + "p { color: var(--rc-none, var(--rc-ink)) }",     # nested
    ":root { --rc-ink: rgb(1, 2, 3); } p { color: var(--rc-ink) }",  # not a plain value
    ":root { --rc-ink: #000; --rc-ink: #111; } p { color: var(--rc-ink) }",
])
def test_inline_palette_declines_what_it_cannot_replace_exactly(css):
    assert note_html.inline_palette(css) is None


def test_shipped_css_has_every_var_replaced():
    css = report.render_css(make_context())
    out = note_html.inline_palette(css)
    assert out is not None and css.count("var(--") >= 30
    assert "var(--" not in out
    assert "color: var(--rc-muted, #5b6573)" in css and "#5b6573" not in out.split("}", 1)[1]


@pytest.mark.slow
def test_parts_with_the_palette_in_place_are_the_same_bytes(monkeypatch):
    # The reference: weasyprint resolving each var() itself.
    ctx = make_context()
    parts = [("front", ctx), ("stage", {**assemble._head(ctx), "stages": ctx["stages"]}),
             ("appendix", assemble.appendix_context(ctx, ctx["appendix"]))]
    inlined = [assemble.render_part(c, p, source_date_epoch=EPOCH) for p, c in parts]
    monkeypatch.setattr(note_html, "inline_palette", lambda css: None)
    resolved = [assemble.render_part(c, p, source_date_epoch=EPOCH) for p, c in parts]
    for a, b in zip(inlined, resolved):
        assert a["pages"] == b["pages"] >= 1
        assert a["pdf"] == b["pdf"]
