"""Tests of rcdoc.note.report: the note's PDF structure, escaping, confinement,
reproducibility, template overrides and template errors.

The PDF facts checked (page tree, outline, document information dictionary)
are those of ISO 32000-1 (PDF 1.7) as read back by pypdf, a general-purpose
PDF library; the layout choices themselves are the project's own.
"""

from __future__ import annotations

import copy
import re
from pathlib import Path

import pypdf
import pytest

from rcdoc.note import report
from rcdoc.note import pdf
from rcdoc.errors import ProjectError

# Every test here renders a note to PDF (or runs a build): the quick run skips them.
pytestmark = pytest.mark.slow

EPOCH = 1_767_225_600  # 2026-01-01T00:00:00Z


def _svg(label: str, colour: str) -> str:
    """A small figure the way the chart module hands them over: a whole SVG
    document with its XML prolog, ids unique per figure."""
    return (
        '<?xml version="1.0" encoding="utf-8"?>\n'
        '<svg xmlns="http://www.w3.org/2000/svg" width="240pt" height="120pt" '
        'viewBox="0 0 240 120">'
        f'<defs><clipPath id="clip-{label}"><rect x="0" y="0" width="240" height="120"/>'
        "</clipPath></defs>"
        f'<g clip-path="url(#clip-{label})">'
        f'<polyline points="10,100 60,90 120,40 230,20" fill="none" stroke="{colour}"/>'
        f'<text x="20" y="20" font-family="DejaVu Sans" font-size="10">{label}</text>'
        "</g></svg>\n"
    )


def _stage(sid: str, title: str, status: str, safety=None) -> dict:
    return {
        "id": sid,
        "title": title,
        "kind": "rc-lowpass",
        "status": status,
        "notes": [f"Design intent of {title}."],
        "safety": safety,
        "blocks": [
            {"type": "figure", "title": "Schematic", "image": _svg(f"{sid}-sch", "#333333"),
             "caption": "Series R, shunt C.", "width": "half"},
            {"type": "figure", "title": "Phasors", "image": _svg(f"{sid}-ph", "#1f3a5f"),
             "caption": "At the corner.", "width": "half"},
            {"type": "figure", "title": "Bode plot", "image": _svg(f"{sid}-bode", "#2e7d4f"),
             "caption": "Band over the samples.", "width": "full"},
            {"type": "table", "title": "Checks",
             "columns": ["Metric", "Requirement", "Worst", "Verdict"],
             "rows": [["corner", "9 kHz … 11 kHz", "9.65 kHz", status],
                      ["gain at 1 MHz", "≤ -30 dB", "-39.3 dB", "pass"]],
             "note": "Worst over 2000 samples."},
            {"type": "text", "title": "Remarks", "paragraphs": ["C0G keeps the corner put."]},
        ],
    }


def make_context() -> dict:
    """The context exactly in the shape the pipeline builds (see report.py)."""
    stages = [
        _stage("ain0-filter", "AIN0 anti-alias filter", "pass"),
        _stage("mains-snubber", "Relay contact snubber", "fail",
               safety={"voltage": "325 V", "items": ["Unplug before touching."]}),
    ]
    return {
        "title": "Design note: Loft controller rev B",
        "generator": "rcdoc 0.1.0",
        "board": {"name": "Loft controller", "revision": "B", "date": "2026-01-01",
                  "authors": ["A. Engineer", "B. Checker"],
                  "notes": ["Controller of the loft ventilation fan."]},
        "status": "fail",
        "analysis": [["Monte Carlo samples", "2000"], ["Seed", "1"]],
        "summary": {
            "columns": ["Stage", "Corner", "Yield", "Verdict"],
            "rows": [
                {"id": "ain0-filter", "cells": ["AIN0 anti-alias filter", "10.26 kHz", "100 %", "pass"]},
                {"id": "mains-snubber", "cells": ["Relay contact snubber", "3.1 kHz", "97.5 %", "fail"]},
            ],
        },
        "overview_image": _svg("overview", "#000000"),
        "stages": stages,
        "appendix": [{"title": "Method", "blocks": [
            {"type": "text", "title": "Monte Carlo", "paragraphs": ["Samples drawn per part."]}]}],
    }


def _text(pdf: Path) -> str:
    reader = pypdf.PdfReader(pdf)
    return re.sub(r"\s+", " ", " ".join(p.extract_text() for p in reader.pages))


class _Spy:
    """Records every fetcher that render_pdf makes."""

    def __init__(self, monkeypatch):
        self.fetchers = []
        real = report.make_url_fetcher

        def spy(dirs):
            fetcher = real(dirs)
            self.fetchers.append(fetcher)
            return fetcher

        monkeypatch.setattr(report, "make_url_fetcher", spy)


@pytest.fixture(scope="module")
def rendered(tmp_path_factory) -> Path:
    out = tmp_path_factory.mktemp("note") / "note.pdf"
    pdf.render_pdf(make_context(), out, source_date_epoch=EPOCH)
    return out


def test_structure_text_outline_and_metadata(rendered):
    reader = pypdf.PdfReader(rendered)
    # cover + summary + one page per stage + appendix
    assert len(reader.pages) > 3
    text = _text(rendered)
    # Real, extractable text (not outlines): titles, a table value, a verdict.
    for needle in ("Loft controller", "AIN0 anti-alias filter", "Relay contact snubber",
                   "9.65 kHz", "97.5 %", "Hazardous voltage: up to 325 V", "page 2 of"):
        assert needle in text, needle
    # Outline (ISO 32000-1 §12.3.3): level 1 = stages, then appendix sections.
    top = [item.title for item in reader.outline if not isinstance(item, list)]
    assert top == ["AIN0 anti-alias filter", "Relay contact snubber", "Appendix · Method"]
    # Each stage's block titles sit one level down, under that stage.
    assert [i.title for i in reader.outline[1]] == ["Schematic", "Phasors", "Bode plot",
                                                    "Checks", "Remarks"]
    # Document information dictionary (ISO 32000-1 §14.3.3).
    meta = reader.metadata
    assert meta.title == "Design note: Loft controller rev B"
    assert meta.author == "A. Engineer, B. Checker"
    assert meta["/Creator"] == "rcdoc 0.1.0"
    assert meta["/CreationDate"] == "D:20260101000000Z"


def test_summary_links_to_stage_sections(rendered):
    # Internal links are /Link annotations with a destination (ISO 32000-1 §12.5.6.5);
    # the summary page (page 2) links each stage title to its section.
    page = pypdf.PdfReader(rendered).pages[1]
    links = [a.get_object() for a in page.get("/Annots", [])
             if a.get_object()["/Subtype"] == "/Link"]
    assert len(links) >= 2


def test_same_context_same_bytes(rendered, tmp_path):
    # Reproducible output (reproducible-builds.org, SOURCE_DATE_EPOCH spec):
    # two renders of one context must be byte-identical.
    again = tmp_path / "again.pdf"
    pdf.render_pdf(make_context(), again, source_date_epoch=EPOCH)
    assert again.read_bytes() == rendered.read_bytes()
    # The file identifier (ISO 32000-1 §14.4) is fixed by board and revision.
    first_id = pypdf.PdfReader(again).trailer["/ID"][0]
    assert first_id == report.pdf_identifier("Loft controller", "B").decode()
    assert report.pdf_identifier("Loft controller", "C") != report.pdf_identifier(
        "Loft controller", "B")


def test_user_text_is_escaped_and_nothing_outside_is_fetched(tmp_path, monkeypatch):
    spy = _Spy(monkeypatch)
    hostile = 'Bad <b>x</b> <img src="file:///etc/passwd">'
    ctx = make_context()
    ctx["title"] = hostile
    ctx["board"]["name"] = hostile
    ctx["stages"][0]["title"] = hostile
    ctx["stages"][0]["blocks"][3]["rows"][0][0] = '<img src="http://example.invalid/x.png">'
    out = tmp_path / "note.pdf"
    pdf.render_pdf(ctx, out, project_dir=tmp_path)
    text = _text(out)
    # The markup comes out as literal characters (autoescape, common practice).
    assert 'Bad <b>x</b> <img src="file:///etc/passwd">' in text
    assert '<img src="http://example.invalid/x.png">' in text
    assert pypdf.PdfReader(out).metadata.title == hostile
    # ... so nothing was asked for outside: only the data: URLs of the figures.
    # (Figures already parsed in this process come from the shared image cache,
    # so the fetcher may have fetched nothing at all.)
    (fetcher,) = spy.fetchers
    assert fetcher.refused == []
    assert all(u.startswith("data:") for u in fetcher.fetched)
    assert not any("passwd" in u or "example.invalid" in u for u in fetcher.fetched)


def test_fetcher_confinement(tmp_path):
    inside = tmp_path / "project"
    inside.mkdir()
    (inside / "logo.svg").write_text("<svg xmlns='http://www.w3.org/2000/svg'/>")
    secret = tmp_path / "secret.txt"
    secret.write_text("secret")
    (inside / "escape.txt").symlink_to(secret)
    fetch = report.make_url_fetcher([inside])

    assert fetch((inside / "logo.svg").as_uri()).read().startswith(b"<svg")
    assert fetch("data:text/plain;base64,aGk=").read() == b"hi"
    refused = [
        secret.as_uri(),                                  # a file outside
        (inside / "escape.txt").as_uri(),                 # symlink leading outside
        (inside / ".." / "secret.txt").as_uri(),          # dot-dot out of the folder
        "file:///etc/passwd",
        "http://example.invalid/a.png",
        "https://example.invalid/a.css",
        "ftp://example.invalid/a",
        inside.as_uri(),                                  # a folder, not a file
    ]
    for url in refused:
        with pytest.raises(Exception):
            fetch(url)
    assert fetch.refused == refused
    assert not any("secret" in u or "passwd" in u for u in fetch.fetched)


def test_refused_resource_in_a_template_is_skipped_and_recorded(tmp_path, monkeypatch, capfd):
    spy = _Spy(monkeypatch)
    override = tmp_path / "tpl"
    override.mkdir()
    shipped = (report.shipped_templates_dir() / "_summary.html").read_text()
    (override / "_summary.html").write_text(
        shipped + '<img src="file:///etc/passwd"><img src="http://example.invalid/x.png">\n'
    )
    out = tmp_path / "note.pdf"
    pdf.render_pdf(make_context(), out, template_dirs=[override])
    assert out.stat().st_size > 0
    (fetcher,) = spy.fetchers
    assert fetcher.refused == ["file:///etc/passwd", "http://example.invalid/x.png"]
    assert capfd.readouterr().err == ""  # refusals go to logging, not stderr


def test_override_css_is_used(rendered, tmp_path):
    override = tmp_path / "tpl"
    override.mkdir()
    css = (report.shipped_templates_dir() / "note.css").read_text()
    (override / "note.css").write_text(css + '\n.cover::after { content: "House style 4711"; }\n')
    out = tmp_path / "note.pdf"
    pdf.render_pdf(make_context(), out, template_dirs=[override])
    assert "House style 4711" in _text(out)
    assert "House style 4711" not in _text(rendered)  # the shipped look


@pytest.mark.parametrize(
    ("source", "line"),
    [
        ("<html>\n<body>\n{% if %}\n</body></html>\n", 3),       # syntax error
        ("<html>\n<body>\n{{ board.nickname }}\n</body></html>\n", 3),  # undefined name
        ("<html>\n{% include 'missing.html' %}\n</html>\n", 2),  # missing template
    ],
)
def test_template_errors_name_file_and_line(tmp_path, source, line):
    override = tmp_path / "tpl"
    override.mkdir()
    (override / "note.html").write_text(source)
    out = tmp_path / "note.pdf"
    out.write_bytes(b"earlier note")
    with pytest.raises(ProjectError) as caught:
        pdf.render_pdf(make_context(), out, template_dirs=[override])
    message = str(caught.value)
    assert str(override / "note.html") in message
    assert f"line {line}" in message
    # Atomic write: the earlier file is untouched and no temp file is left.
    assert out.read_bytes() == b"earlier note"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["note.pdf", "tpl"]


def test_summary_rows_as_plain_lists_link_by_position():
    # Rows given as plain lists link to stages[i].
    ctx = copy.deepcopy(make_context())
    ctx["summary"]["rows"] = [r["cells"] for r in ctx["summary"]["rows"]]
    html = report.render_html(ctx)
    assert 'href="#stage-ain0-filter">AIN0 anti-alias filter</a>' in html
    assert 'href="#stage-mains-snubber">Relay contact snubber</a>' in html


def test_render_without_dates(tmp_path, monkeypatch):
    # Without an epoch and without SOURCE_DATE_EPOCH the PDF carries no dates.
    monkeypatch.delenv("SOURCE_DATE_EPOCH", raising=False)
    out = tmp_path / "note.pdf"
    pdf.render_pdf(make_context(), out)
    meta = pypdf.PdfReader(out).metadata
    assert "/CreationDate" not in meta and "/ModDate" not in meta


@pytest.mark.parametrize(
    ("cell", "numeric"),
    [("10.26 kHz", True), ("-39.3 dB", True), ("97.5 %", True), ("≤ -30 dB", True),
     ("9 kHz … 11 kHz", False), ("9.65 – 10.9 kHz", True), ("2000", True),
     ("R14", False), ("C0G", False), ("rc-lowpass", False), ("pass", False)],
)
def test_numeric_cells(cell, numeric):
    # Right alignment of numbers in tables is common practice in typesetting.
    assert report._is_numeric(cell) is numeric


def test_half_figures_pair_up():
    half = {"type": "figure", "width": "half"}
    full = {"type": "figure", "width": "full"}
    table = {"type": "table"}
    rows = report._layout_rows([half, half, half, full, half, table])
    assert [len(r) for r in rows] == [2, 1, 1, 1, 1]


def test_column_kinds():
    columns = ["Metric", "Worst", "Verdict"]
    rows = [["corner", "9.65 kHz", "pass"], ["gain", "—", "fail"], ["q", "0.71", "pass"]]
    assert report._column_kinds(columns, rows) == ["", "num", "verdict"]


def test_missing_template_folder_is_a_project_error(tmp_path):
    with pytest.raises(ProjectError) as caught:
        pdf.render_pdf(make_context(), tmp_path / "n.pdf", template_dirs=[tmp_path / "nope"])
    assert "nope" in str(caught.value)
    assert not (tmp_path / "n.pdf").exists()


def test_table_cells_keep_number_and_unit_together_and_stay_escaped():
    # Not breaking between a value and its unit is common practice in typesetting
    # (and SI Brochure, 9th ed., §5.4.3: a space separates number and unit).
    assert str(report._keep_units("482 µs … 546 µs")) == (
        '<span class="nw">482 µs</span> … <span class="nw">546 µs</span>')
    assert str(report._keep_units("<b>1 V</b>")) == '&lt;b&gt;<span class="nw">1 V</span>&lt;/b&gt;'
    assert str(report._keep_units("R12")) == "R12"
