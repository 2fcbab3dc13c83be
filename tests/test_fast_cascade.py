"""Tests of rcdoc.note.fast_cascade: weasyprint 70's cascade
(``css.StyleFor.__init__``) with selector matching kept per element signature.

The reference is weasyprint itself: its own ``StyleFor.__init__`` (put back
around each test), which must give every element and pseudo-element the same
computed values, share the same computed style objects between the same
elements, call ``set_computed_styles`` for the same elements in the same
order with the same cascaded declarations, log the same records and give the
same PDF bytes. What a selector means is from W3C Selectors Level 3 (type,
class, ID and attribute selectors §6.1-6.5, ``:lang()`` §6.6.3, the
structural pseudo-classes ``:root``, ``:nth-*``, ``:first-child``,
``:last-child``, ``:only-*``, ``:empty`` §6.6.5, ``:not()`` §6.6.7,
combinators §8) and Level 4 (``:is()``, ``:where()``, ``:has()``, ``of S`` in
``:nth-child()``), the cascade's order (origin, ``!important``, ``@layer``,
specificity, order of appearance) from CSS Cascading and Inheritance 5, as
weasyprint 70 implements them.
"""

from __future__ import annotations

import contextlib
import gc
import logging
import weakref

import cssselect2
import pytest
import weasyprint
from weasyprint.css.properties import INITIAL_VALUES

from rcdoc.note import fast_cascade, fast_layout
from test_report import make_context
from weasyprint_own import LogRecords, counted, general, long_table_stage, note_parts, render_parts, same_parts  # noqa: F401 - general: a fixture


def _css():
    from weasyprint import css
    return css


@contextlib.contextmanager
def _short_path():
    """fast_cascade's StyleFor.__init__ in place of weasyprint's own; yields
    counts of the calls handed to weasyprint's own ("general") and of the
    short path's work (fast_cascade.counts, cleared first)."""
    style_for = _css().StyleFor
    own = style_for.__dict__["__init__"]
    counts = fast_cascade.counts
    counts.clear()
    try:
        # The short path takes weasyprint's own as it finds it: counted.
        style_for.__init__ = counted(counts, own, "general")
        [(owner, name, new)] = fast_cascade.replacements()
        assert (owner, name) == (style_for, "__init__") and new is not own
        setattr(owner, name, new)
        yield counts
    finally:
        style_for.__init__ = own


class _Styled:
    """What the cascade gave each document rendered while in a ``with``."""

    def __init__(self):
        self.documents = []         # (html, style_for, set_computed_styles calls)
        self._patch = None

    def __enter__(self):
        from weasyprint import document
        css = _css()
        own_get, own_set = document.get_all_computed_styles, css.StyleFor.set_computed_styles
        calls = []

        def get_all_computed_styles(html, *args, **kwargs):
            calls.clear()
            style_for = own_get(html, *args, **kwargs)
            self.documents.append((html, style_for, list(calls)))
            return style_for

        def set_computed_styles(style_for, element, *args, **kwargs):
            pseudo = kwargs.get("pseudo_type")
            cascaded = style_for.get_cascaded_styles().get((element, pseudo), {})
            calls.append((element, pseudo, [(name, weight, _stable(values))
                                            for name, (values, weight) in cascaded.items()]))
            return own_set(style_for, element, *args, **kwargs)

        self._patch = pytest.MonkeyPatch()
        self._patch.setattr(document, "get_all_computed_styles", get_all_computed_styles)
        self._patch.setattr(css.StyleFor, "set_computed_styles", set_computed_styles)
        return self

    def __exit__(self, *exc):
        self._patch.undo()

    def snapshots(self) -> list:
        return [_snapshot(*captured) for captured in self.documents]


def _stable(value) -> str:
    # A value parsed from a document's own sheet is a new object in each render:
    # one without a repr of its own is told by its type.
    text = repr(value)
    return type(value).__name__ if " at 0x" in text else text


def _snapshot(html, style_for, calls) -> tuple:
    """Every element's computed styles (each property, read afresh), which of
    them share one style object, and the set_computed_styles calls."""
    index = {element.etree_element: i
             for i, element in enumerate(html.wrapper_element.iter_subtree())}
    shared, values, rows = {}, {}, []
    for (element, pseudo), style in style_for.get_computed_styles().items():
        if element not in index:        # a page type's
            continue
        if id(style) not in values:
            fresh = style.copy()
            fresh.clear()
            values[id(style)] = tuple((name, repr(fresh[name])) for name in sorted(INITIAL_VALUES))
        rows.append((index[element], pseudo, shared.setdefault(id(style), len(shared)),
                     values[id(style)]))
    made = [(index.get(element, "page"), pseudo, cascaded) for element, pseudo, cascaded in calls]
    return rows, made


def _render(source: str, **options):
    """The PDF, the cascade's snapshot and weasyprint's log records."""
    logger = logging.getLogger("weasyprint")
    records = LogRecords()
    logger.addHandler(records)
    try:
        with _Styled() as styled:
            pdf = weasyprint.HTML(string=source).write_pdf(**options)
    finally:
        logger.removeHandler(records)
    [snapshot] = styled.snapshots()
    return pdf, snapshot, records.seen


def _same_as_weasyprints_own(source: str, **options):
    reference = _render(source, **options)
    with _short_path() as counts:
        short = _render(source, **options)
    assert short[1][0] == reference[1][0]       # every style, and which are shared
    assert short[1][1] == reference[1][1]       # set_computed_styles, in order
    assert short[2] == reference[2]             # the log records, in order
    assert short[0] == reference[0]             # the PDF, byte for byte
    assert counts["general"] == 0
    return reference, counts


def _elements(rows) -> list:
    """The snapshot's rows of elements (pseudo-elements left out), in tree order."""
    return [row for row in rows if row[1] is None]


def _colour(row) -> str:
    return dict(row[3])["color"]


def test_replacements_are_for_weasyprint_70_and_cssselect2_0_10_1_only(general, monkeypatch):
    css = _css()
    [(owner, name, function)] = fast_cascade.replacements()
    assert (owner, name) == (css.StyleFor, "__init__")
    assert function is not css.StyleFor.__dict__["__init__"]
    monkeypatch.setattr(weasyprint, "__version__", "71.0")
    assert fast_cascade.replacements() == []
    monkeypatch.undo()
    monkeypatch.setattr(cssselect2, "__version__", "0.11.0")
    assert fast_cascade.replacements() == []


def _test(selector: str):
    [compiled] = cssselect2.compile_selector_list(selector)
    return compiled.test


@pytest.mark.parametrize("selector", [
    "td", "td.num.nw", "#a", "*", ".a > td", ".a td", "table.data tbody tr td",
    ":root", ":root > body td",             # §6.6.5.1: the root has no parent
    ":not(.x)", ":is(td, th).y", ":where(.z) td", "[title]", "a[href^='http']",
    "td[class~=q]", "[lang|=en] td", ":lang(de) td", "td:not([data-k='1'])",
    "a:link", "input:checked"])
def test_selectors_reading_the_element_and_its_ancestors_are_kept(selector):
    assert fast_cascade.kept_test(_test(selector))


@pytest.mark.parametrize("selector", [
    "p + p", "h1 ~ p", ".a + .b td", "td:first-child", "td:last-child", "tr:nth-child(2n) td",
    "td:nth-last-child(1)", "td:nth-of-type(2)", "td:only-child", "td:only-of-type",
    "td:empty", ":not(:first-child)", ":is(p + p, td)", "tr:has(> td.flag) td",
    "li:nth-child(odd of .k)", "input:enabled", ".stage > :last-child"])
def test_selectors_reading_siblings_or_children_go_the_general_way(selector):
    # §6.6.5 and §8.3: their answers depend on an element's siblings (or, for
    # :empty and :has(), its children), which a signature does not hold.
    assert not fast_cascade.kept_test(_test(selector))


def test_a_test_not_compiled_by_cssselect2_goes_the_general_way():
    assert not fast_cascade.kept_test(lambda el: el.local_name == "td")   # other globals
    assert not fast_cascade.kept_test(len)


# Rows told apart by an attribute no selector reads (left out of signatures).
_CELLS = "".join(f"<tr data-row='{i}'><td class='nw'>{i}</td><td class='num nw'>{i / 3:.2f}</td>"
                 "</tr>" for i in range(50))

_HOSTILE = """<html lang="en"><head><style>
@page { size: 320px 480px; margin: 8px }
@layer base, top;
@layer top { td.lay { color: #00a } }
@layer base { td.lay { color: #a00; text-decoration: underline } }
td.lay { font-style: italic }
body { font: 7px/1.2 "DejaVu Sans"; margin: 0 }
p + p { color: #050 } h1 ~ p { font-weight: bold }
.a + .b td { background: #eef }
td:first-child { padding-left: 3px } td:last-child { padding-right: 4px }
tr:nth-child(2n) td { background: #f4f4f4 } td:nth-last-child(1) { text-align: right }
td:nth-of-type(2) { border-left: 1px solid } td:only-child { color: #800 }
td:empty { background: #faa } :root { color: #222 } :root > body { margin: 1px }
td:not(.x) { border-bottom: 0.5px solid #999 } :is(td, th).y { font-size: 6px }
:where(.z) td { text-transform: uppercase } tr:has(> td.flag) td { color: #d00 }
li:nth-child(odd of .k) { color: #070 }
[data-k="1"] td { color: #0a0 } td[title] { text-decoration: overline }
a[href^="http"] { color: #00f } td[class~=q] { letter-spacing: 1px }
[lang|=de] td { font-style: oblique } :lang(fr) td { word-spacing: 2px }
.box > table td.c { color: #b0b } .box td.c { font-weight: bold }
td.two.one { color: #088 }
td.imp { color: #123 !important } .box td.imp { color: #456 }
td.pre::before { content: "<" } td.pre::after { content: ">"; color: #a0a }
#only { outline: 1px solid red }
td.bad { color: nonsense; width: var(--missing) }
</style></head><body>
<h1>Title</h1><p>one</p><p>two</p><p class="k">three</p>
<div class="a">a</div><div class="b"><table><tr><td>after a</td></tr></table></div>
<div class="b"><table><tr><td>not after a</td></tr></table></div>
<div class="box"><table><tr><td class="c">child</td><td class="c imp">imp</td></tr></table>
<div><table><tr><td class="c">descendant</td><td class="c imp">imp</td></tr></table></div></div>
<div class="z"><table><tr><td>where</td><td class="y">is</td><td></td></tr></table></div>
<table><tr><td class="flag">has</td><td>row with a flag</td></tr><tr><td>none</td></tr></table>
<div data-k="1"><table><tr><td>k1</td></tr></table></div>
<div data-k="2"><table><tr><td>k2</td></tr></table></div>
<div data-other="1"><table><tr><td>o1</td></tr></table></div>
<div data-other="2"><table><tr><td>o2</td></tr></table></div>
<div lang="de-CH"><table><tr><td>lang attribute</td></tr></table></div>
<div lang="fr"><table><tr><td>french</td></tr></table></div>
<table><tr><td class="one two">a b</td><td class="two one">b a</td>
<td class="one one two">dup</td><td class="q" title="t">title</td></tr></table>
<table><tr><td class="pre">x</td><td class="pre">y</td><td class="lay">layer</td>
<td style="color: #0f0; width: 5px" class="nw">style</td><td style="color: #0f0">style</td>
<td style="color: nonsense">bad style</td><td class="bad">bad rule</td></tr></table>
<p id="only"><a href="http://example.invalid/">link</a> <a href="#only">local</a></p>
<p id="only">the same id again</p>
<ul><li class="k">1</li><li>2</li><li class="k">3</li><li class="k">4</li></ul>
<table class="many">""" + _CELLS + """</table>
</body></html>"""


def test_hostile_pages_are_weasyprints_own(general):
    (_, (rows, made), records), counts = _same_as_weasyprints_own(_HOSTILE)
    # The page does what it is for: styles shared, pseudo-elements made, the
    # invalid declarations and the repeated id logged.
    assert len({row[2] for row in rows}) < len(rows)
    assert {"before", "after"} <= {row[1] for row in rows}
    assert any("nonsense" in message for _, message in records)
    assert any("Anchor defined twice" in message for _, message in records)
    # Kept matches were used, and the general tests run.
    assert counts["elements"] == len(_elements(rows))
    assert 0 < counts["signatures"] < counts["elements"]
    assert counts["copied"] > 0 and counts["general_tests"] > 0


def test_several_sheets_and_presentational_hints_are_weasyprints_own(general):
    user = weasyprint.CSS(string="td { color: #300 } td.nw { color: #030 !important }"
                                 " @layer u { td { font-style: italic } }"
                                 " tr:first-child td { font-weight: bold }")
    other = weasyprint.CSS(string="td.num { text-align: right } .many td { padding: 1px }")
    # Hints (cellpadding: declarations of each cell's own, written before the
    # rules as weasyprint writes them) on one table, none on the long one.
    source = ("<table border='1' cellpadding='2'><tr><td class='nw' align='center'>x</td>"
              "<td class='num' bgcolor='#eee'>1</td></tr><tr><td class='nw'>y</td>"
              "<td class='num'>2</td></tr></table><table class='many'>" + _CELLS + "</table>")
    _, counts = _same_as_weasyprints_own(source, stylesheets=[user, other],
                                         presentational_hints=True)
    assert counts["copied"] > 140       # of the long table's 150 rows and cells


def test_identical_cells_share_their_matches(general):
    # 100 cells of two kinds in 50 rows: a signature per kind (and one per
    # element above them: the rows' data-row attributes are read by no
    # selector); the rows' cells take copies of the first's cascade.
    # One selector reads siblings: run for each cell, and only there.
    source = ("<style>td:first-child { color: red } .many td.num { text-align: right }</style>"
              "<table class='many'>" + _CELLS + "</table>")
    (_, (rows, _), _), counts = _same_as_weasyprints_own(source)
    cells = 100
    assert counts["elements"] == len(_elements(rows)) > cells
    assert counts["signatures"] <= 10
    assert counts["copied"] >= cells - 2
    # weasyprint's user-agent sheet has general tests for other elements only.
    assert counts["general_tests"] == cells


@pytest.mark.parametrize(("rules", "colours"), [
    # The language comes from the lang attribute of the element or an ancestor
    # (§6.6.3); no selector names that attribute.
    (":lang(fr) td { color: #0a0 }", 2),
    # cssselect2 draws candidates by id and by the lang attribute; here those
    # candidates all read siblings (run for each element): the signature must
    # tell an element with the id or attribute from one without.
    ("#g:first-child { color: #0a0 } [lang]:first-child { color: #a0a }", 3)])
def test_a_signature_holds_what_the_language_and_the_candidates_depend_on(
        general, rules, colours):
    source = (f"<style>{rules}</style><table><tr><td>plain</td></tr><tr><td id='g'>id</td></tr>"
              "<tr><td lang='fr'>lang</td></tr><tr><td>plain</td></tr></table>"
              "<div lang='fr'><table><tr><td>inside</td></tr></table></div>"
              "<div><table><tr><td>outside</td></tr></table></div>")
    (_, (rows, _), _), _ = _same_as_weasyprints_own(source)
    assert len({_colour(row) for row in _elements(rows)}) == colours


def _with_rule(colour: str) -> str:
    return (f"<html><head><style>td {{ color: {colour} }}</style></head>"
            "<body><table><tr><td>cell</td></tr></table></body></html>")


def test_nothing_is_kept_from_one_document_to_the_next(general):
    # Two documents whose elements have the same signatures (the tags and
    # attributes from the root to each cell; a style element's text is none of
    # them) but not the same sheet: the first's sheet is collected once it is
    # rendered, and the second's may take its address. Matches kept from the
    # first would colour the second's cell.
    with _short_path() as counts:
        colours, elements = [], 0
        for colour in ("#f00", "#00f"):
            _, (rows, _), _ = _render(_with_rule(colour))
            gc.collect()
            colours.append(_colour(_elements(rows)[-1]))
            elements += len(_elements(rows))
    assert counts["general"] == 0 and counts["elements"] == elements
    assert colours[0] != colours[1]
    for colour in ("#f00", "#00f"):
        (_, (rows, _), _), _ = _same_as_weasyprints_own(_with_rule(colour))
        assert _colour(_elements(rows)[-1]) == colours.pop(0)


def test_a_collected_sheet_takes_its_parting_with_it(general):
    source = "<table><tr><td class='x'>a</td><td>b</td></tr></table>"
    sheet = weasyprint.CSS(string="td.x { color: #f00 } td:last-child { color: #00f }")
    with _short_path():
        _render(source, stylesheets=[sheet])
    matcher = weakref.ref(sheet.matcher)
    assert matcher() in fast_cascade._PARTINGS
    del sheet
    gc.collect()
    assert matcher() is None
    # A new sheet (its matcher may take the old one's address) is parted anew.
    other = weasyprint.CSS(string="td { color: #0a0 } td.x:first-child { color: #808 }")
    (_, (rows, _), _), _ = _same_as_weasyprints_own(source, stylesheets=[other])
    assert _colour(_elements(rows)[-2]) != _colour(_elements(rows)[-1])


def test_selectors_added_to_a_matcher_later_are_parted_again(general):
    source = "<table><tr><td>a</td></tr></table>"
    sheet = weasyprint.CSS(string="td { color: #f00 }")
    with _short_path():
        _, (before, _), _ = _render(source, stylesheets=[sheet])
    # A later rule of higher specificity (Cascade 5: it wins) added to the same matcher.
    green = weasyprint.CSS(string="td { color: #0f0 }").matcher
    payload = green.lower_local_name_selectors["td"][0][4]      # (declarations, layer)
    [selector] = cssselect2.compile_selector_list("table td")
    sheet.matcher.add_selector(selector, payload)
    (_, (after, _), _), _ = _same_as_weasyprints_own(source, stylesheets=[sheet])
    assert _colour(_elements(after)[-1]) != _colour(_elements(before)[-1])


def test_a_matcher_not_cssselect2s_goes_weasyprints_own_way(general):
    class Matcher(cssselect2.Matcher):
        pass

    sheet = weasyprint.CSS(string="td { color: #f00 }")
    sheet.matcher.__class__ = Matcher
    source = "<table><tr><td>a</td></tr></table>"
    reference = _render(source, stylesheets=[sheet])
    with _short_path() as counts:
        short = _render(source, stylesheets=[sheet])
    assert counts["general"] == 1 and counts["elements"] == 0
    assert short[1] == reference[1] and short[0] == reference[0]


@pytest.mark.slow
def test_example_note_parts_are_weasyprints_own(general, monkeypatch):
    ctx = make_context()
    # And a stage with a long table (striped rows, its last row bordered: the
    # note's :nth-child and :last-child rules), as the example board's sweeps give.
    parts = note_parts(ctx, long_table_stage(ctx))

    def render():
        with _Styled() as styled:
            out = render_parts(parts)
        return out, styled.snapshots()

    install = fast_layout.install
    monkeypatch.setattr(fast_layout, "install", lambda: False)   # the renderer asks
    reference, own_styles = render()
    with _short_path() as counts:
        alone, short_styles = render()
    assert counts["general"] == 0 and counts["copied"] > 200
    assert short_styles == own_styles
    monkeypatch.setattr(fast_layout, "install", install)
    try:
        with _short_path():
            with_layout = render_parts(parts)
            assert fast_layout.installed()
    finally:
        fast_layout.uninstall()     # before the short path is taken away
    same_parts((alone, with_layout), reference)
