"""Tests of rcdoc.note.numbers: the page-number part composed from a ten-page sample.

The reference is weasyprint itself (a general-purpose HTML-to-PDF library) laying
out every page of the part: the composed part must carry the same content
stream on every page, for one- to four-digit page numbers and totals, and for
a footer aligned left, centred or right (CSS 2.1 §16.2 text-align, in a margin
box of CSS Paged Media §5.3). A footer the model does not fit is left to the
full layout. Content-stream operators as in ISO 32000-1 §9.4 (Tm, Tf, TJ).
"""

from __future__ import annotations

import io

import pikepdf
import pytest

from rcdoc.note import assemble, numbers, report
from test_report import EPOCH, make_context

pytestmark = pytest.mark.slow       # every test lays out pages


def _head():
    return {**assemble._head(make_context()), "stages": []}


def _folder(tmp_path, footer: str):
    """A template folder whose note.css sets the page-number box as ``footer`` says."""
    css = (report.shipped_templates_dir() / "note.css").read_text()
    (tmp_path / "note.css").write_text(css + "\n@page { @bottom-right { " + footer + " } }\n")
    return [tmp_path]


def _streams(pdf: bytes) -> list[bytes]:
    with pikepdf.Pdf.open(io.BytesIO(pdf)) as doc:
        return [page.obj.Contents.read_bytes() for page in doc.pages]


def _both(total: int, dirs=()):
    kw = dict(template_dirs=list(dirs), source_date_epoch=EPOCH)
    sample = assemble.render_part(_head(), "numbers", page_count=numbers.SAMPLE_PAGES, **kw)
    full = assemble.render_part(_head(), "numbers", page_count=total, **kw)
    return numbers.compose(sample, total), full["pdf"]


@pytest.mark.parametrize("total", [11, 137, 1001])
def test_composed_pages_are_the_pages_weasyprint_lays_out(total):
    composed, full = _both(total)
    assert composed is not None
    assert _streams(composed) == _streams(full)


@pytest.mark.parametrize("footer", ["text-align: left;", "text-align: center;",
                                    'content: "p. " counter(page) "/" counter(pages);'])
def test_other_alignments_and_wordings_are_learnt_from_the_sample(tmp_path, footer):
    composed, full = _both(23, _folder(tmp_path, footer))
    assert composed is not None
    assert _streams(composed) == _streams(full)


@pytest.mark.parametrize("footer", ['content: counter(page, upper-roman) " of " counter(pages);',
                                    'content: counter(page) " of " counter(pages) " (" counter(page) ")";',
                                    "letter-spacing: 1px;"])
def test_a_footer_the_model_does_not_fit_is_laid_out_in_full(tmp_path, footer):
    dirs = _folder(tmp_path, footer)
    composed, full = _both(12, dirs)
    assert composed is None
    # and the note's part is then the full layout's
    part = assemble._numbers(_head(), 12, "k", dict(template_dirs=dirs, source_date_epoch=EPOCH,
                                                    project_dir=None, fetcher=None))
    assert _streams(part["pdf"]) == _streams(full) and part["pages"] == 12
