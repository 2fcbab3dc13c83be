"""The note's documents for weasyprint (70): its user-agent stylesheet trimmed, and
the HTML read by Python's XML parser, where the shipped templates made it.

The user-agent sheet. weasyprint gives every element of a document the computed
style of five note pseudo-elements (``::footnote-call``, ``::footnote-marker``,
``::note-call``, ``::note-marker``, ``::note-callback``) and of ``::marker``,
because its user-agent sheet has a rule for each with no element named: six
styles per table cell that nothing reads. weasyprint reads them only for an
element that floats as a footnote or is placed as a note (``float: footnote``,
``position: note()``) and, for ``::marker``, for a list item. The shipped
templates have neither footnotes nor notes, and their only list items are
``li`` (tests/test_note_html.py checks both), so for them the same sheet without
the note rules and with ``::marker`` written ``li::marker`` gives every box the
same style. Its eleven rules whose selectors end in ``:is()`` of element names
(nested lists, the ``dir`` attribute's list padding, hidden table parts, ruled
table cells) are written one selector per name, with the same weight, so that
the selector matcher tries each on elements of that name only, not on every
element of the document (0.5 % of the example note's render).

The parser. weasyprint reads HTML with tinyhtml5, a pure-Python HTML5 parser
(about 40 ms for a stage's 15 kB). The shipped templates write well-formed
XHTML (void elements closed with ``/>``; the text escaped), which expat, the C
XML parser in Python's standard library, reads into the same element tree in
under a millisecond, once the whitespace that the HTML5 tree builder moves
around ``<head>`` and ``<body>`` is moved the same way. A document expat cannot
read, or might read differently (a tag broken over lines, whose attribute
values XML would normalise; CSS with ``&`` or ``<``; inline SVG or MathML; a
comment, which tinyhtml5 keeps in the tree; a nesting HTML5 rebuilds) goes to
tinyhtml5 as before.

The margin boxes. weasyprint sizes the page's margin boxes (board and revision
top left, the section top right, the generator bottom left) from their texts'
narrowest and widest widths on every page. Where a stage part's texts fit in
half the page's width (measured with rcdoc.note.table_widths), widths given in
CSS spare that: a text aligned left at the left edge, or right at the right
edge, is drawn at the same place in a box of any width it fits in.

The palette. note.css takes its colours from custom properties that the palette
sets on ``:root`` (``var(--rc-nominal, #1f4e79)``). weasyprint resolves a
``var()`` for each element a rule applies to, and a shorthand holding one
(``border: 0.5pt solid var(--rc-pass)``) for each of its longhands: every table
cell's borders and background went through it. Where the palette is the only
place that sets custom properties (the shipped templates), the shared sheet has
each ``var()`` replaced by its value on ``:root``, or its fallback where the
palette has none (``inline_palette``): the value every element inherits.

Each gives the same PDF, byte for byte (tests/test_note_html.py); together a
sixth less CPU per stage part (measured in one process, old and new interleaved). A document made with a template
folder that replaces a shipped template is read by weasyprint as it is, with
weasyprint's whole sheet: its templates may use footnotes or plain HTML.
"""

from __future__ import annotations

import functools
import re
from collections.abc import Mapping, Sequence
from pathlib import Path
from xml.etree import ElementTree

import cssselect2

from rcdoc.note import renderer_libs  # noqa: F401 - weasyprint, without ctypes' library search
import weasyprint  # noqa: E402 - after renderer_libs

# The rules taken out: each starts a line of weasyprint's html5_ua.css.
_DROPPED = ("::footnote-call", "::footnote-marker", "::note-call", "::note-marker",
            "::note-callback")
_MARKER = "::marker"


# A selector whose last compound starts with :is() of element names alone (and
# goes on with attribute tests at most): cssselect2 files a selector under the
# element name of its last compound, and tests the others ("[dir=ltr i]
# :is(dir, menu, ol, ul)") against every element of the document, 11 of the 20
# it tried on each element. Written as one selector per name, each is tried on
# that element only; the specificity of :is() is that of its most specific
# argument (Selectors 4, 17), an element name's, so each has the same weight.
_LAST_IS = re.compile(r"^(?P<before>(?:.*[\s>+~])?):is\((?P<names>[a-z]+(?:, [a-z]+)*)\)"
                      r"(?P<after>(?:\[[^\]]*\])*)$")
_EXPANDED = 11      # the rules of weasyprint 70's html5_ua.css written so


def _indexed(line: str) -> tuple[str, int]:
    """A sheet's line with each selector of its rule whose last compound is
    :is() of element names written as one selector per name; and whether it was."""
    if "{" not in line or ":is(" not in line:
        return line, 0
    prelude, rest = line.split("{", 1)
    selectors, depth, start = [], 0, 0
    for i, char in enumerate(prelude):      # the rule's selectors: commas outside ()
        depth += {"(": 1, ")": -1}.get(char, 0)
        if char == "," and depth == 0:
            selectors.append(prelude[start:i].strip())
            start = i + 1
    selectors.append(prelude[start:].strip())
    out, changed = [], False
    for selector in selectors:
        match = _LAST_IS.match(selector)
        if match is None:
            out.append(selector)
            continue
        changed = True
        out.extend(f"{match['before']}{name}{match['after']}"
                   for name in match["names"].split(", "))
    if not changed:
        return line, 0
    indent = line[:len(line) - len(line.lstrip())]
    return f"{indent}{', '.join(out)} {{{rest}", 1


@functools.lru_cache(maxsize=1)
def trimmed_sheet():
    """The trimmed sheet, parsed once per process; None where weasyprint's sheet
    is not the one this module was written for (each edit must apply once)."""
    from weasyprint import html as ua
    from weasyprint.css.counters import CounterStyle

    kept, dropped, markers, expanded = [], 0, 0, 0
    for line in ua.UA.splitlines():
        head = line.lstrip()
        if head.startswith(_DROPPED):
            dropped += 1
            continue
        if head.startswith("@counter-style"):
            # weasyprint hands its own counter styles to every document
            # (HTML._ua_counter_style): parsing them again is a tenth of a second.
            continue
        if head.startswith(_MARKER):
            markers += 1
            line = "li" + head
        line, n = _indexed(line)
        expanded += n
        kept.append(line)
    if dropped != len(_DROPPED) or markers != 1 or expanded != _EXPANDED:
        return None
    # A counter style of its own to parse into: weasyprint's stays untouched.
    return weasyprint.CSS(string="\n".join(kept), counter_style=CounterStyle())


# A tag with a tab or line break inside: XML would turn those into spaces in an
# attribute's value, HTML keeps them.
_BROKEN_TAG = re.compile(r"<[^<>]*[\t\r\n][^<>]*>")
_STYLE = re.compile(r"<style\b[^>]*>(.*?)</style>", re.S | re.I)
# Read otherwise by HTML5: foreign content (SVG, MathML), comments and processing
# instructions (tinyhtml5 keeps comments in the tree), CDATA, and the elements
# whose first line break HTML5 drops.
_OTHERWISE = ("<svg", "<math", "<!--", "<?", "<![", "<pre", "<textarea", "<listing")


def xhtml_tree(html: str) -> ElementTree.Element | None:
    """The element tree tinyhtml5 builds from ``html`` (as weasyprint asks: no
    namespaces), read by expat; None where expat cannot read it or might read it
    otherwise."""
    if any(w in html for w in _OTHERWISE) or _BROKEN_TAG.search(html):
        return None
    if any("&" in css or "<" in css for css in _STYLE.findall(html)):
        return None                     # raw text in HTML, parsed text in XML
    try:
        root = ElementTree.fromstring(html)
    except (ElementTree.ParseError, ValueError):     # ValueError: a lone surrogate
        return None
    if root.tag != "html" or [child.tag for child in root] != ["head", "body"]:
        return None
    head, body = root
    if any((t or "").strip() for t in (root.text, head.tail, body.tail)):
        return None                     # text outside body: HTML5 moves it into body
    if _rebuilt_by_html5(body):
        return None
    # The HTML5 tree builder drops the whitespace before <head> and moves what
    # follows </body> to the end of the body.
    root.text = None
    after, body.tail = (body.tail or "") + _after_root(html), None
    if after:
        if len(body):
            body[-1].tail = (body[-1].tail or "") + after
        else:
            body.text = (body.text or "") + after
    return root


# Elements that end an open <p> in HTML5 (it closes the paragraph before them).
_ENDS_P = frozenset("address article aside blockquote details dialog div dl fieldset "
                    "figcaption figure footer form h1 h2 h3 h4 h5 h6 header hgroup hr "
                    "main menu nav ol p pre section summary table ul".split())
_TABLE_CHILDREN = frozenset(("caption", "colgroup", "thead", "tbody", "tfoot"))
_TABLE_TEXTLESS = frozenset(("table", "thead", "tbody", "tfoot", "tr", "colgroup"))


def _rebuilt_by_html5(body: ElementTree.Element) -> bool:
    """Whether the HTML5 tree builder would build another tree from this one:
    names not in lower case, a block inside a paragraph, a row straight inside a
    table (HTML5 adds the tbody), text between a table's rows or cells. A shipped
    template written so would be a mistake; its note is then read as HTML, as
    before."""
    for element in body.iter():
        if element.tag != element.tag.lower() or any(k != k.lower() for k in element.attrib):
            return True                 # HTML5 lowers the case of names
    for p in body.iter("p"):
        if any(inner.tag in _ENDS_P for inner in p.iter() if inner is not p):
            return True
    for table in body.iter("table"):
        if any(child.tag not in _TABLE_CHILDREN for child in table):
            return True
        # Text between a table's rows and cells: HTML5 moves it out of the table.
        for box in table.iter():
            if box.tag in _TABLE_TEXTLESS and any(
                    (t or "").strip() for t in [box.text, *(child.tail for child in box)]):
                return True
    return False


def _after_root(html: str) -> str:
    """The whitespace after ``</html>`` (expat leaves it out of the tree)."""
    end = html.rfind("</html>")
    return html[end + len("</html>"):] if end >= 0 else ""


class NoteHTML(weasyprint.HTML):
    """A weasyprint HTML document of the shipped templates: the trimmed
    user-agent sheet, the HTML string read by expat where it can be."""

    def __init__(self, string: str, base_url: str | None = None, url_fetcher=None,
                 media_type: str = "print"):
        root = xhtml_tree(string)
        if root is None:
            super().__init__(string=string, base_url=base_url, url_fetcher=url_fetcher,
                             media_type=media_type)
            return
        # What weasyprint.HTML.__init__ sets, from the tree it would have parsed.
        self.base_url = weasyprint._find_base_url(root, base_url)
        self.url_fetcher = url_fetcher if url_fetcher is not None else weasyprint.URLFetcher()
        self.media_type = media_type
        self.wrapper_element = cssselect2.ElementWrapper.from_html_root(
            root, content_language=None)
        self.etree_element = self.wrapper_element.etree_element

    def _ua_stylesheets(self, forms=False):
        sheet = trimmed_sheet()
        if sheet is None or forms:
            return super()._ua_stylesheets(forms)
        return [sheet]


# The palette's block (report._palette_css) and the var() references that can be
# replaced: a name, an optional plain fallback, nothing nested.
_ROOT = re.compile(r":root\s*\{([^{}]*)\}")
_CUSTOM = re.compile(r"(--[A-Za-z0-9_-]+)\s*:")
_COMMENT = re.compile(r"/\*.*?\*/", re.S)
_VAR = re.compile(r"var\(\s*(--[A-Za-z0-9_-]+)\s*(?:,\s*([^()]*?))?\s*\)")


def inline_palette(css: str) -> str | None:
    """``css`` with each ``var()`` replaced by the custom property's value in its
    first ``:root`` block, or by its fallback where that block lacks it; None
    where that would not be the same (a custom property set anywhere else, a
    value or a ``var()`` that is not plain, a reference to a property neither
    set nor given a fallback). Only for documents with no other CSS that sets
    custom properties (the shipped templates)."""
    root = _ROOT.search(css)
    values = {}
    if root is not None:
        for declaration in root.group(1).split(";"):
            if not declaration.strip():
                continue
            name, colon, value = declaration.partition(":")
            name, value = name.strip(), value.strip()
            if not colon or not _CUSTOM.fullmatch(name + ":") or not value \
                    or any(c in value for c in "()!;{}\\\"'/") or name in values:
                return None
            values[name] = value
        rest = css[:root.start()] + css[root.end():]
    else:
        rest = css
    if _CUSTOM.search(rest.replace("var(--", "var(")):
        return None                     # a custom property set outside the palette
    missing = []

    def value_of(match):
        name, fallback = match.group(1), match.group(2)
        if name in values:
            return values[name]
        if fallback is None or not fallback.strip():
            missing.append(name)
            return match.group(0)
        return fallback.strip()

    out = _VAR.sub(value_of, css)
    if missing or "var(" in _COMMENT.sub("", out):
        return None                     # a var() not replaced (nested, or not plain)
    return out


# note.css: the header's and footer's texts are DejaVu Sans at 7.5 and 7 pt, in the
# margin boxes of an A4 page with 18 mm side margins.
_HEADER_PT = 7.5
_PAGE_PT = (210 - 18 - 18) * 72 / 25.4
_SLACK_PT = 1.0


def margin_texts(context: Mapping) -> tuple[list[str], str]:
    """The texts a stage part's margin boxes show: board and revision and each
    stage's title at the top, the generator at the bottom."""
    board = context.get("board") or {}
    top = [f"{board.get('name', '')} · rev {board.get('revision', '')}"]
    top += [str(stage.get("title", "")) for stage in context.get("stages") or []]
    return top, str(context.get("generator", ""))


def margin_css(context: Mapping) -> str:
    """CSS giving a stage part's margin boxes their widths (half the page each at
    the top, the whole page at the bottom) where every text they show fits with
    a point to spare; "" for other parts, or where one might not fit (weasyprint
    then shares the width out as it would). The texts are those the templates set
    (note.html, _stage.html: string-set from data-running, data-title and
    data-generator; tests/test_note_html.py reads them back from the HTML)."""
    if context.get("part") != "stage":
        return ""
    from rcdoc.note.table_widths import text_width

    top, bottom = margin_texts(context)
    half = _PAGE_PT / 2 - _SLACK_PT
    if any(text_width(t, size=_HEADER_PT) > half for t in top):
        return ""
    if text_width(bottom, size=_HEADER_PT) > 2 * half:
        return ""
    return ("@page { @top-left { width: 50% } @top-right { width: 50% } "
            "@bottom-left { width: 100% } }")


def html_class(template_dirs: Sequence[Path], shipped_dir: Path) -> type:
    """NoteHTML where every template used is a shipped one (no folder of
    ``template_dirs`` holds a file named as one in ``shipped_dir``, the shipped
    templates), else weasyprint.HTML."""
    shipped = [p.name for p in Path(shipped_dir).iterdir()]
    for folder in template_dirs:
        if any((Path(folder) / name).exists() for name in shipped):
            return weasyprint.HTML
    return NoteHTML
