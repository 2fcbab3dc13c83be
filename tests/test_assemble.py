"""Tests of rcdoc.note.assemble: the note rendered in parts and put together with pypdf.

PDF facts are those of ISO 32000-1 (PDF 1.7) as read back by pypdf, a
general-purpose PDF library: page tree order, link annotations with explicit
destinations (§12.3.2.2, §12.5.6.5), the outline (§12.3.3), the document
information dictionary (§14.3.3) and the file identifier (§14.4). That a
cache must give the same bytes as a fresh render is common practice for
build caches.
"""

from __future__ import annotations

import copy
import io
import re
import shutil
from pathlib import Path

import pypdf
import pytest

from rcdoc.note import assemble

from rcdoc.note import report
from rcdoc.note.page import note_context
from rcdoc.kinds import load_project
from test_report import EPOCH, make_context

# Every test here renders a note to PDF (or runs a build): the quick run skips them.
pytestmark = pytest.mark.slow

REPO = Path(__file__).resolve().parent.parent


def _pages_text(pdf: bytes) -> list[str]:
    reader = pypdf.PdfReader(io.BytesIO(pdf))
    return [re.sub(r"\s+", " ", p.extract_text()) for p in reader.pages]


@pytest.fixture(scope="module")
def note():
    pdf, parts = assemble.render_note(make_context(), source_date_epoch=EPOCH,
                                      stage_keys=["k-ain0", "k-snubber"])
    return pdf, parts


def test_page_numbers_run_over_the_whole_note(note):
    pdf, parts = note
    texts = _pages_text(pdf)
    total = len(texts)
    # Each page carries its own number of the whole note, exactly once,
    # although each part was laid out as a document of its own.
    for i, text in enumerate(texts, start=1):
        assert re.findall(r"page \d+ of \d+", text) == [f"page {i} of {total}"], text
    # One part per stage, each starting on a fresh page after the front matter.
    assert [p["key"] for p in parts] == ["k-ain0", "k-snubber"]
    assert total == 2 + sum(p["pages"] for p in parts) + 1      # cover, summary, stages, appendix


def test_every_page_keeps_its_header_and_footer(note):
    texts = _pages_text(note[0])
    # The cover has no running header (as in the one-document note); every other
    # page shows board and revision at the top and the generator at the bottom.
    assert "Loft controller · rev B" not in texts[0]
    for text in texts[1:]:
        assert "Loft controller · rev B" in text and "rcdoc 0.1.0" in text, text
    assert "AIN0 anti-alias filter" in texts[2] and "Relay contact snubber" in texts[3]


def test_summary_links_lead_to_each_stage_first_page(note):
    reader = pypdf.PdfReader(io.BytesIO(note[0]))
    page_of = {p.indirect_reference.idnum: i for i, p in enumerate(reader.pages)}
    summary = reader.pages[1]
    dests = [page_of[a.get_object()["/Dest"][0].idnum] for a in summary["/Annots"]
             if a.get_object()["/Subtype"] == "/Link"]
    # Row order of the summary: AIN0 (page 3), snubber (page 4), 0-based 2 and 3.
    assert dests == [2, 3]
    # The cover's "fails a requirement: <stage>" link leads to the failing stage.
    cover = [page_of[a.get_object()["/Dest"][0].idnum] for a in reader.pages[0]["/Annots"]]
    assert cover == [3]


def test_outline_points_at_the_stage_pages(note):
    reader = pypdf.PdfReader(io.BytesIO(note[0]))
    top = [(o.title, reader.get_destination_page_number(o))
           for o in reader.outline if not isinstance(o, list)]
    assert top == [("AIN0 anti-alias filter", 2), ("Relay contact snubber", 3),
                   ("Appendix · Method", 4)]


def test_cached_parts_give_the_same_bytes(note):
    pdf, parts = note
    # Parts whose key matches are used as they are: same bytes as a fresh render.
    again, used = assemble.render_note(make_context(), source_date_epoch=EPOCH,
                                       stage_parts=parts, stage_keys=["k-ain0", "k-snubber"])
    assert again == pdf
    assert used[0] is parts[0] and used[1] is parts[1]
    # A part whose key differs (other templates, date, ...) is rendered again.
    _, used = assemble.render_note(make_context(), source_date_epoch=EPOCH,
                                   stage_parts=parts, stage_keys=["k-ain0", "other"])
    assert used[0] is parts[0] and used[1] is not parts[1] and used[1]["key"] == "other"


def test_metadata_and_identifier_survive_assembly(note):
    reader = pypdf.PdfReader(io.BytesIO(note[0]))
    assert reader.metadata.title == "Design note: Loft controller rev B"
    assert reader.metadata.subject.startswith("Design note on the RC networks of Loft controller")
    assert reader.metadata["/ModDate"] == "D:20260101000000Z"
    assert reader.trailer["/ID"][0] == report.pdf_identifier("Loft controller", "B").decode()


def test_second_identifier_is_the_files_own_hash(note):
    # ISO 32000-1 §14.4: the second identifier changes with the file's content.
    # rcdoc.note.join writes the first 16 bytes of the SHA-256 of the file as written
    # with qpdf's placeholder in its place (same length: no offset moves).
    import hashlib
    import re

    from rcdoc.note import join
    pdf = note[0]
    found = re.findall(rb"/ID ?\[<([0-9a-f]+)> ?<([0-9a-f]{32})>\]", pdf)
    assert len(found) == 1
    second = found[0][1]
    assert pypdf.PdfReader(io.BytesIO(pdf)).trailer["/ID"][1].original_bytes.hex().encode() == second
    placeholder = pdf.replace(b"<" + second + b">", join._PLACEHOLDER)
    assert hashlib.sha256(placeholder).hexdigest()[:32].encode() == second
    # Another content, another identifier; no placeholder, or two: qpdf's own hash.
    assert join._with_content_id(placeholder + b"%") != pdf
    assert join._with_content_id(b"%PDF no placeholder") is None
    assert join._with_content_id(join._PLACEHOLDER * 2) is None


def test_template_fingerprint_and_overridden_note_html(tmp_path):
    tpl = tmp_path / "tpl"
    tpl.mkdir()
    assert assemble.can_assemble([tpl])
    before = assemble.templates_fingerprint([tpl])
    (tpl / "_stage.html").write_text("x", encoding="utf-8")
    assert assemble.templates_fingerprint([tpl]) != before
    # A link leading out of the folder is hashed by name, never read.
    outside = tmp_path / "outside.css"
    outside.write_text("a", encoding="utf-8")
    (tpl / "link.css").symlink_to(outside)
    with_link = assemble.templates_fingerprint([tpl])
    outside.write_text("b", encoding="utf-8")
    assert assemble.templates_fingerprint([tpl]) == with_link
    # A byte-identical copy of note.html (README: overrides with own assets
    # carry one) still renders parts; an own note.html may know nothing of
    # parts, so the note is then rendered as one document.
    shutil.copy(report.shipped_templates_dir() / "note.html", tpl / "note.html")
    assert assemble.can_assemble([tpl])
    with open(tpl / "note.html", "a", encoding="utf-8") as fh:
        fh.write("<!-- house style -->\n")
    assert not assemble.can_assemble([tpl])


def test_project_head_is_what_the_note_shows():
    # Workers render stage parts from project_head; it must match note_context.
    project = load_project(str(REPO / "projects" / "greenhouse-controller.toml"), samples=20)
    ctx = note_context(project, [], stage_contexts=[])
    head = assemble.project_head(project)
    assert head == {k: ctx[k] for k in ("title", "generator", "board")}


def test_hostile_text_stays_text_in_every_part(tmp_path):
    ctx = copy.deepcopy(make_context())
    ctx["board"]["name"] = "<b>x</b> & y"
    pdf, _ = assemble.render_note(ctx)
    texts = _pages_text(pdf)
    assert all("<b>x</b> & y · rev B" in t for t in texts[1:])


def test_part_keys_of_many_stages_equal_one_by_one(tmp_path):
    # chunk_keys reads the templates once for all stages; each key must equal
    # the one chunk_key gives alone, and a template edit still changes them
    # (the library versions are read once per process, the templates never).
    tpl = tmp_path / "tpl"
    tpl.mkdir()
    (tpl / "_stage.html").write_text("x", encoding="utf-8")
    stage_keys = ["a" * 64, "b" * 64, "a" * 64]
    many = assemble.chunk_keys(stage_keys, [tpl], 5, tmp_path)
    assert many == [assemble.chunk_key(k, [tpl], 5, tmp_path) for k in stage_keys]
    assert many[0] == many[2] != many[1]
    (tpl / "_stage.html").write_text("y", encoding="utf-8")
    assert assemble.chunk_keys(stage_keys, [tpl], 5, tmp_path)[0] != many[0]
    assert assemble.chunk_keys(stage_keys, [tpl], 6, tmp_path)[0] != many[0]


def test_joined_note_keeps_the_parts_version_and_its_own_identifier(note):
    # ISO 32000-1 §7.5.2: the header names the version; the parts are written
    # by weasyprint as PDF 1.7 and the joined note must not claim less.
    # §14.4: the first identifier is the note's own, the same for every build
    # of one board revision (report.pdf_identifier).
    pdf, parts = note
    assert pdf[:9] == b"%PDF-1.7\n" and all(p["pdf"][:9] == b"%PDF-1.7\n" for p in parts)
    reader = pypdf.PdfReader(io.BytesIO(pdf))
    assert reader.trailer["/ID"][0] == report.pdf_identifier("Loft controller", "B").decode()
    # Each page's number is its own form XObject, drawn after the page's content.
    for i, page in enumerate(reader.pages, start=1):
        names = list(page["/Resources"]["/XObject"].keys())
        assert f"/RcPageNumber{i}" in names
        assert page.get_contents().get_data().rstrip().endswith(
            f"q /RcPageNumber{i} Do Q".encode())


def test_note_css_parsed_once_gives_the_same_bytes(monkeypatch):
    # The note's CSS handed to weasyprint as one stylesheet parsed once per process
    # (assemble._shared_css) against the reference: weasyprint reading the same CSS
    # inside each document's <style>. Every part must come out byte for byte the same.
    ctx = make_context()
    kw = dict(source_date_epoch=EPOCH)
    parts = [("front", ctx), ("stage", {**assemble._head(ctx), "stages": ctx["stages"][:1]})]
    shared = [assemble.render_part(c, p, **kw) for p, c in parts]
    assert assemble._SHEETS                        # the sheet was made and kept
    monkeypatch.setattr(assemble, "_shared_css", lambda *a, **k: None)
    inline = [assemble.render_part(c, p, **kw) for p, c in parts]
    for a, b in zip(shared, inline):
        assert a["pdf"] == b["pdf"] and a["pages"] == b["pages"] and a["pages"] >= 1


def test_css_rules_of_one_document_stay_in_it(tmp_path):
    # A note.css with @font-face (fonts belong to one document's configuration) or
    # !important (its weight differs outside the document) is not shared.
    base = report.shipped_templates_dir()
    fetcher = report.make_url_fetcher([tmp_path, base])
    ctx = make_context()
    assert assemble._shared_css(ctx, [], str(base) + "/", fetcher) is not None
    for extra in ("@font-face { font-family: X; src: url(x.ttf); }", "p { color: red !important; }"):
        folder = tmp_path / str(len(extra))
        folder.mkdir()
        (folder / "note.css").write_text((base / "note.css").read_text() + extra)
        assert assemble._shared_css(ctx, [folder], str(base) + "/", fetcher) is None
