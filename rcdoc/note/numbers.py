"""The page-number part of a long note, composed from a sample instead of laid out.

What it is for: "page i of N" on every page of the joined note. rcdoc.note.join
lays the pages of the page-number part over the note's pages; weasyprint lays
out each page of that part with its margin boxes, about 11 ms a page: 1.9 s for
a 160-page note, at the very end of a build, when nothing else can run.

How: render a sample of ten pages (pages 1 to 10 of 10) with the note's own
CSS, and learn from it how the footer is drawn: one text-showing operator (TJ,
ISO 32000-1 §9.4.3) whose glyphs are a fixed head, the page number's digits
and a fixed tail holding the total's digits, at a position that moves with the
text's width as the box's alignment says (left, centre or right), each digit
as wide as the others (tabular figures: the font's /W array, §9.7.4.3, says so). The model must rebuild every sample page:
the same content stream, byte for byte, but for the position, which must agree
within a thousandth of a CSS pixel. Then each of the N pages gets the content
stream weasyprint would have written, with the sample's font, which holds every
digit. Where the sample does not fit (an own note.css with another footer, roman
numerals, a second page number, text set by letter), ``compose`` returns None
and the caller lays out all N pages as before.

What it must not do: decide what the footer says (note.css does), or guess:
what is not checked on the sample is not used.
"""

from __future__ import annotations

import io
import re
from collections.abc import Callable

import pikepdf

__all__ = ["SAMPLE_PAGES", "compose"]

#: Pages 1 to 10 of 10: every digit appears as a page number, and page 10 is one
#: digit wider than page 9 (the alignment shows in where its text starts).
SAMPLE_PAGES = 10

# The one text object of a footer as weasyprint writes it: text matrix, font, glyphs.
_TEXT = re.compile(rb"1 0 0 -1 ([-0-9.]+) ([-0-9.]+) Tm\n(/[!-~]+) ([0-9.]+) Tf\n"
                   rb"\[((?:<[0-9a-f]{4}>0)+)\] TJ")
_GLYPH = re.compile(rb"<([0-9a-f]{4})>0")


def _number(x: float) -> bytes:
    """A number as pydyf (weasyprint's PDF writer) prints a float."""
    return str(int(x)).encode() if x.is_integer() else f"{x:f}".rstrip("0").encode()


def _widths(font) -> dict[int, float]:
    """Glyph advance widths (1/1000 text space units) of a Type0 font's CIDFont /W."""
    widths: dict[int, float] = {}
    w = list(font.DescendantFonts[0].get("/W", []))
    i = 0
    while i < len(w):
        first = int(w[i])
        if isinstance(w[i + 1], pikepdf.Array):
            for k, value in enumerate(w[i + 1]):
                widths[first + k] = float(value)
            i += 2
        else:
            for cid in range(first, int(w[i + 1]) + 1):
                widths[cid] = float(w[i + 2])
            i += 3
    return widths


class _Footer:
    """The model learnt from the sample: stream around the text, head, tail, digits."""

    def __init__(self, streams: list[bytes], font) -> None:
        found = [list(_TEXT.finditer(s)) for s in streams]
        if any(len(f) != 1 or s.count(b" TJ") != 1 or s.count(b" Tm") != 1
               for f, s in zip(found, streams)):
            raise ValueError("not one footer text per page")
        m = [f[0] for f in found]
        self.before, self.after = streams[0][:m[0].start()], streams[0][m[0].end():]
        self.y, self.font, self.size = m[0].group(2), m[0].group(3), float(m[0].group(4))
        glyphs = [[int(g, 16) for g in _GLYPH.findall(x.group(5))] for x in m]
        one = glyphs[0]
        at = [k for k in range(len(one)) if any(g[k] != one[k] for g in glyphs[1:9])]
        if len(at) != 1 or any(len(g) != len(one) for g in glyphs[:9]):
            raise ValueError("the page number is not one glyph on pages 1 to 9")
        p = at[0]
        self.digit = {str(k + 1): glyphs[k][p] for k in range(9)}
        self.digit["0"] = glyphs[9][p + 1] if len(glyphs[9]) == len(one) + 1 else -1
        self.head, rest = one[:p], one[p + 1:]
        ten = [self.digit["1"], self.digit["0"]]
        spots = [k for k in range(len(rest) - 1) if rest[k:k + 2] == ten]
        if len(spots) != 1 or len(set(self.digit.values())) != 10:
            raise ValueError("the total is not found once")
        self.tail = (rest[:spots[0]], rest[spots[0] + 2:])
        # Tabular figures: one advance for every digit (the font's /W says so), as
        # laid out (Pango rounds advances: the sample's own shift is the measure).
        widths = _widths(font)
        if len({widths.get(g) for g in self.digit.values()}) != 1:
            raise ValueError("digits of different widths")
        x = [float(t.group(1)) for t in m]
        shift = x[0] - x[9]                  # page 10 is one digit wider than page 1
        nominal = widths[self.digit["0"]] * self.size / 1000
        # Left (0), centred (1/2) or right (1) aligned: where page 10 starts says which.
        self.align = min((0.0, 0.5, 1.0), key=lambda a: abs(shift - a * nominal))
        self.advance = shift / self.align if self.align else nominal
        self.x_ref = x[0]
        for k, stream in enumerate(streams):
            made = self.page(k + 1, SAMPLE_PAGES)
            if (_TEXT.sub(b"", made) != _TEXT.sub(b"", stream)
                    or _TEXT.search(made).group(2, 3, 4, 5) != m[k].group(2, 3, 4, 5)
                    or abs(float(_TEXT.search(made).group(1)) - x[k]) > 1e-3):
                raise ValueError(f"sample page {k + 1} is not rebuilt")

    def glyphs(self, page: int, total: int) -> list[int]:
        return (self.head + [self.digit[c] for c in str(page)] + self.tail[0]
                + [self.digit[c] for c in str(total)] + self.tail[1])

    def page(self, page: int, total: int) -> bytes:
        glyphs = self.glyphs(page, total)
        wider = len(str(page)) + len(str(total)) - len(str(1)) - len(str(SAMPLE_PAGES))
        x = self.x_ref - self.align * self.advance * wider
        shown = b"".join(b"<%04x>0" % g for g in glyphs)
        return (self.before + b"1 0 0 -1 " + _number(x) + b" " + self.y + b" Tm\n"
                + self.font + b" " + _number(self.size) + b" Tf\n[" + shown + b"] TJ"
                + self.after)


def compose(sample: dict, total: int) -> bytes | None:
    """The page-number part's PDF for ``total`` pages from ``sample`` (the part
    rendered with SAMPLE_PAGES pages), or None where the sample does not fit."""
    try:
        with pikepdf.Pdf.open(io.BytesIO(sample["pdf"])) as pdf:
            if len(pdf.pages) != SAMPLE_PAGES:
                return None
            streams = [page.obj.Contents.read_bytes() for page in pdf.pages]
            fonts = pdf.pages[0].Resources.get("/Font", {})
            names = [n for n in fonts.keys()]
            if any(p.Resources.objgen != pdf.pages[0].Resources.objgen for p in pdf.pages):
                return None
            match = _TEXT.search(streams[0])
            if match is None or match.group(3).decode() not in names:
                return None
            footer = _Footer(streams, fonts[match.group(3).decode()])
            return _write(pdf, total, footer.page)
    except (ValueError, KeyError, AttributeError, TypeError, IndexError, pikepdf.PdfError):
        return None


def _write(pdf: pikepdf.Pdf, total: int, page: Callable[[int, int], bytes]) -> bytes:
    """The sample's first page ``total`` times, each with its own content stream."""
    first = pdf.pages[0]
    for i in range(1, total + 1):
        pdf.pages.append(first)
        pdf.pages[-1].obj.Contents = pdf.make_stream(page(i, total))
    del pdf.pages[:SAMPLE_PAGES]
    buf = io.BytesIO()
    pdf.save(buf, deterministic_id=True, compress_streams=True)
    return buf.getvalue()
