"""The example's PDF as a reviewer and a text search read it: headings, fill, numbers.

Renders the example board once and reads the PDF back with pypdf (a general-purpose
PDF library): headings must extract as words, every page but the last must be at
least a quarter full, and no number may be printed in exponent form.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from rcdoc.commands.cli import main

pypdf = pytest.importorskip("pypdf")

EXAMPLE = Path(__file__).resolve().parents[1] / "projects" / "greenhouse-controller.toml"

# Page furniture: the running header and the footer sit in the outer 8 % of the page
# (the note's margins, templates/note.css); body text is what lies between.
_FURNITURE = 0.08


@pytest.fixture(scope="module")
def pages(tmp_path_factory):
    out = tmp_path_factory.mktemp("pages")
    assert main(["build", str(EXAMPLE), "-o", str(out)]) == 0
    reader = pypdf.PdfReader(next(out.glob("*.pdf")))
    return [_page_lines(page) for page in reader.pages]


def _page_lines(page) -> dict:
    """The page's text and the lowest body-text baseline as a fraction of the body height."""
    height = float(page.mediabox.height)
    lo_body, hi_body = _FURNITURE * height, (1.0 - _FURNITURE) * height
    ys: list[float] = []

    def visit(text, cm, tm, font, size):
        y = tm[5] * cm[3] + cm[5]       # baseline in page space (text matrix then CTM)
        if text.strip() and lo_body < y < hi_body:
            ys.append(y)

    text = page.extract_text(visitor_text=visit)
    fill = (hi_body - min(ys)) / (hi_body - lo_body) if ys else 0.0
    return {"text": text, "fill": fill}


@pytest.mark.slow
def test_headings_extract_as_words(pages):
    text = "\n".join(p["text"] for p in pages)
    # Headings of the cover, a stage and the appendix (templates/*.html), searched as words.
    for heading in ("DESIGN NOTE", "Summary", "Schematic", "Parts", "Checks", "Assumptions", "Method"):
        assert heading in text, heading
    # Letter-spaced capitals extract as single letters between spaces ("D E S I G N").
    spaced = re.findall(r"\b(?:[A-Z] ){3,}[A-Z]\b", text)
    assert not spaced, spaced[:5]


@pytest.mark.slow
@pytest.mark.xfail(reason="open: a stage's last blocks still spill a few lines onto a page "
                          "of their own; reflow not done yet", strict=False)
def test_no_page_less_than_a_quarter_full(pages):
    sparse = [(i + 1, round(p["fill"], 2)) for i, p in enumerate(pages[:-1]) if p["fill"] < 0.25]
    assert not sparse, f"pages (number, fill) less than a quarter full: {sparse}"


@pytest.mark.slow
def test_no_number_in_exponent_form_or_below_resolution(pages):
    # "2.31e-20", "8.98e-6", "1E+3": the form the note must never print (numbers read
    # with engineering prefixes). Rounding noise below a metric's resolution prints as
    # 0 (or "< resolution" for a stress), never as a long run of zeros.
    found = [(i + 1, m.group(0)) for i, p in enumerate(pages)
             for m in re.finditer(r"\d(?:\.\d+)?[eE][+\-−]?\d+", p["text"])]
    assert not found, found[:10]
    noise = [(i + 1, m.group(0)) for i, p in enumerate(pages)
             for m in re.finditer(r"\b0\.0{7,}\d+", p["text"])]
    assert not noise, noise[:10]
