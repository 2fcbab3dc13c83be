"""weasyprint's user-agent stylesheet, trimmed for the note's own templates.

weasyprint (70) gives every element of a document the computed style of five
note pseudo-elements (``::footnote-call``, ``::footnote-marker``,
``::note-call``, ``::note-marker``, ``::note-callback``) and of ``::marker``,
because its user-agent sheet has a rule for each with no element named: six
styles per table cell that nothing reads. weasyprint reads them only for an
element that floats as a footnote or is placed as a note (``float: footnote``,
``position: note()``) and, for ``::marker``, for a list item. The shipped
templates have neither footnotes nor notes, and their only list items are
``li`` (tests/test_ua_sheet.py checks both), so for them the same sheet without
the note rules and with ``::marker`` written ``li::marker`` gives every box the
same style: the part's PDF is the same, byte for byte, at about a twelfth less
CPU (bench/floor.py e).

A document made with a template folder that replaces a shipped template keeps
weasyprint's whole sheet: its templates may use footnotes.
"""

from __future__ import annotations

import functools
from collections.abc import Sequence
from pathlib import Path

import weasyprint

# The rules taken out: each starts a line of weasyprint's html5_ua.css.
_DROPPED = ("::footnote-call", "::footnote-marker", "::note-call", "::note-marker",
            "::note-callback")
_MARKER = "::marker"


@functools.lru_cache(maxsize=1)
def trimmed_sheet():
    """The trimmed sheet, parsed once per process; None where weasyprint's sheet
    is not the one this module was written for (each edit must apply once)."""
    from weasyprint import html as ua
    from weasyprint.css.counters import CounterStyle

    kept, dropped, markers = [], 0, 0
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
        kept.append(line)
    if dropped != len(_DROPPED) or markers != 1:
        return None
    # A counter style of its own to parse into: weasyprint's stays untouched.
    return weasyprint.CSS(string="\n".join(kept), counter_style=CounterStyle())


class NoteHTML(weasyprint.HTML):
    """A weasyprint HTML document that takes the trimmed user-agent sheet."""

    def _ua_stylesheets(self, forms=False):
        sheet = trimmed_sheet()
        if sheet is None or forms:
            return super()._ua_stylesheets(forms)
        return [sheet]


def html_class(template_dirs: Sequence[Path], shipped_dir: Path) -> type:
    """NoteHTML where every template used is a shipped one (no folder of
    ``template_dirs`` holds a file named as one in ``shipped_dir``, the shipped
    templates), else weasyprint.HTML."""
    shipped = [p.name for p in Path(shipped_dir).iterdir()]
    for folder in template_dirs:
        if any((Path(folder) / name).exists() for name in shipped):
            return weasyprint.HTML
    return NoteHTML
